"""``lostwork recompute`` and ``lostwork worker --once`` against the test database."""

from __future__ import annotations

import pytest
from sqlalchemy import select
from typer.testing import CliRunner

from api.cli import app
from api.core.config import get_settings
from api.pipeline.models import WorkSpan
from tests.api.factories import T0
from tests.api.test_pipeline import push, readings, stored_results

MIN = 60_000


@pytest.fixture
def run(db_url, session_factory, monkeypatch):
    monkeypatch.setenv("LOSTWORK_DATABASE_URL", db_url)
    get_settings.cache_clear()
    runner = CliRunner()
    yield lambda *args: runner.invoke(app, [str(a) for a in args])
    get_settings.cache_clear()


@pytest.fixture
def ingest(make_key) -> dict:
    return make_key("ingest")


def test_worker_once_processes_the_queue(run, client, plant, ingest, session_factory) -> None:
    push(client, ingest, readings(3, step_s=60), step_s=60)
    result = run("worker", "--once", "--owner", "cli-test")
    assert result.exit_code == 0, result.output
    assert "worker cli-test: stopped after 1 span(s)" in result.output
    assert len(stored_results(session_factory)) == 3


def test_recompute_a_range_with_progress(run, client, plant, ingest, session_factory) -> None:
    push(client, ingest, readings(4, step_s=60), step_s=60)
    assert run("worker", "--once").exit_code == 0
    result = run(
        "recompute",
        "--unit",
        "boiler-a",
        "--from",
        "2026-01-01T00:01:00Z",
        "--to",
        "2026-01-01T00:03:00Z",
    )
    assert result.exit_code == 0, result.output
    assert "unit boiler-a: 2 interval(s) queued for recompute" in result.output
    assert "2/2" in result.output  # the progress bar reached its end
    assert "unit boiler-a: recompute done" in result.output
    with session_factory() as s:
        rows = s.execute(select(WorkSpan.reason, WorkSpan.start_ms, WorkSpan.end_ms)).all()
    assert ("recompute", T0 + 4 * MIN, T0 + 4 * MIN) in [tuple(r) for r in rows]
    assert len(stored_results(session_factory)) == 4


def test_recompute_defaults_to_every_stored_reading(run, client, plant, ingest, session_factory):
    push(client, ingest, readings(3, step_s=60), step_s=60)
    result = run("recompute", "--unit", "boiler-a")
    assert result.exit_code == 0, result.output
    assert "unit boiler-a: 3 interval(s) queued for recompute" in result.output
    assert len(stored_results(session_factory)) == 3


def test_recompute_refuses_unknown_unit_and_naive_time(run, plant) -> None:
    unknown = run("recompute", "--unit", "nope")
    assert unknown.exit_code == 1
    assert "no unit 'nope'" in unknown.output
    naive = run(
        "recompute",
        "--unit",
        "boiler-a",
        "--from",
        "2026-01-01T00:00:00",
        "--to",
        "2026-01-02T00:00:00Z",
    )
    assert naive.exit_code == 2
    assert "has no UTC offset" in naive.output
