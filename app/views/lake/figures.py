"""Figure builders of the lake view: model results in, ``go.Figure`` (or a ``Patch``) out.  No callbacks here.

The trace order of each figure is fixed (see ``EQ_TRACES`` and
``TIME_TRACES``) so that callbacks can patch the history layers in place
without rebuilding the whole figure (:func:`history_patches`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import plotly.graph_objects as go
from dash import Patch
from plotly.subplots import make_subplots
from turnback.model.clarity import OECD_CLASSES, expected_secchi
from turnback.model.equilibrium import LakeAnalysis
from turnback.model.params import LakeProfile
from turnback.model.trophic_coefficients import OECD_1982

from ...stores import lake_from_store
from ...theme import (
    BISTABLE,
    CLEAR,
    CURRENT,
    FOLD,
    HISTORY,
    OBSERVED,
    SEPARATRIX,
    TODAY,
    TURBID,
    height,
    load_axis_title,
    sizes,
)

#: fixed trace order of the equilibrium figure
EQ_TRACES = ("lower", "middle", "upper", "folds", "observed", "history", "current")
EQ_HISTORY = EQ_TRACES.index("history")
EQ_CURRENT = EQ_TRACES.index("current")
EQ_OBSERVED = EQ_TRACES.index("observed")

#: fixed trace order of the time figure
TIME_TRACES = ("tp", "load", "observed_tp", "observed_load")
TIME_TP = 0
TIME_LOAD = 1


def _labels(meeting: bool) -> dict[str, str]:
    if meeting:
        return {
            "x": load_axis_title(True),
            "y": "Phosphorus in the lake water (µg per litre)",
            "lower": "Clear water",
            "middle": "Tipping threshold",
            "upper": "Turbid, green water",
            "single": "The lake's only stable state",
            "band": "two possible states",
            "history": "Path so far",
            "current": "The lake now",
            "folds": "Tipping and recovery points",
            "today": "today",
            "year": "Year",
            "tp": "TP (µg/L)",
            "load": "Inflow (kg/yr)",
        }
    return {
        "x": load_axis_title(False),
        "y": "Lake total phosphorus TP [µg L⁻¹]",
        "lower": "Clear-water branch (stable)",
        "middle": "Separatrix (unstable)",
        "upper": "Turbid branch (stable)",
        "single": "Equilibrium (stable)",
        "band": "bistable: two stable states",
        "history": "History this session",
        "current": "Current state",
        "folds": "Folds",
        "today": "present-day load",
        "year": "Year",
        "tp": "TP [µg L⁻¹]",
        "load": "Load [kg yr⁻¹]",
    }


def _style(meeting: bool) -> dict[str, Any]:
    sz = sizes(meeting)
    return {"font": sz.font, "line": sz.line, "marker": sz.marker}


def history_xy(history: Mapping[str, Sequence[float]], profile: LakeProfile) -> dict[str, Any]:
    """Load and TP [µg L⁻¹] of every history point, for the figure layers."""
    p = np.asarray(history["p"], dtype=float)
    return {
        "load": list(history["load"]),
        "tp": profile.concentration(p).tolist(),
        "year": list(history["year"]),
    }


def equilibrium_figure(
    analysis: LakeAnalysis,
    profile: LakeProfile,
    history: Mapping[str, Any],
    *,
    present_load: float,
    load_max: float,
    meeting: bool = False,
    fit: Mapping[str, Any] | None = None,
) -> go.Figure:
    """Equilibrium curve (load against TP) with folds, bistable band, history and current state.

    With ``fit`` (the monitoring fit of this lake) the observed years are drawn
    as points and the 90 % bootstrap intervals of both folds as bands; a fold
    the record cannot constrain is labelled so.

    Stable branches are solid, the unstable branch dashed; the band of loads
    with two stable states is shaded; the history trace shows every state of
    the session in time order.
    """
    lab = _labels(meeting)
    sty = _style(meeting)
    fig = go.Figure()
    segs: dict[str, Any] = {name: (load, p) for name, load, p in analysis.curve.segments()}
    for name in ("lower", "middle", "upper"):
        key = name
        if name == "upper" and "single" in segs:
            key = "single"
        load, p = segs.get(key, (np.empty(0), np.empty(0)))
        colour = {"lower": CLEAR, "middle": SEPARATRIX, "upper": TURBID, "single": CLEAR}[key]
        fig.add_trace(
            go.Scatter(
                x=load,
                y=profile.concentration(p),
                mode="lines",
                name=lab[key],
                line={"color": colour, "width": sty["line"], "dash": "dash" if key == "middle" else "solid"},
                hovertemplate="%{x:.0f} kg/yr, %{y:.1f} µg/L<extra>" + lab[key] + "</extra>",
                showlegend=bool(len(load)),
            )
        )
    fx = [f.load for f in analysis.folds]
    fy = [float(profile.concentration(f.p)) for f in analysis.folds]
    ftext = [("tipping load " if f.kind == "tipping" else "recovery load ") + f"{f.load:,.0f}" for f in analysis.folds]
    fig.add_trace(
        go.Scatter(
            x=fx,
            y=fy,
            mode="markers+text",
            text=ftext,
            textposition=["top left", "bottom right"][: len(fx)],
            textfont={"size": sty["font"] - 2, "color": FOLD},
            marker={"symbol": "diamond", "size": sty["marker"], "color": FOLD, "line": {"color": "white", "width": 1}},
            name=lab["folds"],
            hovertemplate="%{text}: %{x:.0f} kg/yr, %{y:.1f} µg/L<extra></extra>",
            showlegend=False,
        )
    )
    obs = (fit or {}).get("observed") or {"year": [], "load": [], "tp": []}
    fig.add_trace(
        go.Scatter(
            x=obs["load"],
            y=obs["tp"],
            customdata=obs["year"],
            mode="markers",
            name="observed years",
            marker={"size": sty["marker"] // 2 + 2, "color": OBSERVED, "symbol": "square"},
            hovertemplate="%{customdata}: %{x:.0f} kg/yr, %{y:.1f} µg/L<extra>observed</extra>",
            showlegend=bool(obs["load"]),
        )
    )
    if fit:
        _fold_bands(fig, fit, load_max, sty["font"] - 4)
    hxy = history_xy(history, profile)
    fig.add_trace(
        go.Scatter(
            x=hxy["load"],
            y=hxy["tp"],
            customdata=hxy["year"],
            mode="lines+markers",
            name=lab["history"],
            line={"color": HISTORY, "width": max(1.5, sty["line"] - 1.5)},
            marker={"size": sty["marker"] // 2.5, "color": HISTORY},
            opacity=0.75,
            hovertemplate="year %{customdata}: %{x:.0f} kg/yr, %{y:.1f} µg/L<extra></extra>",
        )
    )
    fig.add_trace(
        go.Scatter(
            x=hxy["load"][-1:],
            y=hxy["tp"][-1:],
            mode="markers",
            name=lab["current"],
            marker={
                "size": sty["marker"] * 1.6,
                "color": CURRENT,
                "symbol": "circle",
                "line": {"color": "white", "width": 3},
            },
            hovertemplate="now: %{x:.0f} kg/yr, %{y:.1f} µg/L<extra></extra>",
        )
    )
    if len(analysis.folds) == 2:
        lo = max(0.0, analysis.folds[1].load)
        hi = analysis.folds[0].load
        fig.add_vrect(
            x0=lo,
            x1=hi,
            fillcolor=BISTABLE,
            line_width=0,
            layer="below",
            annotation_text=lab["band"],
            annotation_position="top left",
            annotation_font_size=sty["font"] - 3,
        )
    fig.add_vline(
        x=present_load,
        line={"color": TODAY, "width": 2, "dash": "dot"},
        annotation_text=lab["today"],
        annotation_position="bottom right",
        annotation_font={"size": sty["font"] - 3, "color": TODAY},
    )
    y_top = float(profile.concentration(np.max(analysis.curve.p))) if len(analysis.curve) else 1.0
    y_top = max(y_top, max(hxy["tp"]) if hxy["tp"] else 0.0) * 1.05
    _trophic_bands(fig, y_top, sty["font"] - 4, meeting)
    fig.update_layout(
        template="plotly_white",
        font={"size": sty["font"]},
        margin={"l": 70, "r": 20, "t": 30, "b": 60},
        height=height("equilibrium", meeting),
        xaxis={"title": lab["x"], "range": [min(0.0, float(np.min(analysis.curve.load))), load_max], "zeroline": True},
        yaxis={"title": lab["y"], "range": [0.0, y_top], "rangemode": "tozero"},
        legend={"orientation": "h", "yanchor": "bottom", "y": 1.01, "x": 0.0},
        uirevision="equilibrium",
    )
    return fig


def _fold_bands(fig: go.Figure, fit: Mapping[str, Any], load_max: float, font: int) -> None:
    """The fitted folds' bootstrap intervals as vertical bands."""
    for key, label, colour in (
        ("tipping", "tipping load", "rgba(31,111,168,0.13)"),
        ("recovery", "recovery load", "rgba(122,143,28,0.15)"),
    ):
        band = fit.get(key) or {}
        lo, hi = band.get("low"), band.get("high")
        if lo is None or hi is None:
            continue
        text = f"{label}: 90% band" if band.get("constrained", True) else f"{label}: not constrained by the record"
        fig.add_vrect(
            x0=max(lo, -load_max),
            x1=min(hi, load_max),
            fillcolor=colour,
            line_width=0,
            layer="below",
            annotation_text=text,
            annotation_position="bottom left" if key == "tipping" else "bottom right",
            annotation_font={"size": font, "color": "#333"},
        )


