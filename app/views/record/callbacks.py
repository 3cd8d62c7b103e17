"""Callbacks of the monitoring-record view: upload, fit (in the background), warning signs."""

from __future__ import annotations

import base64
import binascii
from collections.abc import Mapping
from functools import lru_cache
from typing import Any

from dash import Dash, Input, Output, State, html, no_update
from turnback.model.early_warning import EarlyWarning, early_warning
from turnback.model.fit import fit_monitoring
from turnback.model.io.monitoring_csv import MonitoringError
from turnback.model.io.sample_csv import read_record

from ... import ids
from ...background import ProgressReporter, SetProgress
from ...store_checks import surrogate_count
from ...stores import lake_from_store, lake_key, record_to_store, series_from_store
from ...theme import is_meeting
from ...vocabulary import warning_sign_line
from .figures import clarity_figure, record_figure, warning_figure
from .fit import FIT_SEED, fit_summary, fit_to_stores, parse_replicates, parse_volume


def on_upload(contents: str | None, filename: str | None) -> tuple[Any, Any]:
    """Read an uploaded CSV in either format; a bad file gets a message and the record on show stays.

    A sample file (a ``date`` column) needs its loads in a ``load_kg`` column
    (each year's load on at least one of its rows); the annual means and their
    standard errors follow the default rules of :mod:`turnback.model.sample_means`.
    """
    if not contents:
        return no_update, ""
    name = filename or "the file"
    try:
        _, b64 = contents.split(",", 1)
        raw = base64.b64decode(b64, validate=True)
    except (ValueError, binascii.Error):
        return no_update, f"{name}: the upload could not be read; choose the file again."
    try:
        series = read_record(raw)
    except MonitoringError as exc:
        problems = exc.problems
        head = f"{name} was not loaded, and the record on show is unchanged."
        if len(problems) == 1:
            return no_update, f"{head} {problems[0]}"
        return no_update, [
            html.Div(f"{head} {len(problems)} problems, one a line:"),
            html.Ul([html.Li(p) for p in problems], className="problem-list"),
        ]
    return record_to_store(series, name), ""


def record_summary(record: Mapping[str, Any], meeting: bool = False) -> str:
    n = len(record["year"])
    extra = [c for c in ("secchi_m", "chl_ug_l") if record.get(c) is not None]
    if meeting:
        plain = {"secchi_m": "see-through depth", "chl_ug_l": "algae"}
        extra = [plain[c] for c in extra]
    samples = ""
    if record.get("n_samples"):
        few = [str(y) for y, f in zip(record["year"], record.get("few_samples") or [], strict=False) if f]
        samples = (
            f" Annual means of {sum(record['n_samples']):,} site visits in the growing season (May–October), with "
            + ("how sure each year is shown as bars" if meeting else "their standard errors as error bars")
            + (f"; fewer than 4 samples in {', '.join(few)} (flagged, wider bars)" if few else "")
            + "."
        )
    return (
        f"On show: {record['name']}, {n} years ({record['year'][0]}–{record['year'][-1]}), "
        f"TP {min(record['tp_ug_l']):.0f}–{max(record['tp_ug_l']):.0f} µg/L, "
        f"load {min(record['load_kg']):.0f}–{max(record['load_kg']):.0f} kg/yr"
        + (f"; also {', '.join(extra)}." if extra else ".")
        + samples
    )


@lru_cache(maxsize=16)
def _warning_signs_of(tp: tuple[float, ...], years: tuple[int, ...]) -> EarlyWarning | str:
    """The warning signs of one record, computed once per record (500 surrogates take about a second).

    Fewer surrogates for a long record (:func:`turnback.app.store_checks.surrogate_count`), so no
    record a browser sends can buy more than a bounded amount of work.
    """
    try:
        return early_warning(list(tp), list(years), n_surrogates=surrogate_count(len(years)), rng=FIT_SEED)
    except ValueError as exc:
        return str(exc)


