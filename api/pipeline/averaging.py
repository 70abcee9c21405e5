"""Readings -> one mean per plant interval: time-weighted, sample-and-hold, with coverage.

A reading at ``t_i`` stands for the signal from ``t_i`` until the next reading of the same
tag, but never longer than ``max_hold_ms`` (a historian that stops sending must not
extend its last value forever). The last reading, whose successor is unknown, holds for
the tag's typical spacing (the median gap between its readings), again at most
``max_hold_ms``: a tag sampled every 10 s does not reach 50 s into the next minute on
its last value, while a tag sampled once a minute still fills its minute. The interval mean is the time integral of that step
function over the interval divided by the time it covers, and the *coverage* is that
covered time over the interval length. With readings at a fixed period that divides the
interval (one per minute at 60 s intervals, one per 10 s, ...) this equals the plain
mean of the readings stamped inside the interval; with irregular, report-by-exception
data it weights each value by how long it held, which the plain mean does not.

Everything is vectorised: the integral of the step function at every interval edge
comes from one ``searchsorted`` over the readings and two cumulative sums.
"""

from __future__ import annotations

import numpy as np


def interval_edges(start_ms: int, end_ms: int, interval_ms: int) -> np.ndarray:
    """Edges ``start, start + I, ..., end`` of the intervals of [start, end) (aligned). [ms]"""
    if start_ms % interval_ms or end_ms % interval_ms:
        raise ValueError(
            f"span [{start_ms}, {end_ms}) is not aligned to the interval of {interval_ms} ms"
        )
    return np.arange(start_ms, end_ms + 1, interval_ms, dtype=np.int64)


def interval_means(
    t_ms: np.ndarray, values: np.ndarray, edges: np.ndarray, max_hold_ms: int
) -> tuple[np.ndarray, np.ndarray]:
    """Time-weighted mean and coverage of one tag's readings per interval.

    Parameters
    ----------
    t_ms : ndarray of int64
        Reading times, strictly increasing (one tag; the readings table key makes them
        unique). Readings before ``edges[0]`` count for the hold into the first interval;
        give those after ``edges[-1]`` (up to ``max_hold_ms``) too, so that the last
        reading inside is held until its real successor. [ms]
    values : ndarray of float
        Reading values in SI; NaN readings are ignored (they hold nothing). [SI]
    edges : ndarray of int64
        Interval edges, ``len(edges) - 1`` intervals. [ms]
    max_hold_ms : int
        Longest time a reading stands for when no newer reading follows. [ms]

    Returns
    -------
    mean : ndarray of float
        Time-weighted mean per interval; NaN where nothing covers the interval. [SI]
    coverage : ndarray of float
        Covered fraction of each interval, 0 to 1. [-]
    """
    n_int = len(edges) - 1
    t = np.asarray(t_ms, dtype=np.int64)
    v = np.asarray(values, dtype=float)
    keep = np.isfinite(v)
    t, v = t[keep], v[keep]
    if n_int <= 0 or len(t) == 0:
        return np.full(max(n_int, 0), np.nan), np.zeros(max(n_int, 0))
    hold_end = t + np.int64(max_hold_ms)
    hold_end[:-1] = np.minimum(hold_end[:-1], t[1:])
    if len(t) > 1:
        hold_end[-1] = t[-1] + min(int(max_hold_ms), int(np.median(np.diff(t))))
    # Relative to the first edge, so that the cumulative sums stay small numbers.
    origin = edges[0]
    seg_start = (t - origin).astype(float)
    duration = (hold_end - t).astype(float)
    cum_vd = np.concatenate(([0.0], np.cumsum(v * duration)))
    cum_d = np.concatenate(([0.0], np.cumsum(duration)))
    x = (edges - origin).astype(float)
    j = np.searchsorted(seg_start, x, side="right") - 1
    inside = j >= 0
    jj = np.where(inside, j, 0)
    partial = np.where(inside, np.clip(x - seg_start[jj], 0.0, duration[jj]), 0.0)
    integral = np.where(inside, cum_vd[jj] + v[jj] * partial, 0.0)
    held = np.where(inside, cum_d[jj] + partial, 0.0)
    covered = np.diff(held)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(covered > 0, np.diff(integral) / covered, np.nan)
    width = np.diff(edges).astype(float)
    coverage = np.clip(covered / width, 0.0, 1.0)
    return mean, coverage


def interval_scatter(
    t_ms: np.ndarray, values: np.ndarray, edges: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Sample standard deviation and number of the readings stamped inside each interval.

    What the random uncertainty of an interval mean is estimated from (``s / sqrt(n)``,
    ASME PTC 19.1's random standard uncertainty of a mean): the readings with
    ``edges[i] <= t < edges[i + 1]``, each counted once whatever its hold time.

    Parameters
    ----------
    t_ms : ndarray of int64
        Reading times, increasing. [ms]
    values : ndarray of float
        Reading values in SI; NaN readings are ignored. [SI]
    edges : ndarray of int64
        Interval edges. [ms]

    Returns
    -------
    std : ndarray of float
        Sample standard deviation (``n - 1`` in the denominator) per interval; NaN where
        fewer than two readings fall inside. [SI]
    count : ndarray of int64
        Readings inside each interval. [-]
    """
    n_int = max(len(edges) - 1, 0)
    t = np.asarray(t_ms, dtype=np.int64)
    v = np.asarray(values, dtype=float)
    keep = np.isfinite(v)
    slot = np.searchsorted(edges, t[keep], side="right") - 1
    v = v[keep]
    inside = (slot >= 0) & (slot < n_int)
    slot, v = slot[inside], v[inside]
    count = np.bincount(slot, minlength=n_int).astype(np.int64)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.bincount(slot, weights=v, minlength=n_int) / count
        # Two passes (deviations from each interval's own mean): no cancellation when the
        # scatter is small against the value (a pressure of 1e7 Pa varying by 1e2).
        squares = np.bincount(slot, weights=(v - mean[slot]) ** 2, minlength=n_int)
        std = np.sqrt(np.where(count >= 2, squares / (count - 1), np.nan))
    return std, count
