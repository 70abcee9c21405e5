"""Complete-combustion stoichiometry: air, excess air from flue-gas O2, flue-gas composition.

Everything is per kilogram of fuel as fired, from the fuel's ultimate analysis
(:class:`engine.fuels.UltimateAnalysis`). Combustion is complete: carbon burns to CO2,
hydrogen to H2O, sulfur to SO2; fuel nitrogen leaves as N2 (NOx neglected, as in ASME
PTC 4). Carbon left unburned in the refuse can be given; stoichiometry then uses the
carbon burned (PTC 4's "carbon burned" correction). Air is dry air of
:data:`DRY_AIR_MOLE_FRACTIONS` plus water vapour at a humidity ratio.

Per-interval inputs (O2, temperatures, humidity) are numeric: scalars, arrays or
Series, broadcast together; no loop over rows. NaN or impossible values (O2 at or
above that of the air, negative humidity) give NaN for that row.

References
----------
.. [1] ASME PTC 4-2013, "Fired Steam Generators", Sec. 5 (combustion calculations per
   unit of fuel: theoretical air, excess air from O2 on a dry or wet basis, dry and wet
   flue-gas products, carbon burned). Section numbering from memory.
.. [2] U.S. Standard Atmosphere, 1976, NOAA/NASA/USAF, Table 3 (composition of dry air
   near sea level).
.. [3] IAPWS R14-08(2011), "Revised Release on the Pressure along the Melting and
   Sublimation Curves of Ordinary Water Substance", Eq. 6 (sublimation pressure).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine import gas, steam
from engine.fuels import FuelProperties, UltimateAnalysis

DRY_AIR_MOLE_FRACTIONS = {
    "N2": 1.0 - 0.209476 - 0.00934 - 0.000314,
    "O2": 0.209476,
    "Ar": 0.00934,
    "CO2": 0.000314,
}
"""Dry air: O2, Ar and CO2 from the U.S. Standard Atmosphere 1976, Table 3 [2]_; N2 takes
the remainder (its own 0.78084 plus the trace gases, 3e-5). [-]"""

P_ATMOSPHERE_PA = 101_325.0
"""Standard atmosphere. [Pa]"""


def _arr(value) -> np.ndarray:
    if isinstance(value, pd.Series):
        return value.to_numpy(dtype=float, na_value=np.nan)
    return np.asarray(value, dtype=float)


def dry_air_molar_mass_kg_per_mol() -> float:
    """Mean molar mass of :data:`DRY_AIR_MOLE_FRACTIONS` (28.965 g/mol). [kg/mol]"""
    return float(gas.mean_molar_mass_kg_per_mol(DRY_AIR_MOLE_FRACTIONS))


# --- humidity ------------------------------------------------------------------------


def _sublimation_pressure_pa(t: np.ndarray) -> np.ndarray:
    theta = t / 273.16
    a = (-0.212144006e2, 0.273203819e2, -0.610598130e1)
    b = (0.333333333e-2, 0.120666667e1, 0.170333333e1)
    with np.errstate(invalid="ignore", divide="ignore"):
        total = sum(ai * theta**bi for ai, bi in zip(a, b, strict=True))
        return 611.657 * np.exp(total / theta)


def water_vapour_saturation_pressure_pa(t_k):
    """Saturation pressure of water vapour over liquid water (over ice below 0 degC).

    Parameters
    ----------
    t_k : numeric
        Temperature. [K]

    Returns
    -------
    numeric
        IAPWS-IF97 saturation pressure (:func:`engine.steam.saturation_pressure`) from
        273.15 K; below it the sublimation pressure of IAPWS R14-08 [3]_ down to 190 K
        (relative humidity below freezing is then taken over ice). [Pa]
    """
    t = _arr(t_k)
    flat = t.reshape(-1)
    liquid = steam.saturation_pressure(flat).reshape(t.shape)
    with np.errstate(invalid="ignore"):
        icy = (t >= 190.0) & (t < 273.15)
    p = np.where(icy, _sublimation_pressure_pa(t), liquid)
    return gas.restore_type(p, t_k)


def humidity_ratio_from_relative_humidity(relative_humidity, t_k, p_pa=P_ATMOSPHERE_PA):
    """Humidity ratio of moist air from relative humidity, temperature and pressure.

    Parameters
    ----------
    relative_humidity : numeric
        Relative humidity as a fraction, 0-1. [-]
    t_k : numeric
        Dry-bulb temperature. [K]
    p_pa : numeric, default 101325
        Total (barometric) pressure. [Pa]

    Returns
    -------
    numeric
        ``ω = (M_w / M_a) p_v / (p - p_v)`` with ``p_v = RH p_sat(T)``: kg water vapour per
        kg dry air. NaN for RH outside 0-1 or p_v >= p. [kg/kg]
    """
    rh = _arr(relative_humidity)
    p = _arr(p_pa)
    p_v = rh * _arr(water_vapour_saturation_pressure_pa(t_k))
    ratio = gas.molar_mass_kg_per_mol("H2O") / dry_air_molar_mass_kg_per_mol()
    with np.errstate(invalid="ignore", divide="ignore"):
        omega = ratio * p_v / (p - p_v)
        bad = (rh < 0) | (rh > 1) | (p_v >= p)
    return gas.restore_type(np.where(bad, np.nan, omega), relative_humidity, t_k, p_pa)


def _water_per_dry_air_mol(humidity_ratio) -> np.ndarray:
    omega = _arr(humidity_ratio)
    with np.errstate(invalid="ignore"):
        omega = np.where(omega >= 0, omega, np.nan)
    return omega * dry_air_molar_mass_kg_per_mol() / gas.molar_mass_kg_per_mol("H2O")


# --- stoichiometry -------------------------------------------------------------------


def _burned(ultimate: UltimateAnalysis, unburned_carbon_kg_per_kg) -> dict[str, np.ndarray]:
    """Moles per kg fuel of what burns (carbon burned, H, O, N, S) and of the moisture."""
    moles = ultimate.moles_per_kg()
    ubc = _arr(unburned_carbon_kg_per_kg)
    with np.errstate(invalid="ignore"):
        ubc = np.where((ubc >= 0) & (ubc <= ultimate.carbon), ubc, np.nan)
    out = {k: np.asarray(v, dtype=float) for k, v in moles.items()}
    out["C"] = moles["C"] - ubc / gas.ATOMIC_MASS_KG_PER_MOL["C"]
    return out


def _theoretical_o2(m: dict[str, np.ndarray]) -> np.ndarray:
    return m["C"] + m["H"] / 4.0 + m["S"] - m["O"] / 2.0


def theoretical_oxygen_mol_per_kg(ultimate: UltimateAnalysis, unburned_carbon_kg_per_kg=0.0):
    """Oxygen for complete combustion of the fuel burned, ``C_b + H/4 + S - O/2`` (atoms per kg). [mol/kg]

    Parameters
    ----------
    ultimate : UltimateAnalysis
        Fuel composition as fired.
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon leaving unburned in the refuse, per kg of fuel. [kg/kg]

    Returns
    -------
    numeric
        Moles of O2 per kg of fuel. [mol/kg]
    """
    m = _burned(ultimate, unburned_carbon_kg_per_kg)
    return gas.restore_type(_theoretical_o2(m), unburned_carbon_kg_per_kg)


def theoretical_air_kg_per_kg(ultimate: UltimateAnalysis, unburned_carbon_kg_per_kg=0.0):
    """Theoretical (stoichiometric) dry air per kg of fuel. [kg/kg]

    Parameters
    ----------
    ultimate : UltimateAnalysis
        Fuel composition as fired.
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon unburned, per kg of fuel. [kg/kg]

    Returns
    -------
    numeric
        ``O2_th / x_O2,air * M_air``. [kg/kg]
    """
    m = _burned(ultimate, unburned_carbon_kg_per_kg)
    air_mol = _theoretical_o2(m) / DRY_AIR_MOLE_FRACTIONS["O2"]
    return gas.restore_type(air_mol * dry_air_molar_mass_kg_per_mol(), unburned_carbon_kg_per_kg)


def excess_air_from_o2(
    o2_mole_fraction,
    ultimate: UltimateAnalysis,
    basis: str = "dry",
    humidity_ratio=0.0,
    unburned_carbon_kg_per_kg=0.0,
):
    """Excess air from the O2 measured in the flue gas, on a dry or a wet basis.

    Parameters
    ----------
    o2_mole_fraction : numeric
        Measured O2 as a mole (volume) fraction, e.g. 0.03 for 3 %. [-]
    ultimate : UltimateAnalysis
        Fuel composition as fired.
    basis : {"dry", "wet"}
        Whether the analyser measures on dry gas (extractive, water condensed) or on
        wet gas (in situ, e.g. zirconia probes).
    humidity_ratio : numeric, default 0
        Combustion-air humidity; enters the wet basis only. [kg/kg dry air]
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon unburned, per kg of fuel. [kg/kg]

    Returns
    -------
    numeric
        Excess air as a fraction of the theoretical air (0.15 for 15 %). NaN for O2
        below 0 or at or above the O2 content of the (moist) air. [-]

    Notes
    -----
    Per kg of fuel let ``O_th`` be the theoretical O2, ``A = O_th / x_O2`` the theoretical
    dry air, ``P_d = C_b + S + N/2`` the dry products from the fuel and
    ``P_w = P_d + H/2 + n_moisture``. With air factor ``λ`` the flue gas holds
    ``(λ - 1) O_th`` of O2 in ``P_d + λ A - O_th`` dry moles (plus ``H/2 + n_moisture +
    λ A φ`` of water when wet, ``φ`` the water per mole of dry air). Each O2 fraction is
    linear-fractional in ``λ``, so::

        dry:  λ = (O_th + y (P_d - O_th)) / (O_th - y A)
        wet:  λ = (O_th + y (P_w - O_th)) / (O_th - y A (1 + φ))

    the same bookkeeping as PTC 4's excess-air calculation from O2 [1]_.
    """
    if basis not in ("dry", "wet"):
        raise ValueError(f"basis must be 'dry' or 'wet', got {basis!r}")
    y = _arr(o2_mole_fraction)
    m = _burned(ultimate, unburned_carbon_kg_per_kg)
    o_th = _theoretical_o2(m)
    a = o_th / DRY_AIR_MOLE_FRACTIONS["O2"]
    p = m["C"] + m["S"] + m["N"] / 2.0
    if basis == "wet":
        p = p + m["H"] / 2.0 + m["H2O"]
        a = a * (1.0 + _water_per_dry_air_mol(humidity_ratio))
    with np.errstate(invalid="ignore", divide="ignore"):
        denominator = o_th - y * a
        lam = (o_th + y * (p - o_th)) / denominator
        lam = np.where((y >= 0) & (denominator > 0), lam, np.nan)
    return gas.restore_type(lam - 1.0, o2_mole_fraction, humidity_ratio, unburned_carbon_kg_per_kg)


@dataclass(frozen=True)
class FlueGas:
    """Products of complete combustion and the air used, per kg of fuel as fired.

    Attributes
    ----------
    amounts_mol_per_kg : dict of str to ndarray
        Wet flue gas: moles of CO2, H2O, SO2, N2, O2 and Ar per kg of fuel. [mol/kg]
    excess_air : ndarray
        Excess air fraction. [-]
    dry_air_mol_per_kg : ndarray
        Dry air supplied per kg of fuel. [mol/kg]
    air_water_mol_per_kg : ndarray
        Water vapour entering with the air per kg of fuel. [mol/kg]
    """

    amounts_mol_per_kg: dict[str, np.ndarray]
    excess_air: np.ndarray
    dry_air_mol_per_kg: np.ndarray
    air_water_mol_per_kg: np.ndarray

    @property
    def dry_amounts_mol_per_kg(self) -> dict[str, np.ndarray]:
        """The flue gas without its water. [mol/kg]"""
        return {k: v for k, v in self.amounts_mol_per_kg.items() if k != "H2O"}

    @property
    def air_amounts_mol_per_kg(self) -> dict[str, np.ndarray]:
        """Moist combustion air per kg of fuel, by species. [mol/kg]"""
        air = {k: self.dry_air_mol_per_kg * x for k, x in DRY_AIR_MOLE_FRACTIONS.items()}
        air["H2O"] = self.air_water_mol_per_kg
        return air

    @property
    def wet_mol_per_kg(self) -> np.ndarray:
        """Total wet flue gas. [mol/kg]"""
        return sum(self.amounts_mol_per_kg.values())

    @property
    def dry_mol_per_kg(self) -> np.ndarray:
        """Total dry flue gas. [mol/kg]"""
        return sum(self.dry_amounts_mol_per_kg.values())

    @property
    def wet_mole_fractions(self) -> dict[str, np.ndarray]:
        """Mole fractions of the wet flue gas. [-]"""
        total = self.wet_mol_per_kg
        return {k: v / total for k, v in self.amounts_mol_per_kg.items()}

    @property
    def dry_mole_fractions(self) -> dict[str, np.ndarray]:
        """Mole fractions of the dry flue gas. [-]"""
        total = self.dry_mol_per_kg
        return {k: v / total for k, v in self.dry_amounts_mol_per_kg.items()}

    @property
    def wet_kg_per_kg(self) -> np.ndarray:
        """Wet flue-gas mass per kg of fuel. [kg/kg]"""
        return sum(n * gas.molar_mass_kg_per_mol(s) for s, n in self.amounts_mol_per_kg.items())

    @property
    def dry_kg_per_kg(self) -> np.ndarray:
        """Dry flue-gas mass per kg of fuel. [kg/kg]"""
        return sum(n * gas.molar_mass_kg_per_mol(s) for s, n in self.dry_amounts_mol_per_kg.items())

    @property
    def dry_air_kg_per_kg(self) -> np.ndarray:
        """Dry air per kg of fuel. [kg/kg]"""
        return self.dry_air_mol_per_kg * dry_air_molar_mass_kg_per_mol()

    @property
    def air_water_kg_per_kg(self) -> np.ndarray:
        """Water vapour with the air per kg of fuel. [kg/kg]"""
        return self.air_water_mol_per_kg * gas.molar_mass_kg_per_mol("H2O")


def flue_gas(
    ultimate: UltimateAnalysis, excess_air, humidity_ratio=0.0, unburned_carbon_kg_per_kg=0.0
) -> FlueGas:
    """Flue gas of complete combustion with a given excess air.

    Parameters
    ----------
    ultimate : UltimateAnalysis
        Fuel composition as fired.
    excess_air : numeric
        Excess air fraction (0.15 for 15 %). [-]
    humidity_ratio : numeric, default 0
        Combustion-air humidity. [kg/kg dry air]
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon unburned, per kg of fuel. [kg/kg]

    Returns
    -------
    FlueGas
        Arrays broadcast over the inputs (0-d for scalars).

    Notes
    -----
    With air factor ``λ = 1 + excess_air`` and ``A`` the theoretical dry air (mol/kg):
    CO2 = C_b + λA x_CO2; H2O = H/2 + moisture + λAφ; SO2 = S; N2 = N/2 + λA x_N2;
    Ar = λA x_Ar; O2 = (λ - 1) O_th.
    """
    m = _burned(ultimate, unburned_carbon_kg_per_kg)
    lam = 1.0 + _arr(excess_air)
    with np.errstate(invalid="ignore"):
        lam = np.where(lam >= 1.0, lam, np.nan)
    o_th = _theoretical_o2(m)
    air = lam * o_th / DRY_AIR_MOLE_FRACTIONS["O2"]
    water_air = air * _water_per_dry_air_mol(humidity_ratio)
    x = DRY_AIR_MOLE_FRACTIONS
    amounts = {
        "CO2": m["C"] + air * x["CO2"],
        "H2O": m["H"] / 2.0 + m["H2O"] + water_air,
        "SO2": m["S"] + 0.0 * air,
        "N2": m["N"] / 2.0 + air * x["N2"],
        "O2": (lam - 1.0) * o_th,
        "Ar": air * x["Ar"],
    }
    shape = np.broadcast_shapes(*(v.shape for v in amounts.values()))
    amounts = {k: np.broadcast_to(v, shape).astype(float) for k, v in amounts.items()}
    return FlueGas(
        amounts_mol_per_kg=amounts,
        excess_air=np.broadcast_to(lam - 1.0, shape).astype(float),
        dry_air_mol_per_kg=np.broadcast_to(air, shape).astype(float),
        air_water_mol_per_kg=np.broadcast_to(water_air, shape).astype(float),
    )


def o2_from_excess_air(
    excess_air,
    ultimate: UltimateAnalysis,
    basis: str = "dry",
    humidity_ratio=0.0,
    unburned_carbon_kg_per_kg=0.0,
):
    """O2 mole fraction in the flue gas for a given excess air (inverse of :func:`excess_air_from_o2`).

    Parameters
    ----------
    excess_air : numeric
        Excess air fraction. [-]
    ultimate : UltimateAnalysis
        Fuel composition as fired.
    basis : {"dry", "wet"}
        Basis of the returned fraction.
    humidity_ratio : numeric, default 0
        Combustion-air humidity. [kg/kg dry air]
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon unburned, per kg of fuel. [kg/kg]

    Returns
    -------
    numeric
        O2 mole fraction. [-]
    """
    fg = flue_gas(ultimate, excess_air, humidity_ratio, unburned_carbon_kg_per_kg)
    fractions = fg.dry_mole_fractions if basis == "dry" else fg.wet_mole_fractions
    return gas.restore_type(fractions["O2"], excess_air, humidity_ratio, unburned_carbon_kg_per_kg)


def co2_emitted_kg_per_j(fuel: FuelProperties, unburned_carbon_kg_per_kg=0.0):
    """CO2 emitted per joule of fuel input (HHV basis), from the carbon burned.

    Parameters
    ----------
    fuel : FuelProperties
        Fuel with an ultimate analysis.
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon unburned, per kg of fuel. [kg/kg]

    Returns
    -------
    numeric
        ``(C - C_unburned) (M_CO2 / M_C) / HHV``. [kg/J]
    """
    ultimate = _require_ultimate(fuel)
    m = _burned(ultimate, unburned_carbon_kg_per_kg)
    co2 = m["C"] * gas.molar_mass_kg_per_mol("CO2") / fuel.hhv_j_per_kg
    return gas.restore_type(co2, unburned_carbon_kg_per_kg)


def _require_ultimate(fuel: FuelProperties) -> UltimateAnalysis:
    if fuel.ultimate is None:
        raise ValueError(
            f"fuel {fuel.name!r} has no composition (ultimate analysis); combustion "
            "calculations need FuelProperties.from_gas or from_ultimate_analysis"
        )
    return fuel.ultimate


# --- enthalpies on the formation basis ----------------------------------------------


def fuel_enthalpy_j_per_kg(fuel: FuelProperties, t_k=gas.T_REF_K, hhv_j_per_kg=None):
    """Enthalpy of the fuel as fired on the formation basis of :mod:`engine.gas`.

    Parameters
    ----------
    fuel : FuelProperties
        Fuel with an ultimate analysis.
    t_k : numeric, default 298.15
        Fuel temperature. [K]
    hhv_j_per_kg : numeric, optional
        Measured HHV per interval; default the fuel's. [J/kg]

    Returns
    -------
    numeric
        ``h_f(T) = Σ ν_p h_p(298.15 K) - O_th h_O2 + HHV + cp_f (T - 298.15)``, the
        products being CO2, liquid water, SO2 and N2: the enthalpy that makes the HHV
        the heat of complete combustion at 25 degC with the water condensed. [J/kg]
    """
    u = _require_ultimate(fuel)
    m = u.moles_per_kg()
    t_ref = gas.T_REF_K
    h = lambda s: float(gas.enthalpy_j_per_mol(s, t_ref))  # noqa: E731
    liquid = gas.CONDENSED_PHASES["H2O(l)"].h_formation_j_per_mol
    o_th = m["C"] + m["H"] / 4.0 + m["S"] - m["O"] / 2.0
    products = (
        m["C"] * h("CO2")
        + (m["H"] / 2.0 + m["H2O"]) * liquid
        + m["S"] * h("SO2")
        + m["N"] / 2.0 * h("N2")
        - o_th * h("O2")
    )
    cp = fuel.specific_heat_j_per_kg_k or 0.0
    hhv = fuel.hhv_j_per_kg if hhv_j_per_kg is None else _arr(hhv_j_per_kg)
    value = products + hhv + cp * (_arr(t_k) - t_ref)
    return gas.restore_type(value, t_k, hhv_j_per_kg)


def graphite_enthalpy_j_per_mol(t_k):
    """Enthalpy of graphite (unburned carbon) with constant cp, formation basis. [J/mol]

    Parameters
    ----------
    t_k : numeric
        Temperature. [K]
    """
    c = gas.CONDENSED_PHASES["C(gr)"]
    return c.h_formation_j_per_mol + c.cp_j_per_mol_k * (_arr(t_k) - gas.T_REF_K)


def adiabatic_flame_temperature(
    fuel: FuelProperties,
    excess_air,
    air_temperature_k,
    humidity_ratio=0.0,
    fuel_temperature_k=gas.T_REF_K,
    unburned_carbon_kg_per_kg=0.0,
):
    """Adiabatic flame temperature of complete combustion (no dissociation).

    Parameters
    ----------
    fuel : FuelProperties
        Fuel with an ultimate analysis.
    excess_air : numeric
        Excess air fraction. [-]
    air_temperature_k : numeric
        Combustion-air temperature at the burner. [K]
    humidity_ratio : numeric, default 0
        Combustion-air humidity. [kg/kg dry air]
    fuel_temperature_k : numeric, default 298.15
        Fuel temperature. [K]
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon unburned (leaves at fuel temperature, takes no part). [kg/kg]

    Returns
    -------
    numeric
        Temperature at which the complete-combustion products hold the enthalpy of the
        fuel burned plus the air. Ash is not heated. [K]
    """
    fg = flue_gas(_require_ultimate(fuel), excess_air, humidity_ratio, unburned_carbon_kg_per_kg)
    target = burned_fuel_and_air_enthalpy_j_per_kg(
        fuel, fg, air_temperature_k, fuel_temperature_k, unburned_carbon_kg_per_kg
    )
    t = gas.temperature_from_enthalpy(fg.amounts_mol_per_kg, target, 2000.0)
    return gas.restore_type(
        t,
        excess_air,
        air_temperature_k,
        humidity_ratio,
        fuel_temperature_k,
        unburned_carbon_kg_per_kg,
    )


def burned_fuel_and_air_enthalpy_j_per_kg(
    fuel: FuelProperties,
    fg: FlueGas,
    air_temperature_k,
    fuel_temperature_k,
    unburned_carbon_kg_per_kg,
    hhv_j_per_kg=None,
) -> np.ndarray:
    """Enthalpy of the fuel burned plus its moist air, per kg of fuel fired. [J/kg]

    Parameters
    ----------
    fuel : FuelProperties
        Fuel with an ultimate analysis.
    fg : FlueGas
        The combustion's air and products (:func:`flue_gas`).
    air_temperature_k : numeric
        Air temperature. [K]
    fuel_temperature_k : numeric
        Fuel temperature. [K]
    unburned_carbon_kg_per_kg : numeric
        Carbon unburned, removed from the fuel at fuel temperature. [kg/kg]
    hhv_j_per_kg : numeric, optional
        Measured HHV per interval; default the fuel's. [J/kg]
    """
    hhv = None if hhv_j_per_kg is None else _arr(hhv_j_per_kg)
    h_fuel = _arr(fuel_enthalpy_j_per_kg(fuel, _arr(fuel_temperature_k), hhv))
    n_ubc = _arr(unburned_carbon_kg_per_kg) / gas.ATOMIC_MASS_KG_PER_MOL["C"]
    h_ubc = n_ubc * graphite_enthalpy_j_per_mol(fuel_temperature_k)
    h_air = _arr(gas.mixture_enthalpy(fg.air_amounts_mol_per_kg, _arr(air_temperature_k)))
    return h_fuel - h_ubc + h_air
