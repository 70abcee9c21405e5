"""``lostwork demo``: from an empty database to a running plant story in one command.

Steps, each printed with its duration:

1. apply the demo plant file (units, tags, alert rules; idempotent);
2. create an admin key (printed) and an ingest key for the simulator;
3. start a webhook receiver on 127.0.0.1 that verifies and prints what arrives, and
   subscribe it (alerts raised while history is computed are delivered once the server
   runs) — when the webhooks domain is installed;
4. backfill ``days`` of history through the ingest service in this process (the same
   validation, conversion and queueing as ``POST /api/v1/readings/columnar``, without
   HTTP: the server is not up yet);
5. compute it with the pipeline worker in this process, showing progress, in two parts:
   the clean reference period first; then baselines are fitted on it and activated
   (:data:`BASELINES`); then the rest, computed once with expected values, drift and
   CUSUM (with ``progressive``, everything is left to the server's embedded worker, no
   baselines are fitted, and the server starts at once);
7. serve the API and dashboard, with the live simulator sending a sample every
   ``step_s`` through the REST API, until Ctrl-C stops everything.
"""

from __future__ import annotations

import importlib.util
import logging
import signal
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import httpx
import pandas as pd
import typer
from sqlalchemy.orm import Session, sessionmaker

from api.core.config import Settings
from api.demo import PLANT_FILE, PLANT_SLUG
from api.demo.faults import Fault, clean_period_s, default_schedule
from api.demo.runner import backfill, live
from api.demo.simulator import Simulator, aligned_start
from api.demo.sinks import HttpSink, ServiceSink

log = logging.getLogger("lostwork.demo")

RECEIVER_PORT = 9000
DEMO_SUBSCRIPTION = "lostwork demo receiver"


def _echo(text: str) -> None:
    typer.echo(text)


def _utc(t_ms: int) -> str:
    return f"{pd.Timestamp(t_ms, unit='ms', tz='UTC'):%Y-%m-%d %H:%M}Z"


@dataclass
class DemoPlan:
    """What a demo run does; the defaults are ``make demo``'s."""

    days: float = 60.0
    seed: int = 7
    speed: float = 1.0
    step_s: float = 60.0
    progressive: bool = False
    serve: bool = True
    port: int | None = None
    receiver_port: int = RECEIVER_PORT


def apply_demo_plant(session_factory: sessionmaker[Session], default_interval_s: int) -> Any:
    from api.plants import service
    from api.plants.fileformat import load_yaml

    with session_factory() as session:
        return service.apply_plant(
            session=session,
            document=load_yaml(PLANT_FILE.read_text(encoding="utf-8")),
            default_interval_s=default_interval_s,
        )


def create_keys(session_factory: sessionmaker[Session]) -> tuple[str, str]:
    """(admin key, ingest key), plaintext; shown once."""
    from api.auth import service

    with session_factory() as session:
        _, admin = service.create_key(session=session, name="demo admin", scopes=["admin"])
        _, ingest = service.create_key(session=session, name="demo simulator", scopes=["ingest"])
    return admin, ingest


class DemoReceiver:
    """The webhook receiver of :mod:`api.webhooks.receiver` in a thread, printing events."""

    def __init__(self, port: int, secret: str) -> None:
        from api.webhooks.receiver import Receiver, describe

        def on_event(msg_id: str, payload: dict) -> None:
            _echo(f"  [webhook] {payload.get('occurred_at', '')}  {describe(payload)}")

        def on_reject(reason: str) -> None:
            _echo(f"  [webhook] rejected a request: {reason}")

        try:
            self.server = Receiver(("127.0.0.1", port), [secret], on_event, on_reject)
        except OSError:  # the port is taken: any free one will do
            self.server = Receiver(("127.0.0.1", 0), [secret], on_event, on_reject)
        self.url = f"http://127.0.0.1:{self.server.server_address[1]}/"
        self.thread = threading.Thread(
            target=self.server.serve_forever, kwargs={"poll_interval": 0.2}, daemon=True
        )

    def start(self) -> None:
        self.thread.start()

    def stop(self) -> None:
        self.server.shutdown()
        self.server.server_close()


