"""Heat pump / chiller (engine/units/heat_pump.py).

Outside references:
- a vapour-compression cycle of our own (fictional) scenario, R134a, evaporating at
  0 degC and condensing at 40 degC (dew points), 5 K superheat, 3 K subcooling,
  compressor isentropic efficiency 0.7, with every refrigerant state computed here
  independently through CoolProp's PropsSI (HEOS); the secondary water flows that make
  the scenario consistent are sized with the ``iapws`` package's IAPWS-IF97;
- the entropic mean temperature of a stream, Delta h / Delta s (Kotas 1995, Ch. 2;
  Herold, Radermacher & Klein 2016, Ch. 2; chapters from memory), which for a constant
  specific heat is the logarithmic mean (T_out - T_in) / ln(T_out / T_in);
- the Carnot COP T_cold / (T_hot - T_cold) (cooling) and T_hot / (T_hot - T_cold)
  (heating) between those means, and a reversible machine giving Sgen = 0, eta_2 = 1;
- Gouy-Stodola (Bejan, Tsatsaronis & Moran 1996, Eq. 3.24): T0 Sgen equals the exergy
  destroyed, the two computed by different routes in the model, checked to 1e-9;
- the ton of refrigeration, 12,000 Btu/h with the IT Btu of 1055.05585262 J (ASHRAE
  Handbook - Fundamentals, Ch. 38; from memory), for kW per ton, worked by hand.
"""

from __future__ import annotations

import doctest
import math

import numpy as np
import pandas as pd
import pytest
from CoolProp.CoolProp import PropsSI
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws import IAPWS97

import engine.units.heat_pump as heat_pump_module
from engine.catalogue import ModelContext, get_kind
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.units.heat_pump import KIND, heat_pump_performance

T0 = 298.15
CHILLER = {"product": "cooling", "refrigerant": "R134a"}


def _water_h_s(t_k: float) -> tuple[float, float]:
    """IAPWS-IF97 liquid water at 0.5 MPa from the iapws package, in J/kg and J/(kg K)."""
    state = IAPWS97(P=0.5, T=t_k)
    return state.h * 1e3, state.s * 1e3


def _r134a_cycle() -> dict[str, float]:
    """Our own chiller scenario, states from CoolProp HEOS directly (not engine.fluids)."""
    fluid = "R134a"
    p_evap = PropsSI("P", "T", 273.15, "Q", 1, fluid)  # dew point at 0 degC
    p_cond = PropsSI("P", "T", 313.15, "Q", 1, fluid)  # dew point at 40 degC
    t1 = 273.15 + 5.0  # 5 K superheat
    h1 = PropsSI("H", "P", p_evap, "T", t1, fluid)
    s1 = PropsSI("S", "P", p_evap, "T", t1, fluid)
    h2s = PropsSI("H", "P", p_cond, "S", s1, fluid)
    h2 = h1 + (h2s - h1) / 0.7  # isentropic efficiency 0.7
    t2 = PropsSI("T", "P", p_cond, "H", h2, fluid)
    t_bubble = PropsSI("T", "P", p_cond, "Q", 0, fluid)
    t3 = t_bubble - 3.0  # 3 K subcooling
    h3 = PropsSI("H", "P", p_cond, "T", t3, fluid)
    cooling = 350e3  # W
    m_ref = cooling / (h1 - h3)
    power = m_ref * (h2 - h1)  # hermetic compressor: all input reaches the refrigerant
    heating = m_ref * (h2 - h3)
    # Chilled water 12 -> 7 degC, condenser water 30 -> 35 degC, flows to match.
    h_e_in, _ = _water_h_s(285.15)
    h_e_out, _ = _water_h_s(280.15)
    h_c_in, _ = _water_h_s(303.15)
    h_c_out, _ = _water_h_s(308.15)
    return {
        "p_evap": p_evap,
        "p_cond": p_cond,
        "t1": t1,
        "t2": t2,
        "t3": t3,
        "h1": h1,
        "h2": h2,
        "h3": h3,
        "m_ref": m_ref,
        "power": power,
        "cooling": cooling,
        "heating": heating,
        "m_e": cooling / (h_e_in - h_e_out),
        "m_c": heating / (h_c_out - h_c_in),
    }


