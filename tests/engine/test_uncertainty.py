"""Measurement uncertainty (engine/uncertainty.py).

Outside references:
- JCGM 100:2008 (GUM), 5.1.6 and Eq. (12): for a product or quotient of powers of the
  inputs, relative standard uncertainties add in quadrature (closed form, written out in
  the tests below); Eq. (10) for sums; Eq. (16) with r = 1 for fully correlated terms.
- JCGM 101:2008 (GUM Supplement 1), the Monte Carlo method: 20,000 draws of the inputs,
  passed through the real boiler and steam-turbine models as 20,000 rows of one call;
  the standard deviation of the outputs is the reference for the first-order result.
- The `iapws` package (IAPWS97: h, cp, v, alfav), independent of CoolProp, for the hand
  calculation of the boiler's sensitivities.
- ASME PTC 19.1-2018 (from memory): averaging n intervals divides the random standard
  uncertainty by sqrt(n) and leaves the systematic one unchanged.

Tolerances are derived beside each check (truncation error of the forward difference,
Monte Carlo sampling error).
"""

from __future__ import annotations

import doctest

import numpy as np
import pandas as pd
import pytest
from iapws import IAPWS97

import engine.uncertainty as uncertainty_module
from engine.catalogue import ModelContext, ResultColumn, Role, UnitKind
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.fuels import FuelProperties
from engine.uncertainty import (
    FUEL_DENSITY,
    FUEL_HEATING_VALUE,
    INSTRUMENT_DEFAULTS,
    InputUncertainty,
    InstrumentSpec,
    consistency_flags,
    drift_significant,
    expanded,
    input_uncertainties,
    mean_over_intervals,
    propagate,
    random_uncertainty_of_mean,
    standard_uncertainty,
    top_contributors,
)
from engine.units import boiler, steam_turbine

CONTEXT = ModelContext(dead_state())

# A fictional pipeline gas of our own; exergy/LHV ratio 1.04 for natural gas (Szargut,
# Morris & Steward 1988, Table 2.4, as engine/fuels.py states).
GAS = FuelProperties(
    "fictional pipeline gas",
    hhv_j_per_kg=52.5e6,
    lhv_j_per_kg=47.4e6,
    exergy_to_lhv_ratio=1.04,
    density_kg_per_m3=0.78,
)
GAS_CONTEXT = ModelContext(dead_state(), GAS)

# A fictional drum boiler of our own: gas 2.3 kg/s, feedwater and steam 40 kg/s,
# feedwater 12 MPa / 220 degC, main steam 10 MPa / 510 degC.
BOILER_ROW = {
    "fuel_mass_flow": 2.3,
    "feedwater_flow": 40.0,
    "feedwater_pressure": 12e6,
    "feedwater_temperature": 493.15,
    "steam_flow": 40.0,
    "steam_pressure": 10e6,
    "steam_temperature": 783.15,
}

# A fictional condensing turbine of our own (the one of tests/engine/test_steam_turbine.py):
# 100 kg/s at 10 MPa / 500 degC, extraction 12 kg/s at 1 MPa / 220 degC, wet exhaust at
# 10 kPa closed on 100 MW output.
TURBINE_ROW = {
    "inlet_flow": 100.0,
    "inlet_pressure": 10e6,
    "inlet_temperature": 773.15,
    "extraction1_flow": 12.0,
    "extraction1_pressure": 1e6,
    "extraction1_temperature": 493.15,
    "exhaust_pressure": 10e3,
    "generator_power": 100e6,
}


def _frame(row: dict[str, float], n: int = 1) -> pd.DataFrame:
    return pd.DataFrame({name: np.full(n, value) for name, value in row.items()})


# --- closed form: products and quotients (GUM 5.1.6) --------------------------------


def _products_model(inputs, params, context):
    a, b, c = inputs["a"], inputs["b"], inputs["c"]
    return pd.DataFrame(
        {"product": a * b, "quotient": a / c, "mixed": a * b**2 / c, "flags": 0},
        index=inputs.index,
    )


PRODUCTS = UnitKind(
    name="products",
    title="test: products and quotients",
    roles=(Role("a", "1"), Role("b", "1"), Role("c", "1")),
    parameters=(),
    results=(
        ResultColumn("product", "1"),
        ResultColumn("quotient", "1"),
        ResultColumn("mixed", "1"),
    ),
    model=_products_model,
)

