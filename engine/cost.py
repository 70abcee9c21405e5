"""Cost and emissions of drift: the fuel a unit burns beyond what its baseline says.

Drift in an efficiency or a heat rate becomes extra fuel energy per unit time (HHV
basis), extra money at the plant's fuel price and extra CO2 at the fuel's emission
factor. Sign convention throughout: positive means the unit is worse than its baseline
and the drift is costing money; negative means it is doing better (a saving).

The per-hour outputs (``..._per_h``) are the one place the engine leaves coherent SI:
"what does it cost per hour" is the question the numbers answer, and the suffix says
the unit. Totals over a range come from :func:`cumulative`, which integrates each
interval's rate over that interval's length.

References
----------
.. [1] ASME PTC 46-2015, "Performance Test Code on Overall Plant Performance", Sec. 5
   (heat rate = fuel heat input per unit of power). Section from memory.
.. [2] ISO 50006:2014, Clause 4.4 and Annex (energy performance improvement expressed
   as energy consumption avoided against the normalised baseline). Clause from memory.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

J_PER_KWH = 3.6e6
"""Joules per kilowatt-hour (exact). [J/kWh]"""

J_PER_GJ = 1.0e9
"""Joules per gigajoule (exact). [J/GJ]"""

S_PER_H = 3600.0
"""Seconds per hour (exact). [s/h]"""


def extra_fuel_from_efficiency(fuel_heat_input_hhv_w, eta_actual, eta_expected):
    """Extra fuel energy rate caused by an efficiency below its expected value.

    Parameters
    ----------
    fuel_heat_input_hhv_w : numeric
        Fuel heat input actually burnt, HHV basis. [W]
    eta_actual : numeric
        Measured efficiency whose denominator is proportional to the fuel input
        (``eta_1`` of a boiler or block, or ``eta_2`` on fuel exergy). [-]
    eta_expected : numeric
        The baseline's expected efficiency at this load and weather; NaN (e.g.
        extrapolated) or not positive gives NaN. [-]

    Returns
    -------
    numeric
        ``Q_fuel (1 - eta_actual / eta_expected)``; positive = extra fuel burnt. [W]

    Notes
    -----
    The product (heat absorbed, net power, product exergy) ``U = eta_actual Q_fuel`` at
    the expected efficiency would have needed ``U / eta_expected``; the difference is::

        extra = Q_fuel - U / eta_expected = Q_fuel (1 - eta_actual / eta_expected)

    For ``eta_2`` the ratio of the two efficiencies equals that of ``eta_1`` (the fuel
    exergy is a fixed multiple of the HHV input), so the same formula holds with the
    HHV input.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = eta_actual / np.where(np.asarray(eta_expected) > 0, eta_expected, np.nan)
        return fuel_heat_input_hhv_w * (1.0 - ratio)


def extra_fuel_from_heat_rate(heat_rate_actual_j_per_kwh, heat_rate_expected_j_per_kwh, power_w):
    """Extra fuel energy rate caused by a heat rate above its expected value.

    Parameters
    ----------
    heat_rate_actual_j_per_kwh : numeric
        Measured heat rate (HHV). [J/kWh]
    heat_rate_expected_j_per_kwh : numeric
        The baseline's expected heat rate. [J/kWh]
    power_w : numeric
        The power the heat rate is per: net power for a net heat rate, gross for a
        gross one. [W]

    Returns
    -------
    numeric
        ``(HR_actual - HR_expected) P / 3.6e6``; positive = extra fuel burnt. [W]

    Notes
    -----
    Heat rate is fuel heat input per kWh ([1]_): ``Q_fuel = HR P / 3.6e6`` with HR in
    J/kWh and P in W. At the same power the expected heat rate would have burnt
    ``HR_expected P / 3.6e6``. Since ``HR = 3.6e6 / eta_1``, this equals
    :func:`extra_fuel_from_efficiency` for the matching efficiency.
    """
    return (heat_rate_actual_j_per_kwh - heat_rate_expected_j_per_kwh) * power_w / J_PER_KWH


