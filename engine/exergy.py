"""Specific flow exergy, exergy of heat and lost work.

References
----------
.. [1] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Sec. 3.2 (Eq. 3.9, exergy transfer with heat), 3.3 (Eq. 3.13, flow exergy),
   3.4 (Eq. 3.24, Gouy-Stodola: exergy destruction = T0 * entropy generation).
.. [2] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical
   and Metallurgical Processes", Hemisphere, 1988, Ch. 2.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.deadstate import DeadState


def _numeric(value):
    """Series and arrays as they are (a Series keeps its index); lists and scalars as arrays."""
    if isinstance(value, pd.Series | np.ndarray):
        return value
    return np.asarray(value, dtype=float)


def flow_exergy(h_j_per_kg, s_j_per_kg_k, dead: DeadState):
    """Specific physical flow exergy of water or steam.

    Parameters
    ----------
    h_j_per_kg : numeric
        Specific enthalpy of the stream. [J/kg]
    s_j_per_kg_k : numeric
        Specific entropy of the stream. [J/(kg K)]
    dead : DeadState
        Dead state; its water enthalpy and entropy are the reference. [-]

    Returns
    -------
    numeric
        ``ex = (h - h0) - T0 (s - s0)``. [J/kg]

    Notes
    -----
    Eq. 3.13 in [1]_ without kinetic and potential terms, which are negligible for
    plant steam and water lines.
    """
    return (_numeric(h_j_per_kg) - dead.h0_water_j_per_kg) - dead.t0_k * (
        _numeric(s_j_per_kg_k) - dead.s0_water_j_per_kg_k
    )


def heat_exergy(q_w, t_boundary_k, t0_k):
    """Exergy carried by heat crossing a boundary at a uniform temperature.

    Parameters
    ----------
    q_w : numeric
        Heat rate. [W]
    t_boundary_k : numeric
        Temperature at which the heat crosses the boundary. [K]
    t0_k : numeric
        Dead-state temperature. [K]

    Returns
    -------
    numeric
        ``Q (1 - T0 / T)``, Eq. 3.9 in [1]_. [W]
    """
    return q_w * (1.0 - t0_k / t_boundary_k)


def lost_work(sgen_w_per_k, t0_k):
    """Lost work (exergy destroyed) by the Gouy-Stodola theorem.

    Parameters
    ----------
    sgen_w_per_k : numeric
        Entropy generation rate. [W/K]
    t0_k : numeric
        Dead-state temperature. [K]

    Returns
    -------
    numeric
        ``T0 * Sgen``, Eq. 3.24 in [1]_. [W]
    """
    return t0_k * sgen_w_per_k


def carnot_efficiency(t_hot_k, t_cold_k):
    """Carnot efficiency between two reservoirs, ``1 - Tc / Th``. [-]

    Parameters
    ----------
    t_hot_k : numeric
        Hot-reservoir temperature. [K]
    t_cold_k : numeric
        Cold-reservoir temperature. [K]
    """
    return 1.0 - _numeric(t_cold_k) / _numeric(t_hot_k)
