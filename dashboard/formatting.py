"""SI values to what people read: the dashboard's only place that converts for display.

Results arrive in SI (fractions as fractions, temperatures in K, power in W). Conversions
go through the service's pint registry (:mod:`api.measure`), so the dashboard and the
API agree on every factor (the IT Btu included); this module only chooses *which* unit
to show in each unit system, and how to print numbers, money and times.
"""

from __future__ import annotations

import datetime as dt
import math

import pandas as pd

from api import measure

SYSTEMS = ("si", "us")
"""Unit systems a viewer can pick: SI or US customary."""
TIME_MODES = ("plant", "utc")
"""Clock a viewer can pick: the plant's local time or UTC."""

_SI_CHOICE = {
    "1": "%",
    "K": "degC",
    "delta_degC": "delta_degC",
    "Pa": "bar",
    "kg/s": "t/h",
    "J/kg": "kJ/kg",
    "J/(kg K)": "kJ/(kg K)",
    "J/kWh": "kJ/kWh",
    "W": "MW",
    "W/K": "kW/K",
}
"""SI unit -> the SI unit shown (prefixes a plant engineer reads at a glance)."""

_US_CHOICE = {
    "1": "%",
    "W": "MMBtu/h",
    "kg/s": "klb/h",
}
"""Where the US display differs from :data:`api.measure.US_CUSTOMARY`.

Fractions are read as percent in both systems. A heat or exergy flow in US practice is
quoted in MMBtu/h; a mass flow in klb/h. Electrical power stays in MW (see
:func:`display_unit`).
"""

_LABELS = {
    "eta_1": "First-law efficiency (HHV)",
    "eta_1_lhv": "First-law efficiency (LHV)",
    "eta_2": "Second-law efficiency",
    "sgen_w_per_k": "Entropy generation",
    "lost_work_w": "Lost work, T0·Sgen",
    "exergy_destroyed_and_lost_w": "Exergy destroyed and lost",
    "heat_absorbed_w": "Heat absorbed",
    "heat_loss_w": "Heat lost",
    "fuel_heat_input_hhv_w": "Fuel heat input (HHV)",
    "fuel_heat_input_lhv_w": "Fuel heat input (LHV)",
    "fuel_exergy_w": "Fuel exergy",
    "water_exergy_gain_w": "Water and steam exergy gain",
    "gross_power_w": "Gross power",
    "net_power_w": "Net power",
    "net_heat_rate_j_per_kwh": "Net heat rate (HHV)",
    "gross_heat_rate_j_per_kwh": "Gross heat rate (HHV)",
    "mass_balance_error": "Mass balance error",
    "carnot_limit": "Carnot limit",
    "exergy_in_w": "Exergy in with the steam",
    "generator_power_w": "Generator power",
    "shaft_power_w": "Shaft power",
    "exergy_destroyed_combustion_w": "Destroyed in combustion",
    "exergy_destroyed_heat_transfer_w": "Destroyed in heat transfer",
    "exergy_destroyed_unaccounted_w": "Destroyed, unaccounted (energy imbalance)",
    "exergy_lost_stack_thermal_w": "Lost with the stack gas, thermal",
    "exergy_lost_stack_chemical_w": "Lost with the stack gas, chemical",
    "exergy_lost_surface_w": "Lost from the casing",
    "exergy_lost_unburned_w": "Lost as unburned fuel",
    "exergy_lost_stack_w": "Lost with the stack gas",
    "exergy_lost_exhaust_w": "Lost with the exhaust",
    "exergy_destroyed_w": "Destroyed inside the unit",
    "exergy_destroyed_internal_w": "Destroyed inside the unit",
    "exergy_destroyed_duct_burner_w": "Destroyed in the duct burner",
    "rejected_heat_exergy_w": "Lost with the rejected heat",
    "exergy_supplied_w": "Exergy supplied (fuel and air)",
    "heat_input_exergy_w": "Exergy of the heat input",
    "electric_power_w": "Electric power",
    "work_output_w": "Work output",
    "compressed_air_exergy_w": "Compressed-air exergy",
    "headroom_recoverable_w": "Recoverable headroom",
    "destroyed_fraction": "Exergy destroyed and lost, share of input",
    "drift_extra_fuel_w": "Extra fuel from drift",
    "drift_co2_kg_per_h": "CO2 of drift",
    "ambient_temperature_k": "Ambient temperature (T0)",
    "steady": "Steady state",
    "coverage": "Data coverage",
    "headroom_cost_per_h": "Headroom value",
    "drift_cost_per_h": "Cost of drift",
}


