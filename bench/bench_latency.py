"""Benchmark: how fast the dashboard answers a meeting, in headless Chromium on loopback.

Measured in one run, with ratios against peers of the same run:

- **first figure**: from navigation to a warm server (one page already
  served) to the equilibrium figure's first draw; against the 1.5 s target;
- **meeting toggle**: from the click to the figures redrawn in the meeting
  view with no callback in flight; against the 300 ms target;
- **slider to redraw**: arrow-key presses on the slider handle, from the key
  press to the equilibrium figure's next ``plotly_afterplot``, with a fresh
  history and again with a history of about 2,500 points; the ratio of the
  two p95s (target: within 1.3×, as the load change sends only the new
  points);
- server side: the callback work of a load change (append patches) against a
  full rebuild of both figures.

Not a CI gate.  Run: ``.venv/bin/python -m bench.bench_latency`` (``--quick``
for a smoke run).
"""

from __future__ import annotations

import json
import os
import statistics
import sys
import tempfile
import time
from typing import Any

from turnback.app.stores import lake_to_store, new_history
from turnback.app.views.lake.callbacks import on_lake, step_session
from turnback.app.views.lake.figures import append_patches
from turnback.app.views.lake.history import appended, from_tail, tail_of
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE

from tests.browser.harness import CHROMIUM_FLAGS, chromium_path, serve

FIRST_FIGURE_TARGET_S = 1.5
TOGGLE_TARGET_S = 0.3
LONG_HISTORY = 2500


def pct(values: list[float], q: float) -> float:
    s = sorted(values)
    return s[min(len(s) - 1, round(q * (len(s) - 1)))]


def server_side(n_changes: int = 200, n_full: int = 30) -> tuple[float, float]:
    """Median time [ms] of one load change (tail in, append patches out) and of a full rebuild."""
    lake = lake_to_store(DEMO_PARAMETERS, DEMO_PROFILE)
    history = new_history(lake)
    tail = tail_of(history)
    patch_times, full_times = [], []
    load = DEMO_PROFILE.load_kg_per_yr
    for i in range(n_changes):
        load += 10.0 if i % 2 == 0 else -10.0
        t0 = time.perf_counter()
        new, _, _ = step_session("load-slider", load, from_tail(tail), lake, 5, 0)
        assert new is not None
        added = appended(new)
        eq, tf = append_patches(added, lake, (0, new["year"][-1]))
        json.dumps(eq.to_plotly_json()), json.dumps(tf.to_plotly_json())
        patch_times.append(time.perf_counter() - t0)
        tail = tail_of(new) | {"n": tail["n"] + len(added["year"])}
        for k in ("year", "load", "p", "event"):
            history[k] += added[k]  # type: ignore[literal-required]
    for _ in range(n_full):
        t0 = time.perf_counter()
        out = on_lake(lake, [], history, None)
        out["equilibrium"].to_json(), out["time"].to_json()
        full_times.append(time.perf_counter() - t0)
    return statistics.median(patch_times) * 1e3, statistics.median(full_times) * 1e3


GD = "document.getElementById('equilibrium-graph').querySelector('.js-plotly-plot')"


def first_figure(browser: Any, url: str, context: Any = None) -> float:
    """Seconds from navigation to the equilibrium figure drawn with its curve.

    A new browser context starts with an empty cache (plotly.js and the grid's scripts are fetched and parsed);
    ``context`` reuses one whose cache is warm, as a browser that has opened the dashboard before.
    """
    own = context is None
    context = context or browser.new_context(viewport={"width": 1920, "height": 1080})
    page = context.new_page()
    t0 = time.perf_counter()
    page.goto(url)
    page.wait_for_function(
        "(() => { const el = document.getElementById('equilibrium-graph');"
        " const gd = el && el.querySelector('.js-plotly-plot');"
        " return !!(gd && gd._fullData && gd._fullData.length > 3); })()",
        polling=10,
    )
    dt = time.perf_counter() - t0
    page.close()
    if own:
        context.close()
    return dt


def toggle_time(page: Any) -> float:
    """Seconds from a click on the meeting toggle to the page settled in the other view."""
    page.wait_for_function("document.title !== 'Updating...'")
    time.sleep(0.3)
    t0 = time.perf_counter()
    page.click("#meeting-toggle input")
    page.wait_for_function("document.title === 'Updating...'", timeout=5000)
    page.wait_for_function("document.title !== 'Updating...'", timeout=15000, polling=5)
    return time.perf_counter() - t0


