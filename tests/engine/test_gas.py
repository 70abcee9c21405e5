"""Ideal-gas properties (engine.gas) against Cantera and published values.

Reference library: Cantera 3.2 (PyPI ``cantera``) with its bundled ``gri30.yaml``, the
GRI-Mech 3.0 thermodynamic data (Smith et al., 1999). lostwork's table is McBride, Gordon
& Reno, NASA TM-4513 (1993). The two sets share their low-temperature fits for several
species but differ for N2 and Ar and in every high-temperature fit, and GRI-Mech states
entropies at 1 atm where TM-4513 uses 1 bar; the comparison therefore checks the data,
the polynomial evaluation and the mixing rules, not a copy against itself.
"""

from __future__ import annotations

import math

import cantera as ct
import numpy as np
import pandas as pd
import pytest

from engine import combustion, gas

R = gas.R_J_PER_MOL_K
P_ATM = 101_325.0

# GRI-Mech 3.0 spells argon AR.
_CANTERA_NAME = {"Ar": "AR"}


@pytest.fixture(scope="module")
def gri30() -> ct.Solution:
    return ct.Solution("gri30.yaml")


def _cantera_state(solution: ct.Solution, fractions: dict, t_k: float, p_pa: float):
    solution.TPX = t_k, p_pa, {_CANTERA_NAME.get(k, k): v for k, v in fractions.items()}
    return solution.enthalpy_mass, solution.entropy_mass


def _methane_flue_gas(excess_air: float) -> dict[str, float]:
    fuel = combustion.flue_gas(
        gas_ultimate_methane(), excess_air, humidity_ratio=0.01
    ).wet_mole_fractions
    return {k: float(v) for k, v in fuel.items() if k != "SO2"}


def gas_ultimate_methane():
    from engine.fuels import GasComposition

    return GasComposition({"CH4": 1.0}).ultimate_analysis()


TEMPERATURES_K = np.array([300.0, 400.0, 600.0, 800.0, 1000.0, 1200.0, 1500.0, 2000.0])


@pytest.mark.parametrize(
    ("species", "t_max_k"),
    # Flue-gas and air species over 300-2,000 K; the fuel gases only up to 1,000 K, the
    # range a fuel enters at (the GRI and TM-4513 high-range CH4 fits differ by 0.22 %
    # in sensible enthalpy at 1,500 K).
    [("N2", 2000), ("O2", 2000), ("CO2", 2000), ("H2O", 2000), ("CO", 2000), ("Ar", 2000)]
    + [("CH4", 1000), ("H2", 2000)],
)
def test_species_against_gri30_within_0_2_percent(gri30, species, t_max_k):
    # Sensible enthalpy h(T) - h(298.15 K) relative, with a 1 J/mol floor near 298 K where
    # the difference of two fits is a fraction of a joule; entropy at 1 bar relative.
    temperatures = TEMPERATURES_K[np.less_equal(TEMPERATURES_K, t_max_k)]
    sensible = gas.sensible_enthalpy({species: 1.0}, temperatures)
    entropy = gas.entropy_j_per_mol_k(species, temperatures, 1e5)
    name = _CANTERA_NAME.get(species, species)
    gri30.TPX = 298.15, 1e5, {name: 1.0}
    h_ref = gri30.enthalpy_mole / 1000.0
    for t, h_ours, s_ours in zip(temperatures, sensible, entropy, strict=True):
        gri30.TPX = t, 1e5, {name: 1.0}
        h_ct = gri30.enthalpy_mole / 1000.0 - h_ref
        s_ct = gri30.entropy_mole / 1000.0
        assert abs(h_ours - h_ct) <= 0.002 * abs(h_ct) + 1.0, (species, t)
        assert s_ours == pytest.approx(s_ct, rel=2e-3), (species, t)