def warning_signs(record: Mapping[str, Any], meeting: bool) -> tuple[list[html.Div], Any]:
    """The warning-sign words and figure of the record (a message and no figure when they cannot be computed)."""
    ew = _warning_signs_of(tuple(float(v) for v in record["tp_ug_l"]), tuple(int(y) for y in record["year"]))
    if isinstance(ew, str):
        return [html.Div(f"No warning signs computed: {ew}", className="readout-row")], {}
    words = [
        html.Div(warning_sign_line(i.name, i.tau, i.p_value, meeting, i.summary), className="readout-row")
        for i in ew.indicators
    ]
    if not meeting:
        words += [html.Div(note, className="hint") for note in ew.notes]
    return words, warning_figure(ew, meeting=meeting)


def on_record(
    record: Mapping[str, Any] | None,
    lake: Mapping[str, Any],
    meeting_value: list[str] | None,
    tab: str | None = ids.TAB_RECORD,
    typed: Any = None,
) -> dict[str, Any]:
    """Figures, warning signs and summary of the record on show (worked out when the view is open).

    The volume field gets the lake's volume only while it is empty: a volume the user typed is kept.
    """
    if tab != ids.TAB_RECORD:
        return {k: no_update for k in ("summary", "record", "clarity", "warning", "words", "volume")}
    _, profile = lake_from_store(lake)
    volume: Any = f"{profile.volume_m3:.6g}" if typed in (None, "") else no_update
    if not record:
        return {
            "summary": "No record loaded yet.",
            "record": {},
            "clarity": {},
            "warning": {},
            "words": "",
            "volume": volume,
        }
    meeting = is_meeting(meeting_value)
    words, wfig = warning_signs(record, meeting)
    return {
        "summary": record_summary(record, meeting),
        "record": record_figure(record, meeting=meeting),
        "clarity": clarity_figure(record, meeting=meeting),
        "warning": wfig,
        "words": words,
        "volume": volume,
    }


def run_fit(
    set_progress: SetProgress, clicks: int, record: Any, volume_text: Any, replicates: Any, lake: Any
) -> tuple[Any, str]:
    """Fit the annual model to the record with a bootstrap; runs as a background callback.

    The fit is proposed, not put in use: it goes to the fit store with its
    trust summary, and "Use this fitted lake" makes it the current lake.
    """
    if not record:
        return no_update, "Load a monitoring record first."
    volume, msg = parse_volume(volume_text)
    n_rep, rep_msg = parse_replicates(replicates)
    if volume is None or n_rep is None:
        return no_update, msg or rep_msg
    progress = ProgressReporter(set_progress)
    progress.show(0, "starting the fit")
    try:
        result = fit_monitoring(
            series_from_store(record), volume, replicates=n_rep, rng=FIT_SEED, progress=progress.fraction
        )
    except ValueError as exc:
        progress.show(0, "not fitted")
        return no_update, f"The fit could not be made: {exc}"
    _, fit = fit_to_stores(result, record, lake, volume)
    progress.show(100, "done")
    return fit, ""


def on_fit_shown(fit: Any, meeting_value: list[str] | None, lake: Mapping[str, Any]) -> tuple[Any, bool]:
    """The proposed fit in words, and whether "Use this fitted lake" can be pressed."""
    if not fit:
        return "", True
    in_use = fit.get("lake_key") == lake_key(lake)
    contradicts = bool(((fit.get("trust") or {}).get("start") or {}).get("contradicts"))
    return fit_summary(fit, is_meeting(meeting_value), in_use), in_use or contradicts or not fit.get("proposal")


def on_use_fit(clicks: int, fit: Any) -> tuple[Any, str]:
    """Put the proposed fitted lake in use."""
    if not clicks or not fit or not fit.get("proposal"):
        return no_update, ""
    if ((fit.get("trust") or {}).get("start") or {}).get("contradicts"):
        return no_update, "This fit contradicts its own record and is not put in use."
    return fit["proposal"], "The fitted lake is now in use: see 'The lake now' (its history starts at the last year)."


