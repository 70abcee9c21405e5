"""Shift-log uploads through POST /api/v1/uploads: partial acceptance, all-or-nothing,
idempotent re-upload, size limit, DST changes, and the recompute queue."""

from __future__ import annotations

import pytest
from sqlalchemy import func, select

from api.pipeline.models import WorkSpan
from api.plants.models import Tag
from api.readings.models import Reading
from tests.api.conftest import UPLOAD_LIMIT
from tests.api.factories import T0

# 01:00 in Europe/Berlin on 1 January (UTC+01:00) is 00:00 UTC = T0.
MIXED = (
    b"time;FW-T;FW-P [bar];MS-FLOW [t/h];MYSTERY\n"
    b"2026-01-01 01:00;100,5;11,0;36,0;1\n"
    b"2026-01-01 01:01;abc;11,1;36,0;2\n"
    b"yesterday;101,0;11,2;36,0;3\n"
    b"2026-01-01 01:03;999;11,3;36,0;4\n"
)


def upload(client, headers, data: bytes, name: str = "shift.csv", **form):
    return client.post(
        "/api/v1/uploads",
        files={"file": (name, data, "text/csv")},
        data={"plant": "test-works", **form},
        headers=headers,
    )


def readings(session) -> int:
    return session.scalar(select(func.count()).select_from(Reading))


@pytest.fixture
def ingest(make_key) -> dict:
    return make_key("ingest")


def test_mixed_bad_rows_are_accepted_partially_and_located(client, plant, ingest, session) -> None:
    response = upload(client, ingest, MIXED)
    report = response.json()
    assert response.status_code == 201, report
    located = [(e["row"], e["column"], e["field"]) for e in report["errors"]]
    assert located == [
        (1, "MYSTERY", "tag"),  # unknown column, reported at the header
        (3, "FW-T", "value"),  # text in a number
        (4, "time", "time"),  # bad time: the whole row
        (5, "FW-T", "value"),  # out of the tag's bounds
    ]
    assert report["errors"][3]["message"] == (
        "999 degC is above the plausible high bound 300 degC of tag 'FW-T'"
    )
    # Good cells: FW-T rows 2; FW-P rows 2, 3, 5; MS-FLOW rows 2, 3, 5.
    assert (report["stored"], report["replaced"], report["unchanged"]) == (7, 0, 0)
    assert (report["rejected"], report["status"], report["mode"]) == (4, "stored", "partial")
    assert report["units_recomputed"] == ["boiler-a"]
    assert report["notices"][0] == {
        "kind": "format",
        "message": "wide form, semicolon separator, decimal ',', 4 data rows, 7 readings",
        "rows": [],
    }
    # Header units convert to SI: 11.0 bar is absolute (no 'g'), 36 t/h = 10 kg/s.
    # 'bar' in the header is absolute, so the plant atmosphere is not added (it would be
    # for 'barg'); 100.5 degC = 373.65 K.
    first_row = session.execute(
        select(Tag.name, Reading.value)
        .join(Tag, Tag.id == Reading.tag_id)
        .where(Reading.t_ms == T0)
    )
    assert dict(first_row.all()) == {
        "FW-T": pytest.approx(373.65, rel=1e-12),
        "FW-P": pytest.approx(11.0e5, rel=1e-12),
        "MS-FLOW": pytest.approx(10.0, rel=1e-12),
    }
    spans = session.execute(select(WorkSpan.start_ms, WorkSpan.end_ms, WorkSpan.reason)).all()
    assert [tuple(s) for s in spans] == [(T0, T0 + 4 * 60_000, "upload")]


def test_same_file_again_is_idempotent(client, plant, ingest, session) -> None:
    first = upload(client, ingest, MIXED).json()
    second = upload(client, ingest, MIXED).json()
    assert (second["stored"], second["replaced"], second["unchanged"]) == (0, 0, 7)
    assert second["units_recomputed"] == []
    assert second["sha256"] == first["sha256"]
    assert {
        "kind": "same_file",
        "message": f"the same file (sha256) was uploaded before as upload {first['id']}",
        "rows": [],
    } in second["notices"]
    assert readings(session) == 7
    assert session.scalar(select(func.count()).select_from(WorkSpan)) == 1


