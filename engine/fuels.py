"""Fuel specifications: composition, heating values, gas volume references, chemical exergy.

A fuel reaches the unit models as a :class:`FuelProperties`. It is either given directly
(heating values and an exergy/heating-value ratio), or built from a composition:

* gaseous fuels from mole fractions (:class:`GasComposition`,
  :meth:`FuelProperties.from_gas`): ideal-gas heating values from the formation
  enthalpies of :mod:`engine.gas`, densities at stated volume reference conditions
  (:data:`NORMAL_CUBIC_METRE`, :data:`STANDARD_CUBIC_METRE`, :data:`STANDARD_CUBIC_FOOT`),
  chemical exergy by Szargut's table and the mixing rule;
* solid and liquid fuels from an as-fired ultimate analysis (:class:`UltimateAnalysis`,
  :meth:`FuelProperties.from_ultimate_analysis`): a measured HHV or, when absent, the
  Channiwala-Parikh correlation; chemical exergy by the Szargut-Styrylska correlation.

Both give the elemental composition per kilogram of fuel that
:mod:`engine.combustion` needs (``FuelProperties.ultimate``).

References
----------
.. [1] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical
   and Metallurgical Processes", Hemisphere, 1988, Sec. 2.5 and Table 2.4 (ratio of
   chemical exergy to net calorific value of technical fuels).
.. [2] S. A. Channiwala, P. P. Parikh, "A unified correlation for estimating HHV of solid,
   liquid and gaseous fuels", Fuel 81 (2002) 1051-1063 (the proposed correlation, dry
   basis, mass percentages; equation number not checked against the paper).
.. [3] DIN 1343:1990, "Reference conditions, normal conditions, normal volume": 273.15 K,
   101.325 kPa.
.. [4] ISO 13443:1996, "Natural gas - Standard reference conditions": 288.15 K,
   101.325 kPa.
.. [5] ISO 6976:2016, "Natural gas - Calculation of calorific values, density, relative
   density and Wobbe indices from composition" (ideal-gas molar heating values summed
   over the components; the method followed here, with lostwork's own data tables).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from engine import chemical_exergy, gas

_COMPOSITION_TOLERANCE = 1e-3


class CompositionError(ValueError):
    """A fuel composition that cannot be used (bad sum, negative or unknown component)."""


# --- volume reference conditions -----------------------------------------------------


@dataclass(frozen=True)
class GasVolumeReference:
    """Temperature and pressure at which a gas volume is stated.

    Attributes
    ----------
    name : str
        Name of the unit of volume.
    t_k : float
        Reference temperature. [K]
    p_pa : float
        Reference pressure. [Pa]
    standard : str
        Where the convention is defined.
    """

    name: str
    t_k: float
    p_pa: float
    standard: str


NORMAL_CUBIC_METRE = GasVolumeReference(
    "normal cubic metre (m3(n))", 273.15, 101_325.0, "DIN 1343:1990: 0 degC, 101.325 kPa"
)
"""Normal cubic metre: 0 degC and 101.325 kPa (DIN 1343)."""
STANDARD_CUBIC_METRE = GasVolumeReference(
    "standard cubic metre (m3(st))", 288.15, 101_325.0, "ISO 13443:1996: 15 degC, 101.325 kPa"
)
"""Standard cubic metre: 15 degC and 101.325 kPa (ISO 13443)."""
STANDARD_CUBIC_FOOT = GasVolumeReference(
    "standard cubic foot (scf, 60 degF, 14.696 psia)",
    (60.0 - 32.0) / 1.8 + 273.15,
    101_325.0,
    "60 degF and one standard atmosphere (14.696 psia = 101.325 kPa)",
)
"""Standard cubic foot at 60 degF (288.706 K) and 14.696 psia, i.e. one standard atmosphere.
The volume is 1 ft3 = 0.028316846592 m3; the density here is per m3 at these conditions."""
STANDARD_CUBIC_FOOT_14_73_PSIA = GasVolumeReference(
    "standard cubic foot (scf, 60 degF, 14.73 psia)",
    (60.0 - 32.0) / 1.8 + 273.15,
    14.73 * 6_894.757_293_168,
    "60 degF and 14.73 psia, the North American gas-utility contract convention",
)
"""The other common standard cubic foot: 60 degF and 14.73 psia (101.560 kPa)."""
CUBIC_FOOT_M3 = 0.028_316_846_592
"""One cubic foot, exactly. [m^3]"""


def _sum_error(kind: str, total: float, tolerance: float) -> str:
    gap = 1.0 - total
    where = "short of" if gap > 0 else "over"
    return f"{kind} sum to {total:.4f}, {abs(gap):.4f} {where} 1 (tolerance {tolerance:g})"


# --- ultimate analysis ---------------------------------------------------------------


@dataclass(frozen=True)
class UltimateAnalysis:
    """Elemental composition of a fuel as fired, mass fractions per kg of fuel.

    Attributes
    ----------
    carbon, hydrogen, oxygen, nitrogen, sulfur : float
        Mass fractions of the elements in the combustible matter; hydrogen and oxygen
        exclude those of the moisture (the convention of ASME PTC 4). [-]
    ash : float
        Mass fraction of ash (inert). [-]
    moisture : float
        Mass fraction of water (liquid for solid and liquid fuels). [-]
    tolerance : float
        Allowed departure of the sum from 1; within it the fractions are scaled to sum
        exactly 1. [-]

    Raises
    ------
    CompositionError
        When a fraction is negative or not finite, or the sum is off by more than the
        tolerance (the message says by how much).
    """

    carbon: float
    hydrogen: float
    oxygen: float = 0.0
    nitrogen: float = 0.0
    sulfur: float = 0.0
    ash: float = 0.0
    moisture: float = 0.0
    tolerance: float = _COMPOSITION_TOLERANCE

    _FIELDS = ("carbon", "hydrogen", "oxygen", "nitrogen", "sulfur", "ash", "moisture")
    _KEYS = {"c": "carbon", "h": "hydrogen", "o": "oxygen", "n": "nitrogen", "s": "sulfur"}

    def __post_init__(self) -> None:
        values = {name: float(getattr(self, name)) for name in self._FIELDS}
        for name, value in values.items():
            if not (value >= 0.0 and value < float("inf")):
                raise CompositionError(f"mass fraction of {name} must be >= 0, got {value!r}")
        total = sum(values.values())
        if abs(total - 1.0) > self.tolerance:
            raise CompositionError(_sum_error("mass fractions", total, self.tolerance))
        for name, value in values.items():
            object.__setattr__(self, name, value / total)

    @classmethod
    def from_mapping(
        cls, fractions: Mapping[str, float], tolerance: float = _COMPOSITION_TOLERANCE
    ) -> UltimateAnalysis:
        """From a mapping keyed ``C, H, O, N, S, ash, moisture`` (or the full names).

        Missing keys count as zero; an unknown key is a :class:`CompositionError`.
        """
        kwargs: dict[str, float] = {}
        for key, value in fractions.items():
            name = cls._KEYS.get(key.lower(), key.lower())
            if name not in cls._FIELDS:
                known = "C, H, O, N, S, ash, moisture"
                raise CompositionError(f"unknown ultimate-analysis component {key!r}; use {known}")
            kwargs[name] = float(value)
        kwargs.setdefault("carbon", 0.0)
        kwargs.setdefault("hydrogen", 0.0)
        return cls(**kwargs, tolerance=tolerance)

    def moles_per_kg(self) -> dict[str, float]:
        """Moles of each element (C, H, O, N, S) and of moisture (``H2O``) per kg. [mol/kg]"""
        m = gas.ATOMIC_MASS_KG_PER_MOL
        return {
            "C": self.carbon / m["C"],
            "H": self.hydrogen / m["H"],
            "O": self.oxygen / m["O"],
            "N": self.nitrogen / m["N"],
            "S": self.sulfur / m["S"],
            "H2O": self.moisture / gas.molar_mass_kg_per_mol("H2O"),
        }

    def water_formed_kg_per_kg(self) -> float:
        """Water in the products per kg of fuel: from hydrogen plus the moisture. [kg/kg]"""
        m_h2o = gas.molar_mass_kg_per_mol("H2O")
        return self.hydrogen / (2.0 * gas.ATOMIC_MASS_KG_PER_MOL["H"]) * m_h2o + self.moisture


def hhv_channiwala_parikh_j_per_kg(analysis: UltimateAnalysis) -> float:
    """Higher heating value from the ultimate analysis by Channiwala & Parikh (2002).

    Parameters
    ----------
    analysis : UltimateAnalysis
        As-fired composition.

    Returns
    -------
    float
        HHV as fired. [J/kg]

    Notes
    -----
    ``HHV [MJ/kg] = 0.3491 C + 1.1783 H + 0.1005 S - 0.1034 O - 0.0151 N - 0.0211 A``
    with mass percentages on the dry basis [2]_. Moisture has no term and the
    correlation has no constant, so the same equation applied to as-fired percentages
    gives the as-fired HHV. Stated range of validity in [2]_ (from memory): C 0-92 %,
    H 0.4-25 %, O 0-50 %, N 0-5.6 %, S 0-94 %, ash 0-71 %, HHV 4.7-55.3 MJ/kg; average
    absolute error about 1.5 %.
    """
    a = analysis
    mj_per_kg = (
        0.3491 * a.carbon
        + 1.1783 * a.hydrogen
        + 0.1005 * a.sulfur
        - 0.1034 * a.oxygen
        - 0.0151 * a.nitrogen
        - 0.0211 * a.ash
    ) * 100.0
    return mj_per_kg * 1e6


def lhv_from_hhv_j_per_kg(hhv_j_per_kg, analysis: UltimateAnalysis):
    """Lower heating value from the higher: ``LHV = HHV - r (9 H-equivalent water + moisture)``.

    Parameters
    ----------
    hhv_j_per_kg : numeric
        Higher heating value at 25 degC. [J/kg]
    analysis : UltimateAnalysis
        Composition (water formed from hydrogen plus moisture).

    Returns
    -------
    numeric
        LHV, ``r`` being the vaporisation enthalpy of water at 25 degC from
        :func:`engine.chemical_exergy.water_vaporisation_enthalpy_j_per_kg`. [J/kg]

    Notes
    -----
    Both heating values are taken at constant pressure; a bomb (constant-volume) gross
    value differs by about 0.1 % for coal, which lostwork does not correct.
    """
    r = chemical_exergy.water_vaporisation_enthalpy_j_per_kg()
    return hhv_j_per_kg - r * analysis.water_formed_kg_per_kg()


def hhv_from_lhv_j_per_kg(lhv_j_per_kg, analysis: UltimateAnalysis):
    """Higher heating value from the lower, the inverse of :func:`lhv_from_hhv_j_per_kg`. [J/kg]

    Parameters
    ----------
    lhv_j_per_kg : numeric
        Lower heating value at 25 degC. [J/kg]
    analysis : UltimateAnalysis
        Composition.
    """
    r = chemical_exergy.water_vaporisation_enthalpy_j_per_kg()
    return lhv_j_per_kg + r * analysis.water_formed_kg_per_kg()


# --- gaseous fuels -------------------------------------------------------------------

GAS_FUEL_SPECIES = ("CH4", "C2H6", "C3H8", "C4H10", "H2", "CO", "CO2", "N2", "O2", "H2S")
"""Components a gaseous fuel may contain (``C4H10`` is n-butane)."""
_ALIASES = {"N-C4H10": "C4H10", "NC4H10": "C4H10"}


def _combustion_enthalpy_j_per_mol(species: str, water_liquid: bool) -> float:
    """``h_species - h_products`` for complete combustion at 25 degC (positive for fuels)."""
    comp = gas.NASA7_COEFFICIENTS[species].composition
    c, h, o = comp.get("C", 0), comp.get("H", 0), comp.get("O", 0)
    n, s, ar = comp.get("N", 0), comp.get("S", 0), comp.get("Ar", 0)
    o2_used = c + h / 4 + s - o / 2
    t = gas.T_REF_K
    h_water = (
        gas.CONDENSED_PHASES["H2O(l)"].h_formation_j_per_mol
        if water_liquid
        else gas.enthalpy_j_per_mol("H2O", t)
    )
    products = (
        c * gas.enthalpy_j_per_mol("CO2", t)
        + h / 2 * h_water
        + s * gas.enthalpy_j_per_mol("SO2", t)
        + n / 2 * gas.enthalpy_j_per_mol("N2", t)
        + ar * gas.enthalpy_j_per_mol("Ar", t)
    )
    reactants = gas.enthalpy_j_per_mol(species, t) + o2_used * gas.enthalpy_j_per_mol("O2", t)
    return float(reactants - products)


def species_hhv_j_per_mol(species: str) -> float:
    """Ideal-gas higher heating value of a species at 25 degC (water liquid). [J/mol]

    Parameters
    ----------
    species : str
        A component of :data:`GAS_FUEL_SPECIES`; inert components give 0.
    """
    return _combustion_enthalpy_j_per_mol(species, water_liquid=True)


def species_lhv_j_per_mol(species: str) -> float:
    """Ideal-gas lower heating value of a species at 25 degC (water vapour). [J/mol]

    Parameters
    ----------
    species : str
        A component of :data:`GAS_FUEL_SPECIES`.
    """
    return _combustion_enthalpy_j_per_mol(species, water_liquid=False)


@dataclass(frozen=True, eq=False)
class GasComposition:
    """A gaseous fuel by mole fractions of its components.

    Attributes
    ----------
    mole_fractions : Mapping[str, float]
        Mole fraction per component of :data:`GAS_FUEL_SPECIES` (``n-C4H10`` is an
        accepted spelling). Within the tolerance they are scaled to sum exactly 1. [-]
    tolerance : float
        Allowed departure of the sum from 1. [-]

    Raises
    ------
    CompositionError
        For an unknown component, a negative fraction, or a sum off by more than the
        tolerance, e.g. ``"mole fractions sum to 0.9871, 0.0129 short of 1 (tolerance
        0.001)"``.
    """

    mole_fractions: Mapping[str, float]
    tolerance: float = _COMPOSITION_TOLERANCE

    def __post_init__(self) -> None:
        fractions: dict[str, float] = {}
        for key, value in self.mole_fractions.items():
            name = _ALIASES.get(key.upper(), key)
            if name not in GAS_FUEL_SPECIES:
                known = ", ".join(GAS_FUEL_SPECIES)
                raise CompositionError(f"unknown gas component {key!r}; known: {known}")
            x = float(value)
            if not (x >= 0.0 and x < float("inf")):
                raise CompositionError(f"mole fraction of {key} must be >= 0, got {value!r}")
            fractions[name] = fractions.get(name, 0.0) + x
        total = sum(fractions.values())
        if abs(total - 1.0) > self.tolerance:
            raise CompositionError(_sum_error("mole fractions", total, self.tolerance))
        normalised = {k: v / total for k, v in fractions.items() if v > 0.0}
        object.__setattr__(self, "mole_fractions", normalised)

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, GasComposition):
            return NotImplemented
        return dict(self.mole_fractions) == dict(other.mole_fractions)

    def __hash__(self) -> int:
        return hash(tuple(sorted(self.mole_fractions.items())))

    @property
    def molar_mass_kg_per_mol(self) -> float:
        """Mean molar mass. [kg/mol]"""
        return sum(x * gas.molar_mass_kg_per_mol(s) for s, x in self.mole_fractions.items())

    @property
    def hhv_j_per_mol(self) -> float:
        """Ideal-gas higher heating value at 25 degC, ``Σ x_i HHV_i`` (ISO 6976 method). [J/mol]"""
        return sum(x * species_hhv_j_per_mol(s) for s, x in self.mole_fractions.items())

    @property
    def lhv_j_per_mol(self) -> float:
        """Ideal-gas lower heating value at 25 degC. [J/mol]"""
        return sum(x * species_lhv_j_per_mol(s) for s, x in self.mole_fractions.items())

    @property
    def hhv_j_per_kg(self) -> float:
        """Higher heating value per kg. [J/kg]"""
        return self.hhv_j_per_mol / self.molar_mass_kg_per_mol

    @property
    def lhv_j_per_kg(self) -> float:
        """Lower heating value per kg. [J/kg]"""
        return self.lhv_j_per_mol / self.molar_mass_kg_per_mol

    def density_kg_per_m3(
        self, reference: GasVolumeReference = NORMAL_CUBIC_METRE, compressibility: float = 1.0
    ) -> float:
        """Density at a volume reference condition, ``p M / (Z R T)``. [kg/m^3]

        Parameters
        ----------
        reference : GasVolumeReference
            Reference conditions of the volume.
        compressibility : float, default 1.0
            Compressibility factor Z at those conditions; 1 is the ideal gas (natural gas
            is about 0.998 at reference conditions; ISO 6976 gives the method, value
            from memory). [-]
        """
        return (
            reference.p_pa
            * self.molar_mass_kg_per_mol
            / (compressibility * gas.R_J_PER_MOL_K * reference.t_k)
        )

    def hhv_j_per_m3(
        self, reference: GasVolumeReference = NORMAL_CUBIC_METRE, compressibility: float = 1.0
    ) -> float:
        """Volumetric higher heating value (combustion at 25 degC, volume at ``reference``). [J/m^3]"""
        return self.hhv_j_per_kg * self.density_kg_per_m3(reference, compressibility)

    def ultimate_analysis(self) -> UltimateAnalysis:
        """Elemental mass fractions per kg of gas (no ash, no moisture)."""
        mass = dict.fromkeys(("C", "H", "O", "N", "S"), 0.0)
        for species, x in self.mole_fractions.items():
            for element, count in gas.NASA7_COEFFICIENTS[species].composition.items():
                mass[element] += x * count * gas.ATOMIC_MASS_KG_PER_MOL[element]
        total = self.molar_mass_kg_per_mol
        return UltimateAnalysis(
            carbon=mass["C"] / total,
            hydrogen=mass["H"] / total,
            oxygen=mass["O"] / total,
            nitrogen=mass["N"] / total,
            sulfur=mass["S"] / total,
        )

    def specific_heat_j_per_kg_k(self, t_k: float = gas.T_REF_K) -> float:
        """Ideal-gas isobaric heat capacity per kg at ``t_k``. [J/(kg K)]"""
        cp = gas.mixture_cp(self.mole_fractions, t_k)
        return float(cp) / self.molar_mass_kg_per_mol

    def chemical_exergy_j_per_kg(self) -> float:
        """Standard chemical exergy by Szargut's table and the ideal mixing rule. [J/kg]"""
        return chemical_exergy.gas_mixture_chemical_exergy_j_per_kg(self.mole_fractions)


