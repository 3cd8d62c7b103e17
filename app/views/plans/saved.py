"""Saving the plan and finding it again: the SQLite store of the data folder (:class:`model.store.Store`).

The store keeps every save as a revision, so two sessions saving the same
plan name both keep their scenarios.
"""

from __future__ import annotations

import time
from collections.abc import Mapping, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

from turnback.model.io.store import Store
from turnback.model.plan import MAX_SCENARIOS, Plan, Scenario, ScenarioLake

from ...stores import PlanStore, lake_from_store, plan_to_store, same_lake, scenarios_of
from .errors import scenario_words, store_busy
from .readout import lake_words, plan_lake
from .scenarios import copy_name

Lake = Mapping[str, Any]


def open_store(data_dir: Path | None, attempts: int = 5) -> Store:
    """The store, retrying briefly when another session is creating the database at the same moment.

    Two first opens of a brand-new database file can collide while it is
    switched to write-ahead logging ("database is locked"); a moment later
    the file is ready.
    """
    for i in range(attempts):
        try:
            return Store(data_dir)
        except ValueError as exc:
            if not store_busy(exc) or i == attempts - 1:
                raise
            time.sleep(0.1 * (i + 1))
    raise AssertionError("unreachable")


def saved_plans(store: Store) -> list[dict[str, Any]]:
    """Plans in the store: name, scenario names, lake, last save (lakes not in the scenario form are left out)."""
    out = []
    for name in store.lake_names():
        item = store.get_lake(name)
        if item is None:
            continue
        try:
            lake = ScenarioLake.from_dict(item.data)
            scenarios = store.scenarios(name)
        except ValueError:
            continue
        if not scenarios:
            continue
        out.append({"name": name, "lake": lake, "scenarios": [s.name for s in scenarios], "saved_at": item.saved_at})
    return out


def saved_options(data_dir: Path | None) -> list[dict[str, str]]:
    with open_store(data_dir) as st:
        plans = saved_plans(st)
    return [
        {
            "label": f"{p['name']} — {len(p['scenarios'])} scenario{'s' if len(p['scenarios']) != 1 else ''}, "
            f"last saved {p['saved_at'][:16].replace('T', ' ')} UTC",
            "value": p["name"],
        }
        for p in plans
    ]


def save_plan(
    name_text: Any, plan: Mapping[str, Any] | None, lake: Lake, history: Mapping[str, Any] | None, data_dir: Path | None
) -> str:
    """Save the plan's scenarios and the lake; the message says what the saved plan now holds."""
    scenarios = scenarios_of(plan)
    if not scenarios:
        return "Nothing to save: add a scenario to the plan first."
    _, profile = lake_from_store(lake)
    name = str(name_text or "").strip() or profile.name
    try:
        the_plan = Plan(plan_lake(lake, history, name=name), tuple(scenarios))
        with open_store(data_dir) as st:
            items = st.save_plan(the_plan)
            held = [s.name for s in st.scenarios(name)]
    except ValueError as exc:
        return f"Not saved: {scenario_words(exc, scenarios)}. Your scenarios are still here."
    n = len(scenarios)
    msg = f"Saved {n} scenario{'s' if n != 1 else ''} as plan {name!r} (save number {items[0].revision} of this plan)."
    others = [h for h in held if h not in {s.name for s in scenarios}]
    if others:
        msg += (
            f" The saved plan also holds {', '.join(repr(o) for o in others)} from earlier saves (by you or someone "
            "else); every scenario is kept at its latest revision."
        )
    return msg


def merge_saved(plan: Mapping[str, Any] | None, saved: Sequence[Scenario]) -> tuple[PlanStore, str]:
    """Add saved scenarios to the plan: identical ones are skipped, a different one of the same name is renamed."""
    scenarios = scenarios_of(plan)
    by_name = {s.name: s for s in scenarios}
    added, same, renamed = [], [], []
    for s in saved:
        have = by_name.get(s.name)
        if have is not None and have.to_dict() == s.to_dict():
            same.append(s.name)
            continue
        if have is not None:
            s = replace(s, name=copy_name(s.name, list(by_name), "saved"))
            renamed.append(s.name)
        if len(scenarios) >= MAX_SCENARIOS:
            break
        scenarios.append(s)
        by_name[s.name] = s
        added.append(s.name)
    parts = [f"Added {len(added)} saved scenario{'s' if len(added) != 1 else ''} to the plan"]
    if same:
        parts.append(f"{len(same)} {'was' if len(same) == 1 else 'were'} already in it")
    if renamed:
        parts.append(
            "a scenario of the same name but different content was already in the plan, so the saved one is "
            + ", ".join(repr(r) for r in renamed)
        )
    left = len(saved) - len(added) - len(same)
    if left > 0:
        parts.append(f"{left} did not fit (at most {MAX_SCENARIOS} scenarios)")
    return plan_to_store(scenarios), "; ".join(parts) + "."


def saved_details(name: str, lake: Lake, history: Mapping[str, Any] | None, data_dir: Path | None) -> str:
    """What a saved plan holds, and whether it was saved for another lake than the current one."""
    try:
        with open_store(data_dir) as st:
            saved = st.load_plan(name)
    except ValueError as exc:
        return f"This plan cannot be read: {exc}"
    out = [f"Scenarios: {', '.join(s.name for s in saved.scenarios)}. Saved for a lake with {lake_words(saved.lake)}."]
    try:
        now = plan_lake(lake, history)
        if not same_lake(now.to_dict(), saved.lake.to_dict()):
            out.append(
                " The current lake differs (" + lake_words(now) + "): the scenarios would run on the current lake."
            )
    except ValueError:
        pass
    return "".join(out)


def load_saved(name: str, plan: Mapping[str, Any] | None, data_dir: Path | None) -> tuple[Any, str]:
    """The plan with a saved plan's scenarios added (None when it cannot be read), and a message."""
    try:
        with open_store(data_dir) as st:
            saved = st.load_plan(name)
    except ValueError as exc:
        return None, f"Not loaded: {exc}. The plan's scenarios are unchanged."
    data, msg = merge_saved(plan, saved.scenarios)
    return data, f"From {name!r}: {msg}"
