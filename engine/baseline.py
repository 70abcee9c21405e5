"""Energy baselines: what this unit should do at this load and this weather.

A baseline in the sense of ISO 50001 / ISO 50006 is a quantitative reference of energy
performance over a chosen period, against which later performance is compared; here it
is an ordinary-least-squares regression of one result column (``eta_1``, ``eta_2``, a
heat rate, ...) on load and other relevant variables (ambient temperature and any
configured regressor), fitted on the reference period's steady intervals.

Model forms: constant, linear or quadratic in load, each plus a linear term in every
other regressor; the form with the lowest Bayesian information criterion wins. The fit
is reported with the statistics of ASHRAE Guideline 14 (CV(RMSE), NMBE, with the
number of parameters in the denominators) and checked against the Guideline's
calibration criteria.

A prediction outside the range the baseline was fitted on is flagged ``extrapolated``
and, by default, not made (NaN): a regression says nothing reliable where it has never
seen data.

References
----------
.. [1] ISO 50006:2014, "Energy management systems -- Measuring energy performance using
   energy baselines (EnB) and energy performance indicators (EnPI)", Clauses 3 and 4.4
   (energy baseline; relevant variables; normalisation). Clause numbers from memory.
.. [2] ASHRAE Guideline 14-2014, "Measurement of Energy, Demand, and Water Savings",
   Sec. 4.3.2.4 (calibration criteria) and Annex B (CV(RMSE) and NMBE with n - p in
   the denominators). Section and annex numbers from memory.
.. [3] G. Schwarz, "Estimating the dimension of a model", Annals of Statistics 6(2),
   1978, pp. 461-464 (the Bayesian information criterion).
.. [4] D. C. Montgomery, E. A. Peck, G. G. Vining, "Introduction to Linear Regression
   Analysis", 5th ed., Wiley, 2012, Sec. 3.5 (prediction interval for a new
   observation) and Sec. 3.2 (least-squares estimation). Sections from memory.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

FORMS: tuple[str, ...] = ("constant", "linear", "quadratic")
"""Model forms, by the highest power of load in the model (0, 1, 2)."""

_LOAD_ORDER = {"constant": 0, "linear": 1, "quadratic": 2}

SCHEMA_VERSION = 1
"""Version of :meth:`Baseline.to_dict`'s layout (stored with every baseline version)."""


@dataclass(frozen=True)
class CalibrationCriteria:
    """ASHRAE Guideline 14 calibration criteria for one data granularity.

    Attributes
    ----------
    granularity : str
        ``"monthly"`` or ``"hourly"``.
    max_abs_nmbe : float
        Largest allowed ``|NMBE|``. [-]
    max_cv_rmse : float
        Largest allowed CV(RMSE). [-]
    """

    granularity: str
    max_abs_nmbe: float
    max_cv_rmse: float


GUIDELINE14_CALIBRATION: Mapping[str, CalibrationCriteria] = {
    "monthly": CalibrationCriteria("monthly", 0.05, 0.15),
    "hourly": CalibrationCriteria("hourly", 0.10, 0.30),
}
"""Calibration criteria of ASHRAE Guideline 14-2014, Sec. 4.3.2.4 ([2]_, from memory):
NMBE within +/-5 % and CV(RMSE) at most 15 % against monthly data; +/-10 % and 30 %
against hourly data. As fractions. The Guideline gives nothing finer than hourly; for
interval data of an hour or less we apply the hourly criteria (the closest granularity
it covers), which is the default everywhere in this module."""


