"""Benchmark: slider-to-redraw latency of the dashboard in headless Chromium.

Fifty load changes by arrow key on the slider handle.  For each, the time
from the key press to the equilibrium figure's next ``plotly_afterplot``
event is read off the page's own clock.  Server-side, every callback
request is timed; the patch path used for load changes is compared with a
full rebuild of both figures (the baseline, measured in the same run).

Prints median and p95 in the browser, the server-side callback times, and
their ratio.  Not a CI gate.  Run: ``.venv/bin/python -m bench.bench_latency``.
"""

from __future__ import annotations

import json
import os
import statistics
import tempfile
import time
from collections import defaultdict

from flask import g, request
from turnback.app.stores import lake_to_store, new_history
from turnback.app.views.lake.callbacks import on_lake, step_session
from turnback.app.views.lake.figures import history_patches
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE

from tests.browser.harness import CHROMIUM_FLAGS, chromium_path, serve

N_CHANGES = 50


def pct(values: list[float], q: float) -> float:
    s = sorted(values)
    return s[min(len(s) - 1, round(q * (len(s) - 1)))]


def server_side(n_changes: int = 200, n_full: int = 30) -> tuple[float, float]:
    """Median time [ms] of one load change (patch path) and of a full rebuild."""
    lake = lake_to_store(DEMO_PARAMETERS, DEMO_PROFILE)
    history = new_history(lake)
    patch_times, full_times = [], []
    load = DEMO_PROFILE.load_kg_per_yr
    for i in range(n_changes):
        load += 1.0 if i % 2 == 0 else -1.0
        t0 = time.perf_counter()
        new, _, _ = step_session("load-slider", load, history, lake, 5, 0)
        assert new is not None
        eq, tf = history_patches(new, lake)
        json.dumps(eq.to_plotly_json()), json.dumps(tf.to_plotly_json())
        patch_times.append(time.perf_counter() - t0)
        history = new
    for _ in range(n_full):
        t0 = time.perf_counter()
        out = on_lake(lake, [], history, None)
        out["equilibrium"].to_json(), out["time"].to_json()
        full_times.append(time.perf_counter() - t0)
    return statistics.median(patch_times) * 1e3, statistics.median(full_times) * 1e3


def main() -> None:
    path = chromium_path()
    if path is None:
        print("Chromium not found: apt-get install chromium chromium-driver")
        return
    os.environ.setdefault("TURNBACK_CACHE_DIR", tempfile.mkdtemp(prefix="turnback-bench-"))
    from playwright.sync_api import sync_playwright
    from turnback.app.server import create_app

    app = create_app()
    request_times: dict[str, list[float]] = defaultdict(list)

    @app.server.before_request
    def _start() -> None:
        g.t0 = time.perf_counter()

    @app.server.after_request
    def _stop(response):  # type: ignore[no-untyped-def]
        if request.path.startswith("/_dash-update-component"):
            body = request.get_json(silent=True) or {}
            request_times[str(body.get("output", ""))[:60]].append(time.perf_counter() - g.t0)
        return response

    with serve(app) as url, sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=path, headless=True, args=CHROMIUM_FLAGS)
        page = browser.new_page(viewport={"width": 1500, "height": 1250})
        page.goto(url)
        page.wait_for_selector("#state-word")
        time.sleep(1.0)
        page.evaluate(
            """() => {
            window.__lat = []; window.__t = null;
            document.addEventListener('keydown', () => { window.__t = performance.now(); }, true);
            const gd = document.getElementById('equilibrium-graph').querySelector('.js-plotly-plot');
            gd.on('plotly_afterplot', () => {
                if (window.__t !== null) { window.__lat.push(performance.now() - window.__t); window.__t = null; }
            });
        }"""
        )
        handle = page.locator("#load-slider [role='slider']")
        handle.focus()
        for i in range(N_CHANGES):
            handle.press("ArrowRight" if i < N_CHANGES // 2 else "ArrowLeft")
            page.wait_for_function(f"window.__lat.length > {i}", timeout=15000)
            page.wait_for_function("document.title !== 'Updating...'", timeout=15000)
        lat = list(page.evaluate("window.__lat"))
        browser.close()

    patch_ms, full_ms = server_side()
    action = [v for k, v in request_times.items() if "history-store.data" in k and "readout" not in k]
    action_times = [t * 1e3 for v in action for t in v]
    print(f"Slider-to-redraw latency in headless Chromium over {len(lat)} load changes")
    print(f"  median {statistics.median(lat):.1f} ms, p95 {pct(lat, 0.95):.1f} ms (key press to figure redrawn)")
    if action_times:
        print(f"  server request for a load change: median {statistics.median(action_times):.2f} ms (HTTP included)")
    print(f"  callback work for a load change (patch path): median {patch_ms:.2f} ms")
    print(f"  baseline, full rebuild of both figures:       median {full_ms:.2f} ms")
    print(f"  ratio full rebuild / patch: {full_ms / patch_ms:.1f}x")


if __name__ == "__main__":
    main()
