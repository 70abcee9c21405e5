"""Uncertainty benchmark: cost of results with uncertainty relative to results alone.

Run ``python bench/uncertainty.py [--rows N,M,...] [--repeats R]`` (default 1,440 rows --
one day of one-minute intervals, a typical batch of the pipeline -- and 100,000 rows; best
of 2 interleaved runs). Not a test: it prints timings and ratios against a reference
measured in the same run, by CPU time of the process (robust on a shared machine) and by
wall time.

- reference: one call of the unit kind's model (``boiler``, ``steam_turbine``) on N rows
  of synthetic readings of a fictional unit of our own demo plant, timed as the mean of
  as many back-to-back calls as the propagation makes.
- measured: :func:`engine.uncertainty.propagate` on the same rows with every role
  uncertain (the instrument defaults of :data:`engine.uncertainty.INSTRUMENT_DEFAULTS`,
  plus the fuel heating value for the boiler), followed by ``Propagation.table()``.
- target: ratio <= number of uncertain inputs + 1 (one nominal evaluation plus one per
  uncertain input; the issue's target). That is exactly the number of model evaluations
  the method makes, so the target leaves no room for the propagation's own work
  (perturbed input frames, the sensitivity arrays, the table). That work is measured on
  its own, with a stand-in model that returns the nominal output at no cost, and printed
  in plain evaluations: ratio ~= evaluations + own work.

Pipeline chunk (``--chunk``, on by default; ``--no-chunk`` skips it): one day of a
fictional boiler and back-pressure turbine of our own, readings every 10 s, 60 s
intervals (1,440 rows), stored in a scratch SQLite file (``--pg``: a scratch database on
the server of ``LOSTWORK_BENCH_PG_URL``, else ``LOSTWORK_TEST_PG_URL``, else
postgresql+psycopg://postgres@127.0.0.1:5432/test). Per unit, interleaved, best of the
repeats:

- compute: :func:`api.pipeline.compute.compute_range` with ``uncertainty=False`` (the bare
  model) and ``True`` (bands and judged flags);
- chunk: compute, write the results and rollups (:func:`api.results.store.replace_results`)
  and run the after-compute stages, as the worker's chunk transaction does, rolled back.
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from engine.catalogue import ModelContext, UnitKind, get_kind  # noqa: E402
from engine.deadstate import dead_state  # noqa: E402
from engine.fuels import FuelProperties  # noqa: E402
from engine.uncertainty import input_uncertainties, propagate  # noqa: E402

# A fictional gas of our own, natural-gas-like values.
GAS = FuelProperties("bench gas", hhv_j_per_kg=52.5e6, lhv_j_per_kg=47.4e6, density_kg_per_m3=0.78)

# Nominal readings of a fictional drum boiler and condensing turbine (our own demo unit),
# varied per row by a few percent so that every row takes its own property evaluation.
BOILER = {
    "fuel_mass_flow": 2.3,
    "feedwater_flow": 40.0,
    "feedwater_pressure": 12e6,
    "feedwater_temperature": 493.15,
    "steam_flow": 40.0,
    "steam_pressure": 10e6,
    "steam_temperature": 783.15,
}
TURBINE = {
    "inlet_flow": 100.0,
    "inlet_pressure": 10e6,
    "inlet_temperature": 773.15,
    "extraction1_flow": 12.0,
    "extraction1_pressure": 1e6,
    "extraction1_temperature": 493.15,
    "exhaust_pressure": 10e3,
    "generator_power": 100e6,
}


def _rows(nominal: dict[str, float], n: int, seed: int) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    load = 1.0 + 0.03 * rng.standard_normal(n)  # flows and output follow the load together
    columns = {}
    for name, value in nominal.items():
        if name.endswith("temperature"):
            columns[name] = value + 2.0 * rng.standard_normal(n)
        elif name.endswith("flow") or name.endswith("power"):
            columns[name] = value * load
        else:
            columns[name] = value * (1.0 + 0.01 * rng.standard_normal(n))
    return pd.DataFrame(columns, index=pd.RangeIndex(n))


def _timed(function) -> tuple[float, float]:
    """(CPU seconds of this process, wall seconds) of one call."""
    cpu, wall = time.process_time(), time.perf_counter()
    function()
    return time.process_time() - cpu, time.perf_counter() - wall


def _case(kind: UnitKind, inputs: pd.DataFrame, context: ModelContext, repeats: int) -> None:
    uncertainties = input_uncertainties(inputs, {}, kind=kind, fuel=context.fuel)
    n_inputs = len(uncertainties)
    nominal = kind.model(inputs, {}, context)
    # A stand-in that returns the nominal output at no cost: what remains is the
    # propagation's own work (frames, sensitivities, the table).
    free_kind = replace(kind, model=lambda *_: nominal.copy(deep=False))

    def plain() -> None:
        # As many plain evaluations as the propagation makes, so that both sides run
        # over the same stretch of time on a shared machine; reported per evaluation.
        for _ in range(n_inputs + 1):
            kind.model(inputs, {}, context)

    def with_uncertainty() -> None:
        propagate(kind, inputs, {}, context, uncertainties).table()

    def overhead_only() -> None:
        propagate(free_kind, inputs, {}, context, uncertainties).table()

    best = {"plain": [math.inf, math.inf], "full": [math.inf, math.inf], "own": [math.inf] * 2}
    for _ in range(repeats):  # interleaved, best of each
        for key, function, per in (
            ("plain", plain, n_inputs + 1),
            ("full", with_uncertainty, 1),
            ("own", overhead_only, 1),
        ):
            cpu, wall = _timed(function)
            best[key] = [min(best[key][0], cpu / per), min(best[key][1], wall / per)]
    target = n_inputs + 1
    for col, label in ((0, "CPU "), (1, "wall")):
        base, full, own = best["plain"][col], best["full"][col], best["own"][col]
        ratio = full / base
        verdict = "meets" if ratio <= target else "MISSES"
        print(
            f"{kind.name:>14} {label}: {len(inputs):,} rows, {n_inputs} uncertain inputs | "
            f"plain {base:7.3f} s | with uncertainty {full:7.3f} s | "
            f"ratio {ratio:5.2f} (target <= {target}) {verdict} | "
            f"propagation's own work {own / base:4.2f} plain evaluations"
        )


# --- one pipeline chunk ---------------------------------------------------------------

CHUNK_PLANT = {
    "format": "lostwork-plant/1",
    "plant": {
        "slug": "bench-works",
        "name": "Bench Works (fictional)",
        "time_zone": "Europe/Berlin",
        "interval": "1 min",
        "atmosphere": "100 kPa",
    },
    "fuels": {"gas": {"heating_value": {"hhv": "52.5 MJ/kg", "lhv": "47.4 MJ/kg",
                                        "density": "0.78 kg/m3"}}},
    "tags": {
        "B.gas": {"unit": "Nm3/h", "low": 0, "high": 12000},
        "B.fw.flow": {"unit": "t/h", "low": 0, "high": 160, "uncertainty": "1% of reading"},
        "B.fw.p": {"unit": "barg", "low": 0, "high": 160, "uncertainty": "0.25% of span"},
        "B.fw.t": {"unit": "degC", "low": 0, "high": 300, "uncertainty": 0.5},
        "B.st.flow": {"unit": "t/h", "low": 0, "high": 160},
        "B.st.p": {"unit": "barg", "low": 0, "high": 140},
        "B.st.t": {"unit": "degC", "low": 0, "high": 560},
        "T.in.flow": {"unit": "t/h", "low": 0, "high": 160},
        "T.in.p": {"unit": "barg", "low": 0, "high": 140},
        "T.in.t": {"unit": "degC", "low": 0, "high": 560},
        "T.x1.flow": {"unit": "t/h", "low": 0, "high": 60},
        "T.x1.p": {"unit": "barg", "low": 0, "high": 30},
        "T.x1.t": {"unit": "degC", "low": 0, "high": 400},
        "T.ex.p": {"unit": "barg", "low": 0, "high": 10},
        "T.gen": {"unit": "MW", "low": 0, "high": 40},
    },
    "units": {
        "boiler": {"name": "Boiler", "kind": "boiler", "fuel": "gas", "inputs": {
            "fuel_volume_flow": "B.gas", "feedwater_flow": "B.fw.flow",
            "feedwater_pressure": "B.fw.p", "feedwater_temperature": "B.fw.t",
            "steam_flow": "B.st.flow", "steam_pressure": "B.st.p",
            "steam_temperature": "B.st.t"}},
        "turbine": {"name": "Turbine", "kind": "steam_turbine", "inputs": {
            "inlet_flow": "T.in.flow", "inlet_pressure": "T.in.p",
            "inlet_temperature": "T.in.t", "extraction1_flow": "T.x1.flow",
            "extraction1_pressure": "T.x1.p", "extraction1_temperature": "T.x1.t",
            "exhaust_pressure": "T.ex.p", "generator_power": "T.gen"}},
    },
}  # fmt: skip
"""A fictional boiler feeding a back-pressure turbine with one extraction."""

CHUNK_NOMINAL = {
    "B.gas": 9000.0, "B.fw.flow": 144.0, "B.fw.p": 120.0, "B.fw.t": 220.0,
    "B.st.flow": 144.0, "B.st.p": 100.0, "B.st.t": 510.0,
    "T.in.flow": 144.0, "T.in.p": 98.0, "T.in.t": 505.0, "T.x1.flow": 40.0,
    "T.x1.p": 15.0, "T.x1.t": 290.0, "T.ex.p": 3.0, "T.gen": 28.0,
}  # fmt: skip
"""Operating point in each tag's unit (invented numbers, a plausible heat balance)."""


