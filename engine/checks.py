"""Thermodynamic consistency flags, returned with every result row.

A flag never removes a result: the numbers are kept and the row says what is wrong
with them, so that an instrument telling an impossible story is visible, not hidden.
"""

from __future__ import annotations

from enum import IntFlag


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