def _canonical(si_unit: str) -> str | None:
    """The key of the choice tables that ``si_unit`` spells, or None."""
    try:
        unit = measure.parse_unit(si_unit)
    except measure.UnitError:
        return None
    for key in _SI_CHOICE:
        if measure.parse_unit(key) == unit:
            return key
    return None


def is_fraction(si_unit: str) -> bool:
    """Whether a unit text is the dimensionless fraction ``"1"``."""
    return _canonical(si_unit) == "1"


def display_unit(metric: str, si_unit: str, system: str) -> str:
    """The pint unit text a metric is shown in.

    Parameters
    ----------
    metric : str
        Result column name; power columns (``*power_w``) stay in MW in both systems
        because US practice quotes electrical output in MW too.
    si_unit : str
        The SI unit the value is stored in; a unit pint cannot read (a currency per
        hour) is shown as it is.
    system : {"si", "us"}

    Returns
    -------
    str
    """
    if system not in SYSTEMS:
        raise ValueError(f"unknown unit system {system!r}; choose one of {', '.join(SYSTEMS)}")
    key = _canonical(si_unit)
    if key is None:
        if _parses(si_unit):
            return si_unit if system == "si" else measure.display_unit(si_unit, "us")
        return si_unit
    if key == "W" and "power" in metric:
        return "MW"
    if system == "si":
        return _SI_CHOICE[key]
    return _US_CHOICE.get(key) or measure.display_unit(key, "us")


def _parses(unit: str) -> bool:
    try:
        measure.parse_unit(unit)
    except measure.UnitError:
        return False
    return True


def _is_difference(metric: str) -> bool:
    return metric.startswith("drift_") and not metric.startswith("drift_cost")


def to_display(values, metric: str, si_unit: str, system: str):
    """Convert SI values of a metric for display.

    Parameters
    ----------
    values : numeric
        Scalar, array or Series; NaN stays NaN. [si_unit]
    metric, si_unit, system
        See :func:`display_unit`.

    Returns
    -------
    values : numeric
        Same type as given (a Series keeps its index). [unit]
    label : str
        The unit as printed on an axis or in a table (``"%"``, ``"°F"``, ``"MMBtu/h"``);
        a drift of a fraction is a difference, printed ``"% points"``.
    """
    target = display_unit(metric, si_unit, system)
    if target == si_unit or not _parses(si_unit):
        out = values
    else:
        # A temperature difference has no offset; measure.convert knows that only if
        # the column says delta_degC, which drift_* columns in K do not.
        source = "delta_degC" if _is_difference(metric) and target in ("degC", "degF") else si_unit
        target_text = (
            {"degC": "delta_degC", "degF": "delta_degF"}[target]
            if source == "delta_degC"
            else target
        )
        out = measure.convert(values, source, target_text)
        target = target_text
    label = unit_label(target)
    if target == "%" and _is_difference(metric):
        label = "% points"
    return out, label


def unit_label(unit_text: str) -> str:
    """A unit text as printed: degree signs, middle dots, no pint spellings."""
    text = unit_text
    for old, new in (
        ("delta_degC", "K"),
        ("delta_degF", "°F"),
        ("degC", "°C"),
        ("degF", "°F"),
        ("degR", "°R"),
        (" ", "·"),
        ("**", "^"),
    ):
        text = text.replace(old, new)
    return "–" if text == "1" else text


def metric_label(metric: str, fallback: str | None = None) -> str:
    """A short human name of a result column (``eta_2`` -> "Second-law efficiency")."""
    if metric in _LABELS:
        return _LABELS[metric]
    for prefix, words in (("expected_", "Expected "), ("drift_", "Drift of ")):
        if metric.startswith(prefix):
            inner = metric_label(metric.removeprefix(prefix))
            return words + lower_first(inner)
    if fallback:
        return fallback
    return metric.replace("_", " ").capitalize()


def lower_first(text: str) -> str:
    """``"First-law efficiency (HHV)"`` -> ``"first-law efficiency (HHV)"``."""
    return text[:1].lower() + text[1:]


MAX_DECIMALS = 6
"""Decimals printed at most; smaller magnitudes print as 0."""


def format_number(value, significant: int = 3) -> str:
    """A number with ``significant`` digits, thousands separated, never in E notation
    (at most :data:`MAX_DECIMALS` decimals: a magnitude below that prints as ``0``)."""
    if value is None:
        return "—"
    try:
        x = float(value)
    except (TypeError, ValueError):
        return "—"
    if not math.isfinite(x):
        return "—"
    if x == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(x)))
    decimals = min(max(significant - 1 - magnitude, 0), MAX_DECIMALS)
    rounded = round(x, decimals)
    if rounded == 0:
        return "0"
    return f"{rounded:,.{decimals}f}"


