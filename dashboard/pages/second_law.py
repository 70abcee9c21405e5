"""Second-law page: where a unit's exergy goes over a period, and the headroom left."""

from __future__ import annotations

import math
from typing import Any

import pandas as pd
from dash import Input, Output, dcc, html
from dash.dash_table.Format import Format, Scheme

from dashboard import figures, timerange, unit_context
from dashboard import formatting as fmt
from dashboard.client import (
    HEADROOM_COST_METRIC,
    HEADROOM_METRIC,
    ApiError,
    LostworkClient,
    Results,
)
from dashboard.components import cards, prefs
from dashboard.components.table import data_table
from dashboard.exergy_account import ExergyAccount, build_account, wanted_metrics
from dashboard.registry import page_callback

PAGE = {"path": "/second-law", "name": "Second law", "order": 2, "title": "lostwork · second law"}
NAV_HREF = "/second-law"

ASKED = "second-law-asked"
UNIT = "second-law-unit"
RANGE = "second-law-range"
TILES = "second-law-tiles"
WATERFALL = "second-law-waterfall"
SANKEY = "second-law-sankey"
TABLE = "second-law-table"
NOTE = "second-law-note"

EXTRA = (HEADROOM_METRIC, HEADROOM_COST_METRIC, "eta_2")
PERIOD_POINTS = 2
"""Buckets asked for a period (the server's minimum); their means are combined."""
CATEGORY_NAMES = {
    "product": "product",
    "destroyed": "destroyed",
    "lost": "lost",
    "mismatch": "balance mismatch",
}


def layout(unit: str | None = None, **_kwargs: Any) -> html.Div:
    return html.Div(
        [
            dcc.Store(id=ASKED, data=unit),
            html.Header(
                [
                    html.H1("Where the exergy goes"),
                    html.P(
                        "For one unit and period: the exergy it takes in, what it delivers, "
                        "what its irreversibilities destroy and what leaves unused.",
                        className="lw-lede",
                    ),
                ]
            ),
            html.Div(
                [
                    html.Div(
                        [
                            html.Label("Unit", htmlFor=UNIT, className="lw-label"),
                            dcc.Dropdown(id=UNIT, clearable=False, className="lw-dropdown"),
                        ],
                        className="lw-control",
                    ),
                    html.Div(
                        [
                            html.Div("Period ending at the latest result", className="lw-label"),
                            dcc.RadioItems(
                                id=RANGE,
                                options=timerange.preset_options(),
                                value="24h",
                                className="lw-segments",
                            ),
                        ],
                        className="lw-control",
                    ),
                ],
                className="lw-controls",
            ),
            html.Div(id=NOTE, className="lw-note"),
            dcc.Loading(html.Div(id=TILES), type="dot"),
            cards.card("Step by step", dcc.Graph(id=WATERFALL, config={"displaylogo": False})),
            html.Div(
                [
                    cards.card("As flows", dcc.Graph(id=SANKEY, config={"displaylogo": False})),
                    cards.card("The account", data_table(TABLE)),
                ],
                className="lw-pair",
            ),
        ]
    )


@page_callback(Output(UNIT, "options"), Output(UNIT, "value"), Input(ASKED, "data"))
async def unit_choices(asked: str | None, *, client: LostworkClient):
    """Every unit to choose from; the one named in the address, else the first."""
    try:
        units = await client.units()
    except ApiError:
        return [], None
    options = [
        {"label": f"{r['name']} ({r['plant']})", "value": r["slug"]}
        for r in units.to_dict("records")
    ]
    slugs = [o["value"] for o in options]
    return options, asked if asked in slugs else (slugs[0] if slugs else None)


@page_callback(
    Output(TILES, "children"),
    Output(WATERFALL, "figure"),
    Output(SANKEY, "figure"),
    Output(TABLE, "data"),
    Output(TABLE, "columns"),
    Output(NOTE, "children"),
    Input(UNIT, "value"),
    Input(RANGE, "value"),
    Input(prefs.STORE, "data"),
)
async def draw(slug: str | None, preset: str | None, choice_data, *, client: LostworkClient):
    """Period means of the unit's exergy columns, laid out as an account."""
    blank = figures.empty_figure("Choose a unit.")
    if not slug:
        return None, blank, blank, [], [], None
    try:
        context = await unit_context.load(client, slug)
        start, end = timerange.window(preset, context.end())
        names = [r["name"] for r in context.results]
        asked = wanted_metrics(names) + [m for m in EXTRA if m in names]
        found = await client.results(slug, start, end, asked, max_points=PERIOD_POINTS)
    except ApiError as exc:
        return None, blank, blank, [], [], cards.problem(exc, doing="load the exergy results")
    return render(context, found, prefs.read(choice_data), start, end)


