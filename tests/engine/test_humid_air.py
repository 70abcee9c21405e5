"""Humid air as an ideal-gas mixture (engine/humid_air.py).

Outside references:
- CoolProp's humid-air functions ``HAPropsSI`` (real-gas virial mixture model of
  ASHRAE RP-1485, with the enhancement factor): isentropic compression, specific
  volume, enthalpy differences within 0.2 %; the humidity ratio within 0.6 % (the ideal
  mixture leaves out the enhancement factor, about 1.004 at one atmosphere);
- Cantera 3.2 with GRI-Mech 3.0 (``gri30.yaml``: independent NASA fits of the same
  species as an ideal-gas mixture), isentropic compression within 0.05 %;
- closed forms of ideal-gas compression (Cengel & Boles, Thermodynamics, 9th ed., Ch. 7;
  from memory): T2s = T1 (p2/p1)^(R/cp) for constant cp, checked over a small pressure
  step where cp is constant to 1e-6;
- CoolProp HEOS dry air's ideal-gas heat capacity (``Cp0mass``, Lemmon et al. 2000) for
  cp within 0.1 %.
"""

from __future__ import annotations

import cantera as ct
import numpy as np
import pandas as pd
import pytest
from CoolProp.CoolProp import HAPropsSI, PropsSI

from engine import humid_air

# (T1 [K], p1 [Pa], p2 [Pa], humidity ratio [kg/kg]); every intake unsaturated.
COMPRESSIONS = [
    (263.15, 1.0e5, 8.0e5, 0.0),
    (293.15, 1.0e5, 3.0e5, 0.01),
    (293.15, 0.95e5, 10.0e5, 0.01),
    (313.15, 1.0e5, 8.0e5, 0.02),
    (293.15, 3.0e5, 9.0e5, 0.0),
]


@pytest.mark.parametrize("t1, p1, p2, w", COMPRESSIONS)
def test_isentropic_compression_against_hapropssi(t1, p1, p2, w):
    # HAPropsSI: entropy per kg dry air ("Sda") is the input it inverts on.
    s1 = HAPropsSI("Sda", "T", t1, "P", p1, "W", w)
    t2 = HAPropsSI("T", "P", p2, "Sda", s1, "W", w)
    dh = HAPropsSI("Hha", "T", t2, "P", p2, "W", w) - HAPropsSI("Hha", "T", t1, "P", p1, "W", w)
    t2_model = humid_air.isentropic_temperature(t1, p1, p2, w)[0]
    dh_model = (humid_air.enthalpy_j_per_kg(t2_model, w) - humid_air.enthalpy_j_per_kg(t1, w))[0]
    assert t2_model == pytest.approx(t2, rel=2e-3)
    assert dh_model == pytest.approx(dh, rel=2e-3)


@pytest.mark.parametrize("t1, p1, p2, w", COMPRESSIONS)
def test_isentropic_compression_against_cantera_gri30(t1, p1, p2, w):
    gas = ct.Solution("gri30.yaml")
    x = humid_air.mole_fractions(w)
    composition = {("AR" if k == "Ar" else k): float(v[0]) for k, v in x.items()}
    gas.TPX = t1, p1, composition
    h1, s1 = gas.enthalpy_mass, gas.entropy_mass
    gas.SP = s1, p2
    t2_model = humid_air.isentropic_temperature(t1, p1, p2, w)[0]
    dh_model = (humid_air.enthalpy_j_per_kg(t2_model, w) - humid_air.enthalpy_j_per_kg(t1, w))[0]
    assert t2_model == pytest.approx(gas.T, rel=5e-4)
    assert dh_model == pytest.approx(gas.enthalpy_mass - h1, rel=5e-4)
    # Same ideal-gas model class: the entropy change the model computes is ~0.
    s_change = humid_air.entropy_j_per_kg_k(t2_model, p2, w) - humid_air.entropy_j_per_kg_k(
        t1, p1, w
    )
    assert s_change[0] == pytest.approx(0.0, abs=1e-8)


