"""The sediment legacy told in the browser: the two-pool demo lake, a load cut, the mud draining, the lag.

Every expected number comes from the model itself (``model.dynamics.simulate``,
``model.ensemble.compare_plan``) run on the same lake, never typed in here.
"""

from __future__ import annotations

import re
import time
from typing import Any

import numpy as np
from turnback.app import ids
from turnback.app.stores import lake_to_store, new_history
from turnback.app.views.lake.figures import TIME_SEDIMENT
from turnback.app.views.plans.readout import plan_lake
from turnback.model.clear_state import clear_threshold_kg
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE, DEMO_TWO_POOL_PARAMETERS
from turnback.model.dynamics import simulate
from turnback.model.ensemble import compare_plan
from turnback.model.plan import Plan, Scenario, ScenarioLake
from turnback.model.schedules import ConstantLoad

from .harness import ARTIFACTS, Dashboard
from .test_meeting import SIZES, TABS, meeting, open_page, open_tab, serious
from .test_plans import GRID_COLUMN_JS, add_scenario

TWO = DEMO_TWO_POOL_PARAMETERS
CUT = round(0.5 * DEMO_PROFILE.load_kg_per_yr)  # a 50 % load cut
YEARS = 30
PLAN = Scenario("Cut by half", 40, ConstantLoad(float(CUT)), members=20, seed=1)


def choose_two_pool(dash: Dashboard) -> None:
    n = dash.history_length()
    dash.page.click(f"#{ids.LAKE_MODEL} >> text=Two pools")
    dash.page.wait_for_function(
        f"document.getElementById('{ids.STATE_SEDIMENT}') !== null && "
        f"document.getElementById('{ids.TIME_LAG}') !== null",
        timeout=15_000,
    )
    dash.wait_idle()
    assert dash.history_length() >= 1 and n >= 1


def table_column(dash: Dashboard, col: str) -> list[str]:
    return list(dash.page.evaluate(GRID_COLUMN_JS, [ids.PLAN_TABLE, col]))


def test_the_lag_story(browser: Any, app_url: str) -> None:
    context, dash, errors = open_page(browser, app_url, 1500, 1250)
    page = dash.page
    choose_two_pool(dash)
    lake = lake_to_store(TWO, DEMO_PROFILE)
    start = new_history(lake)
    p0, m0 = start["p"][0], start["m"][0]
    # the state shows water P and sediment P: the turbid start of the model, with its mud
    words = page.inner_text(f"#{ids.STATE_SEDIMENT}")
    assert f"{p0:,.0f} kg" in words and f"{m0:,.0f} kg" in words
    assert dash.state_word() == "Turbid, algae-dominated"

    # a plan under both lake models side by side, from the lake now (the turbid start)
    open_tab(dash, "plans")
    add_scenario(dash, name=PLAN.name, load_kind="held constant", load_from=str(CUT), years="40", members="20")
    page.locator(f"#{ids.PLAN_BOTH_MODELS} input").check()
    page.click(f"#{ids.PLAN_RUN}")
    page.wait_for_function(
        f"document.getElementById('{ids.PLAN_RUN_MESSAGE}').innerText.startsWith('Ran ')", timeout=60_000
    )
    dash.wait_idle()
    time.sleep(0.5)
    two_lake = plan_lake(lake, start)
    one_lake = ScenarioLake(DEMO_PARAMETERS, two_lake.volume_m3, two_lake.initial_tp_ug_l)  # the one-box settings
    two_years = compare_plan(Plan(two_lake, (PLAN,)), sample_paths=0).results[0].recovery_years_median
    one_years = compare_plan(Plan(one_lake, (PLAN,)), sample_paths=0).results[0].recovery_years_median
    assert two_years is not None and one_years is not None
    names = table_column(dash, "scenario")
    lags = table_column(dash, "lag_years")
    row = names.index(PLAN.name)
    assert lags[row] == f"{two_years - one_years:.0f}"
    assert two_years > one_years  # the mud delays clear water
    page.screenshot(path=str(ARTIFACTS / "two-pool-plans-both-models.png"), full_page=True)

    # back on the lake: cut the load by half and let 30 years pass
    open_tab(dash, "lake")
    dash.set_field(ids.YEARS_INPUT, str(YEARS))
    dash.set_load(CUT)
    traj = simulate(TWO, p0, np.full(YEARS, float(CUT)), m0=m0)
    assert traj.m is not None
    shown = dash.trace(ids.TIME_GRAPH, TIME_SEDIMENT, "y")
    np.testing.assert_allclose(shown[-YEARS:], traj.m[1:], rtol=1e-9)  # the mud, year by year
    assert shown[-1] < m0  # it drained
    threshold = clear_threshold_kg(TWO, CUT)
    lag = int(np.flatnonzero(traj.p < threshold)[0])
    text = page.inner_text(f"#{ids.TIME_LAG}")
    assert re.search(rf"clear water came after {lag} years, in year {lag}\b", text), text
    assert dash.state_word() == "Clear water"
    page.screenshot(path=str(ARTIFACTS / "two-pool-lake-after-cut.png"), full_page=True)
    assert errors == []
    context.close()


def test_two_pool_views_fit_and_pass_axe(browser: Any, app_url: str) -> None:
    """Screenshots of the changed views at both sizes and registers; axe on each at 1920 × 1080."""
    found: dict[str, list[str]] = {}
    ARTIFACTS.mkdir(exist_ok=True)
    for width, height in SIZES:
        context, dash, errors = open_page(browser, app_url, width, height)
        choose_two_pool(dash)
        dash.set_field(ids.YEARS_INPUT, "8")
        dash.set_load(CUT)
        for on in (False, True):
            meeting(dash, on)
            register = "meeting" if on else "technical"
            for view in ("lake", "plans", "map"):
                open_tab(dash, view)
                time.sleep(0.6 if view == "map" else 0.3)
                if view == "map":
                    dash.page.wait_for_selector(f"#{ids.MAP_GRAPH} .js-plotly-plot", timeout=20_000)
                    dash.wait_idle(30)
                dash.page.screenshot(path=str(ARTIFACTS / f"two-pool-{view}-{register}-{width}x{height}.png"))
                if width == SIZES[0][0]:
                    bad = serious(dash.page)
                    if bad:
                        found[f"{view}/{register}"] = bad
        assert errors == []
        context.close()
    assert found == {}
    assert set(TABS) >= {"lake", "plans", "map"}
