"""Baseline payloads of the API (all values SI; fractions as fractions)."""

from __future__ import annotations

import datetime as dt
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field


class SteadyLimitIn(BaseModel):
    """One column's limit over the steady-state window (``engine.steady.SteadyLimit``)."""

    model_config = ConfigDict(extra="forbid")

    column: str
    """A result column of the unit."""
    max_range: float | None = Field(default=None, ge=0)
    """Largest spread (max - min) over the window: a fraction of the mean when
    ``relative``, else in the column's SI unit."""
    max_std: float | None = Field(default=None, ge=0)
    """Largest sample standard deviation over the window (same convention)."""
    relative: bool = True


class SteadyIn(BaseModel):
    """Steady-state limits for choosing this baseline's fit intervals (default: the
    kind's)."""

    model_config = ConfigDict(extra="forbid")

    window_seconds: float = Field(default=900.0, gt=0, le=86_400)
    limits: list[SteadyLimitIn] | None = None
    """Default: the kind's limits."""


class ChartIn(BaseModel):
    """Control-chart parameters, in units of the baseline's residual standard deviation."""

    model_config = ConfigDict(extra="forbid")

    k: float | None = Field(default=None, ge=0)
    """CUSUM reference value; default 0.5."""
    h: float | None = Field(default=None, gt=0)
    """CUSUM decision interval; default: one false alarm a year at the plant's interval
    (12.0 at 60 s)."""
    ewma_lambda: float | None = Field(default=None, gt=0, le=1)
    """EWMA weight of the newest interval; default 0.1."""
    ewma_width: float | None = Field(default=None, gt=0)
    """EWMA limit width L; default 2.814."""


class BaselineCreate(BaseModel):
    """``POST /units/{unit}/baselines``: fit a new version on a reference period."""

    model_config = ConfigDict(extra="forbid")

    metric: str
    """The result column to model (``eta_1``, ``eta_2``, a heat rate, ...)."""
    start: dt.datetime
    """Reference period start (RFC 3339 with offset), included."""
    end: dt.datetime
    """Reference period end, excluded."""
    regressors: list[str] = []
    """Other regressors, entering linearly: result columns of the unit, or
    ``ambient_temperature`` (the plant's ambient tag, per interval)."""
    load: str | None = None
    """Load column; default the kind's (boiler ``heat_absorbed_w``, ...)."""
    forms: list[Literal["constant", "linear", "quadratic"]] | None = None
    """Candidate model forms; default all three (lowest BIC wins)."""
    granularity: Literal["hourly", "monthly"] = "hourly"
    """ASHRAE Guideline 14 criteria applied to the verdict."""
    confidence: float = Field(default=0.95, gt=0, lt=1)
    """Two-sided level of the prediction band."""
    steady: SteadyIn | None = None
    chart: ChartIn | None = None
    note: str | None = Field(default=None, max_length=500)
    activate: bool = False
    """Activate at once (see ``/activate``)."""
    recompute_from: dt.datetime | None = None
    """With ``activate``: where the recompute and the charts start; default ``start``."""


class Activate(BaseModel):
    """``POST /units/{unit}/baselines/{version}/activate``."""

    model_config = ConfigDict(extra="forbid")

    recompute_from: dt.datetime | None = None
    """Where the recompute and the control charts start; default the reference period's
    start."""


class Statistics(BaseModel):
    n: int
    p: int
    dof: int
    r2: float | None
    cv_rmse: float | None
    """Guideline 14 CV(RMSE), a fraction."""
    nmbe: float | None
    """Guideline 14 NMBE, a fraction."""
    rmse: float | None
    """Residual standard deviation sqrt(SSE / (n - p)), unit of the metric."""
    mean: float | None
    granularity: str
    meets_guideline_14: bool
    bic: dict[str, float | None]


class Band(BaseModel):
    load_from: float
    load_to: float
    best: float | None
    count: int


class BestRead(BaseModel):
    """Demonstrated-best eta_2 per load band over the reference period."""

    load: str
    percentile: float
    min_count: int
    bands: list[Band]


class ChartRead(BaseModel):
    k: float
    h: float
    ewma_lambda: float
    ewma_width: float
    origin: dt.datetime | None
    """Where the charts start (set on activation)."""


class Recompute(BaseModel):
    """What activation queued for the pipeline."""

    start: dt.datetime
    end: dt.datetime | None
    """None when the unit has no readings from ``start`` on (nothing queued)."""
    intervals: int


