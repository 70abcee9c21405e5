"""Water and steam states by the IAPWS industrial formulation 1997 (IAPWS-IF97).

This module is the only place in lostwork that imports CoolProp. It decides how arrays
are handled, how failures become NaN plus a per-row flag, and which formulation is
used (:data:`FORMULATION`, recorded with every result).

Every function takes numeric input (scalar, list, ndarray or Series, broadcast against
each other) and returns a :class:`SteamState` of 1-D float arrays. A state that lies
outside the formulation's range of validity, or whose input is NaN, non-positive or
non-finite, gives NaN in every property and ``in_range = False`` for that row; the other
rows of the batch are unaffected. No function here raises for a bad row.

References
----------
.. [1] IAPWS, "Revised Release on the IAPWS Industrial Formulation 1997 for the
   Thermodynamic Properties of Water and Steam", IAPWS R7-97(2012), 2007/2012.
.. [2] I. H. Bell, J. Wronski, S. Quoilin, V. Lemort, "Pure and Pseudo-pure Fluid
   Thermophysical Property Evaluation and the Open-Source Thermophysical Property
   Library CoolProp", Ind. Eng. Chem. Res. 53 (2014) 2498-2508. (IF97 backend.)
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import IntEnum

import numpy as np
from CoolProp.CoolProp import PropsSI

FORMULATION = "IAPWS-IF97"
"""Name of the water/steam formulation; stored in result metadata and shown in the README."""

_BACKEND_FLUID = "IF97::Water"

T_TRIPLE_K = 273.16
"""Triple-point temperature of water. [K] (IAPWS R7-97, Sec. 2)"""
T_CRITICAL_K = 647.096
"""Critical temperature of water. [K] (IAPWS R7-97, Eq. 3)"""
P_CRITICAL_PA = 22.064e6
"""Critical pressure of water. [Pa] (IAPWS R7-97, Eq. 4)"""

# Range of validity of IF97 (IAPWS R7-97, Sec. 4, Fig. 1).
_T_MIN_K = 273.15
_T_MAX_K = 2273.15
_T_MAX_LOW_K = 1073.15  # above this, region 5 only, up to 50 MPa
_P_MAX_PA = 100e6
_P_MAX_HIGH_T_PA = 50e6


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
_COOLPROP_NAME = {"h": "H", "s": "S", "t": "T", "p": "P", "quality": "Q", "rho": "D"}
_COOLPROP_NAME_REVERSE = {"P": "p", "T": "t", "H": "h", "S": "s", "Q": "quality"}


@dataclass(frozen=True)
class SteamState:
    """Water/steam states, one row per element; properties not asked for are ``None``.

    Attributes
    ----------
    p : ndarray
        Pressure. [Pa]
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
    in_range : ndarray of bool
        False where the input lies outside IF97's range or is not a valid number.
    """

    p: np.ndarray
    in_range: np.ndarray
    t: np.ndarray | None = None
    h: np.ndarray | None = None
    s: np.ndarray | None = None
    v: np.ndarray | None = None
    quality: np.ndarray | None = None
    phase: np.ndarray | None = None


def _as_arrays(*values) -> list[np.ndarray]:
    arrays = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in values))
    return [np.array(a, dtype=float).reshape(-1) for a in arrays]


def _props(output: str, name1: str, v1: np.ndarray, name2: str, v2: np.ndarray) -> np.ndarray:
    """One CoolProp call over whole arrays; failed states come back as NaN.

    CoolProp loops in C++ over arrays of two or more elements and marks a failed state
    with ``inf``; with a single element it raises instead, so that case is caught here.
    """
    if v1.size == 1:
        try:
            out = np.array([PropsSI(output, name1, v1[0], name2, v2[0], _BACKEND_FLUID)])
        except ValueError:
            out = np.array([np.nan])
    else:
        out = np.asarray(PropsSI(output, name1, v1, name2, v2, _BACKEND_FLUID), dtype=float)
    out[~np.isfinite(out)] = np.nan
    return out


def _pt_in_range(p: np.ndarray, t: np.ndarray) -> np.ndarray:
    """IF97 range of validity in (p, T), IAPWS R7-97 Sec. 4."""
    with np.errstate(invalid="ignore"):
        low = (t >= _T_MIN_K) & (t <= _T_MAX_LOW_K) & (p > 0) & (p <= _P_MAX_PA)
        high = (t > _T_MAX_LOW_K) & (t <= _T_MAX_K) & (p > 0) & (p <= _P_MAX_HIGH_T_PA)
    return low | high


def _state(
    name1: str,
    v1: np.ndarray,
    name2: str,
    v2: np.ndarray,
    props: tuple[str, ...],
    valid_input: np.ndarray,
) -> SteamState:
    # Rows with invalid input are blanked before the call so that CoolProp never
    # sees them (and never extrapolates silently).
    v1 = np.where(valid_input, v1, np.nan)
    v2 = np.where(valid_input, v2, np.nan)
    known = {_COOLPROP_NAME_REVERSE[name1]: v1, _COOLPROP_NAME_REVERSE[name2]: v2}
    values: dict[str, np.ndarray] = {}
    for prop in props:
        if prop in known:
            values[prop] = known[prop].copy()
        elif prop == "v":
            values["v"] = 1.0 / _props("D", name1, v1, name2, v2)
        elif prop == "phase":
            continue
        else:
            values[prop] = _props(_COOLPROP_NAME[prop], name1, v1, name2, v2)
    # The row is valid when the call produced a number for every computed property;
    # when only input properties were asked for, temperature is computed to find out.
    computed = [a for k, a in values.items() if k not in known]
    if not computed:
        computed = [_props("T", name1, v1, name2, v2)]
    ok = valid_input & np.logical_and.reduce([np.isfinite(a) for a in computed])
    for key in values:
        values[key] = np.where(ok, values[key], np.nan)
    if "quality" in values:
        q = values["quality"]
        # CoolProp reports -1 outside the dome; lostwork reports NaN there.
        values["quality"] = np.where((q >= 0) & (q <= 1), q, np.nan)
    if "phase" in props:
        raw = _props("Phase", name1, v1, name2, v2)
        phase = np.full(raw.shape, int(Phase.INVALID), dtype=np.int8)
        for code, ours in _COOLPROP_PHASE.items():
            phase[raw == code] = int(ours)
        phase[~ok] = int(Phase.INVALID)
        values["phase"] = phase
    return SteamState(p=np.where(ok, known["p"], np.nan), in_range=ok, **values)


def _positive(*arrays: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        return np.logical_and.reduce([np.isfinite(a) & (a > 0) for a in arrays])


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
        1073.15-2273.15 K up to 50 MPa) are NaN with ``in_range`` False.

    Notes
    -----
    On the saturation line (p, T) does not fix the state; IF97 then returns the
    single-phase state of the region the point is assigned to.

    References
    ----------
    .. [1] IAPWS R7-97(2012), Sec. 5 (region 1), 6 (region 2), 7 (region 3), 9 (region 5).
    """
    p, t = _as_arrays(p_pa, t_k)
    return _state("P", p, "T", t, props, _pt_in_range(p, t))


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

    References
    ----------
    .. [1] IAPWS R7-97(2012), backward equations T(p,h) and the saturation equation (Sec. 8).
    """
    p, h = _as_arrays(p_pa, h_j_per_kg)
    valid = _positive(p) & np.isfinite(h) & (p <= _P_MAX_PA)
    return _state("P", p, "H", h, props, valid)


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

    References
    ----------
    .. [1] IAPWS R7-97(2012), backward equations T(p,s) (Sec. 5.2.2, 6.3.2).
    """
    p, s = _as_arrays(p_pa, s_j_per_kg_k)
    valid = _positive(p) & np.isfinite(s) & (p <= _P_MAX_PA)
    return _state("P", p, "S", s, props, valid)