# Truncation: each result is linear in a, so only the powers of b and c are curved. For
# x^p the forward difference with step h = f u (f = step_fraction) has relative error
# (p - 1) f (u/x) / 2 to first order: with f = 1e-5 and u/x <= 2e-2 that is at most 2e-7
# (|p - 1| <= 2). Round-off: eps / (f u/x) = 2.2e-16 / (1e-5 * 5e-3) = 4.4e-9. Both are
# below the 1e-6 asserted.
CLOSED_FORM_STEP = 1e-5


def test_products_and_quotients_match_the_gum_closed_form():
    # Three rows with different values and per-row uncertainties (ndarray, Series, scalar).
    inputs = pd.DataFrame(
        {"a": [2.0, 5.0, 0.3], "b": [3.0, 0.7, 11.0], "c": [4.0, 9.0, 1.5]},
        index=pd.Index([10, 20, 30], name="interval"),
    )
    rel = {"a": 0.01, "b": 0.02, "c": 0.005}
    split = {"a": 0.6, "b": 0.0, "c": 1.0}  # systematic share of the variance
    u = {name: rel[name] * inputs[name] for name in rel}
    uncertainties = {
        "a": InputUncertainty(
            systematic=(u["a"] * np.sqrt(split["a"])).to_numpy(),
            random=u["a"] * np.sqrt(1 - split["a"]),
        ),
        "b": InputUncertainty(random=u["b"]),
        "c": InputUncertainty(systematic=u["c"]),
    }
    prop = propagate(PRODUCTS, inputs, {}, CONTEXT, uncertainties, step_fraction=CLOSED_FORM_STEP)
    table = prop.table()
    assert list(table.index) == [10, 20, 30]

    # GUM Eq. (12): (u_y / y)^2 = sum (p_i u_i / x_i)^2, p_i the exponents.
    exponents = {
        "product": {"a": 1, "b": 1},
        "quotient": {"a": 1, "c": -1},
        "mixed": {"a": 1, "b": 2, "c": -1},
    }
    for result, powers in exponents.items():
        y = prop.results[result]
        sys_rel2 = sum((p * rel[x]) ** 2 * split[x] for x, p in powers.items())
        rand_rel2 = sum((p * rel[x]) ** 2 * (1 - split[x]) for x, p in powers.items())
        np.testing.assert_allclose(
            table[f"u_{result}"], y * np.sqrt(sys_rel2 + rand_rel2), rtol=1e-6
        )
        np.testing.assert_allclose(
            table[f"u_systematic_{result}"], y * np.sqrt(sys_rel2), rtol=1e-6
        )
        np.testing.assert_allclose(table[f"u_random_{result}"], y * np.sqrt(rand_rel2), rtol=1e-6)
        np.testing.assert_allclose(table[f"u95_{result}"], 2 * table[f"u_{result}"], rtol=1e-15)


def test_default_step_truncation_error_is_as_documented():
    # engine.uncertainty.STEP_FRACTION = 0.01: for q = a / c with u_c / c = 0.005 the
    # forward difference of 1/c has relative error h / c = 0.01 * 0.005 = 5e-5 exactly
    # (1/(c(c+h)) versus 1/c^2); the contribution of c is all of u_quotient here.
    inputs = pd.DataFrame({"a": [2.0], "b": [1.0], "c": [4.0]})
    prop = propagate(PRODUCTS, inputs, {}, CONTEXT, {"c": InputUncertainty(systematic=0.02)})
    u = prop.table()["u_quotient"].iloc[0]
    assert u == pytest.approx(0.5 * 0.005 / (1 + 5e-5), rel=1e-9)


# --- Monte Carlo (JCGM 101) on the real models ---------------------------------------

MC_DRAWS = 20_000
# Sampling error of a standard deviation from N normal draws: 1/sqrt(2N) = 0.5 % (one
# sigma) for N = 20,000, so the 5 % tolerance of the issue is ten sigma away from the
# sampling noise and leaves room for the (small) nonlinearity of the models.
MC_RTOL = 0.05


def _monte_carlo(model, row, u, context, params, columns, seed):
    rng = np.random.default_rng(seed)
    draws = pd.DataFrame(
        {
            name: value + u.get(name, 0.0) * rng.standard_normal(MC_DRAWS)
            for name, value in row.items()
        }
    )
    out = model(draws, params, context)
    assert int(out[columns[0]].isna().sum()) == 0  # every draw inside the model's range
    return out[columns].std(ddof=1)


