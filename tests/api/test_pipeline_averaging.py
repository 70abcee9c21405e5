"""Interval averaging: time-weighted sample-and-hold means and coverage.

Checked against hand computations written out beside each case, and against pandas'
own resampling for regularly sampled data (where the time-weighted mean must equal the
plain mean of the readings stamped in the interval).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from api.pipeline.averaging import interval_edges, interval_means

S = 1000  # ms per second
MINUTE = 60 * S


def test_irregular_readings_are_weighted_by_how_long_they_held() -> None:
    # Hand computation, interval [0, 60 s): 10 holds 0-20 s, 20 holds 20-50 s, 30 holds
    # 50-60 s (the next reading, 40 at 60 s, starts the next interval):
    # (10*20 + 20*30 + 30*10) / 60 = 1100 / 60.
    t = np.array([0, 20, 50, 60]) * S
    v = np.array([10.0, 20.0, 30.0, 40.0])
    mean, coverage = interval_means(t, v, interval_edges(0, 2 * MINUTE, MINUTE), MINUTE)
    assert mean[0] == pytest.approx(1100 / 60, rel=1e-12)
    assert coverage[0] == 1.0
    # Second interval: 40 is the last reading; its hold is the median spacing of the
    # tag's readings (gaps 20, 30, 10 s -> 20 s), so it covers 20 of 60 s.
    assert mean[1] == pytest.approx(40.0)
    assert coverage[1] == pytest.approx(20 / 60)


def test_a_reading_before_the_range_holds_into_the_first_interval() -> None:
    # 4 held from -30 s to 15 s -> 15 s inside; 8 from 15 s to 60 s (its hold is capped
    # by the median spacing 45 s, so it reaches exactly 60 s): (4*15 + 8*45) / 60 = 7.
    t = np.array([-30, 15]) * S
    v = np.array([4.0, 8.0])
    mean, coverage = interval_means(t, v, interval_edges(0, MINUTE, MINUTE), MINUTE)
    assert mean[0] == pytest.approx(7.0, rel=1e-12)
    assert coverage[0] == 1.0


def test_a_gap_longer_than_the_hold_leaves_intervals_uncovered() -> None:
    # 5 at 0 s holds 60 s (max hold); nothing until 7 at 200 s. [180, 240): 7 from 200 s
    # for min(60 s, median gap 200 s) = 60 s, of which 40 s fall inside -> coverage 2/3.
    t = np.array([0, 200]) * S
    v = np.array([5.0, 7.0])
    mean, coverage = interval_means(t, v, interval_edges(0, 4 * MINUTE, MINUTE), MINUTE)
    np.testing.assert_allclose(coverage, [1.0, 0.0, 0.0, 40 / 60])
    assert mean[0] == 5.0 and mean[3] == 7.0
    assert np.isnan(mean[1]) and np.isnan(mean[2])


def test_nan_readings_hold_nothing() -> None:
    # The NaN at 30 s is dropped, so 2 holds from 0 to 60 s (max hold, its successor is
    # gone): mean 2, full coverage.
    t = np.array([0, 30]) * S
    v = np.array([2.0, np.nan])
    mean, coverage = interval_means(t, v, interval_edges(0, MINUTE, MINUTE), MINUTE)
    assert mean[0] == 2.0 and coverage[0] == 1.0


def test_no_readings_gives_nan_and_zero_coverage() -> None:
    mean, coverage = interval_means(
        np.empty(0, np.int64), np.empty(0), interval_edges(0, 3 * MINUTE, MINUTE), MINUTE
    )
    assert np.isnan(mean).all() and (coverage == 0).all() and len(mean) == 3


def test_regular_sampling_equals_pandas_resample_mean() -> None:
    # Reference: pandas' resample("60s").mean(), the plain mean per minute, which the
    # time-weighted mean must equal when every reading holds exactly its 10 s.
    rng = np.random.default_rng(7)
    t = np.arange(0, 3600, 10) * S + 1_767_225_600_000
    v = rng.normal(500.0, 20.0, len(t))
    start = 1_767_225_600_000
    mean, coverage = interval_means(t, v, interval_edges(start, start + 3600 * S, MINUTE), MINUTE)
    expected = pd.Series(v, index=pd.to_datetime(t, unit="ms", utc=True)).resample("60s").mean()
    np.testing.assert_allclose(mean, expected.to_numpy(), rtol=1e-12)
    np.testing.assert_array_equal(coverage, np.ones(60))


def test_unaligned_range_is_refused() -> None:
    with pytest.raises(ValueError, match="not aligned to the interval of 60000 ms"):
        interval_edges(1, MINUTE, MINUTE)
