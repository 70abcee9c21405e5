"""Heat pump or chiller (vapour compression, electrically driven): COP, Carnot COP, second law.

One kind for both machines: a chiller's product is the heat taken from the chilled
stream at the evaporator (cooling), a heat pump's the heat given to the heated stream at
the condenser (heating). The text parameter ``product`` says which; both COPs are
always computed when both sides are known.

The boundary encloses the machine and cuts the two secondary streams (water, brine or
air) where their temperatures are measured, plus the electric supply. Heat the energy
balance does not account for (compressor shell, piping) leaves to the surroundings at
the dead-state temperature T0.

Carnot COP between streams. A stream whose temperature changes from ``T_in`` to
``T_out`` exchanges heat as a reservoir would at its entropic (thermodynamic) mean
temperature ``T_m = (h_out - h_in) / (s_out - s_in)``: ``Q = T_m m (s_out - s_in)``
holds exactly, so a reversible machine between two streams has the Carnot COP between
their two ``T_m`` ([1]_, [2]_). For a constant specific heat ``T_m`` is the logarithmic
mean ``(T_out - T_in) / ln(T_out / T_in)``; the arithmetic mean would overstate the
condenser stream's and understate the evaporator stream's share of the lift.

Optionally the refrigerant side is measured too (suction, discharge and liquid line;
refrigerant named by the text parameter ``refrigerant``). Its states (CoolProp HEOS via
:mod:`engine.fluids`) give the refrigerant-side COPs of the simple single-stage cycle,
the compressor's isentropic efficiency, the refrigerant flow and the evaporating and
condensing temperatures with superheat and subcooling. When the compressor passes all
its electric input to the refrigerant (hermetic, no shell loss), the refrigerant-side
and the secondary-side COPs agree; a persistent gap points at the instruments.

Display conversion (not done here): kW per ton of refrigeration = 3.51685 *
``specific_power_w_per_w`` = 3.51685 / ``cop_cooling``, the ton of refrigeration being
12,000 Btu/h = 12,000 * 1055.05585262 J / 3600 s = 3516.8528 W (IT Btu; ASHRAE
Handbook - Fundamentals, Ch. 38, units and conversions; chapter from memory).

References
----------
.. [1] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger, 1995, Ch. 2
   (the thermodynamic mean temperature of a stream, Delta h / Delta s, in the exergy of
   heat transfer) and Ch. 1 (Carnot efficiency and COP). Chapters from memory.
.. [2] K. E. Herold, R. Radermacher, S. A. Klein, "Absorption Chillers and Heat Pumps",
   2nd ed., CRC Press, 2016, Ch. 2 (the thermodynamic average temperature of a stream,
   Delta h / Delta s, for the reversible COP of a machine between streams). Chapter
   from memory.
.. [3] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Ch. 2 (entropy balance), Ch. 3 (flow exergy, Eq. 3.13; Gouy-Stodola,
   Eq. 3.24). Equation numbers as in :mod:`engine.exergy`.
.. [4] AHRI Standard 550/590 (I-P) and 551/591 (SI), 2023, "Performance Rating of
   Water-chilling and Heat Pump Water-heating Packages Using the Vapor Compression
   Cycle": the test's heat balance (condenser heat vs evaporator heat plus input power)
   must close within 5 %. Edition, clause and figure from memory.
.. [5] AHRI Standard 540-2020, "Performance Rating of Positive Displacement Refrigerant
   Compressors": suction and discharge saturation temperatures taken at the dew point.
   From memory.
.. [6] IAPWS R7-97(2012), IAPWS-IF97: water properties of the secondary streams (via
   :mod:`engine.steam`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine import checks, fluids, steam
from engine.catalogue import (
    ModelContext,
    Parameter,
    ResultColumn,
    Role,
    TextParameter,
    UnitKind,
)
from engine.exergy import lost_work

KIND_NAME = "heat_pump"

PRODUCTS = ("cooling", "heating")
"""Values of the text parameter ``product``: cooling (chiller) or heating (heat pump)."""

REFRIGERANT_NOT_NAMED = "unspecified"
"""Value of the text parameter ``refrigerant`` meaning no refrigerant is configured."""

WATER = 0.0
"""Value of a ``*_fluid_cp_j_per_kg_k`` parameter meaning "water, IAPWS-IF97". [J/(kg K)]"""

WATER_PRESSURE_PA = 5e5
"""Pressure at which water properties of the secondary streams are evaluated. [Pa]

