"""The command line against the test database: plant apply, keys, upload."""

from __future__ import annotations

import pytest
import yaml
from typer.testing import CliRunner

from api.cli import app
from api.core.config import get_settings
from tests.api.factories import plant_document


@pytest.fixture
def run(db_url, session_factory, monkeypatch):
    monkeypatch.setenv("LOSTWORK_DATABASE_URL", db_url)
    get_settings.cache_clear()
    runner = CliRunner()
    yield lambda *args: runner.invoke(app, [str(a) for a in args])
    get_settings.cache_clear()


def test_plant_apply_twice_then_upload(run, tmp_path) -> None:
    path = tmp_path / "plant.yaml"
    path.write_text(yaml.safe_dump(plant_document()), encoding="utf-8")
    first = run("plant", "apply", path)
    assert first.exit_code == 0, first.output
    assert "plant test-works: changed" in first.output
    assert "  created  unit boiler-a" in first.output
    second = run("plant", "apply", path)
    assert second.output.strip() == "plant test-works: up to date, nothing changed"

    csv = tmp_path / "log.csv"
    csv.write_text("time,FW-T,NOPE\n2026-01-01 01:00,20,1\n", encoding="utf-8")
    uploaded = run("upload", csv, "--plant", "test-works")
    assert uploaded.exit_code == 0, uploaded.output
    assert "stored 1, replaced 0, unchanged 0, problems 1" in uploaded.output
    assert "row 1, column 'NOPE': unknown tag 'NOPE'" in uploaded.output
    assert "queued for recompute: boiler-a" in uploaded.output


def test_bad_plant_file_lists_problems_and_fails(run, tmp_path) -> None:
    doc = plant_document()
    doc["units"]["boiler-a"]["kind"] = "kettle"
    path = tmp_path / "plant.yaml"
    path.write_text(yaml.safe_dump(doc), encoding="utf-8")
    result = run("plant", "apply", path)
    assert result.exit_code == 1
    assert "the plant file has 1 problem(s); nothing was applied" in result.output
    assert "units.boiler-a.kind: unit 'boiler-a': unknown kind 'kettle'" in result.output


def test_keys_create_prints_the_key_once(run) -> None:
    result = run("keys", "create", "--name", "historian", "--scope", "ingest", "--scope", "read")
    assert result.exit_code == 0, result.output
    lines = result.output.strip().splitlines()
    assert lines[0].endswith("(historian, scopes: ingest, read); shown once:")
    assert lines[1].startswith("lw_") and len(lines[1]) > 40
    listed = run("keys", "list")
    assert "historian" in listed.output and lines[1] not in listed.output
    bad = run("keys", "create", "--name", "x", "--scope", "root")
    assert bad.exit_code == 1 and "unknown scope 'root'" in bad.output
