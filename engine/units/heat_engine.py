"""Generic heat engine between two reservoirs: first law, Carnot limit, second law.

For any machine that turns heat into work and is measured only at its boundary:
reciprocating engines (heat input from the fuel), organic Rankine sets (heat input from
a hot-water or thermal-oil loop), thermoelectric generators. The engine takes heat
``Q_in`` at the hot-reservoir temperature ``T_h``, gives work ``W`` and rejects heat
``Q_out`` at the cold-reservoir temperature ``T_c`` (the dead-state temperature T0 when
no cold reservoir is measured). Whatever heat the energy balance does not account for
(casing and radiation losses, metering error) leaves at T0.

What the hot-reservoir temperature is, is the plant's choice and decides what the
Carnot limit means: the temperature of a heating loop, the entropic mean temperature
of a heat-source stream (``(h_in - h_out) / (s_in - s_out)``, see
:mod:`engine.units.heat_pump`), or for a combustion engine an adiabatic flame
temperature. The model treats it as the temperature at which ``Q_in`` crosses the
boundary.

References
----------
.. [1] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger, 1995, Ch. 1
   (the Carnot efficiency 1 - T_c / T_h bounds every heat engine between two
   reservoirs) and Ch. 2 (exergy of heat, Q (1 - T0 / T)). Chapters from memory.
.. [2] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Ch. 2 (entropy balance of a control volume with heat transfer at boundary
   temperatures), Ch. 3 (exergy transfer with heat, Eq. 3.9; Gouy-Stodola, Eq. 3.24).
   Equation numbers as in :mod:`engine.exergy`; chapter-level otherwise.
.. [3] A. Bejan, "Advanced Engineering Thermodynamics", 4th ed., Wiley, 2016, Ch. 3
   (second-law efficiency of a heat engine as its first-law efficiency over the Carnot
   efficiency between the same reservoirs). Chapter from memory.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine import checks
from engine.catalogue import ModelContext, Parameter, ResultColumn, Role, UnitKind
from engine.exergy import carnot_efficiency, heat_exergy, lost_work

KIND_NAME = "heat_engine"

ENERGY_BALANCE_TOLERANCE = 0.05
"""Default largest |energy_balance_error| before ENERGY_BALANCE_OPEN. [-]

