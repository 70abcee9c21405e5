"""Baselines: pick a reference period on a chart, fit, read the fit, activate.

A baseline is what a unit should do at its load and weather (ISO 50001 / ISO 50006
energy baseline), fitted by the server on the steady intervals of a reference period;
its statistics follow ASHRAE Guideline 14 (CV(RMSE), NMBE and the calibration verdict).
"""

from __future__ import annotations

from typing import Any

import dash
import pandas as pd
from dash import Input, Output, State, dcc, html
from dash.dash_table.Format import Format, Scheme

from dashboard import figures, timerange, unit_context
from dashboard import formatting as fmt
from dashboard.client import (
    FLAGS_METRIC,
    STEADY_METRIC,
    ApiError,
    LostworkClient,
    NotAvailable,
    is_baseline_column,
)
from dashboard.components import cards, prefs
from dashboard.components.table import data_table
from dashboard.registry import page_callback
from dashboard.unit_context import UnitContext

PAGE = {"path": "/baselines", "name": "Baselines", "order": 4, "title": "lostwork · baselines"}
NAV_HREF = "/baselines"

ASKED = "baselines-asked"
UNIT = "baselines-unit"
CONTEXT = "baselines-context"
METRIC = "baselines-metric"
RANGE = "baselines-range"
CHART = "baselines-chart"
SHOWN = "baselines-shown"
PERIOD = "baselines-period"
PERIOD_TEXT = "baselines-period-text"
FIT = "baselines-fit"
FIT_RESULT = "baselines-fit-result"
TABLE = "baselines-table"
ACTIVATE = "baselines-activate"
ACTIVATE_RESULT = "baselines-activate-result"
CHANGED = "baselines-changed"
STATE = "baselines-state"
LIST = "baselines-list"

HIDDEN = {"display": "none"}
COLUMNS = [
    {"id": "version", "name": "Version", "type": "numeric"},
    {"id": "metric", "name": "Quantity", "type": "text"},
    {"id": "period", "name": "Reference period", "type": "text"},
    {"id": "model", "name": "Model in load", "type": "text"},
    {"id": "n", "name": "n", "type": "numeric"},
    {
        "id": "r2",
        "name": "R²",
        "type": "numeric",
        "format": Format(precision=3, scheme=Scheme.fixed),
    },
    {
        "id": "cv_rmse",
        "name": "CV(RMSE) [%]",
        "type": "numeric",
        "format": Format(precision=2, scheme=Scheme.fixed),
    },
    {
        "id": "nmbe",
        "name": "NMBE [%]",
        "type": "numeric",
        "format": Format(precision=3, scheme=Scheme.fixed),
    },
    {"id": "verdict", "name": "Guideline 14", "type": "text"},
    {"id": "active", "name": "Active", "type": "text"},
]


def layout(unit: str | None = None, **_kwargs: Any) -> html.Div:
    return html.Div(
        [
            dcc.Store(id=ASKED, data=unit),
            dcc.Store(id=CONTEXT),
            dcc.Store(id=SHOWN),
            dcc.Store(id=PERIOD),
            dcc.Store(id=CHANGED, data=0),
            html.Header(
                [
                    html.H1("Baselines"),
                    html.P(
                        "What a unit should do at its load and weather, fitted on a reference "
                        "period of steady operation; drift and its cost are measured against "
                        "the active one.",
                        className="lw-lede",
                    ),
                ]
            ),
            html.Div(
                [
                    _control(
                        "Unit", dcc.Dropdown(id=UNIT, clearable=False, className="lw-dropdown")
                    ),
                    _control(
                        "Quantity",
                        dcc.Dropdown(id=METRIC, clearable=False, className="lw-dropdown"),
                    ),
                    _control(
                        "Show",
                        dcc.RadioItems(
                            id=RANGE,
                            options=timerange.preset_options(),
                            value="90d",
                            className="lw-segments",
                        ),
                    ),
                ],
                className="lw-controls",
            ),
            cards.card(
                "Reference period",
                dcc.Graph(id=CHART, config={"displaylogo": False}, style={"height": "300px"}),
                html.Div(id=PERIOD_TEXT, className="lw-period"),
                html.Button("Fit a baseline on this period", id=FIT, className="lw-button"),
                dcc.Loading(html.Div(id=FIT_RESULT, role="status"), type="dot"),
                note="Drag across the chart to choose the period (the whole chart otherwise). "
                "The server fits on its steady, unflagged intervals.",
            ),
            html.Div(id=STATE),
            html.Div(
                cards.card(
                    "Versions",
                    data_table(TABLE, columns=COLUMNS, row_selectable="single", selected_rows=[]),
                    html.Button(
                        "Activate the selected version", id=ACTIVATE, className="lw-button"
                    ),
                    html.Div(id=ACTIVATE_RESULT, className="lw-note", role="status"),
                ),
                id=LIST,
            ),
        ]
    )


