"""Builders for test plants and payloads (invented plant; numbers chosen for easy checks)."""

from __future__ import annotations

import copy
from typing import Any

ATMOSPHERE_PA = 100_000.0
"""The test plant's atmosphere: a round number makes gauge conversions easy to check."""

T0 = 1_767_225_600_000
"""2026-01-01T00:00:00Z in epoch milliseconds."""

_PLANT: dict[str, Any] = {
    "format": "lostwork-plant/1",
    "plant": {
        "slug": "test-works",
        "name": "Test Works",
        "time_zone": "Europe/Berlin",
        "interval": "1 min",
        "atmosphere": "100 kPa",
        "dead_state": {"temperature": "25 degC", "pressure": "101.325 kPa"},
        "fuel_price": {"amount": 10.0, "currency": "EUR", "per": "GJ"},
    },
    "fuels": {
        "gas": {
            "heating_value": {
                "hhv": "50 MJ/kg",
                "lhv": "45 MJ/kg",
                "density": "0.8 kg/m3",
            }
        }
    },
    "tags": {
        "GAS": {"unit": "Nm3/h", "low": 0, "high": 5000},
        "FW-FLOW": {"unit": "t/h", "low": 0, "high": 100, "uncertainty": "1% of reading"},
        "FW-P": {"unit": "barg", "low": 0, "high": 100, "uncertainty": 0.1},
        "FW-T": {"unit": "degC", "low": 0, "high": 300, "uncertainty": 0.5},
        "MS-FLOW": {"unit": "klb/h", "low": 0, "high": 200},
        "MS-P": {"unit": "psig", "low": 0, "high": 1500},
        "MS-T": {"unit": "degF", "low": 32, "high": 1000},
        "SPARE": {"unit": "kPa"},
    },
    "units": {
        "boiler-a": {
            "name": "Boiler A",
            "kind": "boiler",
            "fuel": "gas",
            "inputs": {
                "fuel_volume_flow": "GAS",
                "feedwater_flow": "FW-FLOW",
                "feedwater_pressure": "FW-P",
                "feedwater_temperature": "FW-T",
                "steam_flow": "MS-FLOW",
                "steam_pressure": "MS-P",
                "steam_temperature": "MS-T",
            },
            "parameters": {"mass_balance_tolerance": 0.03},
        }
    },
}


def plant_document(**changes: Any) -> dict[str, Any]:
    """A deep copy of the test plant file, with top-level sections replaced."""
    doc = copy.deepcopy(_PLANT)
    doc.update(changes)
    return doc