def subscribe_receiver(
    session_factory: sessionmaker[Session], settings: Settings, url: str, secret: str
) -> int:
    """Replace the demo's earlier subscriptions by one to ``url``; returns its id."""
    from sqlalchemy import select

    from api.webhooks import service
    from api.webhooks.models import WebhookSubscription
    from api.webhooks.schemas import SubscriptionCreate

    with session_factory() as session:
        old = session.scalars(
            select(WebhookSubscription).where(WebhookSubscription.description == DEMO_SUBSCRIPTION)
        ).all()
        for subscription in old:
            service.delete_subscription(session=session, subscription_id=subscription.id)
        created = service.create_subscription(
            session=session,
            body=SubscriptionCreate(url=url, secret=secret, description=DEMO_SUBSCRIPTION),
            allow_list=settings.webhook_allow_list,
        )
        return created.id


def compute_backlog(
    session_factory: sessionmaker[Session],
    stop: threading.Event,
    progress: Callable[[int], None] | None = None,
) -> int:
    """Run the pipeline worker here until the queue is empty; returns chunks computed."""
    from api.pipeline import worker

    done = 0

    def after_chunk(_claim: Any, _start: int, _end: int) -> None:
        nonlocal done
        done += 1
        if progress is not None:
            progress(done)

    worker.run_once(session_factory, after_chunk=after_chunk, should_stop=stop.is_set)
    return done


BASELINES: tuple[tuple[str, str, tuple[str, ...]], ...] = (
    ("gb1", "eta_1", ("ambient_temperature",)),
    ("gb2", "eta_1", ("ambient_temperature",)),
    ("bb3", "eta_1", ("ambient_temperature",)),
    ("tg1", "section1_isentropic_efficiency", ("steam_rate_kg_per_kwh",)),
    ("tg2", "section1_isentropic_efficiency", ()),
)
"""(unit, metric, extra regressors) the demo fits on the reference period; load is the
kind's own load column. The boilers' stack temperature follows the weather a little, so
their efficiency gets the ambient temperature as a second regressor. tg1's first section
follows its inlet flow, which its output alone does not fix (the extraction takes a
varying share): the steam rate adds it (R2 0.83 -> 0.94 on 21 demo days)."""


def history_start(session_factory: sessionmaker[Session]) -> int | None:
    """The earliest reading of the demo plant in the database, or None. [ms]"""
    from sqlalchemy import func, select

    from api.plants.models import Plant, Tag
    from api.readings.models import Reading

    with session_factory() as session:
        return session.scalar(
            select(func.min(Reading.t_ms))
            .join(Tag, Tag.id == Reading.tag_id)
            .join(Plant, Plant.id == Tag.plant_id)
            .where(Plant.slug == PLANT_SLUG)
        )


def has_active_baselines(session_factory: sessionmaker[Session]) -> bool:
    if importlib.util.find_spec("api.baselines.models") is None:
        return False
    from sqlalchemy import select

    from api.baselines.models import Baseline
    from api.plants.models import Plant, Unit

    with session_factory() as session:
        found = session.scalar(
            select(Baseline.id)
            .join(Unit, Unit.id == Baseline.unit_id)
            .join(Plant, Plant.id == Unit.plant_id)
            .where(Plant.slug == PLANT_SLUG, Baseline.active.is_(True))
            .limit(1)
        )
    return found is not None


