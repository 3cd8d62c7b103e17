"""A public meeting's walk through the dashboard, in headless Chromium.

Truthful state words, a fit that is proposed and never contradicts its
record, plans that do not leak between scenarios and say when they are out
of date, a layout that fits a projector, keyboard tabs, and no serious or
critical accessibility violations (axe-core).  Expected states come from the
engine on the demo lake, not from numbers typed in here.
"""

from __future__ import annotations

import time
from pathlib import Path
from typing import Any

import pytest
from turnback.app import ids
from turnback.app.shell import TABS as SHELL_TABS
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.equilibrium import folds

from .harness import ARTIFACTS, Dashboard

TIP, REC = folds(DEMO_PARAMETERS)
TODAY = DEMO_PROFILE.load_kg_per_yr
TABS = dict(SHELL_TABS)  # every view: tab value -> label
SIZES = ((1920, 1080), (1366, 768))


def open_page(browser: Any, url: str, width: int, height: int) -> tuple[Any, Dashboard, list[str]]:
    context = browser.new_context(viewport={"width": width, "height": height})
    page = context.new_page()
    errors: list[str] = []
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.goto(url)
    page.wait_for_selector("#state-word")
    dash = Dashboard(page)
    dash.wait_idle()
    return context, dash, errors


def open_tab(dash: Dashboard, view: str) -> None:
    dash.page.click(f".view-tabs >> text={TABS[view]}")
    dash.wait_idle()
    time.sleep(0.3)


def meeting(dash: Dashboard, on: bool = True) -> None:
    box = dash.page.locator("#meeting-toggle input")
    if box.is_checked() != on:
        box.click()
        dash.wait_idle()
        time.sleep(0.3)


def serious(page: Any) -> list[str]:
    from axe_playwright_python.sync_playwright import Axe

    violations = Axe().run(page).response["violations"]
    return [
        f"{v['id']} ({v['impact']}): {[n['target'] for n in v['nodes'][:3]]}"
        for v in violations
        if v["impact"] in ("serious", "critical")
    ]


def test_state_words_follow_the_direction_of_change(browser: Any, app_url: str) -> None:
    context, dash, errors = open_page(browser, app_url, 1500, 1000)
    dash.set_field("years-per-change", "3")
    dash.set_load(round(0.97 * TIP.load))  # raise, still below the tipping point
    assert dash.state_word() == "Clear water"
    assert dash.page.inner_text("#state-direction").strip() == "getting worse"
    assert "heading for" in dash.page.inner_text("#state-sentence")
    assert "years" in dash.page.inner_text("#state-sentence")
    # over the tipping point, settle turbid, then cut back to between the points
    dash.set_field("years-per-change", "200")
    dash.set_load(round(1.12 * TIP.load))
    assert dash.state_word() == "Turbid, algae-dominated"
    dash.set_field("years-per-change", "2")
    dash.set_load(round(1.05 * REC.load))
    assert dash.state_word() == "Turbid, algae-dominated"
    assert dash.page.inner_text("#state-direction").strip() == "improving"
    assert "still turbid at the new balance" in dash.page.inner_text("#state-sentence")
    # the big step under the way-back point, then run until settled: clear water again
    n = dash.history_length()
    dash.page.click("#step-under-recovery")
    dash.wait_history_beyond(n)
    assert "will clear" in dash.page.inner_text("#state-sentence")
    n = dash.history_length()
    dash.page.click("#run-until-settled")
    dash.wait_history_beyond(n)
    assert dash.state_word() == "Clear water"
    assert dash.page.inner_text("#state-direction").strip() == "settled"
    assert errors == []
    context.close()


def test_a_one_state_fit_is_proposed_and_never_reads_turbid(browser: Any, app_url: str, tmp_path: Path) -> None:
    context, dash, errors = open_page(browser, app_url, 1500, 1000)
    title = dash.page.inner_text("#lake-title")
    open_tab(dash, "record")
    # ten years of a clear lake: TP 25-28 µg/L at loads near 420 kg/yr (invented)
    rows = [f"{2010 + i},{400 + 7 * (i % 4)},{25 + (i * 7 % 4):.1f}" for i in range(10)]
    record = tmp_path / "clear_years.csv"
    record.write_text("year,load_kg,tp_ug_l\n" + "\n".join(rows) + "\n")
    dash.page.set_input_files("#record-upload input[type='file']", str(record))
    dash.page.wait_for_function("document.getElementById('record-summary').innerText.includes('clear_years.csv')")
    dash.page.fill("#record-replicates", "200")
    dash.page.click("#record-fit")
    dash.page.wait_for_selector("#fit-trust", timeout=90_000)
    dash.wait_idle()
    assert "one doubt" in dash.page.inner_text("#fit-trust") or "doubts" in dash.page.inner_text("#fit-trust")
    assert "not known from this record" in dash.page.inner_text("#record-fit-result")
    assert "stayed clear" in dash.page.inner_text("#record-fit-result")
    # proposed, not swapped in
    assert dash.page.inner_text("#lake-title") == title
    dash.screenshot("meeting-fit-proposed.png")
    if dash.page.is_enabled("#record-use-fit"):
        dash.page.click("#record-use-fit")
        dash.page.wait_for_function("document.getElementById('lake-title').innerText.includes('clear_years.csv')")
        open_tab(dash, "lake")
        dash.wait_idle()
        assert "Turbid" not in dash.state_word()
        assert "not known from this record" in dash.readout()
    else:
        assert "contradicts" in dash.page.inner_text("#record-fit-result") or "not offered" in dash.page.inner_text(
            "#record-fit-result"
        )
    assert errors == []
    context.close()


