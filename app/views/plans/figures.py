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
from plotly.colors import qualitative
from turnback.model.clarity import TP_MAX_UG_L, TP_MIN_UG_L, clarity
from turnback.model.outcomes import ScenarioResult

from ...theme import height, sizes

_PALETTE = qualitative.Plotly


def _color(i: int) -> str:
    return _PALETTE[i % len(_PALETTE)]


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
    for i, r in enumerate(results):
        c = _color(i)
        x = r.years.tolist()
        fig.add_trace(
            go.Scatter(
                x=x,
                y=r.tp_p95_ug_l.tolist(),
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
                y=r.tp_p05_ug_l.tolist(),
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
                y=r.tp_median_ug_l.tolist(),
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
                y=r.threshold_tp_ug_l.tolist(),
                mode="lines",
                line={"color": c, "width": 1, "dash": "dot"},
                legendgroup=r.name,
                showlegend=False,
                name=f"{r.name} clear threshold",
                hovertemplate="threshold %{y:.1f} µg/L",
            )
        )
    return _layout(
        fig,
        title or "Total phosphorus: median and 5–95% band (dotted: clear-state threshold)",
        "year",
        "TP [µg/L]",
    )


def clear_probability_figure(results: Sequence[ScenarioResult], *, title: str | None = None) -> go.Figure:
    """Fraction of ensemble members in the clear state, year by year [%]."""
    fig = go.Figure()
    for i, r in enumerate(results):
        fig.add_trace(
            go.Scatter(
                x=r.years.tolist(),
                y=(100.0 * r.p_clear).tolist(),
                mode="lines",
                name=r.name,
                line={"color": _color(i), "width": 2.5},
                hovertemplate="%{y:.1f}%",
            )
        )
    fig = _layout(fig, title or "Probability of the clear state", "year", "members clear [%]")
    fig.update_yaxes(range=[-2, 102])
    return fig


def recovery_figure(results: Sequence[ScenarioResult], *, title: str | None = None) -> go.Figure:
    """Distribution of recovery time: fraction of members recovered by each year [%] (cumulative)."""
    fig = go.Figure()
    for i, r in enumerate(results):
        rec = r.recovery_year
        years = r.years
        n = max(rec.size, 1)
        finite = rec[np.isfinite(rec)]
        share = [100.0 * float((finite <= t).sum()) / n for t in years.tolist()]
        fig.add_trace(
            go.Scatter(
                x=years.tolist(),
                y=share,
                mode="lines",
                line={"color": _color(i), "width": 2.5, "shape": "hv"},
                name=r.name,
                hovertemplate="%{y:.1f}% recovered",
            )
        )
    fig = _layout(fig, title or "Recovery time: members recovered by each year", "year", "members recovered [%]")
    fig.update_yaxes(range=[-2, 102])
    return fig


def load_figure(results: Sequence[ScenarioResult], *, title: str | None = None) -> go.Figure:
    """Scheduled external load of years 1 … T [kg yr⁻¹] (the mean of the varied load)."""
    fig = go.Figure()
    for i, r in enumerate(results):
        fig.add_trace(
            go.Scatter(
                x=r.years[1:].tolist(),
                y=r.load_kg_per_yr.tolist(),
                mode="lines",
                name=r.name,
                line={"color": _color(i), "width": 2.5, "shape": "hv"},
                hovertemplate="%{y:,.0f} kg/yr",
            )
        )
    return _layout(fig, title or "Scheduled external load", "year", "load [kg/yr]")


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
    "tsi_class": "Trophic state (Carlson TSI)",
    "oecd_class": "OECD class",
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


def expected_clarity(tp_ug_l: float) -> dict[str, Any]:
    """Expected summer Secchi depth [m], TSI, Carlson band and OECD class at ``tp_ug_l``; None beyond the scale."""
    if not (math.isfinite(tp_ug_l) and TP_MIN_UG_L <= tp_ug_l <= TP_MAX_UG_L):
        return {"secchi_m": None, "tsi": None, "tsi_class": None, "oecd_class": None}
    c = clarity(tp_ug_l)
    return {"secchi_m": c.secchi_m, "tsi": c.tsi_tp, "tsi_class": c.tsi_class, "oecd_class": c.oecd_class}


def outcome_table(results: Sequence[ScenarioResult]) -> list[dict[str, Any]]:
    """One row per scenario with the ids of :data:`TABLE_COLUMNS` (raw numbers; None where undefined)."""
    rows = []
    for r in results:
        c = expected_clarity(r.final_tp_median_ug_l)
        tsi = c["tsi"]
        rows.append(
            {
                "scenario": r.name,
                "p_clear_final": r.p_clear_final,
                "p_clear_final_se": r.p_clear_final_se,
                "p_flip": r.p_flip,
                "recovery_years_median": r.recovery_years_median,
                "p_recovered": r.p_recovered,
                "p_relapse": r.p_relapse,
                "final_tp_median_ug_l": r.final_tp_median_ug_l,
                "secchi_m": c["secchi_m"],
                "tsi_class": None if tsi is None else f"{c['tsi_class']} (TSI {tsi:.0f})",
                "oecd_class": c["oecd_class"],
                "load_cut_kg": r.load_cut_kg,
                "in_lake_removal_kg": r.in_lake_removal_kg,
                "total_removed_kg": r.total_removed_kg,
            }
        )
    return rows


#: the outcome table's columns in the meeting view (the rest are in the CSV and the report)
MEETING_COLUMNS = (
    "scenario",
    "p_clear_final",
    "p_flip",
    "recovery_years_median",
    "final_tp_median_ug_l",
    "secchi_m",
    "tsi_class",
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


def _column(key: str) -> dict[str, Any]:
    col: dict[str, Any] = {"field": key, "headerName": TABLE_COLUMNS[key], "sortable": True}
    fmt = _FORMATS.get(key)
    if fmt is None:
        return col | {"cellDataType": "text", "minWidth": 130 if key != "scenario" else 110}
    return col | {
        "cellDataType": "number",
        "type": "rightAligned",
        "valueFormatter": {"function": f"params.value == null ? '–' : d3.format('{fmt}')(params.value)"},
    }


def table_columns(meeting: bool = False) -> list[dict[str, Any]]:
    """Column definitions of the outcome table (a dash-ag-grid grid), sortable, with number formats.

    The meeting view shows the main columns only (:data:`MEETING_COLUMNS`).
    """
    keys = MEETING_COLUMNS if meeting else tuple(TABLE_COLUMNS)
    return [_column(k) for k in keys]
