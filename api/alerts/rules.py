"""A rule spec checked against its unit and turned into stored columns (SI numbers)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from api.alerts import conventions
from api.alerts.models import RuleKind
from api.alerts.rulespec import RuleSpec
from api.plants.quantities import to_si_number
from api.results.metrics import unit_metrics
from engine.checks import Flag

DEFAULT_CUSUM_CLEAR_SECONDS = 3600.0
"""A CUSUM alarm marks single intervals (the sums restart after each); an hour without
one resolves the alert (our choice)."""
CONSISTENCY_FLAGS = tuple(str(f.name) for f in Flag if f.name not in {"NONE", "INPUT_OUT_OF_RANGE"})
"""Default flags of an ``inconsistent`` rule: every physics check, not missing inputs
(that is data quality; the stale rule watches data)."""

_FIELDS_OF = {
    RuleKind.THRESHOLD: {"metric", "above", "below", "clear_at"},
    RuleKind.DRIFT: {"metric", "above", "below", "clear_at"},
    RuleKind.CUSUM: {"metric", "side"},
    RuleKind.STALE: {"after", "tags"},
    RuleKind.INCONSISTENT: {"flags"},
}
_SPECIFIC = {"metric", "above", "below", "clear_at", "side", "flags", "tags", "after"}


@dataclass(frozen=True)
class UnitFacts:
    """What checking a rule needs to know about its unit."""

    slug: str
    kind: str
    bound_tags: frozenset[str]
    atmosphere_pa: float


def _number(value: float | str, si_unit: str, atmosphere_pa: float) -> float:
    if isinstance(value, str) and not si_unit:
        raise ValueError(f"{value!r}: give a plain number for this metric")
    result = to_si_number(value, si_unit or "1", atmosphere_pa=atmosphere_pa)
    if not math.isfinite(result):
        raise ValueError(f"{value!r} is not a finite number")
    return result


def resolve(spec: RuleSpec, unit: UnitFacts, *, path: str = "") -> dict[str, Any]:
    """Column values of :class:`~api.alerts.models.AlertRule` for ``spec`` (without ids,
    name and source); raises ``ValueError`` whose ``args[0]`` is a list of located
    errors (``{"field", "message"}``)."""
    errors: list[dict[str, str]] = []
    prefix = f"{path}." if path else ""

    def err(field: str, message: str) -> None:
        errors.append({"field": prefix + field, "message": f"{prefix}{field}: {message}"})

    kind = RuleKind(spec.kind)
    allowed = _FIELDS_OF[kind]
    for name in sorted(_SPECIFIC - allowed):
        if getattr(spec, name) is not None:
            err(name, f"does not apply to a {kind.value} rule")

    values: dict[str, Any] = {
        "kind": kind.value,
        "metric": None,
        "direction": None,
        "limit": None,
        "clear_limit": None,
        "after_seconds": None,
        "flag_names": None,
        "tag_names": None,
        "severity": spec.severity,
        "enabled": spec.enabled,
        "description": spec.description,
    }

    def duration(field: str, value: float | str | None, default: float) -> float:
        if value is None:
            return default
        try:
            seconds = _number(value, "s", unit.atmosphere_pa)
        except ValueError as exc:
            err(field, str(exc))
            return default
        if seconds < 0:
            err(field, "a duration cannot be negative")
        return seconds

    values["for_seconds"] = duration("for", spec.for_, 0.0)
    default_clear = DEFAULT_CUSUM_CLEAR_SECONDS if kind is RuleKind.CUSUM else 0.0
    values["clear_for_seconds"] = duration("clear_for", spec.clear_for, default_clear)

    if kind in (RuleKind.THRESHOLD, RuleKind.DRIFT, RuleKind.CUSUM):
        base = conventions.base_metrics(unit.kind)
        if not spec.metric:
            err("metric", f"a {kind.value} rule needs a metric")
        elif kind is RuleKind.THRESHOLD:
            if conventions.metric_unit(unit.kind, spec.metric) is None:
                known = ", ".join(sorted(unit_metrics(unit.kind)))
                err(
                    "metric",
                    f"unit {unit.slug!r} (kind {unit.kind}) has no metric {spec.metric!r}; "
                    f"known: {known}",
                )
        elif spec.metric not in base:
            err(
                "metric",
                f"unit {unit.slug!r} (kind {unit.kind}) computes no metric {spec.metric!r}; "
                f"known: {', '.join(sorted(base))}",
            )
        values["metric"] = spec.metric

    if kind in (RuleKind.THRESHOLD, RuleKind.DRIFT):
        given = [d for d in ("above", "below") if getattr(spec, d) is not None]
        if len(given) != 1:
            err("above", "give exactly one of above, below")
        else:
            direction = given[0]
            if kind is RuleKind.DRIFT:
                si = "1"
            else:
                si = conventions.metric_unit(unit.kind, spec.metric or "") or ""
            try:
                limit = _number(getattr(spec, direction), si, unit.atmosphere_pa)
                values.update(direction=direction, limit=limit, clear_limit=limit)
            except ValueError as exc:
                err(direction, str(exc))
                limit = None
            if spec.clear_at is not None and limit is not None:
                try:
                    clear = _number(spec.clear_at, si, unit.atmosphere_pa)
                except ValueError as exc:
                    err("clear_at", str(exc))
                else:
                    wrong = clear > limit if direction == "above" else clear < limit
                    if wrong:
                        side = "at or below" if direction == "above" else "at or above"
                        err(
                            "clear_at",
                            f"{clear:g} must be {side} the firing limit {limit:g} "
                            f"(it is the limit the value must return to)",
                        )
                    values["clear_limit"] = clear

    if kind is RuleKind.CUSUM:
        values["direction"] = spec.side or "either"

    if kind is RuleKind.STALE:
        if spec.after is None:
            err("after", "a stale rule needs 'after': how old a tag's newest reading may be")
        else:
            after = duration("after", spec.after, 0.0)
            if after <= 0:
                err("after", "must be longer than zero")
            values["after_seconds"] = after
        if spec.tags is not None:
            if not spec.tags:
                err("tags", "list at least one tag, or leave 'tags' out")
            for i, tag in enumerate(spec.tags):
                if tag not in unit.bound_tags:
                    err(
                        f"tags[{i}]",
                        f"tag {tag!r} does not feed unit {unit.slug!r}; it feeds "
                        f"{', '.join(sorted(unit.bound_tags)) or 'no tag'}",
                    )
            values["tag_names"] = list(dict.fromkeys(spec.tags))

    if kind is RuleKind.INCONSISTENT:
        names = spec.flags if spec.flags is not None else list(CONSISTENCY_FLAGS)
        if not names:
            err("flags", "list at least one flag, or leave 'flags' out")
        flag_names = [str(f.name) for f in Flag if f.name != "NONE"]
        for i, flag_name in enumerate(names):
            if flag_name not in flag_names:
                err(f"flags[{i}]", f"unknown flag {flag_name!r}; known: {', '.join(flag_names)}")
        values["flag_names"] = list(dict.fromkeys(names))

    if errors:
        raise ValueError(errors)
    return values


def to_spec(rule: Any, unit_slug: str) -> dict[str, Any]:
    """A stored rule back as a spec document (SI numbers, seconds), which resolves to the
    same columns: used by the plant-file export and the API."""
    doc: dict[str, Any] = {"unit": unit_slug, "kind": rule.kind}
    if rule.metric is not None:
        doc["metric"] = rule.metric
    if rule.kind in (RuleKind.THRESHOLD.value, RuleKind.DRIFT.value):
        doc[rule.direction] = rule.limit
        if rule.clear_limit is not None and rule.clear_limit != rule.limit:
            doc["clear_at"] = rule.clear_limit
    if rule.kind == RuleKind.CUSUM.value:
        doc["side"] = rule.direction
    if rule.after_seconds is not None:
        doc["after"] = rule.after_seconds
    if rule.tag_names is not None:
        doc["tags"] = list(rule.tag_names)
    if rule.flag_names is not None:
        doc["flags"] = list(rule.flag_names)
    doc["for"] = rule.for_seconds
    doc["clear_for"] = rule.clear_for_seconds
    doc["severity"] = rule.severity
    doc["enabled"] = rule.enabled
    if rule.description:
        doc["description"] = rule.description
    return doc
