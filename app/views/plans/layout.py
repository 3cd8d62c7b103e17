"""Layout of the plans view: build scenarios for the current lake, run them, compare, save and export."""

from __future__ import annotations

from typing import Any

import dash_ag_grid as dag
from dash import dcc, html

from ... import ids
from ...theme import both, graph
from ...vocabulary import TROPHIC_RULE
from .figures import FIGURES, table_columns

INTRO = (
    "Build scenarios for the current lake, run them as ensembles through the annual phosphorus model and compare "
    "them side by side. Each scenario starts from the lake's state now (see 'The lake now')."
)
TREATMENT_CAUTION = (
    "Caution: in-lake treatments — P removal (for example dredging) and sediment P inactivation with alum or "
    "other chemical binders — need permits from the responsible authority and must be designed and carried out "
    "by licensed practitioners. This view only estimates the phosphorus involved."
)
RESULT_CAUTION = (
    "Scenario estimates from a simplified one-box model, with Monte-Carlo error from a finite ensemble. They are "
    "not a water-safety or health assessment: for bathing and other uses of the water follow local health "
    "authorities and their advisories."
)
DEFINITIONS = (
    "Clear: lake P below the clear-state threshold of that year (by default the unstable equilibrium between the "
    "clear and turbid states at that year's scheduled load; the dotted lines). "
    "Clear in the final year: share of ensemble members clear in the last year, ± one binomial standard error. "
    "Chance of flipping: of the members that start clear, the share that is turbid in at least one later year "
    "('–' when none start clear). "
    "Recovery year: the first year (year 0 is the start) in which a member is clear and stays clear for the "
    "scenario's number of consecutive years (3 unless set), all within the horizon. The median counts members "
    "that never recover as never; '–' when fewer than half recover. A lake that starts clear has nothing to "
    "recover from: its recovery columns read 'not applicable', and a lake that flips is never counted as "
    "recovered. "
    "Median final TP: ensemble median in the final year; the Secchi depth is what a typical phosphorus-limited "
    "lake with that TP shows in summer (Carlson 1977 index equivalence), not a forecast for this lake. "
    + TROPHIC_RULE
    + " "
    "Load cut: the years' do-nothing load (held where it starts) minus the scheduled load, summed; in-lake "
    "removal: P actually taken out (mean over members)."
)
PRECAUTION_HINT = (
    "The largest sustained load whose chance of flipping from clear to turbid within the years given is at most "
    "the limit, for a lake that starts at its clear state, under the chosen scenario's load variability, process "
    "noise, members, seed and clear-state rule. The ± is its Monte-Carlo error (one standard error)."
)

DEFINITIONS_PLAIN = (
    "Each plan is run many times with the inflow swinging from year to year. Clear: the lake is on the clear side "
    "of the dividing line that year. 'Chance it turns green' counts runs that start clear and turn turbid in some "
    "later year. 'Typical year it is clear again' is for a lake that starts turbid: the year half the runs are "
    "clear and stay clear; a lake that starts clear reads 'not applicable'. The see-through depth and nutrient "
    "level are what a typical lake with that much phosphorus shows in summer, not a forecast for this lake. A "
    "'Do nothing' plan, the inflow held where it is now, is added to every run for comparison."
)
PRECAUTION_HINT_PLAIN = (
    "The highest inflow that keeps the chance of the lake turning green within the years given below the limit, "
    "for a lake that starts clear, with the chosen plan's year-to-year swings. The ± is the uncertainty from "
    "running a limited number of times."
)

#: graph ids in the order of :data:`app.views.plans.figures.FIGURES`
GRAPHS = (ids.PLAN_TRAJECTORY_GRAPH, ids.PLAN_CLEAR_GRAPH, ids.PLAN_RECOVERY_GRAPH, ids.PLAN_LOAD_GRAPH)


def _input(key: str, value: str = "", placeholder: str = "", wide: bool = False) -> dcc.Input:
    return dcc.Input(
        id=ids.PLAN_FORM[key],
        type="text",
        value=value,
        placeholder=placeholder,
        className="field-input wide" if wide else "field-input",
        autoComplete="off",
    )


def _field(key: str, label: Any, value: str = "", placeholder: str = "", wide: bool = False) -> html.Div:
    return html.Div(
        [html.Label(label, htmlFor=ids.PLAN_FORM[key]), _input(key, value, placeholder, wide)],
        className="field",
    )


