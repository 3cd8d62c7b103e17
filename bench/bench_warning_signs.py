r"""Hindcast study: do the warning signs rise before a simulated lake's shift, and does the split find the shift?

Synthetic records (invented), for two lakes of the demo lake's volume
(2.79·10⁷ m³): the **demo-like lake** with the demo lake's parameters
(s = 0.5 yr⁻¹, r = 1800 kg yr⁻¹, m = 2500 kg, q = 4), whose flip is a slow
glide of a decade or more, and a **crisp lake** (s = 0.8 yr⁻¹,
r = 4000 kg yr⁻¹, m = 2500 kg, q = 8) that jumps within a few years once it
leaves the fold:

* **approach** — 60 years with the annual map
  (:func:`turnback.model.dynamics.simulate`): the load rises linearly from
  50 % to 110 % of the tipping load over the first 40 years and is then held;
  Gaussian process noise with a standard deviation of 1 % of the
  tipping-fold P each year.  The lake slows down near the fold (critical
  slowing down) and flips to turbid water.
* **null** — the same lake and the same noise draws, the load rising from
  20 % to 40 % of the tipping load: it never comes near a fold.

**True crossing**: the first year from which the simulated lake stays on
the turbid side of the *true* lake's clear threshold to the end of the
record (the product's clear-state rule with the true parameters: lake P at
or above the unstable separatrix at that year's load, held at the
tipping-fold P above the tipping load).  It is the year the lake passed its
point of no return; the visible jump in TP comes later, because a lake that
passes the fold slowly lingers near it first.  **Visible jump**: the year
after the largest one-year rise of the simulated TP.

For each approach record the product's pipeline runs as a user would:
:func:`turnback.model.fit.fit_monitoring` (through
:func:`turnback.model.stretches.split_record`), the split, and
:func:`turnback.model.stretch_warnings.record_warnings` with AR(1)
surrogates.  The null record's matched stretch is the same years as the
approach record's pre-shift stretch.

Prints:

1. Segmentation: the share of records whose split dates the shift within
   ±2 years of the true crossing (fitted split; and change points, against
   the true crossing and against the visible jump).
2. Critical slowing down: the share of pre-shift stretches with a rising
   lag-1 autocorrelation (τ > 0), and with τ > 0 and p ≤ 0.05, beside the
   matched share for the null records, with the record view's conventions
   (bandwidth 20 %, window 50 % of the stretch) and with the widest
   bandwidth of the sensitivity grid (50 %).
3. Time: the per-stretch analysis (split, indicators, sensitivity grid)
   against the whole-record indicators alone, measured in the same run.

Expected direction (Scheffer et al. 2009, Nature 461:53–59; Dakos et al.
2012, PLoS ONE 7:e41010; from memory): the lag-1 autocorrelation rises
before a fold more often than in records that never approach one.  Not a
CI gate; never asserts anything.  Run:
``.venv/bin/python -m bench.bench_warning_signs [N]`` (default N = 100).
"""

from __future__ import annotations

import math
import statistics
import sys
import time
from dataclasses import dataclass, field

import numpy as np
from turnback.model.clear_state import clear_threshold_kg
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.dynamics import simulate
from turnback.model.early_warning import early_warning
from turnback.model.equilibrium import equilibria, folds
from turnback.model.params import LakeParameters
from turnback.model.record import MonitoringSeries
from turnback.model.stretch_warnings import record_warnings
from turnback.model.stretches import StretchSplit, split_record

PARAMS = DEMO_PARAMETERS
CRISP = LakeParameters(loss_rate=0.8, recycling_max=4000.0, recycling_half=2500.0, recycling_exponent=8.0)
LAKES = (("demo-like lake", PARAMS), ("crisp lake", CRISP))
VOLUME_M3 = DEMO_PROFILE.volume_m3
FIRST_YEAR = 1960
RAMP_YEARS = 40
HOLD_YEARS = 20
APPROACH = (0.5, 1.1)  # load as a fraction of the tipping load: start, end of the ramp
NULL = (0.2, 0.4)
NOISE_FRACTION = 0.01  # process noise sd as a fraction of the tipping-fold P
STUDY_SURROGATES = 199
TOLERANCE_YEARS = 2


