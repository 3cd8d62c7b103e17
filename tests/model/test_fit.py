"""Fitting the annual map to records: recovery, an independent fitter, coverage, identifiability."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import curve_fit, least_squares
from turnback.model.demo import DEMO_PARAMETERS as TRUE
from turnback.model.demo import DEMO_PROFILE
from turnback.model.dynamics import annual_step
from turnback.model.equilibrium import equilibria, folds
from turnback.model.fit import FitBounds, bootstrap_refits, fit_lake, fit_monitoring, fit_transitions, refit_batch
from turnback.model.io.monitoring_csv import parse_monitoring
from turnback.model.params import LakeParameters

DEMO_CSV = Path(__file__).resolve().parents[2] / "sample_data" / "amberlin_monitoring.csv"
TIP, REC = folds(TRUE)

# A 45-year load plan that takes the demo lake over the tipping load, holds it turbid, cuts the load below the
# recovery load and lets it back up: the record visits both branches, so both folds are identifiable.
PLAN = np.array(
    [300.0] * 6
    + list(np.linspace(360.0, 800.0, 8))
    + [760.0] * 7
    + [380.0] * 6
    + [120.0] * 9
    + list(np.linspace(300.0, 420.0, 9))
)


def simulate_record(
    seed: int,
    params: LakeParameters = TRUE,
    plan: np.ndarray = PLAN,
    process_sd: float = 0.08,
    load_sd: float = 0.12,
    start: str = "lower",
) -> tuple[np.ndarray, np.ndarray]:
    """Lake P [kg] and load [kg/yr] from the annual map with lognormal load and process noise."""
    g = np.random.default_rng(seed)
    load = plan * np.exp(g.normal(0.0, load_sd, plan.size))
    eq = equilibria(params, load[0])
    p = np.empty(plan.size)
    p[0] = eq[0].p if start == "lower" else eq[-1].p
    for t in range(1, plan.size):
        p[t] = float(annual_step(params, p[t - 1], load[t])) * np.exp(g.normal(0.0, process_sd))
    return p, load


# --------------------------------------------------------------------------
# point estimates
# --------------------------------------------------------------------------
def test_recovers_known_parameters_from_a_quiet_record() -> None:
    p, load = simulate_record(11, process_sd=0.01)
    pt = fit_transitions(p[:-1], load[1:], p[1:], p_scale=p, rng=0)
    assert pt.status == "ok" and pt.params is not None
    # The truth is the simulator's own parameters (model.demo); with 1% noise they come back closely.
    assert pt.params.s == pytest.approx(TRUE.s, rel=0.03)
    assert pt.params.r == pytest.approx(TRUE.r, rel=0.08)
    assert pt.params.m == pytest.approx(TRUE.m, rel=0.05)
    assert pt.params.q == pytest.approx(TRUE.q, rel=0.1)
    tip, rec = folds(pt.params)
    assert tip.load == pytest.approx(TIP.load, rel=0.03)
    assert rec.load == pytest.approx(REC.load, rel=0.06)
    assert pt.diagnostics is not None and pt.diagnostics.sd == pytest.approx(0.01, rel=0.3)


def test_point_estimates_scatter_around_the_truth() -> None:
    # Ten noisy records (8% process noise): the median estimate lies near the truth.
    est = []
    for seed in range(10):
        p, load = simulate_record(200 + seed)
        pt = fit_transitions(p[:-1], load[1:], p[1:], p_scale=p, rng=seed)
        assert pt.params is not None
        est.append((pt.params.s, pt.params.m, *(f.load for f in folds(pt.params))))
    med = np.median(np.array(est), axis=0)
    assert med[0] == pytest.approx(TRUE.s, rel=0.1)
    assert med[1] == pytest.approx(TRUE.m, rel=0.15)
    assert med[2] == pytest.approx(TIP.load, rel=0.1)
    assert med[3] == pytest.approx(REC.load, rel=0.2)


def test_matches_curve_fit_on_the_same_likelihood() -> None:
    # Independent general-purpose fitter: scipy.optimize.curve_fit with method="lm" (MINPACK
    # Levenberg-Marquardt, no bounds, natural parameters, numerical Jacobian) on the same transitions and the
    # same criterion, sum of (ln P[t+1] - ln F)^2, started from the simulator's true parameters.
    p, load = simulate_record(5)
    x = np.vstack([p[:-1], load[1:]])
    y = np.log(p[1:])

    def log_map(xx: np.ndarray, s: float, r: float, m: float, q: float) -> np.ndarray:
        pp, ll = xx
        return np.log(pp + ll - s * pp + r * pp**q / (m**q + pp**q))

    popt, pcov = curve_fit(log_map, x, y, p0=[TRUE.s, TRUE.r, TRUE.m, TRUE.q], method="lm", maxfev=20000)
    pt = fit_transitions(p[:-1], load[1:], p[1:], p_scale=p, rng=3)
    assert pt.params is not None
    ours = [pt.params.s, pt.params.r, pt.params.m, pt.params.q]
    assert ours == pytest.approx(list(popt), rel=1e-4)
    sse_cf = float(np.sum((y - log_map(x, *popt)) ** 2))
    assert pt.sse == pytest.approx(sse_cf, rel=1e-8)
    # curve_fit's pcov is sigma^2 (J^T J)^-1 with sigma^2 = SSE/(n-4), the same as ours after the delta method.
    se_cf = np.sqrt(np.diag(pcov))
    se = [e.std_error for e in pt.estimates]
    assert all(v is not None for v in se)
    assert np.array(se, dtype=float) == pytest.approx(se_cf, rel=2e-3)


def test_vectorised_refits_match_least_squares_per_record() -> None:
    # scipy.optimize.least_squares (TRF, several starts) on each record, one at a time, is the reference for
    # the vectorised damped Gauss-Newton used in the bootstrap.
    p, load = simulate_record(8)
    pt = fit_transitions(p[:-1], load[1:], p[1:], p_scale=p, rng=1)
    lo, hi = pt.bounds
    recs = [simulate_record(300 + k)[0] for k in range(12)]
    prev = np.array([r[:-1] for r in recs])
    nxt = np.array([r[1:] for r in recs])
    loads = simulate_record(300)[1][1:]
    # Any data serve to compare two optimisers: each record is refitted against the loads of seed 300.
    th, sse, conv = refit_batch(np.tile(pt.theta, (12, 1)), prev, nxt, loads, lo, hi)
    assert conv.all()
    for k in range(12):
        ref = fit_transitions(prev[k], loads, nxt[k], bounds=FitBounds(), p_scale=p, rng=k, n_starts=10)
        assert sse[k] <= ref.sse * (1 + 1e-6) + 1e-12

        def resid(t: np.ndarray, k: int = k) -> np.ndarray:
            h = 1.0 / (1.0 + np.exp(np.exp(t[3]) * (t[2] - np.log(prev[k]))))  # expit(q (ln P - ln m))
            return np.log(nxt[k]) - np.log(prev[k] * (1 - t[0]) + loads + np.exp(t[1]) * h)

        plain = least_squares(resid, th[k], bounds=(lo, hi))
        assert 2 * plain.cost == pytest.approx(sse[k], rel=1e-6)  # no further descent from our answer


# --------------------------------------------------------------------------
# the whole analysis
# --------------------------------------------------------------------------
def test_demo_record_brackets_the_parameters_it_was_made_with() -> None:
    # The demo file was simulated from model.demo.DEMO_PARAMETERS (sample_data/make_demo_series.py).
    s = parse_monitoring(DEMO_CSV)
    res = fit_monitoring(s, DEMO_PROFILE.volume_m3, replicates=500, rng=2)
    assert res.years == (1979, 2023)
    assert res.regime == "hysteretic"
    for band, true in ((res.tipping_load, TIP.load), (res.recovery_load, REC.load)):
        assert band.constrained and band.estimate is not None and band.low is not None and band.high is not None
        assert band.low <= band.estimate <= band.high
        assert band.low <= true <= band.high
    assert res.regime_probability.hysteretic > 0.9
    assert not any("never shows" in w for w in res.warnings)
    assert all(e.std_error is not None and e.identified for e in res.point.estimates)


def test_same_seed_same_answer_and_progress_is_reported() -> None:
    p, load = simulate_record(3)
    calls: list[tuple[float, str]] = []
    a = fit_lake(p, load, replicates=150, rng=42, progress=lambda f, m: calls.append((f, m)))
    b = fit_lake(p, load, replicates=150, rng=np.random.default_rng(42))
    c = fit_lake(p, load, replicates=150, rng=43)
    assert a.to_dict() == b.to_dict()
    assert np.array_equal(a.draws.tipping, b.draws.tipping, equal_nan=True)
    assert not np.array_equal(a.draws.tipping, c.draws.tipping, equal_nan=True)
    assert calls[0] == (0.0, "0 of 150 bootstrap refits") and calls[-1] == (1.0, "150 of 150 bootstrap refits")
    assert [f for f, _ in calls] == sorted(f for f, _ in calls)


def test_result_is_well_formed() -> None:
    p, load = simulate_record(4)
    res = fit_lake(p, load, replicates=120, rng=0)
    pr = res.regime_probability
    assert pr.reversible + pr.hysteretic + pr.irreversible == pytest.approx(1.0)
    d = res.to_dict()
    assert set(d) == {
        "params", "tipping_load", "recovery_load", "regime_probability", "warnings", "method", "error_model",
        "parameter_draws",
    }  # fmt: skip
    assert d["method"] == "conditional_least_squares"
    assert len(d["parameter_draws"]) == res.replicates_used
    assert set(d["params"]) == {"loss_rate", "recycling_max", "recycling_half", "recycling_exponent"}
    assert 0.0 <= res.tipping_load.fold_fraction <= 1.0
    assert any("Only 120 bootstrap replicates" in w for w in res.warnings)
    assert res.status == "warning"


def test_fixed_design_scheme_also_runs() -> None:
    p, load = simulate_record(6)
    point = fit_transitions(p[:-1], load[1:], p[1:], p_scale=p, rng=0)
    draws = bootstrap_refits(point, p, load[1:], replicates=100, scheme="fixed", rng=1)
    assert draws.scheme == "fixed" and draws.used.mean() > 0.95
    with pytest.raises(ValueError, match="scheme"):
        bootstrap_refits(point, p, load[1:], replicates=100, scheme="block", rng=1)  # type: ignore[arg-type]


def test_record_that_never_turns_turbid_warns_about_the_recovery_load() -> None:
    plan = np.linspace(200.0, 450.0, 40)  # always below the tipping load (544 kg/yr): clear throughout
    p, load = simulate_record(3, plan=plan)
    res = fit_lake(p, load, replicates=300, rng=1, volume_m3=DEMO_PROFILE.volume_m3)
    text = " ".join(res.warnings)
    assert "The record never shows the turbid state" in text
    assert "so the recovery load is not constrained by the data" in text
    assert res.recovery_load.estimate is None and res.tipping_load.estimate is None
    assert res.recovery_load.low is not None and res.recovery_load.high is not None
    assert res.recovery_load.high - res.recovery_load.low > 0.5 * REC.load  # a wide band, not a number
    # No false precision on what the record cannot inform: a standard error is either withheld or sizeable.
    assert not all(e.identified for e in res.point.estimates)
    for e in res.point.estimates:
        assert e.std_error is None or e.std_error > 1e-3 * e.value, e


def test_record_that_stays_turbid_warns_about_the_tipping_load() -> None:
    plan = np.linspace(900.0, 600.0, 40)  # always above the tipping load, starting turbid
    p, load = simulate_record(3, plan=plan, start="upper")
    res = fit_lake(p, load, replicates=300, rng=1)
    text = " ".join(res.warnings)
    assert "The record never shows the clear-water state" in text
    assert "so the tipping load is not constrained by the data" in text
    assert res.tipping_load.estimate is None


def test_reversible_lake_is_reported_as_likely_reversible() -> None:
    # b = s m / r = 0.5 * 2500 / 300 > the cusp value for q = 2 (3√3/8, Carpenter, Ludwig & Brock 1999): no folds.
    lake = LakeParameters(loss_rate=0.5, recycling_max=300.0, recycling_half=2500.0, recycling_exponent=2.0)
    assert folds(lake) == ()
    p, load = simulate_record(9, params=lake, plan=np.linspace(200.0, 1500.0, 40))
    res = fit_lake(p, load, replicates=200, rng=1)
    assert res.regime_probability.reversible > 0.5
    assert res.tipping_load.estimate is None and res.recovery_load.estimate is None


@pytest.mark.parametrize(
    "kwargs, fragment",
    [
        ({"replicates": 10}, "replicates must be at least 100"),
        ({"level": 1.5}, "level must be in"),
    ],
)
def test_bad_arguments(kwargs: dict[str, float], fragment: str) -> None:
    p, load = simulate_record(1)
    with pytest.raises(ValueError, match=fragment):
        fit_lake(p, load, **kwargs)  # type: ignore[arg-type]


def test_bad_records() -> None:
    with pytest.raises(ValueError, match="greater than 0"):
        fit_lake(np.r_[np.ones(10), 0.0], np.ones(11))
    with pytest.raises(ValueError, match=">= 0"):
        fit_lake(np.ones(11), np.r_[np.ones(10), -1.0])
    with pytest.raises(ValueError, match="one value per year"):
        fit_lake(np.ones(11), np.ones(10))
    with pytest.raises(ValueError, match="at least 7"):
        fit_lake(np.ones(5), np.ones(5))
    with pytest.raises(ValueError, match="loss_rate"):
        FitBounds(loss_rate=(0.1, 1.5))


# --------------------------------------------------------------------------
# coverage of the 90% intervals
# --------------------------------------------------------------------------
@pytest.mark.slow
def test_interval_coverage_over_synthetic_records() -> None:
    # Coverage of percentile bootstrap intervals (Efron & Tibshirani 1993, An Introduction to the Bootstrap,
    # ch. 13): over records simulated from known parameters, a 90% interval should contain the true fold load
    # in about 90% of records.  32 records x 200 replicates; binomial SD of a 90% coverage over 32 is 5%.
    n = 32
    hits_tip = hits_rec = 0
    for k in range(n):
        p, load = simulate_record(1000 + k)
        res = fit_lake(p, load, replicates=200, rng=k)
        t, r = res.tipping_load, res.recovery_load
        hits_tip += t.low is not None and t.high is not None and t.low <= TIP.load <= t.high
        hits_rec += r.low is not None and r.high is not None and r.low <= REC.load <= r.high
    cov_tip, cov_rec = hits_tip / n, hits_rec / n
    print(f"\n90% interval coverage over {n} records: tipping load {cov_tip:.2f}, recovery load {cov_rec:.2f}")
    both = (hits_tip + hits_rec) / (2 * n)
    assert 0.78 <= both <= 0.99, (cov_tip, cov_rec)
    assert min(cov_tip, cov_rec) >= 0.7, (cov_tip, cov_rec)