@dataclass(frozen=True)
class FitStatistics:
    """Goodness of fit of predictions against measurements, as Guideline 14 defines it.

    Attributes
    ----------
    n : int
        Number of pairs used (both values finite). [-]
    p : int
        Number of model parameters. [-]
    mean : float
        Mean of the measured values, ``ybar``. [metric unit]
    rmse : float
        ``sqrt(sum((y - yhat)^2) / (n - p))``. [metric unit]
    cv_rmse : float
        ``rmse / ybar``, as a fraction. [-]
    nmbe : float
        ``sum(y - yhat) / ((n - p) ybar)``, as a fraction; positive when the model
        under-predicts. [-]
    """

    n: int
    p: int
    mean: float
    rmse: float
    cv_rmse: float
    nmbe: float

    def meets(self, granularity: str = "hourly") -> bool:
        """Whether CV(RMSE) and |NMBE| are within the Guideline 14 calibration criteria.

        Parameters
        ----------
        granularity : str
            ``"hourly"`` (default; also for finer interval data) or ``"monthly"``.

        Returns
        -------
        bool
            True when both criteria hold; False when either fails or is not finite.
        """
        criteria = _criteria(granularity)
        return bool(
            np.isfinite(self.cv_rmse)
            and np.isfinite(self.nmbe)
            and self.cv_rmse <= criteria.max_cv_rmse
            and abs(self.nmbe) <= criteria.max_abs_nmbe
        )


def _criteria(granularity: str) -> CalibrationCriteria:
    try:
        return GUIDELINE14_CALIBRATION[granularity]
    except KeyError:
        raise ValueError(
            f"granularity must be one of {sorted(GUIDELINE14_CALIBRATION)}, got {granularity!r}"
        ) from None


def goodness_of_fit(actual, predicted, n_parameters: int) -> FitStatistics:
    """CV(RMSE) and NMBE of predictions against measurements (ASHRAE Guideline 14).

    Parameters
    ----------
    actual : array_like
        Measured values ``y``. [metric unit]
    predicted : array_like
        Model values ``yhat`` for the same intervals. [metric unit]
    n_parameters : int
        Number of parameters ``p`` of the model that made the predictions. [-]

    Returns
    -------
    FitStatistics
        n, p, mean, rmse, cv_rmse and nmbe over the pairs where both values are finite;
        NaN statistics when ``n <= p``.

    Notes
    -----
    As printed in Guideline 14 ([2]_, from memory; there in percent, here as
    fractions)::

        CV(RMSE) = sqrt( sum (y_i - yhat_i)^2 / (n - p) ) / ybar
        NMBE     = sum (y_i - yhat_i) / ((n - p) * ybar)

    On the data an OLS model with an intercept was fitted on, NMBE is zero to
    round-off (the residuals sum to zero); it carries information on other periods.
    """
    y = np.asarray(actual, dtype=float).reshape(-1)
    yhat = np.asarray(predicted, dtype=float).reshape(-1)
    if y.shape != yhat.shape:
        raise ValueError(f"actual and predicted differ in length: {y.size} and {yhat.size}")
    ok = np.isfinite(y) & np.isfinite(yhat)
    y, yhat = y[ok], yhat[ok]
    n, p = int(y.size), int(n_parameters)
    if n <= p or n == 0:
        return FitStatistics(n, p, float(np.mean(y)) if n else math.nan, *(math.nan,) * 3)
    residual = y - yhat
    mean = float(np.mean(y))
    rmse = math.sqrt(float(residual @ residual) / (n - p))
    with np.errstate(divide="ignore", invalid="ignore"):
        cv_rmse = float(np.divide(rmse, mean))
        nmbe = float(np.divide(residual.sum(), (n - p) * mean))
    return FitStatistics(n, p, mean, rmse, cv_rmse, nmbe)


