"""Unit page: actual against expected, drift, CUSUM and flags, over hours to years."""

from __future__ import annotations

import asyncio
from dataclasses import dataclass
from typing import Any

import dash
import pandas as pd
from dash import Input, Output, State, dcc, html

from dashboard import figures, timerange, unit_context
from dashboard import formatting as fmt
from dashboard.client import (
    FLAGS_METRIC,
    STEADY_METRIC,
    ApiError,
    LostworkClient,
    NotAvailable,
    Results,
    baseline_metrics,
    is_baseline_column,
)
from dashboard.components import cards, prefs
from dashboard.registry import clientside, page_callback
from dashboard.unit_context import UnitContext

PAGE = {
    "path": "/units",
    "path_template": "/units/<slug>",
    "name": "Unit",
    "order": 1,
    "title": "lostwork · unit",
}

SLUG = "unit-slug"
CONTEXT = "unit-context"
WIDTH = "unit-width"
WINDOW = "unit-window"
TITLE = "unit-title"
METRIC = "unit-metric"
RANGE = "unit-range"
MAIN = "unit-main"
DRIFT = "unit-drift"
CUSUM = "unit-cusum"
CAPTION = "unit-caption"
NOTE = "unit-note"
LINKS = "unit-links"
PAIR = "unit-baseline-charts"

DEFAULT_METRIC = "eta_1"
HIDDEN = {"display": "none"}
EXTRAPOLATED = "Outside the baseline's range"
HIDDEN_METRICS = {FLAGS_METRIC, STEADY_METRIC}
BAND_PREFIX = "u95_"
"""The API's expanded (95 %) measurement uncertainty of a metric (issue 10)."""
UNCERTAINTY_PREFIXES = (
    "u_",
    "u_random_",
    BAND_PREFIX,
    "drift_significant_",
    "drift_rel_significant_",
)
"""Per-metric uncertainty columns: drawn with their metric, not offered on their own."""
GRAPH_CONFIG = {
    "displaylogo": False,
    "responsive": True,
    "modeBarButtonsToRemove": ["lasso2d", "select2d"],
}


def layout(slug: str | None = None, **_kwargs: Any) -> html.Div:
    return html.Div(
        [
            dcc.Store(id=SLUG, data=slug),
            dcc.Store(id=CONTEXT),
            dcc.Store(id=WIDTH),
            dcc.Store(id=WINDOW),
            html.Header(id=TITLE, children=html.H1(slug or "Unit")),
            html.Div(
                [
                    html.Div(
                        [
                            html.Label("Quantity", htmlFor=METRIC, className="lw-label"),
                            dcc.Dropdown(id=METRIC, clearable=False, className="lw-dropdown"),
                        ],
                        className="lw-control",
                    ),
                    html.Div(
                        [
                            html.Div("Range", className="lw-label"),
                            dcc.RadioItems(
                                id=RANGE,
                                options=timerange.preset_options(),
                                value=timerange.DEFAULT_PRESET,
                                className="lw-segments",
                            ),
                        ],
                        className="lw-control",
                    ),
                ],
                className="lw-controls",
            ),
            html.Div(id=NOTE, className="lw-note"),
            cards.card(
                "Actual and expected",
                dcc.Loading(
                    dcc.Graph(id=MAIN, config=GRAPH_CONFIG, style={"height": "360px"}), type="dot"
                ),
                html.Div(id=CAPTION, className="lw-caption"),
                note="Drag across the chart to zoom: the server sends finer points for the "
                "window. Double-click to return to the range.",
            ),
            html.Div(
                [
                    cards.card(
                        "Drift from baseline",
                        dcc.Graph(id=DRIFT, config=GRAPH_CONFIG, style={"height": "260px"}),
                    ),
                    cards.card(
                        "CUSUM",
                        dcc.Graph(id=CUSUM, config=GRAPH_CONFIG, style={"height": "260px"}),
                    ),
                ],
                className="lw-pair",
                id=PAIR,
            ),
            html.Div(id=LINKS, className="lw-links"),
        ]
    )


