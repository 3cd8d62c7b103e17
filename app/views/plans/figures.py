"""Figure and table builders of the plans view: scenario results in, figures and table rows out.

The four figures of a run are drawn here and shared with the standalone
report (:mod:`app.report`); the view sizes them for the dashboard and, in
the meeting view, draws them with larger text and thicker lines.  The
outcome table adds to each scenario's median final TP the summer Secchi
depth and trophic classes expected for that TP
(:func:`model.clarity.clarity`, Carlson 1977; Carlson & Simpson 1996; OECD 1982).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
import plotly.graph_objects as go
from turnback.model.clarity import TP_MAX_UG_L, TP_MIN_UG_L, clarity
from turnback.model.outcomes import ScenarioResult

from ...theme import height, sizes
from ...vocabulary import trophic_headline

#: scenario colours: none is the blue of clear water, the olive of turbid water or an alarm red, so those keep
#: their meaning; the do-nothing baseline is always dark grey
_PALETTE = ("#7b3294", "#e08214", "#8c510a", "#c51b7d", "#b8860b", "#542788", "#d6604d", "#35978f")
BASELINE_COLOUR = "#4d4d4d"


def _is_baseline(r: ScenarioResult) -> bool:
    return r.name.startswith("Do nothing")


def scenario_colours(results: Sequence[ScenarioResult]) -> list[str]:
    """One colour per scenario, the same in every figure and in the report."""
    out, k = [], 0
    for r in results:
        if _is_baseline(r):
            out.append(BASELINE_COLOUR)
        else:
            out.append(_PALETTE[k % len(_PALETTE)])
            k += 1
    return out


def starts_clear(r: ScenarioResult) -> bool:
    """Whether the scenario's lake is clear in year 0 (every member starts from the same state)."""
    return bool(r.p_clear.size and r.p_clear[0] >= 0.5)


def mixed_horizons(results: Sequence[ScenarioResult]) -> bool:
    """Horizons so different that a linear year axis squeezes the short ones (longest at least 4 × shortest)."""
    years = [int(r.years[-1]) for r in results if r.years.size]
    return bool(years) and min(years) > 0 and max(years) >= 4 * min(years)


def _year_axis(fig: go.Figure, results: Sequence[ScenarioResult]) -> go.Figure:
    """A log year axis (from year 1) when horizons are mixed, so short scenarios keep their width."""
    if mixed_horizons(results):
        fig.update_xaxes(type="log", title_text="year (log scale, from year 1)")
    return fig


def _x(r: ScenarioResult, results: Sequence[ScenarioResult]) -> tuple[list[int], slice]:
    """Years to draw and the slice of the yearly series they take (year 0 is left off a log axis)."""
    if mixed_horizons(results):
        return r.years[1:].tolist(), slice(1, None)
    return r.years.tolist(), slice(None)


def _rgba(hex_color: str, alpha: float) -> str:
    h = hex_color.lstrip("#")
    r, g, b = (int(h[k : k + 2], 16) for k in (0, 2, 4))
    return f"rgba({r},{g},{b},{alpha})"


def _layout(fig: go.Figure, title: str, x_title: str, y_title: str) -> go.Figure:
    fig.update_layout(
        title={"text": title},
        xaxis_title=x_title,
        yaxis_title=y_title,
        template="plotly_white",
        hovermode="x unified",
        legend={"orientation": "h", "y": -0.2},
        margin={"l": 60, "r": 20, "t": 60, "b": 60},
        height=420,
    )
    return fig