#: OECD (1982) fixed TP boundaries [µg L⁻¹] between the classes of model.clarity.OECD_CLASSES
OECD_TP_EDGES = OECD_1982.tp_ug_l


def _trophic_bands(fig: go.Figure, y_top: float, font: int, meeting: bool) -> None:
    """Label the TP axis with OECD (1982) trophic classes and Carlson (1977) expected Secchi depths."""
    edges = [0.0, *OECD_TP_EDGES, np.inf]
    for i, name in enumerate(OECD_CLASSES):
        lo, hi = edges[i], min(edges[i + 1], y_top)
        if lo >= y_top or hi - lo < 0.04 * y_top:
            continue
        if lo > 0:
            fig.add_hline(y=lo, line={"color": "rgba(90,90,90,0.35)", "width": 1, "dash": "dot"}, layer="below")
        sd_hi = float(expected_secchi(max(lo, 0.5)))
        sd_lo = float(expected_secchi(hi))
        secchi = f"see {sd_lo:.1f}–{sd_hi:.1f} m down" if meeting else f"Secchi ≈ {sd_lo:.1f}–{sd_hi:.1f} m"
        if lo == 0:
            secchi = f"see over {sd_lo:.1f} m down" if meeting else f"Secchi > {sd_lo:.1f} m"
        fig.add_annotation(
            x=1.0,
            xref="paper",
            xanchor="right",
            y=(lo + hi) / 2,
            yref="y",
            showarrow=False,
            text=f"{name} · {secchi}",
            font={"size": font, "color": "#555"},
            bgcolor="rgba(255,255,255,0.6)",
        )


