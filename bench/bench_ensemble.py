"""Benchmark: scenario ensembles of 10,000 paths × 100 years against per-path loops, in one run.

Lake: the PLAN.json example lake (s = 0.8, r = 30 000, m = 25 000, q = 6),
constant load 8000 kg yr⁻¹ with lognormal load variability CV 0.3.

Measured in the same run:

1. Paths, end to end: draw the random numbers for all members at once,
   make the varied loads and run :func:`model.dynamics.simulate` on the whole
   ensemble — against a per-path Python loop that draws each path's
   random numbers with the same generator (so it produces the very same
   paths) and iterates the annual map in plain Python floats.
2. The annual map alone, on the same pre-drawn loads: ``simulate`` against
   the plain Python loop.
3. :func:`model.scenario.run_scenario`, everything a scenario reports
   (paths plus thresholds, percentiles, recovery and flip statistics).
4. A second peer: calling ``simulate`` once per path in a Python loop.

The loops run on 500 paths (200 for peer 4) and their times are scaled
linearly to 10,000 paths.  Goals: ensemble <= 0.1 s, ratio >= 50 ×.
Prints times, ratios and the largest difference between the ensemble and
the loop on the shared paths.  Not a CI gate; never asserts times.
Run: ``.venv/bin/python -m bench.bench_ensemble``.
"""

from __future__ import annotations

import math
import statistics
import time
from collections.abc import Callable

import numpy as np
from turnback.model.dynamics import simulate
from turnback.model.ensemble import run_scenario
from turnback.model.params import LakeParameters
from turnback.model.plan import Scenario, ScenarioLake
from turnback.model.schedules import ConstantLoad
from turnback.model.variability import lognormal_sigma

PARAMS = LakeParameters(loss_rate=0.8, recycling_max=30000.0, recycling_half=25000.0, recycling_exponent=6.0)
LAKE = ScenarioLake(PARAMS, 2.0e8, 50.0, "Lake Amberlin (fictional)")
PATHS, YEARS, LOAD, CV = 10_000, 100, 8000.0, 0.3
LOOP_PATHS, CALL_PATHS = 500, 200
SIGMA = lognormal_sigma(CV)
SCENARIO = Scenario("bench", YEARS, ConstantLoad(LOAD), variability_cv=CV, members=PATHS, seed=1)


def map_loop(p0: float, loads: list[float]) -> list[float]:
    """The annual map P + L − s P + r P^q/(m^q + P^q), kept >= 0, in plain Python (Carpenter et al. 1999)."""
    s, r, m, q = PARAMS.s, PARAMS.r, PARAMS.m, PARAMS.q
    mq = m**q
    p = p0
    path = [p]
    for load in loads:
        pq = p**q
        p = max(p + load - s * p + r * pq / (mq + pq), 0.0)
        path.append(p)
    return path


def ensemble_paths(seed: int) -> np.ndarray:
    gen = np.random.default_rng(seed)
    z = gen.standard_normal((PATHS, 1, YEARS))
    loads = np.asfortranarray(LOAD * np.exp(SIGMA * z[:, 0, :] - 0.5 * SIGMA * SIGMA))
    return simulate(PARAMS, LAKE.initial_p_kg, loads).p


def loop_paths(seed: int, n: int) -> list[list[float]]:
    gen = np.random.default_rng(seed)
    out = []
    for _ in range(n):
        z = gen.standard_normal((1, 1, YEARS))[0, 0].tolist()  # the same stream, member by member
        loads = [LOAD * math.exp(SIGMA * e - 0.5 * SIGMA * SIGMA) for e in z]
        out.append(map_loop(LAKE.initial_p_kg, loads))
    return out


def median_time(fn: Callable[[], object], repeats: int) -> float:
    runs = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        runs.append(time.perf_counter() - t0)
    return statistics.median(runs)


def main() -> None:
    # 1. paths, end to end
    ensemble_paths(0)
    t_paths = median_time(lambda: ensemble_paths(1), 7)
    t0 = time.perf_counter()
    peer = loop_paths(1, LOOP_PATHS)
    t_loop_paths = (time.perf_counter() - t0) * PATHS / LOOP_PATHS
    diff = float(np.max(np.abs(ensemble_paths(1)[:LOOP_PATHS] - np.array(peer))))

    # 2. the map alone on the same loads
    z = np.random.default_rng(2).standard_normal((PATHS, YEARS))
    loads = np.asfortranarray(LOAD * np.exp(SIGMA * z - 0.5 * SIGMA * SIGMA))
    p0 = LAKE.initial_p_kg
    t_map = median_time(lambda: simulate(PARAMS, p0, loads), 7)
    rows = loads[:LOOP_PATHS].tolist()
    t0 = time.perf_counter()
    for row in rows:
        map_loop(p0, row)
    t_loop_map = (time.perf_counter() - t0) * PATHS / LOOP_PATHS

    # 3. a whole scenario
    run_scenario(LAKE, SCENARIO)
    t_scenario = median_time(lambda: run_scenario(LAKE, SCENARIO), 7)

    # 4. simulate called once per path
    t0 = time.perf_counter()
    for i in range(CALL_PATHS):
        simulate(PARAMS, p0, loads[i])
    t_calls = (time.perf_counter() - t0) * PATHS / CALL_PATHS

    print(f"Scenario ensemble, {PATHS:,} paths × {YEARS} years (load CV {CV}), against per-path loops")
    print(f"  loops timed on {LOOP_PATHS} paths ({CALL_PATHS} for per-path simulate) and scaled to {PATHS:,}")
    print(
        f"1 paths end to end  ensemble {t_paths * 1e3:7.1f} ms | Python loop {t_loop_paths * 1e3:8.1f} ms "
        f"| ratio {t_loop_paths / t_paths:6.1f} x   (same paths: largest difference {diff:.1e} kg)"
    )
    print(
        f"2 annual map alone  simulate {t_map * 1e3:7.1f} ms | Python loop {t_loop_map * 1e3:8.1f} ms "
        f"| ratio {t_loop_map / t_map:6.1f} x"
    )
    print(
        f"3 run_scenario      all outcomes {t_scenario * 1e3:7.1f} ms (goal <= 100 ms) "
        f"| against the loop of 1: ratio {t_loop_paths / t_scenario:6.1f} x"
    )
    print(f"4 per-path simulate {t_calls * 1e3:8.1f} ms | ratio to the ensemble {t_calls / t_paths:6.1f} x")
    print("goal: ratio >= 50 x against the per-path Python loop")


if __name__ == "__main__":
    main()
