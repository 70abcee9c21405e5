"""Forward models: from an operating state to what a unit's instruments would read.

The unit models of :mod:`engine.units` go from measurements to efficiencies. The
functions here go the other way, for simulators, tests and what-if studies: given the
state a unit is in (load, pressures, temperatures, flue-gas oxygen and temperature,
section efficiencies), they return the flows, temperatures and power its instruments
would measure if every instrument were perfect. Each is the exact inverse of the
corresponding engine route, built from the same property functions, so that the
measurements it produces make the engine's balances close:

* :func:`boiler_forward`: fuel flow from the heat absorbed by water and steam (ASME
  PTC 4 input-output form) and the efficiency by the heat-loss method (PTC 4 losses and
  credits, :func:`engine.heatloss.heat_loss_efficiency`). The direct and the indirect
  method of :func:`engine.units.boiler.boiler_direct` therefore agree on its output.
* :func:`turbine_forward`: port enthalpies along an expansion line from section
  isentropic efficiencies, port temperatures (saturation for a wet port), shaft power
  from the energy balance and generator output through the generator model of
  :func:`engine.units.steam_turbine.shaft_power`.

Pure and vectorised over rows: arrays or Series in (a Series index is kept), a DataFrame
out; NaN in a row gives NaN in that row's outputs.

References
----------
.. [1] ASME PTC 4-2013, "Fired Steam Generators", Sec. 5-4 (output: energy absorbed by
   the water and steam streams), Sec. 5-7 (efficiency), Sec. 5-14 and 5-15 (losses and
   credits). Section numbers from memory.
.. [2] ASME PTC 6-2004, "Steam Turbines": generator output and the expansion line (the
   states of the extraction steam lie on it). Clause numbers not quoted.
.. [3] IAPWS R7-97(2012), IAPWS-IF97: every water and steam property (via
   :mod:`engine.steam`).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from engine import heatloss, steam
from engine.fuels import FuelProperties
from engine.units.steam_turbine import GENERATOR_EFFICIENCY

_HS = ("h", "s")


def _arrays(*values) -> tuple[list[np.ndarray], pd.Index | None]:
    """Flat float arrays broadcast together, and the index of the first Series input."""
    index = next((v.index for v in values if isinstance(v, pd.Series)), None)
    arrays = np.broadcast_arrays(
        *(
            v.to_numpy(dtype=float, na_value=np.nan)
            if isinstance(v, pd.Series)
            else np.asarray(v, dtype=float)
            for v in values
        )
    )
    flat = [np.array(a, dtype=float).reshape(-1) for a in arrays]
    if index is not None and len(index) != flat[0].size:
        index = None
    return flat, index


def _float(values: np.ndarray | None) -> np.ndarray:
    """A computed steam property as a float array (the state's field was requested)."""
    return np.asarray(values, dtype=float)


def boiler_forward(
    steam_flow_kg_per_s,
    steam_pressure_pa,
    steam_temperature_k,
    feedwater_pressure_pa,
    feedwater_temperature_k,
    flue_gas_o2,
    flue_gas_temperature_k,
    air_temperature_k,
    fuel: FuelProperties,
    *,
    o2_basis: str = "dry",
    humidity_ratio=heatloss.STANDARD_HUMIDITY_RATIO,
    blowdown_fraction=0.0,
    drum_pressure_pa=None,
    surface_loss_fraction=0.0,
    rated_heat_output_w: float = 0.0,
    unburned_carbon_kg_per_kg=0.0,
    reference_temperature_k: float = heatloss.REFERENCE_TEMPERATURE_K,
) -> pd.DataFrame:
    """Fuel and water flows of a boiler in a given state, by the heat-loss method.

    Parameters
    ----------
    steam_flow_kg_per_s : numeric
        Main steam mass flow leaving the boiler. [kg/s]
    steam_pressure_pa : numeric
        Main steam pressure. [Pa]
    steam_temperature_k : numeric
        Main steam temperature. [K]
    feedwater_pressure_pa : numeric
        Feedwater pressure at the boiler inlet. [Pa]
    feedwater_temperature_k : numeric
        Feedwater temperature at the boiler inlet. [K]
    flue_gas_o2 : numeric
        O2 in the flue gas leaving the envelope, mole fraction on ``o2_basis``. [-]
    flue_gas_temperature_k : numeric
        Flue-gas temperature leaving the envelope. [K]
    air_temperature_k : numeric
        Combustion-air temperature entering the envelope. [K]
    fuel : FuelProperties
        Fuel with an ultimate analysis (:meth:`FuelProperties.from_gas`,
        :meth:`FuelProperties.from_ultimate_analysis`); a volume flow is returned when it
        has a density.
    o2_basis : {"dry", "wet"}, default "dry"
        Basis of ``flue_gas_o2``.
    humidity_ratio : numeric, default 0.013
        Combustion-air humidity (:data:`engine.heatloss.STANDARD_HUMIDITY_RATIO`, common
        practice). [kg/kg dry air]
    blowdown_fraction : numeric, default 0
        Continuous blowdown over main steam flow. [-]
    drum_pressure_pa : numeric, optional
        Drum pressure fixing the blowdown state (saturated liquid); default the main
        steam pressure, as in :func:`engine.units.boiler.boiler_direct`. [Pa]
    surface_loss_fraction : numeric, default 0
        Surface radiation and convection loss, fraction of fuel input; at rated output
        when ``rated_heat_output_w`` is above 0. [-]
    rated_heat_output_w : float, default 0
        Heat absorbed at rated output. Above 0 the surface loss is held constant in
        watts (:func:`engine.heatloss.surface_loss_fraction_at_load`), as the boiler
        model does with the same parameter. [W]
    unburned_carbon_kg_per_kg : numeric, default 0
        Carbon left in the refuse per kg of fuel. [kg/kg]
    reference_temperature_k : float, default 298.15
        Reference temperature of the heat-loss method (PTC 4: 25 degC). [K]

    Returns
    -------
    DataFrame
        One row per input row (a Series input's index is kept):

        - ``eta_1`` [-]: efficiency, HHV basis, by the heat-loss method;
        - ``excess_air`` [-];
        - ``heat_absorbed_w`` [W];
        - ``fuel_mass_flow_kg_per_s`` [kg/s];
        - ``fuel_volume_flow_m3_per_s`` [m^3/s] at the fuel's metering reference
          (NaN without a density);
        - ``feedwater_flow_kg_per_s`` [kg/s] and ``blowdown_flow_kg_per_s`` [kg/s].

    Raises
    ------
    ValueError
        When the fuel has no ultimate analysis (the heat-loss method needs one).

    Notes
    -----
    Mass balance ``m_fw = m_ms + m_bd`` with ``m_bd = f_bd m_ms``. Output per stream
    (PTC 4 Sec. 5-4, [1]_)::

        Q_abs = m_ms h_ms + m_bd h_bd - m_fw h_fw
        eta_1 = 1 - sum(losses) + sum(credits)       (PTC 4 Sec. 5-14, 5-15)
        m_f   = Q_abs / (eta_1 HHV)                  (PTC 4 Sec. 5-7)

    so that the input-output method applied to these flows gives back ``eta_1``, and
    the heat-loss method applied to the flue-gas state gives the same number.

    Examples
    --------
    >>> from engine.fuels import FuelProperties
    >>> gas = FuelProperties.from_gas("site gas", {"CH4": 0.95, "C2H6": 0.03, "N2": 0.02})
    >>> out = boiler_forward(10.0, 6e6, 753.15, 7e6, 423.15, 0.03, 403.15, 288.15, gas)
    >>> round(float(out["eta_1"].iloc[0]), 3), round(float(out["fuel_mass_flow_kg_per_s"].iloc[0]), 3)
    (0.854, 0.6)
    """
    (m_ms, p_ms, t_ms, p_fw, t_fw, o2, t_fg, t_air, f_bd), index = _arrays(
        steam_flow_kg_per_s,
        steam_pressure_pa,
        steam_temperature_k,
        feedwater_pressure_pa,
        feedwater_temperature_k,
        flue_gas_o2,
        flue_gas_temperature_k,
        air_temperature_k,
        blowdown_fraction,
    )
    n = m_ms.size
    p_drum = p_ms if drum_pressure_pa is None else _arrays(drum_pressure_pa, m_ms)[0][0]
    h_ms = _float(steam.from_pt(p_ms, t_ms, ("h",)).h)
    h_fw = _float(steam.from_pt(p_fw, t_fw, ("h",)).h)
    h_bd = _float(steam.saturated_liquid(p_drum, ("h",)).h)
    m_bd = f_bd * m_ms
    m_fw = m_ms + m_bd
    # m_bd = 0 carries no enthalpy even where the drum state is undefined.
    q_abs = m_ms * h_ms + np.where(m_bd == 0, 0.0, m_bd * h_bd) - m_fw * h_fw

    if rated_heat_output_w > 0:
        surface = heatloss.surface_loss_fraction_at_load(
            np.broadcast_to(np.asarray(surface_loss_fraction, dtype=float), (n,)),
            q_abs / rated_heat_output_w,
        )
    else:
        surface = surface_loss_fraction
    losses = heatloss.heat_loss_efficiency(
        fuel,
        o2,
        t_fg,
        t_air,
        o2_basis=o2_basis,
        humidity_ratio=humidity_ratio,
        unburned_carbon_kg_per_kg=unburned_carbon_kg_per_kg,
        surface_loss_fraction=surface,
        reference_temperature_k=reference_temperature_k,
    )
    eta = np.broadcast_to(losses["eta_1_indirect"].to_numpy(dtype=float), (n,))
    excess = np.broadcast_to(losses["excess_air"].to_numpy(dtype=float), (n,))
    with np.errstate(invalid="ignore", divide="ignore"):
        m_fuel = np.where(eta > 0, q_abs / (eta * fuel.hhv_j_per_kg), np.nan)
        volume = m_fuel / fuel.density_kg_per_m3 if fuel.density_kg_per_m3 else np.full(n, np.nan)
    return pd.DataFrame(
        {
            "eta_1": eta,
            "excess_air": excess,
            "heat_absorbed_w": q_abs,
            "fuel_mass_flow_kg_per_s": m_fuel,
            "fuel_volume_flow_m3_per_s": volume,
            "feedwater_flow_kg_per_s": m_fw,
            "blowdown_flow_kg_per_s": m_bd,
        },
        index=index,
    )


def turbine_forward(
    inlet_flow_kg_per_s,
    inlet_pressure_pa,
    inlet_temperature_k,
    port_pressures_pa: Sequence,
    port_flows_kg_per_s: Sequence,
    exhaust_pressure_pa,
    section_efficiencies: Sequence,
    *,
    generator_efficiency: float = GENERATOR_EFFICIENCY,
    mechanical_loss_w: float = 0.0,
) -> pd.DataFrame:
    """Port states and generator output of a steam turbine on a given expansion line.

    Parameters
    ----------
    inlet_flow_kg_per_s : numeric
        Steam mass flow entering the turbine. [kg/s]
    inlet_pressure_pa : numeric
        Inlet pressure. [Pa]
    inlet_temperature_k : numeric
        Inlet temperature (superheated steam). [K]
    port_pressures_pa : sequence of numeric
        Pressure at each extraction port, in order from the inlet (falling). [Pa]
    port_flows_kg_per_s : sequence of numeric
        Steam mass flow leaving at each extraction port, same order. [kg/s]
    exhaust_pressure_pa : numeric
        Exhaust pressure. [Pa]
    section_efficiencies : sequence of numeric
        Isentropic efficiency of each section, one more than there are ports: section
        ``k`` runs from the ``(k-1)``-th port (the inlet for ``k = 1``) to the ``k``-th
        (the exhaust for the last). [-]
    generator_efficiency : float, default 0.985
        Generator output over shaft input
        (:data:`engine.units.steam_turbine.GENERATOR_EFFICIENCY`, common practice). [-]
    mechanical_loss_w : float, default 0
        Bearing and gear losses between blading and generator. [W]

    Returns
    -------
    DataFrame
        One row per input row (a Series input's index is kept): per port ``n`` (1 from
        the inlet) ``port<n>_enthalpy_j_per_kg`` [J/kg], ``port<n>_temperature_k`` [K]
        and ``port<n>_quality`` [-] (NaN when superheated); the same three for
        ``exhaust_``; ``exhaust_flow_kg_per_s`` [kg/s], ``shaft_power_w`` [W] and
        ``generator_power_w`` [W].

    Raises
    ------
    ValueError
        When the number of efficiencies is not one more than the number of ports, or
        the port pressures and flows differ in number.

    Notes
    -----
    Along the chain inlet -> ports -> exhaust, with ``a`` the upstream end of a section
    and ``b`` its downstream end (the definition the turbine model inverts, [2]_)::

        h_b = h_a - eta_s (h_a - h_s(p_b, s_a))
        m_exh = m_in - sum(m_port)
        W = m_in h_in - sum(m_port h_port) - m_exh h_exh
        P_gen = (W - L_mech) eta_gen

    A port whose enthalpy lies in the two-phase region reads the saturation temperature
    (a thermometer in wet steam shows saturation); the quality is returned beside it.
    A row whose exhaust flow would be negative is NaN.

    Examples
    --------
    >>> out = turbine_forward(10.0, 6e6, 753.15, [1.3e6], [4.0], 8e3, [0.80, 0.82],
    ...                       generator_efficiency=0.97)
    >>> round(float(out["generator_power_w"].iloc[0]) / 1e6, 2)
    7.38
    """
    port_pressures = list(port_pressures_pa)
    port_flows = list(port_flows_kg_per_s)
    etas = list(section_efficiencies)
    if len(port_pressures) != len(port_flows):
        raise ValueError(
            f"{len(port_pressures)} port pressures but {len(port_flows)} port flows; "
            "give one of each per port"
        )
    if len(etas) != len(port_pressures) + 1:
        raise ValueError(
            f"{len(etas)} section efficiencies for {len(port_pressures)} ports; "
            f"give {len(port_pressures) + 1} (one per section)"
        )
    flat, index = _arrays(
        inlet_flow_kg_per_s,
        inlet_pressure_pa,
        inlet_temperature_k,
        exhaust_pressure_pa,
        *port_pressures,
        *port_flows,
        *etas,
    )
    m_in, p_in, t_in, p_exh = flat[:4]
    k = len(port_pressures)
    p_ports = flat[4 : 4 + k]
    m_ports = flat[4 + k : 4 + 2 * k]
    eta_sections = flat[4 + 2 * k :]

    inlet = steam.from_pt(p_in, t_in, _HS)
    h_in = _float(inlet.h)
    h_a, s_a = h_in, _float(inlet.s)
    columns: dict[str, np.ndarray] = {}
    enthalpy_out = np.zeros_like(m_in)
    m_exh = m_in - sum(m_ports, np.zeros_like(m_in))
    chain = [*(("port" + str(j + 1), p_ports[j], m_ports[j]) for j in range(k))]
    chain.append(("exhaust", p_exh, m_exh))
    for (name, p_b, m_b), eta in zip(chain, eta_sections, strict=True):
        h_s = _float(steam.from_ps(p_b, s_a, ("h",)).h)
        h_b = h_a - eta * (h_a - h_s)
        state = steam.from_ph(p_b, h_b, ("s", "t", "quality"))
        x = _float(state.quality)
        with np.errstate(invalid="ignore"):
            quality = np.where((x >= 0) & (x <= 1), x, np.nan)
        columns[f"{name}_enthalpy_j_per_kg"] = h_b
        columns[f"{name}_temperature_k"] = _float(state.t)
        columns[f"{name}_quality"] = quality
        enthalpy_out = enthalpy_out + m_b * h_b
        h_a, s_a = h_b, _float(state.s)
    with np.errstate(invalid="ignore"):
        ok = m_exh >= 0
    w_shaft = np.where(ok, m_in * h_in - enthalpy_out, np.nan)
    columns["exhaust_flow_kg_per_s"] = np.where(ok, m_exh, np.nan)
    columns["shaft_power_w"] = w_shaft
    # The inverse of engine.units.steam_turbine.shaft_power at constant efficiency.
    columns["generator_power_w"] = (w_shaft - mechanical_loss_w) * generator_efficiency
    return pd.DataFrame(columns, index=index)
