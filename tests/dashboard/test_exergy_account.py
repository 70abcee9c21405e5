"""The exergy account closes: input = product + destroyed + lost (+ a shown mismatch)."""

from __future__ import annotations

import pytest

from dashboard.exergy_account import build_account, wanted_metrics


def test_boiler_account_from_its_result_columns():
    # Boiler columns (engine.units.boiler): the exergy balance gives destroyed-and-lost
    # = fuel exergy - water exergy gain; T0 Sgen is the destruction (Gouy-Stodola);
    # the rest leaves the unit unused.
    means = {
        "fuel_exergy_w": 20.0e6,
        "water_exergy_gain_w": 7.0e6,
        "exergy_destroyed_and_lost_w": 13.0e6,
        "lost_work_w": 11.8e6,
        "eta_1": 0.9,
    }
    account = build_account(means)
    assert account.input_label == "Fuel exergy"
    assert account.product_label == "Water and steam exergy gain"
    assert account.destroyed == {"Destroyed inside the unit (T0·Sgen)": 11.8e6}
    assert account.lost == {"Lost to the surroundings": pytest.approx(1.2e6)}
    assert account.mismatch_w == pytest.approx(0.0, abs=1e-6)
    assert [t[0] for t in account.terms()] == ["product", "destroyed", "lost"]
    assert sum(t[2] for t in account.terms()) == pytest.approx(account.input_w)


def test_detailed_terms_are_used_when_reported():
    means = {
        "fuel_exergy_w": 100.0,
        "water_exergy_gain_w": 40.0,
        "exergy_destroyed_combustion_w": 30.0,
        "exergy_destroyed_heat_transfer_w": 20.0,
        "exergy_lost_stack_thermal_w": 8.0,
        "lost_work_w": 50.0,
    }
    account = build_account(means)
    # names of engine.boiler_exergy_split
    assert account.destroyed == {
        "Destroyed in combustion": 30.0,
        "Destroyed in heat transfer": 20.0,
    }
    assert account.lost == {"Lost with the stack gas, thermal": 8.0}
    # 100 - 40 - 50 - 8 = 2 W not accounted for: drawn as its own term
    assert account.terms()[-1] == ("mismatch", "Balance mismatch", pytest.approx(2.0))


def test_a_part_the_dashboard_has_no_name_for_is_named_from_its_column():
    account = build_account(
        {
            "fuel_exergy_w": 10.0,
            "water_exergy_gain_w": 4.0,
            "exergy_lost_blowdown_w": 1.0,
            "exergy_destroyed_mixing_w": 5.0,
        }
    )
    assert account.lost == {"Lost: blowdown": 1.0}
    assert account.destroyed == {"Destroyed: mixing": 5.0}


def test_turbine_account_uses_generator_power():
    account = build_account(
        {
            "exergy_in_w": 5.0e6,
            "generator_power_w": 3.4e6,
            "exergy_destroyed_and_lost_w": 1.6e6,
            "lost_work_w": 1.6e6,
        }
    )
    assert (account.input_label, account.product_label) == (
        "Exergy in with the steam",
        "Generator power",
    )
    assert account.mismatch_w == pytest.approx(0.0)


def test_block_account_uses_net_power_as_product():
    account = build_account(
        {
            "fuel_exergy_w": 10.0,
            "net_power_w": 3.5,
            "exergy_destroyed_and_lost_w": 6.5,
            "lost_work_w": 6.5,
        }
    )
    assert account.product_label == "Net power"
    assert account.lost == {}
    assert account.mismatch_w == pytest.approx(0.0)


def test_no_account_without_input_or_product():
    assert build_account({"water_exergy_gain_w": 1.0}) is None
    assert build_account({"fuel_exergy_w": float("nan"), "water_exergy_gain_w": 1.0}) is None


def test_wanted_metrics_picks_exergy_columns():
    names = ["eta_1", "fuel_exergy_w", "water_exergy_gain_w", "exergy_lost_stack_w", "sgen_w_per_k"]
    assert wanted_metrics(names) == ["fuel_exergy_w", "water_exergy_gain_w", "exergy_lost_stack_w"]


def test_boiler_with_the_exergy_split_closes_on_exergy_supplied():
    # engine.boiler_exergy_split: Ex_fuel + Ex_air - dEx_water = sum destroyed + sum lost,
    # reported as exergy_supplied_w; invented period means that close by construction.
    means = {
        "fuel_exergy_w": 23.0e6,
        "exergy_supplied_w": 23.2e6,
        "water_exergy_gain_w": 9.9e6,
        "exergy_destroyed_combustion_w": 7.1e6,
        "exergy_destroyed_heat_transfer_w": 4.9e6,
        "exergy_destroyed_unaccounted_w": -0.1e6,
        "exergy_lost_stack_thermal_w": 1.0e6,
        "exergy_lost_stack_chemical_w": 0.3e6,
        "exergy_lost_surface_w": 0.1e6,
        "exergy_lost_unburned_w": float("nan"),
        "lost_work_w": 13.3e6,
    }
    account = build_account(means)
    assert account.input_label == "Exergy supplied (fuel and air)"
    assert sum(account.destroyed.values()) == pytest.approx(11.9e6)
    assert account.destroyed["Destroyed, unaccounted (energy imbalance)"] == pytest.approx(-0.1e6)
    assert set(account.lost) == {
        "Lost with the stack gas, thermal",
        "Lost with the stack gas, chemical",
        "Lost from the casing",
    }
    assert account.mismatch_w == pytest.approx(0.0, abs=1.0)


def test_heat_engine_loses_its_rejected_heat_exergy():
    account = build_account(
        {
            "heat_input_exergy_w": 10.0,
            "work_output_w": 4.0,
            "exergy_destroyed_w": 5.0,
            "rejected_heat_exergy_w": 1.0,
        }
    )
    assert account.destroyed == {"Destroyed inside the unit": 5.0}
    assert account.lost == {"Lost with the rejected heat": 1.0}
    assert account.mismatch_w == pytest.approx(0.0)
