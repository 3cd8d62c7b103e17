"""``turnback report``: a standalone HTML report of a plan's scenario comparison.

``turnback report PLAN.json -o report.html [--csv DIR] [--png DIR]``.  The
HTML embeds plotly.js (opens without internet); ``--csv`` writes the
trajectories and the outcome table as CSV; ``--png`` writes the figures as
PNG through kaleido (needs Chrome or Chromium).  The HTML is written first
and atomically, so a failure later never leaves a half-written report; a
link, folder or other special file at ``-o`` is never replaced (the rule of
:mod:`turnback.model.io.files`).
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from turnback.app.report import build_report_html, report_figures, write_csv, write_pngs
from turnback.model.ensemble import compare_plan
from turnback.model.io.files import check_target, write_atomic
from turnback.model.io.plan_file import load_plan_file


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "report",
        help="write a standalone HTML report of a plan's scenario comparison",
        description="Compare the scenarios of a plan and write a standalone HTML report (figures inline, "
        "assumptions and cautions stated), optionally with CSV tables and PNG figures.",
    )
    p.add_argument("plan", metavar="PLAN.json", help="the plan: a lake and a list of scenarios")
    p.add_argument(
        "-o",
        "--output",
        default="turnback-report.html",
        metavar="FILE",
        help="HTML file to write (default turnback-report.html)",
    )
    p.add_argument("--csv", metavar="DIR", help="also write trajectories.csv and outcomes.csv into DIR")
    p.add_argument("--png", metavar="DIR", help="also write each figure as PNG into DIR (needs Chromium)")
    p.set_defaults(run=run)


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and a.samefile(b)
    except OSError:
        return False


def run(args: argparse.Namespace) -> int:
    out = Path(args.output)
    plan_path = Path(args.plan)
    if _same_file(out, plan_path) or out.resolve() == plan_path.resolve():
        raise ValueError("-o must not be the plan file itself; give another file name for the report")
    check_target(out, "the report")  # before the work: a link, special file or unwritable folder is refused
    plan = load_plan_file(plan_path)
    if plan.lake.model != "one-box":
        raise ValueError(
            "report supports one-box lakes so far; for a two-pool lake use turnback compare PLAN.json [--json --full]"
        )
    comp = compare_plan(plan)
    figures = report_figures(comp)
    write_atomic(out, build_report_html(comp, source=plan_path.name, figures=figures), "the report")
    print(f"wrote {args.output}")
    if args.csv:
        for p in write_csv(comp, args.csv):
            print(f"wrote {Path(args.csv) / p.name}")
    if args.png:
        for p in write_pngs(figures, args.png):
            print(f"wrote {Path(args.png) / p.name}")
    return 0
