"""The five newer unit kinds end to end, on SQLite and PostgreSQL, like the boiler: declared
in a plant file, fed by REST and by a shift-log CSV, computed by the worker, baselined,
alerted on and laid out as the dashboard's exergy account.

Inputs per kind are the worked examples of the engine tests, reused by import so that the
numbers cannot drift apart (each example is itself checked there against Cantera, CoolProp
HEOS or iapws):

- gas_turbine: tests/engine/test_gas_turbine.py, fictional 40 MW-class unit (ISO ambient,
  pressure ratio 18, compressor isentropic efficiency 0.87, 2.30 kg/s of pipeline gas);
- hrsg: tests/engine/test_hrsg.py, single-pressure HRSG behind that turbine (114.3 kg/s of
  flue gas at air factor 2.9, 550 degC; 15.6 kg/s of steam at 40 bar(a), 480 degC);
- heat_pump: tests/engine/test_heat_pump.py, R134a chiller (350 kW cooling, 0/40 degC
  dew points, isentropic efficiency 0.7; chilled water 12 -> 7 degC);
- air_compressor: tests/engine/test_air_compressor.py, 90 kW screw, 15 m^3/min FAD at
  8 bar(a) from dry air at 20 degC and 1 bar;
- heat_engine: tests/engine/test_heat_engine.py, organic Rankine set, 2.0 MW from a
  150 degC oil loop, 0.24 MW of work, 1.72 MW rejected at 30 degC.

Every extensive input (flows, powers) is scaled by a slow load factor ``f`` (+-1 %, so
that the steady-state test keeps the intervals and the baseline has a load range) and
the product by a small factor ``g`` (+-0.3 %, so that eta_2 moves and a threshold on it
is crossed). Intensive states stay those of the example, so every interval is a
consistent operating point.

The outside check: the stored results equal the engine model called directly on the
same SI inputs (1e-6 relative; the only differences are the tag-unit round trips).
Tag-unit conversions are done by hand with factors exact by definition (NIST SP 811,
2008 ed., App. B.8/B.9): T[K] = T[degC] + 273.15, 1 bar = 1e5 Pa, 1 t/h = 1/3.6 kg/s;
gauge pressures are against the plant atmosphere of 100 kPa.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pytest

from api.pipeline.worker import run_once
from dashboard.exergy_account import MISMATCH_TOLERANCE, build_account, wanted_metrics
from engine.catalogue import ModelContext, all_kinds
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.fuels import FuelProperties
from tests.api.factories import ATMOSPHERE_PA, T0
from tests.engine import test_air_compressor as ex_ac
from tests.engine import test_gas_turbine as ex_gt
from tests.engine import test_heat_engine as ex_he
from tests.engine import test_heat_pump as ex_hp
from tests.engine import test_hrsg as ex_hrsg

MIN = 60_000
N = 180
"""Minutes fed through the columnar REST route (three hours)."""
N_CSV = 3
"""Minutes after those fed through a shift-log CSV upload."""
N_LIVE = 60
"""Minutes pushed after the alert rule exists."""
PLANT = "kinds-works"

# Tag units: value in the tag's unit from SI, by hand (see the module docstring).
TO_TAG: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "degC": lambda k: k - 273.15,
    "barg": lambda pa: (pa - ATMOSPHERE_PA) / 1e5,
    "bar": lambda pa: pa / 1e5,
    "kPa": lambda pa: pa / 1e3,
    "MW": lambda w: w / 1e6,
    "kW": lambda w: w / 1e3,
    "kg/s": lambda x: x,
    "t/h": lambda kg_s: kg_s * 3.6,
    "m3/min": lambda m3_s: m3_s * 60.0,
}


STEP = N + N_CSV + 40
"""From this minute on the product is 1 % higher for the same load (eta_2 up 1 %)."""


def load(i: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Load factor f (period 2 h, +-1 %) and product factor g (period 37 min, +-0.3 %,
    1 % higher from minute STEP on)."""
    f = 1.0 + 0.01 * np.sin(2 * np.pi * i / 120.0)
    g = (1.0 + 0.003 * np.sin(2 * np.pi * i / 37.0 + 0.5)) * np.where(i >= STEP, 1.01, 1.0)
    return f, g


