"""Plant files: validation against the catalogue, idempotent apply, change effects."""

from __future__ import annotations

import pytest
import yaml
from sqlalchemy import func, select

from api.pipeline.models import WorkSpan
from api.plants.models import Plant, Tag, Unit, UnitBinding
from engine.catalogue import get_kind
from tests.api.factories import T0, plant_document

YAML = {"Content-Type": "application/yaml"}


def apply(client, headers, doc, **params):
    return client.post("/api/v1/plants", json=doc, headers=headers, params=params)


def count(session, model) -> int:
    return session.scalar(select(func.count()).select_from(model))


def test_apply_creates_everything_and_converts_to_si(client, admin, session) -> None:
    response = apply(client, admin, plant_document())
    report = response.json()
    assert response.status_code == 200, report
    assert report["changed"] is True
    assert "plant test-works" in report["created"] and "unit boiler-a" in report["created"]
    assert len([c for c in report["created"] if c.startswith("tag ")]) == 8
    plant = session.scalars(select(Plant)).one()
    # 25 degC = 298.15 K; "100 kPa" atmosphere; "1 min" interval.
    assert (plant.t0_k, plant.p0_pa) == (pytest.approx(298.15), pytest.approx(101_325.0))
    assert (plant.atmosphere_pa, plant.interval_seconds) == (pytest.approx(1e5), 60)
    tags = {t.name: t for t in session.scalars(select(Tag))}
    # The SI unit comes from the role the tag feeds; an unbound tag gets its dimension's.
    assert (tags["MS-P"].si_unit, tags["MS-T"].si_unit, tags["GAS"].si_unit) == ("Pa", "K", "m^3/s")
    assert tags["SPARE"].si_unit == "Pa"
    # Bounds in SI: 0 barg = the atmosphere; 1000 degF = 810.927... K.
    assert tags["FW-P"].low_si == pytest.approx(1e5)
    assert tags["MS-T"].high_si == pytest.approx((1000 - 32) * 5 / 9 + 273.15)
    # "0.1" barg absolute uncertainty is a difference: 1e4 Pa, no atmosphere added.
    assert tags["FW-P"].uncertainty_si == pytest.approx(1e4)
    assert tags["FW-T"].uncertainty_si == pytest.approx(0.5)
    assert tags["FW-FLOW"].uncertainty_rel == pytest.approx(0.01)
    assert count(session, UnitBinding) == 7


def test_applying_the_same_file_twice_changes_nothing(client, admin, session) -> None:
    doc = plant_document()
    apply(client, admin, doc)
    text = yaml.safe_dump(doc)
    second = client.post("/api/v1/plants", content=text, headers={**admin, **YAML})
    assert second.status_code == 200, second.text
    assert second.json() == {
        "plant": "test-works",
        "changed": False,
        "created": [],
        "updated": [],
        "deleted": [],
        "kept_tags": [],
        "units_marked_dirty": [],
        "dry_run": False,
    }
    assert count(session, WorkSpan) == 0


def test_exported_file_applies_back_unchanged(client, admin, make_key) -> None:
    apply(client, admin, plant_document())
    exported = client.get("/api/v1/plants/test-works/file", headers=make_key("read"))
    assert exported.status_code == 200
    assert exported.headers["content-type"].startswith("application/yaml")
    again = client.put(
        "/api/v1/plants/test-works", content=exported.text, headers={**admin, **YAML}
    ).json()
    assert (again["changed"], again["updated"]) == (False, [])


