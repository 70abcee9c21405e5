"""Callback-level tests: each page's callbacks called directly with a client double.

The double (tests/dashboard/fakes.py) is our own client class with its HTTP call
replaced, so parsing and error handling run for real; the numbers are invented.
"""

from __future__ import annotations

import asyncio
import base64

import pandas as pd
import pytest
from dash._callback_context import context_value
from dash._utils import AttributeDict

from dashboard.app import highlight_nav, remember_choices
from dashboard.client import ApiError
from dashboard.pages import alerts, baselines, overview, second_law, unit, uploads
from tests.dashboard import fakes

US = {"system": "us", "clock": "utc"}
SI = {"system": "si", "clock": "plant"}


def run(coro):
    return asyncio.run(coro)


def text_of(component) -> str:
    """All text inside a Dash component tree, joined by single spaces."""
    return " ".join(_text(component).split())


def _text(component) -> str:
    if component is None:
        return ""
    if isinstance(component, str | int | float):
        return str(component)
    if isinstance(component, list | tuple):
        return " ".join(_text(c) for c in component)
    return _text(getattr(component, "children", None))


# -- shell -------------------------------------------------------------------------------


def test_choices_are_validated_into_the_store():
    assert remember_choices("us", "utc") == {"system": "us", "clock": "utc"}
    assert remember_choices("imperial", None) == {"system": "si", "clock": "plant"}


def test_navigation_marks_the_page_on_screen():
    classes = highlight_nav("/units/boiler-1")
    assert classes[0] == "lw-nav-link lw-active"  # unit pages belong to the overview
    assert classes.count("lw-nav-link lw-active") == 1
    assert highlight_nav("/uploads")[-1] == "lw-nav-link lw-active"


# -- overview ----------------------------------------------------------------------------


def test_overview_rows_in_display_units_most_costly_first():
    client = fakes.FakeClient()
    tiles, data, columns, note = run(overview.refresh(SI, None, client=client))
    assert [r["unit"] for r in data] == ["[Boiler 1](/units/boiler-1)", "[CHP block](/units/chp)"]
    boiler = data[0]
    # efficiencies are the means over the unit's last hour of results
    asked = [c[2]["params"] for c in client.calls if c[1] == "/units/boiler-1/results"][0]
    end = fakes.LATEST_T + pd.Timedelta(minutes=1)
    assert (asked["start"], asked["end"]) == (
        (end - pd.Timedelta(hours=1)).strftime("%Y-%m-%dT%H:%M:%SZ"),
        end.strftime("%Y-%m-%dT%H:%M:%SZ"),
    )
    hour = run(
        client.results("boiler-1", end - pd.Timedelta(hours=1), end, ["eta_1"], max_points=2)
    )
    assert boiler["eta_1"] == pytest.approx(100 * hour.period_means()["eta_1"])
    assert boiler["headroom_recoverable_w"] == pytest.approx(1.5)  # 1.5e6 W in MW
    assert boiler["cost"] == 12.5
    assert boiler["last"] == "2026-12-01 00:59 CET"  # 23:59 UTC in Vienna, winter
    headers = {c["id"]: c["name"] for c in columns}
    assert headers["eta_1"] == "η₁ [%]"
    assert headers["headroom_recoverable_w"] == "Headroom [MW]"
    assert headers["cost"] == "Cost of drift [EUR/h]"
    assert "plant" not in headers  # one plant: named in the tiles instead
    assert "Tarnwick Board Mill CHP" in text_of(tiles)
    assert "alerts" not in headers  # the server has no alerts yet ...
    assert note == "Alerts are not set up on this server yet."  # ... and the page says so
    assert "12.5 EUR/h" in text_of(tiles)


def test_overview_in_us_units_and_utc():
    _, data, columns, _ = run(overview.refresh(US, None, client=fakes.FakeClient()))
    headers = {c["id"]: c["name"] for c in columns}
    assert headers["headroom_recoverable_w"] == "Headroom [MMBtu/h]"
    # 1.5 MW = 1.5e6 * 3600 / 1055.05585262 / 1e6 MMBtu/h (IT Btu, NIST SP 811 B.9)
    assert data[0]["headroom_recoverable_w"] == pytest.approx(1.5e6 * 3600 / 1055.05585262 / 1e6)
    assert data[0]["last"] == "2026-11-30 23:59 UTC"


