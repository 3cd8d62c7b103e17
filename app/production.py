"""Serving the dashboard to a team: gunicorn worker processes, and Celery workers for background jobs.

``turnback serve`` keeps the embedded single-process server by default.
``--workers N`` runs the same app under gunicorn with N worker processes;
each builds its own app, and all share the background-job store (the
diskcache folder, or Redis).  ``--redis-url URL`` moves background jobs
(fits, plan runs) to Celery workers (``turnback worker --redis-url URL``),
on this machine or others; the server then only answers requests.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from typing import Any

from gunicorn.app.base import BaseApplication

from .background import REDIS_URL_ENV, celery_app

__all__ = ["run_gunicorn", "run_worker"]


class _Gunicorn(BaseApplication):  # type: ignore[misc]
    """gunicorn run from Python with our options, each worker building the app from the factory."""

    def __init__(self, factory: Callable[[], Any], options: dict[str, Any]) -> None:
        self._factory = factory
        self._options = options
        super().__init__()

    def load_config(self) -> None:
        for key, value in self._options.items():
            self.cfg.set(key, value)

    def load(self) -> Any:
        return self._factory()


def run_gunicorn(factory: Callable[[], Any], host: str, port: int, workers: int, timeout: int = 120) -> None:
    """Serve the Flask server that ``factory()`` returns with ``workers`` gunicorn processes."""
    options = {
        "bind": f"[{host}]:{port}" if ":" in host else f"{host}:{port}",
        "workers": workers,
        "worker_class": "gthread",
        "threads": 4,
        "timeout": timeout,
        "graceful_timeout": 10,
        "accesslog": None,
        "errorlog": "-",
        "loglevel": "warning",
        "preload_app": False,
    }
    _Gunicorn(factory, options).run()


def run_worker(url: str, concurrency: int, data_dir: str | None = None) -> None:
    """Run a Celery worker for the dashboard's background jobs (fits, plan runs) from the queue at ``url``."""
    os.environ[REDIS_URL_ENV] = url
    from .server import create_app

    create_app(data_dir=data_dir)  # registers every background callback as a task of the Celery app
    celery_app(url).worker_main(
        argv=["worker", "--loglevel=WARNING", f"--concurrency={concurrency}", "--pool=prefork", "-n", "turnback@%h"]
    )
