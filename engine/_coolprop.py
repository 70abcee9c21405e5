"""The one place lostwork calls CoolProp: whole-array property calls and their inputs.

:mod:`engine.steam` (water, IAPWS-IF97 backend) and :mod:`engine.fluids` (refrigerants and
other fluids, HEOS backend) build their states on these helpers, so array handling, NaN
propagation and failure translation are decided once.
"""

from __future__ import annotations

from dataclasses import fields

import numpy as np
import pandas as pd
from CoolProp.CoolProp import PropsSI


def props(
    output: str, name1: str, v1: np.ndarray, name2: str, v2: np.ndarray, fluid: str
) -> np.ndarray:
    """One CoolProp call over whole arrays; failed states come back as NaN.

    CoolProp loops in C++ over arrays and marks a failed state with ``inf``, but it
    raises when every element fails, and an array of one element raises on failure,
    so those cases are caught here.

    Parameters
    ----------
    output, name1, name2 : str
        CoolProp property codes (``"H"``, ``"P"``, ``"T"``, ...).
    v1, v2 : ndarray
        Input values, 1-D and of equal length, SI units. [-]
    fluid : str
        CoolProp fluid string with its backend (``"IF97::Water"``, ``"HEOS::R134a"``).

    Returns
    -------
    ndarray
        The output property in SI units, NaN where CoolProp failed. [-]
    """
    if v1.size == 0:
        return np.empty(0)
    try:
        out = np.array(PropsSI(output, name1, v1, name2, v2, fluid), dtype=float)
    except ValueError:
        return np.full(v1.shape, np.nan)
    out = out.reshape(v1.shape)
    out[~np.isfinite(out)] = np.nan
    return out


def inputs(*values) -> tuple[list[np.ndarray], pd.Index | None]:
    """Flat float arrays broadcast together, and the index of the first Series input."""
    index = next((v.index for v in values if isinstance(v, pd.Series)), None)
    arrays = np.broadcast_arrays(
        *(
            v.to_numpy(dtype=float, na_value=np.nan)
            if isinstance(v, pd.Series)
            else np.asarray(v, dtype=float)
            for v in values
        )
    )
    flat = [np.array(a, dtype=float).reshape(-1) for a in arrays]
    if index is not None and len(index) != flat[0].size:
        index = None
    return flat, index


def scatter(n: int, rows: np.ndarray, values: np.ndarray) -> np.ndarray:
    """An array of ``n`` NaNs with ``values`` placed at ``rows``."""
    out = np.full(n, np.nan)
    out[rows] = values
    return out


class StateFrame:
    """Mixin for state dataclasses with an ``index`` field: ``to_frame()``."""

    def to_frame(self) -> pd.DataFrame:
        """The computed properties as columns of a DataFrame on ``index``."""
        columns = {
            f.name: getattr(self, f.name)
            for f in fields(self)  # type: ignore[arg-type]
            if f.name != "index" and getattr(self, f.name) is not None
        }
        return pd.DataFrame(columns, index=self.index)  # type: ignore[attr-defined]