def test_boiler_first_order_agrees_with_monte_carlo():
    row = {**BOILER_ROW, "fuel_hhv": GAS.hhv_j_per_kg}
    # Small uncertainties (our choice): flows 0.5 %, temperatures 0.5 K, pressures 0.2 %,
    # heating value 0.5 %.
    u = {
        "fuel_mass_flow": 0.005 * 2.3,
        "fuel_hhv": 0.005 * GAS.hhv_j_per_kg,
        "feedwater_flow": 0.005 * 40.0,
        "steam_flow": 0.005 * 40.0,
        "feedwater_temperature": 0.5,
        "steam_temperature": 0.5,
        "feedwater_pressure": 0.002 * 12e6,
        "steam_pressure": 0.002 * 10e6,
    }
    columns = ["eta_1", "eta_1_lhv", "eta_2", "heat_absorbed_w", "sgen_w_per_k", "lost_work_w"]
    mc = _monte_carlo(boiler.boiler_direct, row, u, GAS_CONTEXT, {}, columns, seed=20080101)
    uncertainties = {name: InputUncertainty(systematic=value) for name, value in u.items()}
    table = propagate(boiler.KIND, _frame(row), {}, GAS_CONTEXT, uncertainties).table()
    for column in columns:
        assert table[f"u_{column}"].iloc[0] == pytest.approx(mc[column], rel=MC_RTOL), column


def test_steam_turbine_first_order_agrees_with_monte_carlo():
    # Small uncertainties (our choice): flows and output 0.5 %, temperatures 0.5 K,
    # pressures 0.2 %.
    u = {
        "inlet_flow": 0.5,
        "inlet_pressure": 0.002 * 10e6,
        "inlet_temperature": 0.5,
        "extraction1_flow": 0.005 * 12.0,
        "extraction1_pressure": 0.002 * 1e6,
        "extraction1_temperature": 0.5,
        "exhaust_pressure": 0.002 * 10e3,
        "generator_power": 0.005 * 100e6,
    }
    columns = [
        "overall_isentropic_efficiency",
        "section1_isentropic_efficiency",
        "section2_isentropic_efficiency",
        "eta_2",
        "exhaust_enthalpy_j_per_kg",
        "sgen_w_per_k",
    ]
    mc = _monte_carlo(
        steam_turbine.steam_turbine, TURBINE_ROW, u, CONTEXT, {}, columns, seed=20080102
    )
    uncertainties = {name: InputUncertainty(random=value) for name, value in u.items()}
    table = propagate(steam_turbine.KIND, _frame(TURBINE_ROW), {}, CONTEXT, uncertainties).table()
    for column in columns:
        assert table[f"u_{column}"].iloc[0] == pytest.approx(mc[column], rel=MC_RTOL), column


# --- contributors: the boiler by hand ------------------------------------------------