def trajectory_figure(results: Sequence[ScenarioResult], *, title: str | None = None) -> go.Figure:
    """Median TP [µg L⁻¹] of each scenario over years 0 … T with its 5–95 % band, overlaid.

    The dotted line of the same colour is the scenario's clear-state threshold.
    """
    fig = go.Figure()
    colours = scenario_colours(results)
    for i, r in enumerate(results):
        c = colours[i]
        x, sl = _x(r, results)
        fig.add_trace(
            go.Scatter(
                x=x,
                y=r.tp_p95_ug_l[sl].tolist(),
                mode="lines",
                line={"width": 0},
                legendgroup=r.name,
                showlegend=False,
                hoverinfo="skip",
                name=f"{r.name} 95%",
            )
        )
        fig.add_trace(
            go.Scatter(
                x=x,
                y=r.tp_p05_ug_l[sl].tolist(),
                mode="lines",
                line={"width": 0},
                fill="tonexty",
                fillcolor=_rgba(c, 0.18),
                legendgroup=r.name,
                showlegend=False,
                hoverinfo="skip",
                name=f"{r.name} 5%",
            )
        )
        fig.add_trace(
            go.Scatter(
                x=x,
                y=r.tp_median_ug_l[sl].tolist(),
                mode="lines",
                line={"color": c, "width": 2.5},
                legendgroup=r.name,
                name=r.name,
                hovertemplate="%{y:.1f} µg/L",
            )
        )
        fig.add_trace(
            go.Scatter(
                x=x,
                y=r.threshold_tp_ug_l[sl].tolist(),
                mode="lines",
                line={"color": c, "width": 1, "dash": "dot"},
                legendgroup=r.name,
                showlegend=False,
                name=f"{r.name} clear threshold",
                hovertemplate="threshold %{y:.1f} µg/L",
            )
        )
    return _year_axis(
        _layout(
            fig,
            title or "Total phosphorus: median and 5–95% band (dotted: clear-state threshold)",
            "year",
            "TP [µg/L]",
        ),
        results,
    )


def clear_probability_figure(results: Sequence[ScenarioResult], *, title: str | None = None) -> go.Figure:
    """Fraction of ensemble members in the clear state, year by year [%]."""
    fig = go.Figure()
    colours = scenario_colours(results)
    for i, r in enumerate(results):
        x, sl = _x(r, results)
        fig.add_trace(
            go.Scatter(
                x=x,
                y=(100.0 * r.p_clear[sl]).tolist(),
                mode="lines",
                name=r.name,
                line={"color": colours[i], "width": 2.5},
                hovertemplate="%{y:.1f}%",
            )
        )
    fig = _layout(fig, title or "Probability of the clear state", "year", "members clear [%]")
    fig.update_yaxes(range=[-2, 102])
    return _year_axis(fig, results)


def recovery_figure(results: Sequence[ScenarioResult], *, title: str | None = None) -> go.Figure:
    """Distribution of recovery time: fraction of members recovered by each year [%] (cumulative).

    Scenarios whose lake starts clear have nothing to recover from and are left out (named in the title).
    """
    fig = go.Figure()
    colours = scenario_colours(results)
    skipped = [r.name for r in results if starts_clear(r)]
    for i, r in enumerate(results):
        if starts_clear(r):
            continue
        rec = r.recovery_year
        n = max(rec.size, 1)
        finite = rec[np.isfinite(rec)]
        x, _ = _x(r, results)
        share = [100.0 * float((finite <= t).sum()) / n for t in x]
        fig.add_trace(
            go.Scatter(
                x=x,
                y=share,
                mode="lines",
                line={"color": colours[i], "width": 2.5, "shape": "hv"},
                name=r.name,
                hovertemplate="%{y:.1f}% recovered",
            )
        )
    text = title or "Recovery time: members recovered by each year"
    if skipped:
        text += f"<br><sup>not applicable, starting clear: {', '.join(skipped)}</sup>"
    fig = _layout(fig, text, "year", "members recovered [%]")
    fig.update_yaxes(range=[-2, 102])
    return _year_axis(fig, results)


def load_figure(results: Sequence[ScenarioResult], *, title: str | None = None) -> go.Figure:
    """Scheduled external load of years 1 … T [kg yr⁻¹] (the mean of the varied load)."""
    fig = go.Figure()
    colours = scenario_colours(results)
    for i, r in enumerate(results):
        fig.add_trace(
            go.Scatter(
                x=r.years[1:].tolist(),
                y=r.load_kg_per_yr.tolist(),
                mode="lines",
                name=r.name,
                line={"color": colours[i], "width": 2.5, "shape": "hv"},
                hovertemplate="%{y:,.0f} kg/yr",
            )
        )
    return _year_axis(_layout(fig, title or "Scheduled external load", "year", "load [kg/yr]"), results)


