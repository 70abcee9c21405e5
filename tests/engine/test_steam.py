"""engine.steam against the IAPWS-IF97 verification tables and the ``iapws`` package.

Sources
-------
[R7-97]  IAPWS R7-97(2012), "Revised Release on the IAPWS Industrial Formulation 1997
         for the Thermodynamic Properties of Water and Steam", tables of computer-program
         verification values (Tables 5, 7, 9, 15, 24, 29, 33, 35, 36, 42).
[SR5-05] IAPWS SR5-05(2016), "Revised Supplementary Release on Backward Equations for
         Specific Volume as a Function of Pressure and Temperature v(p,T) for Region 3",
         Table 5 (verification values for subregions 3a-3t).
[iapws]  The ``iapws`` package from PyPI (J. J. Gomera), class IAPWS97 and the region
         functions of iapws.iapws97: an implementation of IF97 independent of CoolProp.

The table values below were written down from memory of the releases. Every one was
checked against [iapws] (module iapws.iapws97: _Region1, _Region2, _Region3, _Region5,
_PSat_T, _TSat_P, _Backward*_T_Ph/_Ps, _Backward3_v_PT) before it was used: all agree to
within half a unit of the last printed digit (largest relative difference 4.9e-9, for
the 9-significant-digit values of Tables 24 and 29; the rest below 3.2e-9), so a wrong
digit would have shown. ``test_fixtures_agree_with_iapws`` repeats that check, so a
fixture can never drift away from its second source unnoticed.

Tolerances. Values from a basic equation: 1e-8 relative (the tables print 9
significant digits, so rounding alone reaches 5e-9). Backward equations: the release
only promises consistency with the basic equations to a few tens of mK (R7-97 Sec. 5.2
and 6.3; from memory 25 mK in region 1 and between 10 and 25 mK by subregion in region
2, so 25 mK is used throughout; measured here: up to 22.4 mK in subregion 2c at 60 MPa,
confirmed by inverting iapws' region-2 basic equation). engine.steam inverts the basic
equations instead, so its T(p,h) must lie within that band of the table and must
reproduce h (or s) through the basic equation to round-off.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from iapws import IAPWS97
from iapws import iapws97 as if97_ref

from engine import steam
from engine.steam import Phase

MPA = 1e6
KJ = 1e3

# ---------------------------------------------------------------------------------------
# Fixtures: published verification values (see module docstring for the check against
# iapws). Units as printed in the release: T [K], p [MPa], v [m3/kg], h and u [kJ/kg],
# s [kJ/(kg K)]. cp and w are given in the tables but engine.steam does not return them.

# R7-97(2012) Table 5, region 1 basic equation: (T, p, v, h, u, s).
IF97_TABLE5_REGION1 = [
    (300.0, 3.0, 0.100215168e-2, 0.115331273e3, 0.112324818e3, 0.392294792),
    (300.0, 80.0, 0.971180894e-3, 0.184142828e3, 0.106448356e3, 0.368563852),
    (500.0, 3.0, 0.120241800e-2, 0.975542239e3, 0.971934985e3, 0.258041912e1),
]
# R7-97(2012) Table 15, region 2 basic equation: (T, p, v, h, u, s).
IF97_TABLE15_REGION2 = [
    (300.0, 0.0035, 0.394913866e2, 0.254991145e4, 0.241169160e4, 0.852238967e1),
    (700.0, 0.0035, 0.923015898e2, 0.333568375e4, 0.301262819e4, 0.101749996e2),
    (700.0, 30.0, 0.542946619e-2, 0.263149474e4, 0.246861076e4, 0.517540298e1),
]
# R7-97(2012) Table 42, region 5 basic equation: (T, p, v, h, u, s).
IF97_TABLE42_REGION5 = [
    (1500.0, 0.5, 0.138455090e1, 0.521976855e4, 0.452749310e4, 0.965408875e1),
    (1500.0, 30.0, 0.230761299e-1, 0.516723514e4, 0.447495124e4, 0.772970133e1),
    (2000.0, 30.0, 0.311385219e-1, 0.657122604e4, 0.563707038e4, 0.853640523e1),
]
# R7-97(2012) Table 33, region 3 basic equation, given in (rho, T): (rho, T, p, h, u, s).
# CoolProp's IF97 backend accepts no (rho, T) input; see test_region3_table33_via_pressure.
IF97_TABLE33_REGION3 = [
    (500.0, 650.0, 0.255837018e2, 0.186343019e4, 0.181226279e4, 0.405427273e1),
    (200.0, 650.0, 0.222930643e2, 0.237512401e4, 0.226365868e4, 0.485438792e1),
    (500.0, 750.0, 0.783095639e2, 0.225868845e4, 0.210206932e4, 0.446971906e1),
]
# R7-97(2012) Table 35, saturation-pressure equation (Eq. 30): (T, p_s).
IF97_TABLE35_PSAT = [(300.0, 0.353658941e-2), (500.0, 0.263889776e1), (600.0, 0.123443146e2)]
# R7-97(2012) Table 36, saturation-temperature equation (Eq. 31): (p, T_s).
IF97_TABLE36_TSAT = [(0.1, 0.372755919e3), (1.0, 0.453035632e3), (10.0, 0.584149488e3)]
# R7-97(2012) Table 7, backward equation T(p,h) region 1 (Eq. 11): (p, h, T).
IF97_TABLE7_T_PH_REGION1 = [
    (3.0, 500.0, 0.391798509e3),
    (80.0, 500.0, 0.378108626e3),
    (80.0, 1500.0, 0.611041229e3),
]
# R7-97(2012) Table 9, backward equation T(p,s) region 1 (Eq. 13): (p, s, T).
IF97_TABLE9_T_PS_REGION1 = [
    (3.0, 0.5, 0.307842258e3),
    (80.0, 0.5, 0.309979785e3),
    (80.0, 3.0, 0.565899909e3),
]
# R7-97(2012) Table 24, backward equations T(p,h) region 2a, 2b, 2c (Eqs. 22-24): (p, h, T).
IF97_TABLE24_T_PH_REGION2 = [
    (0.001, 3000.0, 0.534433241e3),
    (3.0, 3000.0, 0.575373370e3),
    (3.0, 4000.0, 0.101077577e4),
    (5.0, 3500.0, 0.801299102e3),
    (5.0, 4000.0, 0.101531583e4),
    (25.0, 3500.0, 0.875279054e3),
    (40.0, 2700.0, 0.743056411e3),
    (60.0, 2700.0, 0.791137067e3),
    (60.0, 3200.0, 0.882756860e3),
]
# R7-97(2012) Table 29, backward equations T(p,s) region 2a, 2b, 2c (Eqs. 25-27): (p, s, T).
IF97_TABLE29_T_PS_REGION2 = [
    (0.1, 7.5, 0.399517097e3),
    (0.1, 8.0, 0.514127081e3),
    (2.5, 8.0, 0.103984917e4),
    (8.0, 6.0, 0.600484040e3),
    (8.0, 7.5, 0.106495556e4),
    (90.0, 6.0, 0.103801126e4),
    (20.0, 5.75, 0.697992849e3),
    (80.0, 5.25, 0.854011484e3),
    (80.0, 5.75, 0.949017998e3),
]
# SR5-05(2016) Table 5, backward equations v(p,T) for subregions 3a-3t, two points each:
# (subregion, p, T, v). The auxiliary near-critical equations 3u-3z (SR5-05 Table 13) are
# not included: my recollection of their verification points did not agree with iapws,
# so they could not be reconstructed reliably.
SR505_TABLE5_V_PT_REGION3 = [
    ("3a", 50.0, 630.0, 1.470853100e-3),
    ("3a", 80.0, 670.0, 1.503831359e-3),
    ("3b", 50.0, 710.0, 2.204728587e-3),
    ("3b", 80.0, 750.0, 1.973692940e-3),
    ("3c", 20.0, 630.0, 1.761696406e-3),
    ("3c", 30.0, 650.0, 1.819560617e-3),
    ("3d", 26.0, 656.0, 2.245587720e-3),
    ("3d", 30.0, 670.0, 2.506897702e-3),
    ("3e", 26.0, 661.0, 2.970225962e-3),
    ("3e", 30.0, 675.0, 3.004627086e-3),
    ("3f", 26.0, 671.0, 5.019029401e-3),
    ("3f", 30.0, 690.0, 4.656470142e-3),
    ("3g", 23.6, 649.0, 2.163198378e-3),
    ("3g", 24.0, 650.0, 2.166044161e-3),
    ("3h", 23.6, 652.0, 2.651081407e-3),
    ("3h", 24.0, 654.0, 2.967802335e-3),
    ("3i", 23.6, 653.0, 3.273916816e-3),
    ("3i", 24.0, 655.0, 3.550329864e-3),
    ("3j", 23.5, 655.0, 4.545001142e-3),
    ("3j", 24.0, 660.0, 5.100267704e-3),
    ("3k", 23.0, 660.0, 6.109525997e-3),
    ("3k", 24.0, 670.0, 6.427325645e-3),
    ("3l", 22.6, 646.0, 2.117860851e-3),
    ("3l", 23.0, 646.0, 2.062374674e-3),
    ("3m", 22.6, 648.6, 2.533063780e-3),
    ("3m", 22.8, 649.3, 2.572971781e-3),
    ("3n", 22.6, 649.0, 2.923432711e-3),
    ("3n", 22.8, 649.7, 2.913311494e-3),
    ("3o", 22.6, 649.1, 3.131208996e-3),
    ("3o", 22.8, 649.9, 3.221160278e-3),
    ("3p", 22.6, 649.4, 3.715596186e-3),
    ("3p", 22.8, 650.2, 3.664754790e-3),
    ("3q", 21.1, 640.0, 1.970999272e-3),
    ("3q", 21.8, 643.0, 2.043919161e-3),
    ("3r", 21.1, 644.0, 5.251009921e-3),
    ("3r", 21.8, 648.0, 5.256844741e-3),
    ("3s", 19.1, 635.0, 1.932829079e-3),
    ("3s", 20.0, 638.0, 1.985387227e-3),
    ("3t", 17.0, 626.0, 8.483262001e-3),
    ("3t", 20.0, 640.0, 6.227528101e-3),
]

BASIC_RTOL = 1e-8  # table values to 9 significant digits: rounding alone is 5e-9
TABLE_DIGITS_RTOL = 5e-9  # half a unit in the 9th significant digit

# R7-97 Sec. 5.2 and 6.3 (from memory, see the module docstring): permissible
# inconsistency of the backward equations T(p,h), T(p,s) with the basic equations.
BACKWARD_DT_K = 25e-3


def _rel(actual, expected):
    return np.abs(np.asarray(actual) / np.asarray(expected) - 1.0)


# ---------------------------------------------------------------------------------------
# The fixtures themselves against iapws (a typo in a fixture fails here, not silently).


def test_fixtures_agree_with_iapws():
    """Every reconstructed table value agrees with iapws to the printed precision."""
    worst = 0.0
    for table, func in (
        (IF97_TABLE5_REGION1, if97_ref._Region1),
        (IF97_TABLE15_REGION2, if97_ref._Region2),
        (IF97_TABLE42_REGION5, if97_ref._Region5),
    ):
        for t, p, v, h, u, s in table:
            ref = func(t, p)
            u_ref = ref["h"] - p * 1e3 * ref["v"]
            worst = max(worst, *_rel([ref["v"], ref["h"], u_ref, ref["s"]], [v, h, u, s]))
    for rho, t, p, h, u, s in IF97_TABLE33_REGION3:
        ref = if97_ref._Region3(rho, t)
        u_ref = ref["h"] - ref["P"] * 1e3 / rho
        worst = max(worst, *_rel([ref["P"], ref["h"], u_ref, ref["s"]], [p, h, u, s]))
    worst = max(worst, *(_rel(if97_ref._PSat_T(t), p) for t, p in IF97_TABLE35_PSAT))
    worst = max(worst, *(_rel(if97_ref._TSat_P(p), t) for p, t in IF97_TABLE36_TSAT))
    for table, func in (
        (IF97_TABLE7_T_PH_REGION1, if97_ref._Backward1_T_Ph),
        (IF97_TABLE9_T_PS_REGION1, if97_ref._Backward1_T_Ps),
        (IF97_TABLE24_T_PH_REGION2, if97_ref._Backward2_T_Ph),
        (IF97_TABLE29_T_PS_REGION2, if97_ref._Backward2_T_Ps),
    ):
        worst = max(worst, *(_rel(func(p, y), t) for p, y, t in table))
    worst = max(
        worst,
        *(_rel(if97_ref._Backward3_v_PT(p, t), v) for _, p, t, v in SR505_TABLE5_V_PT_REGION3),
    )
    assert worst < TABLE_DIGITS_RTOL


# ---------------------------------------------------------------------------------------
# Basic equations through engine.steam.


@pytest.mark.parametrize(
    "table",
    [IF97_TABLE5_REGION1, IF97_TABLE15_REGION2, IF97_TABLE42_REGION5],
    ids=["R7-97 Table 5 region 1", "R7-97 Table 15 region 2", "R7-97 Table 42 region 5"],
)
def test_basic_equations_from_pt(table):
    t, p, v, h, u, s = (np.array(col) for col in zip(*table, strict=True))
    state = steam.from_pt(p * MPA, t)
    assert state.in_range.tolist() == [True] * len(t)
    np.testing.assert_allclose(state.v, v, rtol=BASIC_RTOL, atol=0)
    np.testing.assert_allclose(state.h, h * KJ, rtol=BASIC_RTOL, atol=0)
    np.testing.assert_allclose(state.s, s * KJ, rtol=BASIC_RTOL, atol=0)
    # u is not returned; u = h - p v from returned values reproduces the table.
    np.testing.assert_allclose(state.h - p * MPA * state.v, u * KJ, rtol=BASIC_RTOL, atol=0)
    np.testing.assert_array_equal(state.t, t)


def test_region5_phase_is_vapour_or_supercritical():
    # R7-97 Table 42 points: 0.5 MPa is below p_c (superheated steam); 30 MPa above it.
    state = steam.from_pt(np.array([0.5, 30.0, 30.0]) * MPA, [1500.0, 1500.0, 2000.0])
    assert state.phase.tolist() == [Phase.VAPOUR, Phase.SUPERCRITICAL, Phase.SUPERCRITICAL]


def test_region3_sr505_backward_volume():
    """SR5-05 Table 5: the (p, T) route in region 3 uses the v(p,T) backward equations."""
    p = np.array([row[1] for row in SR505_TABLE5_V_PT_REGION3]) * MPA
    t = np.array([row[2] for row in SR505_TABLE5_V_PT_REGION3])
    v = np.array([row[3] for row in SR505_TABLE5_V_PT_REGION3])
    state = steam.from_pt(p, t)
    assert state.in_range.all()
    np.testing.assert_allclose(state.v, v, rtol=BASIC_RTOL, atol=0)
    # h and s are the region-3 basic equation at that density: compare with iapws doing
    # the same composition (SR5-05 v(p,T), then R7-97 Eq. 28 f(rho, T)).
    h_ref, s_ref = [], []
    for _, p_mpa, t_k, _ in SR505_TABLE5_V_PT_REGION3:
        ref = if97_ref._Region3(1.0 / if97_ref._Backward3_v_PT(p_mpa, t_k), t_k)
        h_ref.append(ref["h"] * KJ)
        s_ref.append(ref["s"] * KJ)
    np.testing.assert_allclose(state.h, h_ref, rtol=1e-12, atol=0)
    np.testing.assert_allclose(state.s, s_ref, rtol=1e-12, atol=0)


def test_region3_table33_via_pressure():
    """R7-97 Table 33 is given in (rho, T), which CoolProp's IF97 backend cannot take.

    Fed with the table's pressure instead, the (p, T) route goes through the SR5-05
    backward volume, so it reproduces the table only to that equation's consistency:
    SR5-05 permits |dv/v| up to 1e-5 in subregions 3a-3t (from memory); the induced
    differences in h and s are smaller. The (rho, T) basic equation itself is therefore
    checked against Table 33 only indirectly (test_region3_sr505_backward_volume shows
    that engine.steam evaluates it exactly as iapws does).
    """
    rho, t, p, h, _, s = (np.array(col) for col in zip(*IF97_TABLE33_REGION3, strict=True))
    state = steam.from_pt(p * MPA, t)
    assert state.in_range.all()
    np.testing.assert_allclose(1.0 / state.v, rho, rtol=1e-5, atol=0)
    np.testing.assert_allclose(state.h, h * KJ, rtol=1e-5, atol=0)
    np.testing.assert_allclose(state.s, s * KJ, rtol=1e-5, atol=0)


def test_saturation_pressure_table35():
    t, p = (np.array(col) for col in zip(*IF97_TABLE35_PSAT, strict=True))
    np.testing.assert_allclose(steam.saturation_pressure(t), p * MPA, rtol=BASIC_RTOL, atol=0)


def test_saturation_temperature_table36():
    p, t = (np.array(col) for col in zip(*IF97_TABLE36_TSAT, strict=True))
    np.testing.assert_allclose(steam.saturation_temperature(p * MPA), t, rtol=BASIC_RTOL, atol=0)


def test_saturated_states_carry_saturation_temperature():
    # R7-97 Table 36: T_s(1 MPa) = 453.035632 K, for both ends of the dome.
    liquid = steam.saturated_liquid(1.0 * MPA)
    vapour = steam.saturated_vapour(1.0 * MPA)
    np.testing.assert_allclose([liquid.t[0], vapour.t[0]], 453.035632, rtol=BASIC_RTOL)
    assert liquid.quality.tolist() == [0.0]
    assert vapour.quality.tolist() == [1.0]
    assert liquid.phase.tolist() == [Phase.TWO_PHASE]


# ---------------------------------------------------------------------------------------
# Backward equations.


@pytest.mark.parametrize(
    ("table", "name"),
    [
        (IF97_TABLE7_T_PH_REGION1, "H"),
        (IF97_TABLE9_T_PS_REGION1, "S"),
        (IF97_TABLE24_T_PH_REGION2, "H"),
        (IF97_TABLE29_T_PS_REGION2, "S"),
    ],
    ids=["R7-97 Table 7", "R7-97 Table 9", "R7-97 Table 24", "R7-97 Table 29"],
)
def test_backward_equations(table, name):
    p, y, t_table = (np.array(col) for col in zip(*table, strict=True))
    p, y = p * MPA, y * KJ
    # CoolProp's backward equations themselves (engine.steam uses them as the first guess
    # above the critical pressure): the table to its printed digits.
    t_backward = steam._props("T", "P", p, name, y)
    np.testing.assert_allclose(t_backward, t_table, rtol=BASIC_RTOL, atol=0)
    # engine.steam's answer is the exact inverse of the basic equation: within the
    # release's stated consistency of the table, and it gives y back through (p, T).
    state = steam.from_ph(p, y) if name == "H" else steam.from_ps(p, y)
    assert state.in_range.all()
    assert np.max(np.abs(state.t - t_table)) <= BACKWARD_DT_K
    forward = steam.from_pt(p, state.t, props=("h", "s"))
    y_forward = forward.h if name == "H" else forward.s
    np.testing.assert_allclose(y_forward, y, rtol=1e-11, atol=0)


# ---------------------------------------------------------------------------------------
# iapws as an independent implementation, on random states.

_RNG_SEED = 19970


def _random_single_phase_states(n: int, seed: int = _RNG_SEED):
    """(p, T) over 1 kPa-30 MPa and 0.01-650 degC, at least 1 K off saturation.

    About 60 % superheated (saturation + 1 K to 650 degC), 40 % compressed liquid
    (0.01 degC to saturation - 1 K); above the critical pressure, anywhere in 0.01-650 degC.
    """
    rng = np.random.default_rng(seed)
    p = 10 ** rng.uniform(np.log10(1e3), np.log10(30e6), n)
    t_min, t_max = 273.16, 923.15
    t = np.empty(n)
    for i, p_pa in enumerate(p):
        if p_pa >= steam.P_CRITICAL_PA:
            t[i] = rng.uniform(t_min, t_max)
            continue
        t_sat = if97_ref._TSat_P(p_pa / MPA)
        if rng.random() < 0.6 or t_sat - 1.0 <= t_min:
            t[i] = rng.uniform(t_sat + 1.0, t_max)
        else:
            t[i] = rng.uniform(t_min, t_sat - 1.0)
    return p, t


@pytest.fixture(scope="module")
def iapws_random_states():
    """1,200 random single-phase states with iapws h, s, v and region per row."""
    p, t = _random_single_phase_states(1200)
    h, s, v, region, h_bv, s_bv = [], [], [], [], [], []
    for p_pa, t_k in zip(p, t, strict=True):
        ref = IAPWS97(P=p_pa / MPA, T=t_k)
        h.append(ref.h * KJ)
        s.append(ref.s * KJ)
        v.append(ref.v)
        region.append(ref.region)
        if ref.region == 3:
            # Region 3 along CoolProp's route: SR5-05 v(p,T), then the basic equation.
            r3 = if97_ref._Region3(1.0 / if97_ref._Backward3_v_PT(p_pa / MPA, t_k), t_k)
            h_bv.append(r3["h"] * KJ)
            s_bv.append(r3["s"] * KJ)
        else:
            h_bv.append(np.nan)
            s_bv.append(np.nan)
    return {
        "p": p,
        "t": t,
        "h": np.array(h),
        "s": np.array(s),
        "v": np.array(v),
        "region": np.array(region),
        "h_bv": np.array(h_bv),
        "s_bv": np.array(s_bv),
    }


def test_random_states_cover_regions(iapws_random_states):
    region = iapws_random_states["region"]
    assert (region == 1).sum() >= 200
    assert (region == 2).sum() >= 400
    assert (region == 3).sum() >= 5


def test_random_pt_states_against_iapws(iapws_random_states):
    """h, s, v from (p, T) agree with iapws to 1e-7 relative (issue 2) in regions 1 and 2.

    Region 3 differs by design: iapws solves the basic equation for the density exactly,
    CoolProp takes it from the SR5-05 backward equation. There the bar is the SR5-05
    consistency (1e-5, from memory), and against iapws composing the same route, 1e-11.
    """
    ref = iapws_random_states
    state = steam.from_pt(ref["p"], ref["t"])
    assert state.in_range.all()
    r12 = ref["region"] != 3
    np.testing.assert_allclose(state.h[r12], ref["h"][r12], rtol=1e-7, atol=0)
    np.testing.assert_allclose(state.s[r12], ref["s"][r12], rtol=1e-7, atol=0)
    np.testing.assert_allclose(state.v[r12], ref["v"][r12], rtol=1e-7, atol=0)
    # In fact regions 1 and 2 agree far better than the 1e-7 the issue asks for.
    assert np.max(_rel(state.h[r12], ref["h"][r12])) < 1e-11
    r3 = ~r12
    np.testing.assert_allclose(state.h[r3], ref["h"][r3], rtol=1e-5, atol=0)
    np.testing.assert_allclose(state.s[r3], ref["s"][r3], rtol=1e-5, atol=0)
    np.testing.assert_allclose(state.h[r3], ref["h_bv"][r3], rtol=1e-11, atol=0)
    np.testing.assert_allclose(state.s[r3], ref["s_bv"][r3], rtol=1e-11, atol=0)


def test_random_region3_states():
    """200 states inside region 3 (16.6-30 MPa, 623.15 K to the B23 line, R7-97 Eq. 5).

    Against iapws along the same route (SR5-05 v(p,T) incl. the near-critical auxiliary
    equations, then the basic equation f(rho, T)) to 1e-11, and against iapws' exact
    solution of the basic equation to the SR5-05 consistency, 1e-5 (from memory;
    measured up to 8e-6 in v away from the critical point).
    """
    rng = np.random.default_rng(_RNG_SEED + 3)
    p = rng.uniform(16.6e6, 30e6, 200)
    t_b23 = np.array([if97_ref._t_P(x / MPA) for x in p])
    t = 623.15 + rng.uniform(0.01, 0.99, 200) * (t_b23 - 623.15)
    state = steam.from_pt(p, t, props=("h", "s", "v"))
    assert state.in_range.all()
    route = [
        if97_ref._Region3(1.0 / if97_ref._Backward3_v_PT(a / MPA, b), b)
        for a, b in zip(p, t, strict=True)
    ]
    exact = [IAPWS97(P=a / MPA, T=b) for a, b in zip(p, t, strict=True)]
    assert {r.region for r in exact} == {3}
    np.testing.assert_allclose(state.h, [r["h"] * KJ for r in route], rtol=1e-11, atol=0)
    np.testing.assert_allclose(state.s, [r["s"] * KJ for r in route], rtol=1e-11, atol=0)
    # Near the critical point (21.0-22.5 MPa) SR5-05 uses auxiliary equations with a
    # looser consistency; this seed puts one state there (21.17 MPa, 0.2 K above
    # saturation: v off by 3.3e-4, h by 8.5e-5), checked at 1e-3.
    near_critical = (p > 21.0e6) & (p <= 22.5e6)
    for rows, rtol in ((~near_critical, 1e-5), (near_critical, 1e-3)):
        np.testing.assert_allclose(
            state.h[rows], [exact[i].h * KJ for i in np.flatnonzero(rows)], rtol=rtol
        )
        np.testing.assert_allclose(
            state.s[rows], [exact[i].s * KJ for i in np.flatnonzero(rows)], rtol=rtol
        )
        np.testing.assert_allclose(
            state.v[rows], [exact[i].v for i in np.flatnonzero(rows)], rtol=rtol
        )


def test_random_phase_codes(iapws_random_states):
    ref = iapws_random_states
    state = steam.from_pt(ref["p"], ref["t"], props=("phase",))
    t_sat = steam.saturation_temperature(ref["p"])
    expected = np.where(
        ref["p"] >= steam.P_CRITICAL_PA,
        np.where(ref["t"] > steam.T_CRITICAL_K, Phase.SUPERCRITICAL, Phase.LIQUID),
        np.where(ref["t"] < t_sat, Phase.LIQUID, Phase.VAPOUR),
    )
    np.testing.assert_array_equal(state.phase, expected)


def test_random_ph_and_ps_round_trips(iapws_random_states):
    """(p, h) -> T and (p, s) -> T with h, s from iapws give the original T back.

    h and s of iapws agree with CoolProp's basic equations to ~1e-12, so the inverse must
    return T to well within 1e-6 K (regions 1 and 2; region 3 rows are compared with the
    iapws values along CoolProp's own route).
    """
    ref = iapws_random_states
    r3 = ref["region"] == 3
    h = np.where(r3, ref["h_bv"], ref["h"])
    s = np.where(r3, ref["s_bv"], ref["s"])
    by_h = steam.from_ph(ref["p"], h)
    by_s = steam.from_ps(ref["p"], s)
    assert by_h.in_range.all()
    assert by_s.in_range.all()
    np.testing.assert_allclose(by_h.t, ref["t"], rtol=0, atol=1e-6)
    np.testing.assert_allclose(by_s.t, ref["t"], rtol=0, atol=1e-6)
    np.testing.assert_allclose(by_h.s, s, rtol=1e-10, atol=0)
    np.testing.assert_allclose(by_s.h, h, rtol=1e-10, atol=0)
    assert np.isnan(by_h.quality).all()


def test_random_ph_against_iapws_backward(iapws_random_states):
    """iapws answers (p, h) with the backward equations; the release's band holds."""
    ref = iapws_random_states
    rows = np.flatnonzero(ref["region"] != 3)[:300]
    t_iapws = np.array([IAPWS97(P=ref["p"][i] / MPA, h=ref["h"][i] / KJ).T for i in rows])
    region = ref["region"][rows]
    state = steam.from_ph(ref["p"][rows], ref["h"][rows])
    dt = np.abs(state.t - t_iapws)
    assert dt.max() <= BACKWARD_DT_K
    assert set(region.tolist()) == {1, 2}


def test_random_quality_states_against_iapws():
    """(p, x) states: lever rule between saturated states, vs iapws IAPWS97(P, x).

    Up to 16.529 MPa the saturated states come from regions 1 and 2 (1e-9). Above, they
    lie in region 3, where iapws solves for the saturated densities and CoolProp takes
    them from backward equations: 1e-5 there (SR5-05 consistency, from memory).
    """
    rng = np.random.default_rng(_RNG_SEED + 1)
    n = 300
    p = 10 ** rng.uniform(np.log10(1e3), np.log10(21e6), n)
    x = rng.random(n)
    x[:3] = [0.0, 1.0, 0.5]
    state = steam.from_px(p, x)
    assert state.in_range.all()
    ref = [IAPWS97(P=pp / MPA, x=xx) for pp, xx in zip(p, x, strict=True)]
    h_ref = np.array([r.h * KJ for r in ref])
    s_ref = np.array([r.s * KJ for r in ref])
    v_ref = np.array([r.v for r in ref])
    t_ref = np.array([r.T for r in ref])
    low = p <= 16.529e6
    for got, want in ((state.h, h_ref), (state.s, s_ref), (state.v, v_ref)):
        np.testing.assert_allclose(got[low], want[low], rtol=1e-9, atol=0)
        np.testing.assert_allclose(got[~low], want[~low], rtol=1e-5, atol=0)
    np.testing.assert_allclose(state.t, t_ref, rtol=1e-12, atol=0)
    np.testing.assert_array_equal(state.quality, x)
    # The same states through (p, h) and (p, s) land on the same quality.
    by_h = steam.from_ph(p, state.h)
    by_s = steam.from_ps(p, state.s)
    np.testing.assert_allclose(by_h.quality, x, rtol=0, atol=1e-9)
    np.testing.assert_allclose(by_s.quality, x, rtol=0, atol=1e-9)
    assert set(by_h.phase.tolist()) == {Phase.TWO_PHASE}


def test_near_saturation_inverse_stays_on_its_side():
    """Single-phase states 1 mK off saturation come back on the right side.

    The backward equations alone can put such a state on the wrong side of the line
    (their 25 mK band is wider than the distance to it); engine.steam cannot. Kept below
    21 MPa: closer to the critical point the region-3 backward volumes and the
    saturated states of the (p, x) route disagree by more than 1 mK.
    """
    p = np.geomspace(1e3, 21e6, 200)
    t_sat = steam.saturation_temperature(p)
    for offset, phase in ((-1e-3, Phase.LIQUID), (1e-3, Phase.VAPOUR)):
        t = t_sat + offset
        forward = steam.from_pt(p, t, props=("h", "s"))
        by_h = steam.from_ph(p, forward.h)
        by_s = steam.from_ps(p, forward.s)
        np.testing.assert_allclose(by_h.t, t, rtol=0, atol=1e-6)
        np.testing.assert_allclose(by_s.t, t, rtol=0, atol=1e-6)
        assert set(by_h.phase.tolist()) == {phase}
        assert set(by_s.phase.tolist()) == {phase}


def test_isentropic_expansion_is_exactly_isentropic():
    """A state from (p2, s1) has entropy s1 through the (p, T) route to round-off.

    The turbine model relies on this for "a reversible turbine generates no entropy".
    Main steam 16 MPa, 540 degC expanded to 4 MPa (superheated) and to 10 kPa (wet).
    """
    inlet = steam.from_pt(16e6, 813.15)
    superheated = steam.from_ps(4e6, inlet.s)
    assert superheated.phase.tolist() == [Phase.VAPOUR]
    again = steam.from_pt(4e6, superheated.t, props=("s", "h"))
    np.testing.assert_allclose(again.s, inlet.s, rtol=1e-13)
    np.testing.assert_allclose(again.h, superheated.h, rtol=1e-13)
    wet = steam.from_ps(10e3, inlet.s)
    assert wet.phase.tolist() == [Phase.TWO_PHASE]
    # Lever rule check by hand with iapws saturated states at 10 kPa.
    f, g = IAPWS97(P=0.01, x=0), IAPWS97(P=0.01, x=1)
    x = (inlet.s[0] / KJ - f.s) / (g.s - f.s)
    np.testing.assert_allclose(wet.quality, x, rtol=1e-10)
    np.testing.assert_allclose(wet.h, (f.h + x * (g.h - f.h)) * KJ, rtol=1e-10)


def test_inverse_beyond_the_backward_equations():
    """Region 3 above p_c and region 5 have no (p, h) route in CoolProp; steam.py solves.

    Expected states from iapws: IAPWS97(P, T) for region 5 (1500 K at 0.5 MPa, R7-97
    Table 42 state) and iapws' region-3 composition along CoolProp's route at 25 MPa.
    """
    h5 = if97_ref._Region5(1500.0, 0.5)["h"] * KJ
    r3 = if97_ref._Region3(1.0 / if97_ref._Backward3_v_PT(25.0, 660.0), 660.0)
    p = np.array([0.5e6, 25e6])
    by_h = steam.from_ph(p, [h5, r3["h"] * KJ])
    assert by_h.in_range.tolist() == [True, True]
    np.testing.assert_allclose(by_h.t, [1500.0, 660.0], rtol=0, atol=1e-6)
    assert by_h.phase.tolist() == [Phase.VAPOUR, Phase.SUPERCRITICAL]
    by_s = steam.from_ps(p, [if97_ref._Region5(1500.0, 0.5)["s"] * KJ, r3["s"] * KJ])
    np.testing.assert_allclose(by_s.t, [1500.0, 660.0], rtol=0, atol=1e-6)


# ---------------------------------------------------------------------------------------
# Type matrix and guard rails (pvlib style).

# R7-97 Table 5, first state: 3 MPa, 300 K, h = 115.331273 kJ/kg.
_H_300K_3MPA = 0.115331273e3 * KJ


@pytest.mark.parametrize(
    ("p", "t"),
    [
        (3e6, 300.0),
        ([3e6], [300.0]),
        (np.array([3e6]), np.array([300.0])),
        (np.float64(3e6), 300),
        (pd.Series([3e6]), pd.Series([300.0])),
    ],
    ids=["scalar", "list", "ndarray", "numpy scalar and int", "Series"],
)
def test_type_matrix_from_pt(p, t):
    state = steam.from_pt(p, t)
    assert isinstance(state.h, np.ndarray)
    assert state.h.shape == (1,)
    np.testing.assert_allclose(state.h, _H_300K_3MPA, rtol=BASIC_RTOL)
    assert state.in_range.tolist() == [True]


def test_broadcast_scalar_against_array():
    state = steam.from_pt(3e6, np.array([300.0, 500.0]), props=("h",))
    np.testing.assert_allclose(
        state.h, [0.115331273e3 * KJ, 0.975542239e3 * KJ], rtol=BASIC_RTOL
    )  # R7-97 Table 5
    np.testing.assert_array_equal(state.p, [3e6, 3e6])


def test_series_keeps_its_index():
    index = pd.date_range("2024-03-01", periods=3, freq="min", tz="UTC")
    p = pd.Series([3e6, 3e6, np.nan], index=index)
    state = steam.from_pt(p, 300.0)
    assert state.index.equals(index)
    frame = state.to_frame()
    assert frame.index.equals(index)
    assert list(frame.columns) == ["p", "in_range", "t", "h", "s", "v", "quality", "phase"]
    np.testing.assert_allclose(frame["h"].iloc[:2], _H_300K_3MPA, rtol=BASIC_RTOL)
    assert np.isnan(frame["h"].iloc[2])
    assert frame["in_range"].tolist() == [True, True, False]


def test_series_of_nullable_floats():
    p = pd.Series([3e6, None], dtype="Float64")
    state = steam.from_pt(p, 300.0, props=("h",))
    assert state.in_range.tolist() == [True, False]
    np.testing.assert_allclose(state.h[0], _H_300K_3MPA, rtol=BASIC_RTOL)


def test_saturation_functions_keep_series():
    index = pd.Index([10, 20, 30], name="interval")
    t = steam.saturation_temperature(pd.Series([0.1e6, 1e6, 10e6], index=index))
    assert isinstance(t, pd.Series)
    assert t.index.equals(index)
    np.testing.assert_allclose(t.to_numpy(), [372.755919, 453.035632, 584.149488], rtol=1e-8)
    p = steam.saturation_pressure(pd.Series([300.0, 500.0, 600.0], index=index))
    assert p.index.equals(index)
    np.testing.assert_allclose(p.to_numpy(), [3536.58941, 2.63889776e6, 12.3443146e6], rtol=1e-8)
    assert isinstance(steam.saturation_temperature([1e6]), np.ndarray)


_OUT_OF_RANGE_PT = [
    ("NaN pressure", np.nan, 500.0),
    ("NaN temperature", 1e6, np.nan),
    ("infinite temperature", 1e6, np.inf),
    ("p = 0", 0.0, 500.0),
    ("p < 0", -1e5, 500.0),
    ("T = 0", 1e6, 0.0),
    ("T < 0 (degC passed as K)", 1e6, -5.0),
    ("T below 273.15 K", 1e6, 273.0),
    ("T above 2273.15 K", 1e6, 2300.0),
    ("p above 100 MPa", 101e6, 500.0),
    ("p above 50 MPa at T above 1073.15 K", 51e6, 1100.0),
    ("p below 611.213 Pa (CoolProp's lower limit)", 500.0, 400.0),
]


@pytest.mark.parametrize(
    ("p", "t"), [c[1:] for c in _OUT_OF_RANGE_PT], ids=[c[0] for c in _OUT_OF_RANGE_PT]
)
def test_out_of_range_gives_nan_and_flag(p, t):
    # The bad state between two good ones (R7-97 Table 5 states): only it is blanked.
    state = steam.from_pt([3e6, p, 3e6], [300.0, t, 500.0])
    assert state.in_range.tolist() == [True, False, True]
    for prop in ("h", "s", "v", "t", "p"):
        assert np.isnan(getattr(state, prop)[1]), prop
    assert state.phase.tolist() == [Phase.LIQUID, Phase.INVALID, Phase.LIQUID]
    np.testing.assert_allclose(
        state.h[[0, 2]], [0.115331273e3 * KJ, 0.975542239e3 * KJ], rtol=BASIC_RTOL
    )


@pytest.mark.parametrize(("p", "t"), [c[1:] for c in _OUT_OF_RANGE_PT[:6]])
def test_single_bad_state_does_not_raise(p, t):
    # CoolProp raises for a failing one-element call; engine.steam must not.
    state = steam.from_pt(p, t)
    assert state.in_range.tolist() == [False]
    assert np.isnan(state.h[0])


def test_edges_of_the_range_are_inside():
    # R7-97 Sec. 4: 273.15 K and 100 MPa, 2273.15 K and 50 MPa are in range.
    state = steam.from_pt([100e6, 50e6, 1e6], [273.15, 2273.15, 1073.15])
    assert state.in_range.tolist() == [True, True, True]


def test_all_bad_batch_does_not_raise():
    state = steam.from_pt([np.nan, -1.0, 3e6], [300.0, 300.0, 100.0])
    assert state.in_range.tolist() == [False, False, False]
    assert np.isnan(state.h).all()
    state = steam.from_ph([np.nan, 1e6], [1e6, np.nan])
    assert state.in_range.tolist() == [False, False]


@pytest.mark.parametrize(
    "call",
    [
        lambda: steam.from_pt(np.array([]), np.array([])),
        lambda: steam.from_ph(np.array([]), np.array([])),
        lambda: steam.from_ps(np.array([]), np.array([])),
        lambda: steam.from_px(np.array([]), np.array([])),
    ],
    ids=["pt", "ph", "ps", "px"],
)
def test_empty_input_gives_empty_output(call):
    state = call()
    assert state.in_range.shape == (0,)
    assert state.h.shape == (0,)
    assert state.phase.shape == (0,)


def test_props_not_asked_are_none():
    state = steam.from_pt(3e6, 300.0, props=("h",))
    assert state.s is None
    assert state.v is None
    assert state.phase is None
    np.testing.assert_allclose(state.h, _H_300K_3MPA, rtol=BASIC_RTOL)
    only_t = steam.from_pt([3e6, 3e6], [300.0, 3000.0], props=("t",))
    assert only_t.in_range.tolist() == [True, False]


def test_from_ph_guard_rails():
    # h beyond region 5's top (2273.15 K at 0.1 MPa is about 7.4 MJ/kg, iapws) and below
    # liquid at 273.15 K: no state in range.
    h_top = if97_ref._Region5(2273.15, 0.1)["h"] * KJ
    state = steam.from_ph(
        [0.1e6, 0.1e6, 0.1e6, np.nan, 0.0, 101e6, 0.1e6],
        [h_top + 1e4, -1e4, 2e6, 2e6, 2e6, 1e6, np.inf],
    )
    assert state.in_range.tolist() == [False, False, True, False, False, False, False]
    assert np.isnan(state.t[[0, 1, 3, 4, 5, 6]]).all()
    assert state.phase[2] == Phase.TWO_PHASE
    # A state just inside the top of the range is still solved.
    inside = steam.from_ph(0.1e6, h_top - 1.0)
    assert inside.in_range.tolist() == [True]
    assert 2272.0 < inside.t[0] < 2273.15


def test_from_px_guard_rails():
    state = steam.from_px(
        [1e6, 1e6, 1e6, 22.064e6, 500.0, np.nan, 1e6], [0.5, -0.1, 1.1, 0.5, 0.5, 0.5, np.nan]
    )
    assert state.in_range.tolist() == [True, False, False, False, False, False, False]
    assert np.isnan(state.h[1:]).all()
    assert state.phase.tolist() == [Phase.TWO_PHASE] + [Phase.INVALID] * 6


def test_saturation_guard_rails():
    assert np.isnan(steam.saturation_temperature([23e6, -1.0, np.nan])).all()
    assert np.isnan(steam.saturation_pressure([650.0, 273.0, np.nan])).all()


def test_formulation_is_named():
    assert steam.FORMULATION == "IAPWS-IF97"


@pytest.mark.parametrize("props", [("h",), ("s",), ("quality",), ("v",), ("t",), ("phase",)])
def test_inverse_with_a_subset_of_properties(props):
    """Asking for fewer properties changes nothing in what is computed or flagged.

    Wet (10 kPa), superheated (1 MPa), compressed liquid (20 MPa) and an impossible
    row (h below liquid at 273.15 K), by (p, h) from states of R7-97 Tables 5 and 15.
    """
    p = np.array([10e3, 1e6, 20e6, 1e6])
    h = np.array([2.3e6, 0.333568375e4 * KJ, 0.975542239e3 * KJ, -50e3])
    full = steam.from_ph(p, h)
    part = steam.from_ph(p, h, props=props)
    assert full.in_range.tolist() == [True, True, True, False]
    np.testing.assert_array_equal(part.in_range, full.in_range)
    for prop in props:
        np.testing.assert_array_equal(getattr(part, prop), getattr(full, prop))
    by_s = steam.from_ps(p[:3], full.s[:3], props=props)
    assert by_s.in_range.tolist() == [True, True, True]