clientside(
    """function(slug) {
        const el = document.getElementById("unit-main");
        return el && el.clientWidth ? el.clientWidth : window.innerWidth;
    }""",
    Output(WIDTH, "data"),
    Input(SLUG, "data"),
)


@page_callback(
    Output(CONTEXT, "data"),
    Output(TITLE, "children"),
    Output(METRIC, "options"),
    Output(METRIC, "value"),
    Output(LINKS, "children"),
    Input(SLUG, "data"),
)
async def load(slug: str | None, *, client: LostworkClient):
    """Who the unit is, its plant's clock, and the quantities it can chart."""
    if not slug:
        return None, html.H1("No unit chosen"), [], None, None
    try:
        context = await unit_context.load(client, slug)
    except ApiError as exc:
        return None, [html.H1(slug), cards.problem(exc, doing=f"load unit {slug}")], [], None, None
    options = metric_options(context)
    values = [o["value"] for o in options]
    chosen = DEFAULT_METRIC if DEFAULT_METRIC in values else (values[0] if values else None)
    title = [
        html.H1(context.name),
        html.P(
            f"{context.kind.replace('_', ' ')} · {context.plant_name} · "
            f"clock {context.time_zone or 'UTC'}",
            className="lw-lede",
        ),
    ]
    links = [
        dcc.Link("Where its exergy goes →", href=f"/second-law?unit={slug}", className="lw-link"),
        dcc.Link("Its baselines →", href=f"/baselines?unit={slug}", className="lw-link"),
    ]
    return context.to_store(), title, options, chosen, links


def metric_options(context: UnitContext) -> list[dict[str, str]]:
    """Dropdown options: what the unit computes, efficiencies first; not the flags and not
    the per-metric baseline columns (they are drawn with their metric)."""
    names = _names(context)
    options = [
        {"label": fmt.metric_label(r["name"], r.get("label")), "value": r["name"]}
        for r in context.results
        if r["name"] not in HIDDEN_METRICS
        and not is_baseline_column(r["name"], names)
        and not _is_uncertainty_column(r["name"], names)
    ]
    options.sort(
        key=lambda o: (
            not o["value"].startswith("eta"),
            o["value"] if o["value"].startswith("eta") else o["label"],
        )
    )
    return options


@page_callback(
    Output(WINDOW, "data"),
    Input(MAIN, "relayoutData"),
    Input(RANGE, "value"),
    State(CONTEXT, "data"),
    State(prefs.STORE, "data"),
)
def zoom(relayout, _preset, context_data, choice_data):
    """A zoom on the main chart narrows the window; a new range or a reset clears it."""
    if dash.ctx.triggered_id != MAIN:
        return None
    asked = timerange.zoom_window(relayout)
    if asked is None:
        return dash.no_update
    if asked is False:
        return None
    context = UnitContext.from_store(context_data)
    zone = fmt.zone_name(prefs.read(choice_data).clock, context.time_zone if context else None)
    start, end = (timerange.localise(t, zone) for t in asked)
    return {"start": start.isoformat(), "end": end.isoformat()}


def _window(context: UnitContext, preset: str | None, window: dict | None):
    if isinstance(window, dict) and window.get("start") and window.get("end"):
        return pd.Timestamp(window["start"]), pd.Timestamp(window["end"])
    return timerange.window(preset, context.end())


@dataclass(frozen=True)
class Fetched:
    """What the unit page draws from: the metric with its flags, what the active baseline
    adds (None without one) and the CUSUM decision interval h of that baseline."""

    own: Results
    base: Results | None = None
    decision_interval: float | None = None


