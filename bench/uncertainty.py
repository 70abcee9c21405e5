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


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--rows",
        default="1440,100000",
        help="comma-separated row counts (default: one day of minutes, and 100,000)",
    )
    parser.add_argument("--repeats", type=int, default=2)
    args = parser.parse_args()
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


if __name__ == "__main__":
    main()
