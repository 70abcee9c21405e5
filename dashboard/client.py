"""The dashboard's one client of the lostwork REST API: the only module that knows URLs.

Every method is a coroutine (Dash runs async callbacks on the server's event loop, so
the dashboard never blocks the API it is mounted beside) and returns plain Python or
pandas objects with SI values and UTC timestamps. Errors arrive as RFC 9457 problem
details and leave as :class:`ApiError`; an optional endpoint that the server does not
have yet (baselines, alerts) raises :class:`NotAvailable` instead, so a page can show an
empty state rather than an error.
"""

from __future__ import annotations

import asyncio
import datetime as dt
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

import httpx
import pandas as pd

API = "/api/v1"

KeySource = str | Callable[[], str | None] | None
"""An API key, or a function returning one when a request is made (the embedded
server may create its key after the dashboard is built)."""


class ApiError(Exception):
    """A request the API refused or could not answer, carrying its problem details."""

    def __init__(self, status: int, title: str, detail: str | None = None, problem=None):
        self.status = status
        self.title = title
        self.detail = detail
        self.problem: dict[str, Any] = problem if isinstance(problem, dict) else {}
        super().__init__(f"{title} (HTTP {status})" + (f": {detail}" if detail else ""))


class NotAvailable(ApiError):
    """The server has no such endpoint yet (a feature not installed or not built)."""


@dataclass(frozen=True)
class Results:
    """Downsampled results of one unit: per metric the bucket mean, minimum and maximum.

    ``mean``, ``low`` and ``high`` share a UTC DatetimeIndex named ``t`` (the bucket
    start) and hold one column per metric, in the unit of :attr:`units`.
    """

    unit: str
    unit_system: str
    bucket_seconds: int | None
    mean: pd.DataFrame
    low: pd.DataFrame
    high: pd.DataFrame
    units: dict[str, str] = field(default_factory=dict)
    labels: dict[str, str] = field(default_factory=dict)
    count: pd.DataFrame | None = None
    """Intervals with a value in each bucket, when the server says."""

    @property
    def metrics(self) -> list[str]:
        return list(self.mean.columns)

    @property
    def empty(self) -> bool:
        return self.mean.empty

    def has(self, metric: str) -> bool:
        return metric in self.mean.columns and bool(self.mean[metric].notna().any())

    def period_means(self) -> dict[str, float]:
        """Mean of each metric over the whole range, from the bucket means weighted by the
        intervals each holds (equal weights when the server gives no counts); metrics
        without a value are left out."""
        out = {}
        for metric in self.metrics:
            values = self.mean[metric]
            weights = (
                self.count[metric].reindex(values.index).fillna(0.0)
                if self.count is not None and metric in self.count
                else pd.Series(1.0, index=values.index)
            )
            ok = values.notna() & (weights > 0)
            if ok.any():
                out[metric] = float((values[ok] * weights[ok]).sum() / weights[ok].sum())
        return out

    def series(self, metric: str) -> pd.DataFrame:
        """Columns ``mean``, ``min``, ``max`` of one metric (KeyError if absent)."""
        return pd.DataFrame(
            {"mean": self.mean[metric], "min": self.low[metric], "max": self.high[metric]}
        )


def rfc3339(moment: dt.datetime | pd.Timestamp) -> str:
    """An aware instant as RFC 3339 in UTC (``2026-11-30T14:05:00Z``)."""
    stamp = pd.Timestamp(moment)
    if stamp.tzinfo is None:
        raise ValueError(f"naive datetime {moment!r}: give the time zone")
    return stamp.tz_convert("UTC").strftime("%Y-%m-%dT%H:%M:%S.%fZ").replace(".000000Z", "Z")


def _times(values: Iterable[str]) -> pd.DatetimeIndex:
    return pd.DatetimeIndex(pd.to_datetime(list(values), utc=True, format="ISO8601"), name="t")