async def _fetch(client, context, metric, start, end, points) -> Fetched:
    names = _names(context)
    own = [metric] + [m for m in (FLAGS_METRIC, STEADY_METRIC, BAND_PREFIX + metric) if m in names]
    wanted = [m for m in baseline_metrics(metric).values() if m in names]

    async def baseline() -> Results | None:
        if not wanted:  # a server without baselines declares none of these columns
            return None
        found = await client.results(context.slug, start, end, wanted, max_points=points)
        return found if any(found.has(m) for m in found.metrics) else None

    async def decision_interval() -> float | None:
        if not wanted:
            return None
        try:
            versions = await client.baselines(context.slug)
        except NotAvailable:
            return None
        active = [
            b for b in versions.to_dict("records") if b.get("active") and b.get("metric") == metric
        ]
        chart = active[0].get("chart") if active else None
        return float(chart["h"]) if isinstance(chart, dict) and chart.get("h") else None

    results, base, h = await asyncio.gather(
        client.results(context.slug, start, end, own, max_points=points),
        baseline(),
        decision_interval(),
    )
    return Fetched(results, base, h)


def _is_uncertainty_column(name: str, names: set[str]) -> bool:
    return any(name.startswith(p) and name[len(p) :] in names for p in UNCERTAINTY_PREFIXES)


def _names(context: UnitContext) -> set[str]:
    return {r["name"] for r in context.results}


@page_callback(
    Output(MAIN, "figure"),
    Output(DRIFT, "figure"),
    Output(CUSUM, "figure"),
    Output(CAPTION, "children"),
    Output(NOTE, "children"),
    Output(PAIR, "style"),
    Input(CONTEXT, "data"),
    Input(METRIC, "value"),
    Input(RANGE, "value"),
    Input(WINDOW, "data"),
    Input(prefs.STORE, "data"),
    State(WIDTH, "data"),
)
async def draw(context_data, metric, preset, window, choice_data, width, *, client: LostworkClient):
    """Fetch the window at the chart's resolution and draw the three charts."""
    context = UnitContext.from_store(context_data)
    if context is None or not metric:
        blank = figures.empty_figure("Choose a unit from the overview.")
        return blank, blank, blank, None, None, HIDDEN
    start, end = _window(context, preset, window)
    try:
        fetched = await _fetch(client, context, metric, start, end, timerange.max_points(width))
    except ApiError as exc:
        blank = figures.empty_figure("No data.")
        return blank, blank, blank, None, cards.problem(exc, doing="load results"), HIDDEN
    return render(context, metric, fetched, prefs.read(choice_data), start, end)


def render(
    context: UnitContext,
    metric: str,
    fetched: Fetched,
    choice: prefs.Prefs,
    start: pd.Timestamp,
    end: pd.Timestamp,
):
    """The three figures, the caption, the note and whether the baseline charts show,
    from fetched results (pure)."""
    own, base = fetched.own, fetched.base
    zone = fmt.zone_name(choice.clock, context.time_zone)
    x_title = fmt.time_axis_title(zone)
    name = fmt.metric_label(metric, own.labels.get(metric))
    si_unit = own.units.get(metric) or context.si_unit(metric)
    if not own.has(metric):
        blank = figures.empty_figure(f"No {fmt.lower_first(name)} results in this window.")
        note = cards.empty_state(
            "No results in this window",
            f"Nothing computed for {context.name} from "
            f"{fmt.format_timestamp(start, zone)} to {fmt.format_timestamp(end, zone)}.",
        )
        return blank, blank, blank, None, note, HIDDEN
    actual, unit = fmt.frame_to_display(own.series(metric), metric, si_unit, choice.system)
    actual.index = fmt.to_zone(actual.index, zone)
    spans = _spans(own, base, metric, zone)
    expected = low = high = None
    names = baseline_metrics(metric)
    if base is not None and base.has(names["expected"]):
        expected = _shown(base, names["expected"], metric, si_unit, choice.system, zone)
        if base.has(names["low"]) and base.has(names["high"]):
            low = _shown(base, names["low"], metric, si_unit, choice.system, zone)
            high = _shown(base, names["high"], metric, si_unit, choice.system, zone)
    main = figures.actual_expected_figure(
        actual,
        name=name,
        unit=unit,
        x_title=x_title,
        expected=expected,
        expected_low=low,
        expected_high=high,
        spans=spans,
    )
    if own.has(BAND_PREFIX + metric):
        band = _shown(own, BAND_PREFIX + metric, metric, si_unit, choice.system, zone)
        figures.add_measurement_band(main, actual["mean"], band)
    main.update_layout(uirevision=f"{context.slug}-{metric}-{start.isoformat()}")
    drift, cusum, note = _baseline_figures(
        fetched.decision_interval, base, names, metric, name, si_unit, choice.system, zone, x_title
    )
    # the three charts show the same window, whatever data it holds
    window = [t.tz_convert(zone).tz_localize(None) for t in (start, end)]
    for fig in (main, drift, cusum):
        if fig.data:
            fig.update_xaxes(range=window)
    caption = (
        f"{fmt.format_timestamp(start, zone)} to {fmt.format_timestamp(end, zone)} · "
        + timerange.describe_resolution(own.bucket_seconds, len(actual))
    )
    shown = base is not None and base.has(names["drift"])
    return main, drift, cusum, caption, note, (None if shown else HIDDEN)


