"""Steam turbine-generator: section isentropic efficiencies, first and second law.

The turbine is a chain of sections between measured ports: the inlet, the extraction
ports in the order of their configured number (ports are numbered from the inlet, so
``extraction1`` is the first one downstream of the inlet and pressure falls with the
number), and the exhaust. Section ``n`` ends at the ``n``-th port of that chain; with
extraction ports 1 and 3 bound, section 2 runs from extraction 1 to extraction 3 and
section 3 from extraction 3 to the exhaust.

Where a port is superheated its state is fixed by measured pressure and temperature.
In the moisture region pressure and temperature do not fix the state (the reason
ASME PTC 6 needs special methods there [1]_), so a wet port's enthalpy is closed by
the energy balance on the measured generator output instead.

The boundary is drawn around the turbine *and* its generator, up to the generator
terminals, and widened to the immediate surroundings at the dead-state temperature T0:
bearing, generator and casing losses all end as heat to the environment at T0. The
exergy they carry away is then part of ``exergy_destroyed_and_lost_w``, one entropy
balance covers the whole boundary, and the plant's exergy account closes on electrical
output. ``eta_2`` is the turbine's own (steam-path) exergetic efficiency on shaft
power; ``eta_2_electrical`` is the set's, on generator output.

References
----------
.. [1] ASME PTC 6-2004, "Steam Turbines" (performance test code): generator output,
   steam rate, and the statement that enthalpy in the moisture region cannot be found
   from pressure and temperature. Definitions used here as stated in the docstrings;
   clause numbers not quoted (not checked against the text).
.. [2] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Ch. 2 (entropy balance for a control volume), Ch. 3 (flow exergy, Eq. 3.13;
   exergy balance and Gouy-Stodola, Eq. 3.24; exergetic efficiency of a turbine:
   power over the decrease in the steam's flow exergy). Chapter-level citations;
   section numbers not checked.
.. [3] IAPWS R7-97(2012), IAPWS-IF97: all water and steam properties (via
   :mod:`engine.steam`, whose (p, h) and (p, s) routes solve the basic equations and
   take wet steam by the lever rule between the saturated states, Sec. 8).
.. [4] IEC 60034-2-1:2014, "Rotating electrical machines - Part 2-1: Standard methods
   for determining losses and efficiency from tests": the split of machine losses
   into constant losses and load losses that grow with the square of the current,
   which the generator loss curve follows (quadratic in active power assumes constant
   voltage and power factor; common practice).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine import checks, steam
from engine.catalogue import ModelContext, Parameter, PortGroup, ResultColumn, Role, UnitKind
from engine.exergy import flow_exergy, lost_work

KIND_NAME = "steam_turbine"

MAX_EXTRACTIONS = 9
"""Most extraction ports one turbine may have. [-]"""
MAX_SECTIONS = MAX_EXTRACTIONS + 1
"""Most sections (one more than extraction ports). [-]"""

GENERATOR_EFFICIENCY = 0.985
"""Default generator efficiency at the operating point. [-]

Common practice for large (tens of MW and up) two-pole generators near rated load,
which reach about 0.98-0.99; small machines of a few MW are nearer 0.95-0.97 and
should configure their own value or a loss curve.
"""

MASS_BALANCE_TOLERANCE = 0.02
"""Default largest relative mass-balance error before ENERGY_BALANCE_OPEN. [-]

