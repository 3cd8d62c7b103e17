"""Long work in the background: the cache folder, the callback manager, cancelling and progress.

Fits and ensembles run as Dash background callbacks on a diskcache manager
(``$TURNBACK_CACHE_DIR``, default a per-user temp folder), or on Celery
workers through Redis when ``$TURNBACK_REDIS_URL`` is set (``turnback serve
--redis-url``, ``turnback worker``).  A run that can
stop early takes a cancel hook: the Cancel button leaves a flag file named
by the run's random token in a folder of the cache, and the run's hook sees
it between chunks of work (:func:`model.scenario.compare_plan` then raises
:class:`model.scenario.RunCancelled`).  :class:`ProgressReporter` turns the
model's progress calls into Dash's ``set_progress`` values.
"""

from __future__ import annotations

import math
import os
import re
import tempfile
import time
import uuid
from collections.abc import Callable
from pathlib import Path
from typing import Any

import diskcache
from dash import DiskcacheManager

#: Dash's ``set_progress``: one value per ``progress=`` output
SetProgress = Callable[[tuple[str, ...]], None]

_TOKEN = re.compile(r"[0-9a-f]{32}")


def cache_dir() -> Path:
    """Folder for the background-callback cache: $TURNBACK_CACHE_DIR or a per-user temp folder."""
    env = os.environ.get("TURNBACK_CACHE_DIR")
    if env:
        return Path(env)
    return Path(tempfile.gettempdir()) / f"turnback-cache-{os.getuid() if hasattr(os, 'getuid') else 'user'}"


#: Environment variable that moves background jobs to Celery workers through Redis (``serve --redis-url``).
REDIS_URL_ENV = "TURNBACK_REDIS_URL"


def redis_url() -> str | None:
    """The Redis URL of the job queue, or None for the embedded default."""
    return os.environ.get(REDIS_URL_ENV, "").strip() or None


_CELERY: dict[str, Any] = {}


def celery_app(url: str) -> Any:
    """The Celery application of the job queue at ``url`` (one per process), Redis as broker and result store."""
    if url not in _CELERY:
        from celery import Celery

        app = Celery("turnback", broker=url, backend=url)
        app.conf.update(
            task_acks_late=True,  # a job whose worker dies is given to another
            worker_prefetch_multiplier=1,
            broker_connection_retry_on_startup=True,
            result_expires=86400,
        )
        _CELERY[url] = app
    return _CELERY[url]


def make_manager() -> Any:
    """The background-callback manager: Celery through Redis when configured, else diskcache on the cache folder.

    With diskcache (the default) jobs run in processes on this machine and
    every server worker shares the cache folder; with Redis they run in
    ``turnback worker`` processes, here or on other machines.
    """
    url = redis_url()
    if url:
        from dash import CeleryManager

        return CeleryManager(celery_app(url))
    return DiskcacheManager(diskcache.Cache(str(cache_dir())))


# --------------------------------------------------------------------------
# cooperative cancel
# --------------------------------------------------------------------------
def cancel_folder() -> Path:
    """Folder of cancel flags, inside the background-callback cache."""
    return cache_dir() / "plan-cancel"


def new_token(folder: Path) -> str:
    """A fresh run token; flags older than a day are cleared on the way."""
    try:
        now = time.time()
        for f in folder.glob("*"):
            if now - f.stat().st_mtime > 86400:
                f.unlink(missing_ok=True)
    except OSError:
        pass
    return uuid.uuid4().hex


def _flag(folder: Path, token: Any) -> Path | None:
    return folder / token if isinstance(token, str) and _TOKEN.fullmatch(token) else None


def request_cancel(folder: Path, token: Any) -> bool:
    """Leave the cancel flag of run ``token``; False for a token that is not one of ours."""
    flag = _flag(folder, token)
    if flag is None:
        return False
    folder.mkdir(parents=True, exist_ok=True)
    flag.touch()
    return True


def cancel_hook(folder: Path, token: Any) -> Callable[[], bool]:
    """The run's ``cancel()``: True once its flag has been left."""
    flag = _flag(folder, token)
    return (lambda: False) if flag is None else flag.exists


def clear_flag(folder: Path, token: Any) -> None:
    flag = _flag(folder, token)
    if flag is not None:
        flag.unlink(missing_ok=True)


# --------------------------------------------------------------------------
# progress
# --------------------------------------------------------------------------
class ProgressReporter:
    """The model's progress calls as Dash progress values.

    With ``bar`` the callback has two progress outputs, (bar value, text);
    without, one (text).  A report is sent only when the whole percent
    changes, so a fast loop does not flood the browser.

    - :meth:`fraction` takes ``(fraction, message)``, the model's one
      progress type (:data:`turnback.model.progress.Progress`); the text is
      ``"NN% — message"``.
    - :meth:`show` sends a value at once (start, done, cancelled).
    """

    def __init__(self, set_progress: SetProgress, *, bar: bool = True) -> None:
        self._set = set_progress
        self._bar = bar
        self._last = -1

    def show(self, percent: int, text: str) -> None:
        self._set((str(percent), text) if self._bar else (text,))

    def _report(self, fraction: float, text: Callable[[int], str]) -> None:
        pct = math.floor(100 * fraction)
        if pct != self._last:
            self._last = pct
            self.show(pct, text(pct))

    def fraction(self, fraction: float, message: str) -> None:
        self._report(fraction, lambda pct: f"{pct}% — {message}")
