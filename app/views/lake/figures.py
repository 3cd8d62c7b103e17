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
from turnback.model.two_pool_equilibrium import TwoPoolAnalysis

from ...stores import is_two_pool, lake_from_store
from ...theme import (
    BAND_RECOVERY,
    BAND_TIPPING,
    BISTABLE,
    CLEAR,
    CURRENT,
    FOLD,
    HISTORY,
    OBSERVED,
    SEDIMENT,
    SEPARATRIX,
    TODAY,
    TURBID,
    sizes,
)
from ...vocabulary import TROPHIC_SHORT, term

#: fixed trace order of the equilibrium figure (legend-only entries of the fit's bands follow these)
EQ_TRACES = ("lower", "middle", "upper", "folds", "observed", "history", "current")
EQ_HISTORY = EQ_TRACES.index("history")
EQ_CURRENT = EQ_TRACES.index("current")
EQ_OBSERVED = EQ_TRACES.index("observed")

#: fixed trace order of the time figure (the sediment trace is empty for a one-box lake)
TIME_TRACES = ("tp", "load", "observed_tp", "observed_load", "sediment")
TIME_TP = 0
TIME_LOAD = 1
TIME_SEDIMENT = 4


def _labels(meeting: bool) -> dict[str, str]:
    keys = ("lower", "upper", "single", "band", "history", "current", "today", "year", "observed")
    lab = {k: term(k, meeting) for k in keys}
    return lab | {
        "x": term("inflow_axis", meeting),
        "y": term("tp_axis", meeting),
        "middle": term("separatrix", meeting),
        "folds": f"{term('Tipping', meeting)} and {term('recovery', meeting)}",
        "tipping": term("tipping", meeting),
        "recovery": term("recovery", meeting),
        "tp": term("tp_short", meeting),
        "load": term("inflow_short", meeting),
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
    analysis: LakeAnalysis | TwoPoolAnalysis,
    profile: LakeProfile,
    history: Mapping[str, Any],
    *,
    present_load: float,
    load_max: float,
    meeting: bool = False,
    fit: Mapping[str, Any] | None = None,
) -> go.Figure:
    """Equilibrium curve (load against TP) with folds, bistable band, history and current state.

    A two-pool lake's curve is drawn against its water TP (the sediment P at
    each state is in the hover text of the time panel, not on this figure).

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
    ftext = [f"{lab['tipping'] if f.kind == 'tipping' else lab['recovery']} {f.load:,.0f}" for f in analysis.folds]
    fig.add_trace(
        go.Scatter(
            x=fx,
            y=fy,
            mode="markers+text",
            text=ftext,
            # away from the dashed line, which leaves the tipping fold up-left and reaches the recovery fold
            # from the lower right
            textposition=["bottom right", "top left"][: len(fx)],
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
            name=lab["observed"],
            marker={"size": sty["marker"] // 2 + 2, "color": OBSERVED, "symbol": "square"},
            hovertemplate="%{customdata}: %{x:.0f} kg/yr, %{y:.1f} µg/L<extra>observed</extra>",
            showlegend=bool(obs["load"]),
        )
    )
    if fit:
        _fold_bands(fig, fit, load_max, meeting)
    hxy = history_xy(history, profile)
    fig.add_trace(
        go.Scatter(
            x=hxy["load"],
            y=hxy["tp"],
            customdata=hxy["year"],
            mode="lines",  # one path however long the history: the redraw does not grow with markers
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
            # an open ring, so a fold diamond under it stays visible
            marker={
                "size": sty["marker"] * 1.7,
                "color": CURRENT,
                "symbol": "circle-open",
                "line": {"color": CURRENT, "width": 4},
            },
            hovertemplate="now: %{x:.0f} kg/yr, %{y:.1f} µg/L<extra></extra>",
        )
    )
    if len(analysis.folds) == 2:
        lo = max(0.0, analysis.folds[1].load)
        hi = analysis.folds[0].load
        fig.add_vrect(x0=lo, x1=hi, fillcolor=BISTABLE, line_width=0, layer="below")
    fig.add_vline(x=present_load, line={"color": TODAY, "width": 2, "dash": "dot"})
    y_top = float(profile.concentration(np.max(analysis.curve.p))) if len(analysis.curve) else 1.0
    y_top = max(y_top, max(hxy["tp"]) if hxy["tp"] else 0.0) * 1.05
    _trophic_bands(fig, y_top, sty["font"] - 4, meeting)
    # the shaded band and today's line are named in the legend (outside the plot), not on it
    if len(analysis.folds) == 2:
        _legend_only(fig, lab["band"], {"symbol": "square", "size": 14, "color": "rgba(232, 180, 60, 0.45)"})
    # today's line is named in the top margin, just above the plot
    fig.add_annotation(
        x=present_load,
        xref="x",
        y=1.0,
        yref="paper",
        yanchor="bottom",
        showarrow=False,
        text=lab["today"],
        font={"size": sty["font"] - 4, "color": TODAY},
    )
    if fit:
        _band_legend(fig, fit, meeting)
    fig.update_layout(
        template="plotly_white",
        font={"size": sty["font"]},
        margin={"l": 70, "r": 150 if meeting else 130, "t": 80 if meeting else 66, "b": 50},
        autosize=True,
        xaxis={"title": lab["x"], "range": [min(0.0, float(np.min(analysis.curve.load))), load_max], "zeroline": True},
        yaxis={"title": lab["y"], "range": [0.0, y_top], "rangemode": "tozero"},
        # above the plot area, outside it (plotly pushes the top margin to make room)
        legend={
            "orientation": "h",
            "yref": "container",
            "yanchor": "top",
            "y": 1.0,
            "x": 0.0,
            "font": {"size": sty["font"] - 5},
        },
        uirevision="equilibrium",
    )
    return fig


_BANDS = (("tipping", "Tipping", BAND_TIPPING), ("recovery", "Recovery", BAND_RECOVERY))


def _fold_bands(fig: go.Figure, fit: Mapping[str, Any], load_max: float, meeting: bool) -> None:
    """The fitted folds' bootstrap intervals as vertical bands (named in the legend, not on the plot)."""
    for key, _, colour in _BANDS:
        band = fit.get(key) or {}
        lo, hi = band.get("low"), band.get("high")
        if lo is None or hi is None:
            continue
        fig.add_vrect(x0=max(lo, -load_max), x1=min(hi, load_max), fillcolor=colour, line_width=0, layer="below")


