"""Chemical exergy: standard chemical exergies, gas mixtures and solid/liquid fuels.

The standard chemical exergy of a substance is the work obtainable by bringing it, at
(T0, p0), into equilibrium with a reference environment of common substances. lostwork
uses Szargut's reference environment and his table of standard chemical exergies
([1]_, Appendix, Table I; :data:`STANDARD_CHEMICAL_EXERGY_J_PER_MOL`), gas mixtures by the
ideal mixing rule, and solid and liquid fuels by the Szargut-Styrylska correlation of
the exergy to net-calorific-value ratio ([1]_ Sec. 2.5; [2]_ Appendix A).

For balances that must close to round-off (the boiler exergy split), stream exergy is
written as ``Ex = H - T0 S + Σ N_el κ_el`` with per-element constants ``κ_el``
(:func:`element_exergy_offsets_j_per_mol`) fixed by the standard exergies of the
elements. Any adiabatic, work-free process that conserves energy and elements then
destroys exactly ``T0 Sgen``.

References
----------
.. [1] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical and
   Metallurgical Processes", Hemisphere, 1988: Appendix, Table I (standard chemical
   exergy, T0 = 298.15 K, p0 = 101.325 kPa, and the reference atmosphere it is based
   on); Sec. 2.5 (chemical exergy of technical fuels, Eqs. for the ratio β).
.. [2] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger 1995 (reprint
   of the 1985 ed.), Appendix A (Szargut-Styrylska correlations with their ranges of
   validity and accuracy).
.. [3] J. Szargut, T. Styrylska, "Angenäherte Bestimmung der Exergie von Brennstoffen",
   Brennstoff-Wärme-Kraft 16 (1964) 589-596 (the original correlations).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from engine import gas

T0_STANDARD_K = 298.15
"""Temperature of the standard reference environment of [1]_. [K]"""
P0_STANDARD_PA = 101_325.0
"""Pressure of the standard reference environment of [1]_. [Pa]"""

SZARGUT_1988_REFERENCE_ATMOSPHERE_PA = {
    "N2": 75_780.0,
    "O2": 20_390.0,
    "H2O": 2_200.0,
    "Ar": 906.0,
    "CO2": 33.5,
}
"""Partial pressures of the gaseous reference species in Szargut's standard atmosphere
([1]_, Table I notes; from memory). The standard chemical exergy of each is
``R T0 ln(p0 / p_i)``; the tests recompute the table values from these. [Pa]"""

STANDARD_CHEMICAL_EXERGY_J_PER_MOL = {
    # reference gases of the atmosphere
    "N2": 720.0,
    "O2": 3_970.0,
    "CO2": 19_870.0,
    "H2O": 9_500.0,  # vapour
    "Ar": 11_690.0,
    # elements in their standard states
    "H2": 236_090.0,
    "C(gr)": 410_260.0,
    "S(rh)": 609_600.0,
    # compounds
    "H2O(l)": 900.0,
    "CO": 275_100.0,
    "SO2": 313_400.0,
    "H2S": 812_000.0,
    "CH4": 831_650.0,
    "C2H6": 1_495_840.0,
    "C3H8": 2_154_000.0,
    "C4H10": 2_805_800.0,  # n-butane
}
"""Standard chemical exergy at T0 = 298.15 K, p0 = 101.325 kPa, Szargut, Morris &
Steward 1988, Appendix Table I ([1]_; values from memory, cross-checked in the tests
against Cantera's Gibbs energies with the reference atmosphere above). [J/mol]"""

_ELEMENT_REFERENCE = {
    "C": ("C(gr)", 1),
    "H": ("H2", 2),
    "O": ("O2", 2),
    "N": ("N2", 2),
    "S": ("S(rh)", 1),
    "Ar": ("Ar", 1),
}
"""Reference form of each element and its atoms per formula unit."""


def standard_chemical_exergy_j_per_mol(species: str) -> float:
    """Standard chemical exergy of a species from Szargut's table.

    Parameters
    ----------
    species : str
        A key of :data:`STANDARD_CHEMICAL_EXERGY_J_PER_MOL` (gas formulas as in
        :mod:`engine.gas`; ``H2O(l)``, ``C(gr)``, ``S(rh)`` for condensed phases).

    Returns
    -------
    float
        Standard chemical exergy at 298.15 K and 101.325 kPa. [J/mol]
    """
    try:
        return STANDARD_CHEMICAL_EXERGY_J_PER_MOL[species]
    except KeyError:
        known = ", ".join(STANDARD_CHEMICAL_EXERGY_J_PER_MOL)
        raise KeyError(f"no standard chemical exergy for {species!r}; known: {known}") from None


def gas_mixture_chemical_exergy_j_per_mol(mole_fractions: Mapping[str, float], t0_k=T0_STANDARD_K):
    """Chemical exergy of an ideal-gas mixture at (T0, p0).

    Parameters
    ----------
    mole_fractions : Mapping[str, float]
        Mole fractions, summing to 1. [-]
    t0_k : numeric, default 298.15
        Dead-state temperature of the mixing term. [K]

    Returns
    -------
    numeric
        ``Σ x_i e_i + R T0 Σ x_i ln x_i`` (Szargut et al. 1988, Sec. 2.4, the mixing
        rule for ideal gases), J per mole of mixture. [J/mol]

    Notes
    -----
    The standard exergies ``e_i`` are those of 298.15 K; Szargut's temperature correction
    of standard exergies is not applied when ``t0_k`` differs (our estimate of its
    effect on a hydrocarbon fuel: about 0.5 % for a dead state 20 K from 25 degC).
    """
    total = 0.0
    t0 = np.asarray(t0_k, dtype=float)
    for species, x in mole_fractions.items():
        if x <= 0:
            continue
        total = total + x * (
            standard_chemical_exergy_j_per_mol(species) + gas.R_J_PER_MOL_K * t0 * np.log(x)
        )
    return float(total) if np.ndim(total) == 0 else total


def gas_mixture_chemical_exergy_j_per_kg(mole_fractions: Mapping[str, float], t0_k=T0_STANDARD_K):
    """Chemical exergy of an ideal-gas mixture per kilogram. [J/kg]

    Parameters
    ----------
    mole_fractions : Mapping[str, float]
        Mole fractions, summing to 1. [-]
    t0_k : numeric, default 298.15
        Dead-state temperature of the mixing term. [K]
    """
    molar_mass = sum(x * gas.molar_mass_kg_per_mol(s) for s, x in mole_fractions.items())
    return gas_mixture_chemical_exergy_j_per_mol(mole_fractions, t0_k) / molar_mass


def _ratio(numerator: float, carbon: float) -> float:
    return numerator / carbon if carbon > 0 else float("nan")


def szargut_styrylska_beta(carbon, hydrogen, oxygen, nitrogen, sulfur=0.0, kind="solid"):
    """Ratio β of chemical exergy to net calorific value of a fuel's organic matter.

    Parameters
    ----------
    carbon, hydrogen, oxygen, nitrogen, sulfur : float
        Mass fractions of the elements (any common basis; only their ratios to carbon
        enter). [-]
    kind : {"solid", "liquid"}
        Fuel kind; selects the correlation.

    Returns
    -------
    float
        β. [-]

    Raises
    ------
    ValueError
        For an unknown kind, no carbon, or a solid with O/C above 2.67 (no correlation).

    Notes
    -----
    With mass ratios ``h/c, o/c, n/c, s/c`` (Szargut & Styrylska 1964 [3]_, as given in
    [1]_ Sec. 2.5 and [2]_ Appendix A; coefficients from memory):

    * solid fuels, ``o/c <= 0.667`` (coal, lignite, peat; accuracy ±1 %)::

          β = 1.0437 + 0.1882 h/c + 0.0610 o/c + 0.0404 n/c

    * solid fuels, ``0.667 < o/c <= 2.67`` (wood and similar; ±1 %)::

          β = (1.0412 + 0.2160 h/c - 0.2499 o/c (1 + 0.7884 h/c) + 0.0450 n/c)
              / (1 - 0.3035 o/c)

    * liquid fuels (±0.38 %)::

          β = 1.0401 + 0.1728 h/c + 0.0432 o/c + 0.2169 s/c (1 - 2.0628 h/c)

    Sulfur of solid fuels is not in β; :func:`solid_liquid_fuel_chemical_exergy_j_per_kg`
    adds it separately.
    """
    h_c = _ratio(hydrogen, carbon)
    o_c = _ratio(oxygen, carbon)
    n_c = _ratio(nitrogen, carbon)
    s_c = _ratio(sulfur, carbon)
    if not carbon > 0:
        raise ValueError("the Szargut-Styrylska correlation needs a fuel containing carbon")
    if kind == "liquid":
        return 1.0401 + 0.1728 * h_c + 0.0432 * o_c + 0.2169 * s_c * (1.0 - 2.0628 * h_c)
    if kind != "solid":
        raise ValueError(f"kind must be 'solid' or 'liquid', got {kind!r}")
    if o_c <= 0.667:
        return 1.0437 + 0.1882 * h_c + 0.0610 * o_c + 0.0404 * n_c
    if o_c <= 2.67:
        return (1.0412 + 0.2160 * h_c - 0.2499 * o_c * (1.0 + 0.7884 * h_c) + 0.0450 * n_c) / (
            1.0 - 0.3035 * o_c
        )
    raise ValueError(
        f"O/C mass ratio {o_c:.3f} is above 2.67, outside the Szargut-Styrylska correlation"
    )


def water_vaporisation_enthalpy_j_per_kg() -> float:
    """Enthalpy of vaporisation of water at 25 degC to the ideal gas, from the data tables.

    Returns
    -------
    float
        ``(h_H2O,g(298.15 K) - h_f,H2O(l)) / M_H2O`` with the NASA TM-4513 vapour and
        CODATA liquid of :mod:`engine.gas` (about 2.4427 MJ/kg). [J/kg]
    """
    liquid = gas.CONDENSED_PHASES["H2O(l)"]
    h_vap = float(gas.enthalpy_j_per_mol("H2O", gas.T_REF_K)) - liquid.h_formation_j_per_mol
    return h_vap / gas.molar_mass_kg_per_mol("H2O")


def sulfur_net_calorific_value_j_per_kg() -> float:
    """Heat of S(rhombic) + O2 -> SO2(g) at 25 degC per kg of sulfur, from the data tables. [J/kg]"""
    return -float(gas.enthalpy_j_per_mol("SO2", gas.T_REF_K)) / gas.ATOMIC_MASS_KG_PER_MOL["S"]


def solid_liquid_fuel_chemical_exergy_j_per_kg(
    carbon, hydrogen, oxygen, nitrogen, sulfur, ash, moisture, lhv_j_per_kg, kind="solid"
):
    """Chemical exergy of a solid or liquid fuel from its ultimate analysis and LHV.

    Parameters
    ----------
    carbon, hydrogen, oxygen, nitrogen, sulfur, ash, moisture : float
        As-fired mass fractions (H and O exclude the moisture). [-]
    lhv_j_per_kg : float
        Net (lower) calorific value of the fuel as fired, sulfur burnt to SO2. [J/kg]
    kind : {"solid", "liquid"}
        Fuel kind.

    Returns
    -------
    float
        Specific chemical exergy as fired. [J/kg]

    Notes
    -----
    Szargut's rule for technical fuels ([1]_ Sec. 2.5, [2]_ Appendix A)::

        e = β (LHV + r w) + (e_S - LHV_S) s + e_w w          (solid)
        e = β (LHV + r w) + e_w w                            (liquid; S inside β)

    with ``r`` the vaporisation enthalpy of water at 25 degC (the moisture's share of the
    LHV is added back so β applies to the organic matter alone), ``w`` the moisture and
    ``s`` the sulfur mass fraction, ``e_S`` and ``e_w`` the standard chemical exergies
    of rhombic sulfur and liquid water per kg, and ``LHV_S`` the heat of burning sulfur
    to SO2. The chemical exergy of the ash is neglected, as [1]_ allows for coal ash.
    """
    beta = szargut_styrylska_beta(carbon, hydrogen, oxygen, nitrogen, sulfur, kind)
    r = water_vaporisation_enthalpy_j_per_kg()
    e_w = STANDARD_CHEMICAL_EXERGY_J_PER_MOL["H2O(l)"] / gas.molar_mass_kg_per_mol("H2O")
    exergy = beta * (lhv_j_per_kg + r * moisture) + e_w * moisture
    if kind == "solid":
        e_s = STANDARD_CHEMICAL_EXERGY_J_PER_MOL["S(rh)"] / gas.ATOMIC_MASS_KG_PER_MOL["S"]
        exergy += (e_s - sulfur_net_calorific_value_j_per_kg()) * sulfur
    return exergy


def _condensed_gibbs(name: str, t0: np.ndarray) -> np.ndarray:
    phase = gas.CONDENSED_PHASES[name]
    dt = t0 - gas.T_REF_K
    h = phase.h_formation_j_per_mol + phase.cp_j_per_mol_k * dt
    with np.errstate(invalid="ignore", divide="ignore"):
        s = phase.s_standard_j_per_mol_k + phase.cp_j_per_mol_k * np.log(t0 / gas.T_REF_K)
    return h - t0 * s


def element_exergy_offsets_j_per_mol(t0_k=T0_STANDARD_K, p0_pa=P0_STANDARD_PA) -> dict:
    """Per-element constants κ that turn ``H - T0 S`` into exergy.

    Parameters
    ----------
    t0_k : numeric, default 298.15
        Dead-state temperature. [K]
    p0_pa : numeric, default 101325
        Dead-state pressure. [Pa]

    Returns
    -------
    dict of str to numeric
        ``κ_el`` for C, H, O, N, S, Ar, per mole of atoms. [J/mol]

    Notes
    -----
    For each element's reference form (graphite, H2, O2, N2, rhombic sulfur, Ar) at
    (T0, p0), ``κ = (e_std - (h - T0 s)) / atoms``, with ``h`` on the formation basis and
    ``s`` absolute (:mod:`engine.gas`). The exergy of any stream is then
    ``Ex = H - T0 S + Σ N_el κ_el`` ([1]_ Sec. 2.4: chemical exergy of a compound as its
    Gibbs energy of formation plus the exergies of its elements). The standard exergies
    are used unchanged at ``t0_k`` (see :func:`gas_mixture_chemical_exergy_j_per_mol`).
    """
    t0 = np.asarray(t0_k, dtype=float)
    p0 = np.asarray(p0_pa, dtype=float)
    out = {}
    for element, (form, atoms) in _ELEMENT_REFERENCE.items():
        e_std = STANDARD_CHEMICAL_EXERGY_J_PER_MOL[form]
        if form in gas.CONDENSED_PHASES:
            g = _condensed_gibbs(form, t0)
        else:
            h = gas.enthalpy_j_per_mol(form, t0)
            s = gas.entropy_j_per_mol_k(form, t0, p0)
            g = np.asarray(h) - t0 * np.asarray(s)
        out[element] = (e_std - g) / atoms
    return out
