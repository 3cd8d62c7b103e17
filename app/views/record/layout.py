"""Layout of the monitoring-record view: fit the model to a lake's own data, and its warning signs."""

from __future__ import annotations

from typing import Any

from dash import dcc, html

from ... import ids
from ...store_checks import MAX_UPLOAD_BYTES
from ...theme import both, graph

FORMAT_HINT = (
    "CSV with one row a year: year (a four-digit calendar year, consecutive), load_kg (external TP load that "
    "year, kg), tp_ug_l (lake mean TP, µg/L); optionally secchi_m and chl_ug_l. From 10 to 5,000 years. Or one "
    "row per water sample: date (YYYY-MM-DD), tp_ug_l or tp_mg_l (<X below the detection limit X), optionally "
    "site and depth_m, and load_kg with each year's load on at least one of its rows; the view makes "
    "growing-season (May–October) means with standard errors and the fit then allows for sampling error. The "
    "invented record of the demo lake is loaded to start with."
)
FORMAT_HINT_PLAIN = (
    "A CSV file with one row a year: year, load_kg (phosphorus inflow that year, kg) and tp_ug_l (phosphorus in "
    "the lake, µg/L). At least 10 years in a row. The invented record of the demo lake is loaded to start with."
)


_ARIA_PROGRESS: Any = {"aria-label": "Progress of the fit"}

_LIMIT: dict[str, Any] = {"data-max-bytes": str(MAX_UPLOAD_BYTES)}  # read by assets/upload-limit.js


def build_view() -> list[html.Div]:
    return [
        html.Div(
            [
                html.H2("Monitoring record"),
                html.P(both(FORMAT_HINT, FORMAT_HINT_PLAIN), className="hint"),
                dcc.Upload(
                    id=ids.RECORD_UPLOAD,
                    max_size=MAX_UPLOAD_BYTES,
                    children=html.Div(["Drop a monitoring CSV here, or ", html.A("choose a file")]),
                    className="upload-box",
                    multiple=False,
                ),
                html.Div(id=ids.RECORD_MESSAGE, className="field-message", role="alert"),
                html.Div(id=ids.UPLOAD_LIMIT, hidden=True, **_LIMIT),
                html.Div(id=ids.RECORD_SUMMARY, className="readout-row"),
                html.Div(
                    [
                        html.Label("Lake volume [m³]", htmlFor=ids.RECORD_VOLUME),
                        dcc.Input(id=ids.RECORD_VOLUME, type="text", className="field-input wide"),
                        html.Label(both("Bootstrap replicates", "Repeat fits"), htmlFor=ids.RECORD_REPLICATES),
                        dcc.Input(id=ids.RECORD_REPLICATES, type="number", min=100, max=20000, step=100, value=1000),
                        html.Button("Fit the lake model to this record", id=ids.RECORD_FIT_BUTTON, n_clicks=0),
                        html.Button(
                            "Cancel", id=ids.RECORD_CANCEL_BUTTON, n_clicks=0, disabled=True, className="secondary"
                        ),
                    ],
                    className="control-row",
                ),
                html.Div(
                    [
                        html.Progress(
                            id=ids.RECORD_PROGRESS,
                            value="0",
                            max="100",
                            style={"display": "none"},
                            **_ARIA_PROGRESS,
                        ),
                        html.Span(id=ids.RECORD_PROGRESS_TEXT, className="hint", role="status"),
                    ],
                    className="progress-row",
                ),
                html.Div(id=ids.RECORD_FIT_RESULT, className="fit-result"),
                html.Div(
                    [
                        html.Button("Use this fitted lake", id=ids.RECORD_USE_FIT, n_clicks=0, disabled=True),
                        html.Span(id=ids.RECORD_USE_MESSAGE, className="status-ok", role="status"),
                    ],
                    className="control-row",
                ),
            ],
            className="card",
        ),
        html.Div(
            [
                html.H2("What was measured"),
                graph(ids.RECORD_GRAPH, "turnback-record", "graph-record"),
                html.P(
                    both(
                        "Expected values follow from the observed TP by Carlson's (1977) trophic-state-index "
                        "equivalence; observed points far from the dashed line mean something other than "
                        "phosphorus (colour, clay, grazing) is setting the clarity.",
                        "The dashed lines are what a typical lake with this much phosphorus shows; measured points "
                        "far from them mean something else (colour, clay, grazing) is setting the clarity.",
                    ),
                    className="hint",
                ),
                graph(ids.RECORD_CLARITY_GRAPH, "turnback-clarity", "graph-clarity"),
            ],
            className="card",
        ),
        html.Div(
            [
                html.H2("Warning signs in the record"),
                html.P(
                    both(
                        "Rolling variance, lag-1 autocorrelation and skewness of lake TP after removing a Gaussian "
                        "trend, with Kendall τ trends tested against AR(1) surrogate series (Dakos et al. 2012; "
                        "Scheffer et al. 2009). Window: half the record.",
                        "A lake nearing a tipping point often swings more from year to year and recovers more "
                        "slowly from an odd year. These lines follow both through the record, after taking out "
                        "the slow trend.",
                    ),
                    className="hint",
                ),
                html.Div(id=ids.WARNING_WORDS, className="readout"),
                graph(ids.WARNING_GRAPH, "turnback-warning-signs", "graph-warning"),
            ],
            className="card",
        ),
    ]
