"""The region view in headless Chromium: upload the demo region, screen it in the background, open a lake.

The demo region is invented (sample_data/region, 40 fictional lakes).
Expected orders and colours come from what the page shows and from the
theme, never from numbers typed in here.
"""

from __future__ import annotations

import csv
import io
import time
from pathlib import Path
from typing import Any

import pytest
from turnback.app import ids
from turnback.app.theme import REGIME_ROW
from turnback.model.screening import RESULT_KEYS

from .harness import ARTIFACTS, Dashboard
from .test_meeting import SIZES, meeting, open_page, open_tab, serious

ROOT = Path(__file__).resolve().parents[2]
REGION = ROOT / "sample_data" / "region"
REPLICATES = "100"


def _rgb(hex_colour: str) -> str:
    h = hex_colour.lstrip("#")
    return "rgb({}, {}, {})".format(*(int(h[i : i + 2], 16) for i in (0, 2, 4)))


def upload_and_screen(dash: Dashboard) -> int:
    """Upload the demo LAKES.csv and RECORDS.csv, screen them, and return the rows of the table."""
    page = dash.page
    open_tab(dash, "region")
    page.set_input_files(f"#{ids.REGION_LAKES_UPLOAD} input[type='file']", str(REGION / "LAKES.csv"))
    page.wait_for_function(f"document.getElementById('{ids.REGION_FILES_NOTE}').innerText.includes('LAKES.csv')")
    page.set_input_files(f"#{ids.REGION_RECORDS_UPLOAD} input[type='file']", str(REGION / "RECORDS.csv"))
    page.wait_for_function(
        f"document.getElementById('{ids.REGION_FILES_NOTE}').innerText.includes('LAKES.csv and RECORDS.csv')"
    )
    assert "40 lakes" in page.inner_text(f"#{ids.REGION_FILES_NOTE}")
    page.fill(f"#{ids.REGION_REPLICATES}", REPLICATES)
    page.click(f"#{ids.REGION_RUN}")
    # the background run: the Cancel button comes alive while it goes, progress is shown, then the table fills
    page.wait_for_selector(f"#{ids.REGION_CANCEL}:not([disabled])", timeout=20_000)
    page.wait_for_function(
        f"document.getElementById('{ids.REGION_PROGRESS_TEXT}').innerText.includes('lakes')", timeout=60_000
    )
    page.wait_for_function(
        f"document.getElementById('{ids.REGION_PROGRESS_TEXT}').innerText.startsWith('done')", timeout=240_000
    )
    page.wait_for_selector(f"#{ids.REGION_TABLE} .ag-row", timeout=30_000)
    dash.wait_idle()
    time.sleep(0.5)
    return int(page.evaluate(f"dash_ag_grid.getApi('{ids.REGION_TABLE}').getDisplayedRowCount()"))