CYCLE = _r134a_cycle()

ROW = {
    "electric_power": CYCLE["power"],
    "evaporator_in_temperature": 285.15,
    "evaporator_out_temperature": 280.15,
    "evaporator_flow": CYCLE["m_e"],
    "condenser_in_temperature": 303.15,
    "condenser_out_temperature": 308.15,
    "condenser_flow": CYCLE["m_c"],
    "suction_pressure": CYCLE["p_evap"],
    "suction_temperature": CYCLE["t1"],
    "discharge_pressure": CYCLE["p_cond"],
    "discharge_temperature": CYCLE["t2"],
    "liquid_temperature": CYCLE["t3"],
}
SECONDARY_ONLY = {
    k: v for k, v in ROW.items() if not k.startswith(("suction", "discharge", "liquid"))
}


def _run(rows, params=None, text=None, t0=T0, index=None) -> pd.DataFrame:
    rows = [rows] if isinstance(rows, dict) else rows
    context = ModelContext(dead=dead_state(t0), text_parameters=text or CHILLER)
    return heat_pump_performance(pd.DataFrame(rows, index=index), params or {}, context)


def _log_mean(t_in: float, t_out: float) -> float:
    return (t_out - t_in) / math.log(t_out / t_in)


def test_refrigerant_and_water_side_cop_agree_in_a_consistent_scenario():
    out = _run(ROW).iloc[0]
    cop_c = CYCLE["cooling"] / CYCLE["power"]
    cop_h = CYCLE["heating"] / CYCLE["power"]
    # By hand from the CoolProp states: (h1 - h3) / (h2 - h1) and (h2 - h3) / (h2 - h1).
    assert cop_c == pytest.approx((CYCLE["h1"] - CYCLE["h3"]) / (CYCLE["h2"] - CYCLE["h1"]))
    assert out["cop_cooling_refrigerant"] == pytest.approx(cop_c, rel=1e-9)
    assert out["cop_heating_refrigerant"] == pytest.approx(cop_h, rel=1e-9)
    # Water side (engine: CoolProp's IF97; test: the iapws package) agrees with the
    # refrigerant side to the two IF97 implementations' agreement.
    assert out["cop_cooling"] == pytest.approx(cop_c, rel=1e-7)
    assert out["cop_heating"] == pytest.approx(cop_h, rel=1e-7)
    assert out["cop"] == out["cop_cooling"]
    assert out["cooling_w"] == pytest.approx(350e3, rel=1e-7)
    assert out["energy_balance_error"] == pytest.approx(0.0, abs=1e-7)
    # The cycle's own figures come back.
    assert out["compressor_isentropic_efficiency"] == pytest.approx(0.7, rel=1e-9)
    assert out["refrigerant_flow_kg_per_s"] == pytest.approx(CYCLE["m_ref"], rel=1e-7)
    assert out["evaporating_temperature_k"] == pytest.approx(273.15, abs=1e-6)
    assert out["condensing_temperature_k"] == pytest.approx(313.15, abs=1e-6)
    assert out["superheat_k"] == pytest.approx(5.0, abs=1e-6)
    assert out["subcooling_k"] == pytest.approx(3.0, abs=1e-6)
    # A real cycle: well below Carnot (R134a at 0/40 degC with eta_s 0.7 gives COP ~3.9
    # against a Carnot COP of ~12 between the water streams).
    assert 3.5 < out["cop_cooling"] < 4.5
    assert 0.0 < out["eta_2"] < 1.0
    assert out["sgen_w_per_k"] > 0
    assert int(out["flags"]) == Flag.NONE


def test_mean_temperatures_are_entropic_means_and_carnot_cop_between_them():
    out = _run(ROW).iloc[0]
    h_in, s_in = _water_h_s(285.15)
    h_out, s_out = _water_h_s(280.15)
    t_me = (h_out - h_in) / (s_out - s_in)
    h_in, s_in = _water_h_s(303.15)
    h_out, s_out = _water_h_s(308.15)
    t_mc = (h_out - h_in) / (s_out - s_in)
    assert out["evaporator_mean_temperature_k"] == pytest.approx(t_me, rel=1e-9)
    assert out["condenser_mean_temperature_k"] == pytest.approx(t_mc, rel=1e-9)
    # For water the entropic mean is the log mean within a few mK (cp nearly constant).
    assert t_me == pytest.approx(_log_mean(285.15, 280.15), abs=5e-3)
    assert out["carnot_cop"] == pytest.approx(t_me / (t_mc - t_me), rel=1e-8)
    assert out["eta_2"] == pytest.approx(out["cop_cooling"] * (t_mc - t_me) / t_me, rel=1e-8)


