"""Gas streams and fuels in one exergy bookkeeping, for the gas-side unit kinds.

Shared by the gas turbine and the heat-recovery steam generator: every ideal-gas stream
(air, exhaust, flue gas) and the fuel burnt are valued by the element-offset form of
:mod:`engine.chemical_exergy`,

``Ex = H - T0 S + Σ N_el κ_el``,

with formation-basis enthalpies and absolute entropies of :mod:`engine.gas` (each
species at its partial pressure). The fuel's absolute entropy is the one its chemical
exergy implies, ``S_f = (H_f + Σ N_el κ_el - Ex_f) / T0``, the convention of
:mod:`engine.boiler_exergy_split`. Any process that conserves energy and elements then
destroys exactly ``T0 Sgen``, so an exergy balance and an independent entropy balance
built on these streams agree to round-off (Gouy-Stodola).

References
----------
.. [1] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Sec. 3.3 (physical exergy, Eq. 3.13), 3.4 (Gouy-Stodola, Eq. 3.24), 3.5
   (chemical exergy).
.. [2] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical
   and Metallurgical Processes", Hemisphere, 1988, Sec. 2.4 and Appendix Table I.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from engine import combustion, gas
from engine.fuels import FuelProperties


def element_amounts(amounts: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Atoms of each element in a set of species amounts. [mol per the basis of amounts]"""
    out: dict[str, np.ndarray] = {}
    for species, n in amounts.items():
        for element, count in gas.NASA7_COEFFICIENTS[species].composition.items():
            out[element] = out.get(element, 0.0) + count * np.asarray(n, dtype=float)
    return out


def kappa_sum(elements: Mapping[str, np.ndarray], kappa: Mapping[str, np.ndarray]) -> np.ndarray:
    """``Σ N_el κ_el``. [J per the basis of the amounts]"""
    return sum(n * kappa[el] for el, n in elements.items())


def mass_of(amounts: Mapping[str, np.ndarray]) -> np.ndarray:
    """Mass of a set of species amounts. [kg per mol-basis of the amounts]"""
    return sum(
        np.asarray(n, dtype=float) * gas.molar_mass_kg_per_mol(s) for s, n in amounts.items()
    )


class GasStream:
    """An ideal-gas stream of fixed composition: enthalpy, entropy and exergy at any state.

    Parameters
    ----------
    amounts : Mapping[str, ndarray]
        Amount of each species, per the stream's basis (mol/s, or mol per kg of fuel).
        [mol]
    kappa : Mapping[str, ndarray]
        Element offsets of :func:`engine.chemical_exergy.element_exergy_offsets_j_per_mol`
        at the dead state. [J/mol]
    """

    def __init__(self, amounts: Mapping[str, np.ndarray], kappa: Mapping[str, np.ndarray]):
        self.amounts = dict(amounts)
        self.mixture = gas.Mixture(self.amounts)
        self.kappa_sum = kappa_sum(element_amounts(self.amounts), kappa)
        self.mass = mass_of(self.amounts)

    def enthalpy(self, t_k) -> np.ndarray:
        """Formation-basis enthalpy. [J per basis]"""
        return self.mixture.enthalpy(t_k)

    def entropy(self, t_k, p_pa) -> np.ndarray:
        """Absolute entropy, mixing included. [J/K per basis]"""
        return self.mixture.entropy(t_k, p_pa)

    def exergy(self, t_k, p_pa, t0_k) -> np.ndarray:
        """Total (physical plus chemical) exergy, ``H - T0 S + Σ N κ``. [J per basis]"""
        return self.enthalpy(t_k) - t0_k * self.entropy(t_k, p_pa) + self.kappa_sum

    def thermomechanical_exergy(self, t_k, p_pa, t0_k, p0_pa) -> np.ndarray:
        """Exergy relative to the same gas at (T0, p0): what heat recovery can reach. [J per basis]

        ``(H - H(T0)) - T0 (S(T, p) - S(T0, p0))``, Eq. 3.13 in [1]_ per stream.
        """
        return (self.enthalpy(t_k) - self.enthalpy(t0_k)) - t0_k * (
            self.entropy(t_k, p_pa) - self.entropy(t0_k, p0_pa)
        )


