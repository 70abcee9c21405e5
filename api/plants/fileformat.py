"""The plant file: one YAML (or JSON) document describing one plant completely.

Format ``lostwork-plant/1``::

    format: lostwork-plant/1
    plant:
      slug: fenwick-mill              # lower-case letters, digits, dashes
      name: Fenwick Mill CHP
      time_zone: Europe/Vienna        # IANA name; shift logs in local time use it
      interval: 1 min                 # averaging interval ("60 s", "5 min"; a number is s)
      atmosphere: 98.9 kPa            # what gauge units (barg, psig) are read against
      dead_state:
        temperature: 15 degC          # or a number in K
        pressure: 101.325 kPa         # or a number in Pa
        ambient_tag: AMB-T            # optional: T0 per interval from this tag
      fuel_price: {amount: 11.5, currency: EUR, per: GJ}   # HHV basis; per GJ, MWh, MMBtu
    fuels:
      site-gas:                       # by heating values ...
        heating_value: {hhv: 52.2 MJ/kg, lhv: 47.1 MJ/kg, exergy_ratio: 1.04,
                        density: 0.79 kg/m3, co2: 50.3 kg/GJ}
      pipeline-gas:                   # ... or by composition (mole fractions)
        gas: {composition: {CH4: 0.94, C2H6: 0.03, N2: 0.02, CO2: 0.01},
              volume_reference: normal}
      bark:                           # ... or by ultimate analysis (mass fractions)
        solid: {ultimate: {C: 0.25, H: 0.03, O: 0.21, N: 0.002, ash: 0.018, moisture: 0.49}}
    tags:
      FW-FLOW:   {unit: t/h, low: 0, high: 60, uncertainty: 1% of reading}
      DRUM-P:    {unit: barg, low: 0, high: 60, uncertainty: 0.1}
      MS-P:      {unit: barg, low: 0, high: 160, uncertainty: 0.25% of span}
      MS-T:      {unit: degC, uncertainty: {value: 2, coverage: expanded95}}
      GAS-FLOW:  {unit: Nm3/h, low: 0, high: 5000,
                  uncertainty: [{value: 1% of reading, coverage: expanded95},
                                {value: 5, component: random}]}
    units:
      boiler-1:
        name: Boiler 1
        kind: boiler                  # an entry of the engine catalogue
        fuel: site-gas
        inputs: {feedwater_flow: FW-FLOW, ...}     # role -> tag
        parameters: {radiation_loss: 0.4 %}        # number in the parameter's unit, or text
    rules:                            # optional: alert rules (api.alerts.rulespec)
      boiler-1-efficiency-low: {unit: boiler-1, kind: threshold, metric: eta_1,
                                below: 0.82, clear_at: 0.83, for: 5 min}

Quantities are a number (in the SI unit of the field, or the unit a comment names) or a
text ``"<number> <unit>"`` read by pint (``api.measure``). Mappings are keyed by name,
so a name cannot appear twice (the loader refuses duplicate keys).

Instrument uncertainty of a tag (:class:`UncertaintyFigure`): a number in the tag's own
unit (absolute), ``"<n>% of reading"`` (of the number the instrument shows, in the tag's
unit) or ``"<n>% of span"`` (of ``span``, by default ``high - low``); a bare figure is a
standard uncertainty of the systematic kind. The mapping form also says whether the figure
is ``expanded95`` (a 95 % figure, halved) and whether it is ``random`` (scatter,
independent from interval to interval). A list gives several figures, which add in
quadrature. A tag without a figure takes the default of its measurement kind
(:data:`engine.uncertainty.INSTRUMENT_DEFAULTS`, common practice). A fuel may state its
heating value's (and density's) uncertainty the same way, ``"<n>%"`` meaning of the
value: ``uncertainty: {heating_value: {value: 3%, coverage: expanded95}}``.
"""

from __future__ import annotations

import re
from typing import Annotated, Any, Final, Literal

import yaml
from pydantic import (
    BaseModel,
    ConfigDict,
    Discriminator,
    Field,
    StringConstraints,
    Tag,
    field_validator,
)

from api.alerts.rulespec import RuleName, RuleSpec

