"""The plans view without a browser: form parsing, list actions, results store, cancel, save, export.

Expected numbers come from the model itself (model.scenario, model.clarity,
model.equilibrium, model.store), never typed in here.
"""

from __future__ import annotations

import csv
import html
import io
import re
import threading
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from dash import no_update
from turnback.app import ids
from turnback.app.background import cancel_hook, new_token, request_cancel
from turnback.app.report import CAUTIONS, outcome_rows
from turnback.app.stores import comparison_from_store, lake_to_store, new_history, starting_state, state_now
from turnback.app.views.plans import layout as view_plans
from turnback.app.views.plans.callbacks import (
    on_lake_note,
    on_load_kind,
    on_load_saved,
    on_precaution_request,
    on_results,
    on_results_note,
    on_saved_select,
    run_plan,
)
from turnback.app.views.plans.export import export
from turnback.app.views.plans.figures import (
    MEETING_COLUMNS,
    TABLE_COLUMNS,
    outcome_table,
    recovery_figure,
    result_figures,
    table_columns,
    view_figure,
)
from turnback.app.views.plans.form import FORM_DEFAULTS, form_from_scenario, parse_form
from turnback.app.views.plans.precaution import run_precaution
from turnback.app.views.plans.readout import plan_lake, precaution_words
from turnback.app.views.plans.saved import save_plan, saved_options
from turnback.app.views.plans.scenarios import (
    BASELINE_NAME,
    action_outputs,
    free_name,
    list_rows,
    plan_action,
    with_baseline,
)
from turnback.model.clarity import clarity
from turnback.model.clear_state import scenario_clear_below_kg
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.demo import DEMO_PROFILE as PROF
from turnback.model.ensemble import compare_plan
from turnback.model.equilibrium import equilibria, folds
from turnback.model.io.store import Store
from turnback.model.params import LakeParameters
from turnback.model.plan import Plan, Scenario
from turnback.model.precaution import precautionary_load
from turnback.model.schedules import ConstantLoad, Inactivation, LinearCut, Removal, StepLoad, TableLoad

LAKE = lake_to_store(P, PROF)
TODAY = PROF.load_kg_per_yr
TIP = folds(P)[0]


def form(**changes: str) -> dict[str, Any]:
    return dict(FORM_DEFAULTS) | changes


def model_message(build: Any) -> str:
    """The model's own validation message for a bad value."""
    with pytest.raises(ValueError) as info:
        build()
    return str(info.value)


def tail(message: str) -> str:
    """A model message without its leading field name."""
    return message.split(" ", 1)[1]


def small_plan() -> tuple[dict[str, Any], list[Scenario]]:
    scenarios = [
        Scenario("cut", 30, LinearCut(TODAY, 40.0, 10), variability_cv=0.2, members=200, seed=1),
        Scenario(
            "push",
            30,
            ConstantLoad(1.1 * TIP.load),
            variability_cv=0.2,
            members=200,
            seed=2,
            treatments=(Inactivation(5, 50.0, 3),),
        ),
    ]
    return {"scenarios": [s.to_dict() for s in scenarios]}, scenarios


class Progress:
    def __init__(self) -> None:
        self.seen: list[tuple[str, str]] = []

    def __call__(self, value: tuple[str, str]) -> None:
        self.seen.append(value)


# --------------------------------------------------------------------------
# the lake the plan is for
# --------------------------------------------------------------------------
def test_plan_starts_from_the_lake_state_now() -> None:
    h = new_history(LAKE)
    # without a matching history: the clear equilibrium at today's load (the engine's lowest stable state)
    p, load, year = state_now(LAKE, None)
    assert p == pytest.approx(equilibria(P, TODAY)[0].p) and load == TODAY and year is None
    h2 = dict(h, year=[0, 5], load=[TODAY, 600.0], p=[h["p"][0], 2500.0], event=["start", ""])
    assert state_now(LAKE, h2) == (2500.0, 600.0, 5)
    stale = dict(h2, lake_key="not this lake")
    assert state_now(LAKE, stale)[0] == pytest.approx(starting_state(P, TODAY))
    slake = plan_lake(LAKE, h2)
    assert slake.initial_p_kg == pytest.approx(2500.0) and slake.params == P
    assert slake.volume_m3 == PROF.volume_m3 and slake.name == PROF.name


