"""Callbacks of the regime map view and the view tabs."""

from __future__ import annotations

from typing import Any

import numpy as np
from dash import Dash, Input, Output, State, no_update
from turnback.model.regime_map import regime_map

from . import ids
from .figures import regime_map_figure
from .session import is_meeting, lake_from_store, lake_key


def on_view(tab: str | None) -> list[dict[str, str]]:
    """Show the chosen view, hide the others (all stay mounted, so their state survives)."""
    chosen = tab if tab in ids.VIEWS else "lake"
    return [{} if name == chosen else {"display": "none"} for name in ids.VIEWS]


def on_map(
    tab: str | None,
    axis: str,
    lake: dict[str, Any],
    fit: dict[str, Any] | None,
    meeting_value: list[str] | None,
    history: dict[str, Any] | None,
) -> tuple[Any, Any]:
    """Regime map of the current lake, with the fitted cloud when the fit belongs to it."""
    if tab != "map":
        return no_update, no_update
    params, profile = lake_from_store(lake)
    load = history["load"][-1] if history and history.get("lake_key") == lake_key(lake) else profile.load_kg_per_yr
    rmap = regime_map(params, axis=axis if axis in ("loss_rate", "recycling_max") else "loss_rate")  # type: ignore[arg-type]
    cloud = None
    note = f"This lake: {rmap.axis.replace('_', ' ')} {rmap.lake_parameter:.4g} at a load of {load:,.0f} kg/yr."
    if fit and fit.get("lake_key") == lake_key(lake) and fit.get("cloud"):
        samples = np.asarray(fit["cloud"], dtype=float)
        x, y, same_q = rmap.place(samples, load)
        cloud = (x[same_q].tolist(), y[same_q].tolist())
        shown = int(np.count_nonzero(same_q))
        note += (
            f" The cloud shows {shown} of {len(samples)} bootstrap lakes that share this lake's recycling exponent "
            "exactly; the others have a different q and are counted in the regime probabilities instead."
            if shown < len(samples)
            else f" The cloud shows {shown} bootstrap lakes from the fit."
        )
    meeting = is_meeting(meeting_value)
    return regime_map_figure(rmap, load_now=load, cloud=cloud, meeting=meeting), note


def register(app: Dash) -> None:
    app.callback(
        [Output(v, "style") for v in ids.VIEWS.values()],
        Input(ids.VIEW_TABS, "value"),
    )(on_view)
    app.callback(
        Output(ids.MAP_GRAPH, "figure"),
        Output(ids.MAP_NOTE, "children"),
        Input(ids.VIEW_TABS, "value"),
        Input(ids.MAP_AXIS, "value"),
        Input(ids.LAKE_STORE, "data"),
        Input(ids.FIT_STORE, "data"),
        Input(ids.MEETING_TOGGLE, "value"),
        State(ids.HISTORY_STORE, "data"),
    )(on_map)
