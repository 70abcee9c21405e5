"""engine.exergy: flow exergy, heat exergy, lost work and the Carnot limit.

References for the expected values: A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design
and Optimization", Wiley 1996: Eq. 3.13 (flow exergy), Eq. 3.9 (exergy of heat),
Eq. 3.24 (Gouy-Stodola). Water and steam properties for the hand calculations come from
the ``iapws`` package (IAPWS97 class), independent of CoolProp.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from iapws import IAPWS97

from engine import steam
from engine.deadstate import dead_state
from engine.exergy import carnot_efficiency, flow_exergy, heat_exergy, lost_work

KJ = 1e3
T0 = 298.15


def _iapws(**kwargs) -> tuple[float, float]:
    ref = IAPWS97(**kwargs)
    return ref.h * KJ, ref.s * KJ


def test_flow_exergy_is_zero_at_the_dead_state():
    dead = dead_state()
    # Water at (p0, T0) by engine.steam and by iapws: no exergy either way.
    own = steam.from_pt(dead.p0_pa, dead.t0_k, props=("h", "s"))
    assert flow_exergy(own.h, own.s, dead) == pytest.approx([0.0], abs=1e-6)
    h, s = _iapws(P=0.101325, T=T0)
    assert flow_exergy(h, s, dead) == pytest.approx(0.0, abs=1e-4)


def test_flow_exergy_is_zero_at_each_intervals_dead_state():
    t0 = np.array([278.15, 293.15, 308.15])
    dead = dead_state(t0)
    water = steam.from_pt(101_325.0, t0, props=("h", "s"))
    np.testing.assert_allclose(flow_exergy(water.h, water.s, dead), 0.0, atol=1e-6)
    # Water at 25 degC measured against a 5 degC dead state does carry exergy (> 0):
    # (h - h0) - T0 (s - s0) with iapws values, by hand.
    h, s = _iapws(P=0.101325, T=298.15)
    h0, s0 = _iapws(P=0.101325, T=278.15)
    expected = (h - h0) - 278.15 * (s - s0)
    assert expected > 0
    assert flow_exergy(h, s, dead)[0] == pytest.approx(expected, rel=1e-7)


def test_saturated_steam_at_1_mpa_by_hand():
    """Saturated vapour at 1 MPa against the default dead state, computed by hand.

    iapws: h = 2777.12 kJ/kg, s = 6.58498 kJ/(kg K) (saturated vapour, 1 MPa);
    h0 = 104.929 kJ/kg, s0 = 0.367231 kJ/(kg K) (water, 25 degC, 101.325 kPa);
    ex = (h - h0) - T0 (s - s0) = 818.37 kJ/kg.
    """
    h, s = _iapws(P=1.0, x=1.0)
    h0, s0 = _iapws(P=0.101325, T=T0)
    expected = (h - h0) - T0 * (s - s0)
    assert expected == pytest.approx(818.37e3, abs=0.01e3)
    vapour = steam.saturated_vapour(1e6)
    ex = flow_exergy(vapour.h, vapour.s, dead_state())
    np.testing.assert_allclose(ex, expected, rtol=1e-9)


def test_throttling_destroys_exergy_by_gouy_stodola():
    """Steam throttled from 10 MPa, 500 degC to 1 MPa (h constant, iapws states).

    The entropy balance gives s_gen = s2 - s1 per kg; the exergy balance gives
    ex1 - ex2 destroyed. Gouy-Stodola: both are the same number, to round-off.
    """
    h1, s1 = _iapws(P=10.0, T=773.15)
    t2 = IAPWS97(P=1.0, h=h1 / KJ).T
    h2, s2 = _iapws(P=1.0, T=t2)
    dead = dead_state()
    m_kg_per_s = 12.5
    destroyed_w = m_kg_per_s * (flow_exergy(h1, s1, dead) - flow_exergy(h2, s2, dead))
    sgen_w_per_k = m_kg_per_s * (s2 - s1)
    assert sgen_w_per_k > 0
    # ex1 - ex2 = (h1 - h2) + T0 (s2 - s1); h2 equals h1 up to how exactly iapws
    # inverts T(p, h), so the first term is kept rather than assumed zero.
    expected = m_kg_per_s * (h1 - h2) + T0 * sgen_w_per_k
    assert abs(h1 - h2) < 1.0  # J/kg
    assert lost_work(sgen_w_per_k, T0) == pytest.approx(sgen_w_per_k * T0, rel=1e-15)
    assert destroyed_w == pytest.approx(expected, rel=1e-12)
    # The same through engine.steam, where (p, h) is inverted exactly.
    inlet = steam.from_pt(10e6, 773.15, props=("h", "s"))
    outlet = steam.from_ph(1e6, inlet.h, props=("h", "s"))
    destroyed = m_kg_per_s * (
        flow_exergy(inlet.h, inlet.s, dead) - flow_exergy(outlet.h, outlet.s, dead)
    )
    np.testing.assert_allclose(
        destroyed, lost_work(m_kg_per_s * (outlet.s - inlet.s), T0), rtol=1e-12
    )


def test_heat_exergy_worked_example():
    # 1 MW of heat at 600 K with T0 = 298.15 K: 1e6 * (1 - 298.15/600) = 503,083.33 W.
    assert heat_exergy(1e6, 600.0, T0) == pytest.approx(503_083.333333, rel=1e-12)
    # Heat at the dead-state temperature carries no exergy.
    assert heat_exergy(1e6, T0, T0) == 0.0
    # Heat received below T0 carries exergy the other way (refrigeration).
    assert heat_exergy(1e6, 273.15, T0) == pytest.approx(
        -91_524.803, rel=1e-8
    )  # -1e6 * 25 / 273.15


def test_heat_exergy_type_matrix():
    t = np.array([400.0, 800.0, np.nan])
    out = heat_exergy(2e6, t, T0)
    assert isinstance(out, np.ndarray)
    np.testing.assert_allclose(out[:2], [2e6 * (1 - T0 / 400.0), 2e6 * (1 - T0 / 800.0)])
    assert np.isnan(out[2])
    index = pd.date_range("2024-01-01", periods=2, freq="min")
    series = heat_exergy(pd.Series([1e6, 2e6], index=index), 600.0, T0)
    assert isinstance(series, pd.Series)
    assert series.index.equals(index)
    assert series.iloc[1] == pytest.approx(2 * 503_083.333333, rel=1e-12)


def test_lost_work_per_interval():
    sgen = np.array([100.0, 0.0, np.nan])
    t0 = np.array([290.0, 300.0, 310.0])
    np.testing.assert_array_equal(lost_work(sgen, t0), [29_000.0, 0.0, np.nan])


def test_carnot_efficiency():
    # 600 degC hot reservoir, 25 degC cold: 1 - 298.15/873.15 = 0.658535188...
    assert carnot_efficiency(873.15, T0) == pytest.approx(575.0 / 873.15, rel=1e-14)
    # The Carnot factor is the exergy of a unit of heat at the hot temperature.
    t_hot = np.array([373.15, 573.15, 873.15])
    np.testing.assert_allclose(carnot_efficiency(t_hot, T0), heat_exergy(1.0, t_hot, T0))
    assert carnot_efficiency(T0, T0) == 0.0
    assert np.isnan(carnot_efficiency(np.nan, T0))


def test_flow_exergy_keeps_series_index():
    # pvlib convention: a Series in gives a Series out with the same index.
    dead = dead_state()
    index = pd.date_range("2026-01-01", periods=2, freq="min", tz="UTC")
    h = pd.Series([dead.h0_water_j_per_kg, 3.0e6], index=index)
    s = pd.Series([dead.s0_water_j_per_kg_k, 7000.0], index=index)
    ex = flow_exergy(h, s, dead)
    assert isinstance(ex, pd.Series)
    assert ex.index.equals(index)
    assert ex.iloc[0] == pytest.approx(0.0, abs=1e-9)