@dataclass(frozen=True)
class FuelState:
    """A fuel as fired, per kg, in the same bookkeeping as :class:`GasStream`.

    Attributes
    ----------
    enthalpy_j_per_kg : ndarray
        Formation-basis enthalpy (:func:`engine.combustion.fuel_enthalpy_j_per_kg`). [J/kg]
    exergy_j_per_kg : ndarray
        Chemical exergy (scaled with a measured HHV) plus the physical exergy of its
        temperature. [J/kg]
    entropy_j_per_kg_k : ndarray
        The absolute entropy the two imply, ``(h + Σ N κ - ex) / T0``. [J/(kg K)]
    """

    enthalpy_j_per_kg: np.ndarray
    exergy_j_per_kg: np.ndarray
    entropy_j_per_kg_k: np.ndarray


def fuel_state(
    fuel: FuelProperties,
    hhv_j_per_kg: np.ndarray,
    t_fuel_k: np.ndarray,
    t0_k: np.ndarray,
    kappa: Mapping[str, np.ndarray],
) -> FuelState:
    """Enthalpy, exergy and implied entropy of a fuel with a composition, per kg.

    Parameters
    ----------
    fuel : FuelProperties
        Fuel with an ultimate analysis.
    hhv_j_per_kg : ndarray
        HHV per row (measured or the fuel's). [J/kg]
    t_fuel_k : ndarray
        Fuel temperature. [K]
    t0_k : ndarray
        Dead-state temperature. [K]
    kappa : Mapping[str, ndarray]
        Element offsets at the dead state. [J/mol]

    Returns
    -------
    FuelState

    Notes
    -----
    The physical exergy of the fuel is that of a constant heat capacity,
    ``cp [(T - T0) - T0 ln(T / T0)]``; its pressure exergy is neglected (the supply
    pressure is rarely metered and throttled at the burner). The chemical exergy scales
    with a measured HHV as in :func:`engine.units._fuel_input.fuel_input`.
    """
    ultimate = fuel.ultimate
    if ultimate is None:
        raise ValueError(f"fuel {fuel.name!r} has no composition")
    h_f = np.asarray(combustion.fuel_enthalpy_j_per_kg(fuel, t_fuel_k, hhv_j_per_kg), dtype=float)
    cp_f = fuel.specific_heat_j_per_kg_k or 0.0
    with np.errstate(invalid="ignore", divide="ignore"):
        ex_physical = cp_f * ((t_fuel_k - t0_k) - t0_k * np.log(t_fuel_k / t0_k))
    ex_f = fuel.chemical_exergy_j_per_kg * hhv_j_per_kg / fuel.hhv_j_per_kg + ex_physical
    moles = ultimate.moles_per_kg()
    elements = {
        "C": moles["C"],
        "H": moles["H"] + 2.0 * moles["H2O"],
        "O": moles["O"] + moles["H2O"],
        "N": moles["N"],
        "S": moles["S"],
    }
    s_f = (h_f + kappa_sum(elements, kappa) - ex_f) / t0_k
    return FuelState(h_f, ex_f, s_f)


def fuel_products_mol_per_kg(fuel: FuelProperties) -> dict[str, np.ndarray]:
    """What burning 1 kg of fuel completely adds to a gas, O2 taken out. [mol/kg]

    Parameters
    ----------
    fuel : FuelProperties
        Fuel with an ultimate analysis.

    Returns
    -------
    dict of str to ndarray
        CO2, H2O, SO2 and N2 formed and the (negative) O2 consumed, per kg of fuel: the
        stoichiometric products of :func:`engine.combustion.flue_gas` less the
        theoretical dry air. [mol/kg]
    """
    ultimate = fuel.ultimate
    if ultimate is None:
        raise ValueError(f"fuel {fuel.name!r} has no composition")
    fg = combustion.flue_gas(ultimate, 0.0, 0.0)
    air = fg.air_amounts_mol_per_kg
    return {
        species: np.asarray(n - air.get(species, 0.0), dtype=float)
        for species, n in fg.amounts_mol_per_kg.items()
        if species != "Ar"
    }
