"""The ``lostwork`` command line.

Domain packages may add commands: a module ``api.<domain>.commands`` with a
``register(app: typer.Typer)`` function is called at start (the pipeline adds
``worker`` and ``recompute`` this way).
"""

from __future__ import annotations

import importlib
import json
import logging
import os
import sys
from dataclasses import asdict
from pathlib import Path
from typing import Annotated

import typer

from api.core.config import Settings, get_settings

app = typer.Typer(no_args_is_help=True, help="lostwork: efficiency and lost work of steam plants")
db_app = typer.Typer(no_args_is_help=True, help="Database schema.")
plant_app = typer.Typer(no_args_is_help=True, help="Plant configuration files.")
keys_app = typer.Typer(no_args_is_help=True, help="API keys.")
app.add_typer(db_app, name="db")
app.add_typer(plant_app, name="plant")
app.add_typer(keys_app, name="keys")

COMMAND_MODULES = (
    "api.pipeline.commands",
    "api.baselines.commands",
    "api.alerts.commands",
    "api.webhooks.commands",
    "api.demo.commands",
)


def _session_factory(settings: Settings):  # type: ignore[no-untyped-def]
    import api.models  # noqa: F401  (every table mapped, so foreign keys resolve)
    from api.core.db import create_db_engine, make_session_factory

    return make_session_factory(create_db_engine(settings.database_url))


def _fail(message: str, errors: list[dict] | None = None) -> None:
    typer.secho(message, fg=typer.colors.RED, err=True)
    for error in errors or []:
        where = error.get("field") or ""
        if error.get("row") is not None:
            where = f"row {error['row']}" + (
                f", column {error['column']!r}" if error.get("column") else ""
            )
        typer.echo(
            f"  - {where}: {error.get('message')}" if where else f"  - {error.get('message')}",
            err=True,
        )
    raise typer.Exit(code=1)


@db_app.command("upgrade")
def db_upgrade(revision: str = "head") -> None:
    """Apply the database migrations (LOSTWORK_DATABASE_URL)."""
    from api.core import migrate

    settings = get_settings()
    migrate.upgrade(settings.database_url, revision=revision)
    typer.echo(f"database at {revision}: {_redact(settings.database_url)}")


@db_app.command("check")
def db_check() -> None:
    """Exit 0 when the database answers and is at the code's revision (health checks)."""
    from alembic.runtime.migration import MigrationContext
    from alembic.script import ScriptDirectory

    from api.core import migrate
    from api.core.db import create_db_engine

    settings = get_settings()
    engine = create_db_engine(settings.database_url)
    try:
        with engine.connect() as connection:
            current = MigrationContext.configure(connection).get_current_revision()
    except Exception as exc:  # any failure to connect is "not healthy"
        _fail(f"database unreachable: {type(exc).__name__}: {exc}")
    finally:
        engine.dispose()
    head = ScriptDirectory.from_config(migrate.alembic_config()).get_current_head()
    if current != head:
        _fail(f"database at revision {current}, the code needs {head}")
    typer.echo(f"database ok at {head}: {_redact(settings.database_url)}")


def _redact(url: str) -> str:
    from sqlalchemy.engine import make_url

    return make_url(url).render_as_string(hide_password=True)


def _apply_file(settings: Settings, path: Path, dry_run: bool = False) -> dict:
    from api.core.problems import InvalidInput
    from api.plants import service
    from api.plants.fileformat import load_yaml

    text = path.read_text(encoding="utf-8")
    try:
        document = json.loads(text) if path.suffix.lower() == ".json" else load_yaml(text)
    except Exception as exc:  # YAML and JSON errors carry line and column
        _fail(f"{path}: not a valid plant file: {exc}")
    factory = _session_factory(settings)
    with factory() as session:
        try:
            report = service.apply_plant(
                session=session,
                document=document,
                default_interval_s=settings.interval_seconds,
                dry_run=dry_run,
            )
        except InvalidInput as exc:
            _fail(f"{path}: {exc.detail}", [e.model_dump(exclude_none=True) for e in exc.errors])
    return asdict(report)


