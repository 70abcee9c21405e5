"""Air compressor (engine/units/air_compressor.py).

Outside references:
- closed forms of ideal-gas compression (Cengel & Boles, "Thermodynamics: An
  Engineering Approach", 9th ed., Ch. 7, the compressor-work equations numbered 7-57 and
  7-58 in that edition, from memory): isentropic w_s = k R T1 / (k - 1)
  [(p2/p1)^((k-1)/k) - 1] with k at the mean temperature (their recommended practice)
  and isothermal w_T = R T1 ln(p2/p1), written out here;
- k from the ideal-gas part of the dry-air reference equation in CoolProp HEOS
  (``Cp0mass``, Lemmon et al. 2000), not from the model's polynomials;
- the isentropic compression of humid air by Cantera 3.2 / GRI-Mech 3.0 for the
  property test's consistent inputs;
- unit conversions by hand: 1 m^3/min = 1/60 m^3/s; 1 ft = 0.3048 m exactly, so
  100 cfm = 2.8316846592 m^3/min;
- the dry-air molar mass 28.965 g/mol (U.S. Standard Atmosphere 1976, Table 3; from
  memory), R = 8.314462618 J/(mol K) (CODATA 2018, exact);
- Gouy-Stodola (Bejan, Tsatsaronis & Moran 1996, Eq. 3.24): T0 Sgen equals the exergy
  destroyed, two routes in the model, to 1e-9.
"""

from __future__ import annotations

import doctest
import math

import cantera as ct
import numpy as np
import pandas as pd
import pytest
from CoolProp.CoolProp import PropsSI
from hypothesis import given, settings
from hypothesis import strategies as st

import engine.units.air_compressor as air_compressor_module
from engine.catalogue import ModelContext, get_kind
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.units.air_compressor import KIND, air_compressor_performance

R_UNIVERSAL = 8.314462618  # J/(mol K), CODATA 2018 (exact)
M_DRY_AIR = 28.965e-3  # kg/mol, U.S. Standard Atmosphere 1976 (from memory)
R_AIR = R_UNIVERSAL / M_DRY_AIR

# Our own scenario: a fictional oil-injected screw compressor, 90 kW, 15 m^3/min FAD
# at the ISO 1217 reference, 8 bar(a), drawing dry air at 20 degC and 1 bar, with the
# dead state equal to the intake.
SCREW = {
    "electric_power": 90e3,
    "inlet_temperature": 293.15,
    "inlet_pressure": 1.0e5,
    "inlet_relative_humidity": 0.0,
    "discharge_pressure": 8.0e5,
    "free_air_delivery": 15.0 / 60.0,
}


def _run(rows, params=None, t0=293.15, p0=1.0e5, index=None) -> pd.DataFrame:
    rows = [rows] if isinstance(rows, dict) else rows
    context = ModelContext(dead=dead_state(t0, p0))
    return air_compressor_performance(pd.DataFrame(rows, index=index), params or {}, context)


def _closed_form_isentropic_work(t1: float, ratio: float) -> float:
    """w_s = k R T1 / (k - 1) [r^((k-1)/k) - 1], k at the mean temperature (iterated)."""
    t2 = t1 * ratio ** (2 / 7)
    for _ in range(6):
        cp = PropsSI("Cp0mass", "T", 0.5 * (t1 + t2), "P", 1e5, "Air")
        k = cp / (cp - R_AIR)
        t2 = t1 * ratio ** ((k - 1) / k)
    return k * R_AIR * t1 / (k - 1) * (ratio ** ((k - 1) / k) - 1)


def test_worked_example_against_closed_forms():
    out = _run(SCREW).iloc[0]
    # Mass flow: p V M / (R T) = 1e5 * 0.25 * 0.028965 / (8.314462618 * 293.15).
    mass = 1e5 * 0.25 * M_DRY_AIR / (R_UNIVERSAL * 293.15)
    assert out["air_mass_flow_kg_per_s"] == pytest.approx(mass, rel=1e-4)
    assert out["inlet_volume_flow_m3_per_s"] == pytest.approx(0.25, rel=1e-12)
    assert out["pressure_ratio"] == pytest.approx(8.0, rel=1e-15)
    # Isothermal: m R T1 ln 8 (exact for an ideal gas; 1e-4 from the molar mass digits).
    isothermal = mass * R_AIR * 293.15 * math.log(8.0)
    assert out["isothermal_power_w"] == pytest.approx(isothermal, rel=2e-4)
    assert out["isothermal_efficiency"] == pytest.approx(isothermal / 90e3, rel=2e-4)
    # Isentropic: constant-k closed form with k at the mean temperature, which the
    # variable-cp model exceeds by ~0.1 % at r = 8 (cp rises with T).
    isentropic = mass * _closed_form_isentropic_work(293.15, 8.0)
    assert out["isentropic_power_w"] == pytest.approx(isentropic, rel=2.5e-3)
    assert out["isentropic_efficiency"] == pytest.approx(isentropic / 90e3, rel=2.5e-3)
    # Intake at the dead state: the compressed air's exergy at T0 is the isothermal work.
    assert out["compressed_air_exergy_w"] == pytest.approx(out["isothermal_power_w"], rel=1e-12)
    assert out["eta_2"] == pytest.approx(out["isothermal_efficiency"], rel=1e-12)
    # All the input leaves as heat (intake and delivery both at T0); 90 % recoverable.
    assert out["heat_rejected_w"] == pytest.approx(90e3, rel=1e-12)
    assert out["recoverable_heat_w"] == pytest.approx(81e3, rel=1e-12)
    assert out["recoverable_heat_share"] == pytest.approx(0.9, rel=1e-12)
    assert out["exergy_destroyed_w"] == pytest.approx(90e3 - out["compressed_air_exergy_w"])
    assert out["lost_work_w"] == pytest.approx(out["exergy_destroyed_w"], rel=1e-9)
    assert int(out["flags"]) == Flag.NONE


