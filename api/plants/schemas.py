"""Plant, tag, unit and catalogue payloads."""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, Field


class ApplyReportRead(BaseModel):
    plant: str
    changed: bool
    """False when the file matched what was stored (an idempotent re-apply)."""
    created: list[str]
    updated: list[str]
    deleted: list[str]
    kept_tags: list[str]
    """Tags stored but absent from the file: kept with their readings."""
    units_marked_dirty: list[str]
    dry_run: bool


class PlantSummary(BaseModel):
    slug: str
    name: str
    time_zone: str
    interval_seconds: int
    t0_k: float
    p0_pa: float
    ambient_tag: str | None
    atmosphere_pa: float
    fuel_price_per_gj: float | None
    currency: str | None
    units: list[str]


class PlantList(BaseModel):
    plants: list[PlantSummary]


class TagRead(BaseModel):
    name: str
    description: str | None
    unit: str
    si_unit: str | None
    low: float | None
    high: float | None
    uncertainty_si: float | None
    uncertainty_rel: float | None
    uncertainty_figures: list[dict[str, Any]] | None = Field(
        default=None,
        description=(
            "Stated uncertainty figures in SI: basis (absolute, reading, span), value (SI "
            "amount or fraction), span [SI], zero (SI value of the instrument's zero), "
            "coverage (standard, expanded95), component (systematic, random)."
        ),
    )


class FuelRead(BaseModel):
    name: str
    hhv_j_per_kg: float
    lhv_j_per_kg: float | None
    exergy_to_lhv_ratio: float
    density_kg_per_m3: float | None
    co2_kg_per_j: float | None
    spec: dict


class PlantDetail(PlantSummary):
    fuels: list[FuelRead]
    tags: list[TagRead]


class ResultColumnRead(BaseModel):
    name: str
    unit: str
    description: str


class UnitRead(BaseModel):
    slug: str
    name: str
    plant: str
    kind: str
    fuel: str | None
    inputs: dict[str, str] = Field(description="Role -> tag name")
    parameters: dict[str, float] = Field(description="As configured (SI)")
    results: list[ResultColumnRead] = Field(description="What the kind computes")


class UnitList(BaseModel):
    units: list[UnitRead]


class RoleRead(BaseModel):
    name: str
    unit: str
    required: bool
    description: str


class ParameterRead(BaseModel):
    name: str
    unit: str
    default: float | None
    minimum: float | None
    maximum: float | None
    description: str


class TextParameterRead(BaseModel):
    name: str
    choices: list[str]
    default: str | None
    description: str


class PortGroupRead(BaseModel):
    name: str
    roles: list[RoleRead]
    min_ports: int
    max_ports: int
    description: str


class KindRead(BaseModel):
    name: str
    title: str
    description: str
    needs_fuel: bool
    roles: list[RoleRead]
    port_groups: list[PortGroupRead]
    alternatives: list[list[str]]
    parameters: list[ParameterRead]
    text_parameters: list[TextParameterRead]
    fuel_roles: list[str]
    load_result: str | None
    results: list[ResultColumnRead]


class KindList(BaseModel):
    kinds: list[KindRead]
