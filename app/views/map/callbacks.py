"""Callbacks of the regime map view."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from dash import Dash, Input, Output, State, no_update
from turnback.model.regime_map import RegimeMap, regime_map

from ... import ids
from ...stores import fit_of, history_of, lake_from_store
from ...theme import is_meeting
from .figures import regime_map_figure

AXES = ("loss_rate", "recycling_max")


def cloud_note(rmap: RegimeMap, samples: np.ndarray, load: float) -> tuple[tuple[list[float], list[float]], str]:
    """The bootstrap lakes that share this lake's exponent, placed on the map, and a sentence about them."""
    x, y, same_q = rmap.place(samples, load)
    shown = int(np.count_nonzero(same_q))
    if shown < len(samples):
        note = (
            f" The cloud shows {shown} of {len(samples)} bootstrap lakes that share this lake's recycling exponent "
            "exactly; the others have a different q and are counted in the regime probabilities instead."
        )
    else:
        note = f" The cloud shows {shown} bootstrap lakes from the fit."
    return (x[same_q].tolist(), y[same_q].tolist()), note


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
    rmap = regime_map(params, axis=axis if axis in AXES else "loss_rate")  # type: ignore[arg-type]
    cloud = None
    note = f"This lake: {rmap.axis.replace('_', ' ')} {rmap.lake_parameter:.4g} at a load of {load:,.0f} kg/yr."
    own = fit_of(lake, fit)
    if own and own.get("cloud"):
        cloud, more = cloud_note(rmap, np.asarray(own["cloud"], dtype=float), load)
        note += more
    return regime_map_figure(rmap, load_now=load, cloud=cloud, meeting=is_meeting(meeting_value)), note


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
