"""Plant configuration: applying a plant file, reading plants and units back.

``apply_plant`` validates the whole file first — schema, quantities, catalogue, units of
measure — and reports every problem at once; nothing is written when there is one. It is
idempotent: applying the same file again changes nothing and queues no work.

What a change does to stored data (readings are stored in SI and never re-converted):

* a unit created, or its kind, parameters, fuel or role bindings changed: the unit's
  results are out of date, so its span over all stored readings of its tags is queued;
* a fuel's properties changed: the same for every unit burning it;
* the plant's dead state or ambient tag changed: the same for every unit of the plant;
* the plant's interval changed: the plant's results are deleted (they sit on the old
  grid) and every unit is queued;
* a tag's unit of measure or bounds changed: nothing is recomputed; the new unit and
  bounds apply to readings arriving from then on;
* a tag's uncertainty changed: every unit it feeds is queued (the bands, and the
  consistency flags judged against them, depend on it);
* a unit missing from the file is deleted with its results; a fuel missing from the
  file is deleted; a tag missing from the file is KEPT with its readings (listed in the
  report), because deleting measured data on a typo is not recoverable.
"""

from __future__ import annotations

import math
import zoneinfo
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from pydantic import ValidationError
from sqlalchemy import func, select
from sqlalchemy.orm import Session, selectinload

from api import measure
from api.alerts.plantfile import check_file_rules, export_file_rules, sync_file_rules
from api.core.db import utcnow
from api.core.problems import InvalidInput, NotFound
from api.plants.fileformat import FuelSpec, PlantFile, TagSpec
from api.plants.fuels import fuel_properties
from api.plants.models import Fuel, Plant, Tag, Unit, UnitBinding
from api.plants.quantities import to_si_number
from api.readings.dirty import align, mark_units_dirty, reading_range
from api.results.models import ResultValue
from api.results.store import delete_results
from engine.catalogue import UnitKind, all_kinds
from engine.fuels import FuelProperties

ENERGY_PRICE_BASIS = "GJ"


@dataclass
class ApplyReport:
    """What applying a plant file did (or, for a dry run, would do)."""

    plant: str
    changed: bool = False
    created: list[str] = field(default_factory=list)
    updated: list[str] = field(default_factory=list)
    deleted: list[str] = field(default_factory=list)
    kept_tags: list[str] = field(default_factory=list)
    """Tags stored for the plant but absent from the file (kept, with their readings)."""
    units_marked_dirty: list[str] = field(default_factory=list)
    dry_run: bool = False


# --------------------------------------------------------------------------- validation


@dataclass
class _Resolved:
    """The plant file checked and converted to SI, ready to write."""

    doc: PlantFile
    interval_seconds: int
    atmosphere_pa: float
    t0_k: float
    p0_pa: float
    fuel_price_per_gj: float | None
    fuels: dict[str, FuelProperties]
    tag_si: dict[str, str]
    tag_columns: dict[str, dict[str, Any]]
    unit_parameters: dict[str, dict[str, float | str]]


def _pydantic_errors(exc: ValidationError) -> list[dict[str, Any]]:
    errors = []
    for err in exc.errors():
        loc = [str(p) for p in err["loc"]]
        # Unions report one branch per alternative; the field path is what matters.
        loc = [p for p in loc if p not in {"float", "str"} and not p.startswith("function-")]
        path = ".".join(loc)
        errors.append({"field": path, "message": f"{path}: {err['msg']}"})
    return errors


def parse_plant_file(document: Any) -> PlantFile:
    """The document checked against the plant-file schema; InvalidInput otherwise."""
    if not isinstance(document, Mapping):
        raise InvalidInput(
            "a plant file is a mapping with the sections plant, fuels, tags, units",
            errors=[{"field": "", "message": "the document is not a mapping"}],
        )
    try:
        return PlantFile.model_validate(dict(document))
    except ValidationError as exc:
        errors = _pydantic_errors(exc)
        raise InvalidInput(
            f"the plant file has {len(errors)} problem(s); nothing was applied", errors=errors
        ) from None


