"""Alerts: open and past alerts, filtered, and acknowledged with a note."""

from __future__ import annotations

from typing import Any

import pandas as pd
from dash import Input, Output, State, dcc, html

from dashboard import formatting as fmt
from dashboard.client import ApiError, LostworkClient, NotAvailable
from dashboard.components import cards, prefs
from dashboard.components.table import data_table
from dashboard.registry import page_callback

PAGE = {"path": "/alerts", "name": "Alerts", "order": 3, "title": "lostwork · alerts"}
NAV_HREF = "/alerts"

STATUS = "alerts-status"
SEVERITY = "alerts-severity"
UNIT = "alerts-unit"
TABLE = "alerts-table"
NOTE_TEXT = "alerts-note-text"
ACK = "alerts-ack"
ACK_RESULT = "alerts-ack-result"
ACKED = "alerts-acked"
LIST = "alerts-list"
EMPTY = "alerts-empty"

STATUS_OPTIONS = [
    {"label": "Firing", "value": "firing"},
    {"label": "Resolved", "value": "resolved"},
    {"label": "All", "value": "all"},
]
SEVERITY_OPTIONS = [{"label": s.capitalize(), "value": s} for s in ("critical", "warning", "info")]
SHOWN = (
    ("id", "Alert", "text"),
    ("unit", "Unit", "text"),
    ("rule", "Rule", "text"),
    ("metric", "Quantity", "text"),
    ("severity", "Severity", "text"),
    ("status", "Status", "text"),
    ("began", "Began", "text"),
    ("acknowledged", "Acknowledged", "text"),
    ("message", "What happened", "text"),
)


def layout(**_kwargs: Any) -> html.Div:
    return html.Div(
        [
            dcc.Store(id=ACKED, data=0),
            html.Header(
                [
                    html.H1("Alerts"),
                    html.P(
                        "What fired, when, and who has seen it. Pick an alert and leave a note "
                        "to acknowledge it.",
                        className="lw-lede",
                    ),
                ]
            ),
            html.Div(
                [
                    _control(
                        "Status",
                        dcc.RadioItems(
                            id=STATUS,
                            options=STATUS_OPTIONS,
                            value="firing",
                            className="lw-segments",
                        ),
                    ),
                    _control(
                        "Severity",
                        dcc.Dropdown(
                            id=SEVERITY,
                            options=SEVERITY_OPTIONS,
                            placeholder="any",
                            className="lw-dropdown",
                        ),
                    ),
                    _control(
                        "Unit", dcc.Dropdown(id=UNIT, placeholder="any", className="lw-dropdown")
                    ),
                ],
                className="lw-controls",
            ),
            html.Div(id=EMPTY),
            html.Div(
                [
                    cards.card(None, data_table(TABLE, row_selectable="single", selected_rows=[])),
                    cards.card(
                        "Acknowledge",
                        dcc.Textarea(
                            id=NOTE_TEXT,
                            placeholder="What was done or decided (required)",
                            className="lw-textarea",
                        ),
                        html.Button("Acknowledge selected alert", id=ACK, className="lw-button"),
                        html.Div(id=ACK_RESULT, className="lw-note", role="status"),
                    ),
                ],
                id=LIST,
            ),
        ]
    )


def _control(label: str, control: Any) -> html.Div:
    return html.Div([html.Div(label, className="lw-label"), control], className="lw-control")


def rows(alerts: pd.DataFrame, zone_of: dict[str, str | None], clock: str) -> list[dict]:
    """Alerts as table rows; times in each unit's plant clock (or UTC)."""
    out = []
    for item in alerts.to_dict("records"):
        zone = fmt.zone_name(clock, zone_of.get(item.get("unit")))
        item = {k: v for k, v in item.items() if fmt.present(v)}
        acked = item.get("acknowledged_at")
        out.append(
            {
                "id": str(item.get("id", "")),
                "unit": item.get("unit", ""),
                "rule": item.get("rule", ""),
                "metric": fmt.metric_label(str(item.get("metric") or ""))
                if item.get("metric")
                else "",
                "severity": item.get("severity", ""),
                "status": item.get("status", ""),
                "began": fmt.format_timestamp(item.get("began_at") or item.get("started_at"), zone),
                "acknowledged": (
                    f"{fmt.format_timestamp(acked, zone)} by {item.get('acknowledged_by') or '?'}"
                    + (f": {item['note']}" if item.get("note") else "")
                    if acked
                    else ""
                ),
                "message": item.get("message") or item.get("summary") or "",
            }
        )
    return out


@page_callback(
    Output(TABLE, "data"),
    Output(TABLE, "columns"),
    Output(EMPTY, "children"),
    Output(LIST, "style"),
    Output(UNIT, "options"),
    Input(STATUS, "value"),
    Input(SEVERITY, "value"),
    Input(UNIT, "value"),
    Input(ACKED, "data"),
    Input(prefs.STORE, "data"),
)
async def load(status, severity, unit, _acked, choice_data, *, client: LostworkClient):
    """The filtered alert list, or the empty state while the server has no alerts."""
    columns = [{"id": c, "name": n, "type": t} for c, n, t in SHOWN]
    try:
        units = await client.units()
        alerts = await client.alerts(
            status=None if status == "all" else status, severity=severity, unit=unit
        )
    except NotAvailable:
        empty = cards.empty_state(
            "No alerts on this server yet",
            "Alert rules and notifications are not set up on this server; this page lists "
            "them once they are.",
        )
        return [], columns, empty, {"display": "none"}, []
    except ApiError as exc:
        return [], columns, cards.problem(exc, doing="load alerts"), {"display": "none"}, []
    zones = await _zones(client, units)
    options = [{"label": r["name"], "value": r["slug"]} for r in units.to_dict("records")]
    if alerts.empty:
        empty = cards.empty_state("Nothing here", "No alert matches these filters.")
        return [], columns, empty, {"display": "none"}, options
    return rows(alerts, zones, prefs.read(choice_data).clock), columns, None, None, options


async def _zones(client: LostworkClient, units: pd.DataFrame) -> dict[str, str | None]:
    plants = {}
    for slug in sorted(set(units["plant"].dropna())):
        try:
            plants[slug] = (await client.plant(slug)).get("time_zone")
        except ApiError:
            plants[slug] = None
    return {r["slug"]: plants.get(r["plant"]) for r in units.to_dict("records")}


@page_callback(
    Output(ACK_RESULT, "children"),
    Output(ACKED, "data"),
    Output(NOTE_TEXT, "value"),
    Input(ACK, "n_clicks"),
    State(TABLE, "selected_rows"),
    State(TABLE, "data"),
    State(NOTE_TEXT, "value"),
    State(ACKED, "data"),
    prevent_initial_call=True,
)
async def acknowledge(_clicks, selected, data, note, count, *, client: LostworkClient):
    """Acknowledge the selected alert with the note; the list reloads and the note box
    empties afterwards (a refusal, such as a second acknowledgement, keeps the note)."""
    if not selected or not data:
        return "Select an alert first.", count, note
    if not (note or "").strip():
        return "Write a note: what was done or decided.", count, note
    alert = data[selected[0]]
    try:
        await client.acknowledge(alert["id"], note.strip())
    except ApiError as exc:
        return cards.problem(exc, doing=f"acknowledge alert {alert['id']}"), count, note
    return f"Alert {alert['id']} acknowledged.", (count or 0) + 1, ""
