"""Dashboard callbacks: parse, call the model, build, return."""

from __future__ import annotations

import math
from typing import Any

from dash import Dash, Input, Output, Patch, State, ctx, no_update
from turnback.model.equilibrium import analyze

from . import ids
from .figures import EQ_CURRENT, EQ_HISTORY, TIME_LOAD, TIME_TP, equilibrium_figure, history_xy, time_figure
from .layout import slider_config
from .readout import build_readout, fit_rows, removal_text
from .session import MAX_YEARS, advance, is_meeting, lake_from_store, lake_key, new_history, remove_p
from .validate import FIELD_RULES, check_settings


def _same_lake(a: dict[str, Any], b: dict[str, Any], rtol: float = 1e-5) -> bool:
    """Equal parameters and profile numbers to the settings fields' rounding."""
    pa, fa = lake_from_store(a)
    pb, fb = lake_from_store(b)
    xa = [*pa.to_dict().values(), fa.area_km2, fa.mean_depth_m, fa.load_kg_per_yr]
    xb = [*pb.to_dict().values(), fb.area_km2, fb.mean_depth_m, fb.load_kg_per_yr]
    return all(abs(u - v) <= rtol * max(abs(u), abs(v), 1e-300) for u, v in zip(xa, xb, strict=True))


def on_settings(*args: Any) -> tuple[Any, ...]:
    """A settings field changed: accept the new lake or say what is wrong, keeping the old one."""
    *values, lake = args
    params_in = dict(zip(FIELD_RULES, values, strict=True))
    name = lake["profile"]["name"] if lake else "Lake"
    new_lake, messages = check_settings(params_in, name)
    msgs = [messages[f] for f in FIELD_RULES]
    if new_lake is None:
        return (no_update, *msgs, "Not applied: fix the field marked in red. The lake shown is the last valid one.")
    if lake and _same_lake(new_lake, lake):
        return (no_update, *msgs, "")
    return (new_lake, *msgs, "Applied. The history starts again for the changed lake.")


def _fit_for(lake: dict[str, Any], fit: dict[str, Any] | None) -> dict[str, Any] | None:
    """The monitoring fit, when it belongs to this very lake."""
    return fit if fit and fit.get("lake_key") == lake_key(lake) else None


def field_values(lake: dict[str, Any]) -> list[str]:
    """The settings fields' text for a lake."""
    params, profile = lake_from_store(lake)
    values = params.to_dict() | {
        "area_km2": profile.area_km2,
        "mean_depth_m": profile.mean_depth_m,
        "load_kg_yr": profile.load_kg_per_yr,
    }
    return [f"{values[f]:.6g}" for f in FIELD_RULES]


def on_lake(
    lake: dict[str, Any],
    meeting_value: list[str] | None,
    history: dict[str, Any] | None,
    fit_data: dict[str, Any] | None,
) -> tuple[Any, ...]:
    """The lake (or the view) changed: rebuild the figures and the slider, show the lake in the settings."""
    params, profile = lake_from_store(lake)
    fit = _fit_for(lake, fit_data)
    if history is None or history.get("lake_key") != lake_key(lake):
        history_out: Any = new_history(lake)
        history = history_out
    else:
        history_out = no_update
    analysis = analyze(params, n_points=600)
    slider = slider_config(analysis, profile)
    meeting = is_meeting(meeting_value)
    eq = equilibrium_figure(
        analysis,
        profile,
        history,
        present_load=profile.load_kg_per_yr,
        load_max=slider["max"],
        meeting=meeting,
        fit=fit,
    )
    tf = time_figure(history, profile, meeting=meeting, fit=fit)
    return (
        history_out,
        eq,
        tf,
        slider["max"],
        slider["step"],
        slider["marks"],
        history["load"][-1],
        profile.name,
        *field_values(lake),
    )


def history_patches(history: dict[str, Any], lake: dict[str, Any]) -> tuple[Patch, Patch]:
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


def _years(value: Any) -> tuple[int | None, str]:
    try:
        years = int(value)
    except (TypeError, ValueError):
        return None, f"Years per change: enter a whole number from 1 to {MAX_YEARS}."
    if not 1 <= years <= MAX_YEARS or years != float(value):
        return None, f"Years per change: enter a whole number from 1 to {MAX_YEARS}."
    return years, ""


def step_session(
    trigger: str | None,
    load: Any,
    history: dict[str, Any],
    lake: dict[str, Any],
    years_value: Any,
    removal_value: Any,
) -> tuple[dict[str, Any] | None, str, str]:
    """Apply one user action to the history; returns (new history or None, years message, removal message)."""
    params, _ = lake_from_store(lake)
    if history is None or history.get("lake_key") != lake_key(lake):
        return None, "", ""
    if trigger == ids.RESET_BUTTON:
        new = dict(history)
        for k in ("year", "load", "p"):
            new[k] = [history[k][-1]]
        new["event"] = ["start"]
        return new, "", ""
    years, years_msg = _years(years_value)
    if years is None:
        return None, years_msg, ""
    if trigger == ids.REMOVAL_BUTTON:
        try:
            kg = float(removal_value)
        except (TypeError, ValueError):
            return None, "", "Enter the P mass to remove in kg (a number of 0 or more)."
        if not (math.isfinite(kg) and kg >= 0):
            return None, "", "Enter the P mass to remove in kg (a number of 0 or more)."
        new_h = remove_p(history, params, kg, years)
        return new_h, "", f"Removed {min(kg, history['p'][-1]):,.0f} kg P, then {years} years passed."
    if load is None:
        return None, "", ""
    load = float(load)
    if trigger == ids.LOAD_SLIDER and load == history["load"][-1]:
        return None, "", ""
    return advance(history, params, load, years), "", ""


