"""The unit-kind catalogue (engine/catalogue.py) and its entries.

validate() is what the service shows a user whose plant file is wrong, so its texts are
asserted word for word. The port-group checks use a small kind defined here (boiler and
block have no port groups).
"""

from __future__ import annotations

import pandas as pd
import pint
import pytest

from engine.catalogue import (
    ModelContext,
    Parameter,
    PortGroup,
    Problem,
    ResultColumn,
    Role,
    UnitKind,
    all_kinds,
    get_kind,
)
from engine.deadstate import dead_state
from engine.fuels import FuelProperties

BOILER_MINIMUM = [
    "fuel_mass_flow",
    "feedwater_flow",
    "feedwater_pressure",
    "feedwater_temperature",
    "steam_flow",
    "steam_pressure",
    "steam_temperature",
]


def _texts(problems: list[Problem]) -> list[str]:
    return [str(p) for p in problems]


def _no_model(inputs, params, context):  # pragma: no cover - never called here
    raise AssertionError("not called")


PORTED = UnitKind(
    name="ported",
    title="A test kind with a port group",
    roles=(Role("inlet_flow", "kg/s"),),
    parameters=(Parameter("gain", "1", None, minimum=0.0),),
    results=(ResultColumn("x_w", "W"),),
    model=_no_model,
    port_groups=(
        PortGroup(
            "extraction",
            roles=(
                Role("flow", "kg/s"),
                Role("pressure", "Pa"),
                Role("temperature", "K", required=False),
            ),
            min_ports=1,
            max_ports=2,
        ),
    ),
)


# --- boiler and block entries ----------------------------------------------------------


def test_kinds_are_registered():
    kinds = all_kinds()
    assert kinds["boiler"].name == "boiler"
    assert kinds["block"].name == "block"
    assert get_kind("boiler") is kinds["boiler"]


def test_unknown_kind_names_the_known_ones():
    # Sorted names, so the list starts with the kinds whose names sort first.
    with pytest.raises(
        KeyError, match=r"unknown unit kind 'furnace'; known: air_compressor, block, boiler, "
    ):
        get_kind("furnace")


def test_minimal_boiler_configuration_is_valid():
    assert get_kind("boiler").validate(BOILER_MINIMUM, {}, has_fuel=True) == []


def test_full_boiler_configuration_with_volume_flow_is_valid():
    kind = get_kind("boiler")
    bound = [r.name for r in kind.roles if r.name != "fuel_mass_flow"]
    params = {"mass_balance_tolerance": 0.03, "sgen_tolerance": 0.0}
    assert kind.validate(bound, params, has_fuel=True) == []


def test_unknown_role_is_named_with_the_known_ones():
    kind = get_kind("block")
    problems = kind.validate(["gross_power", "fuel_mass_flow", "gross_powr"], {}, True)
    known = ", ".join(r.name for r in kind.roles)
    assert _texts(problems) == [f"role 'gross_powr': not a role of block; known: {known}"]
    assert known.startswith("gross_power, auxiliary_power, fuel_mass_flow, fuel_volume_flow")


def test_missing_required_roles_are_each_named():
    bound = [r for r in BOILER_MINIMUM if r not in ("steam_flow", "feedwater_temperature")]
    problems = get_kind("boiler").validate(bound, {}, has_fuel=True)
    assert _texts(problems) == [
        "role 'feedwater_temperature': required but not bound to a tag",
        "role 'steam_flow': required but not bound to a tag",
    ]


def test_alternatives_need_at_least_one_fuel_flow():
    bound = [r for r in BOILER_MINIMUM if r != "fuel_mass_flow"]
    problems = get_kind("boiler").validate(bound, {}, has_fuel=True)
    assert _texts(problems) == [
        "roles 'fuel_mass_flow' or 'fuel_volume_flow': bind at least one of them"
    ]


def test_needs_fuel():
    assert _texts(get_kind("boiler").validate(BOILER_MINIMUM, {}, has_fuel=False)) == [
        "fuel: a boiler burns a fuel; name one"
    ]
    block_roles = ["gross_power", "fuel_volume_flow"]
    assert _texts(get_kind("block").validate(block_roles, {}, has_fuel=False)) == [
        "fuel: a block burns a fuel; name one"
    ]


def test_parameter_bounds_and_unknown_parameters():
    problems = get_kind("boiler").validate(
        BOILER_MINIMUM,
        {"mass_balance_tolerance": -0.01, "sgen_tolerance": 1.5, "energy_tolerance": 0.1},
        has_fuel=True,
    )
    assert _texts(problems) == [
        "parameter 'mass_balance_tolerance': -0.01 is below the minimum 0.0",
        "parameter 'sgen_tolerance': 1.5 is above the maximum 1.0",
        "parameter 'energy_tolerance': unknown; known: mass_balance_tolerance, sgen_tolerance, "
        "reference_temperature_k, air_humidity_ratio, surface_loss_fraction, "
        "rated_heat_output_w, carbon_in_fly_ash, carbon_in_bottom_ash, fly_ash_fraction, "
        "direct_indirect_tolerance",
    ]


