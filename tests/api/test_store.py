"""The bulk upsert on its own: counts, in-batch duplicates, and a concurrent writer."""

from __future__ import annotations

import logging
import threading
import time

import numpy as np
from sqlalchemy import func, select

from api.readings.models import Reading
from api.readings.store import dedupe_last, upsert_readings
from tests.api.factories import T0


def batch(n: int, value: float = 1.0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    return (
        np.repeat(np.array([7, 8], dtype=np.int32), n // 2),
        np.tile(T0 + np.arange(n // 2, dtype=np.int64) * 1000, 2),
        np.full(n, value),
    )


def test_counts_new_replaced_unchanged(session) -> None:
    tags, times, values = batch(100)
    first = upsert_readings(session, tags, times, values)
    session.commit()
    assert (first.stored, first.replaced, first.unchanged) == (100, 0, 0)
    assert first.changed_ranges == {7: (T0, T0 + 49_000), 8: (T0, T0 + 49_000)}
    values = values.copy()
    values[[0, 99]] = 2.0  # tag 7 at T0, tag 8 at T0 + 49 s
    second = upsert_readings(session, tags, times, values)
    session.commit()
    assert (second.stored, second.replaced, second.unchanged) == (0, 2, 98)
    assert second.changed_ranges == {7: (T0, T0), 8: (T0 + 49_000, T0 + 49_000)}
    assert session.scalar(select(func.sum(Reading.value))) == 102.0


def test_dedupe_keeps_the_last_of_a_repeated_key() -> None:
    tags = np.array([1, 1, 2, 1], dtype=np.int32)
    times = np.array([5, 6, 5, 5], dtype=np.int64)
    values = np.array([10.0, 11.0, 12.0, 13.0])
    kept_tags, kept_times, kept_values, dropped = dedupe_last(tags, times, values)
    assert dropped == 1
    assert sorted(
        zip(kept_tags.tolist(), kept_times.tolist(), kept_values.tolist(), strict=True)
    ) == [
        (1, 5, 13.0),
        (1, 6, 11.0),
        (2, 5, 12.0),
    ]


def test_concurrent_writer_of_the_same_rows(session_factory, engine, caplog) -> None:
    # Writer A stores a batch and holds its transaction open; writer B sends the same
    # batch meanwhile. B must wait, then find every row already there (no duplicate, no
    # error): on PostgreSQL B's direct COPY hits A's keys and falls back to the merge;
    # on SQLite B waits for the write lock.
    caplog.set_level(logging.INFO, logger="api.readings.store")
    tags, times, values = batch(200)
    outcome: dict[str, object] = {}
    with session_factory() as a:
        first = upsert_readings(a, tags, times, values)

        def writer_b() -> None:
            with session_factory() as b:
                outcome["b"] = upsert_readings(b, tags, times, values)
                b.commit()

        thread = threading.Thread(target=writer_b)
        thread.start()
        time.sleep(0.3)
        assert thread.is_alive()  # B is waiting for A
        a.commit()
    thread.join(timeout=30)
    b = outcome["b"]
    assert first.stored == 200
    assert (b.stored, b.replaced, b.unchanged) == (0, 0, 200)  # type: ignore[attr-defined]
    with session_factory() as check:
        assert check.scalar(select(func.count()).select_from(Reading)) == 200
    fell_back = "direct COPY met rows of a concurrent writer; merging instead" in caplog.text
    assert fell_back == (engine.dialect.name == "postgresql")
