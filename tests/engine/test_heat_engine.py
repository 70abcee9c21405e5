"""Generic heat engine (engine/units/heat_engine.py).

Outside references:
- the Carnot efficiency 1 - T_c/T_h bounds every heat engine between two reservoirs
  (Kotas 1995, Ch. 1; chapter from memory), worked by hand below;
- a reversible (Carnot) engine generates no entropy: W = Q_in (1 - T_c/T_h) and
  Q_out = Q_in T_c/T_h give Sgen = 0 and eta_2 = 1;
- Gouy-Stodola (Bejan, Tsatsaronis & Moran 1996, Eq. 3.24): T0 Sgen equals the exergy
  destroyed, the two computed by different routes in the model, checked to 1e-9;
- the energy balance Q_in = W + Q_out + unaccounted, which must close.
"""

from __future__ import annotations

import doctest

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import engine.units.heat_engine as heat_engine_module
from engine.catalogue import ModelContext, get_kind
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.units.heat_engine import KIND, heat_engine_performance

T0 = 298.15

# Our own scenario: a fictional organic Rankine set on a 150 degC thermal-oil loop,
# condenser on cooling water at 30 degC.
ORC = {
    "heat_input": 2.0e6,
    "hot_temperature": 423.15,
    "work_output": 0.24e6,
    "heat_rejected": 1.72e6,
    "cold_temperature": 303.15,
}


def _run(rows, params=None, t0=T0, index=None) -> pd.DataFrame:
    rows = [rows] if isinstance(rows, dict) else rows
    context = ModelContext(dead=dead_state(t0))
    return heat_engine_performance(pd.DataFrame(rows, index=index), params or {}, context)


def test_worked_example_by_hand():
    out = _run(ORC).iloc[0]
    # eta_1 = 0.24 / 2.0 = 0.12; Carnot 1 - 303.15/423.15 = 0.283587...; eta_2 = 0.42315...
    assert out["eta_1"] == pytest.approx(0.12, rel=1e-14)
    assert out["carnot_limit"] == pytest.approx(120.0 / 423.15, rel=1e-13)
    assert out["eta_2"] == pytest.approx(0.12 * 423.15 / 120.0, rel=1e-13)
    assert out["reversible_work_w"] == pytest.approx(2.0e6 * 120.0 / 423.15, rel=1e-13)
    # Unaccounted: 2.0 - 0.24 - 1.72 = 0.04 MW (2 %, within the 5 % default).
    assert out["unaccounted_heat_w"] == pytest.approx(0.04e6, rel=1e-9)
    assert out["energy_balance_error"] == pytest.approx(0.02, rel=1e-9)
    # Entropy balance by hand: 1.72e6/303.15 + 0.04e6/298.15 - 2.0e6/423.15
    #   = 5673.75... + 134.16... - 4726.46... W/K
    sgen = 1.72e6 / 303.15 + 0.04e6 / 298.15 - 2.0e6 / 423.15
    assert out["sgen_w_per_k"] == pytest.approx(sgen, rel=1e-12)
    assert out["lost_work_w"] == pytest.approx(T0 * sgen, rel=1e-12)
    # Exergy of heat (Bejan et al. 1996, Eq. 3.9): Q (1 - T0/T).
    assert out["heat_input_exergy_w"] == pytest.approx(2.0e6 * (1 - T0 / 423.15), rel=1e-13)
    assert out["rejected_heat_exergy_w"] == pytest.approx(1.72e6 * (1 - T0 / 303.15), rel=1e-13)
    assert out["exergy_destroyed_w"] == pytest.approx(T0 * sgen, rel=1e-12)
    assert int(out["flags"]) == Flag.NONE


def test_reversible_engine_generates_no_entropy():
    # A Carnot engine between 600 K and 300 K: W = Q/2, Q_out = Q/2.
    row = {
        "heat_input": 1.0e6,
        "hot_temperature": 600.0,
        "work_output": 0.5e6,
        "heat_rejected": 0.5e6,
        "cold_temperature": 300.0,
    }
    out = _run(row).iloc[0]
    assert out["sgen_w_per_k"] == pytest.approx(0.0, abs=1e-9)
    assert out["exergy_destroyed_w"] == pytest.approx(0.0, abs=1e-6)
    assert out["eta_2"] == pytest.approx(1.0, rel=1e-14)
    assert out["eta_1"] == pytest.approx(out["carnot_limit"], rel=1e-14)
    # Work short of Carnot is T_c Sgen: zero here.
    assert out["reversible_work_w"] - out["work_output_w"] == pytest.approx(0.0, abs=1e-6)
    assert int(out["flags"]) == Flag.NONE


def test_claim_above_carnot_is_flagged_impossible():
    # A fictional thermoelectric set claiming 40 % between 450 K and 300 K, where Carnot
    # allows 1 - 300/450 = 1/3.
    row = {
        "heat_input": 10e3,
        "hot_temperature": 450.0,
        "work_output": 4.0e3,
        "heat_rejected": 6.0e3,
        "cold_temperature": 300.0,
    }
    out = _run(row).iloc[0]
    assert out["carnot_limit"] == pytest.approx(1 / 3, rel=1e-14)
    assert out["eta_2"] == pytest.approx(1.2, rel=1e-13)
    # Closed balance and above Carnot: the entropy balance goes negative too
    # (6e3/300 - 10e3/450 = -2.222 W/K).
    assert out["sgen_w_per_k"] == pytest.approx(6e3 / 300 - 10e3 / 450, rel=1e-12)
    assert Flag(int(out["flags"])) == Flag.ABOVE_CARNOT | Flag.NEGATIVE_ENTROPY_GENERATION
    within = _run(dict(row, work_output=2.5e3, heat_rejected=7.5e3)).iloc[0]
    assert int(within["flags"]) == Flag.NONE


