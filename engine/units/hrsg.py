"""Heat-recovery steam generator: heat recovered, effectiveness, pinch and approach, second law.

The boundary encloses the HRSG casing from the gas inlet (a gas turbine's exhaust, or
any hot gas) to the stack, with an optional duct burner at the inlet and one or more
pressure levels on the water/steam side, each entered by feedwater (or cold-reheat steam)
and left by steam. Heat lost through the casing leaves at the dead-state temperature
T0.

Gas side. The gas is an ideal-gas mixture of :mod:`engine.gas`: humid air
(``gas_composition: air``, the default, close enough for a lean exhaust) or the flue
gas of the unit's fuel at an excess air (``gas_composition: flue_gas``; the excess air
from the measured ``gas_in_o2``, dry basis, or the ``gas_excess_air`` parameter). A
duct burner burns the unit's fuel (the same fuel as the gas turbine upstream, the usual
arrangement) completely in the gas, at the gas inlet, adiabatically.

Gas flow. The pipeline computes each unit from its own tags, so an HRSG cannot read the
gas turbine's computed exhaust flow; bind ``gas_flow`` to a tag that carries it (a
flow computed in the plant's control system, or a historian calculation), or leave it
unbound: the gas flow then follows from the HRSG's own heat balance (water-side heat
plus the expected casing loss equals the gas enthalpy drop), and that balance is not
checked (``energy_balance_error`` = 0).

Water side. A pressure level is the port group ``level`` (``level1_steam_flow``, ...);
number the levels in the order the gas meets their evaporators (level 1 the highest
pressure, next to the gas inlet). A reheater is a level whose feedwater is the
cold-reheat steam (it has no evaporator: pinch and approach are NaN). A level's steam
temperature at or up to :data:`SATURATED_STEAM_MARGIN_K` below the saturation
temperature of its steam pressure is read as saturated vapour (a drum delivering
saturated steam); further below, the outlet is taken as liquid (a preheater level).

Pinch and approach (definitions as in [1]_): approach = saturation temperature at drum
pressure minus the water temperature leaving the economizer (needs
``level<n>_economizer_out_temperature``); pinch = gas temperature leaving the level's
evaporator minus that saturation temperature. The gas temperature leaving an evaporator
is not measured; it comes from an energy balance from the gas inlet (after any duct
firing), assuming (i) the gas meets each level's superheater and evaporator, then its
economizer, before the next level's (exact for a single pressure level; an
approximation for interleaved multi-pressure tube banks), (ii) the gas gives up heat in
proportion to the heat the water takes in each section (casing loss and any imbalance
spread evenly over the gas path), (iii) water enters the evaporator at the measured
economizer-outlet temperature, or saturated when that is not bound, and (iv) blowdown is
neglected (the level's steam flow passes the evaporator).

References
----------
.. [1] ASME PTC 4.4-2008, "Gas Turbine Heat Recovery Steam Generators": the HRSG
   boundary, gas-side and water-side energy balances, gas flow from the HRSG heat
   balance, and the use of pinch and approach temperatures in the performance model.
   Section numbers from memory; the definitions are the trade's.
.. [2] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Ch. 3 (exergy balance; exergetic efficiency of a heat exchanger as the exergy
   gained by the cold stream over the exergy given up by the hot stream; Gouy-Stodola,
   Eq. 3.24).
.. [3] F. P. Incropera, D. P. DeWitt, T. L. Bergman, A. S. Lavine, "Fundamentals of Heat
   and Mass Transfer", 6th ed., Wiley, 2007, Sec. 11.4 (heat-exchanger effectiveness:
   actual heat over the maximum possible, the hot stream cooled to the cold stream's
   inlet temperature). Section from memory.
.. [4] IAPWS R7-97(2012), IAPWS-IF97 (water and steam, via :mod:`engine.steam`).
.. [5] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical
   and Metallurgical Processes", Hemisphere, 1988, Appendix Table I (gas and fuel
   chemical exergy, via :mod:`engine.units._gas_exergy`).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine import checks, chemical_exergy, combustion, humid_air, steam
from engine.catalogue import (
    ModelContext,
    Parameter,
    PortGroup,
    ResultColumn,
    Role,
    TextParameter,
    UnitKind,
)
from engine.exergy import flow_exergy, lost_work
from engine.units._fuel_input import FUEL_ROLES, fuel_input
from engine.units._gas_exergy import GasStream, fuel_products_mol_per_kg, fuel_state
from engine.units.gas_turbine import ISO_HUMIDITY_RATIO

KIND_NAME = "hrsg"

MAX_LEVELS = 4
"""Most pressure levels (reheat counted as one): triple pressure with reheat."""

SATURATED_STEAM_MARGIN_K = 3.0
"""Steam temperature up to this far below saturation is read as saturated vapour. [K]

