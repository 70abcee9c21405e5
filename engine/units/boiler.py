"""Boiler (fired steam generator): input-output and heat-loss methods, first and second law.

The boundary is the steam-generator envelope in the sense of ASME PTC 4 (water and
steam in and out, fuel and combustion air in, flue gas and refuse out) widened to the
immediate surroundings at the dead-state temperature T0, so that flue-gas, casing and
all other losses end as heat to the environment at T0. That widening makes the exergy
*lost* with the flue gas part of ``exergy_destroyed_and_lost_w`` and lets one entropy
balance cover the whole boundary.

The input-output (direct) method always runs. When the flue-gas roles are bound
(:mod:`engine.units._boiler_indirect`), the heat-loss (indirect) method, the
direct-indirect difference and the split of the exergy destroyed and lost into its
parts are added as further columns; without them those columns are NaN.

References
----------
.. [1] ASME PTC 4-2013, "Fired Steam Generators": Sec. 5-4 (output: energy absorbed by the
   water and steam streams crossing the envelope, per stream flow times enthalpy rise),
   Sec. 5-5 (input from fuel, HHV basis, reference temperature 25 degC / 77 degF) and
   Sec. 5-7 (efficiency by the input-output method, output over input). Section numbers
   from memory.
.. [2] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley, 1996,
   Ch. 2 (entropy balance of a control volume), Ch. 3 (flow exergy, Eq. 3.13; exergy
   balance; Gouy-Stodola, Eq. 3.24; fuel chemical exergy). Equation numbers as in
   :mod:`engine.exergy`; chapter-level otherwise.
.. [3] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger, 1995,
   Ch. 2 (rational efficiency: exergy delivered over exergy supplied, here the exergy
   gained by the water and steam over the fuel exergy). Chapter from memory.
.. [4] IAPWS R7-97(2012), IAPWS-IF97 (all water and steam properties, via
   :mod:`engine.steam`).
.. [5] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical
   and Metallurgical Processes", Hemisphere, 1988, Sec. 2.5 and Appendix Table I (fuel
   chemical exergy from the composition, via :class:`engine.fuels.FuelProperties`).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine import checks, steam
from engine.catalogue import ModelContext, Parameter, ResultColumn, Role, UnitKind
from engine.exergy import carnot_efficiency, flow_exergy, lost_work
from engine.units import _boiler_indirect as indirect
from engine.units._fuel_input import (
    FUEL_ALTERNATIVES,
    FUEL_ROLES,
    fuel_input,
    heating_value_j_per_kg,
)

MASS_BALANCE_TOLERANCE = 0.02
"""Default largest relative water mass-balance error before ENERGY_BALANCE_OPEN. [-]

