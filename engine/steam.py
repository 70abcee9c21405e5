"""Water and steam states by the IAPWS industrial formulation 1997 (IAPWS-IF97).

This module owns water and steam; its CoolProp calls go through :mod:`engine._coolprop`
(the one module that imports CoolProp, shared with :mod:`engine.fluids`), which decides
how arrays are handled and how failures become NaN. This module adds the IF97 range
checks, the per-row flag and the formulation (:data:`FORMULATION`, recorded with every
result).

Every function takes numeric input (scalar, list, ndarray or Series, broadcast against
each other by position, not by label) and returns a :class:`SteamState` of 1-D float
arrays; when an input is a Series, ``SteamState.index`` keeps its index and
:meth:`SteamState.to_frame` returns the properties as a DataFrame on it. A state that
lies outside the formulation's range of validity, or whose input is NaN, non-positive
or non-finite, gives NaN in every property and ``in_range = False`` for that row; the
other rows of the batch are unaffected. No function here raises for a bad row.

Consistency of the inverse routes. IF97's backward equations T(p,h) and T(p,s) agree
with the basic equations only to a few tens of mK (R7-97 Sec. 5.2 and 6.3; 22 mK
measured in subregion 2c) [1]_. :func:`from_ph` and :func:`from_ps` therefore solve
h(p, T) = h or s(p, T) = s by safeguarded Newton steps on the (p, T) route (iterating
on the basic equations, for which the backward equations are a shortcut), so that
``from_ph(p, from_pt(p, T).h).t`` returns ``T`` to about 1e-9 K, and entropy balances
of a reversible process close to round-off. The same solver covers the states
CoolProp's IF97 backend has no (p, h) or (p, s) route for: region 3 above the critical
pressure and region 5. Inside the dome (region 4) the lever rule between the
saturated states applies, exactly as in :func:`from_px`.

Range. IF97 is valid for 273.15 K <= T <= 1073.15 K at p <= 100 MPa and
1073.15 K < T <= 2273.15 K at p <= 50 MPa ([1]_, Sec. 4). CoolProp's IF97 backend also
refuses pressures below the saturation pressure at 273.15 K (611.213 Pa), although
region 2 of the release extends to 0 Pa; lostwork follows the backend.

Region 3. The (p, T) route evaluates the basic equation f(rho, T) at the density of
the backward equations v(p, T) of IAPWS SR5-05 [3]_, so region-3 properties from
(p, T) agree with the exact solution of the basic equation only to that equation's
consistency (up to about 1e-5 relative in v, 2e-6 in h and s; near the critical point,
21-22.5 MPa, up to 3e-4 in v), measured against the ``iapws`` package. Between about
21 MPa and the critical pressure, states within about 10 mK of saturation may come
back from (p, h) or (p, s) on the other side of the line or inside the dome, because
the saturated states and the region-3 backward volumes disagree by that much there.

References
----------
.. [1] IAPWS, "Revised Release on the IAPWS Industrial Formulation 1997 for the
   Thermodynamic Properties of Water and Steam", IAPWS R7-97(2012), 2007/2012.
.. [2] I. H. Bell, J. Wronski, S. Quoilin, V. Lemort, "Pure and Pseudo-pure Fluid
   Thermophysical Property Evaluation and the Open-Source Thermophysical Property
   Library CoolProp", Ind. Eng. Chem. Res. 53 (2014) 2498-2508. (IF97 backend.)
.. [3] IAPWS, "Revised Supplementary Release on Backward Equations for Specific
   Volume as a Function of Pressure and Temperature v(p,T) for Region 3 of the IAPWS
   Industrial Formulation 1997", IAPWS SR5-05(2016).
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import IntEnum

import numpy as np
import pandas as pd

from engine import _coolprop

FORMULATION = "IAPWS-IF97"
"""Name of the water/steam formulation; stored in result metadata and shown in the README."""

_BACKEND_FLUID = "IF97::Water"

T_TRIPLE_K = 273.16
"""Triple-point temperature of water. [K] (IAPWS R7-97, Sec. 2)"""
T_CRITICAL_K = 647.096
"""Critical temperature of water. [K] (IAPWS R7-97, Eq. 3)"""
P_CRITICAL_PA = 22.064e6
"""Critical pressure of water. [Pa] (IAPWS R7-97, Eq. 4)"""
P_MIN_PA = 611.213
"""Lowest pressure accepted: p_sat(273.15 K) = 611.212677 Pa (IAPWS R7-97, Sec. 8.1),
rounded up to the lower limit of CoolProp's IF97 backend. [Pa]"""