@plant_app.command("apply")
def plant_apply(
    file: Annotated[
        Path, typer.Argument(exists=True, dir_okay=False, help="Plant file (YAML or JSON)")
    ],
    dry_run: Annotated[bool, typer.Option(help="Validate and report only")] = False,
) -> None:
    """Create or update a plant from a plant file (idempotent)."""
    report = _apply_file(get_settings(), file, dry_run)
    _print_apply(report)


def _print_apply(report: dict) -> None:
    verb = "would change" if report["dry_run"] else "changed"
    if not report["changed"]:
        typer.echo(f"plant {report['plant']}: up to date, nothing changed")
    else:
        typer.echo(f"plant {report['plant']}: {verb}")
    for label in ("created", "updated", "deleted"):
        for item in report[label]:
            typer.echo(f"  {label:8} {item}")
    if report["kept_tags"]:
        typer.echo(f"  kept (not in the file): {', '.join(report['kept_tags'])}")
    if report["units_marked_dirty"]:
        typer.echo(f"  queued for recompute: {', '.join(report['units_marked_dirty'])}")


@app.command("upload")
def upload(
    file: Annotated[Path, typer.Argument(exists=True, dir_okay=False, help="Shift-log CSV")],
    plant: Annotated[str, typer.Option(help="Plant slug")],
    all_or_nothing: Annotated[bool, typer.Option(help="Store nothing if any problem")] = False,
) -> None:
    """Upload a shift-log CSV into the configured database."""
    from api.core.problems import ProblemError
    from api.uploads import service
    from api.uploads.schemas import UploadMode

    settings = get_settings()
    data = file.read_bytes()
    mode = UploadMode.ALL_OR_NOTHING if all_or_nothing else UploadMode.PARTIAL
    with _session_factory(settings)() as session:
        try:
            report = service.create_upload(
                session=session,
                plant_slug=plant,
                filename=file.name,
                data=data,
                mode=mode,
                max_bytes=settings.upload_max_bytes,
            )
        except ProblemError as exc:
            _fail(f"{file}: {exc.detail}", [e.model_dump(exclude_none=True) for e in exc.errors])
    typer.echo(
        f"upload {report.id}: stored {report.stored}, replaced {report.replaced}, "
        f"unchanged {report.unchanged}, problems {report.rejected}"
    )
    for error in report.errors:
        typer.echo(f"  - row {error.row}, column {error.column!r}: {error.message}")
    for notice in report.notices:
        typer.echo(f"  note: {notice['message']}")
    if report.units_recomputed:
        typer.echo(f"  queued for recompute: {', '.join(report.units_recomputed)}")


@keys_app.command("create")
def keys_create(
    name: Annotated[str, typer.Option(help="Who or what uses the key")],
    scope: Annotated[list[str], typer.Option(help="read, ingest or admin; repeatable")],
) -> None:
    """Create an API key and print it (it is shown once)."""
    from api.auth import service
    from api.core.problems import ProblemError

    with _session_factory(get_settings())() as session:
        try:
            key, plaintext = service.create_key(session=session, name=name, scopes=scope)
        except ProblemError as exc:
            _fail(exc.detail, [e.model_dump(exclude_none=True) for e in exc.errors])
    typer.echo(f"key {key.id} ({key.name}, scopes: {', '.join(key.scopes)}); shown once:")
    typer.echo(plaintext)


@keys_app.command("list")
def keys_list() -> None:
    """List keys (prefixes only; secrets are not stored)."""
    from api.auth import service

    with _session_factory(get_settings())() as session:
        for key in service.list_keys(session=session):
            state = "revoked" if key.revoked_at else "active"
            typer.echo(
                f"{key.id:4}  lw_{key.prefix}_…  {state:8} {','.join(key.scopes):20} {key.name}"
            )


@keys_app.command("revoke")
def keys_revoke(key_id: int) -> None:
    """Revoke a key by id."""
    from api.auth import service

    with _session_factory(get_settings())() as session:
        key = service.revoke_key(session=session, key_id=key_id)
    typer.echo(f"key {key.id} ({key.name}) revoked")