def _control(label: str, control: Any) -> html.Div:
    return html.Div([html.Div(label, className="lw-label"), control], className="lw-control")


@page_callback(Output(UNIT, "options"), Output(UNIT, "value"), Input(ASKED, "data"))
async def unit_choices(asked: str | None, *, client: LostworkClient):
    try:
        units = await client.units()
    except ApiError:
        return [], None
    options = [{"label": r["name"], "value": r["slug"]} for r in units.to_dict("records")]
    slugs = [o["value"] for o in options]
    return options, asked if asked in slugs else (slugs[0] if slugs else None)


@page_callback(
    Output(CONTEXT, "data"),
    Output(METRIC, "options"),
    Output(METRIC, "value"),
    Input(UNIT, "value"),
)
async def metric_choices(slug: str | None, *, client: LostworkClient):
    """What a baseline can be fitted for: the unit's own results, eta_1 first."""
    if not slug:
        return None, [], None
    try:
        context = await unit_context.load(client, slug)
    except ApiError:
        return None, [], None
    names = {r["name"] for r in context.results}
    options = [
        {"label": fmt.metric_label(r["name"], r.get("label")), "value": r["name"]}
        for r in context.results
        if r["name"] not in (FLAGS_METRIC, STEADY_METRIC)
        and not is_baseline_column(r["name"], names)
    ]
    options.sort(key=lambda o: (not o["value"].startswith("eta"), o["value"]))
    values = [o["value"] for o in options]
    return (
        context.to_store(),
        options,
        "eta_1" if "eta_1" in values else (values[0] if values else None),
    )


@page_callback(
    Output(CHART, "figure"),
    Output(SHOWN, "data"),
    Input(CONTEXT, "data"),
    Input(METRIC, "value"),
    Input(RANGE, "value"),
    Input(prefs.STORE, "data"),
)
async def draw(context_data, metric, preset, choice_data, *, client: LostworkClient):
    """The quantity over the shown range, unsteady intervals shaded, to choose a period on."""
    context = UnitContext.from_store(context_data)
    if context is None or not metric:
        return figures.empty_figure("Choose a unit and a quantity."), None
    start, end = timerange.window(preset, context.end())
    asked = [metric] + [m for m in (STEADY_METRIC,) if m in {r["name"] for r in context.results}]
    try:
        results = await client.results(context.slug, start, end, asked, max_points=1200)
    except ApiError as exc:
        return figures.empty_figure(f"Could not load results: {exc.title}"), None
    choice = prefs.read(choice_data)
    zone = fmt.zone_name(choice.clock, context.time_zone)
    shown = {"start": start.isoformat(), "end": end.isoformat(), "zone": zone}
    if not results.has(metric):
        return figures.empty_figure("No results in this range."), shown
    si_unit = results.units.get(metric) or context.si_unit(metric)
    series, unit = fmt.frame_to_display(results.series(metric), metric, si_unit, choice.system)
    series.index = fmt.to_zone(series.index, zone)
    fig = figures.trend_figure(
        series, name=fmt.metric_label(metric), unit=unit, x_title=fmt.time_axis_title(zone)
    )
    if results.has(STEADY_METRIC):
        spans = figures.state_spans(results.mean[STEADY_METRIC], results.bucket_seconds)
        figures.add_spans(fig, fmt.spans_to_zone(spans, zone))
    fig.update_layout(height=300, dragmode="zoom", uirevision=f"{context.slug}-{metric}-{preset}")
    return fig, shown


@page_callback(
    Output(PERIOD, "data"),
    Output(PERIOD_TEXT, "children"),
    Input(CHART, "relayoutData"),
    Input(SHOWN, "data"),
)
def pick_period(relayout, shown):
    """The period to fit on: the span dragged on the chart, or all that is shown."""
    if not isinstance(shown, dict):
        return None, None
    zone = shown["zone"]
    start, end = pd.Timestamp(shown["start"]), pd.Timestamp(shown["end"])
    if dash.ctx.triggered_id == CHART:
        asked = timerange.zoom_window(relayout)
        if isinstance(asked, tuple):
            start, end = (timerange.localise(t, zone) for t in asked)
    text = f"From {fmt.format_timestamp(start, zone)} to {fmt.format_timestamp(end, zone)}"
    return {"start": start.isoformat(), "end": end.isoformat()}, text


@page_callback(
    Output(FIT_RESULT, "children"),
    Output(CHANGED, "data"),
    Input(FIT, "n_clicks"),
    State(UNIT, "value"),
    State(METRIC, "value"),
    State(PERIOD, "data"),
    State(CHANGED, "data"),
    prevent_initial_call=True,
)
async def fit(_clicks, slug, metric, period, changed, *, client: LostworkClient):
    """Ask the server to fit a new version on the period, and show how well it fits."""
    if not (slug and metric and isinstance(period, dict)):
        return "Choose a unit, a quantity and a period first.", changed
    try:
        found = await client.fit_baseline(
            slug, metric, pd.Timestamp(period["start"]), pd.Timestamp(period["end"])
        )
    except ApiError as exc:
        return cards.problem(exc, doing="fit a baseline"), changed
    return fit_summary(found), (changed or 0) + 1