# Range of validity of IF97 (IAPWS R7-97, Sec. 4, Fig. 1).
_T_MIN_K = 273.15
_T_MAX_K = 2273.15
_T_MAX_LOW_K = 1073.15  # above this, region 5 only, up to 50 MPa
_P_MAX_PA = 100e6
_P_MAX_HIGH_T_PA = 50e6

# Inverse solver: Newton steps on T, kept inside a bracket by bisection. A Newton step
# smaller than the tolerance leaves an error of order (c_p'/c_p) * step^2, far below
# 1e-9 K; the iteration limit covers pure bisection of a 2000 K bracket.
_T_TOL_K = 1e-6
_MAX_ITER = 60
# Distance kept from the saturation temperature so that the (p, T) route evaluates the
# single-phase region on the intended side of the line.
_SAT_MARGIN_K = 1e-9
# Rough specific heats for starting values only (they never affect a converged result).
_CP_LIQUID = 4186.0
_CP_VAPOUR = 2000.0


class Phase(IntEnum):
    """Phase of a water/steam state (our own codes, stable across releases)."""

    INVALID = 0
    LIQUID = 1
    TWO_PHASE = 2
    VAPOUR = 3
    SUPERCRITICAL = 4


# CoolProp's phase indices (CoolProp.constants.iphase_*) mapped to ours.
_COOLPROP_PHASE = {
    0: Phase.LIQUID,  # iphase_liquid
    1: Phase.SUPERCRITICAL,  # iphase_supercritical (p > p_c and T > T_c)
    2: Phase.VAPOUR,  # iphase_supercritical_gas (T > T_c, p < p_c): superheated steam
    3: Phase.LIQUID,  # iphase_supercritical_liquid (p > p_c, T < T_c): compressed water
    4: Phase.SUPERCRITICAL,  # iphase_critical_point
    5: Phase.VAPOUR,  # iphase_gas
    6: Phase.TWO_PHASE,  # iphase_twophase
}

ALL_PROPERTIES = ("h", "s", "v", "t", "quality", "phase")
_COOLPROP_NAME = {"h": "H", "s": "S"}


@dataclass(frozen=True)
class SteamState(_coolprop.StateFrame):
    """Water/steam states, one row per element; properties not asked for are ``None``.

    Attributes
    ----------
    p : ndarray
        Pressure. [Pa]
    in_range : ndarray of bool
        False where the input lies outside IF97's range or is not a valid number.
    t : ndarray or None
        Temperature. [K]
    h : ndarray or None
        Specific enthalpy. [J/kg]
    s : ndarray or None
        Specific entropy. [J/(kg K)]
    v : ndarray or None
        Specific volume. [m^3/kg]
    quality : ndarray or None
        Vapour mass fraction inside the two-phase dome; NaN outside it. [-]
    phase : ndarray or None
        :class:`Phase` code per row (``Phase.INVALID`` where out of range). [-]
    index : pandas.Index or None
        Index of the first Series among the inputs, so that results can be put back
        on the caller's time axis; None when no input was a Series.
    """

    p: np.ndarray
    in_range: np.ndarray
    t: np.ndarray | None = None
    h: np.ndarray | None = None
    s: np.ndarray | None = None
    v: np.ndarray | None = None
    quality: np.ndarray | None = None
    phase: np.ndarray | None = None
    index: pd.Index | None = None


