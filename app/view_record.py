"""Layout of the monitoring-record view: fit the model to a lake's own data, and its warning signs."""

from __future__ import annotations

from dash import html


def build_view() -> list[html.Div]:
    return [html.Div([html.H2("Monitoring record"), html.P("Fitting arrives here.")], className="card")]