FORMAT: Final = "lostwork-plant/1"
SLUG_PATTERN = r"^[a-z0-9][a-z0-9-]{0,63}$"

Slug = Annotated[str, StringConstraints(pattern=SLUG_PATTERN)]
TagName = Annotated[str, StringConstraints(min_length=1, max_length=128, pattern=r"^\S.*\S$|^\S$")]
Quantity = float | str
"""A number in the field's stated unit, or ``"<number> <unit>"``."""


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid")


class DeadStateSpec(_Strict):
    temperature: Quantity = 298.15
    """Dead-state temperature (number: K). Default 25 degC."""
    pressure: Quantity = 101_325.0
    """Dead-state pressure (number: Pa). Default 101.325 kPa."""
    ambient_tag: TagName | None = None
    """A temperature tag giving T0 per interval instead of the constant."""


class FuelPriceSpec(_Strict):
    amount: float = Field(ge=0)
    currency: Annotated[str, StringConstraints(pattern=r"^[A-Z]{3}$")]
    per: str = "GJ"
    """Energy the amount buys, HHV basis: GJ, MWh, MMBtu, ..."""


class PlantSpec(_Strict):
    slug: Slug
    name: str = Field(min_length=1, max_length=200)
    time_zone: str
    interval: Quantity | None = None
    """Averaging interval (number: s); the deployment default when absent."""
    atmosphere: Quantity = 101_325.0
    """Atmospheric pressure for gauge units (number: Pa)."""
    dead_state: DeadStateSpec = DeadStateSpec()
    fuel_price: FuelPriceSpec | None = None


class HeatingValueSpec(_Strict):
    hhv: Quantity
    """Higher heating value (number: J/kg)."""
    lhv: Quantity | None = None
    """Lower heating value (number: J/kg)."""
    exergy_ratio: float = Field(default=1.04, gt=0.5, lt=2.0)
    """Chemical exergy over LHV (over HHV when no LHV). Default 1.04: natural gas,
    Szargut et al. 1988, Table 2.4."""
    density: Quantity | None = None
    """Density at the metering reference conditions, to turn a volume flow into a mass
    flow (number: kg/m3)."""
    co2: Quantity | None = None
    """CO2 per fuel energy, HHV basis (number: kg/J; ``"50.3 kg/GJ"`` reads better)."""


VolumeReference = Literal["normal", "standard", "scf", "scf_14_73"]
"""Metering conditions of a gas volume flow: ``normal`` 0 degC / 101.325 kPa (DIN 1343),
``standard`` 15 degC / 101.325 kPa (ISO 13443), ``scf`` 60 degF / 14.696 psia, ``scf_14_73``
60 degF / 14.73 psia."""


class GasSpec(_Strict):
    composition: dict[str, float]
    """Mole fractions by component: CH4, C2H6, C3H8, C4H10, H2, CO, CO2, N2, O2, H2S."""
    volume_reference: VolumeReference = "normal"
    """Conditions the fuel's volume flow is metered at (sets the density)."""
    compressibility: float = Field(default=1.0, gt=0.5, le=1.1)
    hhv: Quantity | None = None
    """A measured HHV replacing the one computed from the composition (number: J/kg)."""


class UltimateSpec(_Strict):
    ultimate: dict[str, float]
    """Mass fractions as fired: C, H, O, N, S, ash, moisture (H and O without the moisture)."""
    hhv: Quantity | None = None
    """A measured HHV as fired (number: J/kg); else estimated from the analysis
    (Channiwala & Parikh 2002)."""
    density: Quantity | None = None
    """For a liquid metered by volume (number: kg/m3)."""


Coverage = Literal["standard", "expanded95"]
Component = Literal["systematic", "random"]

_NUMBER = r"([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)"
_RELATIVE = re.compile(rf"^\s*{_NUMBER}\s*%\s*of\s+reading\s*$")
_FIGURE_TEXT = re.compile(rf"^\s*{_NUMBER}\s*%\s*(?:of\s+(reading|span))?\s*$")
FIGURE_HELP = "write a number in the tag's unit, or '<n>% of reading' (or '<n>% of span')"


