"""``turnback clarity``: expected summer clarity and trophic state from total phosphorus."""

from __future__ import annotations

import argparse
import math
from typing import Any

from turnback.model.clarity import clarity

from ._shared import number, print_json


def _fmt(value: float) -> str:
    """Three significant figures without scientific notation for everyday magnitudes."""
    if value >= 1000.0:
        return f"{value:,.0f}"
    return f"{value:.3g}"


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "clarity",
        help="expected Secchi depth, chlorophyll-a and trophic class from total phosphorus",
        description="Expected summer chlorophyll-a and Secchi depth for a total phosphorus concentration, by "
        "trophic-state-index equivalence (Carlson 1977), with the Carlson & Simpson (1996) trophic band, the "
        "OECD (1982) class and the WHO (2003) recreational caution level. Typical values for a "
        "phosphorus-limited lake, not a measurement or a health assessment.",
    )
    p.add_argument(
        "--tp-ug-l", dest="tp_ug_l", type=number, required=True, metavar="TP", help="total phosphorus [µg/L], > 0"
    )
    p.add_argument(
        "--json", action="store_true", help="print one JSON object: tsi_tp, chl_ug_l, secchi_m, oecd_class, tsi_class"
    )
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    tp = args.tp_ug_l
    if not math.isfinite(tp) or tp <= 0.0:
        raise ValueError(f"--tp-ug-l must be a finite number greater than 0 [µg/L]; got {tp:g}")
    try:
        est = clarity(tp)
    except ValueError as exc:
        raise ValueError(str(exc).replace("tp_ug_l", "--tp-ug-l")) from None
    if args.json:
        print_json(est.to_dict())
        return 0
    lines = [
        f"Total phosphorus {est.tp_ug_l:g} µg/L: Carlson TSI(TP) {est.tsi_tp:.1f}",
        f"Expected summer chlorophyll-a {_fmt(est.chl_ug_l)} µg/L, Secchi depth {_fmt(est.secchi_m)} m "
        "(same TSI; Carlson 1977)",
        f"Trophic state: {est.tsi_class} (Carlson & Simpson 1996 bands); "
        f"OECD (1982) class by mean TP: {est.oecd_class}",
        f"Recreational caution: {est.who.text}",
        *est.notes,
        "Typical values for a phosphorus-limited lake: colour, suspended sediment and grazing move real lakes "
        "off them. Not a water-safety assessment.",
    ]
    print("\n".join(lines))
    return 0
