"""Readings payloads: the row form, the columnar form, and the ingest report.

Item fields are typed loosely on purpose: a bad item (text for a number, a time without
offset) must be rejected on its own, with its index, while the good items of the same
batch are stored. The service checks every field.
"""

from __future__ import annotations

from typing import Annotated, Any

from pydantic import BaseModel, ConfigDict, Field
from typing_extensions import TypedDict

from api.core.problems import ErrorItem

MAX_ITEMS = 200_000
"""Most readings one call may carry (row form: items; columnar: times x series)."""


class ReadingItem(TypedDict, total=False):
    """One reading. A TypedDict, not a model: validating 10,000 of them costs ~1 ms
    instead of ~13 ms, and the service checks every field itself anyway."""

    tag: Annotated[Any, Field(description="Tag name of the plant", examples=["FW-FLOW"])]
    time: Annotated[
        Any,
        Field(
            description="RFC 3339 with Z or an offset, or integer UTC epoch milliseconds",
            examples=["2026-03-02T08:15:00Z"],
        ),
    ]
    value: Annotated[
        Any, Field(description="A finite number in the tag's unit of measure", examples=[41.7])
    ]


class ReadingBatch(BaseModel):
    plant: str = Field(examples=["fenwick-mill"])
    readings: list[ReadingItem] = Field(max_length=MAX_ITEMS)


class ColumnarBatch(BaseModel):
    """Many tags sampled at the same instants: one shared time axis, one value list per tag.

    ``null`` in a value list means "no reading at this time" and is skipped silently.
    """

    model_config = ConfigDict(
        json_schema_extra={
            "example": {
                "plant": "fenwick-mill",
                "times": [1772439300000, 1772439360000],
                "series": {"FW-FLOW": [41.7, 41.9], "DRUM-P": [42.1, None]},
            }
        }
    )

    plant: str
    times: list[Any] = Field(max_length=MAX_ITEMS)
    """RFC 3339 texts or integer UTC epoch milliseconds (mixing is allowed)."""
    series: dict[str, list[Any]]
    """Tag name -> values in the tag's unit, one per entry of ``times``."""


class IngestReport(BaseModel):
    plant: str
    received: int
    """Readings in the request (columnar: non-null values)."""
    stored: int
    """New (tag, time) readings."""
    replaced: int
    """Readings that existed with a different value."""
    unchanged: int
    """Readings that existed with the same value (a re-sent batch)."""
    rejected: int
    duplicates: int = 0
    """Readings repeating a (tag, time) of the same request; the last one counts."""
    errors: list[ErrorItem] = []
    errors_truncated: int = 0
    """Errors beyond the first 1000, counted but not listed."""
    units_marked_dirty: list[str] = []
    """Units whose results over the changed intervals were queued for recompute."""
