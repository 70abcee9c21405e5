"""Air compressor (compressed-air supply): specific power, isentropic and isothermal efficiency, second law.

The boundary encloses the compressor package with its motor, coolers and aftercooler,
from the air intake (measured inlet state) and the electric supply to the compressed
air delivered at the discharge pressure. The air is humid air as an ideal-gas mixture
(:mod:`engine.humid_air`); its water vapour is carried through unchanged (condensate
drained in the aftercooler is not accounted for).

What the plant buys is compressed air at ambient temperature: by the time it reaches
the users it has cooled to the surroundings, so its useful exergy is that of air at the
dead-state temperature T0 and the discharge pressure. ``eta_2`` is that exergy (gained
between intake and delivery) over the electric input. All the rest of the input ends
as heat: in the oil and air coolers, where a heat-recovery unit can take most of it,
and in the motor and casing.

Flow. The trade states a compressor's flow as free air delivery (FAD): the delivered
flow expressed as a volume at stated reference conditions. The meter's reference
conditions are parameters; the defaults are the standard inlet conditions of ISO 1217
[1]_ for displacement compressors (100 kPa, 20 degC, 0 % relative humidity). The
volume is taken as that of the delivered stream's dry air at the reference dry-air
partial pressure ``p_ref - RH_ref p_sat(T_ref)`` (the correction in [1]_, from
memory), its water vapour riding along at the inlet humidity ratio; with the reference
equal to the actual inlet state this is the actual inlet volume flow. A mass flow can
be bound instead.

Display conversions (not done here): ``specific_power_j_per_m3`` is W per m^3/s of
FAD. kW per m^3/min = value / 60,000; kW per 100 cfm = value * 0.047194744320 / 1000
(100 ft^3/min = 100 * 0.028316846592 m^3 / 60 s = 0.047194744320 m^3/s, with the
international foot of 0.3048 m exactly).

References
----------
.. [1] ISO 1217:2009, "Displacement compressors - Acceptance tests", Annex C (standard
   reference conditions for the volume flow rate at the standard inlet point and the
   specific energy requirement: 100 kPa, 20 degC, 0 % relative humidity, cooling water
   20 degC; correction of the measured flow with the partial pressure of the dry air).
   Annex and values from memory.
.. [2] Y. A. Cengel, M. A. Boles, "Thermodynamics: An Engineering Approach", 9th ed.,
   McGraw-Hill, 2019, Ch. 7 (isentropic work of an ideal-gas compressor,
   w = cp T1 [(p2/p1)^((k-1)/k) - 1] for constant specific heats, and the isothermal
   work w = R T ln(p2/p1); isentropic efficiency of a compressor). Chapter from memory.
.. [3] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Ch. 2 (entropy balance), Ch. 3 (flow exergy, Eq. 3.13; Gouy-Stodola,
   Eq. 3.24).
.. [4] U.S. Department of Energy and Compressed Air Challenge, "Improving Compressed
   Air System Performance: A Sourcebook for Industry", 3rd ed., 2016 (heat recovery:
   about 80-93 % of the electric input of an industrial air compressor can be
   recovered as heat). Edition and figures from memory; common practice.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine import checks, humid_air
from engine.catalogue import ModelContext, Parameter, ResultColumn, Role, UnitKind
from engine.combustion import dry_air_molar_mass_kg_per_mol
from engine.exergy import lost_work
from engine.gas import R_J_PER_MOL_K

KIND_NAME = "air_compressor"

FAD_REFERENCE_PRESSURE_PA = 100e3
"""Default FAD reference pressure: the ISO 1217 standard inlet pressure, 1 bar [1]_. [Pa]"""
FAD_REFERENCE_TEMPERATURE_K = 293.15
"""Default FAD reference temperature: the ISO 1217 standard inlet temperature, 20 degC [1]_. [K]"""
FAD_REFERENCE_RELATIVE_HUMIDITY = 0.0
"""Default FAD reference relative humidity: dry, as ISO 1217's standard inlet [1]_. [-]"""

