"""Figure builder of the regime map view: a :class:`model.regime_map.RegimeMap` in, ``go.Figure`` out."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import plotly.graph_objects as go
from numpy.typing import NDArray
from turnback.model.regime_map import RegimeMap
from turnback.model.two_pool_regime_map import TwoPoolRegimeMap

from ...theme import BISTABLE, CLEAR, CURRENT, FOLD, REGIME_FILL, TURBID, load_axis_title, sizes
from ...vocabulary import REGIME_SHORT, term

#: the map's axis choice -> the two-pool parameter it stands for (P lost for good; P the mud releases)
TWO_POOL_AXIS = {"loss_rate": "burial", "recycling_max": "recycling_rate"}


@dataclass(frozen=True)
class _Cusp:
    load: float
    parameter: float


@dataclass(frozen=True)
class _Curve:
    load: NDArray[np.float64]
    parameter: NDArray[np.float64]


@dataclass(frozen=True)
class TwoPoolMapView:
    """A :class:`TwoPoolRegimeMap` in the shape :func:`regime_map_figure` draws (bands as (regime, lo, hi))."""

    axis: str
    parameter_range: tuple[float, float]
    tipping: _Curve
    recovery: _Curve
    fold_load: NDArray[np.float64]
    fold_parameter: NDArray[np.float64]
    cusp: _Cusp | None
    bands: tuple[tuple[str, float, float], ...]
    lake_parameter: float


def two_pool_view(tmap: TwoPoolRegimeMap) -> TwoPoolMapView:
    """The two-pool map's fold curves, wedge, cusp and bands for :func:`regime_map_figure`."""
    tip, rec = tmap.tipping, tmap.recovery
    cusp = _Cusp(load=tmap.cusps[0][1], parameter=tmap.cusps[0][0]) if tmap.cusps else None
    return TwoPoolMapView(
        axis=tmap.axis,
        parameter_range=tmap.parameter_range,
        tipping=_Curve(tip.load, tip.parameter),
        recovery=_Curve(rec.load, rec.parameter),
        fold_load=np.concatenate([tip.load, rec.load[::-1]]),
        fold_parameter=np.concatenate([tip.parameter, rec.parameter[::-1]]),
        cusp=cusp,
        bands=tuple((reg, lo, hi) for lo, hi, reg in tmap.bands),
        lake_parameter=float(getattr(tmap.params, tmap.axis)),
    )


_AXIS_TERMS = {"loss_rate": "loss_rate_axis", "recycling_max": "recycling_axis"}


def plane_x_range(rmap: RegimeMap | Any, loads: Sequence[float]) -> tuple[float, float]:
    """The load axis of a regime plane: the fold curves, zero and ``loads``, with a margin (negative part capped)."""
    every = np.concatenate([rmap.tipping.load, rmap.recovery.load, np.asarray(loads, dtype=float), [0.0]])
    x_hi = max(float(np.nanmax(every)), 1e-12) * 1.15
    x_lo = max(min(0.0, float(np.nanmin(every))) * 1.05, -0.6 * x_hi)
    return x_lo, x_hi


