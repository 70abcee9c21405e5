"""End to end in a real headless Chromium against the real service.

One server process (``lostwork serve`` on a temporary SQLite database prepared as
``lostwork demo`` does: the demo plant and a key; the embedded worker running) is fed two days of one-minute
readings through ``POST /api/v1/readings/columnar``; the pipeline computes the results;
one browser session then walks the dashboard: overview, a unit, its range, the unit
system, the second-law view, an upload with a bad row, an alert (a threshold rule made
through the API fires on the data) acknowledged with a note, baselines. Nothing on the
network path is mocked. Any browser console error fails the step it happened in.
Screenshots go to ``test-artifacts/`` (git-ignored).
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

import httpx
import numpy as np
import pandas as pd
import pytest

from dashboard.client import parse_results

pytestmark = [pytest.mark.browser, pytest.mark.slow]

ROOT = Path(__file__).resolve().parents[2]
ARTIFACTS = ROOT / "test-artifacts"
CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-quic",
]
DAYS = 2
END = pd.Timestamp("2026-12-01T00:00Z")
START = END - pd.Timedelta(days=DAYS)
STEP_TIMEOUT_MS = 20_000


RULE = {
    "name": "boiler-1-efficiency-low",
    "unit": "boiler-1",
    "kind": "threshold",
    "metric": "eta_1",
    "below": 0.885,
    "for": "10 min",
    "severity": "warning",
}
"""Fires on the last day's fouling (eta_1 about 0.90 before, falling to about 0.875)."""


@dataclass
class Server:
    base: str
    key: str
    process: subprocess.Popen

    @property
    def headers(self) -> dict[str, str]:
        return {"Authorization": f"Bearer {self.key}"}

    def get(self, path: str, **params) -> dict:
        response = httpx.get(self.base + path, params=params, headers=self.headers, timeout=30)
        response.raise_for_status()
        return response.json()


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _readings() -> dict:
    """Two days of the demo plant's tags, one a minute; boiler 1 burns 3 % more gas per
    day over the last day at the same steam (a fouling boiler), so its eta_1 falls.

    Invented operating values of the fictional demo plant: about 28 t/h of steam at
    40 barg and 420 degC from feedwater at 105 degC, natural gas near 2150 Nm3/h.
    """
    n = DAYS * 1440
    i = np.arange(n)
    # 0.3 % meter noise on the gas and steam flows, so the baseline has residuals
    rng = np.random.default_rng(2026)
    noise = 1 + 0.003 * rng.standard_normal((2, n))
    day = np.sin(2 * np.pi * i / 1440)
    load = 1 + 0.08 * day
    fouling = np.where(i > (DAYS - 1) * 1440, 1 + 0.03 * (i - (DAYS - 1) * 1440) / 1440, 1.0)
    times = [int((START + pd.Timedelta(minutes=int(k))).value // 1_000_000) for k in i]
    constant = {
        "FW-P": 45.0,
        "FW-T": 105.0,
        "MS-P": 40.0,
        "MS-T": 420.0,
        "EXH-P": 3.5,
        "EXH-T": 180.0,
        "AUX-P": 300.0,
    }
    series = {tag: [v] * n for tag, v in constant.items()}
    series |= {
        "AMB-T": list(8 + 4 * day),
        "GAS-FLOW": list(2150 * load * fouling * noise[0]),
        "FW-FLOW": list(28 * load * noise[1]),
        "MS-FLOW": list(28 * load * noise[1]),
        "GEN-P": list(3340 * load),
    }
    return {"plant": "tarnwick-mill", "times": times, "series": series}


def _prepare(database_url: str) -> str:
    """What ``lostwork demo --no-serve`` does, in this process (its imports are loaded):
    migrate the database, apply the demo plant file, create an admin key."""
    from api.auth import service as auth_service
    from api.core import migrate
    from api.core.db import create_db_engine, make_session_factory
    from api.examples import DEMO_PLANT
    from api.plants import service as plant_service
    from api.plants.fileformat import load_yaml

    migrate.upgrade(database_url)
    engine = create_db_engine(database_url)
    try:
        with make_session_factory(engine)() as session:
            plant_service.apply_plant(
                session=session,
                document=load_yaml(DEMO_PLANT.read_text(encoding="utf-8")),
                default_interval_s=60,
                dry_run=False,
            )
            _, key = auth_service.create_key(session=session, name="e2e", scopes=["admin"])
    finally:
        engine.dispose()
    return key


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Server]:
    if not CHROMIUM.exists():
        pytest.skip(f"{CHROMIUM} is not installed (apt-get install chromium chromium-driver)")
    work = tmp_path_factory.mktemp("e2e")
    env = dict(
        os.environ,
        PYTHONPATH=str(ROOT),
        LOSTWORK_DATABASE_URL=f"sqlite:///{work / 'lostwork.db'}",
        LOSTWORK_EMBEDDED_WORKER="true",
        LOSTWORK_LOG_LEVEL="WARNING",
    )
    key = _prepare(env["LOSTWORK_DATABASE_URL"])
    port = _free_port()
    env["LOSTWORK_DASHBOARD_API_KEY"] = key
    log = (work / "server.log").open("w")
    process = subprocess.Popen(
        [sys.executable, "-m", "api.cli", "serve", "--port", str(port)],
        env=env,
        cwd=work,
        stdout=log,
        stderr=subprocess.STDOUT,
    )
    srv = Server(f"http://127.0.0.1:{port}", key, process)
    try:
        _wait(lambda: httpx.get(srv.base + "/api/v1/health", timeout=2).status_code == 200, 60)
        rule = httpx.post(srv.base + "/api/v1/rules", json=RULE, headers=srv.headers, timeout=30)
        assert rule.status_code == 201, rule.text
        pushed = httpx.post(
            srv.base + "/api/v1/readings/columnar",
            json=_readings(),
            headers=srv.headers,
            timeout=120,
        )
        assert pushed.status_code == 200, pushed.text
        assert pushed.json()["rejected"] == 0
        last = (START + pd.Timedelta(days=DAYS) - pd.Timedelta(minutes=1)).strftime(
            "%Y-%m-%dT%H:%M"
        )
        for unit in ("boiler-1", "chp"):
            _wait(
                lambda u=unit: (srv.get(f"/api/v1/units/{u}/latest").get("t") or "").startswith(
                    last
                ),
                180,
            )
        yield srv
    finally:
        process.terminate()
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=5)
        log.close()


