"""Which uncertainty each model input carries: stated figures, defaults, the readings' scatter.

For every bound role of a unit, in this order:

* the figures stated on its tag in the plant file (``Tag.uncertainty_figures``, SI);
* else the default of the role's measurement kind
  (:data:`engine.uncertainty.INSTRUMENT_DEFAULTS`, common practice, expanded 95 %,
  systematic); a role of no known kind (relative humidity, CO) is taken as exact;
* plus, as its random part, the scatter of the readings averaged into each interval
  (``s / sqrt(n)``, :func:`engine.uncertainty.random_uncertainty_of_mean`), where the
  interval holds at least two readings.

A "percent of reading" is of the number the instrument shows: of the gauge pressure for
a barg tag, of the Celsius value for a degC tag (``UnitConfig.tag_zero``).

The fuel's heating value, when no ``fuel_hhv`` tag is bound, is a pseudo-input
(:data:`engine.uncertainty.FUEL_HEATING_VALUE`): its figure is the fuel's
``uncertainty.heating_value`` in the plant file, else :data:`FUEL_DEFAULTS` by the kind of
fuel. The density of a volume-metered fuel carries an uncertainty only when stated.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from api.plants.fileformat import FuelFigure, FuelSpec, parse_figure_text
from api.plants.service import UnitConfig
from engine.catalogue import UnitKind
from engine.fuels import FuelProperties
from engine.uncertainty import (
    FUEL_DENSITY,
    FUEL_HEATING_VALUE,
    INSTRUMENT_DEFAULTS,
    InputUncertainty,
    InstrumentSpec,
    measurement_kind,
    standard_uncertainty,
)

STATED = "stated"
DEFAULT = "default"

SOLID_FUEL_HEATING_VALUE = InstrumentSpec(
    0.03,
    "reading",
    "expanded95",
    note=(
        "common practice: solid fuel (wood chips, bark, coal) sampled by hand from the "
        "deliveries and analysed in a laboratory; moisture varies between samples, so the "
        "as-fired heating value is known to 2-3 % at 95 %; the upper end"
    ),
)
FUEL_DEFAULTS: Mapping[str, InstrumentSpec] = {
    "heating_value": INSTRUMENT_DEFAULTS["heating_value"],
    "gas": INSTRUMENT_DEFAULTS["heating_value"],
    "liquid": INSTRUMENT_DEFAULTS["heating_value"],
    "solid": SOLID_FUEL_HEATING_VALUE,
}
"""Default heating-value uncertainty by how the plant file describes the fuel.

Stated heating values, gas compositions (from an on-line chromatograph or a supplier's
analysis) and liquid fuels: 1 % at 95 % (the engine's ``heating_value`` default, common
practice). Solid fuels: 3 % at 95 % (common practice, see
:data:`SOLID_FUEL_HEATING_VALUE`)."""


@dataclass(frozen=True)
class InputFigures:
    """The uncertainty figures of one model input and where they came from."""

    name: str
    """Role, or pseudo-input :data:`~engine.uncertainty.FUEL_HEATING_VALUE` /
    :data:`~engine.uncertainty.FUEL_DENSITY`."""
    tag: str | None
    """The bound tag (None for a fuel property)."""
    source: str
    """:data:`STATED` (plant file) or :data:`DEFAULT` (common practice)."""
    specs: tuple[InstrumentSpec, ...]
    zero: float = 0.0
    """SI value the instrument's 'percent of reading' is counted from."""

    @property
    def note(self) -> str:
        return "; ".join(s.note for s in self.specs if s.note)


def spec_of(figure: Mapping[str, Any]) -> InstrumentSpec:
    """A stored figure (``Tag.uncertainty_figures`` entry) as an engine InstrumentSpec."""
    return InstrumentSpec(
        float(figure["value"]),
        figure["basis"],
        figure.get("coverage", "standard"),
        span=figure.get("span"),
        component=figure.get("component", "systematic"),
    )


def _fuel_spec(figure: FuelFigure) -> InstrumentSpec:
    if isinstance(figure.value, str):
        fraction, _ = parse_figure_text(figure.value, bare_percent=True)
        return InstrumentSpec(fraction, "reading", figure.coverage)
    return InstrumentSpec(float(figure.value), "absolute", figure.coverage)