ASSUMED_INLET_RELATIVE_HUMIDITY = 0.6
"""Inlet relative humidity used when no humidity role is bound. [-]

Our choice of a middle value: 60 % is the standard ambient humidity of the gas-turbine
codes (ISO 2314 / ISO 3977-2, from memory). Humidity moves the results by about 1 %
at 20 degC (more moles per m^3 of dry-air FAD); configure the site's value or bind a
humidity tag.
"""

HEAT_RECOVERY_FRACTION = 0.9
"""Default share of the heat rejected that a heat-recovery unit can take. [-]

Common practice for an oil-injected screw compressor with heat recovery on the oil
circuit: 80-93 % of the electric input is recoverable [4]_ (from memory); 0.9 is
a round middle value. Set 0 for a compressor without heat recovery.
"""

ENERGY_BALANCE_TOLERANCE = 0.05
"""Default margin by which the enthalpy rise of the air to the measured discharge
temperature may exceed the electric input before ENERGY_BALANCE_OPEN. [-]
Our choice: about the combined uncertainty of power, flow and temperature."""

SGEN_TOLERANCE = checks.SGEN_TOLERANCE

ISENTROPIC_TOLERANCE = 1e-6
"""Default margin above 1 before ISENTROPIC_ABOVE_ONE. [-] Our choice: above round-off."""

CARNOT_ROUND_OFF = 1e-12
"""Margin on eta_2 above 1 before ABOVE_CARNOT (round-off only). [-]"""