def render(context, results: Results, choice: prefs.Prefs, start: pd.Timestamp, end: pd.Timestamp):
    """Tiles, both figures and the table, from the fetched period (pure)."""
    zone = fmt.zone_name(choice.clock, context.time_zone)
    means = results.period_means()
    account = build_account(means)
    period = f"{fmt.format_timestamp(start, zone)} to {fmt.format_timestamp(end, zone)}"
    if account is None:
        blank = figures.empty_figure("No exergy results in this period.")
        note = cards.empty_state(
            "No exergy account for this period",
            f"{context.name} has no exergy input and product results from {period}.",
        )
        return None, blank, blank, [], [], note
    unit = fmt.to_display(0.0, "exergy_w", "W", choice.system)[1]

    def shown(value: float) -> float:
        return float(fmt.to_display(value, "exergy_w", "W", choice.system)[0])

    terms = [(c, label, shown(v)) for c, label, v in account.terms()]
    waterfall = figures.exergy_waterfall(
        account.input_label, shown(account.input_w), terms, unit=unit
    )
    sankey = figures.exergy_sankey(account.input_label, shown(account.input_w), terms, unit=unit)
    rows, columns = table(account, terms, shown(account.input_w), unit)
    return (
        tiles(context, account, means, choice),
        waterfall,
        sankey,
        rows,
        columns,
        html.P(f"Means over {period}.", className="lw-caption"),
    )


def table(
    account: ExergyAccount, terms, input_shown: float, unit: str
) -> tuple[list[dict], list[dict]]:
    """The account as rows: where, what kind of outflow, how much, share of input."""
    rows = [
        {"where": account.input_label, "category": "input", "value": input_shown, "share": 100.0}
    ]
    for (category, label, value), (_, _, raw) in zip(terms, account.terms(), strict=True):
        rows.append(
            {
                "where": label,
                "category": CATEGORY_NAMES[category],
                "value": value,
                "share": 100.0 * raw / account.input_w if account.input_w else None,
            }
        )
    columns = [
        {"id": "where", "name": "Where", "type": "text"},
        {"id": "category", "name": "Kind of outflow", "type": "text"},
        {
            "id": "value",
            "name": f"Exergy [{unit}]",
            "type": "numeric",
            "format": Format(precision=3, scheme=Scheme.decimal_or_exponent, group=True),
        },
        {
            "id": "share",
            "name": "Share of input [%]",
            "type": "numeric",
            "format": Format(precision=1, scheme=Scheme.fixed),
        },
    ]
    return rows, columns


def tiles(context, account: ExergyAccount, means: dict[str, float], choice: prefs.Prefs):
    system = choice.system
    destroyed = sum(account.destroyed.values())
    lost = sum(account.lost.values())
    eta_2 = account.product_w / account.input_w if account.input_w else math.nan
    headroom = means.get(HEADROOM_METRIC)
    headroom_cost = means.get(HEADROOM_COST_METRIC)
    return cards.tiles(
        cards.tile(
            "Exergy in",
            fmt.format_quantity(account.input_w, "exergy_w", "W", system),
            sub=account.input_label,
        ),
        cards.tile(
            "Delivered",
            fmt.format_quantity(account.product_w, "exergy_w", "W", system),
            sub=f"η₂ = {fmt.format_quantity(eta_2, 'eta_2', '1', system)}",
            tone="good",
        ),
        cards.tile(
            "Destroyed",
            fmt.format_quantity(destroyed, "exergy_w", "W", system),
            sub="irreversibility inside the unit",
        ),
        cards.tile(
            "Lost", fmt.format_quantity(lost, "exergy_w", "W", system), sub="leaving unused"
        ),
        cards.tile(
            "Recoverable headroom",
            fmt.format_quantity(headroom, HEADROOM_METRIC, "W", system)
            if headroom is not None
            else "—",
            sub=(
                fmt.format_money_per_hour(headroom_cost, context.currency)
                if headroom_cost is not None
                else "no baseline fitted yet"
            ),
            tone="warn" if headroom else "plain",
        ),
    )
