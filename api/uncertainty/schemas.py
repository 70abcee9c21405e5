"""Response models of the uncertainty routes (null where a number is not finite)."""

from __future__ import annotations

from pydantic import BaseModel, Field


class ContributorRead(BaseModel):
    input: str = Field(
        description="Role of the unit, or fuel_heating_value / fuel_density (the fuel's).",
        examples=["fuel_volume_flow"],
    )
    tag: str | None = Field(description="The tag bound to the role (null for a fuel property).")
    source: str = Field(
        description="'stated' (plant file) or 'default' (common practice for its kind).",
        examples=["default"],
    )
    note: str = Field(description="Where a default figure comes from.")
    unit: str = Field(description="SI unit of the input.", examples=["m^3/s"])
    value: float | None = Field(description="Mean input over the intervals used. [unit]")
    u_systematic: float | None = Field(description="Systematic standard uncertainty. [unit]")
    u_random: float | None = Field(
        description="Random standard uncertainty of an interval mean (root mean square). [unit]"
    )
    sensitivity: float | None = Field(
        description="dM/dX, mean over the intervals. [metric unit / unit]"
    )
    sensitivity_relative: float | None = Field(
        description="(dM/dX) X / M: the percent change of M per percent of X. [-]"
    )
    contribution: float | None = Field(
        description="Standard uncertainty of the result from this input alone. [metric unit]"
    )
    share: float | None = Field(description="Share of the result's variance, 0 to 1. [-]")


class UncertaintyRead(BaseModel):
    unit: str
    metric: str
    metric_unit: str = Field(description="SI unit of the metric ('1' for fractions).")
    start: str
    end: str
    basis: str = Field(
        description=(
            "'interval': the latest computed interval; 'mean': the mean over the period's "
            "intervals (random parts shrink with their number, systematic parts do not)."
        )
    )
    intervals_in_period: int
    intervals_used: int = Field(
        description="Intervals propagated (at most 120, evenly spread over the period)."
    )
    value: float | None = Field(description="Mean of the metric over the intervals used.")
    u: float | None = Field(description="Combined standard uncertainty. [metric unit]")
    u_random: float | None
    u_systematic: float | None
    u95: float | None = Field(description="Expanded uncertainty, 2 u (about 95 %). [metric unit]")
    contributors: list[ContributorRead] = Field(
        description="Inputs from the largest contribution down: the instrument to fix first."
    )
