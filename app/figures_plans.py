"""Figure and table builders of the plans view: scenario results in, figures and table rows out.

The figures are those of the standalone report (:mod:`turnback.app.report`), sized
for the dashboard and, in the meeting view, drawn with larger text and
thicker lines.  The outcome table adds to each scenario's median final TP
the summer Secchi depth and trophic classes expected for that TP
(:func:`turnback.model.clarity.clarity`, Carlson 1977; Carlson & Simpson 1996; OECD 1982).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import plotly.graph_objects as go
from turnback.model.clarity import TP_MAX_UG_L, TP_MIN_UG_L, clarity
from turnback.model.outcomes import ScenarioResult

from .report import clear_probability_figure, load_figure, recovery_figure, trajectory_figure

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
    font = 20 if meeting else 14
    fig.update_layout(
        font={"size": font},
        title={"font": {"size": font + 3}},
        height=520 if meeting else 400,
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
