"""Boiler efficiency by the heat-loss (energy-balance, indirect) method, PTC 4 structure.

``eta_1_indirect = 1 - Σ losses + Σ credits``, every loss and credit a fraction of the
fuel input (HHV basis): the form of ASME PTC 4-2013 Sec. 5.7 in which all losses and
credits are expressed as fractions of fuel input (PTC 4 writes them in percent,
``EF = 100 - ΣQpL + ΣQpB``). Losses and credits are computed per kilogram of fuel from
the flue-gas analysis and temperatures, with the stoichiometry of
:mod:`engine.combustion` and the ideal-gas enthalpies of :mod:`engine.gas` (PTC 4 itself
uses curve fits of the same NASA data, Sec. 5.19), relative to a reference temperature
of 25 degC unless configured.

PTC 4 section numbers below are from memory of the 2013 edition (Sec. 5.14 losses, 5.15
credits; to be verified against the code text); each loss also carries PTC 4's symbol
(QpLDFg, ...) so that it can be found in any edition.

References
----------
.. [1] ASME PTC 4-2013, "Fired Steam Generators", Sec. 5.7 (efficiency by the energy
   balance method), 5.14 (losses), 5.15 (credits), 5.19 (enthalpy of air and flue gas).
.. [2] B. J. McBride, S. Gordon, M. A. Reno, NASA TM-4513, 1993 (the gas data).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine import combustion, gas
from engine.fuels import FuelProperties

REFERENCE_TEMPERATURE_K = 298.15
"""PTC 4 reference temperature, 25 degC (77 degF). [K]"""

UNBURNED_CARBON_HHV_J_PER_KG = 14_500.0 * 2_326.0
"""Heating value PTC 4 assigns to unburned carbon in refuse, 14,500 Btu/lbm (33.73 MJ/kg;
value from memory). Graphite's own is 32.8 MJ/kg. [J/kg]"""

STANDARD_HUMIDITY_RATIO = 0.013
"""Air moisture used when none is measured: 0.013 kg water per kg dry air, common
practice (the standard air of the older ASME boiler test code, from memory). [kg/kg]"""

LOSS_COLUMNS = (
    "loss_dry_flue_gas",
    "loss_hydrogen_water",
    "loss_fuel_moisture",
    "loss_air_moisture",
    "loss_co",
    "loss_unburned_carbon",
    "loss_surface",
)
"""Loss columns of :func:`heat_loss_efficiency`, fractions of HHV input."""
CREDIT_COLUMNS = ("credit_dry_air", "credit_air_moisture", "credit_fuel_sensible")
"""Credit columns of :func:`heat_loss_efficiency`, fractions of HHV input."""


def _arr(value) -> np.ndarray:
    if isinstance(value, pd.Series):
        return value.to_numpy(dtype=float, na_value=np.nan)
    return np.asarray(value, dtype=float)


def _index(*values) -> pd.Index | None:
    for v in values:
        if isinstance(v, pd.Series):
            return v.index
    return None


def _frame(columns: dict[str, np.ndarray], index: pd.Index | None) -> pd.DataFrame:
    shape = np.broadcast_shapes(*(np.shape(v) for v in columns.values()))
    n = int(np.prod(shape)) if shape else 1
    data = {
        k: np.broadcast_to(np.asarray(v, dtype=float), shape).reshape(n) for k, v in columns.items()
    }
    return pd.DataFrame(data, index=index if index is not None and len(index) == n else None)