Assumed, not measured: liquid water's enthalpy and entropy *differences* between two
temperatures at one pressure change by less than 1e-4 relative between 0.1 and 1 MPa
(IAPWS-IF97, region 1), far below the temperature measurement's effect; 0.5 MPa keeps
water liquid up to 151 degC (high-temperature heat pumps).
"""

ENERGY_BALANCE_TOLERANCE = 0.05
"""Default largest |energy_balance_error| before ENERGY_BALANCE_OPEN. [-]

The heat-balance criterion of AHRI 550/590 for a chiller test, 5 % (from memory) [4]_;
plant instruments are rarely better than test-stand ones.
"""

SGEN_TOLERANCE = checks.SGEN_TOLERANCE

ISENTROPIC_TOLERANCE = 1e-6
"""Default margin above 1 before ISENTROPIC_ABOVE_ONE for the compressor. [-]
Our choice: above round-off, below any measurement signal (as for the steam turbine)."""

CARNOT_ROUND_OFF = 1e-12
"""Margin on eta_2 above 1 before ABOVE_CARNOT (round-off only). [-]"""

_SAME_TEMPERATURE_K = 1e-3
"""Below this in- to out-temperature difference a stream's mean temperature is the
arithmetic mean (the entropic mean differs by ~dT^2 / (12 T), under 1e-9 K). [K]"""

_AT_SATURATION_K = 1e-3
"""A refrigerant temperature within this of saturation counts as at saturation: below
any thermometer's resolution, above the round-off of the equations of state. [K]"""

_REFRIGERANT_ROLES = (
    "suction_pressure",
    "suction_temperature",
    "discharge_pressure",
    "discharge_temperature",
    "liquid_temperature",
)
_REFRIGERANT_NOTE = (
    " Refrigerant side: bind suction_pressure, suction_temperature, discharge_pressure, "
    "discharge_temperature and liquid_temperature together (liquid_pressure optional), "
    "and name the refrigerant."
)

