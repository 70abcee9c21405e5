"""Why a baseline could not be fitted, as problem details (RFC 9457) with their own types."""

from __future__ import annotations

from api.core.problems import Conflict, InvalidInput


class UnknownMetric(InvalidInput):
    """The metric (or a regressor) is not a result of the unit's kind; lists the known."""

    slug, title = "unknown-metric", "Unknown metric"


class NoSteadyIntervals(InvalidInput):
    """The reference period has no steady, unflagged interval; says how many there were
    and why none qualified."""

    slug, title = "no-steady-intervals", "No steady intervals"


class TooFewIntervals(InvalidInput):
    """Too few usable intervals for any model form (or load never varied)."""

    slug, title = "too-few-intervals", "Too few intervals"


class NotFittable(InvalidInput):
    """The data cannot carry the model asked for (a regressor that never varied)."""

    slug, title = "not-fittable", "Baseline cannot be fitted"


class BaselineConflict(Conflict):
    """Two writers changed the same unit's baselines at once; try again."""

    slug, title = "baseline-conflict", "Baseline changed concurrently"
