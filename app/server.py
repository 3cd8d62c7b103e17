"""The Dash application factory."""

from __future__ import annotations

from pathlib import Path

from dash import Dash
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.io.resources import assets_folder

from . import guard, shell
from .background import make_manager
from .stores import demo_record, lake_to_store
from .views.lake import callbacks as lake_callbacks
from .views.map import callbacks as map_callbacks
from .views.plans import callbacks as plans_callbacks
from .views.record import callbacks as record_callbacks
from .views.region import callbacks as region_callbacks


def create_app(data_dir: str | Path | None = None) -> Dash:
    """Build the dashboard on the built-in demo lake.

    Session state lives in the browser; saved lakes, fits and scenarios go to
    the SQLite store in ``data_dir`` (default: $TURNBACK_DATA_DIR, else
    ./turnback-data; see :mod:`turnback.model.io.store`).
    """
    app = Dash(
        __name__,
        title="Turnback",
        assets_folder=assets_folder(),
        background_callback_manager=make_manager(),
        suppress_callback_exceptions=False,
        on_error=guard.on_callback_error,
    )
    guard.install(app)
    app.layout = shell.build_layout(lake_to_store(DEMO_PARAMETERS, DEMO_PROFILE), demo_record())
    shell.register(app)
    lake_callbacks.register(app)
    map_callbacks.register(app)
    record_callbacks.register(app)
    region_callbacks.register(app)
    plans_callbacks.register(app, Path(data_dir) if data_dir is not None else None)
    return app
