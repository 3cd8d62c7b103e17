"""Callbacks of the monitoring-record view: upload, fit (in the background), warning signs."""

from __future__ import annotations

import base64
import binascii
import math
from typing import Any

import numpy as np
from dash import Dash, Input, Output, State, html, no_update
from turnback.model.early_warning import early_warning
from turnback.model.fit import FitResult, fit_monitoring
from turnback.model.io.monitoring_csv import MonitoringError, parse_monitoring
from turnback.model.io.resources import DEMO_RECORD_NAME, demo_record_bytes
from turnback.model.params import LakeProfile
from turnback.model.record import MonitoringSeries

from . import ids
from .figures_record import clarity_figure, record_figure, warning_figure
from .session import Lake, is_meeting, lake_from_store, lake_key, lake_to_store

CLOUD_MAX = 400  # bootstrap lakes kept for the regime map
FIT_SEED = 20261202


def record_to_store(series: MonitoringSeries, name: str) -> dict[str, Any]:
    def col(a: Any) -> list[float | None] | None:
        if a is None:
            return None
        return [None if not math.isfinite(v) else float(v) for v in np.asarray(a, dtype=float)]

    return {
        "name": name,
        "year": [int(y) for y in series.years],
        "load_kg": [float(v) for v in series.load_kg_per_yr],
        "tp_ug_l": [float(v) for v in series.tp_ug_l],
        "secchi_m": col(series.secchi_m),
        "chl_ug_l": col(series.chl_ug_l),
    }


def series_from_store(record: dict[str, Any]) -> MonitoringSeries:
    def arr(key: str) -> Any:
        v = record.get(key)
        return None if v is None else np.array([np.nan if x is None else x for x in v], dtype=float)

    return MonitoringSeries(
        years=np.asarray(record["year"], dtype=np.int64),
        load_kg_per_yr=np.asarray(record["load_kg"], dtype=float),
        tp_ug_l=np.asarray(record["tp_ug_l"], dtype=float),
        secchi_m=arr("secchi_m"),
        chl_ug_l=arr("chl_ug_l"),
    )


def demo_record() -> dict[str, Any] | None:
    """The invented record of the demo lake, or None if the sample file is missing."""
    try:
        return record_to_store(parse_monitoring(demo_record_bytes()), DEMO_RECORD_NAME)
    except (OSError, ValueError):
        return None


def on_upload(contents: str | None, filename: str | None) -> tuple[Any, str]:
    """Read an uploaded CSV; a bad file gets a message and the record on show stays."""
    if not contents:
        return no_update, ""
    name = filename or "the file"
    try:
        _, b64 = contents.split(",", 1)
        raw = base64.b64decode(b64, validate=True)
    except (ValueError, binascii.Error):
        return no_update, f"{name}: the upload could not be read; choose the file again."
    try:
        series = parse_monitoring(raw)
    except MonitoringError as exc:
        return no_update, f"{name} was not loaded, and the record on show is unchanged. {exc}"
    return record_to_store(series, name), ""


def on_record(record: dict[str, Any] | None, lake: Lake, meeting_value: list[str] | None) -> tuple[Any, ...]:
    """Figures, warning signs and summary of the record on show."""
    _, profile = lake_from_store(lake)
    volume = f"{profile.volume_m3:.6g}"
    if not record:
        return "No record loaded yet.", {}, {}, {}, "", volume
    meeting = is_meeting(meeting_value)
    n = len(record["year"])
    extra = [c for c in ("secchi_m", "chl_ug_l") if record.get(c) is not None]
    summary = (
        f"On show: {record['name']}, {n} years ({record['year'][0]}–{record['year'][-1]}), "
        f"TP {min(record['tp_ug_l']):.0f}–{max(record['tp_ug_l']):.0f} µg/L, "
        f"load {min(record['load_kg']):.0f}–{max(record['load_kg']):.0f} kg/yr"
        + (f"; also {', '.join(extra)}." if extra else ".")
    )
    try:
        ew = early_warning(record["tp_ug_l"], record["year"], n_surrogates=500, rng=FIT_SEED)
        words = [html.Div(i.summary, className="readout-row") for i in ew.indicators]
        words += [html.Div(note, className="hint") for note in ew.notes]
        wfig: Any = warning_figure(ew, meeting=meeting)
    except ValueError as exc:
        words, wfig = [html.Div(f"No warning signs computed: {exc}", className="readout-row")], {}
    return summary, record_figure(record, meeting=meeting), clarity_figure(record, meeting=meeting), wfig, words, volume


