"""``turnback compare``: run the scenarios of a plan and compare their outcomes.

``turnback compare PLAN.json --json`` prints one JSON object
``{"scenarios": [{"name", "p_clear_final", "p_flip", "recovery_years_median",
"final_tp_median_ug_l"}, ...]}`` in input order; ``--full`` adds the other
outcome numbers.  Definitions (year numbering, clear state, recovery, flip)
are in :mod:`turnback.model.plan`.
"""

from __future__ import annotations

import argparse
import sys
from typing import Any

from turnback.model.ensemble import compare_plan
from turnback.model.io.plan_file import load_plan_file
from turnback.model.outcomes import Comparison

from ._shared import print_json


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "compare",
        help="run the scenarios of a plan (PLAN.json) and compare their outcomes",
        description="Run every scenario of a plan through the annual P model (ensembles with the given "
        "variability and seeds) and compare the outcomes. Scenario estimates from a simplified model: not a "
        "water-safety or health assessment; in-lake treatments need permits and licensed practice.",
    )
    p.add_argument("plan", metavar="PLAN.json", help="the plan: a lake and a list of scenarios")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.add_argument("--full", action="store_true", help="with --json, include every outcome number")
    p.set_defaults(run=run)


def _progress_printer() -> Any:
    if not sys.stderr.isatty():
        return None

    def show(fraction: float, message: str) -> None:
        print(f"\r{100 * fraction:5.1f}%  {message[:60]:<60}", end="", file=sys.stderr, flush=True)

    return show


def _table(comp: Comparison) -> str:
    lake = comp.plan.lake
    lines = [f"Lake: {lake.name}   regime: {comp.regime}"]
    if comp.tipping_load_kg_per_yr is not None and comp.recovery_load_kg_per_yr is not None:
        lines[0] += (
            f"   tipping load {comp.tipping_load_kg_per_yr:,.0f} kg/yr, "
            f"recovery load {comp.recovery_load_kg_per_yr:,.0f} kg/yr"
        )
    head = f"{'scenario':<20}{'clear at end':>14}{'flip':>8}{'median recovery':>17}{'final TP [µg/L]':>17}  end state"
    lines += ["", head]
    for r in comp.results:
        flip = "-" if r.p_flip is None else f"{r.p_flip:.1%}"
        rec = "-" if r.recovery_years_median is None else f"year {r.recovery_years_median:g}"
        lines.append(
            f"{r.name[:19]:<20}{r.p_clear_final:>14.1%}{flip:>8}{rec:>17}{r.final_tp_median_ug_l:>17.1f}  {r.end_state}"
        )
        if r.precaution is not None:
            lines.append(f"{'':<20}precaution: {r.precaution.message}")
    lines += [
        "",
        "Year 0 is the start; flip is for members that start clear; '-' = not defined or fewer than half recover.",
        "Scenario estimates from a simplified model, not a water-safety or health assessment; follow local",
        "health authorities. In-lake treatments need permits and licensed practice.",
    ]
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    plan = load_plan_file(args.plan)
    progress = None if args.json else _progress_printer()
    comp = compare_plan(plan, progress=progress)
    if progress is not None:
        print("\r" + " " * 70 + "\r", end="", file=sys.stderr, flush=True)
    if args.json:
        rows = [r.details() if args.full else r.summary() for r in comp.results]
        print_json({"scenarios": rows})
    else:
        print(_table(comp))
    return 0
