"""Figures: axes state units, flags decode to the right spans, the waterfall closes."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from dashboard import figures
from dashboard.palette import COPPER, SAND, TIDE
from engine.checks import Flag

T = pd.date_range("2026-03-01T00:00Z", periods=6, freq="10min")


def _frame(values):
    values = np.asarray(values, dtype=float)
    return pd.DataFrame({"mean": values, "min": values - 1, "max": values + 1}, index=T)


def test_trend_axes_state_unit_and_clock():
    fig = figures.trend_figure(
        _frame([90, 91, 92, 91, 90, 89]),
        name="First-law efficiency",
        unit="%",
        x_title="Time (UTC)",
    )
    assert fig.layout.yaxis.title.text == "First-law efficiency [%]"
    assert fig.layout.xaxis.title.text == "Time (UTC)"
    # band (two traces) then the mean line, whose hover carries the unit
    assert [t.name for t in fig.data] == [None, "min–max per point", "First-law efficiency"]
    assert fig.data[2].hovertemplate == "%{y:,.4~g} %"
    assert list(fig.data[0].y) == [89, 90, 91, 90, 89, 88]
    assert list(fig.data[1].y) == [91, 92, 93, 92, 91, 90]
    assert fig.data[2].x.dtype.kind == "M"  # datetime64, not an array of objects
    assert pd.Timestamp(fig.data[2].x[0]) == pd.Timestamp("2026-03-01 00:00")


def test_dimensionless_axis_says_dash():
    assert figures.axis_title("CUSUM", "–") == "CUSUM [-]"
    assert figures.axis_title("CUSUM", "") == "CUSUM [-]"


def test_actual_expected_has_expected_line_band_and_units():
    expected = pd.Series(91.5, index=T)
    fig = figures.actual_expected_figure(
        _frame([90, 91, 92, 91, 90, 89]),
        name="η₁",
        unit="%",
        x_title="Time (Europe/Vienna, local)",
        expected=expected,
        expected_low=expected - 0.5,
        expected_high=expected + 0.5,
    )
    names = [t.name for t in fig.data]
    assert "η₁, expected" in names and "baseline band" in names and "η₁, actual" in names
    assert fig.layout.yaxis.title.text == "η₁ [%]"
    band = next(t for t in fig.data if t.name == "baseline band")
    assert list(band.y) == [92.0] * 6


def test_flags_decode_bit_by_bit_into_spans():
    # Hand-built: bit 2 (negative entropy generation) set at points 1..3, bit 4
    # (efficiency above one) at points 3 and 5; NaN (no result) sets nothing.
    flags = pd.Series([0, 2, 2, 6, np.nan, 4], index=T, dtype=float)
    spans = figures.flag_spans(flags, bucket_seconds=600)
    assert spans.to_dict("records") == [
        {"start": T[1], "end": T[4], "reason": "Negative entropy generation", "kind": "flag"},
        {"start": T[3], "end": T[4], "reason": "Efficiency above one", "kind": "flag"},
        {
            "start": T[5],
            "end": T[5] + pd.Timedelta(minutes=10),
            "reason": "Efficiency above one",
            "kind": "flag",
        },
    ]


def test_pipeline_data_bits_and_unknown_bits_are_decoded_too():
    # api.pipeline.quality.DataFlag: THIN_DATA = 1 << 16; bit 40 is named by nobody.
    flags = pd.Series([0, 65536, 65536 | (1 << 40), 0, 0, 0], index=T, dtype=float)
    spans = figures.flag_spans(flags, bucket_seconds=600)
    assert [(r["start"], r["end"], r["reason"]) for r in spans.to_dict("records")] == [
        (T[1], T[3], "Thin data"),
        (T[2], T[3], "Flag bit 40"),
    ]


def test_every_flag_bit_of_the_engine_has_a_label():
    labels = {figures.flag_label(f) for f in Flag if f.value}
    assert "Direct indirect disagree" in labels
    assert len(labels) == len([f for f in Flag if f.value])


def test_no_flags_no_spans():
    spans = figures.flag_spans(pd.Series([0.0] * 6, index=T))
    assert spans.empty and list(spans.columns) == ["start", "end", "reason", "kind"]


def test_unsteady_spans_from_bucket_means():
    steady = pd.Series([1.0, 0.2, 0.4, 1.0, 0.5, 0.0], index=T)
    spans = figures.state_spans(steady)  # spacing inferred: 10 min
    assert [(r["start"], r["end"], r["reason"], r["kind"]) for r in spans.to_dict("records")] == [
        (T[1], T[3], figures.NOT_STEADY, "state"),
        (T[5], T[5] + pd.Timedelta(minutes=10), figures.NOT_STEADY, "state"),
    ]


def test_extrapolated_spans_when_the_state_is_one():
    extrapolated = pd.Series([0.0, 1.0, 0.9, 0.0, 0.0, 0.0], index=T)
    spans = figures.state_spans(extrapolated, 600, reason="Outside", kind="baseline", when=1.0)
    assert [(r["start"], r["end"]) for r in spans.to_dict("records")] == [(T[1], T[3])]
    fig = figures.trend_figure(_frame([1, 2, 3, 4, 5, 6]), name="x", unit="%", x_title="t")
    figures.add_spans(fig, spans)
    assert fig.data[-1].marker.color == "rgba(109,74,126,0.18)"  # PLUM, the baseline's colour


def test_spans_are_shaded_with_a_counted_legend_entry():
    fig = figures.trend_figure(_frame([1, 2, 3, 4, 5, 6]), name="x", unit="MW", x_title="t")
    spans = figures.flag_spans(pd.Series([0, 2, 0, 2, 2, 0], index=T, dtype=float), 600)
    figures.add_spans(fig, spans)
    shade = fig.data[-1]
    assert shade.name == "Negative entropy generation (2)"
    # one full-height bar per span on the hidden axis: centred on it, as wide as it
    assert shade.yaxis == "y9" and fig.layout.yaxis9.range == (0, 1)
    assert fig.layout.yaxis9.visible is False
    # plotly gets wall-clock times (datetime64), here those of UTC
    wall = T.tz_localize(None)
    assert [pd.Timestamp(x) for x in shade.x] == [wall[1] + pd.Timedelta(minutes=5), wall[4]]
    assert list(shade.width) == [600_000.0, 1_200_000.0]
    assert list(shade.y) == [1.0, 1.0] and shade.base == 0


def test_many_spans_are_cheap():
    # a year at chart resolution with a flag in every other bucket: 1,000 spans
    index = pd.date_range("2026-01-01", periods=2000, freq="263min", tz="UTC")
    flags = pd.Series(np.tile([2.0, 0.0], 1000), index=index)
    spans = figures.flag_spans(flags)
    fig = figures.trend_figure(
        pd.DataFrame({"mean": 1.0, "min": 0.9, "max": 1.1}, index=index),
        name="x",
        unit="%",
        x_title="t",
    )
    figures.add_spans(fig, spans)
    assert len(spans) == 1000
    assert len(fig.data) == 4  # band (2), line, one shading trace: not 1,000 shapes
    assert not fig.layout.shapes


def test_waterfall_closes_on_the_product():
    # Balance that must close: input 100 = product 40 + destroyed 45 + 5 + lost 10.
    terms = [
        ("product", "Water exergy gain", 40.0),
        ("destroyed", "Combustion", 45.0),
        ("destroyed", "Heat transfer", 5.0),
        ("lost", "Flue gas", 10.0),
    ]
    steps = figures.waterfall_steps("Fuel exergy", 100.0, terms)
    assert list(steps["label"]) == [
        "Fuel exergy",
        "Combustion",
        "Heat transfer",
        "Flue gas",
        "Water exergy gain",
    ]
    outflows = steps[steps["category"].isin(["destroyed", "lost"])]
    # each bar starts where the previous one ended ...
    tops = (outflows["base"] + outflows["value"]).to_numpy()
    assert tops[0] == 100.0
    assert np.allclose(tops[1:], outflows["base"].to_numpy()[:-1])
    # ... and what is left after the last outflow is the product bar
    product = steps[steps["category"] == "product"].iloc[0]
    assert outflows["base"].iloc[-1] == pytest.approx(product["value"])
    assert steps["value"].iloc[0] - outflows["value"].sum() == pytest.approx(product["value"])

    fig = figures.exergy_waterfall("Fuel exergy", 100.0, terms, unit="MW")
    assert fig.layout.yaxis.title.text == "Exergy flow [MW]"
    colours = {t.name: t.marker.color for t in fig.data}
    assert colours["destroyed inside the unit"] == COPPER
    assert colours["lost to the surroundings"] == SAND
    assert colours["product"] == TIDE
    drawn = {x: (b, y) for t in fig.data for x, b, y in zip(t.x, t.base, t.y, strict=True)}
    assert drawn["Flue gas"] == (40.0, 10.0)
    assert drawn["Water exergy<br>gain"] == (0.0, 40.0)


def test_waterfall_shows_a_mismatch_rather_than_hiding_it():
    terms = [
        ("product", "P", 40.0),
        ("destroyed", "D", 50.0),
        ("mismatch", "Balance mismatch", 10.0),
    ]
    steps = figures.waterfall_steps("In", 100.0, terms)
    assert steps.iloc[-2].to_dict() == {
        "category": "mismatch",
        "label": "Balance mismatch",
        "base": 40.0,
        "value": 10.0,
    }


def test_waterfall_needs_exactly_one_product():
    with pytest.raises(ValueError, match="exactly one product term expected, got 0"):
        figures.waterfall_steps("In", 1.0, [("destroyed", "D", 1.0)])


def test_sankey_links_carry_every_outflow():
    terms = [("product", "P", 40.0), ("destroyed", "D", 50.0), ("lost", "L", 10.0)]
    fig = figures.exergy_sankey("In", 100.0, terms, unit="MW")
    link = fig.data[0].link
    assert list(link.source) == [0, 0, 0]
    assert list(link.target) == [1, 2, 3]
    assert sum(link.value) == pytest.approx(100.0)
    assert fig.data[0].node.label[0] == "In<br>100.0 MW"


def test_cusum_draws_the_decision_interval():
    upper = pd.Series([0, 1, 2, 5], index=T[:4], dtype=float)
    fig = figures.cusum_figure(upper, None, unit="–", x_title="Time (UTC)", decision_interval=4.0)
    assert fig.layout.yaxis.title.text == "CUSUM [-]"
    line = [s for s in fig.layout.shapes if s.type == "line"][0]
    assert (line.y0, line.y1) == (4.0, 4.0)


def test_drift_bars_coloured_by_sign():
    drift = pd.Series([-1.0, 0.5], index=T[:2])
    fig = figures.drift_figure(drift, name="Drift", unit="% points", x_title="Time (UTC)")
    assert list(fig.data[0].marker.color) == [COPPER, TIDE]
    assert fig.layout.yaxis.title.text == "Drift [% points]"


def test_empty_figure_says_why():
    fig = figures.empty_figure("No baseline fitted yet for this quantity.")
    assert fig.layout.annotations[0].text == "No baseline fitted yet for this quantity."


def test_sankey_merges_small_parts_and_keeps_the_total():
    terms = [
        ("product", "P", 1.0),  # small, but the product is never merged
        ("destroyed", "Combustion", 80.0),
        ("destroyed", "Unaccounted", -0.5),
        ("lost", "Surface", 0.5),
        ("lost", "Unburned", 0.3),
        ("lost", "Stack", 18.7),
    ]
    flows = figures.sankey_flows(100.0, terms, 0.02)
    assert flows == [
        ("product", "P", 1.0),
        ("destroyed", "Combustion", 80.0),
        ("lost", "Stack", 18.7),
        ("mismatch", "Smaller parts (3)", pytest.approx(0.3)),  # mixed categories: grey
    ]
    assert sum(v for _, _, v in flows) == pytest.approx(sum(v for _, _, v in terms))
    only_losses = [t for t in terms if t[1] != "Unaccounted"]
    assert figures.sankey_flows(100.0, only_losses, 0.02)[-1] == (
        "lost",
        "Smaller parts (2)",
        pytest.approx(0.8),
    )
    one_small = [t for t in terms if t[1] not in ("Unaccounted", "Surface")]
    assert figures.sankey_flows(100.0, one_small, 0.02) == one_small
