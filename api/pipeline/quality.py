"""Data-quality bits the pipeline adds to a unit model's ``flags``, and its own metrics.

The engine's :class:`engine.checks.Flag` bits say whether the physics is consistent; the
bits here say whether the interval averages it was given were good enough. They live
high in the integer, far from the engine's bits, so both can grow without colliding.
"""

from __future__ import annotations

from enum import IntFlag

from engine.catalogue import ResultColumn

MIN_COVERAGE = 0.5
"""Least covered fraction of an interval for an input's mean to be used. [-]

Our choice: a mean held over less than half the interval says more about the gap than
about the interval. Below it the input is NaN for that interval (the model then flags
INPUT_OUT_OF_RANGE) and :attr:`DataFlag.THIN_DATA` is set."""


class DataFlag(IntFlag):
    """Pipeline bits of the stored ``flags`` metric (stable: stored in the database)."""

    THIN_DATA = 1 << 16
    """A bound input covered less than :data:`MIN_COVERAGE` of the interval; it was not
    used (the results of the interval are NaN)."""
    AMBIENT_DEFAULT = 1 << 17
    """The plant's ambient tag covered less than :data:`MIN_COVERAGE` of the interval;
    the plant's configured dead-state temperature was used instead."""


FLAGS_METRIC = "flags"
COVERAGE_METRIC = "coverage"

PIPELINE_METRICS: tuple[ResultColumn, ...] = (
    ResultColumn(
        FLAGS_METRIC,
        "1",
        "Quality flags: bitwise OR of the engine's consistency bits and the pipeline's "
        "data bits (THIN_DATA = 65536, AMBIENT_DEFAULT = 131072).",
    ),
    ResultColumn(
        COVERAGE_METRIC,
        "1",
        "Data coverage: the lowest covered fraction of the interval among the unit's inputs.",
    ),
)
"""Metrics every unit has besides its kind's results."""
