"""Load and soak on loopback: many sessions at once, and many callbacks in a row.

Sessions are the browser's own state (app.stores), so each simulated session
keeps its history and sends it back, as a browser tab does.  Cross-talk
would show as a response that is not this session's history extended.
"""

from __future__ import annotations

import json
import math
import statistics
import threading
import time
import urllib.request
from typing import Any

import psutil
import pytest
from turnback.app import ids
from turnback.app.server import create_app
from turnback.app.stores import new_history
from turnback.app.views.lake.history import tail_of

from ..browser.harness import serve
from .payloads import base_values, request_for

SESSIONS = 20
CHANGES = 25
SOAK_CALLBACKS = 2000


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory) -> Any:
    import os

    os.environ.setdefault("TURNBACK_CACHE_DIR", str(tmp_path_factory.mktemp("cache")))
    app = create_app(data_dir=tmp_path_factory.mktemp("data"))
    client = app.server.test_client()
    deps = client.get("/_dash-dependencies").get_json()
    dep = next(d for d in deps if any(i["id"] == ids.LOAD_SLIDER for i in d["inputs"]))
    values = base_values(client)
    with serve(app) as url:
        yield url, dep, values


def _post(url: str, body: dict[str, Any]) -> tuple[int, dict[str, Any], float]:
    req = urllib.request.Request(
        url + "_dash-update-component", data=json.dumps(body).encode(), headers={"Content-Type": "application/json"}
    )
    t0 = time.perf_counter()
    with urllib.request.urlopen(req, timeout=60) as r:
        out = json.loads(r.read())
        return r.status, out, time.perf_counter() - t0


def _session(url: str, dep: dict, values: dict, k: int, years: int, out: dict[Any, Any]) -> None:
    tail = tail_of(new_history(values[f"{ids.LAKE_STORE}.data"]))
    overrides = {f"{ids.YEARS_INPUT}.value": years}
    errors, times, crossed = 0, [], 0
    for i in range(CHANGES):
        load = 100.5 + 20.0 * k + 10.0 * i  # every session its own loads (never today's 420), so a mix-up shows
        body = request_for(
            dep, values, overrides | {f"{ids.LOAD_SLIDER}.value": load, f"{ids.HISTORY_TAIL}.data": tail}
        )
        try:
            status, resp, dt = _post(url, body)
        except OSError as exc:
            errors += 1
            out.setdefault("why", []).append(repr(exc))
            continue
        times.append(dt)
        new = resp.get("response", {}).get(ids.HISTORY_TAIL, {}).get("data")
        if status != 200 or new is None:
            errors += 1
            out.setdefault("why", []).append(f"{status} {str(resp)[:200]}")
            continue
        # this session's own state moved on: its lake, its year plus the years asked, its load, its length
        ours = (
            new["lake_key"] == tail["lake_key"]
            and new["year"] == tail["year"] + years
            and new["n"] == tail["n"] + years + 1  # the load change itself, then one point a year
            and new["load"] == load
        )
        if not ours:
            crossed += 1
        tail = new
    out[k] = (errors, crossed, times)


def test_twenty_sessions_at_once_without_errors_or_cross_talk(server: Any) -> None:
    url, dep, values = server
    results: dict[Any, Any] = {}
    threads = [threading.Thread(target=_session, args=(url, dep, values, k, 5, results)) for k in range(SESSIONS)]
    t0 = time.perf_counter()
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    wall = time.perf_counter() - t0
    why = results.pop("why", [])
    errors = sum(r[0] for r in results.values())
    crossed = sum(r[1] for r in results.values())
    times = sorted(x for r in results.values() for x in r[2])
    print("\n".join(why))
    p95 = times[math.ceil(0.95 * len(times)) - 1]
    print(
        f"\n{SESSIONS} sessions x {CHANGES} load changes: {len(times)} answered in {wall:.1f} s, errors {errors}, "
        f"cross-talk {crossed}, median {1000 * statistics.median(times):.0f} ms, p95 {1000 * p95:.0f} ms"
    )
    assert errors == 0 and crossed == 0 and len(times) == SESSIONS * CHANGES


def test_two_thousand_callbacks_keep_memory_flat(server: Any) -> None:
    url, dep, values = server
    proc = psutil.Process()
    tail = tail_of(new_history(values[f"{ids.LAKE_STORE}.data"]))
    overrides = {f"{ids.YEARS_INPUT}.value": 1}

    def step(i: int) -> None:
        # the same session state every time, so requests stay the same size
        body = request_for(
            dep,
            values,
            overrides | {f"{ids.LOAD_SLIDER}.value": 200.0 + (i % 50), f"{ids.HISTORY_TAIL}.data": tail},
        )
        status, resp, _ = _post(url, body)
        assert status == 200 and ids.HISTORY_TAIL in resp["response"]

    for i in range(200):  # warm up: imports, caches, first allocations
        step(i)
    before = proc.memory_info().rss
    t0 = time.perf_counter()
    for i in range(SOAK_CALLBACKS):
        step(i)
    after = proc.memory_info().rss
    print(
        f"\n{SOAK_CALLBACKS} callbacks in {time.perf_counter() - t0:.1f} s: resident memory {before / 1e6:.0f} MB -> "
        f"{after / 1e6:.0f} MB ({100 * (after - before) / before:+.1f} %)"
    )
    assert after < 1.10 * before
