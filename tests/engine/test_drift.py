"""Drift, EWMA and tabular CUSUM (engine/drift.py).

Outside references:
- D. C. Montgomery, "Introduction to Statistical Quality Control", 6th ed., Wiley 2009,
  Sec. 9.1.2, Example 9.1 with Tables 9.1 (data) and 9.2 (tabular CUSUM): 30
  observations, mu0 = 10, sigma = 1, k = 0.5, h = 5. From memory: the data, the upper
  CUSUM signalling at period 29 with C+ = 5.28 and N+ = 7 (so the shift began after
  period 22), and the estimated new mean 10 + 0.5 + 5.28/7 = 11.25. The full C+ / C-
  columns below are recomputed by hand from the printed recursion; with two-decimal
  data every entry is an exact two-decimal number.
- The NIST/SEMATECH e-Handbook, Sec. 6.3.2.3, also has a tabular CUSUM example; we are
  not sure enough of its exact published Shi/Slo columns to reproduce them value for
  value, so Montgomery's example is used instead.
- Montgomery 6th ed., Table 9.3 (from memory): k = 0.5, h = 5 gives ARL0 = 465 and
  ARL(1 sigma) = 10.4; h = 4 gives 168 and 8.38. Checked by simulation and against
  Siegmund's approximation.
- Montgomery 6th ed., Example 9.2 (EWMA, lambda = 0.1, L = 2.7, same data): the first
  values z1 = 9.945, z2 = 9.7495 and limits 10.27, 10.3632 are worked by hand below.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.drift import (
    CusumState,
    EwmaState,
    absolute_drift,
    cusum,
    cusum_arl,
    decision_interval_for_arl0,
    drift_frame,
    ewma,
    relative_drift,
    standardised_residual,
)

# Montgomery 6th ed., Table 9.1 (from memory): periods 1-20 from N(10, 1), 21-30 from N(11, 1).
MONTGOMERY_TABLE_9_1 = [
    9.45, 7.99, 9.29, 11.66, 12.16, 10.18, 8.04, 11.46, 9.20, 10.34,
    9.03, 11.47, 10.51, 9.40, 10.08, 9.37, 10.62, 10.31, 8.52, 10.84,
    10.90, 9.33, 12.29, 11.50, 10.60, 11.08, 10.38, 11.62, 11.31, 10.52,
]  # fmt: skip

# C+_i = max(0, x_i - 10.5 + C+_{i-1}); e.g. period 4: 11.66 - 10.5 = 1.16;
# period 5: 1.16 + 1.66 = 2.82; period 23: 12.29 - 10.5 = 1.79; 24: 1.79 + 1.00 = 2.79;
# 25: +0.10 = 2.89; 26: +0.58 = 3.47; 27: -0.12 -> 3.35; 28: +1.12 = 4.47; 29: +0.81 = 5.28.
MONTGOMERY_C_PLUS = [
    0.00, 0.00, 0.00, 1.16, 2.82, 2.50, 0.04, 1.00, 0.00, 0.00,
    0.00, 0.97, 0.98, 0.00, 0.00, 0.00, 0.12, 0.00, 0.00, 0.34,
    0.74, 0.00, 1.79, 2.79, 2.89, 3.47, 3.35, 4.47, 5.28, 5.30,
]  # fmt: skip
# C-_i = max(0, 9.5 - x_i + C-_{i-1}); e.g. period 1: 9.5 - 9.45 = 0.05; 2: 0.05 + 1.51 = 1.56;
# 3: 1.56 + 0.21 = 1.77; 4: 1.77 - 2.16 < 0 -> 0; 7: 9.5 - 8.04 = 1.46; 19: 9.5 - 8.52 = 0.98.
MONTGOMERY_C_MINUS = [
    0.05, 1.56, 1.77, 0.00, 0.00, 0.00, 1.46, 0.00, 0.30, 0.00,
    0.47, 0.00, 0.00, 0.10, 0.00, 0.13, 0.00, 0.00, 0.98, 0.00,
    0.00, 0.17, 0.00, 0.00, 0.00, 0.00, 0.00, 0.00, 0.00, 0.00,
]  # fmt: skip
MONTGOMERY_N_PLUS = [
    0, 0, 0, 1, 2, 3, 4, 5, 0, 0, 0, 1, 2, 0, 0, 0, 1, 0, 0, 1,
    2, 0, 1, 2, 3, 4, 5, 6, 7, 8,
]  # fmt: skip


def _montgomery_z():
    periods = pd.RangeIndex(1, 31, name="period")
    return pd.Series(MONTGOMERY_TABLE_9_1, index=periods) - 10.0  # (x - mu0) / sigma, sigma = 1


def test_cusum_reproduces_montgomery_example_9_1_value_for_value():
    result = cusum(_montgomery_z(), k=0.5, h=5.0, reset_on_alarm=False)
    frame = result.frame
    np.testing.assert_allclose(frame["cusum_upper"], MONTGOMERY_C_PLUS, atol=1e-12, rtol=0)
    np.testing.assert_allclose(frame["cusum_lower"], MONTGOMERY_C_MINUS, atol=1e-12, rtol=0)
    assert frame["cusum_run_upper"].tolist() == MONTGOMERY_N_PLUS
    assert frame.index[frame["cusum_alarm_upper"]].tolist() == [29, 30]
    assert not frame["cusum_alarm_lower"].any()

    first = result.events.iloc[0]
    assert (first["alarm_at"], first["side"], first["run_length"]) == (29, "upper", 7)
    # The sum was last zero at period 22, so the shift began at period 23.
    assert first["shift_start"] == 23
    assert first["statistic"] == pytest.approx(5.28, abs=1e-12)
    # New mean estimate mu0 + K + C+/N+ = 10 + 0.5 + 5.28/7 = 11.2543 ("11.25" in the book).
    assert 10.0 + first["estimated_shift"] == pytest.approx(11.254285714285714, abs=1e-12)


def test_cusum_reset_restarts_both_sums_after_the_alarm():
    result = cusum(_montgomery_z(), k=0.5, h=5.0, reset_on_alarm=True)
    # Period 29 alarms with 5.28; period 30 starts from 0: max(0, 10.52 - 10.5) = 0.02.
    assert result.frame.loc[29, "cusum_upper"] == pytest.approx(5.28, abs=1e-12)
    assert result.frame.loc[30, "cusum_upper"] == pytest.approx(0.02, abs=1e-12)
    assert result.frame.loc[30, "cusum_run_upper"] == 1
    assert result.events["alarm_at"].tolist() == [29]
    assert result.state == CusumState(upper=pytest.approx(0.02), upper_run=1, upper_since=30)


def test_cusum_continues_over_chunks_exactly():
    z = _montgomery_z()
    whole = cusum(z, reset_on_alarm=False)
    head = cusum(z.loc[:25], reset_on_alarm=False)
    tail = cusum(z.loc[26:], reset_on_alarm=False, state=head.state)
    pd.testing.assert_frame_equal(pd.concat([head.frame, tail.frame]), whole.frame)
    # The run that alarms at 29 started at 23, in the first chunk: carried as a label.
    assert head.state.upper_since == 23
    assert tail.events["shift_start"].tolist() == [23, 23]


def test_cusum_skips_missing_observations():
    z = _montgomery_z().to_numpy()
    gappy = np.insert(z, [5, 5, 20], np.nan)
    out = cusum(gappy, reset_on_alarm=False).frame
    observed = out[np.isfinite(gappy)]
    np.testing.assert_allclose(observed["cusum_upper"], MONTGOMERY_C_PLUS, atol=1e-12)
    assert out["cusum_upper"].isna().sum() == 3
    assert not out.loc[~np.isfinite(gappy), "cusum_alarm_upper"].any()


def test_ewma_first_values_of_montgomery_example_9_2_by_hand():
    # z1 = 0.1 * 9.45 + 0.9 * 10 = 9.945;  z2 = 0.1 * 7.99 + 0.9 * 9.945 = 9.7495
    # UCL1 = 10 + 2.7 sqrt(0.1/1.9 * (1 - 0.9^2)) = 10 + 2.7 * 0.1 = 10.27
    # UCL2 = 10 + 2.7 sqrt(0.1/1.9 * (1 - 0.9^4)) = 10 + 2.7 sqrt(0.0181) = 10.36324
    frame, state = ewma(_montgomery_z(), lam=0.1, width=2.7)
    assert 10.0 + frame["ewma"].iloc[0] == pytest.approx(9.945, abs=1e-12)
    assert 10.0 + frame["ewma"].iloc[1] == pytest.approx(9.7495, abs=1e-12)
    assert 10.0 + frame["ewma_limit"].iloc[0] == pytest.approx(10.27, abs=1e-12)
    assert 10.0 + frame["ewma_limit"].iloc[1] == pytest.approx(10.36324, abs=1e-5)
    # Whole column against the recursion written out in plain Python.
    w, expected = 0.0, []
    for x in _montgomery_z():
        w = 0.1 * x + 0.9 * w
        expected.append(w)
    np.testing.assert_allclose(frame["ewma"], expected, atol=1e-13, rtol=0)
    # By that arithmetic the EWMA first leaves its band at period 29 (10.6468 > 10.6187).
    assert frame.index[frame["ewma_alarm"]].tolist() == [29, 30]
    assert state.count == 30


def test_ewma_skips_gaps_and_continues_over_chunks():
    z = _montgomery_z()
    whole, _ = ewma(z)
    head, state = ewma(z.iloc[:12])
    tail, _ = ewma(z.iloc[12:], state=state)
    pd.testing.assert_frame_equal(pd.concat([head, tail]), whole)
    gappy = pd.Series(np.insert(z.to_numpy(), 3, np.nan))
    out, _ = ewma(gappy)
    assert np.isnan(out["ewma"].iloc[3])
    assert bool(out["ewma_alarm"].iloc[3]) is False
    np.testing.assert_allclose(out["ewma"].dropna(), whole["ewma"], atol=1e-15)


def test_siegmund_approximation_against_montgomery_table_9_3():
    # Table 9.3 (exact ARLs, from memory): h = 5: 465 / 10.4; h = 4: 168 / 8.38 (k = 0.5).
    assert cusum_arl(0.5, 5.0) == pytest.approx(465, rel=0.015)
    assert cusum_arl(0.5, 5.0, 1.0) == pytest.approx(10.4, rel=0.015)
    assert cusum_arl(0.5, 4.0) == pytest.approx(168, rel=0.015)
    assert cusum_arl(0.5, 4.0, 1.0) == pytest.approx(8.38, rel=0.015)
    h = decision_interval_for_arl0(cusum_arl(0.5, 5.0))
    assert h == pytest.approx(5.0, abs=1e-9)


def test_false_alarm_rate_on_noise_matches_published_arl0():
    # 1e6 in-control intervals, k = 0.5, h = 5, reset after each alarm: the alarms form
    # a renewal process with mean spacing ARL0 = 465 (Montgomery Table 9.3, from memory).
    # Measured with this seed: 2129 alarms, one per 469.7 intervals (rate 2.13e-3).
    # Tolerance 7 %: three standard errors of the count (sd ~ sqrt(2150) = 46).
    z = np.random.default_rng(2).normal(size=1_000_000)
    events = cusum(z, 0.5, 5.0).events
    assert len(events) == 2129
    assert 1_000_000 / len(events) == pytest.approx(465, rel=0.07)


def test_detection_delay_of_a_one_sigma_step_matches_published_arl1():
    # Every alarm restarts the chart inside the shifted process: zero-state run lengths.
    z = np.random.default_rng(4).normal(size=50_000) + 1.0
    events = cusum(z, 0.5, 5.0).events
    assert 50_000 / len(events) == pytest.approx(10.4, rel=0.05)


def test_no_alarm_on_a_long_clean_run_with_h_chosen_for_the_interval():
    # Two weeks of 60 s intervals, h for a two-sided ARL0 of 1e6 intervals (about two
    # years) by Siegmund: h = 12.65. P(any false alarm in 20160) ~ 2 %.
    h = decision_interval_for_arl0(1e6)
    assert h == pytest.approx(12.6495, abs=1e-4)
    z = np.random.default_rng(6).normal(size=20_160)
    assert cusum(z, 0.5, h).events.empty
    # The same noise with the textbook h = 5 raises 44 false alarms (20160/465 = 43 expected).
    assert len(cusum(z, 0.5, 5.0).events) == 44


def _efficiency_with(shift_sigma):
    """Fictional boiler: eta_1 expected 0.88, s = 0.004, 500 clean intervals then a change."""
    rng = np.random.default_rng(8)
    n = 800
    index = pd.date_range("2025-02-03", periods=n, freq="60s", tz="UTC")
    expected = pd.Series(0.88, index=index)
    actual = expected + 0.004 * (rng.normal(size=n) + shift_sigma(np.arange(n) - 500))
    prediction = pd.DataFrame(
        {
            "expected": expected,
            "expected_lower": expected - 0.008,
            "expected_upper": expected + 0.008,
            "extrapolated": False,
        }
    )
    return actual, prediction, index


# h for one false alarm per year of 60 s intervals (Siegmund): 12.006. With the textbook
# h = 5 the 500 clean intervals before the change already hold a false alarm (ARL0 465).
H_ONE_YEAR = decision_interval_for_arl0(525_600)


def test_step_is_detected_within_stated_intervals_with_its_onset():
    # eta_1 falls by 1.5 s (0.006) at interval 500. Siegmund ARL1 for k = 0.5, h = 12.0 and
    # a 1.5 s shift is 12.7; we require the alarm within 30 intervals and the reported
    # start within 10 intervals before/after the true onset.
    actual, prediction, index = _efficiency_with(lambda t: np.where(t >= 0, -1.5, 0.0))
    result = drift_frame(actual, prediction, 0.004, h=H_ONE_YEAR)
    lower = result.events[result.events["side"] == "lower"]
    after = lower[lower["alarm_at"] >= index[500]]
    before = lower[lower["alarm_at"] < index[500]]
    assert before.empty
    first = after.iloc[0]
    delay = index.get_loc(first["alarm_at"]) - 500
    assert 0 <= delay <= 30
    assert abs(index.get_loc(first["shift_start"]) - 500) <= 10
    # estimated shift within 0.75 s of the true -1.5 s
    assert first["estimated_shift"] == pytest.approx(-1.5, abs=0.75)
    assert result.frame["drift"].iloc[600:].mean() == pytest.approx(-0.006, abs=0.001)


def test_ramp_is_detected_within_stated_intervals():
    # eta_1 falls by 0.02 s per interval from interval 500 (fouling-like ramp). Noise-free,
    # the lower sum grows once 0.02 j > k = 0.5 (j > 25) and exceeds h = 12.0 once
    # 0.01 (j - 25)^2 > 12, i.e. about 60 intervals in; we require the alarm within 100
    # and none before the ramp.
    actual, prediction, index = _efficiency_with(lambda t: np.where(t >= 0, -0.02 * t, 0.0))
    result = drift_frame(actual, prediction, 0.004, h=H_ONE_YEAR)
    lower = result.events[result.events["side"] == "lower"]
    assert lower[lower["alarm_at"] < index[500]].empty
    delay = index.get_loc(lower.iloc[0]["alarm_at"]) - 500
    assert 0 <= delay <= 100


def test_drift_frame_columns_and_observe_mask():
    actual, prediction, index = _efficiency_with(lambda t: np.zeros_like(t, dtype=float))
    observe = np.ones(len(index), dtype=bool)
    observe[:100] = False
    result = drift_frame(actual, prediction, 0.004, observe=observe)
    frame = result.frame
    assert list(frame.columns) == [
        "expected", "expected_lower", "expected_upper", "extrapolated",
        "drift", "drift_rel", "z",
        "ewma", "ewma_limit", "ewma_alarm",
        "cusum_upper", "cusum_lower", "cusum_run_upper", "cusum_run_lower",
        "cusum_alarm_upper", "cusum_alarm_lower",
    ]  # fmt: skip
    assert frame.index.equals(index)
    assert frame["z"].iloc[:100].isna().all()
    assert frame["drift"].iloc[:100].notna().all()  # drift is reported, charts skip
    assert frame["cusum_upper"].iloc[:100].isna().all()
    assert isinstance(result.ewma_state, EwmaState)
    assert result.ewma_state.count == 700


def test_drift_arithmetic_and_type_preservation():
    # heat rate 10.2 MJ/kWh against an expected 10.0: +0.2 MJ/kWh, +2 %, z = 0.2e6/0.05e6 = 4
    assert absolute_drift(10.2e6, 10.0e6) == pytest.approx(0.2e6)
    assert relative_drift(10.2e6, 10.0e6) == pytest.approx(0.02)
    assert standardised_residual(10.2e6, 10.0e6, 0.05e6) == pytest.approx(4.0)
    s = pd.Series([0.40, np.nan], index=["a", "b"])
    out = relative_drift(s, pd.Series([0.0, 0.5], index=["a", "b"]))
    assert out.index.tolist() == ["a", "b"]
    assert np.isinf(out["a"]) and np.isnan(out["b"])
    arr = absolute_drift(np.array([1.0, 2.0]), np.array([0.5, 0.5]))
    assert isinstance(arr, np.ndarray) and arr.tolist() == [0.5, 1.5]


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: standardised_residual(1.0, 1.0, 0.0), "residual_std must be > 0, got 0.0"),
        (lambda: ewma([0.0], lam=0.0), "lam must be in (0, 1], got 0.0"),
        (lambda: ewma([0.0], width=-1.0), "width must be > 0, got -1.0"),
        (lambda: cusum([0.0], k=-0.1), "k must be >= 0, got -0.1"),
        (lambda: cusum([0.0], h=0.0), "h must be > 0, got 0.0"),
        (lambda: decision_interval_for_arl0(1.0), "arl0 must be > 1, got 1.0"),
    ],
)
def test_parameter_errors(call, message):
    with pytest.raises(ValueError) as err:
        call()
    assert str(err.value) == message
