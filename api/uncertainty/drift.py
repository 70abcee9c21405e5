"""The pipeline stage that says whether a drift from baseline exceeds the uncertainty.

Runs in every chunk's transaction after the baselines stage (which writes ``expected_M``,
its prediction band and ``drift_M``) and before the alert rules (which may read what
this stage writes): :func:`judge_drift`, registered in :mod:`api.pipeline.worker`.

For each result ``M`` that carries a band (:mod:`api.uncertainty.metrics`) and has an
active baseline, per interval (:func:`engine.uncertainty.drift_significant`)::

    significant  =  |M - expected_M|  >  k sqrt(u_actual^2 + u_expected^2),   k = 2

* ``u_expected``: the standard uncertainty of the baseline's prediction for a new
  interval, the half-width of its prediction band over the band's Student t quantile,
  ``s sqrt(1 + x'(X'X)^-1 x)`` (:func:`engine.baseline.predict`);
* ``u_actual``: the random part ``u_random_M`` only. A baseline is fitted on the unit's own
  stored results, measured by the same instruments, so their systematic errors are common
  to actual and expected and cancel in the difference (GUM 5.2.2, r = 1). An instrument
  recalibrated or replaced after the fit breaks that assumption: refit the baseline.

The band of a new observation already holds the scatter of the fit period's intervals,
random measurement scatter included, so adding ``u_random_M`` counts that part twice: the
test is cautious by a factor ``sqrt(1 + u_random^2 / u_expected^2)``, close to 1 for
interval means (their random part is small against a regression's residual spread).

Written: ``drift_significant_M`` (1/0; NULL where actual, expected or an uncertainty is
missing) and ``drift_rel_significant_M`` (``drift_rel_M`` where significant, 0 where
not). Metrics of baselines no longer active lose their columns where a range is
recomputed, as the baselines stage's own do.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from sqlalchemy import select
from sqlalchemy.orm import Session

from api.baselines import metrics as baseline_names
from api.baselines.data import load_frame
from api.baselines.models import Baseline
from api.plants.models import Unit
from api.results.store import replace_results
from api.uncertainty.metrics import band_names, banded, drift_names
from engine import baseline as engine_baseline
from engine.uncertainty import COVERAGE_FACTOR_95, drift_significant


def significance(
    frame: pd.DataFrame, metric: str, t_quantile: float, k: float = COVERAGE_FACTOR_95
) -> pd.DataFrame:
    """``drift_significant_M`` and ``drift_rel_significant_M`` from stored columns.

    Parameters
    ----------
    frame : DataFrame
        Stored results with ``M``, ``expected_M``, ``expected_upper_M``, ``drift_rel_M``
        and ``u_random_M`` (missing columns read as NaN).
    metric : str
        ``M``.
    t_quantile : float
        Student t quantile of the baseline's prediction band. [-]
    k : float, default 2
        Coverage factor. [-]
    """
    col = baseline_names.metric_names(metric)

    def get(name: str) -> np.ndarray:
        if name in frame:
            return frame[name].to_numpy(dtype=float, na_value=np.nan)
        return np.full(len(frame), np.nan)

    actual, expected = get(metric), get(col["expected"])
    u_expected = (get(col["expected_upper"]) - expected) / t_quantile
    u_actual = get(band_names(metric)["u_random"])
    known = np.isfinite(actual) & np.isfinite(expected) & np.isfinite(u_expected)
    known &= np.isfinite(u_actual)
    beyond = np.asarray(drift_significant(actual, u_actual, expected, u_expected, k))
    names = drift_names(metric)
    return pd.DataFrame(
        {
            names["significant"]: np.where(known, beyond.astype(float), np.nan),
            names["rel_significant"]: np.where(
                known, np.where(beyond, get(col["drift_rel"]), 0.0), np.nan
            ),
        },
        index=frame.index,
    )


def judge_drift(session: Session, unit_id: int, start_ms: int, end_ms: int) -> None:
    """After-compute hook: write the drift significance of the unit's intervals in
    [start, end) for every banded metric with a baseline. Does not commit."""
    kind = session.scalar(select(Unit.kind).where(Unit.id == unit_id))
    if kind is None:
        return
    with_band = {c.name for c in banded(kind)}
    baselines = session.scalars(
        select(Baseline).where(Baseline.unit_id == unit_id, Baseline.metric.in_(with_band))
    ).all()
    if not baselines:
        return
    written = sorted({n for b in baselines for n in drift_names(b.metric).values()})
    active = [b for b in baselines if b.active]
    parts = []
    if active:
        needed: list[str] = []
        for b in active:
            col = baseline_names.metric_names(b.metric)
            needed += [b.metric, col["expected"], col["expected_upper"], col["drift_rel"]]
            needed.append(band_names(b.metric)["u_random"])
        frame = load_frame(session, unit_id, needed, start_ms, end_ms)
        for b in active:
            t_quantile = float(engine_baseline.Baseline.from_dict(b.model).t_quantile)
            parts.append(significance(frame, b.metric, t_quantile))
    out = pd.concat(parts, axis=1) if parts else pd.DataFrame()
    replace_results(session, unit_id, start_ms, end_ms, out, only=written)
