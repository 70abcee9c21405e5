"""Chart query: a year of one-minute results of one unit, downsampled for a chart.

Setup per backend: a scratch database (PostgreSQL: ``lw_bench_<random>`` on the server
of ``LOSTWORK_BENCH_PG_URL``, else ``LOSTWORK_TEST_PG_URL``, else
postgresql+psycopg://postgres@127.0.0.1:5432/test; SQLite: a file in a temporary
folder), migrated with Alembic, one invented plant with one boiler, and 525,600
one-minute intervals x 5 metrics (eta_1, eta_2, lost_work_w, sgen_w_per_k, flags) =
2,628,000 result rows written through the pipeline's own bulk writer, one day per
transaction.

Measured in the same run, median of ``--repeat`` runs after one warm-up:

* ``bare SELECT``: the same rows (the five metrics over the year) fetched by one plain
  SQL statement through the driver — the reference;
* ``bare GROUP BY``: the downsampling SQL alone (one statement, no flags handling, no
  conversion, no JSON) — what the database itself needs;
* ``service``: :func:`api.results.service.query_results` with ``max_points`` 2,000;
* ``HTTP``: ``GET /api/v1/units/{unit}/results?max_points=2000`` on a real ``uvicorn``
  process on 127.0.0.1 (embedded worker off), JSON decoded by the client, keep-alive.

Target: the downsampled query under 300 ms (PostgreSQL). Ratios are to the bare SELECT.

Usage: ``.venv/bin/python bench/query.py [--repeat 7] [--skip-sqlite] [--skip-postgres]``
"""

from __future__ import annotations

import argparse
import os
import secrets
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import httpx
import numpy as np
import pandas as pd
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from api.auth import service as auth_service  # noqa: E402
from api.core import migrate  # noqa: E402
from api.core.db import create_db_engine, make_session_factory  # noqa: E402
from api.plants import service as plant_service  # noqa: E402
from api.results import service as results_service  # noqa: E402
from api.results.store import upsert_results  # noqa: E402

T_START = 1_767_225_600_000  # 2026-01-01T00:00:00Z
MINUTE = 60_000
DAY = 1440
DAYS = 365
METRICS = ("eta_1", "eta_2", "lost_work_w", "sgen_w_per_k", "flags")
MAX_POINTS = 2000
UNIT = "bench-boiler"


def plant_document() -> dict:
    """An invented plant: one boiler on seven tags (the tags get no readings here)."""
    tags = {
        "FUEL": {"unit": "kg/s"},
        "FWF": {"unit": "t/h"},
        "FWP": {"unit": "barg"},
        "FWT": {"unit": "degC"},
        "MSF": {"unit": "t/h"},
        "MSP": {"unit": "barg"},
        "MST": {"unit": "degC"},
    }
    roles = {
        "fuel_mass_flow": "FUEL",
        "feedwater_flow": "FWF",
        "feedwater_pressure": "FWP",
        "feedwater_temperature": "FWT",
        "steam_flow": "MSF",
        "steam_pressure": "MSP",
        "steam_temperature": "MST",
    }
    return {
        "plant": {"slug": "bench-yard", "name": "Bench Yard", "time_zone": "UTC", "interval": 60},
        "fuels": {"gas": {"heating_value": {"hhv": "50 MJ/kg", "lhv": "45 MJ/kg"}}},
        "tags": tags,
        "units": {UNIT: {"name": "Bench boiler", "kind": "boiler", "fuel": "gas", "inputs": roles}},
    }


def day_frame(day: int, rng: np.random.Generator) -> pd.DataFrame:
    t = T_START + (day * DAY + np.arange(DAY)) * MINUTE
    eta_1 = 0.85 + 0.02 * np.sin(np.arange(DAY) / 200.0) + 0.005 * rng.standard_normal(DAY)
    eta_1[rng.random(DAY) < 0.002] = np.nan
    return pd.DataFrame(
        {
            "eta_1": eta_1,
            "eta_2": 0.42 + 0.01 * rng.standard_normal(DAY),
            "lost_work_w": 3.1e7 + 1e6 * rng.standard_normal(DAY),
            "sgen_w_per_k": 1.04e5 + 3e3 * rng.standard_normal(DAY),
            "flags": np.where(rng.random(DAY) < 0.01, 1, 0)
            | np.where(rng.random(DAY) < 0.002, 65536, 0),
        },
        index=pd.Index(t, name="t_ms"),
    )