Common practice: about twice the ~1 % uncertainty of a plant-grade steam flow meter
(the same default as the boiler's).
"""

ENERGY_BALANCE_TOLERANCE = 0.02
"""Default largest energy-balance error, as a fraction of shaft power, before
ENERGY_BALANCE_OPEN. [-]

Our choice (no published value): of the order of the combined uncertainty of the
flow and generator-output measurements in the steam's enthalpy drop; only checkable
when every port's enthalpy is measured.
"""

SGEN_TOLERANCE = checks.SGEN_TOLERANCE

ISENTROPIC_TOLERANCE = 1e-6
"""Default margin above 1 before ISENTROPIC_ABOVE_ONE. [-]

Our choice: above round-off and the residual consistency of :mod:`engine.steam`'s
inverse routes (about 1e-9 relative), far below any measurement signal, so that every efficiency the
measurements put above one is flagged. Raise it to the measurement uncertainty to
flag only certain violations.
"""

_AT_SATURATION_K = 1e-3
"""A temperature within this of saturation counts as at saturation: below any
thermometer's resolution, above the round-off between IF97 implementations. [K]"""

_HS = ("h", "s")

EXTRACTION = PortGroup(
    name="extraction",
    roles=(
        Role("flow", "kg/s", description="Steam mass flow leaving at this extraction port."),
        Role("pressure", "Pa", description="Steam pressure at the extraction port."),
        Role(
            "temperature",
            "K",
            required=False,
            description=(
                "Steam temperature at the port. Leave unbound when the port is wet; a "
                "reading at or below saturation is treated as wet too."
            ),
        ),
    ),
    min_ports=0,
    max_ports=MAX_EXTRACTIONS,
    description=(
        "Extraction (bleed) ports, numbered from the inlet: extraction1 is the first port "
        "downstream of the inlet, and pressure falls with the port number."
    ),
)

ROLES: tuple[Role, ...] = (
    Role("inlet_flow", "kg/s", description="Steam mass flow entering the turbine."),
    Role("inlet_pressure", "Pa", description="Steam pressure at the turbine inlet."),
    Role("inlet_temperature", "K", description="Steam temperature at the turbine inlet."),
    Role("exhaust_pressure", "Pa", description="Steam pressure at the turbine exhaust."),
    Role(
        "exhaust_temperature",
        "K",
        required=False,
        description=(
            "Exhaust steam temperature, for a superheated exhaust (back-pressure turbine). "
            "Leave unbound for a wet exhaust; a reading at or below saturation is treated "
            "as wet and the exhaust enthalpy is closed by the energy balance."
        ),
    ),
    Role(
        "exhaust_flow",
        "kg/s",
        required=False,
        description="Exhaust steam mass flow; by mass balance (inlet minus extractions) if unbound.",
    ),
    Role(
        "generator_power", "W", description="Measured electrical output at the generator terminals."
    ),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter(
        "generator_efficiency",
        "1",
        GENERATOR_EFFICIENCY,
        description=(
            "Generator efficiency, electrical output over shaft input; used when no loss "
            "curve is configured (generator_rated_power_w = 0). Default 0.985, common "
            "practice for large generators."
        ),
        minimum=0.5,
        maximum=1.0,
    ),
    Parameter(
        "generator_rated_power_w",
        "W",
        0.0,
        description=(
            "Rated active power of the generator. Above 0 it switches from the constant "
            "efficiency to the loss curve: loss = generator_no_load_loss_w + "
            "generator_load_loss_at_rated_w * (P / generator_rated_power_w)^2."
        ),
        minimum=0.0,
    ),
    Parameter(
        "generator_no_load_loss_w",
        "W",
        0.0,
        description="Constant generator losses (iron, friction and windage, excitation).",
        minimum=0.0,
    ),
    Parameter(
        "generator_load_loss_at_rated_w",
        "W",
        0.0,
        description="Load-dependent generator losses (I^2 R and stray) at rated power.",
        minimum=0.0,
    ),
    Parameter(
        "mechanical_loss_w",
        "W",
        0.0,
        description="Turbine bearing and gear losses between the blading and the generator.",
        minimum=0.0,
    ),
    Parameter(
        "min_superheat_k",
        "K",
        0.0,
        description=(
            "A measured port temperature less than this above saturation is treated as wet "
            "(a thermometer in wet steam reads saturation). Default 0: only readings at or "
            "below saturation are wet."
        ),
        minimum=0.0,
    ),
    Parameter(
        "isentropic_tolerance",
        "1",
        ISENTROPIC_TOLERANCE,
        description="Isentropic efficiencies above 1 + isentropic_tolerance are flagged.",
        minimum=0.0,
        maximum=1.0,
    ),
    checks.sgen_tolerance_parameter("exergy_in_w / T0"),
    Parameter(
        "energy_balance_tolerance",
        "1",
        ENERGY_BALANCE_TOLERANCE,
        description=(
            "Largest |energy_balance_error| before the balance is flagged open (only "
            "checkable when every port's enthalpy is measured). Default 0.02, our choice."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
    Parameter(
        "mass_balance_tolerance",
        "1",
        MASS_BALANCE_TOLERANCE,
        description=(
            "Largest |mass_balance_error| before the balance is flagged open (only "
            "checkable when exhaust_flow is bound). Default 0.02, common practice."
        ),
        minimum=0.0,
        maximum=1.0,
    ),
)


def section_result_name(number: int) -> str:
    """Result column of section ``number`` (1 = from the inlet to the first port)."""
    return f"section{number}_isentropic_efficiency"


RESULTS: tuple[ResultColumn, ...] = (
    ResultColumn(
        "exhaust_enthalpy_j_per_kg",
        "J/kg",
        "Exhaust specific enthalpy: measured (p, T) when superheated, else from the energy balance.",
    ),
    ResultColumn("exhaust_quality", "1", "Exhaust vapour mass fraction; NaN when not wet."),
    ResultColumn(
        "exhaust_flow_kg_per_s", "kg/s", "Exhaust mass flow, measured or by mass balance."
    ),
    *(
        ResultColumn(
            section_result_name(n),
            "1",
            f"Isentropic efficiency of section {n} (NaN when the turbine has fewer sections).",
        )
        for n in range(1, MAX_SECTIONS + 1)
    ),
    ResultColumn(
        "overall_isentropic_efficiency",
        "1",
        "Inlet to exhaust on the expansion line: (h_in - h_exh) / (h_in - h_s(p_exh, s_in)).",
    ),
    ResultColumn(
        "shaft_power_w",
        "W",
        "Power the steam gives to the rotor (generator input + mechanical loss).",
    ),
    ResultColumn("generator_power_w", "W", "Measured electrical output."),
    ResultColumn("steam_rate_kg_per_kwh", "kg/kWh", "Inlet steam flow per generator output."),
    ResultColumn("exergy_in_w", "W", "Flow exergy given up by the steam (in minus out)."),
    ResultColumn("eta_2", "1", "Turbine exergetic efficiency: shaft power over exergy_in_w."),
    ResultColumn(
        "eta_2_electrical", "1", "Turbine-generator exergetic efficiency: output over exergy_in_w."
    ),
    ResultColumn("sgen_w_per_k", "W/K", "Entropy generation rate (entropy balance)."),
    ResultColumn("lost_work_w", "W", "T0 times entropy generation (Gouy-Stodola)."),
    ResultColumn(
        "exergy_destroyed_and_lost_w", "W", "exergy_in_w minus generator output (exergy balance)."
    ),
    ResultColumn(
        "energy_balance_error",
        "1",
        "(steam enthalpy drop - shaft power) / shaft power; 0 when an enthalpy was closed.",
    ),
    ResultColumn(
        "mass_balance_error",
        "1",
        "(inlet - extractions - exhaust) / inlet; 0 when the exhaust flow is by mass balance.",
    ),
)


def shaft_power(
    generator_power_w,
    generator_efficiency: float = GENERATOR_EFFICIENCY,
    mechanical_loss_w: float = 0.0,
    rated_power_w: float = 0.0,
    no_load_loss_w: float = 0.0,
    load_loss_at_rated_w: float = 0.0,
):
    """Power the steam gives to the turbine rotor, from the measured generator output.

    Parameters
    ----------
    generator_power_w : numeric
        Electrical output at the generator terminals. [W]
    generator_efficiency : float, default 0.985
        Generator output over shaft input, used when ``rated_power_w`` is 0.
        Default :data:`GENERATOR_EFFICIENCY` (common practice). [-]
    mechanical_loss_w : float, default 0
        Bearing and gear losses between the blading and the generator coupling. [W]
    rated_power_w : float, default 0
        Rated active power; above 0 the loss curve replaces ``generator_efficiency``. [W]
    no_load_loss_w : float, default 0
        Constant generator losses (iron, friction and windage, excitation). [W]
    load_loss_at_rated_w : float, default 0
        Load-dependent generator losses at rated power. [W]

    Returns
    -------
    numeric
        Shaft (internal) power, same type as ``generator_power_w``. [W]

    Notes
    -----
    Constant efficiency: ``W = P / eta_gen + L_mech``. Loss curve (constant losses plus
    load losses growing with the square of the current, [4]_ of the module; quadratic
    in active power at constant voltage and power factor, common practice)::

        W = P + L_0 + L_r (P / P_r)^2 + L_mech
    """
    if isinstance(generator_power_w, list | tuple):
        generator_power_w = np.asarray(generator_power_w, dtype=float)
    if rated_power_w > 0:
        generator_input = (
            generator_power_w
            + no_load_loss_w
            + load_loss_at_rated_w * (generator_power_w / rated_power_w) ** 2
        )
    else:
        generator_input = generator_power_w / generator_efficiency
    return generator_input + mechanical_loss_w


class _Port:
    """One stream leaving the turbine (an extraction or the exhaust), row-wise."""

    def __init__(
        self,
        m: np.ndarray,
        p: np.ndarray,
        t: np.ndarray | None,
        min_superheat_k: float,
    ) -> None:
        n = p.shape[0]
        self.m = m
        self.p = p
        # NaN at or above the critical pressure, where no two-phase state exists.
        t_sat = steam.saturation_temperature(p)
        self.quality = np.full(n, np.nan)
        with np.errstate(invalid="ignore"):
            valid = np.isfinite(p) & (p > 0) & np.isfinite(m) & (m >= 0)
            if t is None:
                dry = np.zeros(n, dtype=bool)
            else:
                valid &= np.isfinite(t)
                dry = np.where(
                    p < steam.P_CRITICAL_PA,
                    t > t_sat + max(min_superheat_k, _AT_SATURATION_K),
                    t > steam.T_CRITICAL_K,
                )
        dry &= valid
        # A wet port's enthalpy is unknown until the energy balance closes it.
        self.unknown = valid & ~dry
        state = steam.from_pt(p, np.where(dry, t if t is not None else np.nan, np.nan), _HS)
        self.h = state.h
        self.s = state.s
        self.valid = valid & (~dry | state.in_range)

    def close(self, rows: np.ndarray, h: np.ndarray) -> None:
        """Set the enthalpy of ``rows`` from the energy balance and derive s and quality."""
        h_rows = np.where(rows, h, np.nan)
        state = steam.from_ph(self.p, h_rows, ("s", "quality"))
        self.h = np.where(rows, h_rows, self.h)
        self.s = np.where(rows, state.s, self.s)
        self.quality = np.where(rows, state.quality, self.quality)
        self.valid &= ~rows | (np.isfinite(self.h) & np.isfinite(self.s))


def _column(inputs: pd.DataFrame, name: str) -> np.ndarray | None:
    if name not in inputs.columns:
        return None
    return inputs[name].to_numpy(dtype=float, na_value=np.nan)


def _required(inputs: pd.DataFrame, name: str) -> np.ndarray:
    values = _column(inputs, name)
    if values is None:
        raise ValueError(f"{KIND_NAME}: required role {name!r} is not bound")
    return values


def _extraction_numbers(inputs: pd.DataFrame) -> list[int]:
    numbers = sorted({parsed[0] for c in inputs.columns if (parsed := EXTRACTION.parse(str(c)))})
    if len(numbers) > MAX_EXTRACTIONS:
        raise ValueError(
            f"{KIND_NAME}: at most {MAX_EXTRACTIONS} extraction ports, {len(numbers)} bound"
        )
    return numbers


def _flow_term(m: np.ndarray, x: np.ndarray) -> np.ndarray:
    """``m * x`` with a zero flow contributing zero even where ``x`` is unknown."""
    return np.where(m == 0, 0.0, m * x)


def _ratio(numerator: np.ndarray, denominator: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(denominator > 0, numerator / denominator, np.nan)


def steam_turbine(
    inputs: pd.DataFrame, params: Mapping[str, float], context: ModelContext
) -> pd.DataFrame:
    """Steam turbine-generator performance from measured ports and generator output.

    Parameters
    ----------
    inputs : DataFrame
        One row per interval, one column per bound role, SI units:

        - ``inlet_flow`` [kg/s], ``inlet_pressure`` [Pa], ``inlet_temperature`` [K]
          (superheated or supercritical steam).
        - per extraction port ``n`` (0 to 9 ports, numbered from the inlet):
          ``extraction<n>_flow`` [kg/s], ``extraction<n>_pressure`` [Pa], optional
          ``extraction<n>_temperature`` [K].
        - ``exhaust_pressure`` [Pa], optional ``exhaust_temperature`` [K], optional
          ``exhaust_flow`` [kg/s].
        - ``generator_power`` [W].
    params : Mapping[str, float]
        The :data:`PARAMETERS` by name; missing ones take their defaults.
    context : ModelContext
        ``dead``: T0 [K] and the dead-state water h0 [J/kg], s0 [J/(kg K)], scalar or one
        per row.

    Returns
    -------
    DataFrame
        Same index as ``inputs``; the columns of :data:`RESULTS` and an integer
        ``flags`` column of :class:`engine.checks.Flag` bits. Section columns beyond the
        turbine's number of sections are NaN. A row with a missing or impossible input,
        a state outside IF97 or more than one unknown enthalpy is NaN in every result that
        depends on it, with INPUT_OUT_OF_RANGE; the other rows are unaffected.

    Raises
    ------
    ValueError
        For configuration errors concerning every row (a required role or a port's flow
        or pressure not bound, more than nine ports); never for a bad row.

    Notes
    -----
    **Which enthalpies are measured.** A port (extraction or exhaust) whose temperature
    is bound and lies more than ``min_superheat_k`` (at least 1 mK) above saturation,
    or above the critical temperature at a supercritical pressure, has its state from
    (p, T). Any other port is taken as wet and its enthalpy as unknown. Per row, if
    exactly one unknown port has a non-zero flow, its enthalpy closes the energy
    balance on the measured output; a wet port with zero flow carries nothing and is left unknown (its
    adjacent sections are NaN). With two or more unknowns the row is NaN with
    INPUT_OUT_OF_RANGE; with none the balance is over-determined and checked.

    **Energy balance** (enthalpies relative to the dead-state water h0, so that a
    mass imbalance counts as water crossing at the dead state, as in the boiler)::

        W = shaft_power(P_gen)                        (generator model + L_mech)
        m_in (h_in - h0) - sum_out m (h - h0) = W     (closure of the unknown port)
        energy_balance_error = (m_in (h_in - h0) - sum_out m (h - h0) - W) / W

    **Isentropic efficiency** of the section from port a to port b, and overall on the
    expansion line (every port's steam is taken as being on the expansion line, the
    usual assumption for extraction steam; the overall value is the "cylinder" or
    enthalpy-drop efficiency from the inlet to the exhaust, not weighted by the
    section flows)::

        eta_s,ab = (h_a - h_b) / (h_a - h_s(p_b, s_a))
        eta_s    = (h_in - h_exh) / (h_in - h_s(p_exh, s_in))

    **Second law** on the boundary around turbine and generator at T0 (module notes;
    Eq. 3.13 and Ch. 3 in [2]_)::

        exergy_in = m_in ex_in - sum_out m ex,   ex = (h - h0) - T0 (s - s0)
        eta_2 = W / exergy_in,   eta_2_electrical = P_gen / exergy_in
        exergy_destroyed_and_lost = exergy_in - P_gen
        Q_0  = m_in (h_in - h0) - sum_out m (h - h0) - P_gen   (losses, heat at T0)
        Sgen = sum_out m (s - s0) - m_in (s_in - s0) + Q_0 / T0
        lost_work = T0 Sgen                               (Gouy-Stodola, Eq. 3.24)

    ``T0 Sgen`` equals ``exergy_in - P_gen`` identically; the two are computed by their
    own routes, and their agreement is checked in the tests.

    Flags: INPUT_OUT_OF_RANGE (also when pressure does not fall along the chain of
    ports: the numbers are kept); ISENTROPIC_ABOVE_ONE when a section or the overall
    efficiency exceeds ``1 + isentropic_tolerance``; NEGATIVE_ENTROPY_GENERATION below
    ``-sgen_tolerance exergy_in / T0``; ENERGY_BALANCE_OPEN when ``|energy_balance_error|
    > energy_balance_tolerance`` or ``|mass_balance_error| > mass_balance_tolerance``.

    References: ASME PTC 6-2004 [1]_ (steam rate: inlet flow per unit output),
    Bejan et al. 1996 [2]_, IAPWS-IF97 [3]_, IEC 60034-2-1 [4]_ (see the module).

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> row = pd.DataFrame({"inlet_flow": [100.0], "inlet_pressure": [10e6],
    ...     "inlet_temperature": [773.15], "exhaust_pressure": [10e3],
    ...     "generator_power": [100e6]})
    >>> out = steam_turbine(row, {}, ModelContext(dead_state()))
    >>> round(float(out["exhaust_quality"].iloc[0]), 3)
    0.906
    """
    n = len(inputs)
    param = KIND.resolve_parameters(params)
    dead = context.dead
    t0 = np.broadcast_to(np.asarray(dead.t0_k, dtype=float), (n,))
    h0 = np.broadcast_to(np.asarray(dead.h0_water_j_per_kg, dtype=float), (n,))
    s0 = np.broadcast_to(np.asarray(dead.s0_water_j_per_kg_k, dtype=float), (n,))

    m_in = _required(inputs, "inlet_flow")
    p_in = _required(inputs, "inlet_pressure")
    t_in = _required(inputs, "inlet_temperature")
    p_gen = _required(inputs, "generator_power")
    min_superheat = float(param["min_superheat_k"])

    # Inlet: superheated or supercritical steam, else the row is unusable.
    inlet = steam.from_pt(p_in, t_in, _HS)
    t_sat_in = steam.saturation_temperature(p_in)
    with np.errstate(invalid="ignore"):
        inlet_dry = np.where(p_in < steam.P_CRITICAL_PA, t_in > t_sat_in, t_in > steam.T_CRITICAL_K)
        valid = inlet.in_range & inlet_dry & (m_in > 0) & np.isfinite(p_gen)
        valid &= np.isfinite(t0) & np.isfinite(h0) & np.isfinite(s0)

    ports: list[_Port] = []
    for number in _extraction_numbers(inputs):
        ports.append(
            _Port(
                _required(inputs, EXTRACTION.role_name(number, "flow")),
                _required(inputs, EXTRACTION.role_name(number, "pressure")),
                _column(inputs, EXTRACTION.role_name(number, "temperature")),
                min_superheat,
            )
        )
    m_extracted = sum((port.m for port in ports), np.zeros(n))
    m_exh_measured = _column(inputs, "exhaust_flow")
    m_exh = m_in - m_extracted if m_exh_measured is None else m_exh_measured
    exhaust = _Port(
        m_exh,
        _required(inputs, "exhaust_pressure"),
        _column(inputs, "exhaust_temperature"),
        min_superheat,
    )
    with np.errstate(invalid="ignore"):
        valid &= m_exh > 0
    outlets = [*ports, exhaust]

    w_shaft = shaft_power(
        p_gen,
        generator_efficiency=float(param["generator_efficiency"]),
        mechanical_loss_w=float(param["mechanical_loss_w"]),
        rated_power_w=float(param["generator_rated_power_w"]),
        no_load_loss_w=float(param["generator_no_load_loss_w"]),
        load_loss_at_rated_w=float(param["generator_load_loss_at_rated_w"]),
    )

    # Energy balance: close the one unknown enthalpy per row, if there is exactly one.
    counted = [port.unknown & (port.m != 0) for port in outlets]
    n_unknown = np.sum(counted, axis=0)
    known_out = sum(
        (np.where(port.unknown, 0.0, _flow_term(port.m, port.h - h0)) for port in outlets),
        np.zeros(n),
    )
    remainder = m_in * (inlet.h - h0) - known_out - w_shaft
    for port, unknown in zip(outlets, counted, strict=True):
        rows = unknown & (n_unknown == 1) & valid
        if rows.any():
            with np.errstate(divide="ignore", invalid="ignore"):
                port.close(rows, h0 + remainder / port.m)
    valid &= n_unknown <= 1
    for port in outlets:
        valid &= port.valid

    # Sections along the chain inlet -> ports -> exhaust.
    chain_h = [inlet.h, *(port.h for port in outlets)]
    chain_s = [inlet.s, *(port.s for port in outlets)]
    chain_p = [p_in, *(port.p for port in outlets)]
    sections = []
    pressure_falls = np.ones(n, dtype=bool)
    for j in range(len(outlets)):
        h_s = steam.from_ps(chain_p[j + 1], chain_s[j], ("h",)).h
        sections.append(_ratio(chain_h[j] - chain_h[j + 1], chain_h[j] - h_s))
        with np.errstate(invalid="ignore"):
            pressure_falls &= chain_p[j] > chain_p[j + 1]
    if ports:
        h_s_overall = steam.from_ps(exhaust.p, inlet.s, ("h",)).h
        overall = _ratio(inlet.h - exhaust.h, inlet.h - h_s_overall)
    else:
        overall = sections[0]

    # First and second law on the turbine-generator boundary at T0.
    enthalpy_out = sum((_flow_term(port.m, port.h - h0) for port in outlets), np.zeros(n))
    entropy_out = sum((_flow_term(port.m, port.s - s0) for port in outlets), np.zeros(n))
    exergy_out = sum(
        (_flow_term(port.m, flow_exergy(port.h, port.s, dead)) for port in outlets), np.zeros(n)
    )
    enthalpy_drop = m_in * (inlet.h - h0) - enthalpy_out
    exergy_in = m_in * flow_exergy(inlet.h, inlet.s, dead) - exergy_out
    heat_to_surroundings = enthalpy_drop - p_gen
    with np.errstate(divide="ignore", invalid="ignore"):
        sgen = entropy_out - m_in * (inlet.s - s0) + heat_to_surroundings / t0
        energy_error = (enthalpy_drop - w_shaft) / w_shaft
        mass_error = (m_in - m_extracted - m_exh) / m_in
        steam_rate = np.where(p_gen > 0, m_in / p_gen * 3.6e6, np.nan)

    results = {
        "exhaust_enthalpy_j_per_kg": exhaust.h,
        "exhaust_quality": exhaust.quality,
        "exhaust_flow_kg_per_s": m_exh,
        **{
            section_result_name(k): (sections[k - 1] if k <= len(sections) else np.full(n, np.nan))
            for k in range(1, MAX_SECTIONS + 1)
        },
        "overall_isentropic_efficiency": overall,
        "exergy_in_w": exergy_in,
        "eta_2": _ratio(w_shaft, exergy_in),
        "eta_2_electrical": _ratio(p_gen, exergy_in),
        "sgen_w_per_k": sgen,
        "lost_work_w": lost_work(sgen, t0),
        "exergy_destroyed_and_lost_w": exergy_in - p_gen,
        "energy_balance_error": energy_error,
        "mass_balance_error": mass_error,
    }
    frame = pd.DataFrame(
        {name: np.where(valid, values, np.nan) for name, values in results.items()},
        index=inputs.index,
    )
    power_ok = np.isfinite(p_gen)
    frame["shaft_power_w"] = np.where(power_ok, w_shaft, np.nan)
    frame["generator_power_w"] = np.where(power_ok, p_gen, np.nan)
    with np.errstate(invalid="ignore"):
        frame["steam_rate_kg_per_kwh"] = np.where(m_in > 0, steam_rate, np.nan)
    frame = frame[[column.name for column in RESULTS]]

    tolerance = float(param["isentropic_tolerance"])
    frame["flags"] = checks.combine(
        checks.input_out_of_range(valid & pressure_falls),
        *(
            checks.isentropic_above_one(frame[section_result_name(k)] - tolerance)
            for k in range(1, len(sections) + 1)
        ),
        checks.isentropic_above_one(frame["overall_isentropic_efficiency"] - tolerance),
        checks.negative_entropy_generation(
            frame["sgen_w_per_k"], frame["exergy_in_w"] / t0, float(param["sgen_tolerance"])
        ),
        checks.balance_open(
            frame["energy_balance_error"], float(param["energy_balance_tolerance"])
        ),
        checks.balance_open(frame["mass_balance_error"], float(param["mass_balance_tolerance"])),
    )
    return frame


KIND = UnitKind(
    name=KIND_NAME,
    title="Steam turbine (with generator)",
    roles=ROLES,
    parameters=PARAMETERS,
    results=RESULTS,
    load_result="generator_power_w",
    model=steam_turbine,
    port_groups=(EXTRACTION,),
    description=(
        "Steam turbine-generator from measured inlet, extraction and exhaust ports and "
        "generator output: section and overall isentropic efficiency, shaft power, steam "
        "rate, exergetic efficiency, entropy generation and lost work. A wet port's "
        "enthalpy is closed by the energy balance on the measured output."
    ),
)
"""The steam turbine's catalogue entry."""
