"""The lake view's steps: big steps, run until settled, capped removal, append-only patches, the state words."""

from __future__ import annotations

from turnback.app import ids
from turnback.app.stores import lake_to_store, new_history
from turnback.app.views.lake.callbacks import big_step, step_session
from turnback.app.views.lake.figures import EQ_HISTORY, append_patches
from turnback.app.views.lake.history import appended, from_tail, tail_of
from turnback.app.views.lake.readout import build_readout
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.demo import DEMO_PROFILE as PROF
from turnback.model.equilibrium import analyze, equilibria, folds
from turnback.model.outlook import lake_outlook

LAKE = lake_to_store(P, PROF)
TIP, REC = folds(P)


def test_big_steps() -> None:
    today = PROF.load_kg_per_yr
    assert big_step("up", today, P, PROF, 2000.0) == today + 0.1 * today
    assert big_step("down", 10.0, P, PROF, 2000.0) == 0.0
    assert big_step("past_tipping", today, P, PROF, 2000.0) == 1.02 * TIP.load
    assert big_step("under_recovery", today, P, PROF, 2000.0) == 0.98 * REC.load


def test_run_until_settled_lands_within_two_percent() -> None:
    short = from_tail(tail_of(new_history(LAKE)))
    moved, _, _ = step_session(ids.LOAD_SLIDER, 0.97 * TIP.load, short, LAKE, 1, 0)
    assert moved is not None
    settled, msg, _ = step_session(ids.SETTLE_BUTTON, None, from_tail(tail_of(moved)), LAKE, 1, 0)
    assert settled is not None and msg == ""
    target = equilibria(P, 0.97 * TIP.load)[0].p
    assert abs(settled["p"][-1] - target) <= 0.02 * target
    again, msg, _ = step_session(ids.SETTLE_BUTTON, None, from_tail(tail_of(settled)), LAKE, 1, 0)
    assert again is None and "already settled" in msg


def test_a_capped_removal_says_so() -> None:
    short = from_tail(tail_of(new_history(LAKE)))
    held = short["p"][-1]
    _, _, msg = step_session(ids.REMOVAL_BUTTON, None, short, LAKE, 5, 99_999_999)
    assert f"Removed {held:,.0f} kg P, all the lake held" in msg and "99,999,999" in msg
    _, _, msg2 = step_session(ids.REMOVAL_BUTTON, None, short, LAKE, 5, 100)
    assert msg2.startswith("Removed 100 kg P")


def test_append_patches_carry_only_the_new_points() -> None:
    short = from_tail(tail_of(new_history(LAKE)))
    moved, _, _ = step_session(ids.LOAD_SLIDER, 500.0, short, LAKE, 10, 0)
    assert moved is not None
    added = appended(moved)
    assert len(added["year"]) == 11  # the load step, then ten years
    eq, _ = append_patches(added, LAKE, (0, added["year"][-1]))
    ops = eq.to_plotly_json()["operations"]
    ext = [op for op in ops if op["location"] == ["data", EQ_HISTORY, "x"]]
    assert ext and ext[0]["operation"] == "Extend" and len(ext[0]["params"]["value"]) == 11


def test_raising_the_load_below_tipping_reads_getting_worse_and_cutting_from_turbid_improving() -> None:
    res = analyze(P, n_points=20)
    low_today = equilibria(P, PROF.load_kg_per_yr)[0].p
    text = str(build_readout(P, PROF, res, 530.0, low_today))
    assert "Clear water" in text and "getting worse" in text and "heading for 47" in text
    assert "Recovering" not in text
    high_today = equilibria(P, PROF.load_kg_per_yr)[-1].p
    cut = str(build_readout(P, PROF, res, 300.0, high_today, meeting=True))
    assert "Turbid" in cut and "improving" in cut and "still turbid at the new balance" in cut
    assert "Tipping towards" not in cut
    years = lake_outlook(P, 530.0, low_today).years
    assert f"about {years} years" in text
