"""Fuel specifications: heating values and chemical exergy.

References
----------
.. [1] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical
   and Metallurgical Processes", Hemisphere, 1988, Sec. 2.5 and Table 2.4 (ratio of
   chemical exergy to net calorific value of technical fuels).
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class FuelProperties:
    """What a unit model needs to know about a fuel, in SI units.

    Attributes
    ----------
    name : str
        Fuel name as configured.
    hhv_j_per_kg : float
        Higher (gross) heating value at 25 degC. [J/kg]
    lhv_j_per_kg : float or None
        Lower (net) heating value at 25 degC; None when not known. [J/kg]
    exergy_to_lhv_ratio : float
        Chemical exergy over the LHV (over the HHV when the LHV is not known).
        Default 1.04, the value for natural gas given in Szargut et al. 1988,
        Table 2.4 (range 1.04 for natural gas to about 1.06-1.10 for coal). [-]
    density_kg_per_m3 : float or None
        Gas density at the reference conditions its volume flow is metered at,
        to turn a volume flow into a mass flow. [kg/m^3]
    co2_kg_per_j : float or None
        CO2 emitted per unit of fuel energy on the HHV basis. [kg/J]
    """

    name: str
    hhv_j_per_kg: float
    lhv_j_per_kg: float | None = None
    exergy_to_lhv_ratio: float = 1.04
    density_kg_per_m3: float | None = None
    co2_kg_per_j: float | None = None

    @property
    def chemical_exergy_j_per_kg(self) -> float:
        """Specific chemical exergy from the exergy/heating-value ratio. [J/kg]"""
        basis = self.lhv_j_per_kg if self.lhv_j_per_kg is not None else self.hhv_j_per_kg
        return self.exergy_to_lhv_ratio * basis
