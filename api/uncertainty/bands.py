"""A unit model's results with their uncertainty bands and judged flags, in bounded batches.

The compute step calls :func:`evaluate` instead of the bare model: it runs
:func:`engine.uncertainty.propagate` (the nominal evaluation is the model's result, so
nothing is computed twice), keeps ``u_``, ``u_random_`` and ``u95_`` of the results
that carry a band (:mod:`api.uncertainty.metrics`), and replaces the model's consistency
flags by those judged against the combined uncertainty
(:meth:`engine.uncertainty.Propagation.judged_flags`).

Memory: the sensitivities take ``inputs x results x rows x 8`` bytes (H10's note on the
engine), so rows are propagated in batches of at most :func:`batch_rows` rows. The unit
models are row by row, so batches give the same numbers as one pass.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from api.uncertainty.metrics import U95, U_RANDOM, U, banded
from engine.catalogue import ModelContext, UnitKind
from engine.uncertainty import COVERAGE_FACTOR_95, InputUncertainty, Propagation, propagate

MEMORY_BUDGET_BYTES = 64 * 2**20
"""Largest sensitivity array of one batch (64 MiB; our choice: two workers on a small
machine stay far below their memory while a day of one-minute intervals is one batch)."""


def batch_rows(n_inputs: int, n_results: int, budget: int = MEMORY_BUDGET_BYTES) -> int:
    """Rows per batch so that the sensitivity array stays within ``budget`` bytes."""
    return max(1, budget // (8 * max(n_inputs, 1) * max(n_results, 1)))


def rows_of(context: ModelContext, rows: slice) -> ModelContext:
    """The context of a batch: per-row dead-state arrays cut to its rows."""
    dead = context.dead
    cut = {
        f.name: np.asarray(getattr(dead, f.name))[rows]
        for f in dataclasses.fields(dead)
        if np.ndim(getattr(dead, f.name)) > 0
    }
    return replace(context, dead=replace(dead, **cut)) if cut else context


def _part(value, rows: slice):
    return value[rows] if np.ndim(value) > 0 else value


def batches(
    kind: UnitKind,
    inputs: pd.DataFrame,
    params: Mapping[str, float],
    context: ModelContext,
    uncertainties: Mapping[str, InputUncertainty],
    *,
    budget: int = MEMORY_BUDGET_BYTES,
):
    """Yield one :class:`~engine.uncertainty.Propagation` per batch of rows, in order."""
    size = batch_rows(len(uncertainties), len(kind.results), budget)
    for start in range(0, len(inputs), size):
        rows = slice(start, start + size)
        part = {
            name: InputUncertainty(_part(u.systematic, rows), _part(u.random, rows))
            for name, u in uncertainties.items()
        }
        yield propagate(kind, inputs.iloc[rows], params, rows_of(context, rows), part)


@dataclass
class Evaluated:
    """The model's results for a chunk, their bands, and the judged flags."""

    results: pd.DataFrame
    """The model's output at the nominal inputs (its own ``flags`` included)."""
    bands: pd.DataFrame
    """``u_M``, ``u_random_M``, ``u95_M`` per banded result ``M`` the chunk produced
    (a result NaN in every row has no band columns). [unit of M]"""
    flags: np.ndarray
    """The model's flags with the consistency bits judged against the uncertainty."""


def band_frame(propagation: Propagation, kind: UnitKind, k: float) -> pd.DataFrame:
    """The stored band columns of one propagation (every banded result, NaN when the
    result was not produced)."""
    table = propagation.table(k)
    out = {}
    for column in banded(kind.name):
        name = column.name
        if f"u_{name}" in table.columns:
            out[U + name] = table[f"u_{name}"].to_numpy()
            out[U_RANDOM + name] = table[f"u_random_{name}"].to_numpy()
            out[U95 + name] = table[f"u95_{name}"].to_numpy()
        else:
            nan = np.full(len(table), np.nan)
            out[U + name], out[U_RANDOM + name], out[U95 + name] = nan, nan, nan
    return pd.DataFrame(out, index=propagation.results.index)


def evaluate(
    kind: UnitKind,
    inputs: pd.DataFrame,
    params: Mapping[str, float],
    context: ModelContext,
    uncertainties: Mapping[str, InputUncertainty],
    *,
    k: float = COVERAGE_FACTOR_95,
    budget: int = MEMORY_BUDGET_BYTES,
) -> Evaluated:
    """Results, bands and judged flags of ``kind`` over ``inputs`` (see the module notes)."""
    results, bands, flags = [], [], []
    for propagation in batches(kind, inputs, params, context, uncertainties, budget=budget):
        results.append(propagation.results)
        bands.append(band_frame(propagation, kind, k))
        flags.append(propagation.judged_flags(k))
    if not results:
        empty = kind.model(inputs, params, context)
        return Evaluated(empty, pd.DataFrame(index=inputs.index), np.zeros(0, dtype=np.int64))
    frame = pd.concat(bands) if len(bands) > 1 else bands[0]
    produced = frame.columns[frame.notna().any(axis=0).to_numpy()]
    return Evaluated(
        pd.concat(results) if len(results) > 1 else results[0],
        frame[produced],
        np.concatenate(flags).astype(np.int64),
    )