def _parse_volume(text: Any) -> tuple[float | None, str]:
    try:
        v = float(str(text).replace(",", "").strip())
    except (TypeError, ValueError):
        return None, "Lake volume: enter a number of cubic metres, such as 2.79e7."
    if not math.isfinite(v) or v <= 0:
        return None, "Lake volume must be a number of cubic metres greater than 0."
    return v, ""


def _band_text(name: str, band: dict[str, Any]) -> str:
    if band["low"] is None or band["high"] is None:
        return f"{name}: the record cannot place it."
    est = "not constrained" if band["estimate"] is None else f"{band['estimate']:,.0f}"
    return f"{name}: {est} kg/yr (90% interval {band['low']:,.0f} to {band['high']:,.0f})"


def _se(v: float | None) -> str:
    return "not available" if v is None or not math.isfinite(v) else f"{v:.2g}"


def fit_summary(fit: dict[str, Any]) -> html.Div:
    """The fit in a few lines and a small table."""
    p = fit["params"]
    se = fit.get("se", {})
    rows = [
        html.Tr([html.Th("parameter"), html.Th("estimate"), html.Th("standard error")]),
        *[
            html.Tr([html.Td(label), html.Td(f"{p[key]:.4g}"), html.Td(_se(se.get(key)))])
            for key, label in (
                ("loss_rate", "loss rate s [yr⁻¹]"),
                ("recycling_max", "maximum recycling r [kg yr⁻¹]"),
                ("recycling_half", "half-saturation m [kg]"),
                ("recycling_exponent", "exponent q [–]"),
            )
        ],
    ]
    probs = fit["regime_probability"]
    prob_text = ", ".join(f"{k} {100 * v:.0f}%" for k, v in sorted(probs.items(), key=lambda kv: -kv[1]))
    return html.Div(
        [
            html.Div(
                f"Fitted to {fit['record_name']} with {fit['replicates']} bootstrap replicates.",
                className="readout-row",
            ),
            html.Table(rows),
            html.Div(_band_text("Tipping load", fit["tipping"]), className="readout-row", id="fit-tipping"),
            html.Div(_band_text("Recovery load", fit["recovery"]), className="readout-row", id="fit-recovery"),
            html.Div(f"Regime: {prob_text}.", className="readout-row", id="fit-regime"),
            *[html.Div(w, className="readout-row readout-warning") for w in fit["warnings"]],
            html.Div("The fitted lake is now the current lake: see 'The lake now'.", className="hint"),
        ]
    )


def fit_to_stores(result: FitResult, record: dict[str, Any], lake: Lake, volume: float) -> tuple[Lake, dict[str, Any]]:
    """The fitted lake (starting from the last observed year) and what the figures need of the fit."""
    _, old = lake_from_store(lake)
    base = old.name.split(" — fitted")[0]
    profile = LakeProfile(
        name=f"{base} — fitted to {record['name']}"[:120],
        area_km2=old.area_km2,
        volume_m3=volume,
        load_kg_per_yr=float(record["load_kg"][-1]),
    )
    new_lake = lake_to_store(result.params, profile)
    new_lake["start"] = {"year": int(record["year"][-1]), "p": float(profile.mass(record["tp_ug_l"][-1]))}
    d = result.to_dict()
    draws = result.draws
    cloud = draws.params[draws.used][:CLOUD_MAX]

    def band(b: Any) -> dict[str, Any]:
        return b.to_dict() | {"constrained": bool(b.constrained)}

    fit = {
        "lake_key": lake_key(new_lake),
        "record_name": record["name"],
        "params": d["params"],
        "se": {e.name: e.std_error for e in result.point.estimates},
        "tipping": band(result.tipping_load),
        "recovery": band(result.recovery_load),
        "regime_probability": d["regime_probability"],
        "warnings": list(result.warnings),
        "replicates": result.replicates,
        "cloud": cloud.tolist(),
        "observed": {"year": record["year"], "load": record["load_kg"], "tp": record["tp_ug_l"]},
    }
    return new_lake, fit