@dataclass(frozen=True)
class Baseline:
    """A fitted energy baseline for one unit and one metric (immutable; versioned by the service).

    The regression is in normalised regressors ``u_j = (x_j - mid_j) / half_j`` with
    ``mid_j`` and ``half_j`` the midpoint and half-width of regressor ``j``'s range over
    the fit data (so every fitted interval has ``|u_j| <= 1``); the coefficients belong
    to :attr:`terms` in that order.

    Attributes
    ----------
    metric : str
        Name of the modelled result column (e.g. ``"eta_1"``).
    load : str
        Name of the load regressor (first in :attr:`regressors`).
    regressors : tuple of str
        All regressors, load first. Prediction needs these columns.
    ranges : tuple of (float, float)
        (minimum, maximum) of each regressor over the fit data. [regressor unit]
    form : str
        ``"constant"``, ``"linear"`` or ``"quadratic"`` in load.
    terms : tuple of str
        Names of the model terms (``"1"``, ``"u[load]"``, ``"u[load]^2"``, ``"u[x]"``).
    coefficients : tuple of float
        OLS coefficients of :attr:`terms`. [metric unit]
    xtx_inv : tuple of tuple of float
        ``(X'X)^-1`` of the normalised design, for the prediction band. [-]
    n : int
        Number of intervals fitted. [-]
    dof : int
        Residual degrees of freedom ``n - p``. [-]
    residual_std : float
        Residual standard deviation ``s = sqrt(SSE / (n - p))``; the unit of the drift
        statistics. [metric unit]
    r2 : float
        Coefficient of determination ``1 - SSE / SST``. [-]
    cv_rmse : float
        CV(RMSE) per Guideline 14 on the fit data. [-]
    nmbe : float
        NMBE per Guideline 14 on the fit data. [-]
    mean : float
        Mean of the metric over the fit data. [metric unit]
    bic : tuple of (str, float)
        BIC of every candidate form tried, in :data:`FORMS` order. [-]
    granularity : str
        Guideline 14 granularity whose criteria :attr:`meets_guideline14` applies.
    meets_guideline14 : bool
        Whether CV(RMSE) and |NMBE| meet those calibration criteria.
    confidence : float
        Two-sided confidence level of the prediction band. [-]
    t_quantile : float
        Student t quantile ``t(1 - (1 - confidence) / 2, n - p)`` for the band. [-]
    """

    metric: str
    load: str
    regressors: tuple[str, ...]
    ranges: tuple[tuple[float, float], ...]
    form: str
    terms: tuple[str, ...]
    coefficients: tuple[float, ...]
    xtx_inv: tuple[tuple[float, ...], ...]
    n: int
    dof: int
    residual_std: float
    r2: float
    cv_rmse: float
    nmbe: float
    mean: float
    bic: tuple[tuple[str, float], ...]
    granularity: str
    meets_guideline14: bool
    confidence: float
    t_quantile: float

    @property
    def p(self) -> int:
        """Number of model parameters. [-]"""
        return len(self.coefficients)

    def to_dict(self) -> dict[str, Any]:
        """A JSON-serialisable dict (lists, floats, None for non-finite) with ``schema``."""
        out: dict[str, Any] = {"schema": SCHEMA_VERSION}
        for key, value in asdict(self).items():
            out[key] = _jsonable(value)
        out["bic"] = {form: _jsonable(value) for form, value in self.bic}
        return out

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> Baseline:
        """Rebuild a baseline from :meth:`to_dict` output (e.g. after a JSON round trip)."""
        if data.get("schema") != SCHEMA_VERSION:
            raise ValueError(
                f"baseline schema {data.get('schema')!r} is not supported "
                f"(this version reads {SCHEMA_VERSION})"
            )
        names = [f for f in cls.__dataclass_fields__]
        missing = [name for name in names if name not in data]
        if missing:
            raise ValueError(f"baseline dict lacks {missing}")

        def num(value) -> float:
            return math.nan if value is None else float(value)

        return cls(
            metric=str(data["metric"]),
            load=str(data["load"]),
            regressors=tuple(str(r) for r in data["regressors"]),
            ranges=tuple((num(lo), num(hi)) for lo, hi in data["ranges"]),
            form=str(data["form"]),
            terms=tuple(str(t) for t in data["terms"]),
            coefficients=tuple(num(c) for c in data["coefficients"]),
            xtx_inv=tuple(tuple(num(v) for v in row) for row in data["xtx_inv"]),
            n=int(data["n"]),
            dof=int(data["dof"]),
            residual_std=num(data["residual_std"]),
            r2=num(data["r2"]),
            cv_rmse=num(data["cv_rmse"]),
            nmbe=num(data["nmbe"]),
            mean=num(data["mean"]),
            bic=tuple((str(form), num(value)) for form, value in dict(data["bic"]).items()),
            granularity=str(data["granularity"]),
            meets_guideline14=bool(data["meets_guideline14"]),
            confidence=num(data["confidence"]),
            t_quantile=num(data["t_quantile"]),
        )


