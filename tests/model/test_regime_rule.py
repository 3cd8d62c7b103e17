"""One regime rule for the whole product: every place that names a lake's regime agrees with it.

An irreversible lake (Carpenter, Ludwig & Brock 1999, Ecol. Appl. 9:751-771: the recovery fold at a
load <= 0) must read "irreversible" from the equilibrium engine, a plan comparison, the regime map,
the bootstrap of a fit and the command line alike; a copy of the rule that never says so fails here.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
from turnback.model.bootstrap import bootstrap_refits
from turnback.model.ensemble import compare_plan
from turnback.model.equilibrium import folds, irreversible_b, regime, regime_from_folds
from turnback.model.params import LakeParameters
from turnback.model.plan import Plan, Scenario, ScenarioLake
from turnback.model.point_fit import fit_transitions
from turnback.model.regime_map import regime_map
from turnback.model.schedules import ConstantLoad

# b = s m / r = 0.3 * 2500 / 1800 = 0.417 < b_irr(4) = 0.57 (closed form, turnback.model.equilibrium)
IRR = LakeParameters(0.3, 1800.0, 2500.0, 4.0)
HYS = LakeParameters(0.5, 1800.0, 2500.0, 4.0)  # b = 0.694: between b_irr(4) and b_c(4) = 0.84


def test_the_lakes_are_what_the_closed_form_says() -> None:
    assert IRR.to_dimensionless().b < irreversible_b(4.0) < HYS.to_dimensionless().b
    assert regime(IRR) == regime_from_folds(folds(IRR)) == "irreversible"
    assert regime(HYS) == "hysteretic"
    assert regime(LakeParameters(0.5, 1800.0, 2500.0, 1.0)) == "reversible"  # q = 1: no folds


@pytest.mark.parametrize(("params", "expected"), [(IRR, "irreversible"), (HYS, "hysteretic")])
def test_a_plan_comparison_names_the_regime(params: LakeParameters, expected: str) -> None:
    lake = ScenarioLake(params, 2.79e7, 20.0, "rule check")
    comp = compare_plan(Plan(lake, (Scenario("hold", 3, ConstantLoad(100.0)),)))
    assert comp.regime == expected


def test_the_regime_map_names_the_regime() -> None:
    grid = regime_map(IRR, "loss_rate").classify([100.0], [IRR.s])
    assert grid.regime.tolist() == ["irreversible"]


def test_bootstrap_refits_name_the_regime() -> None:
    # A record from the irreversible lake's turbid branch: every refit near it is irreversible or not.
    g = np.random.default_rng(5)
    p = [folds(IRR)[1].p * 3.0]
    loads = g.uniform(50.0, 150.0, 40)
    for t in range(39):
        p.append(p[-1] + loads[t] - IRR.s * p[-1] + IRR.r * p[-1] ** 4 / (IRR.m**4 + p[-1] ** 4))
        p[-1] *= float(np.exp(g.normal(0.0, 0.02)))
    pt = np.asarray(p)
    point = fit_transitions(pt[:-1], loads[:-1], pt[1:], rng=1)
    draws = bootstrap_refits(point, pt, loads[:-1], replicates=100, rng=2)
    for i in np.flatnonzero(draws.used):
        fs = folds(LakeParameters(*draws.params[i]))
        assert draws.regime[i] == regime_from_folds(fs)


def test_the_command_line_names_the_regime() -> None:
    out = subprocess.run(
        [
            sys.executable,
            "-m",
            "turnback",
            "analyze",
            "--loss-rate",
            "0.3",
            "--recycling-max",
            "1800",
            "--recycling-half",
            "2500",
            "--recycling-exponent",
            "4",
            "--json",
        ],
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert out.returncode == 0, out.stderr
    assert json.loads(out.stdout)["regime"] == "irreversible"
