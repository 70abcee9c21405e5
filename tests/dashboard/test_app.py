"""The dashboard on the service's FastAPI app: UI at /, API untouched; palette in sync."""

from __future__ import annotations

import asyncio
import re
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from dashboard import palette
from dashboard.app import FOOTER_TEXT, create_dash
from dashboard.client import ApiError

THEME = Path(__file__).resolve().parents[2] / "dashboard" / "assets" / "theme.css"


def test_ui_at_root_and_page_paths_api_keeps_its_problem_details(live_api):
    # `with` runs the app's lifespan, where Dash would add its catch-all route.
    with TestClient(live_api.app) as http:
        for path in ("/", "/units/boiler-1", "/second-law", "/alerts", "/uploads", "/baselines"):
            page = http.get(path)
            assert page.status_code == 200, path
            assert page.headers["content-type"].startswith("text/html")
            assert "<title>lostwork</title>" in page.text
        missing = http.get("/api/v1/no-such-thing")
        assert missing.status_code == 404
        assert missing.headers["content-type"] == "application/problem+json"
        assert missing.json()["title"] == "Not Found"
        assert http.get("/no-such-page").status_code == 404
        units = http.get("/api/v1/units", headers={"Authorization": f"Bearer {live_api.key}"})
        assert units.status_code == 200
        assert [u["slug"] for u in units.json()["units"]] == ["boiler-1", "chp", "turbine-1"]
        assert http.get("/docs").status_code == 200
        layout = http.get("/_dash-layout").json()
        assert FOOTER_TEXT in str(layout)
        assert http.get("/assets/theme.css").status_code == 200


def test_mounted_dashboard_reads_the_api_in_process_with_the_apps_key(live_api, monkeypatch):
    monkeypatch.delenv("LOSTWORK_DASHBOARD_API_KEY", raising=False)
    client = live_api.app.state.dashboard.lostwork_client
    with pytest.raises(ApiError) as caught:  # no key configured yet: the API refuses
        asyncio.run(client.units())
    assert caught.value.status == 401
    live_api.app.state.dashboard_api_key = live_api.key  # what `lostwork serve` would set
    units = asyncio.run(client.units())
    assert list(units["slug"]) == ["boiler-1", "chp", "turbine-1"]


def test_several_apps_in_one_process_each_get_every_callback():
    first, second = create_dash(), create_dash()
    assert len(first.callback_map) == len(second.callback_map) > 10
    assert "overview-tiles.children" in " ".join(second.callback_map)


def test_theme_css_declares_the_palette_of_the_figures():
    css = THEME.read_text(encoding="utf-8")
    declared = dict(re.findall(r"(--lw-[a-z]+):\s*(#[0-9a-fA-F]{6})\s*;", css))
    assert declared == palette.CSS_VARIABLES


@pytest.mark.parametrize(("colour", "alpha", "text"), [("#1f7a74", 0.18, "rgba(31,122,116,0.18)")])
def test_with_alpha(colour, alpha, text):
    assert palette.with_alpha(colour, alpha) == text


def test_standalone_dashboard_reads_a_remote_api_with_the_given_or_environment_key(monkeypatch):
    app = create_dash(api_base_url="http://plant-server:8000/", api_key="given")
    client = app.lostwork_client
    assert client.base_url == "http://plant-server:8000"
    assert client._headers()["Authorization"] == "Bearer given"
    monkeypatch.setenv("LOSTWORK_DASHBOARD_API_KEY", "from-env")
    fallback = create_dash(api_base_url="http://plant-server:8000").lostwork_client
    assert fallback._headers()["Authorization"] == "Bearer from-env"
    # its own FastAPI server answers the page paths
    with TestClient(app.server) as http:
        assert http.get("/units/boiler-1").status_code == 200
        assert http.get("/api/v1/units").status_code == 404


def test_command_line_needs_the_api_url(capsys):
    from dashboard.__main__ import main

    with pytest.raises(SystemExit) as caught:
        main([])
    assert caught.value.code == 2
    assert "the following arguments are required: --api" in capsys.readouterr().err
