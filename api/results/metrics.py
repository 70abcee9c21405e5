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


def register_metric_provider(provider: MetricProvider) -> None:
    """Let another stage declare metrics it stores in the results table."""
    if provider not in _providers:
        _providers.append(provider)


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
        names |= {column.name for column in provider(kind_name)}
    return names


_CUT = re.compile(r"\s\(|:\s")


def label(column: ResultColumn) -> str:
    """A short label: the description up to its first parenthesis or colon."""
    text = column.description.strip()
    if not text:
        return column.name
    return _CUT.split(text, maxsplit=1)[0].rstrip(" .")
