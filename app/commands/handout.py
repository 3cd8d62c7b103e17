"""``turnback handout``: the lake on one printed page, for a meeting (HTML, and PDF through Chromium)."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.io.files import check_target, write_atomic
from turnback.model.io.lake_file import load_profile_file
from turnback.model.io.monitoring_csv import parse_monitoring


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "handout",
        help="write a one-page handout of the lake for a meeting (HTML, optionally PDF)",
        description="Write the lake's story on one printed page, in plain words: today's inflow, the tipping point "
        "and the way back, the regime, the expected clarity and the cautions.",
    )
    src = p.add_mutually_exclusive_group(required=True)
    src.add_argument("--demo", action="store_true", help="the built-in demo lake (fictional)")
    src.add_argument("--lake", metavar="FILE", help="a lake file (JSON or TOML) with a 'parameters' table")
    p.add_argument("--record", metavar="CSV", help="the lake's monitoring record: its path is drawn on the figure")
    p.add_argument("--units", choices=("metric", "us"), default="metric", help="units of the page (default metric)")
    p.add_argument("--paper", choices=("A4", "Letter"), default="A4", help="paper size (default A4)")
    p.add_argument("-o", "--output", required=True, metavar="FILE", help="the HTML handout to write")
    p.add_argument("--pdf", metavar="FILE", help="also print it to this PDF (one page; needs Chromium)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from turnback.app.handout import build_handout, handout_html, print_pdf, record_path

    out = Path(args.output)
    check_target(out, "the handout")
    pdf = Path(args.pdf) if args.pdf else None
    if pdf is not None:
        check_target(pdf, "the PDF")
    if args.demo:
        profile, params = DEMO_PROFILE, DEMO_PARAMETERS
    else:
        profile, file_params = load_profile_file(args.lake)
        if file_params is None:
            raise ValueError(f"--lake {args.lake!r} has no 'parameters' table; the handout needs the lake's model")
        params = file_params
    path = None
    if args.record:
        s = parse_monitoring(args.record)
        path = record_path(s.years, s.load_kg_per_yr, s.tp_ug_l)
    handout = build_handout(params, profile, record=path)
    write_atomic(out, handout_html(handout, system=args.units, paper=args.paper), "the handout")
    print(f"wrote {args.output}")
    if pdf is not None:
        print_pdf(out, pdf)
        print(f"wrote {args.pdf}")
    return 0
