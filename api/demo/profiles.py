"""Weather and demand of the demo site as functions of time, and reproducible noise.

Everything here is a pure function of the absolute time and a seed: the value at a given
instant does not depend on which batch it is generated in. A backfill and a live run
therefore continue each other seamlessly, and generating the same range twice gives the
same readings (which the ingest API then reports as unchanged).

The shapes are invented for the demo (our choice: a mild coastal climate and a three-shift
production week); nothing here is a published model.

The plant takes T0 from its outdoor-air tag. The engine accepts a dead state down to
-35 degC (supercooled-liquid water reference, :func:`engine.deadstate.dead_state`); the
demo's mild climate keeps the story about the plant, not the weather.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from api.demo.design import T_HOUR

_GOLDEN = np.uint64(0x9E3779B97F4A7C15)
_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)
DAY_S = 86_400.0
YEAR_S = 365.2425 * DAY_S


def _mix(x: np.ndarray) -> np.ndarray:
    """The splitmix64 finaliser (Steele, Lea & Flood 2014): a bijective 64-bit hash."""
    with np.errstate(over="ignore"):
        z = x + _GOLDEN
        z = (z ^ (z >> np.uint64(30))) * _M1
        z = (z ^ (z >> np.uint64(27))) * _M2
    return z ^ (z >> np.uint64(31))


def uniform(seed: int, stream: int, counter) -> np.ndarray:
    """Uniform numbers in (0, 1), one per counter, reproducible from (seed, stream, counter)."""
    c = np.asarray(counter, dtype=np.int64).astype(np.uint64)
    key = _mix(np.asarray([seed & 0xFFFFFFFFFFFFFFFF], dtype=np.uint64))
    with np.errstate(over="ignore"):
        key = _mix(key ^ (np.uint64(stream) * _M2))
    z = _mix(c ^ key)
    return ((z >> np.uint64(11)).astype(np.float64) + 0.5) * 2.0**-53


def normal(seed: int, stream: int, counter) -> np.ndarray:
    """Standard normal numbers, one per counter (Box-Muller on two uniform streams)."""
    c = np.asarray(counter, dtype=np.int64)
    u1 = uniform(seed, 2 * stream, c)
    u2 = uniform(seed, 2 * stream + 1, c)
    return np.sqrt(-2.0 * np.log(u1)) * np.cos(2.0 * np.pi * u2)


def wander(t_s: np.ndarray, seed: int, stream: int, periods_s: tuple[float, ...]) -> np.ndarray:
    """A smooth quasi-random signal of unit standard deviation: sines of the given periods
    with phases drawn from the seed (weather fronts, slow process swings)."""
    phases = 2.0 * np.pi * uniform(seed, stream, np.arange(len(periods_s)))
    total = np.zeros_like(t_s, dtype=float)
    for period, phase in zip(periods_s, phases, strict=True):
        total += np.sin(2.0 * np.pi * t_s / period + phase)
    return total * np.sqrt(2.0 / len(periods_s))


def _smoothstep(x: np.ndarray) -> np.ndarray:
    return 1.0 / (1.0 + np.exp(-x))


@dataclass(frozen=True)
class SiteConditions:
    """Weather and process demand, one value per instant (SI).

    Attributes
    ----------
    ambient_temperature_k : ndarray
        Outdoor air temperature. [K]
    relative_humidity : ndarray
        Outdoor relative humidity. [-]
    lp_demand_kg_per_s : ndarray
        Low-pressure process steam, met by the chip boiler through tg2. [kg/s]
    mp_demand_kg_per_s : ndarray
        Medium-pressure process steam, met by tg1's extraction. [kg/s]
    condensing_flow_kg_per_s : ndarray
        Steam tg1 condenses for power, following the electricity schedule. [kg/s]
    production : ndarray
        Production level of the park, 0 (weekend) to 1 (full three-shift day). [-]
    """

    ambient_temperature_k: np.ndarray
    relative_humidity: np.ndarray
    lp_demand_kg_per_s: np.ndarray
    mp_demand_kg_per_s: np.ndarray
    condensing_flow_kg_per_s: np.ndarray
    production: np.ndarray


def site_conditions(t_ms: np.ndarray, *, seed: int, time_zone: str) -> SiteConditions:
    """Weather and demand at the instants ``t_ms`` (UTC epoch milliseconds).

    Parameters
    ----------
    t_ms : ndarray of int64
        Instants. [ms]
    seed : int
        Selects the weather and the process swings.
    time_zone : str
        The plant's IANA zone: production follows local clock time.

    Returns
    -------
    SiteConditions
    """
    t_ms = np.asarray(t_ms, dtype=np.int64)
    t_s = t_ms / 1000.0
    local = pd.DatetimeIndex(pd.to_datetime(t_ms, unit="ms", utc=True)).tz_convert(time_zone)
    hour = local.hour.to_numpy() + local.minute.to_numpy() / 60.0
    weekday = local.day_of_week.to_numpy()  # Monday 0
    hour_of_week = weekday * 24.0 + hour

    # Weather of a mild coastal site: a seasonal cycle (coldest about 20 January), a
    # daily cycle peaking at 15:00 solar time (about 15:30 UTC this far west), larger in
    # summer, and passing weather systems. The coldest possible hour stays above +3 degC.
    # t_s / YEAR_S counts years since 1970-01-01; the phase puts the minimum on 20 January.
    season = np.cos(2.0 * np.pi * (t_s / YEAR_S - 20.5 / 365.2425))
    summer = -season  # +1 in midsummer
    utc_hour = (t_s % DAY_S) / 3600.0
    daily = np.cos(2.0 * np.pi * (utc_hour - 15.5) / 24.0)
    fronts = wander(t_s, seed, 1, (2.3 * DAY_S, 3.7 * DAY_S, 5.9 * DAY_S, 9.4 * DAY_S))
    t_amb_c = 15.5 + 5.0 * summer + (3.0 + 1.0 * summer) * daily + 1.8 * fronts
    rh = 0.76 - 0.06 * summer - (0.12 + 0.04 * summer) * daily - 0.05 * fronts
    rh = np.clip(rh + 0.04 * wander(t_s, seed, 2, (0.7 * DAY_S, 1.9 * DAY_S)), 0.25, 0.98)

    # Production: three shifts from Monday 06:00 to Saturday 14:00 local time, with the
    # ramps of shift starts and ends; lower at night.
    ramp_h = 0.75
    production = _smoothstep((hour_of_week - 6.0) / ramp_h) - _smoothstep(
        (hour_of_week - (5 * 24 + 14.0)) / ramp_h
    )
    night = np.cos(2.0 * np.pi * (hour - 3.0) / 24.0)  # +1 at 03:00 local
    production = np.clip(production * (1.0 - 0.08 * np.maximum(night, 0.0)), 0.0, 1.0)
    swings = wander(t_s, seed, 3, (0.37 * 3600, 1.1 * 3600, 2.9 * 3600, 7.3 * 3600))
    heating = np.maximum(0.0, 16.0 - t_amb_c)  # space and process heating below 16 degC

    lp = (16.5 + 10.5 * production + 0.35 * heating + 0.9 * swings) * T_HOUR
    mp = (10.0 + 8.5 * production + 0.15 * heating + 0.8 * swings) * T_HOUR
    # Power: tg1 condenses more in the day (07-21 local) and on working days.
    day_power = _smoothstep((hour - 7.0) / 0.8) - _smoothstep((hour - 21.0) / 0.8)
    power_swing = wander(t_s, seed, 4, (0.8 * 3600, 4.1 * 3600))
    cond = (14.0 + 11.0 * day_power * (0.5 + 0.5 * production) + 1.2 * power_swing) * T_HOUR
    return SiteConditions(
        ambient_temperature_k=t_amb_c + 273.15,
        relative_humidity=rh,
        lp_demand_kg_per_s=np.clip(lp, 13.0 * T_HOUR, 34.0 * T_HOUR),
        mp_demand_kg_per_s=np.clip(mp, 6.0 * T_HOUR, 22.0 * T_HOUR),
        condensing_flow_kg_per_s=np.clip(cond, 8.0 * T_HOUR, 28.0 * T_HOUR),
        production=production,
    )
