"""The readout of the lake view: where the lake is, which way it is moving, its thresholds.  Layout only.

Words come from :mod:`app.vocabulary` (technical or meeting register); the
numbers from the model (:func:`turnback.model.outlook.lake_outlook` for the
state and its direction, the equilibrium engine for the thresholds).
"""

from __future__ import annotations

from typing import Any

from dash import html
from turnback.model.clarity import TP_MAX_UG_L, TP_MIN_UG_L, clarity
from turnback.model.equilibrium import LakeAnalysis
from turnback.model.lake_models import AnyLakeParameters
from turnback.model.management import removal_needed, safety_margin
from turnback.model.outlook import Outlook, lake_outlook
from turnback.model.params import LakeParameters, LakeProfile
from turnback.model.sediment_lag import TwoPoolOutlook, two_pool_outlook
from turnback.model.two_pool import TwoPoolParameters
from turnback.model.two_pool_equilibrium import TwoPoolAnalysis

from ... import ids
from ...vocabulary import (
    band_words,
    kg_yr,
    regime_name,
    regime_sentence,
    sediment_sentence,
    share,
    state_sentence,
    term,
    trophic_headline,
    trust_headline,
    trust_lines,
)

#: where the lake is: (technical, meeting) badge, and its colour
STATE_WORDS = {
    "clear": (("Clear water", "Clear water"), "state-clear"),
    "turbid": (("Turbid, algae-dominated", "Turbid, green water"), "state-turbid"),
    "single": (("One stable state", "The lake"), "state-single"),
}
DIRECTION_WORDS = {"worse": "getting worse", "better": "improving", "steady": "settled"}


def headline(outlook: Outlook, profile: LakeProfile, meeting: bool) -> html.Div:
    """The state badge (where the lake is), which way it is moving, and where it is heading and how long."""
    (words, css) = STATE_WORDS[outlook.now]
    tp_now = float(profile.concentration(outlook.p_now))
    tp_target = float(profile.concentration(outlook.p_target))
    sentence = state_sentence(
        outlook.now,
        outlook.heading,
        outlook.direction,
        tp_now,
        tp_target,
        outlook.years,
        outlook.max_years,
        meeting,
    )
    return html.Div(
        [
            html.Span(words[1 if meeting else 0], className=f"state-badge {css}", id=ids.STATE_WORD),
            html.Span(
                f" {DIRECTION_WORDS[outlook.direction]}",
                className=f"state-direction direction-{outlook.direction}",
                id=ids.STATE_DIRECTION,
            ),
            html.Div(sentence, className="state-sentence", id=ids.STATE_SENTENCE),
        ],
        className="readout-row readout-state",
    )


def build_readout(
    params: AnyLakeParameters,
    profile: LakeProfile,
    analysis: LakeAnalysis | TwoPoolAnalysis,
    load: float,
    p_now: float,
    meeting: bool = False,
    m_now: float | None = None,
) -> list[html.Div]:
    """Readout rows: state and direction, clarity, regime, the tipping margin and the recovery need.

    A two-pool lake (``m_now``: its sediment P [kg]) gets a row with its
    water P and sediment P, and its outlook runs both pools.
    """
    outlook: Outlook
    extra: list[html.Div] = []
    tp = float(profile.concentration(p_now))
    if isinstance(params, TwoPoolParameters):
        if m_now is None:
            raise ValueError("a two-pool lake's readout needs its sediment P")
        two: TwoPoolOutlook = two_pool_outlook(params, load, p_now, m_now)
        outlook = two
        extra = [
            html.Div(
                sediment_sentence(p_now, tp, m_now, two.m_target, meeting),
                className="readout-row readout-sediment",
                id=ids.STATE_SEDIMENT,
            )
        ]
    else:
        outlook = lake_outlook(params, load, p_now)
    rows = [
        headline(outlook, profile, meeting),
        *extra,
        *clarity_rows(tp, meeting),
        html.Div(regime_sentence(analysis.regime, meeting), className="readout-row", id=ids.REGIME_WORDS),
    ]
    rows += threshold_rows(params, profile, analysis, load, p_now, meeting)
    return rows


def threshold_rows(
    params: AnyLakeParameters,
    profile: LakeProfile,
    analysis: LakeAnalysis | TwoPoolAnalysis,
    load: float,
    p_now: float,
    meeting: bool,
) -> list[html.Div]:
    """The tipping margin and what recovery needs, in the chosen register."""
    today = profile.load_kg_per_yr
    if analysis.tipping_load is None or analysis.recovery_load is None:
        words = (
            "No tipping point: less phosphorus in, clearer water, step by step."
            if meeting
            else "No tipping load: cutting the load lowers lake phosphorus smoothly."
        )
        return [html.Div(words, className="readout-row", id=ids.TIPPING_WORDS)]
    rows = []
    sm = safety_margin(params, load, analysis.folds)  # type: ignore[arg-type]  # uses only the folds
    assert sm.kg_per_yr is not None
    inflow = term("inflow_lower", meeting)
    if sm.kg_per_yr >= 0:
        pct = f" ({sm.percent:.0f}% of it)" if sm.percent is not None else ""
        margin = f"the {inflow} now, {kg_yr(load)}, is {kg_yr(sm.kg_per_yr)} below it{pct}."
    else:
        margin = f"the {inflow} now, {kg_yr(load)}, is {kg_yr(-sm.kg_per_yr)} above it."
    rows.append(
        html.Div(
            f"{term('Tipping', meeting)} {kg_yr(analysis.tipping_load)}: {margin}",
            className="readout-row",
            id=ids.TIPPING_WORDS,
        )
    )
    rec = analysis.recovery_load
    if rec > 0:
        cut = 100.0 * (today - rec) / today if today > 0 else None
        cut_text = f", a {cut:.0f}% cut from today's {kg_yr(today)}" if cut is not None and cut > 0 else ""
        rows.append(
            html.Div(
                f"{term('Recovery', meeting)} {kg_yr(rec)}: a turbid lake clears by {inflow} cuts alone only below "
                f"it{cut_text}.",
                className="readout-row",
                id=ids.RECOVERY_WORDS,
            )
        )
        return rows
    if not isinstance(params, LakeParameters):  # a two-pool lake is never irreversible (burial > 0)
        return rows
    need0 = removal_needed(params, max(load, 0.0), p_now=None, profile=profile)
    extra = ""
    if need0.status == "needed" and need0.ug_l is not None:
        extra = (
            f" At the {inflow} now, taking out about {need0.kg:,.0f} kg of P ({need0.ug_l:.0f} µg/L) from a turbid "
            "lake would tip it back to clear water."
        )
    words = (
        "No inflow cut alone brings this lake back once it is turbid: it stays turbid even with no inflow."
        if meeting
        else "No load cut alone restores this lake once it is turbid: the turbid state persists even at zero load."
    )
    rows.append(html.Div(words + extra, className="readout-row readout-warning", id=ids.RECOVERY_WORDS))
    return rows