#: figure key -> (builder, title); the keys are the view's graph order
FIGURES = {
    "trajectory": (trajectory_figure, "Total phosphorus: median and 5–95% band (dotted: clear-state threshold)"),
    "clear": (clear_probability_figure, "Chance of clear water, year by year"),
    "recovery": (recovery_figure, "Members recovered by each year"),
    "load": (load_figure, "Scheduled external load"),
}

#: outcome table columns: id -> header
TABLE_COLUMNS = {
    "scenario": "Scenario",
    "p_clear_final": "Clear in the final year",
    "p_clear_final_se": "± (1 s.e.)",
    "p_flip": "Chance of flipping to turbid",
    "recovery_years_median": "Median recovery year",
    "p_recovered": "Recovered within the horizon",
    "p_relapse": "Turbid again after recovering",
    "final_tp_median_ug_l": "Median final TP [µg/L]",
    "secchi_m": "Expected summer Secchi depth [m]",
    "trophic": "Trophic state (OECD class of the TP; Carlson TSI as detail)",
    "load_cut_kg": "Load cut vs. do-nothing [kg]",
    "in_lake_removal_kg": "In-lake removal [kg]",
    "total_removed_kg": "Total P kept out or removed [kg]",
}


def view_figure(fig: go.Figure, *, meeting: bool = False) -> go.Figure:
    """A report figure restyled for the dashboard (larger text and lines in the meeting view)."""
    font = sizes(meeting).text
    fig.update_layout(
        font={"size": font},
        title={"font": {"size": font + 3}},
        height=height("plan", meeting),
        margin={"l": 70, "r": 20, "t": 60, "b": 40},
        legend={"orientation": "h", "y": -0.22, "font": {"size": font}},
    )
    if meeting:
        for trace in fig.data:
            line = getattr(trace, "line", None)
            if line is not None and line.width:
                trace.line.width = line.width * 1.8
    return fig


def result_figures(results: Sequence[ScenarioResult], *, meeting: bool = False) -> dict[str, go.Figure]:
    """The four figures of a run, keyed as :data:`FIGURES`."""
    return {key: view_figure(build(results, title=title), meeting=meeting) for key, (build, title) in FIGURES.items()}


def empty_figure(text: str, *, meeting: bool = False) -> go.Figure:
    """A blank figure that says why it is blank."""
    fig = go.Figure()
    fig.add_annotation(text=text, showarrow=False, x=0.5, y=0.5, xref="paper", yref="paper")
    fig.update_xaxes(visible=False)
    fig.update_yaxes(visible=False)
    fig.update_layout(template="plotly_white")
    return view_figure(fig, meeting=meeting)


def trophic_words(tp_ug_l: float, meeting: bool = False) -> str | None:
    """The one trophic verdict of a TP (see :data:`app.vocabulary.TROPHIC_RULE`), the index as detail."""
    c = expected_clarity(tp_ug_l)
    if c["oecd_class"] is None:
        return None
    if meeting:
        return trophic_headline(c["oecd_class"], True)
    return f"{c['oecd_class']} (Carlson TSI {c['tsi']:.0f})"


def expected_clarity(tp_ug_l: float) -> dict[str, Any]:
    """Expected summer Secchi depth [m], TSI, Carlson band and OECD class at ``tp_ug_l``; None beyond the scale."""
    if not (math.isfinite(tp_ug_l) and TP_MIN_UG_L <= tp_ug_l <= TP_MAX_UG_L):
        return {"secchi_m": None, "tsi": None, "tsi_class": None, "oecd_class": None}
    c = clarity(tp_ug_l)
    return {"secchi_m": c.secchi_m, "tsi": c.tsi_tp, "tsi_class": c.tsi_class, "oecd_class": c.oecd_class}


