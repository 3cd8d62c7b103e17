"""``turnback screen``: screen a region's lakes at once, on this machine or on a Dask cluster.

``turnback screen LAKES.csv [--records RECORDS.csv] [--loads LOADS.csv]
[--replicates N] [--seed S] [--scheduler local|ADDRESS] [--workers N]
[-o OUT.csv] [--json]``

The files are read by :mod:`turnback.model.io.region_csv`, each lake is
screened by :mod:`turnback.model.screening` (analysis of given parameters,
or a fit with a bootstrap), and the lakes are spread over Dask workers by
:mod:`turnback.model.distributed`.  ``--json`` prints one object::

    {"lakes": [{"lake_id", "regime", "tipping_load", "recovery_load", "margin_kg_yr",
                "state", "p_irreversible", "p_hysteretic", "warnings"}, ...],
     "failed": [{"lake_id", "message"}, ...]}

in the lake table's order (loads in kg yr⁻¹).  Without ``--json`` a table
ranked by margin is printed.  ``-o OUT.csv`` writes the lakes with the same
columns.  A progress bar goes to stderr when stderr is a terminal.  The exit
status is 0 when at least one lake was screened; otherwise 2, with one line.
"""

from __future__ import annotations

import argparse
import csv
import io
import json
import sys
from pathlib import Path
from typing import Any, TextIO

from turnback.model.bootstrap import DEFAULT_REPLICATES, MIN_REPLICATES
from turnback.model.distributed import check_address, screen_region
from turnback.model.io.region_csv import read_region
from turnback.model.progress import Progress
from turnback.model.screening import RESULT_KEYS, ScreenFailure, ScreenResult

MAX_REPLICATES = 100_000


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "screen",
        help="screen a region's lakes: regime, tipping and recovery loads, margin, state (Dask)",
        description="Screen every lake of a region at once. LAKES.csv has one row per lake: lake_id, optional "
        "name, volume_m3, optional area_km2, load_kg_yr (today's load) and either all four of loss_rate, "
        "recycling_max, recycling_half, recycling_exponent (analysed) or none (fitted from RECORDS.csv). "
        "The lakes run on this machine's cores, or on a running Dask cluster with --scheduler ADDRESS.",
    )
    p.add_argument("lakes", metavar="LAKES.csv", help="the region's lake table")
    p.add_argument(
        "--records",
        metavar="RECORDS.csv",
        help="annual monitoring rows in long format: lake_id, year, load_kg, tp_ug_l (optionally secchi_m, chl_ug_l)",
    )
    p.add_argument(
        "--loads",
        metavar="LOADS.csv",
        help="each record year's load in long format (lake_id, year, load_kg), for records without load_kg",
    )
    p.add_argument(
        "--replicates",
        type=int,
        default=DEFAULT_REPLICATES,
        metavar="N",
        help=f"bootstrap replicates of each fitted lake (default {DEFAULT_REPLICATES}, at least {MIN_REPLICATES})",
    )
    p.add_argument(
        "--seed",
        type=int,
        default=1,
        metavar="S",
        help="random seed of every fitted lake, as 'turnback fit --seed' (default 1)",
    )
    p.add_argument(
        "--scheduler",
        default="local",
        metavar="local|ADDRESS",
        help="'local' (default): this machine's cores; or a running Dask scheduler such as tcp://host:8786",
    )
    p.add_argument("--workers", type=int, metavar="N", help="local worker processes (default: this machine's cores)")
    p.add_argument("-o", "--output", metavar="OUT.csv", help="also write the screened lakes to this CSV file")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(run=run)


def _progress_bar(stream: TextIO) -> Progress:
    width = 30

    def show(fraction: float, message: str) -> None:
        filled = round(width * fraction)
        stream.write(f"\r[{'#' * filled}{'.' * (width - filled)}] {message}   ")
        if fraction >= 1.0:
            stream.write("\n")
        stream.flush()

    return show


def _cell(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, list):
        return " | ".join(value)
    if isinstance(value, float):
        return repr(value)
    return str(value)