# --- what the unit models use --------------------------------------------------------

SOLID_SPECIFIC_HEAT_J_PER_KG_K = 1_250.0
"""Default heat capacity of a solid fuel as fired, common practice (coal about 1.0-1.3
kJ/(kg K) depending on moisture); used only for the small fuel-temperature credit. [J/(kg K)]"""
LIQUID_SPECIFIC_HEAT_J_PER_KG_K = 1_950.0
"""Default heat capacity of a liquid fuel (fuel oils about 1.8-2.1 kJ/(kg K) near 25 degC),
common practice; used only for the fuel-temperature credit. [J/(kg K)]"""


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
        Table 2.4 (range 1.04 for natural gas to about 1.06-1.10 for coal). For a fuel
        built from a composition it is the composition-based exergy over the LHV. [-]
    density_kg_per_m3 : float or None
        Gas density at the reference conditions its volume flow is metered at,
        to turn a volume flow into a mass flow. [kg/m^3]
    co2_kg_per_j : float or None
        CO2 emitted per unit of fuel energy on the HHV basis. [kg/J]
    kind : str
        ``"gas"``, ``"liquid"``, ``"solid"``, or ``"unspecified"`` for a fuel given by
        heating values only.
    ultimate : UltimateAnalysis or None
        Elemental composition per kg as fired; None for a fuel given by heating values
        only (then the heat-loss method and the exergy split are not available).
    composition_exergy_j_per_kg : float or None
        Chemical exergy from the composition (Szargut's table or Szargut-Styrylska);
        when set, :attr:`chemical_exergy_j_per_kg` returns it. [J/kg]
    specific_heat_j_per_kg_k : float or None
        Heat capacity of the fuel as fired near 25 degC. [J/(kg K)]
    method : str
        How the heating value and the exergy were obtained, for result metadata.
    """

    name: str
    hhv_j_per_kg: float
    lhv_j_per_kg: float | None = None
    exergy_to_lhv_ratio: float = 1.04
    density_kg_per_m3: float | None = None
    co2_kg_per_j: float | None = None
    kind: str = "unspecified"
    ultimate: UltimateAnalysis | None = None
    composition_exergy_j_per_kg: float | None = None
    specific_heat_j_per_kg_k: float | None = None
    method: str = "heating values and exergy ratio as given"

    @property
    def chemical_exergy_j_per_kg(self) -> float:
        """Specific chemical exergy: from the composition if known, else ratio x heating value. [J/kg]"""
        if self.composition_exergy_j_per_kg is not None:
            return self.composition_exergy_j_per_kg
        basis = self.lhv_j_per_kg if self.lhv_j_per_kg is not None else self.hhv_j_per_kg
        return self.exergy_to_lhv_ratio * basis

    @classmethod
    def from_gas(
        cls,
        name: str,
        composition: GasComposition | Mapping[str, float],
        *,
        volume_reference: GasVolumeReference = NORMAL_CUBIC_METRE,
        compressibility: float = 1.0,
        hhv_j_per_kg: float | None = None,
    ) -> FuelProperties:
        """A gaseous fuel from its mole fractions.

        Parameters
        ----------
        name : str
            Fuel name.
        composition : GasComposition or Mapping[str, float]
            Mole fractions (a mapping is validated with the default tolerance). [-]
        volume_reference : GasVolumeReference, default NORMAL_CUBIC_METRE
            Conditions the fuel's volume flow is metered at; sets ``density_kg_per_m3``.
        compressibility : float, default 1.0
            Compressibility factor at ``volume_reference``. [-]
        hhv_j_per_kg : float, optional
            Measured HHV; replaces the one computed from the composition (the LHV then
            follows from the water formed). [J/kg]

        Returns
        -------
        FuelProperties
        """
        comp = (
            composition if isinstance(composition, GasComposition) else GasComposition(composition)
        )
        ultimate = comp.ultimate_analysis()
        if hhv_j_per_kg is None:
            hhv, lhv = comp.hhv_j_per_kg, comp.lhv_j_per_kg
            method = "ideal-gas heating value from composition (ISO 6976 method, NASA TM-4513 data)"
        else:
            hhv = float(hhv_j_per_kg)
            lhv = float(lhv_from_hhv_j_per_kg(hhv, ultimate))
            method = "measured HHV"
        exergy = comp.chemical_exergy_j_per_kg()
        return cls(
            name=name,
            hhv_j_per_kg=hhv,
            lhv_j_per_kg=lhv,
            exergy_to_lhv_ratio=exergy / lhv,
            density_kg_per_m3=comp.density_kg_per_m3(volume_reference, compressibility),
            co2_kg_per_j=_co2_kg_per_j(ultimate, hhv),
            kind="gas",
            ultimate=ultimate,
            composition_exergy_j_per_kg=exergy,
            specific_heat_j_per_kg_k=comp.specific_heat_j_per_kg_k(),
            method=method + "; exergy from Szargut 1988 Table I with the mixing term",
        )

    @classmethod
    def from_ultimate_analysis(
        cls,
        name: str,
        analysis: UltimateAnalysis | Mapping[str, float],
        *,
        kind: str = "solid",
        hhv_j_per_kg: float | None = None,
        specific_heat_j_per_kg_k: float | None = None,
        density_kg_per_m3: float | None = None,
    ) -> FuelProperties:
        """A solid or liquid fuel from its as-fired ultimate analysis.

        Parameters
        ----------
        name : str
            Fuel name.
        analysis : UltimateAnalysis or Mapping[str, float]
            As-fired mass fractions (``C, H, O, N, S, ash, moisture``). [-]
        kind : {"solid", "liquid"}
            Selects the Szargut-Styrylska correlation and the default heat capacity.
        hhv_j_per_kg : float, optional
            Measured HHV as fired; when absent, Channiwala & Parikh (2002). [J/kg]
        specific_heat_j_per_kg_k : float, optional
            Heat capacity as fired; default :data:`SOLID_SPECIFIC_HEAT_J_PER_KG_K` or
            :data:`LIQUID_SPECIFIC_HEAT_J_PER_KG_K`. [J/(kg K)]
        density_kg_per_m3 : float, optional
            For a liquid metered by volume. [kg/m^3]

        Returns
        -------
        FuelProperties
        """
        if kind not in ("solid", "liquid"):
            raise ValueError(f"kind must be 'solid' or 'liquid', got {kind!r}")
        ultimate = (
            analysis
            if isinstance(analysis, UltimateAnalysis)
            else UltimateAnalysis.from_mapping(analysis)
        )
        if hhv_j_per_kg is None:
            hhv = hhv_channiwala_parikh_j_per_kg(ultimate)
            method = "HHV by Channiwala & Parikh 2002"
        else:
            hhv = float(hhv_j_per_kg)
            method = "measured HHV"
        lhv = float(lhv_from_hhv_j_per_kg(hhv, ultimate))
        u = ultimate
        exergy = chemical_exergy.solid_liquid_fuel_chemical_exergy_j_per_kg(
            u.carbon, u.hydrogen, u.oxygen, u.nitrogen, u.sulfur, u.ash, u.moisture, lhv, kind
        )
        if specific_heat_j_per_kg_k is None:
            specific_heat_j_per_kg_k = (
                SOLID_SPECIFIC_HEAT_J_PER_KG_K
                if kind == "solid"
                else LIQUID_SPECIFIC_HEAT_J_PER_KG_K
            )
        return cls(
            name=name,
            hhv_j_per_kg=hhv,
            lhv_j_per_kg=lhv,
            exergy_to_lhv_ratio=exergy / lhv,
            density_kg_per_m3=density_kg_per_m3,
            co2_kg_per_j=_co2_kg_per_j(ultimate, hhv),
            kind=kind,
            ultimate=ultimate,
            composition_exergy_j_per_kg=exergy,
            specific_heat_j_per_kg_k=float(specific_heat_j_per_kg_k),
            method=method + "; exergy by Szargut-Styrylska",
        )


def _co2_kg_per_j(analysis: UltimateAnalysis, hhv_j_per_kg: float) -> float:
    """CO2 from complete combustion of all the carbon, per J of HHV. [kg/J]"""
    co2_per_kg = (
        analysis.carbon / gas.ATOMIC_MASS_KG_PER_MOL["C"] * gas.molar_mass_kg_per_mol("CO2")
    )
    return co2_per_kg / hhv_j_per_kg