def run_fit(
    set_progress: Any, _clicks: int, record: dict[str, Any] | None, volume_text: Any, replicates: Any, lake: Lake
) -> tuple[Any, Any, Any, str]:
    """Fit the annual model to the record with a bootstrap; runs as a background callback."""
    if not record:
        return no_update, no_update, no_update, "Load a monitoring record first."
    volume, msg = _parse_volume(volume_text)
    if volume is None:
        return no_update, no_update, no_update, msg
    try:
        n_rep = int(replicates)
    except (TypeError, ValueError):
        return no_update, no_update, no_update, "Bootstrap replicates: enter a whole number from 100 to 20000."
    if not 100 <= n_rep <= 20000:
        return no_update, no_update, no_update, "Bootstrap replicates: enter a whole number from 100 to 20000."
    last = [-1]

    def progress(fraction: float, message: str) -> None:
        pct = int(100 * fraction)
        if pct != last[0]:
            last[0] = pct
            set_progress((str(pct), message))

    try:
        result = fit_monitoring(series_from_store(record), volume, replicates=n_rep, rng=FIT_SEED, progress=progress)
    except ValueError as exc:
        return no_update, no_update, no_update, f"The fit could not be made: {exc}"
    new_lake, fit = fit_to_stores(result, record, lake, volume)
    set_progress(("100", "done"))
    return fit, new_lake, fit_summary(fit), ""


def register(app: Dash) -> None:
    app.callback(
        Output(ids.RECORD_STORE, "data"),
        Output(ids.RECORD_MESSAGE, "children"),
        Input(ids.RECORD_UPLOAD, "contents"),
        State(ids.RECORD_UPLOAD, "filename"),
        prevent_initial_call=True,
    )(on_upload)
    app.callback(
        Output(ids.RECORD_SUMMARY, "children"),
        Output(ids.RECORD_GRAPH, "figure"),
        Output(ids.RECORD_CLARITY_GRAPH, "figure"),
        Output(ids.WARNING_GRAPH, "figure"),
        Output(ids.WARNING_WORDS, "children"),
        Output(ids.RECORD_VOLUME, "value"),
        Input(ids.RECORD_STORE, "data"),
        Input(ids.LAKE_STORE, "data"),
        Input(ids.MEETING_TOGGLE, "value"),
    )(on_record)
    app.callback(
        Output(ids.FIT_STORE, "data"),
        Output(ids.LAKE_STORE, "data", allow_duplicate=True),
        Output(ids.RECORD_FIT_RESULT, "children"),
        Output(ids.RECORD_MESSAGE, "children", allow_duplicate=True),
        Input(ids.RECORD_FIT_BUTTON, "n_clicks"),
        State(ids.RECORD_STORE, "data"),
        State(ids.RECORD_VOLUME, "value"),
        State(ids.RECORD_REPLICATES, "value"),
        State(ids.LAKE_STORE, "data"),
        background=True,
        progress=[Output(ids.RECORD_PROGRESS, "value"), Output(ids.RECORD_PROGRESS_TEXT, "children")],
        running=[
            (Output(ids.RECORD_FIT_BUTTON, "disabled"), True, False),
            (Output(ids.RECORD_CANCEL_BUTTON, "disabled"), False, True),
        ],
        cancel=[Input(ids.RECORD_CANCEL_BUTTON, "n_clicks")],
        interval=300,
        prevent_initial_call=True,
    )(run_fit)