def _props(output: str, name1: str, v1: np.ndarray, name2: str, v2: np.ndarray) -> np.ndarray:
    """One IF97 call over whole arrays (NaN where it fails); every water-property call of
    lostwork passes through here, so the benchmark counts them here."""
    return _coolprop.props(output, name1, v1, name2, v2, _BACKEND_FLUID)


def _pt_in_range(p: np.ndarray, t: np.ndarray) -> np.ndarray:
    """IF97 range of validity in (p, T), IAPWS R7-97 Sec. 4."""
    with np.errstate(invalid="ignore"):
        p_ok = p >= P_MIN_PA
        low = (t >= _T_MIN_K) & (t <= _T_MAX_LOW_K) & p_ok & (p <= _P_MAX_PA)
        high = (t > _T_MAX_LOW_K) & (t <= _T_MAX_K) & p_ok & (p <= _P_MAX_HIGH_T_PA)
    return low | high


def _finish(
    p: np.ndarray, ok: np.ndarray, values: dict[str, np.ndarray], index: pd.Index | None
) -> SteamState:
    """Blank every property of the rows that are not ``ok``."""
    for key, array in values.items():
        if key == "phase":
            array[~ok] = int(Phase.INVALID)
        else:
            array[~ok] = np.nan
    return SteamState(p=np.where(ok, p, np.nan), in_range=ok, index=index, **values)


