"""Engine benchmark: a year of one-minute intervals through a boiler and a steam turbine.

Run ``python bench/engine.py [--rows N]`` (default 525,600 = 365 days x 1,440 minutes).
Not a test: it prints timings and two ratios against references measured in the same run.
Times are CPU seconds of this process (``time.process_time``); CoolProp and the models
run on one core.

- model: the ``boiler`` and ``steam_turbine`` kinds' model functions, taken from the
  unit-kind catalogue, on synthetic readings of a fictional reheat drum unit ("Unit 3"
  of our own demo plant); the inputs are built from each kind's declared roles.
- (a) bare IF97 calls: the CoolProp ``PropsSI`` array calls the models make through
  ``engine.steam._props`` are recorded on a sample of rows (output, input pair, input
  values, size); then the same calls are made directly, scaled to the full row count.
  This is the floor for any vectorised implementation on CoolProp's IF97 backend.
  Target: model time / (a) <= 2.
- (b) naive per-row loop: the recorded calls replayed one row at a time as scalar
  ``PropsSI`` calls on CoolProp's default backend for 'Water' (HEOS, IAPWS-95), over a
  sample of rows, extrapolated. Target: (b) / model time >= 100.
- (b') a stricter naive reference: one scalar HEOS call per row and per property the
  models ask of engine.steam (what a straightforward per-row implementation would
  call, without the extra evaluations IF97's inverse routes need).
- full boiler: the ``boiler`` kind with its flue-gas roles bound as well (heat-loss
  method, direct-indirect difference and exergy split) on the same unit burning a gas
  of stated composition, against (a_b) the bare IF97 calls that run itself makes,
  recorded and timed the same way. Target: full boiler / (a_b) <= 3.
"""

from __future__ import annotations

import argparse
import contextlib
import cProfile
import io
import math
import os
import platform
import pstats
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import CoolProp  # noqa: E402  (the bench measures CoolProp directly, as its reference)
from CoolProp.CoolProp import PropsSI  # noqa: E402

from engine import heatloss, steam  # noqa: E402
from engine.catalogue import ModelContext, UnitKind, get_kind  # noqa: E402
from engine.deadstate import dead_state  # noqa: E402
from engine.fuels import FuelProperties  # noqa: E402

ROWS_PER_YEAR = 365 * 24 * 60
# CPU time of this process: the ratios compare work done, and other load on a shared
# machine does not stretch one side of a ratio more than the other.
_clock = time.process_time
KINDS = ("boiler", "steam_turbine")
HEOS_FLUID = "Water"
IF97_FLUID = "IF97::Water"

# Demo fuel of the fictional plant: a pipeline natural gas (typical values, common practice).
DEMO_FUEL = FuelProperties(
    name="demo pipeline gas",
    hhv_j_per_kg=55.0e6,
    lhv_j_per_kg=49.6e6,
    exergy_to_lhv_ratio=1.04,
    density_kg_per_m3=0.78,
)
# The same kind of gas by composition (mole fractions of our own, typical of pipeline
# gas), as the heat-loss method and the exergy split need.
DEMO_GAS = FuelProperties.from_gas(
    "demo pipeline gas by composition",
    {"CH4": 0.930, "C2H6": 0.035, "C3H8": 0.008, "N2": 0.017, "CO2": 0.010},
)


# ---------------------------------------------------------------------------------------
# Synthetic readings of the fictional Unit 3 (about 150 MW, reheat drum boiler).


def _load_profile(index: pd.DatetimeIndex, rng: np.random.Generator) -> np.ndarray:
    """Load fraction: a daily cycle between about 50 % and 100 %, plus slow noise."""
    hours = (index.hour + index.minute / 60.0).to_numpy()
    daily = 0.75 + 0.22 * np.sin(2.0 * np.pi * (hours - 8.0) / 24.0)
    wander = np.cumsum(rng.standard_normal(index.size)) * 2e-4
    wander -= np.linspace(0.0, wander[-1], index.size)  # no drift over the year
    return np.clip(daily + wander + 0.01 * rng.standard_normal(index.size), 0.45, 1.0)


