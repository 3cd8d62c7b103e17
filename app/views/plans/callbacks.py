"""Callbacks of the plans view: parse the scenario form, run the plan, compare, save, export.

Session state lives in the browser (see :mod:`app.stores`): the plan's
scenarios, the scenario being edited, the last completed run and the last
precautionary-load answer.  Runs and the precautionary-load search are
background callbacks with the cooperative cancel of :mod:`app.background`:
Cancel keeps the previous results.  Saved plans go to the SQLite store.
"""

from __future__ import annotations

from collections.abc import Mapping
from functools import partial
from pathlib import Path
from typing import Any

from dash import Dash, Input, Output, State, ctx, html, no_update
from turnback.model.ensemble import compare_plan
from turnback.model.plan import Plan
from turnback.model.progress import RunCancelled

from ... import ids
from ...background import (
    ProgressReporter,
    SetProgress,
    cancel_folder,
    cancel_hook,
    clear_flag,
    new_token,
    request_cancel,
)
from ...stores import comparison_from_store, comparison_to_store, scenarios_of, state_now
from ...theme import is_meeting
from ..lake.settings import FIELD_RULES, TWO_POOL_RULES
from .both_models import both_columns, other_lake, other_results, other_to_store, run_other, side_by_side
from .errors import scenario_words
from .export import export
from .figures import empty_figure, outcome_table, result_figures, table_columns
from .form import FORM_KEYS, SECTIONS
from .precaution import precaution_request, run_precaution
from .readout import is_stale, lake_note, plan_lake, precaution_words, results_note
from .saved import load_saved, save_plan, saved_details, saved_options
from .scenarios import action_outputs, list_rows, plan_action, selected_indices, with_baseline

Lake = Mapping[str, Any]
Store = Mapping[str, Any] | None


# the form and the scenario list ------------------------------------------------
def on_load_kind(kind: str | None) -> list[dict[str, str]]:
    """Show the load fields of the chosen kind only."""
    shown = {
        "from": kind != "table",
        "linear_cut": kind == "linear_cut",
        "step": kind == "step",
        "table": kind == "table",
    }
    return [{} if shown[g] else {"display": "none"} for g in ids.PLAN_LOAD_GROUPS]


def on_lake_note(tab: str | None, lake: Lake, history: Store, fit: Store = None) -> tuple[Any, Any, Any]:
    """Which lake the plan is for and where it starts; the load now as the form's default starting load.

    Recomputed when the view is opened (the history only changes while another view is on show).
    """
    if tab != ids.TAB_PLANS:
        return no_update, no_update, no_update
    _, load, _ = state_now(lake, history)
    return lake_note(lake, history, fit), f"{load:,.0f} (the load now)", lake["profile"]["name"]


def on_plan_action(
    values: Mapping[str, Any], selected: Any, plan: Store, editing: Store, lake: Lake, history: Store, **_clicks: int
) -> tuple[Any, ...]:
    """Add, save changes, edit, duplicate or delete; the Dash side of :func:`plan_action`."""
    _, load_now, _ = state_now(lake, history)
    res = plan_action(ctx.triggered_id, values, selected_indices(selected, plan), plan, editing, load_now)
    return action_outputs(res, editing)


def on_plan_store(plan: Store, chosen: str | None) -> tuple[Any, Any, Any]:
    """Scenario list rows and the precaution form's choice of scenario."""
    scenarios = scenarios_of(plan)
    names = [s.name for s in scenarios]
    options = [{"label": n, "value": n} for n in names]
    value = chosen if chosen in names else (names[0] if names else None)
    return list_rows(scenarios), options, value


# running ------------------------------------------------------------------------
def on_run_request(clicks: int, plan: Store, *, folder: Path) -> tuple[Any, str]:
    if not scenarios_of(plan):
        return no_update, "Add a scenario to the plan first."
    return {"token": new_token(folder)}, ""


