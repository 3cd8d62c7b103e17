"""Callbacks of the region view: files, the screen (in the background), the table and plane, opening a lake."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import Dash, Input, Output, State, ctx, html, no_update
from turnback.model.screening import screen_many

from ... import ids
from ...background import ProgressReporter, SetProgress
from ...theme import is_meeting
from ...vocabulary import REGIME_NAMES
from ..record.fit import parse_replicates
from .export import export
from .figures import exponent_choices, plane_figure, plane_note, regime_counts, table_columns, table_rows
from .files import read_files, update_files
from .results import MAX_LAKES, SEED, find_row, lake_to_open, ranked, region_to_store

_TRIGGERS = {ids.REGION_LAKES_UPLOAD: "lakes", ids.REGION_RECORDS_UPLOAD: "records", ids.REGION_DEMO: "demo"}


def on_files(
    trigger: str | None,
    lakes: Any = None,
    lakes_name: Any = None,
    records: Any = None,
    records_name: Any = None,
    files: Mapping[str, Any] | None = None,
) -> tuple[Any, Any, str]:
    """Take the upload (or the demo region) that fired; see :func:`files.update_files`."""
    kind = _TRIGGERS.get(trigger or "")
    if kind == "demo":
        return update_files("demo", None, None, None, files)
    if kind == "lakes":
        return update_files("upload", "lakes", lakes, lakes_name, files)
    if kind == "records":
        return update_files("upload", "records", records, records_name, files)
    return no_update, no_update, ""


def run_screen(set_progress: SetProgress, clicks: int, files: Any, replicates: Any) -> tuple[Any, str]:
    """Screen every lake of the files taken, in this process (background callback).

    The lakes are screened one after another by
    :func:`turnback.model.screening.screen_many`, the per-lake screen of
    ``turnback screen``, with its default seed; no Dask cluster is started
    for a click.  A refused file or a batch with no lake screened leaves the
    last results as they were.
    """
    if not clicks:
        return no_update, ""
    n_rep, rep_msg = parse_replicates(replicates)
    if n_rep is None:
        return no_update, rep_msg
    region, message = read_files(files)
    if region is None:
        return no_update, f"{message} The lakes on show are unchanged."
    if len(region.entries) > MAX_LAKES:
        return no_update, (
            f"The lake table has {len(region.entries):,} lakes; the dashboard screens up to {MAX_LAKES:,}. "
            "Split it, or use 'turnback screen' (any number of lakes, on a Dask cluster too)."
        )
    progress = ProgressReporter(set_progress)
    progress.show(0, f"screening {len(region.lakes)} lakes")
    outcomes = screen_many(region.lakes, replicates=n_rep, rng=SEED, progress=progress.fraction)
    names = [f["name"] for f in (files.get("lakes"), files.get("records")) if f]
    store = region_to_store(region, outcomes, source=" + ".join(names), replicates=n_rep)
    if not store["lakes"]:
        first = store["failed"][0] if store["failed"] else {"lake_id": "?", "message": "no lakes"}
        progress.show(0, "no lake screened")
        return no_update, (
            f"No lake could be screened, so the lakes on show are unchanged; lake {first['lake_id']}: "
            f"{first['message']}"
        )
    progress.show(100, f"done: {len(store['lakes'])} lakes screened")
    return store, ""


def on_cancel(clicks: int) -> tuple[Any, Any]:
    """Say that the screen was stopped (Dash ends the background job)."""
    if not clicks:
        return no_update, no_update
    return "Screen cancelled: the lakes on show are unchanged.", "cancelled"


def summary(store: Mapping[str, Any], meeting: bool) -> str:
    rows = store.get("lakes", [])
    counts = regime_counts(rows)
    kinds = ", ".join(f"{n} {REGIME_NAMES[k][1 if meeting else 0]}" for k, n in counts.items())
    past = sum(1 for r in rows if r.get("margin_kg_yr") is not None and r["margin_kg_yr"] < 0)
    n_fit = sum(1 for r in rows if r.get("fitted"))
    head = f"{store.get('source', '')}, screened {store.get('run_at', '')}: {len(rows)} lakes ({kinds})"
    if meeting:
        return f"{head}. {past} already take in more than their tipping point."
    return (
        f"{head}; {n_fit} fitted with {store.get('replicates')} bootstrap replicates (seed {store.get('seed')}). "
        f"{past} are past their tipping load. Loads in kg/yr."
    )


def failed_list(store: Mapping[str, Any], meeting: bool) -> list[Any]:
    """The lakes not screened with what to fix, the notes of the reader, and each lake's warnings."""
    out: list[Any] = []
    failed = store.get("failed") or []
    if failed:
        out += [
            html.H3(f"Not screened ({len(failed)}): what to fix"),
            html.Ul([html.Li(f"{f['lake_id']}: {f['message']}") for f in failed], className="problem-list"),
        ]
    warned = [r for r in store.get("lakes", []) if r.get("warnings")]
    if warned and not meeting:
        out.append(
            html.Details(
                [
                    html.Summary(f"Warnings on {len(warned)} lakes (click to show)"),
                    html.Ul(
                        [html.Li(f"{r['lake_id']}: {' '.join(r['warnings'])}") for r in warned],
                        className="problem-list",
                    ),
                ]
            )
        )
    if store.get("notes") and not meeting:
        out += [html.Ul([html.Li(f"Note: {n}") for n in store["notes"]], className="problem-list")]
    return out