def test_lake_note_names_the_start_and_fills_the_default_load() -> None:
    h = new_history(LAKE)
    note, placeholder, name = on_lake_note("plans", LAKE, h)
    text = "".join(str(x) for x in note[1:])
    tp = float(PROF.concentration(h["p"][-1]))
    assert f"TP {tp:.1f} µg/L" in text and f"{TIP.load:,.0f}" in text
    assert placeholder == f"{TODAY:,.0f} (the load now)" and name == PROF.name
    assert on_lake_note("lake", LAKE, h) == (no_update, no_update, no_update)


# --------------------------------------------------------------------------
# the form
# --------------------------------------------------------------------------
def test_default_form_is_a_linear_cut_from_the_load_now() -> None:
    s, problems = parse_form(form(), TODAY)
    assert all(not v for v in problems.values())
    assert s == Scenario("Scenario 1", 30, LinearCut(TODAY, 40.0, 10), variability_cv=0.2, members=500, seed=1)


def test_every_load_kind_and_treatment() -> None:
    s, _ = parse_form(form(load_kind="constant", load_from="380"), TODAY)
    assert s is not None and s.load == ConstantLoad(380.0)
    s, _ = parse_form(form(load_kind="step", step_to="250", step_year="4", years="10"), TODAY)
    assert s is not None and s.load == StepLoad(TODAY, 250.0, 4)
    s, _ = parse_form(form(load_kind="table", table="300, 290,280;\n270,", years="4"), TODAY)
    assert s is not None and s.load == TableLoad((300.0, 290.0, 280.0, 270.0))
    s, _ = parse_form(
        form(removal_kg="1500", removal_year="2", inact_percent="60", inact_year="3", inact_years="4"), TODAY
    )
    assert s is not None and s.treatments == (Removal(2, 1500.0), Inactivation(3, 60.0, 4))
    s, _ = parse_form(form(seed="", noise_sd="30", clear_rule="fixed", clear_tp="40", stay_years="5"), TODAY)
    assert s is not None and s.seed is None and s.process_noise_sd_kg == 30.0
    assert s.clear_threshold == 40.0 and s.recovery_stay_years == 5


def test_bad_fields_get_the_models_messages_beside_their_section() -> None:
    s, problems = parse_form(form(cut_percent="120", years="abc", members="0", cv="-1", removal_kg="5"), TODAY)
    assert s is None
    assert problems["basics"] == [
        "Horizon: 'abc' is not a number; write digits with a point for decimals (such as 1200 or 0.25), "
        "without thousands separators"
    ]
    # the model's text, with the form's label for the field name
    assert problems["load"] == ["Cut " + tail(model_message(lambda: LinearCut(TODAY, 120.0, 10)))]
    assert "give both the kilograms and the year" in problems["treatments"][0]
    members_msg = model_message(lambda: Scenario("x", 1, ConstantLoad(0.0), members=0))
    cv_msg = model_message(lambda: Scenario("x", 1, ConstantLoad(0.0), variability_cv=-1.0))
    assert problems["variability"] == ["Load variability (CV) " + tail(cv_msg), "Members " + tail(members_msg)]


def test_cross_field_messages_land_in_the_right_section() -> None:
    _, p = parse_form(form(load_kind="table", table="300, 290", years="3"), TODAY)
    expected = model_message(lambda: Scenario("x", 3, TableLoad((300.0, 290.0))))
    assert p["load"] == ["Loads of years 1, 2, …" + expected[len("load.kg_per_yr") :]]
    _, p = parse_form(form(years="10", inact_percent="50", inact_year="12", inact_years="2"), TODAY)
    assert p["treatments"] and p["treatments"][0].startswith("Inactivation start year must be between 1 and 10")
    _, p = parse_form(form(years="1000", members="100000"), TODAY)
    assert p["variability"] and p["variability"][0].startswith("Members × years must be at most")
    _, p = parse_form(form(load_kind="table", table="300,,290", years="3", name="  "), TODAY)
    assert "Load of year 2 is empty" in p["load"][0]
    assert p["basics"] == ["Name " + tail(model_message(lambda: Scenario("  ", 1, ConstantLoad(0.0))))]
    _, p = parse_form(form(load_kind="table", table="300, -1", years="2"), TODAY)
    assert p["load"][0].startswith("Load of year 2 must be at least 0")


