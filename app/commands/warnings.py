"""``turnback warnings``: warning-sign indicators of a monitoring record, whole and per stretch of one state.

``turnback warnings FILE.csv [--volume-m3 V | --lake FILE | --no-fit] [--seed K] [--surrogates N] [--json]``

Over the whole record: the record view's indicators (rolling variance,
lag-1 autocorrelation and skewness of TP after Gaussian-kernel detrending,
bandwidth 20 % of the record, window half the record, Kendall τ with
p-values against AR(1) surrogates; :mod:`turnback.model.early_warning`),
with the same seed and number of surrogates, so the numbers are the same.
Then per stretch of one state (:mod:`turnback.model.stretches`,
:mod:`turnback.model.stretch_warnings`): with a lake volume the record is
fitted and each year classified clear or turbid by the fitted separatrix;
without one (or with ``--no-fit``) the record is cut by change points in
ln TP.  ``--json`` prints one object::

    {"window", "bandwidth",
     "variance": {"tau", "p_value"}, "ac1": {...}, "skewness": {...},
     "n_surrogates", "seed", "min_stretch_years",
     "split": {"method", "rule", "notes", ...},
     "stretches": [{"from_year", "to_year", "state", "ends_in_shift",
                    "variance": {"tau", "p_value"} | null, "ac1": ..., "skewness": ...,
                    "window", "bandwidth", "note", "sensitivity"}, ...],
     "words": [...]}

Stretches are in time order; one too short to test has ``null``
indicators and a ``note``.  ``sensitivity`` holds τ and p over a grid of
windows and bandwidths and ``sign_depends_on_choices`` per indicator.
"""

from __future__ import annotations

import argparse
import json
import math
from pathlib import Path
from typing import Any

from turnback.model.early_warning import INDICATORS
from turnback.model.io.lake_file import load_profile_file
from turnback.model.record import MonitoringSeries
from turnback.model.stretch_warnings import DEFAULT_SEED, DEFAULT_SURROGATES, RecordWarnings, record_warnings
from turnback.model.stretches import split_record

from . import _records
from ._shared import number

MAX_SURROGATES = 100_000
_LABEL = {"variance": "variance", "ac1": "lag-1 autocorr.", "skewness": "skewness"}


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "warnings",
        help="warning-sign indicators of a monitoring record (CSV), over the whole record and per stretch of one state",
        description="Rolling variance, lag-1 autocorrelation and skewness of lake TP with Kendall trends and "
        "surrogate p-values (Dakos et al. 2012), over the whole record and on each stretch of one state: before "
        "each shift, and now. With a lake volume the record is fitted and each year classified clear or turbid "
        "by the fitted separatrix; without one, stretches come from change points in the TP level. FILE.csv has "
        "the columns year, load_kg and tp_ug_l, one row per consecutive year, or one row per sample (date, tp_ug_l "
        "or tp_mg_l, optionally site and depth_m) with --loads LOADS.csv; the indicators use the annual means.",
    )
    p.add_argument("file", metavar="FILE.csv", help="the monitoring record")
    p.add_argument("--volume-m3", type=number, metavar="V", help="lake volume [m³], for the fitted classification")
    p.add_argument("--lake", metavar="FILE", help="lake profile (JSON or TOML) that gives the volume")
    p.add_argument("--no-fit", action="store_true", help="stretches from change points in the TP level only")
    p.add_argument(
        "--seed",
        type=int,
        default=DEFAULT_SEED,
        metavar="K",
        help=f"seed of the surrogate series (default {DEFAULT_SEED}, the dashboard's)",
    )
    p.add_argument(
        "--surrogates",
        type=int,
        default=DEFAULT_SURROGATES,
        metavar="N",
        help=f"AR(1) surrogates per p-value (default {DEFAULT_SURROGATES}, the dashboard's)",
    )
    p.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    _records.add_arguments(p)
    p.set_defaults(run=run)


