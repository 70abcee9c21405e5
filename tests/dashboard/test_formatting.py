"""Display conversions and printing, checked against the unit definitions they rest on.

Sources: NIST Special Publication 811 (2008 edition), Appendix B.8/B.9 -- 1 lb =
0.453 592 37 kg exactly; 1 Btu_IT = 1055.055 852 62 J exactly; 1 psi = 6894.757 Pa
(to 7 figures); the degree Fahrenheit t/°F = 1.8 t/°C + 32 and a temperature difference
of 1 K = 1.8 °F. The IANA time zone database (Europe/Vienna: CET = UTC+1 in winter,
CEST = UTC+2 in summer, per EU Directive 2000/84/EC).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from dashboard import formatting as fmt

LB_KG = 0.45359237
BTU_J = 1055.05585262
PSI_PA = 6894.757


def test_fraction_is_shown_as_percent_in_both_systems():
    for system in ("si", "us"):
        value, label = fmt.to_display(0.873, "eta_1", "1", system)
        assert value == pytest.approx(87.3, rel=1e-12)
        assert label == "%"
    assert fmt.format_quantity(0.873, "eta_1", "1", "si") == "87.3 %"


def test_temperature_on_the_celsius_and_fahrenheit_scales():
    # 373.15 K is 100 degC and 212 degF by the definitions of the scales.
    assert fmt.to_display(373.15, "steam_temperature", "K", "si") == (pytest.approx(100.0), "°C")
    assert fmt.to_display(373.15, "steam_temperature", "K", "us") == (pytest.approx(212.0), "°F")


def test_drift_of_a_temperature_is_a_difference_without_offset():
    # A drift of +1 K is +1.8 degF, not 1 K read as -457.87 degF.
    value, label = fmt.to_display(1.0, "drift_steam_temperature", "K", "us")
    assert value == pytest.approx(1.8, rel=1e-12)
    assert label == "°F"


def test_drift_of_a_fraction_is_in_percentage_points():
    value, label = fmt.to_display(-0.012, "drift_eta_1", "1", "si")
    assert value == pytest.approx(-1.2)
    assert label == "% points"


def test_heat_flow_in_megawatt_and_million_btu_per_hour():
    # 1 MMBtu/h = 1e6 * 1055.05585262 J / 3600 s = 293 071.07 W (NIST SP 811, B.9).
    assert fmt.to_display(2.5e6, "heat_absorbed_w", "W", "si") == (pytest.approx(2.5), "MW")
    value, label = fmt.to_display(1e6 * BTU_J / 3600.0, "heat_absorbed_w", "W", "us")
    assert value == pytest.approx(1.0, rel=1e-12)
    assert label == "MMBtu/h"


def test_electrical_power_stays_in_megawatt_in_us_units():
    assert fmt.to_display(4.2e6, "net_power_w", "W", "us") == (pytest.approx(4.2), "MW")


def test_mass_flow_pressure_and_heat_rate():
    assert fmt.to_display(1.0, "steam_flow", "kg/s", "si") == (pytest.approx(3.6), "t/h")
    value, label = fmt.to_display(1.0, "steam_flow", "kg/s", "us")
    assert value == pytest.approx(3600.0 / LB_KG / 1000.0, rel=1e-12)
    assert label == "klb/h"
    assert fmt.to_display(4.0e6, "steam_pressure", "Pa", "si") == (pytest.approx(40.0), "bar")
    value, label = fmt.to_display(PSI_PA, "steam_pressure", "Pa", "us")
    assert value == pytest.approx(1.0, rel=1e-6)
    assert label == "psia"
    value, label = fmt.to_display(1e7, "net_heat_rate_j_per_kwh", "J/kWh", "us")
    assert value == pytest.approx(1e7 / BTU_J, rel=1e-12)
    assert label == "Btu/kWh"
    assert fmt.to_display(1e7, "net_heat_rate_j_per_kwh", "J/kWh", "si") == (
        pytest.approx(1e4),
        "kJ/kWh",
    )


def test_entropy_generation_units():
    assert fmt.to_display(1500.0, "sgen_w_per_k", "W/K", "si") == (pytest.approx(1.5), "kW/K")
    # 1 W/K = 3600 J/h / (Btu_IT * 1.8 degR per K) in Btu/(h degR).
    value, label = fmt.to_display(1.0, "sgen_w_per_k", "W/K", "us")
    assert value == pytest.approx(3600.0 / BTU_J / 1.8, rel=1e-12)
    assert label == "Btu/(h·°R)"


def test_series_keep_their_index_and_nan():
    index = pd.date_range("2026-01-01", periods=3, freq="min", tz="UTC")
    values, _ = fmt.to_display(pd.Series([0.5, np.nan, 0.25], index=index), "eta_2", "1", "us")
    assert isinstance(values, pd.Series)
    assert values.index.equals(index)
    assert values.iloc[0] == pytest.approx(50.0)
    assert math.isnan(values.iloc[1])


def test_unknown_unit_text_is_shown_as_it_is():
    assert fmt.to_display(12.0, "drift_cost_per_h", "EUR/h", "us") == (12.0, "EUR/h")


def test_unknown_system_is_refused_by_name():
    with pytest.raises(ValueError, match="unknown unit system 'metric'"):
        fmt.display_unit("eta_1", "1", "metric")


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (12345.6, "12,346"),
        (0.012345, "0.0123"),
        (87.345, "87.3"),
        (-1.25, "-1.25"),
        (0.0, "0"),
        (5.1e-15, "0"),
        (-8e-14, "0"),
        (2.5e-6, "0.000003"),
        (float("nan"), "—"),
        (None, "—"),
    ],
)
def test_numbers_printed_to_three_significant_figures(value, text):
    assert fmt.format_number(value) == text


def test_times_in_the_plant_clock_follow_summer_time():
    # Vienna: UTC+1 in winter (CET), UTC+2 in summer (CEST).
    assert fmt.format_timestamp("2026-01-15T12:00:00Z", "Europe/Vienna") == "2026-01-15 13:00 CET"
    assert fmt.format_timestamp("2026-07-15T12:00:00Z", "Europe/Vienna") == "2026-07-15 14:00 CEST"
    assert fmt.format_timestamp("2026-07-15T12:00:00Z", "UTC") == "2026-07-15 12:00 UTC"


def test_clock_choice_and_axis_title():
    assert fmt.zone_name("plant", "Europe/Vienna") == "Europe/Vienna"
    assert fmt.zone_name("utc", "Europe/Vienna") == "UTC"
    assert fmt.zone_name("plant", None) == "UTC"
    assert fmt.time_axis_title("UTC") == "Time (UTC)"
    assert fmt.time_axis_title("Europe/Vienna") == "Time (Europe/Vienna, local)"


def test_age_is_coarse_and_never_negative():
    now = pd.Timestamp("2026-11-30T12:00:00Z")
    assert fmt.format_age(pd.Timestamp("2026-11-30T11:47:30Z"), now) == "12 min"
    assert fmt.format_age(pd.Timestamp("2026-11-27T11:00:00Z"), now) == "3 d"
    assert fmt.format_age(pd.Timestamp("2026-11-30T12:00:05Z"), now) == "0 s"
    assert fmt.format_age(None, now) == "no data"
    assert fmt.age_seconds(None, now) == math.inf


def test_metric_labels():
    assert fmt.metric_label("eta_2") == "Second-law efficiency"
    assert fmt.metric_label("expected_eta_1") == "Expected first-law efficiency (HHV)"
    assert fmt.metric_label("drift_eta_2") == "Drift of second-law efficiency"
    assert fmt.metric_label("some_new_column", "From the API") == "From the API"
    assert fmt.metric_label("some_new_column") == "Some new column"


def test_money_per_hour():
    assert fmt.format_money_per_hour(412.4, "EUR") == "412 EUR/h"
    assert fmt.format_money_per_hour(None, "EUR") == "—"
