"""Drift from the baseline: is the difference real, since when, and how large?

The drift of a metric is its measured value minus the baseline's expected value, in the
metric's unit and relative to the expected value. Whether it is noise is judged on the
standardised residual ``z = (actual - expected) / s``, with ``s`` the baseline's residual
standard deviation, by two control charts from statistical process control:

- EWMA (Roberts 1959): a smoothed trend of ``z`` with time-varying control limits;
- tabular CUSUM (Page 1954): upper and lower cumulative sums with reference value ``k``
  and decision interval ``h`` in units of ``s``; each alarm reports the interval at which
  the sustained shift began and an estimate of its size.

Both skip missing intervals (NaN ``z``: unit off, not steady, extrapolated): the charts
advance only with observations, and carry their state across calls so the pipeline can
continue a chart chunk by chunk.

References
----------
.. [1] E. S. Page, "Continuous inspection schemes", Biometrika 41(1/2), 1954,
   pp. 100-115.
.. [2] D. C. Montgomery, "Introduction to Statistical Quality Control", 6th ed., Wiley,
   2009, Sec. 9.1 (tabular CUSUM: Eqs. 9.2-9.3, shift estimate Eq. 9.4, Tables 9.1-9.3,
   Siegmund's ARL approximation Sec. 9.1.3) and Sec. 9.2 (EWMA: Eqs. 9.22-9.23 and
   limits 9.24-9.25; ARL Table 9.11 after Lucas and Saccucci 1990). Section, equation
   and table numbers from memory.
.. [3] NIST/SEMATECH e-Handbook of Statistical Methods, Sec. 6.3.2.3 "CUSUM control
   charts" (tabular CUSUM; the shift began after the cumulative sum was last zero).
.. [4] S. W. Roberts, "Control chart tests based on geometric moving averages",
   Technometrics 1(3), 1959, pp. 239-250.
.. [5] D. Siegmund, "Sequential Analysis: Tests and Confidence Intervals", Springer,
   1985 (the ARL approximation used by :func:`cusum_arl`).
"""

from __future__ import annotations

from collections.abc import Hashable
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.optimize import brentq
from scipy.signal import lfilter

EWMA_LAMBDA = 0.1
"""Default EWMA weight of the newest observation. [-]"""

EWMA_L = 2.814
"""Default EWMA limit width in standard deviations of the EWMA statistic. With
``lambda = 0.1`` it gives an in-control ARL of about 500 intervals (Montgomery 6th ed.,
Table 9.11, after Lucas and Saccucci 1990; from memory). [-]"""

CUSUM_K = 0.5
"""Default CUSUM reference value: half the shift (1 s) to be detected quickest. [s]"""

CUSUM_H = 5.0
"""Default CUSUM decision interval. With ``k = 0.5`` the in-control ARL is about 465
intervals and a 1 s shift is detected in about 10.4 (Montgomery 6th ed., Table 9.3;
from memory). At 60 s intervals that is a false alarm every ~8 h: for interval data pick
``h`` with :func:`decision_interval_for_arl0` instead. [s]"""

_SIEGMUND_OFFSET = 1.166
"""Siegmund's correction ``b = h + 1.166`` for a normal CUSUM (Montgomery 6th ed.,
Sec. 9.1.3, from memory). [-]"""


def absolute_drift(actual, expected):
    """Measured minus expected value.

    Parameters
    ----------
    actual : numeric
        Measured metric. [metric unit]
    expected : numeric
        Baseline's expected value for the same intervals. [metric unit]

    Returns
    -------
    numeric
        ``actual - expected``; same type as the inputs (a Series keeps its index). For an
        efficiency, negative is worse; for a heat rate, positive is worse. [metric unit]
    """
    return actual - expected


