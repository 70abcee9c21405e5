"""``lostwork rules ...`` and ``lostwork alerts ...`` (registered by :mod:`api.cli`)."""

from __future__ import annotations

from typing import Annotated

import typer

rules_app = typer.Typer(no_args_is_help=True, help="Alert rules (plant-file rules: see the file).")
alerts_app = typer.Typer(no_args_is_help=True, help="Alerts: list and acknowledge.")


def _factory():  # type: ignore[no-untyped-def]
    from api.core.config import get_settings
    from api.core.db import create_db_engine, make_session_factory

    return make_session_factory(create_db_engine(get_settings().database_url))


def _fail(exc) -> None:  # type: ignore[no-untyped-def]
    typer.secho(exc.detail, fg=typer.colors.RED, err=True)
    for error in exc.errors:
        typer.echo(f"  - {error.message}", err=True)
    raise typer.Exit(code=1)


def _condition(rule) -> str:  # type: ignore[no-untyped-def]
    if rule.kind in ("threshold", "drift"):
        text = f"{rule.reads} {rule.direction} {rule.limit:g}"
        if rule.clear_limit is not None and rule.clear_limit != rule.limit:
            text += f" (clears at {rule.clear_limit:g})"
    elif rule.kind == "cusum":
        text = f"{rule.reads} alarm ({rule.direction})"
    elif rule.kind == "stale":
        text = f"no reading for {rule.after_seconds:g} s from {', '.join(rule.tags or ['required tags'])}"
    else:
        text = f"flags {', '.join(rule.flags or [])}"
    if rule.for_seconds:
        text += f" for {rule.for_seconds:g} s"
    if rule.clear_for_seconds:
        text += f", clear for {rule.clear_for_seconds:g} s"
    return text


@rules_app.command("list")
def rules_list(
    plant: Annotated[str | None, typer.Option(help="Plant slug")] = None,
    unit: Annotated[str | None, typer.Option(help="Unit slug")] = None,
) -> None:
    """List rules with their state."""
    from api.alerts import service

    with _factory()() as session:
        for rule in service.list_rules(session=session, plant=plant, unit=unit):
            read = service.rule_read(session, rule)
            state = "off" if not read.enabled else read.state.phase
            typer.echo(
                f"{read.id:4}  {read.name:28} {read.unit:16} {read.kind:12} {read.severity:8} "
                f"{state:9} {read.source:4}  {_condition(read)}"
            )


@rules_app.command("add")
def rules_add(
    name: Annotated[str, typer.Option(help="Rule name, unique per plant")],
    unit: Annotated[str, typer.Option(help="Unit slug")],
    kind: Annotated[str, typer.Option(help="threshold, drift, cusum, stale, inconsistent")],
    metric: Annotated[
        str | None, typer.Option(help="Result metric (threshold, drift, cusum)")
    ] = None,
    above: Annotated[str | None, typer.Option(help="Fire above this ('480 degC', 0.9)")] = None,
    below: Annotated[str | None, typer.Option(help="Fire below this")] = None,
    clear_at: Annotated[str | None, typer.Option(help="Clear limit (hysteresis)")] = None,
    side: Annotated[str | None, typer.Option(help="cusum: upper, lower, either")] = None,
    flag: Annotated[list[str] | None, typer.Option(help="inconsistent: a flag; repeatable")] = None,
    tag: Annotated[list[str] | None, typer.Option(help="stale: a tag; repeatable")] = None,
    after: Annotated[str | None, typer.Option(help="stale: e.g. '15 min'")] = None,
    for_: Annotated[str, typer.Option("--for", help="Minimum duration, e.g. '5 min'")] = "0",
    clear_for: Annotated[str | None, typer.Option(help="Clear duration, e.g. '10 min'")] = None,
    severity: Annotated[str, typer.Option(help="info, warning, critical")] = "warning",
) -> None:
    """Create a rule (the same checks as the API and the plant file)."""
    from pydantic import ValidationError

    from api.alerts import service
    from api.alerts.schemas import RuleCreate
    from api.core.problems import ProblemError

    def number(text: str | None) -> float | str | None:
        if text is None:
            return None
        try:
            return float(text)
        except ValueError:
            return text

    try:
        body = RuleCreate.model_validate(
            {
                "name": name,
                "unit": unit,
                "kind": kind,
                "metric": metric,
                "above": number(above),
                "below": number(below),
                "clear_at": number(clear_at),
                "side": side,
                "flags": flag or None,
                "tags": tag or None,
                "after": number(after),
                "for": number(for_),
                "clear_for": number(clear_for),
                "severity": severity,
            }
        )
    except ValidationError as exc:
        typer.secho(f"the rule is not valid: {exc}", fg=typer.colors.RED, err=True)
        raise typer.Exit(code=1) from None
    with _factory()() as session:
        try:
            rule = service.create_rule(session=session, name=body.name, spec=body)
        except ProblemError as exc:
            _fail(exc)
        typer.echo(
            f"rule {rule.id} ({rule.name}) created: {_condition(service.rule_read(session, rule))}"
        )