def _legend_only(fig: go.Figure, name: str, marker: dict[str, Any] | None, line: dict[str, Any] | None = None) -> None:
    fig.add_trace(
        go.Scatter(
            x=[None],
            y=[None],
            mode="markers" if marker else "lines",
            marker=marker,
            line=line,
            name=name,
            hoverinfo="skip",
        )
    )


def _band_legend(fig: go.Figure, fit: Mapping[str, Any], meeting: bool) -> None:
    """Legend entries for the fold bands (after the fixed traces, so patches keep their indices)."""
    for key, name, colour in _BANDS:
        band = fit.get(key) or {}
        if band.get("low") is None or band.get("high") is None:
            continue
        known = band.get("constrained", True)
        what = ("likely range" if meeting else "90% band") if known else "not known from this record"
        fig.add_trace(
            go.Scatter(
                x=[None],
                y=[None],
                mode="markers",
                marker={"symbol": "square", "size": 14, "color": colour.replace("0.13", "0.5").replace("0.15", "0.5")},
                name=f"{term(name, meeting)}: {what}",
                hoverinfo="skip",
            )
        )


#: OECD (1982) fixed TP boundaries [µg L⁻¹] between the classes of model.clarity.OECD_CLASSES
OECD_TP_EDGES = OECD_1982.tp_ug_l