@dataclass(frozen=True)
class SyntheticRecord:
    series: MonitoringSeries
    p_kg: np.ndarray
    loads: np.ndarray
    true_crossing: int | None  # index of the first year of the final turbid run, None if it ends clear
    visible_jump: int  # index of the year after the largest one-year rise of TP


def _series(p: np.ndarray, loads: np.ndarray) -> MonitoringSeries:
    years = np.arange(FIRST_YEAR, FIRST_YEAR + p.size)
    return MonitoringSeries(years=years, load_kg_per_yr=loads, tp_ug_l=DEMO_PROFILE.concentration(p))


def true_crossing(params: LakeParameters, p: np.ndarray, loads: np.ndarray) -> int | None:
    """First index of the final run on the turbid side of the true lake's clear threshold."""
    fs = folds(params)
    turbid = np.array([p[i] >= clear_threshold_kg(params, float(loads[i]), fs=fs) for i in range(p.size)])
    if not turbid[-1]:
        return None
    i = p.size - 1
    while i > 0 and turbid[i - 1]:
        i -= 1
    return i


def make_record(
    seed: int, params: LakeParameters = PARAMS, load_range: tuple[float, float] = APPROACH
) -> SyntheticRecord:
    """One invented record of ``RAMP_YEARS + HOLD_YEARS`` years (module docstring)."""
    fs = folds(params)
    tip = fs[0]
    lo, hi = load_range
    loads = np.r_[np.linspace(lo * tip.load, hi * tip.load, RAMP_YEARS), np.full(HOLD_YEARS, hi * tip.load)]
    noise = np.random.default_rng(seed).normal(0.0, NOISE_FRACTION * tip.p, loads.size)
    p0 = equilibria(params, float(loads[0]))[0].p
    p = simulate(params, p0, loads, process_noise=noise).p[1:]
    jump = int(np.argmax(np.diff(p))) + 1
    return SyntheticRecord(_series(p, loads), p, loads, true_crossing(params, p, loads), jump)


def first_shift(split: StretchSplit) -> int | None:
    """Index of the first year of the second stretch, None for one stretch."""
    return split.stretches[1].start if len(split.stretches) > 1 else None


def _within(a: int | None, b: int | None) -> bool:
    return a is not None and b is not None and abs(a - b) <= TOLERANCE_YEARS


@dataclass
class Tally:
    records: int = 0
    fit_ok: int = 0
    cp_ok_true: int = 0
    cp_ok_jump: int = 0
    stretches: int = 0
    ac1_up: int = 0
    ac1_up_p: int = 0
    null_up: int = 0
    null_up_p: int = 0
    wide_up: int = 0
    wide_null_up: int = 0
    cp_lags: list[int] = field(default_factory=list)


def study(
    n_records: int,
    params: LakeParameters = PARAMS,
    *,
    n_surrogates: int = STUDY_SURROGATES,
    seed0: int = 0,
    fit: bool = True,
) -> Tally:
    """Run the hindcast study on ``n_records`` seeded records (module docstring).

    ``fit=False`` classifies the years with the true lake instead of a fit
    (faster; the segmentation shares are then those of the true rule).
    """
    t = Tally()
    for seed in range(seed0, seed0 + n_records):
        rec = make_record(seed, params)
        null = make_record(seed, params, NULL)
        t.records += 1
        fitted = split_record(rec.series, volume_m3=VOLUME_M3, params=None if fit else params)
        cps = split_record(rec.series, fit=False)
        t.fit_ok += _within(first_shift(fitted), rec.true_crossing)
        t.cp_ok_true += _within(first_shift(cps), rec.true_crossing)
        t.cp_ok_jump += _within(first_shift(cps), rec.visible_jump)
        cp_shift = first_shift(cps)
        if cp_shift is not None and rec.true_crossing is not None:
            t.cp_lags.append(cp_shift - rec.true_crossing)
        res = record_warnings(rec.series, fitted, n_surrogates=n_surrogates, rng=seed)
        pre = res.stretches[0]
        if not pre.stretch.ends_in_shift or pre.result is None or pre.sensitivity is None:
            continue
        t.stretches += 1
        a, b = pre.stretch.start, pre.stretch.stop
        t.ac1_up += pre.result.ac1.tau > 0
        t.ac1_up_p += pre.result.ac1.tau > 0 and pre.result.ac1.p_value <= 0.05
        null_ew = early_warning(null.series.tp_ug_l[a:b], null.series.years[a:b], n_surrogates=n_surrogates, rng=seed)
        t.null_up += null_ew.ac1.tau > 0
        t.null_up_p += null_ew.ac1.tau > 0 and null_ew.ac1.p_value <= 0.05
        wide_bw = max(pre.sensitivity.bandwidths)
        wide = early_warning(rec.series.tp_ug_l[a:b], bandwidth=wide_bw, n_surrogates=0)
        wide_null = early_warning(null.series.tp_ug_l[a:b], bandwidth=wide_bw, n_surrogates=0)
        t.wide_up += wide.ac1.tau > 0
        t.wide_null_up += wide_null.ac1.tau > 0
    return t