Our choice: a drum's saturated-steam temperature reads within a kelvin or two of
saturation (instrument and pressure-tap error); a subcooled-water outlet of a preheater
section is tens of kelvin below it.
"""

HEAT_LOSS_FRACTION = 0.005
"""Default casing heat loss as a fraction of the gas enthalpy drop. [-]

Our choice of an order of magnitude: an insulated HRSG casing loses a few tenths of a
percent of the heat it transfers.
"""

GAS_EXCESS_AIR = 2.0
"""Default excess air of a flue-gas composition (200 %: air factor 3). [-]

Common practice: a gas turbine's exhaust holds about 13-15 % O2 by volume, which for
natural gas is an excess air of roughly 150-250 % (from memory).
"""

ENERGY_BALANCE_TOLERANCE = 0.03
"""Default largest |energy_balance_error| (gas flow bound) before ENERGY_BALANCE_OPEN. [-]

Our choice: a gas flow taken from a gas turbine's heat balance is uncertain by 2-3 %
(from memory of PTC 22 / PTC 4.4 uncertainty analyses), more than the water side.
"""

MASS_BALANCE_TOLERANCE = 0.02
"""Default largest relative water mass-balance error before ENERGY_BALANCE_OPEN. [-]
Common practice, as for the boiler."""

SGEN_TOLERANCE = checks.SGEN_TOLERANCE

CARNOT_ROUND_OFF = 1e-12
"""Margin on eta_2 and the effectiveness above 1 before ABOVE_CARNOT (round-off only). [-]"""

_AIR = "air"
_FLUE_GAS = "flue_gas"
_HS = ("h", "s")

_LEVEL_NOTE = " Per pressure level: level1_..., level2_..., numbered from the gas inlet."

LEVEL_GROUP = PortGroup(
    "level",
    (
        Role(
            "feedwater_flow",
            "kg/s",
            required=False,
            description=(
                "Feedwater mass flow entering the level; its steam flow when not bound "
                "(blowdown neglected)."
            ),
        ),
        Role("feedwater_pressure", "Pa", description="Feedwater (or cold-reheat) pressure in."),
        Role(
            "feedwater_temperature", "K", description="Feedwater (or cold-reheat) temperature in."
        ),
        Role("steam_flow", "kg/s", description="Steam mass flow leaving the level."),
        Role("steam_pressure", "Pa", description="Steam pressure at the level's outlet."),
        Role("steam_temperature", "K", description="Steam temperature at the level's outlet."),
        Role(
            "drum_pressure",
            "Pa",
            required=False,
            description=(
                "Drum (evaporator) pressure, fixing the saturation temperature of pinch and "
                "approach; the steam pressure when not bound."
            ),
        ),
        Role(
            "economizer_out_temperature",
            "K",
            required=False,
            description=(
                "Water temperature leaving the economizer (entering the drum); gives the "
                "approach. When not bound the approach is NaN and the pinch assumes zero "
                "approach."
            ),
        ),
    ),
    min_ports=1,
    max_ports=MAX_LEVELS,
    description="A pressure level (or a reheater)." + _LEVEL_NOTE,
)

_DUCT_NAMES = {f"duct_{role.name}": role.name for role in FUEL_ROLES}

ROLES: tuple[Role, ...] = (
    Role("gas_in_temperature", "K", description="Gas temperature entering the HRSG."),
    Role("gas_out_temperature", "K", description="Gas temperature leaving to the stack."),
    Role(
        "gas_flow",
        "kg/s",
        required=False,
        description=(
            "Gas mass flow entering (a gas turbine's exhaust flow from a tag). When not "
            "bound, the flow comes from the HRSG heat balance and the balance is not checked."
        ),
    ),
    Role(
        "gas_in_pressure",
        "Pa",
        required=False,
        description=(
            "Absolute gas pressure at the inlet (ambient plus the HRSG's pressure drop); "
            "the dead-state pressure p0 when not bound. The stack is at p0."
        ),
    ),
    Role(
        "gas_in_o2",
        "1",
        required=False,
        description=(
            "O2 mole fraction of the inlet gas, dry basis; with gas_composition flue_gas it "
            "sets the excess air (else gas_excess_air)."
        ),
    ),
    Role(
        "duct_fuel_mass_flow",
        "kg/s",
        required=False,
        description=(
            "Duct-burner fuel mass flow (the unit's fuel); 0 with the burner off. Binding "
            "either duct-fuel flow makes the fuel required."
        ),
    ),
    Role(
        "duct_fuel_volume_flow",
        "m^3/s",
        required=False,
        description=(
            "Duct-burner fuel volume flow at the fuel's metering reference conditions; the "
            "mass flow wins where both are bound."
        ),
    ),
    Role(
        "duct_fuel_hhv",
        "J/kg",
        required=False,
        description="Measured higher heating value of the duct-burner fuel per interval.",
    ),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "heat_loss_fraction",
        "1",
        HEAT_LOSS_FRACTION,
        description=(
            "Casing heat loss as a fraction of the gas enthalpy drop, expected by the heat "
            "balance. Default 0.005, our choice."
        ),
        minimum=0.0,
        maximum=0.2,
    ),
    Parameter(
        "gas_excess_air",
        "1",
        GAS_EXCESS_AIR,
        description=(
            "Excess air of the flue-gas composition when gas_in_o2 is not bound. Default "
            "2.0, common practice for a gas-turbine exhaust."
        ),
        minimum=0.0,
        maximum=20.0,
    ),
    Parameter(
        "air_humidity_ratio",
        "1",
        ISO_HUMIDITY_RATIO,
        description=(
            "Humidity ratio of the air in the gas (either composition) [kg/kg]. Default: "
            "that of the ISO 2314 ambient, 15 degC, 60 %, 101.325 kPa."
        ),
        minimum=0.0,
        maximum=0.1,
    ),
    Parameter(
        "energy_balance_tolerance",
        "1",
        ENERGY_BALANCE_TOLERANCE,
        description=(
            "Largest absolute energy_balance_error before the balance is flagged open (only "
            "checkable with gas_flow bound). Default 0.03, our choice."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    Parameter(
        "mass_balance_tolerance",
        "1",
        MASS_BALANCE_TOLERANCE,
        description=(
            "Largest relative water mass-balance error (feedwater vs steam) before the "
            "balance is flagged open. Default 0.02, common practice."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    checks.sgen_tolerance_parameter("exergy_in_w / T0"),
)

TEXT_PARAMETERS: tuple[TextParameter, ...] = (
    TextParameter(
        "gas_composition",
        (_AIR, _FLUE_GAS),
        _AIR,
        description=(
            "Inlet gas: 'air' (humid air) or 'flue_gas' (the unit's fuel burnt at the excess "
            "air of gas_in_o2 or gas_excess_air; needs the fuel)."
        ),
    ),
)


def _level_results(k: int) -> tuple[ResultColumn, ...]:
    return (
        ResultColumn(f"level{k}_heat_w", "W", f"Heat taken by the water/steam of level {k}."),
        ResultColumn(
            f"level{k}_evaporator_gas_out_temperature_k",
            "K",
            f"Gas temperature leaving the evaporator of level {k} (heat balance).",
        ),
        ResultColumn(
            f"level{k}_pinch_k",
            "K",
            f"Pinch of level {k}: evaporator gas-out temperature minus saturation temperature.",
        ),
        ResultColumn(
            f"level{k}_approach_k",
            "K",
            f"Approach of level {k}: saturation minus economizer-outlet water temperature.",
        ),
    )


RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn("gas_flow_kg_per_s", "kg/s", "Gas mass flow entering: bound, or heat balance."),
    ResultColumn(
        "fired_temperature_k",
        "K",
        "Gas temperature after the duct burner (the inlet temperature when unfired).",
    ),
    ResultColumn("duct_fuel_mass_flow_kg_per_s", "kg/s", "Duct-burner fuel mass flow (0 unfired)."),
    ResultColumn("duct_fuel_heat_input_hhv_w", "W", "Duct fuel flow times HHV."),
    ResultColumn("duct_fuel_heat_input_lhv_w", "W", "Duct fuel flow times LHV."),
    ResultColumn("heat_recovered_w", "W", "Heat taken by the water and steam, all levels."),
    ResultColumn(
        "heat_available_w",
        "W",
        "Gas enthalpy above T0 plus the duct fuel's heat release (water as vapour).",
    ),
    ResultColumn(
        "max_heat_recoverable_w",
        "W",
        "Heat the gas (after firing) gives cooling to the coldest feedwater temperature.",
    ),
    ResultColumn("effectiveness", "1", "heat_recovered_w over max_heat_recoverable_w."),
    ResultColumn("eta_1", "1", "First-law efficiency: heat_recovered_w over heat_available_w."),
    ResultColumn("stack_loss_w", "W", "Stack gas enthalpy above T0 (water as vapour)."),
    ResultColumn("heat_loss_w", "W", "Casing loss: the energy balance's closure, leaving at T0."),
    ResultColumn(
        "energy_balance_error",
        "1",
        "(heat_loss_w - expected casing loss) / gas enthalpy drop; 0 without gas_flow.",
    ),
    ResultColumn(
        "mass_balance_error", "1", "(feedwater - steam) / feedwater over the levels, all flows."
    ),
    ResultColumn("water_exergy_gain_w", "W", "Flow exergy gained by the water and steam."),
    ResultColumn(
        "gas_exergy_in_w",
        "W",
        "Thermomechanical exergy of the inlet gas relative to T0, p0 (what it offers).",
    ),
    ResultColumn("duct_fuel_exergy_w", "W", "Chemical exergy of the duct fuel burnt."),
    ResultColumn("exergy_in_w", "W", "Exergy supplied: gas_exergy_in_w plus duct_fuel_exergy_w."),
    ResultColumn(
        "eta_2",
        "1",
        "Water exergy gain over the gas's exergy drop plus the duct fuel exergy.",
    ),
    ResultColumn(
        "exergy_recovery_ratio",
        "1",
        "Water exergy gain over exergy_in_w (the stack loss counted too).",
    ),
    ResultColumn(
        "exergy_destroyed_duct_burner_w", "W", "Exergy destroyed by combustion in the duct burner."
    ),
    ResultColumn(
        "exergy_destroyed_heat_transfer_w",
        "W",
        "Exergy destroyed in heat transfer, gas pressure drop and casing loss.",
    ),
    ResultColumn(
        "exergy_lost_stack_w",
        "W",
        "Exergy leaving with the stack gas beyond the inlet gas's chemical exergy.",
    ),
    ResultColumn("exergy_destroyed_and_lost_w", "W", "exergy_in_w minus the water exergy gain."),
    ResultColumn("sgen_w_per_k", "W/K", "Entropy generation rate (entropy balance)."),
    ResultColumn("lost_work_w", "W", "T0 times entropy generation (Gouy-Stodola)."),
    *(column for k in range(1, MAX_LEVELS + 1) for column in _level_results(k)),
)


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray:
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def _optional(inputs: pd.DataFrame, name: str, default: np.ndarray) -> np.ndarray:
    if name not in inputs.columns:
        return np.asarray(default, dtype=float)
    return _column(inputs, name)


def _levels(inputs: pd.DataFrame) -> list[int]:
    ports = sorted({parsed[0] for c in inputs.columns if (parsed := LEVEL_GROUP.parse(c))})
    beyond = [k for k in ports if not 1 <= k <= MAX_LEVELS]
    if beyond:
        raise ValueError(
            f"levels are numbered 1 to {MAX_LEVELS}; got " + ", ".join(f"level{k}" for k in beyond)
        )
    return ports


def _steam_out(p: np.ndarray, t: np.ndarray, t_sat: np.ndarray) -> tuple[np.ndarray, ...]:
    """h, s and in_range of a level's outlet: saturated vapour within the margin below T_sat."""
    state = steam.from_pt(p, t, _HS)
    vapour = steam.saturated_vapour(p, _HS)
    with np.errstate(invalid="ignore"):
        saturated = (t <= t_sat) & (t >= t_sat - SATURATED_STEAM_MARGIN_K)
    h = np.where(saturated, vapour.h, state.h)
    s = np.where(saturated, vapour.s, state.s)
    ok = np.where(saturated, vapour.in_range, state.in_range)
    return h, s, ok