def fit_rows(fit: dict[str, Any], meeting: bool = False) -> list[html.Div]:
    """What the adopted monitoring fit says: thresholds (or 'not known'), regime chances, and its trust."""
    plausible = tuple(fit["plausible"]) if fit.get("plausible") else None
    tip = band_words(term("Tipping", meeting), fit["tipping"], plausible, meeting)  # type: ignore[arg-type]
    rec = band_words(term("Recovery", meeting), fit["recovery"], plausible, meeting)  # type: ignore[arg-type]
    probs = fit["regime_probability"]
    prob = ", ".join(f"{regime_name(k, meeting)} {share(v)}" for k, v in sorted(probs.items(), key=lambda kv: -kv[1]))
    chance = "How likely each kind of lake is" if meeting else "Chance of each regime (bootstrap shares)"
    known = fit.get("known") or []
    rows = [
        html.Div(
            f"From the monitoring record ({fit['record_name']}): {tip}; {rec}. {chance}: {prob}."
            + "".join(f" {k}" for k in known),
            className="readout-row readout-fit",
            id=ids.FIT_WORDS,
        )
    ]
    if fit.get("trust"):
        level = fit["trust"]["level"]
        rows.append(html.Div(trust_headline(level, meeting), className=f"readout-row trust trust-{level}"))
        rows += [html.Div(w, className="readout-row fit-doubt") for w in trust_lines(fit["trust"]["checks"], meeting)]
    return rows


def clarity_rows(tp: float, meeting: bool = False) -> list[html.Div]:
    """Expected summer clarity and one trophic verdict (the OECD class of the TP; Carlson's index as detail).

    The WHO (2003) health caution is a small standing note at the 10 µg/L
    level and a prominent warning only from the 50 µg/L level.
    """
    if not TP_MIN_UG_L <= tp <= TP_MAX_UG_L:
        return []
    est = clarity(tp)
    verdict = trophic_headline(est.oecd_class, meeting)
    if meeting:
        text = (
            f"In summer you could expect to see about {est.secchi_m:.1f} m down into the water; the lake is {verdict}."
        )
    else:
        text = (
            f"Expected summer Secchi depth about {est.secchi_m:.1f} m and chlorophyll-a about {est.chl_ug_l:.0f} µg/L; "
            f"{verdict} (OECD 1982 class of the TP; detail: Carlson TSI {est.tsi_tp:.0f})."
        )
    rows = [html.Div(text, className="readout-row", id=ids.CLARITY_WORDS)]
    level = est.who.level
    if level == "low_probability":
        words = (
            "Algae may reach the first health guidance level: follow local health advice before swimming."
            if meeting
            else est.who.text
        )
        rows.append(html.Div(words, className="readout-row health-note", id=ids.HEALTH_WORDS, role="note"))
    elif level == "moderate_probability":
        words = (
            "Algae may reach the higher health guidance level: follow local health advisories before any contact "
            "with the water."
            if meeting
            else est.who.text
        )
        rows.append(html.Div(words, className="readout-row readout-warning", id=ids.HEALTH_WORDS, role="alert"))
    return rows


def removal_text(params: AnyLakeParameters, profile: LakeProfile, load: float, p_now: float) -> tuple[str, float]:
    """Plain statement of the removal needed now, and the suggested amount [kg].

    A two-pool lake gets no amount: where a removal from the water lands
    depends on the mud too (the dividing line is a curve in water and mud
    P), and the mud keeps feeding the water afterwards.
    """
    if isinstance(params, TwoPoolParameters):
        return (
            "With phosphorus in the mud, taking P out of the water helps only for a while: the mud keeps "
            "feeding the water. No amount is suggested; try one and watch the lake and its mud.",
            0.0,
        )
    need = removal_needed(params, load, p_now=p_now, profile=profile)
    if need.status == "needed":
        assert need.ug_l is not None
        return (
            f"Needed now: about {need.kg:,.0f} kg P ({need.ug_l:.0f} µg/L), to land "
            f"{need.margin:.0%} below the dividing line between clear and turbid at this inflow.",
            need.kg,
        )
    return need.message.replace("separatrix", "dividing line between clear and turbid"), 0.0
