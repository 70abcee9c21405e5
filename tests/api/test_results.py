"""Results API on SQLite and PostgreSQL: downsampling against pandas, flags OR-ed, US
customary output against hand conversions, CSV export, latest, metrics, problem details."""

from __future__ import annotations

import csv
import io

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import select

from api.plants.models import Unit
from api.results.csvexport import escape_cell
from api.results.service import choose_bucket_ms
from api.results.store import upsert_results
from tests.api.factories import T0

MIN = 60_000
URL = "/api/v1/units/boiler-a"

# International Table Btu = 1055.05585262 J exactly (NIST SP 811, 2008 ed., App. B.9);
# one kelvin step = 1.8 degR.
BTU_J = 1055.05585262


def iso(t_ms: int) -> str:
    return pd.Timestamp(t_ms, unit="ms", tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


@pytest.fixture
def read(make_key) -> dict:
    return make_key("read")


@pytest.fixture
def unit_id(plant, session_factory) -> int:
    with session_factory() as s:
        return s.scalar(select(Unit.id).where(Unit.slug == "boiler-a"))


def store(session_factory, unit_id: int, frame: pd.DataFrame) -> None:
    with session_factory() as s:
        upsert_results(s, unit_id, frame)
        s.commit()


def three_days(seed: int = 3) -> pd.DataFrame:
    """Three days of one-minute results with a few NULLs (NaN)."""
    rng = np.random.default_rng(seed)
    n = 3 * 1440
    eta = rng.uniform(0.80, 0.90, n)
    eta[rng.choice(n, 50, replace=False)] = np.nan
    flags = np.where(rng.uniform(size=n) < 0.01, 1, 0) | np.where(
        rng.uniform(size=n) < 0.005, 65536, 0
    )
    return pd.DataFrame(
        {
            "eta_1": eta,
            "sgen_w_per_k": rng.uniform(900.0, 1100.0, n),
            "flags": flags,
        },
        index=pd.Index(T0 + MIN * np.arange(n), name="t_ms"),
    )


# A range whose ends cut the 10-minute and hour blocks, so that buckets are built from
# rollups in the middle and from the results at both ends.
START = T0 + 7 * MIN
END = T0 + 3 * 1440 * MIN - 13 * MIN


@pytest.mark.parametrize(
    ("max_points", "bucket_min", "source"),
    [
        (300, 15, "results"),  # 4300 intervals / 300 -> 15 min: too short for rollups
        (100, 50, "10-min rollups"),  # 44 min fits; rounded up to 10-min blocks
        (20, 240, "hour rollups"),  # 216 min fits; rounded up to whole hours
    ],
)
def test_downsampled_min_mean_max_equal_pandas_resample(
    client, read, unit_id, session_factory, max_points, bucket_min, source
):
    data = three_days()
    store(session_factory, unit_id, data)
    response = client.get(
        f"{URL}/results",
        params={
            "start": iso(START),
            "end": iso(END),
            "metrics": "eta_1,sgen_w_per_k",
            "max_points": max_points,
        },
        headers=read,
    )
    assert response.status_code == 200, response.text
    body = response.json()
    assert body["bucket_seconds"] == bucket_min * 60
    assert (body["unit"], body["unit_system"]) == ("boiler-a", "si")
    # Reference: pandas resample, bins of the same length aligned to the epoch, over the
    # same rows.
    inside = data[(data.index >= START) & (data.index < END)]
    for metric in ("eta_1", "sgen_w_per_k"):
        values = pd.Series(
            inside[metric].to_numpy(), index=pd.to_datetime(inside.index, unit="ms", utc=True)
        )
        resampled = values.resample(f"{bucket_min}min", origin="epoch")
        series = next(s for s in body["series"] if s["metric"] == metric)
        assert len(series["t"]) <= max_points
        assert series["t"] == [t.strftime("%Y-%m-%dT%H:%M:%SZ") for t in resampled.mean().index]
        np.testing.assert_allclose(series["mean"], resampled.mean(), rtol=1e-12)
        np.testing.assert_array_equal(series["min"], resampled.min())
        np.testing.assert_array_equal(series["max"], resampled.max())
        assert series["count"] == resampled.count().tolist()
    eta = next(s for s in body["series"] if s["metric"] == "eta_1")
    assert eta["unit"] == "1" and eta["aggregate"] == "mean"
    assert sum(eta["count"]) == int(inside["eta_1"].notna().sum())


def test_rollups_follow_deleted_and_replaced_results(client, read, unit_id, session_factory):
    from api.results.store import delete_results, replace_results

    hours = pd.DataFrame(
        {"eta_1": np.full(180, 0.8), "flags": np.zeros(180, dtype=np.int64)},
        index=pd.Index(T0 + MIN * np.arange(180), name="t_ms"),
    )
    store(session_factory, unit_id, hours)
    with session_factory() as s:
        delete_results(s, [unit_id], T0 + 30 * MIN, T0 + 90 * MIN)
        replacement = pd.DataFrame(
            {"eta_1": [0.5] * 60, "flags": [64] * 60},
            index=pd.Index(T0 + MIN * np.arange(120, 180), name="t_ms"),
        )
        replace_results(s, unit_id, T0 + 120 * MIN, T0 + 180 * MIN, replacement)
        s.commit()
    body = client.get(
        f"{URL}/results",
        params={
            "start": iso(T0),
            "end": iso(T0 + 180 * MIN),
            "metrics": "eta_1,flags",
            "max_points": 3,
        },
        headers=read,
    ).json()
    eta, flags = body["series"]
    assert body["bucket_seconds"] == 3600
    assert eta["count"] == [30, 30, 60]
    assert eta["mean"] == pytest.approx([0.8, 0.8, 0.5], rel=1e-12)
    assert flags["mean"] == [0.0, 0.0, 64.0]
    with session_factory() as s:
        delete_results(s, [unit_id])
        s.commit()
    body = client.get(
        f"{URL}/results",
        params={"start": iso(T0), "end": iso(T0 + 180 * MIN), "metrics": "eta_1", "max_points": 3},
        headers=read,
    ).json()
    assert body["series"][0]["t"] == []


def test_flags_are_or_ed_per_bucket_not_averaged(client, read, unit_id, session_factory):
    # Hand-made: bucket 1 (minutes 0-9) holds 1, 64 and zeros -> 65; bucket 2 (10-19)
    # holds only zeros -> 0; bucket 3 (20-29) holds 65536 and 65537 -> 65537.
    flags = np.zeros(30, dtype=np.int64)
    flags[[2, 7]] = [1, 64]
    flags[[21, 28]] = [65536, 65537]
    frame = pd.DataFrame({"flags": flags}, index=pd.Index(T0 + MIN * np.arange(30), name="t_ms"))
    store(session_factory, unit_id, frame)
    response = client.get(
        f"{URL}/results",
        params={"start": iso(T0), "end": iso(T0 + 30 * MIN), "metrics": "flags", "max_points": 3},
        headers=read,
    )
    body = response.json()
    assert body["bucket_seconds"] == 600
    (series,) = body["series"]
    assert series["aggregate"] == "bit_or"
    assert series["mean"] == series["min"] == series["max"] == [65.0, 0.0, 65537.0]
    assert series["count"] == [10, 10, 10]


def test_flags_or_matches_numpy_on_random_data(client, read, unit_id, session_factory):
    data = three_days(seed=11)
    store(session_factory, unit_id, data[["flags"]])
    response = client.get(
        f"{URL}/results",
        params={"start": iso(START), "end": iso(END), "metrics": "flags", "max_points": 72},
        headers=read,
    )
    body = response.json()
    # Hour buckets: the hour rollups in the middle, the results at the cut ends.
    assert body["bucket_seconds"] == 3600
    inside = data.loc[(data.index >= START) & (data.index < END), "flags"]
    groups = inside.groupby(inside.index.to_numpy() // 3_600_000)
    expected = groups.agg(lambda v: np.bitwise_or.reduce(v.to_numpy())).astype(float)
    assert body["series"][0]["mean"] == expected.tolist()
    assert body["series"][0]["count"] == groups.count().tolist()
    assert 65537.0 in expected.tolist()  # the data does exercise both bits together


def test_us_customary_output_is_converted(client, read, unit_id, session_factory):
    frame = pd.DataFrame(
        {"sgen_w_per_k": [1000.0, 2000.0], "eta_1": [0.85, 0.86], "heat_loss_w": [5e6, 6e6]},
        index=pd.Index([T0, T0 + MIN], name="t_ms"),
    )
    store(session_factory, unit_id, frame)
    response = client.get(
        f"{URL}/results",
        params={
            "start": iso(T0),
            "end": iso(T0 + 2 * MIN),
            "metrics": "sgen_w_per_k,eta_1,heat_loss_w",
            "units": "us",
        },
        headers=read,
    )
    body = response.json()
    assert body["unit_system"] == "us" and body["bucket_seconds"] is None
    by_metric = {s["metric"]: s for s in body["series"]}
    # Hand: 1 W/K = 3600 J/h per K = 3600 / 1055.05585262 Btu/h per 1.8 degR.
    per_w_per_k = 3600.0 / BTU_J / 1.8
    sgen = by_metric["sgen_w_per_k"]
    assert sgen["unit"] == "Btu/(h degR)"
    np.testing.assert_allclose(sgen["mean"], [1000 * per_w_per_k, 2000 * per_w_per_k], rtol=1e-12)
    assert sgen["min"] == sgen["mean"] == sgen["max"] and sgen["count"] == [1, 1]
    assert by_metric["eta_1"]["unit"] == "1" and by_metric["eta_1"]["mean"] == [0.85, 0.86]
    # Power stays in watts in the US system (api.measure.US_CUSTOMARY).
    assert by_metric["heat_loss_w"]["unit"] == "W"
    assert by_metric["heat_loss_w"]["mean"] == [5e6, 6e6]


def test_raw_intervals_keep_nulls_as_gaps(client, read, unit_id, session_factory):
    frame = pd.DataFrame(
        {"eta_2": [0.40, np.nan, 0.42]}, index=pd.Index(T0 + MIN * np.arange(3), name="t_ms")
    )
    store(session_factory, unit_id, frame)
    body = client.get(
        f"{URL}/results",
        params={"start": iso(T0), "end": iso(T0 + 3 * MIN), "metrics": "eta_2"},
        headers=read,
    ).json()
    (series,) = body["series"]
    assert series["t"] == [iso(T0), iso(T0 + MIN), iso(T0 + 2 * MIN)]
    assert series["mean"] == [0.40, None, 0.42]
    assert series["count"] == [1, 0, 1]
    assert series["label"] == "Second-law efficiency"


def test_default_range_ends_after_the_latest_result(client, read, unit_id, session_factory):
    # The pipeline writes flags for every interval it computes: the latest one is found
    # from them.
    frame = pd.DataFrame(
        {"eta_1": [0.8, 0.9], "flags": [0, 0]}, index=pd.Index([T0, T0 + 5 * MIN], name="t_ms")
    )
    store(session_factory, unit_id, frame)
    body = client.get(f"{URL}/results", params={"metrics": "eta_1"}, headers=read).json()
    assert (body["start"], body["end"]) == (iso(T0 + 6 * MIN - 86_400_000), iso(T0 + 6 * MIN))
    assert body["series"][0]["mean"] == [0.8, 0.9]


def test_csv_export_names_units_and_keeps_numbers(client, read, unit_id, session_factory):
    frame = pd.DataFrame(
        {"heat_loss_w": [-5.0e6, 6.0e6], "eta_1": [0.85, np.nan]},
        index=pd.Index([T0, T0 + MIN], name="t_ms"),
    )
    store(session_factory, unit_id, frame)
    response = client.get(
        f"{URL}/results",
        params={
            "start": iso(T0),
            "end": iso(T0 + 2 * MIN),
            "metrics": "eta_1,heat_loss_w",
            "format": "csv",
        },
        headers=read,
    )
    assert response.status_code == 200
    assert response.headers["content-type"] == "text/csv; charset=utf-8"
    assert 'filename="boiler-a-results.csv"' in response.headers["content-disposition"]
    rows = list(csv.reader(io.StringIO(response.text)))
    assert rows[0] == ["time", "eta_1 [1]", "heat_loss_w [W]"]
    # A negative number is a number, not a formula: it keeps its minus, unquoted.
    assert rows[1] == [iso(T0), "0.85", "-5000000.0"]
    assert rows[2] == [iso(T0 + MIN), "", "6000000.0"]


def test_csv_of_buckets_has_mean_min_max_count_columns(client, read, unit_id, session_factory):
    frame = pd.DataFrame(
        {"eta_1": [0.8, 0.9, 0.7, 0.6]}, index=pd.Index(T0 + MIN * np.arange(4), name="t_ms")
    )
    store(session_factory, unit_id, frame)
    response = client.get(
        f"{URL}/results",
        params={
            "start": iso(T0),
            "end": iso(T0 + 4 * MIN),
            "metrics": "eta_1",
            "max_points": 2,
            "format": "csv",
        },
        headers=read,
    )
    rows = list(csv.reader(io.StringIO(response.text)))
    assert rows[0] == ["time", "eta_1 mean [1]", "eta_1 min [1]", "eta_1 max [1]", "eta_1 count"]
    assert [float(x) for x in rows[1][1:4]] == pytest.approx([0.85, 0.8, 0.9])
    assert rows[1][4] == "2" and rows[2][0] == iso(T0 + 2 * MIN)


@pytest.mark.parametrize(
    ("cell", "escaped"),
    [
        ('=HYPERLINK("http://x","y")', '\'=HYPERLINK("http://x","y")'),
        ("+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0"),
        ("-2+3+cmd|' /C calc'!A0", "'-2+3+cmd|' /C calc'!A0"),
        ("@SUM(A1:A2)", "'@SUM(A1:A2)"),
        ("\tboiler", "'\tboiler"),
        ("\rboiler", "'\rboiler"),
        ("-12.5", "-12.5"),
        ("+1e-3", "+1e-3"),
        ("eta_1 [1]", "eta_1 [1]"),
    ],
)
def test_formula_looking_cells_are_escaped(cell, escaped):
    # OWASP "CSV Injection": cells starting with = + - @ tab CR get a leading quote;
    # plain numbers stay numbers.
    assert escape_cell(cell) == escaped


def test_csv_escapes_a_formula_looking_metric_label_end_to_end(
    client, read, unit_id, session_factory
):
    # A metric registered by another stage with a hostile name reaches the header.
    from api.results import metrics as metric_registry
    from engine.catalogue import ResultColumn

    def provider(kind: str):
        return [ResultColumn("=1+2", "1", "hostile")]

    metric_registry.register_metric_provider(provider)
    try:
        store(
            session_factory,
            unit_id,
            pd.DataFrame({"=1+2": [1.0]}, index=pd.Index([T0], name="t_ms")),
        )
        response = client.get(
            f"{URL}/results",
            params={"start": iso(T0), "end": iso(T0 + MIN), "metrics": "=1+2", "format": "csv"},
            headers=read,
        )
    finally:
        metric_registry._providers.remove(provider)
    rows = list(csv.reader(io.StringIO(response.text)))
    assert rows[0] == ["time", "'=1+2 [1]"]


def test_latest_gives_every_metric_of_the_last_interval(client, read, unit_id, session_factory):
    frame = pd.DataFrame(
        {"eta_1": [0.80, 0.81], "sgen_w_per_k": [1000.0, 1800.0], "flags": [0, 65536]},
        index=pd.Index([T0, T0 + MIN], name="t_ms"),
    )
    store(session_factory, unit_id, frame)
    body = client.get(f"{URL}/latest", headers=read).json()
    assert body["t"] == iso(T0 + MIN)
    assert body["values"] == {"eta_1": 0.81, "sgen_w_per_k": 1800.0, "flags": 65536.0}
    assert body["units"] == {"eta_1": "1", "sgen_w_per_k": "W/K", "flags": "1"}
    us = client.get(f"{URL}/latest", params={"units": "us"}, headers=read).json()
    assert us["values"]["sgen_w_per_k"] == pytest.approx(1800.0 * 3600.0 / BTU_J / 1.8, rel=1e-12)
    assert us["units"]["sgen_w_per_k"] == "Btu/(h degR)"


def test_latest_of_a_unit_without_results(client, read, plant):
    assert client.get(f"{URL}/latest", headers=read).json() == {
        "t": None,
        "values": {},
        "units": {},
        "uncertainty": {},
    }


def test_metrics_lists_the_kind_results_and_the_pipeline_metrics(client, read, plant):
    body = client.get(f"{URL}/metrics", headers=read).json()
    assert (body["unit"], body["kind"]) == ("boiler-a", "boiler")
    by_name = {m["metric"]: m for m in body["metrics"]}
    assert list(by_name)[:2] == ["heat_absorbed_w", "fuel_heat_input_hhv_w"]
    assert by_name["sgen_w_per_k"] | {} == {
        "metric": "sgen_w_per_k",
        "unit": "W/K",
        "us_unit": "Btu/(h degR)",
        "label": "Entropy generation rate",
        "description": "Entropy generation rate (entropy balance).",
        "aggregate": "mean",
    }
    assert by_name["flags"]["aggregate"] == "bit_or"
    assert by_name["coverage"]["unit"] == "1"


def test_unknown_unit_is_a_problem_404(client, read, plant):
    response = client.get("/api/v1/units/nope/results", headers=read)
    assert response.status_code == 404
    assert response.headers["content-type"] == "application/problem+json"
    problem = response.json()
    assert (problem["title"], problem["detail"]) == ("Not found", "no unit 'nope'")
    assert (
        client.get("/api/v1/units/nope/latest", headers=read).json()["detail"] == "no unit 'nope'"
    )
    assert client.get("/api/v1/units/nope/metrics", headers=read).status_code == 404


def test_unknown_metric_is_named_with_the_known_ones(client, read, plant):
    response = client.get(f"{URL}/results", params={"metrics": "eta_1,eta_9"}, headers=read)
    assert response.status_code == 422
    problem = response.json()
    assert problem["detail"].startswith(
        "unknown metric 'eta_9' for unit 'boiler-a' (kind boiler); known: heat_absorbed_w, "
    )
    # The kind's results, then the pipeline's; later stages' metrics may follow.
    assert (
        "eta_2" in problem["detail"] and "unaccounted_heat_w, flags, coverage" in problem["detail"]
    )
    assert problem["errors"][0]["field"] == "metrics"


def test_bad_range_and_bounds_are_problems(client, read, plant):
    reversed_range = client.get(
        f"{URL}/results",
        params={"start": "2026-01-02T00:00:00Z", "end": "2026-01-01T00:00:00Z"},
        headers=read,
    )
    assert reversed_range.status_code == 422
    assert reversed_range.json()["detail"] == (
        "start (2026-01-02T00:00:00Z) must be before end (2026-01-01T00:00:00Z)"
    )
    too_few = client.get(f"{URL}/results", params={"max_points": 1}, headers=read)
    assert too_few.status_code == 422
    assert too_few.json()["detail"] == "max_points must be between 2 and 100000, got 1"
    naive = client.get(f"{URL}/results", params={"start": "2026-01-01T00:00:00"}, headers=read)
    assert naive.status_code == 422
    assert "has no UTC offset" in naive.json()["detail"]
    bad_system = client.get(f"{URL}/results", params={"units": "imperial"}, headers=read)
    assert bad_system.status_code == 422
    assert bad_system.json()["errors"][0]["field"] == "units"


def test_results_need_the_read_scope(client, make_key, plant):
    ingest_only = make_key("ingest")
    response = client.get(f"{URL}/results", headers=ingest_only)
    assert response.status_code == 403
    assert client.get(f"{URL}/results").status_code == 401


@pytest.mark.parametrize(
    ("start", "end", "interval", "max_points", "expected"),
    [
        (0, 10 * MIN, MIN, 10, None),  # ten intervals fit as they are
        (0, 10 * MIN, MIN, 5, 2 * MIN),
        (30_000, 10 * MIN + 30_000, MIN, 5, 3 * MIN),  # 2 min would need 6 aligned buckets
        (0, 100 * MIN, MIN, 10, 10 * MIN),  # exactly a 10-minute block: stays
        (0, 400 * MIN, MIN, 10, 40 * MIN),  # 40 min >= 3 x 10 min: 10-minute blocks
        (0, 2880 * MIN, MIN, 10, 300 * MIN),  # 288 min >= 3 h: rounded up to 5 h
        (0, 525_600 * MIN, MIN, 2000, 300 * MIN),  # a year of minutes: 263 -> 300 min
        (0, 525_600 * 7 * MIN, 7 * MIN, 2000, 263 * 7 * MIN),  # 7 min divides no level
    ],
)
def test_bucket_fits_and_rounds_to_rollup_blocks(start, end, interval, max_points, expected):
    bucket = choose_bucket_ms(start, end, interval, max_points)
    assert bucket == expected
    if bucket is not None:
        count = (end - 1) // bucket - start // bucket + 1
        assert 0.75 * max_points - 1 <= count <= max_points
