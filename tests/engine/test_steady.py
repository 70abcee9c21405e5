"""Steady-state detection (engine/steady.py).

The criterion is the rolling-window spread / standard deviation test (common practice,
modelled on the run-stability requirement of ASME PTC 4-2008 and PTC 6-2004, Sec. 3,
from memory). The outside reference here is arithmetic on windows written out by hand,
and pandas' own rolling statistics are not trusted blindly: the spread and the sample
standard deviation of each window are recomputed with numpy in
``test_matches_window_by_window_numpy``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.steady import SteadyLimit, steady_state


def test_hand_windows_absolute_range():
    # window 3, spread limit 2 MW:
    # rows 0, 1: window not full -> False
    # row 2: {100, 100.5, 101} spread 1.0 MW  -> True
    # row 3: {100.5, 101, 110} spread 9.5 MW  -> False
    # row 4: {101, 110, 110.2} spread 9.2 MW  -> False
    # row 5: {110, 110.2, 111} spread 1.0 MW  -> True
    # row 6: {110.2, 111, 112.2} spread 2.0 MW (exactly the limit) -> True
    load = pd.DataFrame({"p": [100.0, 100.5, 101.0, 110.0, 110.2, 111.0, 112.2]}) * 1e6
    out = steady_state(load, [SteadyLimit("p", max_range=2e6)], window=3)
    assert out.tolist() == [False, False, True, False, False, True, True]
    assert out.name == "steady"


def test_index_kept_and_all_limits_must_hold():
    index = pd.date_range("2024-03-01", periods=5, freq="60s", tz="UTC")
    frame = pd.DataFrame(
        {
            "p": [50.0, 50.0, 50.0, 50.0, 50.0],
            # temperature jumps by 8 K at row 3: spread 8 K > 5 K for rows 3 and 4
            "t": [800.0, 800.0, 800.0, 808.0, 808.0],
        },
        index=index,
    )
    limits = [SteadyLimit("p", max_range=1.0), SteadyLimit("t", max_range=5.0)]
    out = steady_state(frame, limits, window=2)
    assert out.index.equals(index)
    assert out.tolist() == [False, True, True, False, True]


def test_relative_range_uses_rolling_mean():
    # window 2; limit 1 % of |mean|:
    # row 1: {100, 100.9} spread 0.9 <= 0.01 * 100.45 = 1.0045 -> True
    # row 2: {100.9, 102} spread 1.1 >  0.01 * 101.45 = 1.0145 -> False
    frame = pd.DataFrame({"p": [100.0, 100.9, 102.0]})
    out = steady_state(frame, [SteadyLimit("p", max_range=0.01, relative=True)], window=2)
    assert out.tolist() == [False, True, False]


def test_std_limit_hand_values():
    # window 3; sample std (ddof 1) of {1, 2, 3} is 1.0; of {2, 3, 6} is sqrt(13/3) = 2.0817
    frame = pd.DataFrame({"x": [1.0, 2.0, 3.0, 6.0]})
    out = steady_state(frame, [SteadyLimit("x", max_std=1.5)], window=3)
    assert out.tolist() == [False, False, True, False]


def test_nan_in_window_is_not_steady_by_default_and_min_periods_relaxes_it():
    frame = pd.DataFrame({"x": [1.0, 1.0, np.nan, 1.0, 1.0, 1.0]})
    limits = [SteadyLimit("x", max_range=0.1)]
    strict = steady_state(frame, limits, window=3)
    # rows 2, 3, 4 have the NaN in their window
    assert strict.tolist() == [False, False, False, False, False, True]
    relaxed = steady_state(frame, limits, window=3, min_periods=2)
    assert relaxed.tolist() == [False, True, True, True, True, True]


def test_matches_window_by_window_numpy():
    rng = np.random.default_rng(7)
    x = 100.0 + np.cumsum(rng.normal(0.0, 0.3, 300))
    frame = pd.DataFrame({"x": x})
    window, max_range, max_std = 10, 2.0, 0.6
    out = steady_state(frame, [SteadyLimit("x", max_range=max_range, max_std=max_std)], window)
    expected = [False] * (window - 1)
    for i in range(window - 1, len(x)):
        w = x[i - window + 1 : i + 1]
        expected.append(bool(np.ptp(w) <= max_range and np.std(w, ddof=1) <= max_std))
    assert out.tolist() == expected
    # both outcomes occur, so the comparison means something
    assert 0 < int(out.sum()) < len(x) - window


def test_non_numeric_entries_become_not_steady_instead_of_raising():
    frame = pd.DataFrame({"x": [1.0, "bad", 1.0, 1.0]}, dtype=object)
    out = steady_state(frame, [SteadyLimit("x", max_range=0.5)], window=2)
    assert out.tolist() == [False, False, False, True]


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"limits": [], "window": 3}, "steady_state needs at least one SteadyLimit"),
        (
            {"limits": [SteadyLimit("x", max_range=1.0)], "window": 0},
            "window must be a whole number of intervals >= 1, got 0",
        ),
        (
            {"limits": [SteadyLimit("x", max_range=1.0)], "window": 3, "min_periods": 4},
            "min_periods must be between 1 and window (3), got 4",
        ),
        (
            {"limits": [SteadyLimit("y", max_range=1.0)], "window": 3},
            "steady_state: no column(s) ['y'] in the frame",
        ),
    ],
)
def test_configuration_errors(kwargs, message):
    frame = pd.DataFrame({"x": [1.0, 2.0, 3.0]})
    with pytest.raises(ValueError) as err:
        steady_state(frame, **kwargs)
    assert str(err.value) == message


def test_limit_needs_a_bound():
    with pytest.raises(ValueError) as err:
        SteadyLimit("p")
    assert str(err.value) == "steady limit for 'p': give max_range and/or max_std"
    with pytest.raises(ValueError) as err:
        SteadyLimit("p", max_std=-1.0)
    assert str(err.value) == "steady limit for 'p': max_std must be a finite number >= 0, got -1.0"
