"""The unit-kind catalogue: what each kind of unit measures, takes and computes.

A kind declares, as data, its measurement roles (each with its SI unit, so that the
service can check a tag's unit of measure against the role's dimension), repeatable
port groups (turbine extractions, HRSG pressure levels), parameters with defaults and
units, name-valued text parameters (a refrigerant, chosen from a list), the result
columns it produces and the model function that computes them. The service validates
plant configurations against this catalogue and calls the model; it needs no special
case per kind.

Model functions share one signature::

    model(inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext)
        -> pd.DataFrame

``inputs`` has one column per bound role (SI units, one row per interval); the result has
the same index, one float column per declared result, and an integer ``flags`` column
(:class:`engine.checks.Flag` bits).
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field

import pandas as pd

from engine.deadstate import DeadState
from engine.fuels import FuelProperties


@dataclass(frozen=True)
class Role:
    """A measurement a unit kind takes.

    Attributes
    ----------
    name : str
        Role name, used as the input column name and in plant files.
    unit : str
        SI unit the model expects, parseable by pint (``"kg/s"``, ``"Pa"``, ``"K"``).
    required : bool
        Whether a plant must bind a tag to it.
    description : str
        One line for people.
    """

    name: str
    unit: str
    required: bool = True
    description: str = ""


@dataclass(frozen=True)
class PortGroup:
    """A repeatable set of roles, bound as ``<group><n>_<role>`` (``extraction1_flow``)."""

    name: str
    roles: tuple[Role, ...]
    min_ports: int = 0
    max_ports: int = 9
    description: str = ""

    def role_name(self, index: int, role: str) -> str:
        return f"{self.name}{index}_{role}"

    def parse(self, bound: str) -> tuple[int, Role] | None:
        """Port number and role of a bound name of this group, or None."""
        match = re.fullmatch(rf"{re.escape(self.name)}(\d+)_(\w+)", bound)
        if not match:
            return None
        role = next((r for r in self.roles if r.name == match.group(2)), None)
        return (int(match.group(1)), role) if role else None


@dataclass(frozen=True)
class Parameter:
    """A configuration value of a unit kind, with its published or stated default."""

    name: str
    unit: str
    default: float | None
    description: str = ""
    minimum: float | None = None
    maximum: float | None = None


@dataclass(frozen=True)
class TextParameter:
    """A configuration value that is a name from a fixed list (a refrigerant, a product).

    A name has no unit and no conversion, so it is declared apart from the numeric
    :class:`Parameter` s; the model reads it from :attr:`ModelContext.text_parameters`.

    Attributes
    ----------
    name : str
        Parameter name, as in plant files.
    choices : tuple of str
        Every value the parameter may take.
    default : str or None
        The value used when none is given; None makes the parameter required.
    description : str
        One line for people.
    """

    name: str
    choices: tuple[str, ...]
    default: str | None
    description: str = ""


@dataclass(frozen=True)
class ResultColumn:
    """A result a unit kind computes, in SI units (``"1"`` for a fraction)."""

    name: str
    unit: str
    description: str = ""


@dataclass(frozen=True)
class ModelContext:
    """Plant-level data a model needs besides its own measurements.

    Attributes
    ----------
    dead : DeadState
        Dead state, scalar or one value per interval.
    fuel : FuelProperties or None
        The fuel bound to the unit, for kinds that burn one.
    text_parameters : Mapping[str, str]
        The unit's name-valued parameters (:class:`TextParameter`), defaults overlaid
        (:meth:`UnitKind.resolve_text_parameters`); empty for kinds that declare none.
    """

    dead: DeadState
    fuel: FuelProperties | None = None
    text_parameters: Mapping[str, str] = field(default_factory=dict)


ModelFunction = Callable[[pd.DataFrame, Mapping[str, float], ModelContext], pd.DataFrame]


@dataclass(frozen=True)
class Problem:
    """One thing wrong with a unit's configuration, naming the role or parameter."""

    where: str
    message: str

    def __str__(self) -> str:
        return f"{self.where}: {self.message}"