def key_latencies(page: Any, n: int) -> list[float]:
    page.evaluate(
        f"""() => {{
        window.__lat = []; window.__t = null;
        if (!window.__hooked) {{
            window.__hooked = true;
            document.addEventListener('keydown', () => {{ window.__t = performance.now(); }}, true);
            {GD}.on('plotly_afterplot', () => {{
                if (window.__t !== null) {{ window.__lat.push(performance.now() - window.__t); window.__t = null; }}
            }});
        }}
    }}"""
    )
    handle = page.locator("#load-slider [role='slider']")
    handle.focus()
    for i in range(n):
        handle.press("ArrowRight" if i % 2 == 0 else "ArrowLeft")
        page.wait_for_function(f"window.__lat.length > {i}", timeout=15000)
        page.wait_for_function("document.title !== 'Updating...'", timeout=15000)
    return list(page.evaluate("window.__lat"))


def history_points(page: Any) -> int:
    return int(page.evaluate(f"{GD}._fullData[5].x.length"))


def main() -> None:
    quick = "--quick" in sys.argv
    n_keys = 8 if quick else 40
    path = chromium_path()
    if path is None:
        print("Chromium not found: apt-get install chromium chromium-driver")
        return
    os.environ.setdefault("TURNBACK_CACHE_DIR", tempfile.mkdtemp(prefix="turnback-bench-"))
    from playwright.sync_api import sync_playwright
    from turnback.app.server import create_app

    app = create_app(data_dir=tempfile.mkdtemp(prefix="turnback-bench-data-"))
    with serve(app) as url, sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=path, headless=True, args=CHROMIUM_FLAGS)
        first_figure(browser, url)  # warm the server
        firsts = [first_figure(browser, url) for _ in range(2 if quick else 5)]
        warm_context = browser.new_context(viewport={"width": 1920, "height": 1080})
        first_figure(browser, url, warm_context)
        warm = [first_figure(browser, url, warm_context) for _ in range(2 if quick else 5)]
        warm_context.close()
        page = browser.new_page(viewport={"width": 1920, "height": 1080})
        page.goto(url)
        page.wait_for_selector("#state-word")
        page.wait_for_function("document.title !== 'Updating...'")
        time.sleep(1.0)
        toggles = [toggle_time(page) for _ in range(2 if quick else 6)]
        fresh = key_latencies(page, n_keys)
        page.fill("#years-per-change", "200")
        page.press("#years-per-change", "Tab")
        while history_points(page) < LONG_HISTORY:
            n = history_points(page)
            page.click("#let-years-pass")
            page.wait_for_function(f"{GD}._fullData[5].x.length > {n}", timeout=15000)
            page.wait_for_function("document.title !== 'Updating...'")
        page.fill("#years-per-change", "5")
        page.press("#years-per-change", "Tab")
        points = history_points(page)
        long = key_latencies(page, n_keys)
        browser.close()

    patch_ms, full_ms = server_side(60 if quick else 200, 10 if quick else 30)
    first, toggle = statistics.median(firsts), statistics.median(toggles)
    print("Dashboard latency in headless Chromium on loopback (one run)")
    warm_first = statistics.median(warm)
    print(f"  first figure after navigation to a warm server, new browser (empty cache): median {first:.2f} s;")
    print(f"    ratio to the {FIRST_FIGURE_TARGET_S} s target: {first / FIRST_FIGURE_TARGET_S:.2f}")
    print(f"  first figure, browser that has opened the dashboard before (cached scripts): median {warm_first:.2f} s;")
    print(f"    ratio to the {FIRST_FIGURE_TARGET_S} s target: {warm_first / FIRST_FIGURE_TARGET_S:.2f}")
    print(f"  meeting toggle: median {1e3 * toggle:.0f} ms over {len(toggles)} clicks;")
    print(f"    ratio to the {1e3 * TOGGLE_TARGET_S:.0f} ms target: {toggle / TOGGLE_TARGET_S:.2f}")
    print(f"  slider to redraw, fresh history: median {statistics.median(fresh):.0f} ms, p95 {pct(fresh, 0.95):.0f} ms")
    print(
        f"  slider to redraw, {points:,}-point history: median {statistics.median(long):.0f} ms, "
        f"p95 {pct(long, 0.95):.0f} ms"
    )
    print(f"    ratio of p95s, long / fresh: {pct(long, 0.95) / pct(fresh, 0.95):.2f} (target at most 1.3)")
    print(f"  callback work of a load change (append patches): median {patch_ms:.2f} ms")
    print(f"  baseline, full rebuild of both figures:          median {full_ms:.2f} ms")
    print(f"    ratio full rebuild / patch: {full_ms / patch_ms:.1f}x")


if __name__ == "__main__":
    main()