ROLES: tuple[Role, ...] = (
    Role("electric_power", "W", description="Electric input of the machine (compressor drive)."),
    Role(
        "evaporator_in_temperature",
        "K",
        description="Chilled (source) stream temperature entering the evaporator.",
    ),
    Role(
        "evaporator_out_temperature",
        "K",
        description="Chilled (source) stream temperature leaving the evaporator.",
    ),
    Role(
        "evaporator_flow",
        "kg/s",
        required=False,
        description=(
            "Chilled (source) stream mass flow. When not bound, the evaporator heat is "
            "condenser heat minus electric input."
        ),
    ),
    Role(
        "condenser_in_temperature",
        "K",
        description="Cooling (heated) stream temperature entering the condenser.",
    ),
    Role(
        "condenser_out_temperature",
        "K",
        description="Cooling (heated) stream temperature leaving the condenser.",
    ),
    Role(
        "condenser_flow",
        "kg/s",
        required=False,
        description=(
            "Cooling (heated) stream mass flow. When not bound, the condenser heat is "
            "evaporator heat plus electric input."
        ),
    ),
    Role(
        "suction_pressure",
        "Pa",
        required=False,
        description="Refrigerant pressure at the compressor suction." + _REFRIGERANT_NOTE,
    ),
    Role(
        "suction_temperature",
        "K",
        required=False,
        description="Refrigerant temperature at the compressor suction (superheated).",
    ),
    Role(
        "discharge_pressure",
        "Pa",
        required=False,
        description="Refrigerant pressure at the compressor discharge.",
    ),
    Role(
        "discharge_temperature",
        "K",
        required=False,
        description="Refrigerant temperature at the compressor discharge.",
    ),
    Role(
        "liquid_temperature",
        "K",
        required=False,
        description=(
            "Refrigerant temperature in the liquid line before the expansion device "
            "(gas-cooler outlet for a transcritical cycle)."
        ),
    ),
    Role(
        "liquid_pressure",
        "Pa",
        required=False,
        description="Refrigerant pressure in the liquid line; discharge_pressure when not bound.",
    ),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "evaporator_fluid_cp_j_per_kg_k",
        "J/(kg*K)",
        WATER,
        description=(
            "Specific heat of the evaporator stream (brine, glycol, air). Default 0 means "
            "water, with IAPWS-IF97 enthalpy and entropy (0 to ~150 degC)."
        ),
        minimum=0.0,
    ),
    Parameter(
        "condenser_fluid_cp_j_per_kg_k",
        "J/(kg*K)",
        WATER,
        description=(
            "Specific heat of the condenser stream (air for an air-cooled condenser, "
            "about 1006). Default 0 means water, IAPWS-IF97."
        ),
        minimum=0.0,
    ),
    Parameter(
        "energy_balance_tolerance",
        "1",
        ENERGY_BALANCE_TOLERANCE,
        description=(
            "Largest absolute energy_balance_error before the balance is flagged open (only "
            "checkable when both flows are bound). Default 0.05 (AHRI 550/590 heat balance)."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    checks.sgen_tolerance_parameter("electric power / T0"),
    Parameter(
        "isentropic_tolerance",
        "1",
        ISENTROPIC_TOLERANCE,
        description="Compressor isentropic efficiencies above 1 + this are flagged.",
        minimum=0.0,
        maximum=1.0,
    ),
)

TEXT_PARAMETERS: tuple[TextParameter, ...] = (
    TextParameter(
        "product",
        PRODUCTS,
        "cooling",
        description=(
            "Which heat is the product: 'cooling' (chiller; cop = cop_cooling) or 'heating' "
            "(heat pump; cop = cop_heating). Decides cop, carnot_cop and eta_2."
        ),
    ),
    TextParameter(
        "refrigerant",
        (REFRIGERANT_NOT_NAMED, *fluids.REFRIGERANTS),
        REFRIGERANT_NOT_NAMED,
        description=(
            "Refrigerant by ASHRAE 34 designation, needed only when the refrigerant-side "
            "roles are bound."
        ),
    ),
)

SECONDARY_RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn("electric_power_w", "W", "Electric input."),
    ResultColumn("cooling_w", "W", "Heat taken from the evaporator stream."),
    ResultColumn("heating_w", "W", "Heat given to the condenser stream."),
    ResultColumn("cop_cooling", "1", "Cooling COP: cooling_w / electric_power_w."),
    ResultColumn("cop_heating", "1", "Heating COP: heating_w / electric_power_w."),
    ResultColumn("cop", "1", "COP of the configured product."),
    ResultColumn(
        "evaporator_mean_temperature_k", "K", "Entropic mean temperature of the evaporator stream."
    ),
    ResultColumn(
        "condenser_mean_temperature_k", "K", "Entropic mean temperature of the condenser stream."
    ),
    ResultColumn("carnot_cop", "1", "Carnot COP of the product between the two mean temperatures."),
    ResultColumn("eta_2", "1", "Second-law efficiency: cop / carnot_cop."),
    ResultColumn(
        "specific_power_w_per_w",
        "1",
        "Electric input per cooling, 1 / cop_cooling; times 3.51685 gives kW per ton.",
    ),
    ResultColumn(
        "energy_balance_error",
        "1",
        "(electric + cooling - heating) / (electric + cooling); 0 when a side is closed.",
    ),
    ResultColumn(
        "exergy_destroyed_w",
        "W",
        "Electric input minus the exergy gained by both streams (exergy balance).",
    ),
    ResultColumn(
        "exergy_product_w",
        "W",
        "Flow exergy gained by the product stream (chilled stream when cooling, heated "
        "stream when heating).",
    ),
    ResultColumn(
        "rejected_heat_exergy_w",
        "W",
        "Flow exergy gained by the other stream: exergy rejected with the by-product heat "
        "(electric input = product + rejected + destroyed).",
    ),
    ResultColumn("sgen_w_per_k", "W/K", "Entropy generation rate (entropy balance)."),
    ResultColumn("lost_work_w", "W", "T0 times entropy generation (Gouy-Stodola)."),
)

