"""The dashboard application: the shell around the pages, built standalone or mounted.

Two ways to run it:

* mounted on the API's own FastAPI application (``lostwork serve``): :func:`mount`
  builds the Dash app on that server, the UI answers at ``/`` beside ``/api/v1``, and
  the dashboard's client talks to the API in-process (no socket, no port to know);
* standalone against a remote server: ``python -m dashboard --api URL --key KEY``
  (:func:`create_dash` with ``api_base_url``), served by uvicorn.

Either way the pages read data only through :class:`dashboard.client.LostworkClient`.
"""

from __future__ import annotations

import os
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

import dash
import httpx
from dash import Input, Output, dcc, html

from dashboard import registry
from dashboard.client import KeySource, LostworkClient
from dashboard.components import prefs
from dashboard.pages import PAGES

HERE = Path(__file__).resolve().parent
KEY_ENV = "LOSTWORK_DASHBOARD_API_KEY"
"""Environment variable holding the API key the dashboard uses: the read scope (which
also acknowledges alerts), ingest for uploads, admin to fit and activate baselines."""
IN_PROCESS_URL = "http://lostwork.in-process"
"""Base URL of in-process requests (never resolved: the ASGI transport answers them)."""

LOCATION = "shell-location"
NAV = "shell-nav"

FOOTER_TEXT = (
    "lostwork monitors and does not control. It is not a safety system: it defers to the "
    "boiler and pressure-vessel codes in force locally and to licensed practice."
)


def _nav_links() -> list[dcc.Link]:
    return [
        dcc.Link(
            module.PAGE["name"], href=module.NAV_HREF, className="lw-nav-link", id=f"{NAV}-{i}"
        )
        for i, module in enumerate(PAGES)
        if getattr(module, "NAV_HREF", None)
    ]


def shell() -> html.Div:
    """Navigation rail, the page, the footer, and the shared display-choice store."""
    return html.Div(
        [
            dcc.Location(id=LOCATION, refresh="callback-nav"),
            prefs.store(),
            html.Nav(
                [
                    html.Div(
                        [
                            html.Span("lostwork", className="lw-brand-name"),
                            html.Span(
                                "first and second law, unit by unit", className="lw-brand-line"
                            ),
                        ],
                        className="lw-brand",
                    ),
                    html.Div(_nav_links(), id=NAV, className="lw-nav-links"),
                    html.Div(prefs.switches(), className="lw-switches"),
                ],
                className="lw-rail",
            ),
            html.Div(
                [
                    html.Main(dash.page_container, className="lw-main"),
                    html.Footer(FOOTER_TEXT, className="lw-footer", id="shell-footer"),
                ],
                className="lw-body",
            ),
        ],
        className="lw-shell",
    )


@registry.page_callback(
    Output(prefs.STORE, "data"), Input(prefs.UNITS, "value"), Input(prefs.CLOCK, "value")
)
def remember_choices(system: str | None, clock: str | None) -> dict[str, str]:
    """Copy the switches into the shared store that every page reads."""
    return prefs.choose(system, clock)


@registry.page_callback(
    [
        Output(f"{NAV}-{i}", "className")
        for i, m in enumerate(PAGES)
        if getattr(m, "NAV_HREF", None)
    ],
    Input(LOCATION, "pathname"),
)
def highlight_nav(pathname: str | None) -> list[str]:
    """Mark the navigation link of the page on screen (unit pages belong to Overview)."""
    path = pathname or "/"
    classes = []
    for module in PAGES:
        href = getattr(module, "NAV_HREF", None)
        if not href:
            continue
        active = path == href or any(path.startswith(p) for p in getattr(module, "OWNS", ()))
        classes.append("lw-nav-link lw-active" if active else "lw-nav-link")
    return classes


def _page_patterns() -> list[re.Pattern[str]]:
    patterns = []
    for module in PAGES:
        template = module.PAGE.get("path_template") or module.PAGE["path"]
        if template != "/":
            body = re.sub(r"<\w+>", "[^/]+", re.escape(template))
            patterns.append(re.compile(f"^{body}/?$"))
    return patterns


