"""The unit page draws the API's 95 % measurement band (``u95_<metric>``, issue 10)
around the actual line, and does not offer the uncertainty columns as metrics of their
own. Client double of tests/dashboard/fakes.py; the numbers are invented."""

from __future__ import annotations

import asyncio
from typing import Any

import pandas as pd
import pytest

from dashboard.pages import unit
from tests.dashboard import fakes

U95 = 0.02
"""An invented expanded uncertainty of eta_1: two percentage points."""
COLUMNS = ("u_", "u_random_", "u95_", "drift_significant_", "drift_rel_significant_")


class BandClient(fakes.FakeClient):
    """The fake server, declaring and serving the uncertainty columns of eta_1."""

    async def _call(self, method: str, path: str, *, optional: bool = False, **kwargs: Any):
        answer = await super()._call(method, path, optional=optional, **kwargs)
        if path.endswith("/metrics"):
            answer["metrics"] += [
                {"metric": prefix + "eta_1", "unit": "1", "label": prefix} for prefix in COLUMNS
            ]
        return answer

    def _results(self, slug: str, params: dict[str, Any]) -> dict[str, Any]:
        body = super()._results(slug, params)
        if "u95_eta_1" in params["metrics"].split(","):
            times = body["series"][0]["t"]
            body["series"].append(
                {
                    "metric": "u95_eta_1",
                    "unit": "1",
                    "label": "u95",
                    "t": times,
                    "mean": [U95] * len(times),
                    "min": [U95] * len(times),
                    "max": [U95] * len(times),
                    "count": [1] * len(times),
                }
            )
        return body


def _draw(client):
    context = asyncio.run(unit.load("boiler-1", client=client))[0]
    return asyncio.run(
        unit.draw(context, "eta_1", "7d", None, {"system": "si", "clock": "plant"}, 800,
                  client=client)
    )  # fmt: skip


def test_the_band_is_drawn_around_the_actual_line_in_display_units():
    client = BandClient()
    main, *_ = _draw(client)
    _, _, kwargs = next(c for c in client.calls if c[1].endswith("/results"))
    assert "u95_eta_1" in kwargs["params"]["metrics"].split(",")
    actual = next(t for t in main.data if t.name == "First-law efficiency (HHV), actual")
    edges = [t for t in main.data if t.name == "95 % measurement band"]
    assert [t.showlegend for t in edges] == [True, False]
    # eta_1 is shown in percent: the band is the mean -/+ 2 percentage points.
    assert list(edges[0].y) == pytest.approx([y - 100 * U95 for y in actual.y])
    assert list(edges[1].y) == pytest.approx([y + 100 * U95 for y in actual.y])
    assert pd.Timestamp(edges[0].x[0]) == pd.Timestamp(actual.x[0])


def test_no_band_where_the_server_has_none():
    main, *_ = _draw(fakes.FakeClient())
    assert [t.name for t in main.data if t.name == "95 % measurement band"] == []


def test_uncertainty_columns_are_not_offered_as_metrics():
    _, _, options, _, _ = asyncio.run(unit.load("boiler-1", client=BandClient()))
    values = [o["value"] for o in options]
    assert "eta_1" in values
    assert [v for v in values if v.startswith(COLUMNS)] == []
