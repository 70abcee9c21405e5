"""Faults the simulator injects, and the schedule file that lists them.

Six kinds, each something an energy manager should hear about:

==============  ============================================================  ===========
kind            what happens                                                  size
==============  ============================================================  ===========
fouling         a boiler's flue-gas temperature creeps up (heat-transfer      K
                surfaces fouling); the same steam then takes more fuel
excess_air      a boiler's flue-gas O2 drifts up (more excess air); more      fraction
                stack loss, more fuel                                         of O2
turbine_wear    a turbine section loses isentropic efficiency (deposits,      fraction
                erosion); hotter extraction, less power
meter_bias      a tag reads ``(1 + size)`` times the truth (a transmitter     fraction
                out of calibration, a leaking impulse line)
stuck           a tag repeats the value it had when the fault began           -
gap             tags send nothing (a collector or network outage)             -
==============  ============================================================  ===========

Schedule file (YAML, format of our own; times are counted from the simulation start,
the first instant of the backfill; a number is seconds, a text is read by pint)::

    faults:
      - {kind: fouling, unit: gb1, start: 24 d, ramp: 36 d, size: 35 K}
      - {kind: meter_bias, tags: [BB3.fw.flow], start: 47 d, end: 49 d, size: -25 %}
      - {kind: gap, tags: ["BB3.*", "TG2.*"], start: 53 d, end: 53.3 d}

``ramp`` (fouling, excess_air, turbine_wear) is the time to reach the full size, linearly;
without ``end`` a fault lasts for ever (into the live phase). ``tags`` take shell-style
patterns. ``section`` (turbine_wear, default 1) picks the turbine section.
"""

from __future__ import annotations

import fnmatch
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import yaml

from api.plants.quantities import to_si_number

FaultKind = Literal["fouling", "excess_air", "turbine_wear", "meter_bias", "stuck", "gap"]
KINDS: tuple[str, ...] = ("fouling", "excess_air", "turbine_wear", "meter_bias", "stuck", "gap")
_UNIT_KINDS = ("fouling", "excess_air", "turbine_wear")
_SIZE_UNIT = {"fouling": "K", "excess_air": "1", "turbine_wear": "1", "meter_bias": "1"}
DAY_S = 86_400.0

CLEAN_FRACTION = 0.35
"""The default schedule leaves the first 35 % of the backfill free of faults: the
reference period a baseline is fitted on."""


@dataclass(frozen=True)
class Fault:
    """One scheduled fault; times in seconds from the simulation start.

    Attributes
    ----------
    kind : str
        One of :data:`KINDS`.
    start_s : float
        When it begins. [s]
    end_s : float or None
        When it ends; None for never. [s]
    ramp_s : float
        Time to reach ``size`` (gradual kinds); 0 is a step. [s]
    size : float
        Its size in SI: K, fraction of O2, efficiency fraction, or relative bias. [-]
    unit : str or None
        The unit it acts on (fouling, excess_air, turbine_wear).
    tags : tuple of str
        Tag patterns it acts on (meter_bias, stuck, gap).
    section : int
        Turbine section (turbine_wear). [-]
    """

    kind: str
    start_s: float
    end_s: float | None = None
    ramp_s: float = 0.0
    size: float = 0.0
    unit: str | None = None
    tags: tuple[str, ...] = field(default_factory=tuple)
    section: int = 1

    def level(self, t_s: np.ndarray) -> np.ndarray:
        """0 before the start and after the end, rising linearly to 1 over the ramp. [-]"""
        t_s = np.asarray(t_s, dtype=float)
        since = t_s - self.start_s
        if self.ramp_s > 0:
            level = np.clip(since / self.ramp_s, 0.0, 1.0)
        else:
            level = (since >= 0).astype(float)
        return np.where(self.active(t_s), level, 0.0)

    def active(self, t_s: np.ndarray) -> np.ndarray:
        t_s = np.asarray(t_s, dtype=float)
        on = t_s >= self.start_s
        if self.end_s is not None:
            on &= t_s < self.end_s
        return on

    def matches(self, tag: str) -> bool:
        return any(fnmatch.fnmatchcase(tag, pattern) for pattern in self.tags)

    def describe(self) -> str:
        days = self.start_s / DAY_S
        until = "" if self.end_s is None else f" to day {self.end_s / DAY_S:.2f}"
        what = self.unit or ", ".join(self.tags)
        size = "" if self.kind in ("stuck", "gap") else f", size {self.size:g}"
        return f"{self.kind} on {what}: from day {days:.2f}{until}{size}"


