"""One unit over one aligned time range: readings -> interval means -> engine -> results.

The steps, all vectorised over the intervals of the range:

1. load the readings of every tag bound to the unit (and of the plant's ambient tag),
   from ``max_hold`` before the range (the value held into the first interval) to
   ``max_hold`` after it (so the last reading inside holds until its real successor);
2. time-weighted interval means and coverage per tag (:mod:`api.pipeline.averaging`);
3. an interval is computed when any bound input covers any of it; an input covering
   less than :data:`~api.pipeline.quality.MIN_COVERAGE` is NaN there (THIN_DATA);
4. the dead state: the plant's (T0, p0), or T0 from the ambient tag per interval where
   it is covered well enough (elsewhere the plant's T0, AMBIENT_DEFAULT);
5. ``kind.model(inputs, parameters, ModelContext(dead, fuel))``, through the first-order
   propagation of the inputs' uncertainty (:mod:`api.uncertainty.bands`): each input's
   stated or default instrument figure (:mod:`api.uncertainty.specs`) plus the scatter
   of its readings within the interval (:func:`~api.pipeline.averaging.interval_scatter`)
   as the random part;
6. one wide frame per range: the kind's results, ``flags`` (engine bits, the consistency
   bits judged against the combined uncertainty, | data bits), ``coverage``, and the
   bands ``u_M``, ``u_random_M``, ``u95_M`` of the efficiencies, specific consumptions and
   entropy generation (:mod:`api.uncertainty.metrics`), indexed by interval start.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
import pandas as pd
from sqlalchemy import select
from sqlalchemy.orm import Session

from api.pipeline.averaging import interval_edges, interval_means, interval_scatter
from api.pipeline.quality import COVERAGE_METRIC, FLAGS_METRIC, MIN_COVERAGE, DataFlag
from api.plants.service import UnitConfig
from api.readings.models import Reading
from api.uncertainty import bands as uncertainty_bands
from api.uncertainty import specs as uncertainty_specs
from engine.catalogue import ModelContext, UnitKind, get_kind
from engine.deadstate import DeadState, dead_state
from engine.uncertainty import random_uncertainty_of_mean


@dataclass(frozen=True)
class Averaging:
    """How readings become interval means."""

    max_hold_intervals: int = 1
    """A reading stands for at most this many interval lengths when no newer one
    follows (one: a tag sampled once per interval fills it exactly)."""
    min_coverage: float = MIN_COVERAGE


def hold_ms(config: UnitConfig, averaging: Averaging) -> int:
    return averaging.max_hold_intervals * config.interval_seconds * 1000


def load_readings(
    session: Session, tag_ids: list[int], lo_ms: int, hi_ms: int
) -> dict[int, tuple[np.ndarray, np.ndarray]]:
    """tag_id -> (times, values) of the readings in [lo, hi), each sorted by time."""
    if not tag_ids:
        return {}
    rows = session.execute(
        select(Reading.tag_id, Reading.t_ms, Reading.value)
        .where(Reading.tag_id.in_(tag_ids), Reading.t_ms >= lo_ms, Reading.t_ms < hi_ms)
        .order_by(Reading.tag_id, Reading.t_ms)
    ).all()
    out = {tag: (np.empty(0, np.int64), np.empty(0, float)) for tag in tag_ids}
    if not rows:
        return out
    tags, times, values = (np.asarray(col) for col in zip(*rows, strict=True))
    tags = tags.astype(np.int64)
    bounds = np.flatnonzero(np.diff(tags)) + 1
    for chunk in np.split(np.arange(len(tags)), bounds):
        out[int(tags[chunk[0]])] = (times[chunk].astype(np.int64), values[chunk].astype(float))
    return out


@functools.lru_cache(maxsize=64)
def _constant_dead_state(t0_k: float, p0_pa: float) -> DeadState:
    return dead_state(t0_k, p0_pa)


def compute_range(
    session: Session,
    config: UnitConfig,
    start_ms: int,
    end_ms: int,
    averaging: Averaging = Averaging(),
    kind: UnitKind | None = None,
    *,
    uncertainty: bool = True,
) -> pd.DataFrame:
    """Results of ``config``'s unit for the intervals of [start, end) that have inputs.

    Parameters
    ----------
    session : Session
        Open session; only reads.
    config : UnitConfig
        The unit, from :func:`api.plants.service.load_unit_config`.
    start_ms, end_ms : int
        Range aligned to the plant interval. [ms]
    averaging : Averaging
        Hold time and minimum coverage.
    kind : UnitKind, optional
        The catalogue entry (looked up from ``config.kind`` by default).
    uncertainty : bool, default True
        Propagate the inputs' uncertainty: band columns, and consistency flags judged
        against them. False gives the bare model (the model's own flags; for benches).

    Returns
    -------
    DataFrame
        Index ``t_ms`` (interval start, int64); one float column per result of the kind
        (NaN where the model gave none), ``flags`` (int64), ``coverage`` ([-]), then the
        band columns of the banded results the range produced (in the result's unit).
        Empty (the kind's results, flags and coverage) when no input has a reading in the
        range.

    Raises
    ------
    ValueError
        From the model, for a configuration error concerning every interval.
    """
    kind = kind or get_kind(config.kind)
    columns = [*(c.name for c in kind.results), FLAGS_METRIC, COVERAGE_METRIC]
    prepared = prepare_range(session, config, start_ms, end_ms, averaging, scatter=uncertainty)
    if prepared is None:
        return _empty(columns)
    inputs, t_index = prepared.inputs, prepared.inputs.index
    context = context_of(config, prepared.t0_k)
    bands = None
    if uncertainty:
        figures = uncertainty_specs.input_figures(config, kind, list(inputs.columns))
        given = uncertainty_specs.uncertainties(
            figures, inputs, random=prepared.random, fuel=config.fuel
        )
        evaluated = uncertainty_bands.evaluate(kind, inputs, config.parameters, context, given)
        result, engine_flags, bands = evaluated.results, evaluated.flags, evaluated.bands
    else:
        result = kind.model(inputs, config.parameters, context)
        engine_flags = (
            result[FLAGS_METRIC].to_numpy(dtype=np.int64)
            if FLAGS_METRIC in result
            else np.zeros(len(inputs), dtype=np.int64)
        )
    out = pd.DataFrame(index=t_index)
    for column in kind.results:
        if column.name in result.columns:
            out[column.name] = result[column.name].to_numpy(dtype=float, na_value=np.nan)
        else:
            out[column.name] = np.nan
    out[FLAGS_METRIC] = np.asarray(engine_flags, dtype=np.int64) | prepared.data_flags
    out[COVERAGE_METRIC] = prepared.cover.min(axis=1)
    if bands is not None and len(bands.columns):
        out = pd.concat([out, bands.set_axis(t_index)], axis=1)
    return out


@dataclass
class Prepared:
    """A range's model inputs, for the intervals that have any."""

    inputs: pd.DataFrame
    """Interval means per bound role (SI; NaN where thin), index ``t_ms``."""
    cover: np.ndarray
    """Covered fraction per interval and role, shape (intervals, roles). [-]"""
    data_flags: np.ndarray
    """THIN_DATA and AMBIENT_DEFAULT bits per interval."""
    t0_k: np.ndarray | None
    """Dead-state temperature per interval when the plant has an ambient tag. [K]"""
    random: dict[str, np.ndarray]
    """Per role, the random standard uncertainty of the interval mean from the scatter
    of its readings (0 where not estimated; empty without ``scatter``). [SI]"""


def prepare_range(
    session: Session,
    config: UnitConfig,
    start_ms: int,
    end_ms: int,
    averaging: Averaging = Averaging(),
    *,
    scatter: bool = True,
) -> Prepared | None:
    """Steps 1 to 4 of the module notes for [start, end); None when no interval has inputs."""
    interval_ms = config.interval_seconds * 1000
    hold = hold_ms(config, averaging)
    edges = interval_edges(start_ms, end_ms, interval_ms)
    tag_ids = sorted(set(config.bindings.values()))
    ambient = config.ambient_tag_id
    loaded = load_readings(
        session,
        tag_ids + ([ambient] if ambient and ambient not in tag_ids else []),
        start_ms - hold,
        end_ms + hold,
    )
    per_tag = {tag: interval_means(*loaded[tag], edges, hold) for tag in loaded}

    roles = sorted(config.bindings)
    if not roles:
        return None
    means = np.column_stack([per_tag[config.bindings[r]][0] for r in roles])
    cover = np.column_stack([per_tag[config.bindings[r]][1] for r in roles])
    computed: np.ndarray = np.asarray((cover > 0).any(axis=1))
    if not computed.any():
        return None
    means, cover = means[computed], cover[computed]
    t_index = pd.Index(edges[:-1][computed], name="t_ms")
    thin = cover < averaging.min_coverage
    inputs = pd.DataFrame(np.where(thin, np.nan, means), index=t_index, columns=roles)
    data_flags = np.where(thin.any(axis=1), np.int64(DataFlag.THIN_DATA), np.int64(0))

    t0 = None
    if ambient is not None:
        t0_mean, t0_cover = (a[computed] for a in per_tag[ambient])
        defaulted = ~(t0_cover >= averaging.min_coverage)
        t0 = np.where(defaulted, config.t0_k, t0_mean)
        data_flags |= np.where(defaulted, np.int64(DataFlag.AMBIENT_DEFAULT), np.int64(0))
    random: dict[str, np.ndarray] = {}
    if scatter:
        random = {r: _random_part(loaded[config.bindings[r]], edges, computed) for r in roles}
    return Prepared(inputs, cover, data_flags, t0, random)


def context_of(config: UnitConfig, t0_k: np.ndarray | None) -> ModelContext:
    """The model context: the plant's dead state (T0 per interval when given) and fuel."""
    if t0_k is not None:
        dead = dead_state(t0_k, np.full(len(t0_k), config.p0_pa))
    else:
        dead = _constant_dead_state(config.t0_k, config.p0_pa)
    return ModelContext(dead=dead, fuel=config.fuel, text_parameters=config.text_parameters)


def _random_part(
    readings: tuple[np.ndarray, np.ndarray], edges: np.ndarray, computed: np.ndarray
) -> np.ndarray:
    """Random standard uncertainty of each computed interval's mean from the scatter of
    its readings; 0 where fewer than two readings fall inside (not estimated: the band
    then holds the instrument figures only). [SI]"""
    std, count = interval_scatter(*readings, edges)
    random = random_uncertainty_of_mean(std, count)
    return np.nan_to_num(random[computed], nan=0.0)


def _empty(columns: list[str]) -> pd.DataFrame:
    frame = pd.DataFrame({c: pd.Series(dtype=float) for c in columns})
    frame[FLAGS_METRIC] = frame[FLAGS_METRIC].astype(np.int64)
    frame.index = pd.Index(np.empty(0, np.int64), name="t_ms")
    return frame