def drift_cost(extra_fuel_w, fuel_price_per_gj: float, co2_kg_per_j: float | None = None):
    """Money and CO2 per hour of an extra fuel energy rate.

    Parameters
    ----------
    extra_fuel_w : Series or array_like
        Extra fuel energy rate, HHV basis, from :func:`extra_fuel_from_efficiency` or
        :func:`extra_fuel_from_heat_rate`. [W]
    fuel_price_per_gj : float
        Fuel price per GJ on the HHV basis, in the plant's currency (a price quoted on
        the LHV basis converts as ``price_lhv * LHV / HHV``). [currency/GJ]
    co2_kg_per_j : float, optional
        CO2 emitted per J of fuel (HHV), e.g. ``FuelProperties.co2_kg_per_j``; None
        gives NaN CO2. [kg/J]

    Returns
    -------
    DataFrame
        Same index as ``extra_fuel_w`` (a RangeIndex for arrays), columns
        ``extra_fuel_w`` [W], ``cost_per_h`` [currency/h] and ``co2_kg_per_h`` [kg/h].

    Notes
    -----
    ::

        cost_per_h   = extra_fuel_w * 3600 * price / 1e9
        co2_kg_per_h = extra_fuel_w * 3600 * co2_kg_per_j
    """
    extra = _as_series(extra_fuel_w)
    energy_per_h = extra * S_PER_H
    co2 = energy_per_h * co2_kg_per_j if co2_kg_per_j is not None else energy_per_h * np.nan
    return pd.DataFrame(
        {
            "extra_fuel_w": extra,
            "cost_per_h": energy_per_h * (fuel_price_per_gj / J_PER_GJ),
            "co2_kg_per_h": co2,
        },
        index=extra.index,
    )


def cumulative(cost: pd.DataFrame, interval_s) -> pd.DataFrame:
    """Running totals of a :func:`drift_cost` frame, integrating each interval over its length.

    Parameters
    ----------
    cost : DataFrame
        Output of :func:`drift_cost` (columns ``extra_fuel_w``, ``cost_per_h``,
        ``co2_kg_per_h``), rows in time order.
    interval_s : float or array_like
        Length of each interval: one number for all, or one per row. [s]

    Returns
    -------
    DataFrame
        Same index, columns ``extra_fuel_j`` [J], ``cost`` [currency], ``co2_kg`` [kg]
        (running sums from the first row) and ``counted_s`` [s] (running length of the
        intervals that had a value). The last row is the total over the range.

    Notes
    -----
    ``total = sum_i rate_i * dt_i`` (rectangle rule: each interval's value stands for
    the whole interval, as the interval averages it was computed from do). An interval
    without a value (NaN: unit off, extrapolated, missing data) adds nothing; compare
    ``counted_s`` with the range length to see how much of it the total covers.
    """
    dt = np.broadcast_to(np.asarray(interval_s, dtype=float), (len(cost),))
    if (dt < 0).any() or not np.isfinite(dt).all():
        raise ValueError("interval_s must be finite and >= 0")
    fuel = cost["extra_fuel_w"].to_numpy(dtype=float)
    money = cost["cost_per_h"].to_numpy(dtype=float)
    co2 = cost["co2_kg_per_h"].to_numpy(dtype=float)
    return pd.DataFrame(
        {
            "extra_fuel_j": np.nancumsum(fuel * dt),
            "cost": np.nancumsum(money * dt / S_PER_H),
            "co2_kg": np.nancumsum(co2 * dt / S_PER_H),
            "counted_s": np.cumsum(np.where(np.isfinite(fuel), dt, 0.0)),
        },
        index=cost.index,
    )


def _as_series(values) -> pd.Series:
    if isinstance(values, pd.Series):
        return values.astype(float)
    return pd.Series(np.atleast_1d(np.asarray(values, dtype=float)).reshape(-1))
