"""Humid air as an ideal-gas mixture: composition, gas constant, enthalpy, entropy, compression.

Dry air of :data:`engine.combustion.DRY_AIR_MOLE_FRACTIONS` plus water vapour at a
humidity ratio, every species an ideal gas with the temperature-dependent heat
capacity of :mod:`engine.gas` (NASA 7-coefficient polynomials), mixed by the
Gibbs-Dalton rule. The vapour stays vapour: no function here condenses water, so a
state whose vapour partial pressure exceeds saturation is the metastable gas mixture
(see the Notes of :func:`isentropic_temperature`).

Compared with the real-gas humid-air formulation of CoolProp's ``HAPropsSI`` (virial
mixture model with the water-vapour enhancement factor), observed in the tests: an
isentropic compression from about one atmosphere to 10 bar (263-313 K, up to 0.02 kg/kg)
has its discharge temperature within 0.15 % and its work within 0.2 %; at about one
atmosphere the specific volume agrees within 0.1 % and enthalpy differences within
0.2 %. State properties at higher pressure carry the ideal-gas approximation: the
real-gas departure of the specific volume grows to about 0.75 % at 8 bar (and that of
cp faster). The humidity ratio at a given relative humidity is 0.4-0.5 % lower than
``HAPropsSI``'s, because the ideal mixture leaves out the enhancement factor (about
1.004 at one atmosphere).

Inputs are numeric (scalar, list, ndarray, Series), broadcast together; outputs are
1-D float arrays, NaN where an input is NaN or outside the polynomials' 200-6,000 K.

References
----------
.. [1] B. J. McBride, S. Gordon, M. A. Reno, NASA TM-4513, 1993 (species polynomials,
   via :mod:`engine.gas`).
.. [2] ASHRAE Handbook - Fundamentals, 2021, Ch. 1 "Psychrometrics" (humidity ratio,
   Eq. 20 (SI): W = 0.621945 p_w / (p - p_w); moist air treated as an ideal-gas mixture,
   with the stated error of under 0.7 % at ordinary conditions). Chapter and equation
   from memory.
.. [3] Y. A. Cengel, M. A. Boles, "Thermodynamics: An Engineering Approach", 9th ed.,
   McGraw-Hill, 2019, Ch. 7 (isentropic processes of ideal gases with variable specific
   heats: s2 - s1 = s°(T2) - s°(T1) - R ln(p2/p1) = 0). Chapter from memory.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine import combustion, gas

_WATER = "H2O"
_T_MIN_K = 200.0  # lower end of the polynomials in engine.gas
_NEWTON_STEPS = 30


def _arr(value) -> np.ndarray:
    if isinstance(value, pd.Series):
        return value.to_numpy(dtype=float, na_value=np.nan)
    return np.atleast_1d(np.asarray(value, dtype=float)).reshape(-1)


def _flat(*values) -> list[np.ndarray]:
    arrays = np.broadcast_arrays(*(_arr(v) for v in values))
    return [np.array(a, dtype=float) for a in arrays]


def mole_fractions(humidity_ratio) -> dict[str, np.ndarray]:
    """Mole fractions of humid air at a humidity ratio.

    Parameters
    ----------
    humidity_ratio : numeric
        Water vapour per dry air. [kg/kg]

    Returns
    -------
    dict of str to ndarray
        Mole fraction of each species of :data:`engine.combustion.DRY_AIR_MOLE_FRACTIONS`
        and ``"H2O"``, summing to 1. NaN for a negative or NaN humidity ratio. [-]
    """
    (w,) = _flat(humidity_ratio)
    with np.errstate(invalid="ignore"):
        w = np.where(w >= 0, w, np.nan)
    m_da = combustion.dry_air_molar_mass_kg_per_mol()
    water_per_dry = w * m_da / gas.molar_mass_kg_per_mol(_WATER)
    total = 1.0 + water_per_dry
    fractions = {name: x / total for name, x in combustion.DRY_AIR_MOLE_FRACTIONS.items()}
    fractions[_WATER] = water_per_dry / total
    return fractions


def molar_mass_kg_per_mol(humidity_ratio) -> np.ndarray:
    """Mean molar mass of humid air. [kg/mol]

    Parameters
    ----------
    humidity_ratio : numeric
        Water vapour per dry air. [kg/kg]
    """
    x = mole_fractions(humidity_ratio)
    return sum(xi * gas.molar_mass_kg_per_mol(name) for name, xi in x.items())


def gas_constant_j_per_kg_k(humidity_ratio) -> np.ndarray:
    """Specific gas constant of humid air, ``R / M``. [J/(kg K)]

    Parameters
    ----------
    humidity_ratio : numeric
        Water vapour per dry air. [kg/kg]
    """
    return gas.R_J_PER_MOL_K / molar_mass_kg_per_mol(humidity_ratio)


def _valid_t(t: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        return np.where(t >= _T_MIN_K, t, np.nan)


def enthalpy_j_per_kg(t_k, humidity_ratio) -> np.ndarray:
    """Specific enthalpy of humid air per kg of mixture (formation basis of engine.gas). [J/kg]

    Parameters
    ----------
    t_k : numeric
        Temperature. [K]
    humidity_ratio : numeric
        Water vapour per dry air. [kg/kg]

    Notes
    -----
    Ideal gases: independent of pressure. Only differences at one composition are used
    by lostwork, so the formation basis cancels.
    """
    t, w = _flat(t_k, humidity_ratio)
    return np.asarray(gas.enthalpy_j_per_kg(mole_fractions(w), _valid_t(t)), dtype=float)


def entropy_j_per_kg_k(t_k, p_pa, humidity_ratio) -> np.ndarray:
    """Specific entropy of humid air per kg of mixture, mixing entropy included. [J/(kg K)]

    Parameters
    ----------
    t_k : numeric
        Temperature. [K]
    p_pa : numeric
        Total pressure. [Pa]
    humidity_ratio : numeric
        Water vapour per dry air. [kg/kg]
    """
    t, p, w = _flat(t_k, p_pa, humidity_ratio)
    with np.errstate(invalid="ignore"):
        p = np.where(p > 0, p, np.nan)
    return np.asarray(gas.entropy_j_per_kg_k(mole_fractions(w), _valid_t(t), p), dtype=float)


def cp_j_per_kg_k(t_k, humidity_ratio) -> np.ndarray:
    """Isobaric specific heat of humid air per kg of mixture. [J/(kg K)]

    Parameters
    ----------
    t_k : numeric
        Temperature. [K]
    humidity_ratio : numeric
        Water vapour per dry air. [kg/kg]
    """
    t, w = _flat(t_k, humidity_ratio)
    x = mole_fractions(w)
    cp_molar = np.asarray(gas.mixture_cp(x, _valid_t(t)), dtype=float)
    return cp_molar / molar_mass_kg_per_mol(w)


def density_kg_per_m3(t_k, p_pa, humidity_ratio) -> np.ndarray:
    """Density of humid air, ``p / (R_mix T)``. [kg/m^3]

    Parameters
    ----------
    t_k : numeric
        Temperature. [K]
    p_pa : numeric
        Total pressure. [Pa]
    humidity_ratio : numeric
        Water vapour per dry air. [kg/kg]
    """
    t, p, w = _flat(t_k, p_pa, humidity_ratio)
    with np.errstate(invalid="ignore", divide="ignore"):
        return p / (gas_constant_j_per_kg_k(w) * _valid_t(t))


def humidity_ratio(relative_humidity, t_k, p_pa) -> np.ndarray:
    """Humidity ratio from relative humidity (over ice below 0 degC). [kg/kg]

    Parameters
    ----------
    relative_humidity : numeric
        Relative humidity as a fraction, 0-1. [-]
    t_k : numeric
        Dry-bulb temperature. [K]
    p_pa : numeric
        Total pressure. [Pa]

    Returns
    -------
    ndarray
        ``(M_w / M_da) p_v / (p - p_v)``, ``p_v = RH p_sat(T)`` (Eq. 20 in [2]_ with this
        module's molar masses), from
        :func:`engine.combustion.humidity_ratio_from_relative_humidity`. [kg/kg]
    """
    rh, t, p = _flat(relative_humidity, t_k, p_pa)
    return np.asarray(combustion.humidity_ratio_from_relative_humidity(rh, t, p), dtype=float)


def dry_air_partial_pressure_pa(p_pa, t_k, relative_humidity) -> np.ndarray:
    """Partial pressure of the dry air in humid air, ``p - RH p_sat(T)``. [Pa]

    Parameters
    ----------
    p_pa : numeric
        Total pressure. [Pa]
    t_k : numeric
        Temperature. [K]
    relative_humidity : numeric
        Relative humidity as a fraction, 0-1; NaN outside. [-]
    """
    p, t, rh = _flat(p_pa, t_k, relative_humidity)
    p_sat = np.asarray(combustion.water_vapour_saturation_pressure_pa(t), dtype=float)
    with np.errstate(invalid="ignore"):
        rh = np.where((rh >= 0) & (rh <= 1), rh, np.nan)
    # At 0 % humidity the saturation pressure does not matter (a frost point below the
    # polynomials' range must not make a dry reference NaN).
    return p - np.where(rh == 0, 0.0, rh * p_sat)


def isentropic_temperature(t1_k, p1_pa, p2_pa, humidity_ratio) -> np.ndarray:
    """Temperature after an isentropic change of pressure of humid air. [K]

    Parameters
    ----------
    t1_k : numeric
        Initial temperature. [K]
    p1_pa : numeric
        Initial pressure. [Pa]
    p2_pa : numeric
        Final pressure. [Pa]
    humidity_ratio : numeric
        Water vapour per dry air (unchanged by the process). [kg/kg]

    Returns
    -------
    ndarray
        ``T2`` solving ``s°(T2) - s°(T1) = R ln(p2 / p1)`` per mole of the mixture (Ch. 7
        in [3]_, variable specific heats), by Newton steps with ``ds°/dT = cp / T``
        (``s°`` rises monotonically with T, so the root is unique). NaN where an input is
        NaN or T2 falls outside the polynomials' range. [K]

    Notes
    -----
    The water vapour is kept in the gas phase throughout; compression only raises its
    temperature further above its dew point, so this matters only for expansions.
    """
    t1, p1, p2, w = _flat(t1_k, p1_pa, p2_pa, humidity_ratio)
    mixture = gas.Mixture(mole_fractions(w))
    with np.errstate(invalid="ignore", divide="ignore"):
        log_ratio = np.log(p2 / p1)
        # Entropy at one reference pressure: the mixing term cancels at fixed composition.
        target = mixture.entropy(_valid_t(t1), gas.P_REF_PA) + gas.R_J_PER_MOL_K * log_ratio
        # Constant-cp start: within a few kelvin of the answer for air.
        t = t1 * np.exp(log_ratio * 2.0 / 7.0)
        for _ in range(_NEWTON_STEPS):
            t = np.clip(t, _T_MIN_K, 6000.0)
            step = (target - mixture.entropy(t, gas.P_REF_PA)) * t / mixture.cp(t)
            t = t + step
            if not np.any(np.abs(step) > 1e-10 * t):
                break
        s = mixture.entropy(t, gas.P_REF_PA)
        converged = np.abs(s - target) <= 1e-9 * np.abs(target) + 1e-9
    return np.where(converged & (t >= _T_MIN_K), t, np.nan)