@pytest.mark.parametrize(
    "scenario",
    [
        Scenario("a", 30, LinearCut(410.0, 35.5, 7), variability_cv=0.25, members=300, seed=9),
        Scenario("b", 12, StepLoad(400.0, 260.0, 3), process_noise_sd_kg=25.0, members=50, seed=None),
        Scenario("c", 3, TableLoad((300.0, 280.5, 260.0)), clear_threshold="tipping_fold", recovery_stay_years=2),
        Scenario(
            "d",
            40,
            ConstantLoad(500.0),
            members=10,
            clear_threshold=55.0,
            treatments=(Removal(2, 800.0), Inactivation(3, 40.0, 5), Removal(9, 100.0)),
        ),
    ],
)
def test_form_round_trip(scenario: Scenario) -> None:
    values, extra = form_from_scenario(scenario)
    back, problems = parse_form(values, 999.0, extra, scenario.description)
    assert all(not v for v in problems.values()), problems
    assert back is not None
    assert back.to_dict() | {"treatments": sorted(map(str, back.treatments))} == scenario.to_dict() | {
        "treatments": sorted(map(str, scenario.treatments))
    }


# --------------------------------------------------------------------------
# list actions
# --------------------------------------------------------------------------
def test_add_edit_duplicate_delete() -> None:
    res = plan_action(ids.PLAN_ADD, form(), [], {"scenarios": []}, None, TODAY)
    plan = res["plan"]
    assert [s["name"] for s in plan["scenarios"]] == ["Scenario 1"]
    assert res["form"] == FORM_DEFAULTS | {"name": "Scenario 2"}  # a clean form: nothing carried over
    # a name already used is refused, the plan is unchanged
    res = plan_action(ids.PLAN_ADD, form(), [], plan, None, TODAY)
    assert "plan" not in res and "already in the plan" in res["messages"]["basics"][0]
    res = plan_action(ids.PLAN_ADD, form(name="Hold", load_kind="constant"), [], plan, None, TODAY)
    plan = res["plan"]
    # edit the first: the form shows it; saving the changes replaces it in place
    res = plan_action(ids.PLAN_EDIT, form(), [0], plan, None, TODAY)
    assert res["form"]["name"] == "Scenario 1" and res["editing"]["name"] == "Scenario 1"
    editing = res["editing"]
    res = plan_action(ids.PLAN_UPDATE, res["form"] | {"cut_percent": "60", "name": "Deep cut"}, [0], plan, editing, 0)
    plan = res["plan"]
    assert [s["name"] for s in plan["scenarios"]] == ["Deep cut", "Hold"]
    assert plan["scenarios"][0]["load"]["percent"] == 60.0 and res["editing"] is None
    assert res["form"]["name"] == "Scenario 3" and res["form"]["cut_percent"] == FORM_DEFAULTS["cut_percent"]
    res = plan_action(ids.PLAN_DUPLICATE, form(), [0], plan, res["editing"], TODAY)
    plan = res["plan"]
    assert [s["name"] for s in plan["scenarios"]] == ["Deep cut", "Deep cut (copy)", "Hold"]
    assert plan["scenarios"][1] | {"name": "Deep cut"} == plan["scenarios"][0]
    res = plan_action(ids.PLAN_DELETE, form(), [0], plan, {"name": "Deep cut"}, TODAY)
    assert [s["name"] for s in res["plan"]["scenarios"]] == ["Deep cut (copy)", "Hold"] and res["editing"] is None
    # nothing selected: a message, nothing changes
    res = plan_action(ids.PLAN_DELETE, form(), [], plan, None, TODAY)
    assert set(res) == {"status"} and "Select a scenario" in res["status"]


def test_a_bad_form_never_loses_the_plan() -> None:
    plan, _ = small_plan()
    for trigger, editing in ((ids.PLAN_ADD, None), (ids.PLAN_UPDATE, {"name": "cut"})):
        res = plan_action(trigger, form(name="new", years="-3"), [0], plan, editing, TODAY)
        assert "plan" not in res and "unchanged" in res["status"]
        assert res["messages"]["basics"][0].startswith("Horizon must be a whole number")
    out = action_outputs(plan_action(ids.PLAN_ADD, form(years="x"), [], plan, None, TODAY), None)
    assert out[0] is no_update  # the store is not written