class _PagePaths:
    """ASGI middleware: a browser GET of a page path (``/units/boiler-1``) is answered
    with Dash's index, whose router then draws the page.

    Dash's FastAPI backend would instead add a catch-all ``GET /{path}`` at startup,
    which also answers unknown ``/api/v1/...`` paths with HTML and 200; the API must
    keep its 404 problem details, so only the dashboard's own page paths are rewritten.
    """

    def __init__(self, app: Any, patterns: list[re.Pattern[str]]) -> None:
        self.app = app
        self.patterns = patterns

    async def __call__(self, scope: dict, receive: Callable, send: Callable) -> None:
        if (
            scope["type"] == "http"
            and scope.get("method") in ("GET", "HEAD")
            and any(p.match(scope.get("path", "")) for p in self.patterns)
        ):
            scope = dict(scope, path="/", raw_path=b"/")
        await self.app(scope, receive, send)


def create_dash(
    server: Any = None,
    api_base_url: str = "http://127.0.0.1:8000",
    api_key: KeySource = None,
    *,
    client: LostworkClient | None = None,
) -> dash.Dash:
    """Build the dashboard.

    Parameters
    ----------
    server : fastapi.FastAPI, optional
        Application to build on; a new FastAPI application when None.
    api_base_url : str
        Root URL of the lostwork API the pages read from.
    api_key : str or callable, optional
        API key for that server (see :class:`dashboard.client.LostworkClient`); the
        environment variable ``LOSTWORK_DASHBOARD_API_KEY`` when None.
    client : LostworkClient, optional
        A ready client; overrides ``api_base_url`` and ``api_key``.
    """
    app = dash.Dash(
        __name__,
        server=server if server is not None else True,
        backend="fastapi",
        use_pages=True,
        pages_folder=str(HERE / "pages"),
        assets_folder=str(HERE / "assets"),
        title="lostwork",
        update_title=None,
        suppress_callback_exceptions=True,
    )
    # Dash would add a catch-all route at startup; _PagePaths serves page URLs instead.
    app.backend._setup_catchall = lambda: None
    for module in PAGES:
        dash.register_page(module.__name__, layout=module.layout, **module.PAGE)
    app.layout = shell()
    if client is None:
        key = api_key if api_key is not None else (lambda: os.environ.get(KEY_ENV))
        client = LostworkClient(api_base_url, key)
    registry.attach(app, client)
    app.server.add_middleware(_PagePaths, patterns=_page_patterns())
    app.lostwork_client = client  # type: ignore[attr-defined]
    return app


def mount(
    fastapi_app: Any,
    *,
    api_base_url: str | None = None,
    api_key: KeySource = None,
) -> dash.Dash:
    """Serve the dashboard at ``/`` of the API's FastAPI application.

    Call it after the API routers are included (the dashboard claims ``/``, ``/assets``,
    ``/_dash-*`` and its page paths). Without ``api_base_url`` the dashboard's requests
    go to ``fastapi_app`` in-process. The key is, in order: ``api_key``,
    ``fastapi_app.state.dashboard_api_key`` at request time, the environment variable
    ``LOSTWORK_DASHBOARD_API_KEY``. The Dash app is kept as ``fastapi_app.state.dashboard``.
    """

    def key() -> str | None:
        if callable(api_key):
            return api_key()
        if api_key:
            return api_key
        return getattr(fastapi_app.state, "dashboard_api_key", None) or os.environ.get(KEY_ENV)

    if api_base_url:
        client = LostworkClient(api_base_url, key)
    else:
        client = LostworkClient(IN_PROCESS_URL, key, transport=httpx.ASGITransport(app=fastapi_app))
    dash_app = create_dash(server=fastapi_app, client=client)
    fastapi_app.state.dashboard = dash_app
    return dash_app
