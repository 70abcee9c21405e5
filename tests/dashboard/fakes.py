"""A test double of the dashboard's client: the real :class:`LostworkClient` with its one
HTTP call replaced by answers shaped like the lostwork API's JSON.

Everything above ``_call`` -- JSON parsing, Results, NotAvailable on absent optional
endpoints -- runs for real. The plant is the fictional demo plant; the numbers are
invented and smooth, chosen only so that charts and tables have something to show.
"""

from __future__ import annotations

import math
from typing import Any

import pandas as pd

from dashboard.client import BASELINE_PREFIXES, ApiError, LostworkClient, NotAvailable
from engine.checks import Flag

PLANT = {
    "slug": "tarnwick-mill",
    "name": "Tarnwick Board Mill CHP",
    "time_zone": "Europe/Vienna",
    "interval_seconds": 60,
    "currency": "EUR",
    "fuel_price_per_gj": 9.8,
    "units": ["boiler-1", "chp"],
}
BOILER_RESULTS = [
    {"name": "heat_absorbed_w", "unit": "W", "description": "Heat absorbed"},
    {"name": "eta_1", "unit": "1", "description": "First-law efficiency"},
    {"name": "eta_2", "unit": "1", "description": "Second-law efficiency"},
    {"name": "fuel_exergy_w", "unit": "W", "description": "Fuel exergy"},
    {"name": "water_exergy_gain_w", "unit": "W", "description": "Water exergy gain"},
    {"name": "exergy_destroyed_and_lost_w", "unit": "W", "description": "Destroyed and lost"},
    {"name": "sgen_w_per_k", "unit": "W/K", "description": "Entropy generation"},
    {"name": "lost_work_w", "unit": "W", "description": "T0 Sgen"},
    {"name": "flags", "unit": "1", "description": "Consistency flags"},
]
UNITS = [
    {
        "slug": "boiler-1",
        "name": "Boiler 1",
        "plant": "tarnwick-mill",
        "kind": "boiler",
        "results": BOILER_RESULTS,
    },
    {
        "slug": "chp",
        "name": "CHP block",
        "plant": "tarnwick-mill",
        "kind": "block",
        "results": [r for r in BOILER_RESULTS if r["name"] in ("eta_1", "eta_2", "fuel_exergy_w")],
    },
]
LATEST_T = pd.Timestamp("2026-11-30T23:59:00Z")
ACTIVE_BASELINE = {
    "version": 1,
    "unit": "boiler-1",
    "metric": "eta_1",
    "active": True,
    "start": "2025-11-01T00:00:00Z",
    "end": "2025-12-01T00:00:00Z",
    "model": "linear",
    "statistics": {"n": 30000, "r2": 0.8, "cv_rmse": 0.01, "nmbe": 0.0, "meets_guideline_14": True},
    "chart": {"k": 0.5, "h": 12.0, "ewma_lambda": 0.1, "ewma_width": 2.814},
}

# Period means of the boiler's exergy account (W): fuel exergy in, water exergy out,
# T0 Sgen destroyed, and the total destroyed-and-lost 1.2 MW above it (exhaust losses).
FUEL_EXERGY_W = 20.0e6
WATER_EXERGY_W = 7.0e6
LOST_WORK_W = 11.8e6
DESTROYED_AND_LOST_W = FUEL_EXERGY_W - WATER_EXERGY_W


def value(metric: str, minutes: float) -> float:
    """Synthetic value of a metric at a time (minutes since the epoch)."""
    day = math.sin(2 * math.pi * minutes / 1440.0)
    table = {
        "eta_1": 0.91 - 0.01 * day,
        "eta_2": 0.35 - 0.005 * day,
        "heat_absorbed_w": 18.0e6 + 1.0e6 * day,
        "fuel_exergy_w": FUEL_EXERGY_W,
        "water_exergy_gain_w": WATER_EXERGY_W,
        "exergy_destroyed_and_lost_w": DESTROYED_AND_LOST_W,
        "lost_work_w": LOST_WORK_W,
        "sgen_w_per_k": LOST_WORK_W / 288.15,
        "expected_eta_1": 0.915,
        "extrapolated_eta_1": 0.0,
        "drift_rel_eta_1": -0.005,
        "ewma_eta_1": -0.5,
        "cusum_alarm_eta_1": 0.0,
        "expected_lower_eta_1": 0.905,
        "expected_upper_eta_1": 0.925,
        "drift_eta_1": -0.005 - 0.01 * day,
        "cusum_upper_eta_1": 0.0,
        "cusum_lower_eta_1": 2.0 + day,
        "headroom_recoverable_w": 1.5e6,
        "headroom_cost_per_h": 51.0,
        "drift_cost_per_h": 12.5,
        # steady except while the load swings fastest, a few hours a day
        "steady": 1.0 if abs(math.cos(2 * math.pi * minutes / 1440.0)) < 0.9 else 0.0,
    }
    return table[metric]


