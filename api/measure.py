"""Units of measure: the service's one pint registry and the conversions at its edges.

Readings are stored and computed in SI (Pa, K, kg/s, J/kg, W, ``"1"`` for fractions);
this module turns the units people write in plant files, shift logs and REST batches
into SI on the way in, and SI into a chosen unit system on the way out.

Units the trade writes that pint does not know, or knows differently, are defined here:

========================  ==========================================================
``barg`` ``kPag``         Gauge pressures. A gauge reading is relative to the
``MPag`` ``psig``         atmosphere, so converting one needs the atmosphere: every
                          conversion takes ``atmosphere_pa`` (default the standard
                          atmosphere, 101 325 Pa); a plant may configure its own.
                          Spellings ``bar(g)``, ``kPa(g)``, ``MPa(g)``, ``psi(g)`` are
                          accepted. A gauge unit must stand alone (``barg/s`` is refused).
``bara`` ``kPaa``         Absolute pressures, written explicitly; the same as ``bar``,
``MPaa`` ``psia``         ``kPa``, ``MPa``, ``psi``. Spellings ``bar(a)`` etc. accepted.
``Btu``                   The International Table Btu, 1055.05585262 J exactly
                          (1 Btu_IT/lb = 2.326 kJ/kg; NIST SP 811, 2008 ed., App. B.9).
                          pint's own ``Btu`` is the ISO 31-4 value 1055.056 J; US power
                          practice (heat rate in Btu/kWh, steam tables in Btu/lb) uses
                          the IT Btu, so it replaces pint's here.
``MMBtu``                 One million Btu (US trade usage of "MM").
``Nm3`` ``Sm3``           Normal / standard cubic metre. A normal cubic metre is a
                          *volume at reference conditions* (0 degC or 15 degC, 1 atm),
                          so ``Nm3/h`` is honestly only a volume flow: it is treated as
                          ``m^3/h``, and turning it into a mass flow needs the gas
                          density at the same reference conditions, which belongs to the
                          fuel, not to the unit. A ``Nm3/h`` tag can therefore feed a
                          volume-flow role, never a mass-flow role.
``m3`` ``m2``             Spreadsheet spellings of ``m^3`` and ``m^2``.
========================  ==========================================================

Everything else is pint's default registry: ``t/h`` (tonne per hour), ``klb/h``
(kilopound per hour), ``%`` and ``ppm`` (fractions: 50 % is 0.5 in ``"1"``), ``degC``
``degF`` ``degR`` ``K`` (offset units handled by pint), ``MW`` ``kW``, ``MJ/kg``,
``kJ/kWh``. An SI unit ``"K"`` means an absolute temperature; a temperature
*difference* should be declared ``"delta_degC"`` (same size as a kelvin), so that it is
shown in ``delta_degF`` without the offset.

Output unit systems (:func:`display_unit`): ``"si"`` keeps the SI unit exactly as the
catalogue declares it, so API output is unambiguous and the dashboard chooses prefixes;
``"us"`` is US customary, :data:`US_CUSTOMARY`.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Mapping

import numpy as np
import pandas as pd
import pint

STANDARD_ATMOSPHERE_PA = 101_325.0
"""Standard atmosphere, the default for gauge pressures. [Pa] (ISO 2533:1975)"""

BTU_IT_J = 1055.05585262
"""International Table British thermal unit. [J] (NIST SP 811, 2008 ed., App. B.9)"""

ureg: pint.UnitRegistry = pint.UnitRegistry(on_redefinition="ignore")
"""The service's unit registry; nothing else on the service side builds one."""

# Replaces pint's ISO Btu (1055.056 J) under every spelling people write.
ureg.define(f"british_thermal_unit = {BTU_IT_J} * joule = Btu = BTU = Btu_it")
ureg.define("MMBtu = 1e6 * british_thermal_unit")
ureg.define("normal_cubic_meter = meter ** 3 = Nm3")
ureg.define("standard_cubic_meter = meter ** 3 = Sm3")
ureg.define("m3 = meter ** 3")
ureg.define("m2 = meter ** 2")

