"""Early-warning indicators: against ewstools 2.1.3, the bandwidth definition, surrogates, errors."""

from __future__ import annotations

import math

import ewstools  # test-only dependency (pyproject [test] extra)
import numpy as np
import pandas as pd
import pytest
from scipy.stats import kendalltau
from turnback.model.dynamics import simulate
from turnback.model.early_warning import (
    BANDWIDTH_TO_SIGMA,
    _kendall_tau_rows,
    early_warning,
    gaussian_detrend,
    rolling_indicators,
)
from turnback.model.equilibrium import equilibria, folds
from turnback.model.params import DimensionlessLake


def _series(n: int, seed: int) -> np.ndarray:
    """A trend plus noise whose spread grows: something for every indicator to see."""
    rng = np.random.default_rng(seed)
    t = np.linspace(0.0, 1.0, n)
    return 5.0 * t**2 + 0.3 * np.cumsum(rng.normal(size=n)) + rng.normal(size=n) * (0.5 + 1.5 * t)


def _lake_series(n: int, seed: int) -> np.ndarray:
    """Lake P [kg] from the annual map, load ramped towards the tipping load with process noise."""
    params = DimensionlessLake(b=0.8, q=8).to_parameters(recycling_max=1000.0, recycling_half=1000.0)
    tip = folds(params)[0].load
    loads = np.linspace(0.2 * tip, 0.97 * tip, n)
    noise = np.random.default_rng(seed).normal(0.0, 15.0, n)
    p0 = equilibria(params, loads[0])[0].p
    return simulate(params, p0, loads, process_noise=noise).p[1:]


def _ewstools(values: np.ndarray, years: np.ndarray, window: int | float, bandwidth_years: float | None):
    ts = ewstools.TimeSeries(pd.Series(values, index=years))
    if bandwidth_years is not None:
        # ewstools 2.1.3 core.py detrend(): sigma = (0.25 / 0.675) * bandwidth (in points when > 1).
        # Ours: sigma = 0.25 / Phi^-1(0.75) * bandwidth, the exact quartile (R's ksmooth constant
        # 0.3706506).  Give ewstools the bandwidth that yields the same sigma, so both smooth alike.
        ts.detrend(method="Gaussian", bandwidth=BANDWIDTH_TO_SIGMA * bandwidth_years * 0.675 / 0.25)
    ts.compute_var(rolling_window=window)
    ts.compute_auto(rolling_window=window, lag=1)
    ts.compute_skew(rolling_window=window)
    ts.compute_ktau()
    return ts


@pytest.mark.parametrize(
    "values, window, bandwidth",
    [
        (_series(60, 1), 30, 8.0),
        (_series(47, 2), None, 6.5),  # default window: half the length rounded down (ewstools: int(0.5 n))
        (_lake_series(50, 3), 20, 10.0),
        (_series(40, 4), 15, None),  # no detrending
    ],
)
def test_indicators_agree_with_ewstools(values: np.ndarray, window: int | None, bandwidth: float | None) -> None:
    # ewstools 2.1.3 (Bury), same series, window and detrending: rolling variance (pandas, ddof = 1),
    # lag-1 autocorrelation (pandas Series.autocorr), bias-corrected skewness (pandas rolling skew),
    # Kendall tau against time (pandas corrwith "kendall").
    years = np.arange(1970, 1970 + values.size)
    res = early_warning(
        values, years, window=window, bandwidth=bandwidth, detrend=bandwidth is not None, n_surrogates=0
    )
    ts = _ewstools(values, years, 0.5 if window is None else window, bandwidth)
    if window is None:
        assert res.window == int(0.5 * values.size)
    if bandwidth is not None:
        np.testing.assert_allclose(res.residuals, ts.state["residuals"].to_numpy(), rtol=0, atol=1e-12)
    for col, ind in (("variance", res.variance), ("ac1", res.ac1), ("skew", res.skewness)):
        theirs = ts.ews[col].to_numpy()
        assert np.array_equal(np.isnan(theirs), np.isnan(ind.values)), col
        np.testing.assert_allclose(ind.values, theirs, rtol=1e-9, atol=1e-12, equal_nan=True, err_msg=col)
        assert ind.tau == pytest.approx(ts.ktau[col], abs=1e-12), col


def test_bandwidth_definition_kernel_quartiles_at_quarter_bandwidth() -> None:
    # R's ksmooth (normal kernel), used by earlywarnings (Dakos et al. 2012): quartiles at +-bandwidth/4,
    # sigma = 0.3706506 * bandwidth (R source, ksmooth.c).
    assert BANDWIDTH_TO_SIGMA == pytest.approx(0.3706506, abs=1e-7)
    bw = 40.0
    impulse = np.zeros(201)
    impulse[100] = 1.0
    weights, _ = gaussian_detrend(impulse, bw)
    k = np.arange(201) - 100
    assert weights.sum() == pytest.approx(1.0, abs=1e-12)
    # variance of the discrete kernel, cut at 4 sigma (truncated normal: factor 0.99893, by hand)
    assert np.sum(k**2 * weights) == pytest.approx((0.3706506 * bw) ** 2 * 0.99893, rel=2e-3)


def test_rolling_window_convention() -> None:
    # value t belongs to the window ending at t; first window - 1 entries NaN (pandas / ewstools convention)
    y = _series(30, 5)
    var, ac1, skew = rolling_indicators(y, 10)
    assert np.all(np.isnan(var[:9])) and np.isfinite(var[9])
    assert var[9] == pytest.approx(np.var(y[:10], ddof=1), rel=1e-12)
    assert var[-1] == pytest.approx(np.var(y[-10:], ddof=1), rel=1e-12)
    assert ac1[-1] == pytest.approx(np.corrcoef(y[-10:-1], y[-9:])[0, 1], rel=1e-12)
    assert skew[-1] == pytest.approx(pd.Series(y[-10:]).skew(), rel=1e-10)