def test_overview_counts_open_alerts_when_the_server_has_them():
    client = fakes.FakeClient(
        alerts=[
            {"id": 1, "unit": "boiler-1", "status": "firing"},
            {"id": 2, "unit": "boiler-1", "status": "firing"},
            {"id": 3, "unit": "chp", "status": "resolved"},
        ]
    )
    tiles, data, columns, note = run(overview.refresh(SI, None, client=client))
    assert {r["unit"]: r["alerts"] for r in data} == {
        "[Boiler 1](/units/boiler-1)": 2,
        "[CHP block](/units/chp)": 0,
    }
    assert note is None
    assert "Open alerts 2" in text_of(tiles)


def test_a_refused_key_says_how_to_give_the_dashboard_one():
    class Refused(fakes.FakeClient):
        async def _call(self, method, path, *, optional=False, **kwargs):
            raise ApiError(401, "Unauthorized", "missing API key")

    tiles, data, _, _ = run(overview.refresh(SI, None, client=Refused()))
    assert data == []
    assert "LOSTWORK_DASHBOARD_API_KEY" in text_of(tiles)
    assert "Could not load the units: Unauthorized" in text_of(tiles)


def test_overview_without_units_says_what_to_do():
    tiles, data, _, _ = run(overview.refresh(SI, None, client=fakes.FakeClient(empty=True)))
    assert data == []
    assert "lostwork plant apply FILE" in text_of(tiles)


# -- unit page ---------------------------------------------------------------------------


def test_unit_load_offers_the_kinds_results_efficiencies_first():
    context, title, options, chosen, links = run(unit.load("boiler-1", client=fakes.FakeClient()))
    assert chosen == "eta_1"
    assert [o["value"] for o in options][:2] == ["eta_1", "eta_2"]
    assert "flags" not in [o["value"] for o in options]
    assert context["time_zone"] == "Europe/Vienna"
    assert "Boiler 1" in text_of(title)
    assert [link.href for link in links] == [
        "/second-law?unit=boiler-1",
        "/baselines?unit=boiler-1",
    ]


def test_unit_load_of_an_unknown_unit_names_it():
    context, title, *_ = run(unit.load("boiler-9", client=fakes.FakeClient()))
    assert context is None
    assert "no unit 'boiler-9' on this server" in text_of(title)


def _draw(client, *, preset="7d", window=None, choice=SI, width=800, metric="eta_1"):
    context = run(unit.load("boiler-1", client=client))[0]
    return run(unit.draw(context, metric, preset, window, choice, width, client=client))


def test_unit_draw_without_baseline_says_so_and_shades_flags():
    client = fakes.FakeClient(flagged=(10, 20))
    main, drift, cusum, caption, note, pair = _draw(client)
    assert "No baseline fitted yet" in text_of(note)
    assert pair == {"display": "none"}
    assert drift.layout.annotations[0].text == "No baseline fitted yet for this quantity."
    assert main.layout.yaxis.title.text == "First-law efficiency (HHV) [%]"
    assert main.layout.xaxis.title.text == "Time (Europe/Vienna, local)"
    shade = next(t for t in main.data if t.name == "Negative entropy generation (1)")
    assert len(shade.x) == 1
    actual = next(t for t in main.data if t.name == "First-law efficiency (HHV), actual")
    # the window's first point, 2026-11-24 00:00 UTC, on the plant's clock (CET)
    assert pd.Timestamp(actual.x[0]) == pd.Timestamp("2026-11-24 01:00")
    # resolution follows the chart width: two points per pixel
    _, _, kwargs = next(c for c in client.calls if c[1].endswith("/results"))
    assert kwargs["params"]["max_points"] == 1600
    assert "1,600 points" in caption


def test_unit_draw_with_baseline_shows_expected_drift_and_cusum():
    main, drift, cusum, _, note, pair = _draw(fakes.FakeClient(baseline=True))
    assert note is None and pair is None
    assert "First-law efficiency (HHV), expected" in [t.name for t in main.data]
    assert drift.layout.yaxis.title.text == "Drift [% points]"
    assert [t.name for t in cusum.data] == ["CUSUM, upper", "CUSUM, lower"]
    # in residual standard deviations, with the active baseline's decision interval h
    assert cusum.layout.yaxis.title.text == "CUSUM [σ]"
    line = [s for s in cusum.layout.shapes if s.type == "line"][0]
    assert (line.y0, line.y1) == (12.0, 12.0)