@pytest.mark.parametrize("excess_air", [0.05, 0.3, 1.0])
def test_flue_gas_and_air_per_kg_against_gri30(gri30, excess_air):
    flue = _methane_flue_gas(excess_air)
    for fractions in (flue, combustion.DRY_AIR_MOLE_FRACTIONS):
        h_ours = gas.sensible_enthalpy_j_per_kg(fractions, TEMPERATURES_K)
        s_ours = gas.entropy_j_per_kg_k(fractions, TEMPERATURES_K, P_ATM)
        h_ref, _ = _cantera_state(gri30, fractions, 298.15, P_ATM)
        for t, h, s in zip(TEMPERATURES_K, h_ours, s_ours, strict=True):
            h_ct, s_ct = _cantera_state(gri30, fractions, t, P_ATM)
            m = float(gas.mean_molar_mass_kg_per_mol(fractions))
            assert abs(h - (h_ct - h_ref)) <= 0.002 * abs(h_ct - h_ref) + 1.0 / m, t
            assert s == pytest.approx(s_ct, rel=2e-3), t


@pytest.mark.parametrize("species", ["SO2", "H2S", "C4H10"])
def test_species_not_in_gri30_match_the_tm4513_file(species):
    # Cantera's nasa_gas.yaml carries the same TM-4513 fits: a check of our copied digits (1e-9).
    name = {"C4H10": "C4H10,n-butane"}.get(species, species)
    ref = {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml")}[name]
    for t in (300.0, 700.0, 1500.0):
        assert gas.enthalpy_j_per_mol(species, t) == pytest.approx(ref.thermo.h(t) / 1e3, rel=1e-9)
        assert gas.entropy_j_per_mol_k(species, t) == pytest.approx(ref.thermo.s(t) / 1e3, rel=1e-9)
        assert gas.cp_j_per_mol_k(species, t) == pytest.approx(ref.thermo.cp(t) / 1e3, rel=1e-9)


def test_janaf_values_from_memory():
    # NIST-JANAF 4th ed. (1998) at 1000 K, 1 bar (values from memory): H - H(298.15) in
    # kJ/mol and S in J/(mol K). Tolerance 0.2 %.
    janaf = {
        "N2": (21.463, 228.170),
        "O2": (22.703, 243.579),
        "CO2": (33.397, 269.299),
        "H2O": (26.000, 232.739),
    }
    for species, (dh, s) in janaf.items():
        assert gas.sensible_enthalpy({species: 1.0}, 1000.0) / 1e3 == pytest.approx(dh, rel=2e-3)
        assert gas.entropy_j_per_mol_k(species, 1000.0) == pytest.approx(s, rel=2e-3)


def test_formation_enthalpies_codata():
    # CODATA Key Values (Cox, Wagman, Medvedev 1989), kJ/mol at 298.15 K (from memory).
    assert gas.enthalpy_j_per_mol("CO2", 298.15) / 1e3 == pytest.approx(-393.51, abs=0.05)
    assert gas.enthalpy_j_per_mol("H2O", 298.15) / 1e3 == pytest.approx(-241.826, abs=0.05)
    assert gas.enthalpy_j_per_mol("O2", 298.15) == pytest.approx(0.0, abs=0.01)
    assert gas.entropy_j_per_mol_k("O2", 298.15) == pytest.approx(205.152, abs=0.01)


def test_condensed_phases_against_cantera_and_iapws95():
    condensed = {s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")}
    water = gas.CONDENSED_PHASES["H2O(l)"]
    ref = condensed["H2O(L)"].thermo
    assert water.h_formation_j_per_mol == pytest.approx(ref.h(298.15) / 1e3, abs=5.0)
    assert water.s_standard_j_per_mol_k == pytest.approx(ref.s(298.15) / 1e3, abs=0.05)
    # cp of liquid water at 25 degC, 0.1 MPa from IAPWS-95 (CoolProp HEOS backend).
    from CoolProp.CoolProp import PropsSI

    cp_iapws95 = PropsSI("Cpmass", "T", 298.15, "P", 1e5, "HEOS::Water")
    assert water.cp_j_per_mol_k == pytest.approx(cp_iapws95 * 18.015e-3, rel=1e-3)
    graphite = gas.CONDENSED_PHASES["C(gr)"]
    assert graphite.s_standard_j_per_mol_k == pytest.approx(
        condensed["C(gr)"].thermo.s(298.15) / 1e3, abs=0.02
    )
    assert graphite.cp_j_per_mol_k == pytest.approx(
        condensed["C(gr)"].thermo.cp(298.15) / 1e3, rel=3e-3
    )
    sulfur = gas.CONDENSED_PHASES["S(rh)"]
    assert sulfur.s_standard_j_per_mol_k == pytest.approx(
        condensed["S(cr1)"].thermo.s(298.15) / 1e3, abs=0.05
    )
    assert sulfur.cp_j_per_mol_k == pytest.approx(
        condensed["S(cr1)"].thermo.cp(298.15) / 1e3, rel=3e-3
    )


def test_mixture_entropy_includes_mixing_and_partial_pressures():
    # Hand calculation: equimolar N2/O2 at 1 bar, 300 K.
    s = gas.mixture_entropy({"N2": 0.5, "O2": 0.5}, 300.0, 1e5)
    pure = 0.5 * gas.entropy_j_per_mol_k("N2", 300.0) + 0.5 * gas.entropy_j_per_mol_k("O2", 300.0)
    assert s == pytest.approx(pure + R * math.log(2.0), rel=1e-12)
    # A species with zero amount contributes nothing (no log(0)).
    assert gas.mixture_entropy({"N2": 1.0, "O2": 0.0}, 300.0, 2e5) == pytest.approx(
        gas.entropy_j_per_mol_k("N2", 300.0, 2e5), rel=1e-12
    )


def test_reference_pressure_is_one_bar():
    s_bar = gas.entropy_j_per_mol_k("N2", 500.0, 1e5)
    s_atm = gas.entropy_j_per_mol_k("N2", 500.0, P_ATM)
    assert s_bar - s_atm == pytest.approx(R * math.log(P_ATM / 1e5), rel=1e-12)


def test_temperature_from_enthalpy_round_trip():
    amounts = _methane_flue_gas(0.2)
    t = np.array([350.0, 999.0, 1000.0, 1001.0, 2400.0])
    h = gas.mixture_enthalpy(amounts, t)
    assert gas.temperature_from_enthalpy(amounts, h) == pytest.approx(t, abs=1e-7)


def test_type_matrix():
    assert isinstance(gas.enthalpy_j_per_mol("N2", 500.0), float)
    out = gas.enthalpy_j_per_mol("N2", [400.0, 500.0])
    assert isinstance(out, np.ndarray) and out.shape == (2,)
    series = pd.Series([400.0, 500.0], index=pd.Index(["a", "b"]))
    out = gas.entropy_j_per_mol_k("O2", series)
    assert isinstance(out, pd.Series) and list(out.index) == ["a", "b"]
    assert out["b"] == pytest.approx(gas.entropy_j_per_mol_k("O2", 500.0), rel=1e-14)
    mixed = gas.mixture_enthalpy({"N2": series, "O2": 1.0}, 500.0)
    assert isinstance(mixed, pd.Series) and list(mixed.index) == ["a", "b"]


def test_nan_and_out_of_range_rows_are_nan_only_there():
    out = gas.enthalpy_j_per_mol("CO2", [500.0, np.nan, 25.0, -10.0, 7000.0, 600.0])
    assert np.isnan(out[1:5]).all()
    assert np.isfinite(out[[0, 5]]).all()


def test_unknown_species_error_text():
    with pytest.raises(KeyError, match="unknown species 'XY'"):
        gas.enthalpy_j_per_mol("XY", 300.0)


def test_mixture_object_equals_species_sums_row_by_row():
    # Combined coefficients and the mixing term against per-species evaluation at each
    # species' partial pressure, for rows with different compositions and temperatures.
    amounts = {"CO2": np.array([8.0, 0.0, 1.0]), "H2O": np.array([12.0, 3.0, 0.5])}
    amounts["N2"] = np.array([70.0, 40.0, 2.0])
    t = np.array([450.0, 1200.0, 2100.0])
    p = 95_000.0
    mixture = gas.Mixture(amounts)
    total = sum(amounts.values())
    for row in range(3):
        h = sum(n[row] * gas.enthalpy_j_per_mol(s, t[row]) for s, n in amounts.items())
        s_sum = sum(
            n[row] * gas.entropy_j_per_mol_k(s, t[row], n[row] / total[row] * p)
            for s, n in amounts.items()
            if n[row] > 0
        )
        cp = sum(n[row] * gas.cp_j_per_mol_k(s, t[row]) for s, n in amounts.items())
        assert mixture.enthalpy(t)[row] == pytest.approx(h, rel=1e-12)
        assert mixture.entropy(t, p)[row] == pytest.approx(s_sum, rel=1e-12)
        assert mixture.cp(t)[row] == pytest.approx(cp, rel=1e-12)