def _jsonable(value):
    if isinstance(value, (tuple, list)):
        return [_jsonable(v) for v in value]
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(value) else None
    return value


def _terms(form: str, load: str, others: Sequence[str]) -> tuple[str, ...]:
    order = _LOAD_ORDER[form]
    load_terms = (f"u[{load}]", f"u[{load}]^2")[:order]
    return ("1", *load_terms, *(f"u[{name}]" for name in others))


def _design(form: str, u: np.ndarray) -> np.ndarray:
    """Design matrix from normalised regressors ``u`` (rows x regressors, load first)."""
    order = _LOAD_ORDER[form]
    columns = [np.ones(u.shape[0])]
    columns += [u[:, 0] ** power for power in range(1, order + 1)]
    columns += [u[:, j] for j in range(1, u.shape[1])]
    return np.column_stack(columns)


def _normalise(x: np.ndarray, ranges: np.ndarray) -> np.ndarray:
    mid = 0.5 * (ranges[:, 0] + ranges[:, 1])
    half = 0.5 * (ranges[:, 1] - ranges[:, 0])
    # A regressor that never varied gets u = 0 on the fit data: its terms are then
    # rank-deficient and the form is rejected, rather than dividing by zero.
    half = np.where(half > 0, half, 1.0)
    return (x - mid) / half


def _bic(sse: float, n: int, p: int) -> float:
    # Gaussian log-likelihood at the ML variance SSE/n, as statsmodels' OLS reports it,
    # and BIC = -2 llf + p ln n (Schwarz [3]); sigma is not counted in p.
    with np.errstate(divide="ignore"):
        llf = -0.5 * n * (math.log(2.0 * math.pi) + np.log(sse / n) + 1.0)
    return float(-2.0 * llf + p * math.log(n))


def _regressor_frame(regressors: pd.DataFrame, names: Sequence[str]) -> np.ndarray:
    missing = [name for name in names if name not in regressors.columns]
    if missing:
        raise ValueError(f"regressor column(s) {missing} missing")
    return np.column_stack(
        [pd.to_numeric(regressors[name], errors="coerce").to_numpy(dtype=float) for name in names]
    )