REFRIGERANT_RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn(
        "cop_cooling_refrigerant",
        "1",
        "Refrigerant side: (h_suction - h_liquid) / (h_disch - h_suction).",
    ),
    ResultColumn(
        "cop_heating_refrigerant",
        "1",
        "Refrigerant side: (h_disch - h_liquid) / (h_disch - h_suction).",
    ),
    ResultColumn(
        "compressor_isentropic_efficiency",
        "1",
        "(h(p_disch, s_suction) - h_suction) / (h_disch - h_suction).",
    ),
    ResultColumn(
        "refrigerant_flow_kg_per_s", "kg/s", "Refrigerant mass flow from the evaporator heat."
    ),
    ResultColumn(
        "evaporating_temperature_k", "K", "Dew-point temperature at the suction pressure."
    ),
    ResultColumn(
        "condensing_temperature_k",
        "K",
        "Dew-point temperature at the discharge pressure (NaN above the critical pressure).",
    ),
    ResultColumn("superheat_k", "K", "Suction temperature above the evaporating temperature."),
    ResultColumn(
        "subcooling_k", "K", "Bubble-point temperature of the liquid line minus its temperature."
    ),
)
"""Results of the optional refrigerant side (NaN when it is not bound)."""

_REFRIGERANT_RESULTS = tuple(r.name for r in REFRIGERANT_RESULTS)

RESULTS: tuple[ResultColumn, ...] = SECONDARY_RESULTS + REFRIGERANT_RESULTS


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray:
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


@dataclass(frozen=True)
class _Stream:
    """Per-kg enthalpy and entropy change of a secondary stream from in to out."""

    dh: np.ndarray  # [J/kg]
    ds: np.ndarray  # [J/(kg K)]
    t_mean: np.ndarray  # entropic mean temperature [K]
    valid: np.ndarray


def _stream(t_in: np.ndarray, t_out: np.ndarray, cp: float) -> _Stream:
    with np.errstate(invalid="ignore", divide="ignore"):
        valid = np.isfinite(t_in) & np.isfinite(t_out) & (t_in > 0) & (t_out > 0)
        if cp > 0:
            dh = cp * (t_out - t_in)
            ds = cp * np.log(t_out / t_in)
        else:
            states = steam.from_pt(
                WATER_PRESSURE_PA, np.concatenate([t_in, t_out]), props=("h", "s")
            )
            n = t_in.size
            valid = valid & states.in_range[:n] & states.in_range[n:]
            dh = states.h[n:] - states.h[:n]
            ds = states.s[n:] - states.s[:n]
        close = np.abs(t_out - t_in) < _SAME_TEMPERATURE_K
        t_mean = np.where(close, 0.5 * (t_in + t_out), dh / ds)
    return _Stream(dh=dh, ds=ds, t_mean=t_mean, valid=valid)


