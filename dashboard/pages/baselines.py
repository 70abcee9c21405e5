"""Baselines: a unit's fitted baselines, their fit statistics and which one is active.

Until the server offers baselines (issue 5) this page says so; the list, statistics and
verdict columns follow ASHRAE Guideline 14's names (CV(RMSE), NMBE).
"""

from __future__ import annotations

from typing import Any

import pandas as pd
from dash import Input, Output, dcc, html
from dash.dash_table.Format import Format, Scheme

from dashboard.client import ApiError, LostworkClient, NotAvailable
from dashboard.components import cards, prefs
from dashboard.components.table import data_table
from dashboard.registry import page_callback

PAGE = {"path": "/baselines", "name": "Baselines", "order": 4, "title": "lostwork · baselines"}
NAV_HREF = "/baselines"

ASKED = "baselines-asked"
UNIT = "baselines-unit"
TABLE = "baselines-table"
STATE = "baselines-state"
LIST = "baselines-list"

COLUMNS = [
    {"id": "version", "name": "Version", "type": "text"},
    {"id": "metric", "name": "Quantity", "type": "text"},
    {"id": "period", "name": "Reference period", "type": "text"},
    {"id": "model", "name": "Model", "type": "text"},
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
        "format": Format(precision=1, scheme=Scheme.fixed),
    },
    {
        "id": "nmbe",
        "name": "NMBE [%]",
        "type": "numeric",
        "format": Format(precision=2, scheme=Scheme.fixed),
    },
    {"id": "verdict", "name": "Guideline 14", "type": "text"},
    {"id": "active", "name": "Active", "type": "text"},
]


def layout(unit: str | None = None, **_kwargs: Any) -> html.Div:
    return html.Div(
        [
            dcc.Store(id=ASKED, data=unit),
            html.Header(
                [
                    html.H1("Baselines"),
                    html.P(
                        "What each unit should do at its load and weather, fitted on a "
                        "reference period of steady operation; drift is measured against the "
                        "active one.",
                        className="lw-lede",
                    ),
                ]
            ),
            html.Div(
                html.Div(
                    [
                        html.Label("Unit", htmlFor=UNIT, className="lw-label"),
                        dcc.Dropdown(id=UNIT, clearable=False, className="lw-dropdown"),
                    ],
                    className="lw-control",
                ),
                className="lw-controls",
            ),
            html.Div(id=STATE),
            html.Div(cards.card("Fitted baselines", data_table(TABLE, columns=COLUMNS)), id=LIST),
        ]
    )


@page_callback(Output(UNIT, "options"), Output(UNIT, "value"), Input(ASKED, "data"))
async def unit_choices(asked: str | None, *, client: LostworkClient):
    try:
        units = await client.units()
    except ApiError:
        return [], None
    options = [{"label": r["name"], "value": r["slug"]} for r in units.to_dict("records")]
    slugs = [o["value"] for o in options]
    return options, asked if asked in slugs else (slugs[0] if slugs else None)


def rows(baselines: pd.DataFrame) -> list[dict[str, Any]]:
    """Baseline versions as rows; fractions of the fit statistics shown in percent."""
    out = []
    for item in baselines.to_dict("records"):
        stats = item.get("statistics") if isinstance(item.get("statistics"), dict) else item
        meets = stats.get("meets_guideline_14")
        out.append(
            {
                "version": str(item.get("version", item.get("id", ""))),
                "metric": item.get("metric", ""),
                "period": f"{item.get('start', '?')} to {item.get('end', '?')}",
                "model": item.get("model", ""),
                "n": stats.get("n"),
                "r2": stats.get("r2"),
                "cv_rmse": _percent(stats.get("cv_rmse")),
                "nmbe": _percent(stats.get("nmbe")),
                "verdict": "" if meets is None else ("meets" if meets else "does not meet"),
                "active": "active" if item.get("active") else "",
            }
        )
    return out


def _percent(value: Any) -> float | None:
    try:
        return 100.0 * float(value)
    except (TypeError, ValueError):
        return None


@page_callback(
    Output(TABLE, "data"),
    Output(STATE, "children"),
    Output(LIST, "style"),
    Input(UNIT, "value"),
    Input(prefs.STORE, "data"),
)
async def load(slug: str | None, _choice, *, client: LostworkClient):
    """The unit's baselines, or why there are none."""
    if not slug:
        return [], cards.empty_state("No unit", "Choose a unit."), {"display": "none"}
    try:
        baselines = await client.baselines(slug)
    except NotAvailable:
        empty = cards.empty_state(
            "No baseline fitted yet",
            "This server does not offer baselines yet. Once it does, fit one here on a "
            "reference period (for example, this month last year) and the unit page shows "
            "expected against actual, the drift and what it costs.",
        )
        return [], empty, {"display": "none"}
    except ApiError as exc:
        return [], cards.problem(exc, doing="load baselines"), {"display": "none"}
    if baselines.empty:
        empty = cards.empty_state("No baseline fitted yet", f"{slug} has no baseline.")
        return [], empty, {"display": "none"}
    return rows(baselines), None, None