def test_vectorised_kendall_tau_matches_scipy() -> None:
    # scipy.stats.kendalltau (tau-b), including ties in the indicator
    rng = np.random.default_rng(11)
    rows = rng.normal(size=(6, 25))
    rows[0, 5:9] = rows[0, 4]
    rows[1] = np.round(rows[1], 0)
    got = _kendall_tau_rows(rows)
    for row, tau in zip(rows, got, strict=True):
        assert tau == pytest.approx(kendalltau(np.arange(25), row).statistic, abs=1e-12)


def test_rising_memory_and_variability_is_detected() -> None:
    # AR(1) whose coefficient rises 0 -> 0.9 and whose disturbances grow: the critical slowing down of
    # Scheffer et al. (2009).  Over seeds 0-19 this design gave variance p <= 0.005 every time and
    # autocorrelation tau > 0.5 with p <= 0.14 (AR(1) surrogates make the rolling-AC test weak, as
    # Dakos et al. 2012 note for short windows), so the bounds below are not tuned to one seed.
    rng = np.random.default_rng(0)
    n = 200
    phi = np.linspace(0.0, 0.9, n)
    sd = np.linspace(1.0, 3.0, n)
    y = np.zeros(n)
    for t in range(1, n):
        y[t] = phi[t] * y[t - 1] + sd[t] * rng.normal()
    res = early_warning(y, detrend=False, n_surrogates=199, rng=1)
    assert res.variance.tau > 0.5 and res.variance.p_value < 0.05
    assert res.ac1.tau > 0.5 and res.ac1.p_value < 0.2
    assert res.ac1.summary.startswith("lag-1 autocorrelation rising, τ = ")
    assert "unlikely to be chance (p = " in res.variance.summary


def test_stationary_noise_rarely_looks_significant() -> None:
    # calibration: for stationary AR(1) series the one-sided p-values should not pile up near zero
    rng = np.random.default_rng(5)
    small = 0
    trials = 20
    for _ in range(trials):
        y = np.zeros(60)
        for t in range(1, 60):
            y[t] = 0.4 * y[t - 1] + rng.normal()
        res = early_warning(y, detrend=False, n_surrogates=199, rng=rng)
        small += res.variance.p_value <= 0.05
    assert small <= 4  # expected about 1 in 20


def test_surrogate_p_values_are_reproducible_and_bounded() -> None:
    y = _series(50, 8)
    a = early_warning(y, n_surrogates=99, rng=42)
    b = early_warning(y, n_surrogates=99, rng=42)
    assert [i.p_value for i in a.indicators] == [i.p_value for i in b.indicators]
    for ind in a.indicators:
        assert 1.0 / 100.0 <= ind.p_value <= 1.0
    assert a.skewness.alternative == "two-sided" and a.variance.alternative == "increasing"
    none = early_warning(y, n_surrogates=0)
    assert all(math.isnan(i.p_value) for i in none.indicators)
    assert "(p =" not in none.variance.summary


def test_summary_words() -> None:
    res = early_warning(_series(60, 1), window=30, bandwidth=8.0, n_surrogates=199, rng=0)
    lines = res.summary.splitlines()
    assert lines[0].startswith("variance ") and lines[1].startswith("lag-1 autocorrelation ")
    assert lines[2].startswith("skewness ")
    assert "not a forecast" in res.summary
    assert res.bandwidth == 8.0 and res.window == 30
    assert early_warning(_series(30, 1), n_surrogates=0).bandwidth == pytest.approx(6.0)  # default 20 % of n


@pytest.mark.parametrize(
    "values, kwargs, fragment",
    [
        (np.arange(8.0), {}, "at least 10"),
        (np.r_[np.arange(20.0), np.nan], {}, "missing"),
        (np.r_[np.arange(20.0), np.inf], {}, "missing or non-finite"),
        (np.full(20, 3.0), {}, "constant"),
        (np.arange(40.0).reshape(4, 10), {}, "one-dimensional"),
        (_series(20, 1), {"window": 3}, "window must be between 5 and 16"),
        (_series(20, 1), {"window": 17}, "window must be between 5 and 16"),
        (_series(20, 1), {"window": 7.5}, "whole number"),
        (_series(20, 1), {"bandwidth": -1.0}, "bandwidth"),
        (_series(20, 1), {"bandwidth": math.nan}, "bandwidth"),
        (_series(20, 1), {"bandwidth": 0.05}, "no variation is left"),
        (_series(20, 1), {"years": np.r_[np.arange(1990, 2000), np.arange(2001, 2011)]}, "consecutive"),
        (_series(20, 1), {"years": np.arange(1990, 2005)}, "years has 15"),
        (["a"] * 12, {}, "numbers"),
    ],
)
def test_bad_series_raise_clear_value_errors(values: object, kwargs: dict, fragment: str) -> None:
    with pytest.raises(ValueError, match=fragment):
        early_warning(values, n_surrogates=0, **kwargs)  # type: ignore[arg-type]


@pytest.mark.parametrize("bad", [-1, 2.5, True])
def test_bad_number_of_surrogates(bad: object) -> None:
    with pytest.raises(ValueError, match="n_surrogates"):
        early_warning(_series(20, 1), n_surrogates=bad)  # type: ignore[arg-type]