def _wait(condition, seconds: float) -> None:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        try:
            if condition():
                return
        except httpx.HTTPError:
            pass
        time.sleep(0.3)
    raise AssertionError(f"condition not met within {seconds} s")


@dataclass
class Browser:
    page: object
    errors: list[str] = field(default_factory=list)

    def shot(self, name: str) -> None:
        ARTIFACTS.mkdir(exist_ok=True)
        self.page.screenshot(path=str(ARTIFACTS / f"{name}.png"), full_page=True)

    def assert_no_console_errors(self) -> None:
        found, self.errors[:] = list(self.errors), []
        assert found == [], f"browser console errors: {found}"


@pytest.fixture(scope="module")
def browser(server: Server, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Browser]:
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        context = playwright.chromium.launch_persistent_context(
            str(tmp_path_factory.mktemp("chromium-profile")),
            executable_path=str(CHROMIUM),
            headless=True,
            args=CHROMIUM_ARGS,
            viewport={"width": 1440, "height": 1000},
        )
        context.set_default_timeout(STEP_TIMEOUT_MS)
        page = context.new_page()
        found = Browser(page)
        page.on("console", lambda m: found.errors.append(m.text) if m.type == "error" else None)
        page.on("pageerror", lambda e: found.errors.append(f"page error: {e}"))
        try:
            yield found
        finally:
            context.close()


def _text(page, selector: str) -> str:
    return page.locator(selector).inner_text()