def _message(section: str) -> html.Div:
    return html.Div(id=ids.PLAN_MESSAGES[section], className="field-message", role="alert")


def _form() -> html.Div:
    f = ids.PLAN_FORM
    return html.Div(
        [
            html.H2("Scenario"),
            html.Fieldset(
                [
                    html.Legend("Name and horizon"),
                    html.Div(
                        [_field("name", "Name", "Scenario 1", wide=True), _field("years", "Horizon [years]", "30")],
                        className="plan-fields",
                    ),
                    _message("basics"),
                ],
                className="plan-section",
            ),
            html.Fieldset(
                [
                    html.Legend(both("External load", "Phosphorus inflow")),
                    dcc.RadioItems(
                        id=f["load_kind"],
                        options=[
                            {"label": "held constant", "value": "constant"},
                            {"label": "linear cut", "value": "linear_cut"},
                            {"label": "step change", "value": "step"},
                            {"label": "one value a year", "value": "table"},
                        ],
                        value="linear_cut",
                        inline=True,
                        className="plan-radio",
                    ),
                    html.Div(
                        [
                            html.Div(
                                _field("load_from", "Starting load [kg/yr]", placeholder="the load now", wide=True),
                                id=ids.PLAN_LOAD_GROUPS["from"],
                                className="plan-group",
                            ),
                            html.Div(
                                [_field("cut_percent", "Cut [%]", "40"), _field("cut_years", "over [years]", "10")],
                                id=ids.PLAN_LOAD_GROUPS["linear_cut"],
                                className="plan-group",
                            ),
                            html.Div(
                                [
                                    _field("step_to", "Load after the step [kg/yr]"),
                                    _field("step_year", "from year", "5"),
                                ],
                                id=ids.PLAN_LOAD_GROUPS["step"],
                                className="plan-group",
                                style={"display": "none"},
                            ),
                        ],
                        className="plan-fields",
                    ),
                    html.Div(
                        [
                            html.Label(
                                "Loads of years 1, 2, … [kg/yr], separated by commas (one a year)",
                                htmlFor=f["table"],
                            ),
                            dcc.Textarea(id=f["table"], value="", className="plan-table-input", rows=2),
                        ],
                        id=ids.PLAN_LOAD_GROUPS["table"],
                        style={"display": "none"},
                    ),
                    _message("load"),
                ],
                className="plan-section",
            ),
            html.Fieldset(
                [
                    html.Legend("In-lake treatments (leave blank for none)"),
                    html.Div(
                        [
                            _field("removal_kg", "P removal [kg]"),
                            _field("removal_year", "in year"),
                        ],
                        className="plan-fields",
                    ),
                    html.Div(
                        [
                            _field("inact_percent", both("Recycling cut by [%]", "Release from the mud cut by [%]")),
                            _field("inact_year", "from year"),
                            _field("inact_years", "for [years]"),
                        ],
                        className="plan-fields",
                    ),
                    html.P(TREATMENT_CAUTION, className="treatment-caution"),
                    _message("treatments"),
                ],
                className="plan-section",
            ),
            html.Fieldset(
                [
                    html.Legend(both("Variability and ensemble", "Year-to-year swings and simulated runs")),
                    html.Div(
                        [
                            _field("cv", both("Load variability (CV)", "Swing in inflow (0.2 = 20%)"), "0.2"),
                            _field(
                                "noise_sd",
                                both("Process noise sd [kg]", "Random swing in the lake (kg)"),
                                placeholder="none",
                            ),
                            _field("members", both("Members", "Simulated runs"), "500"),
                            _field("seed", both("Seed", "Repeatable number"), "1", placeholder="fresh each run"),
                        ],
                        className="plan-fields",
                    ),
                    html.Details(
                        [
                            html.Summary(both("Clear-state rule and recovery", "When the lake counts as clear")),
                            dcc.RadioItems(
                                id=f["clear_rule"],
                                options=[
                                    {
                                        "label": html.Span(
                                            both("below the unstable equilibrium (default)", "below the dividing line")
                                        ),
                                        "value": "separatrix",
                                    },
                                    {
                                        "label": html.Span(
                                            both("below the TP of the tipping fold", "below the tipping point's level")
                                        ),
                                        "value": "tipping_fold",
                                    },
                                    {"label": "below a fixed TP", "value": "fixed"},
                                ],
                                value="separatrix",
                                className="plan-radio",
                            ),
                            html.Div(
                                [
                                    _field("clear_tp", "Fixed clear TP [µg/L]"),
                                    _field("stay_years", "Recovered after [clear years in a row]", "3"),
                                ],
                                className="plan-fields",
                            ),
                        ],
                        className="plan-more",
                    ),
                    _message("variability"),
                ],
                className="plan-section",
            ),
            html.Div(
                [
                    html.Button("Add to the plan", id=ids.PLAN_ADD, n_clicks=0),
                    html.Button("New scenario (clean form)", id=ids.PLAN_NEW, n_clicks=0, className="secondary"),
                    html.Button(
                        "Save changes to the scenario being edited",
                        id=ids.PLAN_UPDATE,
                        n_clicks=0,
                        disabled=True,
                        className="secondary",
                    ),
                ],
                className="control-row",
            ),
        ],
        className="card plan-form",
    )


