"""Bulk writes of results: replace a unit's results over a range in the open transaction.

Every write path here keeps the hourly rollups (:mod:`api.results.rollups`) in step in
the same transaction; code elsewhere that deletes results must use
:func:`delete_results` for the same reason.

A recomputed range replaces what was stored for it: the unit's rows in [start, end) are
deleted, then the new rows are upserted. Intervals that no longer have inputs (readings
deleted, a binding changed) therefore lose their old results instead of keeping numbers
nobody could reproduce. The upsert (``ON CONFLICT DO UPDATE``) keeps a second writer of
the same rows — a worker whose lease expired while it still ran — from failing or
duplicating; the last writer wins.

PostgreSQL: binary ``COPY`` into a session-local staging table (built by numpy, no
Python loop per row; the metric is a small integer there, joined back to its name), then
one ``INSERT ... SELECT ... ON CONFLICT DO UPDATE``. SQLite: ``executemany``.
NaN results are stored as NULL (so that SQL aggregates skip them).
"""

from __future__ import annotations

from collections.abc import Collection
from typing import Any

import numpy as np
import pandas as pd
from sqlalchemy import ColumnElement, delete
from sqlalchemy.orm import Session

from api.results.models import ResultValue
from api.results.rollups import ResultRollup, refresh_rollups

STAGE = "lw_results_stage"

_PGCOPY_HEADER = b"PGCOPY\n\xff\r\n\x00" + (0).to_bytes(4, "big") + (0).to_bytes(4, "big")
_PGCOPY_TRAILER = (-1).to_bytes(2, "big", signed=True)
_ROW = [
    ("n", ">i2"),
    ("l1", ">i4"),
    ("unit_id", ">i4"),
    ("l2", ">i4"),
    ("metric", ">i2"),
    ("l3", ">i4"),
    ("t_ms", ">i8"),
    ("l4", ">i4"),
]
_PG_VALUE = np.dtype([*_ROW, ("value", ">f8")])
_PG_NULL = np.dtype(_ROW)
"""A NULL field in binary COPY is its length -1 and no bytes: a shorter record."""


def long_rows(frame: pd.DataFrame) -> tuple[list[str], np.ndarray, np.ndarray, np.ndarray]:
    """(metric names, metric index per row, t_ms per row, value per row) of a wide frame."""
    names = [str(c) for c in frame.columns]
    t = frame.index.to_numpy(dtype=np.int64)
    values = frame.to_numpy(dtype=float, na_value=np.nan)  # (intervals, metrics)
    metric_idx = np.tile(np.arange(len(names), dtype=np.int16), len(t))
    t_rows = np.repeat(t, len(names))
    return names, metric_idx, t_rows, values.reshape(-1)


def replace_results(
    session: Session,
    unit_id: int,
    start_ms: int,
    end_ms: int,
    frame: pd.DataFrame,
    *,
    only: Collection[str] | None = None,
    keep: Collection[str] = (),
) -> int:
    """Replace the unit's results in [start, end) by ``frame`` (index t_ms, a column per
    metric, SI), and their hourly rollups. The caller commits.

    Deleted first: the unit's rows in the range of the metrics in ``only`` (default:
    every metric except those in ``keep`` — the pipeline keeps what other stages store).
    Returns the number of rows written.
    """
    if only is not None and keep:
        raise ValueError("give either only or keep, not both")
    condition: list[ColumnElement[bool]] = [
        ResultValue.unit_id == unit_id,
        ResultValue.t_ms >= start_ms,
        ResultValue.t_ms < end_ms,
    ]
    if only is not None:
        condition.append(ResultValue.metric.in_(list(only)))
    elif keep:
        condition.append(ResultValue.metric.not_in(list(keep)))
    session.execute(delete(ResultValue).where(*condition))
    written = _upsert(session, unit_id, frame)
    # With ``only``, no other metric changed: their rollups need no rebuilding.
    changed = None if only is None else {*only, *(str(c) for c in frame.columns)}
    refresh_rollups(session, unit_id, start_ms, end_ms, metrics=changed)
    return written


def upsert_results(session: Session, unit_id: int, frame: pd.DataFrame) -> int:
    """Insert or update one row per (metric, interval) of ``frame``, and the rollups of
    the hours it touches. The caller commits."""
    written = _upsert(session, unit_id, frame)
    if written:
        t = frame.index.to_numpy(dtype=np.int64)
        refresh_rollups(session, unit_id, int(t.min()), int(t.max()) + 1)
    return written