def on_results(store: Mapping[str, Any] | None, meeting_value: list[str] | None, tab: str | None) -> dict[str, Any]:
    """The ranked table, its summary, the lakes not screened and the exponents offered for the plane."""
    if tab != ids.TAB_REGION:
        return {k: no_update for k in ("rows", "columns", "summary", "failed", "options", "exponent")}
    meeting = is_meeting(meeting_value)
    if not store or not store.get("lakes"):
        return {"rows": [], "columns": table_columns(meeting), "summary": "No lakes screened yet.", "failed": [],
                "options": [], "exponent": None}  # fmt: skip
    choices = exponent_choices(store["lakes"])
    options = [
        {"label": f" q = {q:g} ({n} lakes)" if not meeting else f" {q:g} ({n} lakes)", "value": q} for q, n in choices
    ]
    return {
        "rows": table_rows(ranked(store["lakes"]), meeting),
        "columns": table_columns(meeting),
        "summary": summary(store, meeting),
        "failed": failed_list(store, meeting),
        "options": options,
        "exponent": choices[0][0],
    }


def on_plane(
    store: Mapping[str, Any] | None, exponent: Any, meeting_value: list[str] | None, tab: str | None
) -> tuple[Any, Any]:
    """The screened lakes on the regime plane, regions drawn for the chosen exponent."""
    if tab != ids.TAB_REGION:
        return no_update, no_update
    meeting = is_meeting(meeting_value)
    rows = (store or {}).get("lakes") or []
    if not rows:
        return plane_figure([], None, meeting=meeting), ""
    q = float(exponent) if isinstance(exponent, int | float) and 1.0 <= exponent <= 50.0 else None
    q = q if q is not None else exponent_choices(rows)[0][0]
    return plane_figure(rows, q, meeting=meeting), plane_note(rows, q, meeting)


def open_lake(trigger: str | None, selected: Any, click: Any, store: Mapping[str, Any] | None) -> tuple[Any, ...]:
    """Open the lake chosen in the table or on the plane in "The lake now", as a fitted lake is put in use.

    Its parameters and profile go to the lake store the lake view reads,
    and the tab switches; the table's selection and the plane's click are
    cleared, so choosing the same lake again opens it again.
    """
    nothing = (no_update, no_update, no_update, no_update, no_update)
    lake_id: Any = None
    if trigger == ids.REGION_TABLE and isinstance(selected, list) and selected and isinstance(selected[0], dict):
        lake_id = selected[0].get("lake_id")
    elif trigger == ids.REGION_GRAPH and isinstance(click, dict):
        points = click.get("points") or []
        data = points[0].get("customdata") if points and isinstance(points[0], dict) else None
        lake_id = data[0] if isinstance(data, list) and data else None
    if lake_id is None:
        return nothing
    row = find_row(store, lake_id)
    if row is None:
        return no_update, no_update, f"Lake {lake_id} is not among the lakes on show.", [], None
    lake, message = lake_to_open(row)
    if lake is None:
        return no_update, no_update, message, [], None
    return lake, ids.TAB_LAKE, f"Opened {row.get('name') or lake_id} in 'The lake now'.", [], None


def files_changed(demo: Any = None, **files: Any) -> tuple[Any, Any, str]:
    """The upload callback: which input fired comes from Dash's context."""
    return on_files(ctx.triggered_id, **files)


def lake_chosen(selected: Any = None, click: Any = None, store: Mapping[str, Any] | None = None) -> tuple[Any, ...]:
    """The open callback: which input fired comes from Dash's context."""
    return open_lake(ctx.triggered_id, selected, click, store)


