"""The result metrics that carry a unit's measurement uncertainty, and their declaration.

Which results get a band: every efficiency (``eta_*``, ``*_efficiency``,
``effectiveness``, ``cop*``), every specific consumption (``*heat_rate*``,
``steam_rate_*``, ``specific_power_*``) and the entropy generation ``sgen_w_per_k`` of
the unit's kind. For each such result ``M`` the compute step writes, per interval and in
the unit of ``M``:

=====================  =================================================================
``u_M``                combined standard uncertainty (random and systematic parts)
``u_random_M``         its random part (scatter of the readings within the interval)
``u95_M``              expanded uncertainty, ``2 u_M``: the band ``M +- u95_M`` at about 95 %
=====================  =================================================================

Per result ``M`` with a band, the drift stage (:mod:`api.uncertainty.drift`) writes
where ``M`` has an active baseline:

==============================  ==========================================================
``drift_significant_M``         1 when ``|drift_M|`` exceeds the combined uncertainty of
                                actual and expected, 0 when not (NULL: not decidable)
``drift_rel_significant_M``     ``drift_rel_M`` where significant, 0 where not: the metric a
                                threshold rule reads to alert on significant drift only
==============================  ==========================================================
"""

from __future__ import annotations

import functools
from collections.abc import Iterable

from api.results.metrics import label, register_metric_provider
from engine.catalogue import ResultColumn, all_kinds

U = "u_"
U_RANDOM = "u_random_"
U95 = "u95_"
DRIFT_SIGNIFICANT = "drift_significant_"
DRIFT_REL_SIGNIFICANT = "drift_rel_significant_"


def has_band(name: str) -> bool:
    """Whether result ``name`` is an efficiency, a specific consumption or entropy generation."""
    return (
        name.startswith(("eta_", "cop", "steam_rate_", "specific_power_"))
        or name.endswith("_efficiency")
        or name in ("effectiveness", "sgen_w_per_k")
        or "heat_rate" in name
    )


@functools.lru_cache(maxsize=64)
def banded(kind_name: str) -> tuple[ResultColumn, ...]:
    """The results of ``kind_name`` that carry a band, in the kind's order."""
    kind = all_kinds().get(kind_name)
    return tuple(c for c in kind.results if has_band(c.name)) if kind else ()


def band_names(metric: str) -> dict[str, str]:
    """``{"u": "u_M", "u_random": "u_random_M", "u95": "u95_M"}`` for metric ``M``."""
    return {"u": U + metric, "u_random": U_RANDOM + metric, "u95": U95 + metric}


def drift_names(metric: str) -> dict[str, str]:
    return {
        "significant": DRIFT_SIGNIFICANT + metric,
        "rel_significant": DRIFT_REL_SIGNIFICANT + metric,
    }


@functools.lru_cache(maxsize=64)
def band_columns(kind_name: str) -> tuple[ResultColumn, ...]:
    """The band metrics the compute step may write for a unit of ``kind_name``."""
    out: list[ResultColumn] = []
    for base in banded(kind_name):
        text = label(base)
        out += [
            ResultColumn(
                U + base.name,
                base.unit,
                f"Standard uncertainty of {text}: random and systematic parts combined "
                f"({base.name}).",
            ),
            ResultColumn(
                U_RANDOM + base.name,
                base.unit,
                f"Random uncertainty of {text}: from the scatter of the readings within "
                f"the interval ({base.name}).",
            ),
            ResultColumn(
                U95 + base.name,
                base.unit,
                f"Expanded uncertainty of {text}: the 95 % band is the value +- this, "
                f"2 standard uncertainties ({base.name}).",
            ),
        ]
    return tuple(out)


@functools.lru_cache(maxsize=64)
def drift_columns(kind_name: str) -> tuple[ResultColumn, ...]:
    """The metrics the drift-significance stage may write for a unit of ``kind_name``."""
    out: list[ResultColumn] = []
    for base in banded(kind_name):
        out += [
            ResultColumn(
                DRIFT_SIGNIFICANT + base.name,
                "1",
                f"Significant drift of {base.name}: 1 when the drift from baseline exceeds "
                "the combined uncertainty of actual and expected, else 0.",
            ),
            ResultColumn(
                DRIFT_REL_SIGNIFICANT + base.name,
                "1",
                f"Significant relative drift of {base.name}: the relative drift where it is "
                "significant, 0 where it is not.",
            ),
        ]
    return tuple(out)


def _bands(kind_name: str) -> Iterable[ResultColumn]:
    return band_columns(kind_name)


def _drift(kind_name: str) -> Iterable[ResultColumn]:
    return drift_columns(kind_name)


def register() -> None:
    """Declare the band metrics (written by the compute step with the results) and the
    drift-significance metrics (written by their own stage) to the results API."""
    register_metric_provider(_bands, written_by_pipeline=True)
    register_metric_provider(_drift)