def outcome_table(results: Sequence[ScenarioResult], meeting: bool = False) -> list[dict[str, Any]]:
    """One row per scenario with the ids of :data:`TABLE_COLUMNS` (raw numbers; None where undefined).

    A lake that starts clear has nothing to recover from: its recovery columns
    are None ('not applicable'), so a lake that flips is never counted as
    recovered; a lake that starts turbid cannot flip (``p_flip`` None).
    """
    rows = []
    for r in results:
        c = expected_clarity(r.final_tp_median_ug_l)
        clear0 = starts_clear(r)
        rows.append(
            {
                "scenario": r.name,
                "p_clear_final": r.p_clear_final,
                "p_clear_final_se": r.p_clear_final_se,
                "p_flip": r.p_flip if clear0 else None,
                "recovery_years_median": None if clear0 else r.recovery_years_median,
                "p_recovered": None if clear0 else r.p_recovered,
                "p_relapse": None if clear0 else r.p_relapse,
                "final_tp_median_ug_l": r.final_tp_median_ug_l,
                "secchi_m": c["secchi_m"],
                "trophic": trophic_words(r.final_tp_median_ug_l, meeting),
                "load_cut_kg": r.load_cut_kg,
                "in_lake_removal_kg": r.in_lake_removal_kg,
                "total_removed_kg": r.total_removed_kg,
                "starts_clear": clear0,
            }
        )
    return rows


#: plain headings of the meeting view's columns
MEETING_HEADERS = {
    "scenario": "Plan",
    "p_clear_final": "Chance of clear water at the end",
    "p_flip": "Chance it turns green",
    "recovery_years_median": "Typical year it is clear again",
    "final_tp_median_ug_l": "Lake phosphorus at the end (µg/L)",
    "secchi_m": "See-through depth in summer (m)",
    "trophic": "Nutrient level",
    "total_removed_kg": "Phosphorus kept out or taken out (kg)",
}

#: columns that read 'not applicable' for a lake that starts clear (the rest: for one that starts turbid)
NOT_APPLICABLE_CLEAR = ("recovery_years_median", "p_recovered", "p_relapse")
NOT_APPLICABLE_TURBID = ("p_flip",)

#: the outcome table's columns in the meeting view (the rest are in the CSV and the report)
MEETING_COLUMNS = (
    "scenario",
    "p_clear_final",
    "p_flip",
    "recovery_years_median",
    "final_tp_median_ug_l",
    "secchi_m",
    "trophic",
    "total_removed_kg",
)

#: d3 number formats of the outcome table's numeric columns ('–' where undefined)
_FORMATS = {
    "p_clear_final": ".1%",
    "p_clear_final_se": ".1%",
    "p_flip": ".1%",
    "recovery_years_median": ".0f",
    "p_recovered": ".1%",
    "p_relapse": ".1%",
    "final_tp_median_ug_l": ".1f",
    "secchi_m": ".1f",
    "load_cut_kg": ",.0f",
    "in_lake_removal_kg": ",.0f",
    "total_removed_kg": ",.0f",
}


def _column(key: str, meeting: bool = False) -> dict[str, Any]:
    header = MEETING_HEADERS.get(key, TABLE_COLUMNS[key]) if meeting else TABLE_COLUMNS[key]
    col: dict[str, Any] = {"field": key, "headerName": header, "sortable": True}
    fmt = _FORMATS.get(key)
    if fmt is None:
        return col | {"cellDataType": "text", "minWidth": 130 if key != "scenario" else 110}
    blank = "'–'"
    if key in NOT_APPLICABLE_CLEAR:
        blank = "(params.data.starts_clear ? 'not applicable (starts clear)' : '–')"
    elif key in NOT_APPLICABLE_TURBID:
        blank = "(params.data.starts_clear ? '–' : 'not applicable (starts turbid)')"
    return col | {
        "cellDataType": "number",
        "type": "rightAligned",
        "valueFormatter": {"function": f"params.value == null ? {blank} : d3.format('{fmt}')(params.value)"},
    }


def table_columns(meeting: bool = False) -> list[dict[str, Any]]:
    """Column definitions of the outcome table (a dash-ag-grid grid), sortable, with number formats.

    The meeting view shows the main columns only (:data:`MEETING_COLUMNS`).
    """
    keys = MEETING_COLUMNS if meeting else tuple(TABLE_COLUMNS)
    return [_column(k, meeting) for k in keys]