ROLES: tuple[Role, ...] = (
    Role("electric_power", "W", description="Electric input of the compressor package."),
    Role("inlet_temperature", "K", description="Air temperature at the intake."),
    Role(
        "inlet_pressure",
        "Pa",
        required=False,
        description="Absolute air pressure at the intake; the dead-state pressure when not bound.",
    ),
    Role(
        "inlet_relative_humidity",
        "1",
        required=False,
        description=(
            "Relative humidity at the intake, as a fraction (over ice below 0 degC). When "
            "neither humidity role is bound, assumed_inlet_relative_humidity is used."
        ),
    ),
    Role(
        "inlet_humidity_ratio",
        "kg/kg",
        required=False,
        description="Water vapour per kg dry air at the intake; wins over the relative humidity.",
    ),
    Role("discharge_pressure", "Pa", description="Absolute pressure of the air delivered."),
    Role(
        "free_air_delivery",
        "m^3/s",
        required=False,
        description=(
            "Delivered air flow as a volume at the FAD reference conditions (parameters). "
            "Bind this or air_mass_flow."
        ),
    ),
    Role(
        "air_mass_flow",
        "kg/s",
        required=False,
        description="Delivered humid-air mass flow; wins over free_air_delivery where both are bound.",
    ),
    Role(
        "discharge_temperature",
        "K",
        required=False,
        description=(
            "Temperature of the air leaving the compressor (before or after the "
            "aftercooler), used only to check that its enthalpy rise stays below the input."
        ),
    ),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "fad_reference_pressure_pa",
        "Pa",
        FAD_REFERENCE_PRESSURE_PA,
        description="Reference pressure of free_air_delivery. Default 100 kPa (ISO 1217).",
        minimum=1e3,
    ),
    Parameter(
        "fad_reference_temperature_k",
        "K",
        FAD_REFERENCE_TEMPERATURE_K,
        description="Reference temperature of free_air_delivery. Default 293.15 K (ISO 1217).",
        minimum=200.0,
        maximum=400.0,
    ),
    Parameter(
        "fad_reference_relative_humidity",
        "1",
        FAD_REFERENCE_RELATIVE_HUMIDITY,
        description="Reference relative humidity of free_air_delivery. Default 0 (ISO 1217).",
        minimum=0.0,
        maximum=1.0,
    ),
    Parameter(
        "assumed_inlet_relative_humidity",
        "1",
        ASSUMED_INLET_RELATIVE_HUMIDITY,
        description=(
            "Intake relative humidity when no humidity role is bound. Default 0.6, our "
            "choice (the gas-turbine codes' standard ambient)."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    Parameter(
        "heat_recovery_fraction",
        "1",
        HEAT_RECOVERY_FRACTION,
        description=(
            "Share of the heat rejected that heat recovery can take. Default 0.9, common "
            "practice for an oil-injected screw with heat recovery; 0 without."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    Parameter(
        "energy_balance_tolerance",
        "1",
        ENERGY_BALANCE_TOLERANCE,
        description=(
            "Air enthalpy rise to the discharge temperature above (1 + this) times the "
            "electric input is flagged. Default 0.05, our choice."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    checks.sgen_tolerance_parameter("electric power / T0"),
    Parameter(
        "isentropic_tolerance",
        "1",
        ISENTROPIC_TOLERANCE,
        description="Isentropic efficiencies above 1 + this are flagged.",
        minimum=0.0,
        maximum=1.0,
    ),
)

RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn("electric_power_w", "W", "Electric input."),
    ResultColumn("air_mass_flow_kg_per_s", "kg/s", "Delivered humid-air mass flow."),
    ResultColumn(
        "free_air_delivery_m3_per_s", "m^3/s", "Delivered flow as volume at the FAD reference."
    ),
    ResultColumn(
        "inlet_volume_flow_m3_per_s", "m^3/s", "Delivered flow as volume at the actual intake."
    ),
    ResultColumn("inlet_humidity_ratio", "1", "Water vapour per dry air at the intake [kg/kg]."),
    ResultColumn("pressure_ratio", "1", "Discharge over inlet absolute pressure."),
    ResultColumn(
        "specific_power_j_per_m3",
        "J/m^3",
        "Electric input per FAD volume flow (W per m^3/s); / 60,000 gives kW per m^3/min.",
    ),
    ResultColumn("isentropic_power_w", "W", "Power of an isentropic compression, intake to p2."),
    ResultColumn("isothermal_power_w", "W", "Power of an isothermal compression at T_inlet."),
    ResultColumn(
        "isentropic_discharge_temperature_k",
        "K",
        "Discharge temperature of that isentropic compression.",
    ),
    ResultColumn(
        "isentropic_efficiency", "1", "Isentropic power over electric input (wire to air)."
    ),
    ResultColumn(
        "isothermal_efficiency", "1", "Isothermal power over electric input (wire to air)."
    ),
    ResultColumn(
        "compressed_air_exergy_w",
        "W",
        "Flow exergy gained by the air, intake to delivery at T0 and the discharge pressure.",
    ),
    ResultColumn(
        "eta_2", "1", "Second-law efficiency: compressed_air_exergy_w over electric input."
    ),
    ResultColumn(
        "heat_rejected_w", "W", "Electric input minus the air's enthalpy gain to delivery at T0."
    ),
    ResultColumn("recoverable_heat_w", "W", "heat_recovery_fraction times heat_rejected_w."),
    ResultColumn("recoverable_heat_share", "1", "recoverable_heat_w over electric input."),
    ResultColumn(
        "air_enthalpy_rise_w",
        "W",
        "Air enthalpy rise to the measured discharge temperature (NaN when not bound).",
    ),
    ResultColumn(
        "exergy_destroyed_w", "W", "Electric input minus compressed_air_exergy_w (exergy balance)."
    ),
    ResultColumn("sgen_w_per_k", "W/K", "Entropy generation rate (entropy balance)."),
    ResultColumn("lost_work_w", "W", "T0 times entropy generation (Gouy-Stodola)."),
)


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray:
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def air_compressor_performance(
    inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext
) -> pd.DataFrame:
    """Specific power, isentropic and isothermal efficiency, eta_2 and lost work of a compressor.

    Parameters
    ----------
    inputs : DataFrame
        One row per interval, one column per bound role, SI units: ``electric_power``
        [W], ``inlet_temperature`` [K], ``discharge_pressure`` [Pa, absolute],
        ``free_air_delivery`` [m^3/s at the FAD reference] and/or ``air_mass_flow``
        [kg/s]; optional ``inlet_pressure`` [Pa], ``inlet_relative_humidity`` [-],
        ``inlet_humidity_ratio`` [kg/kg], ``discharge_temperature`` [K].
    params : Mapping[str, float]
        FAD reference ``fad_reference_pressure_pa`` [Pa], ``fad_reference_temperature_k``
        [K], ``fad_reference_relative_humidity`` [-]; ``assumed_inlet_relative_humidity``
        [-], ``heat_recovery_fraction`` [-] and the tolerances [-]; missing ones take
        the module defaults.
    context : ModelContext
        ``dead`` (T0 [K] and p0 [Pa], scalar or one per row).

    Returns
    -------
    DataFrame
        Same index as ``inputs``; the columns of :data:`RESULTS` ([W], [W/K], [J/m^3],
        [m^3/s], [kg/s], [K], [-]) and an integer ``flags`` column of
        :class:`engine.checks.Flag` bits. A row with a missing or impossible input (a
        relative humidity outside 0-1, for example a percentage; a temperature below the
        gas polynomials' 200 K; a non-positive pressure) is NaN throughout with
        ``INPUT_OUT_OF_RANGE``.

    Raises
    ------
    ValueError
        When neither ``free_air_delivery`` nor ``air_mass_flow`` is bound (a
        configuration error concerning every row).

    Notes
    -----
    Flow: dry air ``n_da = (p_ref - RH_ref p_sat(T_ref)) V_FAD / (R T_ref)`` [mol/s] and
    ``m = n_da M_da (1 + w)`` with ``w`` the intake humidity ratio ([1]_).

    Ideal reference compressions of the same air from (T1, p1) to p2 ([2]_, Ch. 7), per
    kg of humid air with ``R_mix = R / M_mix``::

        P_s = m [h(T2s) - h(T1)],  s(T2s, p2) = s(T1, p1)   (variable cp, NASA polynomials)
        P_T = m R_mix T1 ln(p2 / p1)
        eta_s = P_s / P_el         eta_T = P_T / P_el         (wire to air)

    Second law, product at (T0, p2), dead state (T0, p0), same composition ([3]_)::

        ex(T, p) = h(T) - h(T0) - T0 [s(T, p) - s(T0, p0)]
        X_air = m [ex(T0, p2) - ex(T1, p1)]      eta_2 = X_air / P_el
        X_d   = P_el - X_air                     (exergy route)
        Q_rej = P_el - m [h(T0) - h(T1)]         (heat to the surroundings at T0)
        Sgen  = m [s(T0, p2) - s(T1, p1)] + Q_rej / T0        lost_work = T0 Sgen

    ``T0 Sgen = X_d`` identically (Gouy-Stodola, Eq. 3.24 of [3]_). With the intake at
    the dead state, ``X_air = m R_mix T0 ln(p2 / p0)`` and ``eta_2 = eta_T``.

    Heat recovery: ``recoverable_heat_w = heat_recovery_fraction * Q_rej`` ([4]_).

    Flags: INPUT_OUT_OF_RANGE; ISENTROPIC_ABOVE_ONE when ``eta_s > 1 +
    isentropic_tolerance``; ABOVE_CARNOT when ``eta_2 > 1``;
    NEGATIVE_ENTROPY_GENERATION when ``Sgen < -sgen_tolerance P_el / T0``;
    ENERGY_BALANCE_OPEN when ``m [h(T_discharge) - h(T1)] > (1 +
    energy_balance_tolerance) P_el`` (the air cannot carry more energy than went in).

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> row = pd.DataFrame({"electric_power": [90e3], "inlet_temperature": [293.15],
    ...     "inlet_relative_humidity": [0.0], "discharge_pressure": [8e5],
    ...     "free_air_delivery": [15.0 / 60]})
    >>> out = air_compressor_performance(row, {}, ModelContext(dead_state(293.15, 1e5)))
    >>> round(float(out["specific_power_j_per_m3"].iloc[0]) / 60e3, 2)  # kW per m^3/min
    6.0
    >>> round(float(out["isothermal_efficiency"].iloc[0]), 3)
    0.578
    """
    n = len(inputs)
    p_ref = float(params.get("fad_reference_pressure_pa", FAD_REFERENCE_PRESSURE_PA))
    t_ref = float(params.get("fad_reference_temperature_k", FAD_REFERENCE_TEMPERATURE_K))
    rh_ref = float(params.get("fad_reference_relative_humidity", FAD_REFERENCE_RELATIVE_HUMIDITY))
    rh_assumed = float(
        params.get("assumed_inlet_relative_humidity", ASSUMED_INLET_RELATIVE_HUMIDITY)
    )
    recovery = float(params.get("heat_recovery_fraction", HEAT_RECOVERY_FRACTION))
    balance_tolerance = float(params.get("energy_balance_tolerance", ENERGY_BALANCE_TOLERANCE))
    sgen_tolerance = float(params.get("sgen_tolerance", SGEN_TOLERANCE))
    isentropic_tolerance = float(params.get("isentropic_tolerance", ISENTROPIC_TOLERANCE))
    if "free_air_delivery" not in inputs.columns and "air_mass_flow" not in inputs.columns:
        raise ValueError(
            "an air_compressor needs free_air_delivery or air_mass_flow; neither is bound"
        )

    dead = context.dead
    t0 = np.broadcast_to(np.asarray(dead.t0_k, dtype=float), (n,))
    p0 = np.broadcast_to(np.asarray(dead.p0_pa, dtype=float), (n,))
    power = _column(inputs, "electric_power")
    t1 = _column(inputs, "inlet_temperature")
    p1 = _column(inputs, "inlet_pressure") if "inlet_pressure" in inputs.columns else p0
    p2 = _column(inputs, "discharge_pressure")
    if "inlet_humidity_ratio" in inputs.columns:
        w = _column(inputs, "inlet_humidity_ratio")
    else:
        rh = (
            _column(inputs, "inlet_relative_humidity")
            if "inlet_relative_humidity" in inputs.columns
            else np.full(n, rh_assumed)
        )
        w = humid_air.humidity_ratio(rh, t1, p1)

    # Flow: dry air from the FAD at its reference dry-air partial pressure, or the mass.
    m_da_molar = dry_air_molar_mass_kg_per_mol()
    p_dry_ref = float(humid_air.dry_air_partial_pressure_pa(p_ref, t_ref, rh_ref)[0])
    with np.errstate(all="ignore"):
        fad = (
            _column(inputs, "free_air_delivery")
            if "free_air_delivery" in inputs.columns
            else np.full(n, np.nan)
        )
        mass_from_fad = p_dry_ref * fad / (R_J_PER_MOL_K * t_ref) * m_da_molar * (1.0 + w)
        if "air_mass_flow" in inputs.columns:
            mass = _column(inputs, "air_mass_flow")
            mass = np.where(np.isfinite(mass), mass, mass_from_fad)
        else:
            mass = mass_from_fad
        fad = mass / (1.0 + w) / m_da_molar * R_J_PER_MOL_K * t_ref / p_dry_ref

    r_mix = humid_air.gas_constant_j_per_kg_k(w)
    h1 = humid_air.enthalpy_j_per_kg(t1, w)
    h0 = humid_air.enthalpy_j_per_kg(t0, w)
    s1 = humid_air.entropy_j_per_kg_k(t1, p1, w)
    s_product = humid_air.entropy_j_per_kg_k(t0, p2, w)
    s_dead = humid_air.entropy_j_per_kg_k(t0, p0, w)
    t2s = humid_air.isentropic_temperature(t1, p1, p2, w)
    h2s = humid_air.enthalpy_j_per_kg(t2s, w)

    with np.errstate(invalid="ignore"):
        valid = (
            np.isfinite(power)
            & (power >= 0)
            & np.isfinite(mass)
            & (mass >= 0)
            & np.isfinite(p2)
            & (p2 > 0)
            & np.isfinite(h1)
            & np.isfinite(s1)
            & np.isfinite(h0)
            & np.isfinite(s_product)
            & np.isfinite(s_dead)
            & np.isfinite(h2s)
            & (t0 > 0)
        )

    with np.errstate(all="ignore"):
        running = power > 0
        isentropic = mass * (h2s - h1)
        isothermal = mass * r_mix * t1 * np.log(p2 / p1)
        # Exergy route: flow exergy of delivered and intake air.
        ex_product = 0.0 - t0 * (s_product - s_dead)
        ex_inlet = (h1 - h0) - t0 * (s1 - s_dead)
        air_exergy = mass * (ex_product - ex_inlet)
        # Entropy route: entropy carried by the air and by the heat to the surroundings.
        heat_rejected = power - mass * (h0 - h1)
        sgen = mass * (s_product - s1) + heat_rejected / t0
        recoverable = recovery * heat_rejected
        results = {
            "electric_power_w": power,
            "air_mass_flow_kg_per_s": mass,
            "free_air_delivery_m3_per_s": fad,
            "inlet_volume_flow_m3_per_s": mass * r_mix * t1 / p1,
            "inlet_humidity_ratio": w,
            "pressure_ratio": p2 / p1,
            "specific_power_j_per_m3": np.where(fad > 0, power / fad, np.nan),
            "isentropic_power_w": isentropic,
            "isothermal_power_w": isothermal,
            "isentropic_discharge_temperature_k": t2s,
            "isentropic_efficiency": np.where(running, isentropic / power, np.nan),
            "isothermal_efficiency": np.where(running, isothermal / power, np.nan),
            "compressed_air_exergy_w": air_exergy,
            "eta_2": np.where(running, air_exergy / power, np.nan),
            "heat_rejected_w": heat_rejected,
            "recoverable_heat_w": recoverable,
            "recoverable_heat_share": np.where(running, recoverable / power, np.nan),
            "air_enthalpy_rise_w": np.full(n, np.nan),
            "exergy_destroyed_w": power - air_exergy,
            "sgen_w_per_k": sgen,
            "lost_work_w": lost_work(sgen, t0),
        }
        if "discharge_temperature" in inputs.columns:
            t_dis = _column(inputs, "discharge_temperature")
            results["air_enthalpy_rise_w"] = mass * (humid_air.enthalpy_j_per_kg(t_dis, w) - h1)
            valid &= np.isfinite(results["air_enthalpy_rise_w"])

    frame = pd.DataFrame(
        {name: np.where(valid, values, np.nan) for name, values in results.items()},
        index=inputs.index,
    )
    with np.errstate(all="ignore"):
        excess = frame["air_enthalpy_rise_w"] / frame["electric_power_w"] - 1.0
    frame["flags"] = checks.combine(
        checks.input_out_of_range(valid),
        checks.isentropic_above_one(frame["isentropic_efficiency"] - isentropic_tolerance),
        checks.above_carnot(frame["eta_2"], 1.0 + CARNOT_ROUND_OFF),
        checks.negative_entropy_generation(
            frame["sgen_w_per_k"], frame["electric_power_w"] / t0, sgen_tolerance
        ),
        checks.balance_open(np.where(excess > 0, excess, 0.0), balance_tolerance),
    )
    return frame


KIND = UnitKind(
    name=KIND_NAME,
    title="Air compressor",
    roles=ROLES,
    parameters=PARAMETERS,
    results=RESULTS,
    load_result="free_air_delivery_m3_per_s",
    model=air_compressor_performance,
    alternatives=(("free_air_delivery", "air_mass_flow"),),
    description=(
        "Compressed-air supply measured at the intake, the discharge and the electric "
        "input: specific power per free air delivered (ISO 1217 reference by default), "
        "isentropic and isothermal efficiency of humid air as an ideal-gas mixture, eta_2 "
        "on the exergy of the air at ambient temperature, lost work and recoverable heat."
    ),
)
"""The air compressor's catalogue entry."""