class FakeClient(LostworkClient):
    """Answers like the API for the demo plant; records writes in ``self.calls``."""

    def __init__(
        self,
        *,
        alerts: list[dict[str, Any]] | None = None,
        baseline: bool = False,
        baselines: list[dict[str, Any]] | None = None,
        flagged: tuple[int, int] | None = None,
        upload_answer: Any = None,
        empty: bool = False,
    ) -> None:
        super().__init__("http://fake.invalid", "test-key")
        self.alert_items = alerts
        self.baseline = baseline
        self.baseline_items = baselines
        self.flagged = flagged
        """Bucket index range [i, j) whose flags carry NEGATIVE_ENTROPY_GENERATION."""
        self.upload_answer = upload_answer
        self.empty = empty
        self.calls: list[tuple[str, str, dict[str, Any]]] = []

    async def _call(self, method: str, path: str, *, optional: bool = False, **kwargs: Any) -> Any:
        self.calls.append((method, path, kwargs))
        parts = path.strip("/").split("/")
        if path == "/units":
            return {"units": [] if self.empty else UNITS}
        if path == "/plants":
            return {"plants": [PLANT]}
        if parts[0] == "plants":
            return dict(PLANT)
        if path == "/kinds":
            return {"kinds": [{"name": "boiler", "results": BOILER_RESULTS}]}
        if parts[0] == "units" and parts[-1] == "metrics":
            found = next((u for u in UNITS if u["slug"] == parts[1]), None)
            if found is None:
                raise ApiError(404, "Not Found", f"no unit {parts[1]!r}")
            declared = [
                {"metric": r["name"], "unit": r["unit"], "label": r["description"]}
                for r in found["results"]
            ]
            # A server with the baselines stage declares its columns for every result;
            # here for eta_1, enough for the pages.
            if self.baseline:
                declared += [
                    {"metric": prefix + "eta_1", "unit": "1", "label": prefix}
                    for prefix in BASELINE_PREFIXES
                ] + [
                    {"metric": "headroom_recoverable_w", "unit": "W", "label": "Headroom"},
                    {"metric": "steady", "unit": "1", "label": "Steady state"},
                ]
            return {"unit": parts[1], "kind": found["kind"], "metrics": declared}
        if parts[0] == "units" and parts[-1] == "latest":
            return self._latest(parts[1])
        if parts[0] == "units" and parts[-1] == "results":
            return self._results(parts[1], kwargs["params"])
        if parts[0] == "units" and parts[-1] == "baselines" and method == "POST":
            body = kwargs["json"]
            return {
                **ACTIVE_BASELINE,
                "version": 2,
                "active": False,
                "metric": body["metric"],
                "start": body["start"],
                "end": body["end"],
                "counts": {"computed": 43200, "steady": 30000, "flagged": 12, "usable": 29988},
            }
        if parts[0] == "units" and parts[-1] == "activate":
            return {**ACTIVE_BASELINE, "version": int(parts[3])}
        if parts[0] == "units" and parts[-1] == "baselines":
            if self.baseline_items is not None:
                return {"baselines": self.baseline_items}
            if self.baseline:
                return {"baselines": [ACTIVE_BASELINE]}
            raise NotAvailable(404, "Not available on this server")
        if path == "/alerts":
            if self.alert_items is None:
                raise NotAvailable(404, "Not available on this server")
            status = kwargs.get("params", {}).get("status")
            return {"alerts": [a for a in self.alert_items if status in (None, a["status"])]}
        if parts[0] == "alerts" and parts[-1] == "acknowledge":
            if self.alert_items is None:
                raise NotAvailable(404, "Not available on this server")
            return {"id": parts[1], "acknowledged_by": "test", "note": kwargs["json"]["note"]}
        if path == "/uploads":
            if isinstance(self.upload_answer, Exception):
                raise self.upload_answer
            return self.upload_answer
        raise ApiError(404, "Not Found", f"fake has no {method} {path}")

    def _latest(self, slug: str) -> dict[str, Any]:
        minutes = LATEST_T.value / 60e9
        names = ["eta_1", "eta_2", "headroom_recoverable_w", "drift_cost_per_h", "drift_eta_1"]
        if slug != "boiler-1":
            names = ["eta_1", "eta_2"]
        return {
            "t": LATEST_T.isoformat().replace("+00:00", "Z"),
            "values": {m: value(m, minutes) for m in names},
            "units": {
                m: ("W" if m.endswith("_w") else "1/h" if "cost" in m else "1") for m in names
            },
        }

    def _results(self, slug: str, params: dict[str, Any]) -> dict[str, Any]:
        start = pd.Timestamp(params["start"])
        end = pd.Timestamp(params["end"])
        points = int(params["max_points"])
        minutes = max(int((end - start) / pd.Timedelta(minutes=1)), 1)
        count = min(points, minutes)
        bucket = (end - start) / count
        times = [start + i * bucket for i in range(count)]
        series = []
        for metric in params["metrics"].split(","):
            if (
                metric.startswith(BASELINE_PREFIXES)
                and metric.endswith("eta_1")
                and not self.baseline
            ):
                continue
            if metric == "flags":
                flags = [0.0] * count
                if self.flagged:
                    for i in range(*self.flagged):
                        if i < count:
                            flags[i] = float(Flag.NEGATIVE_ENTROPY_GENERATION)
                values = flags
            else:
                try:
                    values = [value(metric, t.value / 60e9) for t in times]
                except KeyError:
                    continue
            series.append(
                {
                    "metric": metric,
                    "unit": "W" if metric.endswith("_w") else "1",
                    "label": metric,
                    "t": [t.isoformat().replace("+00:00", "Z") for t in times],
                    "mean": values,
                    "min": [v * 0.99 if metric != "flags" else v for v in values],
                    "max": [v * 1.01 if metric != "flags" else v for v in values],
                    "count": [max(int(bucket.total_seconds() // 60), 1)] * count,
                }
            )
        return {
            "unit": slug,
            "unit_system": "si",
            "bucket_seconds": int(bucket.total_seconds()),
            "series": series,
        }
