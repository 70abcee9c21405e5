"""Refrigerant states through CoolProp HEOS (engine/fluids.py).

Outside references:
- saturation values of R134a, R717 (ammonia) and R744 (CO2) from the NIST Chemistry
  WebBook fluid tables (reference equations of Tillner-Roth & Baehr 1994 for R134a,
  Tillner-Roth, Harms-Watzenberg & Baehr 1993 for ammonia, Span & Wagner 1996 for CO2),
  values from memory, to the 4-5 digits they are quoted with;
- CoolProp's PropsSI called directly, element by element, for the vectorisation and
  failure handling (the reference library itself, outside the wrapper under test);
- consistency that must hold for any equation of state: (p, h) and (p, s) routes
  returning the (p, T) state, the lever rule inside the dome.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from CoolProp.CoolProp import PropsSI

from engine import fluids

# NIST Chemistry WebBook, saturation tables (from memory): (designation, T [K], p_sat
# [Pa], h_liquid [J/kg], h_vapour [J/kg]); enthalpies on the IIR reference (200 kJ/kg
# for the saturated liquid at 0 degC) except ammonia, whose default in CoolProp is the
# same as the WebBook's for that fluid. Tolerances: 5e-4 in pressure (the quoted digits,
# from memory, and for ammonia a newer reference equation in CoolProp 8 than the one the
# remembered table came from) and 10 J/kg in enthalpy (the last quoted digit).
NIST_WEBBOOK_SATURATION = [
    ("R134a", 273.15, 292.80e3, 200.00e3, 398.60e3),
    ("R134a", 313.15, 1016.6e3, 256.41e3, 419.43e3),
    ("R717", 273.15, 429.4e3, None, None),
    ("R744", 273.15, 3.4851e6, None, None),
]


@pytest.mark.parametrize("name, t, p_sat, h_f, h_g", NIST_WEBBOOK_SATURATION)
def test_saturation_against_nist_webbook(name, t, p_sat, h_f, h_g):
    p = fluids.saturation_pressure(name, t)
    assert p[0] == pytest.approx(p_sat, rel=5e-4)
    assert fluids.saturation_temperature(name, p)[0] == pytest.approx(t, abs=1e-6)
    if h_f is not None:
        liquid = fluids.from_px(name, p, 0.0)
        vapour = fluids.from_px(name, p, 1.0)
        assert liquid.h[0] == pytest.approx(h_f, abs=10.0)
        assert vapour.h[0] == pytest.approx(h_g, abs=10.0)


def test_designations_map_to_coolprop_names_and_unknown_names_fail_clearly():
    assert fluids.coolprop_name("R717") == "Ammonia"
    assert fluids.coolprop_name("R744") == "CarbonDioxide"
    assert fluids.coolprop_name("R1234ze(E)") == "R1234ze(E)"
    with pytest.raises(KeyError, match=r"unknown refrigerant 'R12'; known: R22, R32, R123"):
        fluids.from_pt("R12", 3e5, 280.0)


@pytest.mark.parametrize("name", sorted(fluids.REFRIGERANTS))
def test_every_offered_refrigerant_is_known_to_coolprop(name):
    # Each designation resolves and gives a saturated state at 0.9 T_crit (bubble point
    # both ways, so that the blends' glide does not enter).
    t_crit = PropsSI("Tcrit", fluids.coolprop_name(name))
    p = fluids.saturation_pressure(name, 0.9 * t_crit)
    state = fluids.from_px(name, p, 0.0)
    assert state.in_range.tolist() == [True]
    assert state.t[0] == pytest.approx(0.9 * t_crit, rel=1e-6)


def test_zeotropic_blend_shows_its_glide():
    # R407C glides by roughly 5-7 K between bubble and dew point at evaporator pressures
    # (common practice figure); a pure fluid does not glide.
    bubble = fluids.saturation_temperature("R407C", 5e5, quality=0.0)[0]
    dew = fluids.saturation_temperature("R407C", 5e5, quality=1.0)[0]
    assert 4.0 < dew - bubble < 8.0
    pure = fluids.saturation_temperature("R134a", [5e5, 5e5], quality=[0.0, 1.0])
    assert pure[1] - pure[0] == pytest.approx(0.0, abs=1e-9)


def test_from_pt_matches_propssi_element_by_element_with_bad_rows_nan():
    # Superheated vapour, subcooled liquid, NaN, negative pressure, T below the triple
    # point: the bad rows (first included) are NaN and only they are out of range.
    p = np.array([np.nan, 3e5, 3e5, -1.0, 3e5, 1.2e6])
    t = np.array([280.0, 280.0, 270.0, 280.0, 100.0, 330.0])
    state = fluids.from_pt("R134a", p, t)
    assert state.in_range.tolist() == [False, True, True, False, False, True]
    for i in (1, 2, 5):
        assert state.h[i] == pytest.approx(PropsSI("H", "P", p[i], "T", t[i], "R134a"), rel=1e-12)
        assert state.s[i] == pytest.approx(PropsSI("S", "P", p[i], "T", t[i], "R134a"), rel=1e-12)
    for i in (0, 3, 4):
        assert np.isnan([state.h[i], state.s[i], state.t[i], state.p[i]]).all()
    assert np.isnan(state.quality).all()  # (p, T) fixes single-phase states only


def test_all_rows_failing_and_one_row_failing_give_nan_not_an_exception():
    # CoolProp raises for a one-element array that fails and when every element fails.
    one = fluids.from_pt("R134a", [3e5], [50.0])
    assert one.in_range.tolist() == [False]
    both = fluids.from_ph("R134a", [3e5, 3e5], [-5e6, -6e6])
    assert both.in_range.tolist() == [False, False]
    assert np.isnan(both.t).all()
    empty = fluids.from_pt("R134a", [], [])
    assert empty.h.shape == (0,)


def test_scalar_list_series_inputs_and_index_kept():
    scalar = fluids.from_pt("R717", 5e5, 300.0)
    assert scalar.h.shape == (1,)
    index = pd.date_range("2026-01-05", periods=3, freq="min", tz="UTC")
    series = fluids.from_pt("R717", pd.Series([5e5, 5e5, np.nan], index=index), 300.0)
    frame = series.to_frame()
    assert frame.index.equals(index)
    assert frame["h"].iloc[0] == scalar.h[0]
    assert np.isnan(frame["h"].iloc[2])
    sat = fluids.saturation_temperature("R717", pd.Series([5e5, 2e7], index=index[:2]))
    assert sat.index.equals(index[:2])
    assert np.isnan(sat.iloc[1])  # above the critical pressure (11.3 MPa): no saturation


def test_ph_and_ps_routes_return_the_pt_state():
    p = np.array([2e5, 1.0e6, 1.0e6])
    t = np.array([263.15, 330.0, 290.0])  # vapour, vapour, liquid
    reference = fluids.from_pt("R1234ze(E)", p, t)
    by_h = fluids.from_ph("R1234ze(E)", p, reference.h)
    by_s = fluids.from_ps("R1234ze(E)", p, reference.s)
    np.testing.assert_allclose(by_h.t, t, rtol=0, atol=1e-7)
    np.testing.assert_allclose(by_s.t, t, rtol=0, atol=1e-7)
    np.testing.assert_allclose(by_h.s, reference.s, rtol=1e-10)
    np.testing.assert_allclose(by_s.h, reference.h, rtol=1e-10)


def test_two_phase_by_ph_follows_the_lever_rule():
    p = 4e5
    h_f = fluids.from_px("R134a", p, 0.0).h[0]
    h_g = fluids.from_px("R134a", p, 1.0).h[0]
    s_f = fluids.from_px("R134a", p, 0.0).s[0]
    s_g = fluids.from_px("R134a", p, 1.0).s[0]
    state = fluids.from_ph("R134a", p, h_f + 0.3 * (h_g - h_f))
    assert state.quality[0] == pytest.approx(0.3, rel=1e-9)
    assert state.s[0] == pytest.approx(s_f + 0.3 * (s_g - s_f), rel=1e-9)
    assert state.t[0] == pytest.approx(fluids.saturation_temperature("R134a", p)[0], abs=1e-6)


def test_quality_outside_zero_to_one_is_out_of_range():
    state = fluids.from_px("R134a", [4e5, 4e5, 4e5], [-0.1, 0.5, 1.1])
    assert state.in_range.tolist() == [False, True, False]
