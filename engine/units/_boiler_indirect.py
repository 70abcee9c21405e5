"""The boiler's optional half: heat-loss (indirect) efficiency and the second-law split.

When a boiler's flue-gas roles are bound, :func:`engine.units.boiler.boiler_direct` adds
the efficiency by the heat-loss method of :mod:`engine.heatloss` (every loss and credit
its own column), the difference to the input-output efficiency, and the split of the
exergy destroyed and lost of :mod:`engine.boiler_exergy_split`. This module declares
those roles, parameters and result columns and computes them, per row, from the
direct method's water-side numbers; nothing here runs when the roles are not bound.

Boundary: the steam-generator envelope of ASME PTC 4 with the air heater inside it.
Combustion air enters at ``combustion_air_temperature`` (before the air heater); flue gas
leaves at ``flue_gas_temperature`` with ``flue_gas_o2`` (after the air heater, at its gas
outlet, uncorrected for air-heater leakage).

References
----------
.. [1] ASME PTC 4-2013, "Fired Steam Generators", Sec. 5.7 (efficiency by the energy
   balance method), 5.14 (losses), 5.15 (credits). Section numbers from memory.
.. [2] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical and
   Metallurgical Processes", Hemisphere, 1988, Sec. 2.5 and Appendix Table I.
.. [3] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger, 1995, Ch. 4
   (exergy analysis of combustion and heat transfer; chapter from memory).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine import boiler_exergy_split, checks, combustion, heatloss
from engine.catalogue import ModelContext, Parameter, ResultColumn, Role, TextParameter

SURFACE_LOSS_FRACTION = 0.005
"""Default surface radiation and convection loss, as a fraction of fuel input at rated
output. [-]

