"""The bulk upsert of readings, counting what it stored, replaced and left unchanged.

PostgreSQL: the binary ``COPY`` buffer is built by numpy (no Python loop per row). When
no reading is stored yet in the batch's time range for its tags (new data, the usual
case), the rows are copied straight into ``readings``; otherwise they are copied into a
staging table and one ``INSERT ... SELECT ... ON CONFLICT DO UPDATE ... WHERE value IS
DISTINCT FROM`` moves them, returning per tag how many rows were new (``xmax = 0``) or
changed and the time range they cover. SQLite: ``executemany`` into a temporary staging table, one query
classifying the rows against the stored ones, and one ``INSERT ... ON CONFLICT``.

Both run inside the caller's transaction; the caller commits (together with the dirty
spans, so that a stored reading always has its recompute queued).
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from sqlalchemy.orm import Session

from api.core.db import lock_for_write

log = logging.getLogger(__name__)

STAGE = "lw_readings_stage"

# PGCOPY binary: signature, flags, header extension length; each row: field count
# then (length, value) per field, all big-endian; trailer -1.
_PGCOPY_HEADER = b"PGCOPY\n\xff\r\n\x00" + (0).to_bytes(4, "big") + (0).to_bytes(4, "big")
_PGCOPY_TRAILER = (-1).to_bytes(2, "big", signed=True)
_PGCOPY_ROW = np.dtype(
    [
        ("n", ">i2"),
        ("l1", ">i4"),
        ("tag_id", ">i4"),
        ("l2", ">i4"),
        ("t_ms", ">i8"),
        ("l3", ">i4"),
        ("value", ">f8"),
    ]
)


@dataclass
class UpsertOutcome:
    stored: int = 0
    """New (tag, time) keys."""
    replaced: int = 0
    """Existing keys whose value changed."""
    unchanged: int = 0
    """Existing keys sent again with the same value."""
    changed_ranges: dict[int, tuple[int, int]] = field(default_factory=dict)
    """tag_id -> (earliest, latest) t_ms among stored or replaced rows."""


def dedupe_last(
    tag_ids: np.ndarray, t_ms: np.ndarray, values: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
    """Keep the last of repeated (tag, time) keys within one batch; how many were dropped."""
    n = len(tag_ids)
    if n < 2:
        return tag_ids, t_ms, values, 0
    order = np.lexsort((np.arange(n), t_ms, tag_ids))
    tg, tm = tag_ids[order], t_ms[order]
    last = np.ones(n, dtype=bool)
    last[:-1] = (tg[1:] != tg[:-1]) | (tm[1:] != tm[:-1])
    keep = order[last]
    return tag_ids[keep], t_ms[keep], values[keep], n - len(keep)


def upsert_readings(
    session: Session, tag_ids: np.ndarray, t_ms: np.ndarray, values: np.ndarray
) -> UpsertOutcome:
    """Store readings (SI, unique keys: see :func:`dedupe_last`) in the open transaction."""
    if len(tag_ids) == 0:
        return UpsertOutcome()
    tag_ids = np.asarray(tag_ids, dtype=np.int32)
    t_ms = np.asarray(t_ms, dtype=np.int64)
    values = np.asarray(values, dtype=np.float64)
    if session.get_bind().dialect.name == "postgresql":
        rows = _upsert_postgresql(session, tag_ids, t_ms, values)
    else:
        rows = _upsert_sqlite(session, tag_ids, t_ms, values)
    outcome = UpsertOutcome()
    changed = 0
    for tag_id, lo, hi, inserted, total in rows:
        outcome.changed_ranges[int(tag_id)] = (int(lo), int(hi))
        outcome.stored += int(inserted)
        changed += int(total)
    outcome.replaced = changed - outcome.stored
    outcome.unchanged = len(tag_ids) - changed
    return outcome


def _pgcopy_buffer(tag_ids: np.ndarray, t_ms: np.ndarray, values: np.ndarray) -> bytes:
    rows = np.empty(len(tag_ids), dtype=_PGCOPY_ROW)
    rows["n"], rows["l1"], rows["l2"], rows["l3"] = 3, 4, 8, 8
    rows["tag_id"], rows["t_ms"], rows["value"] = tag_ids, t_ms, values
    return _PGCOPY_HEADER + rows.tobytes() + _PGCOPY_TRAILER


def _ranges_by_tag(tag_ids: np.ndarray, t_ms: np.ndarray) -> list[tuple[int, int, int, int, int]]:
    """(tag_id, min t_ms, max t_ms, inserted, changed) per tag, all rows counted as new."""
    order = np.argsort(tag_ids, kind="stable")
    tags, times = tag_ids[order], t_ms[order]
    starts = np.flatnonzero(np.r_[True, tags[1:] != tags[:-1]])
    counts = np.diff(np.r_[starts, len(tags)])
    lo = np.minimum.reduceat(times, starts)
    hi = np.maximum.reduceat(times, starts)
    return [
        (int(t), int(a), int(b), int(c), int(c))
        for t, a, b, c in zip(tags[starts], lo, hi, counts, strict=True)
    ]


def _upsert_postgresql(
    session: Session, tag_ids: np.ndarray, t_ms: np.ndarray, values: np.ndarray
) -> list[Any]:
    import psycopg

    dbapi: Any = session.connection().connection.dbapi_connection  # psycopg's own
    assert dbapi is not None
    buffer = _pgcopy_buffer(tag_ids, t_ms, values)
    with dbapi.cursor() as cur:
        # Fast path, the usual case of a historian pushing new data: nothing stored yet in
        # the batch's time range for its tags, so COPY straight into the table. The
        # primary key still guards a concurrent writer: a duplicate aborts the COPY
        # (inside a savepoint) and the batch takes the merge path below.
        cur.execute(
            "SELECT 1 FROM readings WHERE tag_id = ANY(%s) AND t_ms BETWEEN %s AND %s LIMIT 1",
            (np.unique(tag_ids).tolist(), int(t_ms.min()), int(t_ms.max())),
        )
        if cur.fetchone() is None:
            try:
                with (
                    dbapi.transaction(),
                    cur.copy(
                        "COPY readings (tag_id, t_ms, value) FROM STDIN (FORMAT BINARY)"
                    ) as copy,
                ):
                    copy.write(buffer)
                return _ranges_by_tag(tag_ids, t_ms)
            except psycopg.errors.UniqueViolation:
                log.info("direct COPY met rows of a concurrent writer; merging instead")
        # Merge path: stage the rows, then one INSERT ... ON CONFLICT that reports per tag
        # what it inserted (xmax = 0) or changed. The staging table is created per call
        # and dropped at its end (cheaper than emptying a kept one with TRUNCATE).
        cur.execute(
            f"CREATE TEMP TABLE {STAGE} "
            "(tag_id integer, t_ms bigint, value double precision) ON COMMIT DROP"
        )
        with cur.copy(f"COPY {STAGE} (tag_id, t_ms, value) FROM STDIN (FORMAT BINARY)") as copy:
            copy.write(buffer)
        cur.execute(
            f"""
            WITH moved AS (
                INSERT INTO readings (tag_id, t_ms, value)
                SELECT tag_id, t_ms, value FROM {STAGE}
                ON CONFLICT (tag_id, t_ms) DO UPDATE SET value = EXCLUDED.value
                WHERE readings.value IS DISTINCT FROM EXCLUDED.value
                RETURNING tag_id, t_ms, (xmax = 0) AS inserted
            )
            SELECT tag_id, min(t_ms), max(t_ms), count(*) FILTER (WHERE inserted), count(*)
            FROM moved GROUP BY tag_id
            """
        )
        rows = cur.fetchall()
        cur.execute(f"DROP TABLE {STAGE}")
        return rows


def _upsert_sqlite(
    session: Session, tag_ids: np.ndarray, t_ms: np.ndarray, values: np.ndarray
) -> list[Any]:
    lock_for_write(session)
    dbapi: Any = session.connection().connection.dbapi_connection  # sqlite3's own
    assert dbapi is not None
    cur = dbapi.cursor()
    try:
        cur.execute(
            f"CREATE TEMP TABLE IF NOT EXISTS {STAGE} "
            "(tag_id INTEGER, t_ms INTEGER, value REAL, PRIMARY KEY (tag_id, t_ms))"
        )
        cur.execute(f"DELETE FROM {STAGE}")
        cur.executemany(
            f"INSERT INTO {STAGE} (tag_id, t_ms, value) VALUES (?, ?, ?)",
            zip(tag_ids.tolist(), t_ms.tolist(), values.tolist(), strict=True),
        )
        cur.execute(
            f"""
            SELECT s.tag_id, min(s.t_ms), max(s.t_ms), sum(r.tag_id IS NULL), count(*)
            FROM {STAGE} AS s
            LEFT JOIN readings AS r ON r.tag_id = s.tag_id AND r.t_ms = s.t_ms
            WHERE r.tag_id IS NULL OR r.value IS NOT s.value
            GROUP BY s.tag_id
            """
        )
        rows = cur.fetchall()
        cur.execute(
            f"""
            INSERT INTO readings (tag_id, t_ms, value)
            SELECT tag_id, t_ms, value FROM {STAGE} WHERE true
            ON CONFLICT (tag_id, t_ms) DO UPDATE SET value = excluded.value
            WHERE readings.value IS NOT excluded.value
            """
        )
        cur.execute(f"DELETE FROM {STAGE}")
        return rows
    finally:
        cur.close()