def load(url: str) -> tuple[int, str, float]:
    """Plant, key and a year of results; returns (unit id, API key, seconds to load)."""
    migrate.upgrade(url)
    engine = create_db_engine(url)
    factory = make_session_factory(engine)
    with factory() as session:
        plant_service.apply_plant(session=session, document=plant_document())
        _, key = auth_service.create_key(session=session, name="bench", scopes=["read"])
        unit_id = session.execute(
            text("SELECT id FROM units WHERE slug = :s"), {"s": UNIT}
        ).scalar_one()
        session.commit()
    rng = np.random.default_rng(2026)
    start = time.perf_counter()
    for day in range(DAYS):
        with factory() as session:
            upsert_results(session, unit_id, day_frame(day, rng))
            session.commit()
    loaded = time.perf_counter() - start
    with engine.connect() as conn:
        if engine.dialect.name == "postgresql":
            conn.execution_options(isolation_level="AUTOCOMMIT").execute(
                text("VACUUM ANALYZE results")
            )
        else:
            conn.execute(text("ANALYZE"))
            conn.commit()
    engine.dispose()
    return unit_id, key, loaded


def timed(fn: Callable[[], object], repeat: int) -> tuple[float, object]:
    out = fn()  # warm-up
    runs = []
    for _ in range(repeat):
        start = time.perf_counter()
        out = fn()
        runs.append(time.perf_counter() - start)
    return statistics.median(runs), out


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start_server(url: str, port: int) -> subprocess.Popen:
    env = dict(
        os.environ,
        LOSTWORK_DATABASE_URL=url,
        LOSTWORK_EMBEDDED_WORKER="false",
        LOSTWORK_LOG_LEVEL="WARNING",
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
        cwd=ROOT,
    )
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        try:
            if httpx.get(f"http://127.0.0.1:{port}/api/v1/health", timeout=1).status_code == 200:
                return server
        except httpx.HTTPError:
            time.sleep(0.2)
    server.terminate()
    raise RuntimeError("the server did not come up within 60 s")


