"""Uploads: drop a shift-log CSV, read the per-row report, see what is recomputed."""

from __future__ import annotations

import base64
import binascii
from typing import Any

from dash import Input, Output, State, dcc, html

from dashboard.client import ApiError, LostworkClient
from dashboard.components import cards
from dashboard.components.table import data_table
from dashboard.registry import page_callback

PAGE = {"path": "/uploads", "name": "Uploads", "order": 5, "title": "lostwork · uploads"}
NAV_HREF = "/uploads"

PLANT = "uploads-plant"
MODE = "uploads-mode"
DROP = "uploads-drop"
RESULT = "uploads-result"
ERRORS = "uploads-errors"
ERRORS_BOX = "uploads-errors-box"
INIT = "uploads-init"

MODES = [
    {"label": "Keep the good rows", "value": "partial"},
    {"label": "All or nothing", "value": "all_or_nothing"},
]
ERROR_COLUMNS = [
    {"id": "row", "name": "Row", "type": "numeric"},
    {"id": "column", "name": "Column", "type": "text"},
    {"id": "value", "name": "As written", "type": "text"},
    {"id": "message", "name": "Problem", "type": "text"},
]


def layout(**_kwargs: Any) -> html.Div:
    return html.Div(
        [
            dcc.Store(id=INIT, data=True),
            html.Header(
                [
                    html.H1("Upload a shift log"),
                    html.P(
                        "A CSV with a time column and one column per tag (a unit may follow "
                        "the name, as in “FW flow [t/h]”), or long form: time, tag, value. "
                        "Times without an offset are read in the plant's own clock.",
                        className="lw-lede",
                    ),
                ]
            ),
            html.Div(
                [
                    html.Div(
                        [
                            html.Label("Plant", htmlFor=PLANT, className="lw-label"),
                            dcc.Dropdown(id=PLANT, clearable=False, className="lw-dropdown"),
                        ],
                        className="lw-control",
                    ),
                    html.Div(
                        [
                            html.Div("When some rows are bad", className="lw-label"),
                            dcc.RadioItems(
                                id=MODE, options=MODES, value="partial", className="lw-segments"
                            ),
                        ],
                        className="lw-control",
                    ),
                ],
                className="lw-controls",
            ),
            dcc.Upload(
                id=DROP,
                children=html.Div(
                    [
                        html.Div("Drop a CSV file here", className="lw-drop-title"),
                        html.Div("or click to choose one", className="lw-drop-sub"),
                    ]
                ),
                className="lw-drop",
                accept=".csv,text/csv,text/plain",
                multiple=False,
            ),
            dcc.Loading(html.Div(id=RESULT), type="dot"),
            html.Div(
                cards.card("Problems, row by row", data_table(ERRORS, columns=ERROR_COLUMNS)),
                id=ERRORS_BOX,
                style={"display": "none"},
            ),
        ]
    )


@page_callback(Output(PLANT, "options"), Output(PLANT, "value"), Input(INIT, "data"))
async def plant_choices(_init, *, client: LostworkClient):
    """The plants a file can belong to; the first is preselected."""
    try:
        plants = await client.plants()
    except ApiError:
        return [], None
    options = [{"label": p.get("name") or p["slug"], "value": p["slug"]} for p in plants]
    return options, options[0]["value"] if options else None


def decode(contents: str) -> bytes:
    """The file bytes of a ``dcc.Upload`` data URL (``data:<type>;base64,<data>``)."""
    try:
        _, data = contents.split(",", 1)
        return base64.b64decode(data, validate=True)
    except (ValueError, binascii.Error) as exc:
        raise ValueError("the browser sent the file in a form that could not be read") from exc


@page_callback(
    Output(RESULT, "children"),
    Output(ERRORS, "data"),
    Output(ERRORS_BOX, "style"),
    Input(DROP, "contents"),
    State(DROP, "filename"),
    State(PLANT, "value"),
    State(MODE, "value"),
    prevent_initial_call=True,
)
async def send(contents, filename, plant, mode, *, client: LostworkClient):
    """Send the dropped file and show the server's report (or its refusal)."""
    if not contents:
        return None, [], HIDDEN
    if not plant:
        return cards.problem(ValueError("choose the plant first"), doing="upload"), [], HIDDEN
    try:
        data = decode(contents)
        report = await client.upload(
            plant, filename or "shift-log.csv", data, mode=mode or "partial"
        )
    except ApiError as exc:
        return refused(exc, filename), *_errors(exc.problem.get("errors"))
    except ValueError as exc:
        return cards.problem(exc, doing="read the file"), [], HIDDEN
    return summary(report), *_errors(report.get("errors"))


HIDDEN = {"display": "none"}


def _errors(errors: Any) -> tuple[list[dict[str, Any]], dict[str, str] | None]:
    found = error_rows(errors)
    return found, (None if found else HIDDEN)


def error_rows(errors: Any) -> list[dict[str, Any]]:
    """The per-row report as table rows, in file order."""
    out = []
    for item in errors or []:
        if not isinstance(item, dict):
            continue
        out.append(
            {
                "row": item.get("row"),
                "column": item.get("column") or item.get("field") or "",
                "value": item.get("value") if item.get("value") is not None else "",
                "message": item.get("message") or item.get("detail") or "",
            }
        )
    out.sort(key=lambda r: (r["row"] is None, r["row"] or 0))
    return out


def summary(report: dict[str, Any]) -> html.Div:
    """What happened to the file: counts, notices and the units queued for recompute."""
    rejected = int(report.get("rejected") or 0)
    units = report.get("units_recomputed") or []
    notices = [n.get("message", "") for n in report.get("notices") or [] if isinstance(n, dict)]
    parts: list[Any] = [
        html.P(
            f"{report.get('filename', 'The file')} for {report.get('plant', '?')}: "
            f"{report.get('status', 'stored')}.",
            className="lw-upload-status",
        ),
        cards.tiles(
            cards.tile("Stored", str(report.get("stored", 0)), sub="new readings", tone="good"),
            cards.tile("Replaced", str(report.get("replaced", 0)), sub="changed values"),
            cards.tile("Unchanged", str(report.get("unchanged", 0)), sub="already stored"),
            cards.tile(
                "Problems",
                str(rejected),
                sub="see the table below" if rejected else "none",
                tone="alert" if rejected else "plain",
            ),
        ),
    ]
    if units:
        links: list[Any] = ["Recomputing: "]
        for i, slug in enumerate(units):
            links += [", " if i else "", dcc.Link(slug, href=f"/units/{slug}", className="lw-link")]
        parts.append(html.P(links, className="lw-recomputed"))
    else:
        parts.append(html.P("No unit needs recomputing.", className="lw-recomputed"))
    parts += [html.P(text, className="lw-caption") for text in notices]
    return html.Div(parts, className="lw-upload-report")


def refused(exc: ApiError, filename: str | None) -> html.Div:
    """A file the server refused: why, and that nothing (or what) was stored."""
    count = len(exc.problem.get("errors") or [])
    lines = [
        html.Div(
            f"{filename or 'The file'} was refused: {exc.title}", className="lw-problem-title"
        ),
        html.P(exc.detail or ""),
    ]
    if count:
        lines.append(html.P(f"{count} problem(s) listed below by row and column."))
    return html.Div(lines, className="lw-problem", role="alert")
