"""Coverage study: do the 90 % fold intervals cover the true tipping and recovery loads 90 % of the time?

Records are simulated from a known lake (the demo lake's parameters,
:data:`turnback.model.demo.DEMO_PARAMETERS`: tipping load 544, recovery load
285 kg/yr) with the annual map, lognormal process noise (SD 0.08 on the log
scale), lognormal load noise (SD 0.12; the loads are known to the fit) and,
in the conditions with observation noise, Gaussian observation noise on the
log annual mean with an SD drawn for each record from 0.1–0.3.  Each record
is 40–60 years long and its load plan takes the lake over the tipping load,
holds it turbid, cuts the load below the recovery load and lets it back up,
so the true lake visits both states (a record whose true states spend fewer
than 3 years on either branch is drawn again).

Conditions (rows of the table):

* **no observation noise** — the annual TP is the lake state;
* **observation noise, SE known** — as a sample file gives it: the fit is told
  each year's observation SD (the new fit uses it; the old fit cannot);
* **observation noise, SE estimated** — annual means only: the new fit
  estimates one observation SD.

Fits (columns): the old fit (conditional least squares, residual bootstrap)
and the new one (state-space fit with observation error, posterior draws),
each with ``DRAWS`` replicates or draws.  A record counts as covered for a
fold when the reported 90 % band contains the true fold load; a band the fit
cannot give counts as not covered.  The binomial SD of a 90 % coverage over
200 records is 2.1 %.

Run: ``.venv/bin/python -m bench.bench_coverage [--records 200] [--draws 1000] [--workers 2]``
(about half an hour on 2 cores with the defaults).  Prints the table (and the
run time of each fit, as a ratio new/old); never asserts.
"""

from __future__ import annotations

import argparse
import math
import os
import time
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass

import numpy as np
from turnback.model.demo import DEMO_PARAMETERS as TRUE
from turnback.model.dynamics import annual_step
from turnback.model.equilibrium import equilibria, folds
from turnback.model.fit import fit_lake

TIP, REC = folds(TRUE)
PROCESS_SD = 0.08
LOAD_SD = 0.12
OBS_SD = (0.1, 0.3)
MIN_BRANCH_YEARS = 3
#: the load plan's shape over a record (fractions of its length, loads in kg/yr)
SHAPE_T = np.array([0.0, 0.13, 0.31, 0.47, 0.6, 0.8, 1.0])
SHAPE_L = np.array([300.0, 300.0, 800.0, 760.0, 380.0, 120.0, 420.0])
CONDITIONS = ("no observation noise", "observation noise, SE known", "observation noise, SE estimated")


@dataclass(frozen=True)
class Record:
    p_true: np.ndarray
    p_obs: np.ndarray
    load: np.ndarray
    tau: float


def plan(n: int) -> np.ndarray:
    """The load plan for an ``n``-year record [kg/yr]: up past the tipping load, down below the recovery load."""
    t = np.linspace(0.0, 1.0, n)
    return np.interp(t, SHAPE_T, SHAPE_L)


def simulate(seed: int, observation_noise: bool) -> Record:
    """One record that visits both states (drawn again until it does)."""
    g = np.random.default_rng(seed)
    while True:
        n = int(g.integers(40, 61))
        load = plan(n) * np.exp(g.normal(0.0, LOAD_SD, n))
        p = np.empty(n)
        p[0] = equilibria(TRUE, load[0])[0].p
        for t in range(1, n):
            p[t] = float(annual_step(TRUE, p[t - 1], load[t])) * math.exp(g.normal(0.0, PROCESS_SD))
        tau = float(g.uniform(*OBS_SD))
        obs = p * np.exp(g.normal(0.0, tau, n)) if observation_noise else p.copy()
        if np.sum(p < TIP.p) >= MIN_BRANCH_YEARS and np.sum(p > REC.p) >= MIN_BRANCH_YEARS:
            return Record(p, obs, load, tau if observation_noise else 0.0)


def one(args: tuple[int, int]) -> dict[str, tuple[bool, bool, float]]:
    """Coverage of both folds for one record under every condition and fit."""
    k, draws = args
    out: dict[str, tuple[bool, bool, float]] = {}
    for ci, cond in enumerate(CONDITIONS):
        rec = simulate(10_000 * ci + k if ci < 2 else 10_000 + k, observation_noise=ci > 0)
        for fit in ("old", "new"):
            if fit == "old" and ci == 2:
                continue  # the old fit does not use the SE: the same as with SE known
            t0 = time.perf_counter()
            kw: dict[str, object] = {"replicates": draws, "rng": k}
            if fit == "new":
                kw["method"] = "observation_error"
                if ci == 1:
                    kw["se_log"] = np.full(rec.load.size, rec.tau)
            res = fit_lake(rec.p_obs, rec.load, **kw)  # type: ignore[arg-type]
            dt = time.perf_counter() - t0
            hits = []
            for band, truth in ((res.tipping_load, TIP.load), (res.recovery_load, REC.load)):
                hits.append(band.low is not None and band.high is not None and band.low <= truth <= band.high)
            out[f"{cond}|{fit}"] = (hits[0], hits[1], dt)
    return out


def table(results: list[dict[str, tuple[bool, bool, float]]]) -> str:
    n = len(results)
    lines = [
        f"90% interval coverage of the true fold loads over {n} records (binomial SD at 90%: "
        f"{math.sqrt(0.09 / n):.1%})",
        "",
        "| records | old fit: tipping | old fit: recovery | new fit: tipping | new fit: recovery |",
        "|---|---|---|---|---|",
    ]
    for cond in CONDITIONS:
        cells = []
        for fit in ("old", "new"):
            key = f"{cond}|{fit}" if not (fit == "old" and cond == CONDITIONS[2]) else f"{CONDITIONS[1]}|old"
            tip = np.mean([r[key][0] for r in results])
            rec = np.mean([r[key][1] for r in results])
            cells += [f"{tip:.1%}", f"{rec:.1%}"]
        lines.append(f"| {cond} | " + " | ".join(cells) + " |")
    t_old = np.median([r[f"{c}|old"][2] for r in results for c in CONDITIONS[:2]])
    t_new = np.median([r[f"{c}|new"][2] for r in results for c in CONDITIONS])
    lines += [
        "",
        f"median time per fit: old {t_old:.2f} s, new {t_new:.2f} s (ratio new/old {t_new / t_old:.1f}x)",
    ]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--records", type=int, default=200)
    ap.add_argument("--draws", type=int, default=1000)
    ap.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1))
    a = ap.parse_args(argv)
    t0 = time.perf_counter()
    jobs = [(k, a.draws) for k in range(a.records)]
    if a.workers > 1:
        with ProcessPoolExecutor(a.workers) as pool:
            results = list(pool.map(one, jobs))
    else:
        results = [one(j) for j in jobs]
    print(table(results))
    print(f"({a.records} records x {a.draws} draws, {a.workers} workers, {time.perf_counter() - t0:.0f} s)")


if __name__ == "__main__":
    main()
