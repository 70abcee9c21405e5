"""Steady-state detection: is the unit holding still enough to be compared with its baseline?

An interval is *steady* when, over a trailing window of the last ``window`` intervals
(the current one included), every configured column stays within its limit: the spread
(rolling maximum minus rolling minimum) and/or the rolling standard deviation is no larger
than a configured bound, given either in the column's own units or as a fraction of the
column's rolling mean.

The flag is stored with every result; baselines are fitted on steady intervals only and
drift alerts can be restricted to them, so that a load ramp (with its stored-energy
transients in drums, metal and turbine casings) is neither learnt as normal nor alarmed
as degradation.

References
----------
.. [1] ASME PTC 4-2008, "Fired Steam Generators", Sec. 3 (test operating conditions: the
   permissible fluctuation of each operating parameter about its mean during a test run).
   Section from memory; its numerical limits are not reproduced here.
.. [2] ASME PTC 6-2004, "Steam Turbines", Sec. 3 (permissible variation of the operating
   conditions during a test run). Section from memory; limits not reproduced.
.. [3] S. Cao, R. R. Rhinehart, "An efficient method for on-line identification of steady
   state", Journal of Process Control 5(6), 1995, pp. 363-374 (a statistical
   alternative: the ratio of two variance estimates). Citation from memory.

Notes
-----
The window-spread test itself is common practice in plant performance monitoring: it
transfers the test codes' idea (every key parameter held within a band for the whole
run, [1]_ and [2]_) to a rolling window over operating data. It is not a statistical
test; [3]_ is one, and could replace it behind the same signature.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import pandas as pd


@dataclass(frozen=True)
class SteadyLimit:
    """How much one column may vary over the window and still count as steady.

    Attributes
    ----------
    column : str
        Column name in the frame passed to :func:`steady_state`.
    max_range : float or None
        Largest allowed rolling maximum minus rolling minimum over the window; in the
        column's units, or a fraction of the absolute rolling mean when ``relative``.
        [column unit] or [-]
    max_std : float or None
        Largest allowed rolling sample standard deviation (ddof = 1) over the window;
        in the column's units, or a fraction of the absolute rolling mean when
        ``relative``. [column unit] or [-]
    relative : bool
        Whether the limits are fractions of ``|rolling mean|`` rather than absolute.
    """

    column: str
    max_range: float | None = None
    max_std: float | None = None
    relative: bool = False

    def __post_init__(self) -> None:
        if self.max_range is None and self.max_std is None:
            raise ValueError(f"steady limit for {self.column!r}: give max_range and/or max_std")
        for name in ("max_range", "max_std"):
            value = getattr(self, name)
            if value is not None and not (np.isfinite(value) and value >= 0):
                raise ValueError(
                    f"steady limit for {self.column!r}: {name} must be a finite number >= 0, "
                    f"got {value!r}"
                )


def steady_state(
    frame: pd.DataFrame,
    limits: Iterable[SteadyLimit],
    window: int,
    *,
    min_periods: int | None = None,
) -> pd.Series:
    """Flag intervals whose trailing window stays within every column's limit.

    Parameters
    ----------
    frame : DataFrame
        One row per interval, in time order at a regular interval; a missing interval
        must be a row of NaN, not an absent row (the window counts rows). Columns in
        SI units. [column units]
    limits : iterable of SteadyLimit
        One entry per column to test (load and the key measurements). At least one.
    window : int
        Number of intervals in the trailing window, the current one included. [-]
    min_periods : int, optional
        Least number of non-NaN values a window needs to be judged; default
        ``window`` (a window with any missing value is not steady). [-]

    Returns
    -------
    Series of bool
        Same index as ``frame``, named ``"steady"``. True where every limit holds;
        False where a limit is exceeded, the window is not yet full (the first
        ``window - 1`` rows), or has fewer than ``min_periods`` values.

    Raises
    ------
    ValueError
        If ``limits`` is empty, ``window`` < 1, ``min_periods`` is outside
        ``1..window``, or a limit names a column not in ``frame``. These are
        configuration errors concerning every row; bad rows never raise.

    Notes
    -----
    For each limit on column ``x`` with window ``N``::

        spread_i = max(x_{i-N+1..i}) - min(x_{i-N+1..i})     <= max_range
        std_i    = std(x_{i-N+1..i}, ddof=1)                   <= max_std

    and with ``relative`` the right-hand sides are multiplied by
    ``|mean(x_{i-N+1..i})|``. The flag is the logical and over all limits. The limits
    structure follows the test codes' run-stability requirement ([1]_, [2]_); the
    rolling-window form is common practice (see the module notes). A window with one
    interval and ``max_std`` gives NaN (no spread estimate) and therefore not steady.

    Examples
    --------
    >>> import pandas as pd
    >>> load = pd.DataFrame({"gross_power_w": [100e6, 100.5e6, 101e6, 110e6, 110.2e6]})
    >>> steady_state(load, [SteadyLimit("gross_power_w", max_range=2e6)], window=3).tolist()
    [False, False, True, False, False]
    """
    limits = tuple(limits)
    if not limits:
        raise ValueError("steady_state needs at least one SteadyLimit")
    if int(window) != window or window < 1:
        raise ValueError(f"window must be a whole number of intervals >= 1, got {window!r}")
    window = int(window)
    periods = window if min_periods is None else int(min_periods)
    if not 1 <= periods <= window:
        raise ValueError(
            f"min_periods must be between 1 and window ({window}), got {min_periods!r}"
        )
    missing = [limit.column for limit in limits if limit.column not in frame.columns]
    if missing:
        raise ValueError(f"steady_state: no column(s) {missing} in the frame")

    steady = np.ones(len(frame), dtype=bool)
    for limit in limits:
        values = pd.to_numeric(frame[limit.column], errors="coerce").astype(float)
        rolling = values.rolling(window, min_periods=periods)
        scale = rolling.mean().abs().to_numpy() if limit.relative else 1.0
        # NaN statistics (window not full, too few values) compare False: not steady.
        if limit.max_range is not None:
            spread = (rolling.max() - rolling.min()).to_numpy()
            steady &= spread <= limit.max_range * scale
        if limit.max_std is not None:
            std = rolling.std(ddof=1).to_numpy()
            steady &= std <= limit.max_std * scale
    return pd.Series(steady, index=frame.index, name="steady")
