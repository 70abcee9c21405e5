"""Cards, figure tiles and the messages a page shows instead of data."""

from __future__ import annotations

from typing import Any

from dash import html

from dashboard.client import ApiError, NotAvailable


def card(title: str | None, *children: Any, id: str | None = None, note: Any = None) -> html.Div:
    """A titled panel holding a chart, a table or a form."""
    head = [html.H2(title, className="lw-card-title")] if title else []
    tail = [html.P(note, className="lw-card-note")] if note else []
    props = {"id": id} if id else {}
    return html.Section([*head, *children, *tail], className="lw-card", **props)


def tile(label: str, value: str, *, sub: str | None = None, tone: str = "plain") -> html.Div:
    """A key figure: small label above, big number, optional one-line context below.

    ``tone`` is one of ``plain``, ``good``, ``warn``, ``alert`` (a left rule in the
    palette's colour for that meaning).
    """
    return html.Div(
        [
            html.Div(label, className="lw-tile-label"),
            html.Div(value, className="lw-tile-value"),
            html.Div(sub or "\u00a0", className="lw-tile-sub"),
        ],
        className=f"lw-tile lw-tone-{tone}",
    )


def tiles(*items: html.Div) -> html.Div:
    """A row of tiles that wraps on narrow screens."""
    return html.Div(list(items), className="lw-tiles")


def empty_state(title: str, text: str, *, hint: str | None = None) -> html.Div:
    """What a page shows where data will appear once something exists."""
    parts = [html.Div(title, className="lw-empty-title"), html.P(text)]
    if hint:
        parts.append(html.P(hint, className="lw-empty-hint"))
    return html.Div(parts, className="lw-empty")


def problem(exc: Exception, *, doing: str) -> html.Div:
    """An API failure, said plainly, with the server's problem details when it gave some."""
    if isinstance(exc, NotAvailable):
        return empty_state(
            "Not available on this server", f"The server has no endpoint for {doing}."
        )
    if isinstance(exc, ApiError) and exc.status in (401, 403):
        return html.Div(
            [
                html.Div(f"Could not {doing}: {exc.title}", className="lw-problem-title"),
                html.P(f"HTTP {exc.status}. {exc.detail or ''}".strip()),
                html.P(
                    "The dashboard reads the API with its own key: start the server with "
                    "LOSTWORK_DASHBOARD_API_KEY set to a key with the read scope (ingest to "
                    "upload, admin to fit baselines), or pass --key to python -m dashboard."
                ),
            ],
            className="lw-problem",
            role="alert",
        )
    if isinstance(exc, ApiError):
        detail = exc.detail or ""
        return html.Div(
            [
                html.Div(f"Could not {doing}: {exc.title}", className="lw-problem-title"),
                html.P(f"HTTP {exc.status}. {detail}".strip()) if exc.status else html.P(detail),
            ],
            className="lw-problem",
            role="alert",
        )
    return html.Div(
        [html.Div(f"Could not {doing}", className="lw-problem-title"), html.P(str(exc))],
        className="lw-problem",
        role="alert",
    )
