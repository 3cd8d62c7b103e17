"""Where the lake is, which way it moves and how long it needs (model.outlook)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.dynamics import simulate
from turnback.model.equilibrium import equilibria, folds
from turnback.model.outlook import lake_outlook, years_to_settle
from turnback.model.params import LakeParameters

TIP, REC = folds(P)
TODAY = 420.0


def clear_at(load: float) -> float:
    return equilibria(P, load)[0].p


def turbid_at(load: float) -> float:
    return equilibria(P, load)[-1].p


def test_raising_the_load_below_the_tipping_point_reads_clear_getting_worse() -> None:
    o = lake_outlook(P, 0.97 * TIP.load, clear_at(TODAY))
    assert (o.now, o.heading, o.direction) == ("clear", "clear", "worse")
    assert o.p_target == pytest.approx(clear_at(0.97 * TIP.load))
    assert o.years is not None and o.years > 0
    assert not o.changes_state


def test_passing_the_tipping_point_reads_clear_turning_turbid() -> None:
    o = lake_outlook(P, 1.02 * TIP.load, clear_at(TODAY))
    assert (o.now, o.heading, o.direction) == ("clear", "turbid", "worse")
    assert o.changes_state


def test_cutting_from_turbid_above_the_recovery_point_stays_turbid_but_improves() -> None:
    o = lake_outlook(P, 1.05 * REC.load, turbid_at(TODAY))
    assert (o.now, o.heading, o.direction) == ("turbid", "turbid", "better")


def test_cutting_below_the_recovery_point_heads_for_clear_water() -> None:
    o = lake_outlook(P, 0.95 * REC.load, turbid_at(TODAY))
    assert (o.now, o.heading, o.direction) == ("turbid", "clear", "better")
    assert o.p_target == pytest.approx(clear_at(0.95 * REC.load))


def test_a_settled_lake_is_steady() -> None:
    o = lake_outlook(P, TODAY, clear_at(TODAY))
    assert o.direction == "steady" and o.years == 0 and o.settled


def test_years_match_the_map_itself() -> None:
    load = 0.97 * TIP.load
    p0 = clear_at(TODAY)
    target = clear_at(load)
    n = years_to_settle(P, p0, load, target)
    assert n is not None
    path = simulate(P, p0, np.full(n, load)).p
    # the n-th year is the first within 2 % of the target
    assert abs(path[-1] - target) <= 0.02 * target
    assert abs(path[-2] - target) > 0.02 * target


def test_linear_lake_settles_geometrically() -> None:
    # A lake with negligible recycling is the linear recurrence P[t+1] = P[t] + L - s P[t], whose distance to
    # P* = L/s shrinks by (1 - s) each year, so the first year within tol is
    # ceil(ln(tol P* / |P0 - P*|) / ln(1 - s)) (common practice, no source: first-order linear recurrence).
    lake = LakeParameters(loss_rate=0.3, recycling_max=1e-6, recycling_half=1000.0, recycling_exponent=2.0)
    load, p0, tol = 300.0, 50.0, 0.02
    target = load / lake.s
    expected = math.ceil(math.log(tol * target / abs(p0 - target)) / math.log(1.0 - lake.s))
    assert years_to_settle(lake, p0, load, target, settle_tol=tol) == expected
    o = lake_outlook(lake, load, p0, settle_tol=tol)
    assert o.now == "single" and o.heading == "single" and o.direction == "worse"


def test_beyond_the_longest_run_is_none() -> None:
    # just past the tipping point the lake creeps through the fold's bottleneck for a long time
    assert years_to_settle(P, clear_at(TODAY), 1.0001 * TIP.load, turbid_at(1.0001 * TIP.load), max_years=20) is None


def test_bad_tolerance_is_refused() -> None:
    with pytest.raises(ValueError, match="settle_tol"):
        years_to_settle(P, 1.0, TODAY, 2.0, settle_tol=0.0)