def test_baseline_columns_are_drawn_with_their_metric_not_offered_on_their_own():
    _, _, options, _, _ = run(unit.load("boiler-1", client=fakes.FakeClient(baseline=True)))
    values = [o["value"] for o in options]
    assert "eta_1" in values and "headroom_recoverable_w" in values
    assert not [v for v in values if v.startswith(("expected_", "cusum_", "drift_eta"))]


def test_unit_draw_in_us_units_and_utc_converts_the_hover_values():
    main, *_ = _draw(fakes.FakeClient(), choice=US, metric="heat_absorbed_w")
    line = next(t for t in main.data if t.name == "Heat absorbed, actual")
    assert main.layout.yaxis.title.text == "Heat absorbed [MMBtu/h]"
    assert main.layout.xaxis.title.text == "Time (UTC)"
    assert line.hovertemplate.endswith(" MMBtu/h")
    first = pd.Timestamp(line.x[0])  # a wall-clock time of the chosen clock, UTC here
    assert first == pd.Timestamp("2026-11-24 00:00")
    minutes = first.tz_localize("UTC").value / 60e9
    assert line.y[0] == pytest.approx(
        fakes.value("heat_absorbed_w", minutes) * 3600 / 1055.05585262 / 1e6
    )


def test_range_presets_and_zoom_windows_change_what_is_asked():
    client = fakes.FakeClient()
    _draw(client, preset="6h")
    params = [c[2]["params"] for c in client.calls if c[1].endswith("/results")][-1]
    assert (pd.Timestamp(params["end"]) - pd.Timestamp(params["start"])) == pd.Timedelta(hours=6)
    # the end is exclusive: just after the latest one-minute interval
    assert pd.Timestamp(params["end"]) == fakes.LATEST_T + pd.Timedelta(minutes=1)
    window = {"start": "2026-11-30T10:00:00+00:00", "end": "2026-11-30T11:00:00+00:00"}
    _draw(client, preset="1y", window=window)
    params = [c[2]["params"] for c in client.calls if c[1].endswith("/results")][-1]
    assert (params["start"], params["end"]) == ("2026-11-30T10:00:00Z", "2026-11-30T11:00:00Z")


def _triggered(prop_id: str):
    return context_value.set(AttributeDict(triggered_inputs=[{"prop_id": prop_id, "value": None}]))


def test_zoom_on_the_chart_becomes_a_utc_window():
    token = _triggered(f"{unit.MAIN}.relayoutData")
    try:
        context = {
            "slug": "boiler-1",
            "name": "B",
            "kind": "boiler",
            "plant": "p",
            "time_zone": "Europe/Vienna",
        }
        relayout = {"xaxis.range[0]": "2026-11-30 11:00", "xaxis.range[1]": "2026-11-30 12:30"}
        assert unit.zoom(relayout, "7d", context, SI) == {
            "start": "2026-11-30T10:00:00+00:00",  # 11:00 CET
            "end": "2026-11-30T11:30:00+00:00",
        }
        assert unit.zoom({"xaxis.autorange": True}, "7d", context, SI) is None
    finally:
        context_value.reset(token)


def test_a_new_range_clears_the_zoom():
    token = _triggered(f"{unit.RANGE}.value")
    try:
        assert unit.zoom({"xaxis.range[0]": "2026-11-30 11:00"}, "30d", None, SI) is None
    finally:
        context_value.reset(token)


# -- second law --------------------------------------------------------------------------