@dataclass(frozen=True)
class Case:
    kind: str
    dead_k_pa: tuple[float, float]
    inputs: Callable[[np.ndarray, np.ndarray], dict[str, np.ndarray]]
    """SI value per role from the factors f and g."""
    tags: dict[str, str]
    """Role -> tag unit."""
    first_law: str
    """The kind's first-law figure in its results."""
    parameters: dict[str, float] = field(default_factory=dict)
    text: dict[str, str] = field(default_factory=dict)
    fuel: bool = False

    @property
    def slug(self) -> str:
        return self.kind.replace("_", "-") + "-1"


def _const(value: float, f: np.ndarray) -> np.ndarray:
    return np.full_like(f, value)


GT = ex_gt.EXAMPLE
HRSG = ex_hrsg.EXAMPLE
HP = ex_hp.CYCLE

CASES = [
    Case(
        "gas_turbine",
        (ex_gt.T0, ex_gt.P0),
        lambda f, g: {
            "fuel_mass_flow": ex_gt.M_FUEL * f,
            "fuel_temperature": _const(ex_gt.T_FUEL, f),
            "generator_power": GT["power"] * f * g,
            "compressor_inlet_temperature": _const(ex_gt.T1, f),
            "compressor_inlet_pressure": _const(ex_gt.P1, f),
            "compressor_discharge_temperature": _const(GT["t2"], f),
            "compressor_discharge_pressure": _const(ex_gt.P2, f),
            "exhaust_temperature": _const(ex_gt.T_EXHAUST, f),
            "ambient_temperature": _const(ex_gt.T_AMB, f),
            "ambient_pressure": _const(ex_gt.P_AMB, f),
        },
        {
            "fuel_mass_flow": "t/h",
            "fuel_temperature": "degC",
            "generator_power": "MW",
            "compressor_inlet_temperature": "degC",
            "compressor_inlet_pressure": "kPa",
            "compressor_discharge_temperature": "degC",
            "compressor_discharge_pressure": "barg",
            "exhaust_temperature": "degC",
            "ambient_temperature": "degC",
            "ambient_pressure": "kPa",
        },
        "eta_1",
        fuel=True,
    ),
    Case(
        "hrsg",
        (ex_hrsg.T0, ex_hrsg.P0),
        lambda f, g: {
            "gas_in_temperature": _const(ex_hrsg.T_GAS_IN, f),
            "gas_out_temperature": _const(HRSG["t_out"], f),
            "gas_flow": ex_hrsg.M_GAS * f,
            "gas_in_pressure": _const(ex_hrsg.P_GAS_IN, f),
            "level1_feedwater_pressure": _const(ex_hrsg.P_FW, f),
            "level1_feedwater_temperature": _const(ex_hrsg.T_FW, f),
            "level1_steam_flow": ex_hrsg.M_STEAM * f * g,
            "level1_steam_pressure": _const(ex_hrsg.P_STEAM, f),
            "level1_steam_temperature": _const(ex_hrsg.T_STEAM, f),
            "level1_drum_pressure": _const(ex_hrsg.P_DRUM, f),
            "level1_economizer_out_temperature": _const(ex_hrsg.T_ECO, f),
        },
        {
            "gas_in_temperature": "degC",
            "gas_out_temperature": "degC",
            "gas_flow": "kg/s",
            "gas_in_pressure": "kPa",
            "level1_feedwater_pressure": "barg",
            "level1_feedwater_temperature": "degC",
            "level1_steam_flow": "t/h",
            "level1_steam_pressure": "barg",
            "level1_steam_temperature": "degC",
            "level1_drum_pressure": "barg",
            "level1_economizer_out_temperature": "degC",
        },
        "eta_1",
        parameters=dict(ex_hrsg.FLUE),
        text=dict(ex_hrsg.FLUE_TEXT),
        fuel=True,
    ),
    Case(
        "heat_pump",
        (ex_hp.T0, 101_325.0),
        lambda f, g: {
            "electric_power": HP["power"] * f / g,
            "evaporator_in_temperature": _const(285.15, f),
            "evaporator_out_temperature": _const(280.15, f),
            "evaporator_flow": HP["m_e"] * f,
            "condenser_in_temperature": _const(303.15, f),
            "condenser_out_temperature": _const(308.15, f),
            "condenser_flow": HP["m_c"] * f,
            "suction_pressure": _const(HP["p_evap"], f),
            "suction_temperature": _const(HP["t1"], f),
            "discharge_pressure": _const(HP["p_cond"], f),
            "discharge_temperature": _const(HP["t2"], f),
            "liquid_temperature": _const(HP["t3"], f),
        },
        {
            "electric_power": "kW",
            "evaporator_in_temperature": "degC",
            "evaporator_out_temperature": "degC",
            "evaporator_flow": "kg/s",
            "condenser_in_temperature": "degC",
            "condenser_out_temperature": "degC",
            "condenser_flow": "kg/s",
            "suction_pressure": "barg",
            "suction_temperature": "degC",
            "discharge_pressure": "barg",
            "discharge_temperature": "degC",
            "liquid_temperature": "degC",
        },
        "cop",
        text=dict(ex_hp.CHILLER),
    ),
    Case(
        "air_compressor",
        (293.15, 1.0e5),
        lambda f, g: {
            "electric_power": ex_ac.SCREW["electric_power"] * f / g,
            "inlet_temperature": _const(ex_ac.SCREW["inlet_temperature"], f),
            "inlet_pressure": _const(ex_ac.SCREW["inlet_pressure"], f),
            "discharge_pressure": _const(ex_ac.SCREW["discharge_pressure"], f),
            "free_air_delivery": ex_ac.SCREW["free_air_delivery"] * f,
        },
        {
            "electric_power": "kW",
            "inlet_temperature": "degC",
            "inlet_pressure": "bar",
            "discharge_pressure": "barg",
            "free_air_delivery": "m3/min",
        },
        "specific_power_j_per_m3",
        # The example's dry intake, as a parameter instead of a humidity tag.
        parameters={"assumed_inlet_relative_humidity": ex_ac.SCREW["inlet_relative_humidity"]},
    ),
    Case(
        "heat_engine",
        (ex_he.T0, 101_325.0),
        lambda f, g: {
            "heat_input": ex_he.ORC["heat_input"] * f,
            "hot_temperature": _const(ex_he.ORC["hot_temperature"], f),
            "work_output": ex_he.ORC["work_output"] * f * g,
            "heat_rejected": ex_he.ORC["heat_rejected"] * f,
            "cold_temperature": _const(ex_he.ORC["cold_temperature"], f),
        },
        {
            "heat_input": "MW",
            "hot_temperature": "degC",
            "work_output": "kW",
            "heat_rejected": "MW",
            "cold_temperature": "degC",
        },
        "eta_1",
    ),
]