def test_overview_shows_every_unit_with_the_apis_values(server, browser):
    page = browser.page
    page.goto(server.base + "/")
    page.wait_for_selector("#overview-table td >> text=Boiler 1")
    rows = page.locator("#overview-table tbody tr:has(td)")
    texts = [rows.nth(i).inner_text() for i in range(rows.count())]
    boiler = next(t for t in texts if t.startswith("Boiler 1"))
    # the overview shows each unit's mean over the hour up to its latest interval, as
    # the API computes it (the latest interval may be the one after END: a reading holds
    # into the next interval)
    hour_end = pd.Timestamp(server.get("/api/v1/units/boiler-1/latest")["t"])
    hour_end += pd.Timedelta(minutes=1)
    hour = parse_results(
        server.get(
            "/api/v1/units/boiler-1/results",
            metrics="eta_1",
            start=(hour_end - pd.Timedelta(hours=1)).isoformat(),
            end=hour_end.isoformat(),
            max_points=2,
        )
    )
    assert f"{100 * hour.period_means()['eta_1']:.1f}" == boiler.split("\t")[2]
    assert any(t.startswith("CHP block") for t in texts)
    assert boiler.split("\t")[-1] == "1"  # the open alert of the fouling boiler
    footer = _text(page, "#shell-footer")
    assert "monitors and does not control" in footer and "licensed practice" in footer
    browser.shot("overview")
    browser.assert_no_console_errors()


def test_unit_page_range_and_unit_system(server, browser):
    page = browser.page
    page.click("#overview-table a >> text=Boiler 1")
    page.wait_for_url("**/units/boiler-1")
    page.wait_for_selector("#unit-main .scatterlayer .trace")
    caption = page.locator("#unit-caption")
    assert "2026-11-24 01:00 CET to 2026-12-01 01:00 CET" in caption.inner_text()  # 7 days
    page.click("#unit-range label >> text=24 h")
    page.wait_for_function(
        "document.querySelector('#unit-caption').innerText.startsWith('2026-11-30 01:00 CET')"
    )
    page.click("#unit-metric")
    page.fill("input.dash-dropdown-search", "Heat absorbed")
    page.get_by_role("option", name="Heat absorbed", exact=True).click()
    ytitle = page.locator("#unit-main .ytitle")
    page.wait_for_function(
        "document.querySelector('#unit-main .ytitle').textContent.includes('[MW]')"
    )
    assert ytitle.text_content() == "Heat absorbed [MW]"
    page.click(".lw-switches label >> text=US customary")
    page.wait_for_function(
        "document.querySelector('#unit-main .ytitle').textContent.includes('MMBtu/h')"
    )
    assert ytitle.text_content() == "Heat absorbed [MMBtu/h]"
    browser.shot("unit")
    # the choice is remembered by the browser
    page.reload()
    page.wait_for_selector("#unit-main .scatterlayer .trace")
    assert page.locator("#shell-units input[value=us]").is_checked()
    page.click(".lw-switches label >> text=SI")
    browser.assert_no_console_errors()


def test_second_law_view_closes_the_account(server, browser):
    page = browser.page
    page.goto(server.base + "/second-law?unit=boiler-1")
    page.wait_for_selector("#second-law-waterfall .barlayer .trace")
    page.wait_for_selector("#second-law-table td >> text=Exergy supplied (fuel and air)")
    rows = page.locator("#second-law-table tbody tr:has(td)")
    cells = [rows.nth(i).inner_text().split("\t") for i in range(rows.count())]
    assert cells[0][0] == "Exergy supplied (fuel and air)" and cells[0][-1] == "100.0"
    assert cells[1][:2] == ["Water and steam exergy gain", "product"]
    # the shares of the outflows add up to the input (the account closes)
    assert sum(float(c[-1]) for c in cells[1:]) == pytest.approx(100.0, abs=0.3)
    assert page.locator("#second-law-waterfall .ytitle").text_content() == "Exergy flow [MW]"
    browser.shot("second-law")
    browser.assert_no_console_errors()