def fit_baseline(
    metric: pd.Series,
    regressors: pd.DataFrame,
    *,
    load: str,
    mask=None,
    forms: Sequence[str] = FORMS,
    granularity: str = "hourly",
    confidence: float = 0.95,
) -> Baseline:
    """Fit an energy baseline of one metric on load and other regressors, by OLS.

    Parameters
    ----------
    metric : Series
        The result column to model over the reference period, e.g. ``eta_1`` [-] or
        ``net_heat_rate_j_per_kwh`` [J/kWh]; its name becomes :attr:`Baseline.metric`.
    regressors : DataFrame
        Same index as ``metric``; the column ``load`` [W] and every other regressor to
        enter linearly (e.g. ambient temperature [K]). All its columns are used.
    load : str
        Name of the load column in ``regressors``.
    mask : array_like of bool, optional
        Rows to fit on, e.g. ``steady & (flags == 0)``; default all rows. Rows with a
        non-finite metric or regressor are always left out. [-]
    forms : sequence of str
        Candidate forms, a subset of :data:`FORMS`; default all three.
    granularity : str
        Guideline 14 granularity for :attr:`Baseline.meets_guideline14`: ``"hourly"``
        (default, and for any interval of an hour or less) or ``"monthly"``.
    confidence : float
        Two-sided confidence level of the prediction band, default 0.95. [-]

    Returns
    -------
    Baseline
        The candidate with the lowest BIC (the simpler form on a tie), with its fit
        statistics.

    Raises
    ------
    ValueError
        On configuration errors (unknown form, load not a column, index mismatch), when
        a regressor other than load does not vary over the fit data, or when no
        candidate form can be fitted (fewer usable rows than parameters + 1, or load
        constant for every form offered).

    Notes
    -----
    With ``u`` the normalised regressors (see :class:`Baseline`) and ``m`` the
    power of load in the form (0, 1, 2)::

        y = b0 + sum_{q=1..m} b_q u_load^q + sum_j c_j u_j + e

    solved by least squares (``numpy.linalg.lstsq``; [4]_, Sec. 3.2). Normalising
    keeps ``X'X`` well conditioned when load is of order 1e8 W and its square 1e16,
    and changes nothing else: the fitted values are those of the raw-unit model.

    Form selection: lowest ``BIC = -2 ln L + p ln n`` with the Gaussian likelihood at
    the ML variance ``SSE / n`` ([3]_). BIC was chosen over adjusted R^2 because its
    penalty grows with n, so long records of 60 s data do not buy a quadratic term
    for noise. Other regressors are always kept: configuring one is the user's
    statement that it is a relevant variable in the sense of ISO 50006 ([1]_).

    Statistics: ``s = sqrt(SSE / (n - p))``, ``R^2 = 1 - SSE / SST``, and CV(RMSE) and
    NMBE as in :func:`goodness_of_fit` ([2]_).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> p = np.linspace(50e6, 100e6, 11)
    >>> noise = np.array([1, -1, 1, -1, 1, 0, -1, 1, -1, 1, -1]) * 1e-3
    >>> eta = pd.Series(0.30 + 0.1 * (p / 100e6) + noise, name="eta_1")
    >>> b = fit_baseline(eta, pd.DataFrame({"gross_power_w": p}), load="gross_power_w")
    >>> b.form, b.n, round(b.coefficients[1], 4)
    ('linear', 11, 0.0247)
    """
    unknown = [form for form in forms if form not in _LOAD_ORDER]
    if unknown or not forms:
        raise ValueError(f"forms must be a non-empty subset of {list(FORMS)}, got {list(forms)}")
    if load not in regressors.columns:
        raise ValueError(
            f"load column {load!r} not among the regressors {list(regressors.columns)}"
        )
    if not metric.index.equals(regressors.index):
        raise ValueError("metric and regressors must share the same index")
    if not 0.0 < confidence < 1.0:
        raise ValueError(f"confidence must be between 0 and 1, got {confidence!r}")
    _criteria(granularity)

    names = (load, *[c for c in regressors.columns if c != load])
    x = _regressor_frame(regressors, names)
    y = pd.to_numeric(metric, errors="coerce").to_numpy(dtype=float)
    keep = np.isfinite(y) & np.isfinite(x).all(axis=1)
    if mask is not None:
        keep &= np.asarray(mask, dtype=bool).reshape(-1)
    x, y = x[keep], y[keep]
    n = int(y.size)
    if n == 0:
        raise ValueError("no usable intervals to fit the baseline on")
    ranges = np.column_stack([x.min(axis=0), x.max(axis=0)])
    flat = [name for name, (lo, hi) in zip(names[1:], ranges[1:], strict=True) if not hi > lo]
    if flat:
        raise ValueError(
            f"regressor(s) {flat} do not vary over the fit data; a term in them cannot be fitted"
        )
    u = _normalise(x, ranges)

    candidates = []
    for form in FORMS:
        if form not in forms:
            continue
        design = _design(form, u)
        p = design.shape[1]
        if n <= p:
            continue
        beta, _, rank, _ = np.linalg.lstsq(design, y, rcond=None)
        if rank < p:
            continue
        residual = y - design @ beta
        sse = float(residual @ residual)
        candidates.append((_bic(sse, n, p), form, design, beta, residual, sse))
    if not candidates:
        least = min(len(_terms(f, load, names[1:])) for f in forms) + 1
        raise ValueError(
            f"cannot fit any of the forms {list(forms)} to {n} usable interval(s) "
            f"(need at least {least}, and load must vary for a linear or quadratic form)"
        )
    # min() keeps the first of equal BICs, and candidates are in FORMS order: simpler wins.
    bic, form, design, beta, residual, sse = min(candidates, key=lambda c: c[0])
    p = design.shape[1]
    dof = n - p
    _, singular, vt = np.linalg.svd(design, full_matrices=False)
    xtx_inv = (vt.T / singular**2) @ vt
    centred = y - y.mean()
    sst = float(centred @ centred)
    fit = goodness_of_fit(y, y - residual, p)
    return Baseline(
        metric=str(metric.name) if metric.name is not None else "",
        load=load,
        regressors=tuple(names),
        ranges=tuple((float(lo), float(hi)) for lo, hi in ranges),
        form=form,
        terms=_terms(form, load, names[1:]),
        coefficients=tuple(float(b) for b in beta),
        xtx_inv=tuple(tuple(float(v) for v in row) for row in xtx_inv),
        n=n,
        dof=dof,
        residual_std=math.sqrt(sse / dof),
        r2=1.0 - sse / sst if sst > 0 else math.nan,
        cv_rmse=fit.cv_rmse,
        nmbe=fit.nmbe,
        mean=fit.mean,
        bic=tuple((c[1], c[0]) for c in candidates),
        granularity=granularity,
        meets_guideline14=fit.meets(granularity),
        confidence=float(confidence),
        t_quantile=float(stats.t.ppf(0.5 + 0.5 * confidence, dof)),
    )