class BaselineRead(BaseModel):
    version: int
    unit: str
    metric: str
    active: bool
    start: dt.datetime
    end: dt.datetime
    load: str
    regressors: list[str]
    """Every regressor, load first."""
    model: str
    """Chosen form: constant, linear or quadratic in load."""
    terms: list[str]
    coefficients: list[float | None]
    """Of ``terms``, in regressors normalised to [-1, 1] over their fit ranges."""
    ranges: dict[str, list[float | None]]
    """Fit range [min, max] per regressor (SI); outside it an interval is extrapolated."""
    statistics: Statistics
    chart: ChartRead
    steady: dict
    """Steady-state window and limits used to choose the fit intervals."""
    counts: dict[str, int]
    """Intervals of the period: computed, steady, flagged, usable (fitted)."""
    demonstrated_best: BestRead | None
    note: str | None
    created_by: str | None
    created_at: dt.datetime
    activated_by: str | None
    activated_at: dt.datetime | None
    recompute: Recompute | None = None
    """Only in the answer to a create with ``activate`` or to ``/activate``."""


class BaselineList(BaseModel):
    unit: str
    baselines: list[BaselineRead]


class PeriodFit(BaseModel):
    """How a version predicts the comparison period (Guideline 14 statistics out of
    sample, on its steady, unflagged intervals)."""

    n: int
    cv_rmse: float | None
    nmbe: float | None
    rmse: float | None
    meets_guideline_14: bool
    extrapolated: int
    """Intervals where it gives no expected value (outside its fit range)."""
    mean_expected: float | None


class CompareSide(BaseModel):
    version: int
    start: dt.datetime
    end: dt.datetime
    model: str
    statistics: Statistics
    period: PeriodFit


class CompareSeries(BaseModel):
    bucket_seconds: int | None
    t: list[dt.datetime]
    actual: list[float | None]
    expected_a: list[float | None]
    expected_b: list[float | None]


class Difference(BaseModel):
    n: int
    """Intervals where both give an expected value."""
    mean: float | None
    """Mean of expected_b - expected_a, unit of the metric."""
    mean_rel: float | None
    """Mean of (expected_b - expected_a) / expected_a."""
    max_abs: float | None


class Comparison(BaseModel):
    unit: str
    metric: str
    start: dt.datetime
    end: dt.datetime
    a: CompareSide
    b: CompareSide
    difference: Difference
    series: CompareSeries


class CurrentDrift(BaseModel):
    t: dt.datetime | None
    """Latest interval of the range with an expected value."""
    actual: float | None
    expected: float | None
    drift: float | None
    drift_rel: float | None


class CusumRead(BaseModel):
    valid_to: dt.datetime | None
    """The state holds after every interval before this time."""
    upper: float | None
    lower: float | None
    upper_run: int | None
    lower_run: int | None
    upper_since: dt.datetime | None
    lower_since: dt.datetime | None
    k: float
    h: float


class AlarmRead(BaseModel):
    at: dt.datetime
    side: Literal["upper", "lower"]
    shift_start: dt.datetime | None
    """First interval of the run that alarmed: the shift began there."""
    run_length: int
    statistic: float
    estimated_shift: float
    """Signed, in residual standard deviations."""
    estimated_shift_value: float | None
    """Signed, in the metric's unit (estimated_shift x residual standard deviation)."""


class EpisodeRead(BaseModel):
    """The series of same-side alarms the last alarm belongs to: the chart restarts at
    zero after every alarm, so a persisting shift alarms again and again."""

    side: Literal["upper", "lower"]
    shift_start: dt.datetime | None
    """Where the shift began: the start of the run of the series' first alarm."""
    first_alarm: dt.datetime
    alarms: int
    complete: bool
    """False when the series reaches back further than 31 days (it may have begun
    earlier)."""


class MetricDrift(BaseModel):
    metric: str
    version: int
    current: CurrentDrift
    cusum: CusumRead
    alarms: int
    """CUSUM alarms within the range."""
    last_alarm: AlarmRead | None
    """The latest alarm within the range."""
    episode: EpisodeRead | None
    """The alarm series of ``last_alarm``, with the interval its shift began."""


class Totals(BaseModel):
    extra_fuel_j: float | None
    """Extra fuel energy (HHV) over the range. [J]"""
    cost: float | None
    """In ``currency``."""
    co2_kg: float | None
    counted_seconds: float
    """Time of the range with a cost value (the rest: no expected value, unit off)."""
    range_seconds: float


class DriftSummary(BaseModel):
    unit: str
    start: dt.datetime
    end: dt.datetime
    currency: str | None
    fuel_price_per_gj: float | None
    cost_metric: str | None
    """The baselined metric the cost of drift is computed from (None: no cost basis)."""
    totals: Totals
    headroom_cost: float | None
    """Value of the recoverable headroom over the range, in ``currency``."""
    metrics: list[MetricDrift]