def run_plan(
    set_progress: SetProgress,
    request: Store,
    plan: Store,
    lake: Lake,
    history: Store,
    *,
    folder: Path,
    fit: Store = None,
    both: list[str] | None = None,
    values: Mapping[str, Any] | None = None,
    pool_values: Mapping[str, Any] | None = None,
) -> tuple[Any, str]:
    """Run every scenario of the plan on the current lake; runs as a background callback.

    With ``both`` checked, the same scenarios also run on the other model's
    lake from the lake settings (``values``, ``pool_values``), side by side.
    """
    token = (request or {}).get("token")
    _, load_now, _ = state_now(lake, history)
    scenarios = with_baseline(scenarios_of(plan), load_now)
    if not scenarios:
        return no_update, "Add a scenario to the plan first."
    try:
        the_plan = Plan(plan_lake(lake, history, fit=fit), tuple(scenarios))
    except ValueError as exc:
        return no_update, f"Not run: {scenario_words(exc, scenarios)}. The previous results are kept."
    other = None
    if both:
        other, why = other_lake(the_plan.lake, values or {}, pool_values or {})
        if other is None:
            return no_update, f"Not run: {why}. The previous results are kept."
    progress = ProgressReporter(set_progress)
    progress.show(0, "starting")
    share = 0.5 if other is not None else 1.0

    def first(f: float, msg: str) -> None:
        progress.fraction(share * f, msg)

    def second(f: float, msg: str) -> None:
        progress.fraction(0.5 + 0.5 * f, msg)

    try:
        comp = compare_plan(the_plan, progress=first, cancel=cancel_hook(folder, token), sample_paths=0)
        comp_other = None if other is None else run_other(the_plan, other, second, cancel_hook(folder, token))
    except RunCancelled:
        progress.show(0, "cancelled")
        return no_update, "Cancelled. The results shown (if any) are from the previous run."
    except ValueError as exc:
        progress.show(0, "not run")
        return no_update, f"Not run: {scenario_words(exc, scenarios)}. The previous results are kept."
    finally:
        clear_flag(folder, token)
    progress.show(100, "done")
    n = len(comp.results)
    data = dict(comparison_to_store(comp))
    data["plan"] = list((plan or {}).get("scenarios", []))  # what the plan held when it ran (see is_stale)
    if comp_other is not None:
        data["other"] = other_to_store(comp_other)
        return data, f"Ran {n} scenario{'s' if n != 1 else ''} under both lake models."
    return data, f"Ran {n} scenario{'s' if n != 1 else ''}."


def on_cancel(clicks: int, run: Store, prec: Store, *, folder: Path) -> tuple[Any, Any]:
    """Ask the running jobs to stop (they stop between chunks of members)."""
    asked = [request_cancel(folder, (r or {}).get("token")) for r in (run, prec)]
    return ("Stopping the run…" if asked[0] else no_update), ("Stopping…" if asked[1] else no_update)


# results ------------------------------------------------------------------------
def on_results(data: Store, meeting_value: list[str] | None, tab: str | None = ids.TAB_PLANS) -> tuple[Any, ...]:
    """Outcome table (fewer columns in the meeting view) and figures of the last run (drawn when the view is open)."""
    if tab != ids.TAB_PLANS:
        return (no_update,) * 6
    meeting = is_meeting(meeting_value)
    columns = table_columns(meeting)
    if not data or not data.get("results"):
        blank = empty_figure("Run the plan to see its scenarios here.", meeting=meeting)
        return columns, [], blank, blank, blank, blank
    try:
        comp = comparison_from_store(data)
    except (ValueError, KeyError, TypeError):
        blank = empty_figure("The stored results could not be read; run the plan again.", meeting=meeting)
        return columns, [], blank, blank, blank, blank
    figs = result_figures(comp.results, meeting=meeting)
    rows = outcome_table(comp.results, meeting)
    if data.get("other"):
        try:
            others = other_results(data)
        except (ValueError, KeyError, TypeError):
            others = []
        rows = side_by_side(rows, comp.results, others, comp.plan.lake.model, meeting)
        model_col, lag_col = both_columns(meeting)
        at = next((i + 1 for i, c in enumerate(columns) if c["field"] == "recovery_years_median"), len(columns))
        columns = [columns[0], model_col, *columns[1:at], lag_col, *columns[at:]]
    return (columns, rows, *figs.values())