FUEL_NAME = "pipeline-gas"


def tag_name(role: str) -> str:
    return "X-" + role.upper().replace("_", "-")


def plant_file(case: Case) -> dict:
    t0, p0 = case.dead_k_pa
    unit: dict = {
        "name": case.kind.replace("_", " ").capitalize() + " 1",
        "kind": case.kind,
        "inputs": {role: tag_name(role) for role in case.tags},
        "parameters": {**case.parameters, **case.text},
    }
    doc: dict = {
        "format": "lostwork-plant/1",
        "plant": {
            "slug": PLANT,
            "name": "Kinds Works",
            "time_zone": "Europe/Berlin",
            "interval": "1 min",
            "atmosphere": f"{ATMOSPHERE_PA / 1e3} kPa",
            "dead_state": {"temperature": float(t0), "pressure": float(p0)},
        },
        "tags": {tag_name(role): {"unit": u} for role, u in case.tags.items()},
        "units": {case.slug: unit},
    }
    if case.fuel:
        doc["fuels"] = {FUEL_NAME: {"gas": {"composition": dict(ex_gt.FUEL_X)}}}
        unit["fuel"] = FUEL_NAME
    return doc


def si_inputs(case: Case, lo: int, hi: int) -> pd.DataFrame:
    i = np.arange(lo, hi, dtype=float)
    f, g = load(i)
    return pd.DataFrame(case.inputs(f, g), index=pd.Index(T0 + MIN * np.arange(lo, hi)))


