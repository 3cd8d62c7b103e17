"""Layout of the regime map view."""

from __future__ import annotations

from dash import dcc, html

from ... import ids
from ...theme import both, graph


def build_view() -> list[html.Div]:
    return [
        html.Div(
            [
                html.H2(
                    both(
                        "Where this lake sits: reversible, hysteretic or irreversible",
                        "Where this lake sits: no tipping point, a tipping point, or no way back",
                    )
                ),
                html.P(
                    both(
                        "Load across, a lake property up the side. Between the two fold curves the lake has two "
                        "stable states; below the irreversible line the turbid state survives even at zero load. "
                        "The lake's own position is marked, with the cloud of fitted lakes once a monitoring record "
                        "has been fitted.",
                        "Phosphorus inflow across, a property of the lake up the side. Between the two lines the "
                        "lake can be clear or turbid at the same inflow; in the lowest band it stays turbid even with "
                        "no inflow at all. The big dot is this lake.",
                    ),
                    className="hint",
                ),
                html.Span("Up the side:", id="map-axis-label", className="hint"),
                dcc.RadioItems(
                    id=ids.MAP_AXIS,
                    options=[
                        {
                            "label": html.Span(both(" loss rate s (burial and outflow)", " how fast P is lost")),
                            "value": "loss_rate",
                        },
                        {
                            "label": html.Span(both(" maximum recycling r", " how much P the mud can release")),
                            "value": "recycling_max",
                        },
                    ],
                    value="loss_rate",
                    inline=True,
                    className="map-axis",
                ),
                graph(ids.MAP_GRAPH, "turnback-regime-map", "graph-map"),
                html.Div(id=ids.MAP_NOTE, className="readout-row"),
            ],
            className="card",
        )
    ]
