"""Benchmark: the two-pool lake, analysis and ensemble, against peers measured in the same run.

Lake: the two-pool demo lake (:data:`turnback.model.demo.DEMO_TWO_POOL_PARAMETERS`).

1. Analysis (2000-point curve, folds, regime, equilibria at one load) from
   the closed form, against the independent route: pseudo-arclength
   continuation of the two-state system over the same load range
   (:func:`turnback.model.continuation.continue_equilibria`).  Goal: the
   analysis within 2 ms.
2. A 10,000-member × 100-year ensemble with lognormal load variability (CV
   0.3), :func:`turnback.model.dynamics.simulate` on the whole ensemble,
   against a per-path Python loop of the two-pool annual map on the same
   loads (500 paths, scaled to 10,000).  Goals: ensemble within 0.2 s and at
   least 20 × the loop.

Prints times, ratios and the largest difference between the ensemble and the
loop on the shared paths.  Not a CI gate; never asserts times.
Run: ``.venv/bin/python -m bench.bench_two_pool``.
"""

from __future__ import annotations

import math
import statistics
import time
from collections.abc import Callable

import numpy as np
from turnback.model.continuation import continue_equilibria, two_pool_system
from turnback.model.demo import DEMO_TWO_POOL_PARAMETERS as P
from turnback.model.dynamics import simulate
from turnback.model.two_pool_equilibrium import analyze_two_pool, equilibria, folds

PATHS, YEARS, LOAD, CV = 10_000, 100, 380.0, 0.3
LOOP_PATHS = 500
SIGMA = math.sqrt(math.log(1.0 + CV * CV))


def median_time(fn: Callable[[], object], repeats: int) -> float:
    runs = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        runs.append(time.perf_counter() - t0)
    return statistics.median(runs)


def analysis() -> None:
    analyze_two_pool(P, load=420.0, n_points=2000)


def continuation_peer() -> int:
    fs = folds(P)
    rhs, jx, jl = two_pool_system(P)
    p0 = 1e-3 * P.m
    res = continue_equilibria(
        rhs,
        jx,
        jl,
        np.array([p0, P.sediment_balance(p0)]),
        float(P.load_at(p0)),
        (0.0, 2.0 * fs[0].load),
        scale=(np.array([P.m, 5.0 * P.m]), 2.0 * fs[0].load),
        domain=lambda x: bool(x[0] > 0.0),
    )
    return len(res.load)


def map_loop(p0: float, m0: float, loads: list[float]) -> list[float]:
    """The two-pool annual map in plain Python floats (Carpenter 2005 form; both pools kept >= 0)."""
    s, h, b, r, m, q = P.s, P.h, P.b, P.r, P.m, P.q
    mq = m**q
    p, msed = p0, m0
    path = [p]
    for load in loads:
        pq = p**q
        flux = r * msed * pq / (mq + pq)
        p, msed = max(p + load - (s + h) * p + flux, 0.0), max(msed + s * p - b * msed - flux, 0.0)
        path.append(p)
    return path


def main() -> None:
    for _ in range(20):
        analysis()
    t_analysis = median_time(analysis, 200)
    t_peer = median_time(continuation_peer, 5)
    n_cont = continuation_peer()

    start = equilibria(P, LOAD)[-1]
    z = np.random.default_rng(1).standard_normal((PATHS, YEARS))
    loads = np.asfortranarray(LOAD * np.exp(SIGMA * z - 0.5 * SIGMA * SIGMA))
    simulate(P, start.p, loads, m0=start.m)
    t_ens = median_time(lambda: simulate(P, start.p, loads, m0=start.m), 7)
    rows = loads[:LOOP_PATHS].tolist()
    t0 = time.perf_counter()
    peer = [map_loop(start.p, start.m, row) for row in rows]
    t_loop = (time.perf_counter() - t0) * PATHS / LOOP_PATHS
    diff = float(np.max(np.abs(simulate(P, start.p, loads[:LOOP_PATHS], m0=start.m).p - np.array(peer))))

    print("Two-pool lake (demo), measured in one run")
    print(
        f"1 analysis (2000-point curve, folds, regime, equilibria)  {t_analysis * 1e3:7.3f} ms (goal <= 2 ms) "
        f"| continuation of the same curve ({n_cont} points) {t_peer * 1e3:8.1f} ms "
        f"| ratio {t_peer / t_analysis:6.0f} x"
    )
    print(
        f"2 ensemble {PATHS:,} x {YEARS} years  simulate {t_ens * 1e3:7.1f} ms (goal <= 200 ms) "
        f"| Python loop {t_loop * 1e3:8.1f} ms (timed on {LOOP_PATHS} paths) | ratio {t_loop / t_ens:6.1f} x "
        f"(goal >= 20 x)   largest difference {diff:.1e} kg"
    )


if __name__ == "__main__":
    main()
