"""Where a unit's exergy goes over a period: input, product, each destruction, each loss.

The engine reports an exergy balance per interval; this module reads the period means of
those result columns and lays them out as one account that closes: input = product +
destroyed + lost (+ a mismatch term when the entropy balance and the exergy balance of
the engine disagree, shown rather than hidden).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

from dashboard.formatting import metric_label

INPUT_METRICS = (
    "exergy_supplied_w",
    "exergy_in_w",
    "fuel_exergy_w",
    "heat_input_exergy_w",
    "electric_power_w",
)
"""Result columns that are a unit's exergy input, in order of preference (the boiler's
``exergy_supplied_w`` includes the air's and the fuel's sensible exergy, so its balance
closes on it rather than on ``fuel_exergy_w``)."""
PRODUCT_METRICS = (
    "water_exergy_gain_w",
    "net_power_w",
    "generator_power_w",
    "shaft_power_w",
    "work_output_w",
    "compressed_air_exergy_w",
    "exergy_product_w",
)
"""Result columns that are a unit's exergy product, in order of preference."""
LOSS_METRICS = ("rejected_heat_exergy_w",)
"""Loss columns not named ``exergy_lost_*``."""
TOTAL_METRIC = "exergy_destroyed_and_lost_w"
GOUY_STODOLA_METRIC = "lost_work_w"

MISMATCH_TOLERANCE = 1e-3
"""Balance mismatch below this fraction of the input is not drawn. [-]"""


@dataclass(frozen=True)
class ExergyAccount:
    """An exergy account in W (period means)."""

    input_label: str
    input_w: float
    product_label: str
    product_w: float
    destroyed: dict[str, float] = field(default_factory=dict)
    lost: dict[str, float] = field(default_factory=dict)

    @property
    def mismatch_w(self) -> float:
        """Input minus everything accounted for; zero when the balances agree. [W]"""
        return (
            self.input_w - self.product_w - sum(self.destroyed.values()) - sum(self.lost.values())
        )

    def terms(self) -> list[tuple[str, str, float]]:
        """``(category, label, W)`` for each outflow: product, destroyed, lost, mismatch."""
        rows = [("product", self.product_label, self.product_w)]
        rows += [("destroyed", k, v) for k, v in self.destroyed.items()]
        rows += [("lost", k, v) for k, v in self.lost.items()]
        if abs(self.mismatch_w) > MISMATCH_TOLERANCE * abs(self.input_w):
            rows.append(("mismatch", "Balance mismatch", self.mismatch_w))
        return rows


def _value(means: Mapping[str, float], metric: str) -> float | None:
    value = means.get(metric)
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _first(means: Mapping[str, float], candidates) -> tuple[str, float] | None:
    for metric in candidates:
        value = _value(means, metric)
        if value is not None:
            return metric, value
    return None


def build_account(means: Mapping[str, float]) -> ExergyAccount | None:
    """The exergy account of a unit from period means of its result columns.

    Destruction terms are the ``exergy_destroyed_<where>_w`` columns when the unit kind
    reports them, otherwise the Gouy-Stodola lost work (T0 Sgen) as one term; loss terms
    are ``exergy_lost_<where>_w`` columns, otherwise the rest of the engine's total
    ``exergy_destroyed_and_lost_w`` beyond the destruction. None when the unit reports no
    exergy input or no product.
    """
    found_input = _first(means, INPUT_METRICS)
    found_product = _first(means, PRODUCT_METRICS)
    if found_input is None or found_product is None:
        return None
    destroyed = {
        metric_label(m, _where(m, "exergy_destroyed_")): v
        for m in sorted(means)
        if m.startswith("exergy_destroyed_")
        and m != TOTAL_METRIC
        and m.endswith("_w")
        and (v := _value(means, m)) is not None
    }
    if not destroyed and (gouy := _value(means, GOUY_STODOLA_METRIC)) is not None:
        destroyed = {"Destroyed inside the unit (T0·Sgen)": gouy}
    lost = {
        metric_label(m, _where(m, "exergy_lost_")): v
        for m in sorted(means)
        if (m.startswith("exergy_lost_") and m.endswith("_w") or m in LOSS_METRICS)
        and (v := _value(means, m)) is not None
    }
    total = _value(means, TOTAL_METRIC)
    if not lost and total is not None and destroyed:
        remainder = total - sum(destroyed.values())
        if remainder > MISMATCH_TOLERANCE * abs(found_input[1]):
            lost = {"Lost to the surroundings": remainder}
    return ExergyAccount(
        input_label=metric_label(found_input[0]),
        input_w=found_input[1],
        product_label=metric_label(found_product[0]),
        product_w=found_product[1],
        destroyed=destroyed,
        lost=lost,
    )


def _where(metric: str, prefix: str) -> str:
    words = metric.removeprefix(prefix).removesuffix("_w").replace("_", " ")
    kind = "Destroyed" if "destroyed" in prefix else "Lost"
    return f"{kind}: {words}"


def wanted_metrics(available) -> list[str]:
    """Of a unit kind's result columns, those an exergy account is built from."""
    fixed = {*INPUT_METRICS, *PRODUCT_METRICS, *LOSS_METRICS, TOTAL_METRIC, GOUY_STODOLA_METRIC}
    return [
        m for m in available if m in fixed or m.startswith(("exergy_destroyed_", "exergy_lost_"))
    ]
