"""The plans view driven as a planner would, in headless Chromium.

Expected outcomes come from the model (model.scenario) run on the same
scenarios, never from numbers typed in here.
"""

from __future__ import annotations

import re
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pytest
from turnback.app import ids
from turnback.app.report import CAUTIONS
from turnback.app.stores import lake_to_store, new_history
from turnback.app.views.plans import callbacks as plans_callbacks
from turnback.app.views.plans.readout import plan_lake
from turnback.app.views.plans.scenarios import with_baseline
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.ensemble import compare_plan
from turnback.model.equilibrium import folds
from turnback.model.plan import Plan, Scenario
from turnback.model.schedules import ConstantLoad, LinearCut

from .harness import Dashboard, serve

TIP = folds(DEMO_PARAMETERS)[0]
TODAY = DEMO_PROFILE.load_kg_per_yr
HIGH = round(1.1 * TIP.load)  # above the tipping load: the clear state is lost
#: pause after each progress report [s], so that a run lasts long enough to watch and to cancel;
#: read by the background job, which is forked from this process when a run starts
PACE = {"seconds": 0.0}


@pytest.fixture
def slow_runs(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> Iterator[Path]:
    """Runs that can pause after each progress report (see PACE); the data folder of the test.

    The results are the model's own; only the pace changes.
    """
    real = plans_callbacks.compare_plan

    def paced(plan: Any, *, progress: Any = None, cancel: Any = None, sample_paths: int = 20) -> Any:
        def report(fraction: float, message: str) -> None:
            progress(fraction, message)
            time.sleep(PACE["seconds"])

        return real(plan, progress=report, cancel=cancel, sample_paths=sample_paths)

    monkeypatch.setattr(plans_callbacks, "compare_plan", paced)
    monkeypatch.setenv("TURNBACK_CACHE_DIR", str(tmp_path / "cache"))
    yield tmp_path / "data"
    PACE["seconds"] = 0.0


@contextmanager
def dashboard(browser: Any, data_dir: Path) -> Iterator[tuple[Dashboard, list[str]]]:
    """A server on ``data_dir`` and a fresh browser context (a new session) on its plans view."""
    from turnback.app.server import create_app

    with serve(create_app(data_dir=data_dir)) as url:
        context = browser.new_context(viewport={"width": 1500, "height": 1250}, accept_downloads=True)
        page = context.new_page()
        errors: list[str] = []
        page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
        page.on("pageerror", lambda e: errors.append(str(e)))
        page.goto(url)
        page.wait_for_selector("#state-word")
        dash = Dashboard(page)
        dash.wait_idle()
        page.click(".view-tabs >> text=Plans compared")
        page.wait_for_function(f"document.getElementById('{ids.PLAN_LAKE_NOTE}').innerText.length > 0")
        dash.wait_idle()
        try:
            yield dash, errors
        finally:
            context.close()


def fill(dash: Dashboard, key: str, text: str) -> None:
    dash.page.fill(f"#{ids.PLAN_FORM[key]}", text)


def add_scenario(dash: Dashboard, **fields: str) -> None:
    """Fill the form (radio fields by label) and press 'Add to the plan'."""
    page = dash.page
    if "load_kind" in fields:
        page.click(f"#{ids.PLAN_FORM['load_kind']} >> text={fields.pop('load_kind')}")
    for key, text in fields.items():
        fill(dash, key, text)
    page.click(f"#{ids.PLAN_ADD}")
    dash.wait_idle()


#: the cells of one column of a grid (dash-ag-grid), top to bottom as shown
GRID_COLUMN_JS = """([grid, col]) => Array.from(document.querySelectorAll(`#${grid} .ag-center-cols-container .ag-row`))
    .sort((a, b) => Number(a.getAttribute('row-index')) - Number(b.getAttribute('row-index')))
    .map(r => r.querySelector(`.ag-cell[col-id='${col}']`).innerText.trim())"""


def list_names(dash: Dashboard) -> list[str]:
    return list(dash.page.evaluate(GRID_COLUMN_JS, [ids.PLAN_LIST, "name"]))


def column(dash: Dashboard, col: str) -> list[str]:
    return list(dash.page.evaluate(GRID_COLUMN_JS, [ids.PLAN_TABLE, col]))


def select_row(dash: Dashboard, index: int) -> None:
    """Tick the selection box of the scenario list's row ``index`` (from the top)."""
    dash.page.locator(f"#{ids.PLAN_LIST} .ag-row[row-index='{index}'] .ag-selection-checkbox input").check()


def run_and_watch(dash: Dashboard, pace: float = 0.0, timeout: float = 30.0) -> set[str]:
    """Press Run and collect the progress texts until the run ends."""
    PACE["seconds"] = pace
    page = dash.page
    before = page.inner_text(f"#{ids.PLAN_RUN_MESSAGE}")
    page.click(f"#{ids.PLAN_RUN}")
    seen: set[str] = set()
    deadline = time.time() + timeout
    while time.time() < deadline:
        seen.add(page.inner_text(f"#{ids.PLAN_PROGRESS_TEXT}"))
        msg = page.inner_text(f"#{ids.PLAN_RUN_MESSAGE}")
        if msg != before and msg.startswith(("Ran ", "Cancelled", "Not run")):
            break
        time.sleep(0.05)
    dash.wait_idle()
    return seen


CUT = Scenario("Cut 40%", 30, LinearCut(TODAY, 40.0, 10), variability_cv=0.3, members=200, seed=7)
UP = Scenario("Load up", 30, ConstantLoad(float(HIGH)), variability_cv=0.3, members=200, seed=8)


def test_build_run_save_export_restart_and_keep_working(browser: Any, slow_runs: Path, tmp_path: Path) -> None:
    data_dir = slow_runs
    with dashboard(browser, data_dir) as (dash, errors):
        page = dash.page
        assert "permits" in page.inner_text(".plan-form .treatment-caution")
        add_scenario(dash, name=CUT.name, cv="0.3", members="200", seed="7")
        add_scenario(
            dash, name=UP.name, load_kind="held constant", load_from=str(HIGH), cv="0.3", members="200", seed="8"
        )
        assert list_names(dash) == [CUT.name, UP.name]
        assert page.input_value(f"#{ids.PLAN_FORM['name']}") == "Scenario 3"  # ready for the next one
        # run: the progress shows while it runs, then the table
        seen = run_and_watch(dash, pace=0.6)
        assert any(re.match(r"\d+% — ", t) for t in seen), seen
        assert page.inner_text(f"#{ids.PLAN_PROGRESS_TEXT}") == "done"
        assert page.inner_text(f"#{ids.PLAN_RUN_MESSAGE}") == "Ran 3 scenarios."  # with the do-nothing baseline
        assert column(dash, "scenario")[:2] == [CUT.name, UP.name]
        # the numbers are the model's for the same scenarios from the same state
        lake = plan_lake(lake_to_store(DEMO_PARAMETERS, DEMO_PROFILE), None)
        start = new_history(lake_to_store(DEMO_PARAMETERS, DEMO_PROFILE))["p"][0]
        assert lake.initial_p_kg == pytest.approx(start)
        # with the do-nothing baseline the view adds to every run (its own rule: views/plans/scenarios.py)
        expected = compare_plan(Plan(lake, tuple(with_baseline([CUT, UP], TODAY)))).results
        assert column(dash, "p_flip") == [f"{100 * r.p_flip:.1f}%" for r in expected]
        assert column(dash, "final_tp_median_ug_l") == [f"{r.final_tp_median_ug_l:.1f}" for r in expected]
        assert expected[1].p_flip > 0.5 > expected[0].p_flip  # the two plans differ, so the order check can fail
        # sortable: ascending final TP puts the cut first, descending the other way round
        header = page.locator(f"#{ids.PLAN_TABLE} .ag-header-cell[col-id='final_tp_median_ug_l'] .ag-header-cell-label")
        header.click()
        dash.wait_idle()
        order = [r.name for r in sorted(expected, key=lambda r: r.final_tp_median_ug_l)]
        assert column(dash, "scenario") == order
        header.click()
        dash.wait_idle()
        assert column(dash, "scenario") == order[::-1]
        assert "stays clear" in page.inner_text(f"#{ids.PLAN_DEFINITIONS}")
        page.wait_for_function(
            f"document.getElementById('{ids.PLAN_TRAJECTORY_GRAPH}').querySelectorAll('.scatterlayer .trace').length"
            " >= 8"
        )
        dash.screenshot("plans-results.png")
        # the meeting view: larger text, one column, the main columns of the table
        page.click(f"#{ids.MEETING_TOGGLE} input")
        dash.wait_idle()
        size = page.evaluate(
            f"parseFloat(getComputedStyle(document.querySelector('#{ids.PLAN_TABLE} .ag-cell')).fontSize)"
        )
        assert size >= 20
        dash.screenshot("plans-meeting-view.png")
        page.click(f"#{ids.MEETING_TOGGLE} input")
        dash.wait_idle()
        # save under a plan name
        page.fill(f"#{ids.PLAN_SAVE_NAME}", "Amberlin options")
        page.click(f"#{ids.PLAN_SAVE}")
        dash.wait_idle()
        assert page.inner_text(f"#{ids.PLAN_SAVE_MESSAGE}").startswith("Saved 2 scenarios as plan 'Amberlin options'")
        # export the report and open it without a network
        with page.expect_download() as info:
            page.click(f"#{ids.PLAN_EXPORT_REPORT}")
        report = tmp_path / "report.html"
        info.value.save_as(report)
        with page.expect_download() as info:
            page.click(f"#{ids.PLAN_EXPORT_TABLE}")
        table_csv = tmp_path / "outcomes.csv"
        info.value.save_as(table_csv)
        assert table_csv.read_text().splitlines()[1].startswith(CUT.name)
        assert errors == []

    text = report.read_text(encoding="utf-8")
    assert re.search(r"<script[^>]*\ssrc=", text) is None  # plotly inline (common practice, no source)
    offline = browser.new_context()
    outside: list[str] = []

    def block(route: Any) -> None:
        if route.request.url.startswith("file:"):
            route.continue_()
        else:
            outside.append(route.request.url)
            route.abort()

    offline.route("**/*", block)
    view = offline.new_page()
    view.goto(report.as_uri())
    view.wait_for_function("document.querySelectorAll('.js-plotly-plot .main-svg').length >= 4")
    body = view.inner_text("body")
    for caution in CAUTIONS:
        assert caution[:60] in body
    assert CUT.name in view.inner_text("#outcomes") and outside == []
    view.screenshot(path=str(Path(__file__).resolve().parents[2] / "test-artifacts" / "plans-report.png"))
    offline.close()

    # a restarted server (new app, same data folder) and a new session find the plan again
    with dashboard(browser, data_dir) as (dash, errors):
        page = dash.page
        assert list_names(dash) == []
        page.click(f"#{ids.PLAN_SAVED_LIST} >> text=Amberlin options")
        dash.wait_idle()
        assert f"{CUT.name}, {UP.name}" in page.inner_text(f"#{ids.PLAN_SAVED_DETAILS}")
        page.click(f"#{ids.PLAN_LOAD_SAVED}")
        dash.wait_idle()
        assert list_names(dash) == [CUT.name, UP.name]
        keep_working(dash)
        assert errors == []


def keep_working(dash: Dashboard) -> None:
    """Edit the plan found again, make a mistake, run, cancel a run, ask for the precautionary load."""
    page = dash.page
    # duplicate, delete, edit
    select_row(dash, 1)
    page.click(f"#{ids.PLAN_DUPLICATE}")
    dash.wait_idle()
    assert list_names(dash) == [CUT.name, UP.name, f"{UP.name} (copy)"]
    page.click(f"#{ids.PLAN_DELETE}")  # the copy is selected
    dash.wait_idle()
    assert list_names(dash) == [CUT.name, UP.name]
    select_row(dash, 0)
    page.click(f"#{ids.PLAN_EDIT}")
    dash.wait_idle()
    assert page.input_value(f"#{ids.PLAN_FORM['name']}") == CUT.name
    assert page.input_value(f"#{ids.PLAN_FORM['seed']}") == str(CUT.seed)
    assert page.is_enabled(f"#{ids.PLAN_UPDATE}")
    fill(dash, "name", "Cut 25%")
    fill(dash, "cut_percent", "25")
    page.click(f"#{ids.PLAN_UPDATE}")
    dash.wait_idle()
    assert "cut of 25% over 10 years" in page.inner_text(f"#{ids.PLAN_LIST}")
    assert list_names(dash) == ["Cut 25%", UP.name]
    # bad fields: messages beside their sections, the scenarios stay
    page.click(f"#{ids.PLAN_FORM['load_kind']} >> text=linear cut")
    add_scenario(dash, name="Broken", years="3O", cut_percent="120")
    assert "'3O' is not a number" in page.inner_text(f"#{ids.PLAN_MESSAGES['basics']}")
    assert page.inner_text(f"#{ids.PLAN_MESSAGES['load']}").startswith("Cut must be between 0 and 100")
    assert "unchanged" in page.inner_text(f"#{ids.PLAN_STATUS}")
    assert "Traceback" not in page.inner_text(f"#{ids.VIEW_PLANS}")
    assert list_names(dash) == ["Cut 25%", UP.name]
    dash.screenshot("plans-bad-field.png")
    # a first run, then a longer one that is cancelled: the first run's results stay
    fill(dash, "years", "30")
    fill(dash, "cut_percent", "20")
    run_and_watch(dash)
    assert page.inner_text(f"#{ids.PLAN_RUN_MESSAGE}") == "Ran 3 scenarios."  # with the do-nothing baseline
    assert column(dash, "scenario")[:2] == ["Cut 25%", UP.name]
    first = column(dash, "final_tp_median_ug_l")
    add_scenario(dash, name="Third", members="200")
    assert list_names(dash) == ["Cut 25%", UP.name, "Third"]
    PACE["seconds"] = 0.6
    page.click(f"#{ids.PLAN_RUN}")
    page.wait_for_function(
        f"document.getElementById('{ids.PLAN_PROGRESS_TEXT}').innerText.includes('% — ')", timeout=15000
    )
    page.wait_for_selector(f"#{ids.PLAN_CANCEL}:not([disabled])")
    page.click(f"#{ids.PLAN_CANCEL}")
    page.wait_for_function(
        f"document.getElementById('{ids.PLAN_RUN_MESSAGE}').innerText.startsWith('Cancelled')", timeout=15000
    )
    dash.wait_idle()
    assert page.inner_text(f"#{ids.PLAN_PROGRESS_TEXT}") == "cancelled"
    assert column(dash, "scenario")[:2] == ["Cut 25%", UP.name] and column(dash, "final_tp_median_ug_l") == first
    assert page.is_enabled(f"#{ids.PLAN_RUN}")
    # the precautionary load under the first scenario's variability, with its Monte-Carlo error
    page.click(f"#{ids.PLAN_PREC_BUTTON}")
    page.wait_for_selector("#plan-prec-answer", timeout=20000)
    assert "Monte-Carlo error" in page.inner_text("#plan-prec-answer")
    dash.screenshot("plans-cancelled.png")