def _resolve(
    doc: PlantFile, *, default_interval_s: int, kinds: Mapping[str, UnitKind]
) -> _Resolved:
    errors: list[dict[str, Any]] = []

    def err(path: str, message: str) -> None:
        errors.append({"field": path, "message": message})

    p = doc.plant
    try:
        zoneinfo.ZoneInfo(p.time_zone)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        err("plant.time_zone", f"plant.time_zone: {p.time_zone!r} is not an IANA time zone name")

    def quantity(path: str, value: float | str, si_unit: str, atm: float, **kw: Any) -> float:
        try:
            return to_si_number(value, si_unit, atmosphere_pa=atm, **kw)
        except ValueError as exc:
            err(path, f"{path}: {exc}")
            return float("nan")

    std_atm = measure.STANDARD_ATMOSPHERE_PA
    atmosphere = quantity("plant.atmosphere", p.atmosphere, "Pa", std_atm)
    if math.isfinite(atmosphere) and not 50_000 <= atmosphere <= 110_000:
        err("plant.atmosphere", f"plant.atmosphere: {atmosphere:.0f} Pa is not an atmosphere")
        atmosphere = std_atm
    t0 = quantity("plant.dead_state.temperature", p.dead_state.temperature, "K", atmosphere)
    if math.isfinite(t0) and not 223.15 <= t0 <= 343.15:
        err(
            "plant.dead_state.temperature",
            f"plant.dead_state.temperature: {t0:.2f} K is outside -50..70 degC",
        )
    p0 = quantity("plant.dead_state.pressure", p.dead_state.pressure, "Pa", atmosphere)
    if math.isfinite(p0) and not 50_000 <= p0 <= 110_000:
        err("plant.dead_state.pressure", f"plant.dead_state.pressure: {p0:.0f} Pa is not ambient")
    interval = default_interval_s
    if p.interval is not None:
        seconds = quantity("plant.interval", p.interval, "s", atmosphere)
        if not math.isfinite(seconds):
            pass
        elif not (1 <= seconds <= 86_400 and float(seconds).is_integer()):
            err(
                "plant.interval", f"plant.interval: {seconds} s must be whole seconds, 1 s to 1 day"
            )
        else:
            interval = int(seconds)
    price = None
    if p.fuel_price is not None:
        try:
            gj_per_unit = measure.convert(1.0, p.fuel_price.per, ENERGY_PRICE_BASIS)
            price = p.fuel_price.amount / float(gj_per_unit)
        except ValueError as exc:
            err("plant.fuel_price.per", f"plant.fuel_price.per: {exc}")

    fuels: dict[str, FuelProperties] = {}
    for name, spec in doc.fuels.items():
        try:
            fuels[name] = fuel_properties(name, spec, atmosphere_pa=atmosphere)
        except ValueError as exc:
            err(f"fuels.{name}", f"fuel {name!r}: {exc}")

    # Tags: the unit of measure must parse; bounds in order; uncertainty convertible.
    tag_ok: dict[str, bool] = {}
    for name, tag in doc.tags.items():
        try:
            measure.parse_unit(tag.unit)
            tag_ok[name] = True
        except measure.UnitError as exc:
            err(f"tags.{name}.unit", f"tag {name!r}: {exc}")
            tag_ok[name] = False
        if tag.low is not None and tag.high is not None and not tag.low < tag.high:
            err(f"tags.{name}", f"tag {name!r}: low {tag.low} must be below high {tag.high}")

    # Units: catalogue checks, then each binding's tag and its unit of measure.
    tag_si: dict[str, str] = {}
    tag_feeds: dict[str, str] = {}
    parameters: dict[str, dict[str, float | str]] = {}
    for slug, unit in doc.units.items():
        where = f"unit {slug!r}"
        kind = kinds.get(unit.kind)
        if kind is None:
            err(
                f"units.{slug}.kind",
                f"{where}: unknown kind {unit.kind!r}; known: {', '.join(sorted(kinds)) or 'none'}",
            )
            continue
        if unit.fuel is not None and unit.fuel not in doc.fuels:
            err(f"units.{slug}.fuel", f"{where}: fuel {unit.fuel!r} is not defined under fuels")
        values: dict[str, float] = {}
        texts: dict[str, str] = {}
        for pname, pvalue in unit.parameters.items():
            if kind.text_parameter(pname) is not None:
                texts[pname] = str(pvalue)  # a name (refrigerant, basis), not a quantity
                continue
            declared = kind.parameter(pname)
            if declared is None:
                continue  # UnitKind.validate names it
            values[pname] = quantity(
                f"units.{slug}.parameters.{pname}", pvalue, declared.unit, atmosphere
            )
        parameters[slug] = {**values, **texts}
        problems = kind.validate(unit.inputs.keys(), values, unit.fuel is not None, texts)
        for problem in problems:
            path = f"units.{slug}"
            if problem.where.startswith("role '"):
                path += ".inputs." + problem.where[len("role '") : -1]
            elif problem.where.startswith("parameter '"):
                path += ".parameters." + problem.where[len("parameter '") : -1]
            elif problem.where == "fuel":
                path += ".fuel"
            else:
                path += ".inputs"
            err(path, f"{where}, {problem.where}: {problem.message}")
        for role_name, tag_name in unit.inputs.items():
            role = kind.role(role_name)
            path = f"units.{slug}.inputs.{role_name}"
            if tag_name not in doc.tags:
                err(
                    path, f"{where}, role {role_name!r}: tag {tag_name!r} is not defined under tags"
                )
                continue
            if role is None or not tag_ok.get(tag_name):
                continue
            tag_unit = doc.tags[tag_name].unit
            try:
                measure.check_compatible(tag_unit, role.unit)
            except measure.UnitError as exc:
                err(path, f"{where}, role {role_name!r}: tag {tag_name!r} cannot feed it: {exc}")
                continue
            feeder = f"role {role_name!r} of unit {slug!r}"
            if tag_name in tag_si and measure.parse_unit(tag_si[tag_name]).dimensionality != (
                measure.parse_unit(role.unit).dimensionality
            ):
                err(
                    path,
                    f"{where}, role {role_name!r}: tag {tag_name!r} already feeds "
                    f"{tag_feeds[tag_name]} in {tag_si[tag_name]}, not {role.unit}",
                )
                continue
            tag_si.setdefault(tag_name, role.unit)
            tag_feeds.setdefault(tag_name, feeder)

    ambient = p.dead_state.ambient_tag
    if ambient is not None:
        if ambient not in doc.tags:
            err(
                "plant.dead_state.ambient_tag", f"ambient tag {ambient!r} is not defined under tags"
            )
        elif tag_ok.get(ambient):
            try:
                measure.check_compatible(doc.tags[ambient].unit, "K")
                tag_si.setdefault(ambient, "K")
            except measure.UnitError as exc:
                err("plant.dead_state.ambient_tag", f"ambient tag {ambient!r}: {exc}")

    columns: dict[str, dict[str, Any]] = {}
    for name, tag in doc.tags.items():
        if not tag_ok.get(name):
            continue
        si = tag_si.get(name) or measure.si_unit_for(tag.unit)
        columns[name] = _tag_columns(name, tag, si, atmosphere, err)

    if errors:
        raise InvalidInput(
            f"the plant file has {len(errors)} problem(s); nothing was applied", errors=errors
        )
    return _Resolved(
        doc=doc,
        interval_seconds=interval,
        atmosphere_pa=atmosphere,
        t0_k=t0,
        p0_pa=p0,
        fuel_price_per_gj=price,
        fuels=fuels,
        tag_si={n: c["si_unit"] for n, c in columns.items()},
        tag_columns=columns,
        unit_parameters=parameters,
    )


