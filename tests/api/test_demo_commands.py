"""The demo's commands and pieces: fault schedules, ``lostwork simulate``, ``lostwork demo``.

Outside references: the fault schedule's arithmetic is checked against hand-computed
windows (our own scenario); readings are compared with what the plant file says about
each tag; the demo's receiver verifies Standard Webhooks signatures through
api.webhooks.receiver (its signing is tested against the specification's reference
verifier in tests/api/test_webhooks.py).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from sqlalchemy import func, select
from typer.testing import CliRunner

from api.cli import app
from api.core import migrate
from api.core.config import Settings, get_settings
from api.core.db import create_db_engine, make_session_factory
from api.demo import PLANT_FILE
from api.demo.faults import DAY_S, Fault, ScheduleError, default_schedule, parse_schedule
from api.demo.orchestrate import DemoPlan, run_demo
from api.demo.simulator import Simulator
from api.plants.fileformat import load_yaml
from api.plants.service import apply_plant
from api.results.models import ResultValue
from api.webhooks.models import WebhookSubscription

START_MS = int(pd.Timestamp("2026-05-04T00:00:00Z").value // 1_000_000)


# --- schedules ------------------------------------------------------------------------


def test_default_schedule_windows_scale_with_the_backfill() -> None:
    faults = {f.kind + (f.unit or f.tags[0]): f for f in default_schedule(60.0)}
    # Hand-computed for 60 days: fouling from day 24 over 36 days; the meter bias at day
    # 46.8 for 2 days (the 2-day cap is below 5 % of 60 days = 3 days); the gap at day
    # 52.8 for 8 hours (cap below 3 % = 1.8 days).
    fouling = faults["foulinggb1"]
    assert (fouling.start_s, fouling.ramp_s, fouling.size) == (24 * DAY_S, 36 * DAY_S, 35.0)
    bias = faults["meter_biasBB3.fw.flow"]
    assert (bias.start_s / DAY_S, (bias.end_s - bias.start_s) / DAY_S) == pytest.approx((46.8, 2))
    short = {f.kind + (f.unit or f.tags[0]): f for f in default_schedule(4.0)}
    bias4 = short["meter_biasBB3.fw.flow"]
    assert (bias4.end_s - bias4.start_s) / DAY_S == pytest.approx(0.2)  # 5 % of 4 days


def test_fault_level_ramps_and_ends() -> None:
    fault = Fault("fouling", start_s=100.0, end_s=400.0, ramp_s=200.0, size=10.0, unit="gb1")
    t = np.array([0.0, 100.0, 200.0, 300.0, 399.0, 400.0])
    assert fault.level(t).tolist() == [0.0, 0.0, 0.5, 1.0, 1.0, 0.0]


def test_schedule_file_is_parsed_with_units() -> None:
    faults = parse_schedule(
        yaml.safe_load(
            """
faults:
  - {kind: fouling, unit: gb1, start: 2 d, ramp: 12 h, size: 20 K}
  - {kind: meter_bias, tags: [BB3.fw.flow], start: 3 d, end: 3.5 d, size: -25 %}
  - {kind: turbine_wear, unit: tg1, section: 2, start: 1 h, size: 0.03}
  - {kind: gap, tags: "TG2.*", start: 600, end: 1200}