def on_results_note(data: Store, tab: str | None, lake: Lake, history: Store, fit: Store = None) -> Any:
    """What the last run was, and whether the lake has changed since."""
    if tab != ids.TAB_PLANS:
        return no_update  # worked out when the view is opened
    if not data or not data.get("results"):
        return "No run yet: add scenarios and press 'Run the plan'."
    try:
        current: dict[str, Any] | None = plan_lake(lake, history, fit=fit).to_dict()
    except ValueError:
        current = None
    try:
        return results_note(data, current)
    except (ValueError, KeyError, TypeError):
        return "The stored results could not be read; run the plan again."


def _current(lake: Lake, history: Store) -> dict[str, Any] | None:
    try:
        return plan_lake(lake, history).to_dict()
    except ValueError:
        return None


def on_stale(data: Store, plan: Store, lake: Lake, tab: str | None, history: Store) -> Any:
    """The 'results out of date, run again' banner."""
    why = is_stale(data, plan, _current(lake, history))
    if not why:
        return None
    return html.Div(
        f"Results out of date: {why}. Run the plan again; exports are refused until then.", className="stale-banner"
    )


# precautionary load ---------------------------------------------------------------
def on_precaution_request(
    clicks: int,
    scenario_name: str | None,
    years_text: Any,
    percent_text: Any,
    plan: Store,
    lake: Lake,
    history: Store,
    *,
    folder: Path,
    fit: Store = None,
) -> tuple[Any, str]:
    """Check the precaution form; a good one becomes a request for the background search."""
    request, msg = precaution_request(scenario_name, years_text, percent_text, plan, lake, history, folder, fit)
    return (no_update if request is None else request), msg


def on_precaution_store(data: Store, lake: Lake, history: Store) -> Any:
    if not data:
        return ""
    _, load_now, _ = state_now(lake, history)
    try:
        return precaution_words(data, load_now)
    except (KeyError, TypeError):
        return "The stored answer could not be read; search again."


# saving and finding again ------------------------------------------------------------
def on_save(
    clicks: int, name_text: Any, plan: Store, lake: Lake, history: Store, *, data_dir: Path | None
) -> tuple[Any, Any]:
    msg = save_plan(name_text, plan, lake, history, data_dir)
    try:
        return msg, saved_options(data_dir)
    except ValueError as exc:
        return f"{msg} The list of saved plans could not be read: {exc}", no_update


def on_saved_refresh(tab: str | None, *, data_dir: Path | None) -> tuple[Any, Any]:
    """Read the list of saved plans when the view is opened."""
    if tab != ids.TAB_PLANS:
        return no_update, no_update
    try:
        return saved_options(data_dir), ""
    except ValueError as exc:
        return [], f"The saved plans could not be read: {exc}"


def on_saved_select(name: str | None, lake: Lake, history: Store, *, data_dir: Path | None) -> Any:
    return saved_details(name, lake, history, data_dir) if name else ""


def on_load_saved(clicks: int, name: str | None, plan: Store, *, data_dir: Path | None) -> tuple[Any, str]:
    if not name:
        return no_update, "Choose a saved plan first."
    data, msg = load_saved(name, plan, data_dir)
    return (no_update if data is None else data), msg


# exports ------------------------------------------------------------------------------
def on_export(
    data: Store, precaution: Store, plan: Store, lake: Lake, history: Store, **_clicks: int
) -> tuple[Any, str]:
    why = is_stale(data, plan, _current(lake, history))
    if why:
        return no_update, f"Not exported: the results are out of date ({why}). Run the plan again first."
    return export(ctx.triggered_id, data, precaution)


def on_new_results(data: Store) -> str:
    """A new run clears the export message of the last one."""
    return ""