def from_pt(p_pa, t_k, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Water/steam state from pressure and temperature (single-phase regions).

    Parameters
    ----------
    p_pa : numeric
        Pressure. [Pa]
    t_k : numeric
        Temperature. [K]
    props : tuple of str, default all
        Which of ``h, s, v, t, quality, phase`` to compute; fewer is faster.

    Returns
    -------
    SteamState
        Rows outside IF97's range (IAPWS R7-97, Sec. 4: 273.15-1073.15 K up to 100 MPa,
        1073.15-2273.15 K up to 50 MPa; pressures from 611.213 Pa) are NaN with
        ``in_range`` False. ``quality`` is NaN: (p, T) fixes single-phase states only.

    Notes
    -----
    On the saturation line (p, T) does not fix the state; IF97 then returns the
    single-phase state of the region the point is assigned to.

    References
    ----------
    .. [1] IAPWS R7-97(2012), Sec. 5 (region 1), 6 (region 2), 7 (region 3), 9 (region 5).
    .. [2] IAPWS SR5-05(2016), v(p, T) for region 3.
    """
    (p, t), index = _coolprop.inputs(p_pa, t_k)
    n = p.size
    ok = _pt_in_range(p, t)
    rows = np.flatnonzero(ok)
    pr, tr = p[rows], t[rows]
    values: dict[str, np.ndarray] = {}
    for prop in props:
        if prop == "t":
            values["t"] = t.copy()
        elif prop in _COOLPROP_NAME:
            values[prop] = _coolprop.scatter(
                n, rows, _props(_COOLPROP_NAME[prop], "P", pr, "T", tr)
            )
        elif prop == "v":
            values["v"] = _coolprop.scatter(n, rows, 1.0 / _props("D", "P", pr, "T", tr))
        elif prop == "quality":
            values["quality"] = np.full(n, np.nan)
        elif prop == "phase":
            raw = _props("Phase", "P", pr, "T", tr)
            phase = np.full(n, int(Phase.INVALID), dtype=np.int8)
            for code, ours in _COOLPROP_PHASE.items():
                phase[rows[raw == code]] = int(ours)
            values["phase"] = phase
    checked = [values[k] for k in ("h", "s", "v") if k in values]
    if "phase" in values:
        checked.append(np.where(values["phase"] == int(Phase.INVALID), np.nan, 0.0))
    if not checked:
        # Nothing was computed: one call tells whether the backend accepts the state.
        checked = [_coolprop.scatter(n, rows, _props("H", "P", pr, "T", tr))]
    ok = ok & np.logical_and.reduce([np.isfinite(a) for a in checked])
    return _finish(p, ok, values, index)


def _solve_t(
    p: np.ndarray,
    target: np.ndarray,
    name: str,
    t_start: np.ndarray,
    lo: np.ndarray,
    hi: np.ndarray,
    lo_hard: np.ndarray,
    hi_hard: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Temperature at which ``name`` ("H" or "S") at (p, T) equals ``target``.

    Newton steps with dh/dT = c_p or ds/dT = c_p/T at constant p; a step that leaves
    the bracket [lo, hi], or does not shrink fast enough, is replaced by bisection. A row whose answer is pinned to a
    hard bound (the end of IF97's temperature range) has no solution in range and is
    reported as not solved; a soft bound (the saturation line) is a legitimate limit.

    Returns the temperature [K] and a bool array, True where solved.
    """
    n = p.size
    lo0, hi0 = lo, hi
    lo = lo.copy()
    hi = hi.copy()
    t = np.where(np.isfinite(t_start), np.clip(t_start, lo, hi), 0.5 * (lo + hi))
    # Step before last, per row: a Newton step must at least halve it, otherwise the
    # iteration bisects (safeguard of "rtsafe", Press et al., Numerical Recipes,
    # 3rd ed., Sec. 9.4), which stops Newton bouncing across an inflection point.
    dx_old = hi - lo
    dx = dx_old.copy()
    solved = np.zeros(n, dtype=bool)
    active = np.arange(n)
    for _ in range(_MAX_ITER):
        if active.size == 0:
            break
        pa, ta = p[active], t[active]
        f = _props(name, "P", pa, "T", ta) - target[active]
        slope = _props("C", "P", pa, "T", ta)
        if name == "S":
            slope = slope / ta
        lo_a = np.where(f < 0, ta, lo[active])
        hi_a = np.where(f > 0, ta, hi[active])
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            step = f / slope
            t_newton = ta - step
            # A step below the tolerance ends the iteration even when rounding puts
            # it on the bracket's edge.
            tiny = np.abs(step) <= _T_TOL_K
            newton = tiny | (
                (t_newton > lo_a)
                & (t_newton < hi_a)
                & (2.0 * np.abs(step) <= np.abs(dx_old[active]))
            )
        half = 0.5 * (hi_a - lo_a)
        dx_old[active] = dx[active]
        dx[active] = np.where(newton, np.abs(step), half)
        t_new = np.where(newton, np.clip(t_newton, lo_a, hi_a), lo_a + half)
        done = (f == 0) | tiny | (~newton & (half <= _T_TOL_K))
        lo[active], hi[active] = lo_a, hi_a
        t[active] = np.where(f == 0, ta, t_new)
        solved[active[done]] = True
        active = active[~done]
    # A row pinned to a hard bound is solved only if the bound itself is the answer.
    at_lo = solved & lo_hard & (t - lo0 <= _T_TOL_K)
    at_hi = solved & hi_hard & (hi0 - t <= _T_TOL_K) & ~at_lo
    rows = np.flatnonzero(at_lo | at_hi)
    if rows.size:
        bound = np.where(at_lo, lo0, hi0)[rows]
        residual = _props(name, "P", p[rows], "T", bound) - target[rows]
        scale = np.abs(target[rows]) + (1e3 if name == "H" else 1.0)
        close = np.abs(residual) <= 1e-9 * scale
        solved[rows[~close]] = False
        t[rows[close]] = bound[close]
    return t, solved


