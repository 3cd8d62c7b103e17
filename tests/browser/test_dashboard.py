"""The dashboard driven as a user would, in headless Chromium.

Expected behaviour comes from the engine (model.equilibrium) on the demo
lake, not from numbers typed in here.
"""

from __future__ import annotations

from typing import Any

import pytest
from turnback.app.views.lake.figures import EQ_TRACES
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.equilibrium import equilibria, folds

TIP, REC = folds(DEMO_PARAMETERS)
TODAY = DEMO_PROFILE.load_kg_per_yr


def tp_of(p_kg: float) -> float:
    return float(DEMO_PROFILE.concentration(p_kg))


def test_page_loads_clean_and_readable(dash_page: tuple[Any, list[str]]) -> None:
    dash, errors = dash_page
    assert dash.state_word() == "Clear water"
    text = dash.readout()
    assert "Hysteretic" in text and f"{TIP.load:,.0f}" in text and f"{REC.load:,.0f}" in text
    assert "not a water-safety or health assessment" in dash.page.inner_text(".caution-banner")
    assert "permits" in dash.page.inner_text(".treatment-caution")
    dash.screenshot("dashboard-start.png")
    # the modebar offers the image download
    dash.page.hover("#equilibrium-graph .js-plotly-plot")
    assert dash.page.locator("#equilibrium-graph .modebar-btn[data-title*='Download']").count() == 1
    assert errors == []


def test_slider_keys_move_marker_trace_and_readout(dash_page: tuple[Any, list[str]]) -> None:
    dash, errors = dash_page
    x0, _ = dash.current()
    n0 = dash.history_length()
    before = dash.readout()
    handle = dash.page.locator("#load-slider [role='slider']")
    handle.focus()
    for _ in range(4):
        n = dash.history_length()
        handle.press("ArrowRight")
        dash.wait_history_beyond(n)
    x1, _ = dash.current()
    assert x1 > x0
    assert dash.history_length() >= n0 + 4 * 5  # five years per change by default
    assert dash.readout() != before
    assert errors == []


def test_path_dependence_end_to_end(dash_page: tuple[Any, list[str]]) -> None:
    dash, errors = dash_page
    dash.set_field("years-per-change", "40")
    sep_today = equilibria(DEMO_PARAMETERS, TODAY)[1].p
    # push past the tipping load: the lake flips
    dash.set_load(round(1.12 * TIP.load))
    assert dash.state_word() == "Turbid, algae-dominated"
    _, tp_high = dash.current()
    assert tp_high > tp_of(TIP.p)
    # back to where it started: it stays turbid, on the upper branch
    dash.set_load(TODAY)
    assert dash.state_word() == "Turbid, algae-dominated"
    x, tp_back = dash.current()
    assert x == pytest.approx(TODAY)
    assert tp_back > tp_of(sep_today)
    upper_today = equilibria(DEMO_PARAMETERS, TODAY)[2].p
    assert tp_back == pytest.approx(tp_of(upper_today), rel=0.05)
    dash.screenshot("dashboard-hysteresis-turbid.png")
    # below the recovery load it comes back
    dash.set_load(round(0.85 * REC.load))
    assert dash.state_word() == "Clear water"
    # the history trace draws the loop: it visited high TP at the same load it later left clear
    xs = dash.trace("equilibrium-graph", EQ_TRACES.index("history"), "x")
    ys = dash.trace("equilibrium-graph", EQ_TRACES.index("history"), "y")
    at_today = [y for x_, y in zip(xs, ys, strict=True) if abs(x_ - TODAY) < 1e-9]
    assert min(at_today) < tp_of(sep_today) < max(at_today)
    dash.screenshot("dashboard-hysteresis-loop.png")
    assert errors == []


def test_bad_parameter_keeps_previous_lake(dash_page: tuple[Any, list[str]]) -> None:
    dash, errors = dash_page
    fold_x = dash.trace("equilibrium-graph", EQ_TRACES.index("folds"), "x")
    dash.set_field("field-loss_rate", "-1")
    msg = dash.page.inner_text("#field-loss_rate-message")
    assert "Loss rate" in msg and "greater than 0" in msg
    assert "last valid" in dash.page.inner_text("#settings-status")
    assert dash.trace("equilibrium-graph", EQ_TRACES.index("folds"), "x") == fold_x
    assert dash.state_word() == "Clear water"
    dash.set_field("field-recycling_exponent", "abc")
    assert "not a number" in dash.page.inner_text("#field-recycling_exponent-message")
    dash.screenshot("dashboard-bad-field.png")
    # fixing the fields applies the new lake
    dash.set_field("field-loss_rate", "0.5")
    dash.set_field("field-recycling_exponent", "4")
    assert dash.page.inner_text("#field-loss_rate-message") == ""
    assert errors == []


def test_removal_larger_than_needed_restores_clear_water(dash_page: tuple[Any, list[str]]) -> None:
    dash, errors = dash_page
    dash.set_field("years-per-change", "40")
    dash.set_load(round(1.12 * TIP.load))
    dash.set_load(TODAY)
    assert dash.state_word() == "Turbid, algae-dominated"
    needed_text = dash.page.inner_text("#removal-needed")
    assert "Needed now" in needed_text
    suggested = float(dash.page.input_value("#removal-kg"))
    assert suggested > 0
    n = dash.history_length()
    box = dash.page.locator("#removal-kg")
    box.fill(f"{suggested + 300:.0f}")
    dash.page.click("#removal-apply")
    dash.wait_history_beyond(n)
    assert dash.state_word() == "Clear water"
    assert "Removed" in dash.page.inner_text("#removal-message")
    assert errors == []


def test_meeting_view_and_independent_tabs(dash_page: tuple[Any, list[str]], browser: Any, app_url: str) -> None:
    dash, errors = dash_page
    dash.page.click("#meeting-toggle input")
    dash.wait_idle()
    assert "meeting" in (dash.page.get_attribute("#page-root", "class") or "")
    assert not dash.page.is_visible("#settings-panel")
    title = dash.page.evaluate(
        "document.getElementById('equilibrium-graph').querySelector('.js-plotly-plot').layout.xaxis.title.text"
    )
    assert "Phosphorus inflow" in title  # the meeting register's one name for the load (app.vocabulary)
    dash.set_load(round(1.12 * TIP.load))
    dash.screenshot("dashboard-meeting-view.png")
    # a second tab is a second, independent lake
    other = dash.page.context.new_page()
    other.goto(app_url)
    other.wait_for_selector("#state-word")
    from .harness import Dashboard

    d2 = Dashboard(other)
    d2.wait_idle()
    assert d2.history_length() == 1
    assert d2.current()[0] == pytest.approx(TODAY)
    assert errors == []