def test_edit_keeps_treatments_beyond_the_form() -> None:
    s = Scenario("many", 20, ConstantLoad(400.0), treatments=(Removal(2, 500.0), Removal(6, 300.0)))
    plan = {"scenarios": [s.to_dict()]}
    res = plan_action(ids.PLAN_EDIT, form(), [0], plan, None, TODAY)
    assert "1 more treatment" in res["status"]
    res = plan_action(ids.PLAN_UPDATE, res["form"] | {"years": "25"}, [0], plan, res["editing"], TODAY)
    assert Scenario.from_dict(res["plan"]["scenarios"][0]).treatments == s.treatments


def test_list_rows_and_free_names() -> None:
    _, scenarios = small_plan()
    rows = list_rows(scenarios)
    assert rows[0]["name"] == "cut" and scenarios[0].load.describe() in rows[0]["plan"]
    assert scenarios[1].treatments[0].describe() in rows[1]["plan"] and "200 members, seed 2" in rows[1]["ensemble"]
    assert free_name(["Scenario 2"]) == "Scenario 3" and free_name([]) == "Scenario 1"
    assert on_load_kind("table") == [{"display": "none"}, {"display": "none"}, {"display": "none"}, {}]
    assert on_load_kind("step")[2] == {}


# --------------------------------------------------------------------------
# running, results store, cancel
# --------------------------------------------------------------------------
def test_run_reports_progress_and_matches_the_model(tmp_path: Path) -> None:
    plan, scenarios = small_plan()
    h = new_history(LAKE)
    progress = Progress()
    data, msg = run_plan(progress, {"token": "a" * 32}, plan, LAKE, h, folder=tmp_path)
    assert msg == "Ran 3 scenarios."  # the plan's two and the do-nothing baseline added for the run
    values = [int(v) for v, _ in progress.seen]
    assert values == sorted(values) and progress.seen[-1] == ("100", "done") and len(values) >= 3
    # the same plan run directly through the model
    direct = compare_plan(Plan(plan_lake(LAKE, h), tuple(with_baseline(scenarios, TODAY))))
    back = comparison_from_store(data)
    for a, b in zip(outcome_rows(back), outcome_rows(direct), strict=True):
        for k in a:
            if isinstance(a[k], float) and b[k] is not None:
                assert a[k] == pytest.approx(b[k], rel=1e-12), k
            else:
                assert a[k] == b[k], k
    # yearly series to six significant digits, recovery-time figure identical
    for ra, rb in zip(back.results, direct.results, strict=True):
        np.testing.assert_allclose(ra.tp_median_ug_l, rb.tp_median_ug_l, rtol=1e-5)
        np.testing.assert_allclose(ra.p_clear, rb.p_clear, rtol=1e-5)
    fa, fb = recovery_figure(back.results), recovery_figure(direct.results)
    assert [list(t.y) for t in fa.data] == [list(t.y) for t in fb.data]


def test_cancel_keeps_the_previous_results(tmp_path: Path) -> None:
    plan, _ = small_plan()
    token = new_token(tmp_path)
    assert request_cancel(tmp_path, token)
    progress = Progress()
    data, msg = run_plan(progress, {"token": token}, plan, LAKE, None, folder=tmp_path)
    assert data is no_update and msg.startswith("Cancelled")
    assert progress.seen[-1] == ("0", "cancelled")
    assert not (tmp_path / token).exists()  # the flag is cleared
    # a token that is not ours is never used as a file name
    assert not request_cancel(tmp_path, "../../etc/passwd")
    assert cancel_hook(tmp_path, "../x")() is False


def test_run_of_a_lake_without_folds_says_what_to_fix(tmp_path: Path) -> None:
    single = LakeParameters(loss_rate=1.5, recycling_max=100.0, recycling_half=2500.0, recycling_exponent=2.0)
    assert not folds(single)  # a lake with one state at every load (checked with the engine)
    lake = lake_to_store(single, PROF)
    plan, _ = small_plan()
    data, msg = run_plan(Progress(), {"token": "b" * 32}, plan, lake, None, folder=tmp_path)
    assert data is no_update and msg.startswith("Not run: Scenario 'cut': clear_threshold must be a TP")
    assert "previous results are kept" in msg


