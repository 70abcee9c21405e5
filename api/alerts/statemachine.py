"""The state machine of one rule over a time-ordered series: minimum duration before
firing, hysteresis and a clear duration before resolving.

::

    ok --breach--> pending --breach held for_ms--> FIRE -> firing
    pending --anything but breach, or a gap--> ok
    firing --cleared--> clearing --cleared held clear_for_ms--> RESOLVE -> ok
    clearing --anything but cleared, or a gap--> firing

Durations count whole intervals: a condition seen on the intervals starting at t1..tn
has held ``tn + interval - t1``. A missing value (NaN) or a missing interval (a gap in
the series) breaks a run: an alert never fires on "no data", and never resolves on it
either (data that stops is the stale rule's business). A value inside the hysteresis
band (neither breach nor cleared) keeps a firing alert firing and a quiet rule quiet.
With ``for_ms = 0`` the first interval in breach fires.

Pure: no database; :mod:`api.alerts.evaluate` feeds it and applies its transitions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from api.alerts.conditions import Condition
from api.alerts.models import Phase


@dataclass
class State:
    phase: Phase = Phase.OK
    since_ms: int | None = None
    clear_since_ms: int | None = None
    last_t_ms: int | None = None


@dataclass(frozen=True)
class Fire:
    began_ms: int
    """Start of the first interval of the run in breach."""
    at_ms: int
    """End of the interval at which the run reached the minimum duration."""
    t_ms: int
    """Start of that interval (where the value, expected and drift are read)."""
    value: float


@dataclass(frozen=True)
class Resolve:
    cleared_since_ms: int
    at_ms: int
    t_ms: int
    value: float


def step(
    state: State, t_ms: int, value: float | None, interval_ms: int, condition: Condition
) -> Fire | Resolve | None:
    """Advance ``state`` (in place) by the interval starting at ``t_ms``."""
    contiguous = state.last_t_ms is not None and t_ms - state.last_t_ms <= interval_ms
    known = value is not None and not math.isnan(value)
    breach = known and condition.breach(value)  # type: ignore[arg-type]
    cleared = known and condition.cleared(value)  # type: ignore[arg-type]
    event: Fire | Resolve | None = None
    end = t_ms + interval_ms
    if state.phase in (Phase.OK, Phase.PENDING):
        if not breach:
            state.phase, state.since_ms = Phase.OK, None
        else:
            if state.phase is Phase.OK or not contiguous or state.since_ms is None:
                state.phase, state.since_ms = Phase.PENDING, t_ms
            if end - state.since_ms >= condition.for_ms:
                state.phase = Phase.FIRING
                event = Fire(state.since_ms, end, t_ms, float(value))  # type: ignore[arg-type]
    else:
        if not cleared:
            state.phase, state.clear_since_ms = Phase.FIRING, None
        else:
            if state.phase is Phase.FIRING or not contiguous or state.clear_since_ms is None:
                state.phase, state.clear_since_ms = Phase.CLEARING, t_ms
            if end - state.clear_since_ms >= condition.clear_for_ms:
                event = Resolve(state.clear_since_ms, end, t_ms, float(value))  # type: ignore[arg-type]
                state.phase, state.since_ms, state.clear_since_ms = Phase.OK, None, None
    state.last_t_ms = t_ms
    return event
