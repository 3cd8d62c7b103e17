"""Layout of the region view: screen many lakes at once, rank them, place them on the regime plane."""

from __future__ import annotations

from typing import Any

import dash_ag_grid as dag
from dash import dcc, html

from ... import ids
from ...store_checks import MAX_UPLOAD_BYTES
from ...theme import both, graph
from .figures import row_style, table_columns
from .results import MAX_LAKES

FORMAT_HINT = (
    "LAKES.csv: one row per lake with lake_id, optional name, volume_m3, area_km2 (needed to open a lake), "
    "load_kg_yr (today's load) and either all four of loss_rate, recycling_max, recycling_half, "
    "recycling_exponent (analysed) or none (fitted from RECORDS.csv: lake_id, year, load_kg, tp_ug_l, one row per "
    f"lake and year). Up to {MAX_LAKES:,} lakes here; 'turnback screen' takes any number, on a Dask cluster too."
)
FORMAT_HINT_PLAIN = (
    "A table of lakes (LAKES.csv), one row per lake, and, for lakes known only from measurements, their yearly "
    "measurements (RECORDS.csv). The invented demo region has 40 fictional lakes."
)
_ARIA_PROGRESS: Any = {"aria-label": "Progress of the screen"}


def _upload(upload_id: str, what: str) -> dcc.Upload:
    return dcc.Upload(
        id=upload_id,
        max_size=MAX_UPLOAD_BYTES,
        children=html.Div([f"Drop {what} here, or ", html.A("choose a file")]),
        className="upload-box",
        multiple=False,
    )


def files_card() -> html.Div:
    return html.Div(
        [
            html.H2(both("Screen a region's lakes", "Many lakes at once")),
            html.P(both(FORMAT_HINT, FORMAT_HINT_PLAIN), className="hint"),
            html.Div(
                [
                    _upload(ids.REGION_LAKES_UPLOAD, "LAKES.csv"),
                    _upload(ids.REGION_RECORDS_UPLOAD, "RECORDS.csv (when there is one)"),
                ],
                className="region-uploads",
            ),
            html.Div(
                [
                    html.Button("Load the demo region", id=ids.REGION_DEMO, n_clicks=0, className="secondary"),
                    html.Label(both("Bootstrap replicates", "Repeat fits"), htmlFor=ids.REGION_REPLICATES),
                    dcc.Input(id=ids.REGION_REPLICATES, type="number", min=100, max=20000, step=100, value=1000),
                    html.Button("Screen these lakes", id=ids.REGION_RUN, n_clicks=0),
                    html.Button("Cancel", id=ids.REGION_CANCEL, n_clicks=0, disabled=True, className="secondary"),
                ],
                className="control-row",
            ),
            html.Div(id=ids.REGION_FILES_NOTE, className="readout-row", role="status"),
            html.Div(id=ids.REGION_MESSAGE, className="field-message", role="alert"),
            html.Div(
                [
                    html.Progress(
                        id=ids.REGION_PROGRESS, value="0", max="100", style={"display": "none"}, **_ARIA_PROGRESS
                    ),
                    html.Span(id=ids.REGION_PROGRESS_TEXT, className="hint", role="status"),
                ],
                className="progress-row",
            ),
        ],
        className="card",
    )


def table_card() -> html.Div:
    return html.Div(
        [
            html.H2(both("Lakes ranked by margin to the tipping load", "Lakes, least room before tipping first")),
            html.Div(id=ids.REGION_SUMMARY, className="readout-row"),
            html.P(
                both(
                    "Margin: tipping load minus today's load (negative: already past it). Rows coloured by regime; "
                    "click a heading to sort, click a lake to open it in 'The lake now'.",
                    "Room before tipping: the tipping point less the inflow now (below zero: already past it). "
                    "Click a lake to open it in 'The lake now'.",
                ),
                className="hint",
            ),
            dag.AgGrid(
                id=ids.REGION_TABLE,
                columnDefs=table_columns(),
                rowData=[],
                getRowId="params.data.lake_id",
                getRowStyle=row_style(),
                selectedRows=[],
                defaultColDef={
                    "sortable": True,
                    "wrapText": True,
                    "autoHeight": True,
                    "wrapHeaderText": True,
                    "autoHeaderHeight": True,
                    "suppressMovable": True,
                    "minWidth": 70,
                },
                dashGridOptions={
                    "rowSelection": {"mode": "singleRow", "checkboxes": False, "enableClickSelection": True},
                    "ensureDomOrder": True,
                    "localeText": {"noRowsToShow": "Load the demo region or upload LAKES.csv, then screen."},
                },
                style={"height": "clamp(320px, 48vh, 560px)"},
                className="plan-grid-table region-table",
            ),
            html.Div(id=ids.REGION_OPEN_MESSAGE, className="field-message", role="status"),
            html.Div(id=ids.REGION_FAILED, className="region-failed"),
            html.Div(
                [
                    html.Button("Table (CSV)", id=ids.REGION_EXPORT_CSV, n_clicks=0, className="secondary"),
                    html.Button("Summary (HTML)", id=ids.REGION_EXPORT_HTML, n_clicks=0, className="secondary"),
                    dcc.Download(id=ids.REGION_DOWNLOAD),
                    html.Span(id=ids.REGION_EXPORT_MESSAGE, className="field-message", role="status"),
                ],
                className="control-row",
            ),
        ],
        className="card",
    )


def plane_card() -> html.Div:
    return html.Div(
        [
            html.H2(both("The lakes on the regime plane", "The lakes side by side")),
            html.Div(
                [
                    html.Span(
                        both(
                            "Regions drawn for recycling exponent q:",
                            "Lines drawn for how sharply the mud switches on:",
                        ),
                        className="hint",
                    ),
                    dcc.RadioItems(id=ids.REGION_EXPONENT, options=[], value=None, inline=True, className="map-axis"),
                ],
                className="control-row",
            ),
            graph(ids.REGION_GRAPH, "turnback-region-plane", "graph-map"),
            html.Div(id=ids.REGION_PLANE_NOTE, className="hint"),
        ],
        className="card",
    )


def build_view() -> list[html.Div]:
    return [files_card(), table_card(), plane_card()]
