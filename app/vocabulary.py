"""The dashboard's and the report's words, defined once, in two registers.

Every label, legend entry, readout sentence and table heading that names a
quantity comes from here, so that a thing has one name wherever it is shown.
Two registers:

- **technical** (the default view): the trade's terms, with symbols and units;
- **meeting** (the meeting view): plain words, with no statistical or
  dynamical-systems jargon (no separatrix, fold, bootstrap, chlorophyll,
  Secchi, trophic-state index, cusp, seed, standard error …).

One name each, in each register:

=====================  ==============================  =======================
thing                  technical                        meeting
=====================  ==============================  =======================
the inflow             external P load                  phosphorus inflow
way up: clear lost     tipping load                     tipping point
way back: turbid lost  recovery load                    way-back point
the basin boundary     separatrix (unstable)            dividing line
=====================  ==============================  =======================

Trophic verdict: headlines give one class, the OECD (1982) class of the
lake's mean TP, because the model's state is the annual mean TP and the
OECD classes are defined on annual means; Carlson's (1977) index of the same
TP (defined on summer values) is shown as detail only.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

#: term -> (technical, meeting)
TERMS: dict[str, tuple[str, str]] = {
    "inflow": ("External P load", "Phosphorus inflow"),
    "inflow_lower": ("external P load", "phosphorus inflow"),
    "inflow_axis": ("External P load L [kg yr⁻¹]", "Phosphorus inflow (kg per year)"),
    "inflow_short": ("Load [kg yr⁻¹]", "Inflow (kg/yr)"),
    "tp_axis": ("Lake total phosphorus TP [µg L⁻¹]", "Lake phosphorus (µg/L)"),
    "tp_short": ("TP [µg L⁻¹]", "Lake P (µg/L)"),
    "tp_name": ("TP", "lake phosphorus"),
    "tipping": ("tipping load", "tipping point"),
    "recovery": ("recovery load", "way-back point"),
    "Tipping": ("Tipping load", "Tipping point"),
    "Recovery": ("Recovery load", "Way-back point"),
    "separatrix": ("Separatrix (unstable)", "Dividing line"),
    "lower": ("Clear-water branch (stable)", "Clear water"),
    "upper": ("Turbid branch (stable)", "Turbid, green water"),
    "single": ("Equilibrium (stable)", "Where the lake settles"),
    "band": ("bistable: two stable states", "two possible states"),
    "history": ("History this session", "Path so far"),
    "current": ("Current state", "The lake now"),
    "observed": ("observed years", "measured years"),
    "today": ("present-day load", "today's inflow"),
    "year": ("Year", "Year"),
    "years_per_change": ("Years per change", "Years per change"),
    "clarity_depth": ("Secchi depth", "see-through depth"),
    "algae": ("chlorophyll-a", "algae"),
    "replicates": ("Bootstrap replicates", "Repeat fits"),
    "members": ("Members", "Simulated runs"),
    "seed": ("Seed", "Random-number start"),
    "cv": ("Load variability (CV)", "Year-to-year swing in inflow (0.2 = 20%)"),
    "noise": ("Process noise sd [kg]", "Random swing in lake phosphorus (kg)"),
    "se": ("± (1 s.e.)", "give or take"),
    "cusp": ("cusp", "where the two points meet"),
    "tipping_fold": ("tipping fold", "tipping point"),
    "recovery_fold": ("recovery fold", "way-back point"),
    "cloud": ("fitted lakes (bootstrap)", "other lakes the record allows"),
    "lake_marker": ("this lake now", "this lake now"),
    "loss_rate_axis": ("Loss rate s [yr⁻¹]", "Share of P lost a year"),
    "recycling_axis": ("Maximum recycling r [kg yr⁻¹]", "Most P the mud releases (kg/yr)"),
    "below_zero": ("below zero load", "below zero inflow"),
}

#: regime -> (technical, meeting)
REGIMES: dict[str, tuple[str, str]] = {
    "reversible": (
        "Reversible: no folds; the lake follows its load up and down.",
        "This lake has no tipping point: less phosphorus in, clearer water.",
    ),
    "hysteretic": (
        "Hysteretic: once tipped, the load must come down much further than where it tipped.",
        "This lake has a tipping point. Once it turns green, going back to today's inflow is not enough.",
    ),
    "irreversible": (
        "Irreversible: once turbid, no load cut alone restores the lake.",
        "Once this lake turns green, cutting the inflow alone will never bring it back.",
    ),
}
#: regime names for tables and probabilities: (technical, meeting)
#: short regime names for figure margins: (technical, meeting)
REGIME_SHORT: dict[str, tuple[str, str]] = {
    "reversible": ("reversible", "no tipping<br>point"),
    "hysteretic": ("hysteretic", "tipping point"),
    "irreversible": ("irreversible", "no way back"),
}
REGIME_NAMES: dict[str, tuple[str, str]] = {
    "reversible": ("reversible", "no tipping point"),
    "hysteretic": ("hysteretic", "tipping point with a harder way back"),
    "irreversible": ("irreversible", "no way back by inflow cuts alone"),
}

#: OECD (1982) class -> short meeting words (figure margins)
TROPHIC_SHORT: dict[str, str] = {
    "ultra-oligotrophic": "nutrients: very low",
    "oligotrophic": "nutrients: low",
    "mesotrophic": "nutrients: moderate",
    "eutrophic": "nutrients: high",
    "hypertrophic": "nutrients: very high",
}

#: OECD (1982) class -> meeting words
TROPHIC_PLAIN: dict[str, str] = {
    "ultra-oligotrophic": "very low in nutrients",
    "oligotrophic": "low in nutrients",
    "mesotrophic": "moderately rich in nutrients",
    "eutrophic": "rich in nutrients",
    "hypertrophic": "very rich in nutrients",
}

TROPHIC_RULE = (
    "Trophic state: the OECD (1982) class of the mean TP, the quantity the model tracks (the OECD classes are "
    "defined on annual means); Carlson's (1977) index of the same TP, defined on summer values, is given as detail."
)


def term(key: str, meeting: bool) -> str:
    """The name of ``key`` in the chosen register."""
    technical, plain = TERMS[key]
    return plain if meeting else technical


def regime_sentence(regime: str, meeting: bool) -> str:
    return REGIMES[regime][1 if meeting else 0]


def regime_name(regime: str, meeting: bool) -> str:
    return REGIME_NAMES[regime][1 if meeting else 0]


def trophic_headline(oecd_class: str, meeting: bool) -> str:
    """The one trophic verdict of a headline (the OECD class of the TP)."""
    return TROPHIC_PLAIN.get(oecd_class, oecd_class) if meeting else oecd_class


def kg_yr(value: float) -> str:
    return f"{value:,.0f} kg/yr"


def share(x: float) -> str:
    """A share as a percentage that never rounds a non-zero share to 0 % nor a share below 1 to 100 %."""
    if 0.0 < x < 0.005:
        return "under 1%"
    if 0.995 <= x < 1.0:
        return "over 99%"
    return f"{x:.0%}"


# --------------------------------------------------------------------------
# the lake's state: where it is, which way it is moving, how long it needs
# --------------------------------------------------------------------------
_STATE = {"clear": ("Clear", "Clear"), "turbid": ("Turbid", "Turbid"), "single": ("Lake", "The lake")}
_DIRECTION = {
    "worse": ("getting worse", "getting worse"),
    "better": ("improving", "improving"),
    "steady": ("settled", "settled"),
}


def _years(years: int | None, max_years: int) -> str:
    if years is None:
        return f"more than {max_years:,} years"
    return "about 1 year" if years <= 1 else f"about {years:,} years"


def state_badge(now: str, direction: str, meeting: bool) -> str:
    """``"Clear, getting worse"``: where the lake is and which way it is moving."""
    return f"{_STATE[now][1 if meeting else 0]}, {_DIRECTION[direction][1 if meeting else 0]}"


def state_sentence(
    now: str,
    heading: str,
    direction: str,
    tp_now: float,
    tp_target: float,
    years: int | None,
    max_years: int,
    meeting: bool,
) -> str:
    """Where the lake is heading and about how long it needs, e.g. "heading for 47 µg/L over about 15 years"."""
    if direction == "steady":
        return (
            f"Lake phosphorus {tp_now:.0f} µg/L, settled at this inflow."
            if meeting
            else (f"TP {tp_now:.0f} µg/L, at its stable equilibrium for this load.")
        )
    span = _years(years, max_years)
    if now == heading or heading == "single" or now == "single":
        if now == "turbid" and direction == "better":
            return (
                f"Lake phosphorus {tp_now:.0f} µg/L, still turbid at the new balance: about {tp_target:.0f} µg/L "
                f"in {span}."
            )
        return f"Lake phosphorus {tp_now:.0f} µg/L, heading for {tp_target:.0f} µg/L over {span}."
    if heading == "turbid":
        return f"Lake phosphorus {tp_now:.0f} µg/L: will turn turbid, heading for {tp_target:.0f} µg/L over {span}."
    return f"Lake phosphorus {tp_now:.0f} µg/L: will clear, heading for {tp_target:.0f} µg/L over {span}."


# --------------------------------------------------------------------------
# the fit: thresholds, trust
# --------------------------------------------------------------------------
def band_words(name: str, band: Mapping[str, Any], plausible: tuple[float, float] | None, meeting: bool) -> str:
    """A fitted threshold with its 90 % band; a clipped end reads 'beyond X'; an uninformed one 'not known'."""
    low, high, est = band.get("low"), band.get("high"), band.get("estimate")
    if low is None or high is None:
        return f"{name}: not known from this record"
    lo_txt = f"{low:,.0f}"
    hi_txt = f"{high:,.0f}"
    if plausible is not None and low <= plausible[0] + 1e-9:
        lo_txt = f"beyond {plausible[0]:,.0f}"
    if plausible is not None and high >= plausible[1] - 1e-9:
        hi_txt = f"beyond {plausible[1]:,.0f}"
    span = f"{lo_txt} to {hi_txt} kg/yr"
    if not band.get("constrained", True) or est is None:
        what = "likely range" if meeting else "90% bootstrap band"
        return f"{name}: not known from this record ({what} {span})"
    what = "likely range" if meeting else "90% interval"
    return f"{name} {est:,.0f} kg/yr ({what} {span})"


#: trust check key -> (technical, meeting) sentence templates
TRUST_WORDS: dict[str, tuple[str, str]] = {
    "at_bound": (
        "{names}: at the edge of the allowed range or not informed by the record, which does not pin {them} down.",
        "Part of the fitted lake ({names}) is only a guess: the record cannot settle it.",
    ),
    "one_state": (
        "The record shows the {side} state only: the threshold that ends the other state is not informed by it.",
        "In these years the lake was always {side}, so the record cannot tell where it would turn.",
    ),
    "autocorrelation": (
        "Residuals autocorrelated (lag-1 {value:+.2f}, beyond ±{limit:.2f}): intervals likely too narrow.",
        "The fitted lake misses some of the lake's year-to-year memory: the ranges shown are likely too narrow.",
    ),
    "few_folds": (
        "Only {value} of the bootstrap refits have folds (below {limit}): the thresholds rest on a minority.",
        "Only {value} of the repeat fits show a tipping point at all: the points shown rest on a few of them.",
    ),
}
TRUST_LEVEL: dict[str, tuple[str, str]] = {
    "good": ("Trust: good — no check raised a doubt.", "This fit looks sound."),
    "limited": ("Trust: limited — one check raised a doubt.", "Use this fit with care: one doubt."),
    "poor": ("Trust: poor — several checks raised doubts.", "Do not rely on this fit alone: several doubts."),
}
_PARAM_PLAIN = {
    "loss_rate": ("loss rate s", "how fast P is lost"),
    "recycling_max": ("maximum recycling r", "how much P the mud can release"),
    "recycling_half": ("half-saturation m", "when the mud starts releasing P"),
    "recycling_exponent": ("exponent q", "how sharply the mud switches on"),
}


def trust_lines(checks: list[Mapping[str, Any]], meeting: bool) -> list[str]:
    """One sentence per failed check (the store's form of :class:`model.fit_trust.TrustCheck`)."""
    k = 1 if meeting else 0
    out = []
    for c in checks:
        if c.get("ok"):
            continue
        names = [_PARAM_PLAIN.get(n, (n, n))[k] for n in c.get("names", [])]
        side = {"clear": "clear-water" if not meeting else "clear", "turbid": "turbid"}.get(c.get("side", ""), "one")
        value, limit = c.get("value"), c.get("limit")
        fmt = {
            "names": ", ".join(names),
            "them": "it" if len(names) == 1 else "them",
            "side": side,
            "value": (share(value) if c["key"] == "few_folds" else value) if value is not None else "",
            "limit": (share(limit) if c["key"] == "few_folds" else limit) if limit is not None else "",
        }
        out.append(TRUST_WORDS[c["key"]][k].format(**fmt))
    return out


def trust_headline(level: str, meeting: bool) -> str:
    return TRUST_LEVEL[level][1 if meeting else 0]


# --------------------------------------------------------------------------
# warning signs in the record
# --------------------------------------------------------------------------
_INDICATOR_PLAIN = {
    "variance": "the year-to-year swings",
    "autocorrelation": "how slowly the lake recovers from an odd year",
    "skewness": "the lopsidedness of the swings",
}


def warning_sign_line(name: str, tau: float, p_value: float | None, meeting: bool, summary: str) -> str:
    """One warning-sign indicator: the model's own summary, or plain words in the meeting view."""
    if not meeting:
        return summary
    key = next((k for k in _INDICATOR_PLAIN if k in name.lower()), None)
    what = _INDICATOR_PLAIN.get(key or "", name)
    if p_value is not None and p_value < 0.05 and tau > 0:
        return f"Warning sign: {what} grew through the record, more than chance alone would give."
    if tau > 0:
        return f"No clear warning: {what} grew a little, within what chance alone gives."
    return f"No warning: {what} did not grow."


# --------------------------------------------------------------------------
# the two-pool lake: water and mud (the sediment legacy)
# --------------------------------------------------------------------------
TERMS.update(
    {
        "water_p": ("Water P", "Phosphorus in the water"),
        "sediment_p": ("Mobile sediment P", "Phosphorus in the mud"),
        "sediment_short": ("Sediment P [kg]", "P in the mud (kg)"),
        "clear_after": ("clear water after", "clear water after"),
        "lag_column": ("Lag from the sediment [yr]", "Extra years because of the mud"),
        "one_box": ("one-box lake", "the water alone"),
        "two_pool": ("two-pool lake", "water and mud"),
    }
)


def _kg(v: float) -> str:
    return f"{v:,.0f} kg"


def sediment_sentence(p_kg: float, tp: float, m_kg: float, m_target: float | None, meeting: bool) -> str:
    """Water P and sediment P now, and where the sediment P is heading, e.g. for the readout."""
    where = ""
    if m_target is not None and abs(m_target - m_kg) > 0.02 * max(m_target, 1e-12):
        verb = "draining towards" if m_target < m_kg else "filling towards"
        where = f", {verb} about {_kg(m_target)}"
    if meeting:
        return (
            f"Phosphorus in the water {_kg(p_kg)} ({tp:.0f} µg/L); in the mud {_kg(m_kg)}{where}. "
            "The mud keeps feeding the water."
        )
    return f"Water P {_kg(p_kg)} (TP {tp:.0f} µg/L); mobile sediment P {_kg(m_kg)}{where}."


def lag_sentence(change_year: int, lag: int | None, year_now: int, meeting: bool, max_years: int) -> str:
    """The years from the last inflow change (or removal) until clear water, e.g. under the time panel."""
    inflow = term("inflow_lower", meeting)
    head = f"Since the {inflow} changed in year {change_year}"
    if lag is None:
        return f"{head}: not clear within {max_years:,} years at this {inflow}."
    if lag == 0:
        return f"{head}: clear water at once."
    when = change_year + lag
    tense = "came" if when <= year_now else "comes"
    return f"{head}: clear water {tense} after {lag} year{'s' if lag != 1 else ''}, in year {when}."


TERMS.update(
    {
        "burial_axis": ("Burial b [yr⁻¹]", "Share of the mud's P buried for good a year"),
        "recycling_rate_axis": ("Recycling rate r [yr⁻¹]", "Most of the mud's P released a year"),
    }
)


# --------------------------------------------------------------------------
# the region view: many lakes screened at once
# --------------------------------------------------------------------------
#: region table column -> (technical, meeting) heading
REGION_COLUMNS: dict[str, tuple[str, str]] = {
    "lake_id": ("Lake", "Lake"),
    "name": ("Name", "Name"),
    "regime": ("Regime", "Kind of lake"),
    "state": ("State (last year)", "Water now"),
    "load_kg_yr": ("Today's load [kg yr⁻¹]", "Inflow now (kg/yr)"),
    "tipping_load": ("Tipping load [kg yr⁻¹]", "Tipping point (kg/yr)"),
    "recovery_load": ("Recovery load [kg yr⁻¹]", "Way-back point (kg/yr)"),
    "margin_kg_yr": ("Margin to tipping [kg yr⁻¹]", "Room before tipping (kg/yr)"),
    "p_irreversible": ("P(irrev.)", "Chance of no way back"),
    "p_hysteretic": ("P(hyst.)", "Chance of a harder way back"),
    "source": ("Parameters", "Numbers from"),
    "n_warnings": ("Warnings", "Notes"),
}
#: the screened state of a lake's last observed year -> (technical, meeting); None: no record
REGION_STATE: dict[str | None, tuple[str, str]] = {
    "clear": ("clear", "clear"),
    "turbid": ("turbid", "turbid, green"),
    "single": ("one stable state", "settled, one state"),
    None: ("no record", "not measured"),
}
#: where a lake's parameters come from -> (technical, meeting)
REGION_SOURCE: dict[bool, tuple[str, str]] = {False: ("given", "the lake table"), True: ("fitted", "measurements")}

TERMS.update(
    {
        "plane_x": ("Dimensionless load a = L/r [–]", "Inflow, scaled by what the mud can release"),
        "plane_y": ("Dimensionless loss b = s m/r [–]", "How well the lake flushes P, scaled"),
        "other_q": ("other exponent q (placed approximately)", "lakes of another kind (placed roughly)"),
        "given_lake": ("given parameters", "numbers from the lake table"),
        "fitted_lake": ("fitted parameters", "numbers from measurements"),
    }
)


def region_word(table: Mapping[Any, tuple[str, str]], key: Any, meeting: bool) -> str:
    """A region table cell in the chosen register (``REGION_STATE``, ``REGION_SOURCE``, ``REGIME_NAMES``)."""
    return table[key][1 if meeting else 0]