def test_heating_product_uses_heating_cop_and_carnot():
    out = _run(ROW, text={"product": "heating", "refrigerant": "R134a"}).iloc[0]
    t_me = out["evaporator_mean_temperature_k"]
    t_mc = out["condenser_mean_temperature_k"]
    assert out["cop"] == out["cop_heating"]
    assert out["carnot_cop"] == pytest.approx(t_mc / (t_mc - t_me), rel=1e-12)
    assert out["eta_2"] == pytest.approx(out["cop_heating"] / out["carnot_cop"], rel=1e-12)
    assert int(out["flags"]) == Flag.NONE


def test_kw_per_ton_by_hand():
    out = _run(SECONDARY_ONLY).iloc[0]
    # 1 ton = 12,000 Btu/h = 12,000 * 1055.05585262 J / 3600 s = 3516.8528420667 W.
    ton_w = 12_000 * 1055.05585262 / 3600
    assert ton_w == pytest.approx(3516.8528420667, rel=1e-13)
    kw_per_ton = (CYCLE["power"] / 1e3) / (CYCLE["cooling"] / ton_w)
    assert out["specific_power_w_per_w"] * 3.51685284 == pytest.approx(kw_per_ton, rel=1e-7)
    assert out["specific_power_w_per_w"] == pytest.approx(1 / out["cop_cooling"], rel=1e-14)


@pytest.mark.parametrize("cp", [1006.0, 3600.0])
def test_reversible_machine_between_constant_cp_streams(cp):
    # Air (1006 J/(kg K), common practice) or a glycol brine (3600 J/(kg K), our choice)
    # on both sides; the Carnot COP between log means makes a reversible machine.
    t_e_in, t_e_out, t_c_in, t_c_out = 288.15, 281.15, 301.15, 310.15
    t_me, t_mc = _log_mean(t_e_in, t_e_out), _log_mean(t_c_in, t_c_out)
    cooling = 200e3
    power = cooling * (t_mc - t_me) / t_me
    row = {
        "electric_power": power,
        "evaporator_in_temperature": t_e_in,
        "evaporator_out_temperature": t_e_out,
        "evaporator_flow": cooling / (cp * (t_e_in - t_e_out)),
        "condenser_in_temperature": t_c_in,
        "condenser_out_temperature": t_c_out,
        "condenser_flow": (cooling + power) / (cp * (t_c_out - t_c_in)),
    }
    params = {"evaporator_fluid_cp_j_per_kg_k": cp, "condenser_fluid_cp_j_per_kg_k": cp}
    for product in ("cooling", "heating"):
        out = _run(row, params, text={"product": product}).iloc[0]
        assert out["evaporator_mean_temperature_k"] == pytest.approx(t_me, rel=1e-12)
        assert out["condenser_mean_temperature_k"] == pytest.approx(t_mc, rel=1e-12)
        assert out["eta_2"] == pytest.approx(1.0, rel=1e-10)
        assert out["sgen_w_per_k"] == pytest.approx(0.0, abs=1e-9 * power / T0)
        assert int(out["flags"]) == Flag.NONE