def test_boiler_contributors_match_a_hand_calculation():
    # Fuel flow and heating value 1 % each (typical for a fuel meter and a contract HHV),
    # water and steam flows 0.25 %, temperatures 0.5 K, pressures 0.25 % (our choice).
    x = BOILER_ROW
    rel = {"fuel_mass_flow": 0.01, "feedwater_flow": 0.0025, "steam_flow": 0.0025}
    u = {name: r * x[name] for name, r in rel.items()}
    u |= {"feedwater_temperature": 0.5, "steam_temperature": 0.5}
    u |= {"feedwater_pressure": 0.0025 * x["feedwater_pressure"]}
    u |= {"steam_pressure": 0.0025 * x["steam_pressure"]}
    u[FUEL_HEATING_VALUE] = 0.01 * GAS.hhv_j_per_kg
    uncertainties = {name: InputUncertainty(systematic=value) for name, value in u.items()}
    prop = propagate(boiler.KIND, _frame(x), {}, GAS_CONTEXT, uncertainties)

    # Hand calculation with iapws: eta_1 = (m_s (h_s - h0) - m_fw (h_fw - h0)) / (m_f HHV).
    # Relative sensitivities: -1 for m_f and HHV; m_s (h_s - h0) / Q and -m_fw (h_fw - h0)
    # / Q for the water flows; per kelvin m cp / Q; per pascal m v (1 - T alpha_v) / Q,
    # since (dh/dp)_T = v (1 - T alpha_v).
    w0 = IAPWS97(P=0.101325, T=298.15)
    ws = IAPWS97(P=x["steam_pressure"] / 1e6, T=x["steam_temperature"])
    wf = IAPWS97(P=x["feedwater_pressure"] / 1e6, T=x["feedwater_temperature"])
    m_s, m_fw = x["steam_flow"], x["feedwater_flow"]
    q = (m_s * (ws.h - w0.h) - m_fw * (wf.h - w0.h)) * 1e3
    dh_dp = {"s": ws.v * (1 - ws.T * ws.alfav), "f": wf.v * (1 - wf.T * wf.alfav)}
    rel_terms = {  # (relative sensitivity x standard uncertainty)^2, i.e. (u_eta / eta)^2
        "fuel_mass_flow": (-1 * 0.01) ** 2,
        FUEL_HEATING_VALUE: (-1 * 0.01) ** 2,
        "steam_flow": (m_s * (ws.h - w0.h) * 1e3 / q * 0.0025) ** 2,
        "feedwater_flow": (m_fw * (wf.h - w0.h) * 1e3 / q * 0.0025) ** 2,
        "steam_temperature": (m_s * ws.cp * 1e3 / q * 0.5) ** 2,
        "feedwater_temperature": (m_fw * wf.cp * 1e3 / q * 0.5) ** 2,
        "steam_pressure": (m_s * dh_dp["s"] / q * u["steam_pressure"]) ** 2,
        "feedwater_pressure": (m_fw * dh_dp["f"] / q * u["feedwater_pressure"]) ** 2,
    }
    total = sum(rel_terms.values())
    hand = pd.Series({name: term / total for name, term in rel_terms.items()})
    hand = hand.sort_values(ascending=False)

    ranking = top_contributors(prop)["eta_1"]
    assert set(ranking.index[:2]) == {"fuel_mass_flow", FUEL_HEATING_VALUE}
    assert list(ranking.index) == list(hand.index)
    # Forward-difference truncation at step 0.01 u: at most 0.01 * 1 % = 1e-4 relative
    # in a sensitivity (curvature of 1/x), so 1e-3 on a share is safe and sharp.
    np.testing.assert_allclose(ranking[hand.index], hand, rtol=1e-3)
    assert ranking.sum() == pytest.approx(1.0, rel=1e-12)

    # The relative sensitivity of eta_1 to m_f and HHV is -1 (1/x: truncation h/x = 1e-4).
    eta = prop.results["eta_1"].iloc[0]
    for name, value in (
        ("fuel_mass_flow", x["fuel_mass_flow"]),
        (FUEL_HEATING_VALUE, GAS.hhv_j_per_kg),
    ):
        i = prop.input_names.index(name)
        c = prop.sensitivity[i, prop.result_columns.index("eta_1"), 0]
        assert c * value / eta == pytest.approx(-1.0, rel=2e-4)

    # The same ranking for one row by label, cut to the first two.
    top_two = top_contributors(prop, row=0, limit=2)["eta_1"]
    assert list(top_two.index) == list(ranking.index[:2])


def test_heating_value_pseudo_input_equals_a_measured_heating_value_column():
    # Perturbing the fuel specification must act exactly as the models' own rule for a
    # measured fuel_hhv (LHV and chemical exergy scale with it): same uncertainties.
    u_hhv = 0.01 * GAS.hhv_j_per_kg
    spec = propagate(
        boiler.KIND,
        _frame(BOILER_ROW),
        {},
        GAS_CONTEXT,
        {FUEL_HEATING_VALUE: InputUncertainty(systematic=u_hhv)},
    ).table()
    measured = propagate(
        boiler.KIND,
        _frame({**BOILER_ROW, "fuel_hhv": GAS.hhv_j_per_kg}),
        {},
        GAS_CONTEXT,
        {"fuel_hhv": InputUncertainty(systematic=u_hhv)},
    ).table()
    for column in ("u_eta_1", "u_eta_1_lhv", "u_eta_2", "u_sgen_w_per_k", "u_fuel_exergy_w"):
        assert spec[column].iloc[0] == pytest.approx(measured[column].iloc[0], rel=1e-9)
    assert spec["u_eta_1"].iloc[0] > 0


def test_fuel_density_pseudo_input_for_a_volume_metered_fuel():
    # m_f = V rho, eta_1 proportional to 1 / rho: relative uncertainty of eta_1 equals
    # that of the density (GUM 5.1.6), 1 % here; truncation 0.01 * 1 % = 1e-4.
    row = {**BOILER_ROW, "fuel_volume_flow": 2.3 / GAS.density_kg_per_m3}
    del row["fuel_mass_flow"]
    prop = propagate(
        boiler.KIND,
        _frame(row),
        {},
        GAS_CONTEXT,
        {FUEL_DENSITY: InputUncertainty(systematic=0.01 * GAS.density_kg_per_m3)},
    )
    eta = prop.results["eta_1"].iloc[0]
    assert prop.table()["u_eta_1"].iloc[0] == pytest.approx(0.01 * eta, rel=2e-4)