def _list_card() -> html.Div:
    return html.Div(
        [
            html.H2("Scenarios of the plan"),
            dag.AgGrid(
                id=ids.PLAN_LIST,
                columnDefs=[
                    {"field": "name", "headerName": "Scenario", "flex": 1},
                    {"field": "plan", "headerName": "Plan", "flex": 2},
                    {"field": "ensemble", "headerName": "Ensemble", "flex": 2},
                ],
                rowData=[],
                getRowId="params.data.name",
                selectedRows=[],
                defaultColDef={"sortable": False, "wrapText": True, "autoHeight": True, "suppressMovable": True},
                dashGridOptions={
                    "rowSelection": {"mode": "singleRow", "checkboxes": True, "enableClickSelection": True},
                    "domLayout": "autoHeight",
                    "ensureDomOrder": True,
                    "localeText": {"noRowsToShow": "No scenarios yet: fill in the form and press 'Add to the plan'."},
                },
                className="plan-grid-table",
            ),
            html.Div(
                [
                    html.Button("Edit", id=ids.PLAN_EDIT, n_clicks=0, className="secondary"),
                    html.Button("Duplicate", id=ids.PLAN_DUPLICATE, n_clicks=0, className="secondary"),
                    html.Button("Delete", id=ids.PLAN_DELETE, n_clicks=0, className="secondary"),
                ],
                className="control-row",
            ),
            html.Div(id=ids.PLAN_STATUS, className="plan-status", role="status"),
            html.Div(
                [
                    html.Button("Run the plan", id=ids.PLAN_RUN, n_clicks=0, className="plan-run"),
                    html.Button("Cancel", id=ids.PLAN_CANCEL, n_clicks=0, disabled=True, className="secondary"),
                    dcc.Checklist(
                        id=ids.PLAN_BOTH_MODELS,
                        options=[
                            {
                                "label": " Also run under the other lake model (water alone, or water and mud), "
                                "side by side",
                                "value": "on",
                            }
                        ],
                        value=[],
                        className="both-models",
                        persistence=True,
                        persistence_type="session",
                    ),
                ],
                className="control-row",
            ),
            html.P(
                "The other model's lake is the one in the lake settings of 'The lake now' (by default the demo lake "
                "in that model), with the same volume and starting lake phosphorus. 'Lag from the sediment' is the "
                "recovery year with the mud minus the recovery year of the water alone.",
                className="hint",
            ),
            html.Div(
                [
                    html.Progress(id=ids.PLAN_PROGRESS, value="0", max="100", style={"display": "none"}),
                    html.Span(id=ids.PLAN_PROGRESS_TEXT, className="hint"),
                ],
                className="progress-row",
            ),
            html.Div(id=ids.PLAN_RUN_MESSAGE, className="plan-status", role="status"),
        ],
        className="card plan-list",
    )


