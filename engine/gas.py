"""Ideal-gas properties of combustion species and their mixtures (NASA 7-coefficient data).

Every species of air, flue gas and gaseous fuel that lostwork needs is described by the
7-coefficient polynomials of McBride, Gordon & Reno [1]_, kept in one table,
:data:`NASA7_COEFFICIENTS`. Enthalpy is on the formation basis: the elements in their
reference states (H2, O2, N2, Ar gas; graphite; rhombic sulfur) have zero enthalpy at
298.15 K, so an energy balance across a reaction closes without a separate heat of
reaction. The few condensed substances combustion also needs (liquid water, graphite)
are in :data:`CONDENSED_PHASES`, on the same basis.

All functions are vectorised: temperatures and amounts may be scalars, lists, ndarrays or
Series (broadcast together). Scalars in give a float out; a Series in gives a Series
with the same index. A temperature outside 200-6,000 K (the span of the polynomials; a
temperature in degC passed as K lands below it) or NaN gives NaN for that row.

References
----------
.. [1] B. J. McBride, S. Gordon, M. A. Reno, "Coefficients for Calculating Thermodynamic
   and Transport Properties of Individual Species", NASA TM-4513, 1993. Coefficients as
   distributed in Cantera 3.2's ``nasa_gas.yaml`` (converted from the NASA file); each
   entry keeps the TM-4513 source code of its data (``TPIS78``, ``L 7/88``, ...).
.. [2] J. D. Cox, D. D. Wagman, V. A. Medvedev, "CODATA Key Values for
   Thermodynamics", Hemisphere, 1989 (H2O(l), graphite: formation enthalpy and entropy
   at 298.15 K and 1 bar). Values from memory; checked in the tests against Cantera's
   element-entropy table and the IAPWS-95 liquid.
.. [3] M. W. Chase, "NIST-JANAF Thermochemical Tables", 4th ed., J. Phys. Chem. Ref. Data
   Monograph 9, 1998 (graphite heat capacity at 298.15 K).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

R_J_PER_MOL_K = 8.314462618
"""Molar gas constant (exact since the 2019 SI redefinition; CODATA 2018). [J/(mol K)]"""
P_REF_PA = 1.0e5
"""Standard-state pressure of the polynomials in [1]_: 1 bar. [Pa]"""
T_REF_K = 298.15
"""Reference temperature of the formation-enthalpy basis. [K]"""

ATOMIC_MASS_KG_PER_MOL = {
    "C": 12.011e-3,
    "H": 1.008e-3,
    "O": 15.999e-3,
    "N": 14.007e-3,
    "S": 32.06e-3,
    "Ar": 39.948e-3,
}
"""Standard atomic weights (IUPAC, conventional/abridged values). [kg/mol]"""


@dataclass(frozen=True)
class _Nasa7:
    composition: Mapping[str, int]
    t_min_k: float
    t_mid_k: float
    t_max_k: float
    low: tuple[float, ...]
    high: tuple[float, ...]
    source: str


# McBride, Gordon & Reno, NASA TM-4513 (1993), as in Cantera 3.2 nasa_gas.yaml.
# ``low`` applies below t_mid_k, ``high`` above. SO2 and H2S are fitted from 300 K;
# below that the low-range polynomial is extrapolated (smooth heat capacities; lostwork
# never meets these species below ambient temperature). n-butane is "C4H10,n-butane".
NASA7_COEFFICIENTS: dict[str, _Nasa7] = {
    "N2": _Nasa7(
        {"N": 2}, 200.0, 1000.0, 6000.0,
        (3.53100528, -0.000123660987, -5.02999437e-07, 2.43530612e-09, -1.40881235e-12,
         -1046.97628, 2.96747468),
        (2.95257626, 0.00139690057, -4.92631691e-07, 7.86010367e-11, -4.60755321e-15,
         -923.948645, 5.87189252),
        "TPIS78",
    ),
    "O2": _Nasa7(
        {"O": 2}, 200.0, 1000.0, 6000.0,
        (3.78245636, -0.00299673415, 9.847302e-06, -9.68129508e-09, 3.24372836e-12,
         -1063.94356, 3.65767573),
        (3.66096083, 0.000656365523, -1.41149485e-07, 2.05797658e-11, -1.29913248e-15,
         -1215.97725, 3.41536184),
        "TPIS89",
    ),
    "CO2": _Nasa7(
        {"C": 1, "O": 2}, 200.0, 1000.0, 6000.0,
        (2.35677352, 0.00898459677, -7.12356269e-06, 2.45919022e-09, -1.43699548e-13,
         -48371.9697, 9.90105222),
        (4.63659493, 0.00274131991, -9.95828531e-07, 1.60373011e-10, -9.16103468e-15,
         -49024.9341, -1.93534855),
        "L 7/88",
    ),
    "H2O": _Nasa7(
        {"H": 2, "O": 1}, 200.0, 1000.0, 6000.0,
        (4.19864056, -0.0020364341, 6.52040211e-06, -5.48797062e-09, 1.77197817e-12,
         -30293.7267, -0.849032208),
        (2.67703787, 0.00297318329, -7.7376969e-07, 9.44336689e-11, -4.26900959e-15,
         -29885.8938, 6.88255571),
        "L 8/89",
    ),
    "CO": _Nasa7(
        {"C": 1, "O": 1}, 200.0, 1000.0, 6000.0,
        (3.57953347, -0.00061035368, 1.01681433e-06, 9.07005884e-10, -9.04424499e-13,
         -14344.086, 3.50840928),
        (3.04848583, 0.00135172818, -4.85794075e-07, 7.88536486e-11, -4.69807489e-15,
         -14266.1171, 6.0170979),
        "TPIS79",
    ),
    "SO2": _Nasa7(
        {"S": 1, "O": 2}, 300.0, 1000.0, 5000.0,
        (3.2665338, 0.0053237902, 6.8437552e-07, -5.2810047e-09, 2.5590454e-12,
         -36908.148, 9.66465108),
        (5.2451364, 0.0019704204, -8.0375769e-07, 1.5149969e-10, -1.0558004e-14,
         -37558.227, -1.07404892),
        "J 6/61",
    ),
    "Ar": _Nasa7(
        {"Ar": 1}, 200.0, 6000.0, 6000.0,
        (2.5, 0.0, 0.0, 0.0, 0.0, -745.375, 4.37967491),
        (2.5, 0.0, 0.0, 0.0, 0.0, -745.375, 4.37967491),
        "L 6/88",
    ),
    "CH4": _Nasa7(
        {"C": 1, "H": 4}, 200.0, 1000.0, 6000.0,
        (5.14987613, -0.0136709788, 4.91800599e-05, -4.84743026e-08, 1.66693956e-11,
         -10246.6476, -4.64130376),
        (1.63552643, 0.0100842795, -3.36916254e-06, 5.34958667e-10, -3.15518833e-14,
         -10005.6455, 9.99313326),
        "L 8/88",
    ),
    "C2H6": _Nasa7(
        {"C": 2, "H": 6}, 200.0, 1000.0, 6000.0,
        (4.29142492, -0.0055015427, 5.99438288e-05, -7.08466285e-08, 2.68685771e-11,
         -11522.2055, 2.66682316),
        (4.04666674, 0.0153538766, -5.47039321e-06, 8.77826228e-10, -5.23167305e-14,
         -12447.3512, -0.968683607),
        "L 8/88",
    ),
    "C3H8": _Nasa7(
        {"C": 3, "H": 8}, 200.0, 1000.0, 6000.0,
        (4.2110262, 0.00171599803, 7.06183472e-05, -9.19594116e-08, 3.64421372e-11,
         -14381.2106, 5.60930491),
        (6.66789363, 0.0206120214, -7.36553027e-06, 1.18440761e-09, -7.0695321e-14,
         -16274.8521, -13.1859503),
        "L 6/90",
    ),
    "C4H10": _Nasa7(
        {"C": 4, "H": 10}, 200.0, 1000.0, 6000.0,
        (6.14746806, 0.000155947389, 9.67913517e-05, -1.2548391e-07, 4.97816555e-11,
         -17599.4402, -1.09409879),
        (9.44535834, 0.0257858073, -9.23619122e-06, 1.48632755e-09, -8.87897158e-14,
         -20138.2165, -26.3470076),
        "L 6/90",
    ),
    "H2": _Nasa7(
        {"H": 2}, 200.0, 1000.0, 6000.0,
        (2.34433112, 0.00798052075, -1.9478151e-05, 2.01572094e-08, -7.37611761e-12,
         -917.935173, 0.683010238),
        (2.93286579, 0.000826607967, -1.46402335e-07, 1.54100359e-11, -6.88804432e-16,
         -813.065597, -1.02432887),
        "TPIS78",
    ),
    "H2S": _Nasa7(
        {"H": 2, "S": 1}, 300.0, 1000.0, 5000.0,
        (3.9323476, -0.00050260905, 4.5928473e-06, -3.1807214e-09, 6.6497561e-13,
         -3650.5359, 2.3157905),
        (2.7452199, 0.0040434607, -1.538451e-06, 2.7520249e-10, -1.8592095e-14,
         -3419.9444, 8.0546745),
        "J 6/77",
    ),
}  # fmt: skip
"""NASA 7-coefficient polynomials per species (McBride, Gordon & Reno 1993, [1]_).