def _gas_per_kg(
    composition: str,
    inputs: pd.DataFrame,
    params: Mapping[str, float],
    context: ModelContext,
    n: int,
) -> dict[str, np.ndarray]:
    """Moles of each species per kg of inlet gas."""
    w = float(params.get("air_humidity_ratio", ISO_HUMIDITY_RATIO))
    if composition == _AIR:
        x = humid_air.mole_fractions(w)
        molar_mass = humid_air.molar_mass_kg_per_mol(w)
        return {k: np.full(n, v[0] / molar_mass[0]) for k, v in x.items()}
    fuel = context.fuel
    if fuel is None or fuel.ultimate is None:
        raise ValueError(f"gas_composition {_FLUE_GAS!r} needs the unit's fuel with a composition")
    excess = np.full(n, float(params.get("gas_excess_air", GAS_EXCESS_AIR)))
    if "gas_in_o2" in inputs.columns:
        excess = np.asarray(
            combustion.excess_air_from_o2(_column(inputs, "gas_in_o2"), fuel.ultimate, "dry", w),
            dtype=float,
        )
    fg = combustion.flue_gas(fuel.ultimate, excess, w)
    return {k: v / fg.wet_kg_per_kg for k, v in fg.amounts_mol_per_kg.items()}


def hrsg_performance(
    inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext
) -> pd.DataFrame:
    """Heat recovered, effectiveness, pinch and approach, eta_1, eta_2 and lost work of an HRSG.

    Parameters
    ----------
    inputs : DataFrame
        One row per interval, one column per bound role, SI units:
        ``gas_in_temperature`` [K], ``gas_out_temperature`` [K]; optional ``gas_flow``
        [kg/s], ``gas_in_pressure`` [Pa], ``gas_in_o2`` [-, dry], ``duct_fuel_mass_flow``
        [kg/s] and/or ``duct_fuel_volume_flow`` [m^3/s], ``duct_fuel_hhv`` [J/kg]; per
        level n, ``level<n>_feedwater_pressure`` [Pa], ``level<n>_feedwater_temperature``
        [K], ``level<n>_steam_flow`` [kg/s], ``level<n>_steam_pressure`` [Pa],
        ``level<n>_steam_temperature`` [K], optional ``level<n>_feedwater_flow`` [kg/s],
        ``level<n>_drum_pressure`` [Pa], ``level<n>_economizer_out_temperature`` [K].
    params : Mapping[str, float]
        ``heat_loss_fraction`` [-], ``gas_excess_air`` [-], ``air_humidity_ratio``
        [kg/kg] and the tolerances [-]; missing ones take the module defaults.
    context : ModelContext
        ``dead`` (T0 [K], p0 [Pa], scalar or per row); ``fuel`` (with a composition)
        when duct firing is bound or the gas is ``flue_gas``; ``text_parameters``
        (``gas_composition``: ``"air"``, the default, or ``"flue_gas"``).

    Returns
    -------
    DataFrame
        Same index as ``inputs``; the columns of :data:`RESULTS` ([W], [W/K], [kg/s],
        [K], [-]) and an integer ``flags`` column of :class:`engine.checks.Flag` bits.
        Per-level columns of levels not bound are NaN; pinch and approach are NaN for a
        level without an evaporator (feedwater at or above saturation: a reheater). A row
        with a missing or impossible input (a water/steam state outside IF97, a negative
        flow, duct firing beyond the gas's oxygen) is NaN throughout with
        ``INPUT_OUT_OF_RANGE``.

    Raises
    ------
    ValueError
        For configuration errors concerning every row: duct firing bound or
        ``flue_gas`` chosen without a fuel with a composition, no level bound, a level
        numbered outside 1 to :data:`MAX_LEVELS`.

    Notes
    -----
    Gas streams per second: inlet gas ``G`` (m_g times the per-kg composition), duct
    fuel ``m_df`` adding its products and taking its oxygen (``Δ`` per kg), fired gas
    ``F = G + m_df Δ``. Formation-basis enthalpies make the heat of reaction part of
    the balance. Water side per level, relative to liquid water at the dead state
    (as the boiler): ``Q_k = m_s (h_s - h0) - m_fw (h_fw - h0)``, ``Q_w = Σ Q_k``::

        H_F(T_fired) = H_G(T_in) + m_df h_df          (adiabatic duct burner)
        ΔH_gas = H_F(T_fired) - H_F(T_out)           heat_loss = ΔH_gas - Q_w
        energy_balance_error = (heat_loss - f ΔH_gas) / ΔH_gas
        m_g (gas_flow unbound): Q_w = (1 - f) ΔH_gas, linear in m_g
        heat_available = H_F(T_fired) - H_F(T0)      eta_1 = Q_w / heat_available
        max_heat = H_F(T_fired) - H_F(T_fw,min)      effectiveness = Q_w / max_heat ([3]_)
        stack_loss = H_F(T_out) - H_F(T0)

    Second law, every gas stream and fuel valued by ``Ex = H - T0 S + Σ N κ`` with the
    fuel entropy its exergy implies (:mod:`engine.units._gas_exergy`); the stack at p0::

        G_w = Σ m ex_water (out - in)                 (water exergy gain, IF97)
        D_burner = Ex_G(T_in, p_in) + m_df ex_df - Ex_F(T_fired, p_in)
        D_ht = Ex_F(T_fired, p_in) - Ex_F(T_out, p0) - G_w
        exergy_in = [Ex_G(T_in, p_in) - Ex_G(T0, p0)] + m_df ex_df
        exergy_lost_stack = Ex_F(T_out, p0) - Ex_G(T0, p0)
        eta_2 = G_w / [Ex_G(T_in, p_in) + m_df ex_df - Ex_F(T_out, p0)]   ([2]_)
        Sgen = S_F(T_out, p0) - S_G(T_in, p_in) - m_df s_df
               + Σ m (s - s0)_water (out - in) + heat_loss / T0
        lost_work = T0 Sgen = D_burner + D_ht          (Gouy-Stodola)

    Pinch and approach: see the module docstring for the definitions and assumptions.

    Flags: INPUT_OUT_OF_RANGE; ENERGY_BALANCE_OPEN when ``|energy_balance_error| >
    energy_balance_tolerance`` or ``|mass_balance_error| > mass_balance_tolerance``;
    NEGATIVE_ENTROPY_GENERATION when ``Sgen < -sgen_tolerance exergy_in / T0``;
    EFFICIENCY_ABOVE_ONE when ``eta_1 > 1``; ABOVE_CARNOT when ``eta_2 > 1`` or the
    effectiveness exceeds 1 (the water took more heat than the gas could give down to
    the coldest feedwater temperature).

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> row = pd.DataFrame({"gas_in_temperature": [823.15], "gas_out_temperature": [453.15],
    ...     "gas_flow": [115.0], "level1_feedwater_pressure": [45e5],
    ...     "level1_feedwater_temperature": [378.15], "level1_steam_flow": [15.0],
    ...     "level1_steam_pressure": [40e5], "level1_steam_temperature": [753.15]})
    >>> out = hrsg_performance(row, {}, ModelContext(dead_state(288.15)))
    >>> round(float(out["heat_recovered_w"].iloc[0]) / 1e6, 1)
    44.3
    >>> round(float(out["level1_pinch_k"].iloc[0]), 1)
    12.7
    """
    n = len(inputs)
    levels = _levels(inputs)
    if not levels:
        raise ValueError(f"a {KIND_NAME} needs at least one pressure level (level1_...)")
    composition = context.text_parameters.get("gas_composition", _AIR)
    loss_fraction = float(params.get("heat_loss_fraction", HEAT_LOSS_FRACTION))
    balance_tolerance = float(params.get("energy_balance_tolerance", ENERGY_BALANCE_TOLERANCE))
    mass_tolerance = float(params.get("mass_balance_tolerance", MASS_BALANCE_TOLERANCE))
    sgen_tolerance = float(params.get("sgen_tolerance", SGEN_TOLERANCE))

    dead = context.dead
    t0 = np.broadcast_to(np.asarray(dead.t0_k, dtype=float), (n,)).copy()
    p0 = np.broadcast_to(np.asarray(dead.p0_pa, dtype=float), (n,)).copy()
    h0 = np.broadcast_to(np.asarray(dead.h0_water_j_per_kg, dtype=float), (n,))
    s0 = np.broadcast_to(np.asarray(dead.s0_water_j_per_kg_k, dtype=float), (n,))
    t_in = _column(inputs, "gas_in_temperature")
    t_out = _column(inputs, "gas_out_temperature")
    p_in = _optional(inputs, "gas_in_pressure", p0)
    kappa = chemical_exergy.element_exergy_offsets_j_per_mol(t0, p0)
    valid = np.isfinite(t0) & np.isfinite(h0) & np.isfinite(s0) & (p_in > 0)

    # Duct firing: the unit's fuel, zero flow allowed (burner off).
    duct_bound = [name for name in _DUCT_NAMES if name in inputs.columns]
    m_df = np.zeros(n)
    zero = np.zeros(n)
    h_df, ex_df, s_df, duct = zero, zero, zero, None
    lhv_df, hhv_df = zero, zero
    if duct_bound:
        fuel = context.fuel
        if fuel is None or fuel.ultimate is None:
            raise ValueError(
                f"duct firing ({', '.join(duct_bound)}) needs the unit's fuel with a composition"
            )
        renamed = inputs[duct_bound].rename(columns=_DUCT_NAMES)
        if not {"fuel_mass_flow", "fuel_volume_flow"} & set(renamed.columns):
            raise ValueError("duct_fuel_hhv is bound without a duct-fuel flow")
        fin = fuel_input(renamed, fuel, KIND_NAME)
        raw_mass = _optional(renamed, "fuel_mass_flow", np.full(n, np.nan))
        raw_volume = _optional(renamed, "fuel_volume_flow", np.full(n, np.nan))
        off = (raw_mass == 0) | (~np.isfinite(raw_mass) & (raw_volume == 0))
        m_df = np.where(off, 0.0, fin.mass_flow_kg_per_s)
        hhv = np.where(np.isfinite(fin.hhv_j_per_kg), fin.hhv_j_per_kg, fuel.hhv_j_per_kg)
        f = fuel_state(fuel, hhv, t0, t0, kappa)
        h_df, ex_df, s_df = f.enthalpy_j_per_kg, f.exergy_j_per_kg, f.entropy_j_per_kg_k
        hhv_df = np.where(off, 0.0, fin.heat_input_hhv_w)
        lhv_df = np.where(off, 0.0, fin.heat_input_lhv_w)
        duct = GasStream(fuel_products_mol_per_kg(fuel), kappa)
        valid &= np.isfinite(m_df)

    # Water side, level by level.
    level_heat: dict[int, np.ndarray] = {}
    level_shev: dict[int, np.ndarray] = {}
    level_tsat: dict[int, np.ndarray] = {}
    level_approach: dict[int, np.ndarray] = {}
    level_evaporating: dict[int, np.ndarray] = {}
    q_w = np.zeros(n)
    g_w = np.zeros(n)
    ds_w = np.zeros(n)
    m_fw_total = np.zeros(n)
    m_s_total = np.zeros(n)
    t_fw_min = np.full(n, np.inf)
    for k in levels:
        name = LEVEL_GROUP.role_name
        m_s = _column(inputs, name(k, "steam_flow"))
        p_s = _column(inputs, name(k, "steam_pressure"))
        t_s = _column(inputs, name(k, "steam_temperature"))
        p_fw = _column(inputs, name(k, "feedwater_pressure"))
        t_fw = _column(inputs, name(k, "feedwater_temperature"))
        m_fw = _optional(inputs, name(k, "feedwater_flow"), m_s)
        p_drum = _optional(inputs, name(k, "drum_pressure"), p_s)
        t_sat_s = np.asarray(steam.saturation_temperature(p_s), dtype=float)
        h_s, s_s, ok_s = _steam_out(p_s, t_s, t_sat_s)
        fw = steam.from_pt(p_fw, t_fw, _HS)
        t_sat = np.asarray(steam.saturation_temperature(p_drum), dtype=float)
        with np.errstate(invalid="ignore"):
            ok = ok_s & fw.in_range & (m_s >= 0) & (m_fw >= 0)
            evaporating = (t_fw < t_sat) & (t_s >= t_sat - SATURATED_STEAM_MARGIN_K)
        valid &= ok
        level_heat[k] = m_s * (h_s - h0) - m_fw * (fw.h - h0)
        g_w = g_w + m_s * flow_exergy(h_s, s_s, dead) - m_fw * flow_exergy(fw.h, fw.s, dead)
        ds_w = ds_w + m_s * (s_s - s0) - m_fw * (fw.s - s0)
        q_w = q_w + level_heat[k]
        m_fw_total = m_fw_total + m_fw
        m_s_total = m_s_total + m_s
        t_fw_min = np.fmin(t_fw_min, t_fw)
        # Superheater + evaporator duty: from the water entering the drum.
        h_liquid_sat = steam.saturated_liquid(p_drum, ("h",)).h
        if name(k, "economizer_out_temperature") in inputs.columns:
            t_eco = _column(inputs, name(k, "economizer_out_temperature"))
            with np.errstate(invalid="ignore"):
                below = t_eco < t_sat
            h_eco = np.where(below, steam.from_pt(p_drum, t_eco, ("h",)).h, h_liquid_sat)
            level_approach[k] = t_sat - t_eco
        else:
            h_eco = h_liquid_sat
            level_approach[k] = np.full(n, np.nan)
        level_shev[k] = m_s * (h_s - h_eco)
        level_tsat[k] = t_sat
        level_evaporating[k] = evaporating

    # Gas side, per kg of inlet gas, then per second.
    per_kg = _gas_per_kg(composition, inputs, params, context, n)
    gas_kg = GasStream(per_kg, kappa)
    with np.errstate(all="ignore"):
        if "gas_flow" in inputs.columns:
            m_g = _column(inputs, "gas_flow")
        else:
            duct_release = m_df * (h_df - duct.enthalpy(t_out)) if duct is not None else np.zeros(n)
            m_g = (q_w / (1.0 - loss_fraction) - duct_release) / (
                gas_kg.enthalpy(t_in) - gas_kg.enthalpy(t_out)
            )
        amounts = {k: m_g * v for k, v in per_kg.items()}
        inlet = GasStream(amounts, kappa)
        fired_amounts = dict(amounts)
        if duct is not None:
            for species, v in duct.amounts.items():
                fired_amounts[species] = fired_amounts.get(species, 0.0) + m_df * v
        enough_o2 = fired_amounts["O2"] >= 0
        fired_amounts["O2"] = np.where(enough_o2, fired_amounts["O2"], np.nan)
        fired = GasStream(fired_amounts, kappa)

        h_g_in = inlet.enthalpy(t_in)
        h_fired_in = h_g_in + m_df * h_df
        t_fired = t_in
        if duct is not None:
            # The burner off is the unfired HRSG exactly, not a solver's round-off from it.
            solved = fired.mixture.temperature(h_fired_in, t_in + 100.0)
            t_fired = np.where(m_df > 0, solved, t_in)
        h_f_out = fired.enthalpy(t_out)
        h_f_0 = fired.enthalpy(t0)
        dh_gas = h_fired_in - h_f_out
        heat_loss = dh_gas - q_w
        balance_error = (
            (heat_loss - loss_fraction * dh_gas) / dh_gas
            if "gas_flow" in inputs.columns
            else np.zeros(n)
        )
        mass_error = (m_fw_total - m_s_total) / m_fw_total
        heat_available = h_fired_in - h_f_0
        max_heat = h_fired_in - fired.enthalpy(t_fw_min)
        stack_loss = h_f_out - h_f_0

        # Exergy route.
        ex_g_in = inlet.exergy(t_in, p_in, t0)
        ex_g_0 = inlet.exergy(t0, p0, t0)
        ex_fired = fired.exergy(t_fired, p_in, t0)
        ex_stack = fired.exergy(t_out, p0, t0)
        duct_exergy = m_df * ex_df
        d_burner = ex_g_in + duct_exergy - ex_fired
        d_ht = ex_fired - ex_stack - g_w
        exergy_in = (ex_g_in - ex_g_0) + duct_exergy
        # Entropy route.
        sgen = (
            fired.entropy(t_out, p0)
            - inlet.entropy(t_in, p_in)
            - m_df * s_df
            + ds_w
            + heat_loss / t0
        )

        # Gas temperature leaving each evaporator: heat given up in proportion to the
        # water's, levels in gas-path order.
        ratio = dh_gas / q_w
        upstream = np.zeros(n)
        evaporator_gas_out: dict[int, np.ndarray] = {}
        for k in levels:
            h_gas = h_fired_in - ratio * (upstream + level_shev[k])
            t_gas = fired.mixture.temperature(h_gas, t_fired)
            evaporator_gas_out[k] = np.where(level_evaporating[k], t_gas, np.nan)
            upstream = upstream + level_heat[k]

    with np.errstate(invalid="ignore"):
        valid &= (
            np.isfinite(m_g)
            & (m_g > 0)
            & enough_o2
            & np.isfinite(t_fired)
            & np.isfinite(h_f_out)
            & np.isfinite(h_f_0)
            & np.isfinite(sgen)
            & np.isfinite(q_w)
        )

    with np.errstate(all="ignore"):
        results: dict[str, np.ndarray] = {
            "gas_flow_kg_per_s": m_g,
            "fired_temperature_k": t_fired,
            "duct_fuel_mass_flow_kg_per_s": m_df,
            "duct_fuel_heat_input_hhv_w": hhv_df,
            "duct_fuel_heat_input_lhv_w": lhv_df,
            "heat_recovered_w": q_w,
            "heat_available_w": heat_available,
            "max_heat_recoverable_w": max_heat,
            "effectiveness": q_w / max_heat,
            "eta_1": q_w / heat_available,
            "stack_loss_w": stack_loss,
            "heat_loss_w": heat_loss,
            "energy_balance_error": balance_error,
            "mass_balance_error": mass_error,
            "water_exergy_gain_w": g_w,
            "gas_exergy_in_w": ex_g_in - ex_g_0,
            "duct_fuel_exergy_w": duct_exergy,
            "exergy_in_w": exergy_in,
            "eta_2": g_w / (ex_g_in + duct_exergy - ex_stack),
            "exergy_recovery_ratio": g_w / exergy_in,
            "exergy_destroyed_duct_burner_w": d_burner,
            "exergy_destroyed_heat_transfer_w": d_ht,
            "exergy_lost_stack_w": ex_stack - ex_g_0,
            "exergy_destroyed_and_lost_w": exergy_in - g_w,
            "sgen_w_per_k": sgen,
            "lost_work_w": lost_work(sgen, t0),
        }
        for k in range(1, MAX_LEVELS + 1):
            bound = k in levels
            nan = np.full(n, np.nan)
            gas_out = evaporator_gas_out[k] if bound else nan
            results[f"level{k}_heat_w"] = level_heat[k] if bound else nan
            results[f"level{k}_evaporator_gas_out_temperature_k"] = gas_out
            results[f"level{k}_pinch_k"] = gas_out - level_tsat[k] if bound else nan
            results[f"level{k}_approach_k"] = (
                np.where(level_evaporating[k], level_approach[k], np.nan) if bound else nan
            )
    frame = pd.DataFrame(
        {c.name: np.where(valid, results[c.name], np.nan) for c in RESULTS}, index=inputs.index
    )
    frame["flags"] = checks.combine(
        checks.input_out_of_range(valid),
        checks.balance_open(frame["energy_balance_error"], balance_tolerance),
        checks.balance_open(frame["mass_balance_error"], mass_tolerance),
        checks.negative_entropy_generation(
            frame["sgen_w_per_k"], frame["exergy_in_w"] / t0, sgen_tolerance
        ),
        checks.efficiency_above_one(frame["eta_1"]),
        checks.above_carnot(frame["eta_2"], 1.0 + CARNOT_ROUND_OFF),
        checks.above_carnot(frame["effectiveness"], 1.0 + CARNOT_ROUND_OFF),
    )
    return frame


KIND = UnitKind(
    name=KIND_NAME,
    title="Heat-recovery steam generator",
    roles=ROLES,
    parameters=PARAMETERS,
    results=RESULTS,
    model=hrsg_performance,
    port_groups=(LEVEL_GROUP,),
    text_parameters=TEXT_PARAMETERS,
    fuel_roles=("duct_fuel_mass_flow", "duct_fuel_volume_flow"),
    load_result="heat_recovered_w",
    description=(
        "Heat-recovery steam generator behind a gas turbine, one to four pressure levels "
        "(a reheater as a level), optional duct firing: heat recovered, effectiveness, "
        "eta_1, pinch and approach per level, eta_2 (water exergy gain over the gas's "
        "exergy drop plus duct-fuel exergy), exergy destroyed in the duct burner and in "
        "heat transfer, stack exergy lost, entropy generation and lost work. Gas flow "
        "from a tag or from the HRSG heat balance."
    ),
)
"""The HRSG's catalogue entry."""
