"""The consumer side of the work queue: claiming, advancing and releasing dirty spans.

Claiming gives a worker one *unit* at a time: it leases the earliest group of that
unit's claimable spans that overlap or touch, merged into one span (the others of the
group are deleted, being covered). While a unit holds a live lease no other worker
claims any span of it, so two workers never compute the same unit concurrently: a
worker that read readings before an ingest could otherwise commit stale results after
the worker that read them after it.

PostgreSQL (several worker processes): candidates are read without locks; per unit a
transaction-scoped advisory lock (``pg_try_advisory_xact_lock``) makes the check "no
live lease on this unit" and the lease itself atomic, and the unit's spans are locked
``FOR UPDATE SKIP LOCKED``, so a worker never waits on a row another one is claiming.
SQLite (one writer at a time): the claim runs under ``BEGIN IMMEDIATE``, which
serialises claims by itself.

A claim commits its lease at once. The worker then computes chunk by chunk, and each
chunk's transaction writes the results, advances the span's start past the chunk (or
marks it done) and renews the lease, after checking the lease is still its own. A worker
killed at any moment leaves a lease that expires; the next claim resumes at the first
chunk not committed. Results are replaced per range, so nothing is duplicated.

Span states: ``pending`` -> ``leased`` -> ``done``; a failed chunk returns the span to
``pending`` with a back-off (``lease_expires_at`` in the future, no owner), and after
:data:`MAX_ATTEMPTS` consecutive failures it is ``failed`` with ``last_error``.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass

from sqlalchemy import and_, delete, exists, func, or_, select, text, update
from sqlalchemy.orm import Session

from api.core.db import lock_for_write, utcnow
from api.pipeline.models import SpanState, WorkSpan
from api.plants.models import Plant, Unit

LEASE_SECONDS = 300.0
"""How long a claim or a committed chunk keeps a span; renewed at every chunk. [s]"""
MAX_ATTEMPTS = 5
"""Consecutive failures (claims without progress) before a span is ``failed``."""
RETRY_BASE_SECONDS = 10.0
"""Back-off after the n-th failure: ``RETRY_BASE_SECONDS * 2**(n-1)``. [s]"""
CANDIDATES = 32
"""Units with claimable spans looked at per claim, oldest work first."""
MAX_MERGE = 10_000
"""Most spans of one unit merged into one claim."""
ADVISORY_CLASS = 0x4C57
"""First key of the PostgreSQL advisory locks taken per unit while claiming."""

Clock = Callable[[], dt.datetime]


@dataclass(frozen=True)
class Claim:
    """A leased span: compute ``unit_id`` over [start_ms, end_ms)."""

    span_id: int
    unit_id: int
    start_ms: int
    end_ms: int
    owner: str
    interval_ms: int


def _claimable(now: dt.datetime):  # type: ignore[no-untyped-def]
    return and_(
        WorkSpan.state.in_([SpanState.PENDING.value, SpanState.LEASED.value]),
        or_(WorkSpan.lease_expires_at.is_(None), WorkSpan.lease_expires_at <= now),
    )


def _live_lease(unit_id: int, now: dt.datetime):  # type: ignore[no-untyped-def]
    return exists().where(
        WorkSpan.unit_id == unit_id,
        WorkSpan.state == SpanState.LEASED.value,
        WorkSpan.lease_expires_at > now,
    )


def has_work(session: Session, *, now: dt.datetime | None = None) -> bool:
    """Whether any span is claimable now (a cheap read, no lock)."""
    now = now or utcnow()
    return session.scalar(select(exists().where(_claimable(now)))) or False


def merge_extent(spans: list[tuple[int, int, int]]) -> tuple[list[int], int, int]:
    """The earliest group of overlapping or touching spans among ``(id, start, end)``.

    Returns the ids in the group, and the group's start and end.
    """
    ordered = sorted(spans, key=lambda s: (s[1], s[2], s[0]))
    ids = [ordered[0][0]]
    start, end = ordered[0][1], ordered[0][2]
    for span_id, lo, hi in ordered[1:]:
        if lo > end:
            break
        ids.append(span_id)
        end = max(end, hi)
    return ids, start, end


def claim_next(
    session: Session,
    owner: str,
    *,
    lease_seconds: float = LEASE_SECONDS,
    hold_intervals: int = 1,
    unit_id: int | None = None,
    clock: Clock = utcnow,
) -> Claim | None:
    """Lease the next unit's earliest span group to ``owner`` and commit; None if no work.

    ``hold_intervals`` widens the span's end: a reading holds its value into the next
    interval(s) (see :mod:`api.pipeline.averaging`), so those change with it.
    ``unit_id`` restricts the claim to one unit (``lostwork recompute``).
    """
    now = clock()
    postgres = session.get_bind().dialect.name == "postgresql"
    if not postgres:
        lock_for_write(session)
    # Units with claimable spans and no live lease, oldest work first; filtering the
    # leased units out here keeps one busy unit's backlog from hiding the others.
    leased = select(WorkSpan.unit_id).where(
        WorkSpan.state == SpanState.LEASED.value, WorkSpan.lease_expires_at > now
    )
    query = select(WorkSpan.unit_id).where(_claimable(now), WorkSpan.unit_id.not_in(leased))
    if unit_id is not None:
        query = query.where(WorkSpan.unit_id == unit_id)
    candidates = session.scalars(
        query.group_by(WorkSpan.unit_id).order_by(func.min(WorkSpan.id)).limit(CANDIDATES)
    ).all()
    for unit in candidates:
        if postgres and not session.scalar(
            text("SELECT pg_try_advisory_xact_lock(:cls, :unit)"),
            {"cls": ADVISORY_CLASS, "unit": unit},
        ):
            continue  # another worker is claiming this unit right now
        if session.scalar(select(_live_lease(unit, now))):
            continue
        spans_query = (
            select(WorkSpan.id, WorkSpan.start_ms, WorkSpan.end_ms, WorkSpan.attempts)
            .where(WorkSpan.unit_id == unit, _claimable(now))
            .order_by(WorkSpan.start_ms)
            .limit(MAX_MERGE)
        )
        if postgres:
            spans_query = spans_query.with_for_update(skip_locked=True)
        rows = session.execute(spans_query).all()
        if not rows:
            continue
        ids, start, end = merge_extent([(r.id, r.start_ms, r.end_ms) for r in rows])
        carrier = min(ids)
        attempts = max(r.attempts for r in rows if r.id in set(ids)) + 1
        interval_s = session.scalar(
            select(Plant.interval_seconds).join(Unit).where(Unit.id == unit)
        )
        if interval_s is None:
            continue  # the unit was just deleted (its spans go with it)
        interval_ms = 1000 * int(interval_s)
        end += hold_intervals * interval_ms
        session.execute(
            update(WorkSpan)
            .where(WorkSpan.id == carrier)
            .values(
                start_ms=start,
                end_ms=end,
                state=SpanState.LEASED.value,
                lease_owner=owner,
                lease_expires_at=now + dt.timedelta(seconds=lease_seconds),
                attempts=attempts,
                updated_at=now,
            )
        )
        absorbed = [i for i in ids if i != carrier]
        if absorbed:
            session.execute(delete(WorkSpan).where(WorkSpan.id.in_(absorbed)))
        session.commit()
        return Claim(carrier, unit, start, end, owner, interval_ms)
    session.commit()
    return None


def advance(
    session: Session,
    claim: Claim,
    next_start_ms: int,
    *,
    lease_seconds: float = LEASE_SECONDS,
    clock: Clock = utcnow,
) -> bool:
    """In the chunk's transaction: move the span's start to ``next_start_ms`` (done when it
    reaches the end) and renew the lease. False when the lease is no longer ours (the
    caller must roll back)."""
    now = clock()
    done = next_start_ms >= claim.end_ms
    values: dict[str, object] = {"updated_at": now, "attempts": 0, "last_error": None}
    if done:
        values.update(start_ms=claim.end_ms, state=SpanState.DONE.value)
    else:
        values.update(
            start_ms=next_start_ms, lease_expires_at=now + dt.timedelta(seconds=lease_seconds)
        )
    result = session.execute(
        update(WorkSpan)
        .where(
            WorkSpan.id == claim.span_id,
            WorkSpan.lease_owner == claim.owner,
            WorkSpan.state == SpanState.LEASED.value,
        )
        .values(**values)
    )
    return result.rowcount == 1  # type: ignore[attr-defined]


def release(session: Session, claim: Claim, *, clock: Clock = utcnow) -> None:
    """Give an unfinished span back at once (a worker stopping cleanly), and commit."""
    session.execute(
        update(WorkSpan)
        .where(WorkSpan.id == claim.span_id, WorkSpan.lease_owner == claim.owner)
        .where(WorkSpan.state == SpanState.LEASED.value)
        .values(
            state=SpanState.PENDING.value,
            lease_owner=None,
            lease_expires_at=None,
            attempts=WorkSpan.attempts - 1,
            updated_at=clock(),
        )
    )
    session.commit()


def fail(session: Session, claim: Claim, error: str, *, clock: Clock = utcnow) -> str:
    """Record a failed chunk: back to ``pending`` with a back-off, or ``failed`` after
    :data:`MAX_ATTEMPTS`. Commits; returns the new state."""
    if session.get_bind().dialect.name != "postgresql":
        lock_for_write(session)
    now = clock()
    attempts = session.scalar(
        select(WorkSpan.attempts).where(
            WorkSpan.id == claim.span_id, WorkSpan.lease_owner == claim.owner
        )
    )
    if attempts is None:
        session.commit()
        return "lost"
    state = SpanState.FAILED if attempts >= MAX_ATTEMPTS else SpanState.PENDING
    backoff = dt.timedelta(seconds=RETRY_BASE_SECONDS * 2 ** max(attempts - 1, 0))
    session.execute(
        update(WorkSpan)
        .where(WorkSpan.id == claim.span_id, WorkSpan.lease_owner == claim.owner)
        .values(
            state=state.value,
            lease_owner=None,
            lease_expires_at=None if state is SpanState.FAILED else now + backoff,
            last_error=error[:4000],
            updated_at=now,
        )
    )
    session.commit()
    return state.value


def prune_done(session: Session, *, older_than: dt.timedelta, clock: Clock = utcnow) -> int:
    """Delete spans done longer ago than ``older_than``; commits; returns how many."""
    result = session.execute(
        delete(WorkSpan).where(
            WorkSpan.state == SpanState.DONE.value, WorkSpan.updated_at < clock() - older_than
        )
    )
    session.commit()
    return int(result.rowcount or 0)  # type: ignore[attr-defined]


def outstanding_ms(
    session: Session,
    unit_id: int,
    start_ms: int,
    end_ms: int,
    *,
    failed_since: dt.datetime | None = None,
) -> tuple[int, int]:
    """(milliseconds of [start, end) still queued for the unit, spans there that failed
    since ``failed_since``)."""
    rows = session.execute(
        select(WorkSpan.start_ms, WorkSpan.end_ms, WorkSpan.state, WorkSpan.updated_at).where(
            WorkSpan.unit_id == unit_id,
            WorkSpan.state.in_(
                [SpanState.PENDING.value, SpanState.LEASED.value, SpanState.FAILED.value]
            ),
            WorkSpan.start_ms < end_ms,
            WorkSpan.end_ms > start_ms,
        )
    ).all()
    pieces = sorted(
        (max(r.start_ms, start_ms), min(r.end_ms, end_ms))
        for r in rows
        if r.state != SpanState.FAILED.value
    )
    total, reach = 0, start_ms
    for lo_ms, hi_ms in pieces:
        lo_ms = max(lo_ms, reach)
        if hi_ms > lo_ms:
            total += hi_ms - lo_ms
            reach = hi_ms
    failed = sum(
        1
        for r in rows
        if r.state == SpanState.FAILED.value
        and (failed_since is None or r.updated_at >= failed_since)
    )
    return total, failed