def _trophic_bands(fig: go.Figure, y_top: float, font: int, meeting: bool) -> None:
    """Label the TP axis, in the right margin, with OECD (1982) classes and Carlson (1977) expected Secchi depths."""
    edges = [0.0, *OECD_TP_EDGES, np.inf]
    for i, name in enumerate(OECD_CLASSES):
        lo, hi = edges[i], min(edges[i + 1], y_top)
        if lo >= y_top or hi - lo < 0.06 * y_top:
            continue
        if lo > 0:
            fig.add_hline(y=lo, line={"color": "rgba(90,90,90,0.35)", "width": 1, "dash": "dot"}, layer="below")
        sd_hi = float(expected_secchi(max(lo, 0.5)))
        sd_lo = float(expected_secchi(hi))
        depth = "see" if meeting else "Secchi"
        secchi = f"{depth} {sd_lo:.1f}–{sd_hi:.1f} m" if lo > 0 else f"{depth} > {sd_lo:.1f} m"
        label = TROPHIC_SHORT[name] if meeting else name
        if hi - lo >= 0.25 * y_top:  # room for a second line
            label = f"{label}<br>{secchi}"
        fig.add_annotation(
            x=1.01,
            xref="paper",
            xanchor="left",
            y=(lo + hi) / 2,
            yref="y",
            showarrow=False,
            align="left",
            text=label,
            font={"size": font, "color": "#444"},
        )