def test_second_law_account_closes_and_is_tabled():
    client = fakes.FakeClient()
    options, chosen = run(second_law.unit_choices("boiler-1", client=client))
    assert chosen == "boiler-1" and len(options) == 2
    tiles, waterfall, sankey, data, columns, note = run(
        second_law.draw("boiler-1", "24h", SI, client=client)
    )
    shares = {r["where"]: r["share"] for r in data}
    assert shares["Fuel exergy"] == 100.0
    assert shares["Water and steam exergy gain"] == pytest.approx(35.0)
    assert shares["Destroyed inside the unit (T0·Sgen)"] == pytest.approx(59.0)
    assert shares["Lost to the surroundings"] == pytest.approx(6.0)
    assert sum(v for k, v in shares.items() if k != "Fuel exergy") == pytest.approx(100.0)
    assert {c["id"]: c["name"] for c in columns}["value"] == "Exergy [MW]"
    assert waterfall.layout.yaxis.title.text == "Exergy flow [MW]"
    assert sum(sankey.data[0].link.value) == pytest.approx(20.0)
    # the server averages the period into two buckets (its minimum)
    params = [c[2]["params"] for c in client.calls if c[1].endswith("/results")][-1]
    assert params["max_points"] == 2
    assert "Recoverable headroom" in text_of(tiles)


def test_second_law_in_us_units():
    _, waterfall, _, data, columns, _ = run(
        second_law.draw("boiler-1", "24h", US, client=fakes.FakeClient())
    )
    assert waterfall.layout.yaxis.title.text == "Exergy flow [MMBtu/h]"
    assert data[0]["value"] == pytest.approx(20.0e6 * 3600 / 1055.05585262 / 1e6)


# -- alerts ------------------------------------------------------------------------------


def test_alerts_empty_state_until_the_server_has_them():
    data, _, empty, style, _ = run(
        alerts.load("firing", None, None, 0, SI, client=fakes.FakeClient())
    )
    assert data == []
    assert "No alerts on this server yet" in text_of(empty)
    assert style == {"display": "none"}


ALERTS = [
    {
        "id": 7,
        "unit": "boiler-1",
        "metric": "eta_1",
        "severity": "warning",
        "status": "firing",
        "began_at": "2026-11-30T20:00:00Z",
        "message": "eta_1 below expected",
    },
    {
        "id": 8,
        "unit": "chp",
        "metric": "eta_2",
        "severity": "info",
        "status": "resolved",
        "began_at": "2026-11-29T20:00:00Z",
        "acknowledged_at": "2026-11-29T21:00:00Z",
        "acknowledged_by": "shift lead",
        "note": "meter swapped",
        "message": "stale",
    },
]


def test_alerts_listed_with_plant_times():
    data, _, empty, style, options = run(
        alerts.load("all", None, None, 0, SI, client=fakes.FakeClient(alerts=ALERTS))
    )
    assert empty is None and style is None
    assert [r["id"] for r in data] == ["7", "8"]
    assert data[0]["began"] == "2026-11-30 21:00 CET"
    assert data[0]["metric"] == "First-law efficiency (HHV)"
    assert data[1]["acknowledged"] == "2026-11-29 22:00 CET by shift lead: meter swapped"
    assert [o["value"] for o in options] == ["boiler-1", "chp"]
    firing, *_ = run(
        alerts.load("firing", None, None, 0, SI, client=fakes.FakeClient(alerts=ALERTS))
    )
    assert [r["id"] for r in firing] == ["7"]


def test_acknowledge_needs_a_selection_and_a_note_then_sends_it():
    client = fakes.FakeClient(alerts=ALERTS)
    rows = [{"id": "7"}, {"id": "8"}]
    assert run(alerts.acknowledge(1, [], rows, "x", 0, client=client)) == (
        "Select an alert first.",
        0,
        "x",
    )
    assert run(alerts.acknowledge(1, [0], rows, "  ", 0, client=client)) == (
        "Write a note: what was done or decided.",
        0,
        "  ",
    )
    result = run(alerts.acknowledge(1, [1], rows, " valve re-seated ", 0, client=client))
    assert result == ("Alert 8 acknowledged.", 1, "")
    assert client.calls[-1][:2] == ("POST", "/alerts/8/acknowledge")
    assert client.calls[-1][2]["json"] == {"note": "valve re-seated"}


def test_a_refused_acknowledgement_keeps_the_note():
    class Refusing(fakes.FakeClient):
        async def acknowledge(self, alert_id, note):
            raise ApiError(409, "Conflict", f"alert {alert_id} is already acknowledged")

    message, count, note = run(
        alerts.acknowledge(1, [0], [{"id": "7"}], "again", 3, client=Refusing(alerts=ALERTS))
    )
    assert "alert 7 is already acknowledged" in text_of(message)
    assert (count, note) == (3, "again")