def fit_summary(found: dict[str, Any]) -> html.Div:
    """A new version's fit in one line of tiles and the Guideline 14 verdict."""
    stats = found.get("statistics") or {}
    meets = stats.get("meets_guideline_14")
    counts = found.get("counts") or {}
    return html.Div(
        [
            html.P(
                f"Version {found.get('version')} of {fmt.metric_label(str(found.get('metric')))}: "
                f"{found.get('model', '?')} in load, fitted on {stats.get('n', '?')} intervals"
                + (f" of {counts['computed']} computed" if counts.get("computed") else "")
                + ".",
                className="lw-upload-status",
            ),
            cards.tiles(
                cards.tile("R²", fmt.format_number(stats.get("r2"), 3)),
                cards.tile("CV(RMSE)", _pct(stats.get("cv_rmse"), 2)),
                cards.tile("NMBE", _pct(stats.get("nmbe"), 2)),
                cards.tile(
                    "ASHRAE Guideline 14",
                    "meets" if meets else "does not meet",
                    sub=f"{stats.get('granularity', 'hourly')} criteria",
                    tone="good" if meets else "warn",
                ),
            ),
        ]
    )


def _pct(fraction: Any, significant: int) -> str:
    if not fmt.present(fraction):
        return "—"
    return f"{fmt.format_number(100.0 * float(fraction), significant)} %"


@page_callback(
    Output(ACTIVATE_RESULT, "children"),
    Output(CHANGED, "data", allow_duplicate=True),
    Input(ACTIVATE, "n_clicks"),
    State(TABLE, "selected_rows"),
    State(TABLE, "data"),
    State(UNIT, "value"),
    State(CHANGED, "data"),
    prevent_initial_call=True,
)
async def activate(_clicks, selected, data, slug, changed, *, client: LostworkClient):
    """Make the selected version active; the server recomputes drift from its period on."""
    if not selected or not data or not slug:
        return "Select a version first.", changed
    version = data[selected[0]]["version"]
    try:
        await client.activate_baseline(slug, int(version))
    except ApiError as exc:
        return cards.problem(exc, doing=f"activate version {version}"), changed
    return (
        f"Version {version} is active; drift and cost are being recomputed from its period on.",
        (changed or 0) + 1,
    )


def rows(baselines: pd.DataFrame, zone: str) -> list[dict[str, Any]]:
    """Baseline versions as rows; the fit statistics' fractions in percent."""
    out = []
    for item in baselines.to_dict("records"):
        stats = item.get("statistics") if isinstance(item.get("statistics"), dict) else {}
        meets = stats.get("meets_guideline_14")
        out.append(
            {
                "version": item.get("version"),
                "metric": fmt.metric_label(str(item.get("metric", ""))),
                "period": f"{fmt.format_timestamp(item.get('start'), zone)} to "
                f"{fmt.format_timestamp(item.get('end'), zone)}",
                "model": item.get("model", ""),
                "n": stats.get("n"),
                "r2": stats.get("r2"),
                "cv_rmse": _percent(stats.get("cv_rmse")),
                "nmbe": _percent(stats.get("nmbe")),
                "verdict": "" if meets is None else ("meets" if meets else "does not meet"),
                "active": "active" if item.get("active") else "",
            }
        )
    out.sort(key=lambda r: -(r["version"] or 0))
    return out


def _percent(value: Any) -> float | None:
    try:
        return 100.0 * float(value)
    except (TypeError, ValueError):
        return None


@page_callback(
    Output(TABLE, "data"),
    Output(TABLE, "selected_rows"),
    Output(STATE, "children"),
    Output(LIST, "style"),
    Input(CONTEXT, "data"),
    Input(prefs.STORE, "data"),
    Input(CHANGED, "data"),
)
async def load(context_data, choice_data, _changed, *, client: LostworkClient):
    """The unit's baseline versions, or why there are none."""
    context = UnitContext.from_store(context_data)
    if context is None:
        return [], [], cards.empty_state("No unit", "Choose a unit."), HIDDEN
    zone = fmt.zone_name(prefs.read(choice_data).clock, context.time_zone)
    try:
        baselines = await client.baselines(context.slug)
    except NotAvailable:
        empty = cards.empty_state(
            "Baselines are not available on this server",
            "This server does not offer baselines; the unit page shows actual values only.",
        )
        return [], [], empty, HIDDEN
    except ApiError as exc:
        return [], [], cards.problem(exc, doing="load baselines"), HIDDEN
    if baselines.empty:
        empty = cards.empty_state(
            "No baseline fitted yet",
            f"{context.name} has no baseline. Choose a reference period of normal operation "
            "above (for example, this month last year) and fit one.",
        )
        return [], [], empty, HIDDEN
    return rows(baselines, zone), [], None, None
