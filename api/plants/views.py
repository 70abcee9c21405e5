"""Plant configuration (admin) and read routes for plants, units and the catalogue."""

from __future__ import annotations

import json
from dataclasses import asdict
from typing import Annotated, Any

import yaml
from fastapi import APIRouter, Query, Request
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import Response

from api.core.problems import InvalidInput, UnsupportedMediaType
from api.deps import AdminKey, ReadKey, SessionDep, SettingsDep
from api.plants import service
from api.plants.fileformat import PlantFile, load_yaml
from api.plants.models import Plant, Unit
from api.plants.schemas import (
    ApplyReportRead,
    FuelRead,
    KindList,
    KindRead,
    ParameterRead,
    PlantDetail,
    PlantList,
    PlantSummary,
    PortGroupRead,
    ResultColumnRead,
    RoleRead,
    TagRead,
    TextParameterRead,
    UnitList,
    UnitRead,
)
from engine.catalogue import UnitKind, all_kinds

router = APIRouter(tags=["plants"])

YAML_TYPES = {"application/yaml", "application/x-yaml", "text/yaml", "text/x-yaml"}
_PLANT_FILE_BODY = {
    "requestBody": {
        "required": True,
        "content": {
            "application/yaml": {"schema": {"$ref": "#/components/schemas/PlantFile"}},
            "application/json": {"schema": {"$ref": "#/components/schemas/PlantFile"}},
        },
    }
}


def parse_body(body: bytes, content_type: str | None) -> Any:
    """A plant file from a request body, YAML or JSON by Content-Type."""
    media = (content_type or "").split(";")[0].strip().lower()
    try:
        if media in YAML_TYPES:
            return load_yaml(body)
        if media == "application/json" or media.endswith("+json"):
            return json.loads(body)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        errors = [{"message": str(exc)}]
        if mark is not None:
            errors[0]["row"] = mark.line + 1
        raise InvalidInput("the plant file is not valid YAML", errors=errors) from None
    except json.JSONDecodeError as exc:
        raise InvalidInput(
            "the plant file is not valid JSON", errors=[{"row": exc.lineno, "message": exc.msg}]
        ) from None
    raise UnsupportedMediaType(
        f"send the plant file as application/yaml or application/json, not {media or 'nothing'!r}"
    )


async def _apply(
    request: Request, session: Any, settings: Any, dry_run: bool, slug: str | None
) -> ApplyReportRead:
    document = parse_body(await request.body(), request.headers.get("content-type"))
    report = await run_in_threadpool(
        service.apply_plant,
        session=session,
        document=document,
        default_interval_s=settings.interval_seconds,
        dry_run=dry_run,
        expected_slug=slug,
    )
    return ApplyReportRead(**asdict(report))


@router.post(
    "/plants",
    response_model=ApplyReportRead,
    operation_id="apply_plant",
    openapi_extra=_PLANT_FILE_BODY,
)
async def apply_plant(
    request: Request,
    session: SessionDep,
    settings: SettingsDep,
    _key: AdminKey,
    dry_run: bool = False,
) -> ApplyReportRead:
    """Create or update a plant from a plant file (YAML or JSON body).

    Idempotent; validated as a whole (422 lists every problem, naming unit, role and
    problem, and nothing is applied). ``dry_run=true`` validates and reports only.
    """
    return await _apply(request, session, settings, dry_run, None)


@router.put(
    "/plants/{plant}",
    response_model=ApplyReportRead,
    operation_id="put_plant",
    openapi_extra=_PLANT_FILE_BODY,
)
async def put_plant(
    plant: str,
    request: Request,
    session: SessionDep,
    settings: SettingsDep,
    _key: AdminKey,
    dry_run: bool = False,
) -> ApplyReportRead:
    """As ``POST /plants``, for the plant named in the path (must match ``plant.slug``)."""
    return await _apply(request, session, settings, dry_run, plant)


def _summary(plant: Plant) -> dict[str, Any]:
    return {
        "slug": plant.slug,
        "name": plant.name,
        "time_zone": plant.time_zone,
        "interval_seconds": plant.interval_seconds,
        "t0_k": plant.t0_k,
        "p0_pa": plant.p0_pa,
        "ambient_tag": plant.ambient_tag,
        "atmosphere_pa": plant.atmosphere_pa,
        "fuel_price_per_gj": plant.fuel_price_per_gj,
        "currency": plant.currency,
        "units": sorted(u.slug for u in plant.units),
    }


