"""PELT with a normal mean-shift cost: exact against exhaustive search and plain optimal partitioning."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from turnback.model.change_points import mad_sd_from_differences, mbic_penalty, pelt_mean_shift, segment_cost


def _exhaustive(y: np.ndarray, beta: float, sd: float, h: int) -> tuple[float, tuple[int, ...]]:
    """Best segmentation by trying every set of change points (the objective of Killick et al. 2012, eq. 2)."""
    n = y.size
    best: tuple[float, tuple[int, ...]] = (math.inf, ())
    for k in range(n):
        for cps in itertools.combinations(range(1, n), k):
            bounds = (0, *cps, n)
            if any(b - a < h for a, b in itertools.pairwise(bounds)):
                continue
            c = sum(segment_cost(y[a:b], sd) for a, b in itertools.pairwise(bounds)) + beta * k
            if c < best[0] - 1e-9:
                best = (c, tuple(cps))
    return best


def _optimal_partitioning(y: np.ndarray, beta: float, sd: float, h: int) -> tuple[float, tuple[int, ...]]:
    """Optimal partitioning without pruning (Jackson et al. 2005), O(n²)."""
    n = y.size
    f = np.full(n + 1, math.inf)
    f[0] = -beta
    last = np.zeros(n + 1, dtype=int)
    for t in range(h, n + 1):
        for tau in range(0, t - h + 1):
            if not math.isfinite(f[tau]):
                continue
            v = f[tau] + segment_cost(y[tau:t], sd) + beta
            if v < f[t]:
                f[t], last[t] = v, tau
    cps = []
    t = n
    while t > 0:
        t = int(last[t])
        if t > 0:
            cps.append(t)
    return float(f[n]), tuple(reversed(cps))


def test_pelt_finds_the_exhaustive_optimum() -> None:
    # Exhaustive search over all segmentations: PELT is exact (Killick, Fearnhead & Eckley 2012, Theorem 3.2).
    rng = np.random.default_rng(0)
    checked = 0
    for _ in range(80):
        n = int(rng.integers(3, 12))
        y = rng.normal(size=n) + np.repeat(rng.normal(0.0, 3.0, 4), 3)[:n]
        h = int(rng.integers(1, 4))
        beta = float(rng.uniform(0.0, 8.0))
        if n < h:
            continue
        got = pelt_mean_shift(y, penalty=beta, sd=1.0, min_size=h)
        cost, cps = _exhaustive(y, beta, 1.0, h)
        assert got.cost == pytest.approx(cost, abs=1e-8)
        assert got.change_points == cps
        checked += 1
    assert checked > 60


def test_pelt_with_a_minimum_size_equals_optimal_partitioning_on_many_short_series() -> None:
    # Unpruned optimal partitioning (Jackson et al. 2005) is exact.  With a minimum segment size a candidate may
    # only be pruned once the pruning point can itself end a segment; pruning at once loses the optimum in about
    # 2 % of these cases, so 400 of them catch it.
    rng = np.random.default_rng(11)
    for _ in range(400):
        n = int(rng.integers(4, 30))
        h = int(rng.integers(2, 6))
        if n < h:
            continue
        y = rng.normal(size=n) * rng.uniform(0.2, 3.0)
        beta = float(rng.uniform(0.0, 10.0))
        got = pelt_mean_shift(y, penalty=beta, sd=1.0, min_size=h)
        cost, cps = _optimal_partitioning(y, beta, 1.0, h)
        assert got.cost == pytest.approx(cost, abs=1e-9)
        assert got.change_points == cps


@pytest.mark.parametrize("h", [1, 3, 5])
def test_pelt_equals_unpruned_optimal_partitioning_and_prunes(h: int) -> None:
    rng = np.random.default_rng(h)
    y = np.repeat(rng.normal(0.0, 2.0, 12), 25) + rng.normal(size=300)
    got = pelt_mean_shift(y, sd=1.0, min_size=h)
    cost, cps = _optimal_partitioning(y, mbic_penalty(300), 1.0, h)
    assert got.cost == pytest.approx(cost, rel=1e-12)
    assert got.change_points == cps
    assert got.candidates_evaluated < 0.5 * 300 * 301 / 2  # pruning did work


def test_clean_step_is_found_where_it_is() -> None:
    rng = np.random.default_rng(3)
    y = np.r_[np.zeros(30), np.full(25, 2.0)] + rng.normal(0.0, 0.3, 55)
    res = pelt_mean_shift(y)
    assert res.change_points == (30,)
    assert res.means[0] == pytest.approx(np.mean(y[:30]))
    assert res.ends == (30, 55) and res.starts == (0, 30)
    assert res.penalty == pytest.approx(3.0 * math.log(55))


def test_noise_alone_rarely_splits() -> None:
    rng = np.random.default_rng(4)
    split = sum(len(pelt_mean_shift(rng.normal(size=50)).change_points) > 0 for _ in range(50))
    assert split <= 5  # modified BIC penalty 3 ln n (Zhang & Siegmund 2007): false alarms are rare


def test_mad_scale_of_differences() -> None:
    # For iid normal noise the MAD of the differences / (sqrt 2 * 0.6745) estimates sigma (common practice, no source);
    # a few large steps barely move it.
    rng = np.random.default_rng(5)
    y = rng.normal(0.0, 0.7, 4000) + np.repeat([0.0, 5.0, -3.0, 2.0], 1000)
    assert mad_sd_from_differences(y) == pytest.approx(0.7, rel=0.05)
    assert mad_sd_from_differences([1.0]) == 0.0


def test_constant_series_is_one_segment() -> None:
    res = pelt_mean_shift(np.full(20, 3.0))
    assert res.change_points == () and res.means == (3.0,)


@pytest.mark.parametrize(
    "x, kwargs, fragment",
    [
        ([], {}, "not empty"),
        ([1.0, math.nan, 2.0], {}, "finite"),
        (np.ones((2, 3)), {}, "one-dimensional"),
        ([1.0, 2.0, 3.0], {"min_size": 0}, "min_size"),
        ([1.0, 2.0, 3.0], {"min_size": 4}, "fewer than the minimum"),
        ([1.0, 2.0, 3.0], {"penalty": -1.0}, "penalty"),
        ([1.0, 2.0, 3.0], {"sd": 0.0}, "sd must be"),
    ],
)
def test_bad_input(x: object, kwargs: dict, fragment: str) -> None:
    with pytest.raises(ValueError, match=fragment):
        pelt_mean_shift(x, **kwargs)  # type: ignore[arg-type]