def test_all_or_nothing_stores_nothing_when_a_problem_is_found(
    client, plant, ingest, make_key, session
) -> None:
    response = upload(client, ingest, MIXED, mode="all_or_nothing")
    body = response.json()
    assert response.status_code == 422
    assert response.headers["content-type"] == "application/problem+json"
    assert body["detail"] == "nothing was stored: 4 problem(s) found and mode is all_or_nothing"
    assert [(e["row"], e["column"]) for e in body["errors"]] == [
        (1, "MYSTERY"),
        (3, "FW-T"),
        (4, "time"),
        (5, "FW-T"),
    ]
    assert readings(session) == 0
    record = client.get(f"/api/v1/uploads/{body['upload_id']}", headers=make_key("read")).json()
    assert (record["status"], record["stored"], record["rejected"]) == ("rejected", 0, 4)
    clean = b"time,FW-T\n2026-01-01 01:00,20\n"
    ok = upload(client, ingest, clean, mode="all_or_nothing")
    assert (ok.status_code, ok.json()["stored"]) == (201, 1)


def test_upload_over_the_limit_is_413_naming_the_limit(client, plant, ingest) -> None:
    header = b"time,FW-T\n"
    row = b"2026-01-01 01:00,20\n"
    data = header + row * (UPLOAD_LIMIT // len(row) + 1)
    assert len(data) > UPLOAD_LIMIT
    response = upload(client, ingest, data)
    body = response.json()
    assert response.status_code == 413
    assert response.headers["content-type"] == "application/problem+json"
    assert body["limit_bytes"] == UPLOAD_LIMIT
    assert body["detail"] == (
        f"the file is {len(data)} bytes; the upload limit is {UPLOAD_LIMIT} bytes "
        f"(0.0625 MiB, setting LOSTWORK_UPLOAD_MAX_BYTES)"
    )


def test_request_body_far_over_the_limit_is_refused_before_reading(client, plant, ingest) -> None:
    data = b"x" * (UPLOAD_LIMIT * 3)
    response = upload(client, ingest, data)
    body = response.json()
    assert response.status_code == 413
    assert body["limit_bytes"] == UPLOAD_LIMIT + 64 * 1024
    assert "setting LOSTWORK_UPLOAD_MAX_BYTES" in body["detail"]


def test_dst_changes_are_handled_and_reported(client, plant, ingest, session) -> None:
    # Europe/Berlin: 2026-03-29 02:00 local does not exist (clocks go 02:00 -> 03:00);
    # 2026-10-25 02:00-03:00 local happens twice (03:00 -> 02:00). EU rule: last Sunday of
    # March and of October, 01:00 UTC (Directive 2000/84/EC, Art. 2 and 3).
    data = (
        b"time,FW-T\n"
        b"2026-03-29 01:30,100\n"
        b"2026-03-29 02:30,101\n"
        b"2026-03-29 03:30,102\n"
        b"2026-10-25 02:30,103\n"
        b"2026-10-25 02:30,104\n"
    )
    report = upload(client, ingest, data).json()
    assert [(e["row"], e["field"]) for e in report["errors"]] == [(3, "time")]
    assert report["stored"] == 4
    repeated = [n for n in report["notices"] if n["kind"] == "dst_repeated_hour"]
    assert repeated[0]["rows"] == [5, 6]
    stored = sorted(t for (t,) in session.execute(select(Reading.t_ms)).all())
    # 01:30 CET = 00:30Z; 03:30 CEST = 01:30Z; 02:30 CEST = 00:30Z; 02:30 CET = 01:30Z.
    assert stored == [
        1_774_744_200_000,  # 2026-03-29T00:30:00Z
        1_774_747_800_000,  # 2026-03-29T01:30:00Z
        1_792_888_200_000,  # 2026-10-25T00:30:00Z
        1_792_891_800_000,  # 2026-10-25T01:30:00Z
    ]


def test_upload_list_and_read_back(client, plant, ingest, make_key) -> None:
    created = upload(client, ingest, MIXED).json()
    read = make_key("read")
    listed = client.get("/api/v1/uploads", headers=read).json()["uploads"]
    assert [u["id"] for u in listed] == [created["id"]]
    one = client.get(f"/api/v1/uploads/{created['id']}", headers=read).json()
    assert (one["filename"], one["size_bytes"], one["rejected"]) == ("shift.csv", len(MIXED), 4)
    assert one["api_key_id"] is not None
    missing = client.get("/api/v1/uploads/999999", headers=read)
    assert (missing.status_code, missing.json()["detail"]) == (404, "no upload 999999")


def test_unknown_plant_is_404(client, plant, ingest) -> None:
    response = client.post(
        "/api/v1/uploads",
        files={"file": ("a.csv", b"time,FW-T\n", "text/csv")},
        data={"plant": "nowhere"},
        headers=ingest,
    )
    assert (response.status_code, response.json()["detail"]) == (404, "no plant 'nowhere'")