class LostworkClient:
    """A small async client over httpx.

    Parameters
    ----------
    base_url : str
        Server root, e.g. ``http://127.0.0.1:8000`` (the client adds ``/api/v1``).
    api_key : str, callable or None
        Sent as ``Authorization: Bearer <key>``; a callable is asked on every request.
    transport : httpx.AsyncBaseTransport, optional
        ``httpx.ASGITransport(app)`` when the dashboard is mounted on the API's own
        application: requests then stay in the process and never touch the network.
    timeout : float
        Seconds per request.
    """

    def __init__(
        self,
        base_url: str,
        api_key: KeySource = None,
        *,
        transport: httpx.AsyncBaseTransport | None = None,
        timeout: float = 20.0,
    ) -> None:
        self.base_url = base_url.rstrip("/")
        self._api_key = api_key
        self._transport = transport
        self._timeout = timeout
        self._pool: tuple[asyncio.AbstractEventLoop, httpx.AsyncClient] | None = None

    # -- plumbing -------------------------------------------------------------------

    def _headers(self) -> dict[str, str]:
        key = self._api_key() if callable(self._api_key) else self._api_key
        headers = {"Accept": "application/json, application/problem+json"}
        if key:
            headers["Authorization"] = f"Bearer {key}"
        return headers

    def _http(self) -> httpx.AsyncClient:
        """One pooled httpx client per event loop (keep-alive across a page's requests).

        The server runs one loop, so in production this is one client for the life of
        the process; a new loop (each ``asyncio.run`` in tests or scripts) gets a new one.
        """
        loop = asyncio.get_running_loop()
        if self._pool is None or self._pool[0] is not loop:
            self._pool = (
                loop,
                httpx.AsyncClient(
                    base_url=self.base_url, transport=self._transport, timeout=self._timeout
                ),
            )
        return self._pool[1]

    async def _call(
        self,
        method: str,
        path: str,
        *,
        optional: bool = False,
        **kwargs: Any,
    ) -> Any:
        try:
            response = await self._http().request(
                method, API + path, headers=self._headers(), **kwargs
            )
        except httpx.HTTPError as exc:
            raise ApiError(0, "API unreachable", f"{type(exc).__name__}: {exc}") from exc
        return self._decode(response, optional=optional)

    @staticmethod
    def _decode(response: httpx.Response, *, optional: bool) -> Any:
        content_type = response.headers.get("content-type", "")
        is_json = "json" in content_type
        body = response.json() if is_json and response.content else None
        if response.is_success and is_json:
            return body
        if response.is_success and not response.content:
            return None
        if response.status_code in (404, 405) and optional:
            raise NotAvailable(response.status_code, "Not available on this server")
        if not response.is_success and isinstance(body, dict):
            raise ApiError(
                response.status_code,
                str(body.get("title") or "Request failed"),
                _problem_detail(body),
                body,
            )
        raise ApiError(
            response.status_code,
            "Unexpected response",
            f"{content_type or 'no content type'}: {response.text[:200]}",
        )

    # -- plants and units -----------------------------------------------------------

    async def units(self) -> pd.DataFrame:
        """Every unit: columns ``slug``, ``name``, ``kind``, ``plant`` (plant slug)."""
        body = await self._call("GET", "/units")
        frame = pd.DataFrame(_items(body, "units"))
        for column in ("slug", "name", "kind", "plant"):
            if column not in frame.columns:
                frame[column] = pd.Series(dtype=object)
        return frame

    async def plants(self) -> list[dict[str, Any]]:
        """Every plant: ``slug``, ``name``, ``time_zone``, ``currency``, ``units``..."""
        return _items(await self._call("GET", "/plants"), "plants")

    async def plant(self, slug: str) -> dict[str, Any]:
        """One plant: ``time_zone``, ``currency``, ``fuel_price_per_gj`` and more."""
        return await self._call("GET", f"/plants/{slug}")

    async def catalogue(self) -> list[dict[str, Any]]:
        """Unit kinds with their roles, parameters and result columns."""
        return _items(await self._call("GET", "/kinds"), "kinds")

    # -- results --------------------------------------------------------------------

    async def results(
        self,
        unit: str,
        start: dt.datetime,
        end: dt.datetime,
        metrics: Iterable[str],
        *,
        max_points: int = 1000,
        unit_system: str = "si",
    ) -> Results:
        """Results of a unit between ``start`` and ``end``, at most ``max_points`` buckets."""
        params = {
            "start": rfc3339(start),
            "end": rfc3339(end),
            "metrics": ",".join(metrics),
            "units": unit_system,
            "max_points": int(max_points),
            "format": "json",
        }
        body = await self._call("GET", f"/units/{unit}/results", params=params)
        return parse_results(body)

    async def metrics(self, unit: str) -> list[dict[str, Any]]:
        """The metrics a unit has: ``metric``, ``unit`` (SI), ``us_unit``, ``label``,
        ``description``, ``aggregate``."""
        return _items(await self._call("GET", f"/units/{unit}/metrics"), "metrics")

    async def latest(self, unit: str) -> dict[str, Any]:
        """The unit's most recent interval: ``t`` (UTC Timestamp or None), ``values``,
        ``units``."""
        body = await self._call("GET", f"/units/{unit}/latest") or {}
        t = body.get("t")
        return {
            "t": pd.Timestamp(t).tz_convert("UTC") if t else None,
            "values": dict(body.get("values") or {}),
            "units": dict(body.get("units") or {}),
        }

    # -- uploads --------------------------------------------------------------------

    async def upload(
        self, plant: str, filename: str, content: bytes, *, mode: str = "partial"
    ) -> dict[str, Any]:
        """Send a shift-log CSV; returns the server's report (per-row errors, counts).

        A refused file (all-or-nothing with bad rows, too large, unreadable) raises
        :class:`ApiError` whose ``problem`` holds the same per-row report.
        """
        return await self._call(
            "POST",
            "/uploads",
            files={"file": (filename, content, "text/csv")},
            data={"plant": plant, "mode": mode},
        )

    # -- optional features: baselines (issue 5) and alerts (issue 6) -------------------

    async def alerts(
        self,
        *,
        status: str | None = None,
        unit: str | None = None,
        severity: str | None = None,
    ) -> pd.DataFrame:
        """Alerts, newest first; raises :class:`NotAvailable` on a server without them."""
        params = {
            k: v for k, v in (("status", status), ("unit", unit), ("severity", severity)) if v
        }
        body = await self._call("GET", "/alerts", params=params, optional=True)
        return pd.DataFrame(_items(body, "alerts"))

    async def acknowledge(self, alert_id: str | int, note: str) -> dict[str, Any]:
        """Acknowledge an alert with a note."""
        return await self._call(
            "POST", f"/alerts/{alert_id}/acknowledge", json={"note": note}, optional=True
        )

    async def fit_baseline(
        self,
        unit: str,
        metric: str,
        start: dt.datetime,
        end: dt.datetime,
        *,
        note: str | None = None,
    ) -> dict[str, Any]:
        """Fit a new baseline version of ``metric`` on [start, end); returns it with its
        fit statistics (needs an admin key)."""
        body: dict[str, Any] = {"metric": metric, "start": rfc3339(start), "end": rfc3339(end)}
        if note:
            body["note"] = note
        return await self._call("POST", f"/units/{unit}/baselines", json=body, optional=True)

    async def activate_baseline(self, unit: str, version: int) -> dict[str, Any]:
        """Make a version the active baseline of its metric (the server recomputes)."""
        return await self._call(
            "POST", f"/units/{unit}/baselines/{int(version)}/activate", json={}, optional=True
        )

    async def baselines(self, unit: str) -> pd.DataFrame:
        """Baseline versions of a unit; raises :class:`NotAvailable` without issue 5."""
        body = await self._call("GET", f"/units/{unit}/baselines", optional=True)
        return pd.DataFrame(_items(body, "baselines"))


