"""Second-law headroom: how much exergy the unit destroys and loses, and how much of it
the unit itself has shown it can do without.

Per interval, the exergy destroyed plus lost (from the unit model's exergy balance) in W
and as a fraction of the exergy input. The *recoverable* part is measured against the
best this unit has demonstrated: a stated percentile of its own ``eta_2`` within the
same load band over the baseline period. That is a practical target, not the
thermodynamic limit (``eta_2 = 1``), which no real unit approaches.

References
----------
.. [1] T. J. Kotas, "The Exergy Method of Thermal Plant Analysis", Krieger, 1995, Ch. 2
   (rational efficiency; exergy destruction and loss). Chapter from memory.
.. [2] A. Bejan, G. Tsatsaronis, M. Moran, "Thermal Design and Optimization", Wiley,
   1996, Ch. 3 (exergy balance: fuel exergy = product + destruction + loss).
   Chapter-level citation.
.. [3] R. J. Hyndman, Y. Fan, "Sample quantiles in statistical packages", The American
   Statistician 50(4), 1996, pp. 361-365 (definition 7, numpy's default "linear"
   percentile, used for the demonstrated best).

Notes
-----
Load bands: equal-width bands over the load range of the baseline period, 10 by
default, and a band needs at least 30 intervals before its percentile counts as
demonstrated. Both are our choice (no standard prescribes them), configurable.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from engine.cost import J_PER_GJ, S_PER_H

BEST_PERCENTILE = 95.0
"""Default percentile of eta_2 taken as the demonstrated best in a load band (our choice:
high enough to be the unit at its best, low enough not to be one lucky interval). [%]"""

LOAD_BANDS = 10
"""Default number of equal-width load bands (our choice). [-]"""

MIN_BAND_COUNT = 30
"""Default least number of intervals for a band's best to count (our choice). [-]"""


@dataclass(frozen=True)
class DemonstratedBest:
    """Best ``eta_2`` the unit has demonstrated, per load band (stored with a baseline).

    Attributes
    ----------
    load : str
        Name of the load column the bands are in.
    edges : tuple of float
        Band edges, ascending, ``len(best) + 1`` of them; a band is
        ``[edges[i], edges[i+1])``, the last one closed. [W]
    best : tuple of float
        The percentile of eta_2 per band; NaN where the band had too few intervals. [-]
    counts : tuple of int
        Intervals per band in the data it was computed from. [-]
    percentile : float
        The percentile used. [%]
    min_count : int
        Least count for a band's best to count. [-]
    """

    load: str
    edges: tuple[float, ...]
    best: tuple[float, ...]
    counts: tuple[int, ...]
    percentile: float
    min_count: int

    def to_dict(self) -> dict[str, Any]:
        """A JSON-serialisable dict (None for NaN)."""
        return {
            "load": self.load,
            "edges": list(self.edges),
            "best": [v if math.isfinite(v) else None for v in self.best],
            "counts": list(self.counts),
            "percentile": self.percentile,
            "min_count": self.min_count,
        }

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> DemonstratedBest:
        """Rebuild from :meth:`to_dict` output."""
        return cls(
            load=str(data["load"]),
            edges=tuple(float(v) for v in data["edges"]),
            best=tuple(math.nan if v is None else float(v) for v in data["best"]),
            counts=tuple(int(v) for v in data["counts"]),
            percentile=float(data["percentile"]),
            min_count=int(data["min_count"]),
        )