def add_regime_plane(
    fig: go.Figure,
    rmap: RegimeMap | Any,
    x_range: tuple[float, float],
    *,
    meeting: bool,
    dimensionless: bool = False,
    log_y: bool = False,
) -> None:
    """Draw a regime plane on ``fig``: regime bands named in the right margin, the part below zero load, the
    bistable wedge, both fold curves and the cusp.  ``dimensionless``: the axes are ``L/r`` and ``b = s m/r``
    (the hover text says so instead of kg/yr); ``log_y``: the parameter axis is logarithmic."""
    sty = sizes(meeting)
    lo_p, hi_p = rmap.parameter_range
    x_lo = x_range[0]
    for reg, b_lo, b_hi in rmap.bands:
        fig.add_hrect(y0=b_lo, y1=b_hi, fillcolor=REGIME_FILL[reg], line_width=0, layer="below")
        if max(b_lo, lo_p) >= min(b_hi, hi_p):
            continue
        # named in the right margin, clear of the fold lines
        fig.add_annotation(
            x=1.01,
            xref="paper",
            xanchor="left",
            y=(
                0.5 * (math.log10(max(b_lo, lo_p)) + math.log10(min(b_hi, hi_p)))
                if log_y
                else 0.5 * (max(b_lo, lo_p) + min(b_hi, hi_p))
            ),
            yref="y",
            showarrow=False,
            align="left",
            text=REGIME_SHORT[reg][1 if meeting else 0],
            font={"size": sty.font - 3, "color": "#444"},
        )
    if x_lo < 0:
        fig.add_vrect(
            x0=x_lo,
            x1=0.0,
            fillcolor="rgba(120,120,120,0.12)",
            line_width=0,
            layer="below",
            annotation_text=term("below_zero", meeting),
            annotation_position="bottom left",
            annotation_font={"size": sty.font - 4, "color": "#555"},
        )
    fig.add_trace(
        go.Scatter(
            x=rmap.fold_load,
            y=rmap.fold_parameter,
            mode="lines",
            fill="toself",
            fillcolor=BISTABLE,
            line={"color": "rgba(0,0,0,0)"},
            hoverinfo="skip",
            name=term("band", meeting),
            showlegend=True,
        )
    )
    at = "L/r %{x:.3f}, b %{y:.3f}" if dimensionless else "%{x:.0f} kg/yr at %{y:.4g}"
    for curve, key, colour in ((rmap.tipping, "tipping_fold", CLEAR), (rmap.recovery, "recovery_fold", TURBID)):
        fig.add_trace(
            go.Scatter(
                x=curve.load,
                y=curve.parameter,
                mode="lines",
                name=term(key, meeting),
                line={"color": colour, "width": sty.line},
                hovertemplate=f"{key.replace('_', ' ')}: {at}<extra></extra>",
            )
        )
    if rmap.cusp is not None and lo_p <= rmap.cusp.parameter <= hi_p:
        fig.add_trace(
            go.Scatter(
                x=[rmap.cusp.load],
                y=[rmap.cusp.parameter],
                mode="markers",
                name=term("cusp", meeting),
                marker={"symbol": "diamond", "size": sty.marker, "color": FOLD},
            )
        )


def regime_map_figure(
    rmap: RegimeMap | Any,
    *,
    load_now: float,
    cloud: tuple[Sequence[float], Sequence[float]] | None = None,
    meeting: bool = False,
) -> go.Figure:
    """The (load, parameter) plane: regime bands, fold curves, the bistable wedge, the lake and its fitted cloud."""
    sz = sizes(meeting)
    sty = {"font": sz.font, "line": sz.line, "marker": sz.marker}
    axis_title = term(_AXIS_TERMS.get(rmap.axis, f"{rmap.axis}_axis"), meeting)
    fig = go.Figure()
    lo_p, hi_p = rmap.parameter_range
    x_lo, x_hi = plane_x_range(rmap, [load_now])
    add_regime_plane(fig, rmap, (x_lo, x_hi), meeting=meeting)
    if cloud is not None and len(cloud[0]):
        fig.add_trace(
            go.Scatter(
                x=list(cloud[0]),
                y=list(cloud[1]),
                mode="markers",
                name=term("cloud", meeting),
                marker={"size": 5, "color": "rgba(91, 74, 138, 0.4)"},
                hoverinfo="skip",
            )
        )
    fig.add_trace(
        go.Scatter(
            x=[load_now],
            y=[rmap.lake_parameter],
            mode="markers",
            name=term("lake_marker", meeting),
            marker={"size": sty["marker"] * 1.4, "color": CURRENT, "line": {"color": "white", "width": 2}},
            hovertemplate="this lake: %{x:.0f} kg/yr at %{y:.4g}<extra></extra>",
        )
    )
    fig.update_layout(
        template="plotly_white",
        font={"size": sty["font"]},
        autosize=True,
        margin={"l": 90, "r": 140, "t": 70, "b": 60},
        xaxis={"title": load_axis_title(meeting), "range": [x_lo, x_hi]},
        yaxis={"title": axis_title, "range": [lo_p, hi_p]},
        # in a band of its own above the plot, clear of the axis titles
        legend={"orientation": "h", "yref": "container", "yanchor": "top", "y": 1.0, "x": 0.0},
    )
    return fig
