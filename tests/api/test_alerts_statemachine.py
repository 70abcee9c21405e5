"""The rule state machine on hand-made series: minimum duration, hysteresis, clear
duration, gaps and missing values. Expected transitions are worked out by hand in each
test (one-minute intervals; a run of n intervals has lasted n minutes)."""

from __future__ import annotations

import math

import numpy as np

from api.alerts.conditions import Condition
from api.alerts.models import Phase
from api.alerts.statemachine import Fire, Resolve, State, step

MIN = 60_000


def below(limit: float, clear: float, for_min: int = 0, clear_min: int = 0) -> Condition:
    return Condition("m", lambda v: v < limit, lambda v: v >= clear, for_min * MIN, clear_min * MIN)


def run(values, condition, start=0, state=None):
    state = state or State()
    events = []
    for i, v in enumerate(values):
        if v == "gap":
            continue
        event = step(state, start + i * MIN, v, MIN, condition)
        if event is not None:
            events.append((i, event))
    return state, events


def test_fires_after_the_minimum_duration_with_the_start_of_the_run() -> None:
    # for = 3 min: breaches at minutes 2, 3, 4 -> the run has lasted 3 min at the end of
    # minute 4 (t = 5 min); it began at minute 2.
    _, events = run([0.9, 0.9, 0.7, 0.7, 0.7, 0.7], below(0.8, 0.8, for_min=3))
    assert [(i, type(e).__name__) for i, e in events] == [(4, "Fire")]
    fire = events[0][1]
    assert (fire.began_ms, fire.at_ms, fire.t_ms, fire.value) == (2 * MIN, 5 * MIN, 4 * MIN, 0.7)


def test_a_short_dip_does_not_fire() -> None:
    state, events = run([0.7, 0.7, 0.9, 0.7, 0.7, 0.9], below(0.8, 0.8, for_min=3))
    assert events == [] and state.phase is Phase.OK


def test_hysteresis_band_keeps_a_firing_alert_firing() -> None:
    # Limit 0.80, clear at 0.82: 0.81 is inside the band and neither fires nor clears.
    values = [0.79, 0.81, 0.795, 0.81, 0.815, 0.83]
    _, events = run(values, below(0.80, 0.82))
    assert [(i, type(e).__name__) for i, e in events] == [(0, "Fire"), (5, "Resolve")]


def test_without_hysteresis_the_same_series_flaps() -> None:
    values = [0.79, 0.81, 0.795, 0.81, 0.815, 0.83]
    _, events = run(values, below(0.80, 0.80))
    kinds = [type(e).__name__ for _, e in events]
    assert kinds == ["Fire", "Resolve", "Fire", "Resolve"]


def test_clear_duration_must_hold_and_a_relapse_restarts_it() -> None:
    # clear_for = 2 min: clear at 1, relapse at 2, clear at 3 and 4 -> resolves at 4.
    values = [0.7, 0.9, 0.7, 0.9, 0.9]
    _, events = run(values, below(0.8, 0.8, clear_min=2))
    assert [(i, type(e).__name__) for i, e in events] == [(0, "Fire"), (4, "Resolve")]
    resolve = events[1][1]
    assert isinstance(resolve, Resolve)
    assert (resolve.cleared_since_ms, resolve.at_ms) == (3 * MIN, 5 * MIN)


def test_missing_values_neither_fire_nor_resolve() -> None:
    condition = below(0.8, 0.8, for_min=2, clear_min=2)
    # NaN breaks a pending run; then a firing alert survives NaN and a gap.
    values = [0.7, math.nan, 0.7, 0.7, math.nan, 0.9, "gap", 0.9, 0.9]
    state, events = run(values, condition)
    assert [(i, type(e).__name__) for i, e in events] == [(3, "Fire"), (8, "Resolve")]
    assert state.phase is Phase.OK


def test_a_gap_in_the_series_breaks_a_pending_run() -> None:
    _, events = run([0.7, 0.7, "gap", 0.7, 0.7], below(0.8, 0.8, for_min=3))
    assert events == []


def test_state_carries_over_between_chunks() -> None:
    condition = below(0.8, 0.8, for_min=3)
    state, first = run([0.9, 0.7, 0.7], condition)
    assert first == [] and state.phase is Phase.PENDING and state.since_ms == MIN
    _, second = run([0.7, 0.7], condition, start=3 * MIN, state=state)
    assert [(i, type(e).__name__) for i, e in second] == [(0, "Fire")]
    assert isinstance(second[0][1], Fire) and second[0][1].began_ms == MIN


def test_noise_around_the_limit_gives_one_alert_with_hysteresis() -> None:
    # Gaussian noise (sd 0.004) around the limit 0.85 for two hours, then recovery.
    rng = np.random.default_rng(7)
    noisy = list(0.85 + 0.004 * rng.standard_normal(120)) + [0.87] * 10
    calm = below(0.85, 0.86, for_min=3, clear_min=5)
    naive = below(0.85, 0.85)
    _, calm_events = run(noisy, calm)
    _, naive_events = run(noisy, naive)
    assert [type(e).__name__ for _, e in calm_events] == ["Fire", "Resolve"]
    assert calm_events[1][0] == 124  # recovery at 120; clear held 5 min at the end of 124
    naive_fired = sum(isinstance(e, Fire) for _, e in naive_events)
    assert naive_fired > 20  # the storm hysteresis prevents
