"""Look of the dashboard: the palette, the figures' modebar, and the meeting view's sizes.

Pure constants and small functions; no callbacks, no layout.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from .vocabulary import term

# our palette
CLEAR = "#1f6fa8"  # clear-water branch
TURBID = "#7a8f1c"  # turbid, algae-dominated branch
SEPARATRIX = "#7d7d7d"
FOLD = "#2d2d2d"
BISTABLE = "rgba(232, 180, 60, 0.17)"
HISTORY = "#b5462f"
CURRENT = "#e0701a"
TODAY = "#5b4a8a"
OBSERVED = "rgba(40,40,40,0.55)"
BAND_TIPPING = "rgba(31,111,168,0.13)"  # the fitted tipping load's band
BAND_RECOVERY = "rgba(122,143,28,0.15)"  # the fitted recovery load's band
SEDIMENT = "#7a5a32"  # the mud: sediment P of a two-pool lake

#: background of each regime on the regime map
REGIME_FILL = {
    "reversible": "rgba(31, 111, 168, 0.07)",
    "hysteretic": "rgba(232, 180, 60, 0.10)",
    "irreversible": "rgba(163, 58, 31, 0.08)",
}

#: a lake of each regime: markers on the region's plane (strong) and rows of its table (light, dark text on it)
REGIME_COLOUR = {"reversible": CLEAR, "hysteretic": "#b7780d", "irreversible": "#a33a1f"}
REGIME_ROW = {"reversible": "#e4eef7", "hysteretic": "#fbf0d3", "irreversible": "#f6dfd8"}


def load_axis_title(meeting: bool) -> str:
    """The inflow axis in the chosen register (see :mod:`app.vocabulary`)."""
    return term("inflow_axis", meeting)


def graph_config(filename: str) -> Any:
    """Plotly config: the modebar keeps its image download (PNG at twice the size)."""
    return {
        "displaylogo": False,
        "toImageButtonOptions": {"format": "png", "scale": 2, "filename": filename},
        "modeBarButtonsToRemove": ["lasso2d", "select2d"],
    }


def graph(graph_id: str, filename: str, size_class: str) -> Any:
    """A responsive figure: it fills a box whose size the stylesheet sets (``size_class``), so it follows the window."""
    from dash import dcc, html

    return html.Div(
        dcc.Graph(id=graph_id, config=graph_config(filename), responsive=True, style={"height": "100%"}),
        className=f"graph {size_class}",
    )


def both(technical: Any, plain: Any) -> list[Any]:
    """Text in both registers; the stylesheet shows the technical one, or the plain one in the meeting view."""
    from dash import html

    return [html.Span(technical, className="tech-only"), html.Span(plain, className="meeting-only")]


def is_meeting(toggle_value: list[str] | None) -> bool:
    """Whether the meeting-view checklist is ticked."""
    return "on" in (toggle_value or [])


@dataclass(frozen=True)
class Sizes:
    """Text and line sizes of the figures, larger in the meeting view."""

    font: int  # the lake view's figures [px]
    line: int  # line width [px]
    marker: int  # marker size [px]
    text: int  # the record and plans views' figures [px]


NORMAL = Sizes(font=15, line=3, marker=14, text=14)
MEETING = Sizes(font=19, line=5, marker=17, text=19)

#: figure heights [px]: figure -> (normal, meeting view)
HEIGHTS = {
    "equilibrium": (500, 600),
    "time": (360, 420),
    "map": (540, 620),
    "plan": (400, 520),
}


def sizes(meeting: bool) -> Sizes:
    return MEETING if meeting else NORMAL


def height(figure: str, meeting: bool) -> int:
    return HEIGHTS[figure][1 if meeting else 0]