def _start_temperature(
    p: np.ndarray,
    y: np.ndarray,
    name: str,
    n_liq: int,
    n_vap: int,
    t_sat_vap: np.ndarray,
    y_g_vap: np.ndarray,
) -> np.ndarray:
    """Starting temperatures for :func:`_solve_t`, rows ordered liquid, vapour, rest.

    Below the critical pressure a constant-c_p estimate (liquid from 273.15 K with
    4186 J/(kg K); vapour from the saturated vapour with 2000 J/(kg K)) costs nothing
    and needs about one Newton step more than the backward equations, whose call
    through CoolProp costs as much as five or more Newton steps. Above the critical
    pressure the backward equations give the start; where they fail the solver
    starts from the middle of the bracket.
    """
    t = np.empty(p.size)
    liq, vap, rest = slice(0, n_liq), slice(n_liq, n_liq + n_vap), slice(n_liq + n_vap, None)
    if name == "H":
        t[liq] = _T_MIN_K + y[liq] / _CP_LIQUID
        t[vap] = t_sat_vap + (y[vap] - y_g_vap) / _CP_VAPOUR
    else:
        t[liq] = _T_MIN_K * np.exp(y[liq] / _CP_LIQUID)
        t[vap] = t_sat_vap * np.exp((y[vap] - y_g_vap) / _CP_VAPOUR)
    t[rest] = _props("T", "P", p[rest], name, y[rest])
    return t


def _from_p_and(
    p: np.ndarray, y: np.ndarray, name: str, props: tuple[str, ...], index: pd.Index | None
) -> SteamState:
    """State from pressure and h (``name`` "H") or s (``name`` "S"), any phase."""
    n = p.size
    key, other = ("h", "s") if name == "H" else ("s", "h")
    other_name = _COOLPROP_NAME[other]
    with np.errstate(invalid="ignore"):
        valid = np.isfinite(p) & (p >= P_MIN_PA) & (p <= _P_MAX_PA) & np.isfinite(y)
    t = np.full(n, np.nan)
    quality = np.full(n, np.nan)
    phase = np.full(n, int(Phase.INVALID), dtype=np.int8)
    other_values = np.full(n, np.nan)
    v = np.full(n, np.nan)
    ok = np.zeros(n, dtype=bool)

    # Below the critical pressure the saturated states split the rows into liquid,
    # two-phase (region 4: lever rule between the saturated states) and vapour.
    with np.errstate(invalid="ignore"):
        sat_rows = np.flatnonzero(valid & (p < P_CRITICAL_PA))
    ps, ys = p[sat_rows], y[sat_rows]
    # Saturated vapour first: rows beyond it need neither the liquid end nor, when T is
    # not asked for, the saturation temperature (each is a full CoolProp evaluation).
    y_g = _props(name, "P", ps, "Q", np.ones(ps.size))
    with np.errstate(invalid="ignore"):
        vapour = ys > y_g
        below = np.flatnonzero(ys <= y_g)
    y_f = _coolprop.scatter(ps.size, below, _props(name, "P", ps[below], "Q", np.zeros(below.size)))
    with np.errstate(invalid="ignore"):
        two = ys >= y_f
        liquid = ys < y_f
    need_t = np.flatnonzero(vapour | liquid | (two & ("t" in props)))
    t_sat = _coolprop.scatter(
        ps.size, need_t, _props("T", "P", ps[need_t], "Q", np.zeros(need_t.size))
    )
    vapour &= np.isfinite(t_sat)
    liquid &= np.isfinite(t_sat)

    rows = sat_rows[two]
    p2 = ps[two]
    x = (ys[two] - y_f[two]) / (y_g[two] - y_f[two])
    t[rows] = t_sat[two]
    quality[rows] = x
    phase[rows] = int(Phase.TWO_PHASE)
    ok[rows] = np.isfinite(x)
    z2, o2 = np.zeros(p2.size), np.ones(p2.size)
    if other in props:
        o_f = _props(other_name, "P", p2, "Q", z2)
        o_g = _props(other_name, "P", p2, "Q", o2)
        other_values[rows] = o_f + x * (o_g - o_f)
    if "v" in props:
        v_f = 1.0 / _props("D", "P", p2, "Q", z2)
        v_g = 1.0 / _props("D", "P", p2, "Q", o2)
        v[rows] = v_f + x * (v_g - v_f)

    # Single-phase rows: bracket on the right side of the saturation line, solve on
    # the (p, T) route.
    with np.errstate(invalid="ignore"):
        above_critical = np.flatnonzero(valid & (p >= P_CRITICAL_PA))
    one = np.concatenate([sat_rows[liquid], sat_rows[vapour], above_critical])
    p1, y1 = p[one], y[one]
    t_max = np.where(p1 <= _P_MAX_HIGH_T_PA, _T_MAX_K, _T_MAX_LOW_K)
    n_liq, n_vap = int(liquid.sum()), int(vapour.sum())
    lo = np.full(one.size, _T_MIN_K)
    hi = t_max.copy()
    lo_hard = np.ones(one.size, dtype=bool)
    hi_hard = np.ones(one.size, dtype=bool)
    hi[:n_liq] = t_sat[liquid] - _SAT_MARGIN_K
    hi_hard[:n_liq] = False
    lo[n_liq : n_liq + n_vap] = t_sat[vapour] + _SAT_MARGIN_K
    lo_hard[n_liq : n_liq + n_vap] = False
    t_start = _start_temperature(p1, y1, name, n_liq, n_vap, t_sat[vapour], y_g[vapour])
    t1, solved = _solve_t(p1, y1, name, t_start, lo, hi, lo_hard, hi_hard)
    rows, p1, t1 = one[solved], p1[solved], t1[solved]
    t[rows] = t1
    ok[rows] = True
    if other in props:
        other_values[rows] = _props(other_name, "P", p1, "T", t1)
    if "v" in props:
        v[rows] = 1.0 / _props("D", "P", p1, "T", t1)
    if "phase" in props:
        single = np.full(one.size, int(Phase.LIQUID), dtype=np.int8)
        single[n_liq : n_liq + n_vap] = int(Phase.VAPOUR)
        t_one = np.full(one.size, np.nan)
        t_one[solved] = t1
        with np.errstate(invalid="ignore"):
            hot = (np.arange(one.size) >= n_liq + n_vap) & (t_one > T_CRITICAL_K)
        single[hot] = int(Phase.SUPERCRITICAL)
        phase[rows] = single[solved]

    ok &= valid
    if "t" in props:
        ok &= np.isfinite(t)
    if other in props:
        ok &= np.isfinite(other_values)
    if "v" in props:
        ok &= np.isfinite(v)
    computed = {"t": t, key: y.copy(), other: other_values, "v": v, "quality": quality}
    computed["phase"] = phase
    values = {k: computed[k] for k in props}
    return _finish(p, ok, values, index)