def _stable(value: float | None) -> float | None:
    """Twelve significant digits: a plant file exported and applied again compares equal."""
    return None if value is None else float(f"{value:.12g}")


def _tag_columns(name: str, tag: TagSpec, si: str, atmosphere: float, err: Any) -> dict[str, Any]:
    def to_si(value: float | None) -> float | None:
        return None if value is None else float(measure.to_si(value, tag.unit, si, atmosphere))

    def difference(amount: float) -> float:
        # An amount (an absolute uncertainty, a span) is a difference: convert it with
        # the slope of the (affine) conversion, so that degC or barg offsets do not enter.
        base = tag.low if tag.low is not None else 0.0
        lo, hi = to_si(base), to_si(base + amount)
        assert lo is not None and hi is not None
        return abs(hi - lo)

    absolute = tag.absolute_uncertainty()
    uncertainty_si = None if absolute is None else difference(absolute)
    figures: list[dict[str, Any]] = []
    for i, figure in enumerate(tag.figures()):
        number, basis = figure.basis()
        entry: dict[str, Any] = {
            "basis": basis,
            "value": number,
            "coverage": figure.coverage,
            "component": figure.component,
        }
        if basis == "absolute":
            entry["value"] = _stable(difference(number))
        elif basis == "reading":
            # Of the number the instrument shows: 1 % of 5 barg is 0.05 bar, not 1 % of
            # the absolute pressure in Pa.
            entry["zero"] = _stable(to_si(0.0))
        elif figure.span is not None:
            entry["span"] = _stable(difference(figure.span))
        elif tag.low is not None and tag.high is not None:
            entry["span"] = _stable(difference(tag.high - tag.low))
        else:
            path = f"tags.{name}.uncertainty" + (
                f"[{i}]" if isinstance(tag.uncertainty, list) else ""
            )
            err(path, f"tag {name!r}: a '% of span' figure needs 'span', or 'low' and 'high'")
        figures.append(entry)
    return {
        "unit": tag.unit,
        "si_unit": si,
        "description": tag.description,
        "low": tag.low,
        "high": tag.high,
        "low_si": to_si(tag.low),
        "high_si": to_si(tag.high),
        "uncertainty_si": uncertainty_si,
        "uncertainty_rel": tag.relative_uncertainty(),
        "uncertainty_figures": figures or None,
    }


