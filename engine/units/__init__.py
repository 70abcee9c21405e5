"""Unit models, one module per kind; ``KINDS`` is the catalogue's list of entries."""

from __future__ import annotations

from engine.catalogue import UnitKind
from engine.units import (
    air_compressor,
    block,
    boiler,
    gas_turbine,
    heat_engine,
    heat_pump,
    hrsg,
    steam_turbine,
)

KINDS: tuple[UnitKind, ...] = (
    boiler.KIND,
    block.KIND,
    steam_turbine.KIND,
    heat_engine.KIND,
    heat_pump.KIND,
    air_compressor.KIND,
    gas_turbine.KIND,
    hrsg.KIND,
)