"""
        )
    )
    assert [(f.kind, f.start_s, f.end_s, f.ramp_s, f.size) for f in faults] == [
        ("fouling", 172_800.0, None, 43_200.0, 20.0),
        ("meter_bias", 259_200.0, 302_400.0, 0.0, -0.25),
        ("turbine_wear", 3_600.0, None, 0.0, 0.03),
        ("gap", 600.0, 1200.0, 0.0, 0.0),
    ]
    assert faults[2].section == 2
    assert faults[3].matches("TG2.gen.power") and not faults[3].matches("TG1.gen.power")


@pytest.mark.parametrize(
    ("entry", "message"),
    [
        ({"kind": "leak", "start": 0}, "faults[0].kind: 'leak' is not one of fouling, "),
        ({"kind": "fouling", "start": 0, "size": "5 K"}, "faults[0].unit: required for fouling"),
        ({"kind": "stuck", "start": 0}, "faults[0].tags: required for stuck"),
        (
            {"kind": "gap", "tags": ["X"], "start": "1 d", "end": "2 h"},
            "faults[0].end: must be after",
        ),
        ({"kind": "fouling", "unit": "gb1", "start": 0}, "faults[0].size: required for fouling"),
        ({"kind": "gap", "tags": ["X"], "start": "soon"}, "faults[0].start: 'soon' is not"),
        ({"kind": "gap", "tags": ["X"], "start": 0, "when": 1}, "unknown field(s) when"),
    ],
)
def test_schedule_errors_name_the_entry_and_field(entry, message) -> None:
    with pytest.raises(ScheduleError) as caught:
        parse_schedule({"faults": [entry]})
    assert str(caught.value).startswith(message) or message in str(caught.value)


# --- the simulator's instruments ------------------------------------------------------


def test_readings_respect_the_plant_file_and_are_reproducible() -> None:
    sim = Simulator(start_ms=START_MS, faults=default_schedule(2.0), seed=11)
    t = sim.times(START_MS, START_MS + 2 * 86_400_000)
    whole = sim.generate(t).readings
    parts = pd.concat([sim.generate(t[:100]).readings, sim.generate(t[100:]).readings])
    # Batching does not change a reading (noise is keyed by tag and second).
    pd.testing.assert_frame_equal(whole, parts)
    document = yaml.safe_load(PLANT_FILE.read_text(encoding="utf-8"))
    assert set(whole.columns) == set(document["tags"])
    for name, tag in document["tags"].items():
        values = whole[name].dropna()
        assert values.between(tag["low"], tag["high"]).all(), name
    # Another seed, other noise and weather.
    other = Simulator(start_ms=START_MS, faults=[], seed=12).generate(t[:50]).readings
    assert not np.allclose(other["SITE.amb.temp"], whole["SITE.amb.temp"].iloc[:50])


# --- lostwork simulate and lostwork demo ------------------------------------------------


def test_simulate_writes_shift_logs_without_a_server(tmp_path) -> None:
    result = CliRunner().invoke(
        app, ["simulate", "--csv", str(tmp_path), "--days", "1", "--faults", "none"]
    )
    assert result.exit_code == 0, result.output
    written = sorted(p.name.split("_")[0] for p in tmp_path.glob("*.csv"))
    assert written == ["control-room", "field-round"]
    assert "lostwork upload " in result.output and "--plant quellmoor-utilities" in result.output


def test_simulate_needs_a_key_with_a_url() -> None:
    result = CliRunner().invoke(
        app, ["simulate", "--url", "http://127.0.0.1:9"], env={"LOSTWORK_INGEST_KEY": ""}
    )
    assert result.exit_code == 2
    assert "--key (or LOSTWORK_INGEST_KEY) is needed with --url" in result.output


def test_demo_prepares_computes_and_subscribes_the_receiver(tmp_path, capsys) -> None:
    url = f"sqlite:///{tmp_path / 'demo.db'}"
    migrate.upgrade(url)
    settings = Settings(database_url=url, embedded_worker=False)
    plan = DemoPlan(days=0.5, serve=False, receiver_port=0)
    run_demo(settings, plan)
    out = capsys.readouterr().out
    assert "plant quellmoor-utilities: 5 unit(s), 50 tag(s), 11 rule(s), 2 fuel(s)" in out
    stored = [
        int(line.split(": ")[1].split(" readings")[0].replace(",", ""))
        for line in out.splitlines()
        if line.startswith("backfill ")
    ]
    assert len(stored) == 2 and sum(stored) == 7_125  # 144 x 50 readings - 5 x 15 in the gap
    assert "baselines on the reference period" in out
    assert "admin API key (shown once): lw_" in out
    engine = create_db_engine(url)
    factory = make_session_factory(engine)
    with factory() as session:
        units = session.scalar(select(func.count(func.distinct(ResultValue.unit_id))))
        subscriptions = session.scalars(select(WebhookSubscription)).all()
    assert units == 5
    assert len(subscriptions) == 1 and subscriptions[0].url.startswith("http://127.0.0.1:")
    # Again on the same database: nothing new to apply, the same story continued (same
    # start and faults), one receiver.
    run_demo(settings, plan)
    again = capsys.readouterr().out
    assert "plant quellmoor-utilities: up to date" in again
    assert "continuing the history this database holds since" in again
    with factory() as session:
        assert session.scalar(select(func.count()).select_from(WebhookSubscription)) == 1
    engine.dispose()


@pytest.mark.slow  # a fresh interpreter loading the whole CLI: 5-15 s on two cores
def test_upload_command_runs_in_a_fresh_process(tmp_path) -> None:
    # A new interpreter imports only what the upload command imports: every table must
    # still be mapped for the upload's foreign keys to resolve.
    url = f"sqlite:///{tmp_path / 'fresh.db'}"
    migrate.upgrade(url)
    engine = create_db_engine(url)
    with make_session_factory(engine)() as session:
        apply_plant(
            session=session,
            document=load_yaml(PLANT_FILE.read_text(encoding="utf-8")),
            default_interval_s=60,
        )
    engine.dispose()
    log = tmp_path / "log.csv"
    log.write_text("time,SITE.amb.temp [degF]\n2026-05-04 10:00,59\n", encoding="utf-8")
    uploaded = subprocess.run(
        [
            str(Path(sys.executable).with_name("lostwork")),
            "upload",
            str(log),
            "--plant",
            "quellmoor-utilities",
        ],
        env={"LOSTWORK_DATABASE_URL": url, "PATH": "/usr/bin:/bin"},
        capture_output=True,
        text=True,
    )
    assert uploaded.returncode == 0, uploaded.stderr
    assert "stored 1, replaced 0, unchanged 0, problems 0" in uploaded.stdout


@pytest.fixture(autouse=True)
def _fresh_settings():
    get_settings.cache_clear()
    yield
    get_settings.cache_clear()


def test_columnar_batches_with_gaps_span_several_batches_intact() -> None:
    # A gap (NaN) in one tag of the first batch must not disturb the batches after it:
    # every value comes back exactly once, gaps as null.
    import numpy as np
    import pandas as pd

    from api.demo.sinks import columnar_batches

    index = pd.Index(np.arange(10, dtype=np.int64) * 60_000, name="t_ms")
    frame = pd.DataFrame({"A": np.arange(10.0), "B": np.arange(10.0) + 100}, index=index)
    frame.loc[60_000, "A"] = np.nan
    batches = list(columnar_batches("p", frame, batch_readings=6))
    assert [len(b["times"]) for b in batches] == [3, 3, 3, 1]
    a = [v for b in batches for v in b["series"]["A"]]
    b_values = [v for b in batches for v in b["series"]["B"]]
    assert a == [0.0, None, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0]
    assert b_values == [100.0 + i for i in range(10)]