def read_record(args: argparse.Namespace) -> MonitoringSeries:
    """The one place this command reads a record file: either format (a ``date`` column means samples)."""
    return _records.read(args)


def _volume(args: argparse.Namespace) -> float | None:
    if args.volume_m3 is not None and args.lake:
        raise ValueError("give the lake volume once: --volume-m3 or --lake, not both")
    if args.no_fit and (args.volume_m3 is not None or args.lake):
        raise ValueError("--no-fit uses change points only: leave out --volume-m3 and --lake, or drop --no-fit")
    if args.lake:
        profile, _ = load_profile_file(args.lake)
        return float(profile.volume_m3)
    if args.volume_m3 is None:
        return None
    v = float(args.volume_m3)
    if not math.isfinite(v) or v <= 0.0:
        raise ValueError(f"--volume-m3 must be a finite number greater than 0 [m³]; got {args.volume_m3:g}")
    return v


def _tau_p(tau: float | None, p: float | None) -> str:
    if tau is None:
        return "—"
    return f"τ {tau:+.2f}" + ("" if p is None else f" (p {p:.2g})")


def _text(res: RecordWarnings, source: str) -> str:
    d: dict[str, Any] = dict(res.to_dict())
    lines = [
        f"Record: {source}, {res.split.years[0]}–{res.split.years[-1]} ({res.split.years.size} years)",
        f"Whole record (window {d['window']} yr, bandwidth {d['bandwidth']:g} yr, {res.n_surrogates} surrogates, "
        f"seed {res.seed}):",
    ]
    for ind in INDICATORS:
        pair: Any = d[ind]
        lines.append(f"  {_LABEL[ind]:<17}{_tau_p(pair['tau'], pair['p_value'])}")
    lines.append("")
    how = "the fitted lake model" if res.split.method == "fitted_separatrix" else "change points in the TP level"
    lines.append(f"Stretches of one state, by {how}")
    lines.append(f"  rule: {res.split.rule}")
    lines.append(f"  {'years':<11}{'state':<8}{'variance':<19}{'lag-1 autocorr.':<19}{'skewness':<19}")
    for sw in d["stretches"]:
        years = f"{sw['from_year']}–{sw['to_year']}"
        if sw["variance"] is None:
            lines.append(f"  {years:<11}{sw['state']:<8}{sw['note']}")
            continue
        cells = "".join(f"{_tau_p(sw[k]['tau'], sw[k]['p_value']):<19}" for k in INDICATORS)
        lines.append(f"  {years:<11}{sw['state']:<8}{cells}")
        sens = sw["sensitivity"]
        if sens is not None:
            dep = [_LABEL[k] for k in INDICATORS if sens["sign_depends_on_choices"][k]]
            grid = f"windows {sens['windows']} yr × bandwidths {[round(b, 2) for b in sens['bandwidths']]} yr"
            tail = f"sign depends on the choices for {', '.join(dep)}" if dep else "signs hold across the grid"
            lines.append(f"  {'':<19}{grid}: {tail}")
    for note in res.split.notes:
        lines.append(f"  note: {note}")
    lines.append("")
    lines.extend(res.words)
    return "\n".join(line.rstrip() for line in lines)


def run(args: argparse.Namespace) -> int:
    if args.surrogates < 0 or args.surrogates > MAX_SURROGATES:
        raise ValueError(f"--surrogates must be between 0 and {MAX_SURROGATES}; {DEFAULT_SURROGATES} is the default")
    if args.seed < 0:
        raise ValueError(f"--seed must be a whole number >= 0; got {args.seed}")
    volume = _volume(args)
    series = read_record(args)
    split = split_record(series, volume_m3=volume, fit=not args.no_fit)
    res = record_warnings(series, split, n_surrogates=args.surrogates, rng=args.seed)
    if args.json:
        print(json.dumps(res.to_dict(), allow_nan=False, ensure_ascii=False))
    else:
        print(_text(res, Path(args.file).name))
    return 0