def test_specific_power_conversions_by_hand():
    out = _run(SCREW).iloc[0]
    # 90 kW / 0.25 m^3/s = 360,000 J/m^3 (W per m^3/s).
    assert out["specific_power_j_per_m3"] == pytest.approx(360e3, rel=1e-12)
    # kW per m^3/min: 90 kW / 15 m^3/min = 6.0; the documented conversion is / 60,000.
    assert out["specific_power_j_per_m3"] / 60e3 == pytest.approx(6.0, rel=1e-12)
    # kW per 100 cfm: 100 cfm = 100 * 0.3048^3 m^3/min = 2.8316846592 m^3/min, so
    # 6.0 kW per m^3/min * 2.8316846592 = 16.9901079552 kW per 100 cfm; the documented
    # conversion is * 0.047194744320 / 1000.
    assert pytest.approx(2.8316846592, rel=1e-14) == 100 * 0.3048**3
    kw_per_100_cfm = out["specific_power_j_per_m3"] * 0.047194744320 / 1000
    assert kw_per_100_cfm == pytest.approx(16.9901079552, rel=1e-10)


@pytest.mark.parametrize("t1, ratio", [(293.15, 3.0), (303.15, 10.0), (263.15, 8.0)])
def test_isentropic_and_isothermal_power_across_conditions(t1, ratio):
    row = dict(SCREW, inlet_temperature=t1, discharge_pressure=ratio * 1e5)
    out = _run(row, t0=t1).iloc[0]
    mass = out["air_mass_flow_kg_per_s"]
    assert out["isothermal_power_w"] == pytest.approx(mass * R_AIR * t1 * math.log(ratio), rel=2e-4)
    assert out["isentropic_power_w"] == pytest.approx(
        mass * _closed_form_isentropic_work(t1, ratio), rel=2.5e-3
    )
    # The isentropic discharge temperature of the closed form, T1 r^((k-1)/k).
    assert out["isentropic_discharge_temperature_k"] > t1 * ratio ** (1 / 3.6)


def test_reversible_isothermal_compressor_generates_no_entropy():
    # Input equal to the isothermal work with the intake at the dead state: reversible.
    reference = _run(SCREW).iloc[0]
    row = dict(SCREW, electric_power=reference["isothermal_power_w"])
    out = _run(row).iloc[0]
    assert out["eta_2"] == pytest.approx(1.0, rel=1e-12)
    assert out["sgen_w_per_k"] == pytest.approx(0.0, abs=1e-9 * 90e3 / 293.15)
    # It beats an isentropic compressor: eta_s > 1 is flagged (an adiabatic machine could
    # not), the second law is not.
    assert Flag(int(out["flags"])) == Flag.ISENTROPIC_ABOVE_ONE


def test_input_below_the_isothermal_work_is_impossible():
    out = _run(dict(SCREW, electric_power=40e3)).iloc[0]
    assert out["eta_2"] > 1
    assert out["sgen_w_per_k"] < 0
    assert Flag(int(out["flags"])) == (
        Flag.ISENTROPIC_ABOVE_ONE | Flag.ABOVE_CARNOT | Flag.NEGATIVE_ENTROPY_GENERATION
    )