def test_plans_do_not_leak_and_go_stale(browser: Any, app_url: str) -> None:
    context, dash, errors = open_page(browser, app_url, 1500, 1000)
    open_tab(dash, "plans")
    page = dash.page
    page.fill("#plan-form-name", "Cut 20% + alum")
    page.fill("#plan-form-cut-percent", "20")
    page.fill("#plan-form-inact-percent", "80")
    page.fill("#plan-form-inact-year", "1")
    page.fill("#plan-form-inact-years", "10")
    page.fill("#plan-form-members", "100")
    page.click("#plan-add")
    dash.wait_idle()
    # the form is clean for the next scenario: no treatment carried over
    for field in ("inact-percent", "inact-year", "inact-years", "removal-kg"):
        assert page.input_value(f"#plan-form-{field}") == ""
    page.fill("#plan-form-members", "100")
    page.click("#plan-add")
    dash.wait_idle()
    assert "inactivation" not in page.inner_text("#plan-list").split("Scenario 2", 1)[1].lower()
    page.click("#plan-run")
    page.wait_for_function("document.getElementById('plan-run-message').innerText.startsWith('Ran')", timeout=60_000)
    dash.wait_idle()
    table = page.inner_text("#plan-table")
    assert "Do nothing (baseline)" in table and "not applicable" in table
    assert page.inner_text("#plan-stale") == ""
    # delete a scenario: the results are out of date, and the exports say so
    page.locator("#plan-list .ag-row[row-index='1'] .ag-selection-checkbox input").check()
    dash.wait_idle()
    page.click("#plan-delete")
    dash.wait_idle()
    assert "Deleted" in page.inner_text("#plan-status")
    page.wait_for_function("document.getElementById('plan-stale').innerText.includes('Results out of date')")
    page.click("#plan-export-report")
    dash.wait_idle()
    assert "out of date" in page.inner_text("#plan-export-message")
    assert errors == []
    context.close()


@pytest.mark.parametrize("width", [1280, 1920])
def test_no_view_scrolls_sideways(browser: Any, app_url: str, width: int) -> None:
    context, dash, errors = open_page(browser, app_url, width, 900)
    for on in (False, True):
        meeting(dash, on)
        for view in TABS:
            open_tab(dash, view)
            over = dash.page.evaluate("document.documentElement.scrollWidth - window.innerWidth")
            assert over <= 0, (view, on, over)
    assert errors == []
    context.close()


@pytest.mark.parametrize("size", SIZES)
def test_the_meeting_view_story_fits_one_screen(browser: Any, app_url: str, size: tuple[int, int]) -> None:
    context, dash, errors = open_page(browser, app_url, *size)
    meeting(dash)
    for sel in ("#state-word", "#load-slider", "#equilibrium-graph", "#time-graph"):
        box = dash.page.locator(sel).bounding_box()
        assert box is not None and box["y"] >= 0 and box["y"] + box["height"] <= size[1] + 1, (sel, box)
    assert dash.page.evaluate("document.documentElement.scrollWidth") <= size[0]
    assert errors == []
    context.close()


def test_tabs_are_reachable_by_keyboard(browser: Any, app_url: str) -> None:
    context, dash, errors = open_page(browser, app_url, 1500, 1000)
    page = dash.page
    assert page.get_attribute(".view-tabs", "role") == "tablist"
    assert page.locator(".view-tabs [role='tab']").count() == len(ids.VIEWS)
    page.focus(".view-tabs [role='tab'][aria-selected='true']")
    page.keyboard.press("ArrowRight")
    dash.wait_idle()
    assert page.is_visible("#view-record") and not page.is_visible("#view-lake")
    assert page.get_attribute(".view-tabs [role='tab']:nth-child(2)", "aria-selected") == "true"
    assert errors == []
    context.close()


def test_screenshots_and_accessibility_of_every_view(browser: Any, app_url: str) -> None:
    """Every view in both registers at both projector sizes: saved for a look, and checked by axe-core."""
    ARTIFACTS.mkdir(exist_ok=True)
    found: dict[str, list[str]] = {}
    for width, height in SIZES:
        context, dash, errors = open_page(browser, app_url, width, height)
        for on in (False, True):
            meeting(dash, on)
            register = "meeting" if on else "technical"
            for view in TABS:
                open_tab(dash, view)
                time.sleep(0.4)
                dash.page.screenshot(path=str(ARTIFACTS / f"view-{view}-{register}-{width}x{height}.png"))
                if width == SIZES[0][0]:
                    bad = serious(dash.page)
                    if bad:
                        found[f"{view}/{register}"] = bad
        assert errors == []
        context.close()
    assert found == {}


#: words of statistics and dynamical systems the meeting register never shows
JARGON = (
    "separatrix",
    "fold",
    "bootstrap",
    "chlorophyll",
    "secchi",
    "kendall",
    "ar(1)",
    "τ",
    "cusp",
    "s.e.",
    "surrogate",
    "trophic",
    "tsi",
    "who (2003)",
    "replicates",
    "hysteretic",
    "bistable",
)


def test_the_meeting_register_carries_no_jargon(browser: Any, app_url: str) -> None:
    context, dash, errors = open_page(browser, app_url, 1920, 1080)
    meeting(dash)
    found = {}
    for view in TABS:
        open_tab(dash, view)
        time.sleep(0.5)
        text = dash.page.evaluate(
            "(id) => { const root = document.getElementById(id);"
            " const svg = Array.from(root.querySelectorAll('svg text')).map(t => t.textContent).join(' ');"
            " return root.innerText + ' ' + svg; }",
            f"view-{view}",
        ).lower()
        hits = [w for w in JARGON if w in text]
        if hits:
            found[view] = hits
    assert found == {}
    assert errors == []
    context.close()
