"""The readout of the lake view: the lake's state and thresholds in plain words.  Layout only."""

from __future__ import annotations

from typing import Any

from dash import html
from turnback.model.clarity import TP_MAX_UG_L, TP_MIN_UG_L, clarity
from turnback.model.equilibrium import LakeAnalysis
from turnback.model.management import read_state, removal_needed, safety_margin
from turnback.model.params import LakeParameters, LakeProfile

from ... import ids

STATE_WORDS = {
    "clear": ("Clear water", "state-clear"),
    "turbid": ("Turbid, algae-dominated", "state-turbid"),
    "single": ("One stable state", "state-single"),
}
MOVING_WORDS = {
    "clear": ("Recovering towards clear water", "state-clear"),
    "turbid": ("Tipping towards turbid", "state-turbid"),
    "single": ("Settling", "state-single"),
}

REGIME_WORDS = {
    "reversible": "Reversible: no tipping point; the lake follows its load up and down.",
    "hysteretic": "Hysteretic: once tipped, the load must come down much further than where it tipped.",
    "irreversible": "Irreversible: once turbid, no load cut alone restores the lake.",
}
PLAIN_REGIME_WORDS = {
    "reversible": "This lake has no tipping point: less phosphorus in, clearer water.",
    "hysteretic": "This lake has a tipping point. Once it turns green, going back to today's inflow is not enough.",
    "irreversible": "Once this lake turns green, cutting the inflow alone will never bring it back.",
}


def _kg(v: float) -> str:
    return f"{v:,.0f} kg/yr"


def build_readout(
    params: LakeParameters,
    profile: LakeProfile,
    analysis: LakeAnalysis,
    load: float,
    p_now: float,
    meeting: bool = False,
) -> list[html.Div]:
    """Readout rows: state, regime, tipping margin, recovery need, irreversibility."""
    reading = read_state(params, load, p_now)
    tp = float(profile.concentration(p_now))
    word, css = (STATE_WORDS if reading.settled else MOVING_WORDS)[reading.label]
    moving = ""
    if not reading.settled:
        target = float(profile.concentration(reading.attractor.p))
        moving = f" (still moving towards {target:.0f} µg/L)"
    rows = [
        html.Div(
            [
                html.Span(word, className=f"state-badge {css}", id=ids.STATE_WORD),
                html.Span(f" TP {tp:.0f} µg/L{moving}"),
            ],
            className="readout-row readout-state",
        ),
        *clarity_rows(tp, meeting),
        html.Div(
            (PLAIN_REGIME_WORDS if meeting else REGIME_WORDS)[analysis.regime],
            className="readout-row",
            id=ids.REGIME_WORDS,
        ),
    ]
    today = profile.load_kg_per_yr
    if analysis.tipping_load is not None and analysis.recovery_load is not None:
        sm = safety_margin(params, load, analysis.folds)
        assert sm.kg_per_yr is not None
        if sm.kg_per_yr >= 0:
            pct = f" ({sm.percent:.0f}% of the current load)" if sm.percent is not None else ""
            margin = f"the current load {_kg(load)} is {_kg(sm.kg_per_yr)} below it{pct}."
        else:
            margin = f"the current load {_kg(load)} is {_kg(-sm.kg_per_yr)} above it."
        rows.append(
            html.Div(
                f"Tipping load {_kg(analysis.tipping_load)}: {margin}", className="readout-row", id=ids.TIPPING_WORDS
            )
        )
        rec = analysis.recovery_load
        if rec > 0:
            cut = 100.0 * (today - rec) / today if today > 0 else None
            cut_text = f", a {cut:.0f}% cut from today's {_kg(today)}" if cut is not None and cut > 0 else ""
            rows.append(
                html.Div(
                    f"Recovery by load cuts alone needs a load below {_kg(rec)}{cut_text}.",
                    className="readout-row",
                    id=ids.RECOVERY_WORDS,
                )
            )
        else:
            need0 = removal_needed(params, max(load, 0.0), p_now=None, profile=profile)
            extra = ""
            if need0.status == "needed" and need0.ug_l is not None:
                extra = (
                    f" At the current load, taking out about {need0.kg:,.0f} kg of P "
                    f"({need0.ug_l:.0f} µg/L) from a turbid lake would tip it back to clear water."
                )
            rows.append(
                html.Div(
                    "No load cut alone will restore this lake once it is turbid: the turbid state "
                    "persists even at zero load." + extra,
                    className="readout-row readout-warning",
                    id=ids.RECOVERY_WORDS,
                )
            )
    else:
        rows.append(
            html.Div(
                "No tipping load: cutting the load lowers lake phosphorus smoothly.",
                className="readout-row",
                id=ids.TIPPING_WORDS,
            )
        )
    return rows


def fit_rows(fit: dict[str, Any]) -> list[html.Div]:
    """What the monitoring fit says: fold intervals, regime probabilities, identifiability warnings."""

    def band(name: str, b: dict[str, Any]) -> str:
        if b.get("low") is None or b.get("high") is None:
            return f"{name}: the record cannot place it"
        core = f"{b['estimate']:,.0f} kg/yr, " if b.get("estimate") is not None else ""
        return f"{name} {core}90% interval {b['low']:,.0f}–{b['high']:,.0f} kg/yr"

    probs = fit["regime_probability"]
    prob = ", ".join(f"{k} {100 * v:.0f}%" for k, v in sorted(probs.items(), key=lambda kv: -kv[1]))
    rows = [
        html.Div(
            f"From the monitoring record ({fit['record_name']}): {band('tipping load', fit['tipping'])}; "
            f"{band('recovery load', fit['recovery'])}. Chance of each regime: {prob}.",
            className="readout-row readout-fit",
            id=ids.FIT_WORDS,
        )
    ]
    rows += [html.Div(w, className="readout-row readout-warning") for w in fit.get("warnings", [])]
    return rows


def clarity_rows(tp: float, meeting: bool = False) -> list[html.Div]:
    """Expected summer clarity and trophic state (Carlson 1977 TSI equivalence) and the WHO (2003) caution."""
    if not TP_MIN_UG_L <= tp <= TP_MAX_UG_L:
        return []
    est = clarity(tp)
    if meeting:
        text = (
            f"In summer you could expect to see about {est.secchi_m:.1f} m down into the water; "
            f"the lake would count as {est.tsi_class}."
        )
    else:
        text = est.sentence
    rows = [html.Div(text, className="readout-row", id=ids.CLARITY_WORDS)]
    if est.who.level != "below_guidance":
        rows.append(html.Div(est.who.text, className="readout-row readout-warning", id=ids.HEALTH_WORDS))
    return rows


def removal_text(params: LakeParameters, profile: LakeProfile, load: float, p_now: float) -> tuple[str, float]:
    """Plain statement of the removal needed now, and the suggested amount [kg]."""
    need = removal_needed(params, load, p_now=p_now, profile=profile)
    if need.status == "needed":
        assert need.ug_l is not None
        return (
            f"Needed now: about {need.kg:,.0f} kg P ({need.ug_l:.0f} µg/L), to land "
            f"{need.margin:.0%} below the tipping threshold at this load.",
            need.kg,
        )
    return need.message, 0.0