def _noisy(rng: np.random.Generator, values: np.ndarray, rel: float) -> np.ndarray:
    return values * (1.0 + rel * rng.standard_normal(values.size))


def _boiler_readings(load: np.ndarray, rng: np.random.Generator) -> dict[str, np.ndarray]:
    steam_flow = _noisy(rng, 135.0 * load, 0.003)
    spray = _noisy(rng, 0.03 * steam_flow, 0.01)
    blowdown = _noisy(rng, 0.01 * steam_flow, 0.01)
    steam_p = _noisy(rng, 16.5e6 * (0.7 + 0.3 * load), 0.002)
    rh_in_p = _noisy(rng, 3.8e6 * load, 0.002)
    # About 2.76 MJ absorbed per kg of main steam (with reheat), at eta_1 of about 0.9.
    fuel = _noisy(rng, steam_flow * 2.76e6 / (0.9 * DEMO_FUEL.hhv_j_per_kg), 0.005)
    return {
        "fuel_mass_flow": fuel,
        "feedwater_flow": steam_flow - spray + blowdown,
        "feedwater_pressure": steam_p + 1.5e6,
        "feedwater_temperature": _noisy(rng, 500.0 + 25.0 * load, 5e-4),
        "steam_flow": steam_flow,
        "steam_pressure": steam_p,
        "steam_temperature": _noisy(rng, np.full(load.size, 813.15), 5e-4),
        "blowdown_flow": blowdown,
        "drum_pressure": steam_p + 0.8e6,
        "reheat_flow": 0.9 * steam_flow,
        "reheat_in_pressure": rh_in_p,
        "reheat_in_temperature": _noisy(rng, 560.0 + 50.0 * load, 5e-4),
        "reheat_out_pressure": rh_in_p - 0.2e6,
        "reheat_out_temperature": _noisy(rng, np.full(load.size, 813.15), 5e-4),
        "spray_flow": spray,
        "spray_pressure": steam_p + 2.0e6,
        "spray_temperature": _noisy(rng, np.full(load.size, 440.0), 5e-4),
    }