_ABSOLUTE_BASE = {"bar": "bar", "kPa": "kilopascal", "MPa": "megapascal", "psi": "psi"}
GAUGE_UNITS: Mapping[str, float] = {
    f"{name}g": float(ureg.Quantity(1.0, base).m_as("pascal"))
    for name, base in _ABSOLUTE_BASE.items()
}
"""Gauge pressure units and their size. [Pa per unit]"""

for _name, _pa in GAUGE_UNITS.items():
    # pint's own offset is the standard atmosphere; this module never relies on it and
    # applies the caller's atmosphere instead, but a stray pint conversion stays sane.
    ureg.define(f"{_name} = {_pa!r} * pascal; offset: {STANDARD_ATMOSPHERE_PA!r}")
for _name, _base in _ABSOLUTE_BASE.items():
    ureg.define(f"{_name}a = {_base}")

US_CUSTOMARY: Mapping[str, str] = {
    "K": "degF",
    "delta_degC": "delta_degF",
    "Pa": "psia",
    "kg/s": "lb/h",
    "kg": "lb",
    "J/kg": "Btu/lb",
    "J/(kg K)": "Btu/(lb degR)",
    "J/kWh": "Btu/kWh",
    "J": "Btu",
    "W": "W",
    "W/K": "Btu/(h degR)",
    "kg/J": "lb/MMBtu",
    "kg/m^3": "lb/ft^3",
    "m^3/kg": "ft^3/lb",
    "m^3/s": "ft^3/min",
    "m": "ft",
    "m^2": "ft^2",
    "s": "s",
    "1": "1",
}
"""SI unit -> US customary display unit.

Temperatures in degF, pressures absolute in psia, mass flows in lb/h, specific enthalpy
and heating value in Btu/lb, specific entropy and heat capacity in Btu/(lb degR), heat
rate in Btu/kWh, emission factors in lb/MMBtu. Power stays in watts: US practice quotes
electrical output in kW and MW too, and a result column does not say whether its watts
are electrical or thermal; a caller that knows a column is a heat flow converts it with
``from_si(values, "W", "MMBtu/h")``. Fractions stay fractions. An SI unit not in this
table is returned unchanged (the unit text returned says so).
"""

SYSTEMS = ("si", "us")

SI_BY_DIMENSION: tuple[str, ...] = (
    "Pa",
    "K",
    "kg/s",
    "W",
    "J/kg",
    "J/(kg K)",
    "J",
    "kg",
    "m",
    "m^2",
    "m^3/s",
    "kg/m^3",
    "m^3/kg",
    "W/K",
    "kg/J",
    "s",
    "1",
)
"""Preferred SI unit per dimension, for a tag that feeds no role (:func:`si_unit_for`)."""


class UnitError(ValueError):
    """A unit text pint cannot read, or a unit that cannot feed the SI unit asked for."""


_GAUGE_SPELLING = re.compile(r"^(bar|kPa|MPa|psi)\s*\(\s*([ga])\s*\)$")
_BARE_POWER = re.compile(r"(?<![A-Za-z_])m([23])(?![0-9A-Za-z_])")
_DEG_SPACE = re.compile(r"\bdeg\s+([CFR])\b")


def _normalise(text: str) -> str:
    text = text.strip()
    text = _GAUGE_SPELLING.sub(r"\1\2", text)
    text = text.replace("Nm³", "Nm3").replace("Sm³", "Sm3")
    text = _BARE_POWER.sub(r"m**\1", text)
    return _DEG_SPACE.sub(r"deg\1", text)