Common practice (from memory): the order of the ABMA radiation-loss chart for a
mid-size water-tube boiler at full load, about 0.2-0.5 % for large utility units and
1-2 % for small packaged ones. PTC 4 computes it from measured casing areas and
temperatures; configure it from such a test where one exists."""

FLY_ASH_FRACTION = 0.8
"""Default share of the ash leaving as fly ash: common practice for pulverised coal. [-]"""

O2_BASES = ("dry", "wet")

CORE_ROLES = ("flue_gas_o2", "flue_gas_temperature", "combustion_air_temperature")
"""The heat-loss method needs all three; the other flue-gas roles refine it."""
_EXTRA_ROLES = (
    "air_relative_humidity",
    "flue_gas_co",
    "fuel_temperature",
    "burner_air_temperature",
)
_GROUP_NOTE = (
    " Heat-loss method and exergy split: bind flue_gas_o2, flue_gas_temperature and "
    "combustion_air_temperature together."
)

ROLES: tuple[Role, ...] = (
    Role(
        "flue_gas_o2",
        "1",
        required=False,
        description=(
            "O2 in the flue gas leaving the boiler envelope (air-heater gas outlet; "
            "economiser outlet without an air heater), mole fraction on the basis set by "
            "the text parameter o2_basis (dry by default)." + _GROUP_NOTE
        ),
    ),
    Role(
        "flue_gas_temperature",
        "K",
        required=False,
        description=(
            "Flue-gas temperature where flue_gas_o2 is measured, leaving the envelope "
            "(after the air heater; no air-heater leakage correction)." + _GROUP_NOTE
        ),
    ),
    Role(
        "combustion_air_temperature",
        "K",
        required=False,
        description=(
            "Combustion-air temperature entering the envelope, before any air heater "
            "(fan inlet)." + _GROUP_NOTE
        ),
    ),
    Role(
        "air_relative_humidity",
        "1",
        required=False,
        description=(
            "Relative humidity (fraction) of the entering combustion air at "
            "combustion_air_temperature and the dead-state pressure. Not bound: the "
            "parameter air_humidity_ratio."
        ),
    ),
    Role(
        "flue_gas_co",
        "1",
        required=False,
        description=(
            "CO in the flue gas at the same boundary, mole fraction on a dry basis (a tag "
            "in ppm is converted at ingest). Not bound: no CO loss."
        ),
    ),
    Role(
        "fuel_temperature",
        "K",
        required=False,
        description=(
            "Fuel temperature entering the envelope. Not bound: no fuel sensible-heat "
            "credit (fuel at the reference temperature) and no fuel physical exergy "
            "(fuel at T0)."
        ),
    ),
    Role(
        "burner_air_temperature",
        "K",
        required=False,
        description=(
            "Combustion-air temperature after the air heater, at the burners (inside the "
            "envelope). Only moves exergy destruction between combustion and heat "
            "transfer. Not bound: no air heater."
        ),
    ),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "reference_temperature_k",
        "K",
        heatloss.REFERENCE_TEMPERATURE_K,
        description="Reference temperature of the heat-loss method: 25 degC (ASME PTC 4).",
        minimum=250.0,
        maximum=350.0,
    ),
    Parameter(
        "air_humidity_ratio",
        "1",
        heatloss.STANDARD_HUMIDITY_RATIO,
        description=(
            "Combustion-air humidity, kg water per kg dry air, used when "
            "air_relative_humidity is not bound. Default 0.013, common practice."
        ),
        minimum=0.0,
        maximum=0.1,
    ),
    Parameter(
        "surface_loss_fraction",
        "1",
        SURFACE_LOSS_FRACTION,
        description=(
            "Surface radiation and convection loss as a fraction of fuel input (HHV) at "
            "rated output. Default 0.005, common practice; configure from a test."
        ),
        minimum=0.0,
        maximum=0.1,
    ),
    Parameter(
        "rated_heat_output_w",
        "W",
        0.0,
        description=(
            "Heat absorbed at rated output. When above 0 the surface loss is held constant "
            "in watts, so its fraction grows at part load as surface_loss_fraction * "
            "rated / heat_absorbed (common practice); 0 keeps the fraction constant."
        ),
        minimum=0.0,
    ),
    Parameter(
        "carbon_in_fly_ash",
        "1",
        0.0,
        description="Carbon mass fraction of the fly ash (solid fuels; unburned carbon).",
        minimum=0.0,
        maximum=0.99,
    ),
    Parameter(
        "carbon_in_bottom_ash",
        "1",
        0.0,
        description="Carbon mass fraction of the bottom ash (solid fuels; unburned carbon).",
        minimum=0.0,
        maximum=0.99,
    ),
    Parameter(
        "fly_ash_fraction",
        "1",
        FLY_ASH_FRACTION,
        description="Share of the fuel's ash leaving as fly ash. Default 0.8, common practice.",
        minimum=0.0,
        maximum=1.0,
    ),
    Parameter(
        "direct_indirect_tolerance",
        "1",
        heatloss.DIRECT_INDIRECT_TOLERANCE,
        description=(
            "Largest |eta_1 - eta_1_indirect| before DIRECT_INDIRECT_DISAGREE. Default "
            "0.02, common practice; set it from the instruments' combined uncertainty."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
)

TEXT_PARAMETERS: tuple[TextParameter, ...] = (
    TextParameter(
        "o2_basis",
        O2_BASES,
        "dry",
        description=(
            "Basis of flue_gas_o2: dry (extractive analyser, water condensed) or wet "
            "(in-situ probe)."
        ),
    ),
)

_LOSS_TEXT = {
    "loss_dry_flue_gas": "Loss: sensible heat of the dry flue gas (PTC 4 QpLDFg).",
    "loss_hydrogen_water": "Loss: water formed from the fuel's hydrogen (PTC 4 QpLH2F).",
    "loss_fuel_moisture": "Loss: moisture in the fuel (PTC 4 QpLWF).",
    "loss_air_moisture": "Loss: moisture in the combustion air (PTC 4 QpLWA).",
    "loss_co": "Loss: CO in the flue gas (PTC 4 QpLCO).",
    "loss_unburned_carbon": "Loss: unburned carbon in the refuse (PTC 4 QpLUbC).",
    "loss_surface": "Loss: surface radiation and convection (PTC 4 QrLSrc).",
    "credit_dry_air": "Credit: entering dry air above the reference temperature (QpBDA).",
    "credit_air_moisture": "Credit: moisture in the entering air (PTC 4 QpBWA).",
    "credit_fuel_sensible": "Credit: sensible heat of the fuel (PTC 4 QpBF).",
}
assert set(_LOSS_TEXT) == set(heatloss.LOSS_COLUMNS + heatloss.CREDIT_COLUMNS)

HEAT_LOSS_RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn("excess_air", "1", "Excess air from the flue-gas O2, over theoretical air."),
    ResultColumn("eta_1_indirect", "1", "First-law efficiency, HHV basis (heat-loss method)."),
    ResultColumn("eta_1_indirect_lhv", "1", "First-law efficiency, LHV basis (heat-loss method)."),
    *(
        ResultColumn(name, "1", _LOSS_TEXT[name] + " Fraction of HHV input.")
        for name in heatloss.LOSS_COLUMNS + heatloss.CREDIT_COLUMNS
    ),
    ResultColumn("direct_minus_indirect", "1", "eta_1 - eta_1_indirect (HHV basis)."),
)
"""NaN in every row when the flue-gas roles are not bound."""

SPLIT_RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn(
        "exergy_destroyed_combustion_w",
        "W",
        "Exergy destroyed by adiabatic combustion to the flame temperature.",
    ),
    ResultColumn(
        "exergy_destroyed_heat_transfer_w",
        "W",
        "Exergy destroyed by heat transfer from the gas to water/steam, air heater and casing.",
    ),
    ResultColumn(
        "exergy_destroyed_unaccounted_w",
        "W",
        "Exergy of the unaccounted heat (energy imbalance of the measurements), destroyed.",
    ),
    ResultColumn(
        "exergy_lost_stack_thermal_w",
        "W",
        "Exergy lost with the stack gas, thermal (exit temperature down to T0).",
    ),
    ResultColumn(
        "exergy_lost_stack_chemical_w",
        "W",
        "Exergy lost with the stack gas, chemical (at T0 against the reference environment).",
    ),
    ResultColumn("exergy_lost_surface_w", "W", "Exergy lost with the casing heat loss."),
    ResultColumn("exergy_lost_unburned_w", "W", "Exergy lost with unburned carbon."),
    ResultColumn(
        "unaccounted_heat_w",
        "W",
        "Heat the flue gas gave up that water/steam, air heater and casing did not take "
        "(negative: the water side claims more than the gas gave).",
    ),
)
"""NaN in every row when the flue-gas roles are not bound."""

SPLIT_PARTS = boiler_exergy_split.DESTROYED_COLUMNS + boiler_exergy_split.LOST_COLUMNS
"""The split's parts; with the water's exergy gain they add up to the exergy supplied."""


@dataclass(frozen=True)
class Indirect:
    """Heat-loss and split results per row (1-D arrays, NaN where not computed).

    Attributes
    ----------
    columns : dict of str to ndarray
        Every column of :data:`HEAT_LOSS_RESULTS` and :data:`SPLIT_RESULTS`. [-], [W]
    exergy_supplied_w : ndarray
        Exergy entering with the fuel (chemical and physical) and the combustion air
        (thermal and chemical), where the split is computed; NaN elsewhere. [W]
    flags : ndarray of int64
        :class:`engine.checks.Flag` bits of this half of the model. [-]
    """

    columns: dict[str, np.ndarray]
    exergy_supplied_w: np.ndarray
    flags: np.ndarray


def _nan_result(n: int, flags: np.ndarray) -> Indirect:
    names = [c.name for c in HEAT_LOSS_RESULTS + SPLIT_RESULTS]
    return Indirect({name: np.full(n, np.nan) for name in names}, np.full(n, np.nan), flags)


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray | None:
    if name not in inputs.columns:
        return None
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def _positive(values: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        return np.isfinite(values) & (values > 0)


def heat_loss_and_split(
    inputs: pd.DataFrame,
    params: Mapping[str, float],
    context: ModelContext,
    *,
    hhv_j_per_kg: np.ndarray,
    fuel_mass_flow_kg_per_s: np.ndarray,
    heat_absorbed_w: np.ndarray,
    water_exergy_gain_w: np.ndarray,
    eta_1: np.ndarray,
    t0_k: np.ndarray,
    p0_pa: np.ndarray,
    direct_valid: np.ndarray,
) -> Indirect:
    """Heat-loss efficiency, direct-indirect difference and exergy split of a boiler.

    Parameters
    ----------
    inputs : DataFrame
        The boiler's bound role columns (SI); the flue-gas roles of :data:`ROLES` are
        read here.
    params : Mapping[str, float]
        The boiler's parameters; missing ones take the defaults of :data:`PARAMETERS`.
    context : ModelContext
        ``fuel`` (with a composition) and ``text_parameters`` (``o2_basis``).
    hhv_j_per_kg : ndarray
        HHV per row, measured or specified, independent of the fuel flow. [J/kg]
    fuel_mass_flow_kg_per_s : ndarray
        Fuel mass flow, NaN where the direct method has no valid row. [kg/s]
    heat_absorbed_w : ndarray
        Heat absorbed by water and steam (direct method), NaN where the water side is
        not valid (a valid water side with a failed fuel meter still counts). [W]
    water_exergy_gain_w : ndarray
        Exergy gained by water and steam, NaN where not valid. [W]
    eta_1 : ndarray
        Input-output efficiency, HHV basis, NaN where not valid. [-]
    t0_k, p0_pa : ndarray
        Dead state per row. [K], [Pa]
    direct_valid : ndarray of bool
        Rows whose direct-method inputs are valid.

    Returns
    -------
    Indirect

    Raises
    ------
    ValueError
        For an ``o2_basis`` that is not ``dry`` or ``wet`` (a configuration error).

    Notes
    -----
    Not bound (none of :data:`ROLES`): every column NaN, no flag. Bound but unusable for
    every row (one of :data:`CORE_ROLES` missing, or a fuel given by heating values only,
    without the composition the method needs): every column NaN and
    ``INPUT_OUT_OF_RANGE`` on every row; the direct results are kept.

    Per row, the heat-loss columns need valid flue-gas inputs and HHV (not the fuel flow:
    the method is how a failed fuel meter is bridged; with ``rated_heat_output_w`` set
    also the water side, for the load); the split needs them and a valid direct row. A row lacking what it needs is NaN in those columns with
    ``INPUT_OUT_OF_RANGE``.

    Unburned carbon per kg of fuel from the refuse (PTC 4 Sec. 5.14, through
    :func:`engine.heatloss.unburned_carbon_from_refuse`): ``A Σ f_k c_k / (1 - c_k)``
    with the fuel's ash ``A``. The surface loss fraction is constant, or with
    ``rated_heat_output_w`` > 0 scaled by :func:`engine.heatloss.surface_loss_fraction_at_load`
    on ``heat_absorbed_w / rated_heat_output_w``. The casing temperature of the surface
    loss's exergy is T0 + 25 K (:data:`engine.boiler_exergy_split.SURFACE_TEMPERATURE_RISE_K`).

    Flags: DIRECT_INDIRECT_DISAGREE when ``|eta_1 - eta_1_indirect|`` exceeds
    ``direct_indirect_tolerance``; NEGATIVE_UNACCOUNTED_DESTRUCTION when
    ``unaccounted_heat_w < -direct_indirect_tolerance * m_f HHV``: the water side took
    more heat than the gas gave, beyond the same tolerance, so the unaccounted
    destruction ``Q_imb (1 - T0 / T_gm)`` is negative -- a negative entropy generation
    in that part of the process, which no process can have. It is the impossible one of
    the two directions of a disagreement, told apart because it points at the
    measurements rather than at an unmodelled loss. The unaccounted heat also holds the
    small items the split's gas model leaves out: the CO loss (the split burns everything
    to CO2), the difference between PTC 4's heating value of unburned carbon and
    graphite's, and the sensible heat the refuse carbon leaves with.
    """
    n = len(inputs)
    names = CORE_ROLES + _EXTRA_ROLES
    if not any(name in inputs.columns for name in names):
        return _nan_result(n, np.zeros(n, dtype=np.int64))
    basis = context.text_parameters.get("o2_basis", "dry")
    if basis not in O2_BASES:
        raise ValueError(f"o2_basis must be one of {', '.join(O2_BASES)}, got {basis!r}")
    fuel = context.fuel
    complete = all(name in inputs.columns for name in CORE_ROLES)
    if not complete or fuel is None or fuel.ultimate is None:
        return _nan_result(n, checks.input_out_of_range(np.zeros(n, dtype=bool)))

    defaults = {p.name: p.default for p in PARAMETERS}

    def param(name: str) -> float:
        return float(params.get(name, defaults[name]))

    o2 = _column(inputs, "flue_gas_o2")
    t_fg = _column(inputs, "flue_gas_temperature")
    t_air = _column(inputs, "combustion_air_temperature")
    ok = np.isfinite(o2) & _positive(t_fg) & _positive(t_air) & _positive(hhv_j_per_kg)

    rh = _column(inputs, "air_relative_humidity")
    if rh is None:
        omega = np.full(n, param("air_humidity_ratio"))
    else:
        omega = combustion.humidity_ratio_from_relative_humidity(
            rh, np.where(ok, t_air, np.nan), p0_pa
        )
    ok &= np.isfinite(omega)
    co = _column(inputs, "flue_gas_co")
    if co is not None:
        with np.errstate(invalid="ignore"):
            ok &= np.isfinite(co) & (co >= 0)
    t_fuel = _column(inputs, "fuel_temperature")
    if t_fuel is not None:
        ok &= _positive(t_fuel)
    t_burner = _column(inputs, "burner_air_temperature")

    ubc = heatloss.unburned_carbon_from_refuse(
        fuel.ultimate.ash,
        param("carbon_in_fly_ash"),
        param("carbon_in_bottom_ash"),
        param("fly_ash_fraction"),
    )
    rated = param("rated_heat_output_w")
    if rated > 0:
        surface = np.asarray(
            heatloss.surface_loss_fraction_at_load(
                param("surface_loss_fraction"), heat_absorbed_w / rated
            ),
            dtype=float,
        )
    else:
        surface = np.full(n, param("surface_loss_fraction"))
    ok &= np.isfinite(surface)

    losses = heatloss.heat_loss_efficiency(
        fuel,
        o2,
        t_fg,
        t_air,
        o2_basis=basis,
        humidity_ratio=omega,
        fuel_temperature_k=t_fuel,
        co_ppm=None if co is None else co * 1e6,
        unburned_carbon_kg_per_kg=ubc,
        surface_loss_fraction=surface,
        fuel_hhv_j_per_kg=hhv_j_per_kg,
        reference_temperature_k=param("reference_temperature_k"),
    )
    eta_indirect = losses["eta_1_indirect"].to_numpy(dtype=float)
    ok &= np.isfinite(eta_indirect)

    columns: dict[str, np.ndarray] = {}
    for column in HEAT_LOSS_RESULTS[:-1]:
        columns[column.name] = np.where(ok, losses[column.name].to_numpy(dtype=float), np.nan)
    difference, disagree = heatloss.direct_indirect_difference(
        eta_1, columns["eta_1_indirect"], param("direct_indirect_tolerance")
    )
    columns["direct_minus_indirect"] = np.asarray(difference, dtype=float)

    split = boiler_exergy_split.boiler_exergy_split(
        fuel,
        fuel_mass_flow_kg_per_s,
        o2,
        t_fg,
        t_air,
        heat_absorbed_w,
        water_exergy_gain_w,
        o2_basis=basis,
        humidity_ratio=omega,
        t0_k=t0_k,
        p0_pa=p0_pa,
        fuel_temperature_k=t_fuel,
        burner_air_temperature_k=t_burner,
        surface_loss_fraction=surface,
        unburned_carbon_kg_per_kg=ubc,
        fuel_hhv_j_per_kg=hhv_j_per_kg,
    )
    supplied = (split["exergy_fuel_w"] + split["exergy_air_w"]).to_numpy(dtype=float)
    split_ok = ok & direct_valid & np.isfinite(supplied)
    if t_burner is not None:
        split_ok &= _positive(t_burner)
    for name in SPLIT_PARTS:
        split_ok &= np.isfinite(split[name].to_numpy(dtype=float))
    for name in SPLIT_PARTS:
        columns[name] = np.where(split_ok, split[name].to_numpy(dtype=float), np.nan)
    columns["unaccounted_heat_w"] = np.where(
        split_ok, split["energy_imbalance_w"].to_numpy(dtype=float), np.nan
    )
    supplied = np.where(split_ok, supplied, np.nan)

    tolerance_w = param("direct_indirect_tolerance") * fuel_mass_flow_kg_per_s * hhv_j_per_kg
    with np.errstate(invalid="ignore"):
        negative_unaccounted = columns["unaccounted_heat_w"] < -tolerance_w
    flags = checks.combine(
        checks.input_out_of_range(ok & (split_ok | ~direct_valid)),
        np.where(disagree, np.int64(checks.Flag.DIRECT_INDIRECT_DISAGREE), np.int64(0)),
        np.where(
            negative_unaccounted,
            np.int64(checks.Flag.NEGATIVE_UNACCOUNTED_DESTRUCTION),
            np.int64(0),
        ),
    )
    return Indirect(columns, supplied, flags)
