"""The fit of the record view: checking its entries, and what the stores and the summary keep of it."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from dash import html
from turnback.model.fit import FitResult
from turnback.model.params import LakeProfile

from ... import ids
from ...stores import Band, FitStore, LakeStore, lake_from_store, lake_key, lake_to_store

CLOUD_MAX = 400  # bootstrap lakes kept for the regime map
FIT_SEED = 20261202
MIN_REPLICATES, MAX_REPLICATES = 100, 20000


def parse_replicates(value: Any) -> tuple[int | None, str]:
    """The number of bootstrap replicates, or None and what to fix."""
    msg = f"Bootstrap replicates: enter a whole number from {MIN_REPLICATES} to {MAX_REPLICATES}."
    try:
        n = int(value)
    except (TypeError, ValueError):
        return None, msg
    return (n, "") if MIN_REPLICATES <= n <= MAX_REPLICATES else (None, msg)


def parse_volume(text: Any) -> tuple[float | None, str]:
    try:
        v = float(str(text).replace(",", "").strip())
    except (TypeError, ValueError):
        return None, "Lake volume: enter a number of cubic metres, such as 2.79e7."
    if not math.isfinite(v) or v <= 0:
        return None, "Lake volume must be a number of cubic metres greater than 0."
    return v, ""


def _band_text(name: str, band: dict[str, Any]) -> str:
    if band["low"] is None or band["high"] is None:
        return f"{name}: the record cannot place it."
    est = "not constrained" if band["estimate"] is None else f"{band['estimate']:,.0f}"
    return f"{name}: {est} kg/yr (90% interval {band['low']:,.0f} to {band['high']:,.0f})"


def _se(v: float | None) -> str:
    return "not available" if v is None or not math.isfinite(v) else f"{v:.2g}"


def fit_summary(fit: dict[str, Any]) -> html.Div:
    """The fit in a few lines and a small table."""
    p = fit["params"]
    se = fit.get("se", {})
    rows = [
        html.Tr([html.Th("parameter"), html.Th("estimate"), html.Th("standard error")]),
        *[
            html.Tr([html.Td(label), html.Td(f"{p[key]:.4g}"), html.Td(_se(se.get(key)))])
            for key, label in (
                ("loss_rate", "loss rate s [yr⁻¹]"),
                ("recycling_max", "maximum recycling r [kg yr⁻¹]"),
                ("recycling_half", "half-saturation m [kg]"),
                ("recycling_exponent", "exponent q [–]"),
            )
        ],
    ]
    probs = fit["regime_probability"]
    how = (
        f"the fit with observation error (from the samples' standard errors) and {fit['replicates']} posterior draws"
        if fit.get("method") == "state_space_laplace"
        else f"{fit['replicates']} bootstrap replicates"
    )
    prob_text = ", ".join(f"{k} {100 * v:.0f}%" for k, v in sorted(probs.items(), key=lambda kv: -kv[1]))
    return html.Div(
        [
            html.Div(
                f"Fitted to {fit['record_name']} with {how}.",
                className="readout-row",
            ),
            html.Table(rows),
            html.Div(_band_text("Tipping load", fit["tipping"]), className="readout-row", id=ids.FIT_TIPPING),
            html.Div(_band_text("Recovery load", fit["recovery"]), className="readout-row", id=ids.FIT_RECOVERY),
            html.Div(f"Regime: {prob_text}.", className="readout-row", id=ids.FIT_REGIME),
            *[html.Div(w, className="readout-row readout-warning") for w in fit["warnings"]],
            html.Div(
                "The fitted lake is now the current lake: see 'The lake now'. Plans built for it use the fit's "
                "possible lakes too (see 'Plans compared').",
                className="hint",
            ),
        ]
    )


def fit_to_stores(
    result: FitResult, record: Mapping[str, Any], lake: Mapping[str, Any], volume: float
) -> tuple[LakeStore, FitStore]:
    """The fitted lake (starting from the last observed year) and what the figures need of the fit."""
    _, old = lake_from_store(lake)
    base = old.name.split(" — fitted")[0]
    profile = LakeProfile(
        name=f"{base} — fitted to {record['name']}"[:120],
        area_km2=old.area_km2,
        volume_m3=volume,
        load_kg_per_yr=float(record["load_kg"][-1]),
    )
    new_lake = lake_to_store(result.params, profile)
    new_lake["start"] = {"year": int(record["year"][-1]), "p": float(profile.mass(record["tp_ug_l"][-1]))}
    d = result.to_dict()
    draws = result.draws
    cloud = draws.params[draws.used][:CLOUD_MAX]

    def band(b: Any) -> Band:
        return b.to_dict() | {"constrained": bool(b.constrained)}  # type: ignore[no-any-return]

    fit: FitStore = {
        "lake_key": lake_key(new_lake),
        "record_name": record["name"],
        "params": d["params"],
        "se": {e.name: e.std_error for e in result.point.estimates},
        "tipping": band(result.tipping_load),
        "recovery": band(result.recovery_load),
        "regime_probability": d["regime_probability"],
        "warnings": list(result.warnings),
        "replicates": result.replicates,
        "cloud": cloud.tolist(),
        "observed": {"year": record["year"], "load": record["load_kg"], "tp": record["tp_ug_l"]},
        "method": d["method"],
    }
    return new_lake, fit