def surface_loss_fraction_at_load(full_load_fraction, load_fraction):
    """Surface radiation and convection loss at part load, as a fraction of fuel input.

    Parameters
    ----------
    full_load_fraction : numeric
        The loss at full load (a design or test figure). [-]
    load_fraction : numeric
        Output over full-load output. [-]

    Returns
    -------
    numeric
        ``full_load_fraction / load_fraction``. [-]

    Notes
    -----
    Common practice, not a PTC 4 equation: the heat a casing loses depends on its
    temperatures, not on the firing rate, so the absolute loss is taken constant and its
    share of the input grows at part load (the shape of the ABMA radiation-loss chart).
    PTC 4 Sec. 5.14 computes it from measured surface areas and temperatures instead.
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        value = _arr(full_load_fraction) / _arr(load_fraction)
        value = np.where(_arr(load_fraction) > 0, value, np.nan)
    return gas.restore_type(value, full_load_fraction, load_fraction)


def unburned_carbon_from_refuse(
    ash_kg_per_kg, carbon_in_fly_ash, carbon_in_bottom_ash=0.0, fly_ash_split=0.8
):
    """Unburned carbon per kg of fuel from the carbon content of the refuse.

    Parameters
    ----------
    ash_kg_per_kg : numeric
        Ash in the fuel as fired. [kg/kg]
    carbon_in_fly_ash : numeric
        Carbon mass fraction of the fly ash (loss on ignition as carbon). [-]
    carbon_in_bottom_ash : numeric, default 0
        Carbon mass fraction of the bottom ash. [-]
    fly_ash_split : numeric, default 0.8
        Share of the ash leaving as fly ash; 0.8 is common practice for pulverised coal. [-]

    Returns
    -------
    numeric
        ``A Σ_k f_k c_k / (1 - c_k)``: each refuse stream holds its share ``f_k`` of the
        ash plus the carbon that makes its carbon fraction ``c_k`` (PTC 4 Sec. 5.14,
        unburned carbon in residue). [kg/kg]
    """
    a = _arr(ash_kg_per_kg)
    c_fly = _arr(carbon_in_fly_ash)
    c_bottom = _arr(carbon_in_bottom_ash)
    split = _arr(fly_ash_split)
    with np.errstate(invalid="ignore", divide="ignore"):
        ubc = a * (split * c_fly / (1.0 - c_fly) + (1.0 - split) * c_bottom / (1.0 - c_bottom))
        ok = (c_fly >= 0) & (c_fly < 1) & (c_bottom >= 0) & (c_bottom < 1)
    return gas.restore_type(
        np.where(ok, ubc, np.nan), ash_kg_per_kg, carbon_in_fly_ash, carbon_in_bottom_ash
    )


def _vapour_minus_liquid(t_k, t_ref_k) -> np.ndarray:
    """h_H2O,vapour(T) - h_H2O,liquid(T_ref): water leaving as vapour, entering as liquid. [J/mol]"""
    liquid = gas.CONDENSED_PHASES["H2O(l)"]
    h_liquid = liquid.h_formation_j_per_mol + liquid.cp_j_per_mol_k * (t_ref_k - gas.T_REF_K)
    return _arr(gas.enthalpy_j_per_mol("H2O", t_k)) - h_liquid


def co_heat_of_combustion_j_per_mol() -> float:
    """Heat of CO + 1/2 O2 -> CO2 at 25 degC from the gas data (about 283.0 kJ/mol). [J/mol]"""
    t = gas.T_REF_K
    return float(
        gas.enthalpy_j_per_mol("CO", t)
        + 0.5 * gas.enthalpy_j_per_mol("O2", t)
        - gas.enthalpy_j_per_mol("CO2", t)
    )


def heat_loss_efficiency(
    fuel: FuelProperties,
    flue_gas_o2,
    flue_gas_temperature_k,
    air_temperature_k,
    *,
    o2_basis: str = "dry",
    humidity_ratio=STANDARD_HUMIDITY_RATIO,
    fuel_temperature_k=None,
    co_ppm=None,
    unburned_carbon_kg_per_kg=0.0,
    surface_loss_fraction=0.0,
    fuel_hhv_j_per_kg=None,
    reference_temperature_k=REFERENCE_TEMPERATURE_K,
    unburned_carbon_hhv_j_per_kg=UNBURNED_CARBON_HHV_J_PER_KG,
) -> pd.DataFrame:
    """First-law boiler efficiency by the heat-loss method, every loss its own column.

    Parameters
    ----------
    fuel : FuelProperties
        Fuel with an ultimate analysis (:meth:`FuelProperties.from_gas` or
        :meth:`FuelProperties.from_ultimate_analysis`).
    flue_gas_o2 : numeric
        O2 in the flue gas leaving the boiler envelope, mole fraction. [-]
    flue_gas_temperature_k : numeric
        Flue-gas temperature leaving the envelope (after the air heater, if any; no
        air-heater leakage correction is made). [K]
    air_temperature_k : numeric
        Combustion-air temperature entering the envelope (before any air heater). [K]
    o2_basis : {"dry", "wet"}
        Basis of ``flue_gas_o2``.
    humidity_ratio : numeric, default 0.013
        Combustion-air humidity (:data:`STANDARD_HUMIDITY_RATIO` when not measured; see
        :func:`engine.combustion.humidity_ratio_from_relative_humidity`). [kg/kg dry air]
    fuel_temperature_k : numeric, optional
        Fuel temperature entering the envelope; default the reference temperature (no
        fuel credit). [K]
    co_ppm : numeric, optional
        CO in the flue gas, ppm by volume on a dry basis; default none measured (loss 0).
        [ppm]
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon in the refuse per kg of fuel (see :func:`unburned_carbon_from_refuse`). [kg/kg]
    surface_loss_fraction : numeric, default 0
        Surface radiation and convection loss as a fraction of fuel input, configured
        or from :func:`surface_loss_fraction_at_load`. [-]
    fuel_hhv_j_per_kg : numeric, optional
        Measured HHV per interval; default the fuel's. [J/kg]
    reference_temperature_k : float, default 298.15
        Reference temperature of the losses and credits. [K]
    unburned_carbon_hhv_j_per_kg : float, default 33.73e6
        Heating value of the unburned carbon (:data:`UNBURNED_CARBON_HHV_J_PER_KG`). [J/kg]

    Returns
    -------
    DataFrame
        One row per interval (a Series input's index is kept), columns:

        ``excess_air`` [-], ``dry_flue_gas_kg_per_kg_fuel`` [kg/kg],
        ``wet_flue_gas_kg_per_kg_fuel`` [kg/kg], ``dry_air_kg_per_kg_fuel`` [kg/kg],
        the losses of :data:`LOSS_COLUMNS` and credits of :data:`CREDIT_COLUMNS` (all
        fractions of HHV input) [-], ``losses_total`` [-], ``credits_total`` [-],
        ``eta_1_indirect`` (HHV basis) [-] and ``eta_1_indirect_lhv`` [-] (NaN when the
        fuel has no LHV).

    Notes
    -----
    Per kg of fuel, with ``n`` moles of each flue-gas species, ``h`` the formation-basis
    enthalpy, ``T_fg`` the exit gas, ``T_a`` the entering air and ``T_r`` the reference:

    * dry flue gas, QpLDFg (Sec. 5.14): ``Σ_dry n_i (h_i(T_fg) - h_i(T_r)) / HHV``;
    * water from hydrogen, QpLH2F (Sec. 5.14): ``n_H2O,H (h_v(T_fg) - h_l(T_r)) / HHV``
      (liquid at the reference, vapour at the exit: latent plus sensible heat);
    * water from fuel moisture, QpLWF (Sec. 5.14): same with the fuel's water;
    * moisture in air, QpLWA (Sec. 5.14): ``n_w,air (h_v(T_fg) - h_v(T_r)) / HHV``;
    * CO in flue gas, QpLCO (Sec. 5.14): ``n_dry ppm 1e-6 ΔH_CO / HHV``, ``ΔH_CO``
      the heat of burning CO to CO2 (stoichiometry is not corrected for the CO);
    * unburned carbon in refuse, QpLUbC (Sec. 5.14): ``m_C,ub HHV_C / HHV``;
    * surface radiation and convection, QrLSrc (Sec. 5.14): the configured fraction;
    * credit for entering dry air, QpBDA (Sec. 5.15): ``Σ n_i,air (h_i(T_a) - h_i(T_r)) / HHV``;
    * credit for moisture in entering air, QpBWA (Sec. 5.15);
    * credit for sensible heat in fuel, QpBF (Sec. 5.15): ``cp_f (T_f - T_r) / HHV``.

    The stoichiometry uses the carbon burned. Sensible heat of the refuse, sorbent,
    pulveriser rejects, NOx formation and the other minor PTC 4 items are not modelled.
    On the LHV basis ``eta_1_indirect_lhv = eta_1_indirect HHV / LHV`` (same output,
    input on the LHV).
    """
    ultimate = combustion._require_ultimate(fuel)
    t_ref = float(reference_temperature_k)
    t_fg = _arr(flue_gas_temperature_k)
    t_air = _arr(air_temperature_k)
    t_fuel = np.asarray(t_ref) if fuel_temperature_k is None else _arr(fuel_temperature_k)
    hhv = np.asarray(fuel.hhv_j_per_kg) if fuel_hhv_j_per_kg is None else _arr(fuel_hhv_j_per_kg)
    with np.errstate(invalid="ignore"):
        hhv = np.where(hhv > 0, hhv, np.nan)
    ubc = _arr(unburned_carbon_kg_per_kg)

    excess = _arr(
        combustion.excess_air_from_o2(
            _arr(flue_gas_o2), ultimate, o2_basis, _arr(humidity_ratio), ubc
        )
    )
    fg = combustion.flue_gas(ultimate, excess, _arr(humidity_ratio), ubc)
    m = ultimate.moles_per_kg()
    water_h2 = m["H"] / 2.0

    dry_gas = _arr(gas.sensible_enthalpy(fg.dry_amounts_mol_per_kg, t_fg, t_ref))
    vapour_liquid = _vapour_minus_liquid(t_fg, t_ref)
    vapour_sensible = _arr(gas.sensible_enthalpy({"H2O": 1.0}, t_fg, t_ref))
    air_dry = {k: fg.dry_air_mol_per_kg * x for k, x in combustion.DRY_AIR_MOLE_FRACTIONS.items()}

    co = np.asarray(0.0) if co_ppm is None else _arr(co_ppm)
    cp_fuel = fuel.specific_heat_j_per_kg_k or 0.0

    columns: dict[str, np.ndarray] = {
        "excess_air": excess,
        "dry_flue_gas_kg_per_kg_fuel": fg.dry_kg_per_kg,
        "wet_flue_gas_kg_per_kg_fuel": fg.wet_kg_per_kg,
        "dry_air_kg_per_kg_fuel": fg.dry_air_kg_per_kg,
        "loss_dry_flue_gas": dry_gas / hhv,
        "loss_hydrogen_water": water_h2 * vapour_liquid / hhv,
        "loss_fuel_moisture": m["H2O"] * vapour_liquid / hhv,
        "loss_air_moisture": fg.air_water_mol_per_kg * vapour_sensible / hhv,
        "loss_co": fg.dry_mol_per_kg * co * 1e-6 * co_heat_of_combustion_j_per_mol() / hhv,
        "loss_unburned_carbon": ubc * float(unburned_carbon_hhv_j_per_kg) / hhv,
        "loss_surface": _arr(surface_loss_fraction) + 0.0 * hhv,
        "credit_dry_air": _arr(gas.sensible_enthalpy(air_dry, t_air, t_ref)) / hhv,
        "credit_air_moisture": fg.air_water_mol_per_kg
        * _arr(gas.sensible_enthalpy({"H2O": 1.0}, t_air, t_ref))
        / hhv,
        "credit_fuel_sensible": cp_fuel * (t_fuel - t_ref) / hhv,
    }
    losses = sum(columns[c] for c in LOSS_COLUMNS)
    credits = sum(columns[c] for c in CREDIT_COLUMNS)
    eta = 1.0 - losses + credits
    columns["losses_total"] = losses
    columns["credits_total"] = credits
    columns["eta_1_indirect"] = eta
    if fuel.lhv_j_per_kg is None:
        columns["eta_1_indirect_lhv"] = np.full(np.shape(eta), np.nan)
    else:
        # The latent heat of the water formed is fixed by the composition, so a measured
        # HHV moves the LHV by the same amount.
        lhv = hhv - (fuel.hhv_j_per_kg - fuel.lhv_j_per_kg)
        columns["eta_1_indirect_lhv"] = eta * hhv / lhv
    index = _index(
        flue_gas_o2, flue_gas_temperature_k, air_temperature_k, humidity_ratio,
        fuel_temperature_k, co_ppm, unburned_carbon_kg_per_kg, surface_loss_fraction,
        fuel_hhv_j_per_kg,
    )  # fmt: skip
    return _frame(columns, index)


DIRECT_INDIRECT_TOLERANCE = 0.02
"""Default allowed |eta_1 direct - indirect|: 2 percentage points, common practice (about
twice the combined standard uncertainty of a well-instrumented boiler, PTC 4 Sec. 7
uncertainty levels, from memory). Configure from the instruments. [-]"""


def direct_indirect_difference(eta_1_direct, eta_1_indirect, tolerance=DIRECT_INDIRECT_TOLERANCE):
    """Reconcile direct (input-output) and indirect (heat-loss) boiler efficiency.

    Parameters
    ----------
    eta_1_direct : numeric
        First-law efficiency by the input-output method (HHV basis). [-]
    eta_1_indirect : numeric
        First-law efficiency by the heat-loss method (HHV basis). [-]
    tolerance : numeric, default 0.02
        Allowed absolute difference, e.g. ``k sqrt(u_direct^2 + u_indirect^2)`` from the
        propagated uncertainties; may differ per row. [-]

    Returns
    -------
    difference : numeric
        ``eta_1_direct - eta_1_indirect``; NaN where either is NaN. [-]
    disagree : bool ndarray or Series
        True where ``|difference| > tolerance`` (False where the difference is NaN: no
        evidence either way). The boiler model sets ``Flag.DIRECT_INDIRECT_DISAGREE``
        from it.
    """
    diff = _arr(eta_1_direct) - _arr(eta_1_indirect)
    with np.errstate(invalid="ignore"):
        disagree = np.abs(diff) > _arr(tolerance)
    difference = gas.restore_type(diff, eta_1_direct, eta_1_indirect, tolerance)
    index = _index(eta_1_direct, eta_1_indirect, tolerance)
    if index is not None:
        return difference, pd.Series(np.broadcast_to(disagree, len(index)), index=index)
    if np.ndim(difference) == 0:
        return difference, bool(disagree)
    return difference, np.asarray(disagree, dtype=bool)
