"""The fit with observation error: recovery of known parameters, its result and JSON, and a small coverage study."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from turnback.model.demo import DEMO_PARAMETERS as TRUE
from turnback.model.dynamics import annual_step
from turnback.model.equilibrium import equilibria, folds
from turnback.model.fit import fit_lake, fit_monitoring
from turnback.model.io.sample_csv import read_record
from turnback.model.obs_fit import fit_observation_error
from turnback.model.plan import Plan

ROOT = Path(__file__).resolve().parents[2]
TIP, REC = folds(TRUE)
# The 45-year load plan of tests/model/test_fit.py: over the tipping load, held turbid, below the recovery load,
# back up; the record visits both branches.
PLAN = np.array(
    [300.0] * 6
    + list(np.linspace(360.0, 800.0, 8))
    + [760.0] * 7
    + [380.0] * 6
    + [120.0] * 9
    + list(np.linspace(300.0, 420.0, 9))
)


def record(seed: int, process_sd: float, obs_sd: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """True lake P, observed lake P (lognormal observation error) and load."""
    g = np.random.default_rng(seed)
    load = PLAN * np.exp(g.normal(0.0, 0.12, PLAN.size))
    p = np.empty(PLAN.size)
    p[0] = equilibria(TRUE, load[0])[0].p
    for t in range(1, PLAN.size):
        p[t] = float(annual_step(TRUE, p[t - 1], load[t])) * math.exp(g.normal(0.0, process_sd))
    return p, p * np.exp(g.normal(0.0, obs_sd, p.size)), load


def test_recovers_known_parameters_with_observation_error() -> None:
    # Simulation with known parameters (model.demo) and observation error whose SD the fit is told, as a sample
    # file tells it: the maximum-likelihood estimate comes back near the truth and near the true process SD.
    _, obs, load = record(21, process_sd=0.02, obs_sd=0.05)
    fit = fit_observation_error(obs, load, se_log=np.full(load.size, 0.05), draws=200, rng=1)
    p = fit.point.params
    assert p is not None
    assert p.s == pytest.approx(TRUE.s, rel=0.1)
    assert p.m == pytest.approx(TRUE.m, rel=0.1)
    tip, rec = folds(p)
    assert tip.load == pytest.approx(TIP.load, rel=0.08)
    assert rec.load == pytest.approx(REC.load, rel=0.2)
    assert fit.process_sd < 0.06 and fit.observation_sd is None and fit.tau_source == "samples"
    assert fit.draws.shape == (200, 5) and 0.15 < fit.acceptance < 0.8
    assert np.exp(fit.states).size == load.size


def test_least_squares_is_misled_by_observation_error_and_the_new_fit_is_not() -> None:
    # Errors in the regressor flatten a least-squares fit (common practice, no source): with observation SD 0.2
    # the least-squares residual SD takes the observation error as process error, the state-space fit separates
    # them (process SD near the true 0.05).
    est_ls, est_obs = [], []
    for seed in range(1):
        _, obs, load = record(40 + seed, process_sd=0.05, obs_sd=0.2)
        ls = fit_lake(obs, load, replicates=100, rng=seed)
        new = fit_lake(obs, load, replicates=100, rng=seed, method="observation_error", se_log=np.full(load.size, 0.2))
        est_ls.append(ls.process_sd)
        est_obs.append(new.process_sd)
    assert np.median(est_ls) > 0.2
    assert np.median(est_obs) < 0.12


def test_result_says_which_method_and_hands_over_its_draws() -> None:
    series = read_record(ROOT / "sample_data" / "amberlin_samples.csv", ROOT / "sample_data" / "amberlin_loads.csv")
    res = fit_monitoring(series, 2.79e7, replicates=300, rng=2)
    assert res.method == "observation_error" and res.draws.scheme == "posterior"
    d = res.to_dict()
    assert d["method"] == "state_space_laplace"
    assert d["error_model"]["observation_sd_source"] == "samples"
    assert len(d["parameter_draws"]) == 300
    assert not any("bootstrap" in w for w in d["warnings"])
    # the draws paste into a plan's lake
    lake = d["params"] | {"volume_m3": 2.79e7, "initial_tp_ug_l": 40.0, "parameter_draws": d["parameter_draws"]}
    plan = Plan.from_dict(
        {"lake": lake, "scenarios": [{"name": "a", "years": 5, "load": {"kind": "constant", "kg_per_yr": 300}}]}
    )
    assert plan.lake.parameter_draws is not None and plan.lake.parameter_draws.n == 300
    fast = fit_monitoring(series, 2.79e7, replicates=100, rng=2, method="least_squares")
    assert fast.method == "least_squares" and fast.to_dict()["method"] == "conditional_least_squares"


def test_estimated_observation_error_on_annual_means() -> None:
    _, obs, load = record(60, process_sd=0.05, obs_sd=0.15)
    res = fit_lake(obs, load, replicates=200, rng=3, method="observation_error")
    em = res.error_model()
    assert em["observation_sd_source"] == "estimated"
    assert 0.05 < em["observation_sd"] < 0.3
    with pytest.raises(ValueError, match="method"):
        fit_lake(obs, load, method="kalman")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="only by the observation-error fit"):
        fit_lake(obs, load, se_log=np.full(load.size, 0.1))


def test_progress_and_cancel() -> None:
    from turnback.model.progress import RunCancelled

    _, obs, load = record(61, process_sd=0.05, obs_sd=0.1)
    seen: list[float] = []
    fit_observation_error(obs, load, draws=100, rng=1, progress=lambda f, m: seen.append(f), burn_in=50)
    assert seen[0] == 0.0 and seen == sorted(seen) and seen[-1] >= 0.9
    calls = [0]

    def cancel() -> bool:
        calls[0] += 1
        return calls[0] > 3

    with pytest.raises(RunCancelled):
        fit_observation_error(obs, load, draws=100, rng=1, cancel=cancel)


@pytest.mark.slow
def test_fold_interval_coverage_with_observation_error() -> None:
    # Coverage of 90% posterior intervals over records simulated from known parameters with process and
    # observation noise (SD 0.1–0.2 on the log scale, told to the fit as a sample file would): about 90%.
    # 8 records × 200 draws; binomial SD of a 90% coverage over 16 fold intervals is 7.5%, so the band is wide.
    # The full study (200 records × 1000 draws, old and new fit, with and without observation noise) is
    # bench/bench_coverage.py; its table is in the README.
    hits = []
    for k in range(8):
        tau = 0.1 + 0.1 * (k % 5) / 4
        _, obs, load = record(500 + k, process_sd=0.08, obs_sd=tau)
        res = fit_lake(obs, load, replicates=200, rng=k, method="observation_error", se_log=np.full(load.size, tau))
        for band, truth in ((res.tipping_load, TIP.load), (res.recovery_load, REC.load)):
            hits.append(band.low is not None and band.high is not None and band.low <= truth <= band.high)
    coverage = float(np.mean(hits))
    print(f"\n90% posterior interval coverage over 8 records, both folds: {coverage:.2f}")
    assert 0.7 <= coverage <= 1.0