def demonstrated_best(
    eta_2: pd.Series,
    load: pd.Series,
    *,
    mask=None,
    bands: int = LOAD_BANDS,
    percentile: float = BEST_PERCENTILE,
    min_count: int = MIN_BAND_COUNT,
    load_range: tuple[float, float] | None = None,
) -> DemonstratedBest:
    """Percentile of ``eta_2`` per load band over a reference (baseline) period.

    Parameters
    ----------
    eta_2 : Series
        Second-law efficiency per interval over the period. [-]
    load : Series
        Load per interval, same index; its name is recorded. [W]
    mask : array_like of bool, optional
        Intervals to use, e.g. ``steady & (flags == 0)``; default all. Non-finite
        values are always left out. [-]
    bands : int
        Number of equal-width load bands; default :data:`LOAD_BANDS`. [-]
    percentile : float
        Percentile taken as the best, 0-100; default :data:`BEST_PERCENTILE`. [%]
    min_count : int
        Least intervals in a band for its best to count; default
        :data:`MIN_BAND_COUNT`. [-]
    load_range : (float, float), optional
        Range the bands span, e.g. the baseline's load range; default the range of
        the used intervals. [W]

    Returns
    -------
    DemonstratedBest

    Notes
    -----
    The percentile is Hyndman and Fan's definition 7 ([3]_): for sorted values
    ``x_0..x_{n-1}`` and ``q = percentile / 100``, ``h = (n - 1) q`` and the result is
    ``x_floor(h) + (h - floor(h)) (x_floor(h)+1 - x_floor(h))``.
    """
    if int(bands) != bands or bands < 1:
        raise ValueError(f"bands must be a whole number >= 1, got {bands!r}")
    if not 0.0 <= percentile <= 100.0:
        raise ValueError(f"percentile must be within 0..100, got {percentile!r}")
    if not eta_2.index.equals(load.index):
        raise ValueError("eta_2 and load must share the same index")
    eta = eta_2.to_numpy(dtype=float)
    x = load.to_numpy(dtype=float)
    keep = np.isfinite(eta) & np.isfinite(x)
    if mask is not None:
        keep &= np.asarray(mask, dtype=bool).reshape(-1)
    eta, x = eta[keep], x[keep]
    if load_range is None:
        if x.size == 0:
            raise ValueError("no usable intervals to take the demonstrated best from")
        load_range = (float(x.min()), float(x.max()))
    lo, hi = (float(v) for v in load_range)
    if not hi > lo:
        raise ValueError(f"load range must have max > min, got ({lo!r}, {hi!r})")
    edges = np.linspace(lo, hi, int(bands) + 1)
    band = _band_of(x, edges)
    best, counts = [], []
    for i in range(int(bands)):
        values = eta[band == i]
        counts.append(int(values.size))
        enough = values.size >= max(int(min_count), 1)
        best.append(float(np.percentile(values, percentile)) if enough else math.nan)
    return DemonstratedBest(
        load=str(load.name) if load.name is not None else "",
        edges=tuple(float(e) for e in edges),
        best=tuple(best),
        counts=tuple(counts),
        percentile=float(percentile),
        min_count=int(min_count),
    )


def _band_of(load: np.ndarray, edges: np.ndarray) -> np.ndarray:
    """Band number per value; -1 outside ``[edges[0], edges[-1]]`` or NaN."""
    band = np.searchsorted(edges, load, side="right") - 1
    # The top edge belongs to the last band (searchsorted would put it beyond).
    band = np.where(load == edges[-1], len(edges) - 2, band)
    inside = (load >= edges[0]) & (load <= edges[-1])
    return np.where(inside, band, -1)