def format_quantity(value, metric: str, si_unit: str, system: str, significant: int = 3) -> str:
    """One SI value as printed in the chosen unit system: ``"87.3 %"``, ``"512 °F"``."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    shown, label = to_display(float(value), metric, si_unit, system)
    number = format_number(shown, significant)
    return number if label == "–" else f"{number} {label}"


def format_money_per_hour(value, currency: str | None) -> str:
    """A cost rate: ``"412 EUR/h"``; ``"—"`` when missing."""
    if value is None or not math.isfinite(float(value)):
        return "—"
    amount = format_number(float(value), 3)
    return f"{amount} {currency}/h" if currency else f"{amount} /h"


def zone_name(time_mode: str, plant_zone: str | None) -> str:
    """The IANA zone to show times in for a viewer's clock choice."""
    if time_mode not in TIME_MODES:
        raise ValueError(f"unknown time mode {time_mode!r}; choose one of plant, utc")
    return plant_zone if (time_mode == "plant" and plant_zone) else "UTC"


def to_zone(times: pd.DatetimeIndex | pd.Series, zone: str):
    """UTC times shown as wall-clock times of ``zone`` (tz-aware, same length)."""
    if isinstance(times, pd.Series):
        return times.dt.tz_convert(zone)
    return times.tz_convert(zone)


def spans_to_zone(spans: pd.DataFrame, zone: str) -> pd.DataFrame:
    """Spans (``start``, ``end`` in UTC) on the wall clock of ``zone``; empty stays empty."""
    out = spans.copy()
    if len(out):
        for column in ("start", "end"):
            out[column] = pd.DatetimeIndex(out[column]).tz_convert(zone)
    return out


def time_axis_title(zone: str) -> str:
    """Axis title that says which clock the times are on."""
    return "Time (UTC)" if zone == "UTC" else f"Time ({zone}, local)"


def present(value) -> bool:
    """False for None, NaN and NaT (what a missing field becomes in a DataFrame)."""
    if value is None:
        return False
    try:
        return not bool(pd.isna(value))
    except (TypeError, ValueError):  # arrays and other containers are values
        return True


def format_timestamp(ts, zone: str) -> str:
    """A UTC instant as ``2026-11-30 14:05 CET`` in the given zone; ``"—"`` if missing."""
    if not present(ts):
        return "—"
    stamp = pd.Timestamp(ts)
    if stamp.tzinfo is None:
        stamp = stamp.tz_localize("UTC")
    local = stamp.tz_convert(zone)
    return f"{local:%Y-%m-%d %H:%M} {local.tzname()}"


def format_age(ts, now: dt.datetime | None = None) -> str:
    """How old a timestamp is, coarsely: ``"45 s"``, ``"12 min"``, ``"3 h"``, ``"4 d"``."""
    if not present(ts):
        return "no data"
    stamp = pd.Timestamp(ts)
    if stamp.tzinfo is None:
        stamp = stamp.tz_localize("UTC")
    reference = pd.Timestamp(now) if now is not None else pd.Timestamp.now(tz="UTC")
    return format_duration((reference - stamp).total_seconds())


def age_seconds(ts, now: dt.datetime | None = None) -> float:
    """Age of a timestamp in seconds (inf when missing), for sorting by freshness."""
    if not present(ts):
        return math.inf
    stamp = pd.Timestamp(ts)
    if stamp.tzinfo is None:
        stamp = stamp.tz_localize("UTC")
    reference = pd.Timestamp(now) if now is not None else pd.Timestamp.now(tz="UTC")
    return max((reference - stamp).total_seconds(), 0.0)


def frame_to_display(frame: pd.DataFrame, metric: str, si_unit: str, system: str):
    """Every column of a frame of one metric (``mean``, ``min``, ``max``) for display.

    Returns
    -------
    frame : DataFrame
        Same index and columns, display units.
    label : str
        Unit label, as :func:`to_display`.
    """
    label = to_display(0.0, metric, si_unit, system)[1]
    shown = pd.DataFrame(
        {c: to_display(frame[c], metric, si_unit, system)[0] for c in frame.columns},
        index=frame.index,
    )
    return shown, label


def format_duration(seconds: float) -> str:
    """A length of time, coarsely: ``"45 s"``, ``"12 min"``, ``"3 h"``, ``"4 d"``."""
    if not math.isfinite(seconds):
        return "—"
    seconds = max(seconds, 0.0)
    for size, suffix in ((86_400, "d"), (3_600, "h"), (60, "min")):
        if seconds >= size:
            return f"{int(seconds // size)} {suffix}"
    return f"{int(seconds)} s"
