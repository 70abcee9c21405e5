"""The key `lostwork serve` hands its in-process dashboard."""

from __future__ import annotations

from sqlalchemy import select

from api.auth.models import ApiKey
from api.auth.service import DASHBOARD_KEY_NAME, authenticate, renew_dashboard_key
from api.core.config import Settings


def test_each_start_renews_the_dashboard_key_and_revokes_the_last(session) -> None:
    first = renew_dashboard_key(session=session, scopes=["read", "ingest"])
    second = renew_dashboard_key(session=session, scopes=["read", "ingest"])
    keys = session.scalars(select(ApiKey).where(ApiKey.name == DASHBOARD_KEY_NAME)).all()
    assert len(keys) == 2
    assert [k.revoked_at is None for k in sorted(keys, key=lambda k: k.id)] == [False, True]
    assert authenticate(session=session, plaintext=second).scopes == ["ingest", "read"]
    try:
        authenticate(session=session, plaintext=first)
    except Exception as exc:  # the domain error the API turns into a 401
        assert "revoked" in str(exc)
    else:
        raise AssertionError("the previous dashboard key still authenticates")


def test_dashboard_scopes_setting_reads_a_comma_list(monkeypatch) -> None:
    monkeypatch.setenv("LOSTWORK_DASHBOARD_SCOPES", "read,ingest,admin")
    assert Settings().dashboard_scopes == ["read", "ingest", "admin"]
