"""Response models of the results routes."""

from __future__ import annotations

from enum import StrEnum

from pydantic import BaseModel, Field


class UnitSystem(StrEnum):
    SI = "si"
    US = "us"


class OutputFormat(StrEnum):
    JSON = "json"
    CSV = "csv"


class Series(BaseModel):
    """One metric over time; in raw mode one point per interval (min = mean = max)."""

    metric: str = Field(examples=["eta_1"])
    unit: str = Field(examples=["1"], description="Unit of the values (pint syntax).")
    label: str
    aggregate: str = Field(
        "mean",
        description=(
            "'mean' for measured quantities; 'bit_or' for the integer flags, whose "
            "mean, min and max all hold the bitwise OR of the bucket's intervals."
        ),
    )
    t: list[str] = Field(description="Bucket (or interval) starts, RFC 3339 UTC.")
    mean: list[float | None]
    min: list[float | None]
    max: list[float | None]
    count: list[int] = Field(description="Intervals with a value in the bucket.")


class ResultsRead(BaseModel):
    unit: str
    start: str
    end: str
    unit_system: UnitSystem
    bucket_seconds: int | None = Field(
        description="Bucket length; null when every interval is returned as is (raw)."
    )
    series: list[Series]


class LatestRead(BaseModel):
    t: str | None = Field(description="Start of the latest computed interval, RFC 3339 UTC.")
    values: dict[str, float | None]
    units: dict[str, str]
    uncertainty: dict[str, float | None] = Field(
        default_factory=dict,
        description=(
            "Per metric that carries a band, its expanded uncertainty at about 95 % "
            "(the metric u95_<metric>, in the metric's unit): the value lies within "
            "value +- uncertainty."
        ),
    )


class MetricRead(BaseModel):
    metric: str
    unit: str = Field(description="SI unit as stored ('1' for fractions).")
    us_unit: str = Field(description="Unit in the US customary output system.")
    label: str
    description: str
    aggregate: str


class MetricList(BaseModel):
    unit: str
    kind: str
    metrics: list[MetricRead]
