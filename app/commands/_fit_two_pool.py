"""``turnback fit --model two-pool``: the two-pool fit with the sediment parameters set by the user.

Part of the ``fit`` command (not a command itself).  Burial and recycling
rate must each be fixed (``--burial B``) or bounded (``--burial-range LO
HI``); the record alone rarely informs them (:mod:`turnback.model.two_pool_fit`).
"""

from __future__ import annotations

import argparse
from typing import Any

from turnback.model.record import MonitoringSeries
from turnback.model.two_pool_fit import TwoPoolFitResult, fit_two_pool

from ._shared import number

#: name: (fixed flag, range flag)
SEDIMENT_FLAGS = {
    "burial": ("--burial", "--burial-range"),
    "recycling_rate": ("--recycling-rate", "--recycling-rate-range"),
    "outflow": ("--outflow", "--outflow-range"),
}


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The ``--model`` switch and the two-pool options of ``fit``."""
    p.add_argument(
        "--model",
        choices=("one-box", "two-pool"),
        default="one-box",
        help="lake model: one-box (default) or two-pool (water P and a mobile sediment P pool)",
    )
    words = {
        "burial": "permanent burial b of sediment P [1/yr]",
        "recycling_rate": "largest yearly recycled fraction r of sediment P [1/yr]",
        "outflow": "outflow (flushing) h [1/yr] (default: fitted within 0 to 0.5)",
    }
    for name, (fixed, ranged) in SEDIMENT_FLAGS.items():
        p.add_argument(fixed, dest=f"tp_{name}", type=number, metavar="X", help=f"two-pool: fix {words[name]}")
        p.add_argument(
            ranged, dest=f"tp_{name}_range", type=number, nargs=2, metavar=("LO", "HI"), help="two-pool: fit within"
        )
    p.add_argument("--sediment-p-kg", type=number, metavar="M0", help="two-pool: sediment P in the first year [kg]")
    p.add_argument(
        "--cut-percent",
        type=number,
        default=50.0,
        metavar="X",
        help="two-pool: load cut after the record for the recovery years [%%] (default 50)",
    )
    p.add_argument("--clear-tp", type=number, metavar="TP", help="two-pool: count clear below this TP [µg/L]")


def refuse_two_pool_flags(args: argparse.Namespace) -> None:
    """Two-pool options given to the one-box fit are a mistake worth one line."""
    for name, (fixed, ranged) in SEDIMENT_FLAGS.items():
        for flag, dest in ((fixed, f"tp_{name}"), (ranged, f"tp_{name}_range")):
            if getattr(args, dest) is not None:
                raise ValueError(f"{flag} belongs to the two-pool fit; add --model two-pool")
    for flag, dest in (("--sediment-p-kg", "sediment_p_kg"), ("--clear-tp", "clear_tp")):
        if getattr(args, dest) is not None:
            raise ValueError(f"{flag} belongs to the two-pool fit; add --model two-pool")


def _setting(args: argparse.Namespace, name: str, required: bool) -> Any:
    fixed, ranged = SEDIMENT_FLAGS[name]
    v, rng = getattr(args, f"tp_{name}"), getattr(args, f"tp_{name}_range")
    if v is not None and rng is not None:
        raise ValueError(f"give {fixed} or {ranged}, not both")
    if v is None and rng is None:
        if required:
            raise ValueError(
                f"the two-pool fit needs {fixed} X or {ranged} LO HI: the record alone rarely tells the sediment's "
                "burial and recycling rate; take them from sediment studies or similar lakes"
            )
        return None
    return float(v) if v is not None else (float(rng[0]), float(rng[1]))


def run_fit(args: argparse.Namespace, series: MonitoringSeries, volume: float, progress: Any) -> TwoPoolFitResult:
    """Fit the two-pool lake to ``series`` as the options say."""
    kwargs: dict[str, Any] = {
        "burial": _setting(args, "burial", True),
        "recycling_rate": _setting(args, "recycling_rate", True),
    }
    outflow = _setting(args, "outflow", False)
    if outflow is not None:
        kwargs["outflow"] = outflow
    clear_below = None if args.clear_tp is None else args.clear_tp * volume / 1.0e6
    if clear_below is not None and not clear_below > 0.0:
        raise ValueError(f"--clear-tp must be greater than 0 [µg/L]; got {args.clear_tp:g}")
    return fit_two_pool(
        series.p_kg(volume),
        series.load_kg_per_yr,
        initial_sediment_p_kg=args.sediment_p_kg,
        cut_percent=args.cut_percent,
        clear_below_kg=clear_below,
        rng=args.seed,
        progress=progress,
        **kwargs,
    )


def table(res: TwoPoolFitResult, source: str, volume: float) -> str:
    """The text output."""
    p = res.params
    lines = [
        f"Record: {source}   lake volume {volume:.4g} m³",
        "",
        "Fitted two-pool lake (annual map, lognormal error)",
    ]
    for name, value, unit in (
        ("sedimentation s", p.s, "/yr"),
        ("outflow h", p.h, "/yr"),
        ("burial b", p.b, "/yr"),
        ("recycling rate r", p.r, "/yr"),
        ("half-saturation m", p.m, "kg"),
        ("exponent q", p.q, ""),
    ):
        key = {"burial b": "burial", "recycling rate r": "recycling_rate", "outflow h": "outflow"}.get(name)
        how = " (fixed by you)" if key in res.fixed else (" (within your range)" if key in res.ranges else "")
        lines.append(f"  {name:<20}{value:>12.4g} {unit}{how}")
    lines.append(
        f"  sediment P: {res.initial_sediment_p_kg:,.0f} kg at the start, {res.final_sediment_p_kg:,.0f} kg now"
    )
    lines.append(f"Regime: {res.regime}")
    if res.tipping_load is not None and res.recovery_load is not None:
        lines.append(f"  tipping load {res.tipping_load:,.0f} kg/yr, recovery load {res.recovery_load:,.0f} kg/yr")
    rec = res.recovery

    def yr(v: float | None) -> str:
        return f"beyond {rec.horizon}" if v is None else f"{v:g}"

    lines += [
        "",
        f"Recovery after the load is held at {rec.cut_load_kg_per_yr:,.0f} kg/yr from the end of the record:",
        f"  at the best fit: year {yr(rec.at_fit)}; across the allowed sediment range: {yr(rec.low)} to {yr(rec.high)}",
    ]
    if res.warnings:
        lines += ["", "Warnings:"] + [f"  - {w}" for w in res.warnings]
    lines += [
        "",
        "Scenario estimates from a simplified model; not a water-safety assessment. Dredging and other in-lake",
        "treatments need permits and licensed practice.",
    ]
    return "\n".join(lines)