def default_schedule(days: float) -> list[Fault]:
    """The demo's faults for a backfill of ``days``, placed at fixed fractions of it.

    The first :data:`CLEAN_FRACTION` of the period is clean. Windows of the short faults
    are at most a day or two and shrink with short backfills, so that a few simulated
    days (the tests) still hold every fault. A last gap of the chip line, 20 min long,
    falls 10 min into the live phase, for a staleness alert to fire while one watches.
    """
    span = days * DAY_S
    hour = 3600.0

    def window(start_fraction: float, longest_s: float, fraction: float) -> tuple[float, float]:
        start = start_fraction * span
        return start, start + min(longest_s, fraction * span)

    stuck = window(0.45, DAY_S, 0.05)
    bias = window(0.78, 2 * DAY_S, 0.05)
    gap = window(0.88, 8 * hour, 0.03)
    chip_line = ("BB3.*", "TG2.*")
    return [
        Fault("fouling", 0.40 * span, ramp_s=0.60 * span, size=35.0, unit="gb1"),
        Fault("stuck", stuck[0], stuck[1], tags=("GB2.steam.flow",)),
        Fault("excess_air", 0.55 * span, ramp_s=0.15 * span, size=0.025, unit="gb2"),
        Fault("turbine_wear", 0.65 * span, ramp_s=0.20 * span, size=0.05, unit="tg1"),
        Fault("meter_bias", bias[0], bias[1], size=-0.25, tags=("BB3.fw.flow",)),
        Fault("gap", gap[0], gap[1], tags=chip_line),
        Fault("gap", span + 10 * 60.0, span + 30 * 60.0, tags=chip_line),
    ]


def clean_period_s(days: float) -> tuple[float, float]:
    """[start, end) of the default schedule's fault-free reference period. [s]"""
    return 0.0, CLEAN_FRACTION * days * DAY_S


class ScheduleError(ValueError):
    """A schedule file that cannot be read; the message names the entry and field."""


def _seconds(value: Any, where: str) -> float:
    try:
        return to_si_number(value, "s", atmosphere_pa=101_325.0)
    except ValueError as exc:
        raise ScheduleError(f"{where}: {exc}") from None


def parse_schedule(document: Any) -> list[Fault]:
    """Faults from a parsed schedule file (see the module docstring)."""
    if not isinstance(document, dict) or not isinstance(document.get("faults"), list):
        raise ScheduleError("a schedule file is a mapping with a list under 'faults'")
    faults = []
    for i, entry in enumerate(document["faults"]):
        where = f"faults[{i}]"
        if not isinstance(entry, dict):
            raise ScheduleError(f"{where}: each fault is a mapping")
        unknown = set(entry) - {"kind", "unit", "tags", "start", "end", "ramp", "size", "section"}
        if unknown:
            raise ScheduleError(f"{where}: unknown field(s) {', '.join(sorted(unknown))}")
        kind = entry.get("kind")
        if kind not in KINDS:
            raise ScheduleError(f"{where}.kind: {kind!r} is not one of {', '.join(KINDS)}")
        if "start" not in entry:
            raise ScheduleError(f"{where}.start: required")
        start = _seconds(entry["start"], f"{where}.start")
        end = _seconds(entry["end"], f"{where}.end") if "end" in entry else None
        if end is not None and end <= start:
            raise ScheduleError(f"{where}.end: must be after start")
        ramp = _seconds(entry.get("ramp", 0), f"{where}.ramp")
        size = 0.0
        if kind in _SIZE_UNIT:
            if "size" not in entry:
                raise ScheduleError(f"{where}.size: required for {kind}")
            try:
                size = to_si_number(entry["size"], _SIZE_UNIT[kind], atmosphere_pa=101_325.0)
            except ValueError as exc:
                raise ScheduleError(f"{where}.size: {exc}") from None
        unit = entry.get("unit")
        tags = entry.get("tags") or []
        if isinstance(tags, str):
            tags = [tags]
        if kind in _UNIT_KINDS and not unit:
            raise ScheduleError(f"{where}.unit: required for {kind}")
        if kind not in _UNIT_KINDS and not tags:
            raise ScheduleError(f"{where}.tags: required for {kind}")
        faults.append(
            Fault(
                kind,
                start,
                end,
                ramp_s=ramp,
                size=size,
                unit=unit,
                tags=tuple(str(t) for t in tags),
                section=int(entry.get("section", 1)),
            )
        )
    return faults


def load_schedule(spec: str, days: float) -> list[Fault]:
    """``"default"``, ``"none"``, or the path of a schedule file."""
    if spec == "default":
        return default_schedule(days)
    if spec == "none":
        return []
    path = Path(spec)
    if not path.is_file():
        raise ScheduleError(f"{spec}: not 'default', 'none' or a schedule file")
    try:
        document = yaml.safe_load(path.read_text(encoding="utf-8"))
    except yaml.YAMLError as exc:
        raise ScheduleError(f"{spec}: not valid YAML: {exc}") from None
    return parse_schedule(document)
