"""The demo plant's story end to end: simulator -> REST ingest -> pipeline -> results and alerts.

Four simulated days of the fictional plant (api/demo) at its 5-minute interval, with the
default fault schedule scaled to them, are sent through ``POST /api/v1/readings/columnar``
(in columnar batches, as a historian connector would), computed by the pipeline worker,
and checked:

* recovery: the efficiencies the pipeline computes equal the ones the simulator was told
  to produce, within the noise it added. The tolerance is not chosen by hand: it is the
  first-order propagation of the simulator's noise model (per-tag standard deviations,
  api/demo/noise.py) through the same unit model, by the law of propagation of
  uncertainty (JCGM 100:2008 (GUM), Eq. 10, via engine.uncertainty.propagate). Per
  interval the error must stay within 5 u (a 5-sigma bound: about 3e-4 chance of one
  false failure over the ~500 intervals checked), its mean within 4 u / sqrt(n), and its
  scatter must be the propagated one within 25 % (the sample standard deviation of ~500
  normal values is within 8 % of the true one at 2.5 sigma): noise the model did not
  propagate, or propagated twice, fails the test.
* every fault is visible to the pipeline within a stated delay, as a consistency flag or
  a result-level signal, and raises the plant file's alert rules (api/alerts); the clean
  period raises no flag and no alert;
* the staleness rule fires on the simulator's live gap and resolves when data returns;
* the shift-log CSVs the simulator writes upload with zero errors, and across a
  daylight-saving change their local times land on the instants they were written from.

The whole history runs once per module on its own SQLite file (the pipeline and ingest
are tested on PostgreSQL by their own suites); about 15-25 s on two cores.
"""

from __future__ import annotations

import datetime as dt
import threading
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from fastapi.testclient import TestClient
from sqlalchemy import select

from api import measure
from api.alerts import service as alerts_service
from api.alerts.staleness import evaluate_staleness
from api.auth import service as auth_service
from api.core import migrate
from api.core.config import Settings
from api.core.db import create_db_engine, make_session_factory
from api.demo import PLANT_FILE, PLANT_SLUG
from api.demo.faults import DAY_S, Fault, clean_period_s, default_schedule
from api.demo.orchestrate import fit_baselines, reference_end
from api.demo.runner import live
from api.demo.shiftlog import write_shift_logs
from api.demo.simulator import Simulator, aligned_start
from api.demo.sinks import HttpSink
from api.main import create_app
from api.pipeline import worker
from api.plants import service as plants_service
from api.plants.fileformat import PlantFile, load_yaml
from api.plants.fuels import fuel_properties
from api.plants.models import Unit
from api.readings.models import Reading
from api.results.models import ResultValue
from engine.catalogue import ModelContext, get_kind
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.uncertainty import InputUncertainty, propagate