Common practice: about twice the ~1 % uncertainty of a plant-grade feedwater or steam
flow meter; two such meters disagree by up to ~2 % without either being faulty.
"""

SGEN_TOLERANCE = checks.SGEN_TOLERANCE

KIND_NAME = "boiler"

_REHEAT_ROLES = (
    "reheat_flow",
    "reheat_in_pressure",
    "reheat_in_temperature",
    "reheat_out_pressure",
    "reheat_out_temperature",
)
_SPRAY_ROLES = ("spray_flow", "spray_pressure", "spray_temperature")
_HS = ("h", "s")

_REHEAT_NOTE = " Reheat: bind all five reheat roles or none."
_SPRAY_NOTE = " Attemperation spray: bind all three spray roles or none."

ROLES: tuple[Role, ...] = (
    *FUEL_ROLES,
    Role("feedwater_flow", "kg/s", description="Feedwater mass flow entering the boiler."),
    Role("feedwater_pressure", "Pa", description="Feedwater pressure at the boiler inlet."),
    Role("feedwater_temperature", "K", description="Feedwater temperature at the boiler inlet."),
    Role("steam_flow", "kg/s", description="Main steam mass flow leaving the boiler."),
    Role("steam_pressure", "Pa", description="Main steam pressure at the boiler outlet."),
    Role("steam_temperature", "K", description="Main steam temperature at the boiler outlet."),
    Role(
        "blowdown_flow",
        "kg/s",
        required=False,
        description="Continuous blowdown mass flow, leaving as saturated liquid at drum pressure.",
    ),
    Role(
        "drum_pressure",
        "Pa",
        required=False,
        description=(
            "Drum pressure, fixing the blowdown state. When not bound the main steam "
            "pressure is used (which is lower by the superheater pressure drop)."
        ),
    ),
    Role(
        "reheat_flow",
        "kg/s",
        required=False,
        description="Steam mass flow through the reheater." + _REHEAT_NOTE,
    ),
    Role(
        "reheat_in_pressure",
        "Pa",
        required=False,
        description="Cold reheat pressure at the reheater inlet." + _REHEAT_NOTE,
    ),
    Role(
        "reheat_in_temperature",
        "K",
        required=False,
        description="Cold reheat temperature at the reheater inlet." + _REHEAT_NOTE,
    ),
    Role(
        "reheat_out_pressure",
        "Pa",
        required=False,
        description="Hot reheat pressure at the reheater outlet." + _REHEAT_NOTE,
    ),
    Role(
        "reheat_out_temperature",
        "K",
        required=False,
        description="Hot reheat temperature at the reheater outlet." + _REHEAT_NOTE,
    ),
    Role(
        "spray_flow",
        "kg/s",
        required=False,
        description=(
            "Superheater attemperation spray-water mass flow, entering the boundary "
            "separately from the feedwater (not included in feedwater_flow)." + _SPRAY_NOTE
        ),
    ),
    Role(
        "spray_pressure",
        "Pa",
        required=False,
        description="Spray-water pressure where it is metered." + _SPRAY_NOTE,
    ),
    Role(
        "spray_temperature",
        "K",
        required=False,
        description="Spray-water temperature where it is metered." + _SPRAY_NOTE,
    ),
    *indirect.ROLES,
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "mass_balance_tolerance",
        "1",
        MASS_BALANCE_TOLERANCE,
        description=(
            "Largest relative water mass-balance error (feedwater + spray vs steam + "
            "blowdown) before the energy balance is flagged open. Default 0.02, common "
            "practice."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    checks.sgen_tolerance_parameter("exergy supplied / T0"),
    *indirect.PARAMETERS,
)

RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn("heat_absorbed_w", "W", "Heat absorbed by water and steam (output, PTC 4 sense)."),
    ResultColumn("fuel_heat_input_hhv_w", "W", "Fuel mass flow times higher heating value."),
    ResultColumn("fuel_heat_input_lhv_w", "W", "Fuel mass flow times lower heating value."),
    ResultColumn(
        "heat_loss_w",
        "W",
        "Fuel heat input (HHV) minus heat absorbed: all losses, ending as heat at T0.",
    ),
    ResultColumn("eta_1", "1", "First-law efficiency, HHV basis (input-output method)."),
    ResultColumn("eta_1_lhv", "1", "First-law efficiency, LHV basis."),
    ResultColumn("water_exergy_gain_w", "W", "Flow exergy gained by water and steam."),
    ResultColumn("fuel_exergy_w", "W", "Chemical exergy of the fuel burnt."),
    ResultColumn(
        "exergy_supplied_w",
        "W",
        "Exergy entering with fuel and air: the fuel's chemical exergy, plus (flue-gas "
        "roles bound) the fuel's physical and the combustion air's exergy.",
    ),
    ResultColumn("eta_2", "1", "Second-law efficiency: water exergy gain over exergy supplied."),
    ResultColumn(
        "exergy_destroyed_and_lost_w",
        "W",
        "Exergy supplied minus water exergy gain (exergy balance); the sum of the split's parts.",
    ),
    ResultColumn("sgen_w_per_k", "W/K", "Entropy generation rate (entropy balance)."),
    ResultColumn("lost_work_w", "W", "T0 times entropy generation (Gouy-Stodola)."),
    ResultColumn(
        "mass_balance_error",
        "1",
        "(feedwater + spray - steam - blowdown) / (feedwater + spray).",
    ),
    *indirect.HEAT_LOSS_RESULTS,
    *indirect.SPLIT_RESULTS,
)


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray:
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def _flow_ok(m: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        return np.isfinite(m) & (m >= 0)


def _optional_group(inputs: pd.DataFrame, names: tuple[str, ...]) -> tuple[bool, bool]:
    """(bound, complete) for a group of roles that must be bound all together or not at all."""
    present = [name in inputs.columns for name in names]
    return any(present), all(present)


def boiler_direct(
    inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext
) -> pd.DataFrame:
    """Boiler efficiency by the input-output and heat-loss methods, exergy and entropy balances.

    Parameters
    ----------
    inputs : DataFrame
        One row per interval, one column per bound role, SI units:

        - ``fuel_mass_flow`` [kg/s] and/or ``fuel_volume_flow`` [m^3/s]; ``fuel_hhv``
          [J/kg] optional.
        - ``feedwater_flow`` [kg/s], ``feedwater_pressure`` [Pa],
          ``feedwater_temperature`` [K].
        - ``steam_flow`` [kg/s], ``steam_pressure`` [Pa], ``steam_temperature`` [K]
          (main steam).
        - optional ``blowdown_flow`` [kg/s] with optional ``drum_pressure`` [Pa].
        - optional reheat, all five or none: ``reheat_flow`` [kg/s],
          ``reheat_in_pressure`` [Pa], ``reheat_in_temperature`` [K],
          ``reheat_out_pressure`` [Pa], ``reheat_out_temperature`` [K].
        - optional spray, all three or none: ``spray_flow`` [kg/s],
          ``spray_pressure`` [Pa], ``spray_temperature`` [K].
        - optional heat-loss method and exergy split
          (:data:`engine.units._boiler_indirect.ROLES`): ``flue_gas_o2`` [-],
          ``flue_gas_temperature`` [K] and ``combustion_air_temperature`` [K] together;
          refined by ``air_relative_humidity`` [-], ``flue_gas_co`` [-],
          ``fuel_temperature`` [K] and ``burner_air_temperature`` [K].
    params : Mapping[str, float]
        ``mass_balance_tolerance`` [-] and ``sgen_tolerance`` [-], and the heat-loss
        parameters of :data:`engine.units._boiler_indirect.PARAMETERS`; missing ones
        take their declared defaults.
    context : ModelContext
        ``dead`` (T0 [K], p0 [Pa], scalar or one per row), ``fuel`` (with a composition
        for the heat-loss method) and ``text_parameters`` (``o2_basis``: ``"dry"``, the
        default, or ``"wet"``).

    Returns
    -------
    DataFrame
        Same index as ``inputs``; the columns of :data:`RESULTS` ([W], [W/K], [-]) and
        an integer ``flags`` column of :class:`engine.checks.Flag` bits. A row with a
        missing bound input, an impossible flow or a water/steam state outside IF97 is NaN
        in every result with ``INPUT_OUT_OF_RANGE``; the other rows are unaffected. The
        heat-loss and split columns are NaN when the flue-gas roles are not bound; when
        they are, a row with a bad flue-gas input keeps its direct results and is NaN in
        those columns only, with ``INPUT_OUT_OF_RANGE`` (see
        :func:`engine.units._boiler_indirect.heat_loss_and_split`).

    Raises
    ------
    ValueError
        For configuration errors concerning every row (no fuel in the context, no fuel
        flow bound, a volume flow for a fuel without density); never for a bad row.

    Notes
    -----
    Streams crossing the boundary: in, feedwater (fw), spray (sp), cold reheat (ri);
    out, main steam (ms), blowdown (bd, saturated liquid at drum pressure), hot reheat
    (ro). Every stream uses its own measured flow; reheat in and out share
    ``reheat_flow`` (no reheater spray). Enthalpy and entropy are taken relative to
    liquid water at the dead state, so that a mass imbalance is treated as water
    crossing at the dead state (it carries no energy, entropy or exergy) instead of
    depending on the formulation's arbitrary zero of enthalpy. With a closed mass
    balance this is exactly the PTC 4 per-stream form ``sum m (h_out - h_in)`` [1]_.

    First law (input-output method, [1]_)::

        Q_abs  = sum_out m (h - h0) - sum_in m (h - h0)
        Q_fuel = m_f HHV                      eta_1     = Q_abs / Q_fuel
        Q_loss = Q_fuel - Q_abs               eta_1_lhv = Q_abs / (m_f LHV)

    Exergy balance (Eq. 3.13 in [2]_; [3]_)::

        G = sum_out m ex - sum_in m ex,  ex = (h - h0) - T0 (s - s0)
        F = m_f ex_ch                 (chemical exergy from the composition, [5]_)
        E = F                         (flue-gas roles not bound: air and fuel at T0)
        E = F + Ex_f,phys + Ex_air    (split computed: exergy supplied)
        eta_2 = G / E                 exergy_destroyed_and_lost = E - G

    With the flue-gas roles bound, ``E - G`` is split into its parts by
    :func:`engine.boiler_exergy_split.boiler_exergy_split` (destroyed in combustion, in
    heat transfer and unaccounted; lost with the stack gas, thermal and chemical, from
    the casing and with unburned carbon), which add up to it.

    Entropy balance, independent of the exergy numbers (Ch. 2 in [2]_), with the
    losses leaving as heat at T0 and the fuel and air entering with the entropy their
    exergy implies relative to their final equilibrium with the environment (for the
    direct method alone the reaction term ``s_r = (ex_ch - HHV) / T0`` per kg of fuel;
    see :func:`engine.units._fuel_input.fuel_input`)::

        Sgen = sum_out m (s - s0) - sum_in m (s - s0) + Q_loss / T0 + (E - Q_fuel) / T0
        lost_work = T0 Sgen                   (Gouy-Stodola, Eq. 3.24 in [2]_)

    Substituting shows ``T0 Sgen = E - G`` identically; the model computes both by
    their own routes, the split computes its parts by a third, and the tests check that
    all agree to round-off.

    Flags (:mod:`engine.checks`): INPUT_OUT_OF_RANGE; NEGATIVE_ENTROPY_GENERATION when
    ``Sgen < -sgen_tolerance E / T0``; EFFICIENCY_ABOVE_ONE when ``eta_1 > 1`` (HHV);
    ABOVE_CARNOT when ``eta_2 > 1`` or when ``G > Q_abs (1 - T0 / T_hot)``, T_hot being
    the hottest stream (main steam or hot reheat): heat absorbed at or below T_hot can
    raise the water's exergy by at most its Carnot fraction. (A boiler's eta_1 itself is
    not bounded by that Carnot factor: it delivers heat, not work.)
    ENERGY_BALANCE_OPEN when ``|mass_balance_error| > mass_balance_tolerance``; in the
    direct method the energy balance closes by definition, so the water mass balance is
    the closure that can be checked. With the flue-gas roles bound,
    DIRECT_INDIRECT_DISAGREE and NEGATIVE_UNACCOUNTED_DESTRUCTION as described in
    :func:`engine.units._boiler_indirect.heat_loss_and_split`.

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> from engine.fuels import FuelProperties
    >>> gas = FuelProperties("pipeline gas", hhv_j_per_kg=52.2e6, lhv_j_per_kg=47.1e6)
    >>> row = pd.DataFrame({"fuel_mass_flow": [2.3], "feedwater_flow": [40.0],
    ...     "feedwater_pressure": [12e6], "feedwater_temperature": [493.15],
    ...     "steam_flow": [40.0], "steam_pressure": [10e6], "steam_temperature": [783.15]})
    >>> out = boiler_direct(row, {}, ModelContext(dead_state(), gas))
    >>> round(float(out["eta_1"].iloc[0]), 3)
    0.818
    """
    n = len(inputs)
    mass_tolerance = float(params.get("mass_balance_tolerance", MASS_BALANCE_TOLERANCE))
    sgen_tolerance = float(params.get("sgen_tolerance", SGEN_TOLERANCE))
    fuel = fuel_input(inputs, context.fuel, KIND_NAME)
    dead = context.dead
    t0 = np.broadcast_to(np.asarray(dead.t0_k, dtype=float), (n,))
    h0 = np.broadcast_to(np.asarray(dead.h0_water_j_per_kg, dtype=float), (n,))
    s0 = np.broadcast_to(np.asarray(dead.s0_water_j_per_kg_k, dtype=float), (n,))
    # The water side on its own: the heat-loss method still uses it when the fuel meter fails.
    water_valid = np.isfinite(t0) & np.isfinite(h0) & np.isfinite(s0)

    # (sign, mass flow, state): +1 leaves the boundary, -1 enters it.
    streams: list[tuple[float, np.ndarray, steam.SteamState]] = []

    def add(sign: float, flow: np.ndarray, state: steam.SteamState) -> None:
        nonlocal water_valid
        water_valid = water_valid & _flow_ok(flow) & state.in_range
        streams.append((sign, flow, state))

    m_fw = _column(inputs, "feedwater_flow")
    m_ms = _column(inputs, "steam_flow")
    p_ms = _column(inputs, "steam_pressure")
    t_ms = _column(inputs, "steam_temperature")
    add(
        -1.0,
        m_fw,
        steam.from_pt(
            _column(inputs, "feedwater_pressure"), _column(inputs, "feedwater_temperature"), _HS
        ),
    )
    add(+1.0, m_ms, steam.from_pt(p_ms, t_ms, _HS))
    m_in, m_out = m_fw, m_ms
    t_hot = t_ms

    if "blowdown_flow" in inputs.columns:
        m_bd = _column(inputs, "blowdown_flow")
        p_drum = _column(inputs, "drum_pressure") if "drum_pressure" in inputs.columns else p_ms
        add(+1.0, m_bd, steam.saturated_liquid(p_drum, _HS))
        m_out = m_out + m_bd

    spray_bound, spray_complete = _optional_group(inputs, _SPRAY_ROLES)
    if spray_bound and not spray_complete:
        water_valid = np.zeros(n, dtype=bool)
    elif spray_bound:
        m_sp = _column(inputs, "spray_flow")
        add(
            -1.0,
            m_sp,
            steam.from_pt(
                _column(inputs, "spray_pressure"), _column(inputs, "spray_temperature"), _HS
            ),
        )
        m_in = m_in + m_sp

    reheat_bound, reheat_complete = _optional_group(inputs, _REHEAT_ROLES)
    if reheat_bound and not reheat_complete:
        water_valid = np.zeros(n, dtype=bool)
    elif reheat_bound:
        m_rh = _column(inputs, "reheat_flow")
        t_rh = _column(inputs, "reheat_out_temperature")
        add(
            -1.0,
            m_rh,
            steam.from_pt(
                _column(inputs, "reheat_in_pressure"), _column(inputs, "reheat_in_temperature"), _HS
            ),
        )
        add(+1.0, m_rh, steam.from_pt(_column(inputs, "reheat_out_pressure"), t_rh, _HS))
        t_hot = np.fmax(t_hot, t_rh)

    valid = water_valid & fuel.valid

    # First law: enthalpy relative to the dead state.
    heat_absorbed = sum(sign * m * (st.h - h0) for sign, m, st in streams)
    heat_loss = fuel.heat_input_hhv_w - heat_absorbed
    with np.errstate(all="ignore"):
        eta_1 = heat_absorbed / fuel.heat_input_hhv_w
        eta_1_lhv = heat_absorbed / fuel.heat_input_lhv_w
        mass_error = (m_in - m_out) / m_in

    # Exergy route: specific flow exergy per stream.
    exergy_gain = sum(sign * m * flow_exergy(st.h, st.s, dead) for sign, m, st in streams)

    # Heat-loss method and exergy split, where the flue-gas roles are bound.
    def masked(values: np.ndarray) -> np.ndarray:
        return np.where(valid, values, np.nan)

    extra = indirect.heat_loss_and_split(
        inputs,
        params,
        context,
        hhv_j_per_kg=heating_value_j_per_kg(inputs, context.fuel),
        fuel_mass_flow_kg_per_s=fuel.mass_flow_kg_per_s,
        heat_absorbed_w=np.where(water_valid, heat_absorbed, np.nan),
        water_exergy_gain_w=masked(exergy_gain),
        eta_1=masked(eta_1),
        t0_k=t0,
        p0_pa=np.broadcast_to(np.asarray(dead.p0_pa, dtype=float), (n,)),
        direct_valid=valid,
    )
    split = np.isfinite(extra.exergy_supplied_w)
    exergy_supplied = np.where(split, extra.exergy_supplied_w, fuel.exergy_w)
    # What the fuel and air bring beyond the heat of reaction, over T0, is their entropy
    # relative to the environment they end in (see _fuel_input.fuel_input).
    reaction = np.where(
        split, exergy_supplied - fuel.heat_input_hhv_w, fuel.reaction_exergy_minus_heat_w
    )
    exergy_destroyed = exergy_supplied - exergy_gain
    with np.errstate(all="ignore"):
        eta_2 = exergy_gain / exergy_supplied

    # Entropy route: entropy balance on the widened boundary (no exergy of water used).
    entropy_out_minus_in = sum(sign * m * (st.s - s0) for sign, m, st in streams)
    with np.errstate(all="ignore"):
        sgen = entropy_out_minus_in + heat_loss / t0 + reaction / t0

    results = {
        "heat_absorbed_w": heat_absorbed,
        "fuel_heat_input_hhv_w": fuel.heat_input_hhv_w,
        "fuel_heat_input_lhv_w": fuel.heat_input_lhv_w,
        "heat_loss_w": heat_loss,
        "eta_1": eta_1,
        "eta_1_lhv": eta_1_lhv,
        "water_exergy_gain_w": exergy_gain,
        "fuel_exergy_w": fuel.exergy_w,
        "exergy_supplied_w": exergy_supplied,
        "eta_2": eta_2,
        "exergy_destroyed_and_lost_w": exergy_destroyed,
        "sgen_w_per_k": sgen,
        "lost_work_w": lost_work(sgen, t0),
        "mass_balance_error": mass_error,
    }
    columns = {name: masked(values) for name, values in results.items()}
    columns.update(extra.columns)
    frame = pd.DataFrame({c.name: columns[c.name] for c in RESULTS}, index=inputs.index)
    with np.errstate(all="ignore"):
        carnot_factor = carnot_efficiency(t_hot, t0)
        exergy_per_heat = np.where(heat_absorbed > 0, exergy_gain / heat_absorbed, np.nan)
    exergy_per_heat = np.where(valid, exergy_per_heat, np.nan)
    frame["flags"] = checks.combine(
        checks.input_out_of_range(valid),
        checks.negative_entropy_generation(
            frame["sgen_w_per_k"], frame["exergy_supplied_w"] / t0, sgen_tolerance
        ),
        checks.efficiency_above_one(frame["eta_1"]),
        checks.above_carnot(frame["eta_2"], 1.0),
        checks.above_carnot(exergy_per_heat, carnot_factor),
        checks.balance_open(frame["mass_balance_error"], mass_tolerance),
        extra.flags,
    )
    return frame


KIND = UnitKind(
    name=KIND_NAME,
    title="Boiler (input-output and heat-loss methods)",
    roles=ROLES,
    parameters=PARAMETERS,
    results=RESULTS,
    load_result="heat_absorbed_w",
    model=boiler_direct,
    needs_fuel=True,
    alternatives=FUEL_ALTERNATIVES,
    text_parameters=indirect.TEXT_PARAMETERS,
    description=(
        "Fired steam generator by the input-output (direct) method of ASME PTC 4-2013, "
        "HHV and LHV basis, with exergy and entropy balances (Gouy-Stodola). Optional "
        "blowdown, reheat and superheater spray. With the flue-gas roles bound also the "
        "heat-loss (indirect) method in the PTC 4 structure, every loss and credit, the "
        "direct-indirect difference and the split of the exergy destroyed and lost."
    ),
)
"""The boiler's catalogue entry."""