# --------------------------------------------------------------------------- apply


def _set(obj: Any, values: Mapping[str, Any]) -> bool:
    """Assign changed attributes only; whether anything changed."""
    changed = False
    for name, value in values.items():
        old = getattr(obj, name)
        if isinstance(old, float) and isinstance(value, float) and math.isclose(old, value):
            continue  # a round trip through unit conversion may move the last bit
        if old != value:
            setattr(obj, name, value)
            changed = True
    if changed and hasattr(obj, "updated_at"):
        obj.updated_at = utcnow()
    return changed


def apply_plant(
    *,
    session: Session,
    document: Any,
    default_interval_s: int = 60,
    dry_run: bool = False,
    expected_slug: str | None = None,
) -> ApplyReport:
    """Create or update the plant a plant file describes (see the module notes).

    ``document`` is the parsed YAML or JSON. ``expected_slug`` (from a URL) must match
    the file's ``plant.slug``. Raises :class:`InvalidInput` listing every problem.
    """
    doc = parse_plant_file(document)
    if expected_slug is not None and doc.plant.slug != expected_slug:
        raise InvalidInput(
            f"the file describes plant {doc.plant.slug!r}, not {expected_slug!r}",
            errors=[{"field": "plant.slug", "message": f"expected {expected_slug!r}"}],
        )
    resolved = _resolve(doc, default_interval_s=default_interval_s, kinds=all_kinds())
    file_rules = check_file_rules(doc, resolved.atmosphere_pa)

    # Unit slugs are unique across the installation.
    taken = session.execute(
        select(Unit.slug, Plant.slug)
        .join(Plant, Unit.plant_id == Plant.id)
        .where(Unit.slug.in_(list(doc.units)), Plant.slug != doc.plant.slug)
    ).all()
    if taken:
        raise InvalidInput(
            f"the plant file has {len(taken)} problem(s); nothing was applied",
            errors=[
                {
                    "field": f"units.{unit}",
                    "message": f"unit slug {unit!r} already belongs to plant {plant!r}",
                }
                for unit, plant in taken
            ],
        )

    report = ApplyReport(plant=doc.plant.slug, dry_run=dry_run)
    try:
        _write(session, resolved, report)
        sync_file_rules(session, doc.plant.slug, file_rules, report)
        report.changed = bool(report.created or report.updated or report.deleted)
        if dry_run:
            session.rollback()
        else:
            session.commit()
    except BaseException:
        session.rollback()
        raise
    return report