def test_no_work_possible_when_the_hot_reservoir_is_not_hotter():
    row = dict(ORC, hot_temperature=290.0, cold_temperature=300.0)
    out = _run(row).iloc[0]
    assert out["carnot_limit"] == pytest.approx(1 - 300.0 / 290.0, rel=1e-14)
    assert np.isnan(out["eta_2"])
    assert Flag(int(out["flags"])) & Flag.ABOVE_CARNOT == Flag.ABOVE_CARNOT


def test_open_energy_balance_is_flagged_only_when_heat_rejected_is_measured():
    # Heat rejected reads 1.5 MW: 0.26 MW (13 %) unaccounted.
    out = _run(dict(ORC, heat_rejected=1.5e6)).iloc[0]
    assert out["energy_balance_error"] == pytest.approx(0.13, rel=1e-9)
    assert Flag(int(out["flags"])) == Flag.ENERGY_BALANCE_OPEN
    wider = _run(dict(ORC, heat_rejected=1.5e6), {"energy_balance_tolerance": 0.15})
    assert int(wider["flags"].iloc[0]) == Flag.NONE
    closed = _run({k: v for k, v in ORC.items() if k != "heat_rejected"}).iloc[0]
    assert closed["heat_rejected_w"] == pytest.approx(1.76e6, rel=1e-14)
    assert closed["unaccounted_heat_w"] == 0.0
    assert int(closed["flags"]) == Flag.NONE


def test_efficiency_above_one_is_flagged():
    out = _run(dict(ORC, work_output=2.5e6, heat_rejected=0.0)).iloc[0]
    assert Flag(int(out["flags"])) & Flag.EFFICIENCY_ABOVE_ONE == Flag.EFFICIENCY_ABOVE_ONE


def test_cold_reservoir_defaults_to_the_dead_state_per_row():
    row = {k: v for k, v in ORC.items() if k not in ("cold_temperature", "heat_rejected")}
    t0 = np.array([283.15, 303.15])
    out = _run([row, row], t0=t0)
    np.testing.assert_allclose(out["carnot_limit"], 1 - t0 / 423.15, rtol=1e-14)
    # With T_c = T0 the rejected heat carries no exergy.
    np.testing.assert_allclose(out["rejected_heat_exergy_w"], [0.0, 0.0], atol=1e-6)


@pytest.mark.parametrize(
    "column, value",
    [
        ("heat_input", np.nan),
        ("heat_input", -1.0),
        ("hot_temperature", 0.0),
        ("cold_temperature", -5.0),
        ("work_output", np.nan),
        ("heat_rejected", np.nan),
    ],
)
def test_bad_inputs_give_input_out_of_range_for_that_row_only(column, value):
    out = _run([dict(ORC, **{column: value}), dict(ORC)])
    assert out["flags"].tolist() == [int(Flag.INPUT_OUT_OF_RANGE), 0]
    assert out.drop(columns="flags").iloc[0].isna().all()
    pd.testing.assert_series_equal(out.iloc[1], _run(ORC).iloc[0], check_names=False)


def test_datetime_index_kept_columns_as_declared_and_registered():
    index = pd.date_range("2026-02-01", periods=3, freq="min", tz="UTC")
    out = _run([ORC] * 3, index=index)
    assert out.index.equals(index)
    assert list(out.columns) == [r.name for r in KIND.results] + ["flags"]
    assert out["flags"].dtype == np.int64
    assert get_kind("heat_engine") is KIND
    assert KIND.validate(["heat_input", "hot_temperature", "work_output"], {}, False) == []


def test_docstring_example_runs():
    result = doctest.testmod(heat_engine_module)
    assert (result.failed, result.attempted) == (0, 6)


@settings(max_examples=80, deadline=None)
@given(
    q_in=st.floats(1e3, 1e9),
    t_hot=st.floats(350.0, 1500.0),
    t_cold=st.floats(275.0, 340.0),
    t0=st.floats(275.0, 313.0),
    share_of_carnot=st.floats(0.0, 1.0),
    unaccounted_share=st.floats(0.0, 0.04),
)
def test_property_balances_and_bounds(q_in, t_hot, t_cold, t0, share_of_carnot, unaccounted_share):
    # A consistent engine: work a share of the reversible work, a small part of the heat
    # lost to the surroundings at T0.
    carnot = 1 - t_cold / t_hot
    work = share_of_carnot * carnot * q_in
    unaccounted = unaccounted_share * (q_in - work)
    q_out = q_in - work - unaccounted
    row = {
        "heat_input": q_in,
        "hot_temperature": t_hot,
        "work_output": work,
        "heat_rejected": q_out,
        "cold_temperature": t_cold,
    }
    out = _run(row, t0=t0).iloc[0]
    # Energy balance closes: Q_in = W + Q_out + unaccounted.
    total = out["work_output_w"] + out["heat_rejected_w"] + out["unaccounted_heat_w"]
    assert total == pytest.approx(q_in, rel=1e-12)
    # Gouy-Stodola: T0 Sgen = exergy destroyed (two routes), to round-off of Q_in.
    assert out["lost_work_w"] == pytest.approx(out["exergy_destroyed_w"], rel=1e-9, abs=1e-9 * q_in)
    assert out["eta_2"] <= 1.0 + 1e-12
    if t0 <= t_cold:
        # Heat lost at T0 <= T_c carries at least as much entropy per joule as heat
        # rejected at T_c, so Sgen >= 0 whenever W <= W_rev. (Above T_c it carries less,
        # and a work close to W_rev can then be impossible: Carnot is the looser bound.)
        assert out["sgen_w_per_k"] >= -1e-9 * q_in / t_cold
        assert int(out["flags"]) == Flag.NONE
