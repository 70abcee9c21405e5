"""REST ingest: counts, idempotency, item-by-item rejection, unit conversion, dirty spans."""

from __future__ import annotations

import math

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import select
from sqlalchemy.orm import Session

from api.pipeline.models import WorkSpan
from api.plants.models import Tag
from api.readings.models import Reading
from tests.api.factories import ATMOSPHERE_PA, T0

MIN = 60_000

# Conversion factors, exact by definition (NIST SP 811, 2008 ed., App. B.8 and B.9):
# 1 lb = 0.45359237 kg; 1 in = 0.0254 m; standard gravity 9.80665 m/s^2, so
# 1 psi = 0.45359237 * 9.80665 / 0.0254**2 Pa; 1 degF step = 5/9 K; 0 degF = 459.67 degR.
LB_KG = 0.45359237
PSI_PA = LB_KG * 9.80665 / 0.0254**2


def stored(session: Session, tag: str) -> dict[int, float]:
    tag_id = session.scalar(select(Tag.id).where(Tag.name == tag))
    rows = session.execute(select(Reading.t_ms, Reading.value).where(Reading.tag_id == tag_id))
    return dict(rows.all())


def spans(session: Session) -> list[tuple[int, int, str]]:
    rows = session.execute(
        select(WorkSpan.start_ms, WorkSpan.end_ms, WorkSpan.reason).order_by(WorkSpan.id)
    )
    return [tuple(r) for r in rows.all()]


def post(client: TestClient, headers: dict, readings: list[dict], path: str = "") -> dict:
    response = client.post(
        f"/api/v1/readings{path}",
        json={"plant": "test-works", "readings": readings},
        headers=headers,
    )
    return {"status": response.status_code, **response.json()}


@pytest.fixture
def ingest(make_key) -> dict:
    return make_key("ingest")


def test_batch_is_stored_counted_and_queued(client, plant, ingest, session) -> None:
    batch = [
        {"tag": "FW-FLOW", "time": "2026-01-01T00:00:10Z", "value": 36.0},
        {"tag": "FW-FLOW", "time": T0 + 70_000, "value": 37.0},
        {"tag": "SPARE", "time": "2026-01-01T01:00:00+01:00", "value": 5.0},
    ]
    report = post(client, ingest, batch)
    assert report["status"] == 200
    assert (report["received"], report["stored"], report["replaced"]) == (3, 3, 0)
    assert (report["unchanged"], report["rejected"], report["errors"]) == (0, 0, [])
    # 36 t/h = 36000 kg / 3600 s = 10 kg/s exactly.
    assert stored(session, "FW-FLOW") == {
        T0 + 10_000: pytest.approx(10.0, rel=1e-12),
        T0 + 70_000: pytest.approx(37 / 3.6, rel=1e-12),
    }
    # SPARE feeds no unit: stored, but queues nothing. FW-FLOW feeds boiler-a: one span
    # covering the whole minutes from 00:00 to 00:02 (readings at 00:00:10 and 00:01:10).
    assert report["units_marked_dirty"] == ["boiler-a"]
    assert spans(session) == [(T0, T0 + 2 * MIN, "ingest")]


def test_resending_the_same_batch_changes_nothing(client, plant, ingest, session) -> None:
    batch = [{"tag": "FW-T", "time": T0 + i * MIN, "value": 100.0 + i} for i in range(5)]
    first = post(client, ingest, batch)
    second = post(client, ingest, batch)
    assert (first["stored"], first["unchanged"]) == (5, 0)
    assert (second["stored"], second["replaced"], second["unchanged"]) == (0, 0, 5)
    assert second["units_marked_dirty"] == []
    assert len(spans(session)) == 1  # the first batch's span only
    changed = batch[:2] + [{"tag": "FW-T", "time": T0 + 2 * MIN, "value": 999.0}]
    third = post(client, ingest, changed[:2] + [{**changed[2], "value": 150.0}])
    assert (third["stored"], third["replaced"], third["unchanged"]) == (0, 1, 2)
    # Only the interval of the changed reading is queued again.
    assert spans(session)[-1] == (T0 + 2 * MIN, T0 + 3 * MIN, "ingest")