def test_every_problem_is_reported_and_nothing_applied(client, admin, session) -> None:
    doc = plant_document()
    unit = doc["units"]["boiler-a"]
    del unit["inputs"]["steam_flow"]  # required role missing
    unit["inputs"]["steam_pressure"] = "FW-T"  # degC cannot feed Pa
    unit["inputs"]["flue_gas_colour"] = "SPARE"  # no such role
    unit["inputs"]["feedwater_flow"] = "FW-FLOWW"  # no such tag
    unit["parameters"]["mass_balance_tolerance"] = 1.5  # above the maximum 1
    doc["units"]["turbine-x"] = {"name": "X", "kind": "perpetual_motion", "inputs": {}}
    response = apply(client, admin, doc)
    body = response.json()
    assert response.status_code == 422
    assert body["detail"] == "the plant file has 6 problem(s); nothing was applied"
    by_field = {e["field"]: e["message"] for e in body["errors"]}
    assert by_field["units.turbine-x.kind"].startswith(
        "unit 'turbine-x': unknown kind 'perpetual_motion'; known: air_compressor, block, boiler"
    )
    assert by_field["units.boiler-a.inputs.steam_flow"] == (
        "unit 'boiler-a', role 'steam_flow': required but not bound to a tag"
    )
    assert by_field["units.boiler-a.inputs.flue_gas_colour"].startswith(
        "unit 'boiler-a', role 'flue_gas_colour': not a role of boiler; known: fuel_mass_flow"
    )
    assert by_field["units.boiler-a.inputs.feedwater_flow"] == (
        "unit 'boiler-a', role 'feedwater_flow': tag 'FW-FLOWW' is not defined under tags"
    )
    assert by_field["units.boiler-a.inputs.steam_pressure"].startswith(
        "unit 'boiler-a', role 'steam_pressure': tag 'FW-T' cannot feed it: unit 'degC'"
    )
    assert by_field["units.boiler-a.parameters.mass_balance_tolerance"] == (
        "unit 'boiler-a', parameter 'mass_balance_tolerance': 1.5 is above the maximum 1.0"
    )
    assert count(session, Plant) == 0 and count(session, Tag) == 0


def test_schema_errors_name_the_field(client, admin) -> None:
    doc = plant_document()
    doc["plant"]["slug"] = "Not A Slug"
    doc["plant"]["colour"] = "green"
    doc["tags"]["FW-T"]["uncertainty"] = "about half a degree"
    body = apply(client, admin, doc).json()
    fields = sorted(e["field"] for e in body["errors"])
    assert fields == ["plant.colour", "plant.slug", "tags.FW-T.uncertainty"]
    messages = {e["field"]: e["message"] for e in body["errors"]}
    assert (
        "write a number in the tag's unit, or '<n>% of reading'"
        in messages["tags.FW-T.uncertainty"]
    )


def test_bad_quantities_and_time_zone_are_reported(client, admin) -> None:
    doc = plant_document()
    doc["plant"]["time_zone"] = "Mars/Olympus"
    doc["plant"]["dead_state"]["temperature"] = "25 furlongs"
    doc["tags"]["FW-T"]["unit"] = "degQ"
    body = apply(client, admin, doc).json()
    by_field = {e["field"]: e["message"] for e in body["errors"]}
    assert by_field["plant.time_zone"] == (
        "plant.time_zone: 'Mars/Olympus' is not an IANA time zone name"
    )
    assert by_field["plant.dead_state.temperature"].startswith(
        "plant.dead_state.temperature: unit 'furlongs'"
    )
    assert by_field["tags.FW-T.unit"].startswith("tag 'FW-T': unknown unit of measure 'degQ'")


def test_yaml_with_a_repeated_key_is_refused_with_its_line(client, admin) -> None:
    text = "plant:\n  slug: a\n  slug: b\n"
    body = client.post("/api/v1/plants", content=text, headers={**admin, **YAML}).json()
    assert body["detail"] == "the plant file is not valid YAML"
    assert body["errors"][0]["row"] == 3
    assert "the key 'slug' appears twice" in body["errors"][0]["message"]


def test_unsupported_media_type_is_415(client, admin) -> None:
    response = client.post(
        "/api/v1/plants", content="x", headers={**admin, "Content-Type": "text/plain"}
    )
    assert response.status_code == 415
    assert response.json()["detail"] == (
        "send the plant file as application/yaml or application/json, not 'text/plain'"
    )


