"""The demo's history: simulate, store and compute ``--days`` of the demo plant.

What ``lostwork demo`` spends its time on before it serves, phase by phase, on a scratch
SQLite file (the embedded default) or on PostgreSQL (``--pg``: a scratch database
``lw_bench_<random>`` on the server of ``LOSTWORK_BENCH_PG_URL``, else
``LOSTWORK_TEST_PG_URL``, else postgresql+psycopg://postgres@127.0.0.1:5432/test):

* simulate: the readings of every tag at every 5-minute instant (api.demo.simulator);
* store: the ingest service in-process, as the demo does (api.demo.sinks.ServiceSink);
* compute: the pipeline worker until the queue is empty (no baselines: the demo's
  second pass adds the baselines stage on top).

Reference, measured in the same run: the bare engine, i.e. each unit's model called
once on all its intervals (the same inputs the pipeline averages, already in SI). The
ratio compute / engine shows how much of the compute phase is the service around the
engine (reading, averaging, writing results and rollups, alert rules). CPU time of this
process is printed beside wall time: on a shared machine the wall time also holds
other people's load.

Usage: ``.venv/bin/python bench/demo.py [--days 60] [--pg]``
"""

from __future__ import annotations

import argparse
import os
import secrets
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from api import measure  # noqa: E402
from api.core import migrate  # noqa: E402
from api.core.db import create_db_engine, make_session_factory  # noqa: E402
from api.demo import PLANT_FILE, PLANT_SLUG  # noqa: E402
from api.demo.faults import default_schedule  # noqa: E402
from api.demo.simulator import Simulator, aligned_start  # noqa: E402
from api.demo.sinks import ServiceSink  # noqa: E402
from api.pipeline import worker  # noqa: E402
from api.plants import service as plants  # noqa: E402
from api.plants.fileformat import PlantFile, load_yaml  # noqa: E402
from engine.catalogue import ModelContext, get_kind  # noqa: E402
from engine.deadstate import dead_state  # noqa: E402


class Clock:
    def __init__(self) -> None:
        self.wall, self.cpu = time.perf_counter(), time.process_time()

    def lap(self) -> tuple[float, float]:
        wall, cpu = time.perf_counter(), time.process_time()
        out = (wall - self.wall, cpu - self.cpu)
        self.wall, self.cpu = wall, cpu
        return out


def bare_engine(sim: Simulator, readings: pd.DataFrame) -> float:
    """Seconds of CPU for every unit model over all instants (inputs in SI)."""
    document = PlantFile.model_validate(load_yaml(PLANT_FILE.read_text(encoding="utf-8")))
    t0 = readings["SITE.amb.temp"].to_numpy() + 273.15
    dead = dead_state(np.where(np.isfinite(t0), t0, 288.15), sim.atmosphere_pa)
    frames = []
    for slug, unit in document.units.items():
        kind = get_kind(unit.kind)
        columns = {}
        for role, tag in unit.inputs.items():
            spec = sim.tags[tag]
            columns[role] = np.asarray(
                measure.to_si(
                    readings[tag].to_numpy(), spec.unit, kind.role(role).unit, sim.atmosphere_pa
                )
            )
        fuel = sim.fuels.get(unit.fuel) if unit.fuel else None
        frames.append((kind, pd.DataFrame(columns), sim.parameters[slug], fuel))
    began = time.process_time()
    for kind, inputs, params, fuel in frames:
        kind.model(inputs, params, ModelContext(dead, fuel))
    return time.process_time() - began


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--days", type=float, default=60.0)
    parser.add_argument("--pg", action="store_true", help="PostgreSQL instead of SQLite")
    args = parser.parse_args()

    drop = None
    scratch = tempfile.TemporaryDirectory()
    if args.pg:
        base = make_url(
            os.environ.get("LOSTWORK_BENCH_PG_URL")
            or os.environ.get("LOSTWORK_TEST_PG_URL")
            or "postgresql+psycopg://postgres@127.0.0.1:5432/test"
        )
        name = f"lw_bench_{secrets.token_hex(4)}"
        admin = create_engine(base, isolation_level="AUTOCOMMIT")
        with admin.connect() as conn:
            conn.execute(text(f'CREATE DATABASE "{name}"'))

        def drop() -> None:
            with admin.connect() as conn:
                conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
            admin.dispose()

        url = base.set(database=name).render_as_string(hide_password=False)
    else:
        url = f"sqlite:///{Path(scratch.name) / 'demo.db'}"
    try:
        migrate.upgrade(url)
        engine = create_db_engine(url)
        factory = make_session_factory(engine)
        with factory() as session:
            plants.apply_plant(
                session=session,
                document=load_yaml(PLANT_FILE.read_text(encoding="utf-8")),
                default_interval_s=60,
            )
        now = int(time.time() * 1000)
        start = aligned_start(now, args.days, 300)
        end = start + int(args.days * 86_400_000)
        sim = Simulator(start_ms=start, faults=default_schedule(args.days))
        clock = Clock()
        readings = sim.generate(sim.times(start, end)).readings
        simulate = clock.lap()
        totals = ServiceSink(factory, PLANT_SLUG).send(readings)
        store = clock.lap()
        chunks = 0

        def count(*_: object) -> None:
            nonlocal chunks
            chunks += 1

        worker.run_once(factory, after_chunk=count)
        compute = clock.lap()
        engine_cpu = bare_engine(sim, readings)
        engine.dispose()
    finally:
        if drop is not None:
            drop()
        scratch.cleanup()

    backend = "PostgreSQL" if args.pg else "SQLite"
    print(f"demo history: {args.days:g} days, {len(readings):,} instants, {backend}")
    print(f"{'phase':10} {'wall s':>8} {'cpu s':>8}")
    for label, (wall, cpu) in (("simulate", simulate), ("store", store), ("compute", compute)):
        print(f"{label:10} {wall:8.1f} {cpu:8.1f}")
    print(f"store: {totals.received:,} readings, {totals.received / store[0]:,.0f} readings/s")
    print(f"compute: {chunks} unit-day chunks")
    print(f"bare engine, all units once (reference): {engine_cpu:.1f} s cpu")
    print(f"ratio compute cpu / bare engine cpu: {compute[1] / engine_cpu:.1f}")


if __name__ == "__main__":
    main()