def _refrigerant_side(
    inputs: pd.DataFrame, refrigerant: str, cooling_w: np.ndarray
) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """Refrigerant-side results (one array per name of _REFRIGERANT_RESULTS) and validity."""
    p_suc = _column(inputs, "suction_pressure")
    t_suc = _column(inputs, "suction_temperature")
    p_dis = _column(inputs, "discharge_pressure")
    t_dis = _column(inputs, "discharge_temperature")
    t_liq = _column(inputs, "liquid_temperature")
    p_liq = _column(inputs, "liquid_pressure") if "liquid_pressure" in inputs.columns else p_dis

    t_evap = fluids.saturation_temperature(refrigerant, p_suc, quality=1.0)
    t_cond = fluids.saturation_temperature(refrigerant, p_dis, quality=1.0)
    t_bubble = fluids.saturation_temperature(refrigerant, p_liq, quality=0.0)
    p_crit_dis = np.isnan(t_cond) & np.isfinite(p_dis)
    p_crit_liq = np.isnan(t_bubble) & np.isfinite(p_liq)
    with np.errstate(invalid="ignore"):
        # Suction must be superheated: at saturation (p, T) does not fix a vapour state.
        suction_ok = t_suc > t_evap + _AT_SATURATION_K
        # Discharge superheated, or above the critical pressure (transcritical CO2).
        discharge_ok = (t_dis > t_cond + _AT_SATURATION_K) | p_crit_dis
        at_bubble = np.abs(t_liq - t_bubble) <= _AT_SATURATION_K
        subcooled = t_liq < t_bubble - _AT_SATURATION_K

    hs = ("h", "s")
    suction = fluids.from_pt(refrigerant, p_suc, np.where(suction_ok, t_suc, np.nan), hs)
    discharge = fluids.from_pt(refrigerant, p_dis, np.where(discharge_ok, t_dis, np.nan), ("h",))
    liquid_pt = fluids.from_pt(
        refrigerant, p_liq, np.where(subcooled | p_crit_liq, t_liq, np.nan), ("h",)
    )
    liquid_sat = fluids.from_px(refrigerant, np.where(at_bubble, p_liq, np.nan), 0.0, ("h",))
    h_liq = np.where(at_bubble, liquid_sat.h, liquid_pt.h)
    isentropic = fluids.from_ps(refrigerant, p_dis, suction.s, ("h",))

    h1, h2, h3 = suction.h, discharge.h, h_liq
    valid = suction.in_range & discharge.in_range & np.isfinite(h3) & isentropic.in_range
    with np.errstate(all="ignore"):
        lift = h2 - h1
        values = {
            "cop_cooling_refrigerant": (h1 - h3) / lift,
            "cop_heating_refrigerant": (h2 - h3) / lift,
            "compressor_isentropic_efficiency": (isentropic.h - h1) / lift,
            "refrigerant_flow_kg_per_s": cooling_w / (h1 - h3),
            "evaporating_temperature_k": t_evap,
            "condensing_temperature_k": t_cond,
            "superheat_k": t_suc - t_evap,
            "subcooling_k": t_bubble - t_liq,
        }
    return values, valid