@functools.lru_cache(maxsize=1024)
def parse_unit(text: str) -> pint.Unit:
    """The pint unit written as ``text``.

    Parameters
    ----------
    text : str
        A unit of measure as people write it: ``"t/h"``, ``"barg"``, ``"bar(g)"``,
        ``"degC"``, ``"°C"``, ``"%"``, ``"Btu/kWh"``, ``"1"`` for a plain fraction.

    Returns
    -------
    pint.Unit

    Raises
    ------
    UnitError
        Naming the text, when it is empty, pint cannot read it, or it combines a gauge
        pressure with other units.
    """
    if not isinstance(text, str) or not text.strip():
        raise UnitError(f"empty unit of measure {text!r}; write '1' for a plain fraction")
    norm = _normalise(text)
    gauge = set(re.findall(r"[A-Za-z_]+", norm)) & set(GAUGE_UNITS)
    if gauge and norm not in GAUGE_UNITS:
        raise UnitError(
            f"unit {text!r}: a gauge pressure ({', '.join(sorted(gauge))}) must stand "
            "alone, it cannot be combined with other units"
        )
    try:
        return ureg.Unit(norm)
    except Exception as exc:  # pint raises several unrelated types for bad text
        detail = str(exc).strip() or "not a unit expression"
        raise UnitError(f"unknown unit of measure {text!r} ({detail})") from None


def check_compatible(unit_text: str, si_unit: str) -> None:
    """Raise unless a value in ``unit_text`` can be converted to ``si_unit``.

    Parameters
    ----------
    unit_text : str
        The unit a tag or a file column is written in.
    si_unit : str
        The SI unit the receiving role or column expects.

    Raises
    ------
    UnitError
        Naming both units and both dimensions when they differ, or naming the text
        pint cannot read.
    """
    unit, si = parse_unit(unit_text), parse_unit(si_unit)
    if unit.dimensionality != si.dimensionality:
        raise UnitError(
            f"unit {unit_text!r} ({_dimension_text(unit)}) cannot be converted to "
            f"{si_unit!r} ({_dimension_text(si)})"
        )


def si_unit_for(unit_text: str) -> str:
    """The SI unit a value in ``unit_text`` is stored in when no role declares one.

    Parameters
    ----------
    unit_text : str
        A unit of measure (``"t/h"``, ``"barg"``, ``"MW"``).

    Returns
    -------
    str
        The first unit of :data:`SI_BY_DIMENSION` with the same dimension (``"kg/s"``,
        ``"Pa"``, ``"W"``), else pint's SI base-unit expression (``"kilogram / second"``).
    """
    unit = parse_unit(unit_text)
    for si in SI_BY_DIMENSION:
        if parse_unit(si).dimensionality == unit.dimensionality:
            return si
    return f"{ureg.Quantity(1.0, unit).to_base_units().units}"


def _dimension_text(unit: pint.Unit) -> str:
    dims = unit.dimensionality
    return "dimensionless" if not dims else str(dims)


def convert(values, from_unit: str, to_unit: str, atmosphere_pa=STANDARD_ATMOSPHERE_PA):
    """Convert values between two compatible units, gauge pressures included.

    Parameters
    ----------
    values : numeric
        Scalar, array-like or Series. NaN stays NaN. [from_unit]
    from_unit, to_unit : str
        Unit texts, see :func:`parse_unit`.
    atmosphere_pa : numeric, default 101325
        Atmospheric pressure that gauge pressures are relative to; scalar or one value
        per element. [Pa]

    Returns
    -------
    numeric
        float or ndarray (a Series keeps its index). [to_unit]

    Raises
    ------
    UnitError
        For unreadable units or different dimensions (see :func:`check_compatible`).
    """
    check_compatible(from_unit, to_unit)
    arr = np.asarray(values, dtype=float)
    src, dst = _normalise(from_unit), _normalise(to_unit)
    atmosphere = np.asarray(atmosphere_pa, dtype=float)
    if src in GAUGE_UNITS or dst in GAUGE_UNITS:
        if np.any(~(atmosphere > 0)):
            raise ValueError(f"atmosphere_pa must be a positive pressure, got {atmosphere_pa!r}")
        if src in GAUGE_UNITS:
            pa = arr * GAUGE_UNITS[src] + atmosphere
        else:
            pa = ureg.Quantity(arr, parse_unit(from_unit)).m_as(ureg.pascal)
        if dst in GAUGE_UNITS:
            out = (pa - atmosphere) / GAUGE_UNITS[dst]
        else:
            out = ureg.Quantity(pa, ureg.pascal).m_as(parse_unit(to_unit))
    else:
        out = ureg.Quantity(arr, parse_unit(from_unit)).m_as(parse_unit(to_unit))
    return _like(values, out)


