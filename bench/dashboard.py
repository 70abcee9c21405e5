"""Dashboard speed: the unit page over a year of one-minute results.

Setup: a scratch SQLite database (migrated), the demo plant, and 525,600 one-minute
intervals of ``eta_1``, ``eta_2`` and ``flags`` for ``boiler-1`` written through the
pipeline's bulk writer; one ``uvicorn api.main:app`` process with the dashboard mounted.

Measured in the same run (median of ``--repeat`` after one warm-up):

* ``API``: ``GET /api/v1/units/boiler-1/results`` for the year, the two metrics and the
  flags the unit page asks for, ``max_points`` = 2 x chart width, JSON decoded --
  the reference;
* ``callback``: the unit page's own work for that year in this process --
  :class:`dashboard.client.LostworkClient` over HTTP, then
  :func:`dashboard.pages.unit.render` (parsing, unit conversion, flag spans, figure);
* ``browser, 1 year``: in headless Chromium, from a click on "1 year" on the unit page to
  the chart drawn with its caption updated (callback, JSON to the browser, plotly);
* ``browser, 6 h``: the same for "6 h", for comparison.

The target (issue 7) is a year of one-minute data on a unit page in about a second.

Usage: ``.venv/bin/python bench/dashboard.py [--repeat 5] [--width 1150]``
"""

from __future__ import annotations

import argparse
import asyncio
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import httpx
import numpy as np
import pandas as pd
from sqlalchemy import text

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from api.auth import service as auth_service  # noqa: E402
from api.core import migrate  # noqa: E402
from api.core.db import create_db_engine, make_session_factory  # noqa: E402
from api.examples import DEMO_PLANT  # noqa: E402
from api.plants import service as plant_service  # noqa: E402
from api.plants.fileformat import load_yaml  # noqa: E402
from api.results.store import upsert_results  # noqa: E402
from dashboard import timerange  # noqa: E402
from dashboard.client import LostworkClient  # noqa: E402
from dashboard.components import prefs  # noqa: E402
from dashboard.pages import unit as unit_page  # noqa: E402
from dashboard.unit_context import load as load_context  # noqa: E402

UNIT = "boiler-1"
START = pd.Timestamp("2026-01-01T00:00Z")
DAY = 1440
DAYS = 365
CHROMIUM = "/usr/bin/chromium"


def load(url: str) -> str:
    migrate.upgrade(url)
    engine = create_db_engine(url)
    factory = make_session_factory(engine)
    with factory() as session:
        plant_service.apply_plant(
            session=session, document=load_yaml(DEMO_PLANT.read_text(encoding="utf-8"))
        )
        _, key = auth_service.create_key(session=session, name="bench", scopes=["read"])
        unit_id = session.execute(
            text("SELECT id FROM units WHERE slug = :s"), {"s": UNIT}
        ).scalar_one()
        session.commit()
    rng = np.random.default_rng(7)
    for day in range(DAYS):
        minutes = day * DAY + np.arange(DAY)
        t_ms = START.value // 1_000_000 + minutes * 60_000
        frame = pd.DataFrame(
            {
                "eta_1": 0.88 - 0.01 * minutes / (DAYS * DAY) + 0.004 * rng.standard_normal(DAY),
                "eta_2": 0.42 + 0.003 * rng.standard_normal(DAY),
                "flags": np.where(rng.random(DAY) < 0.002, 2.0, 0.0),
            },
            index=pd.Index(t_ms, name="t_ms"),
        )
        with factory() as session:
            upsert_results(session, unit_id, frame)
            session.commit()
    with engine.connect() as conn:
        conn.execute(text("ANALYZE"))
        conn.commit()
    engine.dispose()
    return key


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def median_time(fn, repeat: int) -> float:
    fn()
    runs = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        runs.append(time.perf_counter() - start)
    return statistics.median(runs)


def _click_and_wait(page, label: str) -> None:
    """Click a range and wait until the caption names the new window."""
    before = page.inner_text("#unit-caption")
    page.click(f"#unit-range label >> text={label}")
    page.wait_for_function(
        "b => { const c = document.querySelector('#unit-caption');"
        " return c && c.innerText && c.innerText !== b; }",
        arg=before,
        timeout=120_000,
    )


