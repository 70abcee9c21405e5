"""Generating unit as a whole ("block"): heat rate, first and second law, Carnot limit.

The boundary encloses the whole unit and its immediate surroundings at the dead-state
temperature T0: fuel (and air at T0) in, net electrical power out; everything else
(stack, condenser, casing, generator losses) leaves as heat to the environment at T0.

References
----------
.. [1] ASME PTC 46-2015, "Performance Test Code on Overall Plant Performance", Sec. 5
   (corrected net power and heat rate: fuel heat input over net power). Section number
   from memory.
.. [2] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley, 1996,
   Ch. 2 (entropy balance), Ch. 3 (exergy balance; Gouy-Stodola, Eq. 3.24; fuel
   chemical exergy). Chapter-level citations.
.. [3] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger, 1995,
   Ch. 1 (Carnot efficiency as the bound of a heat engine), Ch. 2 (rational
   efficiency: net power over fuel exergy). Chapters from memory.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine import checks
from engine.catalogue import ModelContext, Parameter, ResultColumn, Role, UnitKind
from engine.exergy import carnot_efficiency, lost_work
from engine.units._fuel_input import FUEL_ALTERNATIVES, FUEL_ROLES, fuel_input

KIND_NAME = "block"

J_PER_KWH = 3.6e6
"""Joules per kilowatt-hour (exact, SI definition of the watt-hour). [J/kWh]"""

AUXILIARY_FRACTION = 0.0
"""Default auxiliary power as a fraction of gross power when ``auxiliary_power`` is not
bound: 0, i.e. net equals gross until the plant says otherwise. [-]"""

HOT_RESERVOIR_NOT_SET = 0.0
"""Value of ``hot_reservoir_temperature_k`` meaning "not configured". [K]"""

SGEN_TOLERANCE = checks.SGEN_TOLERANCE

_T_MIN_K = 273.15  # below the freezing point a steam temperature is surely not in kelvin

ROLES: tuple[Role, ...] = (
    Role("gross_power", "W", description="Generator output at the terminals (gross)."),
    Role(
        "auxiliary_power",
        "W",
        required=False,
        description=(
            "Auxiliary (house) load of the unit. When not bound, the parameter "
            "auxiliary_fraction times gross power is used."
        ),
    ),
    *FUEL_ROLES,
    Role(
        "main_steam_temperature",
        "K",
        required=False,
        description="Main steam temperature: a hot reservoir for the Carnot limit.",
    ),
    Role(
        "reheat_temperature",
        "K",
        required=False,
        description="Hot reheat temperature: a hot reservoir for the Carnot limit.",
    ),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "auxiliary_fraction",
        "1",
        AUXILIARY_FRACTION,
        description=(
            "Auxiliary power as a fraction of gross power, used only when auxiliary_power "
            "is not bound. Default 0 (net = gross)."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    Parameter(
        "hot_reservoir_temperature_k",
        "K",
        HOT_RESERVOIR_NOT_SET,
        description=(
            "Hot-reservoir temperature for the Carnot limit, used only when no steam "
            "temperature is bound (then the hottest bound steam temperature is used). "
            "0 means not configured: no Carnot limit."
        ),
        minimum=0.0,
        maximum=3000.0,
    ),
    checks.sgen_tolerance_parameter("fuel exergy / T0"),
)

RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn("gross_power_w", "W", "Gross electrical power."),
    ResultColumn("net_power_w", "W", "Gross power minus auxiliary power."),
    ResultColumn("fuel_heat_input_hhv_w", "W", "Fuel mass flow times higher heating value."),
    ResultColumn("fuel_heat_input_lhv_w", "W", "Fuel mass flow times lower heating value."),
    ResultColumn("gross_heat_rate_j_per_kwh", "J/kWh", "Fuel heat input (HHV) per gross kWh."),
    ResultColumn("net_heat_rate_j_per_kwh", "J/kWh", "Fuel heat input (HHV) per net kWh."),
    ResultColumn("gross_heat_rate_lhv_j_per_kwh", "J/kWh", "Fuel heat input (LHV) per gross kWh."),
    ResultColumn("net_heat_rate_lhv_j_per_kwh", "J/kWh", "Fuel heat input (LHV) per net kWh."),
    ResultColumn("eta_1", "1", "Net first-law efficiency, HHV basis."),
    ResultColumn("eta_1_lhv", "1", "Net first-law efficiency, LHV basis."),
    ResultColumn("fuel_exergy_w", "W", "Chemical exergy of the fuel burnt."),
    ResultColumn("eta_2", "1", "Second-law efficiency: net power over fuel exergy."),
    ResultColumn("carnot_limit", "1", "1 - T0 / T_hot, the heat-engine bound on eta_1."),
    ResultColumn(
        "exergy_destroyed_and_lost_w", "W", "Fuel exergy minus net power (exergy balance)."
    ),
    ResultColumn("sgen_w_per_k", "W/K", "Entropy generation rate (entropy balance)."),
    ResultColumn("lost_work_w", "W", "T0 times entropy generation (Gouy-Stodola)."),
)


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray:
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def block_performance(
    inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext
) -> pd.DataFrame:
    """Net and gross heat rate, efficiencies and lost work of a whole generating unit.

    Parameters
    ----------
    inputs : DataFrame
        One row per interval, one column per bound role, SI units: ``gross_power``
        [W]; optional ``auxiliary_power`` [W]; ``fuel_mass_flow`` [kg/s] and/or
        ``fuel_volume_flow`` [m^3/s]; optional ``fuel_hhv`` [J/kg]; optional
        ``main_steam_temperature`` [K] and ``reheat_temperature`` [K].
    params : Mapping[str, float]
        ``auxiliary_fraction`` [-], ``hot_reservoir_temperature_k`` [K] (0 = not set),
        ``sgen_tolerance`` [-]; missing ones take the module defaults.
    context : ModelContext
        ``dead`` (T0 [K], scalar or one per row) and ``fuel``.

    Returns
    -------
    DataFrame
        Same index as ``inputs``; the columns of :data:`RESULTS` ([W], [J/kWh], [W/K],
        [-]) and an integer ``flags`` column of :class:`engine.checks.Flag` bits. A row
        with a missing bound input, a non-positive fuel flow or a steam temperature below
        273.15 K or not above T0 is NaN throughout with ``INPUT_OUT_OF_RANGE``.

    Raises
    ------
    ValueError
        For configuration errors concerning every row (see
        :func:`engine.units._fuel_input.fuel_input`); never for a bad row.

    Notes
    -----
    First law, HHV and LHV basis ([1]_)::

        W_net = W_gross - W_aux               Q_fuel = m_f HHV
        eta_1 = W_net / Q_fuel                heat rate = 3.6e6 Q_fuel / W  [J/kWh]

    A heat rate is NaN where its power is not positive (unit not generating).

    Second law: ``F = m_f ex_ch``, ``eta_2 = W_net / F`` ([3]_, Ch. 2) and the exergy
    balance ``exergy_destroyed_and_lost = F - W_net``. The entropy balance on the
    widened boundary, with all fuel energy not leaving as net power leaving as heat at
    T0 and the reaction term ``s_r = (ex_ch - HHV) / T0`` per kg of fuel (see
    :func:`engine.units._fuel_input.fuel_input`)::

        Sgen = (Q_fuel - W_net) / T0 + m_f s_r        lost_work = T0 Sgen

    which equals ``(F - W_net) / T0``: Gouy-Stodola (Eq. 3.24 in [2]_).

    Carnot limit: heat reaches the steam cycle at no more than the hottest steam
    temperature T_hot, so ``eta_1 <= 1 - T0 / T_hot`` ([3]_, Ch. 1). T_hot is the
    hottest bound steam temperature per row, else ``hot_reservoir_temperature_k``,
    else unknown (``carnot_limit`` NaN, never flagged).

    Flags: INPUT_OUT_OF_RANGE; EFFICIENCY_ABOVE_ONE when ``eta_1 > 1``; ABOVE_CARNOT when
    ``eta_1 > carnot_limit``; NEGATIVE_ENTROPY_GENERATION when
    ``Sgen < -sgen_tolerance F / T0``.

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> from engine.fuels import FuelProperties
    >>> gas = FuelProperties("pipeline gas", hhv_j_per_kg=52.2e6, lhv_j_per_kg=47.1e6)
    >>> row = pd.DataFrame({"gross_power": [100e6], "auxiliary_power": [5e6],
    ...     "fuel_mass_flow": [5.0], "main_steam_temperature": [813.15]})
    >>> out = block_performance(row, {}, ModelContext(dead_state(), gas))
    >>> round(float(out["net_heat_rate_j_per_kwh"].iloc[0]) / 1e6, 3)
    9.891
    """
    n = len(inputs)
    aux_fraction = float(params.get("auxiliary_fraction", AUXILIARY_FRACTION))
    t_hot_configured = float(params.get("hot_reservoir_temperature_k", HOT_RESERVOIR_NOT_SET))
    sgen_tolerance = float(params.get("sgen_tolerance", SGEN_TOLERANCE))
    fuel = fuel_input(inputs, context.fuel, KIND_NAME)
    t0 = np.broadcast_to(np.asarray(context.dead.t0_k, dtype=float), (n,))

    gross = _column(inputs, "gross_power")
    if "auxiliary_power" in inputs.columns:
        aux = _column(inputs, "auxiliary_power")
    else:
        aux = aux_fraction * gross
    net = gross - aux

    steam_temperatures = [
        _column(inputs, name)
        for name in ("main_steam_temperature", "reheat_temperature")
        if name in inputs.columns
    ]
    with np.errstate(invalid="ignore"):
        valid = fuel.valid & np.isfinite(gross) & np.isfinite(aux) & np.isfinite(t0) & (t0 > 0)
        if steam_temperatures:
            for t in steam_temperatures:
                valid &= np.isfinite(t) & (t >= _T_MIN_K) & (t > t0)
            t_hot = np.maximum.reduce(steam_temperatures)
        elif t_hot_configured > 0:
            t_hot = np.full(n, t_hot_configured)
        else:
            t_hot = np.full(n, np.nan)

    q_hhv = fuel.heat_input_hhv_w
    q_lhv = fuel.heat_input_lhv_w
    with np.errstate(all="ignore"):
        gross_pos = np.where(gross > 0, gross, np.nan)
        net_pos = np.where(net > 0, net, np.nan)
        results = {
            "gross_power_w": gross,
            "net_power_w": net,
            "fuel_heat_input_hhv_w": q_hhv,
            "fuel_heat_input_lhv_w": q_lhv,
            "gross_heat_rate_j_per_kwh": J_PER_KWH * q_hhv / gross_pos,
            "net_heat_rate_j_per_kwh": J_PER_KWH * q_hhv / net_pos,
            "gross_heat_rate_lhv_j_per_kwh": J_PER_KWH * q_lhv / gross_pos,
            "net_heat_rate_lhv_j_per_kwh": J_PER_KWH * q_lhv / net_pos,
            "eta_1": net / q_hhv,
            "eta_1_lhv": net / q_lhv,
            "fuel_exergy_w": fuel.exergy_w,
            "eta_2": net / fuel.exergy_w,
            "carnot_limit": carnot_efficiency(t_hot, t0),
            # Exergy route: what the fuel could have given minus what left as power.
            "exergy_destroyed_and_lost_w": fuel.exergy_w - net,
        }
        # Entropy route: heat to the environment at T0 plus the reaction entropy.
        sgen = (q_hhv - net) / t0 + fuel.reaction_exergy_minus_heat_w / t0
    results["sgen_w_per_k"] = sgen
    results["lost_work_w"] = lost_work(sgen, t0)

    frame = pd.DataFrame(
        {name: np.where(valid, values, np.nan) for name, values in results.items()},
        index=inputs.index,
    )
    frame["flags"] = checks.combine(
        checks.input_out_of_range(valid),
        checks.efficiency_above_one(frame["eta_1"]),
        checks.above_carnot(frame["eta_1"], frame["carnot_limit"]),
        checks.negative_entropy_generation(
            frame["sgen_w_per_k"], frame["fuel_exergy_w"] / t0, sgen_tolerance
        ),
    )
    return frame


KIND = UnitKind(
    name=KIND_NAME,
    title="Generating unit (block)",
    roles=ROLES,
    parameters=PARAMETERS,
    results=RESULTS,
    load_result="net_power_w",
    model=block_performance,
    needs_fuel=True,
    alternatives=FUEL_ALTERNATIVES,
    description=(
        "The whole generating unit: gross and net power, heat rate (HHV and LHV), "
        "eta_1, eta_2, Carnot limit, entropy generation and lost work."
    ),
)
"""The block's catalogue entry."""