def export_asked(csv: Any = None, html_: Any = None, store: Mapping[str, Any] | None = None) -> tuple[Any, str]:
    """The export callback: which button fired comes from Dash's context."""
    return export(ctx.triggered_id, store)


def register(app: Dash) -> None:
    app.callback(
        output=[
            Output(ids.REGION_FILES, "data"),
            Output(ids.REGION_FILES_NOTE, "children"),
            Output(ids.REGION_MESSAGE, "children"),
        ],
        inputs={
            "lakes": Input(ids.REGION_LAKES_UPLOAD, "contents"),
            "records": Input(ids.REGION_RECORDS_UPLOAD, "contents"),
            "demo": Input(ids.REGION_DEMO, "n_clicks"),
        },
        state={
            "lakes_name": State(ids.REGION_LAKES_UPLOAD, "filename"),
            "records_name": State(ids.REGION_RECORDS_UPLOAD, "filename"),
            "files": State(ids.REGION_FILES, "data"),
        },
        prevent_initial_call=True,
    )(files_changed)
    app.callback(
        output=[
            Output(ids.REGION_MESSAGE, "children", allow_duplicate=True),
            Output(ids.REGION_PROGRESS_TEXT, "children", allow_duplicate=True),
        ],
        inputs={"clicks": Input(ids.REGION_CANCEL, "n_clicks")},
        prevent_initial_call=True,
    )(on_cancel)
    app.callback(
        output={
            "rows": Output(ids.REGION_TABLE, "rowData"),
            "columns": Output(ids.REGION_TABLE, "columnDefs"),
            "summary": Output(ids.REGION_SUMMARY, "children"),
            "failed": Output(ids.REGION_FAILED, "children"),
            "options": Output(ids.REGION_EXPONENT, "options"),
            "exponent": Output(ids.REGION_EXPONENT, "value"),
        },
        inputs={
            "store": Input(ids.REGION_STORE, "data"),
            "meeting_value": Input(ids.MEETING_TOGGLE, "value"),
            "tab": Input(ids.VIEW_TABS, "value"),
        },
    )(on_results)
    app.callback(
        output=[Output(ids.REGION_GRAPH, "figure"), Output(ids.REGION_PLANE_NOTE, "children")],
        inputs={
            "store": Input(ids.REGION_STORE, "data"),
            "exponent": Input(ids.REGION_EXPONENT, "value"),
            "meeting_value": Input(ids.MEETING_TOGGLE, "value"),
            "tab": Input(ids.VIEW_TABS, "value"),
        },
    )(on_plane)
    app.callback(
        output=[
            Output(ids.LAKE_STORE, "data", allow_duplicate=True),
            Output(ids.VIEW_TABS, "value"),
            Output(ids.REGION_OPEN_MESSAGE, "children"),
            Output(ids.REGION_TABLE, "selectedRows"),
            Output(ids.REGION_GRAPH, "clickData"),
        ],
        inputs={"selected": Input(ids.REGION_TABLE, "selectedRows"), "click": Input(ids.REGION_GRAPH, "clickData")},
        state={"store": State(ids.REGION_STORE, "data")},
        prevent_initial_call=True,
    )(lake_chosen)
    app.callback(
        output=[Output(ids.REGION_DOWNLOAD, "data"), Output(ids.REGION_EXPORT_MESSAGE, "children")],
        inputs={"csv": Input(ids.REGION_EXPORT_CSV, "n_clicks"), "html_": Input(ids.REGION_EXPORT_HTML, "n_clicks")},
        state={"store": State(ids.REGION_STORE, "data")},
        prevent_initial_call=True,
    )(export_asked)
    app.callback(
        output=[Output(ids.REGION_STORE, "data"), Output(ids.REGION_MESSAGE, "children", allow_duplicate=True)],
        inputs={"clicks": Input(ids.REGION_RUN, "n_clicks")},
        state={"files": State(ids.REGION_FILES, "data"), "replicates": State(ids.REGION_REPLICATES, "value")},
        background=True,
        progress=[Output(ids.REGION_PROGRESS, "value"), Output(ids.REGION_PROGRESS_TEXT, "children")],
        running=[
            (Output(ids.REGION_RUN, "disabled"), True, False),
            (Output(ids.REGION_CANCEL, "disabled"), False, True),
            (Output(ids.REGION_PROGRESS, "style"), {}, {"display": "none"}),
        ],
        cancel=[Input(ids.REGION_CANCEL, "n_clicks")],
        interval=300,
        prevent_initial_call=True,
    )(run_screen)
