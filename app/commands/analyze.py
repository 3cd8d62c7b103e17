"""``turnback analyze``: equilibria, folds, regime and thresholds of a lake."""

from __future__ import annotations

import argparse
import math
from typing import Any

from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.equilibrium import LakeAnalysis, analyze
from turnback.model.io.lake_file import load_profile_file
from turnback.model.management import removal_needed, safety_margin
from turnback.model.params import MAX_VALUE, LakeParameters, LakeProfile

from . import _analyze_two_pool
from ._shared import number, print_json

#: Largest load the command analyses [mass/yr], as large as any parameter (turnback.model.params.MAX_VALUE).
MAX_LOAD = MAX_VALUE

_PARAM_FLAGS = {
    "loss_rate": ("--loss-rate", "S", "loss rate s [1/yr] (burial plus outflow)"),
    "recycling_max": ("--recycling-max", "R", "maximum recycling rate r [mass/yr]"),
    "recycling_half": ("--recycling-half", "M", "recycling half-saturation m [mass]"),
    "recycling_exponent": ("--recycling-exponent", "Q", "recycling exponent q [-]"),
}


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "analyze",
        help="equilibria, folds, regime, tipping and recovery loads",
        description="Equilibrium analysis of the P-recycling lake model. Values are in the units the "
        "parameters are given in (load in mass per year, P in mass); --lake adds concentrations.",
    )
    for dest, (flag, metavar, text) in _PARAM_FLAGS.items():
        p.add_argument(flag, dest=dest, type=number, metavar=metavar, help=text)
    p.add_argument("--load", type=number, metavar="L", help="report the equilibria at this load [mass/yr]")
    p.add_argument(
        "--load-range",
        nargs=2,
        type=number,
        metavar=("LO", "HI"),
        help="include the equilibrium curve over this load range",
    )
    p.add_argument("--points", type=int, default=2000, help="points on the curve (default 2000)")
    p.add_argument("--lake", metavar="FILE", help="lake profile (JSON or TOML) for concentrations and areal loads")
    p.add_argument("--demo", action="store_true", help="analyse the built-in demo lake (fictional)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    _analyze_two_pool.add_arguments(p)
    p.set_defaults(run=run)


def _resolve(args: argparse.Namespace) -> tuple[LakeParameters, LakeProfile | None]:
    profile: LakeProfile | None = None
    file_params: LakeParameters | None = None
    if args.demo:
        profile, file_params = DEMO_PROFILE, DEMO_PARAMETERS
    if args.lake:
        profile, file_params = load_profile_file(args.lake)
    values: dict[str, float] = {}
    for dest, (flag, _, _) in _PARAM_FLAGS.items():
        v = getattr(args, dest)
        if v is None:
            if file_params is None:
                raise ValueError(f"{flag} is required (or give --demo, or a --lake file with a 'parameters' table)")
            v = getattr(file_params, dest)
        if not math.isfinite(v) or v <= 0.0:
            raise ValueError(f"{flag} must be a finite number greater than 0; got {v:g}")
        values[dest] = v
    return LakeParameters(**values), profile


def _payload(res: LakeAnalysis, profile: LakeProfile | None, with_curve: bool) -> dict[str, Any]:
    out: dict[str, Any] = {
        "regime": res.regime,
        "folds": [{"load": f.load, "p": f.p} for f in res.folds],
        "tipping_load": res.tipping_load,
        "recovery_load": res.recovery_load,
    }
    if res.load is not None:
        out["equilibria"] = [{"p": e.p, "stable": e.stable} for e in res.equilibria]
    if profile is not None:
        for f, d in zip(res.folds, out["folds"], strict=True):
            d["tp_ug_l"] = profile.concentration(f.p)
            d["areal_load_mg_m2_yr"] = profile.areal_load(f.load)
        for e, d in zip(res.equilibria, out.get("equilibria", []), strict=True):
            d["tp_ug_l"] = profile.concentration(e.p)
        out["lake"] = profile.to_dict() | {"mean_depth_m": profile.mean_depth_m}
        if res.load is not None:
            rm = removal_needed(res.params, res.load, profile=profile)
            sm = safety_margin(res.params, res.load, res.folds)
            out["removal_needed"] = {"status": rm.status, "kg": rm.kg, "ug_l": rm.ug_l, "message": rm.message}
            out["safety_margin"] = {"kg_per_yr": sm.kg_per_yr, "percent": sm.percent}
    if with_curve:
        c = res.curve
        out["curve"] = [
            {"load": float(lv), "p": float(pv), "branch": str(bv), "stable": bool(sv)}
            for lv, pv, bv, sv in zip(c.load, c.p, c.branch, c.stable, strict=True)
        ]
    return out


def _table(res: LakeAnalysis, profile: LakeProfile | None) -> str:
    p = res.params
    lines = []
    if profile is not None:
        lines.append(f"Lake: {profile.name}  (area {profile.area_km2:g} km², volume {profile.volume_m3:.4g} m³)")
    lines.append(
        f"Parameters: s = {p.s:g} /yr, r = {p.r:g} kg/yr, m = {p.m:g} kg, q = {p.q:g}"
        f"   (dimensionless b = {p.to_dimensionless().b:.6g})"
    )
    lines.append(f"Regime: {res.regime}. {res.message}")

    def conc(kg: float) -> str:
        return f"  ({profile.concentration(kg):.1f} µg/L)" if profile is not None else ""

    def areal(load: float) -> str:
        return f"  ({profile.areal_load(load):.1f} mg/m²/yr)" if profile is not None else ""

    if res.folds:
        lines.append("")
        lines.append(f"{'fold':<10}{'load [kg/yr]':>16}{'lake P [kg]':>16}")
        for f in res.folds:
            lines.append(f"{f.kind:<10}{f.load:>16.6g}{f.p:>16.6g}{conc(f.p)}")
        lines.append("")
        assert res.tipping_load is not None and res.recovery_load is not None
        lines.append(f"Tipping load:  {res.tipping_load:.6g} kg/yr{areal(res.tipping_load)}")
        lines.append(f"Recovery load: {res.recovery_load:.6g} kg/yr{areal(res.recovery_load)}")
    if res.load is not None:
        lines.append("")
        lines.append(f"Equilibria at load {res.load:g} kg/yr:")
        lines.append(f"{'lake P [kg]':>16}  {'branch':<8}{'stability':<11}{'return time [yr]':>18}")
        for e in res.equilibria:
            rt = f"{e.return_time:.3g}" if e.stable else "-"
            lines.append(f"{e.p:>16.6g}  {e.branch:<8}{'stable' if e.stable else 'unstable':<11}{rt:>18}{conc(e.p)}")
        rm = removal_needed(res.params, res.load, profile=profile)
        lines.append(f"In-lake removal if the lake is turbid: {rm.message}")
        sm = safety_margin(res.params, res.load, res.folds)
        if sm.kg_per_yr is not None:
            pct = f" ({sm.percent:+.1f}% of this load)" if sm.percent is not None else ""
            lines.append(f"Margin to the tipping load: {sm.kg_per_yr:+.6g} kg/yr{pct}")
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    if args.model == "two-pool":
        return _analyze_two_pool.run(args)
    _analyze_two_pool.refuse_two_pool_flags(args)
    params, profile = _resolve(args)
    load = args.load
    if load is not None and not abs(load) <= MAX_LOAD:
        raise ValueError(f"--load must be between {-MAX_LOAD:g} and {MAX_LOAD:g} [mass/yr]; got {load:g}")
    if args.load is None and (args.demo or (args.lake and profile is not None)) and profile is not None:
        load = profile.load_kg_per_yr
    load_range = tuple(args.load_range) if args.load_range else None
    if load_range is not None:
        lo, hi = load_range
        if not (abs(lo) <= MAX_LOAD and abs(hi) <= MAX_LOAD):
            raise ValueError(f"--load-range needs two numbers between {-MAX_LOAD:g} and {MAX_LOAD:g} [mass/yr]")
        if lo >= hi:
            raise ValueError(f"--load-range is reversed or empty ({lo:g} to {hi:g}); give the lower load first")
    if not 10 <= args.points <= 1_000_000:
        raise ValueError("--points must be between 10 and 1000000")
    res = analyze(params, load=load, load_range=load_range, n_points=args.points)  # type: ignore[arg-type]
    if args.json:
        print_json(_payload(res, profile, load_range is not None))
    else:
        print(_table(res, profile))
    return 0