# -- uploads -----------------------------------------------------------------------------

REPORT = {
    "id": 3,
    "plant": "tarnwick-mill",
    "filename": "shift.csv",
    "status": "stored",
    "stored": 5,
    "replaced": 0,
    "unchanged": 0,
    "rejected": 1,
    "errors": [{"row": 3, "column": "FW-FLOW [t/h]", "value": "abc", "message": "not a number"}],
    "notices": [],
    "units_recomputed": ["boiler-1", "chp"],
}


def _data_url(text: str) -> str:
    return "data:text/csv;base64," + base64.b64encode(text.encode()).decode()


def test_upload_shows_counts_errors_and_recomputed_units():
    client = fakes.FakeClient(upload_answer=REPORT)
    result, errors, style = run(
        uploads.send(
            _data_url("time,FW-FLOW\n"), "shift.csv", "tarnwick-mill", "partial", client=client
        )
    )
    assert errors == [
        {"row": 3, "column": "FW-FLOW [t/h]", "value": "abc", "message": "not a number"}
    ]
    assert style is None
    assert "Recomputing: boiler-1 , chp" in text_of(result)
    sent = client.calls[-1][2]
    assert sent["files"]["file"][1] == b"time,FW-FLOW\n"
    assert sent["data"] == {"plant": "tarnwick-mill", "mode": "partial"}


def test_upload_refused_shows_why_and_the_rows():
    refusal = ApiError(
        422,
        "Invalid upload",
        "nothing stored: 1 problem",
        {"errors": [{"row": 2, "column": "FW-FLOW", "message": "not a number", "value": "x"}]},
    )
    client = fakes.FakeClient(upload_answer=refusal)
    result, errors, style = run(
        uploads.send(_data_url("x"), "bad.csv", "tarnwick-mill", "all_or_nothing", client=client)
    )
    assert "bad.csv was refused: Invalid upload" in text_of(result)
    assert errors[0]["row"] == 2 and style is None


def test_upload_without_plant_or_with_garbage():
    client = fakes.FakeClient(upload_answer=REPORT)
    result, errors, _ = run(uploads.send(_data_url("x"), "a.csv", None, "partial", client=client))
    assert "choose the plant first" in text_of(result)
    result, errors, _ = run(
        uploads.send("not a data url", "a.csv", "tarnwick-mill", "partial", client=client)
    )
    assert "could not be read" in text_of(result)
    assert not [c for c in client.calls if c[1] == "/uploads"]


# -- baselines --------------------------------------------------------------------------


def _baseline_context(client):
    return run(baselines.metric_choices("boiler-1", client=client))[0]


def test_baselines_not_offered_by_the_server():
    client = fakes.FakeClient()
    data, _, state, style = run(baselines.load(_baseline_context(client), SI, 0, client=client))
    assert data == [] and style == {"display": "none"}
    assert "Baselines are not available on this server" in text_of(state)


def test_no_baseline_fitted_yet():
    client = fakes.FakeClient(baselines=[])
    data, _, state, style = run(baselines.load(_baseline_context(client), SI, 0, client=client))
    assert "No baseline fitted yet" in text_of(state) and style == {"display": "none"}


def test_baseline_rows_with_guideline_14_statistics():
    items = [
        {**fakes.ACTIVE_BASELINE, "version": 1, "active": False},
        {
            **fakes.ACTIVE_BASELINE,
            "version": 2,
            "statistics": {
                "n": 4000,
                "r2": 0.81,
                "cv_rmse": 0.012,
                "nmbe": -0.001,
                "meets_guideline_14": True,
            },
        },
    ]
    client = fakes.FakeClient(baselines=items)
    data, selected, state, style = run(
        baselines.load(_baseline_context(client), SI, 0, client=client)
    )
    assert state is None and style is None and selected == []
    assert [r["version"] for r in data] == [2, 1]  # newest first
    assert data[0]["cv_rmse"] == pytest.approx(1.2)
    assert data[0]["nmbe"] == pytest.approx(-0.1)
    assert (data[0]["verdict"], data[0]["active"]) == ("meets", "active")
    assert data[0]["period"] == "2025-11-01 01:00 CET to 2025-12-01 01:00 CET"


