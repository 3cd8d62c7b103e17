"""Fixtures for the real-browser tests."""

from __future__ import annotations

import os
from collections.abc import Iterator
from typing import Any

import pytest

from .harness import CHROMIUM_FLAGS, Dashboard, chromium_path, serve


def pytest_collection_modifyitems(items: list[pytest.Item]) -> None:
    for item in items:
        if "tests/browser" in str(item.fspath).replace(os.sep, "/"):
            item.add_marker(pytest.mark.browser)


@pytest.fixture(scope="session")
def browser() -> Iterator[Any]:
    path = chromium_path()
    if path is None:
        if os.environ.get("CI"):
            pytest.fail("Chromium is not installed: .ci/run installs Debian's chromium and chromium-driver")
        pytest.skip("Chromium is not installed (apt-get install chromium chromium-driver)")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        b = pw.chromium.launch(executable_path=path, headless=True, args=CHROMIUM_FLAGS)
        yield b
        b.close()


@pytest.fixture(scope="module")
def app_url(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    os.environ.setdefault("TURNBACK_CACHE_DIR", str(tmp_path_factory.mktemp("cache")))
    from turnback.app.server import create_app

    with serve(create_app()) as url:
        yield url


@pytest.fixture
def dash_page(browser: Any, app_url: str) -> Iterator[tuple[Dashboard, list[str]]]:
    """A fresh browser context (its own session) on the dashboard, with console errors collected."""
    context = browser.new_context(viewport={"width": 1500, "height": 1250})
    page = context.new_page()
    errors: list[str] = []
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.goto(app_url)
    page.wait_for_selector("#equilibrium-graph .js-plotly-plot")
    dash = Dashboard(page)
    page.wait_for_selector("#state-word")
    dash.wait_idle()
    yield dash, errors
    context.close()