def _enable(rule_id: int, enabled: bool) -> None:
    from api.alerts import service
    from api.core.problems import ProblemError

    with _factory()() as session:
        try:
            rule = service.set_enabled(session=session, rule_id=rule_id, enabled=enabled)
        except ProblemError as exc:
            _fail(exc)
        typer.echo(f"rule {rule.id} ({rule.name}) {'enabled' if enabled else 'disabled'}")


@rules_app.command("enable")
def rules_enable(rule_id: int) -> None:
    """Enable a rule."""
    _enable(rule_id, True)


@rules_app.command("disable")
def rules_disable(rule_id: int) -> None:
    """Disable a rule (its open alert is resolved)."""
    _enable(rule_id, False)


@rules_app.command("delete")
def rules_delete(rule_id: int) -> None:
    """Delete a rule made through the API or CLI (its alerts stay in the history)."""
    from api.alerts import service
    from api.core.problems import ProblemError

    with _factory()() as session:
        try:
            service.delete_rule(session=session, rule_id=rule_id)
        except ProblemError as exc:
            _fail(exc)
    typer.echo(f"rule {rule_id} deleted")


@alerts_app.command("list")
def alerts_list(
    status: Annotated[str | None, typer.Option(help="firing or resolved")] = None,
    unit: Annotated[str | None, typer.Option(help="Unit slug")] = None,
    plant: Annotated[str | None, typer.Option(help="Plant slug")] = None,
    limit: Annotated[int, typer.Option(help="How many, newest first")] = 50,
) -> None:
    """List alerts, newest first."""
    from api.alerts import service

    with _factory()() as session:
        alerts, total = service.list_alerts(
            session=session, status=status, unit=unit, plant=plant, limit=limit
        )
        for alert in alerts:
            ack = f"  ack by {alert.acknowledged_by}" if alert.acknowledged_by else ""
            typer.echo(
                f"{alert.id:5}  {alert.status:8} {alert.severity:8} "
                f"{alert.began_at:%Y-%m-%d %H:%M}Z  {alert.message}{ack}"
            )
    typer.echo(f"{len(alerts)} of {total} alert(s)")


@alerts_app.command("ack")
def alerts_ack(
    alert_id: int,
    note: Annotated[str, typer.Option(help="What was done or decided")],
    by: Annotated[str, typer.Option(help="Who acknowledges")] = "command line",
) -> None:
    """Acknowledge an alert with a note."""
    from api.alerts import service
    from api.core.problems import ProblemError

    with _factory()() as session:
        try:
            service.acknowledge(session=session, alert_id=alert_id, by=by, note=note)
        except ProblemError as exc:
            _fail(exc)
    typer.echo(f"alert {alert_id} acknowledged")


def register(app: typer.Typer) -> None:
    app.add_typer(rules_app, name="rules")
    app.add_typer(alerts_app, name="alerts")