# ---------------------------------------------------------------------------------------
def _register_form(app: Dash) -> None:
    app.callback(
        output=[Output(g, "style") for g in ids.PLAN_LOAD_GROUPS.values()],
        inputs={"kind": Input(ids.PLAN_FORM["load_kind"], "value")},
    )(on_load_kind)
    app.callback(
        output=[
            Output(ids.PLAN_LAKE_NOTE, "children"),
            Output(ids.PLAN_FORM["load_from"], "placeholder"),
            Output(ids.PLAN_SAVE_NAME, "placeholder"),
        ],
        inputs={"tab": Input(ids.VIEW_TABS, "value"), "lake": Input(ids.LAKE_STORE, "data")},
        state={"history": State(ids.HISTORY_STORE, "data"), "fit": State(ids.FIT_STORE, "data")},
    )(on_lake_note)
    app.callback(
        output=[
            Output(ids.PLAN_STORE, "data"),
            Output(ids.PLAN_EDITING, "data"),
            Output(ids.PLAN_LIST, "rowData", allow_duplicate=True),
            Output(ids.PLAN_LIST, "selectedRows"),
            *[Output(ids.PLAN_FORM[k], "value") for k in FORM_KEYS],
            *[Output(ids.PLAN_MESSAGES[s], "children") for s in SECTIONS],
            Output(ids.PLAN_STATUS, "children"),
            Output(ids.PLAN_UPDATE, "disabled"),
            Output(ids.PLAN_UPDATE, "children"),
        ],
        inputs={
            "add": Input(ids.PLAN_ADD, "n_clicks"),
            "update": Input(ids.PLAN_UPDATE, "n_clicks"),
            "edit": Input(ids.PLAN_EDIT, "n_clicks"),
            "duplicate": Input(ids.PLAN_DUPLICATE, "n_clicks"),
            "delete": Input(ids.PLAN_DELETE, "n_clicks"),
            "new": Input(ids.PLAN_NEW, "n_clicks"),
        },
        state={
            "values": {k: State(ids.PLAN_FORM[k], "value") for k in FORM_KEYS},
            "selected": State(ids.PLAN_LIST, "selectedRows"),
            "plan": State(ids.PLAN_STORE, "data"),
            "editing": State(ids.PLAN_EDITING, "data"),
            "lake": State(ids.LAKE_STORE, "data"),
            "history": State(ids.HISTORY_STORE, "data"),
        },
        prevent_initial_call=True,
    )(on_plan_action)
    app.callback(
        output=[
            Output(ids.PLAN_LIST, "rowData"),
            Output(ids.PLAN_PREC_SCENARIO, "options"),
            Output(ids.PLAN_PREC_SCENARIO, "value"),
        ],
        inputs={"plan": Input(ids.PLAN_STORE, "data")},
        state={"chosen": State(ids.PLAN_PREC_SCENARIO, "value")},
    )(on_plan_store)


def _register_run(app: Dash, folder: Path) -> None:
    app.callback(
        output=[Output(ids.PLAN_RUN_REQUEST, "data"), Output(ids.PLAN_RUN_MESSAGE, "children")],
        inputs={"clicks": Input(ids.PLAN_RUN, "n_clicks")},
        state={"plan": State(ids.PLAN_STORE, "data")},
        prevent_initial_call=True,
    )(partial(on_run_request, folder=folder))

    def run(
        set_progress: SetProgress,
        request: Store,
        plan: Store,
        lake: Lake,
        history: Store,
        fit: Store = None,
        both: list[str] | None = None,
        values: Mapping[str, Any] | None = None,
        pool_values: Mapping[str, Any] | None = None,
    ) -> tuple[Any, str]:
        return run_plan(
            set_progress,
            request,
            plan,
            lake,
            history,
            folder=folder,
            fit=fit,
            both=both,
            values=values,
            pool_values=pool_values,
        )

    app.callback(
        output=[
            Output(ids.PLAN_RESULTS_STORE, "data"),
            Output(ids.PLAN_RUN_MESSAGE, "children", allow_duplicate=True),
        ],
        inputs={"request": Input(ids.PLAN_RUN_REQUEST, "data")},
        state={
            "plan": State(ids.PLAN_STORE, "data"),
            "lake": State(ids.LAKE_STORE, "data"),
            "history": State(ids.HISTORY_STORE, "data"),
            "fit": State(ids.FIT_STORE, "data"),
            "both": State(ids.PLAN_BOTH_MODELS, "value"),
            "values": {f: State(ids.FIELDS[f][0], "value") for f in FIELD_RULES},
            "pool_values": {f: State(ids.TWO_POOL_FIELDS[f][0], "value") for f in TWO_POOL_RULES},
        },
        background=True,
        progress=[Output(ids.PLAN_PROGRESS, "value"), Output(ids.PLAN_PROGRESS_TEXT, "children")],
        running=[
            (Output(ids.PLAN_RUN, "disabled"), True, False),
            (Output(ids.PLAN_CANCEL, "disabled"), False, True),
            (Output(ids.PLAN_PROGRESS, "style"), {}, {"display": "none"}),
        ],
        interval=300,
        prevent_initial_call=True,
    )(run)
    app.callback(
        output=[
            Output(ids.PLAN_RUN_MESSAGE, "children", allow_duplicate=True),
            Output(ids.PLAN_PREC_MESSAGE, "children", allow_duplicate=True),
        ],
        inputs={"clicks": Input(ids.PLAN_CANCEL, "n_clicks")},
        state={"run": State(ids.PLAN_RUN_REQUEST, "data"), "prec": State(ids.PLAN_PRECAUTION_REQUEST, "data")},
        prevent_initial_call=True,
    )(partial(on_cancel, folder=folder))


