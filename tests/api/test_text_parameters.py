"""Name-valued unit parameters (a refrigerant, an O2 basis) through plant files to the model."""

from __future__ import annotations

from sqlalchemy import select

from api.plants.models import Unit
from api.plants.service import load_unit_config
from tests.api.factories import plant_document

CHILLER_TAGS = {
    "CH-KW": {"unit": "kW"},
    "CHW-IN": {"unit": "degC"},
    "CHW-OUT": {"unit": "degC"},
    "CHW-FLOW": {"unit": "kg/s"},
    "CW-IN": {"unit": "degC"},
    "CW-OUT": {"unit": "degC"},
}


def chiller(parameters: dict) -> dict:
    return {
        "name": "Chiller 1",
        "kind": "heat_pump",
        "inputs": {
            "electric_power": "CH-KW",
            "evaporator_in_temperature": "CHW-IN",
            "evaporator_out_temperature": "CHW-OUT",
            "evaporator_flow": "CHW-FLOW",
            "condenser_in_temperature": "CW-IN",
            "condenser_out_temperature": "CW-OUT",
        },
        "parameters": parameters,
    }


def document(parameters: dict) -> dict:
    doc = plant_document()
    doc["tags"] = {**doc["tags"], **CHILLER_TAGS}
    doc["units"] = {**doc["units"], "chiller-1": chiller(parameters)}
    return doc


def test_text_parameters_are_stored_and_reach_the_model_context(client, admin, session) -> None:
    response = client.post(
        "/api/v1/plants",
        json=document({"product": "heating", "refrigerant": "R134a"}),
        headers=admin,
    )
    assert response.status_code == 200, response.text
    unit = session.scalars(select(Unit).where(Unit.slug == "chiller-1")).one()
    config = load_unit_config(session=session, unit_id=unit.id)
    assert config.text_parameters == {"product": "heating", "refrigerant": "R134a"}
    # Numeric parameters keep only numbers: the names never reach float().
    assert "refrigerant" not in config.parameters


def test_text_parameter_defaults_are_overlaid(client, admin, session) -> None:
    response = client.post("/api/v1/plants", json=document({}), headers=admin)
    assert response.status_code == 200, response.text
    unit = session.scalars(select(Unit).where(Unit.slug == "chiller-1")).one()
    config = load_unit_config(session=session, unit_id=unit.id)
    assert config.text_parameters["product"] == "cooling"  # the kind's declared default


def test_a_text_parameter_outside_its_choices_is_refused_naming_unit_and_field(
    client, admin
) -> None:
    response = client.post("/api/v1/plants", json=document({"product": "lighting"}), headers=admin)
    assert response.status_code == 422
    body = response.json()
    messages = [e["message"] for e in body["errors"]]
    fields = [e.get("field") for e in body["errors"]]
    assert "units.chiller-1.parameters.product" in fields
    assert any("'lighting' is not one of" in m and "chiller-1" in m for m in messages)


def test_the_catalogue_lists_text_parameters(client, make_key) -> None:
    kinds = client.get("/api/v1/kinds", headers=make_key("read")).json()["kinds"]
    heat_pump = next(k for k in kinds if k["name"] == "heat_pump")
    product = next(t for t in heat_pump["text_parameters"] if t["name"] == "product")
    assert product["choices"] == ["cooling", "heating"]
    assert product["default"] == "cooling"
    assert heat_pump["load_result"] is not None
