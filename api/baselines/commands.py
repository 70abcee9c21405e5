"""``lostwork baseline fit | list | show | activate`` (registered by :mod:`api.cli`).

Times: RFC 3339, or a date / a date and time without offset, read in the plant's own
time zone (``--from 2025-12-01`` is midnight at the plant).
"""

from __future__ import annotations

import datetime as dt
import json
import zoneinfo
from typing import Annotated

import typer

baseline_app = typer.Typer(no_args_is_help=True, help="Baselines: fit, list, show, activate.")


def _session_factory():  # type: ignore[no-untyped-def]
    import api.models  # noqa: F401  (every table mapped, so foreign keys resolve)
    from api.core.config import get_settings
    from api.core.db import create_db_engine, make_session_factory

    return make_session_factory(create_db_engine(get_settings().database_url))


def parse_time(text: str, time_zone: str, option: str) -> int:
    """UTC epoch ms of ``text``: RFC 3339, or without offset in ``time_zone``."""
    try:
        moment = dt.datetime.fromisoformat(text)
    except ValueError:
        raise typer.BadParameter(
            f"{text!r} is not a date or an RFC 3339 time", param_hint=option
        ) from None
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=zoneinfo.ZoneInfo(time_zone))
    return int(round(moment.timestamp() * 1000))


def _fail(message: str) -> None:
    typer.secho(message, fg=typer.colors.RED, err=True)
    raise typer.Exit(1)


def _percent(value: float | None, digits: int = 2) -> str:
    return "n/a" if value is None else f"{100 * value:.{digits}f} %"


def describe(read: dict) -> str:
    """One paragraph about a fitted version (from ``views.baseline_read``)."""
    stats = read["statistics"]
    counts = read["counts"]
    verdict = "meets" if stats["meets_guideline_14"] else "does not meet"
    regressors = " + ".join(read["regressors"])
    r2 = "n/a" if stats["r2"] is None else f"{stats['r2']:.4f}"
    return (
        f"unit {read['unit']}: baseline version {read['version']} of {read['metric']}"
        f"{' (active)' if read['active'] else ''}, fitted on {read['start']:%Y-%m-%dT%H:%MZ} "
        f"to {read['end']:%Y-%m-%dT%H:%MZ}: {read['model']} in {regressors}; "
        f"n = {stats['n']} of {counts['intervals']} computed intervals "
        f"({counts['steady']} steady, {counts['flagged']} flagged); R2 {r2}, "
        f"CV(RMSE) {_percent(stats['cv_rmse'])}, NMBE {_percent(stats['nmbe'], 3)}: "
        f"{verdict} the ASHRAE Guideline 14 criteria ({stats['granularity']})"
    )


def _recompute_line(read: dict) -> str | None:
    info = read.get("recompute")
    if info is None:
        return None
    if info["end"] is None:
        return f"  no readings from {info['start']:%Y-%m-%dT%H:%MZ} on: nothing to recompute"
    return (
        f"  recompute queued: {info['intervals']} intervals from "
        f"{info['start']:%Y-%m-%dT%H:%MZ} to {info['end']:%Y-%m-%dT%H:%MZ} "
        "(computed by `lostwork worker` or the server's embedded worker)"
    )


