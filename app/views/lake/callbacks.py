"""Callbacks of the lake view: parse, call the model, build, return."""

from __future__ import annotations

import math
from collections.abc import Mapping
from functools import lru_cache
from typing import Any

from dash import Dash, Input, Output, Patch, State, ctx, no_update
from turnback.model.equilibrium import LakeAnalysis, analyze
from turnback.model.lake_models import AnyLakeParameters, lake_folds
from turnback.model.outlook import lake_outlook
from turnback.model.params import LakeProfile
from turnback.model.sediment_lag import two_pool_outlook
from turnback.model.two_pool import TwoPoolParameters
from turnback.model.two_pool_equilibrium import TwoPoolAnalysis, analyze_two_pool

from ... import ids
from ...stores import fit_of, history_of, lake_from_store, new_history, same_lake
from ...theme import is_meeting
from ...vocabulary import lag_sentence
from .figures import append_patches, equilibrium_figure, history_patches, lag_patch, time_figure
from .history import (
    MAX_HISTORY,
    MAX_LAG_YEARS,
    MAX_SETTLE_YEARS,
    MAX_YEARS_PER_CHANGE,
    advance,
    appended,
    from_tail,
    last_change,
    remove_p,
    restart,
    tail_of,
)
from .layout import slider_config
from .readout import build_readout, fit_rows, removal_text
from .settings import FIELD_RULES, TWO_POOL_RULES, check_model_settings

Lake = Mapping[str, Any]


def on_settings(
    values: Mapping[str, Any],
    lake: Lake | None,
    pool_values: Mapping[str, Any] | None = None,
    model: str | None = None,
) -> dict[str, Any]:
    """A settings field or the lake model changed: accept the new lake or say what is wrong, keeping the old one."""
    name = lake["profile"]["name"] if lake else "Lake"
    new_lake, messages, pool_messages = check_model_settings(
        "two-pool" if model == "two-pool" else "one-box", dict(values), dict(pool_values or {}), name
    )
    out: dict[str, Any] = {"lake": no_update, "messages": messages, "pool_messages": pool_messages, "status": ""}
    if new_lake is None:
        out["status"] = "Not applied: fix the field marked in red. The lake shown is the last valid one."
    elif not (lake and same_lake(new_lake, lake)):
        out.update(lake=new_lake, status="Applied. The history starts again for the changed lake.")
    return out


def field_values(lake: Lake) -> dict[str, Any]:
    """The settings fields' text for a lake (a two-pool lake leaves the one-box fields as they are)."""
    params, profile = lake_from_store(lake)
    own = {} if isinstance(params, TwoPoolParameters) else params.to_dict()  # m and q are in both models
    values = own | {
        "area_km2": profile.area_km2,
        "mean_depth_m": profile.mean_depth_m,
        "load_kg_yr": profile.load_kg_per_yr,
    }
    return {f: f"{values[f]:.6g}" if f in values else no_update for f in FIELD_RULES}


def pool_field_values(lake: Lake) -> dict[str, Any]:
    """The two-pool fields' text for a two-pool lake (left as they are for a one-box lake)."""
    params, _ = lake_from_store(lake)
    if not isinstance(params, TwoPoolParameters):
        return {f: no_update for f in TWO_POOL_RULES}
    values = params.to_dict()
    return {f: f"{values[f]:.6g}" for f in TWO_POOL_RULES}


def on_model(model: str | None) -> dict[str, Any]:
    """Show the chosen lake model's fields."""
    two = model == "two-pool"
    return {"one_box": {"display": "none"} if two else {}, "two_pool": {} if two else {"display": "none"}}