def _write(session: Session, r: _Resolved, report: ApplyReport) -> None:
    p = r.doc.plant
    plant = session.scalars(
        select(Plant)
        .where(Plant.slug == p.slug)
        .options(selectinload(Plant.fuels), selectinload(Plant.tags), selectinload(Plant.units))
    ).one_or_none()
    plant_values = {
        "name": p.name,
        "time_zone": p.time_zone,
        "t0_k": r.t0_k,
        "p0_pa": r.p0_pa,
        "ambient_tag": p.dead_state.ambient_tag,
        "atmosphere_pa": r.atmosphere_pa,
        "interval_seconds": r.interval_seconds,
        "fuel_price_per_gj": r.fuel_price_per_gj,
        "currency": p.fuel_price.currency if p.fuel_price else None,
    }
    all_units_dirty = False
    interval_changed = False
    if plant is None:
        plant = Plant(slug=p.slug, **plant_values)
        session.add(plant)
        session.flush()
        report.created.append(f"plant {p.slug}")
    else:
        before = {
            k: getattr(plant, k) for k in ("t0_k", "p0_pa", "ambient_tag", "interval_seconds")
        }
        if _set(plant, plant_values):
            report.updated.append(f"plant {p.slug}")
            after = {k: getattr(plant, k) for k in before}
            all_units_dirty = before != after
            interval_changed = before["interval_seconds"] != after["interval_seconds"]

    # Fuels
    fuels = {f.name: f for f in plant.fuels}
    changed_fuels: set[str] = set()
    for name, props in r.fuels.items():
        values = {
            "spec": r.doc.fuels[name].model_dump(exclude_none=True),
            "hhv_j_per_kg": props.hhv_j_per_kg,
            "lhv_j_per_kg": props.lhv_j_per_kg,
            "exergy_to_lhv_ratio": props.exergy_to_lhv_ratio,
            "density_kg_per_m3": props.density_kg_per_m3,
            "co2_kg_per_j": props.co2_kg_per_j,
        }
        if name not in fuels:
            fuels[name] = Fuel(plant_id=plant.id, name=name, **values)
            session.add(fuels[name])
            report.created.append(f"fuel {name}")
        elif _set(fuels[name], values):
            changed_fuels.add(name)
            report.updated.append(f"fuel {name}")
    session.flush()

    # Tags (never deleted here: see the module notes)
    tags = {t.name: t for t in plant.tags}
    uncertainty_changed: set[int] = set()
    for name, values in r.tag_columns.items():
        if name not in tags:
            tags[name] = Tag(plant_id=plant.id, name=name, **values)
            session.add(tags[name])
            report.created.append(f"tag {name}")
            continue
        stated_before = _uncertainty_of(tags[name])
        if _set(tags[name], values):
            report.updated.append(f"tag {name}")
            if _uncertainty_of(tags[name]) != stated_before:
                uncertainty_changed.add(tags[name].id)
    report.kept_tags = sorted(set(tags) - set(r.tag_columns))
    session.flush()

    # Units and their bindings
    units = {u.slug: u for u in plant.units}
    dirty: set[int] = set()
    old_tags: dict[int, set[int]] = {}
    for slug, spec in r.doc.units.items():
        values = {
            "name": spec.name,
            "kind": spec.kind,
            "parameters": r.unit_parameters.get(slug, {}),
            "fuel_id": fuels[spec.fuel].id if spec.fuel else None,
        }
        unit = units.get(slug)
        if unit is None:
            unit = Unit(plant_id=plant.id, slug=slug, **values)
            session.add(unit)
            session.flush()
            units[slug] = unit
            report.created.append(f"unit {slug}")
            config_changed = True
        else:
            compute_before = (unit.kind, unit.parameters, unit.fuel_id)
            changed = _set(unit, values)
            config_changed = compute_before != (unit.kind, unit.parameters, unit.fuel_id)
            if changed:
                report.updated.append(f"unit {slug}")
        wanted = {role: tags[tag].id for role, tag in spec.inputs.items()}
        existing = {
            b.role: b
            for b in session.scalars(select(UnitBinding).where(UnitBinding.unit_id == unit.id))
        }
        old_tags[unit.id] = {b.tag_id for b in existing.values()}
        bindings_changed = False
        for role, binding in existing.items():
            if role not in wanted:
                session.delete(binding)
                bindings_changed = True
            elif binding.tag_id != wanted[role]:
                binding.tag_id = wanted[role]
                bindings_changed = True
        for role, tag_id in wanted.items():
            if role not in existing:
                session.add(UnitBinding(unit_id=unit.id, role=role, tag_id=tag_id))
                bindings_changed = True
        if bindings_changed and f"unit {slug}" not in report.created + report.updated:
            report.updated.append(f"unit {slug}")
        fuel_name = spec.fuel
        if (
            config_changed
            or bindings_changed
            or (fuel_name in changed_fuels)
            or uncertainty_changed & set(wanted.values())
        ):
            dirty.add(unit.id)
    session.flush()

    removed = [u for slug, u in units.items() if slug not in r.doc.units]
    for unit in removed:
        delete_results(session, [unit.id])
        session.delete(unit)
        report.deleted.append(f"unit {unit.slug}")
    session.flush()
    for name, fuel in fuels.items():
        if name not in r.doc.fuels:
            session.delete(fuel)
            report.deleted.append(f"fuel {name}")
    session.flush()

    live = {slug: u for slug, u in units.items() if slug in r.doc.units}
    if interval_changed:
        # Through the results store, so the rollups go with the results they summarise.
        delete_results(session, [u.id for u in live.values()])
    if all_units_dirty:
        dirty |= {u.id for u in live.values()}
    spans = []
    interval_ms = plant.interval_seconds * 1000
    for unit in live.values():
        if unit.id not in dirty:
            continue
        # Readings of the tags bound now and before, and the results already stored: the
        # whole stretch whose results the change makes stale.
        tag_ids = {tags[t].id for t in r.doc.units[unit.slug].inputs.values()}
        tag_ids |= old_tags.get(unit.id, set())
        if plant.ambient_tag:
            tag_ids.add(tags[plant.ambient_tag].id)
        span = _union(
            reading_range(session=session, tag_ids=tag_ids),
            result_range(session=session, unit_id=unit.id),
        )
        if span is not None:
            spans.append((unit.id, *align(span[0], span[1], interval_ms)))
            report.units_marked_dirty.append(unit.slug)
    mark_units_dirty(session=session, spans=spans, reason="config")
    report.units_marked_dirty.sort()


