"""Layout of the plans view: scenarios compared over years."""

from __future__ import annotations

from dash import html


def build_view() -> list[html.Div]:
    return [html.Div([html.H2("Plans compared"), html.P("Scenario comparison arrives here.")], className="card")]
