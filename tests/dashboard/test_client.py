"""The client against the real service in-process, and its error handling."""

from __future__ import annotations

import asyncio

import httpx
import pandas as pd
import pytest

from dashboard.client import ApiError, LostworkClient, NotAvailable, parse_results, rfc3339


def run(coro):
    return asyncio.run(coro)


def test_units_and_plant_of_the_demo_plant(live_api):
    units = run(live_api.client.units())
    assert list(units["slug"]) == ["boiler-1", "chp", "turbine-1"]
    assert set(units["plant"]) == {"tarnwick-mill"}
    boiler = units.set_index("slug").loc["boiler-1"]
    assert boiler["kind"] == "boiler"
    assert "eta_2" in [r["name"] for r in boiler["results"]]
    plant = run(live_api.client.plant("tarnwick-mill"))
    assert (plant["time_zone"], plant["currency"]) == ("Europe/Vienna", "EUR")
    kinds = run(live_api.client.catalogue())
    assert {"boiler", "block"} <= {k["name"] for k in kinds}


def test_problem_details_become_api_errors(live_api):
    with pytest.raises(ApiError) as caught:
        run(live_api.client.plant("no-such-plant"))
    assert caught.value.status == 404
    assert "no-such-plant" in str(caught.value)


def test_a_wrong_key_is_refused_with_the_servers_words(live_api):
    bad = LostworkClient("http://in-process", "not-a-key", transport=live_api.client._transport)
    with pytest.raises(ApiError) as caught:
        run(bad.units())
    assert caught.value.status == 401


def test_baselines_of_a_unit_without_any(live_api):
    assert run(live_api.client.baselines("boiler-1")).empty


def test_absent_optional_endpoints_are_not_available():
    # A server without the baselines or alerts routes answers 404 problem details.
    def answer(request: httpx.Request) -> httpx.Response:
        return httpx.Response(
            404,
            json={"type": "about:blank", "title": "Not Found", "status": 404},
            headers={"content-type": "application/problem+json"},
        )

    client = LostworkClient("http://x", "k", transport=httpx.MockTransport(answer))
    with pytest.raises(NotAvailable):
        run(client.baselines("boiler-1"))
    with pytest.raises(NotAvailable):
        run(client.alerts(status="firing"))
    with pytest.raises(ApiError) as caught:  # a required route missing is an error
        run(client.units())
    assert not isinstance(caught.value, NotAvailable) and caught.value.status == 404


def test_alerts_of_a_quiet_plant_and_a_refused_acknowledgement(live_api):
    alerts = run(live_api.client.alerts(status="firing", unit="boiler-1"))
    assert alerts.empty
    with pytest.raises(ApiError) as caught:
        run(live_api.client.acknowledge(999, "looked at it"))
    assert caught.value.status == 404


def test_upload_reports_each_bad_row(live_api):
    csv = (
        b"time,FW-FLOW [t/h],MS-T [degC]\n"
        b"2026-11-30 10:00,30.5,420\n"
        b"2026-11-30 10:01,abc,421\n"
        b"2026-11-30 10:02,30.7,422\n"
    )
    report = run(live_api.client.upload("tarnwick-mill", "shift.csv", csv))
    assert report["status"] == "stored"
    assert report["stored"] == 5
    assert [(e["row"], e["column"]) for e in report["errors"]] == [(3, "FW-FLOW [t/h]")]
    assert "boiler-1" in report["units_recomputed"]


def test_upload_all_or_nothing_refusal_carries_the_rows(live_api):
    csv = b"time,FW-FLOW [t/h]\n2026-11-30 10:00,abc\n"
    with pytest.raises(ApiError) as caught:
        run(live_api.client.upload("tarnwick-mill", "bad.csv", csv, mode="all_or_nothing"))
    assert caught.value.status == 422
    assert [e["row"] for e in caught.value.problem["errors"]] == [2]


def test_html_where_json_was_expected_is_an_error():
    transport = httpx.MockTransport(
        lambda request: httpx.Response(
            200, text="<html></html>", headers={"content-type": "text/html"}
        )
    )
    client = LostworkClient("http://x", "k", transport=transport)
    with pytest.raises(ApiError, match="Unexpected response.*text/html"):
        run(client.units())


def test_key_is_sent_as_bearer_and_asked_lazily():
    seen = []

    def answer(request: httpx.Request) -> httpx.Response:
        seen.append(request.headers.get("authorization"))
        return httpx.Response(200, json={"units": []})

    keys = iter(["first", "second"])
    client = LostworkClient("http://x", lambda: next(keys), transport=httpx.MockTransport(answer))
    run(client.units())
    run(client.units())
    assert seen == ["Bearer first", "Bearer second"]


def test_unreachable_server_is_an_api_error():
    client = LostworkClient("http://127.0.0.1:9", "k", timeout=2.0)
    with pytest.raises(ApiError, match="API unreachable"):
        run(client.units())


def test_results_json_becomes_aligned_frames():
    body = {
        "unit": "boiler-1",
        "unit_system": "si",
        "bucket_seconds": 600,
        "series": [
            {
                "metric": "eta_1",
                "unit": "1",
                "label": "First-law efficiency",
                "t": ["2026-11-30T10:00:00Z", "2026-11-30T10:10:00Z"],
                "mean": [0.9, 0.91],
                "min": [0.89, 0.9],
                "max": [0.92, 0.93],
            },
            {
                "metric": "flags",
                "unit": "1",
                "label": "flags",
                "t": ["2026-11-30T10:10:00Z"],
                "mean": [2],
                "min": [2],
                "max": [6],
            },
        ],
    }
    results = parse_results(body)
    assert results.metrics == ["eta_1", "flags"]
    assert results.bucket_seconds == 600
    assert str(results.mean.index.tz) == "UTC"
    assert results.series("eta_1").loc[pd.Timestamp("2026-11-30T10:10Z")].to_dict() == {
        "mean": 0.91,
        "min": 0.9,
        "max": 0.93,
    }
    assert results.high["flags"].isna().tolist() == [True, False]
    assert results.units == {"eta_1": "1", "flags": "1"}
    assert results.has("eta_1") and not results.has("eta_2")


def test_rfc3339_requires_a_zone():
    assert rfc3339(pd.Timestamp("2026-11-30T11:00+01:00")) == "2026-11-30T10:00:00Z"
    with pytest.raises(ValueError, match="naive datetime"):
        rfc3339(pd.Timestamp("2026-11-30T11:00"))


def test_period_means_weight_each_bucket_by_its_intervals():
    body = {
        "unit": "u",
        "series": [
            {
                "metric": "eta_1",
                "unit": "1",
                "t": ["2026-11-30T10:00:00Z", "2026-11-30T10:30:00Z"],
                "mean": [0.80, 0.90],
                "min": [0.8, 0.9],
                "max": [0.8, 0.9],
                "count": [10, 30],
            },
            {
                "metric": "drift_eta_1",
                "unit": "1",
                "t": ["2026-11-30T10:00:00Z", "2026-11-30T10:30:00Z"],
                "mean": [None, None],
                "min": [None, None],
                "max": [None, None],
                "count": [0, 0],
            },
        ],
    }
    # (10 * 0.80 + 30 * 0.90) / 40 = 0.875; a metric without values is left out
    assert parse_results(body).period_means() == {"eta_1": pytest.approx(0.875)}
