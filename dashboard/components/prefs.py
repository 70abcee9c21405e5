"""The viewer's display choices -- unit system and clock -- kept in the browser."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from dash import dcc, html

from dashboard.formatting import SYSTEMS, TIME_MODES

STORE = "shell-prefs"
"""Id of the shared ``dcc.Store`` every page reads its display choices from."""
UNITS = "shell-units"
"""Id of the unit-system switch."""
CLOCK = "shell-clock"
"""Id of the clock switch."""

DEFAULT: dict[str, str] = {"system": "si", "clock": "plant"}


@dataclass(frozen=True)
class Prefs:
    system: str = "si"
    """``"si"`` or ``"us"`` (US customary)."""
    clock: str = "plant"
    """``"plant"`` (the plant's local time) or ``"utc"``."""


def read(data: Any) -> Prefs:
    """The choices held in the store; anything unknown falls back to the default."""
    data = data if isinstance(data, dict) else {}
    system = data.get("system") if data.get("system") in SYSTEMS else DEFAULT["system"]
    clock = data.get("clock") if data.get("clock") in TIME_MODES else DEFAULT["clock"]
    return Prefs(system=system, clock=clock)


def store() -> dcc.Store:
    return dcc.Store(id=STORE, storage_type="local", data=dict(DEFAULT))


def switches() -> list[Any]:
    """The two switches; Dash persistence remembers them in the browser's local storage."""
    common = {"persistence": True, "persistence_type": "local", "className": "lw-switch"}
    return [
        html.Div("Show values in", className="lw-switch-label"),
        dcc.RadioItems(
            id=UNITS,
            options=[{"label": "SI", "value": "si"}, {"label": "US customary", "value": "us"}],
            value=DEFAULT["system"],
            **common,
        ),
        html.Div("Show times in", className="lw-switch-label"),
        dcc.RadioItems(
            id=CLOCK,
            options=[{"label": "Plant time", "value": "plant"}, {"label": "UTC", "value": "utc"}],
            value=DEFAULT["clock"],
            **common,
        ),
    ]


def choose(system: str | None, clock: str | None) -> dict[str, str]:
    """The store's content for the switches' values."""
    return {"system": read({"system": system}).system, "clock": read({"clock": clock}).clock}