def _register_results(app: Dash) -> None:
    app.callback(
        output=[
            Output(ids.PLAN_TABLE, "columnDefs"),
            Output(ids.PLAN_TABLE, "rowData"),
            Output(ids.PLAN_TRAJECTORY_GRAPH, "figure"),
            Output(ids.PLAN_CLEAR_GRAPH, "figure"),
            Output(ids.PLAN_RECOVERY_GRAPH, "figure"),
            Output(ids.PLAN_LOAD_GRAPH, "figure"),
        ],
        inputs={
            "data": Input(ids.PLAN_RESULTS_STORE, "data"),
            "meeting_value": Input(ids.MEETING_TOGGLE, "value"),
            "tab": Input(ids.VIEW_TABS, "value"),
        },
    )(on_results)
    app.callback(
        output=Output(ids.PLAN_RESULTS_NOTE, "children"),
        inputs={"data": Input(ids.PLAN_RESULTS_STORE, "data"), "tab": Input(ids.VIEW_TABS, "value")},
        state={
            "lake": State(ids.LAKE_STORE, "data"),
            "history": State(ids.HISTORY_STORE, "data"),
            "fit": State(ids.FIT_STORE, "data"),
        },
    )(on_results_note)
    app.callback(
        output=[Output(ids.PLAN_DOWNLOAD, "data"), Output(ids.PLAN_EXPORT_MESSAGE, "children")],
        inputs={
            "report": Input(ids.PLAN_EXPORT_REPORT, "n_clicks"),
            "trajectories": Input(ids.PLAN_EXPORT_TRAJECTORIES, "n_clicks"),
            "table": Input(ids.PLAN_EXPORT_TABLE, "n_clicks"),
        },
        state={
            "data": State(ids.PLAN_RESULTS_STORE, "data"),
            "precaution": State(ids.PLAN_PRECAUTION_STORE, "data"),
            "plan": State(ids.PLAN_STORE, "data"),
            "lake": State(ids.LAKE_STORE, "data"),
            "history": State(ids.HISTORY_STORE, "data"),
        },
        prevent_initial_call=True,
    )(on_export)
    app.callback(
        output=Output(ids.PLAN_EXPORT_MESSAGE, "children", allow_duplicate=True),
        inputs={"data": Input(ids.PLAN_RESULTS_STORE, "data")},
        prevent_initial_call=True,
    )(on_new_results)
    app.callback(
        output=Output(ids.PLAN_STALE, "children"),
        inputs={
            "data": Input(ids.PLAN_RESULTS_STORE, "data"),
            "plan": Input(ids.PLAN_STORE, "data"),
            "lake": Input(ids.LAKE_STORE, "data"),
            "tab": Input(ids.VIEW_TABS, "value"),
        },
        state={"history": State(ids.HISTORY_STORE, "data")},
    )(on_stale)