@dataclass(frozen=True)
class UnitKind:
    """One entry of the catalogue."""

    name: str
    title: str
    roles: tuple[Role, ...]
    parameters: tuple[Parameter, ...]
    results: tuple[ResultColumn, ...]
    model: ModelFunction
    port_groups: tuple[PortGroup, ...] = ()
    needs_fuel: bool = False
    description: str = ""
    alternatives: tuple[tuple[str, ...], ...] = ()
    """Groups of optional roles of which at least one must be bound (mass or volume flow)."""
    text_parameters: tuple[TextParameter, ...] = ()
    """Name-valued parameters (a refrigerant); numeric ones are in ``parameters``."""
    fuel_roles: tuple[str, ...] = ()
    """Optional roles that burn the unit's fuel: binding any of them makes a fuel required
    (an HRSG's duct firing), for kinds that do not need one otherwise (``needs_fuel``)."""
    load_result: str | None = None
    """The result column that measures how hard the unit works (its load: heat absorbed,
    power, duty); baselines regress on it and steady-state detection watches it."""
    _role_index: dict[str, Role] = field(default_factory=dict, repr=False, compare=False)

    def __post_init__(self) -> None:
        self._role_index.update({r.name: r for r in self.roles})
        for name in self.fuel_roles:
            if name not in self._role_index:
                raise ValueError(f"{self.name}: fuel role {name!r} is not a role of the kind")
        if self.load_result is not None and self.load_result not in {r.name for r in self.results}:
            raise ValueError(f"{self.name}: load result {self.load_result!r} is not a result")
        numeric = {p.name for p in self.parameters}
        for spec in self.text_parameters:
            if spec.name in numeric:
                raise ValueError(f"{self.name}: parameter {spec.name!r} declared twice")
            if spec.default is not None and spec.default not in spec.choices:
                raise ValueError(
                    f"{self.name}: default {spec.default!r} of {spec.name!r} is not a choice"
                )

    def role(self, bound: str) -> Role | None:
        """The role a bound name refers to (plain or port-group), or None if unknown."""
        if bound in self._role_index:
            return self._role_index[bound]
        for group in self.port_groups:
            parsed = group.parse(bound)
            if parsed:
                return parsed[1]
        return None

    def parameter(self, name: str) -> Parameter | None:
        return next((p for p in self.parameters if p.name == name), None)

    def resolve_parameters(self, given: Mapping[str, float]) -> dict[str, float]:
        """Declared defaults overlaid with the given values (validated separately)."""
        values = {p.name: p.default for p in self.parameters if p.default is not None}
        values.update(given)
        return values

    def text_parameter(self, name: str) -> TextParameter | None:
        return next((p for p in self.text_parameters if p.name == name), None)

    def resolve_text_parameters(self, given: Mapping[str, str]) -> dict[str, str]:
        """Declared text defaults overlaid with the given values (validated separately)."""
        values = {p.name: p.default for p in self.text_parameters if p.default is not None}
        values.update(given)
        return values

    def validate(
        self,
        bound_roles: Iterable[str],
        parameters: Mapping[str, float],
        has_fuel: bool,
        text_parameters: Mapping[str, str] | None = None,
    ) -> list[Problem]:
        """Every problem with a configuration of this kind; empty when it is usable."""
        problems: list[Problem] = []
        bound = list(bound_roles)
        for name in bound:
            if self.role(name) is None:
                known = ", ".join(r.name for r in self.roles)
                problems.append(
                    Problem(f"role {name!r}", f"not a role of {self.name}; known: {known}")
                )
        for role in self.roles:
            if role.required and role.name not in bound:
                problems.append(Problem(f"role {role.name!r}", "required but not bound to a tag"))
        for group in self.port_groups:
            ports: dict[int, set[str]] = {}
            for name in bound:
                parsed = group.parse(name)
                if parsed:
                    ports.setdefault(parsed[0], set()).add(parsed[1].name)
            if len(ports) < group.min_ports:
                problems.append(
                    Problem(
                        f"ports {group.name!r}",
                        f"at least {group.min_ports} required, {len(ports)} bound",
                    )
                )
            if len(ports) > group.max_ports:
                problems.append(
                    Problem(
                        f"ports {group.name!r}",
                        f"at most {group.max_ports} allowed, {len(ports)} bound",
                    )
                )
            for index, roles in sorted(ports.items()):
                for role in group.roles:
                    if role.required and role.name not in roles:
                        problems.append(
                            Problem(
                                f"role {group.role_name(index, role.name)!r}",
                                "required for every port of the group but not bound",
                            )
                        )
        for name, value in parameters.items():
            spec = self.parameter(name)
            if spec is None:
                known = ", ".join(p.name for p in self.parameters) or "none"
                problems.append(Problem(f"parameter {name!r}", f"unknown; known: {known}"))
                continue
            if spec.minimum is not None and value < spec.minimum:
                problems.append(
                    Problem(f"parameter {name!r}", f"{value} is below the minimum {spec.minimum}")
                )
            if spec.maximum is not None and value > spec.maximum:
                problems.append(
                    Problem(f"parameter {name!r}", f"{value} is above the maximum {spec.maximum}")
                )
        for spec in self.parameters:
            if spec.default is None and spec.name not in parameters:
                problems.append(
                    Problem(f"parameter {spec.name!r}", "required (no default) but not given")
                )
        texts = text_parameters or {}
        for name, text in texts.items():
            text_spec = self.text_parameter(name)
            if text_spec is None:
                known = ", ".join(p.name for p in self.text_parameters) or "none"
                problems.append(Problem(f"parameter {name!r}", f"unknown name; known: {known}"))
            elif text not in text_spec.choices:
                choices = ", ".join(text_spec.choices)
                problems.append(Problem(f"parameter {name!r}", f"{text!r} is not one of {choices}"))
        for text_spec in self.text_parameters:
            if text_spec.default is None and text_spec.name not in texts:
                problems.append(
                    Problem(f"parameter {text_spec.name!r}", "required (no default) but not given")
                )
        for group in self.alternatives:
            if not any(name in bound for name in group):
                problems.append(
                    Problem(
                        f"roles {' or '.join(repr(n) for n in group)}", "bind at least one of them"
                    )
                )
        if self.needs_fuel and not has_fuel:
            problems.append(Problem("fuel", f"a {self.name} burns a fuel; name one"))
        elif not has_fuel and (burning := [r for r in self.fuel_roles if r in bound]):
            names = ", ".join(repr(r) for r in burning)
            problems.append(
                Problem("fuel", f"{names} bound: the {self.name} then burns a fuel; name one")
            )
        return problems


def all_kinds() -> dict[str, UnitKind]:
    """Every unit kind lostwork knows, by name."""
    from engine.units import KINDS  # late import: unit modules import this one

    return {kind.name: kind for kind in KINDS}


def get_kind(name: str) -> UnitKind:
    """The unit kind called ``name``; ``KeyError`` naming the known kinds otherwise."""
    kinds = all_kinds()
    if name not in kinds:
        raise KeyError(f"unknown unit kind {name!r}; known: {', '.join(sorted(kinds))}")
    return kinds[name]