# --- random versus systematic over time ----------------------------------------------


def test_averaging_shrinks_only_the_random_part():
    # Closed form (PTC 19.1; GUM Eq. 10 and Eq. 16 with r = 1): mean of n intervals with
    # random s and systematic b has s / sqrt(n) and b.
    n, s, b = 9, 0.004, 0.003
    mean = mean_over_intervals(np.full(n, s), np.full(n, b))
    assert mean.u_random == pytest.approx(s / 3, rel=1e-15)
    assert mean.u_systematic == pytest.approx(b, rel=1e-15)
    assert mean.u == pytest.approx(np.hypot(s / 3, b), rel=1e-15)
    assert mean.n == n

    # Unequal parts: random adds in quadrature, systematic linearly; a NaN interval is
    # left out (n = 3).
    mean = mean_over_intervals([0.3, 0.4, np.nan, 1.2], [0.1, 0.2, 0.5, 0.6])
    assert mean.n == 3
    assert mean.u_random == pytest.approx(np.sqrt(0.09 + 0.16 + 1.44) / 3, rel=1e-15)
    assert mean.u_systematic == pytest.approx(0.9 / 3, rel=1e-15)


def test_propagated_parts_average_per_column():
    # Product a b over 4 intervals: a has a random part only, b a systematic one only.
    inputs = pd.DataFrame({"a": [2.0, 2.0, 2.0, 2.0], "b": [3.0, 3.0, 3.0, 3.0], "c": 1.0})
    prop = propagate(
        PRODUCTS,
        inputs,
        {},
        CONTEXT,
        {"a": InputUncertainty(random=0.02), "b": InputUncertainty(systematic=0.03)},
        step_fraction=CLOSED_FORM_STEP,
    )
    table = prop.table()
    np.testing.assert_allclose(table["u_random_product"], 3.0 * 0.02, rtol=1e-9)
    np.testing.assert_allclose(table["u_systematic_product"], 2.0 * 0.03, rtol=1e-9)
    mean = mean_over_intervals(
        table[["u_random_product", "u_random_quotient"]].set_axis(["product", "quotient"], axis=1),
        table[["u_systematic_product", "u_systematic_quotient"]].set_axis(
            ["product", "quotient"], axis=1
        ),
    )
    assert mean.u_random["product"] == pytest.approx(3.0 * 0.02 / 2, rel=1e-9)
    assert mean.u_systematic["product"] == pytest.approx(2.0 * 0.03, rel=1e-9)
    assert mean.u_systematic["quotient"] == 0.0
    assert list(mean.n) == [4, 4]


def test_random_uncertainty_of_the_interval_mean():
    # PTC 19.1: s_Xbar = s_X / sqrt(N); one reading gives no scatter estimate.
    s = pd.Series([0.6, 0.6, 0.6], index=["a", "b", "c"])
    out = random_uncertainty_of_mean(s, [36, 9, 1])
    assert list(out.index) == ["a", "b", "c"]
    assert out.iloc[0] == pytest.approx(0.1, rel=1e-15)
    assert out.iloc[1] == pytest.approx(0.2, rel=1e-15)
    assert np.isnan(out.iloc[2])


# --- NaN rows, types and errors ------------------------------------------------------


def test_a_nan_row_gives_nan_uncertainty_for_that_row_only():
    rows = pd.DataFrame([BOILER_ROW, BOILER_ROW, BOILER_ROW], index=["t0", "t1", "t2"])
    rows.loc["t1", "steam_temperature"] = np.nan
    rows.loc["t2", "steam_flow"] = 41.0
    specs = input_uncertainties(rows, {}, kind=boiler.KIND, fuel=GAS)
    table = propagate(boiler.KIND, rows, {}, GAS_CONTEXT, specs).table()
    assert table.loc["t1"].isna().all()
    single = propagate(
        boiler.KIND,
        rows.loc[["t2"]],
        {},
        GAS_CONTEXT,
        input_uncertainties(rows.loc[["t2"]], {}, kind=boiler.KIND, fuel=GAS),
    ).table()
    pd.testing.assert_series_equal(table.loc["t2"], single.loc["t2"], rtol=1e-12)
    assert table.loc["t0", "u_eta_1"] > 0

    # An unknown (NaN) input uncertainty in one row gives NaN there only.
    nan_u = {"steam_flow": InputUncertainty(systematic=np.array([0.4, 0.4, np.nan]))}
    table = propagate(boiler.KIND, rows, {}, GAS_CONTEXT, nan_u).table()
    assert np.isnan(table.loc["t2", "u_eta_1"])
    assert table.loc["t0", "u_eta_1"] > 0