def test_bad_items_are_rejected_one_by_one(client, plant, ingest, session) -> None:
    batch = [
        {"tag": "FW-FLOW", "time": "2026-01-01T00:00:00Z", "value": 10.0},  # 0 good
        {"tag": "NO-SUCH", "time": "2026-01-01T00:00:00Z", "value": 1.0},  # 1 unknown tag
        {"tag": "FW-FLOW", "time": "2026-01-01T00:01:00", "value": 1.0},  # 2 no offset
        {"tag": "FW-FLOW", "time": "yesterday", "value": 1.0},  # 3 bad time
        {"tag": "FW-FLOW", "time": T0, "value": "12,5"},  # 4 text
        {"tag": "FW-FLOW", "time": T0 + MIN, "value": None},  # 5 null
        {"tag": "FW-FLOW", "time": T0 + 2 * MIN, "value": 250.0},  # 6 above high 100
        {"tag": "FW-T", "time": T0, "value": -5.0},  # 7 below low 0
        {"tag": "FW-T", "time": T0 + MIN, "value": 120.0},  # 8 good
    ]
    report = post(client, ingest, batch)
    assert report["status"] == 200
    assert (report["received"], report["stored"], report["rejected"]) == (9, 2, 7)
    located = {(e["index"], e["field"]): e["message"] for e in report["errors"]}
    assert located == {
        (1, "tag"): "unknown tag 'NO-SUCH' for plant 'test-works'",
        (2, "time"): "time '2026-01-01T00:01:00' has no UTC offset; add 'Z' or '+hh:mm' (RFC 3339)",
        (3, "time"): "time 'yesterday' has no UTC offset; add 'Z' or '+hh:mm' (RFC 3339)",
        (4, "value"): "value '12,5' is not a number",
        (5, "value"): "value is missing (null)",
        (6, "value"): "value 250 t/h of tag 'FW-FLOW' is above the plausible high 100.0",
        (7, "value"): "value -5 degC of tag 'FW-T' is below the plausible low 0.0",
    }
    assert set(stored(session, "FW-FLOW")) == {T0}
    assert set(stored(session, "FW-T")) == {T0 + MIN}


def test_non_finite_values_are_rejected(client, plant, ingest) -> None:
    # JSON has no NaN, but Python's parser (and some clients) accept the bare tokens.
    body = (
        '{"plant": "test-works", "readings": ['
        '{"tag": "FW-T", "time": 1767225600000, "value": NaN},'
        '{"tag": "FW-T", "time": 1767225660000, "value": Infinity},'
        '{"tag": "FW-T", "time": 1767225720000, "value": 90.5}]}'
    )
    response = client.post(
        "/api/v1/readings", content=body, headers={**ingest, "Content-Type": "application/json"}
    )
    report = response.json()
    assert response.status_code == 200
    assert [(e["index"], e["field"], e["message"]) for e in report["errors"]] == [
        (0, "value", "value nan is not a finite number"),
        (1, "value", "value inf is not a finite number"),
    ]
    assert report["stored"] == 1


def test_all_rejected_is_a_422_problem(client, plant, ingest) -> None:
    response = client.post(
        "/api/v1/readings",
        json={"plant": "test-works", "readings": [{"tag": "X", "time": T0, "value": 1}]},
        headers=ingest,
    )
    body = response.json()
    assert response.status_code == 422
    assert response.headers["content-type"] == "application/problem+json"
    assert body["detail"] == "all 1 readings were rejected; nothing was stored"
    assert body["errors"] == [
        {"index": 0, "field": "tag", "message": "unknown tag 'X' for plant 'test-works'"}
    ]
    assert (body["stored"], body["rejected"]) == (0, 1)


def test_unknown_plant_is_404(client, plant, ingest) -> None:
    response = client.post(
        "/api/v1/readings", json={"plant": "nowhere", "readings": []}, headers=ingest
    )
    assert response.status_code == 404
    assert response.json()["detail"] == "no plant 'nowhere'"


