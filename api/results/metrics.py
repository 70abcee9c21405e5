"""Which metrics a unit has, with their SI units and labels.

A unit's metrics are its kind's result columns (:class:`engine.catalogue.ResultColumn`),
then the pipeline's own (``flags``, ``coverage``), then any a later stage registers with
:func:`register_metric_provider` (baselines add expected values and drift, for example).
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable

from api.pipeline.quality import PIPELINE_METRICS
from engine.catalogue import ResultColumn, all_kinds

MetricProvider = Callable[[str], Iterable[ResultColumn]]
"""Kind name -> extra metrics stored for units of that kind."""

_providers: list[MetricProvider] = []
_written_by_pipeline: list[MetricProvider] = []


def register_metric_provider(
    provider: MetricProvider, *, written_by_pipeline: bool = False
) -> None:
    """Let another stage declare metrics it stores in the results table.

    ``written_by_pipeline``: the compute step writes these itself, beside the kind's
    results (uncertainty bands), so a recomputed range replaces them like the results
    instead of keeping them as another stage's.
    """
    if provider not in _providers:
        _providers.append(provider)
    if written_by_pipeline and provider not in _written_by_pipeline:
        _written_by_pipeline.append(provider)


def unit_metrics(kind_name: str) -> dict[str, ResultColumn]:
    """Metric name -> declaration, in display order, for a unit of kind ``kind_name``."""
    kind = all_kinds().get(kind_name)
    declared: list[ResultColumn] = list(kind.results) if kind else []
    declared += PIPELINE_METRICS
    for provider in _providers:
        declared += list(provider(kind_name))
    out: dict[str, ResultColumn] = {}
    for column in declared:
        out.setdefault(column.name, column)
    return out


def registered_metrics(kind_name: str) -> set[str]:
    """Metrics other stages declared for this kind (the pipeline leaves them alone)."""
    names: set[str] = set()
    for provider in _providers:
        if provider not in _written_by_pipeline:
            names |= {column.name for column in provider(kind_name)}
    return names


_CUT = re.compile(r"\s\(|:\s")


def label(column: ResultColumn) -> str:
    """A short label: the description up to its first parenthesis or colon."""
    text = column.description.strip()
    if not text:
        return column.name
    return _CUT.split(text, maxsplit=1)[0].rstrip(" .")