def time_figure(
    history: Mapping[str, Any],
    profile: LakeProfile,
    *,
    meeting: bool = False,
    fit: Mapping[str, Any] | None = None,
) -> go.Figure:
    """Lake TP and load against year, for the same history (and the observed record of a fitted lake).

    A two-pool lake's history (one with sediment P ``m``) draws its sediment
    P [kg] on a second axis (right) of the TP panel, so the mud draining
    after a cut shows beside the water; every series is named above its
    panel, outside the plot area (left: TP, right: sediment P).
    """
    lab = _labels(meeting)
    sty = _style(meeting)
    two = "m" in history
    load_row = 2
    fig = make_subplots(
        rows=2,
        cols=1,
        shared_xaxes=True,
        row_heights=[0.6, 0.4],
        vertical_spacing=0.16,
        specs=[[{"secondary_y": two}], [{}]],
    )
    hxy = history_xy(history, profile)
    fig.add_trace(
        go.Scatter(
            x=hxy["year"],
            y=hxy["tp"],
            mode="lines+markers",  # markers so a one-year history shows; at most 60 drawn, however long it is
            name=lab["tp"],
            line={"color": HISTORY, "width": sty["line"] - 1},
            marker={"size": sty["marker"] // 3, "maxdisplayed": 60},
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
        row=load_row,
        col=1,
    )
    obs = (fit or {}).get("observed") or {"year": [], "load": [], "tp": []}
    grey = {"size": sty["marker"] // 2, "color": OBSERVED, "symbol": "square"}
    fig.add_trace(go.Scatter(x=obs["year"], y=obs["tp"], mode="markers", name="observed TP", marker=grey), row=1, col=1)
    fig.add_trace(
        go.Scatter(x=obs["year"], y=obs["load"], mode="markers", name="observed load", marker=grey),
        row=load_row,
        col=1,
    )
    fig.add_trace(
        go.Scatter(
            x=hxy["year"] if two else [],
            y=list(history["m"]) if two else [],
            mode="lines+markers",
            name=term("sediment_short", meeting),
            line={"color": SEDIMENT, "width": sty["line"] - 1, "dash": "dash"},
            marker={"size": sty["marker"] // 3, "maxdisplayed": 60, "symbol": "square"},
            hovertemplate="year %{x}: %{y:,.0f} kg<extra></extra>",
        ),
        row=1,
        col=1,
        **({"secondary_y": True} if two else {}),
    )
    fig.update_layout(
        template="plotly_white",
        font={"size": sty["font"] - 2},
        margin={"l": 60, "r": 70 if two else 20, "t": 24, "b": 45},
        autosize=True,
        showlegend=False,
        uirevision="time",
    )
    # each series is named above its panel's corner (two stacked axis titles collide on a short panel)
    fig.update_yaxes(rangemode="tozero", nticks=3)
    if two:
        fig.update_yaxes(showgrid=False, tickfont={"color": SEDIMENT}, row=1, col=1, secondary_y=True)
    load_axis = "y3" if two else "y2"
    names = [(0.0, "left", "y", lab["tp"], "#444"), (0.0, "left", load_axis, lab["load"], "#444")]
    if two:
        names.append((1.0, "right", "y", "- - " + term("sediment_short", meeting), SEDIMENT))
    for x, anchor, axis, text, colour in names:
        fig.add_annotation(
            x=x,
            xref="paper",
            xanchor=anchor,
            y=1.0,
            yref=f"{axis} domain",
            yanchor="bottom",
            text=text,
            showarrow=False,
            font={"size": sty["font"] - 4, "color": colour},
        )
    fig.update_xaxes(title_text=lab["year"], row=load_row, col=1)
    years = list(hxy["year"]) + list(obs["year"])
    first, last = min(years), max(years)
    if last - first < 20:  # a short history: a readable stretch of years, not one point on an axis from -1 to 1
        fig.update_xaxes(range=[first - 0.5, first + 20.5], autorange=False)
    return fig


def lag_patch(change: Mapping[str, Any] | None, meeting: bool) -> Patch:
    """A patch that marks, across the time panel, the year clear water came (or comes) after the last change.

    ``change`` is the history tail's ``{"year", "lag"}``; without a lag
    (no change, no clear water within reach) the mark is removed.
    """
    tf = Patch()
    if not change or change.get("lag") in (None, 0):
        tf["layout"]["shapes"] = []
        return tf
    when = int(change["year"]) + int(change["lag"])
    tf["layout"]["shapes"] = [
        {
            "type": "line",
            "xref": "x",
            "x0": when,
            "x1": when,
            "yref": "paper",
            "y0": 0.0,
            "y1": 1.0,
            "line": {"color": CLEAR, "width": 2, "dash": "dot"},
            "label": {
                "text": f"{term('clear_after', meeting)} {int(change['lag'])} yr",
                "textposition": "end",
                "xanchor": "left",
                "yanchor": "top",
                "textangle": 0,
                "font": {"color": CLEAR, "size": sizes(meeting).font - 4},
            },
        }
    ]
    return tf


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
    if "m" in history and is_two_pool(lake):
        tf["data"][TIME_SEDIMENT]["x"] = hxy["year"]
        tf["data"][TIME_SEDIMENT]["y"] = list(history["m"])
    if len(hxy["year"]) > 1 and hxy["year"][-1] - hxy["year"][0] >= 20:
        _loose_years(tf, lake)
    return eq, tf


def _loose_years(tf: Patch, lake: Mapping[str, Any]) -> None:
    for axis in ("xaxis", "xaxis2"):
        tf["layout"][axis]["autorange"] = True


def append_patches(added: Mapping[str, Any], lake: Mapping[str, Any], span: tuple[int, int]) -> tuple[Patch, Patch]:
    """Patches that append the new points to the history layers of both figures (size independent of the history).

    ``span`` is (first year of the history, last year after the step): the
    time axis is let loose once the history covers 20 years.
    """
    _, profile = lake_from_store(lake)
    hxy = history_xy({"p": added["p"], "load": added["load"], "year": added["year"]}, profile)
    eq = Patch()
    eq["data"][EQ_HISTORY]["x"].extend(hxy["load"])
    eq["data"][EQ_HISTORY]["y"].extend(hxy["tp"])
    eq["data"][EQ_HISTORY]["customdata"].extend(hxy["year"])
    eq["data"][EQ_CURRENT]["x"] = hxy["load"][-1:]
    eq["data"][EQ_CURRENT]["y"] = hxy["tp"][-1:]
    tf = Patch()
    tf["data"][TIME_TP]["x"].extend(hxy["year"])
    tf["data"][TIME_TP]["y"].extend(hxy["tp"])
    tf["data"][TIME_LOAD]["x"].extend(hxy["year"])
    tf["data"][TIME_LOAD]["y"].extend(hxy["load"])
    if "m" in added and is_two_pool(lake):
        tf["data"][TIME_SEDIMENT]["x"].extend(hxy["year"])
        tf["data"][TIME_SEDIMENT]["y"].extend(list(added["m"]))
    if span[1] - span[0] >= 20:
        _loose_years(tf, lake)
    return eq, tf