def from_ph(p_pa, h_j_per_kg, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Water/steam state from pressure and specific enthalpy (any phase).

    Parameters
    ----------
    p_pa : numeric
        Pressure. [Pa]
    h_j_per_kg : numeric
        Specific enthalpy. [J/kg]
    props : tuple of str
        Properties to compute.

    Returns
    -------
    SteamState

    Notes
    -----
    Below the critical pressure, h between the saturated-liquid and saturated-vapour
    enthalpies gives a two-phase state (lever rule, IAPWS R7-97 Sec. 8). Otherwise the
    temperature solves h(p, T) = h (safeguarded Newton steps on the basic equations;
    above the critical pressure the backward equation T(p,h) gives the first guess),
    so the state is the one :func:`from_pt` gives at that temperature. It differs from
    the backward equation's answer by no more than that equation's consistency with
    the basic equations (at most 25 mK; tests against R7-97 Tables 7 and 24).

    References
    ----------
    .. [1] IAPWS R7-97(2012), backward equations T(p,h): Eq. 11 (region 1), Eqs. 22-24
       (region 2); saturation (Sec. 8).
    """
    (p, h), index = _coolprop.inputs(p_pa, h_j_per_kg)
    return _from_p_and(p, h, "H", props, index)


def from_ps(p_pa, s_j_per_kg_k, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Water/steam state from pressure and specific entropy (any phase).

    Parameters
    ----------
    p_pa : numeric
        Pressure. [Pa]
    s_j_per_kg_k : numeric
        Specific entropy. [J/(kg K)]
    props : tuple of str
        Properties to compute.

    Returns
    -------
    SteamState

    Notes
    -----
    As :func:`from_ph`, solving s(p, T) = s.

    References
    ----------
    .. [1] IAPWS R7-97(2012), backward equations T(p,s): Eq. 13 (region 1), Eqs. 25-27
       (region 2); saturation (Sec. 8).
    """
    (p, s), index = _coolprop.inputs(p_pa, s_j_per_kg_k)
    return _from_p_and(p, s, "S", props, index)


def from_px(p_pa, quality, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Saturated water/steam state from pressure and vapour quality.

    Parameters
    ----------
    p_pa : numeric
        Saturation pressure, 611.213 Pa to below the critical pressure. [Pa]
    quality : numeric
        Vapour mass fraction, 0 (saturated liquid) to 1 (saturated vapour). [-]
    props : tuple of str
        Properties to compute.

    Returns
    -------
    SteamState
        ``phase`` is ``Phase.TWO_PHASE`` for every valid row, the saturated ends
        included.

    References
    ----------
    .. [1] IAPWS R7-97(2012), Sec. 8 (region 4, saturation-temperature equation).
    """
    (p, x), index = _coolprop.inputs(p_pa, quality)
    n = p.size
    with np.errstate(invalid="ignore"):
        ok = (p >= P_MIN_PA) & (p < P_CRITICAL_PA) & (x >= 0) & (x <= 1)
    rows = np.flatnonzero(ok)
    pr, xr = p[rows], x[rows]
    names = {"t": "T", "h": "H", "s": "S", "v": "D"}
    values: dict[str, np.ndarray] = {}
    for prop in props:
        if prop in names:
            out = _props(names[prop], "P", pr, "Q", xr)
            values[prop] = _coolprop.scatter(n, rows, 1.0 / out if prop == "v" else out)
        elif prop == "quality":
            values["quality"] = x.copy()
        elif prop == "phase":
            values["phase"] = np.full(n, int(Phase.TWO_PHASE), dtype=np.int8)
    checked = [values[k] for k in ("t", "h", "s", "v") if k in values]
    if not checked:
        checked = [_coolprop.scatter(n, rows, _props("T", "P", pr, "Q", xr))]
    ok = ok & np.logical_and.reduce([np.isfinite(a) for a in checked])
    return _finish(p, ok, values, index)


def saturated_liquid(p_pa, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Saturated liquid at pressure ``p_pa`` [Pa] (for example boiler blowdown at drum pressure)."""
    return from_px(p_pa, 0.0, props)


def saturated_vapour(p_pa, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Saturated vapour at pressure ``p_pa`` [Pa]."""
    return from_px(p_pa, 1.0, props)


def _like_input(values: np.ndarray, index: pd.Index | None):
    return pd.Series(values, index=index) if index is not None else values


def saturation_temperature(p_pa):
    """Saturation temperature at pressure ``p_pa`` [Pa]; NaN outside 611.213 Pa-p_c. [K]

    Returns an ndarray (a Series on the same index when ``p_pa`` is a Series).

    References
    ----------
    .. [1] IAPWS R7-97(2012), Eq. 31 (saturation-temperature equation).
    """
    state = from_px(p_pa, 0.0, props=("t",))
    return _like_input(state.t, state.index)


def saturation_pressure(t_k):
    """Saturation pressure at temperature ``t_k`` [K]; NaN outside 273.15 K-T_c. [Pa]

    Returns an ndarray (a Series on the same index when ``t_k`` is a Series).

    References
    ----------
    .. [1] IAPWS R7-97(2012), Eq. 30 (saturation-pressure equation).
    """
    (t,), index = _coolprop.inputs(t_k)
    with np.errstate(invalid="ignore"):
        rows = np.flatnonzero((t >= _T_MIN_K) & (t < T_CRITICAL_K))
    p = _coolprop.scatter(t.size, rows, _props("P", "T", t[rows], "Q", np.zeros(rows.size)))
    return _like_input(p, index)
