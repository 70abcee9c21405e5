"""Thermodynamic consistency flags, returned with every result row.

A flag never removes a result: the numbers are kept and the row says what is wrong
with them, so that an instrument telling an impossible story is visible, not hidden.

Every check here is vectorised: it takes numeric input (scalar, ndarray or Series) and
returns a 1-D ``int64`` array holding either the check's :class:`Flag` bit or 0 per row.
A NaN value never sets a consistency flag (comparisons with NaN are false); missing or
out-of-range input is reported by :func:`input_out_of_range` instead. Combine the
arrays with :func:`combine` (bitwise or).

References
----------
.. [1] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Ch. 2 (entropy generation is never negative) and Ch. 3 (exergy destruction).
   Chapter-level citations; section numbers not checked.
.. [2] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger, 1995,
   Ch. 1 (Carnot efficiency as the bound of a heat engine between two reservoirs).
"""

from __future__ import annotations

from enum import IntFlag

import numpy as np

from engine.catalogue import Parameter


class Flag(IntFlag):
    """Bits of the integer ``flags`` result column (stable: stored in the database)."""

    NONE = 0
    INPUT_OUT_OF_RANGE = 1
    """A required input is missing, or a water/steam state is outside IAPWS-IF97."""
    NEGATIVE_ENTROPY_GENERATION = 2
    """Entropy generation below zero beyond tolerance: the second law is violated."""
    EFFICIENCY_ABOVE_ONE = 4
    """A first-law efficiency above 1 on the HHV basis."""
    ABOVE_CARNOT = 8
    """An efficiency above the Carnot limit between the unit's reservoirs."""
    ISENTROPIC_ABOVE_ONE = 16
    """An isentropic efficiency above 1."""
    ENERGY_BALANCE_OPEN = 32
    """The energy balance does not close within tolerance."""
    DIRECT_INDIRECT_DISAGREE = 64
    """Direct and indirect boiler efficiency differ by more than the tolerance."""
    NEGATIVE_UNACCOUNTED_DESTRUCTION = 128
    """The boiler's exergy split closes only with a negative unaccounted destruction
    beyond tolerance: the water/steam side claims more heat than the flue gas gave up,
    which no process can do (fuel, flue-gas or water/steam measurements disagree)."""


def _float_1d(values) -> np.ndarray:
    return np.atleast_1d(np.asarray(values, dtype=float)).reshape(-1)


def _bits(condition: np.ndarray, flag: Flag) -> np.ndarray:
    return np.where(condition, np.int64(flag), np.int64(0))


def combine(first, *rest) -> np.ndarray:
    """Bitwise or of flag arrays (broadcast against each other).

    Parameters
    ----------
    first, *rest : array_like of int
        Flag arrays from the checks in this module. [-]

    Returns
    -------
    ndarray of int64
        One integer per row with every bit that any input set. [-]
    """
    out = np.atleast_1d(np.asarray(first, dtype=np.int64)).reshape(-1)
    for flags in rest:
        out = out | np.asarray(flags, dtype=np.int64)
    return out


def input_out_of_range(valid) -> np.ndarray:
    """Flag rows whose inputs are missing, not finite or outside a formulation's range.

    Parameters
    ----------
    valid : array_like of bool
        True where every input the row needs is present and in range. [-]

    Returns
    -------
    ndarray of int64
        ``Flag.INPUT_OUT_OF_RANGE`` where ``valid`` is False, else 0. [-]
    """
    return _bits(~np.atleast_1d(np.asarray(valid, dtype=bool)).reshape(-1), Flag.INPUT_OUT_OF_RANGE)


def negative_entropy_generation(sgen_w_per_k, scale_w_per_k, tolerance) -> np.ndarray:
    """Flag entropy generation below zero by more than a relative tolerance.

    Parameters
    ----------
    sgen_w_per_k : numeric
        Entropy generation rate from an entropy balance. [W/K]
    scale_w_per_k : numeric
        Scale the tolerance is relative to, for example the fuel exergy over T0 (the
        entropy generation if all the fuel's exergy were destroyed). [W/K]
    tolerance : numeric
        Relative tolerance, reflecting the uncertainty of the measurements the
        balance is built from. [-]

    Returns
    -------
    ndarray of int64
        ``Flag.NEGATIVE_ENTROPY_GENERATION`` where ``Sgen < -tolerance * |scale|``. [-]

    Notes
    -----
    The second law requires ``Sgen >= 0`` for every real process (Ch. 2 in [1]_);
    a measured balance may dip below zero only within its uncertainty.
    """
    sgen = _float_1d(sgen_w_per_k)
    limit = -np.asarray(tolerance, dtype=float) * np.abs(_float_1d(scale_w_per_k))
    with np.errstate(invalid="ignore"):
        return _bits(sgen < limit, Flag.NEGATIVE_ENTROPY_GENERATION)


