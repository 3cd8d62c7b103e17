"""The plan's scenario list: its rows, and the actions on it (add, save changes, edit, duplicate, delete).

Pure functions on the ``PLAN_STORE`` data (:class:`app.stores.PlanStore`).
The scenarios already built are never lost: a bad form only produces messages.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any

from dash import html, no_update
from turnback.model.plan import MAX_SCENARIOS, Scenario
from turnback.model.schedules import ConstantLoad

from ... import ids
from ...stores import plan_to_store, scenarios_of
from .form import FORM_DEFAULTS, FORM_KEYS, SECTIONS, form_from_scenario, parse_form

#: name of the do-nothing scenario a run adds when the plan has none
BASELINE_NAME = "Do nothing (baseline)"


def clean_form(names: Sequence[str]) -> dict[str, str]:
    """A new scenario's form: every entry at its default (nothing carried over), with a free name."""
    return dict(FORM_DEFAULTS) | {"name": free_name(list(names))}


def is_do_nothing(s: Scenario, load_now: float) -> bool:
    """Whether a scenario holds the load now, with no treatments."""
    return (
        isinstance(s.load, ConstantLoad)
        and abs(s.load.kg_per_yr - load_now) <= 1e-6 * max(1.0, abs(load_now))
        and not s.treatments
    )


def with_baseline(scenarios: Sequence[Scenario], load_now: float) -> list[Scenario]:
    """The plan's scenarios with a do-nothing baseline last, unless one is already there.

    The baseline holds the load now for the longest horizon, with the first
    scenario's variability, members, seed and clear-state rule, so it is
    compared like for like.
    """
    out = list(scenarios)
    if not out or any(is_do_nothing(s, load_now) for s in out) or len(out) >= MAX_SCENARIOS:
        return out
    first = out[0]
    try:
        base = Scenario(
            name=BASELINE_NAME if BASELINE_NAME not in [s.name for s in out] else copy_name(BASELINE_NAME, []),
            years=max(s.years for s in out),
            load=ConstantLoad(load_now),
            variability_cv=first.variability_cv,
            process_noise_sd_kg=first.process_noise_sd_kg,
            members=first.members,
            seed=first.seed,
            clear_threshold=first.clear_threshold,
            recovery_stay_years=first.recovery_stay_years,
            description="Added automatically: the inflow held at the load now, no treatments.",
        )
    except ValueError:
        return out
    return [*out, base]


def list_rows(scenarios: Sequence[Scenario]) -> list[dict[str, str]]:
    """Rows of the scenario list: name, the plan in words, the ensemble in words."""
    rows = []
    for s in scenarios:
        plan = f"{s.years} years; " + "; ".join([s.load.describe()] + [t.describe() for t in s.treatments])
        ens = [f"load CV {s.variability_cv:g}"]
        if s.process_noise_sd_kg > 0:
            ens.append(f"process noise sd {s.process_noise_sd_kg:,.6g} kg")
        ens.append(f"{s.members:,} members")
        ens.append("fresh seed each run" if s.seed is None else f"seed {s.seed}")
        if s.clear_threshold != "separatrix":
            rule = (
                "tipping-fold TP" if s.clear_threshold == "tipping_fold" else f"clear below {s.clear_threshold:g} µg/L"
            )
            ens.append(rule)
        rows.append({"name": s.name, "plan": plan, "ensemble": ", ".join(ens)})
    return rows


def free_name(names: Sequence[str], stem: str = "Scenario") -> str:
    """``stem N`` with the smallest N from len(names) + 1 not already used."""
    k = len(names) + 1
    while f"{stem} {k}" in names:
        k += 1
    return f"{stem} {k}"


def copy_name(name: str, names: Sequence[str], tag: str = "copy") -> str:
    base = f"{name} ({tag})"[:120]
    if base not in names:
        return base
    k = 2
    while f"{name} ({tag} {k})"[:120] in names:
        k += 1
    return f"{name} ({tag} {k})"[:120]


def _plural(n: int, word: str = "scenario") -> str:
    return f"{n} {word}{'s' if n != 1 else ''}"


def _add_or_update(
    trigger: str | None,
    values: Mapping[str, Any],
    scenarios: list[Scenario],
    editing: Mapping[str, Any] | None,
    load_now: float,
) -> dict[str, Any]:
    names = [s.name for s in scenarios]
    updating = trigger == ids.PLAN_UPDATE
    editing_name = (editing or {}).get("name")
    if updating and editing_name not in names:
        return {"status": "No scenario is being edited: select one in the list and press Edit.", "editing": None}
    extra = (editing or {}).get("extra", []) if updating else []
    description = (editing or {}).get("description", "") if updating else ""
    scenario, problems = parse_form(values, load_now, extra, description)
    others = [n for n in names if not updating or n != editing_name]
    if scenario is not None and scenario.name in others:
        problems["basics"].append(
            f"Name: {scenario.name!r} is already in the plan; choose another name, or select that scenario "
            "and press Edit"
        )
        scenario = None
    out: dict[str, Any] = {"messages": problems}
    if scenario is None:
        what = "Changes not saved" if updating else "Not added"
        return out | {"status": f"{what}: fix the entries named in red. The plan's scenarios are unchanged."}
    if updating:
        i = names.index(str(editing_name))
        scenarios[i] = scenario
        return out | {
            "plan": plan_to_store(scenarios),
            "selected": [i],
            "editing": None,
            "form": clean_form([s.name for s in scenarios]),
            "status": f"Saved the changes to {scenario.name!r}. The form is clean for a new scenario.",
        }
    if len(scenarios) >= MAX_SCENARIOS:
        return out | {"status": f"A plan holds at most {MAX_SCENARIOS} scenarios: delete one before adding another."}
    scenarios.append(scenario)
    return out | {
        "plan": plan_to_store(scenarios),
        "selected": [len(scenarios) - 1],
        "editing": None,
        "form": clean_form([s.name for s in scenarios]),
        "status": f"Added {scenario.name!r}: {_plural(len(scenarios))} in the plan. The form is clean for the next "
        "one (use Duplicate to start from a copy).",
    }