def from_px(p_pa, quality, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Saturated water/steam state from pressure and vapour quality.

    Parameters
    ----------
    p_pa : numeric
        Saturation pressure, 611.213 Pa to the critical pressure. [Pa]
    quality : numeric
        Vapour mass fraction, 0 (saturated liquid) to 1 (saturated vapour). [-]
    props : tuple of str
        Properties to compute.

    Returns
    -------
    SteamState

    References
    ----------
    .. [1] IAPWS R7-97(2012), Sec. 8 (region 4, saturation-pressure equation).
    """
    p, x = _as_arrays(p_pa, quality)
    with np.errstate(invalid="ignore"):
        valid = _positive(p) & (p < P_CRITICAL_PA) & (x >= 0) & (x <= 1)
    return _state("P", p, "Q", x, props, valid)


def saturated_liquid(p_pa, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Saturated liquid at pressure ``p_pa`` [Pa] (for example boiler blowdown at drum pressure)."""
    return from_px(p_pa, 0.0, props)


def saturated_vapour(p_pa, props: tuple[str, ...] = ALL_PROPERTIES) -> SteamState:
    """Saturated vapour at pressure ``p_pa`` [Pa]."""
    return from_px(p_pa, 1.0, props)


def saturation_temperature(p_pa) -> np.ndarray:
    """Saturation temperature at pressure ``p_pa`` [Pa]; NaN above the critical point. [K]

    References
    ----------
    .. [1] IAPWS R7-97(2012), Eq. 31 (saturation-temperature equation).
    """
    return from_px(p_pa, 0.0, props=("t",)).t


def saturation_pressure(t_k) -> np.ndarray:
    """Saturation pressure at temperature ``t_k`` [K]; NaN outside 273.15 K-T_c. [Pa]

    References
    ----------
    .. [1] IAPWS R7-97(2012), Eq. 30 (saturation-pressure equation).
    """
    (t,) = _as_arrays(t_k)
    with np.errstate(invalid="ignore"):
        valid = (t >= _T_MIN_K) & (t < T_CRITICAL_K)
    t_ok = np.where(valid, t, np.nan)
    p = _props("P", "T", t_ok, "Q", np.zeros_like(t_ok))
    return np.where(valid, p, np.nan)