def test_outcome_table_adds_expected_clarity() -> None:
    _, scenarios = small_plan()
    comp = compare_plan(Plan(plan_lake(LAKE, None), tuple(scenarios)))
    rows = outcome_table(comp.results)
    assert set(rows[0]) == set(TABLE_COLUMNS) | {"starts_clear"}
    for row, r in zip(rows, comp.results, strict=True):
        c = clarity(r.final_tp_median_ug_l)  # Carlson (1977) TSI equivalence, via model.clarity
        assert row["secchi_m"] == c.secchi_m
        # one trophic verdict: the OECD class of the TP, Carlson's index as detail
        assert row["trophic"] == f"{c.oecd_class} (Carlson TSI {c.tsi_tp:.0f})"
        assert row["starts_clear"] and row["recovery_years_median"] is None and row["p_recovered"] is None
        assert row["total_removed_kg"] == r.load_cut_kg + r.in_lake_removal_kg
    assert rows[0]["load_cut_kg"] > 0 and rows[1]["p_flip"] > rows[0]["p_flip"]


def test_results_render_and_meeting_view_is_larger(tmp_path: Path) -> None:
    plan, _ = small_plan()
    data, _ = run_plan(Progress(), {"token": "c" * 32}, plan, LAKE, None, folder=tmp_path)
    columns, table, *figs = on_results(data, [])
    assert [r["scenario"] for r in table] == ["cut", "push", BASELINE_NAME] and len(figs) == 4
    assert [c["field"] for c in columns] == list(TABLE_COLUMNS)
    assert {t.name for t in figs[0].data if t.showlegend is not False} == {"cut", "push", BASELINE_NAME}
    big_columns, _, *big = on_results(data, ["on"])
    assert big[0].layout.font.size > figs[0].layout.font.size
    assert [c["field"] for c in big_columns] == list(MEETING_COLUMNS)
    _, empty_table, *blank = on_results(None, [])
    assert empty_table == [] and "Run the plan" in blank[0].layout.annotations[0].text
    note = on_results_note(data, "plans", LAKE, None)
    assert "3 scenarios" in note[0] and len(note) == 1
    moved = dict(new_history(LAKE), p=[3000.0])
    assert "has changed since this run" in str(on_results_note(data, "plans", LAKE, moved))


# --------------------------------------------------------------------------
# precautionary load
# --------------------------------------------------------------------------
def test_precaution_request_checks_and_matches_the_model(tmp_path: Path) -> None:
    plan, scenarios = small_plan()
    req, msg = on_precaution_request(1, "cut", "20", "0", plan, LAKE, None, folder=tmp_path)
    assert req is no_update and msg.startswith("At most (% chance of flipping) must be greater than 0")
    req, msg = on_precaution_request(1, "cut", "2.5", "5", plan, LAKE, None, folder=tmp_path)
    assert req is no_update and msg.startswith("Within years must be a whole number")
    req, msg = on_precaution_request(1, "cut", "20", "5", plan, LAKE, None, folder=tmp_path)
    assert msg == "" and req["within_years"] == 20 and req["max_percent"] == 5.0
    progress = Progress()
    data, _ = run_precaution(progress, req, folder=tmp_path)
    s, slake = scenarios[0], plan_lake(LAKE, None)
    direct = precautionary_load(  # the model's own search with the same ensemble
        slake.params,
        within_years=20,
        max_probability=0.05,
        variability_cv=s.variability_cv,
        members=s.members,
        clear_below_kg=scenario_clear_below_kg(slake, s),
        rng=np.random.default_rng(s.seed),
    )
    assert data["result"]["load_kg_per_yr"] == direct.load_kg_per_yr
    assert data["result"]["standard_error_kg_per_yr"] == direct.standard_error_kg_per_yr
    assert progress.seen[-1] == ("done",) and all(len(v) == 1 for v in progress.seen)
    words = " ".join(str(w) for w in precaution_words(data, TODAY))
    assert f"{direct.load_kg_per_yr:,.0f}" in words and f"± {direct.standard_error_kg_per_yr:,.0f}" in words
    assert "Monte-Carlo error" in words
    # attached to the report of a run of the same lake
    run, _ = run_plan(Progress(), {"token": "d" * 32}, plan, LAKE, None, folder=tmp_path)
    html_text = export(ids.PLAN_EXPORT_REPORT, run, data)[0]["content"]
    assert "Precautionary load [kg/yr]" in html_text and f"{direct.load_kg_per_yr:,.0f}" in html_text