def test_cop_above_carnot_is_flagged():
    # The chilled-water meter reads four times the truth: COP ~15.6 above Carnot ~12.8.
    # With the condenser measured too the balance is open, and the entropy balance puts
    # the surplus heat out at T0, so Sgen stays positive: the open balance is the story.
    row = dict(SECONDARY_ONLY, evaporator_flow=4 * CYCLE["m_e"])
    out = _run(row).iloc[0]
    assert out["eta_2"] > 1
    assert Flag(int(out["flags"])) == Flag.ABOVE_CARNOT | Flag.ENERGY_BALANCE_OPEN
    # Condenser closed by the balance and the power meter reading a quarter of the truth:
    # the claim is then a machine beating Carnot with its balance closed, so the second
    # law fails outright.
    closed = {k: v for k, v in SECONDARY_ONLY.items() if k != "condenser_flow"}
    out = _run(dict(closed, electric_power=CYCLE["power"] / 4)).iloc[0]
    assert out["eta_2"] > 1
    assert out["sgen_w_per_k"] < 0
    assert Flag(int(out["flags"])) == Flag.ABOVE_CARNOT | Flag.NEGATIVE_ENTROPY_GENERATION


def test_open_balance_flagged_only_when_both_flows_are_measured():
    # Condenser flow reads 10 % high: error = (P + Q_e - 1.1 Q_c) / (P + Q_e) = -0.1.
    row = dict(SECONDARY_ONLY, condenser_flow=1.1 * CYCLE["m_c"])
    out = _run(row).iloc[0]
    assert out["energy_balance_error"] == pytest.approx(-0.1, rel=1e-6)
    assert Flag(int(out["flags"])) == Flag.ENERGY_BALANCE_OPEN
    assert int(_run(row, {"energy_balance_tolerance": 0.12})["flags"].iloc[0]) == Flag.NONE


@pytest.mark.parametrize("missing", ["evaporator_flow", "condenser_flow"])
def test_one_side_closed_by_the_balance(missing):
    row = {k: v for k, v in SECONDARY_ONLY.items() if k != missing}
    out = _run(row).iloc[0]
    full = _run(SECONDARY_ONLY).iloc[0]
    assert out["energy_balance_error"] == 0.0
    assert out["cooling_w"] + out["electric_power_w"] == pytest.approx(out["heating_w"], rel=1e-14)
    # The scenario is consistent, so the closed side equals the measured one.
    assert out["cop_cooling"] == pytest.approx(full["cop_cooling"], rel=1e-7)
    assert out["sgen_w_per_k"] == pytest.approx(full["sgen_w_per_k"], rel=1e-5)
    assert out["lost_work_w"] == pytest.approx(out["exergy_destroyed_w"], rel=1e-9)


def test_refrigerant_side_needs_a_named_refrigerant_and_all_five_roles():
    unnamed = _run(ROW, text={"product": "cooling"}).iloc[0]
    assert unnamed["cop_cooling"] == pytest.approx(CYCLE["cooling"] / CYCLE["power"], rel=1e-7)
    assert np.isnan(unnamed["cop_cooling_refrigerant"])
    assert Flag(int(unnamed["flags"])) == Flag.INPUT_OUT_OF_RANGE
    partial = _run({k: v for k, v in ROW.items() if k != "liquid_temperature"}).iloc[0]
    assert np.isnan(partial["compressor_isentropic_efficiency"])
    assert Flag(int(partial["flags"])) == Flag.INPUT_OUT_OF_RANGE


def test_wet_suction_blanks_the_refrigerant_side_of_that_row_only():
    # Suction thermometer at the evaporating temperature: (p, T) does not fix the state.
    rows = [dict(ROW, suction_temperature=273.15), dict(ROW)]
    out = _run(rows)
    assert out["flags"].tolist() == [int(Flag.INPUT_OUT_OF_RANGE), 0]
    assert np.isnan(out["cop_cooling_refrigerant"].iloc[0])
    assert out["cop_cooling"].iloc[0] == out["cop_cooling"].iloc[1]


def test_saturated_liquid_line_and_liquid_pressure_role():
    # Liquid line at its bubble point (no subcooling) on a separate pressure tap.
    t_bubble = PropsSI("T", "P", CYCLE["p_cond"], "Q", 0, "R134a")
    h3 = PropsSI("H", "P", CYCLE["p_cond"], "Q", 0, "R134a")
    row = dict(ROW, liquid_temperature=t_bubble, liquid_pressure=CYCLE["p_cond"])
    out = _run(row).iloc[0]
    expected = (CYCLE["h1"] - h3) / (CYCLE["h2"] - CYCLE["h1"])
    assert out["cop_cooling_refrigerant"] == pytest.approx(expected, rel=1e-9)
    assert out["subcooling_k"] == pytest.approx(0.0, abs=1e-9)


