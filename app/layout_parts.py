"""Small layout pieces shared by the views."""

from __future__ import annotations

from typing import Any


def graph_config(filename: str) -> Any:
    """Plotly config: the modebar keeps its image download (PNG at twice the size)."""
    return {
        "displaylogo": False,
        "toImageButtonOptions": {"format": "png", "scale": 2, "filename": filename},
        "modeBarButtonsToRemove": ["lasso2d", "select2d"],
    }
