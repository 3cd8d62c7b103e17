"""Layout of the regime map view."""

from __future__ import annotations

from dash import dcc, html

from ... import ids
from ...theme import graph_config


def build_view() -> list[html.Div]:
    return [
        html.Div(
            [
                html.H2("Where this lake sits: reversible, hysteretic or irreversible"),
                html.P(
                    "Load across, a lake property up the side. Between the two fold curves the lake has two stable "
                    "states; below the irreversible line the turbid state survives even at zero load. The lake's "
                    "own position is marked, with the cloud of fitted lakes once a monitoring record has been fitted.",
                    className="hint",
                ),
                dcc.RadioItems(
                    id=ids.MAP_AXIS,
                    options=[
                        {"label": " loss rate s (burial and outflow)", "value": "loss_rate"},
                        {"label": " maximum recycling r", "value": "recycling_max"},
                    ],
                    value="loss_rate",
                    inline=True,
                    className="map-axis",
                ),
                dcc.Graph(id=ids.MAP_GRAPH, config=graph_config("turnback-regime-map")),
                html.Div(id=ids.MAP_NOTE, className="readout-row"),
            ],
            className="card",
        )
    ]
