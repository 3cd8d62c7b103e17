r"""Builders of the region view: screened lakes in, the regime plane (``go.Figure``) and the table's rows out.

The regime plane is the dimensionless plane of Carpenter, Ludwig & Brock
(1999): load :math:`a = L/r` across, loss :math:`b = s m / r` up.  For one
recycling exponent :math:`q` every lake of that :math:`q` lies in the same
picture whatever its size: reversible above the cusp :math:`b_c(q)`,
irreversible below :math:`b_{irr}(q)`, hysteretic between, with two stable
states between the fold curves.  The regions are drawn by the regime map of
:mod:`turnback.model.regime_map` on the unit lake ``r = m = 1`` (where its
loss-rate axis is :math:`b` and its load axis is :math:`a`), with the same
drawing as the regime map view.  Lakes of another :math:`q` sit near, not
exactly on, their own lines, so they are drawn hollow; every lake's colour
is its own regime from the screen.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import math
from collections import Counter
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import plotly.graph_objects as go
from turnback.model.params import LakeParameters
from turnback.model.regime_map import RegimeMap, regime_map

from ...theme import REGIME_COLOUR, REGIME_ROW, sizes
from ...vocabulary import REGIME_NAMES, REGION_COLUMNS, REGION_SOURCE, REGION_STATE, region_word, term
from ..map.figures import add_regime_plane, plane_x_range

#: the exponents offered for drawing the regions are rounded to this step
Q_STEP = 0.5
#: a lake whose exponent is within this of the drawn one is drawn filled
Q_CLOSE = 0.25
#: most exponents offered (the most common ones)
MAX_CHOICES = 6
#: the load axis shows this share of the lakes at least (and the fold curves); the rest lie beyond its right edge
X_SHARE = 0.9
_REGIMES = ("reversible", "hysteretic", "irreversible")


def plane_point(row: Mapping[str, Any]) -> tuple[float, float, float]:
    """``(a, b, q)`` of a screened lake: ``a = L/r``, ``b = s m/r`` [–] from its given or fitted parameters."""
    p = row["params"]
    r = float(p["recycling_max"])
    return (
        float(row["load_kg_yr"]) / r,
        float(p["loss_rate"]) * float(p["recycling_half"]) / r,
        float(p["recycling_exponent"]),
    )


def exponent_choices(rows: Sequence[Mapping[str, Any]]) -> list[tuple[float, int]]:
    """The lakes' exponents rounded to :data:`Q_STEP`, with how many lakes each, most common first (at most
    :data:`MAX_CHOICES`)."""
    counts = Counter(round(plane_point(r)[2] / Q_STEP) * Q_STEP for r in rows)
    return sorted(counts.items(), key=lambda kv: (-kv[1], kv[0]))[:MAX_CHOICES]


def unit_lake_map(q: float, b_range: tuple[float, float]) -> RegimeMap:
    """The regime map of the unit lake ``r = m = 1`` with exponent ``q``: parameter = ``b``, load = ``a``."""
    lo, hi = b_range
    unit = LakeParameters(loss_rate=math.sqrt(lo * hi), recycling_max=1.0, recycling_half=1.0, recycling_exponent=q)
    return regime_map(unit, axis="loss_rate", parameter_range=b_range)


def _b_range(bs: Sequence[float], rmap_q: float) -> tuple[float, float]:
    from turnback.model.equilibrium import cusp_b, irreversible_b

    edges = [cusp_b(rmap_q), irreversible_b(rmap_q)] if rmap_q > 1.0 else []
    vals = [v for v in [*bs, *edges] if math.isfinite(v) and v > 0]
    lo, hi = (min(vals), max(vals)) if vals else (0.1, 2.0)
    return 0.8 * lo, 1.2 * hi


def plane_frame(
    rows: Sequence[Mapping[str, Any]], q: float
) -> tuple[RegimeMap, tuple[float, float], list[tuple[float, float, float]], int]:
    """The plane's regime map, its load range, every lake's ``(a, b, q)`` and how many lakes lie beyond the range.

    The loss axis (logarithmic) covers every lake and both regime edges;
    the load axis covers the fold curves and at least :data:`X_SHARE` of
    the lakes, so a few far-out fitted lakes do not squeeze the rest.
    """
    pts = [plane_point(r) for r in rows]
    rmap = unit_lake_map(q, _b_range([b for _, b, _ in pts], q))
    a_all = np.array([a for a, _, _ in pts], dtype=float)
    cap = float(np.quantile(a_all, X_SHARE)) if a_all.size else 0.0
    folds_hi = float(np.nanmax(np.concatenate([rmap.tipping.load, [0.0]])))
    x_lo, x_hi = plane_x_range(rmap, [a for a in a_all if a <= max(cap, folds_hi)])
    return rmap, (x_lo, x_hi), pts, int(np.count_nonzero(a_all > x_hi))


def plane_figure(rows: Sequence[Mapping[str, Any]], q: float | None, *, meeting: bool = False) -> go.Figure:
    """The screened lakes on the regime plane, with the regions of exponent ``q`` (default: the most common).

    Each lake is a marker coloured by its own regime (circle: given
    parameters; diamond: fitted), hollow when its exponent differs from
    ``q`` by more than :data:`Q_CLOSE`.  The lake id rides in ``customdata``
    so a click on a marker opens that lake.
    """
    sty = sizes(meeting)
    fig = go.Figure()
    if not rows:
        fig.update_layout(template="plotly_white", autosize=True, margin={"l": 60, "r": 30, "t": 30, "b": 50})
        return fig
    if q is None or not math.isfinite(q):
        q = exponent_choices(rows)[0][0]
    rmap, x_range, pts, _ = plane_frame(rows, q)
    add_regime_plane(fig, rmap, x_range, meeting=meeting, dimensionless=True, log_y=True)
    for regime in _REGIMES:
        idx = [i for i, r in enumerate(rows) if r["regime"] == regime]
        if not idx:
            continue
        symbols = []
        for i in idx:
            shape = "diamond" if rows[i].get("fitted") else "circle"
            symbols.append(shape if abs(pts[i][2] - q) <= Q_CLOSE else f"{shape}-open")
        fig.add_trace(
            go.Scatter(
                x=[pts[i][0] for i in idx],
                y=[pts[i][1] for i in idx],
                mode="markers",
                name=REGIME_NAMES[regime][1 if meeting else 0],
                marker={
                    "size": sty.marker,
                    "color": REGIME_COLOUR[regime],
                    "symbol": symbols,
                    "line": {"color": REGIME_COLOUR[regime], "width": 2},
                },
                customdata=[[rows[i]["lake_id"], rows[i].get("name") or "", pts[i][2]] for i in idx],
                hovertemplate="%{customdata[0]} %{customdata[1]}<br>"
                "a = %{x:.3f}, b = %{y:.3f}, q = %{customdata[2]:.2f}<extra></extra>"
                if not meeting
                else "%{customdata[0]} %{customdata[1]}<extra></extra>",
            )
        )
    x_lo, x_hi = x_range
    lo_b, hi_b = rmap.parameter_range
    fig.update_layout(
        template="plotly_white",
        font={"size": sty.text},
        autosize=True,
        margin={"l": 80, "r": 130, "t": 70, "b": 60},
        xaxis={"title": term("plane_x", meeting), "range": [x_lo, x_hi]},
        yaxis={
            "title": term("plane_y", meeting),
            "type": "log",
            "range": [math.log10(lo_b), math.log10(hi_b)],
            "tickvals": log_ticks(lo_b, hi_b),
            "tickformat": "~g",
        },
        legend={"orientation": "h", "yref": "container", "yanchor": "top", "y": 1.0, "x": 0.0},
        clickmode="event",
    )
    return fig


def log_ticks(lo: float, hi: float) -> list[float]:
    """Ticks of a logarithmic axis from ``lo`` to ``hi``: 1, 2, 5 of each decade, or every digit when that is
    fewer than three ticks."""
    for digits in ((1, 2, 5), tuple(range(1, 10))):
        ticks = [d * 10.0**k for k in range(-6, 7) for d in digits if lo <= d * 10.0**k <= hi]
        if len(ticks) >= 3:
            return ticks
    return ticks


def plane_note(rows: Sequence[Mapping[str, Any]], q: float, meeting: bool = False) -> str:
    """What the plane shows: the exponent its regions are drawn for, and how many lakes are hollow."""
    other = sum(abs(plane_point(r)[2] - q) > Q_CLOSE for r in rows)
    beyond = plane_frame(rows, q)[3] if rows else 0
    if meeting:
        text = "Each dot is a lake, coloured by its kind; click one to open it in 'The lake now'."
        if other:
            text += f" {other} hollow dots are lakes that react more or less sharply than the drawn lines assume."
        if beyond:
            text += f" {beyond} more lie off to the right: double-click the picture to see them all."
        return text
    text = (
        f"Regions drawn for recycling exponent q = {q:g}. Circles: given parameters; diamonds: fitted. "
        "Colour: each lake's own regime. Click a lake to open it in 'The lake now'."
    )
    if other:
        text += f" {other} hollow markers have q further than {Q_CLOSE:g} from {q:g}: placed approximately."
    if beyond:
        text += f" {beyond} lakes lie beyond the right edge: double-click the plane to autoscale."
    return text


# --------------------------------------------------------------------------
# the table
# --------------------------------------------------------------------------
#: the table's columns in each register (the CSV export has every column of ``turnback screen -o``)
TECHNICAL_COLUMNS = (
    "lake_id",
    "name",
    "regime",
    "state",
    "load_kg_yr",
    "tipping_load",
    "recovery_load",
    "margin_kg_yr",
    "p_irreversible",
    "p_hysteretic",
    "source",
    "n_warnings",
)
MEETING_COLUMNS = ("name", "regime", "state", "load_kg_yr", "tipping_load", "margin_kg_yr", "p_irreversible")
_FORMATS = {
    "load_kg_yr": ",.0f",
    "tipping_load": ",.0f",
    "recovery_load": ",.0f",
    "margin_kg_yr": "+,.0f",
    "p_irreversible": ".0%",
    "p_hysteretic": ".0%",
    "n_warnings": "d",
}
_WIDE = {"name": 2.0, "regime": 1.6}


def table_columns(meeting: bool = False) -> list[dict[str, Any]]:
    """Column definitions of the region table (dash-ag-grid), sortable, numbers right-aligned."""
    cols: list[dict[str, Any]] = []
    for key in MEETING_COLUMNS if meeting else TECHNICAL_COLUMNS:
        col: dict[str, Any] = {
            "field": key,
            "headerName": REGION_COLUMNS[key][1 if meeting else 0],
            "sortable": True,
            "flex": _WIDE.get(key, 1.0),
        }
        fmt = _FORMATS.get(key)
        if fmt is None:
            col["cellDataType"] = "text"
        else:
            blank = ("'–'" if meeting else "'not fitted'") if key.startswith("p_") else "'none'"
            blank = "''" if key == "n_warnings" else blank
            col |= {
                "cellDataType": "number",
                "type": "rightAligned",
                "valueFormatter": {"function": f"params.value == null ? {blank} : d3.format('{fmt}')(params.value)"},
            }
        cols.append(col)
    return cols


def row_style() -> dict[str, Any]:
    """Row colours by regime (``getRowStyle`` of the grid): the light tints of :data:`theme.REGIME_ROW`."""
    return {
        "styleConditions": [
            {"condition": f"params.data.regime_key === '{k}'", "style": {"backgroundColor": REGIME_ROW[k]}}
            for k in _REGIMES
        ]
    }


def table_rows(rows: Sequence[Mapping[str, Any]], meeting: bool = False) -> list[dict[str, Any]]:
    """The grid's rows, ranked as given, words in the chosen register (``regime_key`` keeps the colour)."""
    out = []
    for r in rows:
        out.append(
            {
                "lake_id": r["lake_id"],
                "name": r.get("name") or r["lake_id"],
                "regime_key": r["regime"],
                "regime": region_word(REGIME_NAMES, r["regime"], meeting),
                "state": region_word(REGION_STATE, r.get("state"), meeting),
                "load_kg_yr": r["load_kg_yr"],
                "tipping_load": r.get("tipping_load"),
                "recovery_load": r.get("recovery_load"),
                "margin_kg_yr": r.get("margin_kg_yr"),
                "p_irreversible": r.get("p_irreversible"),
                "p_hysteretic": r.get("p_hysteretic"),
                "source": region_word(REGION_SOURCE, bool(r.get("fitted")), meeting),
                "n_warnings": len(r.get("warnings") or []),
            }
        )
    return out


def regime_counts(rows: Sequence[Mapping[str, Any]]) -> dict[str, int]:
    """Screened lakes per regime (all three keys)."""
    c = Counter(r["regime"] for r in rows)
    return {k: int(c.get(k, 0)) for k in _REGIMES}