def predict(
    baseline: Baseline,
    regressors: pd.DataFrame,
    *,
    range_margin: float = 0.0,
    allow_extrapolation: bool = False,
) -> pd.DataFrame:
    """Expected value of the metric, its prediction band, and the extrapolation flag.

    Parameters
    ----------
    baseline : Baseline
        From :func:`fit_baseline` or :meth:`Baseline.from_dict`.
    regressors : DataFrame
        One row per interval with every column in ``baseline.regressors``, in the
        units they were fitted in (SI). Extra columns are ignored.
    range_margin : float
        Tolerance beyond each regressor's fit range, as a fraction of the range's width;
        default 0 (any value outside ``[min, max]`` is extrapolated). [-]
    allow_extrapolation : bool
        If True, extrapolated rows get a value (still flagged); default False: they are
        NaN, never silently predicted.

    Returns
    -------
    DataFrame
        Same index as ``regressors``, columns ``expected``, ``expected_lower``,
        ``expected_upper`` [metric unit] and ``extrapolated`` [bool]. A row with a
        missing regressor is NaN and not extrapolated (it is not known to be outside).

    Notes
    -----
    Prediction band for a new observation at design row ``x`` ([4]_, Sec. 3.5)::

        yhat -/+ t(1 - alpha/2, n - p) * s * sqrt(1 + x' (X'X)^-1 x)

    with ``alpha = 1 - baseline.confidence``.
    """
    if not range_margin >= 0:
        raise ValueError(f"range_margin must be >= 0, got {range_margin!r}")
    x = _regressor_frame(regressors, baseline.regressors)
    ranges = np.asarray(baseline.ranges, dtype=float).reshape(-1, 2)
    width = ranges[:, 1] - ranges[:, 0]
    low = ranges[:, 0] - range_margin * width
    high = ranges[:, 1] + range_margin * width
    finite = np.isfinite(x).all(axis=1)
    with np.errstate(invalid="ignore"):
        outside = ((x < low) | (x > high)).any(axis=1) & finite

    design = _design(baseline.form, _normalise(x, ranges))
    beta = np.asarray(baseline.coefficients, dtype=float)
    expected = design @ beta
    leverage = np.einsum("ij,jk,ik->i", design, np.asarray(baseline.xtx_inv), design)
    half = baseline.t_quantile * baseline.residual_std * np.sqrt(1.0 + leverage)
    hide = ~finite | (outside & (not allow_extrapolation))
    expected = np.where(hide, np.nan, expected)
    half = np.where(hide, np.nan, half)
    return pd.DataFrame(
        {
            "expected": expected,
            "expected_lower": expected - half,
            "expected_upper": expected + half,
            "extrapolated": outside,
        },
        index=regressors.index,
    )