def efficiency_above_one(eta_1) -> np.ndarray:
    """Flag a first-law efficiency above 1 (meaningful on the HHV basis only).

    Parameters
    ----------
    eta_1 : numeric
        First-law efficiency on the higher-heating-value basis. [-]

    Returns
    -------
    ndarray of int64
        ``Flag.EFFICIENCY_ABOVE_ONE`` where ``eta_1 > 1``. [-]

    Notes
    -----
    On the LHV basis a condensing boiler legitimately exceeds 1, which is why only the
    HHV efficiency is checked.
    """
    with np.errstate(invalid="ignore"):
        return _bits(_float_1d(eta_1) > 1.0, Flag.EFFICIENCY_ABOVE_ONE)


def above_carnot(efficiency, carnot_limit) -> np.ndarray:
    """Flag an efficiency above its Carnot (or other reversible) limit.

    Parameters
    ----------
    efficiency : numeric
        The efficiency claimed by the measurements. [-]
    carnot_limit : numeric
        The reversible limit, for a heat engine ``1 - T0 / T_hot`` (Ch. 1 in [2]_);
        1 for an exergetic efficiency. NaN (limit unknown) never flags. [-]

    Returns
    -------
    ndarray of int64
        ``Flag.ABOVE_CARNOT`` where ``efficiency > carnot_limit``. [-]
    """
    with np.errstate(invalid="ignore"):
        return _bits(_float_1d(efficiency) > _float_1d(carnot_limit), Flag.ABOVE_CARNOT)


def isentropic_above_one(eta_s) -> np.ndarray:
    """Flag an isentropic efficiency above 1.

    Parameters
    ----------
    eta_s : numeric
        Isentropic efficiency of a turbine section or pump. [-]

    Returns
    -------
    ndarray of int64
        ``Flag.ISENTROPIC_ABOVE_ONE`` where ``eta_s > 1``. [-]
    """
    with np.errstate(invalid="ignore"):
        return _bits(_float_1d(eta_s) > 1.0, Flag.ISENTROPIC_ABOVE_ONE)


def balance_open(relative_error, tolerance) -> np.ndarray:
    """Flag a mass or energy balance that does not close within a relative tolerance.

    Parameters
    ----------
    relative_error : numeric
        (in - out) / in, or another normalised closure error. [-]
    tolerance : numeric
        Largest acceptable absolute value of ``relative_error``. [-]

    Returns
    -------
    ndarray of int64
        ``Flag.ENERGY_BALANCE_OPEN`` where ``|relative_error| > tolerance``. [-]
    """
    with np.errstate(invalid="ignore"):
        return _bits(np.abs(_float_1d(relative_error)) > tolerance, Flag.ENERGY_BALANCE_OPEN)


SGEN_TOLERANCE = 0.01
"""Default relative tolerance of NEGATIVE_ENTROPY_GENERATION, as a fraction of a unit's
exergy scale (its exergy input over T0). [-]

Our choice (no published value): 1 % of the exergy input is below the combined
uncertainty of an efficiency from plant instruments, so a flag means the measurements
are inconsistent, not merely uncertain.
"""


def sgen_tolerance_parameter(scale: str) -> Parameter:
    """The ``sgen_tolerance`` parameter every kind declares, with its own scale in words.

    Parameters
    ----------
    scale : str
        What the tolerance multiplies, e.g. ``"fuel exergy / T0"``. [-]
    """
    return Parameter(
        "sgen_tolerance",
        "1",
        SGEN_TOLERANCE,
        description=(
            f"Negative entropy generation is flagged below -sgen_tolerance * {scale}. "
            "Default 0.01, our choice."
        ),
        minimum=0.0,
        maximum=1.0,
    )