def _items(body: Any, key: str) -> list[dict[str, Any]]:
    """The list in a list answer: ``{"<key>": [...]}`` (the API's shape) or a bare list."""
    if isinstance(body, dict):
        body = body.get(key, body.get("items"))
    return list(body or [])


def _problem_detail(problem: Mapping[str, Any]) -> str | None:
    detail = problem.get("detail")
    if detail:
        return str(detail)
    errors = problem.get("errors")
    if isinstance(errors, list) and errors:
        return "; ".join(str(e.get("message") or e.get("detail") or e) for e in errors[:5])
    return None


def parse_results(body: Mapping[str, Any]) -> Results:
    """The JSON of ``GET /units/{unit}/results`` as :class:`Results`."""
    means, lows, highs, counts = {}, {}, {}, {}
    units: dict[str, str] = {}
    labels: dict[str, str] = {}
    for item in body.get("series") or []:
        metric = item["metric"]
        index = _times(item.get("t") or [])
        mean = pd.Series(item.get("mean") or [], index=index, dtype=float)
        means[metric] = mean
        lows[metric] = pd.Series(
            item.get("min") or item.get("mean") or [], index=index, dtype=float
        )
        highs[metric] = pd.Series(
            item.get("max") or item.get("mean") or [], index=index, dtype=float
        )
        if item.get("count") is not None:
            counts[metric] = pd.Series(item["count"], index=index, dtype=float)
        units[metric] = item.get("unit") or "1"
        if item.get("label"):
            labels[metric] = item["label"]

    def frame(parts: dict[str, pd.Series]) -> pd.DataFrame:
        if not parts:
            return pd.DataFrame(index=pd.DatetimeIndex([], tz="UTC", name="t"))
        out = pd.concat(parts, axis=1).sort_index()
        out.index.name = "t"
        return out

    return Results(
        unit=str(body.get("unit", "")),
        unit_system=str(body.get("unit_system", "si")),
        bucket_seconds=body.get("bucket_seconds"),
        mean=frame(means),
        low=frame(lows),
        high=frame(highs),
        units=units,
        labels=labels,
        count=frame(counts) if counts else None,
    )