``cp/R = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4``,
``h/(R T) = a1 + a2 T/2 + a3 T^2/3 + a4 T^3/4 + a5 T^4/5 + a6/T``,
``s°/R = a1 ln T + a2 T + a3 T^2/2 + a4 T^3/3 + a5 T^4/4 + a7`` (at 1 bar)."""

SPECIES = tuple(NASA7_COEFFICIENTS)
"""Species names known to lostwork (chemical formulas; ``C4H10`` is n-butane)."""


@dataclass(frozen=True)
class CondensedPhase:
    """A condensed substance at 298.15 K with a constant heat capacity near it.

    Attributes
    ----------
    composition : Mapping[str, int]
        Atoms per formula unit.
    h_formation_j_per_mol : float
        Standard formation enthalpy at 298.15 K. [J/mol]
    s_standard_j_per_mol_k : float
        Standard entropy at 298.15 K, 1 bar. [J/(mol K)]
    cp_j_per_mol_k : float
        Heat capacity, taken constant over the range lostwork uses (0-100 degC). [J/(mol K)]
    source : str
        Where the numbers come from.
    """

    composition: Mapping[str, int]
    h_formation_j_per_mol: float
    s_standard_j_per_mol_k: float
    cp_j_per_mol_k: float
    source: str


CONDENSED_PHASES: dict[str, CondensedPhase] = {
    "H2O(l)": CondensedPhase(
        {"H": 2, "O": 1},
        -285_830.0,
        69.95,
        75.33,
        "CODATA Key Values 1989 (h_f, s°); cp = 4.1813 kJ/(kg K), IAPWS-95 at 25 degC, 0.1 MPa",
    ),
    "C(gr)": CondensedPhase(
        {"C": 1},
        0.0,
        5.74,
        8.517,
        "CODATA Key Values 1989 (s°); NIST-JANAF 4th ed. (cp at 298.15 K)",
    ),
    "S(rh)": CondensedPhase(
        {"S": 1},
        0.0,
        32.054,
        22.70,
        "CODATA Key Values 1989 (s°); NIST-JANAF 4th ed. (cp at 298.15 K)",
    ),
}
"""Liquid water, graphite and rhombic sulfur on the formation-enthalpy basis of :data:`NASA7_COEFFICIENTS`
(values from memory of [2]_, [3]_; checked in the tests)."""


def molar_mass_kg_per_mol(species: str) -> float:
    """Molar mass of a species or condensed phase from its formula. [kg/mol]

    Parameters
    ----------
    species : str
        A key of :data:`NASA7_COEFFICIENTS` or :data:`CONDENSED_PHASES`.
    """
    entry = NASA7_COEFFICIENTS.get(species) or CONDENSED_PHASES.get(species)
    if entry is None:
        raise KeyError(f"unknown species {species!r}; known: {', '.join(SPECIES)}")
    return sum(n * ATOMIC_MASS_KG_PER_MOL[el] for el, n in entry.composition.items())


# --- type handling -------------------------------------------------------------------


def _flat_inputs(values) -> list:
    out = []
    for v in values:
        if isinstance(v, Mapping):
            out.extend(v.values())
        else:
            out.append(v)
    return out


def restore_type(result, *inputs):
    """Give ``result`` the type of the inputs: float for all-scalar, Series keeps an index.

    Used by the combustion modules so that numeric in gives the same type out.
    """
    flat = _flat_inputs(inputs)
    for value in flat:
        if isinstance(value, pd.Series):
            return pd.Series(np.broadcast_to(result, value.shape), index=value.index)
    if all(np.ndim(v) == 0 for v in flat):
        return float(np.asarray(result).reshape(-1)[0]) if np.size(result) else float("nan")
    return np.asarray(result, dtype=float)


def _array(value) -> np.ndarray:
    if isinstance(value, pd.Series):
        return value.to_numpy(dtype=float, na_value=np.nan)
    return np.asarray(value, dtype=float)


# --- pure species --------------------------------------------------------------------

T_SWITCH_K = 1000.0
"""Temperature at which every two-range polynomial of the table changes range. [K]"""
assert all(e.t_mid_k == T_SWITCH_K or e.low == e.high for e in NASA7_COEFFICIENTS.values()), (
    "the combined-coefficient evaluation needs one common switch temperature"
)


def _entry(species: str) -> _Nasa7:
    try:
        return NASA7_COEFFICIENTS[species]
    except KeyError:
        raise KeyError(f"unknown species {species!r}; known: {', '.join(SPECIES)}") from None


def _combined(amounts: Mapping[str, np.ndarray]) -> tuple[list, list]:
    """Amount-weighted sums of the coefficients, low and high range.

    The polynomials are linear in their coefficients, so ``Σ n_i f(a_i, T) = f(Σ n_i a_i,
    T)``: a mixture costs one polynomial evaluation, not one per species.
    """
    low = [0.0] * 7
    high = [0.0] * 7
    for species, n in amounts.items():
        entry = _entry(species)
        for k in range(7):
            if entry.low[k]:
                low[k] = low[k] + n * entry.low[k]
            if entry.high[k]:
                high[k] = high[k] + n * entry.high[k]
    return low, high


def _cp_over_r(a, t: np.ndarray) -> np.ndarray:
    return a[0] + t * (a[1] + t * (a[2] + t * (a[3] + t * a[4])))


def _h_over_r(a, t: np.ndarray) -> np.ndarray:
    poly = a[0] + t * (a[1] / 2 + t * (a[2] / 3 + t * (a[3] / 4 + t * a[4] / 5)))
    return poly * t + a[5]


def _s_over_r(a, t: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore", divide="ignore"):
        log_t = np.log(t)
    return a[0] * log_t + t * (a[1] + t * (a[2] / 2 + t * (a[3] / 3 + t * a[4] / 4))) + a[6]


_KINDS = {"cp": _cp_over_r, "h": _h_over_r, "s": _s_over_r}


def _evaluate(coefficients: tuple[list, list], t, kind: str) -> np.ndarray:
    """``R Σ n_i f_i(T)`` for f = cp/R, h/R or s°/R from combined coefficients; NaN
    outside 200-6,000 K."""
    t = _array(t)
    low, high = coefficients
    function = _KINDS[kind]
    with np.errstate(invalid="ignore"):
        valid = (t >= 200.0) & (t <= 6000.0)
        upper = t >= T_SWITCH_K
    value = np.where(upper, function(high, t), function(low, t))
    return np.where(valid, value * R_J_PER_MOL_K, np.nan)


def _species_property(species: str, t_k, kind: str) -> np.ndarray:
    return _evaluate(_combined({species: 1.0}), t_k, kind)


def cp_j_per_mol_k(species: str, t_k):
    """Isobaric molar heat capacity of an ideal-gas species.

    Parameters
    ----------
    species : str
        Species formula, a key of :data:`NASA7_COEFFICIENTS`.
    t_k : numeric
        Temperature. [K]

    Returns
    -------
    numeric
        Heat capacity. [J/(mol K)]

    References
    ----------
    .. [1] McBride, Gordon & Reno, NASA TM-4513 (1993), Eq. 1 (7-coefficient form).
    """
    return restore_type(_species_property(species, t_k, "cp"), t_k)


def enthalpy_j_per_mol(species: str, t_k):
    """Molar enthalpy of an ideal-gas species on the formation basis.

    Parameters
    ----------
    species : str
        Species formula.
    t_k : numeric
        Temperature. [K]

    Returns
    -------
    numeric
        ``h(T) = Δh_f(298.15 K) + ∫ cp dT``. [J/mol]

    References
    ----------
    .. [1] McBride, Gordon & Reno, NASA TM-4513 (1993), Eq. 2.
    """
    return restore_type(_species_property(species, t_k, "h"), t_k)


def entropy_j_per_mol_k(species: str, t_k, p_pa=P_REF_PA):
    """Absolute molar entropy of an ideal-gas species at its (partial) pressure.

    Parameters
    ----------
    species : str
        Species formula.
    t_k : numeric
        Temperature. [K]
    p_pa : numeric, default 1 bar
        Pressure of the pure gas, or its partial pressure in a mixture. [Pa]

    Returns
    -------
    numeric
        ``s = s°(T) - R ln(p / 1 bar)``. [J/(mol K)]

    References
    ----------
    .. [1] McBride, Gordon & Reno, NASA TM-4513 (1993), Eq. 3.
    """
    p = _array(p_pa)
    with np.errstate(invalid="ignore", divide="ignore"):
        correction = R_J_PER_MOL_K * np.log(p / P_REF_PA)
    value = _species_property(species, t_k, "s") - correction
    return restore_type(value, t_k, p_pa)


# --- mixtures ------------------------------------------------------------------------


def _amounts(amounts: Mapping[str, object]) -> dict[str, np.ndarray]:
    return {name: _array(n) for name, n in amounts.items()}


class Mixture:
    """An ideal-gas mixture of given amounts, evaluated at many temperatures.

    The amount-weighted coefficients and the mixing term are computed once, so a stream
    evaluated at several states (flame, exit, dead state) costs one polynomial per
    state. The functions below are thin wrappers around it.

    Parameters
    ----------
    amounts : Mapping[str, numeric]
        Amount of each species, scalars or arrays (one per row): mole fractions, or
        moles per kg of fuel. [mol]

    Notes
    -----
    Results are ndarrays in the basis of ``amounts`` (J, J/K per that amount).
    """

    def __init__(self, amounts: Mapping[str, object]) -> None:
        self.amounts = _amounts(amounts)
        self.total = sum(self.amounts.values())
        self._coefficients = _combined(self.amounts)
        # Σ n_i ln x_i, the mixing part of the entropy (zero amounts contribute nothing).
        log_sum = 0.0
        for n in self.amounts.values():
            with np.errstate(invalid="ignore", divide="ignore"):
                log_sum = log_sum + np.where(n == 0, 0.0, n * np.log(n / self.total))
        self._n_ln_x = log_sum

    def cp(self, t_k) -> np.ndarray:
        """``Σ n_i cp_i(T)``. [J/K]"""
        return _evaluate(self._coefficients, t_k, "cp")

    def enthalpy(self, t_k) -> np.ndarray:
        """``Σ n_i h_i(T)``, formation basis. [J]"""
        return _evaluate(self._coefficients, t_k, "h")

    def entropy(self, t_k, p_pa) -> np.ndarray:
        """``Σ n_i [s°_i(T) - R ln(x_i p / 1 bar)]``. [J/K]"""
        with np.errstate(invalid="ignore", divide="ignore"):
            pressure = self.total * np.log(_array(p_pa) / P_REF_PA)
        standard = _evaluate(self._coefficients, t_k, "s")
        return standard - R_J_PER_MOL_K * (self._n_ln_x + pressure)

    def temperature(self, h_target, t_guess_k=1500.0) -> np.ndarray:
        """Temperature of a given enthalpy (see :func:`temperature_from_enthalpy`). [K]"""
        low, high = self._coefficients
        target = _array(h_target) / R_J_PER_MOL_K
        shape = np.broadcast_shapes(target.shape, np.shape(self.total))
        t = np.broadcast_to(_array(t_guess_k), shape).astype(float)
        target = np.broadcast_to(target, shape)

        def h_and_cp(t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            upper = t >= T_SWITCH_K
            h = np.where(upper, _h_over_r(high, t), _h_over_r(low, t))
            cp = np.where(upper, _cp_over_r(high, t), _cp_over_r(low, t))
            return h, cp

        for _ in range(60):
            h, cp = h_and_cp(t)
            with np.errstate(invalid="ignore", divide="ignore"):
                t_new = np.clip(t + (target - h) / cp, 200.0, 6000.0)
                done = ~(np.abs(t_new - t) > 1e-9)
            t = t_new
            if np.all(done | ~np.isfinite(t)):
                break
        h, cp = h_and_cp(t)
        with np.errstate(invalid="ignore"):
            converged = np.abs(target - h) <= 1e-6 * np.maximum(np.abs(cp), 1.0)
        return np.where(converged, t, np.nan)


def total_amount(amounts: Mapping[str, object]):
    """Sum of the amounts of a mixture (mol, or mol per kg fuel, ...). [same as amounts]"""
    values = _amounts(amounts)
    return restore_type(sum(values.values()), amounts)


def mean_molar_mass_kg_per_mol(amounts: Mapping[str, object]):
    """Mean molar mass of a mixture given amounts or mole fractions. [kg/mol]"""
    values = _amounts(amounts)
    total = sum(values.values())
    mass = sum(n * molar_mass_kg_per_mol(s) for s, n in values.items())
    with np.errstate(invalid="ignore", divide="ignore"):
        return restore_type(mass / total, amounts)


def mixture_cp(amounts: Mapping[str, object], t_k):
    """Heat capacity of an ideal-gas mixture, ``Σ n_i cp_i(T)``.

    Parameters
    ----------
    amounts : Mapping[str, numeric]
        Amount of each species: mole fractions give J/(mol K) of mixture, moles per kg of
        fuel give J/(K kg fuel). [mol or mol/mol]
    t_k : numeric
        Temperature. [K]

    Returns
    -------
    numeric
        ``Σ n_i cp_i``. [J/K per the basis of ``amounts``]
    """
    return restore_type(Mixture(amounts).cp(t_k), amounts, t_k)


def mixture_enthalpy(amounts: Mapping[str, object], t_k):
    """Enthalpy of an ideal-gas mixture on the formation basis, ``Σ n_i h_i(T)``.

    Parameters
    ----------
    amounts : Mapping[str, numeric]
        Amount of each species (mole fractions or moles per kg of fuel). [mol]
    t_k : numeric
        Temperature. [K]

    Returns
    -------
    numeric
        Enthalpy. [J per the basis of ``amounts``]

    Notes
    -----
    Ideal-gas mixing has no heat of mixing (Gibbs-Dalton), so the mixture enthalpy is
    the amount-weighted sum of the pure-species enthalpies.
    """
    return restore_type(Mixture(amounts).enthalpy(t_k), amounts, t_k)


def sensible_enthalpy(amounts: Mapping[str, object], t_k, t_ref_k=T_REF_K):
    """Enthalpy of an ideal-gas mixture above a reference temperature, ``Σ n_i (h_i(T) - h_i(T_ref))``.

    Parameters
    ----------
    amounts : Mapping[str, numeric]
        Amount of each species. [mol]
    t_k : numeric
        Temperature. [K]
    t_ref_k : numeric, default 298.15
        Reference temperature (ASME PTC 4-2013 uses 25 degC). [K]

    Returns
    -------
    numeric
        Sensible enthalpy. [J per the basis of ``amounts``]
    """
    mixture = Mixture(amounts)
    total = mixture.enthalpy(t_k) - mixture.enthalpy(t_ref_k)
    return restore_type(total, amounts, t_k, t_ref_k)


def mixture_entropy(amounts: Mapping[str, object], t_k, p_pa):
    """Absolute entropy of an ideal-gas mixture with each species at its partial pressure.

    Parameters
    ----------
    amounts : Mapping[str, numeric]
        Amount of each species (mole fractions or moles per kg of fuel). [mol]
    t_k : numeric
        Temperature. [K]
    p_pa : numeric
        Mixture (total) pressure. [Pa]

    Returns
    -------
    numeric
        ``Σ n_i [s°_i(T) - R ln(x_i p / 1 bar)]``, species with zero amount contributing
        nothing. [J/K per the basis of ``amounts``]

    Notes
    -----
    Gibbs-Dalton ideal mixture: the mixing entropy ``-R Σ n_i ln x_i`` is included.
    """
    return restore_type(Mixture(amounts).entropy(t_k, p_pa), amounts, t_k, p_pa)


def enthalpy_j_per_kg(mole_fractions: Mapping[str, object], t_k):
    """Specific enthalpy of an ideal-gas mixture on the formation basis. [J/kg]

    Parameters
    ----------
    mole_fractions : Mapping[str, numeric]
        Mole fractions (need not be normalised; amounts work too). [-]
    t_k : numeric
        Temperature. [K]
    """
    values = _amounts(mole_fractions)
    mass = sum(n * molar_mass_kg_per_mol(s) for s, n in values.items())
    return restore_type(Mixture(values).enthalpy(t_k) / mass, mole_fractions, t_k)


def sensible_enthalpy_j_per_kg(mole_fractions: Mapping[str, object], t_k, t_ref_k=T_REF_K):
    """Specific enthalpy of an ideal-gas mixture above ``t_ref_k``. [J/kg]

    Parameters
    ----------
    mole_fractions : Mapping[str, numeric]
        Mole fractions. [-]
    t_k : numeric
        Temperature. [K]
    t_ref_k : numeric, default 298.15
        Reference temperature. [K]
    """
    values = _amounts(mole_fractions)
    mass = sum(n * molar_mass_kg_per_mol(s) for s, n in values.items())
    h = sensible_enthalpy(values, _array(t_k), _array(t_ref_k))
    return restore_type(h / mass, mole_fractions, t_k, t_ref_k)


def entropy_j_per_kg_k(mole_fractions: Mapping[str, object], t_k, p_pa):
    """Specific absolute entropy of an ideal-gas mixture at pressure ``p_pa``. [J/(kg K)]

    Parameters
    ----------
    mole_fractions : Mapping[str, numeric]
        Mole fractions. [-]
    t_k : numeric
        Temperature. [K]
    p_pa : numeric
        Mixture pressure. [Pa]
    """
    values = _amounts(mole_fractions)
    mass = sum(n * molar_mass_kg_per_mol(s) for s, n in values.items())
    s = mixture_entropy(values, _array(t_k), _array(p_pa))
    return restore_type(s / mass, mole_fractions, t_k, p_pa)


def temperature_from_enthalpy(amounts: Mapping[str, object], h_target, t_guess_k=1500.0):
    """Temperature at which an ideal-gas mixture has a given formation-basis enthalpy.

    Parameters
    ----------
    amounts : Mapping[str, numeric]
        Amount of each species. [mol]
    h_target : numeric
        Enthalpy of the whole amount, same basis as :func:`mixture_enthalpy`. [J]
    t_guess_k : numeric, default 1500
        Starting temperature. [K]

    Returns
    -------
    numeric
        Temperature, solved by Newton's method to 1e-9 K; NaN where no temperature in
        200-6,000 K has that enthalpy. [K]

    Notes
    -----
    The mixture enthalpy rises monotonically with temperature (cp > 0), so the root is
    unique; Newton steps are clipped to the polynomial range and the iteration is a
    fixed number of vectorised steps (no loop over rows).
    """
    t = Mixture(amounts).temperature(h_target, t_guess_k)
    return restore_type(t, amounts, h_target)
