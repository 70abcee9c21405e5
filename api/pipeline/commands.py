"""``lostwork worker`` and ``lostwork recompute`` (registered by :mod:`api.cli`)."""

from __future__ import annotations

import datetime as dt
import logging
import signal
import threading
import time
from typing import Annotated, Any

import typer

from api.pipeline import queue
from api.pipeline.worker import POLL_SECONDS, Options, WorkerThread, default_owner, run_once


def _session_factory():  # type: ignore[no-untyped-def]
    from api.core.config import get_settings
    from api.core.db import create_db_engine, make_session_factory

    return make_session_factory(create_db_engine(get_settings().database_url))


def _setup_logging() -> None:
    from api.core.config import get_settings

    logging.basicConfig(
        level=get_settings().log_level,
        format="%(asctime)s %(levelname)s %(name)s: %(message)s",
    )


def worker(
    once: Annotated[
        bool, typer.Option("--once", help="Process what is queued now, then exit")
    ] = False,
    poll: Annotated[float, typer.Option(help="Seconds between looks at an empty queue")] = 2.0,
    owner: Annotated[
        str | None, typer.Option(help="Lease owner name (default host:pid:id)")
    ] = None,
) -> None:
    """Run a compute worker (several may run at once on PostgreSQL). Stops on Ctrl-C or
    SIGTERM after its current chunk, releasing its span (a second Ctrl-C stops at once)."""
    _setup_logging()
    factory = _session_factory()
    owner = owner or default_owner()
    typer.echo(f"worker {owner}: started")
    if once:
        done = run_once(factory, owner)
        typer.echo(f"worker {owner}: stopped after {done} span(s)")
        return
    thread = WorkerThread(factory, owner=owner, poll_seconds=poll)
    in_main = threading.current_thread() is threading.main_thread()
    previous: dict[signal.Signals, Any] = {}
    if in_main:

        def graceful(signum: int, _frame: object) -> None:
            if thread.stopping and signum == signal.SIGINT:
                raise KeyboardInterrupt  # a second Ctrl-C: leave at once (the lease expires)
            typer.echo(f"worker {owner}: stopping after the current chunk", err=True)
            thread.request_stop()

        for which in (signal.SIGTERM, signal.SIGINT):
            previous[which] = signal.signal(which, graceful)
    thread.start()
    try:
        while thread.is_alive():
            thread.join(0.5)
    except KeyboardInterrupt:
        pass
    finally:
        for which, handler in previous.items():
            signal.signal(which, handler)
    typer.echo(f"worker {owner}: stopped after {thread.spans_done} span(s)")


def _parse_time(text: str, option: str) -> int:
    try:
        moment = dt.datetime.fromisoformat(text)
    except ValueError:
        raise typer.BadParameter(f"{text!r} is not an RFC 3339 time", param_hint=option) from None
    if moment.tzinfo is None:
        raise typer.BadParameter(
            f"{text!r} has no UTC offset; add 'Z' or '+hh:mm'", param_hint=option
        )
    return int(round(moment.timestamp() * 1000))


def recompute(
    unit: Annotated[str, typer.Option(help="Unit slug")],
    from_: Annotated[
        str | None,
        typer.Option("--from", help="RFC 3339 start; default: the unit's first reading"),
    ] = None,
    to: Annotated[
        str | None,
        typer.Option("--to", help="RFC 3339 end (exclusive); default: after its last reading"),
    ] = None,
    wait: Annotated[
        bool,
        typer.Option("--wait", help="Only queue, and follow the running workers' progress"),
    ] = False,
    timeout: Annotated[
        float | None, typer.Option(help="Give up waiting after this many seconds")
    ] = None,
) -> None:
    """Queue a unit's results for recomputation and show a progress bar until done."""
    from tqdm import tqdm

    from api.core.db import utcnow
    from api.core.problems import NotFound
    from api.plants.service import get_unit, load_unit_config
    from api.readings.dirty import align, mark_units_dirty, reading_range

    _setup_logging()
    factory = _session_factory()
    with factory() as session:
        try:
            row = get_unit(session=session, slug=unit)
        except NotFound as exc:
            typer.secho(exc.detail, fg=typer.colors.RED, err=True)
            raise typer.Exit(1) from None
        config = load_unit_config(session=session, unit_id=row.id)
        interval_ms = config.interval_seconds * 1000
        tags = set(config.bindings.values()) | (
            {config.ambient_tag_id} if config.ambient_tag_id else set()
        )
        stored = reading_range(session=session, tag_ids=tags)
        if (from_ is None or to is None) and stored is None:
            typer.echo(f"unit {unit}: no readings stored; nothing to recompute")
            return
        lo = _parse_time(from_, "--from") if from_ else stored[0]  # type: ignore[index]
        hi = _parse_time(to, "--to") - 1 if to else stored[1]  # type: ignore[index]
        if hi < lo:
            typer.secho("--from must be before --to", fg=typer.colors.RED, err=True)
            raise typer.Exit(1)
        start, end = align(lo, hi, interval_ms)
        queued_at = utcnow()
        mark_units_dirty(session=session, spans=[(row.id, start, end)], reason="recompute")
        session.commit()
    total = (end - start) // interval_ms
    typer.echo(f"unit {unit}: {total} interval(s) queued for recompute")

    def outstanding() -> tuple[int, int]:
        with factory() as s:
            return queue.outstanding_ms(s, row.id, start, end, failed_since=queued_at)

    deadline = None if timeout is None else time.monotonic() + timeout
    bar = tqdm(total=total, unit="interval", desc=unit, dynamic_ncols=True)
    failed = 0
    try:
        while True:
            remaining, failed = outstanding()
            bar.n = total - remaining // interval_ms
            bar.refresh()
            if remaining == 0 or failed:
                break
            if deadline is not None and time.monotonic() > deadline:
                break
            if not wait:
                run_once(
                    factory,
                    unit_id=row.id,
                    options=Options(),
                    after_chunk=lambda *_: _refresh(bar, total, outstanding, interval_ms),
                )
                if outstanding()[0] == 0:
                    continue
            time.sleep(POLL_SECONDS)
    finally:
        bar.close()
    if failed:
        typer.secho(
            f"unit {unit}: recompute failed; see `last_error` of its failed work spans",
            fg=typer.colors.RED,
            err=True,
        )
        raise typer.Exit(1)
    if remaining:
        typer.echo(f"unit {unit}: {remaining // interval_ms} interval(s) still queued")
        raise typer.Exit(2)
    typer.echo(f"unit {unit}: recompute done")


def _refresh(bar, total: int, outstanding, interval_ms: int) -> None:  # type: ignore[no-untyped-def]
    bar.n = total - outstanding()[0] // interval_ms
    bar.refresh()


def register(app: typer.Typer) -> None:
    """Add the pipeline's commands to the ``lostwork`` CLI."""
    app.command("worker")(worker)
    app.command("recompute")(recompute)