def _day_of_readings(session, start_ms: int) -> int:
    """Store a day of readings every 10 s around the nominal point; returns their count."""
    from api.readings.schemas import ColumnarBatch
    from api.readings.service import ingest_columnar

    rng = np.random.default_rng(5)
    times = start_ms + 10_000 * np.arange(8640)
    load = 1.0 + 0.05 * np.sin(2 * np.pi * np.arange(8640) / 8640)  # a day's swing
    stored = 0
    for lo in range(0, 8640, 720):  # two hours per call, under the batch limit
        part = slice(lo, lo + 720)
        series = {}
        for tag, value in CHUNK_NOMINAL.items():
            scaled = value * load[part] if tag.endswith(("flow", "gas", "gen")) else value
            series[tag] = (scaled * (1 + 0.003 * rng.standard_normal(720))).tolist()
        batch = ColumnarBatch(plant="bench-works", times=times[part].tolist(), series=series)
        stored += ingest_columnar(session=session, batch=batch).stored
    return stored


def _scratch_url(pg: bool, folder: str) -> tuple[str, object]:
    if not pg:
        return f"sqlite:///{folder}/bench.db", None
    import os
    import secrets

    from sqlalchemy import create_engine, text
    from sqlalchemy.engine import make_url

    base = os.environ.get("LOSTWORK_BENCH_PG_URL") or os.environ.get(
        "LOSTWORK_TEST_PG_URL", "postgresql+psycopg://postgres@127.0.0.1:5432/test"
    )
    name = f"lw_bench_{secrets.token_hex(4)}"
    admin = create_engine(make_url(base), isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))

    def drop() -> None:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()

    return make_url(base).set(database=name).render_as_string(hide_password=False), drop


