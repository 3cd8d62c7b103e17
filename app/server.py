"""The Dash application factory."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import diskcache
from dash import Dash, DiskcacheManager
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.io.resources import assets_folder

from . import callbacks, callbacks_map, callbacks_plans, callbacks_record
from .layout import build_layout
from .session import lake_to_store


def cache_dir() -> Path:
    """Folder for the background-callback cache: $TURNBACK_CACHE_DIR or a per-user temp folder."""
    env = os.environ.get("TURNBACK_CACHE_DIR")
    if env:
        return Path(env)
    return Path(tempfile.gettempdir()) / f"turnback-cache-{os.getuid() if hasattr(os, 'getuid') else 'user'}"


def create_app(data_dir: str | Path | None = None) -> Dash:
    """Build the dashboard on the built-in demo lake.

    Session state lives in the browser; saved lakes, fits and scenarios go to
    the SQLite store in ``data_dir`` (default: $TURNBACK_DATA_DIR, else
    ./turnback-data; see :mod:`turnback.model.io.store`).
    """
    manager = DiskcacheManager(diskcache.Cache(str(cache_dir())))
    app = Dash(
        __name__,
        title="Turnback",
        assets_folder=assets_folder(),
        background_callback_manager=manager,
        suppress_callback_exceptions=False,
    )
    app.layout = build_layout(lake_to_store(DEMO_PARAMETERS, DEMO_PROFILE), callbacks_record.demo_record())
    callbacks.register(app)
    callbacks_map.register(app)
    callbacks_record.register(app)
    callbacks_plans.register(app, Path(data_dir) if data_dir is not None else None)
    return app
