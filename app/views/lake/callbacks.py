"""Callbacks of the lake view: parse, call the model, build, return."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from dash import Dash, Input, Output, State, ctx, no_update
from turnback.model.equilibrium import analyze

from ... import ids
from ...stores import fit_of, history_of, lake_from_store, new_history, same_lake
from ...theme import is_meeting
from .figures import equilibrium_figure, history_patches, time_figure
from .history import MAX_YEARS_PER_CHANGE, advance, remove_p, restart
from .layout import slider_config
from .readout import build_readout, fit_rows, removal_text
from .settings import FIELD_RULES, check_settings

Lake = Mapping[str, Any]


def on_settings(values: Mapping[str, Any], lake: Lake | None) -> dict[str, Any]:
    """A settings field changed: accept the new lake or say what is wrong, keeping the old one."""
    name = lake["profile"]["name"] if lake else "Lake"
    new_lake, messages = check_settings(dict(values), name)
    out: dict[str, Any] = {"lake": no_update, "messages": messages, "status": ""}
    if new_lake is None:
        out["status"] = "Not applied: fix the field marked in red. The lake shown is the last valid one."
    elif not (lake and same_lake(new_lake, lake)):
        out.update(lake=new_lake, status="Applied. The history starts again for the changed lake.")
    return out


def field_values(lake: Lake) -> dict[str, str]:
    """The settings fields' text for a lake."""
    params, profile = lake_from_store(lake)
    values = params.to_dict() | {
        "area_km2": profile.area_km2,
        "mean_depth_m": profile.mean_depth_m,
        "load_kg_yr": profile.load_kg_per_yr,
    }
    return {f: f"{values[f]:.6g}" for f in FIELD_RULES}


def on_lake(lake: Lake, meeting_value: list[str] | None, history: Any, fit_data: Any) -> dict[str, Any]:
    """The lake (or the view) changed: rebuild the figures and the slider, show the lake in the settings."""
    params, profile = lake_from_store(lake)
    fit = fit_of(lake, fit_data)
    shown = history_of(lake, history) or new_history(lake)
    analysis = analyze(params, n_points=600)
    slider = slider_config(analysis, profile)
    meeting = is_meeting(meeting_value)
    return {
        "history": no_update if shown is history else shown,
        "equilibrium": equilibrium_figure(
            analysis,
            profile,
            shown,
            present_load=profile.load_kg_per_yr,
            load_max=slider["max"],
            meeting=meeting,
            fit=fit,
        ),
        "time": time_figure(shown, profile, meeting=meeting, fit=fit),
        "slider": {**slider, "value": shown["load"][-1]},
        "title": profile.name,
        "fields": field_values(lake),
    }


def _years(value: Any) -> tuple[int | None, str]:
    try:
        years = int(value)
    except (TypeError, ValueError):
        return None, f"Years per change: enter a whole number from 1 to {MAX_YEARS_PER_CHANGE}."
    if not 1 <= years <= MAX_YEARS_PER_CHANGE or years != float(value):
        return None, f"Years per change: enter a whole number from 1 to {MAX_YEARS_PER_CHANGE}."
    return years, ""


def _removal_kg(value: Any) -> float | None:
    try:
        kg = float(value)
    except (TypeError, ValueError):
        return None
    return kg if math.isfinite(kg) and kg >= 0 else None


def step_session(
    trigger: str | None, load: Any, history: Any, lake: Lake, years_value: Any, removal_value: Any
) -> tuple[dict[str, Any] | None, str, str]:
    """Apply one user action to the history; returns (new history or None, years message, removal message)."""
    params, _ = lake_from_store(lake)
    if history_of(lake, history) is None:
        return None, "", ""
    if trigger == ids.RESET_BUTTON:
        return restart(history), "", ""
    years, years_msg = _years(years_value)
    if years is None:
        return None, years_msg, ""
    if trigger == ids.REMOVAL_BUTTON:
        kg = _removal_kg(removal_value)
        if kg is None:
            return None, "", "Enter the P mass to remove in kg (a number of 0 or more)."
        new_h = remove_p(history, params, kg, years)
        return new_h, "", f"Removed {min(kg, history['p'][-1]):,.0f} kg P, then {years} years passed."
    if load is None or (trigger == ids.LOAD_SLIDER and float(load) == history["load"][-1]):
        return None, "", ""
    return advance(history, params, float(load), years), "", ""