def csv_text(results: list[ScreenResult]) -> str:
    """The screened lakes as CSV text: the columns of :data:`RESULT_KEYS`, warnings joined by `` | ``."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(RESULT_KEYS)
    for r in results:
        d = r.to_dict()
        w.writerow([_cell(d[k]) for k in RESULT_KEYS])
    return buf.getvalue()


def _num(v: float | None, fmt: str = ",.0f") -> str:
    return "—" if v is None else f"{v:{fmt}}"


def _rank_key(r: ScreenResult) -> tuple[int, float]:
    return (1, 0.0) if r.margin_kg_yr is None else (0, r.margin_kg_yr)


def _table(results: list[ScreenResult], failed: list[ScreenFailure], notes: tuple[str, ...], args: Any) -> str:
    n_fit = sum(r.fitted for r in results)
    total = len(results) + len(failed)
    lines = [
        f"Screened {len(results)} of {total} lakes ({n_fit} fitted with {args.replicates} bootstrap replicates, "
        f"seed {args.seed}); ranked by margin to the tipping load, smallest first. Loads in kg/yr.",
        "",
        f"{'lake':<16}{'regime':<14}{'state':<8}{'tipping':>10}{'recovery':>10}{'margin':>10}"
        f"{'P(irrev.)':>11}{'P(hyst.)':>10}",
    ]
    for r in sorted(results, key=_rank_key):
        lines.append(
            f"{r.lake_id[:15]:<16}{r.regime:<14}{r.state or '—':<8}{_num(r.tipping_load):>10}"
            f"{_num(r.recovery_load):>10}{_num(r.margin_kg_yr, '+,.0f'):>10}"
            f"{_num(r.p_irreversible, '.0%'):>11}{_num(r.p_hysteretic, '.0%'):>10}"
        )
    warned = [r for r in results if r.warnings]
    if warned:
        lines += ["", "Warnings:"]
        for r in warned:
            lines += [f"  {r.lake_id}: {w}" for w in r.warnings]
    if failed:
        lines += ["", f"Not screened ({len(failed)}):"]
        lines += [f"  {f.lake_id}: {f.message}" for f in failed]
    if notes:
        lines += ["", *(f"note: {n}" for n in notes)]
    lines += [
        "",
        "Scenario estimates from a simplified one-box model; not a water-safety assessment. "
        "Follow local health authorities; in-lake treatments need permits and licensed practice.",
    ]
    return "\n".join(lines)


def _write_csv(path: str, results: list[ScreenResult]) -> None:
    try:
        Path(path).write_text(csv_text(results), encoding="utf-8", newline="")
    except OSError as exc:
        raise ValueError(f"cannot write {path!r}: {exc.strerror or type(exc).__name__}; check the folder") from None


def run(args: argparse.Namespace) -> int:
    if not MIN_REPLICATES <= args.replicates <= MAX_REPLICATES:
        raise ValueError(f"--replicates must be between {MIN_REPLICATES} and {MAX_REPLICATES}; 1000 is the default")
    if args.seed < 0:
        raise ValueError(f"--seed must be a whole number >= 0; got {args.seed}")
    if args.workers is not None and not 1 <= args.workers <= 1024:
        raise ValueError(f"--workers must be between 1 and 1024; got {args.workers}")
    if args.scheduler != "local":
        try:
            check_address(args.scheduler)
        except ValueError:
            raise ValueError(
                f"--scheduler must be 'local' or the address of a running Dask scheduler such as "
                f"tcp://10.0.0.5:8786; got {args.scheduler!r}"
            ) from None
        if args.workers is not None:
            raise ValueError("--workers is for --scheduler local; a cluster's workers are started with the cluster")
    region = read_region(args.lakes, args.records, args.loads)
    progress = _progress_bar(sys.stderr) if sys.stderr.isatty() else None
    screened = iter(
        screen_region(
            region.lakes,
            replicates=args.replicates,
            rng=args.seed,
            scheduler=args.scheduler,
            workers=args.workers,
            progress=progress,
        )
    )
    outcomes: list[ScreenResult | ScreenFailure] = [
        e if isinstance(e, ScreenFailure) else next(screened) for e in region.entries
    ]
    results = [o for o in outcomes if isinstance(o, ScreenResult)]
    failed = [o for o in outcomes if isinstance(o, ScreenFailure)]
    if not results:
        first = failed[0]
        more = f" (and {len(failed) - 1} more lakes)" if len(failed) > 1 else ""
        raise ValueError(f"no lake could be screened; lake {first.lake_id!r}: {first.message}{more}")
    if args.output:
        _write_csv(args.output, results)
    if args.json:
        payload = {"lakes": [r.to_dict() for r in results], "failed": [f.to_dict() for f in failed]}
        print(json.dumps(payload, allow_nan=False, ensure_ascii=False))
    else:
        print(_table(results, failed, region.notes, args))
    return 0