def test_upload_with_a_bad_row_shows_where(server, browser, tmp_path):
    page = browser.page
    page.goto(server.base + "/uploads")
    page.wait_for_selector("#uploads-plant >> text=Tarnwick Board Mill CHP")
    csv = tmp_path / "shift-log.csv"
    csv.write_text(
        "time,FW-FLOW [t/h],MS-T [degC]\n"
        "2026-11-30 22:00,28.1,420\n"
        "2026-11-30 22:01,twenty-eight,421\n"
        "2026-11-30 22:02,28.3,422\n",
        encoding="utf-8",
    )
    page.set_input_files("#uploads-drop input[type=file]", str(csv))
    page.wait_for_selector("#uploads-errors td >> text=twenty-eight")
    row = page.locator("#uploads-errors tbody tr:has(td)").nth(0).inner_text().split("\t")
    assert row[:3] == ["3", "FW-FLOW [t/h]", "twenty-eight"]
    report = _text(page, "#uploads-result")
    assert "Recomputing:" in report and "boiler-1" in report
    browser.shot("uploads")
    browser.assert_no_console_errors()


def test_acknowledge_an_alert(server, browser):
    page = browser.page
    page.goto(server.base + "/alerts")
    page.wait_for_selector("#alerts-table td >> text=boiler-1-efficiency-low")
    row = page.locator("#alerts-table tbody tr:has(td)").nth(0)
    assert "firing" in row.inner_text() and "warning" in row.inner_text()
    browser.shot("alerts")
    row.locator("input[type=radio]").check()
    page.fill("#alerts-note-text", "soot blowers run; watching the stack temperature")
    page.click("#alerts-ack")
    page.wait_for_selector("#alerts-ack-result >> text=acknowledged")
    page.wait_for_selector("#alerts-table td >> text=by e2e: soot blowers run")
    alert = server.get("/api/v1/alerts", unit="boiler-1")["alerts"][0]
    assert (alert["acknowledged_by"], alert["note"]) == (
        "e2e",
        "soot blowers run; watching the stack temperature",
    )
    browser.shot("alerts-acknowledged")
    browser.assert_no_console_errors()


def test_fit_and_activate_a_baseline_then_see_the_drift(server, browser):
    page = browser.page
    page.goto(server.base + "/baselines?unit=boiler-1")
    page.wait_for_selector("#baselines-chart .scatterlayer .trace")
    page.wait_for_selector("#baselines-state >> text=No baseline fitted yet")
    # the reference period: drag across the first day (before the fouling)
    box = page.locator("#baselines-chart .nsewdrag").bounding_box()
    before = page.inner_text("#baselines-period-text")
    y = box["y"] + box["height"] / 2
    page.mouse.move(box["x"] + 0.02 * box["width"], y)
    page.mouse.down()
    page.mouse.move(box["x"] + 0.45 * box["width"], y, steps=8)
    page.mouse.up()
    page.wait_for_function(
        "b => document.querySelector('#baselines-period-text').innerText !== b", arg=before
    )
    page.click("#baselines-fit")
    page.wait_for_selector("#baselines-fit-result >> text=ASHRAE Guideline 14")
    assert "Version 1 of First-law efficiency (HHV)" in _text(page, "#baselines-fit-result")
    page.wait_for_selector("#baselines-table td >> text=First-law efficiency (HHV)")
    browser.shot("baselines")
    page.locator("#baselines-table input[type=radio]").first.check()
    page.click("#baselines-activate")
    page.wait_for_selector("#baselines-activate-result >> text=Version 1 is active")
    fitted = server.get("/api/v1/units/boiler-1/baselines")["baselines"][0]
    assert (fitted["version"], fitted["metric"], fitted["active"]) == (1, "eta_1", True)
    # the pipeline recomputes drift against it; the unit page then draws expected and drift
    last = (END - pd.Timedelta(minutes=1)).isoformat().replace("+00:00", "Z")

    def drift_computed() -> bool:
        body = server.get(
            "/api/v1/units/boiler-1/results", metrics="drift_eta_1", start=last, max_points=2
        )
        return any(v is not None for series in body["series"] for v in series["mean"])

    _wait(drift_computed, 180)
    page.goto(server.base + "/units/boiler-1")
    page.wait_for_selector("#unit-main .legend >> text=First-law efficiency (HHV), expected")
    page.wait_for_selector("#unit-drift .barlayer .trace")
    assert page.locator("#unit-baseline-charts").is_visible()
    browser.shot("unit-with-baseline")
    browser.assert_no_console_errors()
