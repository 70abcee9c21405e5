"""Shift-log CSV files of the demo plant, as two different operators would keep them.

* The control room of the gas-fired line writes a European spreadsheet: ``;`` between
  fields, decimal commas, ``DD.MM.YYYY HH:MM`` local time, pressures in barg, temperatures
  in degC, flows in t/h and Nm3/h.
* The chip line's field round writes a US-style sheet (the line came with a US-built
  turbine and its gauges): ``,`` between fields, ``YYYY-MM-DD HH:MM`` local time,
  pressures in psig, temperatures in degF, steam in klb/h, power in kW.

Both are wide files in the format :mod:`api.ingest.shiftlog` reads (a unit in brackets
after each tag), written in the plant's local time from the instants of the simulation:
across the autumn daylight-saving change the repeated hour appears twice, in order, which
the reader resolves by row order; across the spring change the missing hour simply has
no row. Operators read their gauges during a historian outage too, so the logs have no
gaps (``lostwork upload`` of the field round fills the outage of the chip line's
collector).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from api import measure
from api.demo.simulator import Simulator


@dataclass(frozen=True)
class LogSheet:
    """How one operator writes a log: which tags, in which units, in which style."""

    name: str
    tag_patterns: tuple[str, ...]
    units: dict[str, str]
    """Tag-unit (as configured) -> the unit this operator writes it in."""
    separator: str
    decimal_comma: bool
    time_header: str
    time_format: str


CONTROL_ROOM = LogSheet(
    name="control-room",
    tag_patterns=("GB1.", "GB2.", "TG1.", "SITE."),
    units={"barg": "barg", "degC": "°C", "t/h": "t/h", "Nm3/h": "Nm3/h", "MW": "MW", "%": "%"},
    separator=";",
    decimal_comma=True,
    time_header="date/time",
    time_format="%d.%m.%Y %H:%M",
)
FIELD_ROUND = LogSheet(
    name="field-round",
    tag_patterns=("BB3.", "TG2."),
    units={"barg": "psig", "degC": "degF", "t/h": "klb/h", "kW": "kW", "%": "%"},
    separator=",",
    decimal_comma=False,
    time_header="time",
    time_format="%Y-%m-%d %H:%M",
)
SHEETS = (CONTROL_ROOM, FIELD_ROUND)

SIGNIFICANT = 5
"""Significant digits written: more than any gauge shows, fewer than a float's noise."""


def _decimals(values: np.ndarray) -> int:
    finite = np.abs(values[np.isfinite(values)])
    biggest = float(finite.max()) if finite.size else 1.0
    magnitude = math.floor(math.log10(biggest)) if biggest > 0 else 0
    return max(0, SIGNIFICANT - 1 - magnitude)


def sheet_frame(sim: Simulator, sheet: LogSheet, t_ms: np.ndarray) -> pd.DataFrame:
    """The log as a table of texts: the time column, then one column per tag."""
    operator_view = Simulator(
        start_ms=sim.start_ms,
        faults=[f for f in sim.faults if f.kind != "gap"],
        seed=sim.seed,
        noise=sim.noise,
        plant_file=sim.plant_file,
    )
    readings = operator_view.generate(t_ms).readings
    local = pd.DatetimeIndex(pd.to_datetime(t_ms, unit="ms", utc=True)).tz_convert(sim.time_zone)
    columns: dict[str, list[str]] = {sheet.time_header: list(local.strftime(sheet.time_format))}
    for tag, spec in sim.tags.items():
        if not tag.startswith(sheet.tag_patterns):
            continue
        unit = sheet.units.get(spec.unit, spec.unit)
        values = np.asarray(
            measure.convert(readings[tag].to_numpy(), spec.unit, unit, sim.atmosphere_pa),
            dtype=float,
        )
        places = _decimals(values)
        texts = np.char.mod(f"%.{places}f", values)
        texts = np.where(np.isfinite(values), texts, "")
        if sheet.decimal_comma:
            texts = np.char.replace(texts, ".", ",")
        columns[f"{tag} [{unit}]"] = texts.tolist()
    return pd.DataFrame(columns)


def write_shift_logs(
    sim: Simulator, start_ms: int, end_ms: int, out_dir: Path, step_s: float = 3600.0
) -> list[Path]:
    """Write one CSV per sheet of :data:`SHEETS` for [start, end), one row per ``step_s``.

    Returns the paths written (``<sheet>_<first local date>.csv``).
    """
    out_dir.mkdir(parents=True, exist_ok=True)
    t_ms = sim.times(start_ms, end_ms, step_s)
    if t_ms.size == 0:
        return []
    first = pd.Timestamp(int(t_ms[0]), unit="ms", tz="UTC").tz_convert(sim.time_zone)
    paths = []
    for sheet in SHEETS:
        frame = sheet_frame(sim, sheet, t_ms)
        path = out_dir / f"{sheet.name}_{first:%Y-%m-%d}.csv"
        frame.to_csv(path, sep=sheet.separator, index=False, lineterminator="\n")
        paths.append(path)
    return paths
