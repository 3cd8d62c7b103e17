"""Reading a monitoring record in either format, with the sample-file options (not a command itself).

Shared by ``fit`` and ``warnings``: a file whose header names a ``date``
column is a sample file (one row per sample; loads from ``--loads`` or a
``load_kg`` column), anything else the annual format
(:func:`turnback.model.io.sample_csv.read_record`).
"""

from __future__ import annotations

import argparse
import re
from typing import Any

from turnback.model.io.sample_csv import read_record
from turnback.model.record import MonitoringSeries
from turnback.model.sample_means import CENSORED_RULES, DEFAULT_MIN_SAMPLES, SampleRules

from ._shared import number

_SEASON = re.compile(r"^\s*(\d{1,2})\s*-\s*(\d{1,2})\s*$")


def season(text: str) -> tuple[int, int]:
    """argparse type: ``FROM-TO`` months such as ``5-10``."""
    m = _SEASON.match(text)
    if m is None or not 1 <= int(m.group(1)) <= int(m.group(2)) <= 12:
        raise argparse.ArgumentTypeError(
            f"{text!r} is not a growing season; give the first and last month as FROM-TO, such as 5-10 (May–October)"
        )
    return int(m.group(1)), int(m.group(2))


def add_arguments(p: argparse.ArgumentParser) -> None:
    """``--loads`` and the rules that turn samples into annual means."""
    p.add_argument(
        "--loads",
        metavar="LOADS.csv",
        help="sample files: the loads file (columns year,load_kg; one row per year), unless the sample file has a "
        "load_kg column",
    )
    p.add_argument(
        "--season",
        type=season,
        metavar="FROM-TO",
        help="sample files: months of the growing season (default 5-10, May–October)",
    )
    p.add_argument(
        "--censored",
        choices=CENSORED_RULES,
        help="sample files: a value below the detection limit (<X) counts as half the limit (default), the limit "
        "itself, or zero",
    )
    p.add_argument(
        "--min-samples",
        type=int,
        metavar="N",
        help=f"sample files: a year with fewer samples is flagged and its standard error widened "
        f"(default {DEFAULT_MIN_SAMPLES})",
    )
    p.add_argument(
        "--max-depth-m", type=number, metavar="D", help="sample files: leave out samples deeper than D metres"
    )


def rules(args: argparse.Namespace) -> SampleRules | None:
    """The sample rules asked for, or None when every option is left at its default."""
    given: dict[str, Any] = {}
    if args.season is not None:
        given["season"] = args.season
    if args.censored is not None:
        given["censored"] = args.censored
    if args.min_samples is not None:
        if not 1 <= args.min_samples <= 366:
            raise ValueError(f"--min-samples must be a whole number from 1 to 366; got {args.min_samples}")
        given["min_samples"] = args.min_samples
    if args.max_depth_m is not None:
        if args.max_depth_m < 0:
            raise ValueError(f"--max-depth-m must be a depth >= 0 [m]; got {args.max_depth_m:g}")
        given["max_depth_m"] = float(args.max_depth_m)
    return SampleRules(**given) if given else None


def read(args: argparse.Namespace) -> MonitoringSeries:
    """The record named by ``args.file`` in either format, with ``args.loads`` and the sample rules."""
    return read_record(args.file, args.loads, rules(args))


def describe(series: MonitoringSeries) -> list[str]:
    """Lines for a text report: how a sample record became annual means."""
    if not series.from_samples or series.n_samples is None:
        return []
    n = series.n_samples
    span = f"{int(n.min())}–{int(n.max())} a year"
    return [f"  annual means from {int(n.sum()):,} site visits in the growing season ({span})"]