def _uncertainty_of(tag: Tag) -> tuple[Any, ...]:
    return (tag.uncertainty_si, tag.uncertainty_rel, tag.uncertainty_figures)


def _union(a: tuple[int, int] | None, b: tuple[int, int] | None) -> tuple[int, int] | None:
    if a is None or b is None:
        return a or b
    return min(a[0], b[0]), max(a[1], b[1])


def result_range(*, session: Session, unit_id: int) -> tuple[int, int] | None:
    lo, hi = session.execute(
        select(func.min(ResultValue.t_ms), func.max(ResultValue.t_ms)).where(
            ResultValue.unit_id == unit_id
        )
    ).one()
    return None if lo is None else (int(lo), int(hi))


# --------------------------------------------------------------------------- reading


def list_plants(*, session: Session) -> list[Plant]:
    return list(session.scalars(select(Plant).order_by(Plant.slug)))


def get_plant(*, session: Session, slug: str) -> Plant:
    plant = session.scalars(
        select(Plant)
        .where(Plant.slug == slug)
        .options(
            selectinload(Plant.fuels),
            selectinload(Plant.tags),
            selectinload(Plant.units).selectinload(Unit.bindings).selectinload(UnitBinding.tag),
        )
    ).one_or_none()
    if plant is None:
        raise NotFound(f"no plant {slug!r}")
    return plant


def list_units(*, session: Session, plant_slug: str | None = None) -> list[Unit]:
    query = select(Unit).options(selectinload(Unit.plant)).order_by(Unit.slug)
    if plant_slug is not None:
        query = query.join(Plant).where(Plant.slug == plant_slug)
    return list(session.scalars(query))


def get_unit(*, session: Session, slug: str) -> Unit:
    unit = session.scalars(
        select(Unit)
        .where(Unit.slug == slug)
        .options(
            selectinload(Unit.plant),
            selectinload(Unit.fuel),
            selectinload(Unit.bindings).selectinload(UnitBinding.tag),
        )
    ).one_or_none()
    if unit is None:
        raise NotFound(f"no unit {slug!r}")
    return unit