def heat_pump_performance(
    inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext
) -> pd.DataFrame:
    """COPs, Carnot COP between the streams, second-law efficiency and lost work.

    Parameters
    ----------
    inputs : DataFrame
        One row per interval, one column per bound role, SI units:
        ``electric_power`` [W]; ``evaporator_in_temperature``,
        ``evaporator_out_temperature``, ``condenser_in_temperature``,
        ``condenser_out_temperature`` [K]; ``evaporator_flow`` and/or
        ``condenser_flow`` [kg/s]; optional refrigerant side, all five or none:
        ``suction_pressure`` [Pa], ``suction_temperature`` [K], ``discharge_pressure``
        [Pa], ``discharge_temperature`` [K], ``liquid_temperature`` [K], with optional
        ``liquid_pressure`` [Pa].
    params : Mapping[str, float]
        ``evaporator_fluid_cp_j_per_kg_k``, ``condenser_fluid_cp_j_per_kg_k``
        [J/(kg K)] (0 = water by IF97), ``energy_balance_tolerance``,
        ``sgen_tolerance``, ``isentropic_tolerance`` [-]; missing ones take the
        module defaults.
    context : ModelContext
        ``dead`` (T0 [K], scalar or one per row) and ``text_parameters``: ``product``
        (``"cooling"`` or ``"heating"``, default cooling) and ``refrigerant`` (an
        ASHRAE 34 designation of :data:`engine.fluids.REFRIGERANTS`).

    Returns
    -------
    DataFrame
        Same index as ``inputs``; the columns of :data:`RESULTS` ([W], [W/K], [K], [-],
        [kg/s]) and an integer ``flags`` column of :class:`engine.checks.Flag` bits. A row
        with a missing or impossible secondary-side input (a water temperature outside
        IF97, a negative flow) is NaN throughout with ``INPUT_OUT_OF_RANGE``. A row whose
        refrigerant-side input is missing or does not fix a state (suction not
        superheated, liquid line above its bubble point) keeps its secondary-side results,
        with the refrigerant-side ones NaN and ``INPUT_OUT_OF_RANGE``; so does every row
        when the refrigerant side is bound incompletely or without a refrigerant named.

    Raises
    ------
    ValueError
        For an unknown ``product`` or when neither flow is bound (configuration errors
        concerning every row).
    KeyError
        For a ``refrigerant`` not in :data:`engine.fluids.REFRIGERANTS` (the catalogue's
        validation refuses it first).

    Notes
    -----
    Secondary streams, per kg: ``dh = h_out - h_in`` and ``ds = s_out - s_in`` (IF97
    water at :data:`WATER_PRESSURE_PA`, or ``cp dT`` and ``cp ln(T_out / T_in)``), and
    the entropic mean temperature ``T_m = dh / ds`` ([1]_, [2]_)::

        Q_e = -m_e dh_e     (cooling)          Q_c = m_c dh_c     (heating)
        COP_c = Q_e / P      COP_h = Q_c / P
        carnot_cop = T_me / (T_mc - T_me)  (cooling)  or  T_mc / (T_mc - T_me)  (heating)
        eta_2 = cop / carnot_cop

    ``carnot_cop`` is NaN where ``T_mc <= T_me`` (no work needed). A stream with no flow
    bound is closed by the energy balance (``Q_c = Q_e + P``) and its entropy change
    taken as ``Q / T_m``; ``energy_balance_error`` is then 0 and not checked.

    Entropy balance, heat the balance does not account for leaving at T0 ([3]_, Ch. 2)::

        Q_u  = P + Q_e - Q_c
        Sgen = m_e ds_e + m_c ds_c + Q_u / T0          lost_work = T0 Sgen

    Exergy balance by its own route (flow exergy of each stream, Eq. 3.13 of [3]_)::

        X_d = P - m_e (dh_e - T0 ds_e) - m_c (dh_c - T0 ds_c)

    and ``T0 Sgen = X_d`` identically (Gouy-Stodola, Eq. 3.24 of [3]_). With the energy
    balance closed, ``eta_2 = 1`` exactly when ``Sgen = 0`` and ``eta_2 < 1`` when
    ``Sgen > 0``, for either product.

    Refrigerant side (simple single-stage cycle, throttling at constant enthalpy):
    states 1 suction (p, T), 2 discharge (p, T), 3 liquid line (p, T), or saturated
    liquid when within 1 mK of its bubble point, ``h_4 = h_3``::

        COP_c,ref = (h1 - h3) / (h2 - h1)      COP_h,ref = (h2 - h3) / (h2 - h1)
        eta_s = (h(p2, s1) - h1) / (h2 - h1)   m_ref = Q_e / (h1 - h3)

    Evaporating and condensing temperatures are dew points ([5]_).

    Flags: INPUT_OUT_OF_RANGE as above; ABOVE_CARNOT when ``eta_2 > 1``;
    NEGATIVE_ENTROPY_GENERATION when ``Sgen < -sgen_tolerance P / T0``;
    ENERGY_BALANCE_OPEN when both flows are bound and ``|energy_balance_error| >
    energy_balance_tolerance`` ([4]_); ISENTROPIC_ABOVE_ONE when the compressor's
    ``eta_s > 1 + isentropic_tolerance``.

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> row = pd.DataFrame({"electric_power": [100e3],
    ...     "evaporator_in_temperature": [285.15], "evaporator_out_temperature": [280.15],
    ...     "evaporator_flow": [23.9], "condenser_in_temperature": [302.15],
    ...     "condenser_out_temperature": [307.15], "condenser_flow": [28.7]})
    >>> out = heat_pump_performance(row, {}, ModelContext(dead_state()))
    >>> round(float(out["cop_cooling"].iloc[0]), 2), round(float(out["eta_2"].iloc[0]), 3)
    (5.01, 0.39)
    """
    n = len(inputs)
    balance_tolerance = float(params.get("energy_balance_tolerance", ENERGY_BALANCE_TOLERANCE))
    sgen_tolerance = float(params.get("sgen_tolerance", SGEN_TOLERANCE))
    isentropic_tolerance = float(params.get("isentropic_tolerance", ISENTROPIC_TOLERANCE))
    product = context.text_parameters.get("product", "cooling")
    if product not in PRODUCTS:
        raise ValueError(f"product {product!r} is not one of {', '.join(PRODUCTS)}")
    refrigerant = context.text_parameters.get("refrigerant", REFRIGERANT_NOT_NAMED)
    t0 = np.broadcast_to(np.asarray(context.dead.t0_k, dtype=float), (n,))

    power = _column(inputs, "electric_power")
    evap = _stream(
        _column(inputs, "evaporator_in_temperature"),
        _column(inputs, "evaporator_out_temperature"),
        float(params.get("evaporator_fluid_cp_j_per_kg_k", WATER)),
    )
    cond = _stream(
        _column(inputs, "condenser_in_temperature"),
        _column(inputs, "condenser_out_temperature"),
        float(params.get("condenser_fluid_cp_j_per_kg_k", WATER)),
    )
    m_e = _column(inputs, "evaporator_flow") if "evaporator_flow" in inputs.columns else None
    m_c = _column(inputs, "condenser_flow") if "condenser_flow" in inputs.columns else None
    if m_e is None and m_c is None:
        raise ValueError("a heat_pump needs evaporator_flow or condenser_flow; neither is bound")

    with np.errstate(invalid="ignore"):
        valid = (
            evap.valid & cond.valid & np.isfinite(power) & (power >= 0) & np.isfinite(t0) & (t0 > 0)
        )
        for m in (m_e, m_c):
            if m is not None:
                valid &= np.isfinite(m) & (m >= 0)

    with np.errstate(all="ignore"):
        # Heat on each side, and each stream's entropy change [W/K] and exergy gain [W].
        if m_e is not None:
            cooling = -m_e * evap.dh
            entropy_e = m_e * evap.ds
            exergy_e = m_e * (evap.dh - t0 * evap.ds)
        if m_c is not None:
            heating = m_c * cond.dh
            entropy_c = m_c * cond.ds
            exergy_c = m_c * (cond.dh - t0 * cond.ds)
        if m_e is None:
            cooling = heating - power
            entropy_e = -cooling / evap.t_mean
            exergy_e = -cooling * (1.0 - t0 / evap.t_mean)
        if m_c is None:
            heating = cooling + power
            entropy_c = heating / cond.t_mean
            exergy_c = heating * (1.0 - t0 / cond.t_mean)
        unaccounted = power + cooling - heating
        both_measured = m_e is not None and m_c is not None
        balance_error = unaccounted / (power + cooling) if both_measured else np.zeros(n)

        running = power > 0
        cop_cooling = np.where(running, cooling / power, np.nan)
        cop_heating = np.where(running, heating / power, np.nan)
        t_me, t_mc = evap.t_mean, cond.t_mean
        lift = np.where(t_mc > t_me, t_mc - t_me, np.nan)
        if product == "cooling":
            cop, carnot_cop = cop_cooling, t_me / lift
        else:
            cop, carnot_cop = cop_heating, t_mc / lift

        results = {
            "electric_power_w": power,
            "cooling_w": cooling,
            "heating_w": heating,
            "cop_cooling": cop_cooling,
            "cop_heating": cop_heating,
            "cop": cop,
            "evaporator_mean_temperature_k": t_me,
            "condenser_mean_temperature_k": t_mc,
            "carnot_cop": carnot_cop,
            "eta_2": cop / carnot_cop,
            "specific_power_w_per_w": np.where(cooling > 0, power / cooling, np.nan),
            "energy_balance_error": balance_error,
            # Exergy route: electric input minus the flow exergy both streams gained.
            "exergy_destroyed_w": power - exergy_e - exergy_c,
            "exergy_product_w": exergy_e if product == "cooling" else exergy_c,
            "rejected_heat_exergy_w": exergy_c if product == "cooling" else exergy_e,
        }
        # Entropy route: the streams' entropy changes and the unaccounted heat at T0.
        sgen = entropy_e + entropy_c + unaccounted / t0
    results["sgen_w_per_k"] = sgen
    results["lost_work_w"] = lost_work(sgen, t0)

    columns = {name: np.where(valid, values, np.nan) for name, values in results.items()}
    refrigerant_flags = np.zeros(n, dtype=bool)
    bound = [name in inputs.columns for name in _REFRIGERANT_ROLES]
    extra_bound = "liquid_pressure" in inputs.columns
    if all(bound) and refrigerant != REFRIGERANT_NOT_NAMED:
        side, side_valid = _refrigerant_side(inputs, refrigerant, columns["cooling_w"])
        side_valid = side_valid & valid
        for name in _REFRIGERANT_RESULTS:
            columns[name] = np.where(side_valid, side[name], np.nan)
        refrigerant_flags = valid & ~side_valid
    else:
        for name in _REFRIGERANT_RESULTS:
            columns[name] = np.full(n, np.nan)
        # Bound in part, or without a refrigerant: a configuration that cannot work.
        refrigerant_flags = np.full(n, any(bound) or extra_bound)

    frame = pd.DataFrame(columns, index=inputs.index)
    frame = frame[[r.name for r in RESULTS]]
    frame["flags"] = checks.combine(
        checks.input_out_of_range(valid & ~refrigerant_flags),
        checks.above_carnot(frame["eta_2"], 1.0 + CARNOT_ROUND_OFF),
        checks.negative_entropy_generation(
            frame["sgen_w_per_k"], frame["electric_power_w"] / t0, sgen_tolerance
        ),
        checks.balance_open(frame["energy_balance_error"], balance_tolerance),
        checks.isentropic_above_one(
            frame["compressor_isentropic_efficiency"] - isentropic_tolerance
        ),
    )
    return frame


KIND = UnitKind(
    name=KIND_NAME,
    title="Heat pump or chiller",
    roles=ROLES,
    parameters=PARAMETERS,
    results=RESULTS,
    load_result="cooling_w",
    model=heat_pump_performance,
    alternatives=(("evaporator_flow", "condenser_flow"),),
    text_parameters=TEXT_PARAMETERS,
    description=(
        "Electrically driven vapour-compression heat pump or chiller measured on its "
        "secondary streams: cooling and heating COP, Carnot COP between the streams' "
        "entropic mean temperatures, eta_2, entropy generation and lost work; optional "
        "refrigerant-side COP and compressor isentropic efficiency (CoolProp HEOS)."
    ),
)
"""The heat pump / chiller catalogue entry."""
