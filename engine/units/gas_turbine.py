"""Gas turbine (simple cycle): compressor, heat rate, exhaust flow and energy, second law, ISO output.

The boundary encloses the whole machine, from the compressor inlet flange (air at the
measured compressor-inlet state) and the fuel connection to the exhaust flange and the
generator terminals. Generator and bearing losses and the heat lost through the casing
leave as heat to the surroundings at the dead-state temperature T0. The exhaust leaves
the boundary at the measured exhaust temperature: its energy and exergy are reported as
what a heat-recovery steam generator could take (``exhaust_energy_w``,
``exhaust_exergy_w``), not as a loss of the turbine's first-law efficiency.

Air and exhaust are ideal-gas mixtures of :mod:`engine.gas` (NASA polynomials): the air
is humid air (:mod:`engine.humid_air`) at the humidity ratio of the ambient relative
humidity; the exhaust is the product of complete combustion of the fuel's composition
(:func:`engine.combustion.flue_gas`) with that air. The fuel must have a composition
(:meth:`engine.fuels.FuelProperties.from_gas` or ``from_ultimate_analysis``).

Air flow. The compressor air flow is rarely metered. When ``air_mass_flow`` is not
bound (or is missing in a row), it follows from the energy balance on the whole
turbine, the exhaust-energy (heat-balance) method of ASME PTC 22 [1]_: the fuel's
enthalpy plus the air's equals the generator output, the generator and mechanical
losses, the casing heat loss and the exhaust enthalpy. The exhaust is fuel products plus
the air, so that balance is linear in the air factor and is solved in closed form per
row. When the air flow is metered, the balance is checked instead
(``energy_balance_error``).

ISO output. With ``iso_correction`` set to ``polynomial`` the measured output and heat
rate are corrected to the ISO standard reference conditions (15 degC, 101.325 kPa, 60 %
relative humidity, ISO 2314 [2]_) by the multiplicative correction-factor structure of
PTC 22 [1]_: ``P_ISO = P / (α_T α_p α_w)``, ``HR_ISO = HR / (β_T β_p β_w)``, each factor
the manufacturer's design correction curve (the ratio of output or heat rate at the test
condition to that at the reference) written as a polynomial normalised to 1 at ISO:

- compressor inlet temperature: ``α_T = 1 + a1 ΔT + a2 ΔT^2 + a3 ΔT^3``, ``ΔT = T1 - 288.15 K``;
- barometric pressure: ``α_p = 1 + ap (p_amb / 101.325 kPa - 1)``; ``ap = 1`` (output
  proportional to air density, the common-practice default) and ``bp = 0``;
- humidity: ``α_w = 1 + aw (ω - ω_ISO)``, ω the humidity ratio [kg/kg].

References
----------
.. [1] ASME PTC 22-2014, "Performance Test Code on Gas Turbines": Sec. 5 (computation of
   results: corrected power and heat rate by multiplicative correction factors applied
   to the measured values; exhaust flow and exhaust energy determined by the
   heat-balance method, the turbine's energy balance with the generator, mechanical and
   radiation losses estimated). Section numbers and equation structure from memory.
.. [2] ISO 2314:2009, "Gas turbines - Acceptance tests": standard reference conditions
   for rated performance (ambient 15 degC, 101.325 kPa, relative humidity 60 %); the
   reference turbine inlet temperature computed by a heat balance with all the
   compressor air mixed with the fuel before the turbine. Clause numbers from memory.
.. [3] Y. A. Cengel, M. A. Boles, "Thermodynamics: An Engineering Approach", 9th ed.,
   McGraw-Hill, 2019, Ch. 7 (isentropic efficiency of a compressor, variable specific
   heats) and Ch. 9 (Brayton cycle; thermal efficiency and heat rate). Chapters from
   memory.
.. [4] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Ch. 2 (entropy balance), Ch. 3 (exergy balance, chemical exergy, Gouy-Stodola
   Eq. 3.24; exergetic efficiency of a gas turbine as power over fuel exergy).
.. [5] J. Szargut, D. R. Morris, F. R. Steward, "Exergy Analysis of Thermal, Chemical
   and Metallurgical Processes", Hemisphere, 1988, Sec. 2.4-2.5 and Appendix Table I
   (fuel, air and exhaust chemical exergy; via :mod:`engine.units._gas_exergy`).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine import checks, chemical_exergy, combustion, humid_air
from engine.catalogue import (
    ModelContext,
    Parameter,
    ResultColumn,
    Role,
    TextParameter,
    UnitKind,
)
from engine.exergy import lost_work
from engine.units._fuel_input import FUEL_ALTERNATIVES, FUEL_ROLES, fuel_input
from engine.units._gas_exergy import GasStream, fuel_state

KIND_NAME = "gas_turbine"

J_PER_KWH = 3.6e6
"""Joules per kilowatt-hour. [J/kWh]"""

ISO_TEMPERATURE_K = 288.15
"""ISO 2314 standard ambient temperature, 15 degC [2]_. [K]"""
ISO_PRESSURE_PA = 101_325.0
"""ISO 2314 standard ambient pressure [2]_. [Pa]"""
ISO_RELATIVE_HUMIDITY = 0.6
"""ISO 2314 standard ambient relative humidity, 60 % [2]_. [-]"""
ISO_HUMIDITY_RATIO = float(
    humid_air.humidity_ratio(ISO_RELATIVE_HUMIDITY, ISO_TEMPERATURE_K, ISO_PRESSURE_PA)[0]
)
"""Humidity ratio at the ISO conditions, about 0.00634 kg/kg (this package's humid air). [kg/kg]"""

GENERATOR_EFFICIENCY = 0.985
"""Default generator efficiency (electrical output over shaft input, mechanical losses
of the generator included). [-]

Common practice for air- or hydrogen-cooled generators of 40-300 MW at full load: 98-99 %
(from memory). Configure the manufacturer's value at the usual load.
"""

HEAT_LOSS_FRACTION = 0.005
"""Default casing, bearing and lube-oil heat loss as a fraction of the LHV heat input. [-]

Our choice of an order of magnitude (radiation and convection from the casing and the
lube-oil cooler duty are small, a few tenths of a percent of the heat input); it
enters only the heat-balance air flow, which it changes by about 1 % per 0.01.
"""

ASSUMED_RELATIVE_HUMIDITY = ISO_RELATIVE_HUMIDITY
"""Ambient relative humidity used when no humidity role is bound: the ISO 60 %. [-]"""

ENERGY_BALANCE_TOLERANCE = 0.02
"""Default largest |energy_balance_error| (metered air flow) before ENERGY_BALANCE_OPEN. [-]

Our choice: about the combined uncertainty of a compressor-inlet air-flow measurement
(a bellmouth or a calibrated inlet, 1-2 %) seen against the exhaust energy, which is
about 60 % of the heat input.
"""

SGEN_TOLERANCE = checks.SGEN_TOLERANCE

ISENTROPIC_TOLERANCE = 1e-6
"""Default margin above 1 before ISENTROPIC_ABOVE_ONE. [-] Our choice: above round-off."""

CARNOT_ROUND_OFF = 1e-12
"""Margin on eta_2 above 1 before ABOVE_CARNOT (round-off only). [-]"""

_CORRECTION_NONE = "none"
_CORRECTION_POLYNOMIAL = "polynomial"


def _curve_parameter(name: str, unit: str, default: float, what: str) -> Parameter:
    return Parameter(name, unit, default, description=what)


ROLES: tuple[Role, ...] = (
    *FUEL_ROLES,
    Role(
        "fuel_temperature",
        "K",
        required=False,
        description="Fuel temperature at the turbine's fuel connection; T0 when not bound.",
    ),
    Role("generator_power", "W", description="Gross electrical output at the generator terminals."),
    Role(
        "compressor_inlet_temperature", "K", description="Air temperature at the compressor inlet."
    ),
    Role(
        "compressor_inlet_pressure",
        "Pa",
        required=False,
        description=(
            "Absolute air pressure at the compressor inlet (after the inlet filter); the "
            "ambient pressure when not bound."
        ),
    ),
    Role(
        "compressor_discharge_temperature",
        "K",
        description="Air temperature at the compressor discharge.",
    ),
    Role(
        "compressor_discharge_pressure",
        "Pa",
        description="Absolute air pressure at the compressor discharge.",
    ),
    Role("exhaust_temperature", "K", description="Exhaust gas temperature at the turbine exhaust."),
    Role(
        "exhaust_pressure",
        "Pa",
        required=False,
        description=(
            "Absolute exhaust pressure (ambient plus the back pressure of a heat-recovery "
            "steam generator); the ambient pressure when not bound."
        ),
    ),
    Role(
        "air_mass_flow",
        "kg/s",
        required=False,
        description=(
            "Metered humid-air mass flow into the compressor. When not bound, the air flow "
            "comes from the turbine's energy balance (heat-balance method)."
        ),
    ),
    Role(
        "ambient_temperature",
        "K",
        required=False,
        description=(
            "Ambient dry-bulb temperature, where the relative humidity is measured; the "
            "compressor inlet temperature when not bound (not T0: a relative humidity "
            "taken at a fixed T0 can mean supersaturated air at the inlet)."
        ),
    ),
    Role(
        "ambient_pressure",
        "Pa",
        required=False,
        description="Barometric pressure; the dead-state pressure p0 when not bound.",
    ),
    Role(
        "ambient_relative_humidity",
        "1",
        required=False,
        description=(
            "Ambient relative humidity as a fraction; assumed_relative_humidity when not "
            "bound. Sets the humidity ratio of the air (unchanged through the inlet)."
        ),
    ),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "generator_efficiency",
        "1",
        GENERATOR_EFFICIENCY,
        description=(
            "Generator efficiency; its losses leave as heat. Default 0.985, common practice."
        ),
        minimum=0.5,
        maximum=1.0,
    ),
    Parameter(
        "heat_loss_fraction",
        "1",
        HEAT_LOSS_FRACTION,
        description=(
            "Casing, bearing and lube-oil heat loss as a fraction of the LHV heat input, "
            "used by the heat-balance air flow. Default 0.005, our choice."
        ),
        minimum=0.0,
        maximum=0.2,
    ),
    Parameter(
        "assumed_relative_humidity",
        "1",
        ASSUMED_RELATIVE_HUMIDITY,
        description="Ambient relative humidity when no humidity role is bound. Default 0.6 (ISO).",
        minimum=0.0,
        maximum=1.0,
    ),
    Parameter(
        "energy_balance_tolerance",
        "1",
        ENERGY_BALANCE_TOLERANCE,
        description=(
            "Largest absolute energy_balance_error before the balance is flagged open (only "
            "checkable with air_mass_flow bound). Default 0.02, our choice."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    checks.sgen_tolerance_parameter("fuel exergy / T0"),
    Parameter(
        "isentropic_tolerance",
        "1",
        ISENTROPIC_TOLERANCE,
        description="Compressor isentropic efficiencies above 1 + this are flagged.",
        minimum=0.0,
        maximum=1.0,
    ),
    _curve_parameter(
        "power_correction_t1", "1/K", 0.0, "ISO output curve: a1 of alpha_T in (T1 - 288.15 K)."
    ),
    _curve_parameter(
        "power_correction_t2", "1/K^2", 0.0, "ISO output curve: a2 of alpha_T in (T1 - 288.15 K)^2."
    ),
    _curve_parameter(
        "power_correction_t3", "1/K^3", 0.0, "ISO output curve: a3 of alpha_T in (T1 - 288.15 K)^3."
    ),
    _curve_parameter(
        "power_correction_p1",
        "1",
        1.0,
        "ISO output curve: ap of alpha_p in (p_amb / 101325 Pa - 1). Default 1 (output "
        "proportional to air density), common practice.",
    ),
    _curve_parameter(
        "power_correction_w1",
        "1",
        0.0,
        "ISO output curve: aw of alpha_w in (humidity ratio - ISO humidity ratio) [per kg/kg].",
    ),
    _curve_parameter(
        "heat_rate_correction_t1",
        "1/K",
        0.0,
        "ISO heat-rate curve: b1 of beta_T in (T1 - 288.15 K).",
    ),
    _curve_parameter(
        "heat_rate_correction_t2",
        "1/K^2",
        0.0,
        "ISO heat-rate curve: b2 of beta_T in (T1 - 288.15 K)^2.",
    ),
    _curve_parameter(
        "heat_rate_correction_t3",
        "1/K^3",
        0.0,
        "ISO heat-rate curve: b3 of beta_T in (T1 - 288.15 K)^3.",
    ),
    _curve_parameter(
        "heat_rate_correction_p1",
        "1",
        0.0,
        "ISO heat-rate curve: bp of beta_p in (p_amb / 101325 Pa - 1). Default 0.",
    ),
    _curve_parameter(
        "heat_rate_correction_w1",
        "1",
        0.0,
        "ISO heat-rate curve: bw of beta_w in (humidity ratio - ISO humidity ratio) [per kg/kg].",
    ),
)

TEXT_PARAMETERS: tuple[TextParameter, ...] = (
    TextParameter(
        "iso_correction",
        (_CORRECTION_NONE, _CORRECTION_POLYNOMIAL),
        _CORRECTION_NONE,
        description=(
            "Whether the design correction curves (the *_correction_* parameters) are "
            "configured: 'polynomial' computes power_iso_w and heat_rate_iso_lhv_j_per_kwh, "
            "'none' leaves them NaN."
        ),
    ),
)

RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn("generator_power_w", "W", "Gross electrical output."),
    ResultColumn("fuel_mass_flow_kg_per_s", "kg/s", "Fuel mass flow."),
    ResultColumn("fuel_heat_input_hhv_w", "W", "Fuel mass flow times higher heating value."),
    ResultColumn("fuel_heat_input_lhv_w", "W", "Fuel mass flow times lower heating value."),
    ResultColumn("eta_1", "1", "Thermal efficiency, HHV basis: output over HHV heat input."),
    ResultColumn("eta_1_lhv", "1", "Thermal efficiency, LHV basis (the gas-turbine convention)."),
    ResultColumn("heat_rate_j_per_kwh", "J/kWh", "Heat rate, HHV basis: 3.6e6 / eta_1."),
    ResultColumn("heat_rate_lhv_j_per_kwh", "J/kWh", "Heat rate, LHV basis: 3.6e6 / eta_1_lhv."),
    ResultColumn("inlet_humidity_ratio", "1", "Water vapour per dry air of the air [kg/kg]."),
    ResultColumn("compressor_pressure_ratio", "1", "Compressor discharge over inlet pressure."),
    ResultColumn(
        "compressor_isentropic_discharge_temperature_k",
        "K",
        "Discharge temperature of an isentropic compression of the humid air.",
    ),
    ResultColumn(
        "compressor_isentropic_efficiency",
        "1",
        "Isentropic over actual enthalpy rise of the humid air across the compressor.",
    ),
    ResultColumn("compressor_power_w", "W", "Air flow times the air's enthalpy rise."),
    ResultColumn(
        "air_mass_flow_kg_per_s",
        "kg/s",
        "Humid-air mass flow: metered, or by the heat-balance method.",
    ),
    ResultColumn("excess_air", "1", "Air supplied over the theoretical air, minus 1."),
    ResultColumn("exhaust_o2_dry", "1", "O2 mole fraction of the exhaust, dry basis."),
    ResultColumn("exhaust_mass_flow_kg_per_s", "kg/s", "Exhaust mass flow: air plus fuel."),
    ResultColumn(
        "mixed_turbine_inlet_temperature_k",
        "K",
        "Turbine inlet temperature by heat balance with all the compressor air mixed in "
        "(ISO 2314 reference; below the firing temperature).",
    ),
    ResultColumn(
        "exhaust_energy_w",
        "W",
        "Exhaust enthalpy above T0 (water as vapour): the heat available for recovery.",
    ),
    ResultColumn(
        "exhaust_exergy_w",
        "W",
        "Thermomechanical exergy of the exhaust relative to T0, p0: available for recovery.",
    ),
    ResultColumn(
        "heat_loss_w",
        "W",
        "Generator, mechanical and casing losses: the energy balance's closure, leaving at T0.",
    ),
    ResultColumn(
        "energy_balance_error",
        "1",
        "(heat_loss_w - expected losses) / LHV heat input; 0 with the heat-balance air flow.",
    ),
    ResultColumn(
        "fuel_exergy_w", "W", "Fuel exergy: chemical (from the composition) plus physical."
    ),
    ResultColumn("air_exergy_w", "W", "Exergy of the air at the compressor inlet (small)."),
    ResultColumn("eta_2", "1", "Second-law efficiency: output over fuel exergy."),
    ResultColumn(
        "exergy_destroyed_internal_w",
        "W",
        "Exergy destroyed inside the turbine (exergy balance): fuel + air - output - exhaust.",
    ),
    ResultColumn(
        "exergy_lost_exhaust_w",
        "W",
        "Exergy the exhaust carries out beyond the air's (thermal and chemical); the "
        "recoverable part is exhaust_exergy_w.",
    ),
    ResultColumn(
        "exergy_destroyed_and_lost_w", "W", "Fuel exergy minus output: destroyed plus exhaust."
    ),
    ResultColumn("sgen_w_per_k", "W/K", "Entropy generation rate (entropy balance)."),
    ResultColumn("lost_work_w", "W", "T0 times entropy generation (Gouy-Stodola)."),
    ResultColumn(
        "power_iso_w", "W", "Output corrected to ISO 2314 conditions; NaN without curves."
    ),
    ResultColumn(
        "heat_rate_iso_lhv_j_per_kwh",
        "J/kWh",
        "LHV heat rate corrected to ISO 2314 conditions; NaN without curves.",
    ),
)


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray:
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def _optional(inputs: pd.DataFrame, name: str, default: np.ndarray) -> np.ndarray:
    """The bound column where it is a number, ``default`` where it is not bound."""
    if name not in inputs.columns:
        return np.asarray(default, dtype=float)
    return _column(inputs, name)


def _correction(
    params: Mapping[str, float], prefix: str, dt: np.ndarray, dp: np.ndarray, dw: np.ndarray
) -> np.ndarray:
    """Product of the three multiplicative correction factors; NaN where one is not positive."""

    def c(suffix: str, default: float = 0.0) -> float:
        return float(params.get(f"{prefix}_{suffix}", default))

    default_p = 1.0 if prefix == "power_correction" else 0.0
    f_t = 1.0 + dt * (c("t1") + dt * (c("t2") + dt * c("t3")))
    f_p = 1.0 + c("p1", default_p) * dp
    f_w = 1.0 + c("w1") * dw
    with np.errstate(invalid="ignore"):
        ok = (f_t > 0) & (f_p > 0) & (f_w > 0)
    return np.where(ok, f_t * f_p * f_w, np.nan)


def gas_turbine_performance(
    inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext
) -> pd.DataFrame:
    """Heat rate, compressor efficiency, exhaust flow and energy, second law and ISO output.

    Parameters
    ----------
    inputs : DataFrame
        One row per interval, one column per bound role, SI units:
        ``fuel_mass_flow`` [kg/s] and/or ``fuel_volume_flow`` [m^3/s] (optional
        ``fuel_hhv`` [J/kg], ``fuel_temperature`` [K]); ``generator_power`` [W];
        ``compressor_inlet_temperature`` [K], ``compressor_discharge_temperature`` [K],
        ``compressor_discharge_pressure`` [Pa]; ``exhaust_temperature`` [K]; optional
        ``compressor_inlet_pressure`` [Pa], ``exhaust_pressure`` [Pa],
        ``air_mass_flow`` [kg/s], ``ambient_temperature`` [K], ``ambient_pressure``
        [Pa], ``ambient_relative_humidity`` [-].
    params : Mapping[str, float]
        ``generator_efficiency`` [-], ``heat_loss_fraction`` [-],
        ``assumed_relative_humidity`` [-], the tolerances [-] and the correction-curve
        coefficients (``power_correction_*``, ``heat_rate_correction_*``; [1/K],
        [1/K^2], [1/K^3], [-]); missing ones take the module defaults.
    context : ModelContext
        ``dead`` (T0 [K], p0 [Pa], scalar or one per row); ``fuel`` with a composition;
        ``text_parameters`` (``iso_correction``: ``"none"``, the default, or
        ``"polynomial"``).

    Returns
    -------
    DataFrame
        Same index as ``inputs``; the columns of :data:`RESULTS` ([W], [W/K], [J/kWh],
        [kg/s], [K], [-]) and an integer ``flags`` column of
        :class:`engine.checks.Flag` bits. A row with a missing or impossible input
        (non-positive fuel flow or power, a relative humidity outside 0-1, a temperature
        below 200 K) is NaN throughout with ``INPUT_OUT_OF_RANGE``; so is a row whose
        heat balance needs less than the theoretical air (also ENERGY_BALANCE_OPEN). A
        row with a bad compressor-discharge reading keeps every other result and is NaN
        in the compressor columns and the mixed inlet temperature, with
        ``INPUT_OUT_OF_RANGE``.

    Raises
    ------
    ValueError
        For configuration errors concerning every row: no fuel, a fuel without a
        composition, no fuel flow bound, a volume flow for a fuel without a density.

    Notes
    -----
    Per kg of fuel, with ``A`` the theoretical humid air and ``P`` the stoichiometric
    products (both from :func:`engine.combustion.flue_gas` at the air's humidity
    ratio), the exhaust at air factor ``λ`` is ``E = P + (λ - 1) A``. Formation-basis
    enthalpies (:mod:`engine.gas`) make the heat of reaction part of the balance::

        h_f(T_f) + λ H_A(T1) = (P_el + Q_loss) / m_f + H_P(T_ex) + (λ - 1) H_A(T_ex)
        Q_loss = P_el (1 / η_gen - 1) + f_loss m_f LHV
        λ = [(P_el + Q_loss) / m_f + H_P(T_ex) - H_A(T_ex) - h_f] / [H_A(T1) - H_A(T_ex)]

    (heat-balance method, [1]_). With ``air_mass_flow`` metered, ``λ = m_air / (m_f
    M_A)`` and ``heat_loss_w = m_f [h_f + λ H_A(T1) - H_E(T_ex)] - P_el``, its
    departure from the expected ``Q_loss`` being ``energy_balance_error`` (over the LHV
    heat input).

    First law ([3]_, Ch. 9)::

        eta_1 = P_el / (m_f HHV)     eta_1_lhv = P_el / (m_f LHV)     HR = 3.6e6 / eta
        exhaust_energy = m_f [H_E(T_ex) - H_E(T0)]

    The heat input is fuel flow times heating value (25 degC reference); the fuel's
    sensible heat enters the air-flow balance only.

    Compressor ([3]_, Ch. 7), humid air of ratio ω::

        eta_c = [h(T2s) - h(T1)] / [h(T2) - h(T1)],   s(T2s, p2) = s(T1, p1)
        compressor_power = m_air [h(T2) - h(T1)]

    Mixed turbine inlet temperature ([2]_): the temperature of ``E`` whose enthalpy is
    ``h_f + λ H_A(T2)``, i.e. adiabatic complete combustion with all the compressor air.

    Second law ([4]_, [5]_): every stream valued by ``Ex = H - T0 S + Σ N κ``
    (:mod:`engine.units._gas_exergy`)::

        F = m_f ex_f                   X_air = m_f λ Ex_A(T1, p1)
        X_E = m_f Ex_E(T_ex, p_ex)     exhaust_exergy = m_f [Ex_E(T_ex, p_ex) - Ex_E(T0, p0)]
        D = F + X_air - P_el - X_E                  (exergy balance)
        Sgen = m_f [S_E(T_ex, p_ex) - λ S_A(T1, p1) - s_f] + heat_loss / T0   (entropy balance)
        eta_2 = P_el / F         lost_work = T0 Sgen = D (Gouy-Stodola, Eq. 3.24 in [4]_)
        exergy_lost_exhaust = X_E - X_air = F - P_el - D

    ISO correction ([1]_, [2]_): see the module docstring.

    Flags: INPUT_OUT_OF_RANGE; ISENTROPIC_ABOVE_ONE when ``eta_c > 1 +
    isentropic_tolerance``; EFFICIENCY_ABOVE_ONE when ``eta_1 > 1``; ABOVE_CARNOT when
    ``eta_2 > 1``; NEGATIVE_ENTROPY_GENERATION when ``Sgen < -sgen_tolerance F / T0``;
    ENERGY_BALANCE_OPEN when ``|energy_balance_error| > energy_balance_tolerance`` or
    the heat balance needs less than the theoretical air.

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> from engine.fuels import FuelProperties
    >>> ng = FuelProperties.from_gas("pipeline gas", {"CH4": 0.95, "C2H6": 0.03, "N2": 0.02})
    >>> row = pd.DataFrame({"fuel_mass_flow": [2.25], "generator_power": [40e6],
    ...     "compressor_inlet_temperature": [288.15], "compressor_discharge_temperature": [720.0],
    ...     "compressor_discharge_pressure": [18e5], "exhaust_temperature": [823.15]})
    >>> out = gas_turbine_performance(row, {}, ModelContext(dead_state(288.15), ng))
    >>> round(float(out["eta_1_lhv"].iloc[0]), 3)
    0.369
    >>> round(float(out["exhaust_mass_flow_kg_per_s"].iloc[0]), 1)
    114.9
    """
    n = len(inputs)
    fuel = context.fuel
    if fuel is not None and fuel.ultimate is None:
        raise ValueError(
            f"a {KIND_NAME} needs the fuel's composition for its exhaust; fuel "
            f"{fuel.name!r} is given by heating values only"
        )
    fin = fuel_input(inputs, fuel, KIND_NAME)
    assert fuel is not None and fuel.ultimate is not None  # checked by fuel_input and above
    eta_gen = float(params.get("generator_efficiency", GENERATOR_EFFICIENCY))
    loss_fraction = float(params.get("heat_loss_fraction", HEAT_LOSS_FRACTION))
    rh_assumed = float(params.get("assumed_relative_humidity", ASSUMED_RELATIVE_HUMIDITY))
    balance_tolerance = float(params.get("energy_balance_tolerance", ENERGY_BALANCE_TOLERANCE))
    sgen_tolerance = float(params.get("sgen_tolerance", SGEN_TOLERANCE))
    isentropic_tolerance = float(params.get("isentropic_tolerance", ISENTROPIC_TOLERANCE))
    correction = context.text_parameters.get("iso_correction", _CORRECTION_NONE)

    dead = context.dead
    t0 = np.broadcast_to(np.asarray(dead.t0_k, dtype=float), (n,)).copy()
    p0 = np.broadcast_to(np.asarray(dead.p0_pa, dtype=float), (n,)).copy()
    power = _column(inputs, "generator_power")
    t1 = _column(inputs, "compressor_inlet_temperature")
    t2 = _column(inputs, "compressor_discharge_temperature")
    p2 = _column(inputs, "compressor_discharge_pressure")
    t_ex = _column(inputs, "exhaust_temperature")
    # Without an ambient thermometer the humidity is taken at the compressor inlet: the
    # same air without inlet conditioning, and never supersaturated there (a fixed T0
    # of 25 degC with 60 % would put winter inlet air above saturation).
    t_amb = _optional(inputs, "ambient_temperature", t1)
    p_amb = _optional(inputs, "ambient_pressure", p0)
    p1 = _optional(inputs, "compressor_inlet_pressure", p_amb)
    p_ex = _optional(inputs, "exhaust_pressure", p_amb)
    t_fuel = _optional(inputs, "fuel_temperature", t0)
    rh = _optional(inputs, "ambient_relative_humidity", np.full(n, rh_assumed))
    w = humid_air.humidity_ratio(rh, t_amb, p_amb)

    m_f = fin.mass_flow_kg_per_s
    hhv = fin.hhv_j_per_kg
    kappa = chemical_exergy.element_exergy_offsets_j_per_mol(t0, p0)
    # Per kg of fuel: theoretical humid air A and stoichiometric products P.
    stoichiometric = combustion.flue_gas(fuel.ultimate, 0.0, w)
    air = GasStream(stoichiometric.air_amounts_mol_per_kg, kappa)
    products = GasStream(stoichiometric.amounts_mol_per_kg, kappa)
    f = fuel_state(fuel, hhv, t_fuel, t0, kappa)

    with np.errstate(all="ignore"):
        expected_loss = power * (1.0 / eta_gen - 1.0) + loss_fraction * fin.heat_input_lhv_w
        h_a1 = air.enthalpy(t1)
        h_a_ex = air.enthalpy(t_ex)
        lam_balance = (
            (power + expected_loss) / m_f + products.enthalpy(t_ex) - h_a_ex - (f.enthalpy_j_per_kg)
        ) / (h_a1 - h_a_ex)
        lam = lam_balance
        if "air_mass_flow" in inputs.columns:
            lam_metered = _column(inputs, "air_mass_flow") / (m_f * air.mass)
            lam = np.where(np.isfinite(lam_metered), lam_metered, lam_balance)
        enough_air = lam >= 1.0
        lam = np.where(enough_air, lam, np.nan)
        exhaust = GasStream(
            {k: v + (lam - 1.0) * air.amounts.get(k, 0.0) for k, v in products.amounts.items()},
            kappa,
        )
        h_e_ex = exhaust.enthalpy(t_ex)
        heat_loss = m_f * (f.enthalpy_j_per_kg + lam * h_a1 - h_e_ex) - power
        balance_error = (heat_loss - expected_loss) / fin.heat_input_lhv_w
        m_air = m_f * lam * air.mass
        m_ex = m_f * exhaust.mass
        water = exhaust.amounts["H2O"]
        exhaust_o2_dry = exhaust.amounts["O2"] / (exhaust.mixture.total - water)

        # Compressor, humid air at the same humidity ratio.
        t2s = humid_air.isentropic_temperature(t1, p1, p2, w)
        h1 = humid_air.enthalpy_j_per_kg(t1, w)
        rise = humid_air.enthalpy_j_per_kg(t2, w) - h1
        eta_c = (humid_air.enthalpy_j_per_kg(t2s, w) - h1) / rise
        compressor_ok = np.isfinite(eta_c) & (rise > 0) & (p2 > p1)
        t_mixed = exhaust.mixture.temperature(f.enthalpy_j_per_kg + lam * air.enthalpy(t2), 1400.0)
        compressor_ok &= np.isfinite(t_mixed)

        # First law.
        eta_1 = power / fin.heat_input_hhv_w
        eta_1_lhv = power / fin.heat_input_lhv_w
        running = power > 0
        exhaust_energy = m_f * (h_e_ex - exhaust.enthalpy(t0))
        exhaust_exergy = m_f * exhaust.thermomechanical_exergy(t_ex, p_ex, t0, p0)

        # Second law: exergy route.
        fuel_exergy = m_f * f.exergy_j_per_kg
        air_exergy = m_f * lam * air.exergy(t1, p1, t0)
        exhaust_total_exergy = m_f * exhaust.exergy(t_ex, p_ex, t0)
        destroyed = fuel_exergy + air_exergy - power - exhaust_total_exergy
        # Entropy route: absolute entropies, the losses leaving as heat at T0.
        sgen = (
            m_f * (exhaust.entropy(t_ex, p_ex) - lam * air.entropy(t1, p1) - f.entropy_j_per_kg_k)
            + heat_loss / t0
        )

        # ISO correction by the design curves.
        if correction == _CORRECTION_POLYNOMIAL:
            dt = t1 - ISO_TEMPERATURE_K
            dp = p_amb / ISO_PRESSURE_PA - 1.0
            dw = w - ISO_HUMIDITY_RATIO
            power_iso = power / _correction(params, "power_correction", dt, dp, dw)
            hr_lhv = J_PER_KWH / eta_1_lhv
            hr_iso = hr_lhv / _correction(params, "heat_rate_correction", dt, dp, dw)
        else:
            power_iso = np.full(n, np.nan)
            hr_iso = np.full(n, np.nan)

    with np.errstate(invalid="ignore"):
        # Inputs first (their own properties), then what needs the air factor.
        inputs_ok = (
            fin.valid
            & np.isfinite(power)
            & (power >= 0)
            & np.isfinite(w)
            & np.isfinite(h_a1)
            & np.isfinite(h_a_ex)
            & np.isfinite(air.enthalpy(t0))
            & np.isfinite(air.entropy(t1, p1))
            & np.isfinite(t0)
            & (t0 > 0)
            & (p_ex > 0)
            & np.isfinite(f.enthalpy_j_per_kg)
            & np.isfinite(f.entropy_j_per_kg_k)
        )
    impossible_balance = inputs_ok & ~enough_air
    valid_lam = inputs_ok & enough_air & np.isfinite(sgen) & np.isfinite(exhaust_exergy)

    with np.errstate(all="ignore"):
        results = {
            "generator_power_w": power,
            "fuel_mass_flow_kg_per_s": m_f,
            "fuel_heat_input_hhv_w": fin.heat_input_hhv_w,
            "fuel_heat_input_lhv_w": fin.heat_input_lhv_w,
            "eta_1": eta_1,
            "eta_1_lhv": eta_1_lhv,
            "heat_rate_j_per_kwh": np.where(running, J_PER_KWH / eta_1, np.nan),
            "heat_rate_lhv_j_per_kwh": np.where(running, J_PER_KWH / eta_1_lhv, np.nan),
            "inlet_humidity_ratio": w,
            "compressor_pressure_ratio": np.where(compressor_ok, p2 / p1, np.nan),
            "compressor_isentropic_discharge_temperature_k": np.where(compressor_ok, t2s, np.nan),
            "compressor_isentropic_efficiency": np.where(compressor_ok, eta_c, np.nan),
            "compressor_power_w": np.where(compressor_ok, m_air * rise, np.nan),
            "air_mass_flow_kg_per_s": m_air,
            "excess_air": lam - 1.0,
            "exhaust_o2_dry": exhaust_o2_dry,
            "exhaust_mass_flow_kg_per_s": m_ex,
            "mixed_turbine_inlet_temperature_k": np.where(compressor_ok, t_mixed, np.nan),
            "exhaust_energy_w": exhaust_energy,
            "exhaust_exergy_w": exhaust_exergy,
            "heat_loss_w": heat_loss,
            "energy_balance_error": balance_error,
            "fuel_exergy_w": fuel_exergy,
            "air_exergy_w": air_exergy,
            "eta_2": power / fuel_exergy,
            "exergy_destroyed_internal_w": destroyed,
            "exergy_lost_exhaust_w": exhaust_total_exergy - air_exergy,
            "exergy_destroyed_and_lost_w": fuel_exergy - power,
            "sgen_w_per_k": sgen,
            "lost_work_w": lost_work(sgen, t0),
            "power_iso_w": np.where(running, power_iso, np.nan),
            "heat_rate_iso_lhv_j_per_kwh": np.where(running, hr_iso, np.nan),
        }
    frame = pd.DataFrame(
        {name: np.where(valid_lam, values, np.nan) for name, values in results.items()},
        index=inputs.index,
    )
    frame["flags"] = checks.combine(
        checks.input_out_of_range(valid_lam & compressor_ok),
        checks.isentropic_above_one(
            frame["compressor_isentropic_efficiency"] - isentropic_tolerance
        ),
        checks.efficiency_above_one(frame["eta_1"]),
        checks.above_carnot(frame["eta_2"], 1.0 + CARNOT_ROUND_OFF),
        checks.negative_entropy_generation(
            frame["sgen_w_per_k"], frame["fuel_exergy_w"] / t0, sgen_tolerance
        ),
        checks.balance_open(frame["energy_balance_error"], balance_tolerance),
        np.where(impossible_balance, np.int64(checks.Flag.ENERGY_BALANCE_OPEN), np.int64(0)),
    )
    return frame


KIND = UnitKind(
    name=KIND_NAME,
    title="Gas turbine (simple cycle)",
    roles=ROLES,
    parameters=PARAMETERS,
    results=RESULTS,
    load_result="generator_power_w",
    model=gas_turbine_performance,
    needs_fuel=True,
    alternatives=FUEL_ALTERNATIVES,
    text_parameters=TEXT_PARAMETERS,
    description=(
        "Simple-cycle gas turbine measured at the compressor, the fuel, the exhaust and "
        "the generator: thermal efficiency and heat rate (HHV and LHV), compressor "
        "isentropic efficiency of humid air, air and exhaust flow by the heat-balance "
        "method of ASME PTC 22 (or a metered air flow, checked), exhaust energy and "
        "exergy available for recovery, eta_2 on the fuel exergy, entropy generation "
        "and lost work, and output and heat rate corrected to ISO 2314 conditions by "
        "design correction curves."
    ),
)
"""The gas turbine's catalogue entry."""