def test_baseline_quantities_exclude_the_baseline_columns():
    context, options, chosen = run(
        baselines.metric_choices("boiler-1", client=fakes.FakeClient(baseline=True))
    )
    values = [o["value"] for o in options]
    assert chosen == "eta_1" and "eta_2" in values
    assert not [v for v in values if v.startswith(("expected_", "cusum_", "ewma_"))]


def test_reference_period_is_the_shown_range_or_the_dragged_span():
    shown = {
        "start": "2026-09-01T00:00:00+00:00",
        "end": "2026-12-01T00:00:00+00:00",
        "zone": "Europe/Vienna",
    }
    token = _triggered(f"{baselines.SHOWN}.data")
    try:
        period, text = baselines.pick_period(None, shown)
    finally:
        context_value.reset(token)
    assert period == {"start": "2026-09-01T00:00:00+00:00", "end": "2026-12-01T00:00:00+00:00"}
    assert text == "From 2026-09-01 02:00 CEST to 2026-12-01 01:00 CET"
    token = _triggered(f"{baselines.CHART}.relayoutData")
    try:
        relayout = {"xaxis.range[0]": "2026-10-05 00:00", "xaxis.range[1]": "2026-11-02 00:00"}
        period, _ = baselines.pick_period(relayout, shown)
    finally:
        context_value.reset(token)
    # wall-clock times of Vienna: summer time (UTC+2) on 5 October, winter (UTC+1) on 2 November
    assert period == {"start": "2026-10-04T22:00:00+00:00", "end": "2026-11-01T23:00:00+00:00"}


def test_fit_sends_the_period_and_shows_the_verdict():
    client = fakes.FakeClient(baselines=[])
    period = {"start": "2026-10-04T22:00:00+00:00", "end": "2026-11-01T23:00:00+00:00"}
    result, changed = run(baselines.fit(1, "boiler-1", "eta_1", period, 0, client=client))
    method, path, kwargs = client.calls[-1]
    assert (method, path) == ("POST", "/units/boiler-1/baselines")
    assert kwargs["json"] == {
        "metric": "eta_1",
        "start": "2026-10-04T22:00:00Z",
        "end": "2026-11-01T23:00:00Z",
    }
    assert changed == 1
    summary = text_of(result)
    assert "Version 2 of First-law efficiency (HHV): linear in load" in summary
    assert "ASHRAE Guideline 14 meets" in summary and "CV(RMSE) 1.0 %" in summary


def test_activate_the_selected_version():
    client = fakes.FakeClient(baselines=[])
    assert run(baselines.activate(1, [], [], "boiler-1", 0, client=client)) == (
        "Select a version first.",
        0,
    )
    message, changed = run(
        baselines.activate(1, [1], [{"version": 2}, {"version": 1}], "boiler-1", 4, client=client)
    )
    assert client.calls[-1][:2] == ("POST", "/units/boiler-1/baselines/1/activate")
    assert message.startswith("Version 1 is active") and changed == 5


def test_baseline_chart_in_display_units_and_the_plant_clock():
    client = fakes.FakeClient(baseline=True)
    fig, shown = run(baselines.draw(_baseline_context(client), "eta_1", "7d", SI, client=client))
    assert fig.layout.yaxis.title.text == "First-law efficiency (HHV) [%]"
    assert shown["zone"] == "Europe/Vienna"
    # unsteady hours shaded, on the plant's clock
    shade = next(t for t in fig.data if (t.name or "").startswith("Not steady"))
    assert len(shade.x) >= 7


def test_unsteady_hours_shaded_on_the_unit_page_too():
    main, *_ = _draw(fakes.FakeClient(baseline=True), preset="24h")
    assert any((t.name or "").startswith("Not steady") for t in main.data)


def test_steady_all_along_shades_nothing():
    class Steady(fakes.FakeClient):
        def _results(self, slug, params):
            body = super()._results(slug, params)
            for series in body["series"]:
                if series["metric"] == "steady":
                    series["mean"] = [1.0] * len(series["mean"])
            return body

    fig, _ = run(
        baselines.draw(
            _baseline_context(Steady(baseline=True)),
            "eta_1",
            "7d",
            SI,
            client=Steady(baseline=True),
        )
    )
    assert not [t for t in fig.data if (t.name or "").startswith("Not steady")]