def _time_unit(factory, slug: str, start: int, end: int, repeats: int) -> None:
    """Print compute and whole-chunk times of one unit with and without uncertainty."""
    from sqlalchemy import select

    from api.pipeline import worker
    from api.pipeline.compute import compute_range
    from api.plants import service as plants
    from api.plants.models import Unit
    from api.results.metrics import registered_metrics
    from api.results.store import replace_results

    with factory() as session:
        unit_id = session.scalar(select(Unit.id).where(Unit.slug == slug))
        config = plants.load_unit_config(session=session, unit_id=unit_id)
    keep = registered_metrics(config.kind)

    def compute(flag: bool):
        with factory() as session:
            return compute_range(session, config, start, end, uncertainty=flag)

    def chunk(flag: bool) -> int:
        # The worker's chunk transaction (without the queue bookkeeping), rolled back so
        # that every run starts from the same database.
        with factory() as session:
            frame = compute_range(session, config, start, end, uncertainty=flag)
            replace_results(session, unit_id, start, end, frame, keep=keep - set(frame.columns))
            for hook in worker._after_compute:
                hook(session, unit_id, start, end)
            session.rollback()
            return frame.shape[0] * frame.shape[1]

    best = {key: [math.inf, math.inf] for key in ("c0", "c1", "w0", "w1")}
    cells: dict = {}
    for _ in range(repeats):
        for key, function, flag in (
            ("c0", compute, False),
            ("c1", compute, True),
            ("w0", chunk, False),
            ("w1", chunk, True),
        ):
            cpu, wall = time.process_time(), time.perf_counter()
            cells[key] = function(flag)
            cpu, wall = time.process_time() - cpu, time.perf_counter() - wall
            best[key] = [min(best[key][0], cpu), min(best[key][1], wall)]
    frame = cells["c1"]
    bands = [c for c in frame.columns if c.startswith("u95_")]
    print(
        f"{config.kind:>14}: {len(frame):,} rows, bands on {len(bands)} results, "
        f"values written {cells['w0']:,} -> {cells['w1']:,}"
    )
    for label, a, b in (("compute", "c0", "c1"), ("chunk  ", "w0", "w1")):
        print(
            f"{'':16}{label} without {best[a][0]:6.2f} s cpu ({best[a][1]:6.2f} wall)"
            f" | with {best[b][0]:6.2f} s cpu ({best[b][1]:6.2f} wall)"
            f" | ratio {best[b][0] / best[a][0]:5.2f} cpu, {best[b][1] / best[a][1]:5.2f} wall"
        )


