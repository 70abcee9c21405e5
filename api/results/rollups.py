"""Rollups of the results over 10 minutes and over an hour: what lets a year of
one-minute data chart fast.

Per unit, metric, level and UTC block (10 min or 1 h, aligned to the epoch): how many
non-null values, their sum, minimum and maximum, and for bit-set metrics (``flags``)
their bitwise OR. Kept in step with the results by every write path of
:mod:`api.results.store` in the same transaction, so a chart never mixes old rollups
with new results.

The results service answers the whole blocks of a bucket from the rollups (60 rows of
a one-minute unit become one) and the partial blocks at either end of the range from the
results themselves; sums and counts combine exactly, so a bucket's mean is the same as
from the results alone (to floating-point summation order).
"""

from __future__ import annotations

import re
from collections.abc import Collection
from typing import Any

import numpy as np
from sqlalchemy import (
    BigInteger,
    Float,
    ForeignKey,
    Index,
    Integer,
    String,
    TextClause,
    bindparam,
    text,
)
from sqlalchemy.orm import Mapped, Session, mapped_column

from api.core.db import Base
from api.results.models import ResultValue

LEVELS_MS = (600_000, 3_600_000)
"""Rollup block lengths: 10 minutes and one hour. [ms]"""
BIT_OR_METRICS = frozenset({"flags"})
"""Integer bit sets: aggregated by bitwise OR, never averaged. (Here rather than beside
the metric declarations so that importing the tables does not import the engine.)"""


RESULTS_BY_TIME = Index("ix_results_unit_id_t_ms", ResultValue.unit_id, ResultValue.t_ms)
"""Results by (unit, time) across metrics: the range deletes of a recompute and the
rollup refreshes read a unit's rows over a time range whatever the metric, which the
primary key (unit, metric, time) cannot serve without scanning the whole unit. Declared
here, beside its users, rather than in the table's module."""


class ResultRollup(Base):
    """Aggregates of one metric of one unit over one block of ``level_ms``."""

    __tablename__ = "result_rollups"

    unit_id: Mapped[int] = mapped_column(
        ForeignKey("units.id", ondelete="CASCADE"), primary_key=True
    )
    metric: Mapped[str] = mapped_column(String(64), primary_key=True)
    level_ms: Mapped[int] = mapped_column(Integer, primary_key=True)
    """Block length, one of :data:`LEVELS_MS`."""
    t_ms: Mapped[int] = mapped_column(BigInteger, primary_key=True)
    """Start of the block, UTC epoch milliseconds."""
    n: Mapped[int] = mapped_column(Integer)
    """Non-null values in the block."""
    total: Mapped[float | None] = mapped_column(Float)
    low: Mapped[float | None] = mapped_column(Float)
    high: Mapped[float | None] = mapped_column(Float)
    bits: Mapped[int | None] = mapped_column(BigInteger)
    """Bitwise OR of the values, for bit-set metrics only."""


def block_range(start_ms: int, end_ms: int, level_ms: int) -> tuple[int, int]:
    """The whole blocks of ``level_ms`` covering [start, end)."""
    return (start_ms // level_ms) * level_ms, -(-end_ms // level_ms) * level_ms


def refresh_rollups(
    session: Session,
    unit_id: int,
    start_ms: int,
    end_ms: int,
    metrics: Collection[str] | None = None,
) -> None:
    """Rebuild, at every level, the rollups of the blocks touching [start, end) from the
    results (all metrics, or only ``metrics``), in the open transaction."""
    if metrics is not None and not metrics:
        return
    postgres = session.get_bind().dialect.name == "postgresql"
    only = "" if metrics is None else " AND metric IN :metrics"
    bits = "bit_or(CAST(value AS bigint)) FILTER (WHERE metric IN :bitm)" if postgres else "NULL"
    for level in LEVELS_MS:
        lo, hi = block_range(start_ms, end_ms, level)
        params: dict[str, object] = {
            "u": unit_id,
            "lo": lo,
            "hi": hi,
            "lv": level,
            "metrics": list(metrics or ()),
            "bitm": sorted(BIT_OR_METRICS),
        }
        session.execute(
            sql(
                "DELETE FROM result_rollups WHERE unit_id = :u AND level_ms = :lv "
                "AND t_ms >= :lo AND t_ms < :hi" + only
            ),
            params,
        )
        session.execute(
            sql(
                "INSERT INTO result_rollups "
                "(unit_id, metric, level_ms, t_ms, n, total, low, high, bits) "
                "SELECT unit_id, metric, :lv, (t_ms / :lv) * :lv AS block, count(value), "
                f"sum(value), min(value), max(value), {bits} FROM results "
                "WHERE unit_id = :u AND t_ms >= :lo AND t_ms < :hi" + only + " "
                "GROUP BY unit_id, metric, block"
            ),
            params,
        )
        if not postgres:
            _sqlite_bits(session, unit_id, level, lo, hi, metrics)


def sql(statement: str) -> TextClause:
    """``text()`` with the list parameters it uses (``:metrics``, ``:bitm``, ``:m``)
    expanded into ``IN (...)`` lists; parameters it does not use are ignored."""
    query = text(statement)
    for name in EXPANDING:
        if re.search(rf":{name}\b", statement):
            query = query.bindparams(bindparam(name, expanding=True))
    return query


EXPANDING = ("metrics", "bitm", "m")


def _sqlite_bits(
    session: Session,
    unit_id: int,
    level: int,
    lo: int,
    hi: int,
    metrics: Collection[str] | None,
) -> None:
    """SQLite has no bitwise aggregate: the distinct values per block are few, OR them."""
    wanted = sorted(BIT_OR_METRICS if metrics is None else set(metrics) & BIT_OR_METRICS)
    if not wanted:
        return
    rows = session.execute(
        sql(
            "SELECT metric, (t_ms / :lv) * :lv AS block, CAST(value AS INTEGER) AS v "
            "FROM results WHERE unit_id = :u AND metric IN :m AND t_ms >= :lo AND t_ms < :hi "
            "AND value IS NOT NULL GROUP BY metric, block, v ORDER BY metric, block"
        ),
        {"u": unit_id, "m": wanted, "lo": lo, "hi": hi, "lv": level},
    ).all()
    if not rows:
        return
    names = np.array([r[0] for r in rows], dtype=object)
    blocks = np.fromiter((r[1] for r in rows), np.int64, len(rows))
    values = np.fromiter((r[2] for r in rows), np.int64, len(rows))
    starts = np.flatnonzero(np.r_[True, (blocks[1:] != blocks[:-1]) | (names[1:] != names[:-1])])
    ored = np.bitwise_or.reduceat(values, starts)
    dbapi: Any = session.connection().connection.dbapi_connection
    cur = dbapi.cursor()
    try:
        cur.executemany(
            "UPDATE result_rollups SET bits = ? "
            "WHERE unit_id = ? AND metric = ? AND level_ms = ? AND t_ms = ?",
            zip(
                ored.tolist(),
                [unit_id] * len(starts),
                names[starts].tolist(),
                [level] * len(starts),
                blocks[starts].tolist(),
                strict=True,
            ),
        )
    finally:
        cur.close()
