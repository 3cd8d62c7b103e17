"""Benchmark: the equilibrium engine against a brute-force peer, in one run.

Engine: full analysis (curve of 2000 points, folds, regime, equilibria at
one load) of the demo lake.

Peer: scipy ``solve_ivp`` run to steady state from a low and a high start at
each of 200 loads; the tipping (recovery) load is read off as the first load
where the low (high) start lands on the other branch.

Prints both times, their ratio and the peer's fold error.  Not a CI gate.
Run: ``.venv/bin/python -m bench.bench_engine``.
"""

from __future__ import annotations

import statistics
import time

import numpy as np
from scipy.integrate import solve_ivp
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.equilibrium import analyze, folds


def engine_once() -> None:
    analyze(P, load=420.0, n_points=2000)


def peer(loads: np.ndarray) -> tuple[float, float]:
    t_end = 60.0 / P.s  # sixty e-folding times of the loss term: steady to well below 1e-12
    low_end, high_end = [], []
    for load in loads:
        for p0, out in ((0.0, low_end), (4.0 * P.m, high_end)):
            sol = solve_ivp(P.rate, (0.0, t_end), [p0], args=(load,), rtol=1e-8, atol=1e-6)
            out.append(sol.y[0, -1])
    tip, rec = folds(P)
    low_end_a, high_end_a = np.array(low_end), np.array(high_end)
    jumped = loads[low_end_a > tip.p]
    fell = loads[high_end_a < rec.p]
    tip_est = float(jumped[0]) if jumped.size else float("nan")
    rec_est = float(fell[-1]) if fell.size else float("nan")
    return tip_est, rec_est


def main() -> None:
    for _ in range(20):
        engine_once()
    runs = []
    for _ in range(200):
        t0 = time.perf_counter()
        engine_once()
        runs.append(time.perf_counter() - t0)
    t_engine = statistics.median(runs)
    tip, rec = folds(P)
    loads = np.linspace(0.0, 2.0 * tip.load, 200)
    t0 = time.perf_counter()
    tip_est, rec_est = peer(loads)
    t_peer = time.perf_counter() - t0
    print("Equilibrium engine vs brute-force solve_ivp peer (demo lake)")
    print(f"  engine full analysis (2000-point curve, folds, regime, equilibria): median {t_engine * 1e3:.3f} ms")
    print(f"  peer: solve_ivp to steady state, 2 starts x 200 loads:              {t_peer * 1e3:.1f} ms")
    print(f"  ratio peer / engine: {t_peer / t_engine:,.0f}x")
    print(f"  peer tipping load {tip_est:.3f} vs exact {tip.load:.6f} kg/yr: error {abs(tip_est - tip.load):.3f}")
    print(f"  peer recovery load {rec_est:.3f} vs exact {rec.load:.6f} kg/yr: error {abs(rec_est - rec.load):.3f}")
    spacing = loads[1] - loads[0]
    print(f"  (the peer is limited by its grid spacing, {spacing:.3f} kg/yr, and by slow convergence near a fold)")


if __name__ == "__main__":
    main()
