"""Callbacks of the regime map view."""

from __future__ import annotations

from collections.abc import Mapping
from functools import lru_cache
from typing import Any

import numpy as np
from dash import Dash, Input, Output, State, no_update
from turnback.model.regime_map import RegimeMap, regime_map
from turnback.model.two_pool import TwoPoolParameters
from turnback.model.two_pool_regime_map import TwoPoolRegimeMap, two_pool_regime_map

from ... import ids
from ...stores import fit_of, history_of, lake_from_store
from ...theme import is_meeting
from .figures import TWO_POOL_AXIS, regime_map_figure, two_pool_view

AXES = ("loss_rate", "recycling_max")


def cloud_note(
    rmap: RegimeMap, samples: np.ndarray, load: float, meeting: bool = False
) -> tuple[tuple[list[float], list[float]], str]:
    """Every bootstrap lake placed on the map's plane, and a sentence about them.

    Each lake goes to the point of this plane with its own dimensionless load
    ``a = L/r`` and ratio ``b = s m/r`` (:meth:`RegimeMap.place`).  For a lake
    with this lake's exponent q that point has exactly its regime; for another
    q it sits near, not exactly on, its own fold lines.
    """
    x, y, same_q = rmap.place(samples, load)
    ok = np.isfinite(x) & np.isfinite(y)
    n_other = int(np.count_nonzero(ok & ~same_q))
    shown = int(np.count_nonzero(ok))
    if meeting:
        note = f" The small dots are {shown} other lakes that fit the record about as well."
    else:
        note = f" The cloud shows {shown} bootstrap lakes from the fit, each placed by its own a = L/r and b = s m/r."
        if n_other:
            note += (
                f" {n_other} of them have another recycling exponent q, so their place relative to these fold "
                "lines is approximate; their exact regimes are in the fit's regime probabilities."
            )
    return (x[ok].tolist(), y[ok].tolist()), note


def on_map(
    tab: str | None,
    axis: str,
    lake: Mapping[str, Any],
    fit: Mapping[str, Any] | None,
    meeting_value: list[str] | None,
    history: Mapping[str, Any] | None,
) -> tuple[Any, Any]:
    """Regime map of the current lake, with the fitted cloud when the fit belongs to it."""
    if tab != ids.TAB_MAP:
        return no_update, no_update
    params, profile = lake_from_store(lake)
    h = history_of(lake, history)
    load = h["load"][-1] if h else profile.load_kg_per_yr
    meeting = is_meeting(meeting_value)
    if isinstance(params, TwoPoolParameters):
        tmap = _two_pool_map(params, TWO_POOL_AXIS.get(axis, "burial"))
        view = two_pool_view(tmap)
        if meeting:
            note = f"This lake, with its mud, at its inflow now, {load:,.0f} kg/yr."
        else:
            note = (
                f"This two-pool lake: {tmap.axis.replace('_', ' ')} {view.lake_parameter:.4g} yr⁻¹ at a load of "
                f"{load:,.0f} kg/yr (fold curves by continuation). {tmap.message}"
            )
        return regime_map_figure(view, load_now=load, meeting=meeting), note
    rmap = regime_map(params, axis=axis if axis in AXES else "loss_rate")  # type: ignore[arg-type]
    cloud = None
    if meeting:
        note = f"This lake at its inflow now, {load:,.0f} kg/yr."
    else:
        note = f"This lake: {rmap.axis.replace('_', ' ')} {rmap.lake_parameter:.4g} at a load of {load:,.0f} kg/yr."
    own = fit_of(lake, fit)
    if own and own.get("cloud"):
        cloud, more = cloud_note(rmap, np.asarray(own["cloud"], dtype=float), load, meeting)
        note += more
    return regime_map_figure(rmap, load_now=load, cloud=cloud, meeting=meeting), note


@lru_cache(maxsize=16)
def _two_pool_map(params: TwoPoolParameters, axis: str) -> TwoPoolRegimeMap:
    """The two-pool regime map (continuation, about a second), once per lake and axis."""
    return two_pool_regime_map(params, axis=axis)  # type: ignore[arg-type]


def register(app: Dash) -> None:
    app.callback(
        output=[Output(ids.MAP_GRAPH, "figure"), Output(ids.MAP_NOTE, "children")],
        inputs={
            "tab": Input(ids.VIEW_TABS, "value"),
            "axis": Input(ids.MAP_AXIS, "value"),
            "lake": Input(ids.LAKE_STORE, "data"),
            "fit": Input(ids.FIT_STORE, "data"),
            "meeting_value": Input(ids.MEETING_TOGGLE, "value"),
        },
        state={"history": State(ids.HISTORY_STORE, "data")},
    )(on_map)
