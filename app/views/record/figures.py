"""Figure builders of the monitoring-record view: results in, ``go.Figure`` out."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
import plotly.graph_objects as go
from plotly.subplots import make_subplots
from turnback.model.clarity import expected_chl, expected_secchi
from turnback.model.early_warning import EarlyWarning

from ...theme import CLEAR, HISTORY, TODAY, TURBID, sizes
from ...vocabulary import term


def _base(fig: go.Figure, top: int, meeting: bool) -> go.Figure:
    """Shared look: the legend in a band of its own at the top (outside the plot, clear of titles)."""
    font = sizes(meeting).text
    fig.update_layout(
        template="plotly_white",
        font={"size": font},
        autosize=True,
        margin={"l": 80, "r": 20, "t": top, "b": 50},
        legend={"orientation": "h", "yref": "container", "yanchor": "top", "y": 1.0, "x": 0.0},
    )
    return fig


def record_figure(record: Mapping[str, Any], *, meeting: bool = False) -> go.Figure:
    """Observed lake TP [µg L⁻¹] and external load [kg yr⁻¹] by year."""
    tp_name = "lake phosphorus (measured)" if meeting else "lake TP (observed)"
    load_name = "phosphorus inflow (measured)" if meeting else "external load (observed)"
    fig = make_subplots(rows=2, cols=1, shared_xaxes=True, row_heights=[0.6, 0.4], vertical_spacing=0.07)
    se = record.get("tp_se_ug_l")
    fig.add_trace(
        go.Scatter(
            x=record["year"],
            y=record["tp_ug_l"],
            mode="lines+markers",
            name=tp_name if se is None else tp_name + (" ± how sure" if meeting else " ± 2 standard errors"),
            line={"color": HISTORY},
            error_y=None if se is None else {"type": "data", "array": [2.0 * v for v in se], "visible": True},
            hovertemplate="%{x}: %{y:.1f} µg/L<extra></extra>",
        ),
        row=1,
        col=1,
    )
    few = record.get("few_samples")
    if se is not None and few and any(few):
        fig.add_trace(
            go.Scatter(
                x=[y for y, f in zip(record["year"], few, strict=True) if f],
                y=[v for v, f in zip(record["tp_ug_l"], few, strict=True) if f],
                mode="markers",
                name="few samples (flagged)",
                marker={"symbol": "circle-open", "size": 12, "color": TURBID},
                hovertemplate="%{x}: few samples<extra></extra>",
            ),
            row=1,
            col=1,
        )
    fig.add_trace(
        go.Scatter(
            x=record["year"],
            y=record["load_kg"],
            mode="lines+markers",
            name=load_name,
            line={"color": TODAY, "shape": "hv"},
            hovertemplate="%{x}: %{y:.0f} kg/yr<extra></extra>",
        ),
        row=2,
        col=1,
    )
    fig.update_yaxes(title_text=term("tp_short", meeting), row=1, col=1, rangemode="tozero")
    fig.update_yaxes(title_text=term("inflow_short", meeting), row=2, col=1, rangemode="tozero")
    fig.update_xaxes(title_text="Year", row=2, col=1)
    return _base(fig, 50, meeting)


def clarity_figure(record: Mapping[str, Any], *, meeting: bool = False) -> go.Figure:
    """Observed Secchi depth and chlorophyll-a against those expected from observed TP (Carlson 1977)."""
    years = np.asarray(record["year"])
    tp = np.asarray(record["tp_ug_l"], dtype=float)
    titles = (
        ("See-through depth (m)", "Algae (µg/L of green pigment)")
        if meeting
        else (
            "Secchi depth [m]",
            "Chlorophyll-a [µg L⁻¹]",
        )
    )
    fig = make_subplots(rows=1, cols=2, subplot_titles=titles)
    fig.add_trace(
        go.Scatter(
            x=years,
            y=expected_secchi(tp),
            mode="lines",
            name="expected from lake phosphorus" if meeting else "expected from TP",
            line={"color": CLEAR, "dash": "dash"},
        ),
        row=1,
        col=1,
    )
    fig.add_trace(
        go.Scatter(
            x=years,
            y=expected_chl(tp),
            mode="lines",
            name="expected from TP ",
            line={"color": TURBID, "dash": "dash"},
            showlegend=False,
        ),
        row=1,
        col=2,
    )
    if record.get("secchi_m") is not None:
        fig.add_trace(
            go.Scatter(
                x=years,
                y=record["secchi_m"],
                mode="markers",
                name="measured" if meeting else "observed",
                marker={"color": CLEAR},
            ),
            row=1,
            col=1,
        )
    if record.get("chl_ug_l") is not None:
        fig.add_trace(
            go.Scatter(
                x=years,
                y=record["chl_ug_l"],
                mode="markers",
                name="observed ",
                marker={"color": TURBID},
                showlegend=False,
            ),
            row=1,
            col=2,
        )
    fig.update_yaxes(rangemode="tozero")
    return _base(fig, 80, meeting)


def warning_figure(ew: EarlyWarning, *, meeting: bool = False) -> go.Figure:
    """The series with its trend, and the three rolling indicators (Dakos et al. 2012)."""
    fig = make_subplots(
        rows=4,
        cols=1,
        shared_xaxes=True,
        vertical_spacing=0.04,
        subplot_titles=(
            ("lake phosphorus and its slow trend", "year-to-year swings", "slowness to recover", "lopsidedness")
            if meeting
            else ("series and trend", "variance", "lag-1 autocorrelation", "skewness")
        ),
    )
    fig.add_trace(
        go.Scatter(
            x=ew.years,
            y=ew.values,
            mode="lines+markers",
            name="lake phosphorus" if meeting else "series",
            line={"color": HISTORY},
        ),
        row=1,
        col=1,
    )
    if ew.bandwidth is not None:
        fig.add_trace(
            go.Scatter(
                x=ew.years,
                y=ew.smooth,
                mode="lines",
                name="slow trend" if meeting else "Gaussian trend",
                line={"color": "#555", "dash": "dot"},
            ),
            row=1,
            col=1,
        )
    for row, ind in enumerate(ew.indicators, start=2):
        fig.add_trace(
            go.Scatter(x=ew.years, y=ind.values, mode="lines", name=ind.name, showlegend=False, line={"color": TODAY}),
            row=row,
            col=1,
        )
    fig.update_xaxes(title_text="Year", row=4, col=1)
    fig.update_layout(showlegend=True)
    return _base(fig, 70, meeting)