def test_transcritical_co2_gas_cooler():
    # Our own R744 heat pump: evaporating -5 degC (dew), 5 K superheat, gas cooler at
    # 9 MPa (above the critical 7.377 MPa) leaving at 35 degC, isentropic efficiency 0.65.
    fluid = "CarbonDioxide"
    p_e = PropsSI("P", "T", 268.15, "Q", 1, fluid)
    h1 = PropsSI("H", "P", p_e, "T", 273.15, fluid)
    s1 = PropsSI("S", "P", p_e, "T", 273.15, fluid)
    h2 = h1 + (PropsSI("H", "P", 9e6, "S", s1, fluid) - h1) / 0.65
    t2 = PropsSI("T", "P", 9e6, "H", h2, fluid)
    h3 = PropsSI("H", "P", 9e6, "T", 308.15, fluid)
    row = dict(
        ROW,
        suction_pressure=p_e,
        suction_temperature=273.15,
        discharge_pressure=9e6,
        discharge_temperature=t2,
        liquid_temperature=308.15,
    )
    out = _run(row, text={"product": "heating", "refrigerant": "R744"}).iloc[0]
    # Tolerance: the test's T2 from (p, h2) and the model's h from (p, T2) round-trip
    # through CoolProp's supercritical flash to about 1e-8.
    assert out["cop_heating_refrigerant"] == pytest.approx((h2 - h3) / (h2 - h1), rel=1e-7)
    assert out["compressor_isentropic_efficiency"] == pytest.approx(0.65, rel=1e-7)
    assert np.isnan(out["condensing_temperature_k"])  # no condensation above p_c
    assert out["evaporating_temperature_k"] == pytest.approx(268.15, abs=1e-6)


def test_compressor_isentropic_efficiency_above_one_is_flagged():
    # A discharge thermometer reading half-way between the condensing temperature and the
    # isentropic discharge temperature puts h2 below h2s.
    s1 = PropsSI("S", "P", CYCLE["p_evap"], "T", CYCLE["t1"], "R134a")
    t2s = PropsSI("T", "P", CYCLE["p_cond"], "S", s1, "R134a")
    out = _run(dict(ROW, discharge_temperature=0.5 * (t2s + 313.15))).iloc[0]
    assert out["compressor_isentropic_efficiency"] > 1
    assert Flag(int(out["flags"])) == Flag.ISENTROPIC_ABOVE_ONE


@pytest.mark.parametrize(
    "column, value",
    [
        ("electric_power", np.nan),
        ("electric_power", -5.0),
        ("evaporator_flow", -1.0),
        ("condenser_in_temperature", np.nan),
        ("evaporator_out_temperature", 200.0),  # below IF97's range: not water
    ],
)
def test_bad_secondary_input_gives_nan_row_with_flag(column, value):
    out = _run([dict(ROW, **{column: value}), dict(ROW)])
    assert out["flags"].tolist() == [int(Flag.INPUT_OUT_OF_RANGE), 0]
    assert out.drop(columns="flags").iloc[0].isna().all()
    pd.testing.assert_series_equal(out.iloc[1], _run(ROW).iloc[0], check_names=False)


def test_configuration_errors_raise_with_clear_text():
    with pytest.raises(ValueError, match=r"product 'both' is not one of cooling, heating"):
        _run(ROW, text={"product": "both"})
    no_flow = {k: v for k, v in SECONDARY_ONLY.items() if not k.endswith("flow")}
    with pytest.raises(ValueError, match=r"needs evaporator_flow or condenser_flow"):
        _run(no_flow)


def test_machine_off_gives_nan_cop_without_flag():
    row = dict(SECONDARY_ONLY, electric_power=0.0, evaporator_flow=0.0, condenser_flow=0.0)
    out = _run(row).iloc[0]
    assert np.isnan(out["cop_cooling"]) and np.isnan(out["eta_2"])
    assert out["sgen_w_per_k"] == 0.0
    assert int(out["flags"]) == Flag.NONE


