"""Warning signs per stretch: against ewstools, the record view's numbers, sensitivity, words, critical slowing down."""

from __future__ import annotations

import json
from pathlib import Path

import ewstools  # test-only dependency (pyproject [test] extra)
import numpy as np
import pandas as pd
import pytest
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.early_warning import BANDWIDTH_TO_SIGMA, early_warning
from turnback.model.io.monitoring_csv import parse_monitoring
from turnback.model.record import MonitoringSeries
from turnback.model.stretch_warnings import (
    DEFAULT_SEED,
    DEFAULT_SURROGATES,
    MIN_STRETCH_YEARS,
    NOT_A_FORECAST,
    record_warnings,
    sensitivity_grid,
)
from turnback.model.stretches import split_record

from bench.bench_warning_signs import VOLUME_M3, make_record, study

DEMO_CSV = Path(__file__).resolve().parents[2] / "sample_data" / "amberlin_monitoring.csv"


def _strict(obj: object) -> object:
    """JSON round trip that refuses NaN and Infinity."""

    def refuse(name: str) -> None:
        raise ValueError(f"non-standard JSON constant {name}")

    return json.loads(json.dumps(obj, allow_nan=False), parse_constant=refuse)


@pytest.fixture(scope="module")
def demo() -> MonitoringSeries:
    return parse_monitoring(DEMO_CSV)


@pytest.fixture(scope="module")
def demo_result(demo: MonitoringSeries):  # type: ignore[no-untyped-def]
    split = split_record(demo, volume_m3=DEMO_PROFILE.volume_m3, params=DEMO_PARAMETERS)
    return record_warnings(demo, split, n_surrogates=99)


@pytest.mark.parametrize("seed", [0, 7])
def test_pre_shift_stretch_agrees_with_ewstools(seed: int) -> None:
    # ewstools 2.1.3 (Bury), on the same pre-shift stretch with the same conventions: Gaussian detrending with the
    # bandwidth giving the same kernel sigma, rolling window half the stretch (ewstools: int(0.5 n)), rolling
    # variance, lag-1 autocorrelation (pandas autocorr), bias-corrected skewness, Kendall tau against time.
    rec = make_record(seed)
    split = split_record(rec.series, volume_m3=VOLUME_M3)
    res = record_warnings(rec.series, split, n_surrogates=0, sensitivity=False)
    pre = res.stretches[0]
    assert pre.stretch.ends_in_shift and pre.stretch.state == "clear" and pre.result is not None
    a, b = pre.stretch.start, pre.stretch.stop
    n = b - a
    assert n >= MIN_STRETCH_YEARS
    tp = np.asarray(rec.series.tp_ug_l[a:b])
    years = np.asarray(rec.series.years[a:b])
    ts = ewstools.TimeSeries(pd.Series(tp, index=years))
    # ewstools core.py detrend(): sigma = (0.25 / 0.675) * bandwidth; ours: sigma = BANDWIDTH_TO_SIGMA * 0.2 n.
    ts.detrend(method="Gaussian", bandwidth=BANDWIDTH_TO_SIGMA * 0.2 * n * 0.675 / 0.25)
    ts.compute_var(rolling_window=0.5)
    ts.compute_auto(rolling_window=0.5, lag=1)
    ts.compute_skew(rolling_window=0.5)
    ts.compute_ktau()
    ours = pre.result
    assert ours.window == int(0.5 * n) and ours.bandwidth == pytest.approx(0.2 * n)
    np.testing.assert_allclose(ours.residuals, ts.state["residuals"].to_numpy(), rtol=0, atol=1e-10)
    for col, ind in (("variance", ours.variance), ("ac1", ours.ac1), ("skew", ours.skewness)):
        theirs = ts.ews[col].to_numpy()
        np.testing.assert_allclose(ind.values, theirs, rtol=1e-8, atol=1e-10, equal_nan=True, err_msg=col)
        assert ind.tau == pytest.approx(ts.ktau[col], abs=1e-12), col


