"""Fuel specifications: heating values, volume references, composition errors.

Heating values are checked against (a) a computation in the test from Cantera 3.2's
GRI-Mech 3.0 formation enthalpies at 25 degC with the water condensed using Cantera's
liquid-water data (nasa_condensed.yaml, H2O(L)), and (b) a handbook table from memory
(tests/data/combustion_heating_values_handbook.csv). Tolerance 0.3 % as the issue asks.
"""

from __future__ import annotations

import math
from pathlib import Path

import cantera as ct
import pandas as pd
import pytest

from engine import gas
from engine.fuels import (
    NORMAL_CUBIC_METRE,
    STANDARD_CUBIC_FOOT,
    STANDARD_CUBIC_FOOT_14_73_PSIA,
    STANDARD_CUBIC_METRE,
    CompositionError,
    FuelProperties,
    GasComposition,
    UltimateAnalysis,
    hhv_channiwala_parikh_j_per_kg,
    hhv_from_lhv_j_per_kg,
    lhv_from_hhv_j_per_kg,
    species_hhv_j_per_mol,
)

DATA = Path(__file__).resolve().parents[1] / "data"
T25 = 298.15


@pytest.fixture(scope="module")
def cantera_heating_values() -> dict[str, tuple[float, float]]:
    """(HHV, LHV) in J/kg at 25 degC from GRI-Mech 3.0 formation enthalpies."""
    gri = ct.Solution("gri30.yaml")

    def h(species: str) -> float:
        gri.TPX = T25, 101_325.0, {species: 1.0}
        return gri.enthalpy_mole / 1e3  # J/mol

    liquid = {s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")}["H2O(L)"]
    h_liquid = liquid.thermo.h(T25) / 1e3
    out = {}
    for species, (c, hh, o) in {
        "CH4": (1, 4, 0),
        "C2H6": (2, 6, 0),
        "C3H8": (3, 8, 0),
        "H2": (0, 2, 0),
        "CO": (1, 0, 1),
    }.items():
        o2 = c + hh / 4 - o / 2
        reactants = h(species) + o2 * h("O2")
        hhv = reactants - c * h("CO2") - hh / 2 * h_liquid
        lhv = reactants - c * h("CO2") - hh / 2 * h("H2O")
        gri.TPX = T25, 101_325.0, {species: 1.0}
        molar_mass = gri.mean_molecular_weight / 1e3
        out[species] = (hhv / molar_mass, lhv / molar_mass)
    return out


@pytest.fixture(scope="module")
def handbook_heating_values() -> pd.DataFrame:
    return pd.read_csv(DATA / "combustion_heating_values_handbook.csv", index_col="species")


@pytest.mark.parametrize("species", ["CH4", "C2H6", "C3H8", "H2", "CO"])
def test_heating_values_against_cantera_formation_enthalpies(cantera_heating_values, species):
    comp = GasComposition({species: 1.0})
    hhv, lhv = cantera_heating_values[species]
    assert comp.hhv_j_per_kg == pytest.approx(hhv, rel=3e-3)
    assert comp.lhv_j_per_kg == pytest.approx(lhv, rel=3e-3)


@pytest.mark.parametrize("species", ["CH4", "C2H6", "C3H8", "C4H10", "H2", "CO"])
def test_heating_values_against_handbook_table(handbook_heating_values, species):
    row = handbook_heating_values.loc[species]
    comp = GasComposition({species: 1.0})
    assert comp.hhv_j_per_kg / 1e3 == pytest.approx(row["hhv_kj_per_kg"], rel=3e-3)
    assert comp.lhv_j_per_kg / 1e3 == pytest.approx(row["lhv_kj_per_kg"], rel=3e-3)


def test_inert_components_have_no_heating_value():
    for species in ("CO2", "N2", "O2"):
        assert species_hhv_j_per_mol(species) == pytest.approx(0.0, abs=1e-6)


def test_gas_mixture_is_mole_weighted_and_normalised():
    raw = {"CH4": 0.9005, "C2H6": 0.05, "N2": 0.03, "CO2": 0.02}  # sums to 1.0005
    comp = GasComposition(raw)
    assert sum(comp.mole_fractions.values()) == pytest.approx(1.0, abs=1e-15)
    expected = sum(x / 1.0005 * species_hhv_j_per_mol(s) for s, x in raw.items())
    assert comp.hhv_j_per_mol == pytest.approx(expected, rel=1e-12)
    # Elemental mass fractions by hand: carbon = Σ x n_C M_C / M.
    carbon = (0.9005 + 2 * 0.05 + 0.02) / 1.0005 * 12.011e-3 / comp.molar_mass_kg_per_mol
    assert comp.ultimate_analysis().carbon == pytest.approx(carbon, rel=1e-12)
    assert GasComposition({"n-C4H10": 1.0}) == GasComposition({"C4H10": 1.0})


def test_volume_reference_conditions():
    assert (NORMAL_CUBIC_METRE.t_k, NORMAL_CUBIC_METRE.p_pa) == (273.15, 101_325.0)
    assert (STANDARD_CUBIC_METRE.t_k, STANDARD_CUBIC_METRE.p_pa) == (288.15, 101_325.0)
    # 60 degF = 15.5556 degC; 14.696 psia is one standard atmosphere (101.325 kPa).
    assert STANDARD_CUBIC_FOOT.t_k == pytest.approx(288.705_556, abs=1e-6)
    assert STANDARD_CUBIC_FOOT.p_pa == pytest.approx(14.696 * 6_894.757, rel=2e-5)
    assert STANDARD_CUBIC_FOOT_14_73_PSIA.p_pa == pytest.approx(101_560.0, abs=1.0)


def test_gas_density_ideal_gas_hand_calculation():
    # Methane: ρ = p M / (R T) = 101325 * 0.016043 / (8.314462618 * 273.15) = 0.7158 kg/m3
    # (the measured real-gas normal density is 0.7175, Z = 0.9976; from memory).
    methane = GasComposition({"CH4": 1.0})
    m = 12.011e-3 + 4 * 1.008e-3
    assert methane.density_kg_per_m3(NORMAL_CUBIC_METRE) == pytest.approx(
        101_325.0 * m / (8.314462618 * 273.15), rel=1e-12
    )
    assert methane.density_kg_per_m3(NORMAL_CUBIC_METRE) == pytest.approx(0.7175, rel=3e-3)
    assert methane.density_kg_per_m3(NORMAL_CUBIC_METRE, 0.9976) == pytest.approx(0.7175, rel=1e-3)
    ratio = methane.density_kg_per_m3(NORMAL_CUBIC_METRE) / methane.density_kg_per_m3(
        STANDARD_CUBIC_METRE
    )
    assert ratio == pytest.approx(288.15 / 273.15, rel=1e-12)
    # Volumetric HHV of methane at 15 degC, 101.325 kPa: 37.7 MJ/m3 (ideal; from memory).
    assert methane.hhv_j_per_m3(STANDARD_CUBIC_METRE) / 1e6 == pytest.approx(37.7, abs=0.1)


def test_composition_error_says_by_how_much():
    with pytest.raises(CompositionError) as short:
        GasComposition({"CH4": 0.9371, "C2H6": 0.05})
    assert str(short.value) == "mole fractions sum to 0.9871, 0.0129 short of 1 (tolerance 0.001)"
    with pytest.raises(CompositionError) as over:
        UltimateAnalysis(carbon=0.7, hydrogen=0.05, oxygen=0.1, ash=0.1, moisture=0.065)
    assert str(over.value) == "mass fractions sum to 1.0150, 0.0150 over 1 (tolerance 0.001)"
    with pytest.raises(CompositionError, match="unknown gas component 'CH3'"):
        GasComposition({"CH3": 1.0})
    with pytest.raises(CompositionError, match=r"mole fraction of N2 must be >= 0, got -0\.01"):
        GasComposition({"CH4": 1.01, "N2": -0.01})
    with pytest.raises(CompositionError, match="unknown ultimate-analysis component 'Cl'"):
        UltimateAnalysis.from_mapping({"C": 0.8, "Cl": 0.2})
    # Within tolerance the fractions are scaled to sum exactly one.
    loose = GasComposition({"CH4": 0.9995}, tolerance=1e-3)
    assert loose.mole_fractions == {"CH4": 1.0}


def test_channiwala_parikh_hand_calculation():
    # Fictional coal as fired (mass %): C 62, H 4.2, O 7.5, N 1.2, S 1.1, ash 12, moisture 12.
    coal = UltimateAnalysis.from_mapping(
        {"C": 0.62, "H": 0.042, "O": 0.075, "N": 0.012, "S": 0.011, "ash": 0.12, "moisture": 0.12}
    )
    expected_mj = (
        0.3491 * 62 + 1.1783 * 4.2 + 0.1005 * 1.1 - 0.1034 * 7.5 - 0.0151 * 1.2 - 0.0211 * 12
    )
    assert hhv_channiwala_parikh_j_per_kg(coal) == pytest.approx(expected_mj * 1e6, rel=1e-12)
    assert expected_mj == pytest.approx(25.657, abs=1e-3)


def test_lhv_hhv_both_ways():
    coal = UltimateAnalysis(carbon=0.62, hydrogen=0.042, oxygen=0.075, nitrogen=0.012,
                            sulfur=0.011, ash=0.12, moisture=0.12)  # fmt: skip
    # Water formed = 0.042 * 18.015 / 2.016 + 0.12 = 0.4953 kg/kg; r = 2442.5 kJ/kg at
    # 25 degC (ideal-gas vapour over CODATA liquid; IAPWS-95 gives 2441.7 at saturation).
    water = 0.042 * (2 * 1.008 + 15.999) / (2 * 1.008) + 0.12
    lhv = lhv_from_hhv_j_per_kg(25.0e6, coal)
    assert 25.0e6 - lhv == pytest.approx(water * 2_442.5e3, rel=5e-4)
    assert hhv_from_lhv_j_per_kg(lhv, coal) == pytest.approx(25.0e6, rel=1e-15)


def test_fuel_properties_from_gas():
    ng = FuelProperties.from_gas(
        "site gas", {"CH4": 0.93, "C2H6": 0.04, "C3H8": 0.01, "N2": 0.015, "CO2": 0.005},
        volume_reference=STANDARD_CUBIC_METRE,
    )  # fmt: skip
    comp = GasComposition({"CH4": 0.93, "C2H6": 0.04, "C3H8": 0.01, "N2": 0.015, "CO2": 0.005})
    assert ng.kind == "gas"
    assert ng.hhv_j_per_kg == pytest.approx(comp.hhv_j_per_kg, rel=1e-15)
    assert ng.density_kg_per_m3 == pytest.approx(
        comp.density_kg_per_m3(STANDARD_CUBIC_METRE), rel=1e-15
    )
    assert ng.chemical_exergy_j_per_kg == pytest.approx(comp.chemical_exergy_j_per_kg(), rel=1e-15)
    assert ng.exergy_to_lhv_ratio * ng.lhv_j_per_kg == pytest.approx(
        ng.chemical_exergy_j_per_kg, rel=1e-12
    )
    # Natural gas: e/LHV about 1.04 (Szargut et al. 1988, Table 2.4).
    assert ng.exergy_to_lhv_ratio == pytest.approx(1.04, abs=0.01)
    # CO2 per J by hand: moles of C per mole of gas times M_CO2 over the molar HHV.
    carbon = 0.93 + 2 * 0.04 + 3 * 0.01 + 0.005
    assert ng.co2_kg_per_j == pytest.approx(carbon * 44.009e-3 / comp.hhv_j_per_mol, rel=1e-4)
    # A measured HHV replaces the computed one; the LHV follows from the water formed.
    measured = FuelProperties.from_gas("site gas", comp, hhv_j_per_kg=50.0e6)
    assert measured.hhv_j_per_kg == 50.0e6
    assert measured.hhv_j_per_kg - measured.lhv_j_per_kg == pytest.approx(
        ng.hhv_j_per_kg - ng.lhv_j_per_kg, rel=1e-9
    )
    # Heat capacity of methane-rich gas at 25 degC (CH4 35.7 J/(mol K), NIST; from memory).
    assert GasComposition({"CH4": 1.0}).specific_heat_j_per_kg_k() == pytest.approx(
        35.7 / 16.043e-3, rel=5e-3
    )


def test_fuel_properties_from_ultimate_analysis_and_backward_compatibility():
    coal = FuelProperties.from_ultimate_analysis(
        "coal",
        {"C": 0.62, "H": 0.042, "O": 0.075, "N": 0.012, "S": 0.011, "ash": 0.12, "moisture": 0.12},
    )
    assert coal.hhv_j_per_kg == pytest.approx(25.657e6, rel=1e-4)
    assert coal.method.startswith("HHV by Channiwala & Parikh 2002")
    assert coal.exergy_to_lhv_ratio * coal.lhv_j_per_kg == pytest.approx(
        coal.chemical_exergy_j_per_kg, rel=1e-12
    )
    with pytest.raises(ValueError, match="kind must be 'solid' or 'liquid', got 'gas'"):
        FuelProperties.from_ultimate_analysis("x", coal.ultimate, kind="gas")
    # The interim interface: a fuel given by heating values keeps the ratio rule.
    old = FuelProperties("pipeline gas", hhv_j_per_kg=52.2e6, lhv_j_per_kg=47.1e6)
    assert old.chemical_exergy_j_per_kg == pytest.approx(1.04 * 47.1e6, rel=1e-15)
    assert old.ultimate is None and old.kind == "unspecified"
    assert hash(coal) == hash(coal)


def test_molar_masses_iupac():
    assert gas.molar_mass_kg_per_mol("CH4") == pytest.approx(16.043e-3, abs=1e-6)
    assert gas.molar_mass_kg_per_mol("H2O") == pytest.approx(18.015e-3, abs=1e-6)
    assert math.isclose(gas.molar_mass_kg_per_mol("CO2"), 44.009e-3, abs_tol=1e-6)