def browser_times(base: str, repeat: int, width: int) -> dict[str, float]:
    from playwright.sync_api import sync_playwright

    out = {}
    with sync_playwright() as pw:
        context = pw.chromium.launch_persistent_context(
            tempfile.mkdtemp(prefix="lw-bench-chromium-"),
            executable_path=CHROMIUM,
            headless=True,
            args=[
                "--no-sandbox",
                "--disable-gpu",
                "--disable-background-networking",
                "--disable-component-update",
                "--disable-sync",
                "--no-first-run",
                "--disable-quic",
            ],
            viewport={"width": width + 330, "height": 1000},
        )
        page = context.new_page()
        page.goto(f"{base}/units/{UNIT}")
        page.wait_for_selector("#unit-main .scatterlayer .trace", timeout=120_000)
        page.wait_for_function("document.querySelector('#unit-caption').innerText.length > 0")
        for preset, label in (("1y", "1 year"), ("6h", "6 h")):
            runs = []
            for i in range(repeat + 1):
                # step away to another range first, so each click asks for new data
                other = "24 h" if i % 2 == 0 else "7 days"
                _click_and_wait(page, other)
                start = time.perf_counter()
                _click_and_wait(page, label)
                if i:
                    runs.append(time.perf_counter() - start)
            out[preset] = statistics.median(runs)
        context.close()
    return out


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--width", type=int, default=1150, help="chart width in px")
    args = parser.parse_args()
    work = Path(tempfile.mkdtemp(prefix="lw-bench-dashboard-"))
    url = f"sqlite:///{work / 'lostwork.db'}"
    print(f"loading {DAYS * DAY:,} intervals x 3 metrics into {url} ...", flush=True)
    start = time.perf_counter()
    key = load(url)
    print(f"   loaded in {time.perf_counter() - start:.1f} s")
    port = free_port()
    env = dict(
        os.environ,
        LOSTWORK_DATABASE_URL=url,
        LOSTWORK_EMBEDDED_WORKER="false",
        LOSTWORK_LOG_LEVEL="WARNING",
        LOSTWORK_DASHBOARD_API_KEY=key,
        PYTHONPATH=str(ROOT),
    )
    server = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "uvicorn",
            "api.main:app",
            "--host",
            "127.0.0.1",
            "--port",
            str(port),
            "--log-level",
            "warning",
            "--no-access-log",
        ],
        env=env,
        cwd=work,
    )
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 90
        while time.monotonic() < deadline:
            try:
                if httpx.get(base + "/api/v1/health", timeout=1).status_code == 200:
                    break
            except httpx.HTTPError:
                time.sleep(0.3)
        points = timerange.max_points(args.width)
        end = START + pd.Timedelta(days=DAYS)
        begin = end - pd.Timedelta(days=365)
        params = {
            "start": begin.isoformat(),
            "end": end.isoformat(),
            "metrics": "eta_1,flags",
            "max_points": points,
        }
        http = httpx.Client(headers={"Authorization": f"Bearer {key}"}, timeout=60)

        def api() -> None:
            http.get(f"{base}/api/v1/units/{UNIT}/results", params=params).raise_for_status().json()

        client = LostworkClient(base, key, timeout=60)

        async def callback_once() -> None:
            context = await load_context(client, UNIT)
            fetched = await unit_page._fetch(client, context, "eta_1", begin, end, points)
            unit_page.render(context, "eta_1", fetched, prefs.Prefs(), begin, end)

        print("measuring the API ...", flush=True)
        reference = median_time(api, args.repeat)
        print("measuring the callback ...", flush=True)
        callback = median_time(lambda: asyncio.run(callback_once()), args.repeat)
        print("measuring in Chromium ...", flush=True)
        browser = browser_times(base, args.repeat, args.width) if Path(CHROMIUM).exists() else {}
    finally:
        server.terminate()
        server.wait(timeout=15)
    print(f"\nchart width {args.width} px -> max_points {points}; median of {args.repeat}")
    print(f"{'API, year, 2 series (reference)':40s} {reference * 1000:8.0f} ms   1.00")
    print(
        f"{'callback (client + render), year':40s} {callback * 1000:8.0f} ms   "
        f"{callback / reference:5.2f}"
    )
    for preset, label in (
        ("1y", "browser, click to chart, 1 year"),
        ("6h", "browser, click to chart, 6 h"),
    ):
        if preset in browser:
            print(
                f"{label:40s} {browser[preset] * 1000:8.0f} ms   {browser[preset] / reference:5.2f}"
            )
    if not browser:
        print(f"(no {CHROMIUM}: browser figures skipped)")


if __name__ == "__main__":
    main()
