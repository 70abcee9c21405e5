"""Ingest throughput: readings per second through the REST API into PostgreSQL.

Setup: a scratch database ``lw_bench_<random>`` on the PostgreSQL server of
``LOSTWORK_BENCH_PG_URL`` (else ``LOSTWORK_TEST_PG_URL``, else
postgresql+psycopg://postgres@127.0.0.1:5432/test), migrated with Alembic, holding a
plant of 100 tags in mixed units (t/h, barg, degC, kW, kg/s) and a boiler bound to 7 of
them, so every batch converts units and queues dirty spans like production ingest.

The server is a real ``uvicorn`` process on 127.0.0.1 (one worker, embedded compute
worker off: this measures ingest, not compute). The client sends pre-encoded JSON
bodies over HTTP/1.1 keep-alive, one request at a time, batches of 10,000 readings:

* ``columnar``: 100 tags x 100 shared epoch-ms times per call;
* ``rows``: 10,000 {tag, time (RFC 3339), value} items per call.

Reference, measured in the same run on the same server: the same rows (tag_id, t_ms,
value, already in SI) sent by psycopg binary ``COPY`` into a table with the same
primary key, 10,000 rows and one commit per batch. Targets: >= 100,000 readings/s and
>= 1/4 of the raw COPY rate.

Usage: ``.venv/bin/python bench/ingest.py [--batches 30]``
"""

from __future__ import annotations

import argparse
import json
import os
import secrets
import socket
import subprocess
import sys
import time
from pathlib import Path

import httpx
import numpy as np
import psycopg
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from api.auth import service as auth_service  # noqa: E402
from api.core import migrate  # noqa: E402
from api.core.db import create_db_engine, make_session_factory  # noqa: E402
from api.plants import service as plant_service  # noqa: E402

BATCH = 10_000
N_TAGS = 100
UNITS = ("t/h", "barg", "degC", "kW", "kg/s")
BOILER_ROLES = {
    "fuel_mass_flow": 4,  # kg/s
    "feedwater_flow": 0,  # t/h
    "feedwater_pressure": 1,  # barg
    "feedwater_temperature": 2,  # degC
    "steam_flow": 5,  # t/h
    "steam_pressure": 6,  # barg
    "steam_temperature": 7,  # degC
}
T_START = 1_767_225_600_000  # 2026-01-01T00:00:00Z


def tag_name(i: int) -> str:
    return f"B{i:03d}"


def plant_document() -> dict:
    tags = {
        tag_name(i): {"unit": UNITS[i % len(UNITS)], "low": -1e9, "high": 1e9}
        for i in range(N_TAGS)
    }
    return {
        "plant": {"slug": "bench-site", "name": "Bench Site", "time_zone": "UTC", "interval": 60},
        "fuels": {"gas": {"heating_value": {"hhv": "50 MJ/kg"}}},
        "tags": tags,
        "units": {
            "bench-boiler": {
                "name": "Bench boiler",
                "kind": "boiler",
                "fuel": "gas",
                "inputs": {role: tag_name(i) for role, i in BOILER_ROLES.items()},
            }
        },
    }


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def columnar_bodies(batches: int, first_batch: int) -> list[bytes]:
    rng = np.random.default_rng(1)
    times_per = BATCH // N_TAGS
    bodies = []
    for b in range(first_batch, first_batch + batches):
        times = (T_START + (b * times_per + np.arange(times_per)) * 1000).tolist()
        series = {
            tag_name(i): (50 + rng.random(times_per)).round(6).tolist() for i in range(N_TAGS)
        }
        bodies.append(
            json.dumps({"plant": "bench-site", "times": times, "series": series}).encode()
        )
    return bodies


def row_bodies(batches: int, first_batch: int) -> list[bytes]:
    rng = np.random.default_rng(2)
    times_per = BATCH // N_TAGS
    bodies = []
    for b in range(first_batch, first_batch + batches):
        items = []
        for k in range(times_per):
            t_ms = T_START + (b * times_per + k) * 1000
            stamp = time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(t_ms / 1000)) + "Z"
            values = (50 + rng.random(N_TAGS)).round(6)
            items += [
                {"tag": tag_name(i), "time": stamp, "value": float(values[i])}
                for i in range(N_TAGS)
            ]
        bodies.append(json.dumps({"plant": "bench-site", "readings": items}).encode())
    return bodies


def post_all(
    client: httpx.Client, path: str, bodies: list[bytes], headers: dict
) -> tuple[float, int]:
    stored = 0
    start = time.perf_counter()
    for body in bodies:
        response = client.post(path, content=body, headers=headers)
        response.raise_for_status()
        report = response.json()
        assert report["rejected"] == 0, report["errors"][:3]
        stored += report["stored"] + report["replaced"]
    return time.perf_counter() - start, stored


