"""Serving to a team: gunicorn worker processes, and background jobs on Celery workers through Redis.

Real processes on loopback: a private redis-server (Debian's package, installed by .ci/run), a
`turnback worker`, and `turnback serve --redis-url` (or `--workers 2`); the dashboard is driven in
headless Chromium through a background fit and a plan run, with progress and cancel.
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from turnback.app import ids

from .harness import Dashboard

TURNBACK = [sys.executable, "-m", "turnback"]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _wait_http(url: str, proc: subprocess.Popen[bytes], timeout: float = 60.0) -> None:
    deadline = time.time() + timeout
    while time.time() < deadline:
        if proc.poll() is not None:
            raise AssertionError(f"the server stopped: {proc.stdout.read().decode() if proc.stdout else ''}")
        try:
            urllib.request.urlopen(url, timeout=2).read()
            return
        except OSError:
            time.sleep(0.3)
    raise AssertionError(f"{url} did not answer")


def _stop(*procs: subprocess.Popen[bytes]) -> None:
    for p in procs:
        if p.poll() is None:
            try:
                os.killpg(p.pid, signal.SIGTERM)
            except ProcessLookupError:
                pass
    for p in procs:
        try:
            p.wait(timeout=15)
        except subprocess.TimeoutExpired:
            os.killpg(p.pid, signal.SIGKILL)


def _start(args: list[str], env: dict[str, str], log: Path) -> subprocess.Popen[bytes]:
    return subprocess.Popen(args, env=env, stdout=log.open("wb"), stderr=subprocess.STDOUT, start_new_session=True)


@pytest.fixture(scope="module")
def redis_url(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    exe = shutil.which("redis-server")
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("redis-server is not installed: .ci/run installs Debian's redis-server")
        pytest.skip("redis-server is not installed (apt-get install redis-server)")
    port = _free_port()
    log = tmp_path_factory.mktemp("redis") / "redis.log"
    proc = _start(
        [exe, "--port", str(port), "--bind", "127.0.0.1", "--save", "", "--daemonize", "no"], dict(os.environ), log
    )
    deadline = time.time() + 10
    while time.time() < deadline:
        try:
            socket.create_connection(("127.0.0.1", port), timeout=1).close()
            break
        except OSError:
            time.sleep(0.1)
    yield f"redis://127.0.0.1:{port}/0"
    _stop(proc)


def _page(browser: Any, url: str) -> tuple[Any, Dashboard]:
    context = browser.new_context(viewport={"width": 1500, "height": 1250})
    page = context.new_page()
    page.goto(url)
    page.wait_for_selector("#state-word")
    dash = Dashboard(page)
    dash.wait_idle(timeout=30)
    return context, dash


def _watch(page: Any, text_id: str, done: Any, timeout: float) -> set[str]:
    """The texts shown in ``text_id`` until ``done(text)`` (given the text just read) says the job ended."""
    seen: set[str] = set()
    deadline = time.time() + timeout
    while time.time() < deadline:
        text = page.inner_text(f"#{text_id}")
        seen.add(text)
        if done(text):
            break
        time.sleep(0.05)
    return seen


def test_background_fit_and_plan_on_celery_workers(browser: Any, redis_url: str, tmp_path: Path) -> None:
    env = dict(os.environ, TURNBACK_CACHE_DIR=str(tmp_path / "cache"))
    port = _free_port()
    worker = _start(
        [*TURNBACK, "worker", "--redis-url", redis_url, "--concurrency", "1", "--data-dir", str(tmp_path / "data")],
        env,
        tmp_path / "worker.log",
    )
    server = _start(
        [*TURNBACK, "serve", "--port", str(port), "--redis-url", redis_url, "--data-dir", str(tmp_path / "data")],
        env,
        tmp_path / "serve.log",
    )
    try:
        url = f"http://127.0.0.1:{port}/"
        _wait_http(url, server)
        context, dash = _page(browser, url)
        page = dash.page
        # a fit: progress shows while a worker runs it, then its answer comes back
        page.click(".view-tabs >> text=Monitoring record")
        dash.wait_idle()
        page.fill(f"#{ids.RECORD_REPLICATES}", "3000")
        page.click(f"#{ids.RECORD_FIT_BUTTON}")
        seen = _watch(
            page,
            ids.RECORD_PROGRESS_TEXT,
            lambda text: text == "done",
            timeout=120,
        )
        assert "done" in seen, (seen, (tmp_path / "worker.log").read_text()[-2000:])
        assert any("bootstrap refits" in t for t in seen), seen
        page.wait_for_selector("#fit-regime", timeout=30000)
        # a long fit, cancelled: the worker stops it and the page is ready again
        page.fill(f"#{ids.RECORD_REPLICATES}", "20000")
        page.click(f"#{ids.RECORD_FIT_BUTTON}")
        page.wait_for_function(
            f"document.getElementById('{ids.RECORD_PROGRESS_TEXT}').innerText.includes('refits')", timeout=60000
        )
        page.click(f"#{ids.RECORD_CANCEL_BUTTON}")
        page.wait_for_function(f"!document.getElementById('{ids.RECORD_FIT_BUTTON}').disabled", timeout=30000)
        time.sleep(2.0)
        assert page.inner_text(f"#{ids.RECORD_PROGRESS_TEXT}") != "done"
        # a plan run on the worker, with its progress
        page.click(".view-tabs >> text=Plans compared")
        page.wait_for_function(f"document.getElementById('{ids.PLAN_LAKE_NOTE}').innerText.length > 0")
        dash.wait_idle()
        page.fill(f"#{ids.PLAN_FORM['years']}", "50")
        page.fill(f"#{ids.PLAN_FORM['members']}", "100000")
        page.fill(f"#{ids.PLAN_FORM['cv']}", "0.3")
        page.click(f"#{ids.PLAN_ADD}")
        dash.wait_idle()
        page.click(f"#{ids.PLAN_RUN}")
        seen = _watch(
            page,
            ids.PLAN_PROGRESS_TEXT,
            lambda _: page.inner_text(f"#{ids.PLAN_RUN_MESSAGE}").startswith("Ran "),
            timeout=120,
        )
        assert page.inner_text(f"#{ids.PLAN_RUN_MESSAGE}").startswith("Ran "), seen
        assert any("%" in t for t in seen), seen
        context.close()
    finally:
        _stop(server, worker)
    assert "Traceback" not in (tmp_path / "serve.log").read_text()


def test_gunicorn_workers_serve_the_story(browser: Any, tmp_path: Path) -> None:
    env = dict(os.environ, TURNBACK_CACHE_DIR=str(tmp_path / "cache"))
    port = _free_port()
    server = _start(
        [*TURNBACK, "serve", "--port", str(port), "--workers", "2", "--data-dir", str(tmp_path / "data")],
        env,
        tmp_path / "serve.log",
    )
    try:
        url = f"http://127.0.0.1:{port}/"
        _wait_http(url, server)
        head = urllib.request.urlopen(url, timeout=5)
        assert head.headers["Server"].startswith("gunicorn")
        assert (
            head.headers["X-Frame-Options"] == "DENY" and "frame-ancestors" in head.headers["Content-Security-Policy"]
        )
        context, dash = _page(browser, url)
        for load in (600.0, 300.0, 140.0):  # requests spread over both workers (loads on the slider's 20 kg step)
            dash.set_load(load)
        assert dash.current()[0] == pytest.approx(140.0)
        # a background fit: its job and result are shared by both workers through the cache folder
        dash.page.click(".view-tabs >> text=Monitoring record")
        dash.wait_idle()
        dash.page.fill(f"#{ids.RECORD_REPLICATES}", "200")
        dash.page.click(f"#{ids.RECORD_FIT_BUTTON}")
        dash.page.wait_for_selector("#fit-regime", timeout=60000)
        context.close()
    finally:
        _stop(server)
    log = (tmp_path / "serve.log").read_text()
    assert "Traceback" not in log and "with 2 workers" in log