def _shown(results: Results, column: str, metric: str, si_unit: str, system: str, zone: str):
    # Expected values and bands are in the metric's own unit, so they convert like it.
    values = fmt.to_display(results.mean[column], metric, si_unit, system)[0]
    values.index = fmt.to_zone(values.index, zone)
    return values


def _spans(own: Results, base: Results | None, metric: str, zone: str) -> pd.DataFrame:
    parts = []
    extrapolated = baseline_metrics(metric)["extrapolated"]
    if base is not None and base.has(extrapolated):
        parts.append(
            figures.state_spans(
                base.mean[extrapolated],
                base.bucket_seconds,
                reason=EXTRAPOLATED,
                kind="baseline",
                when=1.0,
            )
        )
    if own.has(FLAGS_METRIC):
        # A bucket's flags are the OR of its intervals; the server returns it as "max".
        parts.append(figures.flag_spans(own.high[FLAGS_METRIC], own.bucket_seconds))
    if own.has(STEADY_METRIC):
        parts.append(figures.state_spans(own.mean[STEADY_METRIC], own.bucket_seconds))
    spans = (
        pd.concat(parts, ignore_index=True) if parts else pd.DataFrame(columns=figures.SPAN_COLUMNS)
    )
    return fmt.spans_to_zone(spans, zone)


def _baseline_figures(decision_interval, base, names, metric, name, si_unit, system, zone, x_title):
    if base is None or not base.has(names["drift"]):
        message = "No baseline fitted yet for this quantity."
        note = cards.empty_state(
            "No baseline fitted yet",
            f"Expected {fmt.lower_first(name)}, drift and CUSUM appear once a baseline is active "
            "for this quantity (fit one on the Baselines page).",
        )
        return figures.empty_figure(message), figures.empty_figure(message), note
    drift_values, drift_unit = fmt.to_display(
        base.mean[names["drift"]], names["drift"], si_unit, system
    )
    drift_values.index = fmt.to_zone(drift_values.index, zone)
    drift = figures.drift_figure(drift_values, name="Drift", unit=drift_unit, x_title=x_title)
    upper = _cusum(base, names["cusum_upper"], zone)
    lower = _cusum(base, names["cusum_lower"], zone)
    if upper is None and lower is None:
        cusum = figures.empty_figure("The baseline reports no CUSUM.")
    else:
        # The CUSUM runs on drift in units of the baseline's residual standard deviation.
        cusum = figures.cusum_figure(
            upper, lower, unit="σ", x_title=x_title, decision_interval=decision_interval
        )
    return drift, cusum, None


def _cusum(base: Results, column: str, zone: str) -> pd.Series | None:
    if not base.has(column):
        return None
    values = base.mean[column].copy()
    values.index = fmt.to_zone(values.index, zone)
    return values