def on_lake(lake: Lake, meeting_value: list[str] | None, history: Any, fit_data: Any) -> dict[str, Any]:
    """The lake (or the view) changed: rebuild the figures and the slider, show the lake in the settings.

    A history of another lake is not shown: the history starts again, and the note under the slider says so.
    """
    params, profile = lake_from_store(lake)
    fit = fit_of(lake, fit_data)
    shown = history_of(lake, history) or new_history(lake)
    analysis = analysis_of(params, 600)
    meeting = is_meeting(meeting_value)
    slider = slider_config(analysis, profile, meeting)
    note: Any = no_update
    if shown is not history:
        note = (
            "The history started again: the lake changed (its settings, or a fitted lake was put in use)."
            if history
            else ""
        )
    return {
        "history": no_update if shown is history else shown,
        "tail": tail_of(shown, last_change(shown, params)),
        "note": note,
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
        "pool_fields": pool_field_values(lake),
        "model": "two-pool" if isinstance(params, TwoPoolParameters) else "one-box",
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


def big_step(which: str, load_now: float, params: AnyLakeParameters, profile: LakeProfile, top: float) -> float | None:
    """The load of a big step: ±10 % of today's load, just past the tipping load, just under the recovery load."""
    today = profile.load_kg_per_yr
    fs = lake_folds(params)
    if which == "down":
        return max(0.0, load_now - 0.1 * today)
    if which == "up":
        return min(top, load_now + 0.1 * today)
    if which == "past_tipping":
        return min(top, 1.02 * fs[0].load) if fs else None
    if which == "under_recovery":
        return 0.98 * fs[1].load if fs and fs[1].load > 0 else None
    return None


STEP_KEYS = {v: k for k, v in ids.STEP_BUTTONS.items()}


@lru_cache(maxsize=32)
def analysis_of(params: AnyLakeParameters, n_points: int) -> LakeAnalysis | TwoPoolAnalysis:
    """The engine's analysis of a lake, worked out once per lake (a view toggle redraws without redoing it).

    A two-pool lake's curve is traced along the water P (:func:`analyze_two_pool`).
    """
    if isinstance(params, TwoPoolParameters):
        return analyze_two_pool(params, n_points=n_points)
    return analyze(params, n_points=n_points)


def step_session(
    trigger: str | None, load: Any, history: Any, lake: Lake, years_value: Any, removal_value: Any
) -> tuple[dict[str, Any] | None, str, str]:
    """Apply one user action to the history; returns (new history or None, years message, removal message).

    ``history`` may be the whole history or a one-point history made from its
    tail (:func:`history.from_tail`); the result extends what it was given.
    """
    params, _ = lake_from_store(lake)
    if history_of(lake, history) is None:
        return None, "", ""
    if trigger == ids.RESET_BUTTON:
        return restart(history), "", ""
    if trigger == ids.SETTLE_BUTTON:
        if isinstance(params, TwoPoolParameters):
            out: Any = two_pool_outlook(
                params, history["load"][-1], history["p"][-1], history["m"][-1], max_years=MAX_SETTLE_YEARS
            )
        else:
            out = lake_outlook(params, history["load"][-1], history["p"][-1], max_years=MAX_SETTLE_YEARS)
        if out.years == 0:
            return None, "The lake has already settled at this inflow.", ""
        run = out.years or MAX_SETTLE_YEARS
        new = advance(history, params, history["load"][-1], run, event="settle", limit=MAX_SETTLE_YEARS)
        msg = "" if out.years else f"Not settled after {MAX_SETTLE_YEARS:,} years: it is creeping near a tipping point."
        return new, msg, ""
    years, years_msg = _years(years_value)
    if years is None:
        return None, years_msg, ""
    if trigger == ids.REMOVAL_BUTTON:
        kg = _removal_kg(removal_value)
        if kg is None:
            return None, "", "Enter the P mass to remove in kg (a number of 0 or more)."
        held = history["p"][-1]
        new_h = remove_p(history, params, kg, years)
        if kg > held:
            return (
                new_h,
                "",
                f"Removed {held:,.0f} kg P, all the lake held (you asked for {kg:,.0f} kg: the removal is capped at "
                f"what is in the lake), then {years} years passed.",
            )
        return new_h, "", f"Removed {kg:,.0f} kg P, then {years} years passed."
    if load is None or (trigger == ids.LOAD_SLIDER and float(load) == history["load"][-1]):
        return None, "", ""
    return advance(history, params, float(load), years), "", ""


def on_action(
    load: Any, tail: Any, lake: Lake, years_value: Any, removal_value: Any, top: Any, **_clicks: int
) -> dict[str, Any]:
    """Load moved, big step, years passed, removal or restart: advance the lake and patch the figures.

    Only the last state travels to the server (``HISTORY_TAIL``); the new
    points are appended to the history store and to both figures with
    patches, so the time a change takes does not grow with the history.
    """
    trigger = ctx.triggered_id
    out: dict[str, Any] = {
        "history": no_update,
        "tail": no_update,
        "equilibrium": no_update,
        "time": no_update,
        "slider": no_update,
    }
    short = from_tail(tail) if tail else None
    if trigger in STEP_KEYS and short is not None:
        params, profile = lake_from_store(lake)
        new_load = big_step(STEP_KEYS[trigger], short["load"][-1], params, profile, float(top or 1e12))
        if new_load is None:
            return out | {"years_message": "This lake has no such point.", "removal_message": ""}
        out["slider"] = new_load
        trigger, load = ids.LOAD_SLIDER, new_load
    new, years_msg, removal_msg = step_session(trigger, load, short, lake, years_value, removal_value)
    if new is not None and short is not None:
        params, _ = lake_from_store(lake)
        # the last inflow change (or removal) and its years until clear water travel with the tail
        change = last_change(new, params) or tail.get("change")
        if trigger == ids.RESET_BUTTON or tail["n"] + len(new["year"]) - 1 > MAX_HISTORY:
            if trigger != ids.RESET_BUTTON:
                new = restart(new) if len(new["year"]) > MAX_HISTORY else new
                years_msg = f"The history reached {MAX_HISTORY:,} points and started again from the lake now."
            eq, tf = history_patches(new, lake)
            out.update(history=new, tail=tail_of(new, last_change(new, params)), equilibrium=eq, time=tf)
        else:
            added = appended(new)
            store = Patch()
            for k in added:
                store[k].extend(added[k])
            first = int(tail.get("first", tail["year"]))
            eq, tf = append_patches(added, lake, (first, int(new["year"][-1])))
            new_tail = tail_of(new, change) | {"n": tail["n"] + len(added["year"]), "first": first}
            out.update(history=store, tail=new_tail, equilibrium=eq, time=tf)
    return out | {"years_message": years_msg, "removal_message": removal_msg}


def on_history(tail: Any, meeting_value: list[str] | None, lake: Lake, fit_data: Any) -> dict[str, Any]:
    """Readout, removal need and the years until clear water for the current state (the tail of the history)."""
    if not tail or history_of(lake, {"lake_key": tail.get("lake_key")}) is None:
        return {"readout": no_update, "needed": no_update, "suggestion": no_update, "lag": no_update, "time": no_update}
    params, profile = lake_from_store(lake)
    load, p_now = tail["load"], tail["p"]
    m_now = tail.get("m") if isinstance(params, TwoPoolParameters) else None
    if isinstance(params, TwoPoolParameters) and m_now is None:
        return {"readout": no_update, "needed": no_update, "suggestion": no_update, "lag": no_update, "time": no_update}
    meeting = is_meeting(meeting_value)
    rows = build_readout(params, profile, analysis_of(params, 10), load, p_now, meeting=meeting, m_now=m_now)
    fit = fit_of(lake, fit_data)
    if fit:
        rows += fit_rows(dict(fit), meeting)
    text, kg = removal_text(params, profile, load, p_now)
    change = tail.get("change")
    lag_words = ""
    if change is not None:
        lag_words = lag_sentence(int(change["year"]), change.get("lag"), int(tail["year"]), meeting, MAX_LAG_YEARS)
    return {
        "readout": rows,
        "needed": text,
        "suggestion": math.ceil(kg) if kg > 0 else 0,
        "lag": lag_words,
        "time": lag_patch(change, meeting),
    }


def on_meeting(value: list[str] | None) -> dict[str, str]:
    """The settings stay out of the meeting view."""
    return {"display": "none"} if is_meeting(value) else {}


def register(app: Dash) -> None:
    app.callback(
        output={
            "lake": Output(ids.LAKE_STORE, "data"),
            "messages": {f: Output(ids.FIELDS[f][1], "children") for f in FIELD_RULES},
            "pool_messages": {f: Output(ids.TWO_POOL_FIELDS[f][1], "children") for f in TWO_POOL_RULES},
            "status": Output(ids.SETTINGS_STATUS, "children"),
        },
        inputs={
            "values": {f: Input(ids.FIELDS[f][0], "value") for f in FIELD_RULES},
            "pool_values": {f: Input(ids.TWO_POOL_FIELDS[f][0], "value") for f in TWO_POOL_RULES},
            "model": Input(ids.LAKE_MODEL, "value"),
        },
        state={"lake": State(ids.LAKE_STORE, "data")},
        prevent_initial_call=True,
    )(on_settings)
    app.callback(
        output={
            "one_box": Output(ids.ONE_BOX_FIELDS_BOX, "style"),
            "two_pool": Output(ids.TWO_POOL_FIELDS_BOX, "style"),
        },
        inputs={"model": Input(ids.LAKE_MODEL, "value")},
    )(on_model)
    app.callback(
        output={
            "history": Output(ids.HISTORY_STORE, "data"),
            "tail": Output(ids.HISTORY_TAIL, "data"),
            "note": Output(ids.HISTORY_NOTE, "children"),
            "equilibrium": Output(ids.EQUILIBRIUM_GRAPH, "figure"),
            "time": Output(ids.TIME_GRAPH, "figure"),
            "slider": {k: Output(ids.LOAD_SLIDER, k) for k in ("max", "step", "marks", "value")},
            "title": Output(ids.LAKE_TITLE, "children"),
            "fields": {f: Output(ids.FIELDS[f][0], "value") for f in FIELD_RULES},
            "pool_fields": {f: Output(ids.TWO_POOL_FIELDS[f][0], "value") for f in TWO_POOL_RULES},
            "model": Output(ids.LAKE_MODEL, "value"),
        },
        inputs={"lake": Input(ids.LAKE_STORE, "data"), "meeting_value": Input(ids.MEETING_TOGGLE, "value")},
        state={"history": State(ids.HISTORY_STORE, "data"), "fit_data": State(ids.FIT_STORE, "data")},
    )(on_lake)
    app.callback(
        output={
            "history": Output(ids.HISTORY_STORE, "data", allow_duplicate=True),
            "tail": Output(ids.HISTORY_TAIL, "data", allow_duplicate=True),
            "equilibrium": Output(ids.EQUILIBRIUM_GRAPH, "figure", allow_duplicate=True),
            "time": Output(ids.TIME_GRAPH, "figure", allow_duplicate=True),
            "slider": Output(ids.LOAD_SLIDER, "value", allow_duplicate=True),
            "years_message": Output(ids.YEARS_MESSAGE, "children"),
            "removal_message": Output(ids.REMOVAL_MESSAGE, "children"),
        },
        inputs={
            "load": Input(ids.LOAD_SLIDER, "value"),
            "wait": Input(ids.WAIT_BUTTON, "n_clicks"),
            "settle": Input(ids.SETTLE_BUTTON, "n_clicks"),
            "reset": Input(ids.RESET_BUTTON, "n_clicks"),
            "remove": Input(ids.REMOVAL_BUTTON, "n_clicks"),
            **{k: Input(b, "n_clicks") for k, b in ids.STEP_BUTTONS.items()},
        },
        state={
            "tail": State(ids.HISTORY_TAIL, "data"),
            "lake": State(ids.LAKE_STORE, "data"),
            "years_value": State(ids.YEARS_INPUT, "value"),
            "removal_value": State(ids.REMOVAL_INPUT, "value"),
            "top": State(ids.LOAD_SLIDER, "max"),
        },
        prevent_initial_call=True,
    )(on_action)
    app.callback(
        output={
            "readout": Output(ids.READOUT, "children"),
            "needed": Output(ids.REMOVAL_NEEDED, "children"),
            "suggestion": Output(ids.REMOVAL_INPUT, "value"),
            "lag": Output(ids.TIME_LAG, "children"),
            "time": Output(ids.TIME_GRAPH, "figure", allow_duplicate=True),
        },
        inputs={"tail": Input(ids.HISTORY_TAIL, "data"), "meeting_value": Input(ids.MEETING_TOGGLE, "value")},
        state={"lake": State(ids.LAKE_STORE, "data"), "fit_data": State(ids.FIT_STORE, "data")},
        prevent_initial_call=True,
    )(on_history)
    app.callback(Output(ids.SETTINGS_PANEL, "style"), Input(ids.MEETING_TOGGLE, "value"))(on_meeting)
