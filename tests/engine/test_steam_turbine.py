"""Steam turbine-generator model, checked against the `iapws` package and balances.

Reference implementation: `iapws` (PyPI, 1.5.x), class IAPWS97 -- an independent
implementation of IAPWS R7-97(2012) (IF97), units MPa, K, kJ/kg. Every expected value
below is reconstructed step by step with it inside the test. Where the model and
`iapws` evaluate the same IF97 basic equations, they agree to about 1e-14 relative;
the tolerance REL = 1e-9 leaves room for round-off in the balances (differences of
terms about ten times larger than the result) and for iapws's own inversion of (p, s)
and (p, h), and is still far below any physical effect (1e-9 of 100 MW is 0.1 W).

The plant is fictional: "Marsh Lane unit 2", a condensing extraction turbine, and a
back-pressure set of the same site.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from iapws import IAPWS97

from engine.catalogue import ModelContext
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.units.steam_turbine import (
    KIND,
    MAX_SECTIONS,
    RESULTS,
    section_result_name,
    shaft_power,
    steam_turbine,
)

REL = 1e-9
T0 = 298.15
P0 = 101_325.0
CONTEXT = ModelContext(dead_state(T0, P0))


class Water:
    """An IAPWS97 state from `iapws`, in SI units (Pa, K, J/kg, J/(kg K))."""

    def __init__(self, **kw: float) -> None:
        args = {}
        for key, value in kw.items():
            if key == "p":
                args["P"] = value / 1e6
            elif key == "t":
                args["T"] = value
            elif key == "h":
                args["h"] = value / 1e3
            elif key == "s":
                args["s"] = value / 1e3
            else:
                args[key] = value
        state = IAPWS97(**args)
        assert state.status == 1, f"iapws could not solve {kw}"
        self.t = state.T
        self.h = state.h * 1e3
        self.s = state.s * 1e3
        self.x = state.x
        self.region = state.region


# Dead state: liquid water at 25 degC and 101.325 kPa, from iapws (not from the project).
DEAD_WATER = Water(p=P0, t=T0)


def ex(state: Water) -> float:
    """Specific flow exergy (h - h0) - T0 (s - s0), Bejan et al. 1996, Eq. 3.13. [J/kg]"""
    return (state.h - DEAD_WATER.h) - T0 * (state.s - DEAD_WATER.s)


def one_row(**columns: float) -> pd.DataFrame:
    return pd.DataFrame({k: [v] for k, v in columns.items()})


def first(frame: pd.DataFrame, column: str) -> float:
    return float(frame[column].iloc[0])


# --- Worked example: condensing turbine, one extraction, wet exhaust -------------------


@pytest.fixture(scope="module")
def condensing_example():
    """Marsh Lane unit 2 at one interval (fictional readings).

    Inlet 100 kg/s at 10 MPa, 500 degC; extraction 1 at 1 MPa, 220 degC, 12 kg/s
    (superheated: T_sat(1 MPa) = 179.9 degC); exhaust at 10 kPa, wet, no thermometer;
    generator output 100 MW; generator efficiency 0.985; bearing loss 0.3 MW.
    """
    inputs = one_row(
        inlet_flow=100.0,
        inlet_pressure=10e6,
        inlet_temperature=773.15,
        extraction1_flow=12.0,
        extraction1_pressure=1e6,
        extraction1_temperature=493.15,
        exhaust_pressure=10e3,
        generator_power=100e6,
    )
    params = {"generator_efficiency": 0.985, "mechanical_loss_w": 0.3e6}
    return inputs, steam_turbine(inputs, params, CONTEXT)


def test_condensing_example_step_by_step(condensing_example):
    _, out = condensing_example
    m_in, m_1, m_exh = 100.0, 12.0, 88.0
    p_gen = 100e6
    # Step 1, states measured by (p, T): IAPWS-IF97 region 2 via iapws.
    inlet = Water(p=10e6, t=773.15)
    ext1 = Water(p=1e6, t=493.15)
    assert inlet.region == 2 and ext1.region == 2
    # Step 2, shaft power: generator input P / eta_gen plus the bearing loss (common
    # practice for a constant generator efficiency).
    w_shaft = p_gen / 0.985 + 0.3e6
    assert first(out, "shaft_power_w") == pytest.approx(w_shaft, rel=1e-12)
    assert first(out, "generator_power_w") == p_gen
    # Step 3, exhaust enthalpy closed by the energy balance on the measured output.
    h_exh = (m_in * inlet.h - m_1 * ext1.h - w_shaft) / m_exh
    assert first(out, "exhaust_enthalpy_j_per_kg") == pytest.approx(h_exh, rel=REL)
    assert first(out, "exhaust_flow_kg_per_s") == m_exh  # by mass balance
    # Step 4, exhaust state from (p, h): wet, lever rule in iapws (region 4).
    exhaust = Water(p=10e3, h=h_exh)
    assert exhaust.region == 4
    assert first(out, "exhaust_quality") == pytest.approx(exhaust.x, rel=REL)
    assert 0.85 < exhaust.x < 0.9  # plausibility of the scenario, not a reference value
    # Step 5, section isentropic efficiencies (h_a - h_b) / (h_a - h_s(p_b, s_a)).
    h_1s = Water(p=1e6, s=inlet.s).h
    h_2s = Water(p=10e3, s=ext1.s).h
    eta_1 = (inlet.h - ext1.h) / (inlet.h - h_1s)
    eta_2s = (ext1.h - h_exh) / (ext1.h - h_2s)
    assert first(out, "section1_isentropic_efficiency") == pytest.approx(eta_1, rel=REL)
    assert first(out, "section2_isentropic_efficiency") == pytest.approx(eta_2s, rel=REL)
    for n in range(3, MAX_SECTIONS + 1):
        assert math.isnan(first(out, section_result_name(n)))
    # Step 6, overall (expansion-line, end-point) efficiency from inlet to exhaust.
    h_exh_s = Water(p=10e3, s=inlet.s).h
    overall = (inlet.h - h_exh) / (inlet.h - h_exh_s)
    assert first(out, "overall_isentropic_efficiency") == pytest.approx(overall, rel=REL)
    # Step 7, exergy drop of the steam (Bejan et al. 1996, Eq. 3.13) and eta_2.
    exergy_in = m_in * ex(inlet) - m_1 * ex(ext1) - m_exh * ex(exhaust)
    assert first(out, "exergy_in_w") == pytest.approx(exergy_in, rel=REL)
    assert first(out, "eta_2") == pytest.approx(w_shaft / exergy_in, rel=REL)
    assert first(out, "eta_2_electrical") == pytest.approx(p_gen / exergy_in, rel=REL)
    # Step 8, entropy balance on the turbine-generator boundary, losses as heat at T0
    # (Bejan et al. 1996, Ch. 2), and Gouy-Stodola (Eq. 3.24).
    losses = m_in * inlet.h - m_1 * ext1.h - m_exh * exhaust.h - p_gen
    assert losses == pytest.approx(w_shaft - p_gen, rel=1e-6)  # energy closes
    sgen = m_1 * ext1.s + m_exh * exhaust.s - m_in * inlet.s + losses / T0
    assert first(out, "sgen_w_per_k") == pytest.approx(sgen, rel=REL)
    assert first(out, "lost_work_w") == pytest.approx(T0 * sgen, rel=REL)
    assert first(out, "exergy_destroyed_and_lost_w") == pytest.approx(exergy_in - p_gen, rel=REL)
    # Step 9, steam rate: inlet flow per generator output, kg/kWh (ASME PTC 6 quantity).
    assert first(out, "steam_rate_kg_per_kwh") == pytest.approx(100.0 * 3600 / 100e3, rel=1e-12)
    assert first(out, "energy_balance_error") == pytest.approx(0.0, abs=1e-12)
    assert first(out, "mass_balance_error") == 0.0
    assert int(out["flags"].iloc[0]) == 0


def test_result_columns_are_the_declared_ones_in_order(condensing_example):
    _, out = condensing_example
    assert list(out.columns) == [column.name for column in RESULTS] + ["flags"]
    assert out["flags"].dtype == np.int64
    assert all(out[c.name].dtype == np.float64 for c in RESULTS)


# --- Back-pressure turbine: superheated exhaust measured by (p, T) --------------------


@pytest.mark.parametrize(
    ("p_in", "t_in", "p_exh", "t_exh"),
    [
        (6e6, 753.15, 0.5e6, 473.15),  # process-steam back-pressure set (fictional)
        (25e6, 873.15, 4e6, 603.15),  # supercritical inlet, HP cylinder to cold reheat
    ],
)
def test_back_pressure_isentropic_efficiency(p_in, t_in, p_exh, t_exh):
    m = 40.0
    inlet = Water(p=p_in, t=t_in)
    exhaust = Water(p=p_exh, t=t_exh)
    assert exhaust.region == 2  # superheated exhaust, (p, T) fixes the state
    # Output consistent with the energy balance (eta_gen 0.985, no mechanical loss).
    p_gen = 0.985 * m * (inlet.h - exhaust.h)
    inputs = one_row(
        inlet_flow=m,
        inlet_pressure=p_in,
        inlet_temperature=t_in,
        exhaust_pressure=p_exh,
        exhaust_temperature=t_exh,
        generator_power=p_gen,
    )
    out = steam_turbine(inputs, {}, CONTEXT)
    h_s = Water(p=p_exh, s=inlet.s).h  # iapws solves (p, s) iteratively
    eta = (inlet.h - exhaust.h) / (inlet.h - h_s)
    assert first(out, "section1_isentropic_efficiency") == pytest.approx(eta, rel=REL)
    assert first(out, "overall_isentropic_efficiency") == pytest.approx(eta, rel=REL)
    assert first(out, "exhaust_enthalpy_j_per_kg") == pytest.approx(exhaust.h, rel=REL)
    assert math.isnan(first(out, "exhaust_quality"))  # superheated: no quality
    assert first(out, "energy_balance_error") == pytest.approx(0.0, abs=1e-9)
    assert int(out["flags"].iloc[0]) == 0


def test_back_pressure_energy_imbalance_is_flagged_and_second_law_still_closes():
    m, p_in, t_in, p_exh, t_exh = 40.0, 6e6, 753.15, 0.5e6, 473.15
    inlet, exhaust = Water(p=p_in, t=t_in), Water(p=p_exh, t=t_exh)
    # The meter reads 10 % less than the steam's enthalpy drop allows (eta_gen = 1).
    p_gen = 0.9 * m * (inlet.h - exhaust.h)
    inputs = one_row(
        inlet_flow=m,
        inlet_pressure=p_in,
        inlet_temperature=t_in,
        exhaust_pressure=p_exh,
        exhaust_temperature=t_exh,
        generator_power=p_gen,
    )
    out = steam_turbine(inputs, {"generator_efficiency": 1.0}, CONTEXT)
    # (enthalpy drop - shaft power) / shaft power = (1 - 0.9) / 0.9, by construction.
    assert first(out, "energy_balance_error") == pytest.approx(0.1 / 0.9, rel=REL)
    assert int(out["flags"].iloc[0]) == Flag.ENERGY_BALANCE_OPEN
    # The missing 10 % leaves as heat at T0: Sgen = m (s_exh - s_in) + Q / T0.
    q = m * (inlet.h - exhaust.h) - p_gen
    sgen = m * (exhaust.s - inlet.s) + q / T0
    assert first(out, "sgen_w_per_k") == pytest.approx(sgen, rel=REL)
    assert first(out, "lost_work_w") == pytest.approx(
        first(out, "exergy_destroyed_and_lost_w"), rel=REL
    )


def test_exhaust_thermometer_reading_saturation_is_treated_as_wet(condensing_example):
    inputs, expected = condensing_example
    # A thermometer in wet steam reads saturation: 45.81 degC at 10 kPa (IF97 Eq. 31,
    # here from iapws); at or below it the reading is ignored and the balance closes.
    t_sat = Water(p=10e3, x=0.0).t
    for reading in (t_sat, t_sat - 0.5):
        out = steam_turbine(
            inputs.assign(exhaust_temperature=reading),
            {"generator_efficiency": 0.985, "mechanical_loss_w": 0.3e6},
            CONTEXT,
        )
        pd.testing.assert_frame_equal(out, expected, rtol=1e-12)


def test_min_superheat_treats_a_reading_just_above_saturation_as_wet(condensing_example):
    inputs, expected = condensing_example
    reading = Water(p=10e3, x=0.0).t + 0.4
    params = {"generator_efficiency": 0.985, "mechanical_loss_w": 0.3e6}
    trusted = steam_turbine(inputs.assign(exhaust_temperature=reading), params, CONTEXT)
    # Trusted as superheated, the exhaust is saturated-vapour-like: h from (p, T).
    assert first(trusted, "exhaust_enthalpy_j_per_kg") == pytest.approx(
        Water(p=10e3, t=reading).h, rel=REL
    )
    assert int(trusted["flags"].iloc[0]) & Flag.ENERGY_BALANCE_OPEN
    wet = steam_turbine(
        inputs.assign(exhaust_temperature=reading), {**params, "min_superheat_k": 2.0}, CONTEXT
    )
    pd.testing.assert_frame_equal(wet, expected, rtol=1e-12)


def test_unmeasured_extraction_is_closed_when_it_is_the_only_unknown():
    # Back-pressure set whose bleed has no thermometer; the exhaust is measured by (p, T).
    m_in, m_1 = 50.0, 5.0
    inlet = Water(p=4e6, t=673.15)
    # The bleed's true state, unknown to the model: section 1 at 0.8 efficiency.
    h_1 = inlet.h - 0.8 * (inlet.h - Water(p=1e6, s=inlet.s).h)
    bleed = Water(p=1e6, h=h_1)
    exhaust = Water(p=0.2e6, t=413.15)
    assert bleed.region == 2 and exhaust.region == 2
    w_shaft = m_in * inlet.h - m_1 * h_1 - (m_in - m_1) * exhaust.h
    inputs = one_row(
        inlet_flow=m_in,
        inlet_pressure=4e6,
        inlet_temperature=673.15,
        extraction1_flow=m_1,
        extraction1_pressure=1e6,
        exhaust_pressure=0.2e6,
        exhaust_temperature=413.15,
        generator_power=w_shaft,
    )
    out = steam_turbine(inputs, {"generator_efficiency": 1.0}, CONTEXT)
    assert first(out, "section1_isentropic_efficiency") == pytest.approx(0.8, rel=REL)
    eta_2 = (h_1 - exhaust.h) / (h_1 - Water(p=0.2e6, s=bleed.s).h)
    assert first(out, "section2_isentropic_efficiency") == pytest.approx(eta_2, rel=REL)
    assert 0.5 < eta_2 < 1  # plausibility of the scenario, not a reference value
    assert math.isnan(first(out, "exhaust_quality"))
    assert int(out["flags"].iloc[0]) == 0


def test_sections_follow_the_port_order_not_the_port_numbers():
    # Ports 1 and 3 bound (port 2 not instrumented): section 2 runs from extraction 1
    # to extraction 3, section 3 from extraction 3 to the exhaust (module convention).
    inlet = Water(p=10e6, t=773.15)
    ext1 = Water(p=2e6, t=573.15)
    ext3 = Water(p=0.4e6, t=453.15)
    assert ext1.region == 2 and ext3.region == 2
    m_in, m_1, m_3 = 100.0, 8.0, 6.0
    m_exh = m_in - m_1 - m_3
    h_exh = Water(p=10e3, x=0.9).h
    w_shaft = m_in * inlet.h - m_1 * ext1.h - m_3 * ext3.h - m_exh * h_exh
    inputs = one_row(
        inlet_flow=m_in,
        inlet_pressure=10e6,
        inlet_temperature=773.15,
        extraction3_flow=m_3,
        extraction3_pressure=0.4e6,
        extraction3_temperature=453.15,
        extraction1_flow=m_1,
        extraction1_pressure=2e6,
        extraction1_temperature=573.15,
        exhaust_pressure=10e3,
        generator_power=w_shaft,
    )
    out = steam_turbine(inputs, {"generator_efficiency": 1.0}, CONTEXT)
    expected = [
        (inlet.h - ext1.h) / (inlet.h - Water(p=2e6, s=inlet.s).h),
        (ext1.h - ext3.h) / (ext1.h - Water(p=0.4e6, s=ext1.s).h),
        (ext3.h - h_exh) / (ext3.h - Water(p=10e3, s=ext3.s).h),
    ]
    for number, eta in enumerate(expected, start=1):
        assert first(out, section_result_name(number)) == pytest.approx(eta, rel=REL)
    assert math.isnan(first(out, "section4_isentropic_efficiency"))
    assert first(out, "exhaust_quality") == pytest.approx(0.9, rel=REL)
    assert int(out["flags"].iloc[0]) == 0


def test_dead_state_per_interval(condensing_example):
    # An ambient measurement per interval: each row must equal a run with that T0 alone.
    inputs, _ = condensing_example
    two = pd.concat([inputs, inputs], ignore_index=True)
    t0 = np.array([283.15, 303.15])
    params = {"generator_efficiency": 0.985, "mechanical_loss_w": 0.3e6}
    out = steam_turbine(two, params, ModelContext(dead_state(t0, P0)))
    for i, t in enumerate(t0):
        alone = steam_turbine(inputs, params, ModelContext(dead_state(float(t), P0)))
        pd.testing.assert_frame_equal(out.iloc[[i]].reset_index(drop=True), alone, rtol=1e-12)
    # Exergy depends on T0, so the two rows must differ (the test is not vacuous).
    assert out["exergy_in_w"].iloc[0] != pytest.approx(out["exergy_in_w"].iloc[1], rel=1e-3)


def test_two_unknown_enthalpies_give_nan_and_input_out_of_range(condensing_example):
    inputs, _ = condensing_example
    out = steam_turbine(inputs.drop(columns="extraction1_temperature"), {}, CONTEXT)
    assert int(out["flags"].iloc[0]) == Flag.INPUT_OUT_OF_RANGE
    for column in ("exhaust_enthalpy_j_per_kg", "overall_isentropic_efficiency", "sgen_w_per_k"):
        assert math.isnan(first(out, column))
    # What does not need the enthalpies is kept.
    assert first(out, "generator_power_w") == 100e6
    assert first(out, "steam_rate_kg_per_kwh") == pytest.approx(3.6, rel=1e-12)


def test_wet_extraction_with_zero_flow_does_not_count_as_unknown(condensing_example):
    inputs, _ = condensing_example
    closed_valve = inputs.drop(columns="extraction1_temperature").assign(extraction1_flow=0.0)
    out = steam_turbine(closed_valve, {"generator_efficiency": 0.985}, CONTEXT)
    inlet = Water(p=10e6, t=773.15)
    h_exh = inlet.h - (100e6 / 0.985) / 100.0  # all 100 kg/s to the exhaust
    assert first(out, "exhaust_enthalpy_j_per_kg") == pytest.approx(h_exh, rel=REL)
    overall = (inlet.h - h_exh) / (inlet.h - Water(p=10e3, s=inlet.s).h)
    assert first(out, "overall_isentropic_efficiency") == pytest.approx(overall, rel=REL)
    # The bleed's state is unknown, so both sections around it are NaN.
    assert math.isnan(first(out, "section1_isentropic_efficiency"))
    assert math.isnan(first(out, "section2_isentropic_efficiency"))
    assert int(out["flags"].iloc[0]) == 0


def test_pressure_not_falling_along_the_ports_is_flagged_but_kept(condensing_example):
    inputs, _ = condensing_example
    swapped = inputs.assign(extraction1_pressure=12e6, extraction1_temperature=800.0)
    out = steam_turbine(swapped, {}, CONTEXT)
    assert int(out["flags"].iloc[0]) & Flag.INPUT_OUT_OF_RANGE
    assert math.isfinite(first(out, "sgen_w_per_k"))


def test_inlet_below_saturation_is_out_of_range(condensing_example):
    inputs, _ = condensing_example
    # 300 degC at 10 MPa is compressed water (T_sat = 311.0 degC, IF97 via iapws).
    assert Water(p=10e6, t=573.15).region == 1
    out = steam_turbine(inputs.assign(inlet_temperature=573.15), {}, CONTEXT)
    assert int(out["flags"].iloc[0]) == Flag.INPUT_OUT_OF_RANGE
    assert math.isnan(first(out, "exergy_in_w"))


# --- Reversible turbine -------------------------------------------------------------


@pytest.mark.parametrize("eta_gen", [1.0, 0.985])
def test_reversible_turbine(eta_gen):
    """Every port on the inlet isentrope: Sgen = 0 inside the steam path.

    Built with iapws: extraction temperature and exhaust enthalpy at s = s_in.
    Tolerance: Sgen is a difference of entropy flows of order m s = 6.6e5 W/K; float
    round-off and iapws's inversion of (p, s) leave far less than 1e-9 of that, so
    |Sgen - expected| <= 1e-9 m_in s_in (6.6e-4 W/K, i.e. 0.2 W of lost work in 100 MW).
    """
    m_in, m_1, m_exh = 100.0, 12.0, 88.0
    inlet = Water(p=10e6, t=773.15)
    ext1 = Water(p=1e6, s=inlet.s)
    exhaust = Water(p=10e3, s=inlet.s)
    assert ext1.region == 2 and exhaust.region == 4
    w_shaft = m_in * inlet.h - m_1 * ext1.h - m_exh * exhaust.h
    p_gen = eta_gen * w_shaft
    inputs = one_row(
        inlet_flow=m_in,
        inlet_pressure=10e6,
        inlet_temperature=773.15,
        extraction1_flow=m_1,
        extraction1_pressure=1e6,
        extraction1_temperature=ext1.t,
        exhaust_pressure=10e3,
        generator_power=p_gen,
    )
    out = steam_turbine(inputs, {"generator_efficiency": eta_gen}, CONTEXT)
    for column in (
        "section1_isentropic_efficiency",
        "section2_isentropic_efficiency",
        "overall_isentropic_efficiency",
        "eta_2",
    ):
        assert first(out, column) == pytest.approx(1.0, abs=REL)
    # On the turbine-generator boundary the generator loss is the only entropy source.
    expected_sgen = (w_shaft - p_gen) / T0
    assert first(out, "sgen_w_per_k") == pytest.approx(expected_sgen, abs=1e-9 * m_in * inlet.s)
    assert first(out, "eta_2_electrical") == pytest.approx(eta_gen, rel=REL)
    assert first(out, "exhaust_quality") == pytest.approx(exhaust.x, rel=REL)
    assert int(out["flags"].iloc[0]) == 0


# --- Impossible measurements ----------------------------------------------------------


def test_power_beyond_the_isentropic_drop_is_flagged():
    m = 100.0
    inlet = Water(p=10e6, t=773.15)
    isentropic_power = m * (inlet.h - Water(p=10e3, s=inlet.s).h)  # about 128 MW
    p_gen = 1.10 * isentropic_power
    inputs = one_row(
        inlet_flow=m,
        inlet_pressure=10e6,
        inlet_temperature=773.15,
        exhaust_pressure=10e3,
        generator_power=p_gen,
    )
    out = steam_turbine(inputs, {}, CONTEXT)
    w_shaft = p_gen / 0.985
    exhaust = Water(p=10e3, h=inlet.h - w_shaft / m)
    eta = w_shaft / isentropic_power
    assert first(out, "overall_isentropic_efficiency") == pytest.approx(eta, rel=REL)
    sgen = m * (exhaust.s - inlet.s) + (w_shaft - p_gen) / T0
    assert sgen < 0
    assert first(out, "sgen_w_per_k") == pytest.approx(sgen, rel=REL)
    assert int(out["flags"].iloc[0]) == (
        Flag.ISENTROPIC_ABOVE_ONE | Flag.NEGATIVE_ENTROPY_GENERATION
    )


# --- Generator model --------------------------------------------------------------------


def test_shaft_power_loss_curve_worked_by_hand():
    # 80 MW out of a 100 MW generator, 0.5 MW constant and 1.0 MW load loss at rated:
    # 80 + 0.5 + 1.0 * 0.8^2 + 0.2 (bearings) = 81.34 MW.
    w = shaft_power(
        80e6,
        rated_power_w=100e6,
        no_load_loss_w=0.5e6,
        load_loss_at_rated_w=1.0e6,
        mechanical_loss_w=0.2e6,
    )
    assert w == pytest.approx(81.34e6, rel=1e-12)


def test_shaft_power_keeps_the_input_type():
    index = pd.date_range("2024-03-01", periods=2, freq="min", tz="UTC")
    series = shaft_power(pd.Series([98.5e6, np.nan], index=index), generator_efficiency=0.985)
    assert isinstance(series, pd.Series)
    assert series.index.equals(index)
    assert series.iloc[0] == pytest.approx(100e6, rel=1e-12)
    assert math.isnan(series.iloc[1])
    assert shaft_power([98.5e6], 0.985).tolist() == pytest.approx([100e6], rel=1e-12)
    assert isinstance(shaft_power(np.array([1.0, 2.0]), 0.5), np.ndarray)
    assert shaft_power(98.5e6, 0.985) == pytest.approx(100e6, rel=1e-12)


def test_loss_curve_parameters_reach_the_model(condensing_example):
    inputs, _ = condensing_example
    params = {
        "generator_rated_power_w": 120e6,
        "generator_no_load_loss_w": 0.6e6,
        "generator_load_loss_at_rated_w": 1.2e6,
    }
    out = steam_turbine(inputs, params, CONTEXT)
    expected = 100e6 + 0.6e6 + 1.2e6 * (100 / 120) ** 2
    assert first(out, "shaft_power_w") == pytest.approx(expected, rel=1e-12)


# --- Catalogue entry ----------------------------------------------------------------------


def test_catalogue_entry_validates_a_configuration():
    bound = [
        "inlet_flow",
        "inlet_pressure",
        "inlet_temperature",
        "extraction1_flow",
        "extraction1_pressure",
        "exhaust_pressure",
        "generator_power",
    ]
    assert KIND.validate(bound, {"generator_efficiency": 0.97}, has_fuel=False) == []
    problems = [str(p) for p in KIND.validate(bound[:-1], {}, has_fuel=False)]
    assert problems == ["role 'generator_power': required but not bound to a tag"]
    problems = [str(p) for p in KIND.validate(bound, {"generator_efficiency": 1.2}, False)]
    assert problems == ["parameter 'generator_efficiency': 1.2 is above the maximum 1.0"]
    assert [r.name for r in RESULTS].count("section10_isentropic_efficiency") == 1


def test_port_without_pressure_is_a_configuration_error(condensing_example):
    inputs, _ = condensing_example
    with pytest.raises(ValueError, match="required role 'extraction1_pressure' is not bound"):
        steam_turbine(inputs.drop(columns="extraction1_pressure"), {}, CONTEXT)


# --- Property tests (hypothesis) ---------------------------------------------------------


@st.composite
def turbines(draw):
    """A plausible extraction turbine: inlet, one superheated bleed, wet exhaust.

    The bleed and exhaust states follow from drawn section efficiencies (iapws), the
    output from the energy balance with dead-state-relative enthalpies (model Notes), so
    that the model must close the exhaust back onto the drawn state.
    """
    p_in = draw(st.floats(3e6, 16e6))
    t_in = draw(st.floats(723.15, 838.15))
    p_1 = draw(st.floats(0.3e6, 0.25 * p_in))
    p_exh = draw(st.floats(4e3, 20e3))
    eta_1 = draw(st.floats(0.6, 0.95))
    eta_2 = draw(st.floats(0.6, 0.95))
    m_in = draw(st.floats(5.0, 500.0))
    m_1 = m_in * draw(st.floats(0.0, 0.3))
    inlet = Water(p=p_in, t=t_in)
    h_1 = inlet.h - eta_1 * (inlet.h - Water(p=p_1, s=inlet.s).h)
    bleed = Water(p=p_1, h=h_1)
    assume(bleed.region == 2 and bleed.t > Water(p=p_1, x=1.0).t + 1.0)
    bleed = Water(p=p_1, t=bleed.t)  # the model sees the bleed by (p, T)
    h_exh = bleed.h - eta_2 * (bleed.h - Water(p=p_exh, s=bleed.s).h)
    exhaust = Water(p=p_exh, h=h_exh)
    assume(exhaust.region == 4)
    eta_gen = draw(st.floats(0.95, 1.0))
    mech = draw(st.floats(0.0, 1e6))
    # None: exhaust flow by mass balance; otherwise measured, with a 5 % error or none.
    m_exh_factor = draw(st.sampled_from([None, 0.95, 1.0, 1.05]))
    m_exh = m_in - m_1 if m_exh_factor is None else m_exh_factor * (m_in - m_1)
    t0 = draw(st.floats(278.15, 313.15))
    dead = Water(p=P0, t=t0)
    w_shaft = m_in * (inlet.h - dead.h) - m_1 * (bleed.h - dead.h) - m_exh * (h_exh - dead.h)
    assume(w_shaft > mech)
    p_gen = (w_shaft - mech) * eta_gen
    columns = {
        "inlet_flow": m_in,
        "inlet_pressure": p_in,
        "inlet_temperature": t_in,
        "extraction1_flow": m_1,
        "extraction1_pressure": p_1,
        "extraction1_temperature": bleed.t,
        "exhaust_pressure": p_exh,
        "generator_power": p_gen,
    }
    if m_exh_factor is not None:
        columns["exhaust_flow"] = m_exh
    params = {"generator_efficiency": eta_gen, "mechanical_loss_w": mech}
    truth = {
        "inlet": inlet,
        "bleed": bleed,
        "exhaust": exhaust,
        "eta_1": eta_1,
        "eta_2": eta_2,
        "t0": t0,
        "dead": dead,
        "w_shaft": w_shaft,
        "m_exh": m_exh,
        "mass_balanced": m_exh_factor in (None, 1.0),
    }
    return one_row(**columns), params, truth


_PROPERTY = settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.filter_too_much]
)


@_PROPERTY
@given(turbines())
def test_energy_balance_closes_and_gouy_stodola_holds(case):
    inputs, params, truth = case
    out = steam_turbine(inputs, params, ModelContext(dead_state(truth["t0"], P0)))
    row = inputs.iloc[0]
    dead, inlet, bleed = truth["dead"], truth["inlet"], truth["bleed"]
    h_exh = first(out, "exhaust_enthalpy_j_per_kg")
    # First law with iapws inlet and bleed enthalpies (dead-state reference, model
    # Notes): m_in (h_in - h0) - m_1 (h_1 - h0) - m_exh (h_exh - h0) = W.
    closure = (
        row["inlet_flow"] * (inlet.h - dead.h)
        - row["extraction1_flow"] * (bleed.h - dead.h)
        - truth["m_exh"] * (h_exh - dead.h)
        - truth["w_shaft"]
    )
    assert abs(closure) <= REL * truth["w_shaft"]
    assert h_exh == pytest.approx(truth["exhaust"].h, rel=REL)
    assert first(out, "shaft_power_w") == pytest.approx(truth["w_shaft"], rel=REL)
    assert first(out, "section1_isentropic_efficiency") == pytest.approx(truth["eta_1"], rel=REL)
    assert first(out, "section2_isentropic_efficiency") == pytest.approx(truth["eta_2"], rel=REL)
    # Gouy-Stodola: the exergy balance and the entropy balance agree (Bejan et al. 1996,
    # Eq. 3.24), relative to the exergy drop, the scale of the terms that cancel.
    destroyed = first(out, "exergy_destroyed_and_lost_w")
    lost = first(out, "lost_work_w")
    assert abs(lost - destroyed) <= REL * abs(first(out, "exergy_in_w"))
    assert lost == pytest.approx(truth["t0"] * first(out, "sgen_w_per_k"), rel=1e-12)
    if truth["mass_balanced"]:
        assert lost == pytest.approx(destroyed, rel=REL)
        assert destroyed > 0
        assert 0 < first(out, "eta_2_electrical") <= first(out, "eta_2") < 1
        assert int(out["flags"].iloc[0]) == 0
    else:
        # A 5 % error on the measured exhaust flow exceeds the 2 % tolerance.
        assert abs(first(out, "mass_balance_error")) > 0.02
        assert int(out["flags"].iloc[0]) & Flag.ENERGY_BALANCE_OPEN


_COLUMNS = (
    "inlet_flow",
    "inlet_pressure",
    "inlet_temperature",
    "extraction1_flow",
    "extraction1_pressure",
    "extraction1_temperature",
    "exhaust_pressure",
    "generator_power",
)


@settings(max_examples=40, deadline=None)
@given(
    bad_row=st.integers(0, 5),
    bad_column=st.sampled_from(_COLUMNS),
    bad_value=st.sampled_from([np.nan, -1.0, np.inf]),
)
def test_a_bad_row_affects_only_itself_and_the_index_is_kept(
    condensing_example, bad_row, bad_column, bad_value
):
    # A negative generator output is a legitimate reading (motoring), not a bad input.
    assume(not (bad_column == "generator_power" and bad_value == -1.0))
    base, _ = condensing_example
    index = pd.date_range("2024-03-01 00:00", periods=6, freq="min", tz="UTC")
    good = pd.DataFrame(np.repeat(base.to_numpy(), 6, axis=0), columns=base.columns, index=index)
    # Vary the load a little so that rows differ.
    good["generator_power"] *= np.linspace(0.9, 1.0, 6)
    good["inlet_flow"] *= np.linspace(0.9, 1.0, 6)
    bad = good.copy()
    bad.iloc[bad_row, bad.columns.get_loc(bad_column)] = bad_value
    expected = steam_turbine(good, {}, CONTEXT)
    out = steam_turbine(bad, {}, CONTEXT)
    assert out.index.equals(index)
    others = [i for i in range(6) if i != bad_row]
    pd.testing.assert_frame_equal(out.iloc[others], expected.iloc[others])
    assert int(out["flags"].iloc[bad_row]) & Flag.INPUT_OUT_OF_RANGE
    assert math.isnan(out["sgen_w_per_k"].iloc[bad_row])