@dataclass(frozen=True)
class UnitConfig:
    """Everything the worker needs to compute one unit (all SI)."""

    unit_id: int
    slug: str
    kind: str
    parameters: dict[str, float]
    """The kind's defaults overlaid with the configured values."""
    text_parameters: dict[str, str]
    """The kind's name-valued parameters (refrigerant, O2 basis), defaults overlaid."""
    bindings: dict[str, int]
    """Role -> tag_id."""
    fuel: FuelProperties | None
    plant_id: int
    interval_seconds: int
    t0_k: float
    p0_pa: float
    ambient_tag_id: int | None
    fuel_price_per_gj: float | None
    currency: str | None
    tag_names: dict[str, str] = field(default_factory=dict)
    """Role -> name of the tag bound to it."""
    tag_uncertainty: dict[str, list[dict[str, Any]]] = field(default_factory=dict)
    """Role -> the bound tag's stated uncertainty figures in SI (``Tag.uncertainty_figures``);
    a role missing here has none stated (the default of its measurement kind applies)."""
    tag_zero: dict[str, float] = field(default_factory=dict)
    """Role -> the SI value of the bound tag's zero (atmospheric pressure for barg, 273.15 K
    for degC): a 'percent of reading' is of the number the instrument shows."""
    fuel_spec: dict[str, Any] | None = None
    """The fuel's plant-file section (its ``uncertainty``, and the kind of fuel that sets the
    default heating-value uncertainty)."""


def tag_zero(tag: Tag, atmosphere_pa: float) -> float:
    """The SI value of zero in the tag's unit of measure (0 when it feeds no role)."""
    if not tag.si_unit:
        return 0.0
    return float(measure.to_si(0.0, tag.unit, tag.si_unit, atmosphere_pa))


def stored_figures(tag: Tag, atmosphere_pa: float) -> list[dict[str, Any]]:
    """A tag's stated uncertainty figures in SI (empty when none is stated).

    Tags applied before figures were stored have only ``uncertainty_si`` or
    ``uncertainty_rel``: a standard, systematic figure, absolute or of reading.
    """
    if tag.uncertainty_figures:
        return list(tag.uncertainty_figures)
    plain = {"coverage": "standard", "component": "systematic"}
    if tag.uncertainty_si is not None:
        return [{"basis": "absolute", "value": tag.uncertainty_si, **plain}]
    if tag.uncertainty_rel is not None:
        zero = tag_zero(tag, atmosphere_pa)
        return [{"basis": "reading", "value": tag.uncertainty_rel, "zero": zero, **plain}]
    return []


def fuel_of(fuel: Fuel, atmosphere_pa: float) -> FuelProperties:
    """The full FuelProperties of a stored fuel, rebuilt from its specification (so the
    ultimate analysis and composition exergy of a composition-based fuel are kept)."""
    return fuel_properties(
        fuel.name, FuelSpec.model_validate(fuel.spec), atmosphere_pa=atmosphere_pa
    )


def load_unit_config(*, session: Session, unit_id: int) -> UnitConfig:
    """The compute configuration of a unit; NotFound when it no longer exists."""
    unit = session.scalars(
        select(Unit)
        .where(Unit.id == unit_id)
        .options(
            selectinload(Unit.plant),
            selectinload(Unit.fuel),
            selectinload(Unit.bindings).selectinload(UnitBinding.tag),
        )
    ).one_or_none()
    if unit is None:
        raise NotFound(f"no unit with id {unit_id}")
    plant = unit.plant
    ambient_id = None
    if plant.ambient_tag:
        ambient_id = session.scalar(
            select(Tag.id).where(Tag.plant_id == plant.id, Tag.name == plant.ambient_tag)
        )
    kind = all_kinds().get(unit.kind)
    stored = dict(unit.parameters)
    texts = {k: str(v) for k, v in stored.items() if kind and kind.text_parameter(k) is not None}
    numbers = {k: v for k, v in stored.items() if k not in texts}
    params = kind.resolve_parameters(numbers) if kind else numbers
    return UnitConfig(
        unit_id=unit.id,
        slug=unit.slug,
        kind=unit.kind,
        parameters={k: float(v) for k, v in params.items() if v is not None},
        text_parameters=kind.resolve_text_parameters(texts) if kind else texts,
        bindings={b.role: b.tag_id for b in unit.bindings},
        fuel=fuel_of(unit.fuel, plant.atmosphere_pa) if unit.fuel else None,
        plant_id=plant.id,
        interval_seconds=plant.interval_seconds,
        t0_k=plant.t0_k,
        p0_pa=plant.p0_pa,
        ambient_tag_id=ambient_id,
        fuel_price_per_gj=plant.fuel_price_per_gj,
        currency=plant.currency,
        tag_names={b.role: b.tag.name for b in unit.bindings},
        tag_uncertainty={
            b.role: figures
            for b in unit.bindings
            if (figures := stored_figures(b.tag, plant.atmosphere_pa))
        },
        tag_zero={b.role: tag_zero(b.tag, plant.atmosphere_pa) for b in unit.bindings},
        fuel_spec=dict(unit.fuel.spec) if unit.fuel else None,
    )


