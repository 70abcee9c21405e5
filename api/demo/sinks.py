"""Where simulated readings go: the REST API, or the ingest service in-process.

Both take a readings frame (index UTC epoch ms, one column per tag in the tag's unit,
NaN for "nothing sent") and send it as columnar batches
(:class:`api.readings.schemas.ColumnarBatch`), as a historian connector would: one
shared time axis per batch, one value list per tag, ``null`` for gaps.
"""

from __future__ import annotations

import time
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any, Protocol

import httpx
import numpy as np
import pandas as pd
from sqlalchemy.orm import Session, sessionmaker

from api.readings.schemas import MAX_ITEMS

BATCH_READINGS = 100_000
"""Readings per request: half the API's per-call limit, about 2 MB of JSON."""


@dataclass
class Totals:
    """What the service reported, summed over batches."""

    batches: int = 0
    received: int = 0
    stored: int = 0
    replaced: int = 0
    unchanged: int = 0
    rejected: int = 0
    errors: list[dict[str, Any]] = field(default_factory=list)

    def add(self, report: dict[str, Any]) -> None:
        self.batches += 1
        for name in ("received", "stored", "replaced", "unchanged", "rejected"):
            setattr(self, name, getattr(self, name) + int(report.get(name, 0)))
        self.errors.extend(report.get("errors", [])[: max(0, 20 - len(self.errors))])


class Sink(Protocol):
    def send(self, readings: pd.DataFrame) -> Totals: ...


def columnar_batches(
    plant: str, readings: pd.DataFrame, batch_readings: int = BATCH_READINGS
) -> Iterator[dict[str, Any]]:
    """JSON-ready columnar batches of at most ``batch_readings`` values each.

    Instants at which no tag has a value are left out; a NaN becomes ``null``.
    """
    if readings.empty:
        return
    values = readings.to_numpy(dtype=float)
    keep = ~np.isnan(values).all(axis=1)
    values = values[keep]
    times = readings.index.to_numpy(dtype=np.int64)[keep]
    per_batch = max(1, min(batch_readings, MAX_ITEMS) // max(1, values.shape[1]))
    names = [str(c) for c in readings.columns]
    for lo in range(0, len(times), per_batch):
        block = values[lo : lo + per_batch]
        series = {}
        for j, name in enumerate(names):
            column = block[:, j]
            missing = np.isnan(column)
            if missing.all():
                continue
            if missing.any():  # JSON null for "no reading", set by numpy, not per value
                with_gaps = column.astype(object)
                with_gaps[missing] = None
                series[name] = with_gaps.tolist()
            else:
                series[name] = column.tolist()
        yield {"plant": plant, "times": times[lo : lo + per_batch].tolist(), "series": series}


class HttpSink:
    """POST batches to ``/api/v1/readings/columnar`` with an ingest key.

    Parameters
    ----------
    client : httpx.Client
        Its base URL is the server's (``http://127.0.0.1:8000``); a FastAPI TestClient
        works as well.
    plant : str
        Plant slug.
    key : str
        API key with the ``ingest`` scope.
    retries : int
        Attempts per batch on a connection error or a 5xx answer (the server may be
        starting or restarting); 4xx answers are not retried.
    """

    def __init__(
        self, client: httpx.Client, plant: str, key: str, retries: int = 5, pause_s: float = 1.0
    ) -> None:
        self.client = client
        self.plant = plant
        self.headers = {"Authorization": f"Bearer {key}"}
        self.retries = retries
        self.pause_s = pause_s

    def send(self, readings: pd.DataFrame) -> Totals:
        totals = Totals()
        for batch in columnar_batches(self.plant, readings):
            totals.add(self._post(batch))
        return totals

    def _post(self, batch: dict[str, Any]) -> dict[str, Any]:
        for attempt in range(self.retries):
            try:
                response = self.client.post(
                    "/api/v1/readings/columnar", json=batch, headers=self.headers
                )
            except httpx.TransportError:
                if attempt == self.retries - 1:
                    raise
                time.sleep(self.pause_s * (attempt + 1))
                continue
            if response.status_code >= 500 and attempt < self.retries - 1:
                time.sleep(self.pause_s * (attempt + 1))
                continue
            if response.status_code >= 400:
                raise IngestRefused(response.status_code, response.text)
            return response.json()
        raise AssertionError("unreachable")  # pragma: no cover


class IngestRefused(RuntimeError):
    """The service answered 4xx: a wrong key, an unknown plant, a batch it cannot take."""

    def __init__(self, status: int, body: str) -> None:
        super().__init__(f"ingest refused with HTTP {status}: {body[:500]}")
        self.status = status


class ServiceSink:
    """Call the ingest service directly, in this process (no HTTP), one session per batch.

    The same validation, unit conversion, upsert and dirty-span marking as the REST
    route: :func:`api.readings.service.ingest_columnar`.
    """

    def __init__(self, session_factory: sessionmaker[Session], plant: str) -> None:
        self.session_factory = session_factory
        self.plant = plant

    def send(self, readings: pd.DataFrame) -> Totals:
        from api.readings import service
        from api.readings.schemas import ColumnarBatch

        totals = Totals()
        for batch in columnar_batches(self.plant, readings):
            with self.session_factory() as session:
                report = service.ingest_columnar(
                    session=session, batch=ColumnarBatch.model_construct(**batch)
                )
            totals.add(report.model_dump())
        return totals