def measure(label: str, url: str, repeat: int) -> dict[str, float]:
    print(f"\n== {label}: loading 525,600 intervals x {len(METRICS)} metrics ...", flush=True)
    unit_id, key, loaded = load(url)
    rows = DAYS * DAY * len(METRICS)
    print(f"   loaded {rows:,} rows in {loaded:.1f} s ({rows / loaded:,.0f} rows/s, bulk writer)")
    engine = create_db_engine(url)
    factory = make_session_factory(engine)
    end_ms = T_START + DAYS * DAY * MINUTE
    params = {"u": unit_id, "s": T_START, "e": end_ms}
    metric_list = ", ".join(f"'{m}'" for m in METRICS)
    bucket = results_service.choose_bucket_ms(T_START, end_ms, MINUTE, MAX_POINTS)
    assert bucket is not None

    def bare_select() -> int:
        with engine.connect() as conn:
            return len(
                conn.execute(
                    text(
                        "SELECT metric, t_ms, value FROM results WHERE unit_id = :u "
                        f"AND metric IN ({metric_list}) AND t_ms >= :s AND t_ms < :e"
                    ),
                    params,
                ).all()
            )

    def bare_group_by() -> int:
        with engine.connect() as conn:
            return len(
                conn.execute(
                    text(
                        "SELECT metric, t_ms / :b AS k, avg(value), min(value), max(value), "
                        "count(value) FROM results WHERE unit_id = :u "
                        f"AND metric IN ({metric_list}) AND t_ms >= :s AND t_ms < :e "
                        "GROUP BY metric, k"
                    ),
                    {**params, "b": bucket},
                ).all()
            )

    def service_call() -> int:
        with factory() as session:
            result = results_service.query_results(
                session=session,
                unit_slug=UNIT,
                start=pd.Timestamp(T_START, unit="ms", tz="UTC").to_pydatetime(),
                end=pd.Timestamp(end_ms, unit="ms", tz="UTC").to_pydatetime(),
                metrics=list(METRICS),
                max_points=MAX_POINTS,
            )
        return sum(len(s.t_ms) for s in result.series)

    t_select, n_select = timed(bare_select, repeat)
    t_group, n_group = timed(bare_group_by, repeat)
    t_service, n_service = timed(service_call, repeat)

    port = free_port()
    server = start_server(url, port)
    try:
        client = httpx.Client(
            base_url=f"http://127.0.0.1:{port}",
            headers={"Authorization": f"Bearer {key}"},
            timeout=60,
        )
        query = {
            "start": "2026-01-01T00:00:00Z",
            "end": pd.Timestamp(end_ms, unit="ms", tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ"),
            "metrics": ",".join(METRICS),
            "max_points": MAX_POINTS,
        }

        def http_call() -> int:
            response = client.get(f"/api/v1/units/{UNIT}/results", params=query)
            response.raise_for_status()
            return sum(len(s["t"]) for s in response.json()["series"])

        t_http, n_http = timed(http_call, repeat)
        client.close()
    finally:
        server.terminate()
        server.wait(30)
    engine.dispose()

    print(f"   bucket {bucket // 1000} s; points per series <= {MAX_POINTS}")
    print(f"   {'query':<34}{'median ms':>10}{'rows/points':>14}{'ratio':>8}")
    for name, seconds, count in (
        ("bare SELECT of the same rows", t_select, n_select),
        ("bare GROUP BY (SQL only)", t_group, n_group),
        ("service query_results()", t_service, n_service),
        ("HTTP GET .../results (JSON)", t_http, n_http),
    ):
        print(f"   {name:<34}{seconds * 1000:>10.1f}{count:>14,}{seconds / t_select:>8.2f}")
    return {"select": t_select, "group": t_group, "service": t_service, "http": t_http}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=7)
    parser.add_argument("--skip-sqlite", action="store_true")
    parser.add_argument("--skip-postgres", action="store_true")
    args = parser.parse_args()
    figures: dict[str, dict[str, float]] = {}
    print(f"machine: {os.cpu_count()} cores, load average (1, 5, 15 min) {os.getloadavg()}")
    if not args.skip_postgres:
        base = (
            os.environ.get("LOSTWORK_BENCH_PG_URL")
            or os.environ.get("LOSTWORK_TEST_PG_URL")
            or "postgresql+psycopg://postgres@127.0.0.1:5432/test"
        )
        name = f"lw_bench_{secrets.token_hex(4)}"
        admin = create_engine(make_url(base), isolation_level="AUTOCOMMIT")
        with admin.connect() as conn:
            conn.execute(text(f'CREATE DATABASE "{name}"'))
        try:
            url = make_url(base).set(database=name).render_as_string(hide_password=False)
            figures["PostgreSQL"] = measure(f"PostgreSQL ({name})", url, args.repeat)
        finally:
            with admin.connect() as conn:
                conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
            admin.dispose()
    if not args.skip_sqlite:
        with tempfile.TemporaryDirectory() as folder:
            url = f"sqlite:///{Path(folder) / 'bench.db'}"
            figures["SQLite"] = measure("SQLite (temporary file)", url, args.repeat)
    print(f"\n== machine load average at the end (1, 5, 15 min): {os.getloadavg()}")
    print("== summary (target: downsampled chart query < 300 ms)")
    for backend, f in figures.items():
        verdict = "meets" if f["http"] < 0.3 else "misses"
        print(
            f"   {backend:<11} service {f['service'] * 1000:7.1f} ms, HTTP {f['http'] * 1000:7.1f} ms "
            f"({f['http'] / f['select']:.2f} x bare SELECT of the rows): {verdict} the target"
        )


if __name__ == "__main__":
    main()