def tags_by_name(*, session: Session, plant_id: int) -> dict[str, Tag]:
    return {t.name: t for t in session.scalars(select(Tag).where(Tag.plant_id == plant_id))}


def export_plant(plant: Plant) -> dict[str, Any]:
    """The plant as a plant-file document (SI numbers), which applies back unchanged."""
    atm = plant.atmosphere_pa

    def tag_doc(tag: Tag) -> dict[str, Any]:
        doc: dict[str, Any] = {"unit": tag.unit}
        for name in ("description", "low", "high"):
            if getattr(tag, name) is not None:
                doc[name] = getattr(tag, name)
        if tag.uncertainty_rel is not None:
            doc["uncertainty"] = f"{tag.uncertainty_rel * 100:g}% of reading"
        elif tag.uncertainty_si is not None and tag.si_unit:
            doc["uncertainty"] = in_tag_unit(tag, tag.uncertainty_si)
        elif tag.uncertainty_figures and tag.si_unit:
            doc["uncertainty"] = [figure_doc(tag, f) for f in tag.uncertainty_figures]
        return doc

    def in_tag_unit(tag: Tag, amount_si: float) -> float:
        assert tag.si_unit is not None
        base = tag.low_si if tag.low_si is not None else 0.0
        base_unit = measure.from_si(base, tag.si_unit, tag.unit, atm)
        top_unit = measure.from_si(base + amount_si, tag.si_unit, tag.unit, atm)
        return round(abs(float(top_unit) - float(base_unit)), 12)

    def figure_doc(tag: Tag, figure: dict[str, Any]) -> dict[str, Any]:
        basis = figure["basis"]
        out: dict[str, Any] = {
            "value": (
                in_tag_unit(tag, figure["value"])
                if basis == "absolute"
                else f"{figure['value'] * 100:g}% of {basis}"
            )
        }
        if basis == "span":
            out["span"] = in_tag_unit(tag, figure["span"])
        out["coverage"] = figure["coverage"]
        out["component"] = figure["component"]
        return out

    plant_doc: dict[str, Any] = {
        "slug": plant.slug,
        "name": plant.name,
        "time_zone": plant.time_zone,
        "interval": plant.interval_seconds,
        "atmosphere": plant.atmosphere_pa,
        "dead_state": {"temperature": plant.t0_k, "pressure": plant.p0_pa},
    }
    if plant.ambient_tag:
        plant_doc["dead_state"]["ambient_tag"] = plant.ambient_tag
    if plant.fuel_price_per_gj is not None and plant.currency:
        plant_doc["fuel_price"] = {
            "amount": plant.fuel_price_per_gj,
            "currency": plant.currency,
            "per": ENERGY_PRICE_BASIS,
        }
    return {
        "format": "lostwork-plant/1",
        "plant": plant_doc,
        "fuels": {f.name: f.spec for f in sorted(plant.fuels, key=lambda f: f.name)},
        "tags": {t.name: tag_doc(t) for t in sorted(plant.tags, key=lambda t: t.name)},
        "units": {
            u.slug: {
                "name": u.name,
                "kind": u.kind,
                **({"fuel": u.fuel.name} if u.fuel else {}),
                "inputs": {b.role: b.tag.name for b in sorted(u.bindings, key=lambda b: b.role)},
                "parameters": u.parameters,
            }
            for u in sorted(plant.units, key=lambda u: u.slug)
        },
        **({"rules": rules} if (rules := export_file_rules(plant)) else {}),
    }