def test_discharge_air_carrying_more_energy_than_the_input_opens_the_balance():
    # m cp dT at 650 K discharge: 0.297 kg/s * ~1030 J/(kg K) * 357 K = ~109 kW, above
    # the 90 kW input by more than the 5 % tolerance.
    out = _run(dict(SCREW, discharge_temperature=650.0)).iloc[0]
    assert out["air_enthalpy_rise_w"] > 90e3 * 1.05
    assert Flag(int(out["flags"])) == Flag.ENERGY_BALANCE_OPEN
    ok = _run(dict(SCREW, discharge_temperature=353.15)).iloc[0]  # 80 degC, oil-injected
    assert 0 < ok["air_enthalpy_rise_w"] < 90e3
    assert int(ok["flags"]) == Flag.NONE


def test_fad_reference_with_humidity_uses_the_dry_air_partial_pressure():
    # FAD stated at 15 degC, 101.325 kPa, 60 % (a site convention of our own); intake
    # humid at the same 60 %. Dry air: (p - 0.6 p_sat(15 degC)) V / (R T) with p_sat =
    # 1705.8 Pa (IAPWS-IF97; handbook value ~1.705 kPa, from memory).
    params = {
        "fad_reference_pressure_pa": 101325.0,
        "fad_reference_temperature_k": 288.15,
        "fad_reference_relative_humidity": 0.6,
    }
    row = dict(
        SCREW, inlet_temperature=288.15, inlet_pressure=101325.0, inlet_relative_humidity=0.6
    )
    out = _run(row, params, t0=288.15, p0=101325.0).iloc[0]
    p_sat = PropsSI("P", "T", 288.15, "Q", 0, "IF97::Water")
    assert p_sat == pytest.approx(1705.8, rel=1e-3)
    n_dry = (101325.0 - 0.6 * p_sat) * 0.25 / (R_UNIVERSAL * 288.15)
    w = out["inlet_humidity_ratio"]
    assert w == pytest.approx(0.621945 * 0.6 * p_sat / (101325.0 - 0.6 * p_sat), rel=2e-4)
    assert out["air_mass_flow_kg_per_s"] == pytest.approx(n_dry * M_DRY_AIR * (1 + w), rel=2e-4)
    # Reference equal to the intake state: the FAD is the actual intake volume flow.
    assert out["inlet_volume_flow_m3_per_s"] == pytest.approx(0.25, rel=1e-9)


def test_mass_flow_alternative_and_mass_wins_where_both_are_bound():
    by_fad = _run(SCREW).iloc[0]
    row = {k: v for k, v in SCREW.items() if k != "free_air_delivery"}
    by_mass = _run(dict(row, air_mass_flow=by_fad["air_mass_flow_kg_per_s"])).iloc[0]
    assert by_mass["free_air_delivery_m3_per_s"] == pytest.approx(0.25, rel=1e-12)
    both = _run(dict(SCREW, air_mass_flow=0.5)).iloc[0]
    assert both["air_mass_flow_kg_per_s"] == 0.5
    fallback = _run([dict(SCREW, air_mass_flow=np.nan)]).iloc[0]
    assert fallback["free_air_delivery_m3_per_s"] == pytest.approx(0.25, rel=1e-12)


def test_humidity_sources():
    base = {k: v for k, v in SCREW.items() if k != "inlet_relative_humidity"}
    assumed = _run(base).iloc[0]
    explicit = _run(dict(base, inlet_relative_humidity=0.6)).iloc[0]
    assert assumed["inlet_humidity_ratio"] == explicit["inlet_humidity_ratio"]
    assert (
        _run(base, {"assumed_inlet_relative_humidity": 0.0})["inlet_humidity_ratio"].iloc[0] == 0.0
    )
    ratio = _run(dict(base, inlet_humidity_ratio=0.004, inlet_relative_humidity=0.9)).iloc[0]
    assert ratio["inlet_humidity_ratio"] == 0.004
    # Humid air at 60 %: more moles per m^3 of dry-air FAD, so more isothermal work.
    assert explicit["isothermal_power_w"] > assumed["isothermal_power_w"] * 0.999
    assert explicit["isothermal_power_w"] > _run(SCREW)["isothermal_power_w"].iloc[0]


@pytest.mark.parametrize(
    "column, value",
    [
        ("inlet_relative_humidity", 60.0),  # a percentage passed as a fraction
        ("inlet_temperature", 20.0),  # degC passed as K, below the polynomials' 200 K
        ("discharge_pressure", 0.0),
        ("electric_power", np.nan),
        ("free_air_delivery", -0.1),
    ],
)
def test_bad_inputs_give_nan_row_with_flag(column, value):
    out = _run([dict(SCREW, **{column: value}), dict(SCREW)])
    assert out["flags"].tolist() == [int(Flag.INPUT_OUT_OF_RANGE), 0]
    assert out.drop(columns="flags").iloc[0].isna().all()
    pd.testing.assert_series_equal(out.iloc[1], _run(SCREW).iloc[0], check_names=False)


