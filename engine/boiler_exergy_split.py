"""Second-law split of a fired boiler: where the fuel's exergy is destroyed and lost.

One pure, vectorised function, :func:`boiler_exergy_split`. The water/steam side is an
input (the boiler model computes the heat absorbed and the exergy gained with IAPWS-IF97);
the gas side is rebuilt from the fuel composition, the flue-gas O2 and the temperatures.

Boundary and path
-----------------
The control volume is the boiler envelope of ASME PTC 4: fuel and combustion air enter
it (air at ``air_temperature_k``, before any air heater), flue gas leaves it at
``flue_gas_temperature_k``, refuse (ash and unburned carbon) leaves it, heat leaves its
casing at ``surface_temperature_k``, and the water/steam crosses it. All gas streams are
ideal-gas mixtures at p0. Inside, a hypothetical path splits the irreversibility:

1. **combustion** — the fuel burned and the air (preheated internally to
   ``burner_air_temperature_k``) react adiabatically and completely to products at the
   adiabatic flame temperature (:func:`engine.combustion.adiabatic_flame_temperature`);
   unburned carbon bypasses the flame and leaves at fuel temperature;
2. **heat transfer** — the products cool from the flame temperature to the exit
   temperature, giving heat to the water/steam, to the combustion air (air heater), to
   the casing (surface loss) and, for whatever the measurements leave unexplained, to
   an *unaccounted* sink (below);
3. **losses** — what leaves the envelope still carrying exergy: the stack gas (thermal:
   from exit temperature to T0 at fixed composition; chemical: the gas at (T0, p0)
   against the reference environment, its water kept as vapour), the surface heat
   (``Q (1 - T0/T_surface)``) and the unburned carbon (its chemical exergy as graphite).
   Their exergy is destroyed outside the envelope.

Energy imbalance. Measured fuel flow, O2, temperatures and water-side heat rarely close
the first law exactly (that is the direct-indirect disagreement). The residual heat
``Q_imb = H_products(T_ad) - H_products(T_exit) - Q_air heater - Q_water - Q_surface`` is
treated as heat leaving the gas at its entropic mean temperature
``T_gm = ΔH_gas / ΔS_gas`` and rejected at T0: its exergy is destroyed and reported as
``exergy_destroyed_unaccounted_w`` (negative when the water side claims more heat than
the gas gave: a consistency problem for :mod:`engine.checks` to flag).

Exergy and entropy. Every stream's exergy is ``Ex = H - T0 S + Σ N_el κ_el``
(:func:`engine.chemical_exergy.element_exergy_offsets_j_per_mol`), with formation-basis
enthalpies and absolute entropies of :mod:`engine.gas` (each gas species at its partial
pressure). Exergy destroyed in each step comes from an exergy balance; entropy
generation from a separate entropy balance of the same step. The fuel's absolute
entropy is not tabulated for solid fuels, so it is the one its chemical exergy implies,
``S_f = (H_f + Σ N_el κ_el - Ex_f) / T0``, for every fuel (for a gas fuel it agrees
with the species entropies to within the consistency of Szargut's table with the
NASA data). The parts then satisfy Gouy-Stodola, ``I = T0 Sgen``, to round-off, and

``Ex_fuel + Ex_air - ΔEx_water = Σ destroyed + Σ lost``.

The chemical exergies are those of 298.15 K used unchanged at other T0; ash is inert
and carries no exergy; the sensible heat of the refuse and CO in the flue gas are not
modelled.

References
----------
.. [1] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger 1995, Ch. 4
   (exergy analysis of simple processes: combustion, heat transfer; chapter number
   from memory).
.. [2] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley
   1996, Sec. 3.4 (exergy destruction = T0 Sgen), 3.5 (chemical exergy).
.. [3] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical and
   Metallurgical Processes", Hemisphere, 1988, Ch. 2 and Appendix Table I.
.. [4] ASME PTC 4-2013, "Fired Steam Generators", the steam-generator envelope of its
   typical-boundary figures (Sec. 1-3; section from memory).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine import chemical_exergy, combustion, gas
from engine.fuels import FuelProperties
from engine.heatloss import STANDARD_HUMIDITY_RATIO

SURFACE_TEMPERATURE_RISE_K = 25.0
"""Default casing temperature above T0 for the surface heat loss, common practice (an
insulated casing runs at roughly 40-60 degC). [K]"""

DESTROYED_COLUMNS = (
    "exergy_destroyed_combustion_w",
    "exergy_destroyed_heat_transfer_w",
    "exergy_destroyed_unaccounted_w",
)
LOST_COLUMNS = (
    "exergy_lost_stack_thermal_w",
    "exergy_lost_stack_chemical_w",
    "exergy_lost_surface_w",
    "exergy_lost_unburned_w",
)
SGEN_COLUMNS = (
    "sgen_combustion_w_per_k",
    "sgen_heat_transfer_w_per_k",
    "sgen_unaccounted_w_per_k",
)


def _arr(value) -> np.ndarray:
    if isinstance(value, pd.Series):
        return value.to_numpy(dtype=float, na_value=np.nan)
    return np.asarray(value, dtype=float)


def _elements(amounts: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    for species, n in amounts.items():
        for element, count in gas.NASA7_COEFFICIENTS[species].composition.items():
            out[element] = out.get(element, 0.0) + count * n
    return out


def _kappa_sum(elements: dict[str, np.ndarray], kappa: dict[str, np.ndarray]) -> np.ndarray:
    return sum(n * kappa[el] for el, n in elements.items())


def boiler_exergy_split(
    fuel: FuelProperties,
    fuel_mass_flow_kg_per_s,
    flue_gas_o2,
    flue_gas_temperature_k,
    air_temperature_k,
    water_heat_absorbed_w,
    water_exergy_gain_w,
    *,
    o2_basis: str = "dry",
    humidity_ratio=STANDARD_HUMIDITY_RATIO,
    t0_k=chemical_exergy.T0_STANDARD_K,
    p0_pa=chemical_exergy.P0_STANDARD_PA,
    fuel_temperature_k=None,
    burner_air_temperature_k=None,
    surface_loss_fraction=0.0,
    surface_temperature_k=None,
    unburned_carbon_kg_per_kg=0.0,
    fuel_hhv_j_per_kg=None,
) -> pd.DataFrame:
    """Exergy destroyed and lost in a boiler, part by part, with an entropy balance.

    Parameters
    ----------
    fuel : FuelProperties
        Fuel with an ultimate analysis and a composition-based chemical exergy.
    fuel_mass_flow_kg_per_s : numeric
        Fuel mass flow. [kg/s]
    flue_gas_o2 : numeric
        O2 mole fraction in the flue gas leaving the envelope. [-]
    flue_gas_temperature_k : numeric
        Flue-gas temperature leaving the envelope. [K]
    air_temperature_k : numeric
        Combustion-air temperature entering the envelope. [K]
    water_heat_absorbed_w : numeric
        Heat absorbed by water/steam, ``Σ m Δh`` from the boiler model. [W]
    water_exergy_gain_w : numeric
        Exergy gained by water/steam, ``Σ m Δex`` with the same T0. [W]
    o2_basis : {"dry", "wet"}
        Basis of ``flue_gas_o2``.
    humidity_ratio : numeric, default 0.013
        Combustion-air humidity. [kg/kg dry air]
    t0_k : numeric, default 298.15
        Dead-state temperature. [K]
    p0_pa : numeric, default 101325
        Dead-state pressure; the gas streams are taken at it. [Pa]
    fuel_temperature_k : numeric, optional
        Fuel temperature; default T0. [K]
    burner_air_temperature_k : numeric, optional
        Air temperature after an air heater inside the envelope; default no air heater
        (``air_temperature_k``). [K]
    surface_loss_fraction : numeric, default 0
        Surface radiation and convection loss as a fraction of HHV input. [-]
    surface_temperature_k : numeric, optional
        Casing temperature at which the surface heat leaves; default T0 + 25 K
        (:data:`SURFACE_TEMPERATURE_RISE_K`). [K]
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon leaving unburned in the refuse, per kg of fuel. [kg/kg]
    fuel_hhv_j_per_kg : numeric, optional
        Measured HHV per interval; the chemical exergy scales with it as in the boiler
        model (ratio kept). [J/kg]

    Returns
    -------
    DataFrame
        One row per interval (a Series input's index is kept). Columns, in W unless
        stated:

        ``excess_air`` [-], ``adiabatic_flame_temperature_k`` [K],
        ``exergy_fuel_w`` (chemical plus physical), ``exergy_air_w``,
        ``exergy_water_gain_w``, the destroyed parts of :data:`DESTROYED_COLUMNS`, the
        lost parts of :data:`LOST_COLUMNS`, ``exergy_destroyed_w``, ``exergy_lost_w``,
        the entropy generation of :data:`SGEN_COLUMNS` and ``sgen_w_per_k`` [W/K],
        ``energy_imbalance_w`` and ``gas_mean_temperature_k`` [K].

    Notes
    -----
    See the module docstring for the boundary and the path. The parts satisfy

    ``exergy_fuel_w + exergy_air_w - exergy_water_gain_w
    = exergy_destroyed_w + exergy_lost_w`` and
    ``exergy_destroyed_w = t0_k * sgen_w_per_k``,

    both to round-off. The water/steam entropy rise is ``(Q - ΔEx) / T0``, exact for
    ``ΔEx = ΔH - T0 ΔS`` with the same T0.
    """
    ultimate = combustion._require_ultimate(fuel)
    m_f = _arr(fuel_mass_flow_kg_per_s)
    with np.errstate(invalid="ignore"):
        m_f = np.where(m_f > 0, m_f, np.nan)
    t0 = _arr(t0_k)
    p0 = _arr(p0_pa)
    t_fg = _arr(flue_gas_temperature_k)
    t_air = _arr(air_temperature_k)
    t_hot = t_air if burner_air_temperature_k is None else _arr(burner_air_temperature_k)
    t_fuel = t0 if fuel_temperature_k is None else _arr(fuel_temperature_k)
    t_surf = (
        t0 + SURFACE_TEMPERATURE_RISE_K
        if surface_temperature_k is None
        else _arr(surface_temperature_k)
    )
    omega = _arr(humidity_ratio)
    ubc = _arr(unburned_carbon_kg_per_kg)
    hhv = np.asarray(fuel.hhv_j_per_kg) if fuel_hhv_j_per_kg is None else _arr(fuel_hhv_j_per_kg)
    with np.errstate(invalid="ignore"):
        hhv = np.where(hhv > 0, hhv, np.nan)
    kappa = chemical_exergy.element_exergy_offsets_j_per_mol(t0, p0)

    excess = _arr(combustion.excess_air_from_o2(_arr(flue_gas_o2), ultimate, o2_basis, omega, ubc))
    fg = combustion.flue_gas(ultimate, excess, omega, ubc)
    products = fg.amounts_mol_per_kg
    air = fg.air_amounts_mol_per_kg

    mixtures = {"air": gas.Mixture(air), "products": gas.Mixture(products)}
    kappa_sums = {
        "air": _kappa_sum(_elements(air), kappa),
        "products": _kappa_sum(_elements(products), kappa),
    }

    def stream(name, t):
        h = mixtures[name].enthalpy(t)
        s = mixtures[name].entropy(t, p0)
        return h, s, h - t0 * s + kappa_sums[name]

    # Fuel as fired (per kg): enthalpy from its HHV, exergy from its composition, the
    # entropy the two imply.
    cp_f = fuel.specific_heat_j_per_kg_k or 0.0
    h_f = _arr(combustion.fuel_enthalpy_j_per_kg(fuel, t_fuel, hhv))
    with np.errstate(invalid="ignore", divide="ignore"):
        ex_physical = cp_f * ((t_fuel - t0) - t0 * np.log(t_fuel / t0))
    ex_f = fuel.chemical_exergy_j_per_kg * hhv / fuel.hhv_j_per_kg + ex_physical
    moles = ultimate.moles_per_kg()
    fuel_elements = {
        "C": moles["C"],
        "H": moles["H"] + 2.0 * moles["H2O"],
        "O": moles["O"] + moles["H2O"],
        "N": moles["N"],
        "S": moles["S"],
    }
    s_f = (h_f + _kappa_sum(fuel_elements, kappa) - ex_f) / t0

    # Unburned carbon: graphite at fuel temperature.
    graphite = gas.CONDENSED_PHASES["C(gr)"]
    n_ubc = ubc / gas.ATOMIC_MASS_KG_PER_MOL["C"]
    h_ubc = n_ubc * combustion.graphite_enthalpy_j_per_mol(t_fuel)
    with np.errstate(invalid="ignore", divide="ignore"):
        s_ubc = n_ubc * (
            graphite.s_standard_j_per_mol_k + graphite.cp_j_per_mol_k * np.log(t_fuel / gas.T_REF_K)
        )
    ex_ubc = h_ubc - t0 * s_ubc + n_ubc * kappa["C"]
    h_b, s_b, ex_b = h_f - h_ubc, s_f - s_ubc, ex_f - ex_ubc

    h_a1, s_a1, ex_a1 = stream("air", t_air)
    h_a2, s_a2, ex_a2 = stream("air", t_hot)

    t_ad = mixtures["products"].temperature(h_b + h_a2, 2000.0)
    h_pad, s_pad, ex_pad = stream("products", t_ad)
    h_pfg, s_pfg, ex_pfg = stream("products", t_fg)
    _, _, ex_p0 = stream("products", t0)

    # Water/steam and the heat leaving, per kg of fuel.
    q_w = _arr(water_heat_absorbed_w) / m_f
    ex_w = _arr(water_exergy_gain_w) / m_f
    ds_w = (q_w - ex_w) / t0
    q_surf = _arr(surface_loss_fraction) * hhv
    with np.errstate(invalid="ignore", divide="ignore"):
        ex_surf = q_surf * (1.0 - t0 / t_surf)
        gas_dh = h_pad - h_pfg
        t_gm = gas_dh / (s_pad - s_pfg)
    q_imb = gas_dh - (h_a2 - h_a1) - q_w - q_surf
    with np.errstate(invalid="ignore", divide="ignore"):
        ex_imb = q_imb * (1.0 - t0 / t_gm)

        per_kg = {
            "exergy_destroyed_combustion_w": ex_b + ex_a2 - ex_pad,
            "exergy_destroyed_heat_transfer_w": (ex_pad - ex_pfg)
            - (ex_a2 - ex_a1)
            - ex_w
            - ex_surf
            - ex_imb,
            "exergy_destroyed_unaccounted_w": ex_imb,
            "exergy_lost_stack_thermal_w": ex_pfg - ex_p0,
            "exergy_lost_stack_chemical_w": ex_p0,
            "exergy_lost_surface_w": ex_surf,
            "exergy_lost_unburned_w": ex_ubc,
            "sgen_combustion_w_per_k": s_pad - s_b - s_a2,
            "sgen_heat_transfer_w_per_k": (s_pfg - s_pad)
            + (s_a2 - s_a1)
            + ds_w
            + q_surf / t_surf
            + q_imb / t_gm,
            "sgen_unaccounted_w_per_k": q_imb / t0 - q_imb / t_gm,
        }
    columns: dict[str, np.ndarray] = {
        "excess_air": excess,
        "adiabatic_flame_temperature_k": t_ad,
        "exergy_fuel_w": m_f * ex_f,
        "exergy_air_w": m_f * ex_a1,
        "exergy_water_gain_w": m_f * ex_w,
    }
    columns.update({name: m_f * value for name, value in per_kg.items()})
    columns["exergy_destroyed_w"] = sum(columns[c] for c in DESTROYED_COLUMNS)
    columns["exergy_lost_w"] = sum(columns[c] for c in LOST_COLUMNS)
    columns["sgen_w_per_k"] = sum(columns[c] for c in SGEN_COLUMNS)
    columns["energy_imbalance_w"] = m_f * q_imb
    columns["gas_mean_temperature_k"] = t_gm

    inputs = (
        fuel_mass_flow_kg_per_s, flue_gas_o2, flue_gas_temperature_k, air_temperature_k,
        water_heat_absorbed_w, water_exergy_gain_w, humidity_ratio, t0_k, p0_pa,
        fuel_temperature_k, burner_air_temperature_k, surface_loss_fraction,
        surface_temperature_k, unburned_carbon_kg_per_kg, fuel_hhv_j_per_kg,
    )  # fmt: skip
    index = next((v.index for v in inputs if isinstance(v, pd.Series)), None)
    shape = np.broadcast_shapes(*(np.shape(v) for v in columns.values()))
    n = int(np.prod(shape)) if shape else 1
    data = {
        k: np.broadcast_to(np.asarray(v, dtype=float), shape).reshape(n) for k, v in columns.items()
    }
    return pd.DataFrame(data, index=index if index is not None and len(index) == n else None)