def in_tag_units(case: Case, frame: pd.DataFrame) -> dict[str, np.ndarray]:
    return {
        tag_name(role): TO_TAG[case.tags[role]](frame[role].to_numpy(float)) for role in case.tags
    }


def push(client, headers, case: Case, lo: int, hi: int) -> None:
    values = in_tag_units(case, si_inputs(case, lo, hi))
    body = {
        "plant": PLANT,
        "times": [T0 + i * MIN for i in range(lo, hi)],
        "series": {tag: v.tolist() for tag, v in values.items()},
    }
    response = client.post("/api/v1/readings/columnar", json=body, headers=headers)
    assert response.status_code == 200, response.text
    assert response.json()["units_marked_dirty"] == [case.slug]


def shift_log(case: Case, lo: int, hi: int) -> bytes:
    """Wide form, units in brackets, local time of the plant (Europe/Berlin, UTC+1 in
    January: T0 = 2026-01-01 00:00 UTC is 01:00 local)."""
    values = in_tag_units(case, si_inputs(case, lo, hi))
    header = ["time"] + [f"{tag_name(r)} [{u}]" for r, u in case.tags.items()]
    lines = [",".join(header)]
    for k, i in enumerate(range(lo, hi)):
        local = pd.Timestamp(T0 + i * MIN, unit="ms") + pd.Timedelta(hours=1)
        cells = [local.strftime("%Y-%m-%d %H:%M")]
        cells += [repr(float(values[tag_name(r)][k])) for r in case.tags]
        lines.append(",".join(cells))
    return ("\n".join(lines) + "\n").encode()