def test_region_from_upload_to_the_lake_now(browser: Any, app_url: str, tmp_path: Path) -> None:
    context, dash, errors = open_page(browser, app_url, 1500, 1000)
    page = dash.page
    n_rows = upload_and_screen(dash)
    assert n_rows >= 30
    summary = page.inner_text(f"#{ids.REGION_SUMMARY}")
    assert "lakes" in summary and "LAKES.csv + RECORDS.csv" in summary
    # ranked by margin: the margins go up down the table, lakes without a tipping load last
    margins = page.evaluate(
        f"(() => {{ const out = []; dash_ag_grid.getApi('{ids.REGION_TABLE}')"
        ".forEachNodeAfterFilterAndSort(n => out.push(n.data.margin_kg_yr)); return out; })()"
    )
    known = [m for m in margins if m is not None]
    assert known == sorted(known) and margins[: len(known)] == known and len(known) >= 20
    shown = page.locator(f"#{ids.REGION_TABLE} .ag-row[row-index='0'] [col-id='margin_kg_yr']").first.inner_text()
    assert float(shown.replace(",", "").replace("+", "").replace("−", "-")) == pytest.approx(known[0], abs=0.5)
    # rows coloured by regime (the theme's tints)
    colours = page.eval_on_selector_all(
        f"#{ids.REGION_TABLE} .ag-center-cols-container .ag-row",
        "rows => rows.map(r => [r.querySelector(\"[col-id='regime']\").innerText,"
        " getComputedStyle(r).backgroundColor])",
    )
    for regime, colour in colours:
        assert colour == _rgb(REGIME_ROW[regime]), (regime, colour)
    # the plane has every screened lake
    n_points = page.evaluate(
        f"(() => {{ const gd = document.getElementById('{ids.REGION_GRAPH}').querySelector('.js-plotly-plot');"
        " return gd._fullData.filter(t => t.customdata).reduce((n, t) => n + t.x.length, 0); })()"
    )
    assert n_points == n_rows
    # the CSV export has the columns of turnback screen -o
    with page.expect_download() as info:
        page.click(f"#{ids.REGION_EXPORT_CSV}")
    out = tmp_path / "region.csv"
    info.value.save_as(out)
    table = list(csv.reader(io.StringIO(out.read_text(encoding="utf-8"))))
    assert tuple(table[0]) == RESULT_KEYS and len(table) == n_rows + 1
    # click the lake with the least room: it opens in "The lake now"
    first = page.locator(f"#{ids.REGION_TABLE} .ag-row[row-index='0']").first
    name = first.locator("[col-id='name']").inner_text().strip()
    first.locator("[col-id='name']").click()
    page.wait_for_function(f"document.getElementById('{ids.LAKE_TITLE}').innerText.includes({name!r})")
    dash.wait_idle()
    assert page.is_visible(f"#{ids.VIEW_LAKE}") and not page.is_visible(f"#{ids.VIEW_REGION}")
    assert page.get_attribute(".view-tabs [role='tab']:nth-child(1)", "aria-selected") == "true"
    assert dash.state_word() != ""
    # by keyboard: the focused row of the table, Space opens it
    open_tab(dash, "region")
    second = page.locator(f"#{ids.REGION_TABLE} .ag-row[row-index='1'] [col-id='name']").first
    name2 = second.inner_text().strip()
    page.evaluate(f"dash_ag_grid.getApi('{ids.REGION_TABLE}').setFocusedCell(1, 'name')")
    page.keyboard.press("Space")
    page.wait_for_function(f"document.getElementById('{ids.LAKE_TITLE}').innerText.includes({name2!r})")
    assert errors == []
    context.close()


def test_region_screenshots_accessibility_and_width(browser: Any, app_url: str) -> None:
    """The screened region in both registers at both projector sizes: a look, axe-core, and no sideways scroll."""
    ARTIFACTS.mkdir(exist_ok=True)
    found: dict[str, list[str]] = {}
    for width, height in ((1280, 900), *SIZES):
        context, dash, errors = open_page(browser, app_url, width, height)
        dash.page.click(".view-tabs >> text=Region")
        dash.wait_idle()
        dash.page.click(f"#{ids.REGION_DEMO}")
        dash.page.wait_for_function(f"document.getElementById('{ids.REGION_FILES_NOTE}').innerText.includes('40')")
        dash.page.fill(f"#{ids.REGION_REPLICATES}", REPLICATES)
        dash.page.click(f"#{ids.REGION_RUN}")
        dash.page.wait_for_selector(f"#{ids.REGION_TABLE} .ag-row", timeout=240_000)
        dash.wait_idle()
        for on in (False, True):
            meeting(dash, on)
            open_tab(dash, "region")
            time.sleep(0.6)
            register = "meeting" if on else "technical"
            over = dash.page.evaluate("document.documentElement.scrollWidth - window.innerWidth")
            assert over <= 0, (width, register, over)
            grid_over = dash.page.evaluate(
                f"(() => {{ const v = document.querySelector('#{ids.REGION_TABLE} .ag-center-cols-viewport');"
                " return v ? v.scrollWidth - v.clientWidth : 0; })()"
            )
            assert grid_over <= 1, (width, register, grid_over)
            if width == 1280:
                continue
            dash.page.screenshot(path=str(ARTIFACTS / f"view-region-{register}-{width}x{height}.png"), full_page=True)
            if width == SIZES[0][0]:
                bad = serious(dash.page)
                if bad:
                    found[register] = bad
        assert errors == []
        context.close()
    assert found == {}
