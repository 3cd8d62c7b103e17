"""The store codec's lake comparison, and where the plans view reads a model error."""

from __future__ import annotations

import pytest
from turnback.app.stores import lake_to_store, same_lake
from turnback.app.views.lake.callbacks import field_values
from turnback.app.views.lake.settings import check_settings
from turnback.app.views.plans.errors import field_of_error, relabel, scenario_words
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.demo import DEMO_PROFILE as PROF
from turnback.model.params import LakeParameters, LakeProfile
from turnback.model.plan import Plan, Scenario, ScenarioLake
from turnback.model.schedules import ConstantLoad, LinearCut


def test_a_lake_read_back_from_the_settings_fields_is_the_same_lake() -> None:
    # the fields show six significant digits; the lake they give differs from the stored one by that rounding
    params = LakeParameters(0.512345678, 1812.3456789, 2500.1234567, 4.0)
    profile = LakeProfile("Digits", 6.23456789, 2.7912345678e7, 420.123456789)
    lake = lake_to_store(params, profile)
    back, _ = check_settings(field_values(lake), profile.name)
    assert back is not None and back != lake
    assert same_lake(back, lake)
    moved = lake_to_store(LakeParameters(params.loss_rate * (1 + 1e-4), params.r, params.m, params.q), profile)
    assert not same_lake(moved, lake)


def test_same_lake_compares_scenario_lakes_by_their_numbers_not_their_names() -> None:
    a = ScenarioLake(P, PROF.volume_m3, 30.0, name="one")
    assert same_lake(a.to_dict(), ScenarioLake(P, PROF.volume_m3, 30.0, name="two").to_dict())
    assert not same_lake(a.to_dict(), ScenarioLake(P, PROF.volume_m3, 30.01, name="one").to_dict())


def model_error(build: object) -> ValueError:
    with pytest.raises(ValueError) as info:
        build()  # type: ignore[operator]
    return info.value


def test_field_of_error_reads_the_models_field_path() -> None:
    exc = model_error(lambda: LinearCut(400.0, 120.0, 10))
    path, reason = field_of_error(exc)
    assert path == ("percent",) and str(exc) == f"percent {reason}"
    assert relabel(exc, {"percent": "Cut"}) == f"Cut {reason}"
    lake = ScenarioLake(P, PROF.volume_m3, 30.0)
    bad = Scenario("late", 5, ConstantLoad(400.0), members=1)
    exc = model_error(lambda: Plan(lake, (Scenario("ok", 5, ConstantLoad(400.0)), bad, bad)))
    path, reason = field_of_error(exc)
    assert path[:3] == ("scenarios", 2, "name")
    assert scenario_words(exc, [bad, bad, bad]).startswith("Scenario 'late': name ")
    assert field_of_error("'3O' is not a number") == ((), "'3O' is not a number")