def delete_results(
    session: Session,
    unit_ids: Collection[int],
    start_ms: int | None = None,
    end_ms: int | None = None,
) -> None:
    """Delete units' results (all, or those in [start, end)) with their rollups."""
    ids = list(unit_ids)
    if not ids:
        return
    condition: list[ColumnElement[bool]] = [ResultValue.unit_id.in_(ids)]
    if start_ms is not None:
        condition.append(ResultValue.t_ms >= start_ms)
    if end_ms is not None:
        condition.append(ResultValue.t_ms < end_ms)
    session.execute(delete(ResultValue).where(*condition))
    if start_ms is None and end_ms is None:
        session.execute(delete(ResultRollup).where(ResultRollup.unit_id.in_(ids)))
        return
    lo = start_ms if start_ms is not None else -(2**62)
    hi = end_ms if end_ms is not None else 2**62
    for unit_id in ids:
        refresh_rollups(session, unit_id, lo, hi)


def _upsert(session: Session, unit_id: int, frame: pd.DataFrame) -> int:
    if frame.empty or len(frame.columns) == 0:
        return 0
    names, metric_idx, t_rows, values = long_rows(frame)
    if session.get_bind().dialect.name == "postgresql":
        _upsert_postgresql(session, unit_id, names, metric_idx, t_rows, values)
    else:
        _upsert_sqlite(session, unit_id, names, metric_idx, t_rows, values)
    return len(t_rows)


def _pgcopy_buffer(
    unit_id: int, metric_idx: np.ndarray, t_rows: np.ndarray, values: np.ndarray
) -> bytes:
    null = np.isnan(values)
    parts = [_PGCOPY_HEADER]
    for dtype, mask in ((_PG_VALUE, ~null), (_PG_NULL, null)):
        count = int(mask.sum())
        if not count:
            continue
        rows = np.empty(count, dtype=dtype)
        rows["n"], rows["l1"], rows["l2"], rows["l3"] = 4, 4, 2, 8
        rows["unit_id"], rows["metric"], rows["t_ms"] = unit_id, metric_idx[mask], t_rows[mask]
        if dtype is _PG_VALUE:
            rows["l4"], rows["value"] = 8, values[mask]
        else:
            rows["l4"] = -1
        parts.append(rows.tobytes())
    parts.append(_PGCOPY_TRAILER)
    return b"".join(parts)


def _upsert_postgresql(
    session: Session,
    unit_id: int,
    names: list[str],
    metric_idx: np.ndarray,
    t_rows: np.ndarray,
    values: np.ndarray,
) -> None:
    dbapi: Any = session.connection().connection.dbapi_connection
    with dbapi.cursor() as cur:
        cur.execute(
            f"CREATE TEMP TABLE IF NOT EXISTS {STAGE} "
            "(unit_id integer, metric smallint, t_ms bigint, value double precision) "
            "ON COMMIT DELETE ROWS"
        )
        cur.execute(f"TRUNCATE {STAGE}")
        with cur.copy(
            f"COPY {STAGE} (unit_id, metric, t_ms, value) FROM STDIN (FORMAT BINARY)"
        ) as copy:
            copy.write(_pgcopy_buffer(unit_id, metric_idx, t_rows, values))
        cur.execute(
            f"""
            INSERT INTO results (unit_id, metric, t_ms, value)
            SELECT s.unit_id, m.name, s.t_ms, s.value
            FROM {STAGE} AS s
            JOIN unnest(%s::text[]) WITH ORDINALITY AS m(name, idx) ON m.idx = s.metric + 1
            ON CONFLICT (unit_id, metric, t_ms) DO UPDATE SET value = EXCLUDED.value
            """,
            (names,),
        )
        cur.execute(f"TRUNCATE {STAGE}")


def _upsert_sqlite(
    session: Session,
    unit_id: int,
    names: list[str],
    metric_idx: np.ndarray,
    t_rows: np.ndarray,
    values: np.ndarray,
) -> None:
    dbapi: Any = session.connection().connection.dbapi_connection
    metric_names = np.asarray(names, dtype=object)[metric_idx]
    stored = values.astype(object)
    stored[np.isnan(values)] = None
    cur = dbapi.cursor()
    try:
        cur.executemany(
            "INSERT INTO results (unit_id, metric, t_ms, value) VALUES (?, ?, ?, ?) "
            "ON CONFLICT (unit_id, metric, t_ms) DO UPDATE SET value = excluded.value",
            zip(
                [unit_id] * len(t_rows),
                metric_names.tolist(),
                t_rows.tolist(),
                stored.tolist(),
                strict=True,
            ),
        )
    finally:
        cur.close()
