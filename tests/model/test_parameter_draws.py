"""Plans under parameter uncertainty: per-draw lake states, per-member lakes in the annual map, mixture consistency."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from turnback.model.demo import DEMO_PARAMETERS, DEMO_TWO_POOL_PARAMETERS
from turnback.model.dynamics import simulate
from turnback.model.ensemble import compare_plan
from turnback.model.equilibrium import equilibria, folds
from turnback.model.parameter_draws import ParameterDraws
from turnback.model.params import LakeParameters
from turnback.model.plan import Plan
from turnback.model.validation import FieldError

A = {"loss_rate": 0.5, "recycling_max": 1800.0, "recycling_half": 2500.0, "recycling_exponent": 4.0}
B = {"loss_rate": 0.45, "recycling_max": 1700.0, "recycling_half": 2300.0, "recycling_exponent": 3.5}


def plan(draws: list[dict[str, float]] | None, members: int = 4000, **scenario: Any) -> Plan:
    lake: dict[str, Any] = A | {"volume_m3": 2.79e7, "initial_tp_ug_l": 40.0}
    if draws is not None:
        lake["parameter_draws"] = draws
    s = {
        "name": "hold",
        "years": 20,
        "load": {"kind": "constant", "kg_per_yr": 450},
        "variability_cv": 0.4,
        "members": members,
        "seed": 3,
    } | scenario
    return Plan.from_dict({"lake": lake, "scenarios": [s]})


def test_per_draw_states_agree_with_the_equilibrium_engine() -> None:
    g = np.random.default_rng(0)
    rows = np.column_stack(
        [g.uniform(0.3, 0.7, 40), g.uniform(1000, 2500, 40), g.uniform(1800, 3000, 40), g.uniform(1.5, 6, 40)]
    )
    d = ParameterDraws.from_rows(rows)
    fd = d.folds()
    assert 0 < fd.has.sum() < 40  # some draws with folds, some without
    loads = np.array([0.0, 100.0, 250.0, 400.0, 550.0, 700.0])
    sep, clear = d.separatrix_kg(loads, fd), d.clear_equilibrium_kg(loads, fd)
    for i in range(d.n):
        for j, load in enumerate(loads):
            eqs = equilibria(d.row(i), load)  # the closed-form engine is the oracle
            mids = [e.p for e in eqs if e.branch == "middle"]
            lows = [e.p for e in eqs if e.branch in ("lower", "single")]
            if mids:
                assert sep[i, j] == pytest.approx(mids[0], rel=1e-9)
            if lows:
                assert clear[i, j] == pytest.approx(lows[0], rel=1e-9, abs=1e-9)
            else:
                assert math.isnan(clear[i, j])


def test_the_annual_map_runs_one_lake_per_path() -> None:
    other = LakeParameters(loss_rate=0.45, recycling_max=1500.0, recycling_half=2300.0, recycling_exponent=3.2)
    d = ParameterDraws.from_params([DEMO_PARAMETERS, other, DEMO_PARAMETERS])
    loads = np.array([[400.0, 500.0, 600.0, 650.0]] * 3)
    noise = np.random.default_rng(1).normal(0.0, 50.0, (3, 4))
    both = simulate(d, 1200.0, loads, process_noise=noise).p
    for i, p in enumerate((DEMO_PARAMETERS, other, DEMO_PARAMETERS)):
        assert np.allclose(both[i], simulate(p, 1200.0, loads[i], process_noise=noise[i]).p, rtol=1e-13)


def test_one_draw_equal_to_the_lake_changes_nothing() -> None:
    with_draw = compare_plan(plan([A], precaution={"within_years": 20, "max_percent": 10})).results[0]
    without = compare_plan(plan(None, precaution={"within_years": 20, "max_percent": 10})).results[0]
    assert with_draw.p_flip == without.p_flip
    assert with_draw.p_clear_final == without.p_clear_final
    assert np.allclose(with_draw.tp_median_ug_l, without.tp_median_ug_l, rtol=1e-12)  # the same map, to rounding
    assert with_draw.precaution is not None and without.precaution is not None
    assert with_draw.precaution.load_kg_per_yr == pytest.approx(without.precaution.load_kg_per_yr, rel=1e-12)


def test_mixture_consistency_of_two_draws() -> None:
    # Law of total probability (common practice, no source): with members alternating between two equally likely
    # lakes, the chance of flipping is the average of the two one-lake chances, within binomial error.
    both = compare_plan(plan([A, B])).results[0]
    only_a = compare_plan(plan([A])).results[0]
    only_b = compare_plan(plan([B])).results[0]
    assert both.p_flip is not None and only_a.p_flip is not None and only_b.p_flip is not None
    mean = 0.5 * (only_a.p_flip + only_b.p_flip)
    se = math.sqrt(sum(p * (1 - p) for p in (both.p_flip, only_a.p_flip / 2 + only_b.p_flip / 2)) / 4000)
    assert abs(both.p_flip - mean) < 4.0 * se + 0.01
    assert only_a.p_flip < 0.2 < 0.8 < only_b.p_flip  # two lakes that disagree, so the check has teeth
    spread = both.p_flip_across_draws
    assert spread is not None and spread.draws == 2
    assert spread.members_per_draw_min == spread.members_per_draw_max == 2000
    assert spread.min == pytest.approx(min(only_a.p_flip, only_b.p_flip), abs=0.03)
    assert spread.max == pytest.approx(max(only_a.p_flip, only_b.p_flip), abs=0.03)
    assert "p_flip_across_draws" in both.details()


def test_precautionary_load_over_both_sources() -> None:
    def prec(draws: list[dict[str, float]]) -> float:
        r = compare_plan(plan(draws, members=2000, precaution={"within_years": 20, "max_percent": 10})).results[0]
        assert r.precaution is not None and r.precaution.status == "ok"
        assert r.precaution.standard_error_kg_per_yr is not None and r.precaution.standard_error_kg_per_yr > 0
        assert "parameter draws" in r.precaution.message
        return float(r.precaution.load_kg_per_yr or 0.0)

    a, b, both = prec([A]), prec([B]), prec([A, B])
    # With half the members on each lake, 10% overall allows at most 20% on the weaker lake: between the two.
    assert min(a, b) <= both <= max(a, b)


def test_each_member_is_judged_by_its_own_lake() -> None:
    # Lake B flips at a lower load than lake A; at 450 kg/yr without variability lake B's members start above
    # its own separatrix while lake A's stay clear.
    res = compare_plan(plan([A, B], members=10, variability_cv=0.0)).results[0]
    tip_b = folds(LakeParameters(**B))[0].load
    assert tip_b < 450.0 < folds(LakeParameters(**A))[0].load
    assert res.p_clear_final == pytest.approx(0.5)


def test_bad_draws_are_named_and_two_pool_lakes_refuse_them() -> None:
    with pytest.raises(FieldError, match=r"lake\.parameter_draws\[1\]\.recycling_half"):
        plan([A, B | {"recycling_half": -3.0}])
    with pytest.raises(FieldError, match=r"parameter_draws\[0\]"):
        plan([{"loss_rate": 0.5}])
    with pytest.raises(FieldError, match="must be a non-empty list"):
        plan([])
    two = DEMO_TWO_POOL_PARAMETERS.to_dict() | {"model": "two-pool", "volume_m3": 2.79e7, "initial_tp_ug_l": 40.0}
    with pytest.raises(FieldError, match="parameter_draws is for one-box lakes only"):
        Plan.from_dict(
            {
                "lake": two | {"parameter_draws": [A]},
                "scenarios": [{"name": "a", "years": 3, "load": {"kind": "constant", "kg_per_yr": 300}}],
            }
        )
    p = plan([A, B])
    again = Plan.from_dict(p.to_dict())
    assert again.lake.parameter_draws is not None and again.lake.parameter_draws.to_list() == [A, B]
