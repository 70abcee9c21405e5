"""Energy baselines (engine/baseline.py).

Outside references:
- statsmodels OLS (reference library from PyPI) for coefficients, R^2, residual standard
  deviation, BIC and the prediction interval of a new observation, to 1e-9.
- ASHRAE Guideline 14-2014, CV(RMSE) and NMBE as printed, with n - p in the denominators
  (formulas from memory), evaluated by hand on small data sets written out below.
- Form selection and extrapolation: synthetic data whose true form is known.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from engine.baseline import (
    FORMS,
    GUIDELINE14_CALIBRATION,
    Baseline,
    fit_baseline,
    goodness_of_fit,
    predict,
)

LOAD = "gross_power_w"
AMBIENT = "ambient_temperature_k"


@pytest.fixture(scope="module")
def quadratic_plant():
    """Fictional 100 MW unit: eta_1 quadratic in load, linear in ambient, 2e-3 noise."""
    rng = np.random.default_rng(11)
    n = 400
    load = rng.uniform(40e6, 100e6, n)
    ambient = rng.uniform(270.0, 305.0, n)
    x = load / 100e6
    eta = 0.25 + 0.25 * x - 0.12 * x**2 - 4e-4 * (ambient - 288.15) + rng.normal(0, 2e-3, n)
    regressors = pd.DataFrame({LOAD: load, AMBIENT: ambient})
    return pd.Series(eta, name="eta_1"), regressors


def _normalised(values, lo, hi):
    return (values - 0.5 * (lo + hi)) / (0.5 * (hi - lo))


def test_coefficients_r2_and_band_agree_with_statsmodels(quadratic_plant):
    eta, regressors = quadratic_plant
    b = fit_baseline(eta, regressors, load=LOAD)
    assert b.form == "quadratic"
    assert b.terms == ("1", f"u[{LOAD}]", f"u[{LOAD}]^2", f"u[{AMBIENT}]")

    (p_lo, p_hi), (t_lo, t_hi) = b.ranges
    assert (p_lo, p_hi) == (regressors[LOAD].min(), regressors[LOAD].max())
    u = _normalised(regressors[LOAD].to_numpy(), p_lo, p_hi)
    v = _normalised(regressors[AMBIENT].to_numpy(), t_lo, t_hi)
    design = np.column_stack([np.ones(len(u)), u, u**2, v])
    ref = sm.OLS(eta.to_numpy(), design).fit()

    np.testing.assert_allclose(b.coefficients, ref.params, rtol=1e-9, atol=0)
    assert b.r2 == pytest.approx(ref.rsquared, rel=1e-9)
    assert b.residual_std == pytest.approx(math.sqrt(ref.scale), rel=1e-9)
    assert b.dof == int(ref.df_resid) == 396
    assert b.n == 400
    np.testing.assert_allclose(np.asarray(b.xtx_inv), ref.normalized_cov_params, rtol=1e-9)

    # Prediction interval of a new observation (Montgomery, Peck & Vining 5th ed., Sec. 3.5)
    new = pd.DataFrame({LOAD: [45e6, 70e6, 99e6], AMBIENT: [275.0, 290.0, 300.0]})
    ours = predict(b, new)
    new_design = np.column_stack(
        [
            np.ones(3),
            _normalised(new[LOAD].to_numpy(), p_lo, p_hi),
            _normalised(new[LOAD].to_numpy(), p_lo, p_hi) ** 2,
            _normalised(new[AMBIENT].to_numpy(), t_lo, t_hi),
        ]
    )
    frame = ref.get_prediction(new_design).summary_frame(alpha=0.05)
    np.testing.assert_allclose(ours["expected"], frame["mean"], rtol=1e-9)
    np.testing.assert_allclose(ours["expected_lower"], frame["obs_ci_lower"], rtol=1e-9)
    np.testing.assert_allclose(ours["expected_upper"], frame["obs_ci_upper"], rtol=1e-9)
    assert ours["extrapolated"].tolist() == [False, False, False]


def test_normalisation_is_only_a_reparametrisation(quadratic_plant):
    # statsmodels on the raw-unit design [1, P/MW, (P/MW)^2, T/K] must predict the same.
    eta, regressors = quadratic_plant
    b = fit_baseline(eta, regressors, load=LOAD)
    mw = regressors[LOAD].to_numpy() / 1e6
    raw = np.column_stack([np.ones(len(mw)), mw, mw**2, regressors[AMBIENT].to_numpy()])
    ref = sm.OLS(eta.to_numpy(), raw).fit()
    new = pd.DataFrame({LOAD: [41e6, 66.6e6, 98e6], AMBIENT: [271.0, 288.15, 304.0]})
    new_raw = np.column_stack(
        [np.ones(3), new[LOAD] / 1e6, (new[LOAD] / 1e6) ** 2, new[AMBIENT].to_numpy()]
    )
    np.testing.assert_allclose(predict(b, new)["expected"], ref.predict(new_raw), rtol=1e-9)


def test_bic_of_every_form_agrees_with_statsmodels(quadratic_plant):
    eta, regressors = quadratic_plant
    b = fit_baseline(eta, regressors, load=LOAD)
    (p_lo, p_hi), (t_lo, t_hi) = b.ranges
    u = _normalised(regressors[LOAD].to_numpy(), p_lo, p_hi)
    v = _normalised(regressors[AMBIENT].to_numpy(), t_lo, t_hi)
    ones = np.ones(len(u))
    designs = {
        "constant": np.column_stack([ones, v]),
        "linear": np.column_stack([ones, u, v]),
        "quadratic": np.column_stack([ones, u, u**2, v]),
    }
    bic = dict(b.bic)
    assert list(bic) == list(FORMS)
    for form, design in designs.items():
        assert bic[form] == pytest.approx(sm.OLS(eta.to_numpy(), design).fit().bic, rel=1e-9)


def test_guideline14_statistics_by_hand_on_a_fit():
    # load x = 0..4 (W, tiny on purpose), y = 1, 3, 2, 5, 4; linear form only.
    # Hand OLS: xbar = 2, ybar = 3, Sxx = 10, Sxy = (-2)(-2)+(-1)(0)+0+(1)(2)+(2)(1) = 8
    #   slope 0.8, intercept 1.4; yhat = 1.4, 2.2, 3.0, 3.8, 4.6
    #   residuals -0.4, 0.8, -1.0, 1.2, -0.6; SSE = 0.16+0.64+1.00+1.44+0.36 = 3.6
    #   n = 5, p = 2, n - p = 3; SST = 4+0+1+4+1 = 10; R^2 = 1 - 3.6/10 = 0.64
    #   CV(RMSE) = sqrt(3.6/3)/3 = sqrt(1.2)/3 = 0.365148371670111
    #   NMBE = sum(residuals)/((n-p) ybar) = 0/9 = 0
    # Normalised load u = (x - 2)/2, so the coefficient of u is 0.8 * 2 = 1.6, intercept 3.
    y = pd.Series([1.0, 3.0, 2.0, 5.0, 4.0], name="eta_1")
    x = pd.DataFrame({LOAD: [0.0, 1.0, 2.0, 3.0, 4.0]})
    b = fit_baseline(y, x, load=LOAD, forms=("linear",))
    assert b.coefficients == pytest.approx((3.0, 1.6), abs=1e-12)
    assert b.r2 == pytest.approx(0.64, abs=1e-12)
    assert b.residual_std == pytest.approx(math.sqrt(1.2), abs=1e-12)
    assert b.cv_rmse == pytest.approx(0.365148371670111, abs=1e-12)
    assert b.nmbe == pytest.approx(0.0, abs=1e-15)
    assert b.dof == 3
    # 36.5 % > 30 %: fails the hourly calibration criterion (Guideline 14 Sec. 4.3.2.4).
    assert b.meets_guideline14 is False


def test_guideline14_statistics_by_hand_on_another_period():
    # Reporting period: y = 2, 4, 3 against yhat = 1.5, 3.5, 3.5 from a p = 2 model.
    #   residuals 0.5, 0.5, -0.5: sum 0.5, SSE 0.75; n - p = 1; ybar = 3
    #   RMSE = sqrt(0.75/1) = 0.866025403784439; CV(RMSE) = 0.866025.../3 = 0.288675134594813
    #   NMBE = 0.5/(1 * 3) = 0.166666666666667
    fit = goodness_of_fit([2.0, 4.0, 3.0], [1.5, 3.5, 3.5], 2)
    assert (fit.n, fit.p) == (3, 2)
    assert fit.rmse == pytest.approx(0.866025403784439, abs=1e-12)
    assert fit.cv_rmse == pytest.approx(0.288675134594813, abs=1e-12)
    assert fit.nmbe == pytest.approx(0.166666666666667, abs=1e-12)
    # CV(RMSE) 28.9 % <= 30 % but |NMBE| 16.7 % > 10 %: fails hourly.
    assert fit.meets("hourly") is False

    # y = 10, 10.5, 9.5, 10, 10.2 against a constant 10 (p = 1), one NaN pair ignored:
    #   residuals 0, 0.5, -0.5, 0, 0.2: sum 0.2, SSE 0.54; n - p = 4; ybar = 50.2/5 = 10.04
    #   CV(RMSE) = sqrt(0.54/4)/10.04 = 0.367423461417477/10.04 = 0.036595962292577
    #   NMBE = 0.2/(4 * 10.04) = 0.004980079681275
    fit = goodness_of_fit([10.0, 10.5, 9.5, 10.0, 10.2, np.nan], [10.0] * 6, 1)
    assert fit.n == 5
    assert fit.cv_rmse == pytest.approx(0.036595962292577, abs=1e-12)
    assert fit.nmbe == pytest.approx(0.004980079681275, abs=1e-12)
    assert fit.meets("hourly") is True
    assert fit.meets("monthly") is True


def test_calibration_criteria_table():
    # ASHRAE Guideline 14-2014 Sec. 4.3.2.4 (from memory): monthly NMBE 5 %, CV(RMSE) 15 %;
    # hourly 10 % and 30 %.
    assert {(k, c.max_abs_nmbe, c.max_cv_rmse) for k, c in GUIDELINE14_CALIBRATION.items()} == {
        ("monthly", 0.05, 0.15),
        ("hourly", 0.10, 0.30),
    }
    with pytest.raises(ValueError) as err:
        goodness_of_fit([1.0, 2.0], [1.0, 2.0], 1).meets("daily")
    assert str(err.value) == "granularity must be one of ['hourly', 'monthly'], got 'daily'"


@pytest.mark.parametrize(
    ("truth", "expected_form"),
    [
        (lambda x: 0.2 + 0.4 * x - 0.2 * x**2, "quadratic"),
        (lambda x: 0.30 + 0.05 * x, "linear"),
        (lambda x: 0.35 + 0.0 * x, "constant"),
    ],
)
def test_form_selection_recovers_the_true_form(truth, expected_form):
    rng = np.random.default_rng(3)
    load = rng.uniform(40e6, 100e6, 300)
    eta = pd.Series(truth(load / 100e6) + rng.normal(0.0, 1e-3, 300), name="eta_1")
    b = fit_baseline(eta, pd.DataFrame({LOAD: load}), load=LOAD)
    assert b.form == expected_form
    assert min(b.bic, key=lambda item: item[1])[0] == expected_form


def test_constant_load_leaves_only_the_constant_form():
    eta = pd.Series([0.40, 0.41, 0.39, 0.40], name="eta_1")
    b = fit_baseline(eta, pd.DataFrame({LOAD: [80e6] * 4}), load=LOAD)
    assert b.form == "constant"
    assert [form for form, _ in b.bic] == ["constant"]
    assert b.coefficients == pytest.approx((0.40,), abs=1e-15)
    assert b.r2 == pytest.approx(0.0, abs=1e-12)
    # s = sqrt((0 + 1e-4 + 1e-4 + 0)/3)
    assert b.residual_std == pytest.approx(math.sqrt(2e-4 / 3), rel=1e-12)


def test_mask_and_nan_rows_are_left_out():
    rng = np.random.default_rng(5)
    load = rng.uniform(40e6, 100e6, 60)
    eta = 0.3 + 0.1 * load / 100e6 + rng.normal(0, 1e-3, 60)
    eta[[3, 7]] = np.nan
    load[10] = np.nan
    mask = np.ones(60, dtype=bool)
    mask[20:30] = False
    series = pd.Series(eta, name="eta_1")
    b = fit_baseline(series, pd.DataFrame({LOAD: load}), load=LOAD, mask=mask)
    keep = np.isfinite(eta) & np.isfinite(load) & mask
    assert b.n == int(keep.sum()) == 47
    subset = fit_baseline(
        pd.Series(eta[keep], name="eta_1"), pd.DataFrame({LOAD: load[keep]}), load=LOAD
    )
    assert b.coefficients == pytest.approx(subset.coefficients, rel=1e-12)
    assert b.ranges == subset.ranges


def test_extrapolation_is_flagged_and_not_predicted(quadratic_plant):
    eta, regressors = quadratic_plant
    b = fit_baseline(eta, regressors, load=LOAD)
    (p_lo, p_hi), (t_lo, t_hi) = b.ranges
    new = pd.DataFrame(
        {
            LOAD: [p_lo - 1.0, p_lo, p_hi, p_hi + 1.0, np.nan, 70e6],
            AMBIENT: [288.0, 288.0, 288.0, 288.0, 288.0, t_hi + 0.5],
        },
        index=pd.date_range("2025-01-06", periods=6, freq="60s", tz="UTC"),
    )
    out = predict(b, new)
    assert out.index.equals(new.index)
    assert out["extrapolated"].tolist() == [True, False, False, True, False, True]
    assert out["expected"].isna().tolist() == [True, False, False, True, True, True]
    assert out["expected_lower"].isna().tolist() == out["expected"].isna().tolist()

    # On request a value is given, and still flagged.
    forced = predict(b, new, allow_extrapolation=True)
    assert forced["extrapolated"].tolist() == out["extrapolated"].tolist()
    assert forced["expected"].isna().tolist() == [False, False, False, False, True, False]

    # A margin of 1 % of the range width (about 0.6 MW) admits +/- 1 W, not +0.5 K over a
    # 35 K ambient range beyond 0.35 K.
    margin = predict(b, new, range_margin=0.01)
    assert margin["extrapolated"].tolist() == [False, False, False, False, False, True]


def test_round_trip_through_json(quadratic_plant):
    eta, regressors = quadratic_plant
    b = fit_baseline(eta, regressors, load=LOAD)
    text = json.dumps(b.to_dict(), allow_nan=False)
    again = Baseline.from_dict(json.loads(text))
    assert again == b
    new = pd.DataFrame({LOAD: [50e6, 90e6], AMBIENT: [280.0, 300.0]})
    pd.testing.assert_frame_equal(predict(again, new), predict(b, new))


def test_from_dict_refuses_other_schemas_and_missing_keys(quadratic_plant):
    eta, regressors = quadratic_plant
    data = fit_baseline(eta, regressors, load=LOAD).to_dict()
    with pytest.raises(ValueError) as err:
        Baseline.from_dict({**data, "schema": 99})
    assert str(err.value) == "baseline schema 99 is not supported (this version reads 1)"
    del data["t_quantile"]
    with pytest.raises(ValueError) as err:
        Baseline.from_dict(data)
    assert str(err.value) == "baseline dict lacks ['t_quantile']"


def test_configuration_errors():
    y = pd.Series([0.3, 0.31, 0.32], name="eta_1")
    x = pd.DataFrame({LOAD: [1.0, 2.0, 3.0], AMBIENT: [290.0, 290.0, 290.0]})
    cases = [
        (
            dict(metric=y, regressors=x, load="power"),
            f"load column 'power' not among the regressors ['{LOAD}', '{AMBIENT}']",
        ),
        (
            dict(metric=y, regressors=x, load=LOAD, forms=("cubic",)),
            "forms must be a non-empty subset of ['constant', 'linear', 'quadratic'], got ['cubic']",
        ),
        (
            dict(metric=y, regressors=x, load=LOAD),
            f"regressor(s) ['{AMBIENT}'] do not vary over the fit data; "
            "a term in them cannot be fitted",
        ),
        (
            dict(metric=y, regressors=x[[LOAD]], load=LOAD, forms=("quadratic",)),
            "cannot fit any of the forms ['quadratic'] to 3 usable interval(s) "
            "(need at least 4, and load must vary for a linear or quadratic form)",
        ),
        (
            dict(metric=y.set_axis([5, 6, 7]), regressors=x, load=LOAD),
            "metric and regressors must share the same index",
        ),
        (
            dict(metric=y * np.nan, regressors=x, load=LOAD),
            "no usable intervals to fit the baseline on",
        ),
    ]
    for kwargs, message in cases:
        with pytest.raises(ValueError) as err:
            fit_baseline(**kwargs)
        assert str(err.value) == message


def test_predict_needs_the_fitted_regressors(quadratic_plant):
    eta, regressors = quadratic_plant
    b = fit_baseline(eta, regressors, load=LOAD)
    with pytest.raises(ValueError) as err:
        predict(b, pd.DataFrame({LOAD: [60e6]}))
    assert str(err.value) == f"regressor column(s) ['{AMBIENT}'] missing"