def test_closed_form_over_a_small_pressure_step():
    # Over 1 % of pressure (0.8 K of temperature rise) cp is constant enough that the
    # constant-cp form T2s = T1 (p2/p1)^(R/cp), with cp at the mean temperature, holds to
    # ~1e-6 of the temperature rise (the error is of third order in the rise).
    t1, p1, p2, w = 293.15, 1.0e5, 1.01e5, 0.008
    r = humid_air.gas_constant_j_per_kg_k(w)[0]
    expected = t1 * (p2 / p1) ** (r / humid_air.cp_j_per_kg_k(t1, w)[0])
    cp_mean = humid_air.cp_j_per_kg_k(0.5 * (t1 + expected), w)[0]
    expected = t1 * (p2 / p1) ** (r / cp_mean)
    rise = humid_air.isentropic_temperature(t1, p1, p2, w)[0] - t1
    assert rise == pytest.approx(expected - t1, rel=1e-6)


@pytest.mark.parametrize(
    "t, p, w", [(273.15, 1.0e5, 0.002), (293.15, 0.9e5, 0.01), (320.0, 1.1e5, 0.03)]
)
def test_specific_volume_at_atmospheric_pressure_against_hapropssi(t, p, w):
    v = HAPropsSI("Vha", "T", t, "P", p, "W", w)
    assert 1.0 / humid_air.density_kg_per_m3(t, p, w)[0] == pytest.approx(v, rel=2e-3)


@pytest.mark.parametrize("t1, t2", [(273.15, 373.15), (293.15, 500.0), (300.0, 600.0)])
def test_enthalpy_difference_at_one_atmosphere_against_hapropssi(t1, t2):
    w = 0.005
    dh = HAPropsSI("Hha", "T", t2, "P", 101325, "W", w) - HAPropsSI(
        "Hha", "T", t1, "P", 101325, "W", w
    )
    model = humid_air.enthalpy_j_per_kg(t2, w) - humid_air.enthalpy_j_per_kg(t1, w)
    assert model[0] == pytest.approx(dh, rel=2e-3)


@pytest.mark.parametrize("t", [250.0, 300.0, 450.0, 600.0])
def test_dry_air_cp_against_the_ideal_gas_part_of_the_reference_equation(t):
    cp0 = PropsSI("Cp0mass", "T", t, "P", 1e5, "Air")
    assert humid_air.cp_j_per_kg_k(t, 0.0)[0] == pytest.approx(cp0, rel=1e-3)


@pytest.mark.parametrize(
    "t, rh, p",
    [
        (298.15, 0.5, 101325.0),
        (308.15, 0.8, 101325.0),
        (268.15, 0.7, 101325.0),
        (293.15, 0.6, 95000.0),
    ],
)
def test_humidity_ratio_against_hapropssi(t, rh, p):
    # The ideal mixture has no enhancement factor: 0.4-0.5 % lower than HAPropsSI.
    w = HAPropsSI("W", "T", t, "P", p, "R", rh)
    model = humid_air.humidity_ratio(rh, t, p)[0]
    assert model == pytest.approx(w, rel=6e-3)
    assert model < w


def test_composition_and_gas_constant():
    x = humid_air.mole_fractions([0.0, 0.01])
    assert sum(x.values()) == pytest.approx(np.ones(2), rel=1e-15)
    # Water mole fraction by hand: w / (w + M_w/M_da) with M_w = 18.015, M_da = 28.965 g/mol.
    m_w, m_da = 18.015e-3, humid_air.molar_mass_kg_per_mol(0.0)[0]
    assert m_da == pytest.approx(28.965e-3, rel=1e-4)
    assert x["H2O"][1] == pytest.approx(0.01 / (0.01 + m_w / m_da), rel=1e-4)
    # Dry air: R / M = 8.314462618 / 0.028965 = 287.05 J/(kg K) (common value).
    assert humid_air.gas_constant_j_per_kg_k(0.0)[0] == pytest.approx(287.05, rel=2e-4)


def test_bad_rows_are_nan_and_series_are_accepted():
    t = pd.Series([293.15, np.nan, 150.0, 293.15])
    w = pd.Series([0.01, 0.01, 0.01, -0.1])
    out = humid_air.isentropic_temperature(t, 1e5, 8e5, w)
    assert np.isfinite(out[0]) and np.isnan(out[1:]).all()
    assert np.isnan(humid_air.entropy_j_per_kg_k(293.15, [-1.0, 0.0], 0.0)).all()
    assert humid_air.dry_air_partial_pressure_pa(1e5, 293.15, [0.0, 1.5]).tolist()[0] == 1e5
    assert np.isnan(humid_air.dry_air_partial_pressure_pa(1e5, 293.15, 1.5)[0])