def on_action(
    load: Any,
    _wait: int,
    _reset: int,
    _remove: int,
    history: dict[str, Any],
    lake: dict[str, Any],
    years_value: Any,
    removal_value: Any,
) -> tuple[Any, ...]:
    """Load moved, years passed, removal or restart: advance the lake and patch the figures."""
    new, years_msg, removal_msg = step_session(ctx.triggered_id, load, history, lake, years_value, removal_value)
    if new is None:
        return no_update, no_update, years_msg, removal_msg
    eq, _ = history_patches(new, lake)
    return new, eq, years_msg, removal_msg


def on_history(
    history: dict[str, Any] | None,
    meeting_value: list[str] | None,
    lake: dict[str, Any],
    fit_data: dict[str, Any] | None,
) -> tuple[Any, ...]:
    """Readout, removal need and time panel for the current state."""
    if history is None:
        return no_update, no_update, no_update, no_update
    params, profile = lake_from_store(lake)
    if history.get("lake_key") != lake_key(lake):
        return no_update, no_update, no_update, no_update
    load, p_now = history["load"][-1], history["p"][-1]
    analysis = analyze(params, n_points=10)
    rows = build_readout(params, profile, analysis, load, p_now, meeting=is_meeting(meeting_value))
    fit = _fit_for(lake, fit_data)
    if fit:
        rows += fit_rows(fit)
    text, kg = removal_text(params, profile, load, p_now)
    suggestion = math.ceil(kg) if kg > 0 else 0
    _, time_patch = history_patches(history, lake)
    return rows, text, suggestion, time_patch


def on_meeting(value: list[str] | None) -> tuple[str, dict[str, str]]:
    meeting = is_meeting(value)
    return ("page meeting" if meeting else "page"), ({"display": "none"} if meeting else {})


def register(app: Dash) -> None:
    field_inputs = [Input(ids.FIELDS[f][0], "value") for f in FIELD_RULES]
    app.callback(
        Output(ids.LAKE_STORE, "data"),
        *[Output(ids.FIELDS[f][1], "children") for f in FIELD_RULES],
        Output(ids.SETTINGS_STATUS, "children"),
        *field_inputs,
        State(ids.LAKE_STORE, "data"),
        prevent_initial_call=True,
    )(on_settings)
    app.callback(
        Output(ids.HISTORY_STORE, "data"),
        Output(ids.EQUILIBRIUM_GRAPH, "figure"),
        Output(ids.TIME_GRAPH, "figure"),
        Output(ids.LOAD_SLIDER, "max"),
        Output(ids.LOAD_SLIDER, "step"),
        Output(ids.LOAD_SLIDER, "marks"),
        Output(ids.LOAD_SLIDER, "value"),
        Output(ids.LAKE_TITLE, "children"),
        *[Output(ids.FIELDS[f][0], "value") for f in FIELD_RULES],
        Input(ids.LAKE_STORE, "data"),
        Input(ids.MEETING_TOGGLE, "value"),
        State(ids.HISTORY_STORE, "data"),
        State(ids.FIT_STORE, "data"),
    )(on_lake)
    app.callback(
        Output(ids.HISTORY_STORE, "data", allow_duplicate=True),
        Output(ids.EQUILIBRIUM_GRAPH, "figure", allow_duplicate=True),
        Output(ids.YEARS_MESSAGE, "children"),
        Output(ids.REMOVAL_MESSAGE, "children"),
        Input(ids.LOAD_SLIDER, "value"),
        Input(ids.WAIT_BUTTON, "n_clicks"),
        Input(ids.RESET_BUTTON, "n_clicks"),
        Input(ids.REMOVAL_BUTTON, "n_clicks"),
        State(ids.HISTORY_STORE, "data"),
        State(ids.LAKE_STORE, "data"),
        State(ids.YEARS_INPUT, "value"),
        State(ids.REMOVAL_INPUT, "value"),
        prevent_initial_call=True,
    )(on_action)
    app.callback(
        Output(ids.READOUT, "children"),
        Output(ids.REMOVAL_NEEDED, "children"),
        Output(ids.REMOVAL_INPUT, "value"),
        Output(ids.TIME_GRAPH, "figure", allow_duplicate=True),
        Input(ids.HISTORY_STORE, "data"),
        Input(ids.MEETING_TOGGLE, "value"),
        State(ids.LAKE_STORE, "data"),
        State(ids.FIT_STORE, "data"),
        prevent_initial_call="initial_duplicate",
    )(on_history)
    app.callback(
        Output(ids.ROOT, "className"),
        Output(ids.SETTINGS_PANEL, "style"),
        Input(ids.MEETING_TOGGLE, "value"),
    )(on_meeting)