def reference_end(start_ms: int, days: float, interval_s: int) -> int:
    """End of the default schedule's clean reference period, on the interval grid."""
    step = interval_s * 1000
    length = int(clean_period_s(days)[1] * 1000)
    return start_ms + -(-length // step) * step


def fit_baselines(session_factory: sessionmaker[Session], start_ms: int, end_ms: int) -> list[str]:
    """Fit and activate :data:`BASELINES` on [start, end), their charts starting at
    ``end`` (the results before it need no recompute); one line per baseline."""
    if importlib.util.find_spec("api.baselines.service") is None:
        return [
            f"baselines: not available in this build; the clean reference period is "
            f"{_utc(start_ms)} to {_utc(end_ms)}"
        ]
    from api.baselines import service
    from api.core.problems import ProblemError

    lines = [f"baselines on the reference period {_utc(start_ms)} to {_utc(end_ms)}:"]
    for unit, metric, regressors in BASELINES:
        request = service.FitRequest(
            metric=metric,
            start_ms=start_ms,
            end_ms=end_ms,
            regressors=regressors,
            note="lostwork demo: the clean reference period",
            activate=True,
            recompute_from_ms=end_ms,
        )
        with session_factory() as session:
            try:
                row, _ = service.fit(
                    session=session, unit_slug=unit, request=request, created_by="demo"
                )
            except ProblemError as exc:
                lines.append(f"  {unit} {metric}: not fitted: {exc.detail}")
                continue
            model = row.model or {}
            cv_rmse = model.get("cv_rmse")
            lines.append(
                f"  {unit} {metric}: version {row.version}, {model.get('form')} in "
                f"{row.load}, n = {model.get('n')}, CV(RMSE) "
                f"{'n/a' if cv_rmse is None else f'{100 * float(cv_rmse):.2f} %'}, active"
            )
    return lines


def _compute_with_progress(
    session_factory: sessionmaker[Session], stop: threading.Event, unit_days: float
) -> None:
    began = time.perf_counter()
    last = [began]

    def progress(done: int) -> None:
        now = time.perf_counter()
        if now - last[0] > 10.0:
            last[0] = now
            left = (now - began) / done * max(0.0, unit_days - done)
            _echo(
                f"  computing: {done} of about {unit_days:.0f} unit-days in "
                f"{now - began:.0f} s, about {left / 60:.0f} min left ..."
            )

    chunks = compute_backlog(session_factory, stop, progress)
    _echo(f"compute: {chunks} unit-day chunks in {time.perf_counter() - began:.1f} s")


def alert_summary(session_factory: sessionmaker[Session]) -> list[str]:
    if importlib.util.find_spec("api.alerts.service") is None:
        return []
    from api.alerts import service

    with session_factory() as session:
        alerts, total = service.list_alerts(session=session, plant=PLANT_SLUG, limit=50)
        lines = [f"alerts raised on the history: {total}"]
        for alert in reversed(alerts):
            began = alert.began_at.strftime("%Y-%m-%d %H:%M")
            lines.append(
                f"  {began}Z  {alert.severity:8} {alert.status:8} {alert.rule_name}: {alert.message}"
            )
    return lines


def run_demo(settings: Settings, plan: DemoPlan) -> None:
    """Prepare the demo (database already migrated) and, unless ``plan.serve`` is false,
    serve it until Ctrl-C."""
    from api.core.db import create_db_engine, make_session_factory

    port = plan.port or settings.port
    url = f"http://{settings.host}:{port}"
    webhooks = importlib.util.find_spec("api.webhooks.receiver") is not None
    if webhooks and "127.0.0.1" not in settings.webhook_allow_list:
        # The demo's receiver listens on loopback, which the address policy refuses
        # unless allow-listed; the allowance is for this process only.
        settings = settings.model_copy(
            update={"webhook_allow_list": [*settings.webhook_allow_list, "127.0.0.1"]}
        )
    engine = create_db_engine(settings.database_url)
    factory = make_session_factory(engine)
    stop = threading.Event()
    previous = {}
    if threading.current_thread() is threading.main_thread():

        def graceful(_signum: int, _frame: object) -> None:
            stop.set()

        previous[signal.SIGINT] = signal.signal(signal.SIGINT, graceful)
    receiver = None
    try:
        began = time.perf_counter()
        report = apply_demo_plant(factory, settings.interval_seconds)
        counts = {
            what: sum(item.startswith(what + " ") for item in report.created + report.updated)
            for what in ("unit", "tag", "rule", "fuel")
        }
        changed = (
            "up to date"
            if not report.changed
            else ", ".join(f"{n} {what}(s)" for what, n in counts.items() if n)
            + " created or updated"
        )
        _echo(f"plant {report.plant}: {changed} ({time.perf_counter() - began:.1f} s)")
        admin_key, ingest_key = create_keys(factory)

        if webhooks:
            from api.webhooks.signing import generate_secret

            secret = generate_secret()
            receiver = DemoReceiver(plan.receiver_port, secret)
            receiver.start()
            subscribe_receiver(factory, settings, receiver.url, secret)
            _echo(f"webhook receiver: {receiver.url} (events print here as [webhook])")
        else:
            _echo("webhooks: not available in this build; no receiver started")

        now_ms = int(time.time() * 1000)
        probe = Simulator(start_ms=now_ms, faults=[])
        start_ms = aligned_start(now_ms, plan.days, probe.interval_s)
        end_ms = start_ms + int(round(plan.days * 86_400_000))
        earlier = history_start(factory)
        if earlier is not None and earlier < start_ms + probe.interval_s * 1000:
            # A second run on the same database continues the first one's story (same
            # start, same faults); what was sent before comes back unchanged.
            step = probe.interval_s * 1000
            start_ms = earlier // step * step
            end_ms = now_ms // step * step
            _echo(f"continuing the history this database holds since {_utc(start_ms)}")
        schedule: list[Fault] = default_schedule(plan.days)
        sim = Simulator(start_ms=start_ms, faults=schedule, seed=plan.seed)
        _echo(f"history: {plan.days:g} days from {_utc(start_ms)}, with these faults:")
        for fault in schedule:
            _echo(f"  {_utc(start_ms + int(fault.start_s * 1000))}  {fault.describe()}")

        # Without --progressive: the clean reference period first, computed; baselines
        # fitted on it and activated; then the rest, computed once with the baselines
        # (expected values, drift and CUSUM from the end of the reference period).
        clean_end = reference_end(start_ms, plan.days, sim.interval_s)
        phases = (
            [(start_ms, end_ms)]
            if plan.progressive
            else [(start_ms, clean_end), (clean_end, end_ms)]
        )
        for number, (lo, hi) in enumerate(phases):
            if stop.is_set():
                break
            filled = backfill(sim, ServiceSink(factory, sim.slug), lo, hi)
            _echo(
                f"backfill {_utc(lo)} to {_utc(hi)}: {filled.totals.received:,} readings "
                f"stored in {filled.seconds:.1f} s (rejected {filled.totals.rejected})"
            )
            if plan.progressive:
                break
            _compute_with_progress(factory, stop, len(sim.unit_fuel) * (hi - lo) / 86_400_000)
            if number == 0 and not stop.is_set():
                if has_active_baselines(factory):
                    _echo("baselines: active ones kept from an earlier run")
                else:
                    for line in fit_baselines(factory, start_ms, clean_end):
                        _echo(line)
        if not plan.progressive and not stop.is_set():
            for line in alert_summary(factory):
                _echo(line)
        if stop.is_set():
            _echo("stopped before serving")
            return
        # Catch up on the minutes spent computing, so that no tag looks stale when the
        # server's staleness timer first looks; the live simulator continues from here.
        caught_up = sim.times(end_ms, int(time.time() * 1000), plan.step_s)
        if caught_up.size:
            backfill(
                sim,
                ServiceSink(factory, sim.slug),
                end_ms,
                int(caught_up[-1]) + 1,
                step_s=plan.step_s,
            )
            end_ms = int(caught_up[-1])

        _echo("")
        _echo(f"  lostwork demo: {url}   (API docs: {url}/docs)")
        _echo(f"  admin API key (shown once): {admin_key}")
        _echo(f"  try:  curl -H 'Authorization: Bearer {admin_key}' {url}/api/v1/units")
        _echo("  lostwork monitors; it does not control and is no safety system.")
        _echo("")
        if not plan.serve:
            return
        if plan.progressive:
            _echo("results are computed in the background by the server's worker")
        _serve(settings, port, sim, ingest_key, admin_key, end_ms, plan, stop)
    finally:
        if receiver is not None:
            receiver.stop()
        engine.dispose()
        for signum, handler in previous.items():
            signal.signal(signum, handler)


def _serve(
    settings: Settings,
    port: int,
    sim: Simulator,
    ingest_key: str,
    admin_key: str,
    from_ms: int,
    plan: DemoPlan,
    stop: threading.Event,
) -> None:
    """Run the server in this thread and the live simulator beside it until Ctrl-C.

    The in-process dashboard gets the admin key, so the demo's visitor can fit and
    activate baselines from the browser (the demo listens on loopback only)."""
    import uvicorn

    from api.main import create_app

    url = f"http://{settings.host}:{port}"

    def simulate_live() -> None:
        with httpx.Client(base_url=url, timeout=60.0) as client:
            for _ in range(120):  # the server is starting; a minute at most
                if stop.is_set():
                    return
                try:
                    if client.get("/api/v1/health").status_code == 200:
                        break
                except httpx.TransportError:
                    pass
                stop.wait(0.5)
            _echo(f"live: a sample every {plan.step_s:g} s at speed {plan.speed:g}")
            live(
                sim,
                HttpSink(client, sim.slug, ingest_key),
                from_ms,
                step_s=plan.step_s,
                speed=plan.speed,
                stop=stop,
            )

    feeder = threading.Thread(target=simulate_live, name="demo-live", daemon=True)
    app = create_app(settings)
    app.state.dashboard_api_key = admin_key
    server = uvicorn.Server(uvicorn.Config(app, host=settings.host, port=port, log_level="warning"))
    feeder.start()
    try:
        server.run()  # installs its own Ctrl-C handling and returns on it
    finally:
        stop.set()
        feeder.join(timeout=10)
        _echo("demo stopped")
