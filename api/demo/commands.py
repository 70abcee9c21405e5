"""``lostwork simulate`` (registered by :mod:`api.cli`)."""

from __future__ import annotations

import logging
import signal
import threading
import time
from pathlib import Path
from typing import Annotated

import typer

INGEST_KEY_ENV = "LOSTWORK_INGEST_KEY"


def _duration_s(text: str, option: str) -> float:
    from api.plants.quantities import to_si_number

    try:
        return to_si_number(text, "s", atmosphere_pa=101_325.0)
    except ValueError as exc:
        raise typer.BadParameter(f"{option}: {exc}") from None


def _print_schedule(faults, start_ms: int) -> None:  # type: ignore[no-untyped-def]
    import pandas as pd

    typer.echo(f"faults ({len(faults)}):" if faults else "faults: none")
    for fault in faults:
        when = pd.Timestamp(start_ms + int(fault.start_s * 1000), unit="ms", tz="UTC")
        typer.echo(f"  {when:%Y-%m-%d %H:%M}Z  {fault.describe()}")


def simulate(
    url: Annotated[
        str | None, typer.Option(help="Server to send readings to, e.g. http://127.0.0.1:8000")
    ] = None,
    key: Annotated[
        str | None, typer.Option(envvar=INGEST_KEY_ENV, help="API key with the ingest scope")
    ] = None,
    days: Annotated[float, typer.Option(help="History to backfill, ending now")] = 60.0,
    speed: Annotated[
        float, typer.Option(help="Live speed-up: simulated seconds per wall-clock second")
    ] = 1.0,
    seed: Annotated[int, typer.Option(help="Weather, process swings and noise")] = 7,
    faults: Annotated[
        str,
        typer.Option(help="'default', 'none', or a schedule file (YAML, see api/demo/faults.py)"),
    ] = "default",
    csv: Annotated[
        Path | None,
        typer.Option(help="Also write shift-log CSVs into this folder (for lostwork upload)"),
    ] = None,
    csv_days: Annotated[float, typer.Option(help="Days of shift log, ending now")] = 1.0,
    step: Annotated[str, typer.Option(help="Live sample period, e.g. '60 s'")] = "60 s",
    live: Annotated[
        bool, typer.Option(help="Keep sending live readings after the backfill")
    ] = True,
    live_for: Annotated[
        str | None,
        typer.Option(help="Stop the live phase after this long (wall clock), e.g. '10 min'"),
    ] = None,
) -> None:
    """Simulate the demo plant's historian: backfill history through the REST API in
    columnar batches, then push live readings; faults injected on a schedule."""
    import httpx

    from api.demo import PLANT_FILE
    from api.demo.faults import ScheduleError, load_schedule
    from api.demo.runner import backfill
    from api.demo.runner import live as live_loop
    from api.demo.shiftlog import write_shift_logs
    from api.demo.simulator import Simulator, aligned_start
    from api.demo.sinks import HttpSink, IngestRefused

    if url is None and csv is None:
        raise typer.BadParameter("give --url (and --key) to send readings, or --csv to write logs")
    if url is not None and not key:
        raise typer.BadParameter(f"--key (or {INGEST_KEY_ENV}) is needed with --url")
    if days < 0 or speed <= 0:
        raise typer.BadParameter("--days must be 0 or more and --speed above 0")
    logging.basicConfig(level=logging.INFO, format="%(asctime)s %(levelname)s %(message)s")
    logging.getLogger("httpx").setLevel(logging.WARNING)
    now_ms = int(time.time() * 1000)
    probe = Simulator(start_ms=now_ms, faults=[], plant_file=PLANT_FILE)
    start_ms = aligned_start(now_ms, days, probe.interval_s)
    end_ms = start_ms + int(round(days * 86_400_000))
    try:
        schedule = load_schedule(faults, days)
    except ScheduleError as exc:
        raise typer.BadParameter(str(exc)) from None
    sim = Simulator(start_ms=start_ms, faults=schedule, seed=seed)
    typer.echo(f"plant {sim.slug}: {len(sim.tags)} tags, interval {sim.interval_s} s")
    _print_schedule(schedule, start_ms)

    if csv is not None:
        logs_from = max(start_ms, end_ms - int(csv_days * 86_400_000))
        for path in write_shift_logs(sim, logs_from, end_ms, csv):
            typer.echo(f"shift log: {path}  (lostwork upload {path} --plant {sim.slug})")
    if url is None:
        return
    assert key is not None
    with httpx.Client(base_url=url, timeout=120.0) as client:
        sink = HttpSink(client, sim.slug, key)
        if days > 0:

            def progress(done: int, total: int) -> None:
                typer.echo(f"  backfill {done:,}/{total:,} instants", err=True)

            try:
                report = backfill(sim, sink, start_ms, end_ms, progress=progress)
            except (httpx.TransportError, IngestRefused) as exc:
                typer.secho(f"backfill stopped: {exc}", fg=typer.colors.RED, err=True)
                raise typer.Exit(code=1) from None
            t = report.totals
            typer.echo(
                f"backfill: {report.instants:,} instants, {t.received:,} readings in "
                f"{report.seconds:.1f} s ({report.readings_per_second:,.0f}/s): stored {t.stored:,}, "
                f"replaced {t.replaced:,}, unchanged {t.unchanged:,}, rejected {t.rejected:,}"
            )
            for error in t.errors:
                typer.echo(f"  - {error}", err=True)
        if not live:
            return
        stop = threading.Event()
        previous = {}
        if threading.current_thread() is threading.main_thread():

            def graceful(_signum: int, _frame: object) -> None:
                stop.set()

            for signum in (signal.SIGINT, signal.SIGTERM):
                previous[signum] = signal.signal(signum, graceful)
        until = None
        if live_for is not None:
            until = int(time.time() * 1000 + _duration_s(live_for, "--live-for") * 1000 * speed)

        def echo(due, totals) -> None:  # type: ignore[no-untyped-def]
            import pandas as pd

            last = pd.Timestamp(int(due[-1]), unit="ms", tz="UTC")
            typer.echo(
                f"live {last:%Y-%m-%d %H:%M:%S}Z: {len(due)} instant(s), "
                f"stored {totals.stored}, rejected {totals.rejected}"
            )

        typer.echo(f"live: every {step} at speed {speed:g} (Ctrl-C stops)")
        try:
            sent = live_loop(
                sim,
                sink,
                end_ms,
                step_s=_duration_s(step, "--step"),
                speed=speed,
                stop=stop,
                until_ms=until,
                on_batch=echo,
            )
        finally:
            for signum, handler in previous.items():
                signal.signal(signum, handler)
        typer.echo(f"live: stopped after {sent} instant(s)")


def register(app: typer.Typer) -> None:
    app.command("simulate")(simulate)
