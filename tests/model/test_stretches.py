"""Stretches of one state: the fitted-separatrix rule, flickers, change points, synthetic shifts and the demo record."""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
from turnback.model.clear_state import clear_threshold_kg
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.equilibrium import folds
from turnback.model.fit import fit_monitoring
from turnback.model.io.monitoring_csv import parse_monitoring
from turnback.model.params import LakeParameters
from turnback.model.record import MonitoringSeries
from turnback.model.stretches import (
    classify_years,
    merge_flickers,
    split_by_change_points,
    split_by_fit,
    split_record,
)

from bench.bench_warning_signs import CRISP, VOLUME_M3, first_shift, make_record

DEMO_CSV = Path(__file__).resolve().parents[2] / "sample_data" / "amberlin_monitoring.csv"


@pytest.mark.parametrize(
    "flags, k, expected",
    [
        ("0001000", 3, "0000000"),  # one-year excursion
        ("0001100", 3, "0000000"),  # two-year excursion
        ("0001110", 3, "0001110"),  # three years is a stretch; the end run of one is kept
        ("0001111", 3, "0001111"),
        ("1000000", 3, "1000000"),  # runs at the ends are kept
        ("0000001", 3, "0000001"),
        ("0001011111", 3, "0000011111"),  # shortest first, earliest among equals: the lone 1 goes, then none is inner
        ("0001000", 1, "0001000"),  # k = 1 merges nothing
        ("00010001000", 2, "00000000000"),
    ],
)
def test_flicker_rule(flags: str, k: int, expected: str) -> None:
    got = merge_flickers(np.array([c == "1" for c in flags]), k)
    assert "".join("1" if v else "0" for v in got) == expected


def test_flicker_rule_rejects_a_bad_length() -> None:
    with pytest.raises(ValueError, match="min_run_years"):
        merge_flickers(np.zeros(5, dtype=bool), 0)


def test_classification_is_the_clear_state_rule() -> None:
    # Each year against the product's clear threshold, computed directly, at the year's own load.
    rec = make_record(3)
    turbid, th = classify_years(DEMO_PARAMETERS, rec.p_kg, rec.loads)
    fs = folds(DEMO_PARAMETERS)
    for i in range(0, rec.p_kg.size, 7):
        assert th[i] == clear_threshold_kg(DEMO_PARAMETERS, float(rec.loads[i]), fs=fs)
        assert turbid[i] == (rec.p_kg[i] >= th[i])
    split = split_by_fit(rec.series, DEMO_PARAMETERS, VOLUME_M3)
    assert [s.state for s in split.stretches] == ["clear", "turbid"]
    assert split.stretches[0].ends_in_shift and not split.stretches[1].ends_in_shift
    assert split.shift_years == (int(rec.series.years[rec.true_crossing]),)


def test_stretches_tile_the_record() -> None:
    split = split_record(make_record(4).series, fit=False)
    s = split.stretches
    assert s[0].start == 0 and s[-1].stop == split.years.size
    for a, b in itertools.pairwise(s):
        assert a.stop == b.start and a.state != b.state and a.to_year + 1 == b.from_year
    assert [x.ends_in_shift for x in s] == [True] * (len(s) - 1) + [False]


def test_lake_without_folds_falls_back_to_change_points() -> None:
    rec = make_record(5)
    reversible = LakeParameters(loss_rate=0.5, recycling_max=100.0, recycling_half=2500.0, recycling_exponent=1.0)
    split = split_record(rec.series, volume_m3=VOLUME_M3, params=reversible)
    assert split.status == "fallback" and split.method == "change_points"
    assert "no folds" in split.notes[0]
    assert split_record(rec.series).method == "change_points"  # no volume: change points
    assert split_record(rec.series, volume_m3=VOLUME_M3, fit=False).method == "change_points"
    with pytest.raises(ValueError, match="volume_m3 is needed"):
        split_record(rec.series, params=DEMO_PARAMETERS)