# --------------------------------------------------------------------------
# saving and finding again
# --------------------------------------------------------------------------
def test_save_find_again_and_merge(tmp_path: Path) -> None:
    plan, scenarios = small_plan()
    assert save_plan("", {"scenarios": []}, LAKE, None, tmp_path).startswith("Nothing to save")
    msg = save_plan("Options 2030", plan, LAKE, None, tmp_path)
    assert msg.startswith("Saved 2 scenarios as plan 'Options 2030' (save number 1")
    # a new Store on the same folder (as after a restart) finds it
    options = saved_options(tmp_path)
    assert [o["value"] for o in options] == ["Options 2030"] and "2 scenarios" in options[0]["label"]
    with Store(tmp_path) as st:
        saved = st.load_plan("Options 2030")
    assert [s.to_dict() for s in saved.scenarios] == [s.to_dict() for s in scenarios]
    assert saved.lake.initial_p_kg == pytest.approx(state_now(LAKE, None)[0])
    # loading into a plan that already holds one of them, and a changed one of the other
    changed = replace_name_cv(scenarios[1], 0.5)
    data, msg = on_load_saved(1, "Options 2030", {"scenarios": [scenarios[0].to_dict(), changed]}, data_dir=tmp_path)
    names = [s["name"] for s in data["scenarios"]]
    assert names == ["cut", "push", "push (saved)"] and "1 was already in it" in msg
    assert on_load_saved(1, "nope", plan, data_dir=tmp_path)[0] is no_update
    details = on_saved_select("Options 2030", LAKE, None, data_dir=tmp_path)
    assert "cut, push" in details and "differs" not in details


def replace_name_cv(s: Scenario, cv: float) -> dict[str, Any]:
    return s.to_dict() | {"variability_cv": cv}