def baseline_metrics(metric: str) -> dict[str, str]:
    """Names of the result columns an active baseline adds for ``metric`` (issue 5,
    ``api.baselines.metrics``): ``expected``, its prediction band ``low`` / ``high``,
    ``drift`` (actual - expected), ``drift_rel``, ``extrapolated`` (1 where the baseline
    gives no expected value), ``ewma`` and the tabular CUSUM's ``cusum_upper`` /
    ``cusum_lower`` (both in residual standard deviations) and ``cusum_alarm``."""
    return {
        "expected": f"expected_{metric}",
        "low": f"expected_lower_{metric}",
        "high": f"expected_upper_{metric}",
        "drift": f"drift_{metric}",
        "drift_rel": f"drift_rel_{metric}",
        "extrapolated": f"extrapolated_{metric}",
        "ewma": f"ewma_{metric}",
        "cusum_upper": f"cusum_upper_{metric}",
        "cusum_lower": f"cusum_lower_{metric}",
        "cusum_alarm": f"cusum_alarm_{metric}",
    }


BASELINE_PREFIXES = (
    "expected_",
    "expected_lower_",
    "expected_upper_",
    "drift_",
    "drift_rel_",
    "extrapolated_",
    "ewma_",
    "cusum_upper_",
    "cusum_lower_",
    "cusum_alarm_",
)
"""Prefixes of the per-metric baseline columns, to tell them from a kind's own results."""


def is_baseline_column(name: str, base_metrics) -> bool:
    """Whether ``name`` is a per-metric baseline column of one of ``base_metrics``."""
    bases = set(base_metrics)
    return any(name.startswith(p) and name[len(p) :] in bases for p in BASELINE_PREFIXES)


FLAGS_METRIC = "flags"
"""Result column of :class:`engine.checks.Flag` bits (bucket value: OR of intervals)."""
STEADY_METRIC = "steady"
"""Result column, 1 when the interval was steady, 0 when not (issue 5)."""
HEADROOM_METRIC = "headroom_recoverable_w"
"""Result column: recoverable exergy against the unit's demonstrated best (issue 5). [W]"""
HEADROOM_COST_METRIC = "headroom_cost_per_h"
"""Result column: the headroom valued at the plant's fuel price (issue 5). [currency/h]"""
DRIFT_COST_METRIC = "drift_cost_per_h"
"""Result column: extra fuel cost of the drift from baseline (issue 5). [currency/h]"""