def _turbine_readings(load: np.ndarray, rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Inlet main steam, two extraction ports, a wet exhaust and a consistent output.

    Port temperatures and the generator output follow from an expansion line of 0.86
    section efficiency (computed here with engine.steam, outside the timed run).
    """
    m_in = _noisy(rng, 135.0 * load, 0.003)
    p_in = _noisy(rng, 16.2e6 * (0.7 + 0.3 * load), 0.002)
    t_in = _noisy(rng, np.full(load.size, 811.0), 5e-4)
    ports = [(0.07, 0.23), (0.05, 0.06)]  # (flow fraction, pressure fraction of inlet)
    p_ex = 8e3 * (0.8 + 0.2 * load)
    state = steam.from_pt(p_in, t_in, ("h", "s"))
    h_prev, s_prev, m_prev = state.h, state.s, m_in
    power = np.zeros(load.size)
    readings = {"inlet_flow": m_in, "inlet_pressure": p_in, "inlet_temperature": t_in}
    for i, (flow_fraction, p_fraction) in enumerate(ports, start=1):
        p = p_in * p_fraction
        h = h_prev - 0.86 * (h_prev - steam.from_ps(p, s_prev, ("h",)).h)
        port = steam.from_ph(p, h, ("t", "s"))
        power += m_prev * (h_prev - h)
        readings[f"extraction{i}_flow"] = flow_fraction * m_in
        readings[f"extraction{i}_pressure"] = p
        readings[f"extraction{i}_temperature"] = port.t
        h_prev, s_prev, m_prev = h, port.s, m_prev - flow_fraction * m_in
    h_ex = h_prev - 0.86 * (h_prev - steam.from_ps(p_ex, s_prev, ("h",)).h)
    power += m_prev * (h_prev - h_ex)
    readings["exhaust_pressure"] = p_ex
    readings["generator_power"] = _noisy(rng, 0.985 * power, 0.002)
    return readings


_READINGS: dict[str, Callable[[np.ndarray, np.random.Generator], dict[str, np.ndarray]]] = {
    "boiler": _boiler_readings,
    "steam_turbine": _turbine_readings,
}

# Fallback for a required role the bench does not know yet, by its SI unit: the run goes
# on (with a notice) when a kind gains a role.
_FALLBACK_BY_UNIT = {"kg/s": 50.0, "Pa": 1e6, "K": 500.0, "W": 50e6, "J/kg": 50e6, "m^3/s": 1.0}


def build_inputs(
    kind: UnitKind, index: pd.DatetimeIndex, load: np.ndarray, rng: np.random.Generator
) -> pd.DataFrame:
    """Inputs for ``kind``: every reading the demo plant has that the kind declares."""
    readings = _READINGS.get(kind.name, lambda *_: {})(load, rng)
    columns = {name: values for name, values in readings.items() if kind.role(name) is not None}
    for name in readings.keys() - columns.keys():
        print(f"  note: {kind.name} no longer declares role {name!r}; not bound")
    for role in kind.roles:
        if role.required and role.name not in columns:
            value = _FALLBACK_BY_UNIT.get(role.unit, 1.0)
            print(f"  note: new required role {kind.name}.{role.name} [{role.unit}] = {value}")
            columns[role.name] = np.full(index.size, value)
    problems = kind.validate(columns, {}, has_fuel=True)
    for problem in problems:
        print(f"  note: {kind.name} configuration: {problem}")
    return pd.DataFrame(columns, index=index)


def full_boiler_inputs(boiler: pd.DataFrame, seed: int) -> pd.DataFrame:
    """The demo boiler's readings plus its flue-gas side, firing :data:`DEMO_GAS`.

    Load is read back from the steam flow. O2 falls from about 4 % to 2.5 % dry and the
    exit gas warms from about 395 to 430 K with load (common practice for a gas-fired unit
    with an air heater); air at about 20 degC and 60 % RH, heated to 520-580 K. The fuel
    flow is the one the heat-loss method implies for about 2.82 MJ absorbed per kg of
    main steam (this unit with reheat), with 0.5 % meter noise, so that direct and
    indirect efficiency agree as on a healthy unit.
    """
    rng = np.random.default_rng(seed)
    n = len(boiler)
    load = boiler["steam_flow"].to_numpy() / 135.0
    out = boiler.copy()
    out["flue_gas_o2"] = _noisy(rng, 0.055 - 0.03 * load, 0.02)
    out["flue_gas_temperature"] = _noisy(rng, 350.0 + 80.0 * load, 0.002)
    out["combustion_air_temperature"] = _noisy(rng, np.full(n, 293.15), 0.005)
    out["air_relative_humidity"] = np.clip(_noisy(rng, np.full(n, 0.6), 0.1), 0.05, 1.0)
    out["flue_gas_co"] = np.abs(_noisy(rng, np.full(n, 30e-6), 0.3))
    out["fuel_temperature"] = _noisy(rng, np.full(n, 288.15), 0.002)
    out["burner_air_temperature"] = _noisy(rng, 460.0 + 120.0 * load, 0.002)
    eta = heatloss.heat_loss_efficiency(
        DEMO_GAS,
        out["flue_gas_o2"].to_numpy(),
        out["flue_gas_temperature"].to_numpy(),
        out["combustion_air_temperature"].to_numpy(),
        surface_loss_fraction=0.005,
    )["eta_1_indirect"].to_numpy()
    heat = boiler["steam_flow"].to_numpy() * 2.82e6
    out["fuel_mass_flow"] = _noisy(rng, heat / (eta * DEMO_GAS.hhv_j_per_kg), 0.005)
    return out


def build_plant(rows: int, seed: int) -> dict[str, pd.DataFrame]:
    rng = np.random.default_rng(seed)
    index = pd.date_range("2025-01-01", periods=rows, freq="min", tz="UTC")
    load = _load_profile(index, rng)
    return {name: build_inputs(get_kind(name), index, load, rng) for name in KINDS}


def run_models(
    plant: dict[str, pd.DataFrame], fuel: FuelProperties = DEMO_FUEL
) -> dict[str, float]:
    """Run each kind's model once; seconds per kind."""
    context = ModelContext(dead=dead_state(), fuel=fuel)
    seconds = {}
    for name, inputs in plant.items():
        kind = get_kind(name)
        start = _clock()
        out = kind.model(inputs, {}, kind_context(kind, context))
        seconds[name] = _clock() - start
        if len(out) != len(inputs):
            raise RuntimeError(f"{name}: {len(out)} result rows for {len(inputs)} input rows")
    return seconds


def kind_context(kind: UnitKind, context: ModelContext) -> ModelContext:
    return context if kind.needs_fuel else ModelContext(dead=context.dead)


# ---------------------------------------------------------------------------------------
# Recording the property calls of a sample run.


@dataclass
class ArrayCall:
    """One CoolProp array call made through engine.steam._props."""

    output: str
    name1: str
    v1: np.ndarray
    name2: str
    v2: np.ndarray


@dataclass
class ApiCall:
    """One public engine.steam call made by a model: which properties of which states."""

    function: str
    args: tuple[np.ndarray, ...]
    props: tuple[str, ...]


_API = (
    "from_pt",
    "from_ph",
    "from_ps",
    "from_px",
    "saturated_liquid",
    "saturated_vapour",
    "saturation_temperature",
    "saturation_pressure",
)


def record_calls(
    plant: dict[str, pd.DataFrame], fuel: FuelProperties = DEMO_FUEL
) -> tuple[list[ArrayCall], list[ApiCall]]:
    """Run the models on ``plant`` with engine.steam instrumented; the calls they made."""
    array_calls: list[ArrayCall] = []
    api_calls: list[ApiCall] = []
    original_props = steam._props
    originals = {name: getattr(steam, name) for name in _API}
    depth = [0]

    def props(output, name1, v1, name2, v2):
        array_calls.append(ArrayCall(output, name1, v1.copy(), name2, v2.copy()))
        return original_props(output, name1, v1, name2, v2)

    def wrap(name):
        function = originals[name]

        def wrapper(*args, **kwargs):
            # Only the outermost public call counts (saturated_liquid calls from_px).
            if depth[0] == 0:
                two = name in ("from_pt", "from_ph", "from_ps", "from_px")
                arrays = tuple(
                    np.atleast_1d(np.asarray(a, dtype=float)) for a in args[: 2 if two else 1]
                )
                if two:
                    arrays = tuple(np.broadcast_arrays(*arrays))
                    given = args[2] if len(args) > 2 else kwargs.get("props")
                elif name in ("saturated_liquid", "saturated_vapour"):
                    given = args[1] if len(args) > 1 else kwargs.get("props")
                else:
                    given = ("t",) if name == "saturation_temperature" else ("p",)
                chosen = tuple(given or steam.ALL_PROPERTIES)
                api_calls.append(ApiCall(name, tuple(a.copy() for a in arrays), chosen))
            depth[0] += 1
            try:
                return function(*args, **kwargs)
            finally:
                depth[0] -= 1

        return wrapper

    steam._props = props
    for name in _API:
        setattr(steam, name, wrap(name))
    try:
        run_models(plant, fuel)
    finally:
        steam._props = original_props
        for name, function in originals.items():
            setattr(steam, name, function)
    return array_calls, api_calls


# ---------------------------------------------------------------------------------------
# References.


def time_bare_calls(calls: list[ArrayCall], scale: float) -> float:
    """Seconds for the recorded array calls made directly, each scaled by ``scale``.

    Inputs are resized one call at a time (outside the timing) to keep memory low.
    """
    total = 0.0
    for call in calls:
        size = max(int(round(call.v1.size * scale)), 0)
        if size == 0:
            continue
        v1, v2 = np.resize(call.v1, size), np.resize(call.v2, size)
        start = _clock()
        # When every state of a call fails CoolProp raises; the cost is spent all the same.
        with contextlib.suppress(ValueError):
            PropsSI(call.output, call.name1, v1, call.name2, v2, IF97_FLUID)
        total += _clock() - start
    return total


# Per-row CoolProp requests for each public engine.steam function: input pair and the
# CoolProp output for each property (None: known from the input, nothing to compute).
_NAIVE = {
    "from_pt": (("P", "T"), {"h": "H", "s": "S", "v": "D", "phase": "Phase"}),
    "from_ph": (("P", "H"), {"t": "T", "s": "S", "v": "D", "quality": "Q", "phase": "Phase"}),
    "from_ps": (("P", "S"), {"t": "T", "h": "H", "v": "D", "quality": "Q", "phase": "Phase"}),
    "from_px": (("P", "Q"), {"t": "T", "h": "H", "s": "S", "v": "D"}),
}


def _naive_requests(call: ApiCall) -> tuple[tuple[str, str], list[str], list[np.ndarray]]:
    if call.function in _NAIVE:
        pair, outputs = _NAIVE[call.function]
        arrays = list(call.args)
    elif call.function in ("saturated_liquid", "saturated_vapour"):
        pair, outputs = _NAIVE["from_px"]
        quality = 0.0 if call.function == "saturated_liquid" else 1.0
        arrays = [call.args[0], np.full(call.args[0].size, quality)]
    elif call.function == "saturation_temperature":
        pair, outputs = ("P", "Q"), {"t": "T"}
        arrays = [call.args[0], np.zeros(call.args[0].size)]
    else:
        pair, outputs = ("T", "Q"), {"p": "P"}
        arrays = [call.args[0], np.zeros(call.args[0].size)]
    wanted = [outputs[p] for p in call.props if outputs.get(p)]
    return pair, wanted, arrays


def time_naive_loop(api_calls: list[ApiCall], rows: int) -> tuple[float, int]:
    """Seconds for a per-row scalar HEOS loop over the first ``rows`` rows of each call.

    Returns the time and the number of scalar PropsSI calls made.
    """
    count = 0
    start = _clock()
    for call in api_calls:
        (name1, name2), outputs, (v1, v2) = _naive_requests(call)
        for i in range(min(rows, v1.size)):
            for output in outputs:
                count += 1
                # A naive loop must survive bad rows too.
                with contextlib.suppress(ValueError):
                    PropsSI(output, name1, float(v1[i]), name2, float(v2[i]), HEOS_FLUID)
    return _clock() - start, count


def time_literal_replay(array_calls: list[ArrayCall], fraction: float) -> tuple[float, int]:
    """Seconds for the recorded array calls replayed row by row on HEOS (first rows)."""
    count = 0
    start = _clock()
    for call in array_calls:
        for i in range(math.ceil(call.v1.size * fraction)):
            count += 1
            with contextlib.suppress(ValueError):
                PropsSI(call.output, call.name1, call.v1[i], call.name2, call.v2[i], HEOS_FLUID)
    return _clock() - start, count


def profile_models(plant: dict[str, pd.DataFrame], top: int = 25) -> str:
    profiler = cProfile.Profile()
    profiler.enable()
    run_models(plant)
    profiler.disable()
    stream = io.StringIO()
    pstats.Stats(profiler, stream=stream).sort_stats("cumulative").print_stats(top)
    return stream.getvalue()


# ---------------------------------------------------------------------------------------


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=ROWS_PER_YEAR, help="intervals to compute")
    parser.add_argument(
        "--sample", type=int, default=20_000, help="rows of the instrumented sample run"
    )
    parser.add_argument(
        "--naive-rows", type=int, default=2_000, help="rows of the per-row HEOS loop"
    )
    parser.add_argument("--seed", type=int, default=2025)
    parser.add_argument("--profile", action="store_true", help="cProfile the full model run")
    args = parser.parse_args(argv)
    rows = args.rows
    sample = min(args.sample, rows)
    naive_rows = min(args.naive_rows, sample)

    print(
        f"lostwork engine bench: {rows:,} rows, boiler + steam turbine; "
        f"Python {platform.python_version()}, numpy {np.__version__}, pandas {pd.__version__}, "
        f"CoolProp {CoolProp.__version__}, {os.cpu_count()} CPUs"
    )
    start = _clock()
    plant = build_plant(rows, args.seed)
    print(f"inputs built in {_clock() - start:.1f} s; columns:")
    for name, frame in plant.items():
        print(f"  {name}: {', '.join(frame.columns)}")

    sample_plant = {name: frame.iloc[:sample] for name, frame in plant.items()}
    array_calls, api_calls = record_calls(sample_plant)
    per_row_props = sum(len(_naive_requests(c)[1]) for c in api_calls)
    states = sum(c.v1.size for c in array_calls) / sample
    print(
        f"recorded on {sample:,} rows: {len(array_calls)} PropsSI array calls "
        f"({states:.1f} state evaluations per row), {len(api_calls)} engine.steam calls "
        f"({per_row_props} properties per row)"
    )

    seconds = run_models(plant)
    model = sum(seconds.values())
    for name, value in seconds.items():
        print(f"model {name:<14} {value:8.2f} s  {rows / value:12,.0f} rows/s")
    print(f"model total          {model:8.2f} s  {rows / model:12,.0f} rows/s")

    bare = time_bare_calls(array_calls, rows / sample)
    print(f"(a) bare IF97 array calls, same calls scaled to {rows:,} rows: {bare:8.2f} s")

    replay_sample, replay_count = time_literal_replay(array_calls, naive_rows / sample)
    replay = replay_sample * rows / naive_rows
    print(
        f"(b) per-row loop on HEOS, the same PropsSI calls per row: {replay_count:,} scalar "
        f"calls for {naive_rows:,} rows in {replay_sample:.2f} s -> {replay:,.0f} s"
    )
    naive_sample, naive_count = time_naive_loop(api_calls, naive_rows)
    naive = naive_sample * rows / naive_rows
    print(
        f"(b') per-row loop on HEOS, one call per property the models ask engine.steam "
        f"for: {naive_count:,} scalar calls for {naive_rows:,} rows in {naive_sample:.2f} s "
        f"-> {naive:,.0f} s"
    )
    print(f"ratio model / (a)   = {model / bare:7.2f}   (target <= 2)")
    print(f"ratio (b) / model   = {replay / model:7.1f}   (target >= 100)")
    print(f"ratio (b') / model  = {naive / model:7.1f}")

    full = {"boiler": full_boiler_inputs(plant["boiler"], args.seed + 1)}
    full_calls, _ = record_calls({"boiler": full["boiler"].iloc[:sample]}, DEMO_GAS)
    full_seconds = run_models(full, DEMO_GAS)["boiler"]
    full_bare = time_bare_calls(full_calls, rows / sample)
    print(
        f"full boiler (direct + heat-loss + exergy split): {full_seconds:8.2f} s  "
        f"{rows / full_seconds:12,.0f} rows/s"
    )
    print(
        f"(a_b) bare IF97 array calls of the full boiler ({len(full_calls)} calls), "
        f"scaled to {rows:,} rows: {full_bare:8.2f} s"
    )
    print(f"ratio full boiler / (a_b)     = {full_seconds / full_bare:7.2f}   (target <= 3)")
    print(f"ratio full / direct boiler    = {full_seconds / seconds['boiler']:7.2f}")

    if args.profile:
        print(profile_models(plant))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