def test_forward_step_out_of_range_falls_back_to_a_backward_step_for_those_rows_only():
    # y = x T0 for x <= 1, NaN above: the row at x = 1 must step backward. T0 per row
    # checks that the dead state is cut to the re-evaluated rows.
    calls: list[int] = []

    def bounded(inputs, params, context):
        calls.append(len(inputs))
        x = inputs["x"].to_numpy()
        y = np.where(x <= 1.0, x * context.dead.t0_k, np.nan)
        return pd.DataFrame({"y": y, "flags": 0}, index=inputs.index)

    context = ModelContext(dead_state(np.array([280.0, 290.0, 300.0])))
    inputs = pd.DataFrame({"x": [0.5, 0.9, 1.0]})
    table = propagate(
        bounded, inputs, {}, context, {"x": InputUncertainty(systematic=0.01)}
    ).table()
    np.testing.assert_allclose(table["u_y"], [2.8, 2.9, 3.0], rtol=1e-12)
    assert calls == [3, 3, 1]  # nominal, forward over all rows, backward over one


def test_a_result_nan_in_every_row_is_not_propagated_but_listed():
    def with_unconfigured(inputs, params, context):
        out = _products_model(inputs, params, context)
        out.insert(1, "unconfigured", np.nan)
        return out

    inputs = pd.DataFrame({"a": [2.0, 1.0], "b": [3.0, 1.0], "c": [4.0, 1.0]})
    prop = propagate(with_unconfigured, inputs, {}, CONTEXT, {"a": InputUncertainty(random=0.1)})
    assert prop.result_columns == ("product", "quotient", "mixed")
    assert prop.nan_columns == ("unconfigured",)
    assert prop.sensitivity.shape == (1, 3, 2)
    table = prop.table()
    assert list(table.columns[:8]) == [
        "u_product",
        "u_random_product",
        "u_systematic_product",
        "u95_product",
        "u_unconfigured",
        "u_random_unconfigured",
        "u_systematic_unconfigured",
        "u95_unconfigured",
    ]
    assert table["u_unconfigured"].isna().all()
    np.testing.assert_allclose(table["u_random_product"], [0.3, 0.1], rtol=1e-9)


def test_exact_inputs_cost_no_evaluation_and_contribute_nothing():
    calls: list[int] = []

    def counted(inputs, params, context):
        calls.append(1)
        return _products_model(inputs, params, context)

    inputs = pd.DataFrame({"a": [2.0], "b": [3.0], "c": [4.0]})
    prop = propagate(
        counted, inputs, {}, CONTEXT, {"a": InputUncertainty(), "b": InputUncertainty(random=0.3)}
    )
    assert len(calls) == 2
    assert prop.table()["u_quotient"].iloc[0] == 0.0
    assert prop.result_columns == ("product", "quotient", "mixed")


def test_errors_name_the_problem():
    inputs = pd.DataFrame({"a": [2.0, 1.0], "b": [3.0, 1.0], "c": [4.0, 1.0]})
    with pytest.raises(
        KeyError, match="uncertainty given for 'd', which is neither an input column"
    ):
        propagate(PRODUCTS, inputs, {}, CONTEXT, {"d": InputUncertainty(systematic=1.0)})
    with pytest.raises(
        ValueError, match=r"uncertainty of 'a' has shape \(3,\); expected a scalar or 2 rows"
    ):
        propagate(
            PRODUCTS, inputs, {}, CONTEXT, {"a": InputUncertainty(systematic=[1.0, 1.0, 1.0])}
        )
    with pytest.raises(ValueError, match="uncertainty of 'b' is negative in some rows"):
        propagate(PRODUCTS, inputs, {}, CONTEXT, {"b": InputUncertainty(random=[0.1, -0.1])})
    with pytest.raises(ValueError, match="'fuel_heating_value' but the model context has no fuel"):
        propagate(
            PRODUCTS, inputs, {}, CONTEXT, {FUEL_HEATING_VALUE: InputUncertainty(systematic=1.0)}
        )
    with pytest.raises(ValueError, match="step_fraction must be positive, got 0"):
        propagate(PRODUCTS, inputs, {}, CONTEXT, {}, step_fraction=0)


# --- instrument figures --------------------------------------------------------------