def _register_precaution(app: Dash, folder: Path) -> None:
    app.callback(
        output=[Output(ids.PLAN_PRECAUTION_REQUEST, "data"), Output(ids.PLAN_PREC_MESSAGE, "children")],
        inputs={"clicks": Input(ids.PLAN_PREC_BUTTON, "n_clicks")},
        state={
            "scenario_name": State(ids.PLAN_PREC_SCENARIO, "value"),
            "years_text": State(ids.PLAN_PREC_YEARS, "value"),
            "percent_text": State(ids.PLAN_PREC_PERCENT, "value"),
            "plan": State(ids.PLAN_STORE, "data"),
            "lake": State(ids.LAKE_STORE, "data"),
            "history": State(ids.HISTORY_STORE, "data"),
            "fit": State(ids.FIT_STORE, "data"),
        },
        prevent_initial_call=True,
    )(partial(on_precaution_request, folder=folder))

    def precaution(set_progress: SetProgress, request: Store) -> tuple[Any, str]:
        return run_precaution(set_progress, request, folder=folder)

    app.callback(
        output=[
            Output(ids.PLAN_PRECAUTION_STORE, "data"),
            Output(ids.PLAN_PREC_MESSAGE, "children", allow_duplicate=True),
        ],
        inputs={"request": Input(ids.PLAN_PRECAUTION_REQUEST, "data")},
        background=True,
        progress=[Output(ids.PLAN_PREC_PROGRESS_TEXT, "children")],
        running=[(Output(ids.PLAN_PREC_BUTTON, "disabled"), True, False)],
        interval=300,
        prevent_initial_call=True,
    )(precaution)
    app.callback(
        output=Output(ids.PLAN_PREC_RESULT, "children"),
        inputs={"data": Input(ids.PLAN_PRECAUTION_STORE, "data")},
        state={"lake": State(ids.LAKE_STORE, "data"), "history": State(ids.HISTORY_STORE, "data")},
    )(on_precaution_store)


def _register_saved(app: Dash, data_dir: Path | None) -> None:
    app.callback(
        output=[Output(ids.PLAN_SAVE_MESSAGE, "children"), Output(ids.PLAN_SAVED_LIST, "options")],
        inputs={"clicks": Input(ids.PLAN_SAVE, "n_clicks")},
        state={
            "name_text": State(ids.PLAN_SAVE_NAME, "value"),
            "plan": State(ids.PLAN_STORE, "data"),
            "lake": State(ids.LAKE_STORE, "data"),
            "history": State(ids.HISTORY_STORE, "data"),
        },
        prevent_initial_call=True,
    )(partial(on_save, data_dir=data_dir))
    app.callback(
        output=[
            Output(ids.PLAN_SAVED_LIST, "options", allow_duplicate=True),
            Output(ids.PLAN_SAVED_DETAILS, "children", allow_duplicate=True),
        ],
        inputs={"tab": Input(ids.VIEW_TABS, "value")},
        prevent_initial_call="initial_duplicate",
    )(partial(on_saved_refresh, data_dir=data_dir))
    app.callback(
        output=Output(ids.PLAN_SAVED_DETAILS, "children"),
        inputs={"name": Input(ids.PLAN_SAVED_LIST, "value")},
        state={"lake": State(ids.LAKE_STORE, "data"), "history": State(ids.HISTORY_STORE, "data")},
        prevent_initial_call=True,
    )(partial(on_saved_select, data_dir=data_dir))
    app.callback(
        output=[
            Output(ids.PLAN_STORE, "data", allow_duplicate=True),
            Output(ids.PLAN_SAVE_MESSAGE, "children", allow_duplicate=True),
        ],
        inputs={"clicks": Input(ids.PLAN_LOAD_SAVED, "n_clicks")},
        state={"name": State(ids.PLAN_SAVED_LIST, "value"), "plan": State(ids.PLAN_STORE, "data")},
        prevent_initial_call=True,
    )(partial(on_load_saved, data_dir=data_dir))


def register(app: Dash, data_dir: Path | None) -> None:
    """Register the plans view's callbacks; saved scenarios live in ``data_dir`` (see model.store)."""
    folder = cancel_folder()
    _register_form(app)
    _register_run(app, folder)
    _register_results(app)
    _register_precaution(app, folder)
    _register_saved(app, data_dir)