def parse_figure_text(text: str, *, bare_percent: bool = False) -> tuple[float, str]:
    """``"<n>% of reading"`` / ``"<n>% of span"`` (and ``"<n>%"`` when ``bare_percent``,
    meaning of the value) -> (fraction, basis). ValueError otherwise."""
    match = _FIGURE_TEXT.match(text)
    if not match or (match.group(2) is None and not bare_percent):
        raise ValueError(FIGURE_HELP if not bare_percent else "write a number or '<n>%'")
    fraction = float(match.group(1)) / 100.0
    if fraction < 0:
        raise ValueError("an uncertainty cannot be negative")
    return fraction, match.group(2) or "reading"


class UncertaintyFigure(_Strict):
    """One stated instrument uncertainty (a datasheet or calibration figure)."""

    value: float | str
    """A number in the tag's unit, ``"<n>% of reading"`` or ``"<n>% of span"``."""
    span: float | None = Field(default=None, gt=0)
    """Calibrated span in the tag's unit, for ``% of span``; default ``high - low``."""
    coverage: Coverage = "standard"
    """``standard`` (one standard uncertainty) or ``expanded95`` (about 95 %, halved)."""
    component: Component = "systematic"
    """``systematic`` (the same error every interval: calibration, installation) or
    ``random`` (scatter, independent from interval to interval)."""

    @field_validator("value")
    @classmethod
    def _value(cls, value: float | str) -> float | str:
        if isinstance(value, str):
            parse_figure_text(value)
        elif value < 0:
            raise ValueError("an uncertainty cannot be negative")
        return value

    def basis(self) -> tuple[float, str]:
        """(number, basis): an amount in the tag's unit (``absolute``) or a fraction of
        the ``reading`` or of the ``span``."""
        if isinstance(self.value, str):
            return parse_figure_text(self.value)
        return float(self.value), "absolute"


def _shape(value: Any) -> str:
    """Which form a figure is written in (so a bad figure gets one error, not one per form)."""
    if isinstance(value, dict | UncertaintyFigure):
        return "figure"
    if isinstance(value, list):
        return "list"
    return "text" if isinstance(value, str) else "number"


FigureInput = Annotated[
    Annotated[float, Tag("number")]
    | Annotated[str, Tag("text")]
    | Annotated[UncertaintyFigure, Tag("figure")],
    Discriminator(_shape),
]
UncertaintyInput = Annotated[
    Annotated[float, Tag("number")]
    | Annotated[str, Tag("text")]
    | Annotated[UncertaintyFigure, Tag("figure")]
    | Annotated[list[FigureInput], Tag("list")],
    Discriminator(_shape),
]


def figures_of(given: UncertaintyInput | None) -> list[UncertaintyFigure]:
    """A tag's ``uncertainty`` as a list of figures (empty when none is stated)."""
    if given is None:
        return []
    items = given if isinstance(given, list) else [given]
    return [i if isinstance(i, UncertaintyFigure) else UncertaintyFigure(value=i) for i in items]


class FuelFigure(_Strict):
    """A fuel property's uncertainty: ``"<n>%"`` of the value, or an absolute number in
    the property's SI unit (J/kg, kg/m3)."""

    value: float | str
    coverage: Coverage = "standard"

    @field_validator("value")
    @classmethod
    def _value(cls, value: float | str) -> float | str:
        if isinstance(value, str):
            parse_figure_text(value, bare_percent=True)
        elif value < 0:
            raise ValueError("an uncertainty cannot be negative")
        return value


class FuelUncertaintySpec(_Strict):
    heating_value: FuelFigure | float | str | None = None
    """Uncertainty of the heating value (of a stated or computed HHV; a bound
    ``fuel_hhv`` tag carries its own). Default: common practice by the kind of fuel."""
    density: FuelFigure | float | str | None = None
    """Uncertainty of the density that turns a metered volume into mass. Default none
    (the volume meter's figure includes the conversion)."""

    @field_validator("heating_value", "density")
    @classmethod
    def _figure(cls, value: FuelFigure | float | str | None) -> FuelFigure | None:
        if value is None or isinstance(value, FuelFigure):
            return value
        return FuelFigure(value=value)