def test_catalogue_entry_validates_and_columns_follow_it():
    kind = get_kind("heat_pump")
    assert kind is KIND
    bound = list(ROW)
    assert kind.validate(bound, {}, False, {"product": "heating", "refrigerant": "R717"}) == []
    problems = [str(p) for p in kind.validate(bound, {}, False, {"refrigerant": "R12"})]
    assert len(problems) == 1 and problems[0].startswith(
        "parameter 'refrigerant': 'R12' is not one of unspecified, R22, R32"
    )
    index = pd.date_range("2026-07-01", periods=2, freq="min", tz="UTC")
    out = _run([ROW, ROW], index=index)
    assert out.index.equals(index)
    assert list(out.columns) == [r.name for r in KIND.results] + ["flags"]
    assert out["flags"].dtype == np.int64


def test_docstring_example_runs():
    result = doctest.testmod(heat_pump_module)
    assert (result.failed, result.attempted) == (0, 6)


@settings(max_examples=60, deadline=None)
@given(
    cooling=st.floats(1e3, 5e6),
    t_e_in=st.floats(282.0, 295.0),
    d_e=st.floats(0.5, 8.0),
    t_c_in=st.floats(290.0, 320.0),
    d_c=st.floats(0.5, 10.0),
    share=st.floats(0.05, 0.99),
    t0=st.floats(275.0, 313.0),
    water=st.booleans(),
    product=st.sampled_from(["cooling", "heating"]),
)
def test_property_balances_and_bounds(cooling, t_e_in, d_e, t_c_in, d_c, share, t0, water, product):
    t_e_out = t_e_in - d_e
    t_c_out = t_c_in + d_c
    cp = 0.0 if water else 3800.0
    if water:
        dh_e = _water_h_s(t_e_in)[0] - _water_h_s(t_e_out)[0]
        dh_c = _water_h_s(t_c_out)[0] - _water_h_s(t_c_in)[0]
    else:
        dh_e, dh_c = cp * d_e, cp * d_c
    t_me, t_mc = _log_mean(t_e_in, t_e_out), _log_mean(t_c_in, t_c_out)
    if t_mc <= t_me + 1.0:
        return  # no lift worth a compressor
    # A consistent machine: COP a share of Carnot (log means are within mK of the
    # entropic means for water, inside the 1 % margin the share keeps from 1).
    power = cooling * (t_mc - t_me) / t_me / share
    row = {
        "electric_power": power,
        "evaporator_in_temperature": t_e_in,
        "evaporator_out_temperature": t_e_out,
        "evaporator_flow": cooling / dh_e,
        "condenser_in_temperature": t_c_in,
        "condenser_out_temperature": t_c_out,
        "condenser_flow": (cooling + power) / dh_c,
    }
    params = {"evaporator_fluid_cp_j_per_kg_k": cp, "condenser_fluid_cp_j_per_kg_k": cp}
    out = _run(row, params, text={"product": product}, t0=t0).iloc[0]
    # Energy balance closes (to the iapws/CoolProp IF97 agreement for water).
    assert out["heating_w"] == pytest.approx(out["cooling_w"] + power, rel=1e-7)
    # Gouy-Stodola: T0 Sgen = exergy destroyed, two routes.
    assert out["lost_work_w"] == pytest.approx(
        out["exergy_destroyed_w"], rel=1e-9, abs=1e-9 * power
    )
    assert out["eta_2"] <= 1.0 + 1e-6
    assert out["sgen_w_per_k"] >= -1e-6 * power / t0
    assert int(out["flags"]) & ~int(Flag.ENERGY_BALANCE_OPEN) == 0


@pytest.mark.parametrize("product", ["cooling", "heating"])
def test_exergy_account_closes_product_plus_rejected_plus_destroyed(product):
    # Exergy balance of the machine (Bejan, Tsatsaronis & Moran 1996, Ch. 3): the electric
    # input leaves as the product stream's exergy gain, the other stream's and destruction.
    out = _run([SECONDARY_ONLY], text={**CHILLER, "product": product}).iloc[0]
    total = out["exergy_product_w"] + out["rejected_heat_exergy_w"] + out["exergy_destroyed_w"]
    assert total == pytest.approx(out["electric_power_w"], rel=1e-12)
    assert 0 < out["exergy_product_w"] < out["electric_power_w"]