def test_standard_uncertainty_from_stated_figures_keeps_the_type():
    # An expanded (95 %) figure is halved (k = 2, PTC 19.1 large-sample).
    half_percent = InstrumentSpec(0.005, "reading", "expanded95")
    assert standard_uncertainty(half_percent, 10e6) == pytest.approx(25e3, rel=1e-15)
    assert isinstance(standard_uncertainty(half_percent, 10e6), float)
    out = standard_uncertainty(half_percent, [10e6, np.nan])
    assert isinstance(out, np.ndarray)
    assert out[0] == pytest.approx(25e3, rel=1e-15)
    assert np.isnan(out[1])
    series = pd.Series([1e6, 2e6], index=pd.date_range("2024-01-01", periods=2, freq="min"))
    out = standard_uncertainty(InstrumentSpec(0.001, "span", "standard", span=16e6), series)
    assert out.index.equals(series.index)
    np.testing.assert_allclose(out, [16e3, 16e3], rtol=1e-15)
    out = standard_uncertainty(
        InstrumentSpec(1.0, "absolute", "expanded95"), np.array([500.0, np.nan])
    )
    assert out[0] == 0.5
    assert np.isnan(out[1])


def test_instrument_spec_errors_name_the_problem():
    with pytest.raises(ValueError, match="needs a positive span, got None"):
        InstrumentSpec(0.001, "span")
    with pytest.raises(ValueError, match="must be a finite number >= 0, got -0.1"):
        InstrumentSpec(-0.1)
    with pytest.raises(ValueError, match="coverage must be 'standard' or 'expanded95', got '95%'"):
        InstrumentSpec(0.1, coverage="95%")


def test_defaults_are_documented_as_common_practice():
    assert set(INSTRUMENT_DEFAULTS) == {
        "pressure",
        "temperature",
        "mass_flow",
        "volume_flow",
        "power",
        "heating_value",
        "o2",
    }
    for kind, spec in INSTRUMENT_DEFAULTS.items():
        assert spec.note.startswith("common practice: "), kind
        assert spec.coverage == "expanded95", kind


def test_input_uncertainties_from_tags_defaults_and_scatter():
    rows = _frame(BOILER_ROW, n=2)
    specs = {
        # 0.1 % of reading and 0.05 % of a 16 MPa span, both standard: in quadrature.
        "steam_pressure": [
            InstrumentSpec(0.001, "reading"),
            InstrumentSpec(0.0005, "span", span=16e6),
        ],
    }
    scatter = {"steam_flow": np.array([0.1, 0.2])}
    out = input_uncertainties(rows, specs, kind=boiler.KIND, random=scatter, fuel=GAS)
    np.testing.assert_allclose(out["steam_pressure"].systematic, np.hypot(10e3, 8e3), rtol=1e-15)
    # Defaults: mass flow 2 % (95 %) of reading -> 1 %; temperature 2 K (95 %) -> 1 K;
    # the fuel specification's heating value 1 % (95 %) -> 0.5 %.
    np.testing.assert_allclose(out["steam_flow"].systematic, 0.4, rtol=1e-15)
    np.testing.assert_allclose(out["steam_flow"].random, [0.1, 0.2], rtol=1e-15)
    np.testing.assert_allclose(out["steam_temperature"].systematic, 1.0, rtol=1e-15)
    np.testing.assert_allclose(
        out[FUEL_HEATING_VALUE].systematic, 0.005 * GAS.hhv_j_per_kg, rtol=1e-15
    )
    assert FUEL_DENSITY not in out
    # Without defaults only what is stated is uncertain.
    out = input_uncertainties(rows, specs, kind=boiler.KIND, fuel=GAS, use_defaults=False)
    assert list(out) == ["steam_pressure"]


# --- judgement: flags and drift ------------------------------------------------------


def test_consistency_flags_fire_only_beyond_the_expanded_uncertainty():
    model_bits = int(Flag.NEGATIVE_ENTROPY_GENERATION | Flag.EFFICIENCY_ABOVE_ONE)
    results = pd.DataFrame(
        {
            "sgen_w_per_k": [-10.0, -30.0, -30.0, 5.0],
            "eta_1": [1.01, 1.03, 1.03, 0.9],
            "flags": [model_bits, 0, model_bits | int(Flag.INPUT_OUT_OF_RANGE), 0],
        }
    )
    uncertainty = pd.DataFrame(
        {"u_sgen_w_per_k": [10.0, 10.0, np.nan, 1.0], "u_eta_1": [0.01, 0.01, np.nan, 0.01]}
    )
    flags = consistency_flags(results, uncertainty, k=2.0)
    # Row 0: within 2 u, the model's tolerance bits are cleared. Row 1: beyond, set.
    # Row 2: uncertainty unknown, the model's bits are kept. Row 3: consistent.
    assert list(flags) == [
        0,
        model_bits,
        model_bits | int(Flag.INPUT_OUT_OF_RANGE),
        0,
    ]


