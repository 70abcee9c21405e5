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
    state = steam.from_pt(p0_pa, t0_k, props=("h", "s", "phase"))
    scalar = np.ndim(t0_k) == 0 and np.ndim(p0_pa) == 0
    # Water at the dead state must be liquid (the environment's water); a T0 above the
    # boiling point at p0 is not a usable environment, so it yields NaN, not steam values.
    liquid = state.phase == steam.Phase.LIQUID
    h0 = np.where(liquid, state.h, np.nan)
    s0 = np.where(liquid, state.s, np.nan)
    t0 = np.broadcast_to(np.asarray(t0_k, dtype=float), h0.shape).copy()
    p0 = np.broadcast_to(np.asarray(p0_pa, dtype=float), h0.shape).copy()
    if scalar:
        return DeadState(float(t0[0]), float(p0[0]), float(h0[0]), float(s0[0]))
    return DeadState(t0, p0, h0, s0)
