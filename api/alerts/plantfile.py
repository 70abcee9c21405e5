"""The ``rules:`` section of a plant file: checked with the file, applied with it.

Rules from the file are owned by it (``source = file``): applying the file creates,
changes and deletes them, and the rules API refuses to change or delete them. Rules made
through the API are never touched by applying a file; a file rule with the name of an
API rule takes that rule over.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, object_session

from api.alerts import rules, service
from api.alerts.models import AlertRule
from api.core.problems import InvalidInput
from api.plants.models import Plant, Unit


def check_file_rules(doc: Any, atmosphere_pa: float) -> dict[str, dict[str, Any]]:
    """Rule name -> resolved values for every rule of the plant file ``doc``; raises
    :class:`InvalidInput` locating every problem (``rules.<name>.<field>``)."""
    errors: list[dict[str, str]] = []
    resolved: dict[str, dict[str, Any]] = {}
    for name, spec in doc.rules.items():
        path = f"rules.{name}"
        unit = doc.units.get(spec.unit)
        if unit is None:
            errors.append(
                {
                    "field": f"{path}.unit",
                    "message": f"{path}.unit: unit {spec.unit!r} is not defined under units",
                }
            )
            continue
        facts = rules.UnitFacts(
            spec.unit, unit.kind, frozenset(unit.inputs.values()), atmosphere_pa
        )
        try:
            resolved[name] = {"unit": spec.unit, **rules.resolve(spec, facts, path=path)}
        except ValueError as exc:
            errors.extend(exc.args[0])
    if errors:
        raise InvalidInput(
            f"the plant file has {len(errors)} problem(s) in its rules; nothing was applied",
            errors=errors,
        )
    return resolved


def sync_file_rules(
    session: Session, plant_slug: str, resolved: dict[str, dict[str, Any]], report: Any
) -> None:
    """Make the plant's file rules what ``resolved`` says (in the apply transaction);
    ``report`` (an ``ApplyReport``) lists ``rule <name>`` as created/updated/deleted."""
    plant = session.scalars(select(Plant).where(Plant.slug == plant_slug)).one()
    units = dict(session.execute(select(Unit.slug, Unit.id).where(Unit.plant_id == plant.id)).all())
    existing = {
        r.name: r for r in session.scalars(select(AlertRule).where(AlertRule.plant_id == plant.id))
    }
    for name, values in resolved.items():
        values = dict(values)
        unit_id = units[values.pop("unit")]
        rule = existing.get(name)
        _, changed = service.write_rule(
            session,
            rule,
            plant_id=plant.id,
            unit_id=unit_id,
            name=name,
            values=values,
            source="file",
        )
        if rule is None:
            report.created.append(f"rule {name}")
        elif changed:
            report.updated.append(f"rule {name}")
    for name, rule in existing.items():
        if rule.source == "file" and name not in resolved:
            service.delete_rule_row(session, rule)
            report.deleted.append(f"rule {name}")


def export_file_rules(plant: Plant) -> dict[str, dict[str, Any]]:
    """The plant's file rules as a ``rules:`` section (SI numbers, seconds)."""
    session = object_session(plant)
    if session is None:
        return {}
    slugs = dict(session.execute(select(Unit.id, Unit.slug).where(Unit.plant_id == plant.id)).all())
    found = session.scalars(
        select(AlertRule)
        .where(AlertRule.plant_id == plant.id, AlertRule.source == "file")
        .order_by(AlertRule.name)
    )
    return {r.name: rules.to_spec(r, slugs[r.unit_id]) for r in found}