DAYS = 4.0
NOW_MS = int(pd.Timestamp("2026-02-16T00:00:00Z").value // 1_000_000)
"""A fixed 'now' (a February night): the test does not depend on the day it runs."""
INTERVAL_MS = 300_000
CONSISTENCY = int(
    Flag.NEGATIVE_ENTROPY_GENERATION
    | Flag.EFFICIENCY_ABOVE_ONE
    | Flag.ABOVE_CARNOT
    | Flag.ISENTROPIC_ABOVE_ONE
    | Flag.ENERGY_BALANCE_OPEN
    | Flag.DIRECT_INDIRECT_DISAGREE
    | Flag.NEGATIVE_UNACCOUNTED_DESTRUCTION
)
"""Every engine flag that says the measurements tell an impossible story."""


def _fault(schedule: list[Fault], kind: str, target: str) -> Fault:
    return next(f for f in schedule if f.kind == kind and (f.unit == target or target in f.tags))


def _results(session_factory) -> dict[str, pd.DataFrame]:
    with session_factory() as session:
        units = {u.id: u.slug for u in session.scalars(select(Unit))}
        rows = session.execute(
            select(ResultValue.unit_id, ResultValue.metric, ResultValue.t_ms, ResultValue.value)
        ).all()
    frame = pd.DataFrame(rows, columns=["unit", "metric", "t_ms", "value"])
    frame["value"] = frame["value"].astype(float)
    return {
        units[unit]: group.pivot(index="t_ms", columns="metric", values="value").sort_index()
        for unit, group in frame.groupby("unit")
    }


@pytest.fixture(scope="module")
def story(tmp_path_factory):
    url = f"sqlite:///{tmp_path_factory.mktemp('demo') / 'demo.db'}"
    migrate.upgrade(url)
    engine = create_db_engine(url)
    factory = make_session_factory(engine)
    with factory() as session:
        applied = plants_service.apply_plant(
            session=session,
            document=load_yaml(PLANT_FILE.read_text(encoding="utf-8")),
            default_interval_s=60,
        )
        _, ingest_key = auth_service.create_key(session=session, name="sim", scopes=["ingest"])
        _, admin_key = auth_service.create_key(session=session, name="adm", scopes=["admin"])
    settings = Settings(database_url=url, embedded_worker=False)
    app = create_app(settings, session_factory=factory, mount_dashboard=False)
    start = aligned_start(NOW_MS, DAYS, 300)
    end = start + int(DAYS * 86_400_000)
    schedule = default_schedule(DAYS)
    sim = Simulator(start_ms=start, faults=schedule, seed=7)
    clean_end = reference_end(start, DAYS, 300)
    with TestClient(app) as client:
        sink = HttpSink(client, PLANT_SLUG, ingest_key)
        t_ms = sim.times(start, end)
        generated = sim.generate(t_ms)
        readings = generated.readings
        # As lostwork demo does: the reference period, computed; baselines on it; the
        # rest, computed with them.
        totals = sink.send(readings[readings.index < clean_end])
        worker.run_once(factory)
        baselines = fit_baselines(factory, start, clean_end)
        rest = sink.send(readings[readings.index >= clean_end])
        for name in ("received", "stored", "rejected"):
            setattr(totals, name, getattr(totals, name) + getattr(rest, name))
        worker.run_once(factory)
        again = sink.send(readings)
        yield SimpleNamespace(
            factory=factory,
            client=client,
            sink=sink,
            admin={"Authorization": f"Bearer {admin_key}"},
            applied=applied,
            sim=sim,
            schedule=schedule,
            start=start,
            end=end,
            clean_end=clean_end,
            baselines=baselines,
            generated=generated,
            totals=totals,
            again=again,
            results=_results(factory),
            no_fault=Simulator(start_ms=start, faults=[], seed=7).generate(t_ms).truth,
        )
    engine.dispose()


# --- the plant file -------------------------------------------------------------------


def test_demo_plant_file_applies_cleanly_and_idempotently(session) -> None:
    # On the suite's databases (SQLite and PostgreSQL).
    document = load_yaml(PLANT_FILE.read_text(encoding="utf-8"))
    first = plants_service.apply_plant(session=session, document=document, default_interval_s=60)
    created = first.created
    assert sum(c.startswith("unit ") for c in created) == 5
    assert sum(c.startswith("tag ") for c in created) == 50
    assert sum(c.startswith("rule ") for c in created) == 11
    assert {"fuel site-gas", "fuel forest-chips"} <= set(created)
    second = plants_service.apply_plant(session=session, document=document, default_interval_s=60)
    assert (second.changed, second.created, second.updated) == (False, [], [])


def test_demo_fuels_are_the_engines_composition_fuels() -> None:
    # The heat-loss method needs the composition: the plant file gives it, and the
    # service builds the same properties the simulator burns.
    doc = PlantFile.model_validate(load_yaml(PLANT_FILE.read_text(encoding="utf-8")))
    gas = fuel_properties("site-gas", doc.fuels["site-gas"], atmosphere_pa=100_900.0)
    chips = fuel_properties("forest-chips", doc.fuels["forest-chips"], atmosphere_pa=100_900.0)
    assert gas.ultimate is not None and chips.ultimate is not None
    # Typical pipeline gas: HHV about 52 MJ/kg, density about 0.78 kg/Nm3 (common
    # practice); wet chips at 40 % moisture about 12 MJ/kg as received (common practice).
    assert gas.hhv_j_per_kg == pytest.approx(51.85e6, rel=1e-3)
    assert gas.density_kg_per_m3 == pytest.approx(0.776, rel=1e-3)
    assert chips.hhv_j_per_kg == pytest.approx(12.21e6, rel=1e-3)


# --- the REST backfill ----------------------------------------------------------------


def test_backfill_through_rest_is_complete_and_idempotent(story) -> None:
    expected = int(np.isfinite(story.generated.readings.to_numpy()).sum())
    t = story.totals
    assert (t.received, t.stored, t.rejected, t.errors) == (expected, expected, 0, [])
    a = story.again
    assert (a.received, a.stored, a.replaced, a.unchanged) == (expected, 0, 0, expected)


# --- recovery of the efficiencies -----------------------------------------------------


def _propagated_u(story, unit: str, metric: str, t_ms: np.ndarray) -> np.ndarray:
    """Random standard uncertainty of ``metric`` per interval from the noise model."""
    sim = story.sim
    doc = PlantFile.model_validate(load_yaml(PLANT_FILE.read_text(encoding="utf-8")))
    spec = doc.units[unit]
    kind = get_kind(spec.kind)
    readings = story.generated.readings.loc[t_ms]
    inputs, noise = {}, {}
    for role, tag in spec.inputs.items():
        tag_spec = sim.tags[tag]
        si_unit = kind.role(role).unit
        raw = readings[tag].to_numpy()
        to_si = np.asarray(measure.to_si(raw, tag_spec.unit, si_unit, sim.atmosphere_pa))
        moved = np.asarray(
            measure.to_si(
                raw + tag_spec.noise_sigma(raw), tag_spec.unit, si_unit, sim.atmosphere_pa
            )
        )
        inputs[role] = to_si
        noise[role] = InputUncertainty(random=np.abs(moved - to_si))
    frame = pd.DataFrame(inputs, index=pd.Index(t_ms))
    t0 = readings["SITE.amb.temp"].to_numpy() + 273.15
    context = ModelContext(
        dead_state(t0, sim.atmosphere_pa), sim.fuels.get(spec.fuel) if spec.fuel else None
    )
    propagation = propagate(kind, frame, sim.parameters[unit], context, noise)
    return propagation.table()[f"u_random_{metric}"].to_numpy()


@pytest.mark.parametrize(
    ("unit", "metric"),
    [
        ("gb1", "eta_1"),
        ("gb2", "eta_1"),
        ("bb3", "eta_1"),
        ("bb3", "eta_1_indirect"),
        ("tg1", "section1_isentropic_efficiency"),
        ("tg1", "section2_isentropic_efficiency"),
        ("tg2", "section1_isentropic_efficiency"),
    ],
)
def test_pipeline_recovers_the_simulated_efficiency_within_the_noise(story, unit, metric) -> None:
    clean_end = story.start + int(clean_period_s(DAYS)[1] * 1000)
    computed = story.results[unit][metric]
    computed = computed[computed.index < clean_end].dropna()
    truth_metric = "eta_1" if metric == "eta_1_indirect" else metric
    truth = story.generated.truth[unit][truth_metric].reindex(computed.index)
    t_ms = computed.index.to_numpy()
    u = _propagated_u(story, unit, metric, t_ms)
    error = computed.to_numpy() - truth.to_numpy()
    n = error.size
    assert n >= 390  # 35 % of 4 days at 5 min = 403 intervals
    assert np.all(u > 0)
    z = error / u
    assert np.max(np.abs(z)) < 5.0
    assert abs(error.mean()) < 4.0 * np.sqrt(np.mean(u**2) / n)
    assert 0.75 < np.std(z) < 1.25


# --- faults --------------------------------------------------------------------------


def _flags(story, unit: str) -> pd.Series:
    return story.results[unit]["flags"].fillna(0).astype(np.int64)


def test_clean_period_raises_no_consistency_flag_and_no_alert(story) -> None:
    clean_end = story.start + int(clean_period_s(DAYS)[1] * 1000)
    for unit in story.results:
        flags = _flags(story, unit)
        clean = flags[flags.index < clean_end]
        assert len(clean) >= 400, unit
        assert int((clean & CONSISTENCY).max()) == 0, unit
        assert int((clean & int(Flag.INPUT_OUT_OF_RANGE)).max()) == 0, unit
    with story.factory() as session:
        alerts, _ = alerts_service.list_alerts(session=session, plant=PLANT_SLUG, limit=500)
    began = [int(a.began_at.timestamp() * 1000) for a in alerts]
    first_fault = story.start + int(min(f.start_s for f in story.schedule) * 1000)
    assert began and min(began) >= first_fault  # none in the reference period or after it


def test_feedwater_meter_bias_is_flagged_as_negative_entropy_generation(story) -> None:
    """The bb3 feedwater meter reads 25 % low; it is also tg2's inlet flow meter.

    Why this meter fault and not one in the boiler alone: the boiler model's entropy
    balance gives T0 Sgen = exergy supplied - water exergy gain identically, so a
    feedwater bias (which moves the water side by the feedwater's small flow exergy)
    cannot make it negative; the boiler instead flags its open mass balance and the
    disagreement of its direct and indirect efficiencies. In the back-pressure turbine
    the same low flow makes the steam give less energy than the generator delivered:
    Q0 = m (h_in - h_out) - P < 0, and Sgen = m (s_out - s_in) + Q0 / T0 turns negative
    once the bias exceeds the turbine's own lost work (about 16 % here).
    """
    bias = _fault(story.schedule, "meter_bias", "BB3.fw.flow")
    lo = story.start + int(bias.start_s * 1000)
    hi = story.start + int(bias.end_s * 1000)
    # bb3's direct efficiency rises only 3-4 points (the feedwater carries a seventh of
    # the steam's enthalpy), within twice the standard uncertainty of the direct-indirect
    # difference (about 0.025: fuel weigher 2 %, solid-fuel heating value 1.5 %, steam
    # meter 1.5 %), so DIRECT_INDIRECT_DISAGREE, judged against it (issue 10), stays off.
    for unit, expected in (
        ("tg2", Flag.NEGATIVE_ENTROPY_GENERATION | Flag.ENERGY_BALANCE_OPEN),
        ("bb3", Flag.ENERGY_BALANCE_OPEN),
    ):
        flags = _flags(story, unit)
        # Stated delay: the first interval starting at or after the fault, none later.
        inside = flags[(flags.index >= lo) & (flags.index < hi - INTERVAL_MS)]
        assert len(inside) >= 10
        assert ((inside & int(expected)) == int(expected)).all(), unit
        outside = flags[(flags.index < lo - INTERVAL_MS) | (flags.index >= hi + INTERVAL_MS)]
        assert int((outside & int(Flag.NEGATIVE_ENTROPY_GENERATION)).max()) == 0
    sgen = story.results["tg2"]["sgen_w_per_k"]
    assert sgen[(sgen.index >= lo) & (sgen.index < hi - INTERVAL_MS)].max() < 0


def _drop(story, unit: str, metric: str, lo: int, hi: int) -> tuple[float, float]:
    """Mean of (computed - no-fault truth) over [lo, hi), and the same from the truth."""
    computed = story.results[unit][metric]
    window = computed[(computed.index >= lo) & (computed.index < hi)].dropna()
    baseline = story.no_fault[unit][metric].reindex(window.index)
    truth = story.generated.truth[unit][metric].reindex(window.index)
    return float((window - baseline).mean()), float((truth - baseline).mean())


def test_fouling_shows_as_a_falling_efficiency_within_the_stated_delay(story) -> None:
    fouling = _fault(story.schedule, "fouling", "gb1")
    # Result-level signal: gb1's eta_1 against the same plant without the fault. By the
    # end of the ramp the stack is 35 K hotter: common practice puts that at 1.5-1.8
    # efficiency points for natural gas.
    end_drop, end_truth = _drop(story, "gb1", "eta_1", story.end - 6 * 3_600_000, story.end)
    assert -0.018 < end_truth < -0.014
    assert end_drop == pytest.approx(end_truth, abs=0.002)  # 4 sigma of a 6-hour mean
    # Stated delay: a 2-hour mean first falls 4 sigma (0.0032; one interval's sigma is
    # about 0.0039, see the recovery test) below the no-fault plant by the time the ramp
    # has reached 30 % (about 10 K of stack temperature).
    eta = story.results["gb1"]["eta_1"]
    delta = (eta - story.no_fault["gb1"]["eta_1"].reindex(eta.index)).dropna()
    two_hours = delta.rolling(24).mean()
    seen = two_hours[two_hours < -0.0032].index.min()
    onset = story.start + int(fouling.start_s * 1000)
    assert onset < seen <= onset + int(0.30 * fouling.ramp_s * 1000)
    with story.factory() as session:
        alerts, _ = alerts_service.list_alerts(session=session, rule="gb1-stack-loss-high")
    assert len(alerts) == 1 and alerts[0].status == "firing"


def test_excess_air_drift_shows_in_excess_air_and_efficiency(story) -> None:
    drift = _fault(story.schedule, "excess_air", "gb2")
    full = story.start + int((drift.start_s + drift.ramp_s) * 1000)
    excess = story.results["gb2"]["excess_air"]
    after = excess[excess.index >= full].dropna()
    truth = story.generated.truth["gb2"]["excess_air"].reindex(after.index)
    u = _propagated_u(story, "gb2", "excess_air", after.index.to_numpy())
    assert np.max(np.abs((after - truth).to_numpy()) / u) < 5.0  # recovered from the O2 reading
    assert after.min() > 0.30  # the rule's limit
    eta_drop, eta_truth = _drop(story, "gb2", "eta_1", full, story.end)
    assert eta_truth < -0.005 and eta_drop == pytest.approx(eta_truth, abs=0.0015)
    with story.factory() as session:
        alerts, _ = alerts_service.list_alerts(session=session, rule="gb2-excess-air-high")
    onset = story.start + int(drift.start_s * 1000)
    assert len(alerts) == 1
    began = int(alerts[0].began_at.timestamp() * 1000)
    assert onset < began < full  # fires during the ramp, not after it


def test_turbine_wear_shows_as_a_lower_section_efficiency(story) -> None:
    wear = _fault(story.schedule, "turbine_wear", "tg1")
    full = story.start + int((wear.start_s + wear.ramp_s) * 1000)
    drop, truth = _drop(story, "tg1", "section1_isentropic_efficiency", full, story.end)
    assert truth == pytest.approx(-0.05, abs=1e-9)  # the size, fully reached
    assert drop == pytest.approx(-0.05, abs=0.001)
    # The other section is untouched.
    other, _ = _drop(story, "tg1", "section2_isentropic_efficiency", full, story.end)
    assert abs(other) < 0.002
    with story.factory() as session:
        alerts, _ = alerts_service.list_alerts(session=session, rule="tg1-hp-section-low")
    assert len(alerts) == 1


def test_stuck_transmitter_repeats_one_value_and_opens_the_mass_balance(story) -> None:
    stuck = _fault(story.schedule, "stuck", "GB2.steam.flow")
    lo = story.start + int(stuck.start_s * 1000)
    hi = story.start + int(stuck.end_s * 1000)
    readings = story.generated.readings["GB2.steam.flow"]
    inside = readings[(readings.index >= lo) & (readings.index < hi)]
    assert inside.nunique() == 1 and readings[readings.index < lo].nunique() > 100
    # Visible once the load has moved more than the 2 % mass-balance tolerance away
    # from the frozen value; the daily load cycle does that within 3 hours here.
    flags = _flags(story, "gb2")
    opened = flags[(flags.index >= lo) & ((flags & int(Flag.ENERGY_BALANCE_OPEN)) != 0)]
    assert lo <= opened.index.min() <= lo + 3 * 3_600_000
    with story.factory() as session:
        alerts, _ = alerts_service.list_alerts(session=session, rule="gb2-physics")
    assert alerts and all(
        lo <= int(a.began_at.timestamp() * 1000) < hi + INTERVAL_MS for a in alerts
    )


def test_baselines_fitted_on_the_clean_period_drive_drift_and_cusum_alerts(story) -> None:
    assert [line.endswith(", active") for line in story.baselines[1:]] == [True] * 5
    with story.factory() as session:
        drift, _ = alerts_service.list_alerts(session=session, rule="gb1-efficiency-drift")
        cusum, _ = alerts_service.list_alerts(session=session, rule="tg1-hp-section-cusum")
    fouling = _fault(story.schedule, "fouling", "gb1")
    onset = story.start + int(fouling.start_s * 1000)
    # Drift from the baseline measures the fault: over the intervals from 30 % of the
    # ramp on where the baseline predicts (not extrapolated; 1.4 reference days cover
    # only part of the loads and weather that follow), the mean relative drift equals
    # the fault's true relative effect within 0.3 % (the baseline's CV(RMSE) is about
    # 0.5 % per interval; its fit error on the mean is smaller).
    drift_rel = story.results["gb1"]["drift_rel_eta_1"]
    window = drift_rel[drift_rel.index >= onset + int(0.3 * fouling.ramp_s * 1000)].dropna()
    assert len(window) >= 50
    truth = story.generated.truth["gb1"]["eta_1"].reindex(window.index)
    no_fault = story.no_fault["gb1"]["eta_1"].reindex(window.index)
    effect = float(((truth - no_fault) / no_fault).mean())
    assert effect < -0.005
    assert float(window.mean()) == pytest.approx(effect, abs=0.003)
    # The drift rule (below -1 % for 30 min) needs predicted intervals deeper into the
    # ramp than these four days give; it fires in lostwork demo's 60 days.
    assert drift == [] or int(drift[0].began_at.timestamp() * 1000) > onset
    # CUSUM (Page) on tg1's first section: the first alarm within half the wear ramp
    # (2.5 efficiency points, about ten residual standard deviations of 0.25 %). A ramp
    # alone would be caught within an hour or two of reaching the reference value; the
    # margin is for the intervals the short reference period leaves unpredicted
    # (extrapolated loads), which the chart skips. Measured here: 31 % of the ramp.
    wear = _fault(story.schedule, "turbine_wear", "tg1")
    wear_onset = story.start + int(wear.start_s * 1000)
    first = min(int(a.began_at.timestamp() * 1000) for a in cusum)
    assert wear_onset <= first <= wear_onset + int(0.5 * wear.ramp_s * 1000)


def test_data_gap_leaves_the_chip_line_without_results(story) -> None:
    gap = next(f for f in story.schedule if f.kind == "gap" and f.end_s <= DAYS * DAY_S)
    lo = story.start + int(gap.start_s * 1000)
    hi = story.start + int(gap.end_s * 1000)
    # Intervals starting after the gap began and ending before it ended have no data
    # (a reading holds for one interval, so the interval holding the last one is full).
    first = -(-lo // INTERVAL_MS) * INTERVAL_MS
    inside = np.arange(first, hi - INTERVAL_MS + 1, INTERVAL_MS)
    assert inside.size >= 20
    for unit, metric in (("bb3", "eta_1"), ("tg2", "section1_isentropic_efficiency")):
        series = story.results[unit][metric]
        assert series.reindex(inside).isna().all(), unit
        after = -(-hi // INTERVAL_MS) * INTERVAL_MS  # holds the first reading after the gap
        assert series.reindex([first - INTERVAL_MS, after]).notna().all(), unit
    # bb3 keeps rows there (its humidity input, a site tag, still reports), marked thin.
    flags = _flags(story, "bb3").reindex(inside)
    assert (flags & (1 << 16)).all()  # THIN_DATA, api.pipeline.quality.DataFlag


def test_live_gap_fires_and_resolves_the_staleness_rule(story) -> None:
    live_gap = max((f for f in story.schedule if f.kind == "gap"), key=lambda f: f.start_s)
    gap_start = story.start + int(live_gap.start_s * 1000)
    gap_end = story.start + int(live_gap.end_s * 1000)
    assert gap_start > story.end  # in the live phase

    def push(from_ms: int, until_ms: int) -> None:
        # The live loop with a clock standing at until_ms: it sends every instant due.
        live(
            story.sim,
            story.sink,
            from_ms,
            step_s=60.0,
            stop=threading.Event(),
            until_ms=until_ms,
            clock=lambda: until_ms / 1000.0,
        )

    def utc(t_ms: int) -> dt.datetime:
        return dt.datetime.fromtimestamp(t_ms / 1000, dt.UTC)

    check = gap_start + 10 * 60_000
    push(story.end, check)
    with story.factory() as session:
        fired, _ = evaluate_staleness(session, now=utc(check))
        alerts, _ = alerts_service.list_alerts(session=session, rule="chip-line-silent")
    assert fired == 1 and [a.status for a in alerts] == ["firing"]
    # The stale condition began when the last reading before the gap grew 5 min old.
    began = int(alerts[0].began_at.timestamp() * 1000)
    assert gap_start <= began <= gap_start + 5 * 60_000 + 60_000
    after = gap_end + 3 * 60_000
    push(check, after)
    with story.factory() as session:
        _, resolved = evaluate_staleness(session, now=utc(after))
        alerts, _ = alerts_service.list_alerts(session=session, rule="chip-line-silent")
    assert resolved == 1 and [a.status for a in alerts] == ["resolved"]


# --- shift logs -----------------------------------------------------------------------


def _upload(story, path: Path) -> dict:
    response = story.client.post(
        "/api/v1/uploads",
        data={"plant": PLANT_SLUG},
        files={"file": (path.name, path.read_bytes(), "text/csv")},
        headers=story.admin,
    )
    assert response.status_code == 201, response.text
    return response.json()


def test_shift_logs_upload_with_zero_errors_and_fill_the_gap(story, tmp_path) -> None:
    paths = write_shift_logs(story.sim, story.end - 86_400_000, story.end, tmp_path)
    assert [p.name.split("_")[0] for p in paths] == ["control-room", "field-round"]
    control, field = (_upload(story, p) for p in paths)
    for report in (control, field):
        assert (report["rejected"], report["errors"]) == (0, [])
    assert control["stored"] + control["replaced"] + control["unchanged"] == 24 * 35
    assert field["stored"] + field["replaced"] + field["unchanged"] == 24 * 15
    # The historian's outage of the chip line is in that day: the operators' hourly
    # readings of it are new.
    gap = next(f for f in story.schedule if f.kind == "gap" and f.end_s <= DAYS * DAY_S)
    hours_in_gap = len(
        story.sim.times(
            story.start + int(gap.start_s * 1000), story.start + int(gap.end_s * 1000), 3600
        )
    )
    assert field["stored"] == 15 * hours_in_gap
    assert "semicolon separator, decimal ','" in control["notices"][0]["message"]


def test_shift_log_across_the_autumn_clock_change_lands_on_its_instants(story, tmp_path) -> None:
    # Europe/Lisbon leaves summer time on 2026-10-25 at 01:00 UTC (02:00 local becomes
    # 01:00): the hour 01:00-02:00 local is written twice, in order (IANA tz database).
    start = int(pd.Timestamp("2026-10-24T20:00:00Z").value // 1_000_000)
    sim = Simulator(start_ms=start, faults=[], seed=3)
    paths = write_shift_logs(sim, start, start + 8 * 3_600_000, tmp_path, step_s=900)
    control = paths[0]  # the gas line's sheet: ';', decimal commas, DD.MM.YYYY
    lines = control.read_text(encoding="utf-8").splitlines()
    local_times = [line.split(";")[0] for line in lines[1:]]
    assert local_times.count("25.10.2026 01:15") == 2
    report = _upload(story, control)
    assert (report["rejected"], report["errors"]) == (0, [])
    with story.factory() as session:
        tag_id = session.execute(
            select(Reading.tag_id, Reading.t_ms).where(Reading.t_ms >= start)
        ).first()[0]
        stored = session.scalars(
            select(Reading.t_ms).where(Reading.tag_id == tag_id, Reading.t_ms >= start)
        ).all()
    assert sorted(stored) == sim.times(start, start + 8 * 3_600_000, 900).tolist()