def time_figure(
    history: Mapping[str, Any],
    profile: LakeProfile,
    *,
    meeting: bool = False,
    fit: Mapping[str, Any] | None = None,
) -> go.Figure:
    """Lake TP and load against year, for the same history (and the observed record of a fitted lake)."""
    lab = _labels(meeting)
    sty = _style(meeting)
    fig = make_subplots(rows=2, cols=1, shared_xaxes=True, row_heights=[0.62, 0.38], vertical_spacing=0.06)
    hxy = history_xy(history, profile)
    fig.add_trace(
        go.Scatter(
            x=hxy["year"],
            y=hxy["tp"],
            mode="lines+markers",
            name=lab["tp"],
            line={"color": HISTORY, "width": sty["line"] - 1},
            marker={"size": sty["marker"] // 3},
            hovertemplate="year %{x}: %{y:.1f} µg/L<extra></extra>",
        ),
        row=1,
        col=1,
    )
    fig.add_trace(
        go.Scatter(
            x=hxy["year"],
            y=hxy["load"],
            mode="lines",
            line={"shape": "hv", "color": TODAY, "width": sty["line"] - 1},
            name=lab["load"],
            hovertemplate="year %{x}: %{y:.0f} kg/yr<extra></extra>",
        ),
        row=2,
        col=1,
    )
    obs = (fit or {}).get("observed") or {"year": [], "load": [], "tp": []}
    grey = {"size": sty["marker"] // 2, "color": OBSERVED, "symbol": "square"}
    fig.add_trace(go.Scatter(x=obs["year"], y=obs["tp"], mode="markers", name="observed TP", marker=grey), row=1, col=1)
    fig.add_trace(
        go.Scatter(x=obs["year"], y=obs["load"], mode="markers", name="observed load", marker=grey), row=2, col=1
    )
    fig.update_layout(
        template="plotly_white",
        font={"size": sty["font"] - 1},
        margin={"l": 90 if meeting else 70, "r": 20, "t": 20, "b": 50},
        height=height("time", meeting),
        showlegend=False,
        uirevision="time",
    )
    fig.update_yaxes(title_text=lab["tp"], row=1, col=1, rangemode="tozero")
    fig.update_yaxes(title_text=lab["load"], row=2, col=1, rangemode="tozero")
    fig.update_xaxes(title_text=lab["year"], row=2, col=1)
    return fig


def history_patches(history: Mapping[str, Any], lake: Mapping[str, Any]) -> tuple[Patch, Patch]:
    """Patches that redraw only the history layers of both figures.

    The equilibrium figure is patched in the same response as the load
    change; the time panel in the chained readout callback, so the main
    figure redraws first.
    """
    _, profile = lake_from_store(lake)
    hxy = history_xy(history, profile)
    eq = Patch()
    eq["data"][EQ_HISTORY]["x"] = hxy["load"]
    eq["data"][EQ_HISTORY]["y"] = hxy["tp"]
    eq["data"][EQ_HISTORY]["customdata"] = hxy["year"]
    eq["data"][EQ_CURRENT]["x"] = hxy["load"][-1:]
    eq["data"][EQ_CURRENT]["y"] = hxy["tp"][-1:]
    tf = Patch()
    tf["data"][TIME_TP]["x"] = hxy["year"]
    tf["data"][TIME_TP]["y"] = hxy["tp"]
    tf["data"][TIME_LOAD]["x"] = hxy["year"]
    tf["data"][TIME_LOAD]["y"] = hxy["load"]
    return eq, tf