def copy_reference(dsn: str, batches: int, tag_ids: list[int]) -> tuple[float, float]:
    """Seconds for psycopg binary COPY of ``batches`` x 10,000 rows: (write_row, buffer)."""
    from api.readings.store import _pgcopy_buffer

    times_per = BATCH // N_TAGS
    ids = np.repeat(np.asarray(tag_ids, dtype=np.int32), times_per)
    results = []
    with psycopg.connect(dsn) as conn:
        for table, mode in (("copy_ref_rows", "write_row"), ("copy_ref_buffer", "buffer")):
            conn.execute(f"CREATE TABLE {table} (LIKE readings INCLUDING ALL)")
            conn.commit()
            elapsed = 0.0
            for b in range(batches):
                t_ms = np.tile(T_START + (b * times_per + np.arange(times_per)) * 1000, N_TAGS)
                values = 50 + np.random.default_rng(b).random(BATCH)
                start = time.perf_counter()
                with (
                    conn.cursor() as cur,
                    cur.copy(
                        f"COPY {table} (tag_id, t_ms, value) FROM STDIN (FORMAT BINARY)"
                    ) as copy,
                ):
                    if mode == "write_row":
                        copy.set_types(["int4", "int8", "float8"])
                        for row in zip(ids.tolist(), t_ms.tolist(), values.tolist(), strict=True):
                            copy.write_row(row)
                    else:
                        copy.write(_pgcopy_buffer(ids, t_ms.astype(np.int64), values))
                conn.commit()
                elapsed += time.perf_counter() - start
            results.append(elapsed)
    return results[0], results[1]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--batches", type=int, default=30, help="batches of 10,000 per form")
    args = parser.parse_args()
    base = (
        os.environ.get("LOSTWORK_BENCH_PG_URL")
        or os.environ.get("LOSTWORK_TEST_PG_URL")
        or "postgresql+psycopg://postgres@127.0.0.1:5432/test"
    )
    name = f"lw_bench_{secrets.token_hex(4)}"
    admin = create_engine(make_url(base), isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    url = make_url(base).set(database=name).render_as_string(hide_password=False)
    server = None
    try:
        migrate.upgrade(url)
        engine = create_db_engine(url)
        factory = make_session_factory(engine)
        with factory() as session:
            plant_service.apply_plant(session=session, document=plant_document())
            _, key = auth_service.create_key(session=session, name="bench", scopes=["ingest"])
            tag_ids = [
                session.execute(
                    text("SELECT id FROM tags WHERE name = :n"), {"n": tag_name(i)}
                ).scalar_one()
                for i in range(N_TAGS)
            ]
        engine.dispose()

        port = free_port()
        env = {
            **os.environ,
            "LOSTWORK_DATABASE_URL": url,
            "LOSTWORK_EMBEDDED_WORKER": "false",
            "LOSTWORK_LOG_LEVEL": "WARNING",
        }
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
            cwd=ROOT,
            env=env,
        )
        base_url = f"http://127.0.0.1:{port}"
        headers = {"Authorization": f"Bearer {key}", "Content-Type": "application/json"}
        with httpx.Client(base_url=base_url, timeout=60) as client:
            for _ in range(600):
                try:
                    if client.get("/api/v1/health").status_code == 200:
                        break
                except httpx.TransportError:
                    time.sleep(0.1)
            else:
                raise SystemExit("server did not start")
            print(f"preparing {args.batches} x {BATCH:,} readings per form ...", flush=True)
            warm = columnar_bodies(2, first_batch=10_000)
            post_all(client, "/api/v1/readings/columnar", warm, headers)  # warm-up, not timed
            col = columnar_bodies(args.batches, first_batch=0)
            rows = row_bodies(args.batches, first_batch=args.batches)
            resend = col[: max(1, args.batches // 3)]
            t_col, n_col = post_all(client, "/api/v1/readings/columnar", col, headers)
            t_rows, n_rows = post_all(client, "/api/v1/readings", rows, headers)
            t_same, _ = post_all(client, "/api/v1/readings/columnar", resend, headers)
        n = args.batches * BATCH
        assert n_col == n and n_rows == n, (n_col, n_rows)
        t_copy_rows, t_copy_buf = copy_reference(url.replace("+psycopg", ""), args.batches, tag_ids)

        rate = {
            "REST columnar (new readings)": n / t_col,
            "REST rows, RFC 3339 times (new readings)": n / t_rows,
            "REST columnar, same batch re-sent": len(resend) * BATCH / t_same,
            "raw COPY, psycopg write_row": n / t_copy_rows,
            "raw COPY, prebuilt binary buffer": n / t_copy_buf,
        }
        copy_ref = max(
            rate["raw COPY, psycopg write_row"], rate["raw COPY, prebuilt binary buffer"]
        )
        print(f"\n{n:,} readings per form, batches of {BATCH:,}, PostgreSQL, uvicorn on 127.0.0.1")
        for label, value in rate.items():
            print(f"  {label:42s} {value:>12,.0f} readings/s   {value / copy_ref:6.2f} x raw COPY")
        for label in ("REST columnar (new readings)", "REST rows, RFC 3339 times (new readings)"):
            print(
                f"  {label}: {rate[label] / 100_000:.2f} x the 100,000/s target; "
                f"{rate[label] / copy_ref:.2f} of the fastest raw COPY (target 0.25)"
            )
    finally:
        if server is not None:
            server.terminate()
            server.wait(timeout=30)
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


if __name__ == "__main__":
    main()
