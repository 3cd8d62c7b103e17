"""Layout builders for the dashboard.  No callbacks here."""

from __future__ import annotations

import math
from typing import Any

from dash import dcc, html
from turnback.model.equilibrium import LakeAnalysis
from turnback.model.params import LakeParameters, LakeProfile

from . import ids, view_map, view_plans, view_record
from .layout_parts import graph_config
from .session import Lake, lake_from_store
from .validate import FIELD_RULES

CAUTION = (
    "These figures are scenario estimates from a simplified one-box model of lake phosphorus. "
    "They are not a water-safety or health assessment: follow local health authorities and their advisories. "
    "In-lake treatments need permits and licensed practice."
)
TREATMENT_CAUTION = (
    "Caution: chemical in-lake treatments (for example alum or other P binders, or dredging) need permits "
    "from the responsible authority and must be designed and applied by licensed practitioners. "
    "This tool only estimates the P mass involved."
)


def _nice(x: float) -> float:
    """Round up to 1, 2, 2.5 or 5 times a power of ten."""
    if x <= 0:
        return 1.0
    e = math.floor(math.log10(x))
    for f in (1.0, 2.0, 2.5, 5.0, 10.0):
        if f * 10**e >= x * (1 - 1e-12):
            return f * 10**e
    return 10.0 ** (e + 1)


def slider_config(analysis: LakeAnalysis, profile: LakeProfile) -> dict[str, Any]:
    """Slider max, step and marks: 0 to about twice the tipping load, with today's load marked."""
    if analysis.tipping_load is not None:
        top = 2.0 * analysis.tipping_load
    else:
        top = 2.0 * max(profile.load_kg_per_yr, float(analysis.curve.load.max()) / 2.0)
    top = max(top, 1.2 * profile.load_kg_per_yr, 1e-6)
    step = 10.0 ** math.floor(math.log10(top / 500.0))
    top = math.ceil(top / step) * step
    marks: dict[float, Any] = {0: "0", top: f"{top:,.0f}"}
    marks[profile.load_kg_per_yr] = {
        "label": f"today {profile.load_kg_per_yr:,.0f}",
        "style": {"color": "#5b4a8a", "fontWeight": "600"},
    }
    if analysis.tipping_load is not None:
        marks[analysis.tipping_load] = {"label": "tipping", "style": {"color": "#2d2d2d"}}
    if analysis.recovery_load is not None and analysis.recovery_load > 0:
        marks[analysis.recovery_load] = {"label": "recovery", "style": {"color": "#2d2d2d"}}
    return {"max": top, "step": step, "marks": marks}


def _field(name: str, value: float) -> html.Div:
    label, unit, *_ = FIELD_RULES[name]
    input_id, message_id = ids.FIELDS[name]
    return html.Div(
        [
            html.Label(f"{label}" + (f" [{unit}]" if unit else ""), htmlFor=input_id),
            dcc.Input(
                id=input_id,
                type="text",
                value=f"{value:g}",
                debounce=True,
                persistence=True,
                persistence_type="session",
                className="field-input",
            ),
            html.Div(id=message_id, className="field-message", role="alert"),
        ],
        className="field",
    )


def settings_panel(params: LakeParameters, profile: LakeProfile) -> html.Details:
    values = params.to_dict() | {
        "area_km2": profile.area_km2,
        "mean_depth_m": profile.mean_depth_m,
        "load_kg_yr": profile.load_kg_per_yr,
    }
    return html.Details(
        [
            html.Summary("Lake and model settings"),
            html.P(
                "Model: P[t+1] = P[t] + L − s·P[t] + r·P[t]^q / (m^q + P[t]^q), one step a year. "
                "Press Enter or leave a field to apply it; "
                "a wrong value is reported here and the last good lake stays.",
                className="hint",
            ),
            html.Div([_field(name, values[name]) for name in FIELD_RULES], className="field-grid"),
            html.Div(id=ids.SETTINGS_STATUS, className="settings-status"),
        ],
        id=ids.SETTINGS_PANEL,
        open=True,
        className="card settings",
    )