def _like(values, out):
    out = np.asarray(out, dtype=float)
    if isinstance(values, pd.Series):
        return pd.Series(np.broadcast_to(out, values.shape), index=values.index, name=values.name)
    if out.ndim == 0 and np.ndim(values) == 0:
        return float(out)
    return out


def to_si(values, unit_text: str, si_unit: str, atmosphere_pa=STANDARD_ATMOSPHERE_PA):
    """Convert values written in ``unit_text`` to the SI unit ``si_unit``.

    Parameters
    ----------
    values : numeric
        Scalar, array-like or Series. NaN stays NaN. [unit_text]
    unit_text : str
        The unit the values are written in (``"barg"``, ``"degF"``, ``"t/h"``).
    si_unit : str
        The SI unit wanted (``"Pa"``, ``"K"``, ``"kg/s"``).
    atmosphere_pa : numeric, default 101325
        Atmosphere for gauge pressures. [Pa]

    Returns
    -------
    numeric
        float, ndarray or Series, as :func:`convert`. [si_unit]
    """
    return convert(values, unit_text, si_unit, atmosphere_pa)


def from_si(values, si_unit: str, target_unit_text: str, atmosphere_pa=STANDARD_ATMOSPHERE_PA):
    """Convert SI values to ``target_unit_text`` (the inverse of :func:`to_si`).

    Parameters
    ----------
    values : numeric
        Scalar, array-like or Series. NaN stays NaN. [si_unit]
    si_unit : str
        The SI unit of the values.
    target_unit_text : str
        The unit wanted; a gauge unit subtracts ``atmosphere_pa``.
    atmosphere_pa : numeric, default 101325
        Atmosphere for gauge pressures. [Pa]

    Returns
    -------
    numeric
        float, ndarray or Series, as :func:`convert`. [target_unit_text]
    """
    return convert(values, si_unit, target_unit_text, atmosphere_pa)


@functools.lru_cache(maxsize=256)
def _us_unit(si: pint.Unit) -> str | None:
    return next((us for key, us in US_CUSTOMARY.items() if parse_unit(key) == si), None)


def display_unit(si_unit: str, system: str) -> str:
    """The unit text to show an SI quantity in, for an output unit system.

    Parameters
    ----------
    si_unit : str
        The SI unit of the quantity, as the catalogue declares it.
    system : {"si", "us"}
        ``"si"`` returns ``si_unit`` unchanged; ``"us"`` looks it up in
        :data:`US_CUSTOMARY` (equivalent spellings match: ``"J/kg/K"`` finds
        ``"J/(kg K)"``) and returns ``si_unit`` unchanged when the table has no entry.

    Returns
    -------
    str
        A unit text that :func:`parse_unit` reads.

    Raises
    ------
    ValueError
        For a system other than "si" and "us".
    UnitError
        When ``si_unit`` cannot be read.
    """
    if system not in SYSTEMS:
        raise ValueError(f"unknown unit system {system!r}; choose one of {', '.join(SYSTEMS)}")
    si = parse_unit(si_unit)
    if system == "si":
        return si_unit
    return _us_unit(si) or si_unit


def convert_series(values, si_unit: str, system: str):
    """SI values in the display unit of an output unit system.

    Parameters
    ----------
    values : numeric
        Scalar, array-like or Series. NaN stays NaN. [si_unit]
    si_unit : str
        The SI unit of the values.
    system : {"si", "us"}
        See :func:`display_unit`.

    Returns
    -------
    values : numeric
        float, ndarray or Series (index kept). [unit]
    unit : str
        The unit text of the returned values.
    """
    target = display_unit(si_unit, system)
    if target == si_unit:
        return _like(values, np.asarray(values, dtype=float)), target
    return from_si(values, si_unit, target), target