def _share(k: int, n: int) -> str:
    if n == 0:
        return "n/a"
    p = k / n
    return f"{p:.2f} ± {math.sqrt(p * (1 - p) / n):.2f} ({k}/{n})"


def timing(reps: int = 5) -> tuple[float, float]:
    """Median seconds: whole-record indicators alone, and split + per-stretch analysis, on one record."""
    rec = make_record(12345)
    split = split_record(rec.series, volume_m3=VOLUME_M3)

    def whole() -> None:
        early_warning(rec.series.tp_ug_l, rec.series.years, n_surrogates=500, rng=1)

    def per_stretch() -> None:
        record_warnings(rec.series, split, n_surrogates=500, rng=1)

    out = []
    for fn in (whole, per_stretch):
        times = []
        for _ in range(reps):
            t0 = time.perf_counter()
            fn()
            times.append(time.perf_counter() - t0)
        out.append(statistics.median(times))
    return out[0], out[1]


def main(argv: list[str] | None = None) -> None:
    args = sys.argv[1:] if argv is None else argv
    n = int(args[0]) if args else 100
    for name, params in LAKES:
        t0 = time.perf_counter()
        t = study(n, params, n_surrogates=STUDY_SURROGATES if n >= 10 else 19)
        elapsed = time.perf_counter() - t0
        fs = folds(params)
        print(
            f"{name}: tipping load {fs[0].load:.0f} kg/yr; {t.records} seeded records, fitted as a user would "
            f"({elapsed:.0f} s)"
        )
        print(f"  Segmentation, shift dated within ±{TOLERANCE_YEARS} years:")
        print(f"    fitted split vs true crossing        {_share(t.fit_ok, t.records)}")
        print(f"    change points vs true crossing       {_share(t.cp_ok_true, t.records)}")
        print(f"    change points vs visible jump        {_share(t.cp_ok_jump, t.records)}")
        if t.cp_lags:
            q = np.percentile(t.cp_lags, [5, 50, 95])
            print(f"    change points minus true crossing    median {q[1]:+.0f} yr (5-95 %: {q[0]:+.0f}, {q[2]:+.0f})")
        print(f"  Critical slowing down, pre-shift stretches tested: {t.stretches}")
        print("    lag-1 autocorrelation rising (τ > 0), record view's conventions (bandwidth 20 %, window 50 %):")
        print(f"      before the shift    {_share(t.ac1_up, t.stretches)}")
        print(f"      matched null        {_share(t.null_up, t.stretches)}")
        print(f"    τ > 0 and p ≤ 0.05 ({STUDY_SURROGATES} AR(1) surrogates):")
        print(f"      before the shift    {_share(t.ac1_up_p, t.stretches)}")
        print(f"      matched null        {_share(t.null_up_p, t.stretches)}")
        print("    τ > 0 with the widest bandwidth of the sensitivity grid (50 %):")
        print(f"      before the shift    {_share(t.wide_up, t.stretches)}")
        print(f"      matched null        {_share(t.wide_null_up, t.stretches)}")
    whole, per = timing(5 if n >= 10 else 1)
    print(
        f"Time on one 60-year record: whole-record indicators {whole * 1e3:.0f} ms; per-stretch indicators with "
        f"their sensitivity grids (9 cells) {per * 1e3:.0f} ms: ratio {per / whole:.1f} ×"
    )


if __name__ == "__main__":
    main()
