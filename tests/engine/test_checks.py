"""Consistency flags (engine/checks.py).

The bounds themselves are textbook: entropy generation is never negative (second law,
Bejan, Tsatsaronis & Moran 1996, Ch. 2), a first-law efficiency on the HHV basis
cannot exceed 1 (first law), and a heat engine cannot beat Carnot (Kotas 1995, Ch. 1;
chapters from memory). These tests pin the edges: exactly at a bound is not flagged, just beyond it is, and
NaN never sets a consistency flag.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine import checks
from engine.checks import Flag


def test_flag_bits_are_stable():
    # Stored in the database: the values must never change (engine/checks.py).
    assert [(name, int(f)) for name, f in Flag.__members__.items()] == [
        ("NONE", 0),
        ("INPUT_OUT_OF_RANGE", 1),
        ("NEGATIVE_ENTROPY_GENERATION", 2),
        ("EFFICIENCY_ABOVE_ONE", 4),
        ("ABOVE_CARNOT", 8),
        ("ISENTROPIC_ABOVE_ONE", 16),
        ("ENERGY_BALANCE_OPEN", 32),
        ("DIRECT_INDIRECT_DISAGREE", 64),
        ("NEGATIVE_UNACCOUNTED_DESTRUCTION", 128),
    ]


def test_input_out_of_range_flags_invalid_rows_only():
    out = checks.input_out_of_range([True, False, True])
    assert out.tolist() == [0, 1, 0]
    assert out.dtype == np.int64


def test_negative_entropy_generation_respects_relative_tolerance():
    # scale 1000 W/K, tolerance 1 %: the limit is -10 W/K; exactly -10 is within it.
    sgen = np.array([5.0, 0.0, -10.0, -10.001, np.nan])
    out = checks.negative_entropy_generation(sgen, 1000.0, 0.01)
    assert out.tolist() == [0, 0, 0, 2, 0]


def test_negative_entropy_generation_zero_tolerance_flags_any_negative():
    out = checks.negative_entropy_generation([-1e-12, 0.0], [1e6, 1e6], 0.0)
    assert out.tolist() == [2, 0]


def test_negative_entropy_generation_uses_magnitude_of_scale():
    # A negative scale (e.g. from a sign slip upstream) must not invert the test.
    out = checks.negative_entropy_generation([-5.0, -20.0], [-1000.0, -1000.0], 0.01)
    assert out.tolist() == [0, 2]


def test_efficiency_above_one_edges():
    out = checks.efficiency_above_one([0.9, 1.0, 1.0 + 1e-12, np.nan, -0.1])
    assert out.tolist() == [0, 0, 4, 0, 0]


def test_above_carnot_against_hand_computed_limit():
    # Carnot between 540 degC (813.15 K) and 25 degC (298.15 K): 1 - 298.15/813.15
    # = 0.633340... (Kotas 1995, Ch. 1; arithmetic by hand).
    limit = 1.0 - 298.15 / 813.15
    assert limit == pytest.approx(0.6333395, abs=1e-7)
    out = checks.above_carnot([0.45, limit, 0.64, 0.64], [limit, limit, limit, np.nan])
    assert out.tolist() == [0, 0, 8, 0]


def test_isentropic_above_one():
    assert checks.isentropic_above_one([0.88, 1.0, 1.02, np.nan]).tolist() == [0, 0, 16, 0]


def test_balance_open_is_symmetric_in_sign():
    out = checks.balance_open([0.01, -0.01, 0.021, -0.021, np.nan], 0.02)
    assert out.tolist() == [0, 0, 32, 32, 0]


def test_combine_ors_bits_per_row():
    out = checks.combine([1, 0, 0], [2, 2, 0], np.array([0, 4, 0]))
    assert out.tolist() == [3, 6, 0]
    assert Flag(int(out[1])) == Flag.NEGATIVE_ENTROPY_GENERATION | Flag.EFFICIENCY_ABOVE_ONE


@pytest.mark.parametrize(
    "value, expected",
    [
        (1.5, [4]),
        ([0.5, 1.5], [0, 4]),
        (np.array([1.5, 0.5]), [4, 0]),
        (pd.Series([0.5, 1.5], index=pd.date_range("2026-01-01", periods=2, freq="min")), [0, 4]),
    ],
    ids=["scalar", "list", "ndarray", "series"],
)
def test_checks_accept_scalar_list_array_series(value, expected):
    assert checks.efficiency_above_one(value).tolist() == expected
