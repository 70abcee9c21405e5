"""What pages need to know about one unit before they draw it: names, zone, metrics."""

from __future__ import annotations

import asyncio
from dataclasses import asdict, dataclass, field
from typing import Any

import pandas as pd

from dashboard.client import ApiError, LostworkClient


@dataclass(frozen=True)
class UnitContext:
    """One unit, its plant's clock and currency, and the result columns of its kind.

    Kept in a ``dcc.Store`` between callbacks (see :meth:`to_store`).
    """

    slug: str
    name: str
    kind: str
    plant: str
    plant_name: str = ""
    time_zone: str | None = None
    currency: str | None = None
    results: list[dict[str, str]] = field(default_factory=list)
    """Result columns of the kind: ``name``, ``unit`` (SI), ``description``."""
    latest: str | None = None
    """Time of the most recent result (RFC 3339), None before the first one."""
    interval_seconds: int = 60
    """The plant's averaging interval. [s]"""

    def to_store(self) -> dict[str, Any]:
        return asdict(self)

    @classmethod
    def from_store(cls, data: dict[str, Any] | None) -> UnitContext | None:
        if not isinstance(data, dict) or not data.get("slug"):
            return None
        return cls(**{k: v for k, v in data.items() if k in cls.__dataclass_fields__})

    def si_unit(self, metric: str, default: str = "1") -> str:
        for item in self.results:
            if item.get("name") == metric:
                return item.get("unit") or default
        return default

    def end(self) -> pd.Timestamp:
        """Where time windows end (exclusive): just after the latest result's interval,
        or now before the first result."""
        if self.latest:
            return pd.Timestamp(self.latest) + pd.Timedelta(seconds=self.interval_seconds)
        return pd.Timestamp.now(tz="UTC").floor("min")


def kind_results(catalogue: Any, kind: str) -> list[dict[str, str]]:
    """The result columns a catalogue answer declares for ``kind``.

    Accepts the catalogue as a list of kinds or as ``{"kinds": [...]}`` / ``{"items":
    [...]}`` / a mapping from kind name to kind.
    """
    kinds: Any = catalogue
    if isinstance(catalogue, dict):
        kinds = catalogue.get("kinds") or catalogue.get("items") or catalogue
    if isinstance(kinds, dict):
        entry = kinds.get(kind)
    else:
        entry = next((k for k in kinds or [] if k.get("name") == kind), None)
    if not isinstance(entry, dict):
        return []
    return [
        {
            "name": str(r.get("name")),
            "unit": str(r.get("unit") or "1"),
            "description": str(r.get("description") or ""),
        }
        for r in entry.get("results") or []
        if r.get("name")
    ]


async def load(client: LostworkClient, slug: str) -> UnitContext:
    """Fetch the unit, its plant, its kind's result columns and its latest result time.

    Raises
    ------
    ApiError
        404 with a detail naming the unit when the server has no such unit.
    """
    units = await client.units()
    match = units[units["slug"] == slug]
    if match.empty:
        raise ApiError(404, "Unknown unit", f"no unit {slug!r} on this server")
    unit = match.iloc[0].to_dict()
    plant, latest, results = await asyncio.gather(
        client.plant(unit["plant"]), _latest_time(client, slug), _metrics(client, unit)
    )
    return UnitContext(
        slug=slug,
        name=str(unit.get("name") or slug),
        kind=str(unit.get("kind") or ""),
        plant=str(unit.get("plant") or ""),
        plant_name=str(plant.get("name") or unit.get("plant") or ""),
        time_zone=plant.get("time_zone"),
        currency=plant.get("currency"),
        results=[
            {
                "name": str(r["name"]),
                "unit": str(r.get("unit") or "1"),
                "description": str(r.get("description") or ""),
            }
            for r in results
            if isinstance(r, dict) and r.get("name")
        ],
        latest=latest.isoformat() if latest is not None else None,
        interval_seconds=int(plant.get("interval_seconds") or 60),
    )


async def _metrics(client: LostworkClient, unit: dict[str, Any]) -> list[dict[str, Any]]:
    """What the server computes for the unit, pipeline and baseline columns included."""
    try:
        found = await client.metrics(unit["slug"])
        return [{"name": m.get("metric"), **m} for m in found]
    except ApiError as exc:
        if exc.status not in (404, 405):
            raise
    if isinstance(unit.get("results"), list):  # a server without the metrics route
        return unit["results"]
    return kind_results(await client.catalogue(), str(unit.get("kind") or ""))


async def _latest_time(client: LostworkClient, slug: str) -> pd.Timestamp | None:
    try:
        return (await client.latest(slug))["t"]
    except ApiError as exc:
        if exc.status == 404:
            return None
        raise
