"""Helpers for driving the dashboard in headless Chromium with Playwright.

Chromium is Debian's package (see ../shared notes in DEVELOPERS.md); no
browser is ever downloaded.  The app is served in-process on a free
loopback port.
"""

from __future__ import annotations

import logging
import os
import shutil
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from werkzeug.serving import make_server

CHROMIUM_FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-dev-shm-usage",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-extensions",
    "--no-first-run",
]

ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts"


def chromium_path() -> str | None:
    for candidate in ("/usr/lib/chromium/chromium", shutil.which("chromium"), shutil.which("chromium-browser")):
        if candidate and os.path.exists(candidate):
            return candidate
    return None


@contextmanager
def serve(app: Any) -> Iterator[str]:
    """Serve a Dash app on 127.0.0.1 at a free port for the duration of the block."""
    logging.getLogger("werkzeug").setLevel(logging.ERROR)
    server = make_server("127.0.0.1", 0, app.server, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_port}/"
    finally:
        server.shutdown()
        thread.join(timeout=5)


GRAPH_JS = "document.getElementById('{gid}').querySelector('.js-plotly-plot')"


class Dashboard:
    """A page of the dashboard with the few moves a user makes."""

    def __init__(self, page: Any) -> None:
        self.page = page

    def trace(self, graph: str, index: int, axis: str) -> list[float]:
        js = (
            f"(() => {{ const gd = {GRAPH_JS.format(gid=graph)}; return Array.from(gd._fullData[{index}].{axis}); }})()"
        )
        return list(self.page.evaluate(js))

    def wait_idle(self, timeout: float = 15.0) -> None:
        """Wait until Dash has no callback in flight (the title returns from 'Updating...')."""
        self.page.wait_for_function("document.title !== 'Updating...'", timeout=timeout * 1000)
        time.sleep(0.15)
        self.page.wait_for_function("document.title !== 'Updating...'", timeout=timeout * 1000)

    def history_length(self) -> int:
        from turnback.app.views.lake.figures import EQ_HISTORY

        return len(self.trace("equilibrium-graph", EQ_HISTORY, "x"))

    def wait_history_beyond(self, n: int, timeout: float = 15.0) -> None:
        from turnback.app.views.lake.figures import EQ_HISTORY

        js = (
            f"(() => {{ const gd = {GRAPH_JS.format(gid='equilibrium-graph')};"
            f" return gd && gd._fullData && gd._fullData[{EQ_HISTORY}].x.length > {n}; }})()"
        )
        self.page.wait_for_function(js, timeout=timeout * 1000)
        self.wait_idle()

    def current(self) -> tuple[float, float]:
        from turnback.app.views.lake.figures import EQ_CURRENT

        return self.trace("equilibrium-graph", EQ_CURRENT, "x")[0], self.trace("equilibrium-graph", EQ_CURRENT, "y")[0]

    def state_word(self) -> str:
        return str(self.page.inner_text("#state-word"))

    def readout(self) -> str:
        return str(self.page.inner_text("#readout"))

    def set_load(self, value: float) -> None:
        """Type a load into the slider's own number box and commit it (Tab)."""
        n = self.history_length()
        box = self.page.locator("#load-slider input[type='number']")
        box.fill(f"{value:g}")
        box.press("Tab")
        self.wait_history_beyond(n)

    def set_field(self, input_id: str, text: str) -> None:
        box = self.page.locator(f"#{input_id}")
        box.fill(text)
        box.press("Tab")
        self.wait_idle()

    def screenshot(self, name: str) -> Path:
        ARTIFACTS.mkdir(exist_ok=True)
        path = ARTIFACTS / name
        self.page.screenshot(path=str(path), full_page=True)
        return path
