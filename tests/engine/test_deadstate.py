"""engine.deadstate against the ``iapws`` package (IAPWS97 class, independent of CoolProp).

The default dead state is 25 degC and 101.325 kPa (Bejan, Tsatsaronis and Moran,
"Thermal Design and Optimization", Wiley 1996, Sec. 3.1). Its water properties are
those of compressed liquid at that state, IAPWS-IF97 region 1.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from iapws import IAPWS95, IAPWS97

from engine.deadstate import P0_DEFAULT_PA, T0_DEFAULT_K, dead_state

KJ = 1e3


def _iapws_water(p_pa: float, t_k: float) -> tuple[float, float]:
    ref = IAPWS97(P=p_pa / 1e6, T=t_k)
    assert ref.region == 1  # liquid water: the dead state must be in region 1
    return ref.h * KJ, ref.s * KJ


def test_default_constants():
    assert T0_DEFAULT_K == 298.15
    assert P0_DEFAULT_PA == 101_325.0


def test_default_dead_state_against_iapws():
    dead = dead_state()
    h0, s0 = _iapws_water(101_325.0, 298.15)
    assert isinstance(dead.h0_water_j_per_kg, float)
    assert isinstance(dead.s0_water_j_per_kg_k, float)
    assert dead.t0_k == 298.15
    assert dead.p0_pa == 101_325.0
    assert dead.h0_water_j_per_kg == pytest.approx(h0, rel=1e-9)
    assert dead.s0_water_j_per_kg_k == pytest.approx(s0, rel=1e-9)
    # Steam-table value for compressed water at 25 degC, 1 atm (from memory): about
    # 104.9 kJ/kg and 0.3672 kJ/(kg K).
    assert dead.h0_water_j_per_kg == pytest.approx(104.93e3, abs=0.05e3)
    assert dead.s0_water_j_per_kg_k == pytest.approx(367.2, abs=0.1)


def test_per_interval_dead_state():
    """An ambient temperature per interval gives one dead state per interval."""
    t0 = np.array([275.15, 288.15, 298.15, 308.15, 318.15])
    p0 = np.array([99e3, 100e3, 101.325e3, 102e3, 103e3])
    dead = dead_state(t0, p0)
    assert isinstance(dead.h0_water_j_per_kg, np.ndarray)
    assert dead.h0_water_j_per_kg.shape == (5,)
    np.testing.assert_array_equal(dead.t0_k, t0)
    np.testing.assert_array_equal(dead.p0_pa, p0)
    expected = [_iapws_water(p, t) for p, t in zip(p0, t0, strict=True)]
    np.testing.assert_allclose(dead.h0_water_j_per_kg, [e[0] for e in expected], rtol=1e-9)
    np.testing.assert_allclose(dead.s0_water_j_per_kg_k, [e[1] for e in expected], rtol=1e-9)
    # Each row equals the scalar dead state of that row.
    third = dead_state(298.15, 101.325e3)
    assert dead.h0_water_j_per_kg[2] == pytest.approx(third.h0_water_j_per_kg, rel=1e-15)


def test_scalar_pressure_broadcast_against_temperatures():
    t0 = pd.Series([283.15, 303.15], index=pd.date_range("2024-07-01", periods=2, freq="h"))
    dead = dead_state(t0)
    np.testing.assert_array_equal(dead.p0_pa, [101_325.0, 101_325.0])
    expected = [_iapws_water(101_325.0, t) for t in t0]
    np.testing.assert_allclose(dead.h0_water_j_per_kg, [e[0] for e in expected], rtol=1e-9)


def test_impossible_dead_state_rows_are_nan():
    # NaN ambient, a temperature in degC passed as K and a zero pressure: those rows are
    # NaN, the good row (25 degC) keeps its value.
    dead = dead_state(np.array([298.15, np.nan, 25.0, 298.15]), np.array([101325.0] * 3 + [0.0]))
    h0, s0 = _iapws_water(101_325.0, 298.15)
    assert dead.h0_water_j_per_kg[0] == pytest.approx(h0, rel=1e-9)
    assert dead.s0_water_j_per_kg_k[0] == pytest.approx(s0, rel=1e-9)
    assert np.isnan(dead.h0_water_j_per_kg[1:]).all()
    assert np.isnan(dead.s0_water_j_per_kg_k[1:]).all()


def test_dead_state_above_boiling_point_is_nan_not_steam():
    # 380 K is above the normal boiling point (373.12 K at 101.325 kPa, IAPWS-IF97 Eq. 31):
    # no liquid environment water exists there, so exergy has no reference.
    dead = dead_state(380.0)
    assert np.isnan(dead.h0_water_j_per_kg)
    assert np.isnan(dead.s0_water_j_per_kg_k)
    per_row = dead_state(np.array([298.15, 380.0]))
    assert np.isfinite(per_row.h0_water_j_per_kg[0])
    assert np.isnan(per_row.h0_water_j_per_kg[1])


@pytest.mark.parametrize("t0_k", [268.15, 253.15, 243.15])
def test_frost_dead_state_is_supercooled_liquid_water_per_iapws95(t0_k):
    # Reference: IAPWS-95 extrapolated into the supercooled liquid (IAPWS R6-95(2018),
    # Sec. 6.3.2), through the `iapws` package. What exergy uses is g0 = h0 - T0 s0 (the
    # rest cancels in (h - h0) - T0 (s - s0)); the cp fit integrates to within 1 J/kg of
    # it. h0 alone carries the IF97-vs-IAPWS-95 offset (about 9 J/kg at 25 degC too).
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # iapws warns that it extrapolates: that is the point
        water = IAPWS95(T=t0_k, P=P0_DEFAULT_PA / 1e6)
    dead = dead_state(t0_k)
    g0 = dead.h0_water_j_per_kg - t0_k * dead.s0_water_j_per_kg_k
    assert g0 == pytest.approx(1e3 * (water.h - t0_k * water.s), abs=1.0)
    assert dead.h0_water_j_per_kg == pytest.approx(1e3 * water.h, abs=20.0)


def test_dead_state_colder_than_the_supercooled_fit_is_nan():
    dead = dead_state(np.array([230.0, 238.15]))
    assert np.isnan(dead.h0_water_j_per_kg[0])
    assert np.isfinite(dead.h0_water_j_per_kg[1])
