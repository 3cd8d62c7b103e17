"""Figure builders, session functions, readout and settings checks, without a browser."""

from __future__ import annotations

import plotly.graph_objects as go
import pytest
from turnback.app import ids
from turnback.app.shell import on_view
from turnback.app.stores import lake_key, lake_to_store, new_history
from turnback.app.views.lake.callbacks import on_settings, step_session
from turnback.app.views.lake.figures import (
    EQ_CURRENT,
    EQ_HISTORY,
    EQ_TRACES,
    TIME_TRACES,
    equilibrium_figure,
    history_patches,
    time_figure,
)
from turnback.app.views.lake.history import advance, remove_p
from turnback.app.views.lake.layout import slider_config
from turnback.app.views.lake.readout import build_readout, removal_text
from turnback.app.views.lake.settings import check_settings
from turnback.app.views.map.figures import regime_map_figure
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.demo import DEMO_PROFILE as PROF
from turnback.model.equilibrium import analyze, equilibria, folds
from turnback.model.regime_map import regime_map

LAKE = lake_to_store(P, PROF)


def test_new_history_starts_on_the_clear_branch() -> None:
    h = new_history(LAKE)
    assert h["p"] == [equilibria(P, PROF.load_kg_per_yr)[0].p]
    assert h["lake_key"] == lake_key(LAKE)


def test_advance_and_removal_follow_the_annual_map() -> None:
    h = new_history(LAKE)
    tip = folds(P)[0].load
    h2 = advance(h, P, 1.2 * tip, 60)
    assert len(h2["p"]) == 1 + 1 + 60  # start, the load step, sixty years
    assert h2["p"][1] == h2["p"][0]  # the load changes before the lake responds
    upper = equilibria(P, 1.2 * tip)[-1].p
    assert h2["p"][-1] == pytest.approx(upper, rel=1e-3)
    h3 = remove_p(h2, P, 1e9, 3)
    assert h3["p"][len(h2["p"])] == 0.0 and h3["event"][len(h2["p"])] == "removal"
    assert h == new_history(LAKE)  # inputs are not modified
    with pytest.raises(ValueError, match="years"):
        advance(h, P, 100.0, 0)


def test_step_session_actions() -> None:
    h = new_history(LAKE)
    same, _, _ = step_session("load-slider", PROF.load_kg_per_yr, h, LAKE, 5, 0)
    assert same is None  # the slider being set to the current load is not a change
    moved, _, _ = step_session("load-slider", 500.0, h, LAKE, 5, 0)
    assert moved is not None and moved["load"][-1] == 500.0
    reset, _, _ = step_session("restart-history", 500.0, moved, LAKE, 5, 0)
    assert reset is not None and len(reset["p"]) == 1 and reset["p"][0] == moved["p"][-1]
    bad, msg, _ = step_session("let-years-pass", 500.0, h, LAKE, "x", 0)
    assert bad is None and "whole number" in msg
    bad2, _, rmsg = step_session("removal-apply", 500.0, h, LAKE, 5, -4)
    assert bad2 is None and "0 or more" in rmsg


def test_equilibrium_figure_layers() -> None:
    res = analyze(P, n_points=500)
    h = advance(new_history(LAKE), P, 600.0, 10)
    fig = equilibrium_figure(res, PROF, h, present_load=PROF.load_kg_per_yr, load_max=1100.0)
    assert isinstance(fig, go.Figure)
    assert len(fig.data) >= len(EQ_TRACES)  # legend-only entries follow the fixed traces
    assert [t.name for t in fig.data[len(EQ_TRACES) :]] == ["bistable: two stable states"]
    assert fig.data[EQ_TRACES.index("middle")].line.dash == "dash"
    assert fig.data[EQ_TRACES.index("lower")].line.dash == "solid"
    assert len(fig.data[EQ_HISTORY].x) == len(h["p"])
    assert tuple(fig.data[EQ_CURRENT].x) == (600.0,)
    # folds marked, bistable band shaded between recovery and tipping loads
    assert len(fig.data[EQ_TRACES.index("folds")].x) == 2
    band = [s for s in fig.layout.shapes if s.type == "rect"]
    assert band and band[0].x0 == pytest.approx(res.recovery_load) and band[0].x1 == pytest.approx(res.tipping_load)
    meeting = equilibrium_figure(res, PROF, h, present_load=PROF.load_kg_per_yr, load_max=1100.0, meeting=True)
    assert meeting.layout.font.size > fig.layout.font.size
    assert "kg" in meeting.layout.xaxis.title.text and "[" not in meeting.layout.xaxis.title.text


