"""``turnback fit``: fit the lake model to a monitoring record, with bands on the folds.

``turnback fit FILE.csv --volume-m3 V [--replicates N] [--seed K] [--json]``
(or ``--lake FILE`` for the volume) reads a monitoring CSV in either format
(annual means, :mod:`turnback.model.io.monitoring_csv`; or one row per
sample with ``--loads LOADS.csv``, :mod:`turnback.model.io.sample_csv`).
``--method least-squares`` fits the annual map by conditional least squares
under lognormal process error and bootstraps the tipping and recovery loads;
``--method observation-error`` fits the state-space model with observation
error and draws from its posterior (:mod:`turnback.model.fit`).  The default
is observation error for a sample file and least squares for annual means.
``--json`` prints one object::

    {"params": {"loss_rate", "recycling_max", "recycling_half", "recycling_exponent"},
     "tipping_load": {"estimate", "low", "high"},
     "recovery_load": {"estimate", "low", "high"},
     "regime_probability": {"reversible", "hysteretic", "irreversible"},
     "warnings": [...],
     "method": "conditional_least_squares" | "state_space_laplace",
     "error_model": {"process_sd", "observation_sd", "observation_sd_source"},
     "parameter_draws": [{"loss_rate", "recycling_max", "recycling_half", "recycling_exponent"}, ...]}

in kg and yr; ``low``/``high`` bound the 90% interval and ``null`` marks a
value the data do not give; ``parameter_draws`` (at most 1000) can be pasted
into a plan's lake.  Progress goes to stderr, and only without ``--json``.
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path
from typing import Any

from turnback.model.fit import (
    DEFAULT_REPLICATES,
    MIN_REPLICATES,
    FitResult,
    Method,
    ParameterEstimate,
    fit_monitoring,
)
from turnback.model.io.lake_file import load_profile_file
from turnback.model.params import LakeProfile
from turnback.model.record import MonitoringSeries

from . import _fit_two_pool, _records
from ._shared import number, print_json

MAX_REPLICATES = 100_000


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "fit",
        help="fit the lake model to a monitoring record (CSV), with bands on the tipping and recovery loads",
        description="Fit the P-recycling lake model to a lake's monitoring record, with bands on the tipping and "
        "recovery loads. FILE.csv is either annual (columns year, load_kg (external TP load [kg/yr]) and tp_ug_l "
        "(mean lake TP [µg/L]), optionally secchi_m and chl_ug_l; one row per consecutive year) or one row per "
        "sample (columns date (YYYY-MM-DD), tp_ug_l or tp_mg_l (<X below the detection limit X), optionally site "
        "and depth_m), with the loads from --loads LOADS.csv (year,load_kg) or a load_kg column.",
    )
    p.add_argument("file", metavar="FILE.csv", help="the monitoring record")
    p.add_argument("--volume-m3", type=number, metavar="V", help="lake volume [m³] (or give --lake)")
    p.add_argument("--lake", metavar="FILE", help="lake profile (JSON or TOML) that gives the volume")
    p.add_argument(
        "--replicates",
        type=int,
        default=DEFAULT_REPLICATES,
        metavar="N",
        help=f"bootstrap replicates or posterior draws (default {DEFAULT_REPLICATES}, at least {MIN_REPLICATES})",
    )
    p.add_argument(
        "--method",
        choices=("least-squares", "observation-error"),
        help="least-squares: conditional least squares with a residual bootstrap (fast; the observed TP is taken as "
        "the lake state); observation-error: the state-space fit with observation error (Laplace likelihood, "
        "posterior draws). Default: observation-error for a sample file, least-squares for annual means",
    )
    p.add_argument("--seed", type=int, default=1, metavar="K", help="random seed; the same seed gives the same result")
    p.add_argument(
        "--scheme",
        choices=("recursive", "fixed"),
        default="recursive",
        help="bootstrap scheme: simulate each replicate record (recursive, default) or keep the observed states",
    )
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    _records.add_arguments(p)
    _fit_two_pool.add_arguments(p)
    p.set_defaults(run=run)


def _volume(args: argparse.Namespace) -> tuple[float, LakeProfile | None]:
    if args.volume_m3 is not None and args.lake:
        raise ValueError("give the lake volume once: --volume-m3 or --lake, not both")
    if args.lake:
        profile, _ = load_profile_file(args.lake)
        return profile.volume_m3, profile
    if args.volume_m3 is None:
        raise ValueError("the lake volume is needed: give --volume-m3 V [m³] or a --lake profile file")
    v = float(args.volume_m3)
    if not math.isfinite(v) or v <= 0.0:
        raise ValueError(f"--volume-m3 must be a finite number greater than 0 [m³]; got {args.volume_m3:g}")
    return v, None


def _progress_printer() -> Any:
    last = [-1]

    def report(fraction: float, message: str) -> None:
        step = int(10 * fraction)
        if step != last[0]:
            last[0] = step
            print(f"turnback fit: {message}", file=sys.stderr, flush=True)

    return report


def _pm(est: ParameterEstimate, fmt: str) -> str:
    if est.std_error is not None:
        return f"{est.value:{fmt}} ± {est.std_error:{fmt}}"
    why = "at a bound" if est.at_bound else "not identified by the data"
    return f"{est.value:{fmt}} ({why}, no standard error)"


def _cell(v: float | None) -> str:
    return "—" if v is None else f"{v:,.0f}"


def _table(res: FitResult, series: MonitoringSeries, source: str, profile: LakeProfile | None, seed: int) -> str:
    lines = []
    v = res.volume_m3 or 0.0
    if profile is not None:
        lines.append(f"Lake: {profile.name}  (volume {v:.4g} m³)")
    else:
        lines.append(f"Lake volume: {v:.4g} m³")
    lines.append(
        f"Record: {source}, {series.years[0]}–{series.years[-1]} ({series.n_years} years, "
        f"{series.n_years - 1} annual steps)"
    )
    lines.extend(_records.describe(series))
    for note in series.notes:
        lines.append(f"  note: {note}")
    for warning in series.warnings:
        lines.append(f"  warning: {warning}")
    lines.append("")
    if res.observation is not None:
        obs = res.observation
        lines.append(
            "Fitted annual map (maximum likelihood with process and observation error; Laplace approximation of the "
            "state-space likelihood)"
        )
        if obs.observation_sd is not None:
            tau = f"observation error SD {obs.observation_sd:.3f} (estimated)"
        else:
            tau = f"observation error SD {float(obs.tau.min()):.3f}–{float(obs.tau.max()):.3f} (from the samples)"
        lines.append(f"  process error SD {obs.process_sd:.3f}, {tau}, on the log scale")
    else:
        lines.append("Fitted annual map (conditional least squares, lognormal process error)")
    est = {e.name: e for e in res.point.estimates}
    s, r, m, q = (est[k] for k in ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent"))
    lines.append(f"  loss rate s                 {_pm(s, '.3g')} /yr")
    lines.append(f"  maximum recycling r         {_pm(r, ',.0f')} kg/yr")
    lines.append(f"  recycling half-saturation m {_pm(m, ',.0f')} kg  ({m.value * 1e6 / v:.1f} µg/L TP)")
    lines.append(f"  recycling exponent q        {_pm(q, '.3g')}")
    d = res.point.diagnostics
    if d is not None and res.observation is not None:
        lines.append(
            f"  standardised one-step prediction errors: SD {d.sd:.2f}, lag-1 autocorrelation "
            f"{d.lag1_autocorrelation:+.2f}, Shapiro–Wilk p {d.shapiro_p:.2g}"
        )
    elif d is not None:
        lines.append(
            f"  residuals (log scale): SD {d.sd:.3f}, lag-1 autocorrelation {d.lag1_autocorrelation:+.2f}, "
            f"Shapiro–Wilk p {d.shapiro_p:.2g}"
        )
    lines.append("")
    if res.observation is not None:
        lines.append(
            f"Thresholds: {res.level:.0%} posterior band ({res.replicates} draws, seed {seed}, acceptance "
            f"{res.observation.acceptance:.0%})"
        )
    else:
        lines.append(
            f"Thresholds: {res.level:.0%} bootstrap band ({res.replicates_used} of {res.replicates} replicates, "
            f"seed {seed}, {res.draws.scheme} scheme)"
        )
    lines.append(f"  {'':<15}{'estimate':>12}{'low':>10}{'high':>10}   [kg/yr]")
    for label, band in (("tipping load", res.tipping_load), ("recovery load", res.recovery_load)):
        lines.append(f"  {label:<15}{_cell(band.estimate):>12}{_cell(band.low):>10}{_cell(band.high):>10}")
    pr = res.regime_probability
    lines.append(
        f"Regime (best fit: {res.regime}); {'posterior' if res.observation is not None else 'bootstrap'} shares: "
        f"hysteretic {pr.hysteretic:.1%}, "
        f"irreversible {pr.irreversible:.1%}, reversible {pr.reversible:.1%}"
    )
    if res.warnings:
        lines.append("")
        lines.append("Warnings:")
        for w in res.warnings:
            lines.append(f"  - {w}")
    lines.append("")
    lines.append("Scenario estimates from a simplified one-box model; not a water-safety assessment.")
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    volume, profile = _volume(args)
    if not MIN_REPLICATES <= args.replicates <= MAX_REPLICATES:
        raise ValueError(f"--replicates must be between {MIN_REPLICATES} and {MAX_REPLICATES}; 1000 is the default")
    if args.seed < 0:
        raise ValueError(f"--seed must be a whole number >= 0; got {args.seed}")
    series = _records.read(args)
    progress = None if args.json else _progress_printer()
    if args.model == "two-pool":
        if args.method is not None:
            raise ValueError("--method belongs to the one-box fit; the two-pool fit is by least squares")
        two = _fit_two_pool.run_fit(args, series, volume, progress)
        if args.json:
            print_json(two.to_dict())
        else:
            print(_fit_two_pool.table(two, Path(args.file).name, volume))
        return 0
    _fit_two_pool.refuse_two_pool_flags(args)
    method: Method | None = None
    if args.method is not None:
        method = "least_squares" if args.method == "least-squares" else "observation_error"
    res = fit_monitoring(
        series, volume, replicates=args.replicates, rng=args.seed, scheme=args.scheme, progress=progress, method=method
    )
    if args.json:
        print_json(res.to_dict())
    else:
        print(_table(res, series, Path(args.file).name, profile, args.seed))
    return 0
