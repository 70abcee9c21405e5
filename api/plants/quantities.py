"""Reading quantities written in plant files (``"15 degC"``, ``60``) into SI numbers."""

from __future__ import annotations

import re

from api import measure

_QUANTITY = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


def to_si_number(
    value: float | str, si_unit: str, *, number_unit: str | None = None, atmosphere_pa: float
) -> float:
    """A plant-file quantity in ``si_unit``.

    A bare number is taken in ``number_unit`` (default ``si_unit``); a text is
    ``"<number> <unit>"``. Raises ``ValueError`` (``measure.UnitError`` included) with a
    message fit for a person.
    """
    if isinstance(value, bool):
        raise ValueError(f"{value!r} is not a quantity")
    if isinstance(value, int | float):
        number, unit = float(value), number_unit or si_unit
    else:
        match = _QUANTITY.match(value)
        if not match:
            raise ValueError(f"{value!r} is not '<number> <unit>'")
        number, unit = float(match.group(1)), match.group(2) or number_unit or si_unit
    return float(measure.to_si(number, unit, si_unit, atmosphere_pa))