def test_whole_record_numbers_are_the_record_views(demo: MonitoringSeries, demo_result) -> None:  # type: ignore[no-untyped-def]
    # The record view calls early_warning(tp, year, n_surrogates=500, rng=20261202) (app/callbacks_record.py).
    view = early_warning(demo.tp_ug_l, demo.years, n_surrogates=500, rng=20261202)
    split = split_record(demo, fit=False)
    res = record_warnings(demo, split, sensitivity=False)
    assert (DEFAULT_SURROGATES, DEFAULT_SEED) == (500, 20261202)
    for name in ("variance", "ac1", "skewness"):
        assert getattr(res.whole, name).tau == getattr(view, name).tau
        assert getattr(res.whole, name).p_value == getattr(view, name).p_value
    assert res.whole.window == 22 and res.whole.bandwidth == pytest.approx(9.0)
    # the example: over the mixed record the variance falls, tau = -0.28
    assert res.whole.variance.tau == pytest.approx(-0.28, abs=0.005)


def test_demo_stretches_and_their_numbers(demo: MonitoringSeries, demo_result) -> None:  # type: ignore[no-untyped-def]
    parts = demo_result.stretches
    assert [(p.stretch.from_year, p.stretch.to_year, p.stretch.state) for p in parts] == [
        (1979, 1988, "clear"),
        (1989, 2008, "turbid"),
        (2009, 2023, "clear"),
    ]
    first, turbid, now = parts
    assert first.result is None and first.note is not None and first.note.startswith("too short to say")
    for p in (turbid, now):
        assert p.result is not None and p.note is None and p.sensitivity is not None
        assert p.result.window == p.stretch.n_years // 2
        assert p.result.bandwidth == pytest.approx(0.2 * p.stretch.n_years)
        # the stretch's numbers are those of early_warning on the stretch alone
        a, b = p.stretch.start, p.stretch.stop
        direct = early_warning(demo.tp_ug_l[a:b], demo.years[a:b], n_surrogates=99, rng=demo_result.seed)
        assert direct.ac1.tau == p.result.ac1.tau and direct.variance.p_value == p.result.variance.p_value
    d = _strict(demo_result.to_dict())
    assert isinstance(d, dict)
    s0 = d["stretches"][0]
    assert s0["variance"] is None and s0["ac1"] is None and s0["skewness"] is None and "too short" in s0["note"]
    assert d["stretches"][1]["ends_in_shift"] is True and d["stretches"][2]["ends_in_shift"] is False


def test_sensitivity_grid(demo_result) -> None:  # type: ignore[no-untyped-def]
    p = demo_result.stretches[1]  # turbid 1989-2008, 20 years
    sens = p.sensitivity
    assert sens.windows == (5, 10, 15) and sens.bandwidths == pytest.approx((2.0, 4.0, 10.0))
    assert len(sens.cells) == 9
    # the default cell (window 50 %, bandwidth 20 %) repeats the stretch's own numbers: same seed
    cell = sens.cells[1 * 3 + 1]
    assert (cell.window, cell.bandwidth) == (10, pytest.approx(4.0))
    for name in ("variance", "ac1", "skewness"):
        assert cell.tau[name] == getattr(p.result, name).tau
        assert cell.p_value[name] == getattr(p.result, name).p_value
        taus = sens.taus(name)
        assert sens.sign_depends[name] == bool((taus > 0).any() and (taus < 0).any())
    # short series: windows kept within what early_warning accepts (>= 5, >= 5 windows)
    g = sensitivity_grid(np.random.default_rng(0).normal(size=15), np.arange(15.0), n_surrogates=0)
    assert g.windows == (5, 7, 11)


