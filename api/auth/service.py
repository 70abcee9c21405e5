"""Creating, checking and revoking API keys."""

from __future__ import annotations

import datetime as dt
import hashlib
import hmac
import secrets
from collections.abc import Iterable

from sqlalchemy import select
from sqlalchemy.orm import Session

from api.auth.models import ApiKey
from api.auth.scopes import Scope
from api.core.db import utcnow
from api.core.problems import InvalidInput, NotFound, Unauthenticated

KEY_MARK = "lw"
LAST_USED_RESOLUTION = dt.timedelta(minutes=5)
"""``last_used_at`` is refreshed at most this often, so reads stay free of writes."""


def _hash(key: str) -> str:
    return hashlib.sha256(key.encode()).hexdigest()


def create_key(*, session: Session, name: str, scopes: Iterable[str]) -> tuple[ApiKey, str]:
    """Store a new key and return it with its plaintext (shown once, never stored)."""
    wanted = sorted(set(scopes))
    known = {s.value for s in Scope}
    unknown = [s for s in wanted if s not in known]
    if not wanted or unknown:
        raise InvalidInput(
            f"scopes must be a non-empty selection of {', '.join(sorted(known))}",
            errors=[{"field": "scopes", "message": f"unknown scope {s!r}"} for s in unknown],
        )
    if not name.strip():
        raise InvalidInput("a key needs a name", errors=[{"field": "name", "message": "empty"}])
    prefix = secrets.token_hex(4)
    plaintext = f"{KEY_MARK}_{prefix}_{secrets.token_urlsafe(32)}"
    key = ApiKey(name=name.strip(), prefix=prefix, secret_sha256=_hash(plaintext), scopes=wanted)
    session.add(key)
    session.commit()
    return key, plaintext


def authenticate(*, session: Session, plaintext: str) -> ApiKey:
    """The live key matching ``plaintext``; :class:`Unauthenticated` otherwise."""
    parts = plaintext.strip().split("_", 2)
    if len(parts) != 3 or parts[0] != KEY_MARK:
        raise Unauthenticated("malformed API key: expected lw_<prefix>_<secret>")
    key = session.scalars(select(ApiKey).where(ApiKey.prefix == parts[1])).one_or_none()
    if key is None or not hmac.compare_digest(key.secret_sha256, _hash(plaintext.strip())):
        raise Unauthenticated("unknown API key")
    if key.revoked_at is not None:
        raise Unauthenticated("this API key has been revoked")
    now = utcnow()
    if key.last_used_at is None or now - key.last_used_at > LAST_USED_RESOLUTION:
        key.last_used_at = now
        session.commit()
    return key


def list_keys(*, session: Session) -> list[ApiKey]:
    return list(session.scalars(select(ApiKey).order_by(ApiKey.id)))


def revoke_key(*, session: Session, key_id: int) -> ApiKey:
    key = session.get(ApiKey, key_id)
    if key is None:
        raise NotFound(f"no API key with id {key_id}")
    if key.revoked_at is None:
        key.revoked_at = utcnow()
        session.commit()
    return key


DASHBOARD_KEY_NAME = "dashboard (in-process)"


def renew_dashboard_key(*, session: Session, scopes: Iterable[str]) -> str:
    """A fresh key for the dashboard served inside this process; the previous one is
    revoked, so restarts never pile up live keys nobody holds."""
    stale = session.scalars(
        select(ApiKey).where(ApiKey.name == DASHBOARD_KEY_NAME, ApiKey.revoked_at.is_(None))
    )
    for key in stale:
        key.revoked_at = utcnow()
    _, plaintext = create_key(session=session, name=DASHBOARD_KEY_NAME, scopes=scopes)
    return plaintext
