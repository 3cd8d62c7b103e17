"""Benchmark: fit + 1000 bootstrap replicates on a 40-year record, against a naive peer in the same run.

Product: :func:`model.fit.fit_lake` on the first 40 years (1979–2018) of the
Lake Amberlin demo record: point fit from 8 starts, then 1000 residual-
bootstrap replicates, refitted together (vectorised damped Gauss–Newton,
warm-started from the point estimate and from a profile grid), with the
folds of each.

Peer: the plain way to do the same bootstrap: for each replicate, simulate
the record and refit it with a fresh 8-start
:func:`scipy.optimize.least_squares` (:func:`model.fit.fit_transitions`),
then find its folds.  The peer runs on ``PEER_REPLICATES`` replicates and
its time is **extrapolated** linearly to 1000 (it is a loop of independent
refits, so its cost is proportional to the count); the point fit is added
once.  Both use the same replicate records, so the script also reports how
far the two sets of refits differ.

Prints both times and their ratio.  Not a CI gate; never asserts a time.

The observation-error fit (state-space likelihood by the Laplace
approximation, 1000 posterior draws) is timed on the whole 45-year record,
from the invented sample file (observation SD from the samples) and from the
annual means (observation SD estimated), and printed as a ratio against the
old fit (conditional least squares and 1000 bootstrap replicates) on the same
45 years in the same run.
Run: ``.venv/bin/python -m bench.bench_fit``.
"""

from __future__ import annotations

import math
import os
import statistics
import time
from pathlib import Path

import numpy as np
from scipy.special import expit
from turnback.model.demo import DEMO_PROFILE
from turnback.model.equilibrium import folds
from turnback.model.fit import PointFit, fit_lake, fit_transitions, refit_batch
from turnback.model.io.monitoring_csv import parse_monitoring
from turnback.model.io.sample_csv import read_record

DATA = Path(__file__).resolve().parent.parent / "sample_data"
DEMO_CSV = DATA / "amberlin_monitoring.csv"
REPLICATES = 1000
PEER_REPLICATES = 60
YEARS = 40


def record() -> tuple[np.ndarray, np.ndarray]:
    s = parse_monitoring(DEMO_CSV)
    return s.p_kg(DEMO_PROFILE.volume_m3)[:YEARS], np.asarray(s.load_kg_per_yr[:YEARS])


def replicate_records(p: np.ndarray, load: np.ndarray, n: int, seed: int) -> tuple[np.ndarray, PointFit]:
    """``n`` recursive-bootstrap records from the point fit (the same scheme as the product)."""
    point = fit_transitions(p[:-1], load[1:], p[1:], p_scale=p, rng=0)
    assert point.params is not None
    res = point.residuals
    k = res.size
    pool = (res - res.mean()) * math.sqrt(k / (k - 4))
    eps = pool[np.random.default_rng(seed).integers(0, k, size=(n, k))]
    s, r, m, q = point.params.s, point.params.r, point.params.m, point.params.q
    states = np.empty((n, k + 1))
    states[:, 0] = p[0]
    cur = np.full(n, p[0])
    for t in range(k):
        cur = (cur * (1 - s) + load[t + 1] + r * expit(q * (np.log(cur) - math.log(m)))) * np.exp(eps[:, t])
        states[:, t + 1] = cur
    return states, point


def peer(states: np.ndarray, load: np.ndarray, p_scale: np.ndarray) -> tuple[float, np.ndarray]:
    t0 = time.perf_counter()
    sse = np.empty(states.shape[0])
    for i, rec in enumerate(states):
        fit = fit_transitions(rec[:-1], load[1:], rec[1:], p_scale=p_scale, rng=i, n_starts=8)
        sse[i] = fit.sse
        if fit.params is not None:
            folds(fit.params)
    return time.perf_counter() - t0, sse


def observation_error_times(runs: int = 3, draws: int = REPLICATES, warm_up: bool = True) -> dict[str, float]:
    """Median seconds of the old fit and of the new one (from samples, and from annual means) on 45 years."""
    samples = read_record(DATA / "amberlin_samples.csv", DATA / "amberlin_loads.csv")
    p = samples.p_kg(DEMO_PROFILE.volume_m3)
    load = np.asarray(samples.load_kg_per_yr)
    annual = parse_monitoring(DEMO_CSV).p_kg(DEMO_PROFILE.volume_m3)
    out: dict[str, list[float]] = {"old": [], "new, SE from samples": [], "new, SE estimated": []}
    if warm_up:
        fit_lake(p, load, replicates=200, rng=0, method="observation_error", se_log=samples.se_log)
    for k in range(runs):
        for name, kw, pk in (
            ("old", {}, annual),
            ("new, SE from samples", {"method": "observation_error", "se_log": samples.se_log}, p),
            ("new, SE estimated", {"method": "observation_error"}, annual),
        ):
            t0 = time.perf_counter()
            fit_lake(pk, load, replicates=draws, rng=k, **kw)  # type: ignore[arg-type]
            out[name].append(time.perf_counter() - t0)
    return {k: statistics.median(v) for k, v in out.items()}


def main() -> None:
    times = observation_error_times()
    print(f"Fit with 1000 draws on the 45-year Lake Amberlin demo record ({os.cpu_count()} cores), median of 3 runs")
    for name, t in times.items():
        print(f"  {name:<22} {t:6.2f} s   ratio to the old fit {t / times['old']:5.1f}x")
    print()
    p, load = record()
    # warm-up, then the median of three full runs
    fit_lake(p, load, replicates=200, rng=0)
    runs = []
    for k in range(3):
        t0 = time.perf_counter()
        res = fit_lake(p, load, replicates=REPLICATES, rng=k)
        runs.append(time.perf_counter() - t0)
    t_product = statistics.median(runs)

    t0 = time.perf_counter()
    states, point = replicate_records(p, load, PEER_REPLICATES, seed=7)
    t_point = time.perf_counter() - t0
    t_loop, sse_peer = peer(states, load, p)
    t_peer = t_point + t_loop * REPLICATES / PEER_REPLICATES

    lo, hi = point.bounds
    theta = np.tile(point.theta, (PEER_REPLICATES, 1))
    _, sse_fast, _ = refit_batch(theta, states[:, :-1], states[:, 1:], load[1:], lo, hi)
    rel = (sse_fast - sse_peer) / sse_peer

    print(f"Fit + {REPLICATES} bootstrap replicates, {YEARS}-year record (Lake Amberlin demo, {os.cpu_count()} cores)")
    print(f"  product fit_lake: median of 3 runs {t_product:.2f} s  (runs {', '.join(f'{r:.2f}' for r in runs)})")
    print(
        f"  peer (8-start least_squares per replicate): {t_loop:.2f} s for {PEER_REPLICATES} replicates, "
        f"extrapolated to {REPLICATES}: {t_peer:.1f} s"
    )
    print(f"  ratio peer / product: {t_peer / t_product:.0f}x")
    print(
        f"  same {PEER_REPLICATES} replicate records, warm-started vectorised refit vs peer: SSE relative "
        f"difference max {rel.max():+.1e}, min {rel.min():+.1e} (negative: the vectorised refit is lower)"
    )
    t, r = res.tipping_load, res.recovery_load
    print(
        f"  last product run: tipping load {t.estimate:.0f} kg/yr (90% {t.low:.0f}-{t.high:.0f}), "
        f"recovery load {r.estimate:.0f} kg/yr (90% {r.low:.0f}-{r.high:.0f}), {res.replicates_used} refits used"
    )


if __name__ == "__main__":
    main()