Our choice (no published value): heat input and heat rejected of such machines are
usually metered by heat meters or fuel flow times heating value, each uncertain by a
few percent, so 5 % of the heat input is about their combined uncertainty.
"""

SGEN_TOLERANCE = checks.SGEN_TOLERANCE

CARNOT_ROUND_OFF = 1e-12
"""Margin above the Carnot limit before ABOVE_CARNOT, so that an engine at the limit
computed in floating point is not flagged. [-] (round-off, not a measurement tolerance)"""

ROLES: tuple[Role, ...] = (
    Role("heat_input", "W", description="Heat supplied to the engine from the hot reservoir."),
    Role(
        "hot_temperature",
        "K",
        description="Hot-reservoir temperature: where the heat input crosses the boundary.",
    ),
    Role("work_output", "W", description="Net work output (shaft or electrical)."),
    Role(
        "heat_rejected",
        "W",
        required=False,
        description=(
            "Heat rejected to the cold reservoir. When not bound, the energy balance closes "
            "it (heat_input - work_output) and the balance is not checked."
        ),
    ),
    Role(
        "cold_temperature",
        "K",
        required=False,
        description=(
            "Cold-reservoir temperature (cooling water, condenser). When not bound, the "
            "dead-state temperature T0 (ambient)."
        ),
    ),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "energy_balance_tolerance",
        "1",
        ENERGY_BALANCE_TOLERANCE,
        description=(
            "Largest absolute energy_balance_error before the balance is flagged open (only "
            "checkable when heat_rejected is bound). Default 0.05, our choice."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    checks.sgen_tolerance_parameter("reversible work / T_c"),
)

RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn("heat_input_w", "W", "Heat supplied from the hot reservoir."),
    ResultColumn("work_output_w", "W", "Net work output."),
    ResultColumn("heat_rejected_w", "W", "Heat to the cold reservoir, measured or by balance."),
    ResultColumn(
        "unaccounted_heat_w",
        "W",
        "heat_input - work_output - heat_rejected, taken as leaving at T0; 0 when closed.",
    ),
    ResultColumn("energy_balance_error", "1", "unaccounted_heat_w / heat_input_w."),
    ResultColumn("eta_1", "1", "First-law (thermal) efficiency: work over heat input."),
    ResultColumn("carnot_limit", "1", "1 - T_c / T_h, the bound on eta_1."),
    ResultColumn("eta_2", "1", "Second-law efficiency: eta_1 over the Carnot limit."),
    ResultColumn("reversible_work_w", "W", "Work of a Carnot engine on the same heat input."),
    ResultColumn("heat_input_exergy_w", "W", "Exergy of the heat input, Q_in (1 - T0 / T_h)."),
    ResultColumn(
        "rejected_heat_exergy_w", "W", "Exergy of the heat rejected, Q_out (1 - T0 / T_c)."
    ),
    ResultColumn(
        "exergy_destroyed_w",
        "W",
        "Exergy balance: heat-input exergy - work - rejected-heat exergy.",
    ),
    ResultColumn("sgen_w_per_k", "W/K", "Entropy generation rate (entropy balance)."),
    ResultColumn("lost_work_w", "W", "T0 times entropy generation (Gouy-Stodola)."),
)


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray:
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def heat_engine_performance(
    inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext
) -> pd.DataFrame:
    """Thermal efficiency, Carnot limit, second-law efficiency and lost work of a heat engine.

    Parameters
    ----------
    inputs : DataFrame
        One row per interval, one column per bound role, SI units: ``heat_input`` [W],
        ``hot_temperature`` [K], ``work_output`` [W]; optional ``heat_rejected`` [W]
        and ``cold_temperature`` [K].
    params : Mapping[str, float]
        ``energy_balance_tolerance`` [-], ``sgen_tolerance`` [-]; missing ones take
        :data:`ENERGY_BALANCE_TOLERANCE` and :data:`SGEN_TOLERANCE`.
    context : ModelContext
        ``dead`` (T0 [K], scalar or one per row).

    Returns
    -------
    DataFrame
        Same index as ``inputs``; the columns of :data:`RESULTS` ([W], [W/K], [-]) and an
        integer ``flags`` column of :class:`engine.checks.Flag` bits. A row with a missing
        input, a negative heat input or a reservoir temperature not above 0 K is NaN
        throughout with ``INPUT_OUT_OF_RANGE``.

    Notes
    -----
    First law, with ``Q_out`` measured or closed by the balance::

        eta_1 = W / Q_in          Q_u = Q_in - W - Q_out      (unaccounted, at T0)

    Carnot limit and second-law efficiency ([1]_, Ch. 1; [3]_)::

        eta_C = 1 - T_c / T_h     W_rev = Q_in eta_C          eta_2 = eta_1 / eta_C

    ``eta_2`` is NaN where ``eta_C <= 0`` (no work is possible: any positive work is
    above the limit and flagged).

    Entropy balance, heat crossing at the reservoir temperatures ([2]_, Ch. 2)::

        Sgen = Q_out / T_c + Q_u / T0 - Q_in / T_h            lost_work = T0 Sgen

    Exergy balance, by its own route (Eq. 3.9 of [2]_ for the exergy of heat)::

        X_d = Q_in (1 - T0 / T_h) - W - Q_out (1 - T0 / T_c)

    Substituting shows ``T0 Sgen = X_d`` identically (Gouy-Stodola, Eq. 3.24 in [2]_);
    the tests check it to round-off. With the balance closed, ``W_rev - W = T_c Sgen``:
    the work short of a Carnot engine is the entropy generated times the cold-reservoir
    temperature, and ``eta_2 = 1`` exactly when ``Sgen = 0``.

    Flags: INPUT_OUT_OF_RANGE; EFFICIENCY_ABOVE_ONE when ``eta_1 > 1``; ABOVE_CARNOT
    when ``eta_1 > eta_C`` (beyond :data:`CARNOT_ROUND_OFF`): the claim is impossible;
    NEGATIVE_ENTROPY_GENERATION when ``Sgen < -sgen_tolerance |W_rev| / T_c``;
    ENERGY_BALANCE_OPEN when ``heat_rejected`` is bound and
    ``|Q_u / Q_in| > energy_balance_tolerance``.

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> row = pd.DataFrame({"heat_input": [1.0e6], "hot_temperature": [393.15],
    ...     "work_output": [0.08e6], "heat_rejected": [0.9e6], "cold_temperature": [303.15]})
    >>> out = heat_engine_performance(row, {}, ModelContext(dead_state()))
    >>> round(float(out["carnot_limit"].iloc[0]), 4), round(float(out["eta_2"].iloc[0]), 4)
    (0.2289, 0.3495)
    """
    n = len(inputs)
    balance_tolerance = float(params.get("energy_balance_tolerance", ENERGY_BALANCE_TOLERANCE))
    sgen_tolerance = float(params.get("sgen_tolerance", SGEN_TOLERANCE))
    t0 = np.broadcast_to(np.asarray(context.dead.t0_k, dtype=float), (n,))

    q_in = _column(inputs, "heat_input")
    t_hot = _column(inputs, "hot_temperature")
    work = _column(inputs, "work_output")
    t_cold = _column(inputs, "cold_temperature") if "cold_temperature" in inputs.columns else t0
    rejected_bound = "heat_rejected" in inputs.columns
    q_out = _column(inputs, "heat_rejected") if rejected_bound else q_in - work

    with np.errstate(invalid="ignore"):
        valid = (
            np.isfinite(q_in)
            & (q_in >= 0)
            & np.isfinite(work)
            & np.isfinite(q_out)
            & np.isfinite(t_hot)
            & (t_hot > 0)
            & np.isfinite(t_cold)
            & (t_cold > 0)
            & np.isfinite(t0)
            & (t0 > 0)
        )

    with np.errstate(all="ignore"):
        unaccounted = q_in - work - q_out
        carnot = carnot_efficiency(t_hot, t_cold)
        eta_1 = work / q_in
        reversible = q_in * carnot
        ex_in = heat_exergy(q_in, t_hot, t0)
        ex_rejected = heat_exergy(q_out, t_cold, t0)
        results = {
            "heat_input_w": q_in,
            "work_output_w": work,
            "heat_rejected_w": q_out,
            "unaccounted_heat_w": unaccounted,
            "energy_balance_error": unaccounted / q_in,
            "eta_1": eta_1,
            "carnot_limit": carnot,
            "eta_2": np.where(carnot > 0, eta_1 / carnot, np.nan),
            "reversible_work_w": reversible,
            "heat_input_exergy_w": ex_in,
            "rejected_heat_exergy_w": ex_rejected,
            # Exergy route: what the heat could give, minus what left as work or with
            # the rejected heat.
            "exergy_destroyed_w": ex_in - work - ex_rejected,
        }
        # Entropy route: entropy carried by each heat flow at its boundary temperature.
        sgen = q_out / t_cold + unaccounted / t0 - q_in / t_hot
    results["sgen_w_per_k"] = sgen
    results["lost_work_w"] = lost_work(sgen, t0)

    frame = pd.DataFrame(
        {name: np.where(valid, values, np.nan) for name, values in results.items()},
        index=inputs.index,
    )
    with np.errstate(all="ignore"):
        sgen_scale = frame["reversible_work_w"].to_numpy() / t_cold
    balance_error = frame["energy_balance_error"] if rejected_bound else np.zeros(n)
    frame["flags"] = checks.combine(
        checks.input_out_of_range(valid),
        checks.efficiency_above_one(frame["eta_1"]),
        checks.above_carnot(frame["eta_1"], frame["carnot_limit"] + CARNOT_ROUND_OFF),
        checks.negative_entropy_generation(frame["sgen_w_per_k"], sgen_scale, sgen_tolerance),
        checks.balance_open(balance_error, balance_tolerance),
    )
    return frame


KIND = UnitKind(
    name=KIND_NAME,
    title="Heat engine (generic)",
    roles=ROLES,
    parameters=PARAMETERS,
    results=RESULTS,
    load_result="work_output_w",
    model=heat_engine_performance,
    description=(
        "Any engine turning heat into work measured at its boundary (reciprocating engine, "
        "organic Rankine set, thermoelectric generator): eta_1, Carnot limit, eta_2, "
        "entropy generation and lost work; a claim above the Carnot limit is flagged."
    ),
)
"""The generic heat engine's catalogue entry."""