def build_layout(lake: Lake, record: dict[str, Any] | None = None) -> html.Div:
    params, profile = lake_from_store(lake)
    return html.Div(
        [
            dcc.Store(id=ids.LAKE_STORE, storage_type="session", data=lake),
            dcc.Store(id=ids.HISTORY_STORE, storage_type="session"),
            dcc.Store(id=ids.RECORD_STORE, storage_type="session", data=record),
            dcc.Store(id=ids.FIT_STORE, storage_type="session"),
            html.Header(
                [
                    html.Div(
                        [html.H1("Turnback"), html.Span(profile.name, id=ids.LAKE_TITLE, className="lake-name")],
                        className="title",
                    ),
                    dcc.Checklist(
                        id=ids.MEETING_TOGGLE,
                        options=[{"label": " Meeting view (large, plain words)", "value": "on"}],
                        value=[],
                        className="meeting-toggle",
                        persistence=True,
                        persistence_type="session",
                    ),
                ],
                className="top-bar",
            ),
            html.Div(CAUTION, className="caution-banner", role="note"),
            dcc.Tabs(
                id=ids.VIEW_TABS,
                value="lake",
                children=[
                    dcc.Tab(label="The lake now", value="lake"),
                    dcc.Tab(label="Monitoring record", value="record"),
                    dcc.Tab(label="Plans compared", value="plans"),
                    dcc.Tab(label="Regime map", value="map"),
                ],
                className="view-tabs",
                persistence=True,
                persistence_type="session",
            ),
            html.Div(
                [
                    html.Main(
                        [
                            html.Section(
                                [
                                    html.Div(
                                        [
                                            html.H2("What the lake is doing"),
                                            html.Div(id=ids.READOUT, className="readout"),
                                        ],
                                        className="card",
                                    ),
                                    html.Div(
                                        [
                                            html.H2("Take phosphorus out of the lake"),
                                            html.Div(id=ids.REMOVAL_NEEDED, className="readout-row"),
                                            html.Div(
                                                [
                                                    html.Label("P to remove [kg]", htmlFor=ids.REMOVAL_INPUT),
                                                    dcc.Input(
                                                        id=ids.REMOVAL_INPUT,
                                                        type="number",
                                                        min=0,
                                                        value=0,
                                                        className="removal-input",
                                                    ),
                                                    html.Button("Remove it now", id=ids.REMOVAL_BUTTON, n_clicks=0),
                                                ],
                                                className="control-row",
                                            ),
                                            html.Div(id=ids.REMOVAL_MESSAGE, className="field-message", role="alert"),
                                            html.P(TREATMENT_CAUTION, className="treatment-caution"),
                                        ],
                                        className="card",
                                    ),
                                ],
                                className="controls",
                            ),
                            html.Section(
                                [
                                    html.Div(
                                        [
                                            html.H2("Phosphorus load"),
                                            html.P(
                                                "Drag, use the arrow keys, or type a value (kg P per year).",
                                                className="hint",
                                            ),
                                            dcc.Slider(
                                                id=ids.LOAD_SLIDER,
                                                min=0,
                                                max=1,
                                                value=profile.load_kg_per_yr,
                                                updatemode="mouseup",
                                                className="load-slider",
                                            ),
                                            html.Div(
                                                [
                                                    html.Label("Years per change", htmlFor=ids.YEARS_INPUT),
                                                    dcc.Input(
                                                        id=ids.YEARS_INPUT,
                                                        type="number",
                                                        min=1,
                                                        max=200,
                                                        step=1,
                                                        value=5,
                                                        debounce=True,
                                                        className="years-input",
                                                    ),
                                                    html.Button("Let the years pass", id=ids.WAIT_BUTTON, n_clicks=0),
                                                    html.Button(
                                                        "Start the history again",
                                                        id=ids.RESET_BUTTON,
                                                        n_clicks=0,
                                                        className="secondary",
                                                    ),
                                                ],
                                                className="control-row",
                                            ),
                                            html.Div(id=ids.YEARS_MESSAGE, className="field-message", role="alert"),
                                        ],
                                        className="card",
                                    ),
                                    dcc.Graph(
                                        id=ids.EQUILIBRIUM_GRAPH,
                                        config=graph_config("turnback-equilibria"),
                                    ),
                                    dcc.Graph(
                                        id=ids.TIME_GRAPH,
                                        config=graph_config("turnback-history"),
                                    ),
                                ],
                                className="figures",
                            ),
                        ],
                        className="main-grid",
                    ),
                    settings_panel(params, profile),
                ],
                id=ids.VIEW_LAKE,
            ),
            html.Div(view_record.build_view(), id=ids.VIEW_RECORD, style={"display": "none"}),
            html.Div(view_plans.build_view(), id=ids.VIEW_PLANS, style={"display": "none"}),
            html.Div(view_map.build_view(), id=ids.VIEW_MAP, style={"display": "none"}),
            html.Footer(
                "Model after Carpenter, Ludwig & Brock (1999), Ecological Applications 9:751–771. "
                "Demo lake and its numbers are invented.",
                className="footer",
            ),
        ],
        id=ids.ROOT,
        className="page",
    )
