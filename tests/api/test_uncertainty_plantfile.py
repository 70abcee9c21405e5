"""Instrument uncertainty in the plant file, on SQLite and PostgreSQL: the four forms
(absolute, percent of reading, percent of span, a 95 % figure) and the random component
turned into the standard uncertainties the propagation receives, by hand calculation.

Conversions by hand with factors exact by definition (NIST SP 811, 2008 ed., App. B.8
and B.9): 1 psi = 0.45359237 * 9.80665 / 0.0254**2 Pa; a Fahrenheit degree is 5/9 K; 1 bar =
1e5 Pa; gauge pressures against the test plant's atmosphere of 100 kPa. A 95 % figure is
halved (coverage factor 2: ASME PTC 19.1-2018 large-sample t95 = 2, JCGM 100:2008 G.6.6).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import select

from api.plants.models import Tag, Unit
from api.plants.service import load_unit_config
from api.uncertainty import specs
from engine.catalogue import get_kind
from engine.uncertainty import FUEL_HEATING_VALUE
from tests.api.factories import ATMOSPHERE_PA, T0, plant_document

PSI_PA = 0.45359237 * 9.80665 / 0.0254**2


def stated_plant() -> dict:
    doc = plant_document()
    tags = doc["tags"]
    # 1 % of the gauge reading: of 95 bar, not of the 9.6 MPa absolute.
    tags["FW-P"] = {"unit": "barg", "low": 0, "high": 100, "uncertainty": "1% of reading"}
    # 0.25 % of the span 0..1500 psig, standard.
    tags["MS-P"] = {"unit": "psig", "low": 0, "high": 1500, "uncertainty": "0.25% of span"}
    # 3.6 degF at 95 %: 2 K expanded, 1 K standard.
    tags["MS-T"] = {
        "unit": "degF",
        "low": 32,
        "high": 1000,
        "uncertainty": {"value": 3.6, "coverage": "expanded95"},
    }
    # 0.4 % of the Celsius reading at 95 %, and 0.1 K of random scatter.
    tags["FW-T"] = {
        "unit": "degC",
        "low": 0,
        "high": 300,
        "uncertainty": [
            {"value": "0.4% of reading", "coverage": "expanded95"},
            {"value": 0.1, "component": "random"},
        ],
    }
    # 0.5 % of a stated 4000 Nm3/h calibrated span at 95 %: 10 Nm3/h standard.
    tags["GAS"] = {
        "unit": "Nm3/h",
        "low": 0,
        "high": 5000,
        "uncertainty": {"value": "0.5% of span", "span": 4000, "coverage": "expanded95"},
    }
    doc["fuels"]["gas"]["uncertainty"] = {"heating_value": {"value": "1.2%"}}
    return doc


def apply(client, admin, doc) -> dict:
    response = client.post("/api/v1/plants", json=doc, headers=admin)
    assert response.status_code == 200, response.text
    return response.json()


def test_each_form_gives_the_hand_calculated_standard_uncertainty(client, admin, session) -> None:
    apply(client, admin, stated_plant())
    unit_id = session.scalar(select(Unit.id).where(Unit.slug == "boiler-a"))
    config = load_unit_config(session=session, unit_id=unit_id)
    kind = get_kind("boiler")
    # One interval at a plausible operating point, in SI.
    inputs = pd.DataFrame(
        {
            "feedwater_pressure": [95e5 + ATMOSPHERE_PA],
            "steam_pressure": [1200 * PSI_PA + ATMOSPHERE_PA],
            "steam_temperature": [(950 - 32) / 1.8 + 273.15],
            "feedwater_temperature": [215 + 273.15],
            "fuel_volume_flow": [4300 / 3600],
            "feedwater_flow": [60e3 / 3600],
            "steam_flow": [132e3 * 0.45359237 / 3600],
        }
    )
    figures = specs.input_figures(config, kind, list(inputs.columns))
    got = specs.uncertainties(figures, inputs, fuel=config.fuel)
    source = {f.name: f.source for f in figures}

    def parts(name: str) -> tuple[float, float]:
        u = got[name]
        return float(np.asarray(u.systematic)[0]), float(np.asarray(u.random)[0])

    assert parts("feedwater_pressure") == pytest.approx((0.01 * 95e5, 0.0), rel=1e-12)
    assert parts("steam_pressure") == pytest.approx((0.0025 * 1500 * PSI_PA, 0.0), rel=1e-9)
    assert parts("steam_temperature") == pytest.approx((1.0, 0.0), rel=1e-9)
    assert parts("feedwater_temperature") == pytest.approx((0.004 * 215 / 2, 0.1), rel=1e-9)
    assert parts("fuel_volume_flow") == pytest.approx((10 / 3600, 0.0), rel=1e-9)
    assert parts("feedwater_flow") == pytest.approx((0.01 * 60e3 / 3600, 0.0), rel=1e-9)
    # Not stated: the mass-flow default, 2 % of reading at 95 % (common practice).
    assert parts("steam_flow") == pytest.approx((0.01 * 132e3 * 0.45359237 / 3600, 0.0))
    assert source["steam_flow"] == "default" and source["steam_pressure"] == "stated"
    # The fuel's stated heating value: 1.2 % standard of 50 MJ/kg.
    assert parts(FUEL_HEATING_VALUE) == pytest.approx((0.012 * 50e6, 0.0), rel=1e-12)
    assert source[FUEL_HEATING_VALUE] == "stated"


def test_stored_figures_and_the_exported_file_round_trip(client, admin, make_key, session) -> None:
    apply(client, admin, stated_plant())
    tags = {t.name: t for t in session.scalars(select(Tag))}
    assert tags["MS-T"].uncertainty_figures == [
        {
            "basis": "absolute",
            "value": pytest.approx(2.0),
            "coverage": "expanded95",
            "component": "systematic",
        }
    ]
    assert tags["FW-P"].uncertainty_figures[0]["zero"] == pytest.approx(ATMOSPHERE_PA)
    # The simple forms keep their columns.
    assert tags["FW-FLOW"].uncertainty_rel == pytest.approx(0.01)
    assert tags["MS-T"].uncertainty_si is None
    exported = client.get("/api/v1/plants/test-works/file", headers=make_key("read"))
    again = client.put(
        "/api/v1/plants/test-works",
        content=exported.text,
        headers={**admin, "Content-Type": "application/yaml"},
    ).json()
    assert (again["changed"], again["updated"]) == (False, [])


def test_a_span_figure_needs_a_span(client, admin) -> None:
    doc = plant_document()
    doc["tags"]["SPARE"] = {"unit": "kPa", "uncertainty": "0.1% of span"}
    response = client.post("/api/v1/plants", json=doc, headers=admin)
    assert response.status_code == 422
    assert response.json()["errors"] == [
        {
            "field": "tags.SPARE.uncertainty",
            "message": "tag 'SPARE': a '% of span' figure needs 'span', or 'low' and 'high'",
        }
    ]
    doc["tags"]["SPARE"] = {"unit": "kPa", "uncertainty": {"value": "2 percent"}}
    response = client.post("/api/v1/plants", json=doc, headers=admin)
    assert response.status_code == 422
    message = response.json()["errors"][0]["message"]
    assert "or '<n>% of reading' (or '<n>% of span')" in message


def test_changing_a_tags_uncertainty_queues_the_units_it_feeds(
    client, admin, make_key, session
) -> None:
    apply(client, admin, plant_document())
    readings = [{"tag": "FW-T", "time": T0 + i * 60_000, "value": 100.0} for i in range(3)]
    response = client.post(
        "/api/v1/readings",
        json={"plant": "test-works", "readings": readings},
        headers=make_key("ingest"),
    )
    assert response.status_code == 200, response.text
    doc = plant_document()
    doc["tags"]["FW-T"] = {**doc["tags"]["FW-T"], "uncertainty": 0.2}
    report = apply(client, admin, doc)
    assert (report["updated"], report["units_marked_dirty"]) == (["tag FW-T"], ["boiler-a"])
    # A description is not an uncertainty: nothing to recompute.
    doc["tags"]["FW-T"]["description"] = "feedwater after the last heater"
    report = apply(client, admin, doc)
    assert (report["updated"], report["units_marked_dirty"]) == (["tag FW-T"], [])