def test_sign_flag_can_be_false_and_true() -> None:
    # a series whose variance rises under every choice, and white noise whose trends wander in sign
    rng = np.random.default_rng(1)
    n = 40
    rising = rng.normal(size=n) * np.linspace(0.2, 3.0, n)
    g = sensitivity_grid(rising, np.arange(n), n_surrogates=0)
    assert not g.sign_depends["variance"] and (g.taus("variance") > 0).all()
    flags = [sensitivity_grid(rng.normal(size=n), np.arange(n), n_surrogates=0).sign_depends["ac1"] for _ in range(8)]
    assert any(flags)


def test_words_say_what_was_and_was_not_seen(demo_result) -> None:  # type: ignore[no-untyped-def]
    words = demo_result.words
    assert words[0].startswith("The record splits into 3 stretches by the fitted lake model")
    assert words[1].startswith("Before the 1989 shift to turbid water (clear water 1979–1988, 10 years): too short")
    assert words[2].startswith("Before the 2009 return to clear water (turbid 1989–2008, 20 years): the variance")
    assert ("Seen:" in words[2]) or ("Not seen:" in words[2])
    assert words[3].startswith("Now (clear water since 2009, 15 years): ")
    assert words[-1] == NOT_A_FORECAST and "not a forecast" in words[-1]


def test_one_stretch_record_words() -> None:
    rng = np.random.default_rng(2)
    n = 30
    series = MonitoringSeries(
        years=np.arange(1990, 1990 + n), load_kg_per_yr=np.full(n, 300.0), tp_ug_l=20.0 * np.exp(rng.normal(0, 0.1, n))
    )
    res = record_warnings(series, split_record(series, fit=False), n_surrogates=0)
    assert len(res.stretches) == 1
    assert "no shift to look back on" in res.words[0]
    assert res.words[1].startswith("Now (lower TP since 1990, 30 years): ")
    assert res.words[-1] == NOT_A_FORECAST
    # one stretch with the record's conventions: its numbers are the whole record's
    assert res.stretches[0].result is not None and res.stretches[0].result.ac1.tau == res.whole.ac1.tau


def test_bad_arguments(demo: MonitoringSeries) -> None:
    split = split_record(demo, fit=False)
    with pytest.raises(ValueError, match="min_stretch_years"):
        record_warnings(demo, split, min_stretch_years=5)
    other = MonitoringSeries(years=demo.years[:20], load_kg_per_yr=demo.load_kg_per_yr[:20], tp_ug_l=demo.tp_ug_l[:20])
    with pytest.raises(ValueError, match="another record"):
        record_warnings(other, split)


def test_generator_seed_is_reproducible(demo: MonitoringSeries) -> None:
    split = split_record(demo, fit=False)
    a = record_warnings(demo, split, n_surrogates=49, rng=np.random.default_rng(3), sensitivity=False)
    b = record_warnings(demo, split, n_surrogates=49, rng=np.random.default_rng(3), sensitivity=False)
    assert a.seed == b.seed and a.whole.ac1.p_value == b.whole.ac1.p_value


@pytest.mark.slow
def test_critical_slowing_down_shows_before_a_fold() -> None:
    # Expected direction (Scheffer et al. 2009, Nature 461:53-59; Dakos et al. 2012, PLoS ONE 7:e41010; from
    # memory): the lag-1 autocorrelation rises before a fold more often than in records that never approach one.
    # 40 seeded records of the bench study (demo-like lake, years classified with the true lake, no surrogates);
    # the matched null is the same years of the same lake at 20-40 % of the tipping load, same noise draws.
    # Observed here: 25/40 vs 14/40 (record view's bandwidth 20 %) and 33/40 vs 21/40 (bandwidth 50 %); the
    # 100-record bench with fits gives 0.68 vs 0.49 and 0.88 vs 0.50.
    t = study(40, n_surrogates=0, fit=False)
    assert t.stretches == 40
    pre, null = t.ac1_up / t.stretches, t.null_up / t.stretches
    assert pre >= null + 0.1
    assert pre > 0.5
    wide, wide_null = t.wide_up / t.stretches, t.wide_null_up / t.stretches
    assert wide >= wide_null + 0.2
