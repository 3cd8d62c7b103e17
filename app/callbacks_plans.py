"""Callbacks of the plans view."""

from __future__ import annotations

from pathlib import Path

from dash import Dash


def register(app: Dash, data_dir: Path | None) -> None:
    """Register the plans view's callbacks; saved scenarios live in ``data_dir`` (see model.store)."""