def test_unloaded_compressor_gives_nan_specific_power_without_flag():
    out = _run(dict(SCREW, free_air_delivery=0.0, electric_power=25e3)).iloc[0]
    assert np.isnan(out["specific_power_j_per_m3"])
    assert out["isothermal_efficiency"] == 0.0
    assert int(out["flags"]) == Flag.NONE


def test_configuration_error_without_a_flow():
    row = {k: v for k, v in SCREW.items() if k != "free_air_delivery"}
    with pytest.raises(ValueError, match=r"needs free_air_delivery or air_mass_flow"):
        _run(row)


def test_catalogue_entry_and_columns():
    kind = get_kind("air_compressor")
    assert kind is KIND
    required = ["electric_power", "inlet_temperature", "discharge_pressure", "air_mass_flow"]
    assert kind.validate(required, {}, False) == []
    assert [str(p) for p in kind.validate(required[:3], {}, False)] == [
        "roles 'free_air_delivery' or 'air_mass_flow': bind at least one of them"
    ]
    index = pd.date_range("2026-03-02", periods=2, freq="min", tz="UTC")
    out = _run([SCREW, SCREW], index=index)
    assert out.index.equals(index)
    assert list(out.columns) == [r.name for r in KIND.results] + ["flags"]
    assert out["flags"].dtype == np.int64


def test_docstring_example_runs():
    result = doctest.testmod(air_compressor_module)
    assert (result.failed, result.attempted) == (0, 7)


_GRI = ct.Solution("gri30.yaml")
_DRY = {"N2": 0.780870, "O2": 0.209476, "AR": 0.00934, "CO2": 0.000314}  # US Std Atm 1976


def _humid(w: float) -> dict[str, float]:
    x_water = w / (w + 18.015e-3 / M_DRY_AIR)
    composition = {k: v * (1 - x_water) for k, v in _DRY.items()}
    composition["H2O"] = x_water
    return composition


def _cantera_isentropic_work(t1: float, p1: float, p2: float, w: float) -> float:
    """Isentropic work per kg humid air, Cantera GRI-Mech 3.0 ideal gas."""
    _GRI.TPX = t1, p1, _humid(w)
    h1, s1 = _GRI.enthalpy_mass, _GRI.entropy_mass
    _GRI.SP = s1, p2
    return _GRI.enthalpy_mass - h1


def _cantera_enthalpy_change(t1: float, t2: float, w: float) -> float:
    """h(T2) - h(T1) per kg humid air, Cantera GRI-Mech 3.0 ideal gas."""
    _GRI.TPX = t1, 1e5, _humid(w)
    h1 = _GRI.enthalpy_mass
    _GRI.TPX = t2, 1e5, _humid(w)
    return _GRI.enthalpy_mass - h1


@settings(max_examples=60, deadline=None)
@given(
    t1=st.floats(255.0, 318.0),
    rh=st.floats(0.0, 1.0),
    ratio=st.floats(1.5, 12.0),
    fad=st.floats(0.01, 5.0),
    share=st.floats(0.3, 0.99),
    t0=st.floats(260.0, 315.0),
)
def test_property_balances_and_bounds(t1, rh, ratio, fad, share, t0):
    # A consistent compressor: its input exceeds the isentropic work (from Cantera), so
    # no exergy can be created (see the module notes).
    row = dict(
        SCREW,
        inlet_temperature=t1,
        inlet_relative_humidity=rh,
        discharge_pressure=ratio * 1.0e5,
        free_air_delivery=fad,
        electric_power=1.0,
    )
    probe = _run(row, t0=t0).iloc[0]
    w, mass = probe["inlet_humidity_ratio"], probe["air_mass_flow_kg_per_s"]
    power = mass * _cantera_isentropic_work(t1, 1.0e5, ratio * 1.0e5, w) / share
    out = _run(dict(row, electric_power=power), t0=t0).iloc[0]
    # Energy balance closes: input = enthalpy the air gains from intake to delivery at
    # T0 (Cantera, independent polynomials) + heat rejected. Tolerance 0.5 % of that
    # enthalpy term: GRI-Mech 3.0's polynomials start at 300 K (from memory) and are
    # extrapolated below, where they differ from NASA TM-4513's by up to ~0.4 % in cp.
    gained = mass * _cantera_enthalpy_change(t1, t0, w)
    assert out["heat_rejected_w"] + gained == pytest.approx(
        power, abs=5e-3 * abs(gained) + 1e-9 * power
    )
    # Gouy-Stodola, two routes.
    assert out["lost_work_w"] == pytest.approx(
        out["exergy_destroyed_w"], rel=1e-9, abs=1e-9 * power
    )
    assert out["eta_2"] <= 1.0
    assert out["isentropic_efficiency"] <= 1.0
    assert out["sgen_w_per_k"] >= 0.0
    assert int(out["flags"]) == Flag.NONE
