"""The fit of the record view: checking its entries, and what the stores and the summary keep of it."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from dash import html
from turnback.model.fit import FitResult
from turnback.model.fit_trust import fit_trust, fitted_start
from turnback.model.params import LakeProfile

from ... import ids
from ...stores import Band, FitStore, LakeStore, lake_from_store, lake_key, lake_to_store
from ...vocabulary import band_words, regime_name, share, term, trust_headline, trust_lines

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


def _se(v: float | None) -> str:
    return "not available" if v is None or not math.isfinite(v) else f"{v:.2g}"


def _plausible(fit: Mapping[str, Any]) -> tuple[float, float] | None:
    p = fit.get("plausible")
    return (float(p[0]), float(p[1])) if p else None


def fit_summary(fit: Mapping[str, Any], meeting: bool = False, in_use: bool = False) -> html.Div:
    """The proposed fit: its thresholds, regime chances and trust, and the step that puts it in use."""
    p = fit["params"]
    se = fit.get("se", {})
    probs = fit["regime_probability"]
    how = (
        ("a fit that allows for sampling error" if meeting else
         f"the fit with observation error (from the samples' standard errors) and {fit['replicates']} posterior draws")
        if fit.get("method") == "state_space_laplace"
        else (f"{fit['replicates']} repeat fits" if meeting else f"{fit['replicates']} bootstrap replicates")
    )
    prob_text = ", ".join(
        f"{regime_name(k, meeting)} {share(v)}" for k, v in sorted(probs.items(), key=lambda kv: -kv[1])
    )
    plausible = _plausible(fit)
    rows: list[Any] = [
        html.Div(f"Fitted to {fit['record_name']} with {how}.", className="readout-row")
    ]
    if not meeting:
        rows.append(
            html.Table(
                [
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
            )
        )
    rows += [
        html.Div(
            band_words(term("Tipping", meeting), fit["tipping"], plausible, meeting) + ".",
            className="readout-row",
            id=ids.FIT_TIPPING,
        ),
        html.Div(
            band_words(term("Recovery", meeting), fit["recovery"], plausible, meeting) + ".",
            className="readout-row",
            id=ids.FIT_RECOVERY,
        ),
        *[html.Div(k, className="readout-row") for k in fit.get("known", [])],
        html.Div(
            ("How likely each kind of lake is: " if meeting else "Regime (bootstrap shares): ") + prob_text + ".",
            className="readout-row",
            id=ids.FIT_REGIME,
        ),
    ]
    if not meeting:
        rows += [html.Div(w, className="readout-row fit-doubt") for w in fit["warnings"]]
    trust = fit.get("trust") or {}
    level = trust.get("level", "limited")
    proposal: list[Any] = [
        html.H3("Use this fitted lake?"),
        html.Div(trust_headline(level, meeting), className=f"readout-row trust trust-{level}", id=ids.FIT_TRUST),
        *[html.Div(w, className="readout-row fit-doubt") for w in trust_lines(trust.get("checks", []), meeting)],
    ]
    start = trust.get("start") or {}
    if start.get("contradicts"):
        proposal.append(
            html.Div(
                "The fitted lake cannot be in the state the record ends in at its last inflow, so it is not offered "
                "for use: the lake in use stays as it is.",
                className="readout-row readout-warning",
            )
        )
    elif in_use:
        proposal.append(html.Div("This fitted lake is in use: see 'The lake now'.", className="readout-row"))
    else:
        state = {"clear": "clear water", "turbid": "turbid", "single": "its one stable state"}.get(
            start.get("state", ""), "its state"
        )
        proposal.append(
            html.Div(
                f"It would start in year {start.get('year', '')} in {state}, as the record ends. "
                "The lake in use does not change until you press the button.",
                className="hint",
            )
        )
    return html.Div([html.Div(rows), html.Div(proposal, className="fit-proposal")])


def known_from_record(record: Mapping[str, Any], side: str, meeting: bool = False) -> list[str]:
    """What a one-state record does tell about the threshold it cannot place."""
    if side == "clear":
        top = max(record["load_kg"])
        return [f"Known from the record: the lake stayed clear at inflows up to {top:,.0f} kg/yr."]
    if side == "turbid":
        low = min(record["load_kg"])
        return [f"Known from the record: the lake stayed turbid at inflows down to {low:,.0f} kg/yr."]
    return []


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
    p_last = float(profile.mass(record["tp_ug_l"][-1]))
    start = fitted_start(result.params, float(record["load_kg"][-1]), p_last, result.side)
    new_lake["start"] = {"year": int(record["year"][-1]), "p": start.p}
    d = result.to_dict()
    draws = result.draws
    cloud = draws.params[draws.used][:CLOUD_MAX]
    probs = result.regime_probability
    trust = fit_trust(
        result.point.estimates,
        result.point.diagnostics,  # type: ignore[arg-type]
        result.side,
        probs.hysteretic + probs.irreversible,
        start,
    )

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
    extra: dict[str, Any] = {
        "proposal": dict(new_lake),
        "side": result.side,
        "plausible": list(result.tipping_load.plausible_range),
        "known": known_from_record(record, result.side),
        "trust": {
            "level": trust.level,
            "checks": [
                {
                    "key": c.key,
                    "ok": c.ok,
                    "value": c.value,
                    "limit": c.limit,
                    "names": list(c.names),
                    "side": c.side,
                }
                for c in trust.checks
            ],
            "start": {
                "year": int(record["year"][-1]),
                "p": start.p,
                "state": start.state,
                "contradicts": start.contradicts,
            },
        },
    }
    fit.update(extra)  # type: ignore[typeddict-item]
    return new_lake, fit