def test_put_slug_must_match(client, admin) -> None:
    response = client.put("/api/v1/plants/other", json=plant_document(), headers=admin)
    assert response.status_code == 422
    assert response.json()["detail"] == "the file describes plant 'test-works', not 'other'"


def test_dry_run_reports_and_writes_nothing(client, admin, session) -> None:
    report = apply(client, admin, plant_document(), dry_run="true").json()
    assert (report["dry_run"], report["changed"]) == (True, True)
    assert count(session, Plant) == 0


def test_unit_slug_is_unique_across_plants(client, admin) -> None:
    apply(client, admin, plant_document())
    other = plant_document()
    other["plant"] = {**other["plant"], "slug": "second-site"}
    body = apply(client, admin, other).json()
    assert body["errors"] == [
        {
            "field": "units.boiler-a",
            "message": "unit slug 'boiler-a' already belongs to plant 'test-works'",
        }
    ]


def test_binding_change_queues_the_unit_over_its_stored_readings(
    client, admin, make_key, session
) -> None:
    apply(client, admin, plant_document())
    readings = [{"tag": "FW-T", "time": T0 + i * 60_000, "value": 100.0} for i in range(10)]
    client.post(
        "/api/v1/readings",
        json={"plant": "test-works", "readings": readings},
        headers=make_key("ingest"),
    )
    session.execute(WorkSpan.__table__.delete())
    session.commit()
    doc = plant_document()
    doc["tags"]["FW-T2"] = {"unit": "degC"}
    doc["units"]["boiler-a"]["inputs"]["feedwater_temperature"] = "FW-T2"
    report = apply(client, admin, doc).json()
    assert report["updated"] == ["unit boiler-a"] and report["created"] == ["tag FW-T2"]
    assert report["units_marked_dirty"] == ["boiler-a"]
    spans = session.execute(select(WorkSpan.start_ms, WorkSpan.end_ms, WorkSpan.reason)).all()
    # The new binding has no readings, but the unit's other tags do: the span covers them.
    assert [tuple(s) for s in spans] == [(T0, T0 + 10 * 60_000, "config")]


def test_tag_unit_change_queues_nothing(client, admin, session) -> None:
    apply(client, admin, plant_document())
    doc = plant_document()
    doc["tags"]["FW-T"] = {**doc["tags"]["FW-T"], "unit": "degF", "low": 32, "high": 572}
    report = apply(client, admin, doc).json()
    assert (report["updated"], report["units_marked_dirty"]) == (["tag FW-T"], [])


def test_missing_units_are_deleted_missing_tags_kept(client, admin, session) -> None:
    apply(client, admin, plant_document())
    doc = plant_document(units={})
    doc["tags"] = {k: v for k, v in doc["tags"].items() if k != "SPARE"}
    report = apply(client, admin, doc).json()
    assert report["deleted"] == ["unit boiler-a"]
    assert report["kept_tags"] == ["SPARE"]
    assert count(session, Unit) == 0 and count(session, UnitBinding) == 0
    assert session.scalar(select(func.count()).where(Tag.name == "SPARE")) == 1


def test_read_routes(client, admin, make_key) -> None:
    apply(client, admin, plant_document())
    read = make_key("read")
    plants = client.get("/api/v1/plants", headers=read).json()["plants"]
    assert [(p["slug"], p["units"]) for p in plants] == [("test-works", ["boiler-a"])]
    detail = client.get("/api/v1/plants/test-works", headers=read).json()
    assert [f["hhv_j_per_kg"] for f in detail["fuels"]] == [pytest.approx(50e6)]
    unit = client.get("/api/v1/units/boiler-a", headers=read).json()
    assert (unit["kind"], unit["fuel"], unit["inputs"]["steam_pressure"]) == (
        "boiler",
        "gas",
        "MS-P",
    )
    assert [r["name"] for r in unit["results"]] == [r.name for r in get_kind("boiler").results]
    kinds = client.get("/api/v1/kinds", headers=read).json()["kinds"]
    assert {"boiler", "block"} <= {k["name"] for k in kinds}
    missing = client.get("/api/v1/units/nope", headers=read)
    assert (missing.status_code, missing.json()["detail"]) == (404, "no unit 'nope'")