def test_gauge_and_us_customary_units_are_converted(client, plant, ingest, session) -> None:
    batch = [
        {"tag": "FW-P", "time": T0, "value": 10.0},  # barg
        {"tag": "MS-P", "time": T0, "value": 150.0},  # psig
        {"tag": "MS-T", "time": T0, "value": 752.0},  # degF
        {"tag": "MS-FLOW", "time": T0, "value": 60.0},  # klb/h
        {"tag": "GAS", "time": T0, "value": 1800.0},  # Nm3/h
    ]
    assert post(client, ingest, batch)["stored"] == 5
    # Gauge pressure + the plant's stated atmosphere (100 kPa): 10 bar = 1.0e6 Pa.
    assert stored(session, "FW-P")[T0] == pytest.approx(10.0e5 + ATMOSPHERE_PA, rel=1e-12)
    assert stored(session, "MS-P")[T0] == pytest.approx(150 * PSI_PA + ATMOSPHERE_PA, rel=1e-12)
    assert stored(session, "MS-P")[T0] == pytest.approx(1_134_213.594, rel=1e-9)
    # 752 degF = (752 - 32) * 5/9 degC = 400 degC = 673.15 K.
    assert stored(session, "MS-T")[T0] == pytest.approx(673.15, rel=1e-12)
    # 60 klb/h = 60000 * 0.45359237 kg / 3600 s.
    assert stored(session, "MS-FLOW")[T0] == pytest.approx(60_000 * LB_KG / 3600, rel=1e-12)
    # A normal cubic metre is a volume: 1800 m3/h = 0.5 m3/s.
    assert stored(session, "GAS")[T0] == pytest.approx(0.5, rel=1e-12)


def test_repeated_key_in_one_batch_keeps_the_last(client, plant, ingest, session) -> None:
    batch = [
        {"tag": "FW-T", "time": T0, "value": 50.0},
        {"tag": "FW-T", "time": "2026-01-01T01:00:00+01:00", "value": 60.0},  # same instant
    ]
    report = post(client, ingest, batch)
    assert (report["stored"], report["duplicates"]) == (1, 1)
    assert stored(session, "FW-T") == {T0: pytest.approx(333.15, rel=1e-12)}


def test_columnar_form(client, plant, ingest, session) -> None:
    body = {
        "plant": "test-works",
        "times": [T0, T0 + MIN, "2026-01-01T00:02:00Z", "not a time"],
        "series": {
            "FW-T": [100.0, 101.0, None, 103.0],
            "FW-P": [5.0, "x", 5.2, 5.3],
            "NOPE": [1, 2, 3, 4],
            "SPARE": [1.0, 2.0],
        },
    }
    response = client.post("/api/v1/readings/columnar", json=body, headers=ingest)
    report = response.json()
    assert response.status_code == 200, report
    # received: non-null values (3 + 4 + 4 + 2); stored: FW-T 2, FW-P 2.
    assert (report["received"], report["stored"], report["rejected"]) == (13, 4, 9)
    errors = {(e.get("index"), e["field"]): e["message"] for e in report["errors"]}
    assert errors == {
        (3, "times"): "time 'not a time' has no UTC offset; add 'Z' or '+hh:mm' (RFC 3339)",
        (1, "series.FW-P"): "value 'x' is not a number",
        (None, "series.NOPE"): "unknown tag 'NOPE' for plant 'test-works'",
        (None, "series.SPARE"): "2 values for 4 times; lengths must match",
    }
    assert sorted(stored(session, "FW-T")) == [T0, T0 + MIN]
    assert sorted(stored(session, "FW-P")) == [T0, T0 + 2 * MIN]


def test_columnar_bound_error_names_series_and_time_index(client, plant, ingest) -> None:
    body = {
        "plant": "test-works",
        "times": [T0, T0 + MIN, T0 + 2 * MIN],
        "series": {"FW-T": [None, 100.0, 400.0], "FW-P": [1.0, 2.0, 3.0]},
    }
    report = client.post("/api/v1/readings/columnar", json=body, headers=ingest).json()
    assert report["errors"] == [
        {
            "index": 2,
            "field": "series.FW-T",
            "message": "value 400 degC of tag 'FW-T' is above the plausible high 300.0",
        }
    ]
    assert (report["stored"], report["rejected"]) == (4, 1)


def test_read_back_in_si(client, plant, ingest, make_key) -> None:
    post(client, ingest, [{"tag": "FW-T", "time": T0 + i * MIN, "value": 20.0} for i in range(3)])
    response = client.get(
        "/api/v1/readings",
        params={"plant": "test-works", "tag": "FW-T", "from": "2026-01-01T00:01:00Z"},
        headers=make_key("read"),
    )
    body = response.json()
    assert response.status_code == 200
    assert body["si_unit"] == "K" and body["t_ms"] == [T0 + MIN, T0 + 2 * MIN]
    assert all(math.isclose(v, 293.15, rel_tol=1e-12) for v in body["values"])
