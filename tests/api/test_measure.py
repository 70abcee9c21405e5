"""Units of measure, checked against conversion factors worked out by hand.

Exact definitions used (NIST SP 811, 2008 ed., Appendix B.8/B.9, "Guide for the Use of
the International System of Units"):
- pound (avoirdupois) = 0.453 592 37 kg; inch = 0.0254 m; standard gravity 9.806 65 m/s^2,
  so 1 psi = 1 lbf/in^2 = 0.45359237 * 9.80665 / 0.0254**2 Pa;
- International Table calorie = 4.1868 J, and 1 Btu_IT/(lb degF) = 1 cal_IT/(g degC), so
  1 Btu_IT = 4.1868 J/(g K) * 453.59237 g * 5/9 K = 1055.05585262 J;
- degF: T[K] = (T[degF] + 459.67) * 5/9; degC: T[K] = T[degC] + 273.15;
- tonne = 1000 kg; hour = 3600 s; bar = 1e5 Pa; standard atmosphere = 101 325 Pa (ISO 2533).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pint
import pytest

from api import measure
from api.measure import UnitError

PSI_PA = 0.45359237 * 9.80665 / 0.0254**2  # exact by definition (NIST SP 811 App. B)
BTU_IT_J = 4.1868 * 453.59237 * 5 / 9  # IT calorie based (NIST SP 811 App. B.9)
LB_KG = 0.45359237


def test_btu_is_the_international_table_btu():
    assert pytest.approx(1055.05585262, rel=1e-12) == BTU_IT_J
    assert measure.to_si(1.0, "Btu", "J") == pytest.approx(BTU_IT_J, rel=1e-12)
    # 1 Btu_IT/lb = 2.326 kJ/kg exactly (NIST SP 811 App. B.9)
    assert measure.to_si(1.0, "Btu/lb", "J/kg") == pytest.approx(2326.0, rel=1e-12)
    # 1 Btu_IT/(lb degF) = 4.1868 kJ/(kg K) exactly
    assert measure.to_si(1.0, "Btu/(lb degR)", "J/(kg K)") == pytest.approx(4186.8, rel=1e-12)


@pytest.mark.parametrize(
    ("value", "unit", "si", "expected"),
    [
        (10.0, "barg", "Pa", 10 * 1e5 + 101_325.0),  # = 1 101 325 Pa
        (10.0, "bar(g)", "Pa", 1_101_325.0),
        (150.0, "psig", "Pa", 150 * PSI_PA + 101_325.0),
        (150.0, "psi(g)", "Pa", 150 * PSI_PA + 101_325.0),
        (500.0, "kPag", "Pa", 500e3 + 101_325.0),
        (500.0, "kPa(g)", "Pa", 500e3 + 101_325.0),
        (16.5, "MPag", "Pa", 16.5e6 + 101_325.0),
        (10.0, "bara", "Pa", 1e6),
        (150.0, "psia", "Pa", 150 * PSI_PA),
        (540.0, "degC", "K", 813.15),
        (540.0, "°C", "K", 813.15),
        (1000.0, "degF", "K", (1000 + 459.67) * 5 / 9),  # = 810.927 K
        (100.0, "t/h", "kg/s", 100 * 1000 / 3600),  # = 27.777... kg/s
        (1.0, "klb/h", "kg/s", 1000 * LB_KG / 3600),
        (250.0, "lb/h", "kg/s", 250 * LB_KG / 3600),
        (10_000.0, "Btu/kWh", "J/kWh", 10_000 * BTU_IT_J),
        (9_500.0, "kJ/kWh", "J/kWh", 9.5e6),
        (1_200.0, "Btu/lb", "J/kg", 1_200 * BTU_IT_J / LB_KG),
        (45.0, "MJ/kg", "J/kg", 45e6),
        (3.5, "%", "1", 0.035),
        (20.0, "ppm", "1", 20e-6),
        (85.0, "MW", "W", 85e6),
        (750.0, "kW", "W", 750e3),
        (3600.0, "Nm3/h", "m^3/s", 1.0),  # volume at reference conditions, no density
        (3600.0, "m3/h", "m^3/s", 1.0),
    ],
)
def test_to_si_against_hand_values(value, unit, si, expected):
    assert measure.to_si(value, unit, si) == pytest.approx(expected, rel=1e-12)


def test_gauge_pressure_uses_the_stated_atmosphere():
    # a plant at altitude with 95.0 kPa atmosphere: 10 barg = 1e6 + 95 000 Pa
    assert measure.to_si(10.0, "barg", "Pa", atmosphere_pa=95_000.0) == 1_095_000.0
    assert measure.from_si(1_095_000.0, "Pa", "barg", atmosphere_pa=95_000.0) == pytest.approx(10.0)
    # one atmosphere per element (an ambient-pressure tag)
    out = measure.to_si(np.array([1.0, 1.0]), "barg", "Pa", atmosphere_pa=np.array([1e5, 9e4]))
    np.testing.assert_allclose(out, [2e5, 1.9e5])


def test_gauge_to_gauge_and_gauge_to_other_pressure_units():
    assert measure.convert(150.0, "psig", "barg") == pytest.approx(150 * PSI_PA / 1e5, rel=1e-12)
    assert measure.convert(10.0, "barg", "psia") == pytest.approx(1_101_325.0 / PSI_PA, rel=1e-12)


def test_non_positive_atmosphere_is_refused():
    with pytest.raises(ValueError, match=r"atmosphere_pa must be a positive pressure, got 0"):
        measure.to_si(1.0, "barg", "Pa", atmosphere_pa=0)


def test_arrays_are_converted_elementwise_and_nan_passes_through():
    out = measure.to_si(np.array([0.0, np.nan, 100.0]), "degC", "K")
    np.testing.assert_allclose(out, [273.15, np.nan, 373.15])
    out = measure.to_si([np.nan, 1.0], "barg", "Pa")
    assert math.isnan(out[0]) and out[1] == 201_325.0
    assert math.isnan(measure.to_si(float("nan"), "degF", "K"))


def test_series_keeps_its_index_and_scalars_stay_scalars():
    s = pd.Series([32.0, 212.0], index=pd.Index([7, 9]), name="t")
    out = measure.to_si(s, "degF", "K")
    assert isinstance(out, pd.Series)
    assert list(out.index) == [7, 9] and out.name == "t"
    np.testing.assert_allclose(out.to_numpy(), [273.15, 373.15])
    assert isinstance(measure.to_si(1.0, "bar", "Pa"), float)


def test_from_si_inverts_to_si():
    values = np.array([1.0, 10.0, 165.0])
    for unit, si in [("psig", "Pa"), ("degF", "K"), ("t/h", "kg/s"), ("Btu/kWh", "J/kWh")]:
        back = measure.from_si(measure.to_si(values, unit, si), si, unit)
        np.testing.assert_allclose(back, values, rtol=1e-12)
    # 0 degF = 255.372 K (459.67 * 5/9)
    assert measure.from_si(459.67 * 5 / 9, "K", "degF") == pytest.approx(0.0, abs=1e-10)


def test_incompatible_dimensions_name_both_units():
    with pytest.raises(UnitError) as err:
        measure.check_compatible("degC", "Pa")
    assert str(err.value) == (
        "unit 'degC' ([temperature]) cannot be converted to 'Pa' ([mass] / [length] / [time] ** 2)"
    )
    with pytest.raises(UnitError, match=r"^unit 'Nm3/h' \(\[length\] \*\* 3 / \[time\]\) cannot"):
        measure.to_si(1.0, "Nm3/h", "kg/s")  # a normal volume needs the fuel's density
    with pytest.raises(UnitError, match=r"^unit '%' \(dimensionless\) cannot be converted to 'K'"):
        measure.check_compatible("%", "K")


def test_unit_error_is_a_value_error():
    assert issubclass(UnitError, ValueError)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("tph", "unknown unit of measure 'tph' ('tph' is not defined in the unit registry)"),
        ("kg/h/", "unknown unit of measure 'kg/h/' (not a unit expression)"),
        ("", "empty unit of measure ''; write '1' for a plain fraction"),
        ("   ", "empty unit of measure '   '; write '1' for a plain fraction"),
        ("barg/s", "unit 'barg/s': a gauge pressure (barg) must stand alone"),
    ],
)
def test_unparseable_units_name_the_text(text, message):
    with pytest.raises(UnitError) as err:
        measure.parse_unit(text)
    assert str(err.value).startswith(message)


def test_parse_unit_accepts_trade_spellings():
    assert isinstance(measure.parse_unit("t/h"), pint.Unit)
    assert measure.parse_unit("bar(g)") == measure.parse_unit("barg")
    assert measure.parse_unit("kPa(a)") == measure.parse_unit("kPaa")
    assert measure.parse_unit("deg C") == measure.parse_unit("degC")
    assert measure.parse_unit("Nm³/h") == measure.parse_unit("Nm3/h")


def test_display_unit_si_keeps_the_declared_si_unit():
    for si in ["K", "Pa", "kg/s", "J/kg", "J/(kg K)", "W", "1", "J/kWh"]:
        assert measure.display_unit(si, "si") == si


@pytest.mark.parametrize(
    ("si", "us"),
    [
        ("K", "degF"),
        ("Pa", "psia"),
        ("kg/s", "lb/h"),
        ("J/kg", "Btu/lb"),
        ("J/(kg K)", "Btu/(lb degR)"),
        ("J/kg/K", "Btu/(lb degR)"),  # same unit, other spelling
        ("J/kWh", "Btu/kWh"),
        ("W", "W"),
        ("1", "1"),
        ("kg/m^3", "lb/ft^3"),
        ("m^2 s", "m^2 s"),  # not in the table: SI kept
    ],
)
def test_display_unit_us(si, us):
    assert measure.display_unit(si, "us") == us


def test_every_us_display_unit_converts_from_its_si_unit():
    for si, us in measure.US_CUSTOMARY.items():
        measure.check_compatible(us, si)


def test_display_unit_rejects_unknown_system():
    with pytest.raises(ValueError, match=r"^unknown unit system 'imperial'; choose one of si, us$"):
        measure.display_unit("K", "imperial")


def test_convert_series_us_customary_against_hand_values():
    values, unit = measure.convert_series(np.array([813.15, np.nan]), "K", "us")
    assert unit == "degF"
    np.testing.assert_allclose(values, [540 * 9 / 5 + 32, np.nan])  # 1004 degF
    values, unit = measure.convert_series(np.array([10e6]), "Pa", "us")
    assert unit == "psia"
    np.testing.assert_allclose(values, [10e6 / PSI_PA], rtol=1e-12)
    values, unit = measure.convert_series(np.array([3_000e3]), "J/kg", "us")
    assert unit == "Btu/lb"
    np.testing.assert_allclose(values, [3_000e3 / 2326.0], rtol=1e-12)
    values, unit = measure.convert_series(np.array([10e6]), "J/kWh", "us")
    assert unit == "Btu/kWh"
    np.testing.assert_allclose(values, [10e6 / BTU_IT_J], rtol=1e-12)
    values, unit = measure.convert_series(np.array([0.87]), "1", "us")
    assert unit == "1"
    np.testing.assert_allclose(values, [0.87])


def test_convert_series_si_returns_values_unchanged():
    s = pd.Series([1.5, np.nan], index=[3, 4])
    values, unit = measure.convert_series(s, "kg/s", "si")
    assert unit == "kg/s"
    assert list(values.index) == [3, 4]
    np.testing.assert_array_equal(values.to_numpy(), [1.5, np.nan])


@pytest.mark.parametrize(
    ("unit", "si"),
    [
        ("t/h", "kg/s"),
        ("barg", "Pa"),
        ("MW", "W"),
        ("degF", "K"),
        ("Btu/lb", "J/kg"),
        ("%", "1"),
        ("Nm3/h", "m^3/s"),
        ("Btu/(lb degR)", "J/(kg K)"),
        ("A", "ampere"),  # no preferred SI unit: pint's base-unit expression
    ],
)
def test_si_unit_for(unit, si):
    assert measure.si_unit_for(unit) == si