def chunk_bench(repeats: int, pg: bool) -> None:
    """Compute time of a one-day chunk with and without uncertainty (see module notes)."""
    import tempfile

    from api.core import migrate
    from api.core.db import create_db_engine, make_session_factory
    from api.plants import service as plants

    start = 1_767_225_600_000  # 2026-01-01T00:00Z
    end = start + 86_400_000
    with tempfile.TemporaryDirectory() as folder:
        url, drop = _scratch_url(pg, folder)
        try:
            migrate.upgrade(url)
            engine = create_db_engine(url)
            factory = make_session_factory(engine)
            with factory() as session:
                plants.apply_plant(session=session, document=CHUNK_PLANT, default_interval_s=60)
                stored = _day_of_readings(session, start)
                session.commit()
            backend = "PostgreSQL" if pg else "SQLite"
            print(f"pipeline chunk: one day, {stored:,} readings every 10 s, 60 s intervals, "
                  f"{backend}; best of {repeats} interleaved runs")  # fmt: skip
            for slug in ("boiler", "turbine"):
                _time_unit(factory, slug, start, end, repeats)
            engine.dispose()
        finally:
            if drop is not None:
                drop()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--rows",
        default="1440,100000",
        help="comma-separated row counts (default: one day of minutes, and 100,000)",
    )
    parser.add_argument("--repeats", type=int, default=2)
    parser.add_argument(
        "--chunk",
        action=argparse.BooleanOptionalAction,
        default=True,
        help="also time one pipeline chunk with and without uncertainty",
    )
    parser.add_argument(
        "--pg", action="store_true", help="the pipeline chunk on PostgreSQL instead of SQLite"
    )
    parser.add_argument("--chunk-only", action="store_true", help="only the pipeline chunk")
    args = parser.parse_args()
    if args.chunk_only:
        chunk_bench(args.repeats, args.pg)
        return
    print(
        f"uncertainty bench: best of {args.repeats} interleaved runs; ratio = with / without "
        "uncertainty, measured in the same run (CPU time of this process is the figure "
        "to read on a shared machine; wall time for information)"
    )
    for rows in (int(text) for text in args.rows.split(",")):
        _case(
            get_kind("boiler"),
            _rows(BOILER, rows, seed=1),
            ModelContext(dead_state(), GAS),
            args.repeats,
        )
        _case(
            get_kind("steam_turbine"),
            _rows(TURBINE, rows, seed=2),
            ModelContext(dead_state()),
            args.repeats,
        )
    if args.chunk:
        chunk_bench(args.repeats, args.pg)


if __name__ == "__main__":
    main()
