"""The trust summary of a fit and the state a fitted lake starts in (model.fit_trust)."""

from __future__ import annotations

import numpy as np
import pytest
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.equilibrium import equilibria, folds
from turnback.model.fit import fit_lake
from turnback.model.fit_trust import FittedStart, fit_trust, fitted_start
from turnback.model.point_fit import ParameterEstimate, ResidualDiagnostics

TIP, REC = folds(P)
MID = 0.5 * (TIP.load + REC.load)


def test_a_clear_record_starts_on_the_clear_branch_even_above_the_separatrix() -> None:
    low, mid, _high = equilibria(P, MID)
    start = fitted_start(P, MID, 1.1 * mid.p, "clear")  # last observation on the turbid side of the fitted curve
    assert start == FittedStart(low.p, "clear", False)


def test_a_turbid_record_starts_on_the_turbid_branch() -> None:
    low, _, high = equilibria(P, MID)
    assert fitted_start(P, MID, 0.5 * low.p, "turbid") == FittedStart(high.p, "turbid", False)


def test_a_record_with_both_states_starts_in_the_basin_of_its_last_year() -> None:
    _low, mid, high = equilibria(P, MID)
    assert fitted_start(P, MID, 0.9 * mid.p, "both").state == "clear"
    assert fitted_start(P, MID, 1.1 * mid.p, "both") == FittedStart(high.p, "turbid", False)


def test_a_fit_that_cannot_hold_the_recorded_state_contradicts_it() -> None:
    start = fitted_start(P, 1.2 * TIP.load, 900.0, "clear")  # no clear state above the tipping load
    assert start.contradicts and start.p == 900.0


def est(at_bound: bool = False) -> tuple[ParameterEstimate, ...]:
    return tuple(
        ParameterEstimate(n, 1.0, None, "", at_bound and n == "recycling_exponent")
        for n in ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")
    )


def diag(lag1: float, n: int = 25) -> ResidualDiagnostics:
    return ResidualDiagnostics(n=n, sd=0.1, lag1_autocorrelation=lag1, shapiro_w=0.99, shapiro_p=0.5)


GOOD_START = FittedStart(1.0, "clear", False)


def test_levels() -> None:
    assert fit_trust(est(), diag(0.0), "both", 0.9, GOOD_START).level == "good"
    one = fit_trust(est(), diag(0.0), "clear", 0.9, GOOD_START)
    assert one.level == "limited" and [c.key for c in one.failed] == ["one_state"]
    many = fit_trust(est(True), diag(0.6), "clear", 0.1, GOOD_START)
    assert many.level == "poor"
    assert [c.key for c in many.failed] == ["at_bound", "one_state", "autocorrelation", "few_folds"]
    assert many.failed[0].names == ("recycling_exponent",)
    assert fit_trust(est(), diag(0.0), "both", 0.9, FittedStart(1.0, "clear", True)).level == "poor"
    blind = (*est()[:3], ParameterEstimate("recycling_exponent", 19.9, None, "", False, identified=False))
    assert fit_trust(blind, diag(0.0), "both", 0.9, GOOD_START).failed[0].names == ("recycling_exponent",)


def test_autocorrelation_limit_is_two_over_root_n() -> None:
    # 2/sqrt(n): the usual rough bound on a lag-1 autocorrelation of independent errors (common practice, no source)
    assert fit_trust(est(), diag(0.39, n=25), "both", 1.0, GOOD_START).level == "good"
    check = fit_trust(est(), diag(0.41, n=25), "both", 1.0, GOOD_START).failed[0]
    assert check.key == "autocorrelation" and check.limit == pytest.approx(0.4)


@pytest.mark.slow
def test_a_short_clear_record_is_read_clear() -> None:
    # ten years of a clear lake, TP 25-28 ug/L at loads near 400 kg/yr: the record shows one state only
    g = np.random.default_rng(3)
    tp = 25.0 + 3.0 * g.random(10)
    load = 400.0 + 20.0 * g.standard_normal(10)
    p = tp * 2.79e7 / 1e6
    res = fit_lake(p, load, replicates=200, rng=1)
    assert res.side == "clear"
    assert res.params is not None
    start = fitted_start(res.params, float(load[-1]), float(p[-1]), res.side)
    assert start.state in ("clear", "single") or start.contradicts