def test_time_figure_and_patches() -> None:
    h = advance(new_history(LAKE), P, 600.0, 10)
    tf = time_figure(h, PROF)
    assert len(tf.data) == len(TIME_TRACES)
    assert list(tf.data[0].x) == h["year"]
    eq_patch, tf_patch = history_patches(h, LAKE)
    assert tf_patch.to_plotly_json()["operations"]
    ops = eq_patch.to_plotly_json()["operations"]
    assert any(op["location"] == ["data", EQ_HISTORY, "x"] for op in ops)


def test_slider_config_marks_today_and_spans_twice_tipping() -> None:
    res = analyze(P, n_points=50)
    cfg = slider_config(res, PROF)
    assert cfg["max"] >= 2 * res.tipping_load
    assert cfg["max"] < 2 * res.tipping_load + 10 * cfg["step"]
    assert PROF.load_kg_per_yr in cfg["marks"]


def test_readout_words() -> None:
    res = analyze(P, n_points=50)
    load = PROF.load_kg_per_yr
    low, _, high = equilibria(P, load)
    rows = str(build_readout(P, PROF, res, load, low.p))
    # (420 - 284.8) / 420 = 32% by hand from the engine's recovery load
    assert "Clear water" in rows and "Hysteretic" in rows and "a 32% cut" in rows
    rows_t = str(build_readout(P, PROF, res, load, high.p))
    assert "Turbid" in rows_t
    text, kg = removal_text(P, PROF, load, high.p)
    assert kg > 0 and "Needed now" in text
    irr = type(P)(0.3, 1800.0, 2500.0, 4.0)  # b = 0.42 < b_irr(4) = 0.57: irreversible (closed form)
    res_irr = analyze(irr, n_points=50)
    assert res_irr.regime == "irreversible"
    assert "No load cut alone" in str(build_readout(irr, PROF, res_irr, 100.0, equilibria(irr, 100.0)[-1].p))


@pytest.mark.parametrize(
    "field, value, fragment",
    [
        ("loss_rate", "-1", "greater than 0"),
        ("loss_rate", "1.5", "below 1"),
        ("recycling_max", "abc", "not a number"),
        ("recycling_exponent", "", "enter a number"),
        ("area_km2", "0", "greater than 0"),
        ("mean_depth_m", "nan", "finite"),
        ("load_kg_yr", "-5", "at least 0"),
    ],
)
def test_settings_messages(field: str, value: str, fragment: str) -> None:
    values = {
        "loss_rate": "0.5",
        "recycling_max": "1800",
        "recycling_half": "2500",
        "recycling_exponent": "4",
        "area_km2": "6.2",
        "mean_depth_m": "4.5",
        "load_kg_yr": "420",
    }
    good, msgs = check_settings(values, "Lake")
    assert good is not None and not any(msgs.values())
    values[field] = value
    lake, msgs = check_settings(values, "Lake")
    assert lake is None
    assert fragment in msgs[field]
    # through the callback: the store is left alone
    out = on_settings(values, LAKE)
    assert out["lake"] is not None and out["lake"].__class__.__name__ == "NoUpdate"


def test_regime_map_figure_and_view_switch() -> None:
    rmap = regime_map(P)
    fig = regime_map_figure(rmap, load_now=420.0, cloud=([400.0, 430.0], [0.49, 0.51]))
    names = [t.name for t in fig.data]
    assert {"tipping fold", "recovery fold", "this lake now", "fitted lakes (bootstrap)"} <= set(names)
    lake = next(t for t in fig.data if t.name == "this lake now")
    assert tuple(lake.y) == (P.loss_rate,)
    styles = on_view(ids.TAB_MAP)
    assert styles[list(ids.VIEWS).index(ids.TAB_MAP)] == {}
    assert sum(1 for s in styles if s == {"display": "none"}) == len(ids.VIEWS) - 1


def test_readout_gives_clarity_and_who_caution() -> None:
    # TP 32 µg/L: Carlson (1977) TSI equivalence gives chlorophyll about 11 µg/L, above the WHO (2003) 10 µg/L level.
    res = analyze(P, n_points=50)
    load = PROF.load_kg_per_yr
    low = equilibria(P, load)[0]
    rows = str(build_readout(P, PROF, res, load, low.p))
    assert "Secchi depth about" in rows and "WHO (2003)" in rows and "local health advisories" in rows
    assert "safe to swim" not in rows


def test_lake_key_survives_the_browser_writing_whole_floats_as_integers() -> None:
    import json

    lake = lake_to_store(P, PROF)
    lake["start"] = {"year": 2023, "p": 900.0}
    through_js = json.loads(json.dumps(lake).replace("27900000.0", "27900000"))
    assert through_js["profile"]["volume_m3"] == 27900000 and isinstance(through_js["profile"]["volume_m3"], int)
    assert lake_key(through_js) == lake_key(lake)