def fuel_figures(config: UnitConfig, bound: Sequence[str]) -> list[InputFigures]:
    """The fuel properties of ``config``'s fuel that carry an uncertainty."""
    if config.fuel is None or config.fuel_spec is None:
        return []
    spec = FuelSpec.model_validate(config.fuel_spec)
    stated = spec.uncertainty
    out: list[InputFigures] = []
    if "fuel_hhv" not in bound:  # a bound heating-value tag carries its own
        figure = stated.heating_value if stated else None
        if isinstance(figure, FuelFigure):
            out.append(InputFigures(FUEL_HEATING_VALUE, None, STATED, (_fuel_spec(figure),)))
        else:
            default = FUEL_DEFAULTS[spec.basis()]
            out.append(InputFigures(FUEL_HEATING_VALUE, None, DEFAULT, (default,)))
    density = stated.density if stated else None
    volume_metered = any(role.endswith("fuel_volume_flow") for role in bound)
    if (
        isinstance(density, FuelFigure)
        and volume_metered
        and config.fuel.density_kg_per_m3 is not None
    ):
        out.append(InputFigures(FUEL_DENSITY, None, STATED, (_fuel_spec(density),)))
    return out


def input_figures(config: UnitConfig, kind: UnitKind, roles: Sequence[str]) -> list[InputFigures]:
    """Figures of every bound role (stated or default; roles of no known kind left out)
    and of the fuel's pseudo-inputs."""
    out: list[InputFigures] = []
    for role_name in roles:
        tag = config.tag_names.get(role_name)
        zero = config.tag_zero.get(role_name, 0.0)
        stated = config.tag_uncertainty.get(role_name)
        if stated:
            specs = tuple(spec_of(f) for f in stated)
            out.append(InputFigures(role_name, tag, STATED, specs, zero))
            continue
        role = kind.role(role_name)
        default = measurement_kind(role) if role is not None else None
        if default is not None:
            out.append(InputFigures(role_name, tag, DEFAULT, (INSTRUMENT_DEFAULTS[default],), zero))
    return out + fuel_figures(config, roles)


def _nominal(figure: InputFigures, inputs: pd.DataFrame, fuel: FuelProperties | None):
    if figure.name == FUEL_HEATING_VALUE:
        assert fuel is not None
        return np.full(len(inputs), float(fuel.hhv_j_per_kg))
    if figure.name == FUEL_DENSITY:
        assert fuel is not None and fuel.density_kg_per_m3 is not None
        return np.full(len(inputs), float(fuel.density_kg_per_m3))
    return inputs[figure.name].to_numpy(dtype=float, na_value=np.nan)


def uncertainties(
    figures: Sequence[InputFigures],
    inputs: pd.DataFrame,
    *,
    random: Mapping[str, np.ndarray] | None = None,
    fuel: FuelProperties | None = None,
) -> dict[str, InputUncertainty]:
    """Per-row systematic and random standard uncertainty of each input, for
    :func:`engine.uncertainty.propagate`.

    Parameters
    ----------
    figures : sequence of InputFigures
        From :func:`input_figures`.
    inputs : DataFrame
        The model's inputs (interval means, SI).
    random : Mapping[str, ndarray], optional
        Per role, the random standard uncertainty of the interval mean from the scatter
        of its readings (0 where not estimated), one value per row. [SI unit of the role]
    fuel : FuelProperties, optional
        The nominal values of the fuel's pseudo-inputs.

    Returns
    -------
    dict of str to InputUncertainty
        Only inputs with some uncertainty.
    """
    out: dict[str, InputUncertainty] = {}
    n = len(inputs)
    for figure in figures:
        readings = _nominal(figure, inputs, fuel)
        shown = readings - figure.zero
        parts = {"systematic": np.zeros(n), "random": np.zeros(n)}
        for spec in figure.specs:
            amount = standard_uncertainty(spec, shown) * np.ones(n)
            parts[spec.component] = np.hypot(parts[spec.component], amount)
        if random is not None and figure.name in random:
            parts["random"] = np.hypot(parts["random"], random[figure.name])
        # A NaN reading (thin data) leaves the row's uncertainty unknown, as its result.
        missing = np.isnan(readings)
        for part in parts.values():
            part[missing] = np.nan
        if np.any(parts["systematic"] > 0) or np.any(parts["random"] > 0):
            out[figure.name] = InputUncertainty(
                systematic=parts["systematic"], random=parts["random"]
            )
    return out
