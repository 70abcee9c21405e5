"""Shift-log CSV parsing: values against hand calculations, errors located exactly.

Sources of the expected values:
- unit factors: NIST SP 811 (2008 ed.), Appendix B (exact definitions): 1 psi =
  0.45359237 kg * 9.80665 m/s^2 / (0.0254 m)^2; T[K] = (T[degF] + 459.67) * 5/9;
  T[K] = T[degC] + 273.15; 1 t = 1000 kg; 1 h = 3600 s; 1 bar = 1e5 Pa;
  standard atmosphere 101 325 Pa (ISO 2533);
- Europe/Berlin local time: CET = UTC+01:00, CEST = UTC+02:00; summer time begins and
  ends at 01:00 UTC on the last Sunday of March / October (Directive 2000/84/EC, Art. 2
  and 3): in 2026 on 29 March (local 02:00-02:59 does not exist) and 25 October (local
  02:00-02:59 occurs twice). UTC instants below are built with the standard library.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from api.ingest.shiftlog import Notice, ParsedShiftLog, RowError, TagInfo, parse_shiftlog

DATA = Path(__file__).resolve().parents[1] / "data"
PSI_PA = 0.45359237 * 9.80665 / 0.0254**2
ATM = 101_325.0
BERLIN = "Europe/Berlin"

# A fictional boiler "B1"; bounds are in each tag's configured unit.
TAGS = {
    "B1 drum pressure": TagInfo("barg", "Pa", low=0, high=200),
    "B1 steam pressure": TagInfo("barg", "Pa", low=0, high=200),
    "B1 steam temperature": TagInfo("degC", "K", low=0, high=650),
    "B1 feedwater flow": TagInfo("kg/s", "kg/s", low=0, high=100),
    "B1 flue O2": TagInfo("%", "1", low=0, high=21),
    "B1 air temperature": TagInfo("degC", "K", low=-40, high=60),
}


def utc_ms(*args: int) -> int:
    return int(dt.datetime(*args, tzinfo=dt.UTC).timestamp() * 1000)


def parse(data: bytes | str, **kwargs) -> ParsedShiftLog:
    if isinstance(data, str):
        data = data.encode()
    kwargs.setdefault("tags", TAGS)
    kwargs.setdefault("time_zone", BERLIN)
    return parse_shiftlog(data, **kwargs)


def value(result: ParsedShiftLog, tag: str, t_ms: int) -> float:
    r = result.readings
    hit = r[(r["tag"] == tag) & (r["t_ms"] == t_ms)]
    assert len(hit) == 1, f"{tag} at {t_ms}: {len(hit)} readings"
    return float(hit["value"].iloc[0])


def errors(result: ParsedShiftLog) -> list[tuple]:
    return [(e.row, e.column, e.field, e.value, e.message) for e in result.errors]


# --- wide form with units in the headers ------------------------------------------------


def test_wide_form_units_in_headers_against_hand_values():
    result = parse((DATA / "shiftlog_wide_units.csv").read_bytes())
    assert result.errors == []
    assert (result.form, result.separator, result.decimal, result.rows_total) == (
        "wide",
        ",",
        ".",
        2,
    )
    t0 = utc_ms(2026, 1, 15, 7, 0)  # 08:00 CET = 07:00 UTC
    t1 = utc_ms(2026, 1, 15, 7, 15)
    assert value(result, "B1 drum pressure", t0) == pytest.approx(1_101_325.0, rel=1e-12)
    assert value(result, "B1 drum pressure", t1) == pytest.approx(10.5e5 + ATM, rel=1e-12)
    # header psig, tag configured in barg: the value passes through barg, ends in Pa
    assert value(result, "B1 steam pressure", t0) == pytest.approx(150 * PSI_PA + ATM, rel=1e-12)
    assert value(result, "B1 steam pressure", t1) == pytest.approx(155 * PSI_PA + ATM, rel=1e-12)
    assert value(result, "B1 steam temperature", t0) == pytest.approx(
        (1000 + 459.67) * 5 / 9, rel=1e-12
    )
    assert value(result, "B1 feedwater flow", t0) == pytest.approx(100 / 3.6, rel=1e-12)
    assert value(result, "B1 feedwater flow", t1) == pytest.approx(102 / 3.6, rel=1e-12)
    assert value(result, "B1 flue O2", t0) == pytest.approx(0.035, rel=1e-12)
    # no unit in the header: the tag's configured unit (degC)
    assert value(result, "B1 air temperature", t0) == pytest.approx(293.15, rel=1e-12)
    assert len(result.readings) == 12


def test_readings_frame_contract():
    result = parse((DATA / "shiftlog_wide_units.csv").read_bytes())
    r = result.readings
    assert list(r.columns) == ["tag", "t_ms", "value"]
    assert r["t_ms"].dtype == np.int64
    assert r["value"].dtype == np.float64
    assert list(r.index) == list(range(len(r)))
    # sorted by tag then time
    assert list(r["tag"]) == sorted(r["tag"])
    assert r.groupby("tag")["t_ms"].apply(lambda s: s.is_monotonic_increasing).all()


def test_gauge_pressure_uses_the_plant_atmosphere_or_the_tags_own():
    text = "time,B1 drum pressure [barg],B1 steam pressure [barg]\n2026-01-15 08:00,10,10\n"
    tags = dict(TAGS)
    tags["B1 steam pressure"] = TagInfo("barg", "Pa", atmosphere_pa=90_000.0)
    result = parse(text, tags=tags, atmosphere_pa=95_000.0)
    t0 = utc_ms(2026, 1, 15, 7)
    assert value(result, "B1 drum pressure", t0) == pytest.approx(1_095_000.0, rel=1e-12)
    assert value(result, "B1 steam pressure", t0) == pytest.approx(1_090_000.0, rel=1e-12)


# --- long form ----------------------------------------------------------------------------


def test_long_form_with_unit_column_and_explicit_offsets():
    result = parse((DATA / "shiftlog_long.csv").read_bytes())
    assert result.errors == []
    assert (result.form, result.rows_total) == ("long", 5)
    t = utc_ms(2026, 7, 1, 4, 0)  # every row names 04:00 UTC, with different offsets
    assert sorted(result.readings["t_ms"].unique().tolist()) == [t]
    assert value(result, "B1 feedwater flow", t) == pytest.approx(100 / 3.6, rel=1e-12)
    assert value(result, "B1 drum pressure", t) == pytest.approx(150 * PSI_PA + ATM, rel=1e-12)
    assert value(result, "B1 steam temperature", t) == pytest.approx(813.15, rel=1e-12)
    assert value(result, "B1 flue O2", t) == pytest.approx(0.035, rel=1e-12)
    assert value(result, "B1 air temperature", t) == pytest.approx(293.15, rel=1e-12)  # 68 degF


def test_long_form_unknown_tag_and_incompatible_unit_are_one_error_each():
    text = (
        "time,tag,value,unit\n"
        "2026-01-15 08:00,B1 feedwater flow,100,t/h\n"
        "2026-01-15 08:00,B1 feedwater flw,1,\n"
        "2026-01-15 08:15,B1 feedwater flw,2,\n"
        "2026-01-15 08:00,B1 drum pressure,10,degC\n"
        "2026-01-15 08:15,B1 drum pressure,11,degC\n"
        "2026-01-15 08:30,B1 drum pressure,12,\n"
        "2026-01-15 08:30,,12,\n"
    )
    result = parse(text)
    assert errors(result) == [
        (
            3,
            "tag",
            "tag",
            "B1 feedwater flw",
            "unknown tag 'B1 feedwater flw' (did you mean 'B1 feedwater flow'?); 2 rows skipped",
        ),
        (
            5,
            "unit",
            "unit",
            "degC",
            "unit 'degC' ([temperature]) cannot be converted to 'barg' "
            "([mass] / [length] / [time] ** 2); 2 rows skipped",
        ),
        (8, "tag", "tag", "", "the tag is empty; row skipped"),
    ]
    assert value(result, "B1 drum pressure", utc_ms(2026, 1, 15, 7, 30)) == 12e5 + ATM
    assert len(result.readings) == 2


def test_long_form_extra_column_is_reported_and_ignored():
    text = "time,tag,value,comment\n2026-01-15 08:00,B1 flue O2,3.5,ok\n"
    result = parse(text)
    assert errors(result) == [
        (
            1,
            "comment",
            "header",
            "comment",
            "column 'comment' is not part of the long form (time, tag, value, unit); "
            "column ignored",
        )
    ]
    assert value(result, "B1 flue O2", utc_ms(2026, 1, 15, 7)) == pytest.approx(0.035)


# --- separators and decimals --------------------------------------------------------------


def test_semicolon_with_decimal_commas_and_dotted_dates():
    result = parse((DATA / "shiftlog_semicolon_decimal_comma.csv").read_bytes())
    assert result.errors == []
    assert (result.separator, result.decimal, result.form, result.rows_total) == (
        ";",
        ",",
        "wide",
        2,
    )
    t0, t1 = utc_ms(2026, 1, 15, 7), utc_ms(2026, 1, 15, 8)  # first column used as time
    assert value(result, "B1 feedwater flow", t0) == pytest.approx(100.5 / 3.6, rel=1e-12)
    assert value(result, "B1 feedwater flow", t1) == pytest.approx(99 / 3.6, rel=1e-12)
    assert value(result, "B1 drum pressure", t0) == pytest.approx(10.25e5 + ATM, rel=1e-12)
    assert value(result, "B1 flue O2", t1) == pytest.approx(0.0325, rel=1e-12)
    # the empty cell is a gap, not an error and not a reading
    assert len(result.readings) == 5


def test_point_in_a_decimal_comma_file_is_not_guessed():
    text = "time;B1 flue O2 [%];B1 drum pressure\n2026-01-15 08:00;3,5;1.234\n"
    result = parse(text)
    assert errors(result) == [
        (
            2,
            "B1 drum pressure",
            "value",
            "1.234",
            "'1.234' contains '.' but this file uses decimal commas; thousands separators "
            "are not accepted",
        )
    ]
    assert result.decimal == ","


def test_semicolon_file_without_commas_has_decimal_points():
    result = parse("time;B1 flue O2 [%]\n2026-01-15 08:00;3.5\n")
    assert (result.separator, result.decimal, result.errors) == (";", ".", [])
    assert value(result, "B1 flue O2", utc_ms(2026, 1, 15, 7)) == pytest.approx(0.035)


def test_tab_separated():
    result = parse("time\tB1 flue O2 [%]\tB1 drum pressure\n2026-01-15 08:00\t3,5\t10\n")
    assert (result.separator, result.decimal, result.errors) == ("\t", ",", [])
    assert value(result, "B1 flue O2", utc_ms(2026, 1, 15, 7)) == pytest.approx(0.035)


def test_quoted_decimal_comma_in_a_comma_file_is_not_read():
    result = parse('time,B1 flue O2 [%]\n2026-01-15 08:00,"3,5"\n')
    assert errors(result) == [
        (
            2,
            "B1 flue O2 [%]",
            "value",
            "3,5",
            "'3,5' is not a number (decimal commas are read only in files separated by ';' or tab)",
        )
    ]


def test_a_file_sent_twice_lists_at_most_a_thousand_rows_in_its_notice():
    body = "".join(f"2026-07-01 {h:02d}:{m:02d},3\n" for h in range(24) for m in range(60))
    result = parse("time,B1 flue O2\n" + body + body)
    assert len(result.readings) == 1440
    (notice,) = result.notices
    assert notice.message.startswith("1440 readings replaced by a later row")
    assert notice.rows == tuple(range(2, 1002))


def test_comma_file_with_a_decimal_comma_row_is_reported_not_shifted():
    text = (
        "time,B1 flue O2 [%],B1 drum pressure\n2026-01-15 08:00,3.5,10\n2026-01-15 08:15,3,6,10\n"
    )
    result = parse(text)
    assert errors(result) == [
        (
            3,
            "",
            "value",
            "2026-01-15 08:15,3,6,10",
            "the row has 4 fields but the header has 3; row skipped",
        )
    ]
    assert len(result.readings) == 2
    assert result.rows_total == 2


# --- mixed bad rows -----------------------------------------------------------------------


def test_mixed_bad_rows_keep_good_cells_and_locate_each_error():
    result = parse((DATA / "shiftlog_mixed_errors.csv").read_bytes())
    fw, drum, o2 = "B1 feedwater flow [t/h]", "B1 drum pressure [barg]", "B1 flue O2 [%]"
    assert errors(result) == [
        (
            1,
            "B1 mystery signal",
            "tag",
            "B1 mystery signal",
            "unknown tag 'B1 mystery signal'; column skipped",
        ),
        (3, drum, "value", "ten", "'ten' is not a number"),
        (
            4,
            "time",
            "time",
            "2026-01-15 8h30",
            "'2026-01-15 8h30' is not a time; write e.g. 2026-03-29 14:30 (plant local "
            "time) or 2026-03-29T14:30:00+01:00; row skipped",
        ),
        (5, o2, "value", "35", "35 % is above the plausible high bound 21 % of tag 'B1 flue O2'"),
        (
            6,
            fw,
            "value",
            "-5",
            "-5 t/h (= -1.38889 kg/s) is below the plausible low bound 0 kg/s of tag "
            "'B1 feedwater flow'",
        ),
        (7, o2, "value", "NaN", "'NaN' is not a finite number"),
        (
            8,
            "time",
            "time",
            "01/15/2026 09:30",
            "'01/15/2026 09:30': the order of day and month cannot be known; write the date "
            "as YYYY-MM-DD; row skipped",
        ),
        (
            9,
            "time",
            "time",
            "2026-02-30 09:45",
            "'2026-02-30 09:45' is not a valid date and time of day; row skipped",
        ),
    ]
    assert result.rows_total == 8
    # the good cells: row 2 all three, rows 3, 5, 6 two each, row 7 one
    kept = {
        (tag, t) for tag, t in zip(result.readings["tag"], result.readings["t_ms"], strict=True)
    }
    minute = 60_000
    t = utc_ms(2026, 1, 15, 7)
    assert kept == {
        ("B1 feedwater flow", t),
        ("B1 drum pressure", t),
        ("B1 flue O2", t),
        ("B1 feedwater flow", t + 15 * minute),
        ("B1 flue O2", t + 15 * minute),
        ("B1 feedwater flow", t + 45 * minute),
        ("B1 drum pressure", t + 45 * minute),
        ("B1 drum pressure", t + 60 * minute),
        ("B1 flue O2", t + 60 * minute),
        ("B1 drum pressure", t + 75 * minute),
    }
    assert value(result, "B1 flue O2", t + 60 * minute) == pytest.approx(0.039, rel=1e-12)


def test_bounds_are_checked_in_the_tags_unit_before_conversion():
    # drum pressure tag: 0..200 barg. 2950 psig = 203.4 barg: out; 2900 psig = 199.95: in.
    text = "time,B1 drum pressure [psig]\n2026-01-15 08:00,2950\n2026-01-15 08:15,2900\n"
    result = parse(text)
    assert errors(result) == [
        (
            2,
            "B1 drum pressure [psig]",
            "value",
            "2950",
            "2950 psig (= 203.395 barg) is above the plausible high bound 200 barg of tag "
            "'B1 drum pressure'",
        )
    ]
    assert value(result, "B1 drum pressure", utc_ms(2026, 1, 15, 7, 15)) == pytest.approx(
        2900 * PSI_PA + ATM, rel=1e-12
    )


def test_header_unit_incompatible_or_unreadable_is_one_error_per_column():
    text = (
        "time,B1 drum pressure [degC],B1 feedwater flow [tph],B1 flue O2\n"
        "2026-01-15 08:00,10,5,3\n2026-01-15 08:15,11,6,3\n"
    )
    result = parse(text)
    assert errors(result) == [
        (
            1,
            "B1 drum pressure [degC]",
            "unit",
            "degC",
            "unit 'degC' ([temperature]) cannot be converted to 'barg' "
            "([mass] / [length] / [time] ** 2); column skipped",
        ),
        (
            1,
            "B1 feedwater flow [tph]",
            "unit",
            "tph",
            "unknown unit of measure 'tph' ('tph' is not defined in the unit registry); "
            "column skipped",
        ),
    ]
    assert result.readings["tag"].unique().tolist() == ["B1 flue O2"]


def test_column_with_values_but_no_header_and_trailing_empty_column():
    text = "time,B1 flue O2,,\n2026-01-15 08:00,3,7,\n"
    result = parse(text)
    assert errors(result) == [
        (1, "", "header", "", "column 3 has values but no header; column skipped")
    ]


# --- times ----------------------------------------------------------------------------------


def test_dst_spring_forward_missing_hour_is_an_error_never_shifted():
    result = parse((DATA / "shiftlog_dst_spring.csv").read_bytes())
    msg = (
        "local time 2026-03-29 {} does not exist in Europe/Berlin: the clocks skip it when "
        "daylight saving time starts; row skipped, not shifted (give the time with its UTC "
        "offset)"
    )
    assert errors(result) == [
        (3, "time", "time", "2026-03-29 02:00", msg.format("02:00:00")),
        (4, "time", "time", "2026-03-29 02:30", msg.format("02:30:00")),
    ]
    r = result.readings
    assert r["t_ms"].tolist() == [
        utc_ms(2026, 3, 29, 0, 30),  # 01:30 CET
        utc_ms(2026, 3, 29, 1, 0),  # 03:00 CEST
        utc_ms(2026, 3, 29, 1, 30),  # 03:30 CEST
    ]
    np.testing.assert_allclose(r["value"], np.array([100, 103, 104]) / 3.6, rtol=1e-12)
    assert result.notices == []


def test_dst_fall_back_repeated_hour_resolved_by_row_order():
    result = parse((DATA / "shiftlog_dst_autumn.csv").read_bytes())
    assert result.errors == []
    r = result.readings
    start = utc_ms(2026, 10, 24, 23, 30)  # 01:30 CEST
    assert r["t_ms"].tolist() == [start + k * 30 * 60_000 for k in range(6)]
    np.testing.assert_allclose(r["value"], np.arange(100, 106) / 3.6, rtol=1e-12)
    assert result.notices == [
        Notice(
            "dst_repeated_hour",
            "local times 2026-10-25 02:00:00 to 02:30:00 occur twice in Europe/Berlin "
            "(daylight saving time ends); by the order of the rows, rows 3-4 read as "
            "UTC+02:00 and rows 5-6 as UTC+01:00",
            (3, 4, 5, 6),
        )
    ]


def test_dst_fall_back_hourly_log_repeats_the_same_local_time():
    text = "time,B1 flue O2\n2026-10-25 01:00,3\n2026-10-25 02:00,4\n2026-10-25 02:00,5\n2026-10-25 03:00,6\n"
    result = parse(text)
    assert result.errors == []
    assert result.readings["t_ms"].tolist() == [
        utc_ms(2026, 10, 24, 23),
        utc_ms(2026, 10, 25, 0),
        utc_ms(2026, 10, 25, 1),
        utc_ms(2026, 10, 25, 2),
    ]
    assert result.notices[0].rows == (3, 4)


def test_dst_fall_back_long_form_sorted_by_tag_is_resolved_per_tag():
    rows = []
    for tag in ("B1 flue O2", "B1 drum pressure"):
        for local in ("01:30", "02:00", "02:30", "02:00", "02:30", "03:00"):
            rows.append(f"2026-10-25 {local},{tag},5")
    result = parse("time,tag,value\n" + "\n".join(rows) + "\n")
    assert result.errors == []
    start = utc_ms(2026, 10, 24, 23, 30)
    expected = [start + k * 30 * 60_000 for k in range(6)]
    for tag in ("B1 flue O2", "B1 drum pressure"):
        assert result.readings.loc[result.readings["tag"] == tag, "t_ms"].tolist() == expected
    assert len(result.notices) == 1
    assert result.notices[0].message.endswith(
        "rows 3-4, 9-10 read as UTC+02:00 and rows 5-6, 11-12 as UTC+01:00"
    )


def test_dst_fall_back_undecidable_order_is_an_error():
    # one 02:30 between 01:30 CEST and 03:30 CET: both readings of it fit
    text = "time,B1 flue O2\n2026-10-25 01:30,3\n2026-10-25 02:30,4\n2026-10-25 03:30,5\n"
    result = parse(text)
    assert errors(result) == [
        (
            3,
            "time",
            "time",
            "2026-10-25 02:30",
            "local time 2026-10-25 02:30:00 occurs twice in Europe/Berlin (daylight saving "
            "time ends) and the order of the rows does not tell which is meant; row skipped "
            "(give the time with its UTC offset)",
        )
    ]
    assert len(result.readings) == 2
    assert result.notices == []


def test_explicit_offsets_are_kept_as_given_even_inside_dst_changes():
    text = (
        "time,B1 flue O2\n"
        "2026-03-29T02:30:00+01:00,3\n"  # a wall time that does not exist locally, but
        "2026-10-25T02:30:00+01:00,4\n"  # with an offset it is a plain instant
        "2026-10-25T02:30:00+02:00,5\n"
        "2026-10-25T00:45Z,6\n"
        "2026-10-25 00:50:30.250 UTC,7\n"
        "2026-10-25T05:30-0500,8\n"
    )
    result = parse(text)
    assert result.errors == []
    by_value = dict(zip(result.readings["value"].round(3), result.readings["t_ms"], strict=True))
    assert by_value == {
        0.03: utc_ms(2026, 3, 29, 1, 30),
        0.04: utc_ms(2026, 10, 25, 1, 30),
        0.05: utc_ms(2026, 10, 25, 0, 30),
        0.06: utc_ms(2026, 10, 25, 0, 45),
        0.07: utc_ms(2026, 10, 25, 0, 50, 30) + 250,
        0.08: utc_ms(2026, 10, 25, 10, 30),
    }


def test_time_column_header_names_the_zone():
    text = "time [UTC],B1 flue O2\n2026-07-01 04:00,3\n"
    assert parse(text).readings["t_ms"].tolist() == [utc_ms(2026, 7, 1, 4)]
    text = "time [America/Chicago],B1 flue O2\n2026-07-01 04:00,3\n"  # CDT = UTC-05:00
    assert parse(text).readings["t_ms"].tolist() == [utc_ms(2026, 7, 1, 9)]
    result = parse("time [Mars/Olympus],B1 flue O2\n2026-07-01 04:00,3\n")
    assert errors(result) == [
        (
            1,
            "time [Mars/Olympus]",
            "header",
            "Mars/Olympus",
            "unknown time zone 'Mars/Olympus' in the time column header; write an IANA name "
            "such as Europe/Berlin, or UTC; no row read",
        )
    ]
    assert len(result.readings) == 0


def test_separate_date_and_time_columns_are_joined():
    text = "Date,Time,B1 flue O2\n2026-07-01,06:00,3\n2026-07-01,,4\n"
    result = parse(text)
    assert result.readings["t_ms"].tolist() == [utc_ms(2026, 7, 1, 4)]  # CEST
    assert errors(result) == [(3, "Date + Time", "time", "", "the time is empty; row skipped")]


def test_named_time_column_need_not_be_first():
    text = "B1 flue O2,timestamp\n3,2026-07-01 06:00\n"
    result = parse(text)
    assert result.errors == []
    assert result.readings["t_ms"].tolist() == [utc_ms(2026, 7, 1, 4)]


def test_no_time_column():
    result = parse("B1 flue O2,B1 drum pressure\n3,10\n")
    assert errors(result) == [
        (
            1,
            "B1 flue O2",
            "header",
            "B1 flue O2",
            "no time column: name one 'time' (or 'timestamp', 'date') or put the times in "
            "the first column; no row read",
        )
    ]
    result = parse("reading,B1 drum pressure\nfirst,10\nsecond,11\n")
    assert [e.message[:15] for e in result.errors] == ["no time column:"]
    assert len(result.readings) == 0


def test_unknown_plant_time_zone_is_a_configuration_error():
    with pytest.raises(ValueError, match=r"^unknown time zone 'Europe/Atlantis'; give an IANA"):
        parse("time,B1 flue O2\n2026-07-01 06:00,3\n", time_zone="Europe/Atlantis")


# --- file-level problems, encodings, duplicates ------------------------------------------------


@pytest.mark.parametrize("data", [b"", b"   \n\n", b"\xef\xbb\xbf"])
def test_empty_file(data):
    result = parse(data)
    assert errors(result) == [(1, "", "header", "", "the file is empty")]
    assert len(result.readings) == 0
    assert result.rows_total == 0


def test_header_without_rows():
    result = parse("time,B1 flue O2\n\n")
    assert errors(result) == [(1, "", "header", "", "the file has a header but no data rows")]


def test_single_column_file():
    result = parse("time\n2026-07-01 06:00\n")
    assert errors(result) == [
        (
            1,
            "",
            "header",
            "time",
            "the header has a single column; a shift log needs a time column and at least "
            "one more, separated by ',', ';' or tab",
        )
    ]


def test_utf8_bom_is_removed():
    data = b"\xef\xbb\xbf" + b"time,B1 flue O2\r\n2026-07-01 06:00,3\r\n"
    result = parse(data)
    assert result.errors == [] and result.notices == []
    assert result.readings["t_ms"].tolist() == [utc_ms(2026, 7, 1, 4)]


def test_cp1252_falls_back_with_a_notice():
    tags = {"B1 Lufttemperatur (°C)": TagInfo("degC", "K")}
    data = "time;B1 Lufttemperatur (°C)\n2026-07-01 06:00;21,5\n".encode("cp1252")
    result = parse(data, tags=tags)
    assert result.errors == []
    assert result.notices == [
        Notice(
            "encoding",
            "the file is not valid UTF-8 (byte 25 is 0xb0); it was read as Windows-1252 (cp1252)",
        )
    ]
    assert result.readings["value"].tolist() == pytest.approx([294.65])


def test_utf16_with_bom():
    data = "time\tB1 flue O2\r\n2026-07-01 06:00\t3\r\n".encode("utf-16")
    result = parse(data)
    assert result.errors == []
    assert result.readings["value"].tolist() == pytest.approx([0.03])


def test_duplicate_tag_and_time_last_wins_with_a_notice():
    text = "time,B1 flue O2\n2026-07-01 06:00,3\n2026-07-01 06:15,4\n2026-07-01 06:00,5\n"
    result = parse(text)
    assert result.readings["value"].tolist() == pytest.approx([0.05, 0.04])
    assert result.notices == [
        Notice(
            "duplicate",
            "1 reading replaced by a later row with the same tag and time; the later one "
            "wins (rows 2, 4)",
            (2, 4),
        )
    ]


def test_blank_lines_count_as_rows_and_are_skipped():
    text = "time,B1 flue O2\n\n2026-07-01 06:00,x\n\n"
    result = parse(text)
    assert errors(result) == [(3, "B1 flue O2", "value", "x", "'x' is not a number")]
    assert result.rows_total == 1


def test_tag_without_si_unit_is_stored_in_the_si_unit_of_its_dimension():
    tags = {"B1 spare flow": TagInfo("klb/h")}
    result = parse("time,B1 spare flow\n2026-07-01 06:00,1\n", tags=tags)
    assert result.readings["value"].tolist() == pytest.approx([453.59237 / 3600], rel=1e-12)


def test_error_and_notice_dicts():
    result = parse((DATA / "shiftlog_mixed_errors.csv").read_bytes())
    assert result.errors[1].as_dict() == {
        "row": 3,
        "column": "B1 drum pressure [barg]",
        "field": "value",
        "value": "ten",
        "message": "'ten' is not a number",
    }
    assert isinstance(result.errors[1], RowError)
    notice = parse((DATA / "shiftlog_dst_autumn.csv").read_bytes()).notices[0]
    assert notice.as_dict()["rows"] == [3, 4, 5, 6]


# --- size -------------------------------------------------------------------------------------


def test_hundred_thousand_row_wide_file():
    # Not timed here (speed belongs in bench/); this shows the vectorised path copes.
    n = 100_000
    times = pd.date_range("2026-01-01", periods=n, freq="min").strftime("%Y-%m-%d %H:%M")
    flow = np.linspace(50.0, 150.0, n)
    frame = pd.DataFrame(
        {
            "time": times,
            "B1 feedwater flow [t/h]": flow,
            "B1 drum pressure [barg]": 10.0,
            "B1 flue O2 [%]": 3.5,
            "B1 steam temperature [degF]": 1000.0,
        }
    )
    result = parse(frame.to_csv(index=False))
    assert result.errors == []
    assert result.rows_total == n
    assert len(result.readings) == 4 * n
    r = result.readings[result.readings["tag"] == "B1 feedwater flow"]
    np.testing.assert_allclose(r["value"].to_numpy(), flow / 3.6, rtol=1e-12)
    # 2026-01-01 00:00 CET = 2025-12-31 23:00 UTC, one minute apart
    assert r["t_ms"].iloc[0] == utc_ms(2025, 12, 31, 23)
    assert np.all(np.diff(r["t_ms"].to_numpy()) == 60_000)


def test_mixed_time_formats_in_one_column():
    # the first cell picks a fast strict format; the other cells take the general pattern
    text = (
        "time,B1 flue O2\n"
        "2026-07-01 06:00,1\n"
        "2026-07-01 06:15:30,2\n"
        "01.07.2026 06:30,3\n"
        "2026/07/01 06:45,4\n"
        "2026-07-01T05:00:00.5+00:00,5\n"
        "2026-07-02,6\n"
    )
    result = parse(text)
    assert result.errors == []
    by_value = dict(zip(result.readings["value"].round(3), result.readings["t_ms"], strict=True))
    assert by_value == {
        0.01: utc_ms(2026, 7, 1, 4, 0),
        0.02: utc_ms(2026, 7, 1, 4, 15, 30),
        0.03: utc_ms(2026, 7, 1, 4, 30),
        0.04: utc_ms(2026, 7, 1, 4, 45),
        0.05: utc_ms(2026, 7, 1, 5, 0) + 500,
        0.06: utc_ms(2026, 7, 1, 22, 0),  # midnight CEST
    }


@pytest.mark.parametrize("text", ["2026-01-05 25:00", "2026-01-05 01:62", "2026-01-05T01:30:61Z"])
def test_a_time_off_the_clock_is_rejected_not_rolled_over(text):
    # A clock shows 00:00:00 to 23:59:59 (ISO 8601 hour 0-23, minute and second 0-59);
    # rolling 25:00 into the next day would put the reading on the wrong interval.
    parsed = parse(f"time,B1 feedwater flow\n2026-01-05 01:00,1\n{text},2\n")
    assert [(e.row, e.field, e.value) for e in parsed.errors] == [(3, "time", text)]
    assert "is not a valid date and time of day" in parsed.errors[0].message
    assert len(parsed.readings) == 1
