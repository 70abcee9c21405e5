"""Fuel input to a fired unit: mass flow, heat input, chemical exergy, reaction entropy.

Shared by the unit kinds that burn a fuel (boiler, block): the same three roles, the
same rule for turning a metered volume into a mass, and the same reaction-entropy term
in their entropy balances.

References
----------
.. [1] ASME PTC 4-2013, "Fired Steam Generators", Sec. 5 (computation of results: input
   from fuel as mass flow times heating value, HHV basis). Section numbers from memory.
.. [2] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical
   and Metallurgical Processes", Hemisphere, 1988, Sec. 2.5 (chemical exergy of
   technical fuels, the Szargut-Styrylska ratio) and Appendix Table I (standard
   chemical exergies); used through :class:`engine.fuels.FuelProperties`.
.. [3] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley, 1996,
   Ch. 3 (chemical exergy: the reversible work of a reaction at the dead state).
   Chapter-level citation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.catalogue import Role
from engine.fuels import FuelProperties

FUEL_ROLES: tuple[Role, ...] = (
    Role(
        "fuel_mass_flow",
        "kg/s",
        required=False,
        description="Fuel mass flow. Bind this or fuel_volume_flow (mass flow wins where both are).",
    ),
    Role(
        "fuel_volume_flow",
        "m^3/s",
        required=False,
        description=(
            "Fuel volume flow at the fuel's metering reference conditions; turned into a "
            "mass flow with the fuel's density_kg_per_m3."
        ),
    ),
    Role(
        "fuel_hhv",
        "J/kg",
        required=False,
        description=(
            "Measured higher heating value per interval (for example a calorimeter); "
            "overrides the fuel specification, LHV and chemical exergy scale with it."
        ),
    ),
)
"""The fuel roles every fired unit kind declares."""

FUEL_ALTERNATIVES: tuple[tuple[str, ...], ...] = (("fuel_mass_flow", "fuel_volume_flow"),)
"""At least one of the two fuel-flow roles must be bound."""


@dataclass(frozen=True)
class FuelInput:
    """Fuel input per interval (1-D arrays, one element per row).

    Attributes
    ----------
    mass_flow_kg_per_s : ndarray
        Fuel mass flow. [kg/s]
    hhv_j_per_kg : ndarray
        Higher heating value used for the row. [J/kg]
    heat_input_hhv_w : ndarray
        ``m_f * HHV``. [W]
    heat_input_lhv_w : ndarray
        ``m_f * LHV``; NaN when the fuel's LHV is not known. [W]
    exergy_w : ndarray
        ``m_f * ex_ch``, the fuel's chemical exergy flow. [W]
    reaction_exergy_minus_heat_w : ndarray
        ``m_f * (ex_ch - HHV)``: T0 times the entropy the reaction at the dead state
        adds to the products (see :func:`fuel_input`, Notes). [W]
    valid : ndarray of bool
        False where the fuel flow or a measured heating value is missing, not finite or
        not positive.
    """

    mass_flow_kg_per_s: np.ndarray
    hhv_j_per_kg: np.ndarray
    heat_input_hhv_w: np.ndarray
    heat_input_lhv_w: np.ndarray
    exergy_w: np.ndarray
    reaction_exergy_minus_heat_w: np.ndarray
    valid: np.ndarray


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray | None:
    if name not in inputs.columns:
        return None
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def heating_value_j_per_kg(inputs: pd.DataFrame, fuel: FuelProperties) -> np.ndarray:
    """Higher heating value per row: the measured ``fuel_hhv`` if bound, else the fuel's.

    Parameters
    ----------
    inputs : DataFrame
        Bound role columns, optionally ``fuel_hhv`` [J/kg].
    fuel : FuelProperties
        The unit's fuel specification.

    Returns
    -------
    ndarray
        HHV per row, NaN where a measured value is missing, not finite or not positive.
        Independent of the fuel flow, so that the heat-loss method, which needs no fuel
        flow, still has it when the fuel meter fails. [J/kg]
    """
    measured = _column(inputs, "fuel_hhv")
    if measured is None:
        return np.full(len(inputs), float(fuel.hhv_j_per_kg))
    with np.errstate(invalid="ignore"):
        return np.where(np.isfinite(measured) & (measured > 0), measured, np.nan)


def lower_heating_value_j_per_kg(hhv_j_per_kg: np.ndarray, fuel: FuelProperties) -> np.ndarray:
    """LHV that goes with a per-row HHV (see :func:`fuel_input`, Notes). [J/kg]

    Parameters
    ----------
    hhv_j_per_kg : ndarray
        Higher heating value per row. [J/kg]
    fuel : FuelProperties
        The unit's fuel specification.

    Returns
    -------
    ndarray
        NaN everywhere when the fuel's LHV is not known. [J/kg]
    """
    if fuel.lhv_j_per_kg is None:
        return np.full(np.shape(hhv_j_per_kg), np.nan)
    if fuel.ultimate is not None:
        # The water formed is fixed by the composition, so is its latent heat.
        return hhv_j_per_kg - (fuel.hhv_j_per_kg - fuel.lhv_j_per_kg)
    return fuel.lhv_j_per_kg * (hhv_j_per_kg / fuel.hhv_j_per_kg)


def fuel_input(inputs: pd.DataFrame, fuel: FuelProperties | None, kind: str) -> FuelInput:
    """Fuel mass flow, heat input (HHV and LHV), chemical exergy and reaction term.

    Parameters
    ----------
    inputs : DataFrame
        Bound role columns in SI units: ``fuel_mass_flow`` [kg/s] and/or
        ``fuel_volume_flow`` [m^3/s], optionally ``fuel_hhv`` [J/kg].
    fuel : FuelProperties or None
        The unit's fuel specification.
    kind : str
        Name of the calling unit kind, for error messages.

    Returns
    -------
    FuelInput

    Raises
    ------
    ValueError
        For configuration errors that concern every row: no fuel in the context, no
        fuel-flow column, or only a volume flow for a fuel without a density.

    Notes
    -----
    Mass flow: ``fuel_mass_flow`` where it is a number, otherwise ``fuel_volume_flow``
    times the fuel's density at its metering reference conditions.

    Chemical exergy: :attr:`FuelProperties.chemical_exergy_j_per_kg`, i.e. from the
    composition whenever one is known (gases: Szargut's standard chemical exergies
    with the ideal mixing term; solid and liquid fuels: the Szargut-Styrylska
    correlation, [2]_), and from the configured exergy/heating-value ratio only for a
    fuel given by heating values alone.

    A measured heating value ``HHV_m`` scales the specification's chemical exergy,
    ``ex_ch = ex_ch,spec HHV_m / HHV_spec`` (the fuel's quality changes, its
    exergy-to-heating-value ratio does not). The LHV follows by
    :func:`lower_heating_value_j_per_kg`: for a fuel with a composition,
    ``LHV = HHV_m - (HHV_spec - LHV_spec)`` (the water formed and its latent heat are
    fixed by the composition; the same rule as :mod:`engine.heatloss`); for a fuel
    given by heating values only, ``LHV = LHV_spec HHV_m / HHV_spec``.

    Reaction term: burning the fuel with air from the environment and bringing the
    products to equilibrium with it (water condensed) releases the HHV as heat; the
    reversible work of that reaction is the chemical exergy (Ch. 3 in [3]_). Hence the
    entropy of the products exceeds that of the reactants by ``s_r = (ex_ch - HHV) / T0``
    per kg of fuel (negative for hydrocarbons): the fuel's entropy is the one its
    chemical exergy implies, ``S_f = (H_f + Σ N_el κ_el - Ex_f) / T0`` in the notation of
    :mod:`engine.chemical_exergy` -- the convention of
    :mod:`engine.boiler_exergy_split` too, so that the boiler's entropy balance and its
    exergy split agree to round-off whichever way the exergy was obtained.
    """
    if fuel is None:
        raise ValueError(f"a {kind} burns a fuel, but the model context has none")
    n = len(inputs)
    mass = _column(inputs, "fuel_mass_flow")
    volume = _column(inputs, "fuel_volume_flow")
    if mass is None and volume is None:
        raise ValueError(f"a {kind} needs fuel_mass_flow or fuel_volume_flow; neither is bound")
    if volume is not None and fuel.density_kg_per_m3 is None and mass is None:
        raise ValueError(
            f"fuel_volume_flow is bound but fuel {fuel.name!r} has no density_kg_per_m3 "
            "to turn it into a mass flow"
        )
    if mass is None:
        mass = np.full(n, np.nan)
    if volume is not None and fuel.density_kg_per_m3 is not None:
        mass = np.where(np.isfinite(mass), mass, volume * fuel.density_kg_per_m3)

    hhv = heating_value_j_per_kg(inputs, fuel)
    with np.errstate(invalid="ignore"):
        valid = np.isfinite(mass) & (mass > 0) & np.isfinite(hhv)
    mass = np.where(valid, mass, np.nan)
    hhv = np.where(valid, hhv, np.nan)

    lhv = lower_heating_value_j_per_kg(hhv, fuel)
    ex_ch = fuel.chemical_exergy_j_per_kg * (hhv / fuel.hhv_j_per_kg)
    return FuelInput(
        mass_flow_kg_per_s=mass,
        hhv_j_per_kg=hhv,
        heat_input_hhv_w=mass * hhv,
        heat_input_lhv_w=mass * lhv,
        exergy_w=mass * ex_ch,
        reaction_exergy_minus_heat_w=mass * (ex_ch - hhv),
        valid=valid,
    )