def _results_card() -> html.Div:
    return html.Div(
        [
            html.H2("Outcomes side by side"),
            html.Div(id=ids.PLAN_STALE, role="alert"),
            html.Div(id=ids.PLAN_RESULTS_NOTE, className="readout-row"),
            html.P("Click a column heading to sort.", className="hint"),
            dag.AgGrid(
                id=ids.PLAN_TABLE,
                columnDefs=table_columns(),
                rowData=[],
                defaultColDef={
                    "sortable": True,
                    "wrapText": True,
                    "autoHeight": True,
                    "wrapHeaderText": True,
                    "autoHeaderHeight": True,
                    "suppressMovable": True,
                    "minWidth": 90,
                    "flex": 1,
                },
                dashGridOptions={
                    "domLayout": "autoHeight",
                    "ensureDomOrder": True,
                    "localeText": {"noRowsToShow": "Run the plan to see its outcomes here."},
                },
                className="plan-grid-table",
            ),
            html.P(both(DEFINITIONS, DEFINITIONS_PLAIN), id=ids.PLAN_DEFINITIONS, className="hint plan-definitions"),
            html.P(RESULT_CAUTION, className="treatment-caution"),
            html.Div(
                [
                    html.Button("Download the report (HTML)", id=ids.PLAN_EXPORT_REPORT, n_clicks=0),
                    html.Button(
                        "Trajectories (CSV)", id=ids.PLAN_EXPORT_TRAJECTORIES, n_clicks=0, className="secondary"
                    ),
                    html.Button("Outcome table (CSV)", id=ids.PLAN_EXPORT_TABLE, n_clicks=0, className="secondary"),
                    html.Span("PNG: the camera button above each figure.", className="hint"),
                    dcc.Download(id=ids.PLAN_DOWNLOAD),
                ],
                className="control-row",
            ),
            html.Div(id=ids.PLAN_EXPORT_MESSAGE, className="field-message", role="alert"),
            html.Div(
                [
                    graph(graph_id, f"turnback-plan-{key}", "graph-plan")
                    for key, graph_id in zip(FIGURES, GRAPHS, strict=True)
                ],
                className="plan-figures",
            ),
        ],
        className="card plan-results",
    )


def _precaution_card() -> html.Div:
    return html.Div(
        [
            html.H2("Precautionary load"),
            html.P(both(PRECAUTION_HINT, PRECAUTION_HINT_PLAIN), className="hint"),
            html.Label("Under the variability of", htmlFor=ids.PLAN_PREC_SCENARIO),
            dcc.RadioItems(id=ids.PLAN_PREC_SCENARIO, options=[], value=None, className="plan-radio"),
            html.Div(
                [
                    html.Label("within [years]", htmlFor=ids.PLAN_PREC_YEARS),
                    dcc.Input(id=ids.PLAN_PREC_YEARS, type="text", value="20", className="field-input"),
                    html.Label("at most [% chance of flipping]", htmlFor=ids.PLAN_PREC_PERCENT),
                    dcc.Input(id=ids.PLAN_PREC_PERCENT, type="text", value="5", className="field-input"),
                    html.Button("Find the precautionary load", id=ids.PLAN_PREC_BUTTON, n_clicks=0),
                ],
                className="control-row",
            ),
            html.Span(id=ids.PLAN_PREC_PROGRESS_TEXT, className="hint"),
            html.Div(id=ids.PLAN_PREC_MESSAGE, className="field-message", role="alert"),
            html.Div(id=ids.PLAN_PREC_RESULT, className="readout-row", role="status"),
        ],
        className="card",
    )


def _save_card() -> html.Div:
    return html.Div(
        [
            html.H2("Save and find again"),
            html.P(
                "Saving keeps every earlier save as a revision: two people saving the same plan name both keep "
                "their scenarios.",
                className="hint",
            ),
            html.Div(
                [
                    html.Label("Plan name", htmlFor=ids.PLAN_SAVE_NAME),
                    dcc.Input(
                        id=ids.PLAN_SAVE_NAME,
                        type="text",
                        value="",
                        placeholder="the lake's name",
                        className="field-input wide",
                    ),
                    html.Button("Save plan", id=ids.PLAN_SAVE, n_clicks=0),
                ],
                className="control-row",
            ),
            html.Div(id=ids.PLAN_SAVE_MESSAGE, className="plan-status", role="status"),
            html.H3("Saved plans"),
            dcc.RadioItems(id=ids.PLAN_SAVED_LIST, options=[], value=None, className="plan-radio plan-saved"),
            html.Div(id=ids.PLAN_SAVED_DETAILS, className="hint"),
            html.Button("Add its scenarios to the plan", id=ids.PLAN_LOAD_SAVED, n_clicks=0, className="secondary"),
        ],
        className="card",
    )


def build_view() -> list[Any]:
    return [
        html.Div(
            [
                html.H2("Plans compared"),
                html.P(INTRO, className="hint"),
                html.Div(id=ids.PLAN_LAKE_NOTE, className="readout-row"),
            ],
            className="card",
        ),
        html.Div([_form(), _list_card()], className="plan-grid"),
        _results_card(),
        html.Div([_precaution_card(), _save_card()], className="plan-grid"),
    ]
