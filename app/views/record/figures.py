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


def _base(fig: go.Figure, height: int, meeting: bool) -> go.Figure:
    fig.update_layout(
        template="plotly_white",
        font={"size": sizes(meeting).text},
        height=height,
        margin={"l": 80, "r": 20, "t": 30, "b": 50},
        legend={"orientation": "h", "yanchor": "bottom", "y": 1.01, "x": 0.0},
    )
    return fig


def record_figure(record: Mapping[str, Any], *, meeting: bool = False) -> go.Figure:
    """Observed lake TP [µg L⁻¹] and external load [kg yr⁻¹] by year."""
    fig = make_subplots(rows=2, cols=1, shared_xaxes=True, row_heights=[0.6, 0.4], vertical_spacing=0.07)
    se = record.get("tp_se_ug_l")
    fig.add_trace(
        go.Scatter(
            x=record["year"],
            y=record["tp_ug_l"],
            mode="lines+markers",
            name="lake TP (observed)" if se is None else "lake TP (annual mean ± 2 standard errors)",
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
            name="external load (observed)",
            line={"color": TODAY, "shape": "hv"},
            hovertemplate="%{x}: %{y:.0f} kg/yr<extra></extra>",
        ),
        row=2,
        col=1,
    )
    fig.update_yaxes(title_text="TP [µg L⁻¹]", row=1, col=1, rangemode="tozero")
    fig.update_yaxes(title_text="Load [kg yr⁻¹]", row=2, col=1, rangemode="tozero")
    fig.update_xaxes(title_text="Year", row=2, col=1)
    return _base(fig, 430, meeting)


def clarity_figure(record: Mapping[str, Any], *, meeting: bool = False) -> go.Figure:
    """Observed Secchi depth and chlorophyll-a against those expected from observed TP (Carlson 1977)."""
    years = np.asarray(record["year"])
    tp = np.asarray(record["tp_ug_l"], dtype=float)
    fig = make_subplots(rows=1, cols=2, subplot_titles=("Secchi depth [m]", "Chlorophyll-a [µg L⁻¹]"))
    fig.add_trace(
        go.Scatter(
            x=years, y=expected_secchi(tp), mode="lines", name="expected from TP", line={"color": CLEAR, "dash": "dash"}
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
            go.Scatter(x=years, y=record["secchi_m"], mode="markers", name="observed", marker={"color": CLEAR}),
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
    return _base(fig, 330, meeting)


def warning_figure(ew: EarlyWarning, *, meeting: bool = False) -> go.Figure:
    """The series with its trend, and the three rolling indicators (Dakos et al. 2012)."""
    fig = make_subplots(
        rows=4,
        cols=1,
        shared_xaxes=True,
        vertical_spacing=0.04,
        subplot_titles=("series and trend", "variance", "lag-1 autocorrelation", "skewness"),
    )
    fig.add_trace(
        go.Scatter(x=ew.years, y=ew.values, mode="lines+markers", name="series", line={"color": HISTORY}), row=1, col=1
    )
    if ew.bandwidth is not None:
        fig.add_trace(
            go.Scatter(
                x=ew.years, y=ew.smooth, mode="lines", name="Gaussian trend", line={"color": "#555", "dash": "dot"}
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
    return _base(fig, 620, meeting)