def iso(t_ms: int) -> str:
    return pd.Timestamp(t_ms, unit="ms", tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


def results(client, headers, slug: str, lo: int, hi: int, metrics=None) -> pd.DataFrame:
    params = {"start": iso(T0 + lo * MIN), "end": iso(T0 + hi * MIN), "max_points": 100_000}
    if metrics:
        params["metrics"] = ",".join(metrics)
    response = client.get(f"/api/v1/units/{slug}/results", params=params, headers=headers)
    assert response.status_code == 200, response.text
    body = response.json()
    assert body["bucket_seconds"] in (None, 60), body["bucket_seconds"]
    columns = {}
    for s in body["series"]:
        t_ms = [int(pd.Timestamp(t).value // 1_000_000) for t in s["t"]]
        columns[s["metric"]] = pd.Series(
            [np.nan if v is None else v for v in s["mean"]], index=t_ms, dtype=float
        )
    return pd.DataFrame(columns).sort_index()


def engine_results(case: Case, lo: int, hi: int) -> pd.DataFrame:
    kind = all_kinds()[case.kind]
    fuel = FuelProperties.from_gas(FUEL_NAME, dict(ex_gt.FUEL_X)) if case.fuel else None
    context = ModelContext(
        dead=dead_state(*case.dead_k_pa),
        fuel=fuel,
        text_parameters=kind.resolve_text_parameters(case.text),
    )
    return kind.model(si_inputs(case, lo, hi), kind.resolve_parameters(case.parameters), context)


@pytest.mark.parametrize(
    "case",
    [pytest.param(c, id=c.kind) for c in CASES],
)
def test_kind_declared_fed_computed_baselined_alerted_and_accounted(
    case: Case, client, admin, make_key, session_factory
) -> None:
    ingest, read = make_key("ingest"), make_key("read")

    # 1. Declared in a plant file.
    response = client.post("/api/v1/plants", json=plant_file(case), headers=admin)
    assert response.status_code == 200, response.text

    # 2. Fed: three hours through REST, then three more minutes through a shift log.
    push(client, ingest, case, 0, N)
    upload = client.post(
        "/api/v1/uploads",
        files={"file": ("shift.csv", shift_log(case, N, N + N_CSV), "text/csv")},
        data={"plant": PLANT},
        headers=ingest,
    )
    report = upload.json()
    assert upload.status_code == 201, report
    assert (report["rejected"], report["errors"]) == (0, [])
    assert report["stored"] == N_CSV * len(case.tags)
    assert report["units_recomputed"] == [case.slug]

    # 3. Computed by the worker; equal to the engine on the same SI inputs.
    assert run_once(session_factory, "w1") >= 1
    got = results(client, read, case.slug, 0, N + N_CSV)
    want = engine_results(case, 0, N + N_CSV)
    # Every minute has a result, the CSV's included (the last reading holds for the
    # one-minute spacing, so it covers its own interval).
    assert list(got.index) == list(want.index)
    for metric in (case.first_law, "eta_2"):
        values = got[metric].to_numpy(float)
        assert np.isfinite(values).all(), metric
        np.testing.assert_allclose(values, want[metric].to_numpy(float), rtol=1e-6, err_msg=metric)
    assert ((got["eta_2"] > 0) & (got["eta_2"] <= 1)).all(), got["eta_2"].describe()
    flags = got["flags"].to_numpy().astype(int)
    negative_sgen = flags & int(Flag.NEGATIVE_ENTROPY_GENERATION)
    assert negative_sgen.tolist() == [0] * len(flags), Flag(int(np.bitwise_or.reduce(flags)))

    # 4. Baselined over the REST period.
    created = client.post(
        f"/api/v1/units/{case.slug}/baselines",
        json={"metric": "eta_2", "start": iso(T0), "end": iso(T0 + N * MIN)},
        headers=admin,
    )
    assert created.status_code == 201, created.text
    baseline = created.json()
    assert baseline["metric"] == "eta_2"
    assert baseline["load"] == all_kinds()[case.kind].load_result
    assert 0 < baseline["statistics"]["n"] <= N, baseline["counts"]

    # 5. Alerted on: eta_2 above the highest value of the fed period, crossed when the
    # product steps up by 1 % in the next hour.
    threshold = float(got["eta_2"].max()) * (1 + 1e-4)
    rule = client.post(
        "/api/v1/rules",
        json={
            "name": f"{case.slug}-eta2-high",
            "unit": case.slug,
            "kind": "threshold",
            "metric": "eta_2",
            "above": threshold,
        },
        headers=admin,
    )
    assert rule.status_code == 201, rule.text
    lo, hi = N + N_CSV, N + N_CSV + N_LIVE
    push(client, ingest, case, lo, hi)
    assert run_once(session_factory, "w1") >= 1
    live = engine_results(case, lo, hi)["eta_2"]
    # The data crosses the threshold at the step and stays above it.
    assert (live.index >= T0 + STEP * MIN).tolist() == (live > threshold).tolist()
    listed = client.get("/api/v1/alerts", params={"unit": case.slug}, headers=read)
    assert listed.status_code == 200, listed.text
    firing = [a for a in listed.json()["alerts"] if a["status"] == "firing"]
    assert [(a["rule"], a["metric"], a["unit"]) for a in firing] == [
        (f"{case.slug}-eta2-high", "eta_2", case.slug)
    ]
    assert firing[0]["value"] > threshold

    # 6. The dashboard's exergy account of the period closes (input = product +
    # destroyed + lost, no mismatch term), as tests/dashboard/test_exergy_account.py asks.
    kind = all_kinds()[case.kind]
    wanted = wanted_metrics([c.name for c in kind.results])
    period = results(client, read, case.slug, 0, hi, metrics=wanted)
    means = {m: float(period[m].mean()) for m in period.columns}
    account = build_account(means)
    assert account is not None, sorted(means)
    assert [t[0] for t in account.terms()].count("mismatch") == 0, account
    assert abs(account.mismatch_w) <= MISMATCH_TOLERANCE * account.input_w
    shares = [w / account.input_w for _, _, w in account.terms()]
    assert math.fsum(shares) == pytest.approx(1.0, abs=MISMATCH_TOLERANCE)
    assert 0 < account.product_w / account.input_w <= 1