def relative_drift(actual, expected):
    """Drift as a fraction of the expected value.

    Parameters
    ----------
    actual : numeric
        Measured metric. [metric unit]
    expected : numeric
        Baseline's expected value; zero gives NaN/inf, never an exception. [metric unit]

    Returns
    -------
    numeric
        ``(actual - expected) / expected``. [-]
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        return (actual - expected) / expected


def standardised_residual(actual, expected, residual_std):
    """Drift in units of the baseline's residual standard deviation.

    Parameters
    ----------
    actual : numeric
        Measured metric. [metric unit]
    expected : numeric
        Baseline's expected value. [metric unit]
    residual_std : float
        Baseline residual standard deviation ``s`` (> 0). [metric unit]

    Returns
    -------
    numeric
        ``z = (actual - expected) / s``, the input of :func:`ewma` and :func:`cusum`. [-]
    """
    if not residual_std > 0:
        raise ValueError(f"residual_std must be > 0, got {residual_std!r}")
    return (actual - expected) / residual_std


# --- EWMA -----------------------------------------------------------------------------


@dataclass(frozen=True)
class EwmaState:
    """Where an EWMA chart stands after its last observation.

    Attributes
    ----------
    value : float
        EWMA statistic; 0 (the target of ``z``) before any observation. [s]
    count : int
        Number of observations so far (sets the time-varying limits). [-]
    """

    value: float = 0.0
    count: int = 0


def ewma(z, lam: float = EWMA_LAMBDA, width: float = EWMA_L, *, state: EwmaState | None = None):
    """EWMA control chart of standardised residuals.

    Parameters
    ----------
    z : Series or array_like
        Standardised residuals, target 0 and standard deviation 1; NaN where there is
        no observation (skipped: the chart does not move). [-]
    lam : float
        Weight of the newest observation, ``0 < lam <= 1``; default
        :data:`EWMA_LAMBDA`. [-]
    width : float
        Limit width ``L`` in standard deviations of the statistic; default
        :data:`EWMA_L`. [-]
    state : EwmaState, optional
        State after the previous chunk; default a fresh chart.

    Returns
    -------
    frame : DataFrame
        Same index as ``z`` (a RangeIndex for arrays), columns ``ewma`` [s],
        ``ewma_limit`` (half-width of the control band around 0) [s] and
        ``ewma_alarm`` (``|ewma| > ewma_limit``) [bool]; NaN / False where ``z`` is NaN.
    state : EwmaState
        State after the last observation, to continue the chart.

    Notes
    -----
    Eqs. 9.22-9.25 in [2]_ with target 0 and sigma 1 ([4]_)::

        w_i     = lam z_i + (1 - lam) w_{i-1},     w_0 = 0
        limit_i = L sqrt( lam / (2 - lam) * (1 - (1 - lam)^(2 i)) )

    with ``i`` counting observations. The recursion is a first-order linear filter and
    runs vectorised (``scipy.signal.lfilter``), exact to round-off.
    """
    if not 0.0 < lam <= 1.0:
        raise ValueError(f"lam must be in (0, 1], got {lam!r}")
    if not width > 0:
        raise ValueError(f"width must be > 0, got {width!r}")
    state = state or EwmaState()
    series = _as_series(z)
    values = series.to_numpy(dtype=float)
    valid = np.isfinite(values)
    observed = values[valid]
    out = np.full(values.size, np.nan)
    limit = np.full(values.size, np.nan)
    if observed.size:
        smoothed, _ = lfilter([lam], [1.0, lam - 1.0], observed, zi=[(1.0 - lam) * state.value])
        count = state.count + np.arange(1, observed.size + 1)
        out[valid] = smoothed
        limit[valid] = width * np.sqrt(lam / (2.0 - lam) * (1.0 - (1.0 - lam) ** (2 * count)))
        state = EwmaState(float(smoothed[-1]), int(count[-1]))
    with np.errstate(invalid="ignore"):
        alarm = np.abs(out) > limit
    frame = pd.DataFrame(
        {"ewma": out, "ewma_limit": limit, "ewma_alarm": alarm}, index=series.index
    )
    return frame, state


# --- CUSUM ----------------------------------------------------------------------------


@dataclass(frozen=True)
class CusumState:
    """Where a two-sided tabular CUSUM stands after its last observation.

    Attributes
    ----------
    upper, lower : float
        Upper and lower cumulative sums ``C+``, ``C-``. [s]
    upper_run, lower_run : int
        Consecutive observations for which the sum has been above zero (``N+``, ``N-``). [-]
    upper_since, lower_since : hashable or None
        Index label of the first observation of the current run (None when the run is
        0). Labels, not positions, so a chart can continue over chunks.
    """

    upper: float = 0.0
    lower: float = 0.0
    upper_run: int = 0
    lower_run: int = 0
    upper_since: Hashable | None = None
    lower_since: Hashable | None = None


@dataclass(frozen=True)
class CusumResult:
    """Output of :func:`cusum`.

    Attributes
    ----------
    frame : DataFrame
        Per interval: ``cusum_upper``, ``cusum_lower`` [s] (NaN where no observation),
        ``cusum_run_upper``, ``cusum_run_lower`` [-] (``N+``, ``N-``) and
        ``cusum_alarm_upper``, ``cusum_alarm_lower`` [bool].
    events : DataFrame
        One row per alarm: ``alarm_at`` (label), ``side`` (``"upper"``/``"lower"``),
        ``shift_start`` (label of the first interval of the run: the shift began after
        the last interval at which the sum was zero), ``run_length`` (N) [-],
        ``statistic`` (C at the alarm) [s] and ``estimated_shift`` (signed, Eq. 9.4 in
        [2]_) [s].
    state : CusumState
        State after the last observation (after any reset).
    """

    frame: pd.DataFrame
    events: pd.DataFrame
    state: CusumState


_EVENT_COLUMNS = ["alarm_at", "side", "shift_start", "run_length", "statistic", "estimated_shift"]


def cusum(
    z,
    k: float = CUSUM_K,
    h: float = CUSUM_H,
    *,
    reset_on_alarm: bool = True,
    state: CusumState | None = None,
) -> CusumResult:
    """Two-sided tabular CUSUM of standardised residuals, with shift onset per alarm.

    Parameters
    ----------
    z : Series or array_like
        Standardised residuals, target 0 and standard deviation 1; NaN where there is
        no observation (skipped). [-]
    k : float
        Reference value (allowance), usually half the shift to detect; default
        :data:`CUSUM_K`. [s]
    h : float
        Decision interval; default :data:`CUSUM_H`. [s]
    reset_on_alarm : bool
        After an alarm on either side, restart both sums at zero (default True).
        False keeps accumulating, as a printed CUSUM table does.
    state : CusumState, optional
        State after the previous chunk; default a fresh chart.

    Returns
    -------
    CusumResult
        Per-interval frame, alarm events and the final state.

    Notes
    -----
    Eqs. 9.2-9.3 in [2]_ ([1]_, [3]_) with target 0 and sigma 1::

        C+_i = max(0, z_i - k + C+_{i-1})        C-_i = max(0, -k - z_i + C-_{i-1})

    alarm when ``C+_i > h`` or ``C-_i > h``. ``N`` counts the consecutive observations
    with a positive sum; the shift began at the first of them (the sum was last zero
    just before, [3]_), and its size is estimated as ``k + C/N`` (upper) or
    ``-(k + C/N)`` (lower), in units of s (Eq. 9.4 in [2]_).

    Reset: a persistent shift then alarms again every ARL1 intervals, and the sums
    recover at once when the cause is fixed; without reset, a week-long shift would
    keep the alarm on for about as long again after the fix (the sum decays by only
    ``k`` per interval). The reported sum is the value at the alarm, before the reset.

    Implementation: the recursion is path-dependent once resets are allowed, so it runs
    as one tight loop over the observed values (the only loop over rows in the
    engine). Without resets, the Lindley identity ``C_i = S_i - min(0, min_j S_j)``
    over the cumulative sum ``S`` would vectorise it; one path is kept for both
    modes, as the loop costs well under a microsecond per interval.
    """
    if not k >= 0:
        raise ValueError(f"k must be >= 0, got {k!r}")
    if not h > 0:
        raise ValueError(f"h must be > 0, got {h!r}")
    state = state or CusumState()
    series = _as_series(z)
    index = series.index
    values = series.to_numpy(dtype=float)
    n = values.size
    upper = np.full(n, np.nan)
    lower = np.full(n, np.nan)
    run_upper = np.zeros(n, dtype=np.int64)
    run_lower = np.zeros(n, dtype=np.int64)
    alarm_upper = np.zeros(n, dtype=bool)
    alarm_lower = np.zeros(n, dtype=bool)

    c_up, c_lo = float(state.upper), float(state.lower)
    n_up, n_lo = int(state.upper_run), int(state.lower_run)
    # Run starts as positions in this chunk; -1 means "started before it" (see state).
    s_up = s_lo = -1
    events: list[tuple] = []
    observed = np.flatnonzero(np.isfinite(values))
    for i, x in zip(observed.tolist(), values[observed].tolist(), strict=True):
        c_up = c_up + x - k
        if c_up > 0.0:
            if n_up == 0:
                s_up = i
            n_up += 1
        else:
            c_up, n_up = 0.0, 0
        c_lo = c_lo - x - k
        if c_lo > 0.0:
            if n_lo == 0:
                s_lo = i
            n_lo += 1
        else:
            c_lo, n_lo = 0.0, 0
        upper[i], lower[i], run_upper[i], run_lower[i] = c_up, c_lo, n_up, n_lo
        hit_up, hit_lo = c_up > h, c_lo > h
        if hit_up or hit_lo:
            if hit_up:
                alarm_upper[i] = True
                events.append((i, "upper", s_up, n_up, c_up, k + c_up / n_up))
            if hit_lo:
                alarm_lower[i] = True
                events.append((i, "lower", s_lo, n_lo, c_lo, -(k + c_lo / n_lo)))
            if reset_on_alarm:
                c_up = c_lo = 0.0
                n_up = n_lo = 0

    def label(position: int, carried: Hashable | None):
        return carried if position < 0 else index[position]

    final = CusumState(
        upper=c_up,
        lower=c_lo,
        upper_run=n_up,
        lower_run=n_lo,
        upper_since=label(s_up, state.upper_since) if n_up else None,
        lower_since=label(s_lo, state.lower_since) if n_lo else None,
    )
    event_rows = [
        (
            index[i],
            side,
            label(start, state.upper_since if side == "upper" else state.lower_since),
            run,
            value,
            shift,
        )
        for i, side, start, run, value, shift in events
    ]
    frame = pd.DataFrame(
        {
            "cusum_upper": upper,
            "cusum_lower": lower,
            "cusum_run_upper": run_upper,
            "cusum_run_lower": run_lower,
            "cusum_alarm_upper": alarm_upper,
            "cusum_alarm_lower": alarm_lower,
        },
        index=index,
    )
    return CusumResult(frame, pd.DataFrame(event_rows, columns=_EVENT_COLUMNS), final)


def _as_series(z) -> pd.Series:
    if isinstance(z, pd.Series):
        return pd.to_numeric(z, errors="coerce").astype(float)
    return pd.Series(np.asarray(z, dtype=float).reshape(-1))


# --- choosing h -----------------------------------------------------------------------


def cusum_arl(k: float, h: float, shift: float = 0.0, *, two_sided: bool = True) -> float:
    """Average run length of a tabular CUSUM by Siegmund's approximation.

    Parameters
    ----------
    k : float
        Reference value. [s]
    h : float
        Decision interval. [s]
    shift : float
        True shift of the mean, default 0 (in-control ARL0). [s]
    two_sided : bool
        Combine the upper and lower sums (default) or give the upper one only.

    Returns
    -------
    float
        Average number of intervals to an alarm. [-]

    Notes
    -----
    For one side with ``Delta = shift - k`` (upper) or ``-shift - k`` (lower) and
    ``b = h + 1.166`` ([5]_; Montgomery 6th ed., Sec. 9.1.3, from memory)::

        ARL = (exp(-2 Delta b) + 2 Delta b - 1) / (2 Delta^2),   b^2 when Delta = 0

    and ``1 / ARL = 1 / ARL+ + 1 / ARL-`` for the two-sided scheme. For ``k = 0.5``,
    ``h = 5`` it gives 469 against the exact 465 of Montgomery's Table 9.3.
    """

    def one_side(delta: float) -> float:
        b = h + _SIEGMUND_OFFSET
        if abs(delta) < 1e-12:
            return b * b
        with np.errstate(over="ignore"):
            growth = float(np.exp(-2.0 * delta * b))
        return (growth + 2.0 * delta * b - 1.0) / (2.0 * delta * delta)

    upper = one_side(shift - k)
    if not two_sided:
        return upper
    return 1.0 / (1.0 / upper + 1.0 / one_side(-shift - k))


def decision_interval_for_arl0(arl0: float, k: float = CUSUM_K) -> float:
    """Decision interval ``h`` giving a stated in-control ARL (two-sided, Siegmund).

    Parameters
    ----------
    arl0 : float
        Wanted average number of intervals between false alarms, e.g. one year of
        60 s intervals = 525600. [-]
    k : float
        Reference value; default :data:`CUSUM_K`. [s]

    Returns
    -------
    float
        ``h`` with ``cusum_arl(k, h) == arl0``. [s]
    """
    if not arl0 > 1:
        raise ValueError(f"arl0 must be > 1, got {arl0!r}")
    return float(brentq(lambda h: cusum_arl(k, h) - arl0, 1e-9, 200.0, xtol=1e-12))


# --- everything for one metric --------------------------------------------------------


@dataclass(frozen=True)
class DriftResult:
    """Output of :func:`drift_frame`: per-interval columns, CUSUM events, chart states."""

    frame: pd.DataFrame
    events: pd.DataFrame
    ewma_state: EwmaState
    cusum_state: CusumState


def drift_frame(
    actual: pd.Series,
    prediction: pd.DataFrame,
    residual_std: float,
    *,
    observe=None,
    lam: float = EWMA_LAMBDA,
    width: float = EWMA_L,
    k: float = CUSUM_K,
    h: float = CUSUM_H,
    reset_on_alarm: bool = True,
    ewma_state: EwmaState | None = None,
    cusum_state: CusumState | None = None,
) -> DriftResult:
    """Expected value, drift and both control charts for one metric of one unit.

    Parameters
    ----------
    actual : Series
        Measured metric per interval (a result column). [metric unit]
    prediction : DataFrame
        :func:`engine.baseline.predict` output for the same index.
    residual_std : float
        The baseline's residual standard deviation. [metric unit]
    observe : array_like of bool, optional
        Intervals that feed the charts, e.g. ``steady & (flags == 0)``; default all.
        Drift is reported everywhere an expected value exists. [-]
    lam, width, k, h, reset_on_alarm, ewma_state, cusum_state
        As in :func:`ewma` and :func:`cusum`.

    Returns
    -------
    DriftResult
        ``frame`` with the prediction's columns plus ``drift`` [metric unit],
        ``drift_rel`` [-], ``z`` [s] (NaN where not observed) and the EWMA and CUSUM
        columns; the CUSUM ``events``; the chart states to continue from.
    """
    if not actual.index.equals(prediction.index):
        raise ValueError("actual and prediction must share the same index")
    values = pd.to_numeric(actual, errors="coerce").astype(float)
    expected = prediction["expected"]
    z = standardised_residual(values, expected, residual_std)
    if observe is not None:
        z = z.where(np.asarray(observe, dtype=bool).reshape(-1))
    ewma_frame, ewma_final = ewma(z, lam, width, state=ewma_state)
    charts = cusum(z, k, h, reset_on_alarm=reset_on_alarm, state=cusum_state)
    frame = pd.concat(
        [
            prediction,
            pd.DataFrame(
                {
                    "drift": absolute_drift(values, expected),
                    "drift_rel": relative_drift(values, expected),
                    "z": z,
                },
                index=actual.index,
            ),
            ewma_frame,
            charts.frame,
        ],
        axis=1,
    )
    return DriftResult(frame, charts.events, ewma_final, charts.state)
