"""What the baselines stage needs to know per unit kind, beyond the engine catalogue.

Per kind: the load column (the catalogue's ``load_result``), the steady-state limits,
which baseline turns into extra fuel and money (the *cost basis*), and which result
columns carry the exergy input and the exergy destroyed and lost (for headroom).

Steady-state limits (``STEADY``) are our choice, in the manner of the test codes'
run-stability requirement (ASME PTC 4-2008 and PTC 6-2004, Sec. 3, from memory; their
numbers are not reproduced): over a trailing window of 15 minutes, the load and one other
key result may spread (max - min) by at most a few percent of their mean — 3 % for
electrical output, 5 % for heat duties, fuel input and flows, whose interval means are
noisier. This window-spread test on interval means is common practice in plant
performance monitoring. An interval whose load is not positive is never steady (the unit
is off). A baseline may carry its own limits for choosing its fit intervals.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from engine.catalogue import UnitKind, all_kinds
from engine.steady import SteadyLimit

STEADY_WINDOW_S = 900.0
"""Trailing window of the steady-state test (our choice: 15 minutes). [s]"""

MIN_WINDOW = 2
"""Fewest intervals in the window: with one, the spread is always zero. [-]"""

EFFICIENCY = "efficiency"
HEAT_RATE = "heat_rate"


@dataclass(frozen=True)
class CostBasis:
    """How drift in ``metric`` becomes extra fuel (HHV) per hour.

    Attributes
    ----------
    metric : str
        The baselined metric.
    method : str
        :data:`EFFICIENCY` (``engine.cost.extra_fuel_from_efficiency`` with the fuel
        input in ``column``) or :data:`HEAT_RATE` (``extra_fuel_from_heat_rate`` with the
        power in ``column``).
    column : str
        Fuel heat input, HHV [W], or the power the heat rate is per [W].
    """

    metric: str
    method: str
    column: str


@dataclass(frozen=True)
class KindProfile:
    """The baselines stage's view of one unit kind."""

    load: str | None
    steady: tuple[SteadyLimit, ...]
    cost: tuple[CostBasis, ...] = ()
    """In order of preference: the first one with an active baseline sets the unit's cost
    columns. Empty: the unit burns no fuel of its own (no cost of drift)."""
    exergy_in: str | None = None
    """Exergy input whose product share is ``eta_2``. [W]"""
    exergy_out: tuple[str, ...] = ()
    """Columns whose sum is the exergy destroyed plus lost. [W]"""
    fuel_exergy_input: bool = False
    """Whether the exergy input is (essentially) the fuel's, so headroom has a fuel price."""

    def steady_columns(self) -> list[str]:
        return list(dict.fromkeys(limit.column for limit in self.steady))


def _spread(column: str, fraction: float) -> SteadyLimit:
    return SteadyLimit(column, max_range=fraction, relative=True)


def _fuel_costs(*heat_rates: tuple[str, str]) -> tuple[CostBasis, ...]:
    return (
        *(CostBasis(metric, HEAT_RATE, power) for metric, power in heat_rates),
        CostBasis("eta_1", EFFICIENCY, "fuel_heat_input_hhv_w"),
        CostBasis("eta_1_lhv", EFFICIENCY, "fuel_heat_input_hhv_w"),
        CostBasis("eta_2", EFFICIENCY, "fuel_heat_input_hhv_w"),
    )


PROFILES: Mapping[str, KindProfile] = {
    "boiler": KindProfile(
        load="heat_absorbed_w",
        steady=(_spread("heat_absorbed_w", 0.05), _spread("fuel_heat_input_hhv_w", 0.05)),
        cost=_fuel_costs(),
        exergy_in="exergy_supplied_w",
        exergy_out=("exergy_destroyed_and_lost_w",),
        fuel_exergy_input=True,
    ),
    "block": KindProfile(
        load="net_power_w",
        steady=(_spread("net_power_w", 0.03), _spread("fuel_heat_input_hhv_w", 0.05)),
        cost=_fuel_costs(
            ("net_heat_rate_j_per_kwh", "net_power_w"),
            ("gross_heat_rate_j_per_kwh", "gross_power_w"),
        ),
        exergy_in="fuel_exergy_w",
        exergy_out=("exergy_destroyed_and_lost_w",),
        fuel_exergy_input=True,
    ),
    "gas_turbine": KindProfile(
        load="generator_power_w",
        steady=(_spread("generator_power_w", 0.03), _spread("fuel_heat_input_hhv_w", 0.05)),
        cost=_fuel_costs(("heat_rate_j_per_kwh", "generator_power_w")),
        exergy_in="fuel_exergy_w",
        exergy_out=("exergy_destroyed_and_lost_w",),
        fuel_exergy_input=True,
    ),
    "steam_turbine": KindProfile(
        load="generator_power_w",
        steady=(_spread("generator_power_w", 0.03), _spread("exergy_in_w", 0.05)),
        exergy_in="exergy_in_w",
        exergy_out=("exergy_destroyed_and_lost_w",),
    ),
    "hrsg": KindProfile(
        load="heat_recovered_w",
        steady=(_spread("heat_recovered_w", 0.05), _spread("gas_flow_kg_per_s", 0.05)),
        exergy_in="exergy_in_w",
        exergy_out=("exergy_destroyed_and_lost_w",),
    ),
    "heat_engine": KindProfile(
        load="work_output_w",
        steady=(_spread("work_output_w", 0.05), _spread("heat_input_w", 0.05)),
        exergy_in="heat_input_exergy_w",
        exergy_out=("exergy_destroyed_w", "rejected_heat_exergy_w"),
    ),
    "heat_pump": KindProfile(
        load="cooling_w",
        steady=(_spread("electric_power_w", 0.05),),
        exergy_in="electric_power_w",
        exergy_out=("exergy_destroyed_w",),
    ),
    "air_compressor": KindProfile(
        load="free_air_delivery_m3_per_s",
        steady=(_spread("electric_power_w", 0.05), _spread("free_air_delivery_m3_per_s", 0.05)),
        exergy_in="electric_power_w",
        exergy_out=("exergy_destroyed_w",),
    ),
}
"""Profiles by kind name. A kind missing here gets :func:`profile`'s fallback: its
catalogue load column, steady on that column within 5 %, no cost and no headroom."""


def profile(kind_name: str) -> KindProfile:
    """The profile of a kind; the load column comes from the catalogue when it names one."""
    kind: UnitKind | None = all_kinds().get(kind_name)
    found = PROFILES.get(kind_name)
    load = (kind.load_result if kind else None) or (found.load if found else None)
    if found is None:
        steady = (_spread(load, 0.05),) if load else ()
        return KindProfile(load=load, steady=steady)
    if load != found.load:
        found = KindProfile(
            load=load,
            steady=found.steady,
            cost=found.cost,
            exergy_in=found.exergy_in,
            exergy_out=found.exergy_out,
            fuel_exergy_input=found.fuel_exergy_input,
        )
    return found


def window_intervals(interval_seconds: float, window_seconds: float = STEADY_WINDOW_S) -> int:
    """Intervals in the steady-state window: ``window_seconds`` rounded, at least 2. [-]"""
    return max(MIN_WINDOW, int(math.floor(window_seconds / interval_seconds + 0.5)))
