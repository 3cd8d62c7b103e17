"""``turnback analyze --model two-pool``: the two-pool lake (water and sediment P).

Part of the ``analyze`` command (not a command itself).  ``--json`` prints
``regime``, ``folds`` (``{"load", "p", "m"}`` in ascending ``p``),
``tipping_load``, ``recovery_load`` and, with ``--load``, ``equilibria``
(``{"p", "m", "stable"}`` in ascending ``p``), in the units the parameters
were given in.
"""

from __future__ import annotations

import argparse
import math
from typing import Any

from turnback.model.demo import DEMO_PROFILE, DEMO_TWO_POOL_PARAMETERS
from turnback.model.io.lake_file import load_lake_file
from turnback.model.params import LakeProfile
from turnback.model.two_pool import MODEL_NAMES, TwoPoolParameters
from turnback.model.two_pool_equilibrium import TwoPoolAnalysis, analyze_two_pool

from ._shared import number, print_json

#: Two-pool parameters: the field, its flag, the metavar and the help text.
TWO_POOL_FLAGS = {
    "sedimentation": ("--sedimentation", "S", "two-pool: sedimentation s [1/yr], water P settling to the sediment"),
    "outflow": ("--outflow", "H", "two-pool: outflow (flushing) h [1/yr], >= 0"),
    "burial": ("--burial", "B", "two-pool: permanent burial b of sediment P [1/yr]"),
    "recycling_rate": ("--recycling-rate", "R", "two-pool: largest yearly recycled fraction r of sediment P [1/yr]"),
}
#: Flags the two lake models share (defined by the one-box part of ``analyze``).
SHARED = {
    "recycling_half": "--recycling-half",
    "recycling_exponent": "--recycling-exponent",
}
ONE_BOX_ONLY = {
    "loss_rate": "--loss-rate",
    "recycling_max": "--recycling-max",
}


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The ``--model`` switch and the two-pool flags of ``analyze``."""
    p.add_argument(
        "--model",
        choices=MODEL_NAMES,
        default="one-box",
        help="lake model: one-box (default) or two-pool (water P and a mobile sediment P pool)",
    )
    for dest, (flag, metavar, text) in TWO_POOL_FLAGS.items():
        p.add_argument(flag, dest=dest, type=number, metavar=metavar, help=text)


def refuse_two_pool_flags(args: argparse.Namespace) -> None:
    """A two-pool flag given to the one-box model is a mistake worth one line."""
    for dest, (flag, _, _) in TWO_POOL_FLAGS.items():
        if getattr(args, dest, None) is not None:
            raise ValueError(f"{flag} belongs to the two-pool lake; add --model two-pool")


def _resolve(args: argparse.Namespace) -> tuple[TwoPoolParameters, LakeProfile | None]:
    for dest, flag in ONE_BOX_ONLY.items():
        if getattr(args, dest) is not None:
            raise ValueError(
                f"{flag} belongs to the one-box lake; the two-pool lake takes --sedimentation, --outflow, "
                "--burial and --recycling-rate"
            )
    profile: LakeProfile | None = None
    file_params: TwoPoolParameters | None = None
    if args.demo:
        profile, file_params = DEMO_PROFILE, DEMO_TWO_POOL_PARAMETERS
    if args.lake:
        profile, read = load_lake_file(args.lake)
        if read is not None and not isinstance(read, TwoPoolParameters):
            raise ValueError(
                f"lake file {args.lake!r} holds one-box parameters; give the two-pool flags or a "
                "'parameters' table with model = \"two-pool\""
            )
        file_params = read if read is not None else file_params
    values: dict[str, float] = {}
    flags = {dest: flag for dest, (flag, _, _) in TWO_POOL_FLAGS.items()} | SHARED
    for dest, flag in flags.items():
        v = getattr(args, dest)
        if v is None:
            if file_params is None:
                raise ValueError(
                    f"{flag} is required with --model two-pool (or give --demo, or a --lake file with a "
                    "two-pool 'parameters' table)"
                )
            v = getattr(file_params, dest)
        if not math.isfinite(v) or v < 0.0 or (v == 0.0 and dest != "outflow"):
            kind = "0 or more" if dest == "outflow" else "greater than 0"
            raise ValueError(f"{flag} must be a finite number {kind}; got {v:g}")
        values[dest] = v
    return TwoPoolParameters(**values), profile


def payload(res: TwoPoolAnalysis, profile: LakeProfile | None, with_curve: bool) -> dict[str, Any]:
    """The ``--json`` object."""
    out: dict[str, Any] = {
        "regime": res.regime,
        "folds": [{"load": f.load, "p": f.p, "m": f.m} for f in res.folds],
        "tipping_load": res.tipping_load,
        "recovery_load": res.recovery_load,
    }
    if res.load is not None:
        out["equilibria"] = [{"p": e.p, "m": e.m, "stable": e.stable} for e in res.equilibria]
    if profile is not None:
        for f, d in zip(res.folds, out["folds"], strict=True):
            d["tp_ug_l"] = profile.concentration(f.p)
            d["areal_load_mg_m2_yr"] = profile.areal_load(f.load)
        for e, d in zip(res.equilibria, out.get("equilibria", []), strict=True):
            d["tp_ug_l"] = profile.concentration(e.p)
        out["lake"] = profile.to_dict() | {"mean_depth_m": profile.mean_depth_m}
        if res.load is not None and res.tipping_load is not None:
            kg = res.tipping_load - res.load
            out["safety_margin"] = {"kg_per_yr": kg, "percent": 100.0 * kg / res.load if res.load > 0 else None}
    if with_curve:
        c = res.curve
        out["curve"] = [
            {"load": float(lv), "p": float(pv), "m": float(mv), "branch": str(bv), "stable": bool(sv)}
            for lv, pv, mv, bv, sv in zip(c.load, c.p, c.m, c.branch, c.stable, strict=True)
        ]
    return out


def _notes(res: TwoPoolAnalysis) -> list[str]:
    notes = []
    c = res.curve
    lost = (c.branch != "middle") & ~c.stable
    if int(lost.sum()) > len(res.folds):
        notes.append(
            "Part of a branch that ends at a fold is unstable (oscillating, before a Hopf point): the lake "
            "there does not settle, and the threshold it crosses is not the fold."
        )
    if bool((c.stable != c.map_stable).any()):
        notes.append(
            "On part of the curve the annual model and the differential equations disagree on stability "
            "(complex eigenvalues near a Hopf point); the annual model is the one plans use."
        )
    return notes


def table(res: TwoPoolAnalysis, profile: LakeProfile | None) -> str:
    """The text output."""
    p = res.params
    lines = []
    if profile is not None:
        lines.append(f"Lake: {profile.name}  (area {profile.area_km2:g} km², volume {profile.volume_m3:.4g} m³)")
    lines.append(
        f"Two-pool lake: sedimentation s = {p.s:g} /yr, outflow h = {p.h:g} /yr, burial b = {p.b:g} /yr, "
        f"recycling rate r = {p.r:g} /yr, m = {p.m:g} kg, q = {p.q:g}"
    )
    lines.append(f"Regime: {res.regime}. {res.message}")

    def conc(kg: float) -> str:
        return f"  ({profile.concentration(kg):.1f} µg/L)" if profile is not None else ""

    if res.folds:
        lines += ["", f"{'fold':<10}{'load [kg/yr]':>16}{'water P [kg]':>16}{'sediment P [kg]':>18}"]
        for f in res.folds:
            lines.append(f"{f.kind:<10}{f.load:>16.6g}{f.p:>16.6g}{f.m:>18.6g}{conc(f.p)}")
        assert res.tipping_load is not None and res.recovery_load is not None
        lines += ["", f"Tipping load:  {res.tipping_load:.6g} kg/yr", f"Recovery load: {res.recovery_load:.6g} kg/yr"]
    if res.load is not None:
        lines += ["", f"Equilibria at load {res.load:g} kg/yr:"]
        lines.append(
            f"{'water P [kg]':>14}{'sediment P [kg]':>17}  {'branch':<8}{'equations':<11}{'annual map':<12}"
            f"{'return time [yr]':>17}"
        )
        for e in res.equilibria:
            rt = f"{e.return_time:.3g}" if e.stable else "-"
            lines.append(
                f"{e.p:>14.6g}{e.m:>17.6g}  {e.branch:<8}{'stable' if e.stable else 'unstable':<11}"
                f"{'stable' if e.map_stable else 'unstable':<12}{rt:>17}{conc(e.p)}"
            )
        if res.tipping_load is not None:
            kg = res.tipping_load - res.load
            lines.append(f"Margin to the tipping load: {kg:+.6g} kg/yr")
    for note in _notes(res):
        lines += ["", f"Note: {note}"]
    lines += [
        "",
        "Scenario estimates from a simplified model; not a water-safety assessment. Dredging and other in-lake",
        "treatments need permits and licensed practice.",
    ]
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    params, profile = _resolve(args)
    load = args.load
    if load is not None and not math.isfinite(load):
        raise ValueError(f"--load must be a finite number; got {load:g}")
    if load is None and profile is not None:
        load = profile.load_kg_per_yr
    load_range = tuple(args.load_range) if args.load_range else None
    if load_range is not None:
        lo, hi = load_range
        if not (math.isfinite(lo) and math.isfinite(hi)):
            raise ValueError("--load-range needs two finite numbers")
        if lo >= hi:
            raise ValueError(f"--load-range is reversed or empty ({lo:g} to {hi:g}); give the lower load first")
    if not 10 <= args.points <= 1_000_000:
        raise ValueError("--points must be between 10 and 1000000")
    res = analyze_two_pool(params, load=load, load_range=load_range, n_points=args.points)  # type: ignore[arg-type]
    if args.json:
        print_json(payload(res, profile, load_range is not None))
    else:
        print(table(res, profile))
    return 0
