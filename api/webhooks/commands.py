"""``lostwork webhook-receiver`` and ``lostwork deliver`` (registered by :mod:`api.cli`)."""

from __future__ import annotations

import json
import logging
import signal
import threading
from typing import Annotated

import typer

RECEIVER_SECRET_ENV = "LOSTWORK_RECEIVER_SECRET"


def webhook_receiver(
    secret: Annotated[
        list[str],
        typer.Option(
            envvar=RECEIVER_SECRET_ENV,
            help="Signing secret (whsec_...) of the subscription; repeat during a rotation",
        ),
    ],
    port: Annotated[int, typer.Option(help="Port on 127.0.0.1")] = 9000,
    show_json: Annotated[bool, typer.Option("--json", help="Print each payload in full")] = False,
) -> None:
    """Receive webhooks on http://127.0.0.1:PORT/, verify their signatures and print them
    (a duplicate delivery of an event id is acknowledged and not printed again)."""
    from api.webhooks.receiver import Receiver, describe

    def on_event(msg_id: str, payload: dict) -> None:
        typer.echo(f"{payload.get('occurred_at', '')}  {msg_id}  {describe(payload)}")
        if show_json:
            typer.echo(json.dumps(payload, indent=2, ensure_ascii=False))

    def on_reject(reason: str) -> None:
        typer.secho(f"rejected a request: {reason}", fg=typer.colors.RED, err=True)

    server = Receiver(("127.0.0.1", port), secret, on_event, on_reject)
    typer.echo(f"webhook receiver on http://127.0.0.1:{server.server_address[1]}/ (Ctrl-C stops)")
    try:
        server.serve_forever(poll_interval=0.2)
    except KeyboardInterrupt:
        pass
    finally:
        server.server_close()


def deliver(
    once: Annotated[
        bool, typer.Option("--once", help="Deliver what is due now, then exit")
    ] = False,
    stale_check: Annotated[
        bool, typer.Option(help="Also run the data-staleness timer (off if serve runs it)")
    ] = True,
) -> None:
    """Run a webhook delivery worker (several may run at once on PostgreSQL), and the
    staleness timer, for deployments that run ``lostwork serve`` with
    LOSTWORK_EMBEDDED_WORKER=false. Stops on Ctrl-C or SIGTERM after the current attempt."""
    from api.alerts.timer import StaleTimer
    from api.core.config import get_settings
    from api.core.db import create_db_engine, make_session_factory
    from api.webhooks.delivery import DeliveryOptions, new_client
    from api.webhooks.worker import default_owner, run_once

    settings = get_settings()
    logging.basicConfig(
        level=settings.log_level, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    factory = make_session_factory(create_db_engine(settings.database_url))
    options = DeliveryOptions.from_settings(settings)
    owner = default_owner()
    stop = threading.Event()
    previous = {}
    if threading.current_thread() is threading.main_thread():

        def graceful(signum: int, _frame: object) -> None:
            stop.set()

        for signum in (signal.SIGTERM, signal.SIGINT):
            previous[signum] = signal.signal(signum, graceful)
    timer = None
    if stale_check and not once:
        timer = StaleTimer(
            factory,
            every_seconds=settings.alert_stale_check_seconds,
            base_url=settings.public_base_url,
        )
        timer.start()
    typer.echo(f"delivery worker {owner}: started")
    made = 0
    try:
        with new_client(options) as client:
            while not stop.is_set():
                made += run_once(
                    factory, options, owner=owner, client=client, should_stop=stop.is_set
                )
                if once:
                    break
                stop.wait(settings.webhook_poll_seconds)
    finally:
        if timer is not None:
            timer.stop()
        for signum, handler in previous.items():
            signal.signal(signum, handler)
    typer.echo(f"delivery worker {owner}: stopped after {made} attempt(s)")


def register(app: typer.Typer) -> None:
    app.command("webhook-receiver")(webhook_receiver)
    app.command("deliver")(deliver)
