"""Layout of the lake view: the load, the figures, the readout, in-lake removal and the settings."""

from __future__ import annotations

import math
from typing import Any

from dash import dcc, html
from turnback.model.demo import DEMO_PARAMETERS, DEMO_TWO_POOL_PARAMETERS
from turnback.model.equilibrium import LakeAnalysis
from turnback.model.lake_models import AnyLakeParameters
from turnback.model.params import LakeProfile
from turnback.model.two_pool import TwoPoolParameters
from turnback.model.two_pool_equilibrium import TwoPoolAnalysis

from ... import ids
from ...theme import TODAY, both, graph
from ...vocabulary import term
from .settings import FIELD_RULES, MODEL_OPTIONS, ONE_BOX_FIELDS, TWO_POOL_RULES

TREATMENT_CAUTION = (
    "Caution: chemical in-lake treatments (for example alum or other P binders, or dredging) need permits "
    "from the responsible authority and must be designed and applied by licensed practitioners. "
    "This tool only estimates the P mass involved."
)


def _aria(**attrs: str) -> Any:
    """``aria-*`` attributes for a Dash html component."""
    return {f"aria-{k}": v for k, v in attrs.items()}


def slider_config(
    analysis: LakeAnalysis | TwoPoolAnalysis, profile: LakeProfile, meeting: bool = False
) -> dict[str, Any]:
    """Slider max, step and marks: 0 to about twice the tipping load, with today's load and the thresholds marked.

    One arrow-key press moves about 1 % of the range (a round step), so the
    tipping load is a few dozen presses away, not hundreds.
    """
    if analysis.tipping_load is not None:
        top = 2.0 * analysis.tipping_load
    else:
        top = 2.0 * max(profile.load_kg_per_yr, float(analysis.curve.load.max()) / 2.0)
    top = max(top, 1.2 * profile.load_kg_per_yr, 1e-6)
    raw = top / 100.0
    base = 10.0 ** math.floor(math.log10(raw))
    step = next(b * base for b in (1, 2, 5, 10) if b * base >= raw)
    top = math.ceil(top / step) * step
    marks: dict[float, Any] = {0: "0", top: f"{top:,.0f}"}
    marks[profile.load_kg_per_yr] = {
        "label": f"today {profile.load_kg_per_yr:,.0f}",
        "style": {"color": TODAY, "fontWeight": "600"},
    }
    if analysis.tipping_load is not None:
        if abs(analysis.tipping_load - profile.load_kg_per_yr) < 0.08 * top:  # too close to share the track
            marks[profile.load_kg_per_yr]["label"] = (
                f"today {profile.load_kg_per_yr:,.0f}\ntipping {analysis.tipping_load:,.0f}"
            )
            marks[profile.load_kg_per_yr]["style"] |= {"whiteSpace": "pre-line"}
        else:
            marks[analysis.tipping_load] = {"label": term("tipping", meeting), "style": {"color": "#2d2d2d"}}
    if analysis.recovery_load is not None and analysis.recovery_load > 0:
        marks[analysis.recovery_load] = {"label": term("recovery", meeting), "style": {"color": "#2d2d2d"}}
    return {"max": top, "step": step, "marks": marks}


def _field(name: str, value: float, two_pool: bool = False) -> html.Div:
    label, unit, *_ = (TWO_POOL_RULES if two_pool else FIELD_RULES)[name]
    input_id, message_id = (ids.TWO_POOL_FIELDS if two_pool else ids.FIELDS)[name]
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


def settings_panel(params: AnyLakeParameters, profile: LakeProfile) -> html.Details:
    two = isinstance(params, TwoPoolParameters)
    # the other model's fields start at the demo lake's values of that model
    values = (DEMO_PARAMETERS if two else params).to_dict() | {
        "area_km2": profile.area_km2,
        "mean_depth_m": profile.mean_depth_m,
        "load_kg_yr": profile.load_kg_per_yr,
    }
    pool = (params if two else DEMO_TWO_POOL_PARAMETERS).to_dict()
    hidden = {"display": "none"}
    return html.Details(
        [
            html.Summary("Lake and model settings"),
            html.Div(
                [
                    html.Span("Lake model", id="lake-model-label", className="field-label"),
                    dcc.RadioItems(
                        id=ids.LAKE_MODEL,
                        options=[{"label": label, "value": value} for value, label in MODEL_OPTIONS.items()],
                        value="two-pool" if two else "one-box",
                        className="model-choice",
                        inline=True,
                        persistence=True,
                        persistence_type="session",
                    ),
                ],
                className="field model-field",
            ),
            html.Div(
                [
                    html.P(
                        "One box: P[t+1] = P[t] + L − s·P[t] + r·P[t]^q / (m^q + P[t]^q), one step a year.",
                        className="hint",
                    ),
                    html.Div([_field(name, values[name]) for name in ONE_BOX_FIELDS], className="field-grid"),
                ],
                id=ids.ONE_BOX_FIELDS_BOX,
                style=hidden if two else {},
            ),
            html.Div(
                [
                    html.P(
                        "Two pools — the mud keeps feeding the water: water P[t+1] = P[t] + L − (s+h)·P[t] + "
                        "r·M[t]·g(P[t]) and mud P M[t+1] = M[t] + s·P[t] − b·M[t] − r·M[t]·g(P[t]), "
                        "g(P) = P^q / (m^q + P^q), one step a year (after Carpenter 2005); s + h and b + r at most 1. "
                        "The mud's burial and recycling rates are rarely known: results depend on them.",
                        className="hint",
                    ),
                    html.Div(
                        [_field(name, pool[name], two_pool=True) for name in TWO_POOL_RULES], className="field-grid"
                    ),
                ],
                id=ids.TWO_POOL_FIELDS_BOX,
                style={} if two else hidden,
            ),
            html.P(
                "Press Enter or leave a field to apply it; "
                "a wrong value is reported here and the last good lake stays.",
                className="hint",
            ),
            html.Div(
                [_field(name, values[name]) for name in FIELD_RULES if name not in ONE_BOX_FIELDS],
                className="field-grid",
            ),
            html.Div(id=ids.SETTINGS_STATUS, className="settings-status"),
        ],
        id=ids.SETTINGS_PANEL,
        open=True,
        className="card settings",
    )


