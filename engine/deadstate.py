"""The dead state: the environment against which exergy is measured.

References
----------
.. [1] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger, 1995
   (reprint of 1985 ed.), Sec. 2.2 (environmental state).
.. [2] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization",
   Wiley, 1996, Sec. 3.1 (the environment and the dead state).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from engine import steam

T0_DEFAULT_K = 298.15
"""Standard reference temperature, 25 degC. [K] (Bejan et al. 1996, Sec. 3.1)"""
P0_DEFAULT_PA = 101_325.0
"""Standard atmosphere. [Pa] (ISO 2533; Bejan et al. 1996, Sec. 3.1)"""

T0_MIN_K = 238.15
"""Coldest dead state accepted (-35 degC); below it the water reference is NaN. [K]"""

_T_LIQUID_MIN_K = 273.15  # IAPWS-IF97's lower temperature bound (R7-97, Sec. 4)

SUPERCOOLED_CP_COEFFICIENTS = (
    4.22534378e03,
    2.27650530e00,
    1.21325968e00,
    6.67058160e-02,
    1.67428717e-03,
)
"""Isobaric heat capacity of supercooled liquid water at 101.325 kPa as a quartic in
``x = T - 273.15 K``, ``cp = sum(c_k x**k)`` [J/(kg K)], for 238.15 K <= T <= 273.15 K.

Least-squares fit (ours) to IAPWS-95 extrapolated into the metastable liquid (IAPWS R6-95
(2018), Sec. 6.3.2: the formulation behaves reasonably in the supercooled liquid), evaluated
with the ``iapws`` package at 1 K steps; largest deviation 11 J/(kg K) (0.25 %) at 238 K.
"""

_GAUSS_NODES, _GAUSS_WEIGHTS = np.polynomial.legendre.leggauss(8)


@dataclass(frozen=True)
class DeadState:
    """Dead-state temperature and pressure, scalar or one value per interval.

    Attributes
    ----------
    t0_k : float or ndarray
        Dead-state temperature. [K]
    p0_pa : float or ndarray
        Dead-state pressure. [Pa]
    h0_water_j_per_kg : float or ndarray
        Specific enthalpy of liquid water at (p0, T0), IAPWS-IF97. [J/kg]
    s0_water_j_per_kg_k : float or ndarray
        Specific entropy of liquid water at (p0, T0), IAPWS-IF97. [J/(kg K)]
    """

    t0_k: float | np.ndarray
    p0_pa: float | np.ndarray
    h0_water_j_per_kg: float | np.ndarray
    s0_water_j_per_kg_k: float | np.ndarray


def dead_state(t0_k=T0_DEFAULT_K, p0_pa=P0_DEFAULT_PA) -> DeadState:
    """Dead state at (p0, T0), with the water properties exergy needs.

    Parameters
    ----------
    t0_k : numeric, default 298.15
        Dead-state temperature: a plant constant or an ambient measurement per
        interval. Must lie between 273.16 K and 373 K (liquid water at p0). [K]
    p0_pa : numeric, default 101325
        Dead-state pressure. [Pa]

    Returns
    -------
    DeadState
        Scalars when both inputs are scalars, otherwise arrays broadcast together.
        Rows with an impossible dead state give NaN water properties (and so NaN exergy).
    """
    scalar = np.ndim(t0_k) == 0 and np.ndim(p0_pa) == 0
    t0, p0 = (np.array(a, dtype=float).reshape(-1) for a in np.broadcast_arrays(t0_k, p0_pa))
    with np.errstate(invalid="ignore"):
        frost = (t0 >= T0_MIN_K) & (t0 < _T_LIQUID_MIN_K)
    # Below 0 degC the environment's water is taken as (supercooled) liquid, the usual
    # reference for the exergy of water: IF97 at 273.15 K, continued down with IAPWS-95's
    # supercooled-liquid heat capacity (pressure effect neglected there: dh/dp = v(1 - aT)
    # changes h0 - T0 s0 by under 1 J/kg for p0 within 20 % of an atmosphere).
    t_state = np.where(frost, _T_LIQUID_MIN_K, t0)
    state = steam.from_pt(p0, t_state, props=("h", "s", "phase"))
    # Water at the dead state must be liquid (the environment's water); a T0 above the
    # boiling point at p0 is not a usable environment, so it yields NaN, not steam values.
    liquid = state.phase == steam.Phase.LIQUID
    dh, ds = _supercooled_rise(np.where(frost, t0, _T_LIQUID_MIN_K))
    h0 = np.where(liquid, state.h + dh, np.nan)
    s0 = np.where(liquid, state.s + ds, np.nan)
    if scalar:
        return DeadState(float(t0[0]), float(p0[0]), float(h0[0]), float(s0[0]))
    return DeadState(t0, p0, h0, s0)


def _supercooled_rise(t_k: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """h(T) - h(273.15 K) [J/kg] and s(T) - s(273.15 K) [J/(kg K)] of supercooled liquid
    water, integrating :data:`SUPERCOOLED_CP_COEFFICIENTS` (8-point Gauss-Legendre, exact
    for the quartic in h and to round-off for cp/T over this short range)."""
    half = (t_k - _T_LIQUID_MIN_K) / 2.0
    nodes = (_T_LIQUID_MIN_K + t_k)[:, None] / 2.0 + half[:, None] * _GAUSS_NODES[None, :]
    cp = np.polynomial.polynomial.polyval(nodes - _T_LIQUID_MIN_K, SUPERCOOLED_CP_COEFFICIENTS)
    dh = half * (cp * _GAUSS_WEIGHTS).sum(axis=1)
    ds = half * (cp / nodes * _GAUSS_WEIGHTS).sum(axis=1)
    return dh, ds