def test_block_parameters_and_defaults():
    kind = get_kind("block")
    assert kind.resolve_parameters({"auxiliary_fraction": 0.06}) == {
        "auxiliary_fraction": 0.06,
        "hot_reservoir_temperature_k": 0.0,
        "sgen_tolerance": 0.01,
    }
    assert _texts(
        kind.validate(["gross_power", "fuel_mass_flow"], {"auxiliary_fraction": 1.2}, True)
    ) == ["parameter 'auxiliary_fraction': 1.2 is above the maximum 1.0"]


# --- port groups and parameters without default (a kind defined in this test) ---------


def test_port_group_roles_resolve():
    assert PORTED.role("extraction1_flow").name == "flow"
    assert PORTED.role("extraction12_temperature").name == "temperature"
    assert PORTED.role("extraction1_enthalpy") is None
    assert PORTED.role("inlet_flow").unit == "kg/s"


def test_port_group_minimum_and_required_parameter():
    assert _texts(PORTED.validate(["inlet_flow"], {}, has_fuel=False)) == [
        "ports 'extraction': at least 1 required, 0 bound",
        "parameter 'gain': required (no default) but not given",
    ]


def test_port_group_maximum_and_roles_required_per_port():
    bound = [
        "inlet_flow",
        "extraction1_flow",
        "extraction1_pressure",
        "extraction2_flow",  # pressure missing on port 2
        "extraction3_flow",
        "extraction3_pressure",
        "extraction3_temperature",
        "extraction1_enthalpy",  # not a role of the group
    ]
    problems = PORTED.validate(bound, {"gain": 2.0}, has_fuel=False)
    assert _texts(problems) == [
        "role 'extraction1_enthalpy': not a role of ported; known: inlet_flow",
        "ports 'extraction': at most 2 allowed, 3 bound",
        "role 'extraction2_pressure': required for every port of the group but not bound",
    ]


def test_parameter_minimum_on_a_required_parameter():
    problems = PORTED.validate(
        ["inlet_flow", "extraction1_flow", "extraction1_pressure"], {"gain": -1.0}, False
    )
    assert _texts(problems) == ["parameter 'gain': -1.0 is below the minimum 0.0"]


# --- every registered kind: declarations the service relies on ------------------------

_UNITS = pint.UnitRegistry()


@pytest.mark.parametrize("name", sorted(all_kinds()))
def test_every_kind_declares_parseable_units_and_unique_names(name):
    kind = all_kinds()[name]
    role_names = [r.name for r in kind.roles]
    result_names = [r.name for r in kind.results]
    assert len(set(role_names)) == len(role_names)
    assert len(set(result_names)) == len(result_names)
    assert "flags" not in result_names
    for unit in [r.unit for r in kind.roles] + [r.unit for r in kind.results]:
        _UNITS.Quantity(1.0, unit)  # raises on an unparseable unit
    for p in kind.parameters:
        _UNITS.Quantity(1.0, p.unit)
        if p.default is not None:
            assert p.minimum is None or p.default >= p.minimum, p.name
            assert p.maximum is None or p.default <= p.maximum, p.name
    for group in kind.alternatives:
        assert all(kind.role(n) is not None and not kind.role(n).required for n in group)


# Unit suffixes of result names (DESIGN.md, Naming; STYLE.md): checked for the kinds
# whose naming this test owns.
_SUFFIX = {"W": "_w", "W/K": "_w_per_k", "J/kWh": "_j_per_kwh"}


@pytest.mark.parametrize("name", ["boiler", "block"])
def test_result_names_carry_their_si_unit(name):
    for column in get_kind(name).results:
        if column.unit == "1":
            assert not column.name.endswith(("_w", "_k")), column.name
        else:
            assert column.name.endswith(_SUFFIX[column.unit]), column.name


_SAMPLE_INPUTS = {
    "boiler": {
        "fuel_mass_flow": 2.5,
        "feedwater_flow": 40.0,
        "feedwater_pressure": 12e6,
        "feedwater_temperature": 493.15,
        "steam_flow": 40.0,
        "steam_pressure": 10e6,
        "steam_temperature": 783.15,
    },
    "block": {"gross_power": 50e6, "fuel_mass_flow": 2.5},
}


@pytest.mark.parametrize("name", ["boiler", "block"])
def test_model_returns_the_declared_columns(name):
    kind = get_kind(name)
    inputs = pd.DataFrame([_SAMPLE_INPUTS[name]] * 2)
    fuel = FuelProperties("fictional gas", hhv_j_per_kg=52.5e6, lhv_j_per_kg=47.4e6)
    out = kind.model(inputs, kind.resolve_parameters({}), ModelContext(dead_state(), fuel))
    assert list(out.columns) == [r.name for r in kind.results] + ["flags"]
    assert out["flags"].tolist() == [0, 0]
    assert kind.validate(list(_SAMPLE_INPUTS[name]), {}, has_fuel=True) == []