def _readout_card() -> html.Div:
    return html.Div(
        [html.H2("What the lake is doing"), html.Div(id=ids.READOUT, className="readout", **_aria(live="polite"))],
        className="card readout-card",
    )


def _removal_card() -> html.Div:
    return html.Div(
        [
            html.H2("Take phosphorus out of the lake"),
            html.Div(id=ids.REMOVAL_NEEDED, className="readout-row"),
            html.Div(
                [
                    html.Label("P to remove [kg]", htmlFor=ids.REMOVAL_INPUT),
                    dcc.Input(id=ids.REMOVAL_INPUT, type="number", min=0, value=0, className="removal-input"),
                    html.Button("Remove it now", id=ids.REMOVAL_BUTTON, n_clicks=0),
                ],
                className="control-row",
            ),
            html.Div(id=ids.REMOVAL_MESSAGE, className="field-message", role="alert"),
            html.P(TREATMENT_CAUTION, className="treatment-caution"),
        ],
        className="card removal-card",
    )


#: big-step buttons: key -> label
STEP_LABELS: dict[str, Any] = {
    "down": "−10%",
    "up": "+10%",
    "past_tipping": both("Just past the tipping load", "Just past tipping point"),
    "under_recovery": both("Just under the recovery load", "Just under way-back point"),
}
STEP_TITLES = {
    "down": "Lower the inflow by a tenth of today's",
    "up": "Raise the inflow by a tenth of today's",
    "past_tipping": "Set the inflow 2% above the tipping point",
    "under_recovery": "Set the inflow 2% below the way-back point",
}


def _load_card(profile: LakeProfile) -> html.Div:
    steps = [
        html.Button(
            STEP_LABELS[k], id=ids.STEP_BUTTONS[k], n_clicks=0, className="secondary step", title=STEP_TITLES[k]
        )
        for k in ids.STEP_BUTTONS
    ]
    return html.Div(
        [
            html.Div(
                [
                    html.H2(both("External P load", "Phosphorus inflow"), id="load-heading"),
                    html.Div(steps, className="step-row", role="group", **_aria(label="Big steps of the inflow")),
                ],
                className="card-head",
            ),
            html.P("kg P per year: drag, use the arrow keys, or type a value and press Tab.", className="hint"),
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
                        value=10,
                        debounce=True,
                        persistence=True,
                        persistence_type="session",
                        className="years-input",
                    ),
                    html.Button("Let the years pass", id=ids.WAIT_BUTTON, n_clicks=0),
                    html.Button("Run until settled", id=ids.SETTLE_BUTTON, n_clicks=0),
                    html.Button("Start the history again", id=ids.RESET_BUTTON, n_clicks=0, className="secondary"),
                ],
                className="control-row",
            ),
            html.Div(id=ids.YEARS_MESSAGE, className="field-message", role="alert"),
            html.Div(id=ids.HISTORY_NOTE, className="history-note", role="status"),
        ],
        className="card load-card",
    )


def build_view(params: AnyLakeParameters, profile: LakeProfile) -> list[Any]:
    return [
        html.Main(
            [
                html.Section([_readout_card(), _removal_card()], className="controls"),
                html.Section(
                    [
                        _load_card(profile),
                        graph(ids.EQUILIBRIUM_GRAPH, "turnback-equilibria", "graph-equilibrium"),
                        graph(ids.TIME_GRAPH, "turnback-history", "graph-time"),
                        html.Div(id=ids.TIME_LAG, className="time-lag", role="status", **_aria(live="polite")),
                    ],
                    className="figures",
                ),
            ],
            className="main-grid",
        ),
        settings_panel(params, profile),
    ]