def on_action(
    load: Any, history: Any, lake: Lake, years_value: Any, removal_value: Any, **_clicks: int
) -> dict[str, Any]:
    """Load moved, years passed, removal or restart: advance the lake and patch the figures."""
    new, years_msg, removal_msg = step_session(ctx.triggered_id, load, history, lake, years_value, removal_value)
    out: dict[str, Any] = {"history": no_update, "equilibrium": no_update}
    if new is not None:
        out.update(history=new, equilibrium=history_patches(new, lake)[0])
    return out | {"years_message": years_msg, "removal_message": removal_msg}


def on_history(history: Any, meeting_value: list[str] | None, lake: Lake, fit_data: Any) -> dict[str, Any]:
    """Readout, removal need and time panel for the current state."""
    if history_of(lake, history) is None:
        return {"readout": no_update, "needed": no_update, "suggestion": no_update, "time": no_update}
    params, profile = lake_from_store(lake)
    load, p_now = history["load"][-1], history["p"][-1]
    rows = build_readout(params, profile, analyze(params, n_points=10), load, p_now, meeting=is_meeting(meeting_value))
    fit = fit_of(lake, fit_data)
    if fit:
        rows += fit_rows(dict(fit))
    text, kg = removal_text(params, profile, load, p_now)
    return {
        "readout": rows,
        "needed": text,
        "suggestion": math.ceil(kg) if kg > 0 else 0,
        "time": history_patches(history, lake)[1],
    }


def on_meeting(value: list[str] | None) -> dict[str, str]:
    """The settings stay out of the meeting view."""
    return {"display": "none"} if is_meeting(value) else {}


def register(app: Dash) -> None:
    app.callback(
        output={
            "lake": Output(ids.LAKE_STORE, "data"),
            "messages": {f: Output(ids.FIELDS[f][1], "children") for f in FIELD_RULES},
            "status": Output(ids.SETTINGS_STATUS, "children"),
        },
        inputs={"values": {f: Input(ids.FIELDS[f][0], "value") for f in FIELD_RULES}},
        state={"lake": State(ids.LAKE_STORE, "data")},
        prevent_initial_call=True,
    )(on_settings)
    app.callback(
        output={
            "history": Output(ids.HISTORY_STORE, "data"),
            "equilibrium": Output(ids.EQUILIBRIUM_GRAPH, "figure"),
            "time": Output(ids.TIME_GRAPH, "figure"),
            "slider": {k: Output(ids.LOAD_SLIDER, k) for k in ("max", "step", "marks", "value")},
            "title": Output(ids.LAKE_TITLE, "children"),
            "fields": {f: Output(ids.FIELDS[f][0], "value") for f in FIELD_RULES},
        },
        inputs={"lake": Input(ids.LAKE_STORE, "data"), "meeting_value": Input(ids.MEETING_TOGGLE, "value")},
        state={"history": State(ids.HISTORY_STORE, "data"), "fit_data": State(ids.FIT_STORE, "data")},
    )(on_lake)
    app.callback(
        output={
            "history": Output(ids.HISTORY_STORE, "data", allow_duplicate=True),
            "equilibrium": Output(ids.EQUILIBRIUM_GRAPH, "figure", allow_duplicate=True),
            "years_message": Output(ids.YEARS_MESSAGE, "children"),
            "removal_message": Output(ids.REMOVAL_MESSAGE, "children"),
        },
        inputs={
            "load": Input(ids.LOAD_SLIDER, "value"),
            "wait": Input(ids.WAIT_BUTTON, "n_clicks"),
            "reset": Input(ids.RESET_BUTTON, "n_clicks"),
            "remove": Input(ids.REMOVAL_BUTTON, "n_clicks"),
        },
        state={
            "history": State(ids.HISTORY_STORE, "data"),
            "lake": State(ids.LAKE_STORE, "data"),
            "years_value": State(ids.YEARS_INPUT, "value"),
            "removal_value": State(ids.REMOVAL_INPUT, "value"),
        },
        prevent_initial_call=True,
    )(on_action)
    app.callback(
        output={
            "readout": Output(ids.READOUT, "children"),
            "needed": Output(ids.REMOVAL_NEEDED, "children"),
            "suggestion": Output(ids.REMOVAL_INPUT, "value"),
            "time": Output(ids.TIME_GRAPH, "figure", allow_duplicate=True),
        },
        inputs={"history": Input(ids.HISTORY_STORE, "data"), "meeting_value": Input(ids.MEETING_TOGGLE, "value")},
        state={"lake": State(ids.LAKE_STORE, "data"), "fit_data": State(ids.FIT_STORE, "data")},
        prevent_initial_call="initial_duplicate",
    )(on_history)
    app.callback(Output(ids.SETTINGS_PANEL, "style"), Input(ids.MEETING_TOGGLE, "value"))(on_meeting)
