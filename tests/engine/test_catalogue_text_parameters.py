"""Name-valued parameters of the unit-kind catalogue (engine/catalogue.py, TextParameter).

validate() texts are what a user with a wrong plant file reads, so they are asserted word
for word. The kind is defined here; its model is never called.
"""

from __future__ import annotations

import pytest

from engine.catalogue import (
    ModelContext,
    Parameter,
    Problem,
    ResultColumn,
    Role,
    TextParameter,
    UnitKind,
)
from engine.deadstate import dead_state


def _no_model(inputs, params, context):  # pragma: no cover - never called here
    raise AssertionError("not called")


def _kind(*text: TextParameter, numeric: tuple[Parameter, ...] = ()) -> UnitKind:
    return UnitKind(
        name="machine",
        title="A test kind with name-valued parameters",
        roles=(Role("power", "W"),),
        parameters=numeric,
        results=(ResultColumn("x_w", "W"),),
        model=_no_model,
        text_parameters=text,
    )


FLUID = TextParameter("fluid", ("R134a", "R717"), "R134a", "Working fluid.")
MODE = TextParameter("mode", ("cooling", "heating"), None, "Which heat is the product.")
MACHINE = _kind(FLUID, MODE, numeric=(Parameter("gain", "1", 1.0),))


def _texts(problems: list[Problem]) -> list[str]:
    return [str(p) for p in problems]


def test_valid_text_parameters_give_no_problem():
    problems = MACHINE.validate(["power"], {}, False, {"fluid": "R717", "mode": "heating"})
    assert problems == []


def test_value_not_among_the_choices_is_named_with_them():
    problems = MACHINE.validate(["power"], {}, False, {"fluid": "R12", "mode": "cooling"})
    assert _texts(problems) == ["parameter 'fluid': 'R12' is not one of R134a, R717"]


def test_unknown_text_parameter_and_required_one_missing():
    problems = MACHINE.validate(["power"], {}, False, {"fluids": "R717"})
    assert _texts(problems) == [
        "parameter 'fluids': unknown name; known: fluid, mode",
        "parameter 'mode': required (no default) but not given",
    ]


def test_kind_without_text_parameters_says_none_are_known():
    plain = _kind()
    assert _texts(plain.validate(["power"], {}, False, {"fluid": "R717"})) == [
        "parameter 'fluid': unknown name; known: none"
    ]
    # Omitting the mapping is the same as giving none (callers that predate it).
    assert plain.validate(["power"], {}, False) == []


def test_resolve_overlays_defaults():
    assert MACHINE.resolve_text_parameters({}) == {"fluid": "R134a"}
    assert MACHINE.resolve_text_parameters({"mode": "heating", "fluid": "R717"}) == {
        "fluid": "R717",
        "mode": "heating",
    }
    assert MACHINE.text_parameter("mode") is MODE
    assert MACHINE.text_parameter("gain") is None


def test_declaration_errors_are_caught_when_the_kind_is_built():
    with pytest.raises(ValueError, match=r"machine: parameter 'gain' declared twice"):
        _kind(TextParameter("gain", ("a",), "a"), numeric=(Parameter("gain", "1", 1.0),))
    with pytest.raises(ValueError, match=r"machine: default 'R22' of 'fluid' is not a choice"):
        _kind(TextParameter("fluid", ("R134a",), "R22"))


def test_model_context_carries_text_parameters_and_defaults_to_none():
    context = ModelContext(dead_state(), text_parameters={"fluid": "R717"})
    assert context.text_parameters == {"fluid": "R717"}
    assert ModelContext(dead_state()).text_parameters == {}
