"""Refrigerant and working-fluid states other than water, through CoolProp's HEOS backend.

:mod:`engine.steam` owns water and steam (IAPWS-IF97); this module is the one place
that asks about every other pure or pseudo-pure fluid: the refrigerants of heat pumps
and chillers and the working fluids of organic Rankine sets. Like :mod:`engine.steam`
it calls CoolProp through :mod:`engine._coolprop` (array handling, failures as NaN) and
adds a per-row ``in_range`` flag. No function here raises for a bad row.

Fluids are named by their ASHRAE Standard 34 designation (``"R134a"``, ``"R717"``);
:data:`REFRIGERANTS` maps each designation lostwork accepts to CoolProp's fluid name.
The equation of state used for each is CoolProp's default reference equation for that
fluid (Helmholtz-energy formulations, HEOS backend [1]_), named by
:data:`FORMULATION`.

Every state function takes numeric input (scalar, list, ndarray or Series, broadcast
against each other by position) and returns a :class:`FluidState` of 1-D float arrays;
when an input is a Series, ``FluidState.index`` keeps its index. A state outside the
equation's range, or whose input is NaN, non-positive or not finite, gives NaN in every
property and ``in_range = False`` for that row only.

Zero of enthalpy and entropy. CoolProp gives each fluid its default reference state
(for most refrigerants the IIR convention, h = 200 kJ/kg and s = 1 kJ/(kg K) for
saturated liquid at 0 degC). Only *differences* of h and s between states of the same
fluid are meaningful, and lostwork uses nothing else. This module never changes a
reference state (CoolProp's ``set_reference_state`` is global to the process).

References
----------
.. [1] I. H. Bell, J. Wronski, S. Quoilin, V. Lemort, "Pure and Pseudo-pure Fluid
   Thermophysical Property Evaluation and the Open-Source Thermophysical Property
   Library CoolProp", Ind. Eng. Chem. Res. 53 (2014) 2498-2508.
.. [2] ANSI/ASHRAE Standard 34-2022, "Designation and Safety Classification of
   Refrigerants" (the R-number designations). Edition from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine import _coolprop

FORMULATION = "CoolProp HEOS (default reference equation of state per fluid)"
"""Name of the property formulation for fluids other than water; stored with results."""

REFRIGERANTS: dict[str, str] = {
    "R22": "R22",
    "R32": "R32",
    "R123": "R123",
    "R134a": "R134a",
    "R245fa": "R245fa",
    "R290": "Propane",
    "R404A": "R404A",
    "R407C": "R407C",
    "R410A": "R410A",
    "R507A": "R507A",
    "R600a": "IsoButane",
    "R717": "Ammonia",
    "R744": "CarbonDioxide",
    "R1233zd(E)": "R1233zd(E)",
    "R1234yf": "R1234yf",
    "R1234ze(E)": "R1234ze(E)",
}
"""ASHRAE Standard 34 designation [2]_ -> CoolProp HEOS fluid name, for every fluid lostwork
accepts. The blends R404A, R407C, R410A and R507A are CoolProp's pseudo-pure fits: one
equation of state for the blend, with bubble- and dew-point ancillary equations, so the
temperature glide shows in :func:`saturation_temperature` (``quality`` 0 or 1). Blends
CoolProp has no fit for (R513A, R454B, ...) are not offered."""

ALL_PROPERTIES = ("t", "h", "s", "quality")
_COOLPROP_NAME = {"t": "T", "h": "H", "s": "S", "quality": "Q"}


def coolprop_name(refrigerant: str) -> str:
    """CoolProp's name for a fluid given by its ASHRAE 34 designation.

    Parameters
    ----------
    refrigerant : str
        A key of :data:`REFRIGERANTS`, for example ``"R134a"`` or ``"R717"``.

    Returns
    -------
    str
        The HEOS fluid name (``"Ammonia"`` for ``"R717"``).

    Raises
    ------
    KeyError
        For a designation not in :data:`REFRIGERANTS`, naming the known ones. This is a
        configuration error concerning every row, never a bad row.
    """
    try:
        return REFRIGERANTS[refrigerant]
    except KeyError:
        known = ", ".join(REFRIGERANTS)
        raise KeyError(f"unknown refrigerant {refrigerant!r}; known: {known}") from None


@dataclass(frozen=True)
class FluidState(_coolprop.StateFrame):
    """States of one fluid, one row per element; properties not asked for are ``None``.

    Attributes
    ----------
    p : ndarray
        Pressure. [Pa]
    in_range : ndarray of bool
        False where the input is not a valid number or CoolProp found no state.
    t : ndarray or None
        Temperature. [K]
    h : ndarray or None
        Specific enthalpy (CoolProp's default reference state of the fluid). [J/kg]
    s : ndarray or None
        Specific entropy (same reference). [J/(kg K)]
    quality : ndarray or None
        Vapour mass fraction inside the two-phase dome; NaN outside it. [-]
    index : pandas.Index or None
        Index of the first Series among the inputs; None when no input was a Series.
    """

    p: np.ndarray
    in_range: np.ndarray
    t: np.ndarray | None = None
    h: np.ndarray | None = None
    s: np.ndarray | None = None
    quality: np.ndarray | None = None
    index: pd.Index | None = None


def _props(
    output: str, name1: str, v1: np.ndarray, name2: str, v2: np.ndarray, fluid: str
) -> np.ndarray:
    """One HEOS call over whole arrays (NaN where it fails)."""
    return _coolprop.props(output, name1, v1, name2, v2, "HEOS::" + fluid)


def _state(
    refrigerant: str,
    name1: str,
    v1,
    name2: str,
    v2,
    props: tuple[str, ...],
    valid_second,
) -> FluidState:
    fluid = coolprop_name(refrigerant)
    (p, y), index = _coolprop.inputs(v1, v2)
    n = p.size
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(p) & (p > 0) & np.isfinite(y) & valid_second(y)
    rows = np.flatnonzero(ok)
    pr, yr = p[rows], y[rows]
    values: dict[str, np.ndarray] = {}
    known = {"P": p, name2: y}
    for prop in props:
        code = _COOLPROP_NAME[prop]
        if code in known:
            values[prop] = known[code].copy()
        else:
            values[prop] = np.full(n, np.nan)
            values[prop][rows] = _props(code, name1, pr, name2, yr, fluid)
    checked = [values[k] for k in ("t", "h", "s") if k in values and _COOLPROP_NAME[k] != name2]
    if not checked:
        probe = np.full(n, np.nan)
        probe[rows] = _props("H" if name2 != "H" else "T", name1, pr, name2, yr, fluid)
        checked = [probe]
    ok = ok & np.logical_and.reduce([np.isfinite(a) for a in checked])
    if "quality" in values:
        q = values["quality"]
        with np.errstate(invalid="ignore"):
            # CoolProp reports -1 (or values outside 0-1) for single-phase states.
            q[(q < 0) | (q > 1)] = np.nan
    for array in values.values():
        array[~ok] = np.nan
    return FluidState(p=np.where(ok, p, np.nan), in_range=ok, index=index, **values)


def _positive(y: np.ndarray) -> np.ndarray:
    return y > 0


def _any(y: np.ndarray) -> np.ndarray:
    return np.ones(y.shape, dtype=bool)


def _fraction(y: np.ndarray) -> np.ndarray:
    return (y >= 0) & (y <= 1)


def from_pt(refrigerant: str, p_pa, t_k, props: tuple[str, ...] = ALL_PROPERTIES) -> FluidState:
    """Single-phase state of a fluid from pressure and temperature.

    Parameters
    ----------
    refrigerant : str
        ASHRAE 34 designation, a key of :data:`REFRIGERANTS`.
    p_pa : numeric
        Pressure. [Pa]
    t_k : numeric
        Temperature. [K]
    props : tuple of str, default all
        Which of ``t, h, s, quality`` to compute.

    Returns
    -------
    FluidState
        ``quality`` is NaN: (p, T) fixes single-phase states only. On the saturation line
        CoolProp returns the state of one side; callers that need a definite side compare
        with :func:`saturation_temperature` first.

    Raises
    ------
    KeyError
        For an unknown refrigerant designation (see :func:`coolprop_name`).
    """
    return _state(refrigerant, "P", p_pa, "T", t_k, props, _positive)


def from_ph(
    refrigerant: str, p_pa, h_j_per_kg, props: tuple[str, ...] = ALL_PROPERTIES
) -> FluidState:
    """State of a fluid from pressure and specific enthalpy (any phase).

    Parameters
    ----------
    refrigerant : str
        ASHRAE 34 designation, a key of :data:`REFRIGERANTS`.
    p_pa : numeric
        Pressure. [Pa]
    h_j_per_kg : numeric
        Specific enthalpy, on CoolProp's default reference state of the fluid. [J/kg]
    props : tuple of str, default all
        Which of ``t, h, s, quality`` to compute.

    Returns
    -------
    FluidState
        ``quality`` is the vapour fraction inside the dome, NaN outside it.
    """
    return _state(refrigerant, "P", p_pa, "H", h_j_per_kg, props, _any)


def from_ps(
    refrigerant: str, p_pa, s_j_per_kg_k, props: tuple[str, ...] = ALL_PROPERTIES
) -> FluidState:
    """State of a fluid from pressure and specific entropy (any phase).

    Parameters
    ----------
    refrigerant : str
        ASHRAE 34 designation, a key of :data:`REFRIGERANTS`.
    p_pa : numeric
        Pressure. [Pa]
    s_j_per_kg_k : numeric
        Specific entropy, on CoolProp's default reference state of the fluid. [J/(kg K)]
    props : tuple of str, default all
        Which of ``t, h, s, quality`` to compute.

    Returns
    -------
    FluidState
        The isentropic end state of a compression or expansion is ``from_ps(p2, s1)``.
    """
    return _state(refrigerant, "P", p_pa, "S", s_j_per_kg_k, props, _any)


def from_px(refrigerant: str, p_pa, quality, props: tuple[str, ...] = ALL_PROPERTIES) -> FluidState:
    """Saturated state of a fluid from pressure and vapour quality.

    Parameters
    ----------
    refrigerant : str
        ASHRAE 34 designation, a key of :data:`REFRIGERANTS`.
    p_pa : numeric
        Saturation pressure, below the critical pressure. [Pa]
    quality : numeric
        Vapour mass fraction: 0 saturated liquid (bubble point), 1 saturated vapour
        (dew point). [-]
    props : tuple of str, default all
        Which of ``t, h, s, quality`` to compute.

    Returns
    -------
    FluidState
    """
    return _state(refrigerant, "P", p_pa, "Q", quality, props, _fraction)


def saturation_temperature(refrigerant: str, p_pa, quality=0.0):
    """Saturation temperature of a fluid at a pressure. [K]

    Parameters
    ----------
    refrigerant : str
        ASHRAE 34 designation, a key of :data:`REFRIGERANTS`.
    p_pa : numeric
        Pressure; NaN at or above the critical pressure. [Pa]
    quality : numeric, default 0
        0 for the bubble point, 1 for the dew point (the same for a pure fluid). [-]

    Returns
    -------
    ndarray or Series
        A Series on the same index when ``p_pa`` is a Series. [K]
    """
    state = from_px(refrigerant, p_pa, quality, props=("t",))
    return pd.Series(state.t, index=state.index) if state.index is not None else state.t


def saturation_pressure(refrigerant: str, t_k, quality=0.0):
    """Saturation pressure of a fluid at a temperature. [Pa]

    Parameters
    ----------
    refrigerant : str
        ASHRAE 34 designation, a key of :data:`REFRIGERANTS`.
    t_k : numeric
        Temperature, between the triple and the critical point. [K]
    quality : numeric, default 0
        0 for the bubble point, 1 for the dew point. [-]

    Returns
    -------
    ndarray or Series
        A Series on the same index when ``t_k`` is a Series; NaN outside the dome. [Pa]
    """
    fluid = coolprop_name(refrigerant)
    (t, x), index = _coolprop.inputs(t_k, quality)
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(t) & (t > 0) & _fraction(x)
    rows = np.flatnonzero(ok)
    p = np.full(t.size, np.nan)
    p[rows] = _props("P", "T", t[rows], "Q", x[rows], fluid)
    return pd.Series(p, index=index) if index is not None else p
