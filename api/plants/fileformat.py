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
text ``"<number> <unit>"`` read by pint (``api.measure``). Instrument uncertainty is a
number in the tag's own unit (absolute) or ``"<n>% of reading"`` (relative). Mappings are
keyed by name, so a name cannot appear twice (the loader refuses duplicate keys).
"""

from __future__ import annotations

import re
from typing import Annotated, Any, Final, Literal

import yaml
from pydantic import BaseModel, ConfigDict, Field, StringConstraints, field_validator

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


class FuelSpec(_Strict):
    """Exactly one of ``heating_value``, ``gas``, ``solid``, ``liquid``."""

    description: str | None = None
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


_RELATIVE = re.compile(r"^\s*([-+]?[0-9.]+(?:[eE][-+]?\d+)?)\s*%\s*of\s+reading\s*$")


class TagSpec(_Strict):
    unit: str = Field(min_length=1, max_length=64)
    """Unit of measure readings arrive in (pint syntax: t/h, barg, degC, %)."""
    description: str | None = Field(default=None, max_length=500)
    low: float | None = None
    """Lowest plausible reading, in ``unit``."""
    high: float | None = None
    """Highest plausible reading, in ``unit``."""
    uncertainty: float | str | None = None
    """Standard uncertainty: a number in ``unit``, or ``"<n>% of reading"``."""

    @field_validator("uncertainty")
    @classmethod
    def _uncertainty(cls, value: float | str | None) -> float | str | None:
        if isinstance(value, str) and not _RELATIVE.match(value):
            raise ValueError("write a number in the tag's unit, or '<n>% of reading'")
        if isinstance(value, float | int) and value < 0:
            raise ValueError("an uncertainty cannot be negative")
        return value

    def relative_uncertainty(self) -> float | None:
        """The relative uncertainty as a fraction, when given as '% of reading'."""
        if isinstance(self.uncertainty, str):
            match = _RELATIVE.match(self.uncertainty)
            assert match is not None
            return float(match.group(1)) / 100.0
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