def test_two_sessions_saving_at_once_lose_nothing(tmp_path: Path) -> None:
    plan_a = {"scenarios": [Scenario(f"a{i}", 10, ConstantLoad(300.0 + i)).to_dict() for i in range(3)]}
    plan_b = {"scenarios": [Scenario(f"b{i}", 10, ConstantLoad(200.0 + i)).to_dict() for i in range(3)]}
    barrier = threading.Barrier(2)
    messages: list[str] = []

    def save(plan: dict[str, Any]) -> None:
        barrier.wait()
        for _ in range(5):
            messages.append(save_plan("Shared", plan, LAKE, None, tmp_path))

    threads = [threading.Thread(target=save, args=(p,)) for p in (plan_a, plan_b)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert all(m.startswith("Saved 3 scenarios") for m in messages), messages
    with Store(tmp_path) as st:
        names = sorted(s.name for s in st.load_plan("Shared").scenarios)
        assert len(st.history("lake", "Shared")) == 10  # every save is a revision
    assert names == sorted(["a0", "a1", "a2", "b0", "b1", "b2"])


def test_saving_into_an_unusable_folder_keeps_the_plan(tmp_path: Path) -> None:
    plan, _ = small_plan()
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    msg = save_plan("x", plan, LAKE, None, blocker)
    assert msg.startswith("Not saved:") and msg.endswith("Your scenarios are still here.")


# --------------------------------------------------------------------------
# exports
# --------------------------------------------------------------------------
def test_exports(tmp_path: Path) -> None:
    plan, _ = small_plan()
    assert export(ids.PLAN_EXPORT_REPORT, None, None)[1].startswith("Run the plan first")
    data, _ = run_plan(Progress(), {"token": "e" * 32}, plan, LAKE, None, folder=tmp_path)
    report, _ = export(ids.PLAN_EXPORT_REPORT, data, None)
    text = report["content"]
    assert report["filename"] == "turnback-lake-amberlin-fictional-report.html"
    for caution in CAUTIONS:
        assert html.escape(caution) in text
    # offline: plotly inline, no external script (common practice, no source)
    assert re.search(r"<script[^>]+src=", text) is None and "plotly.js" in text.lower()
    traj, _ = export(ids.PLAN_EXPORT_TRAJECTORIES, data, None)
    rows = list(csv.reader(io.StringIO(traj["content"])))
    assert rows[0][:3] == ["scenario", "year", "load_kg_per_yr"] and len(rows) == 1 + 3 * 31
    table, _ = export(ids.PLAN_EXPORT_TABLE, data, None)
    rows = list(csv.reader(io.StringIO(table["content"])))
    assert rows[0] == list(TABLE_COLUMNS) and [r[0] for r in rows[1:]] == ["cut", "push", BASELINE_NAME]


def test_view_layout_ids_and_columns() -> None:
    text = str(view_plans.build_view())
    for i in (*ids.PLAN_FORM.values(), ids.PLAN_RUN, ids.PLAN_CANCEL, ids.PLAN_TABLE, ids.PLAN_SAVE, ids.PLAN_DOWNLOAD):
        assert f"'{i}'" in text, i
    assert "permits" in view_plans.TREATMENT_CAUTION and "licensed" in view_plans.TREATMENT_CAUTION
    assert "safe to swim" not in text.lower()
    assert [c["field"] for c in table_columns()] == list(TABLE_COLUMNS)
    for key, value in FORM_DEFAULTS.items():  # the layout starts with the documented defaults
        assert f"'{ids.PLAN_FORM[key]}'" in text and (value == "" or repr(value) in text)


def test_view_figure_meeting_is_larger() -> None:
    _, scenarios = small_plan()
    comp = compare_plan(Plan(plan_lake(LAKE, None), tuple(scenarios[:1])))
    small = result_figures(comp.results)["trajectory"]
    big = view_figure(result_figures(comp.results)["trajectory"], meeting=True)
    assert big.layout.font.size > small.layout.font.size and big.layout.height > small.layout.height


def test_treatments_never_carry_over_to_the_next_scenario() -> None:
    # "Cut 20% + alum", then a new scenario: the form it leaves behind has no treatment
    alum = form(name="Cut 20% + alum", cut_percent="20", inact_percent="80", inact_year="1", inact_years="10")
    res = plan_action(ids.PLAN_ADD, alum, [], {"scenarios": []}, None, TODAY)
    assert Scenario.from_dict(res["plan"]["scenarios"][0]).treatments
    clean = res["form"]
    assert clean["inact_percent"] == clean["removal_kg"] == ""
    nxt = plan_action(ids.PLAN_ADD, clean, [], res["plan"], None, TODAY)
    assert Scenario.from_dict(nxt["plan"]["scenarios"][1]).treatments == ()
    fresh = plan_action(ids.PLAN_NEW, alum, [], res["plan"], None, TODAY)
    assert fresh["form"] == FORM_DEFAULTS | {"name": "Scenario 2"} and fresh["editing"] is None


def test_a_run_adds_a_do_nothing_baseline() -> None:
    cut = Scenario("cut", 30, LinearCut(TODAY, 40.0, 10), members=20, seed=3, variability_cv=0.1)
    runs = with_baseline([cut], TODAY)
    assert [s.name for s in runs] == ["cut", BASELINE_NAME]
    base = runs[-1]
    assert base.load == ConstantLoad(TODAY) and base.treatments == () and base.years == 30
    assert (base.members, base.seed, base.variability_cv) == (20, 3, 0.1)
    hold = Scenario("hold", 30, ConstantLoad(TODAY))
    assert with_baseline([hold, cut], TODAY) == [hold, cut]  # already has one


def test_results_go_stale_and_exports_refuse_them(tmp_path: Path) -> None:
    from turnback.app.views.plans.callbacks import on_export, on_stale

    plan, _ = small_plan()
    data, _ = run_plan(Progress(), {"token": "d" * 32}, plan, LAKE, None, folder=tmp_path)
    assert on_stale(data, plan, LAKE, "plans", None) is None
    fewer = {"scenarios": plan["scenarios"][:1]}  # a scenario deleted after the run
    assert "Results out of date" in str(on_stale(data, fewer, LAKE, "plans", None))
    download, msg = on_export(data, None, fewer, LAKE, None)
    assert download is no_update and "out of date" in msg