@baseline_app.command("fit")
def fit(
    unit: Annotated[str, typer.Option(help="Unit slug")],
    metric: Annotated[str, typer.Option(help="Result column to model, e.g. eta_1")],
    from_: Annotated[str, typer.Option("--from", help="Reference period start")],
    to: Annotated[str, typer.Option("--to", help="Reference period end (excluded)")],
    regressor: Annotated[
        list[str] | None,
        typer.Option(help="Another regressor (repeatable): ambient_temperature or a result"),
    ] = None,
    load: Annotated[str | None, typer.Option(help="Load column (default: the kind's)")] = None,
    activate: Annotated[bool, typer.Option("--activate", help="Activate at once")] = False,
    recompute_from: Annotated[
        str | None,
        typer.Option(help="With --activate: where recompute and charts start (default --from)"),
    ] = None,
    note: Annotated[str | None, typer.Option(help="A note kept with the version")] = None,
    as_json: Annotated[bool, typer.Option("--json", help="Print the version as JSON")] = False,
) -> None:
    """Fit a new baseline version on the steady intervals of a reference period."""
    from api.baselines import service
    from api.baselines.views import baseline_read
    from api.core.problems import ProblemError
    from api.plants.models import Unit
    from api.plants.service import get_unit

    factory = _session_factory()
    with factory() as session:
        try:
            zone = get_unit(session=session, slug=unit).plant.time_zone
            request = service.FitRequest(
                metric=metric,
                start_ms=parse_time(from_, zone, "--from"),
                end_ms=parse_time(to, zone, "--to"),
                regressors=list(regressor or []),
                load=load,
                note=note,
                activate=activate,
                recompute_from_ms=parse_time(recompute_from, zone, "--recompute-from")
                if recompute_from
                else None,
            )
            row, recompute = service.fit(
                session=session, unit_slug=unit, request=request, created_by="cli"
            )
        except ProblemError as exc:
            _fail(exc.detail)
            return
        found = session.get(Unit, row.unit_id)
        assert found is not None
        read = baseline_read(found, row, recompute)
    _print(read, as_json)


def _print(read: dict, as_json: bool) -> None:
    if as_json:
        typer.echo(json.dumps(read, default=str, indent=2))
        return
    typer.echo(describe(read))
    line = _recompute_line(read)
    if line:
        typer.echo(line)


@baseline_app.command("list")
def list_(
    unit: Annotated[str, typer.Option(help="Unit slug")],
    metric: Annotated[str | None, typer.Option(help="Only this metric")] = None,
) -> None:
    """The unit's baseline versions, oldest first."""
    from api.baselines import service
    from api.baselines.views import baseline_read
    from api.core.problems import ProblemError

    with _session_factory()() as session:
        try:
            found, rows = service.list_baselines(session=session, unit_slug=unit, metric=metric)
        except ProblemError as exc:
            _fail(exc.detail)
            return
        if not rows:
            typer.echo(f"unit {unit}: no baselines")
        for row in rows:
            typer.echo(describe(baseline_read(found, row)))


@baseline_app.command("show")
def show(
    unit: Annotated[str, typer.Option(help="Unit slug")],
    version: Annotated[int, typer.Option(help="Version number")],
) -> None:
    """One version as JSON (coefficients, statistics, settings, demonstrated best)."""
    from api.baselines import service
    from api.baselines.views import baseline_read
    from api.core.problems import ProblemError

    with _session_factory()() as session:
        try:
            found, row = service.get_baseline(session=session, unit_slug=unit, version=version)
        except ProblemError as exc:
            _fail(exc.detail)
            return
        _print(baseline_read(found, row), as_json=True)


@baseline_app.command("activate")
def activate(
    unit: Annotated[str, typer.Option(help="Unit slug")],
    version: Annotated[int, typer.Option(help="Version number")],
    recompute_from: Annotated[
        str | None,
        typer.Option(help="Where recompute and charts start (default: the period's start)"),
    ] = None,
) -> None:
    """Make a version the active baseline of its metric and queue the recompute."""
    from api.baselines import service
    from api.baselines.views import baseline_read
    from api.core.problems import ProblemError
    from api.plants.models import Unit
    from api.plants.service import get_unit

    with _session_factory()() as session:
        try:
            zone = get_unit(session=session, slug=unit).plant.time_zone
            row, info = service.activate(
                session=session,
                unit_slug=unit,
                version=version,
                activated_by="cli",
                recompute_from_ms=parse_time(recompute_from, zone, "--recompute-from")
                if recompute_from
                else None,
            )
        except ProblemError as exc:
            _fail(exc.detail)
            return
        found = session.get(Unit, row.unit_id)
        assert found is not None
        _print(baseline_read(found, row, info), as_json=False)


def register(app: typer.Typer) -> None:
    """Add ``lostwork baseline ...`` to the CLI."""
    app.add_typer(baseline_app, name="baseline")