def test_isentropic_flag_judged_over_every_section():
    results = pd.DataFrame(
        {
            "section1_isentropic_efficiency": [1.004, 0.9],
            "section2_isentropic_efficiency": [0.8, 1.004],
            "section3_isentropic_efficiency": [np.nan, np.nan],
            "flags": [int(Flag.ISENTROPIC_ABOVE_ONE)] * 2,
        }
    )
    uncertainty = pd.DataFrame(
        {
            "u_section1_isentropic_efficiency": [0.005, 0.005],
            "u_section2_isentropic_efficiency": [0.005, 0.001],
            "u_section3_isentropic_efficiency": [np.nan, np.nan],
        }
    )
    flags = consistency_flags(results, uncertainty)
    assert list(flags) == [0, int(Flag.ISENTROPIC_ABOVE_ONE)]


def _direct_indirect_model(inputs, params, context):
    # Direct q / f and indirect 1 - l / f share the fuel input f.
    q, loss, f = inputs["q"], inputs["l"], inputs["f"]
    return pd.DataFrame(
        {"eta_1": q / f, "eta_1_indirect": 1.0 - loss / f, "flags": 0}, index=inputs.index
    )


def test_direct_indirect_difference_counts_the_shared_input_once():
    # d = q/f - 1 + l/f = (q + l)/f - 1. GUM Eq. 10 on d as one function:
    # u_d^2 = (u_q/f)^2 + (u_l/f)^2 + ((q + l) u_f / f^2)^2.
    q, loss, f = 85.0, 12.6, 100.0
    u_q, u_l, u_f = 0.5, 0.6, 1.0
    inputs = pd.DataFrame({"q": [q], "l": [loss], "f": [f]})
    prop = propagate(
        _direct_indirect_model,
        inputs,
        {},
        CONTEXT,
        {
            "q": InputUncertainty(systematic=u_q),
            "l": InputUncertainty(systematic=u_l),
            "f": InputUncertainty(systematic=u_f),
        },
        step_fraction=CLOSED_FORM_STEP,
    )
    expected = np.sqrt((u_q / f) ** 2 + (u_l / f) ** 2 + ((q + loss) * u_f / f**2) ** 2)
    assert prop.difference("eta_1", "eta_1_indirect")["u"].iloc[0] == pytest.approx(
        expected, rel=1e-6
    )
    # The direct efficiency falls and the indirect one rises with f, so the shared term
    # adds in the difference. Gap 0.024; with the correlation 2 u_d = 0.0250: consistent.
    # Taken as independent, 2 sqrt(u_eta_1^2 + u_indirect^2) = 0.0232: a false alarm.
    gap = prop.results["eta_1"].iloc[0] - prop.results["eta_1_indirect"].iloc[0]
    assert gap == pytest.approx(-0.024, rel=1e-12)
    assert list(prop.judged_flags()) == [0]
    assert list(consistency_flags(prop.results, prop.table())) == [
        int(Flag.DIRECT_INDIRECT_DISAGREE)
    ]


def test_drift_significant_against_the_combined_uncertainty():
    # 0.4 points of drift, u = 0.15 and 0.10 points: 2 sqrt(0.15^2 + 0.10^2) = 0.36 < 0.4.
    assert drift_significant(0.846, 0.0015, 0.850, 0.0010) is True
    assert drift_significant(0.847, 0.0015, 0.850, 0.0010) is False
    actual = pd.Series([0.846, 0.847, np.nan], index=pd.RangeIndex(3, 6))
    out = drift_significant(actual, 0.0015, 0.850, 0.0010)
    assert out.index.equals(actual.index)
    assert list(out) == [True, False, False]
    assert list(drift_significant(np.array([0.80, 0.85]), 0.01, 0.85, 0.0, k=3)) == [True, False]


def test_expanded_uncertainty_keeps_the_type():
    assert expanded(0.01) == 0.02
    series = pd.Series([0.01, np.nan], index=["a", "b"])
    out = expanded(series)
    assert list(out.index) == ["a", "b"]
    assert out["a"] == 0.02
    assert np.isnan(out["b"])


def test_docstring_example_runs():
    # The example in propagate's docstring: 0.5 * sqrt(0.01^2 + 0.01^2) by GUM 5.1.6.
    result = doctest.testmod(uncertainty_module)
    assert (result.attempted, result.failed) == (6, 0)