def test_demo_plant_file_is_valid(client, admin) -> None:
    from api.examples import DEMO_PLANT

    response = client.post(
        "/api/v1/plants", content=DEMO_PLANT.read_bytes(), headers={**admin, **YAML}
    )
    assert response.status_code == 200, response.text
    assert sorted(c for c in response.json()["created"] if c.startswith("unit ")) == [
        "unit boiler-1",
        "unit chp",
        "unit turbine-1",
    ]


def test_document_must_be_a_mapping(client, admin) -> None:
    body = client.post("/api/v1/plants", json=[1, 2], headers=admin).json()
    assert body["detail"] == "a plant file is a mapping with the sections plant, fuels, tags, units"


def test_fuels_by_composition(client, admin, session) -> None:
    from api.plants.models import Fuel
    from api.plants.service import load_unit_config

    doc = plant_document()
    doc["fuels"]["methane"] = {"gas": {"composition": {"CH4": 1.0}}}
    doc["fuels"]["bark"] = {
        "solid": {
            "ultimate": {
                "C": 0.25,
                "H": 0.03,
                "O": 0.21,
                "N": 0.002,
                "ash": 0.018,
                "moisture": 0.49,
            }
        }
    }
    doc["units"]["boiler-a"]["fuel"] = "methane"
    response = apply(client, admin, doc)
    assert response.status_code == 200, response.text
    methane = session.scalars(select(Fuel).where(Fuel.name == "methane")).one()
    # Methane: standard enthalpy of combustion -890.6 kJ/mol at 25 degC (NIST Chemistry
    # WebBook, from memory) over M = 16.043 g/mol -> 55.5 MJ/kg; 0.5 % covers the spread
    # of tabulated values (ISO 6976:2016 gives about 891.5 kJ/mol).
    assert methane.hhv_j_per_kg == pytest.approx(890.6e3 / 16.043e-3, rel=5e-3)
    # Ideal gas at the normal state, 0 degC and 101.325 kPa (DIN 1343), R = 8.314462618.
    assert methane.density_kg_per_m3 == pytest.approx(
        101_325 * 16.043e-3 / (8.314462618 * 273.15), rel=1e-3
    )
    unit_id = session.scalar(select(Unit.id).where(Unit.slug == "boiler-a"))
    config = load_unit_config(session=session, unit_id=unit_id)
    # Rebuilt from the stored section, the fuel keeps what the heat-loss method needs.
    assert config.fuel is not None and config.fuel.kind == "gas"
    assert config.fuel.ultimate is not None
    assert config.fuel.ultimate.carbon == pytest.approx(12.011 / 16.043, rel=1e-3)


def test_bad_fuel_composition_is_reported(client, admin) -> None:
    doc = plant_document()
    doc["fuels"]["mix"] = {"gas": {"composition": {"CH4": 0.5, "Ar": 0.5}}}
    doc["fuels"]["both"] = {
        "heating_value": {"hhv": "40 MJ/kg"},
        "solid": {"ultimate": {"C": 1.0}},
    }
    body = apply(client, admin, doc).json()
    by_field = {e["field"]: e["message"] for e in body["errors"]}
    assert by_field["fuels.mix"].startswith(
        "fuel 'mix': gas.composition: unknown gas component 'Ar'; known: CH4"
    )
    assert by_field["fuels.both"] == (
        "fuel 'both': give exactly one of heating_value, gas, solid, liquid "
        "(got heating_value, solid)"
    )