def test_a_steady_record_is_one_stretch() -> None:
    rng = np.random.default_rng(6)
    n = 40
    series = MonitoringSeries(
        years=np.arange(1980, 1980 + n), load_kg_per_yr=np.full(n, 300.0), tp_ug_l=20.0 * np.exp(rng.normal(0, 0.1, n))
    )
    split = split_by_change_points(series)
    assert len(split.stretches) == 1 and split.stretches[0].state == "lower"


def test_segmentation_of_synthetic_shifts_fitted() -> None:
    # Records that approach the fold slowly and then flip (bench/bench_warning_signs.py: the demo lake's
    # parameters, load 50 % -> 110 % of the tipping load over 40 years, process noise 1 % of the fold P).
    # True crossing: the first year from which the simulated lake stays on the turbid side of the TRUE lake's
    # separatrix (held at the tipping-fold P above the tipping load).  Each record is fitted as a user's would be.
    # Requirement of the task: within +-2 years in at least 90 % of seeds (100/100 in the 100-record bench).
    hits, n = 0, 12
    for seed in range(n):
        rec = make_record(seed)
        assert rec.true_crossing is not None and 30 <= rec.true_crossing <= 50
        split = split_record(rec.series, volume_m3=VOLUME_M3)
        assert split.method == "fitted_separatrix"
        shift = first_shift(split)
        hits += shift is not None and abs(shift - rec.true_crossing) <= 2
    assert hits >= 0.9 * n


def test_segmentation_of_synthetic_shifts_change_points() -> None:
    # Without a model the split dates the visible jump in TP (the year after the largest one-year rise);
    # on a lake that jumps within a few years of leaving its fold (bench: "crisp lake") that is within +-2 years
    # in at least 90 % of seeds.  It lags the true separatrix crossing by the slow passage near the fold.
    hits, lags, n = 0, [], 20
    for seed in range(n):
        rec = make_record(seed, CRISP)
        shift = first_shift(split_record(rec.series, fit=False))
        assert shift is not None and rec.true_crossing is not None
        hits += abs(shift - rec.visible_jump) <= 2
        lags.append(shift - rec.true_crossing)
    assert hits >= 0.9 * n
    assert np.median(lags) >= 3  # the jump comes years after the point of no return


@pytest.fixture(scope="module")
def demo() -> MonitoringSeries:
    return parse_monitoring(DEMO_CSV)


def test_demo_record_fitted_stretches(demo: MonitoringSeries) -> None:
    # The invented demo record (sample_data/make_demo_series.py): clear, load raised past the tipping load in
    # 1985-1992 so the lake flips around 1990, turbid through the first load cut, back to clear water after the
    # deep cut of 2006-2014.
    fit = fit_monitoring(demo, DEMO_PROFILE.volume_m3, replicates=100, rng=1)
    split = split_record(demo, volume_m3=DEMO_PROFILE.volume_m3, params=fit)
    states = [s.state for s in split.stretches]
    assert states == ["clear", "turbid", "clear"]
    up, down = split.shift_years
    assert 1987 <= up <= 1992
    assert 2005 <= down <= 2014
    assert split.stretches[-1].to_year == 2023
    # the same split from the fit object, its parameters, or a fit made inside
    assert split_record(demo, volume_m3=DEMO_PROFILE.volume_m3, params=fit.params).shift_years == split.shift_years
    assert split_record(demo, volume_m3=DEMO_PROFILE.volume_m3).shift_years == split.shift_years
    # the true demo parameters agree with the fit
    assert split_record(demo, volume_m3=DEMO_PROFILE.volume_m3, params=DEMO_PARAMETERS).shift_years == (1989, 2009)


def test_demo_record_change_point_stretches(demo: MonitoringSeries) -> None:
    split = split_record(demo, fit=False)
    assert [s.state for s in split.stretches] == ["lower", "higher", "lower"]
    up, down = split.shift_years
    assert 1987 <= up <= 1992
    assert 2005 <= down <= 2015
    assert split.change_points is not None and len(split.change_points.change_points) >= 2