def _edit(s: Scenario) -> dict[str, Any]:
    form, extra = form_from_scenario(s)
    status = (
        f"Editing {s.name!r}: change the fields and press 'Save changes'; 'Add to the plan' adds a new "
        "scenario instead."
    )
    if extra:
        status += f" It has {_plural(len(extra), 'more treatment')} than the form shows; they are kept as they are."
    return {
        "form": form,
        "editing": {"name": s.name, "extra": extra, "description": s.description},
        "messages": {k: [] for k in SECTIONS},
        "status": status,
    }


def _duplicate(scenarios: list[Scenario], sel: int) -> dict[str, Any]:
    if len(scenarios) >= MAX_SCENARIOS:
        return {"status": f"A plan holds at most {MAX_SCENARIOS} scenarios: delete one before duplicating."}
    copy = replace(scenarios[sel], name=copy_name(scenarios[sel].name, [s.name for s in scenarios]))
    scenarios.insert(sel + 1, copy)
    return {
        "plan": plan_to_store(scenarios),
        "selected": [sel + 1],
        "status": f"Duplicated {scenarios[sel].name!r} as {copy.name!r}.",
    }


def _delete(scenarios: list[Scenario], sel: int, editing: Mapping[str, Any] | None) -> dict[str, Any]:
    gone = scenarios.pop(sel)
    out: dict[str, Any] = {
        "plan": plan_to_store(scenarios),
        "selected": [],
        "status": f"Deleted {gone.name!r}: {_plural(len(scenarios))} left.",
    }
    if (editing or {}).get("name") == gone.name:
        out["editing"] = None
    return out


def plan_action(
    trigger: str | None,
    values: Mapping[str, Any],
    selected: Sequence[int] | None,
    plan: Mapping[str, Any] | None,
    editing: Mapping[str, Any] | None,
    load_now: float,
) -> dict[str, Any]:
    """Apply one list action (add, save changes, edit, duplicate, delete) to the plan.

    Returns a dict with the keys that change: ``plan`` (new store data),
    ``editing``, ``selected``, ``form`` (entries to show), ``messages`` (by
    section) and ``status``.
    """
    scenarios = scenarios_of(plan)
    if trigger in (ids.PLAN_ADD, ids.PLAN_UPDATE):
        return _add_or_update(trigger, values, scenarios, editing, load_now)
    if trigger == ids.PLAN_NEW:
        return {
            "form": clean_form([s.name for s in scenarios]),
            "editing": None,
            "messages": {k: [] for k in SECTIONS},
            "status": "A clean form for a new scenario: nothing is copied from the others.",
        }
    if trigger not in (ids.PLAN_EDIT, ids.PLAN_DUPLICATE, ids.PLAN_DELETE):
        return {}
    sel = selected[0] if selected and 0 <= selected[0] < len(scenarios) else None
    if sel is None:
        return {"status": "Select a scenario in the list first (the box at the start of its row)."}
    if trigger == ids.PLAN_EDIT:
        return _edit(scenarios[sel])
    if trigger == ids.PLAN_DUPLICATE:
        return _duplicate(scenarios, sel)
    return _delete(scenarios, sel, editing)


def selected_indices(rows: Sequence[Mapping[str, Any]] | None, plan: Mapping[str, Any] | None) -> list[int]:
    """The list's selected rows (the grid's ``selectedRows``) as positions in the plan."""
    names = [s.name for s in scenarios_of(plan)]
    return [names.index(r["name"]) for r in rows or [] if isinstance(r, Mapping) and r.get("name") in names]


def _grid_selection(selected: Sequence[int], plan: Mapping[str, Any] | None) -> dict[str, list[str]]:
    """Positions in the plan as the grid's ``selectedRows`` (rows are identified by name)."""
    names = [s.name for s in scenarios_of(plan)]
    return {"ids": [names[i] for i in selected if 0 <= i < len(names)]}


def action_outputs(res: Mapping[str, Any], editing: Mapping[str, Any] | None) -> tuple[Any, ...]:
    """The outputs of :func:`on_plan_action` from the result of :func:`plan_action`.

    The list's rows go out with its selection, so that the grid selects a row it already holds.
    """
    form = res.get("form", {})
    messages = res.get("messages")
    new_editing = res["editing"] if "editing" in res else editing
    editing_name = (new_editing or {}).get("name")
    return (
        res.get("plan", no_update),
        res["editing"] if "editing" in res else no_update,
        no_update if "plan" not in res else list_rows(scenarios_of(res["plan"])),
        no_update if "selected" not in res else _grid_selection(res["selected"], res.get("plan")),
        *[form.get(k, no_update) for k in FORM_KEYS],
        *[no_update if messages is None else [html.Div(m) for m in messages.get(s, [])] for s in SECTIONS],
        res.get("status", no_update),
        editing_name is None,
        "Save changes to the scenario being edited" if editing_name is None else f"Save changes to {editing_name!r}",
    )
