"""Plans with a two-pool lake: parsing, the sediment start, treatments on the right pool, outcomes."""

from __future__ import annotations

import numpy as np
import pytest
from turnback.model.clear_state import clear_threshold_kg
from turnback.model.demo import DEMO_TWO_POOL_PARAMETERS as DEMO
from turnback.model.ensemble import run_scenario
from turnback.model.plan import Plan, Scenario, ScenarioLake
from turnback.model.schedules import ConstantLoad, Inactivation, Removal, StepLoad
from turnback.model.two_pool_equilibrium import equilibria, folds
from turnback.model.validation import FieldError

LAKE = {"model": "two-pool", **DEMO.to_dict(), "volume_m3": 2.79e7, "initial_tp_ug_l": 108.34, "name": "Amberlin"}
CUT = StepLoad(420.0, 210.0, 1)


def test_lake_round_trip_and_default_sediment() -> None:
    lake = ScenarioLake.from_dict(LAKE)
    assert lake.model == "two-pool" and lake.params == DEMO
    assert ScenarioLake.from_dict(lake.to_dict()) == lake
    assert lake.initial_m_kg == pytest.approx(DEMO.sediment_balance(lake.initial_p_kg))
    given = ScenarioLake.from_dict(LAKE | {"initial_sediment_p_kg": 9000})
    assert given.initial_m_kg == 9000.0 and given.to_dict()["initial_sediment_p_kg"] == 9000.0
    one_box = {"loss_rate": 0.5, "recycling_max": 1800, "recycling_half": 2500, "recycling_exponent": 4}
    ob = ScenarioLake.from_dict(one_box | {"volume_m3": 2.79e7, "initial_tp_ug_l": 50})
    assert "model" not in ob.to_dict() and ob.initial_m_kg is None  # one-box plans print as before


@pytest.mark.parametrize(
    "change, path",
    [
        ({"burial": 0.0}, ("burial",)),
        ({"recycling_rate": 0.95}, ("recycling_rate",)),
        ({"initial_sediment_p_kg": -1}, ("initial_sediment_p_kg",)),
        ({"model": "three-pool"}, ("model",)),
        ({"loss_rate": 0.5}, ("loss_rate",)),
    ],
)
def test_bad_lakes_name_the_field(change: dict, path: tuple) -> None:
    with pytest.raises(FieldError) as err:
        ScenarioLake.from_dict(LAKE | change)
    assert err.value.path == path


def test_sediment_removal_needs_a_two_pool_lake() -> None:
    ob = ScenarioLake.from_dict(
        {"loss_rate": 0.5, "recycling_max": 1800, "recycling_half": 2500, "recycling_exponent": 4}
        | {"volume_m3": 2.79e7, "initial_tp_ug_l": 50}
    )
    scen = {"name": "x", "years": 5, "load": {"kind": "constant", "kg_per_yr": 100}}
    data = {
        "lake": ob.to_dict(),
        "scenarios": [scen | {"treatments": [{"kind": "removal", "year": 1, "kg": 5, "pool": "sediment"}]}],
    }
    with pytest.raises(FieldError) as err:
        Plan.from_dict(data)
    assert err.value.path == ("scenarios", 0, "treatments", 0, "pool")
    with pytest.raises(FieldError) as err:
        Plan.from_dict(
            data | {"scenarios": [scen | {"treatments": [{"kind": "removal", "year": 1, "kg": 5, "pool": "mud"}]}]}
        )
    assert err.value.path == ("scenarios", 0, "treatments", 0, "pool")
    assert Removal(1, 5.0).to_dict() == {"kind": "removal", "year": 1, "kg": 5.0}  # unchanged for water


def test_clear_threshold_is_the_two_pool_saddle_on_water_p() -> None:
    fs = folds(DEMO)
    mid = next(e for e in equilibria(DEMO, 400.0) if e.branch == "middle")
    assert clear_threshold_kg(DEMO, 400.0) == mid.p
    assert clear_threshold_kg(DEMO, 100.0) == fs[1].p  # below the recovery load: the recovery fold's water P
    assert clear_threshold_kg(DEMO, 600.0) == fs[0].p


def test_treatments_act_on_the_right_pool() -> None:
    lake = ScenarioLake.from_dict(LAKE)
    plain = run_scenario(lake, Scenario("cut", 40, CUT))
    alum = run_scenario(lake, Scenario("alum", 40, CUT, treatments=(Inactivation(1, 100.0, 3),)))
    dredge = run_scenario(lake, Scenario("dredge", 40, CUT, treatments=(Removal(1, 2000.0, "sediment"),)))
    water = run_scenario(lake, Scenario("water", 40, CUT, treatments=(Removal(1, 2000.0),)))
    assert plain.recovery_years_median is not None and 10 <= plain.recovery_years_median <= 20
    for r in (alum, dredge, water):
        assert r.recovery_years_median is not None and r.recovery_years_median < plain.recovery_years_median
    assert plain.sediment_median_kg is not None and dredge.sediment_median_kg is not None
    assert dredge.sediment_median_kg[1] < plain.sediment_median_kg[1] - 1000.0
    assert water.sediment_median_kg is not None
    assert water.tp_median_ug_l[1] < plain.tp_median_ug_l[1]
    assert dredge.in_lake_removal_kg == pytest.approx(2000.0)
    assert dredge.details()["sediment_p_final_median_kg"] == dredge.sediment_p_final_median_kg


def test_noisy_two_pool_ensemble_and_precaution() -> None:
    lake = ScenarioLake.from_dict(LAKE | {"initial_tp_ug_l": 30.0})
    scen = Scenario.from_dict(
        {
            "name": "noisy",
            "years": 30,
            "load": {"kind": "constant", "kg_per_yr": 350},
            "variability_cv": 0.3,
            "members": 400,
            "seed": 2,
            "precaution": {"within_years": 20, "max_percent": 10},
        }
    )
    res = run_scenario(lake, scen)
    assert 0.0 <= res.p_clear_final <= 1.0 and res.p_flip is not None
    assert res.precaution is not None and res.precaution.status == "ok"
    assert res.precaution.load_kg_per_yr is not None and 0.0 < res.precaution.load_kg_per_yr < folds(DEMO)[0].load
    again = run_scenario(lake, scen)
    assert np.array_equal(again.tp_median_ug_l, res.tp_median_ug_l)  # seeded
    const = run_scenario(lake, Scenario("hold", 10, ConstantLoad(350.0)))
    assert const.sediment_p_final_median_kg is not None
