"""The dashboard's two-pool lake without a browser: store, checks, settings, history, readout, plans, report."""

from __future__ import annotations

import json

import numpy as np
import pytest
from turnback.app import ids
from turnback.app.report import build_report_html
from turnback.app.store_checks import StoreError, check_store
from turnback.app.stores import comparison_to_store, lake_from_store, lake_key, lake_to_store, new_history, same_lake
from turnback.app.views.lake import callbacks as lake_cb
from turnback.app.views.lake.figures import TIME_SEDIMENT, time_figure
from turnback.app.views.lake.history import advance, appended, from_tail, last_change, restart, tail_of
from turnback.app.views.lake.settings import check_model_settings
from turnback.app.views.plans.both_models import other_lake, side_by_side
from turnback.app.views.plans.figures import outcome_table
from turnback.app.views.plans.readout import plan_lake
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE, DEMO_TWO_POOL_PARAMETERS
from turnback.model.dynamics import simulate
from turnback.model.ensemble import compare_plan
from turnback.model.plan import Plan, Scenario
from turnback.model.schedules import ConstantLoad
from turnback.model.two_pool import TwoPoolParameters

TWO = DEMO_TWO_POOL_PARAMETERS
LAKE = lake_to_store(TWO, DEMO_PROFILE)
ONE = lake_to_store(DEMO_PARAMETERS, DEMO_PROFILE)
PROFILE_TEXT = {"area_km2": "6.2", "mean_depth_m": "4.5", "load_kg_yr": "420"}
ONE_TEXT = {"loss_rate": "0.5", "recycling_max": "1800", "recycling_half": "2500", "recycling_exponent": "4"}
POOL_TEXT = {k: f"{v:g}" for k, v in TWO.to_dict().items()}


def test_store_round_trip_and_one_box_unchanged() -> None:
    assert "model" not in ONE  # one-box lakes exactly as before
    assert LAKE["model"] == "two-pool"
    params, _ = lake_from_store(json.loads(json.dumps(LAKE)))
    assert params == TWO
    assert lake_key(LAKE) != lake_key(ONE) and not same_lake(LAKE, ONE)
    check_store(ids.LAKE_STORE, LAKE)
    check_store(ids.LAKE_STORE, ONE)


@pytest.mark.parametrize(
    "bad",
    [
        LAKE | {"model": "three-pool"},
        ONE | {"model": "one-box"},
        LAKE | {"params": TWO.to_dict() | {"outflow": 0.9}},  # s + h > 1: the map cannot run it
        ONE | {"start": {"year": 0, "p": 1.0, "m": 5.0}},  # sediment for a one-box lake
        LAKE | {"params": DEMO_PARAMETERS.to_dict()},
    ],
)
def test_bad_lakes_are_refused(bad: dict) -> None:
    with pytest.raises(StoreError):
        check_store(ids.LAKE_STORE, bad)


def test_settings_choose_the_model_and_keep_the_last_valid_lake() -> None:
    lake, _, pool = check_model_settings("two-pool", PROFILE_TEXT, POOL_TEXT, DEMO_PROFILE.name)
    assert lake is not None and lake_from_store(lake)[0] == TWO and not any(pool.values())
    lake, _, pool = check_model_settings("two-pool", PROFILE_TEXT, POOL_TEXT | {"burial": "0.9"}, "x")
    assert lake is None and "Burial + recycling_rate" in pool["recycling_rate"]
    lake, _, pool = check_model_settings("two-pool", PROFILE_TEXT, POOL_TEXT | {"sedimentation": "abc"}, "x")
    assert lake is None and "not a number" in pool["sedimentation"]
    out = lake_cb.on_settings(PROFILE_TEXT | ONE_TEXT, LAKE, POOL_TEXT | {"outflow": "-1"}, "two-pool")
    assert out["lake"] is lake_cb.no_update and out["pool_messages"]["outflow"]
    assert out["status"].startswith("Not applied")
    # switching the model back gives the one-box lake of the one-box fields
    back = lake_cb.on_settings(PROFILE_TEXT | ONE_TEXT, LAKE, POOL_TEXT, "one-box")
    assert lake_from_store(back["lake"])[0] == DEMO_PARAMETERS


def test_two_pool_fields_do_not_overwrite_the_one_box_fields() -> None:
    fields = lake_cb.field_values(LAKE)
    assert all(fields[f] is lake_cb.no_update for f in ONE_TEXT)
    assert lake_cb.pool_field_values(LAKE)["burial"] == "0.06"


def test_history_carries_the_sediment_through_the_tail() -> None:
    h = new_history(LAKE)
    check_store(ids.HISTORY_STORE, h)
    p0, m0 = h["p"][0], h["m"][0]
    h2 = advance(h, TWO, 210.0, 20)
    traj = simulate(TWO, p0, np.full(20, 210.0), m0=m0)
    assert traj.m is not None
    np.testing.assert_allclose(h2["m"][-20:], traj.m[1:])
    change = last_change(h2, TWO)
    assert change is not None and change["year"] == 0 and change["lag"] is not None
    tail = tail_of(h2, change)
    check_store(ids.HISTORY_TAIL, tail)
    short = advance(from_tail(tail), TWO, 210.0, 5)
    added = appended(short)
    whole = advance(h2, TWO, 210.0, 5)
    np.testing.assert_allclose(added["m"], whole["m"][-5:])
    assert restart(whole)["m"] == [whole["m"][-1]]
    with pytest.raises(StoreError):
        check_store(ids.HISTORY_TAIL, tail | {"m": -1.0})


def test_readout_and_time_panel_show_water_and_mud() -> None:
    h = advance(new_history(LAKE), TWO, 210.0, 5)
    tail = tail_of(h, last_change(h, TWO))
    out = lake_cb.on_history(tail, [], LAKE, None)
    text = json.dumps(out["readout"], default=str)
    assert ids.STATE_SEDIMENT in text
    assert out["lag"].startswith("Since the external P load changed in year 0: clear water comes after")
    fig = time_figure(h, DEMO_PROFILE)
    assert list(fig.data[TIME_SEDIMENT].y) == pytest.approx(h["m"])
    one = time_figure(new_history(ONE), DEMO_PROFILE)
    assert len(one.data[TIME_SEDIMENT].y) == 0


def test_plans_both_models_and_report() -> None:
    history = new_history(LAKE)
    lake = plan_lake(LAKE, history)
    assert lake.initial_sediment_p_kg == pytest.approx(history["m"][0])
    scenario = Scenario("Cut by half", 30, ConstantLoad(210.0), members=10, seed=1)
    comp = compare_plan(Plan(lake, (scenario,)), sample_paths=0)
    other, why = other_lake(lake, PROFILE_TEXT | ONE_TEXT, {})
    assert other is not None and why == "" and other.params == DEMO_PARAMETERS
    comp1 = compare_plan(Plan(other, (scenario,)), sample_paths=0)
    rows = side_by_side(outcome_table(comp.results), comp.results, comp1.results, "two-pool", False)
    lag = comp.results[0].recovery_years_median - comp1.results[0].recovery_years_median  # type: ignore[operator]
    assert rows[0]["lag_years"] == pytest.approx(lag) and rows[1]["lag_years"] is None
    html = build_report_html(comp, source="a test")
    assert "Burial b" in html and "two-pool" in html and "Dimensionless" not in html
    data = json.loads(json.dumps(comparison_to_store(comp)))
    check_store(ids.PLAN_RESULTS_STORE, data)
    assert not hasattr(TwoPoolParameters, "to_dimensionless")