def headroom(
    exergy_in_w,
    exergy_destroyed_and_lost_w,
    eta_2,
    load,
    best: DemonstratedBest,
    *,
    fuel_price_per_gj: float | None = None,
    fuel_exergy_per_hhv: float | None = None,
) -> pd.DataFrame:
    """Exergy destroyed and lost, and the part of it this unit has shown it can avoid.

    Parameters
    ----------
    exergy_in_w : Series or array_like
        Exergy input: the fuel exergy of a boiler or block, the steam exergy drop
        of a turbine (``exergy_in_w`` column). [W]
    exergy_destroyed_and_lost_w : Series or array_like
        Exergy destroyed plus lost, from the unit's exergy balance. [W]
    eta_2 : Series or array_like
        Second-law efficiency. [-]
    load : Series or array_like
        Load, in the column ``best`` was banded on. [W]
    best : DemonstratedBest
        From :func:`demonstrated_best` over the baseline period.
    fuel_price_per_gj : float, optional
        Fuel price on the HHV basis; with ``fuel_exergy_per_hhv`` gives the money
        column, else it is NaN. Only meaningful when the exergy input is the fuel's.
        [currency/GJ]
    fuel_exergy_per_hhv : float, optional
        Fuel chemical exergy over its HHV, e.g.
        ``fuel.chemical_exergy_j_per_kg / fuel.hhv_j_per_kg``. [-]

    Returns
    -------
    DataFrame
        Index of the first Series input (else a RangeIndex), columns
        ``exergy_destroyed_and_lost_w`` [W], ``destroyed_fraction`` [-],
        ``eta_2_best`` [-] (NaN outside the bands or in a band without enough data),
        ``outside_bands`` [bool], ``recoverable_w`` [W], ``recoverable_fuel_hhv_w``
        [W] and ``recoverable_cost_per_h`` [currency/h].

    Notes
    -----
    With ``E_in`` the exergy input and ``eta_2 = E_product / E_in`` ([1]_, [2]_)::

        destroyed_fraction = (E_destroyed + E_lost) / E_in
        recoverable_w      = max(0, E_in (eta_2_best - eta_2))

    i.e. the cut in destruction and loss had the same input been converted at the
    demonstrated best. Valued in money at the same *product* output: the fuel exergy
    saved is ``E_in (1 - eta_2 / eta_2_best) = recoverable_w / eta_2_best``, and the
    fuel energy (HHV) saved is that over ``fuel_exergy_per_hhv``::

        recoverable_fuel_hhv_w = recoverable_w / (eta_2_best * fuel_exergy_per_hhv)
        recoverable_cost_per_h = recoverable_fuel_hhv_w * 3600 * price / 1e9

    Assumption: a W of exergy not destroyed saves a W of fuel exergy *per unit of
    product at eta_2_best* - product demand is held fixed and the fuel's exergy/HHV
    ratio is a constant. Equating the recovered exergy directly with fuel exergy
    saved would understate the saving by the factor ``eta_2_best`` (0.3-0.5 for a
    steam plant). This matches :func:`engine.cost.extra_fuel_from_efficiency` with
    ``eta_expected = eta_2_best``.
    """
    index = next(
        (v.index for v in (exergy_in_w, exergy_destroyed_and_lost_w, eta_2, load)
         if isinstance(v, pd.Series)),
        None,
    )  # fmt: skip
    e_in = _values(exergy_in_w)
    destroyed = _values(exergy_destroyed_and_lost_w)
    eta = _values(eta_2)
    x = _values(load)
    n = max(e_in.size, destroyed.size, eta.size, x.size)
    e_in, destroyed, eta, x = (np.broadcast_to(v, (n,)) for v in (e_in, destroyed, eta, x))

    edges = np.asarray(best.edges, dtype=float)
    band = _band_of(x, edges)
    table = np.append(np.asarray(best.best, dtype=float), np.nan)  # index -1 -> NaN
    eta_best = table[band]
    outside = (band < 0) & np.isfinite(x)
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction = destroyed / np.where(e_in > 0, e_in, np.nan)
        recoverable = np.maximum(e_in * (eta_best - eta), 0.0)
        if fuel_exergy_per_hhv is not None and fuel_exergy_per_hhv > 0:
            fuel_hhv = recoverable / (eta_best * fuel_exergy_per_hhv)
        else:
            fuel_hhv = np.full(n, np.nan)
    price = math.nan if fuel_price_per_gj is None else float(fuel_price_per_gj)
    frame = pd.DataFrame(
        {
            "exergy_destroyed_and_lost_w": destroyed,
            "destroyed_fraction": fraction,
            "eta_2_best": eta_best,
            "outside_bands": outside,
            "recoverable_w": recoverable,
            "recoverable_fuel_hhv_w": fuel_hhv,
            "recoverable_cost_per_h": fuel_hhv * S_PER_H * price / J_PER_GJ,
        },
        index=index if index is not None and len(index) == n else None,
    )
    return frame


def _values(values) -> np.ndarray:
    if isinstance(values, pd.Series):
        return pd.to_numeric(values, errors="coerce").to_numpy(dtype=float)
    return np.atleast_1d(np.asarray(values, dtype=float)).reshape(-1)