class FuelSpec(_Strict):
    """Exactly one of ``heating_value``, ``gas``, ``solid``, ``liquid``."""

    description: str | None = None
    uncertainty: FuelUncertaintySpec | None = None
    """Uncertainty of the fuel's properties (see the module notes)."""
    heating_value: HeatingValueSpec | None = None
    gas: GasSpec | None = None
    solid: UltimateSpec | None = None
    liquid: UltimateSpec | None = None

    def basis(self) -> str:
        names = ("heating_value", "gas", "solid", "liquid")
        given = [n for n in names if getattr(self, n) is not None]
        if len(given) != 1:
            raise ValueError(
                "give exactly one of heating_value, gas, solid, liquid"
                + (f" (got {', '.join(given)})" if given else "")
            )
        return given[0]


class TagSpec(_Strict):
    unit: str = Field(min_length=1, max_length=64)
    """Unit of measure readings arrive in (pint syntax: t/h, barg, degC, %)."""
    description: str | None = Field(default=None, max_length=500)
    low: float | None = None
    """Lowest plausible reading, in ``unit``."""
    high: float | None = None
    """Highest plausible reading, in ``unit``."""
    uncertainty: UncertaintyInput | None = None
    """Instrument uncertainty: a number in ``unit``, ``"<n>% of reading"``, ``"<n>% of
    span"``, a mapping (:class:`UncertaintyFigure`) or a list of them (module notes)."""

    @field_validator("uncertainty")
    @classmethod
    def _uncertainty(cls, value: UncertaintyInput | None) -> UncertaintyInput | None:
        if isinstance(value, list) and not value:
            raise ValueError("list at least one figure, or leave 'uncertainty' out")
        items = value if isinstance(value, list) else [value]
        for item in items:
            if isinstance(item, str):
                parse_figure_text(item)
            elif isinstance(item, int | float) and item < 0:
                raise ValueError("an uncertainty cannot be negative")
        return value

    def figures(self) -> list[UncertaintyFigure]:
        """The stated figures (empty when none)."""
        return figures_of(self.uncertainty)

    def relative_uncertainty(self) -> float | None:
        """The relative uncertainty as a fraction, when given as '<n>% of reading' alone."""
        if isinstance(self.uncertainty, str) and _RELATIVE.match(self.uncertainty):
            return parse_figure_text(self.uncertainty)[0]
        return None

    def absolute_uncertainty(self) -> float | None:
        """The standard uncertainty in ``unit``, when given as a bare number alone."""
        if isinstance(self.uncertainty, int | float):
            return float(self.uncertainty)
        return None


class UnitSpec(_Strict):
    name: str = Field(min_length=1, max_length=200)
    kind: str
    fuel: str | None = None
    inputs: dict[str, TagName] = {}
    """Role -> tag name. Port groups bind as ``<group><n>_<role>`` (``extraction1_flow``)."""
    parameters: dict[str, Quantity] = {}


class PlantFile(_Strict):
    format: Literal["lostwork-plant/1"] = FORMAT
    plant: PlantSpec
    fuels: dict[Slug, FuelSpec] = {}
    tags: dict[TagName, TagSpec] = {}
    units: dict[Slug, UnitSpec] = {}
    rules: dict[RuleName, RuleSpec] = {}
    """Alert rules by name (format: :mod:`api.alerts.rulespec`)."""


class _UniqueKeyLoader(yaml.SafeLoader):
    """SafeLoader that refuses a key given twice in one mapping (YAML keeps the last)."""


def _construct_mapping(loader: yaml.SafeLoader, node: yaml.MappingNode) -> dict[Any, Any]:
    mapping: dict[Any, Any] = {}
    for key_node, value_node in node.value:
        key = loader.construct_object(key_node)
        if key in mapping:
            raise yaml.constructor.ConstructorError(
                "while reading a mapping",
                node.start_mark,
                f"the key {key!r} appears twice",
                key_node.start_mark,
            )
        mapping[key] = loader.construct_object(value_node)
    return mapping


_UniqueKeyLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping)


def load_yaml(text: str | bytes) -> Any:
    """Parse a plant file; ``yaml.YAMLError`` (with line and column) when malformed."""
    return yaml.load(text, Loader=_UniqueKeyLoader)  # noqa: S506 - a SafeLoader subclass