@router.get("/plants", response_model=PlantList, operation_id="list_plants")
def list_plants(session: SessionDep, _key: ReadKey) -> PlantList:
    return PlantList(
        plants=[PlantSummary(**_summary(p)) for p in service.list_plants(session=session)]
    )


@router.get("/plants/{plant}", response_model=PlantDetail, operation_id="get_plant")
def get_plant(plant: str, session: SessionDep, _key: ReadKey) -> PlantDetail:
    row = service.get_plant(session=session, slug=plant)
    return PlantDetail(
        **_summary(row),
        fuels=[
            FuelRead.model_validate(f, from_attributes=True)
            for f in sorted(row.fuels, key=lambda f: f.name)
        ],
        tags=[
            TagRead.model_validate(t, from_attributes=True)
            for t in sorted(row.tags, key=lambda t: t.name)
        ],
    )


@router.get(
    "/plants/{plant}/file",
    operation_id="export_plant_file",
    responses={200: {"content": {"application/yaml": {}, "application/json": {}}}},
)
def export_plant_file(
    plant: str,
    session: SessionDep,
    _key: ReadKey,
    fmt: Annotated[str, Query(alias="format", pattern="^(yaml|json)$")] = "yaml",
) -> Response:
    """The stored plant as a plant file (numbers in SI); applying it back changes nothing."""
    document = service.export_plant(service.get_plant(session=session, slug=plant))
    if fmt == "json":
        return Response(json.dumps(document, indent=2), media_type="application/json")
    text = yaml.safe_dump(document, sort_keys=False, allow_unicode=True)
    return Response(text, media_type="application/yaml")


def _unit_read(unit: Unit) -> UnitRead:
    kind = all_kinds().get(unit.kind)
    return UnitRead(
        slug=unit.slug,
        name=unit.name,
        plant=unit.plant.slug,
        kind=unit.kind,
        fuel=unit.fuel.name if unit.fuel else None,
        inputs={b.role: b.tag.name for b in sorted(unit.bindings, key=lambda b: b.role)},
        parameters=unit.parameters,
        results=[
            ResultColumnRead(name=r.name, unit=r.unit, description=r.description)
            for r in (kind.results if kind else ())
        ],
    )


@router.get("/units", response_model=UnitList, operation_id="list_units")
def list_units(session: SessionDep, _key: ReadKey, plant: str | None = None) -> UnitList:
    units = service.list_units(session=session, plant_slug=plant)
    return UnitList(
        units=[_unit_read(service.get_unit(session=session, slug=u.slug)) for u in units]
    )


@router.get("/units/{unit}", response_model=UnitRead, operation_id="get_unit")
def get_unit(unit: str, session: SessionDep, _key: ReadKey) -> UnitRead:
    return _unit_read(service.get_unit(session=session, slug=unit))


def _kind_read(kind: UnitKind) -> KindRead:
    def role(r: Any) -> RoleRead:
        return RoleRead(name=r.name, unit=r.unit, required=r.required, description=r.description)

    return KindRead(
        name=kind.name,
        title=kind.title,
        description=kind.description,
        needs_fuel=kind.needs_fuel,
        roles=[role(r) for r in kind.roles],
        port_groups=[
            PortGroupRead(
                name=g.name,
                roles=[role(r) for r in g.roles],
                min_ports=g.min_ports,
                max_ports=g.max_ports,
                description=g.description,
            )
            for g in kind.port_groups
        ],
        alternatives=[list(a) for a in kind.alternatives],
        parameters=[
            ParameterRead(
                name=p.name,
                unit=p.unit,
                default=p.default,
                minimum=p.minimum,
                maximum=p.maximum,
                description=p.description,
            )
            for p in kind.parameters
        ],
        text_parameters=[
            TextParameterRead(
                name=t.name, choices=list(t.choices), default=t.default, description=t.description
            )
            for t in kind.text_parameters
        ],
        fuel_roles=list(kind.fuel_roles),
        load_result=kind.load_result,
        results=[
            ResultColumnRead(name=r.name, unit=r.unit, description=r.description)
            for r in kind.results
        ],
    )


@router.get("/kinds", response_model=KindList, operation_id="list_kinds")
def list_kinds(_key: ReadKey) -> KindList:
    """The unit-kind catalogue: roles, parameters and results of every kind."""
    return KindList(kinds=[_kind_read(k) for _, k in sorted(all_kinds().items())])


PLANT_FILE_SCHEMA = PlantFile
"""Registered in the OpenAPI components by ``api.main`` (the body is read raw)."""