def on_fit_cancel(clicks: int) -> tuple[str, str]:
    """Say that the fit was stopped (Dash ends the background job)."""
    if not clicks:
        return no_update, no_update  # type: ignore[return-value]
    return "Fit cancelled: nothing was changed.", "cancelled"


def register(app: Dash) -> None:
    app.callback(
        output=[Output(ids.RECORD_STORE, "data"), Output(ids.RECORD_MESSAGE, "children")],
        inputs={"contents": Input(ids.RECORD_UPLOAD, "contents")},
        state={"filename": State(ids.RECORD_UPLOAD, "filename")},
        prevent_initial_call=True,
    )(on_upload)
    app.callback(
        output={
            "summary": Output(ids.RECORD_SUMMARY, "children"),
            "record": Output(ids.RECORD_GRAPH, "figure"),
            "clarity": Output(ids.RECORD_CLARITY_GRAPH, "figure"),
            "warning": Output(ids.WARNING_GRAPH, "figure"),
            "words": Output(ids.WARNING_WORDS, "children"),
            "volume": Output(ids.RECORD_VOLUME, "value"),
        },
        inputs={
            "record": Input(ids.RECORD_STORE, "data"),
            "lake": Input(ids.LAKE_STORE, "data"),
            "meeting_value": Input(ids.MEETING_TOGGLE, "value"),
            "tab": Input(ids.VIEW_TABS, "value"),
        },
        state={"typed": State(ids.RECORD_VOLUME, "value")},
    )(on_record)
    app.callback(
        output=[Output(ids.RECORD_FIT_RESULT, "children"), Output(ids.RECORD_USE_FIT, "disabled")],
        inputs={
            "fit": Input(ids.FIT_STORE, "data"),
            "meeting_value": Input(ids.MEETING_TOGGLE, "value"),
            "lake": Input(ids.LAKE_STORE, "data"),
        },
    )(on_fit_shown)
    app.callback(
        output=[Output(ids.LAKE_STORE, "data", allow_duplicate=True), Output(ids.RECORD_USE_MESSAGE, "children")],
        inputs={"clicks": Input(ids.RECORD_USE_FIT, "n_clicks")},
        state={"fit": State(ids.FIT_STORE, "data")},
        prevent_initial_call=True,
    )(on_use_fit)
    app.callback(
        output=[
            Output(ids.RECORD_MESSAGE, "children", allow_duplicate=True),
            Output(ids.RECORD_PROGRESS_TEXT, "children", allow_duplicate=True),
        ],
        inputs={"clicks": Input(ids.RECORD_CANCEL_BUTTON, "n_clicks")},
        prevent_initial_call=True,
    )(on_fit_cancel)
    app.callback(
        output=[
            Output(ids.FIT_STORE, "data"),
            Output(ids.RECORD_MESSAGE, "children", allow_duplicate=True),
        ],
        inputs={"clicks": Input(ids.RECORD_FIT_BUTTON, "n_clicks")},
        state={
            "record": State(ids.RECORD_STORE, "data"),
            "volume_text": State(ids.RECORD_VOLUME, "value"),
            "replicates": State(ids.RECORD_REPLICATES, "value"),
            "lake": State(ids.LAKE_STORE, "data"),
        },
        background=True,
        progress=[Output(ids.RECORD_PROGRESS, "value"), Output(ids.RECORD_PROGRESS_TEXT, "children")],
        running=[
            (Output(ids.RECORD_FIT_BUTTON, "disabled"), True, False),
            (Output(ids.RECORD_CANCEL_BUTTON, "disabled"), False, True),
            (Output(ids.RECORD_PROGRESS, "style"), {}, {"display": "none"}),
        ],
        cancel=[Input(ids.RECORD_CANCEL_BUTTON, "n_clicks")],
        interval=300,
        prevent_initial_call=True,
    )(run_fit)