def _prepare_database(settings: Settings) -> None:
    """Migrate the embedded SQLite file; refuse to start on an outdated PostgreSQL."""
    from alembic.runtime.migration import MigrationContext
    from alembic.script import ScriptDirectory

    from api.core import migrate
    from api.core.db import create_db_engine

    if settings.is_sqlite:
        migrate.upgrade(settings.database_url)
        return
    engine = create_db_engine(settings.database_url)
    try:
        with engine.connect() as connection:
            current = MigrationContext.configure(connection).get_current_revision()
    finally:
        engine.dispose()
    head = ScriptDirectory.from_config(migrate.alembic_config()).get_current_head()
    if current != head:
        _fail(
            f"the database is at revision {current}, the code needs {head}: run `lostwork db upgrade`"
        )


@app.command("serve")
def serve(
    host: Annotated[str | None, typer.Option(help="Default: LOSTWORK_HOST or 127.0.0.1")] = None,
    port: Annotated[int | None, typer.Option(help="Default: LOSTWORK_PORT or 8000")] = None,
) -> None:
    """Run the API (and the embedded worker unless LOSTWORK_EMBEDDED_WORKER=false)."""
    import uvicorn

    from api.main import create_app

    settings = get_settings()
    _setup_logging(settings)
    _prepare_database(settings)
    host, port = host or settings.host, port or settings.port
    app_ = create_app(settings)
    if not os.environ.get("LOSTWORK_DASHBOARD_API_KEY"):
        app_.state.dashboard_api_key = _dashboard_key(settings)
    typer.echo(f"lostwork serving on http://{host}:{port}  (API docs: http://{host}:{port}/docs)")
    uvicorn.run(app_, host=host, port=port, log_level=settings.log_level.lower())


def _dashboard_key(settings: Settings) -> str:
    """The in-process dashboard's key, renewed at every start (see Settings.dashboard_scopes)."""
    from api.auth.service import renew_dashboard_key

    factory = _session_factory(settings)
    try:
        with factory() as session:
            return renew_dashboard_key(session=session, scopes=settings.dashboard_scopes)
    finally:
        factory.kw["bind"].dispose()


def _setup_logging(settings: Settings) -> None:
    logging.basicConfig(
        level=settings.log_level, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    logging.getLogger("alembic.runtime.plugins").setLevel(logging.WARNING)


@app.command("demo")
def demo(
    port: Annotated[int | None, typer.Option(help="Default: LOSTWORK_PORT or 8000")] = None,
    no_serve: Annotated[bool, typer.Option(help="Prepare only; do not start the server")] = False,
    days: Annotated[float, typer.Option(help="Days of simulated history to backfill")] = 60.0,
    speed: Annotated[float, typer.Option(help="Live speed-up of the simulator")] = 1.0,
    seed: Annotated[int, typer.Option(help="Simulator seed (weather, noise)")] = 7,
    progressive: Annotated[
        bool, typer.Option(help="Serve at once; the server computes the history meanwhile")
    ] = False,
) -> None:
    """Migrate, load the demo plant, backfill and compute its history, print a key, and
    serve with live simulated readings (api/demo)."""
    from api.demo.orchestrate import DemoPlan, run_demo

    settings = get_settings()
    _setup_logging(settings)
    _prepare_database(settings)
    plan = DemoPlan(
        days=days,
        seed=seed,
        speed=speed,
        progressive=progressive,
        serve=not no_serve,
        port=port,
    )
    run_demo(settings, plan)


def _register_domain_commands() -> None:
    for name in COMMAND_MODULES:
        try:
            module = importlib.import_module(name)
        except ModuleNotFoundError as exc:
            if exc.name and name.startswith(exc.name):
                continue  # the domain is not installed
            raise
        register = getattr(module, "register", None)
        if callable(register):
            register(app)


_register_domain_commands()

if __name__ == "__main__":  # pragma: no cover
    sys.exit(app())
