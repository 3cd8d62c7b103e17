"""Callbacks of the plans view: parse the scenario form, run the plan, compare, save, export.

Session state lives in the browser: the plan's scenarios (``PLAN_STORE``,
each as :meth:`turnback.model.plan.Scenario.to_dict`), the scenario being edited,
and the last completed run (``PLAN_RESULTS_STORE``, in the compact form of
:func:`comparison_to_store`).  Runs and the precautionary-load search are
background callbacks.  Their Cancel is cooperative: the button leaves a flag
file named by the run's random token in a folder of the background cache,
and the run's ``cancel`` hook (:func:`turnback.model.ensemble.compare_plan`) sees it
between chunks of members, raises :class:`turnback.model.progress.RunCancelled`, and
the callback says so and keeps the previous results.  Saved plans go to the
SQLite store (:class:`turnback.model.io.store.Store`), which keeps every save as a
revision.
"""

from __future__ import annotations

import csv
import io
import math
import re
import tempfile
import time
import uuid
from collections.abc import Callable, Mapping, Sequence
from dataclasses import asdict, replace
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np
from dash import Dash, Input, Output, State, ctx, html, no_update
from turnback.model.ensemble import compare_plan
from turnback.model.equilibrium import folds
from turnback.model.io.store import Store
from turnback.model.outcomes import Comparison, ScenarioResult
from turnback.model.plan import MAX_SCENARIOS, MAX_YEARS, Plan, Precaution, Scenario, ScenarioLake
from turnback.model.precaution import PrecautionResult, scenario_precaution
from turnback.model.progress import RunCancelled
from turnback.model.schedules import (
    ConstantLoad,
    Inactivation,
    LinearCut,
    LoadSchedule,
    Removal,
    StepLoad,
    TableLoad,
    Treatment,
)

from . import ids
from .figures_plans import TABLE_COLUMNS, empty_figure, outcome_table, result_figures
from .report import build_report_html, write_csv
from .session import Lake, is_meeting, lake_from_store, lake_key, starting_state
from .view_plans import table_columns

FORM_KEYS: tuple[str, ...] = tuple(ids.PLAN_FORM)
SECTIONS: tuple[str, ...] = tuple(ids.PLAN_MESSAGES)
SetProgress = Callable[[tuple[str, ...]], None]

#: what a new form holds (also the layout's initial values)
FORM_DEFAULTS: dict[str, str] = {
    "name": "Scenario 1",
    "years": "30",
    "load_kind": "linear_cut",
    "load_from": "",
    "cut_percent": "40",
    "cut_years": "10",
    "step_to": "",
    "step_year": "5",
    "table": "",
    "removal_kg": "",
    "removal_year": "",
    "inact_percent": "",
    "inact_year": "",
    "inact_years": "",
    "cv": "0.2",
    "noise_sd": "",
    "members": "500",
    "seed": "1",
    "clear_rule": "separatrix",
    "clear_tp": "",
    "stay_years": "3",
}

_TOKEN = re.compile(r"[0-9a-f]{32}")


# --------------------------------------------------------------------------
# the lake the plan is for
# --------------------------------------------------------------------------
def current_state(lake: Lake, history: Mapping[str, Any] | None) -> tuple[float, float, int | None]:
    """Lake P now [kg], the load now [kg yr⁻¹] and the year of 'The lake now' (None: not from the history).

    The last state of the session's history when it belongs to this lake,
    else the clear equilibrium at the profile's present-day load.
    """
    params, profile = lake_from_store(lake)
    if history and history.get("lake_key") == lake_key(lake) and history.get("p"):
        return float(history["p"][-1]), float(history["load"][-1]), int(history["year"][-1])
    return starting_state(params, profile.load_kg_per_yr), profile.load_kg_per_yr, None


def plan_lake(lake: Lake, history: Mapping[str, Any] | None, name: str | None = None) -> ScenarioLake:
    """The current lake as a :class:`ScenarioLake` starting at its state now (ValueError if the map cannot run it)."""
    params, profile = lake_from_store(lake)
    p, _, _ = current_state(lake, history)
    return ScenarioLake(params, profile.volume_m3, float(profile.concentration(p)), name=name or profile.name)


def _same_lake(a: Mapping[str, Any], b: Mapping[str, Any], rtol: float = 1e-6) -> bool:
    """Two :meth:`ScenarioLake.to_dict` forms with the same numbers (names aside)."""
    keys = [k for k in a if k != "name"]
    if set(keys) != {k for k in b if k != "name"}:
        return False
    return all(abs(float(a[k]) - float(b[k])) <= rtol * max(abs(float(a[k])), abs(float(b[k])), 1e-12) for k in keys)


def lake_words(lake: ScenarioLake) -> str:
    p = lake.params
    return (
        f"loss rate {p.s:g}/yr, maximum recycling {p.r:,.6g} kg/yr, half-saturation {p.m:,.6g} kg, exponent {p.q:g}, "
        f"volume {lake.volume_m3:.4g} m³, starting TP {lake.initial_tp_ug_l:.1f} µg/L"
    )


# --------------------------------------------------------------------------
# the scenario form
# --------------------------------------------------------------------------
class _FieldError(ValueError):
    """A form entry that is not a number, or is missing."""


def _blank(text: Any) -> bool:
    return text is None or str(text).strip() == ""


def _number(text: Any, label: str, *, required: bool = True) -> float | None:
    """The entry as a float; None when blank and not required."""
    if _blank(text):
        if required:
            raise _FieldError(f"{label} is empty: enter a number")
        return None
    s = str(text).strip()
    try:
        return float(s)
    except ValueError:
        raise _FieldError(
            f"{label}: {s!r} is not a number; write digits with a point for decimals (such as 1200 or 0.25), "
            "without thousands separators"
        ) from None


def _whole(text: Any, label: str, *, required: bool = True) -> int | float | None:
    """The entry as an int when it is a whole number (else the float, for the model's own message)."""
    v = _number(text, label, required=required)
    if v is not None and math.isfinite(v) and v == math.floor(v) and abs(v) < 2**63:
        return int(v)
    return v


def _relabel(message: str, labels: Mapping[str, str]) -> str:
    """Replace the model's field name at the start of a message by the form's label."""
    for field in sorted(labels, key=len, reverse=True):
        if message.startswith(field) and message[len(field) : len(field) + 1] in (" ", ""):
            return labels[field] + message[len(field) :]
    m = re.match(r"kg_per_yr\[(\d+)\]", message)
    if m:
        return f"Load of year {int(m.group(1)) + 1}" + message[m.end() :]
    return message[:1].upper() + message[1:]


def _fmt(v: float | None) -> str:
    if v is None:
        return ""
    if float(v).is_integer() and abs(v) < 1e15:
        return str(int(v))
    return f"{v:.10g}"


_SCENARIO_LABELS = {
    "name": "Name",
    "years": "Horizon",
    "variability_cv": "Load variability (CV)",
    "process_noise_sd_kg": "Process noise sd",
    "members": "Members",
    "seed": "Seed",
    "clear_threshold": "Fixed clear TP",
    "recovery_stay_years": "Clear years in a row",
    "description": "Description",
}
_SCENARIO_SECTION = {"name": "basics", "years": "basics", "description": "basics"}


def _parse_table(text: Any) -> list[float]:
    if _blank(text):
        raise _FieldError("Loads of years 1, 2, …: enter one load a year, separated by commas")
    parts = [p.strip() for p in re.split(r"\s*[,;]\s*|\s*\n\s*", str(text).strip())]
    if parts and parts[-1] == "":
        parts = parts[:-1]  # a trailing comma
    out = []
    for i, p in enumerate(parts):
        if p == "":
            raise _FieldError(f"Load of year {i + 1} is empty (two commas in a row); enter a number there")
        v = _number(p, f"Load of year {i + 1}")
        assert v is not None
        out.append(v)
    return out


def _parse_load(values: Mapping[str, Any], load_now: float) -> LoadSchedule:
    kind = values.get("load_kind") or "constant"
    if kind == "table":
        loads = _parse_table(values.get("table"))
        try:
            return TableLoad(tuple(loads))
        except ValueError as exc:
            raise ValueError(_relabel(str(exc), {"kg_per_yr": "Loads of years 1, 2, …"})) from None
    start = _number(values.get("load_from"), "Starting load", required=False)
    start = load_now if start is None else start
    try:
        if kind == "constant":
            return ConstantLoad(start)
        if kind == "linear_cut":
            percent = _number(values.get("cut_percent"), "Cut")
            over = _whole(values.get("cut_years"), "Over years")
            return LinearCut(start, percent, over)  # type: ignore[arg-type]
        if kind == "step":
            to = _number(values.get("step_to"), "Load after the step")
            year = _whole(values.get("step_year"), "Step year")
            return StepLoad(start, to, year)  # type: ignore[arg-type]
    except _FieldError:
        raise
    except ValueError as exc:
        labels = {
            "kg_per_yr": "Starting load",
            "from_kg_per_yr": "Starting load",
            "percent": "Cut",
            "over_years": "Over years",
            "to_kg_per_yr": "Load after the step",
            "year": "Step year",
        }
        raise ValueError(_relabel(str(exc), labels)) from None
    raise ValueError(f"Load schedule: choose one of the four kinds (got {kind!r})")


def _parse_treatments(values: Mapping[str, Any]) -> tuple[list[Treatment], list[str]]:
    """The form's removal and inactivation (each optional), and the problems found."""
    out: list[Treatment] = []
    problems: list[str] = []
    kg, year = values.get("removal_kg"), values.get("removal_year")
    if not (_blank(kg) and _blank(year)):
        try:
            if _blank(kg) or _blank(year):
                raise _FieldError("P removal: give both the kilograms and the year, or leave both blank")
            out.append(Removal(_whole(year, "Removal year"), _number(kg, "P removal")))  # type: ignore[arg-type]
        except ValueError as exc:
            problems.append(_relabel(str(exc), {"year": "Removal year", "kg": "P removal"}))
    pct, start, years = values.get("inact_percent"), values.get("inact_year"), values.get("inact_years")
    if not (_blank(pct) and _blank(start) and _blank(years)):
        try:
            if _blank(pct) or _blank(start) or _blank(years):
                raise _FieldError(
                    "Recycling cut: give the percent, the first year and the number of years, or leave all three blank"
                )
            out.append(
                Inactivation(
                    _whole(start, "Inactivation start year"),  # type: ignore[arg-type]
                    _number(pct, "Recycling cut"),  # type: ignore[arg-type]
                    _whole(years, "Inactivation years"),  # type: ignore[arg-type]
                )
            )
        except ValueError as exc:
            labels = {"year": "Inactivation start year", "percent": "Recycling cut", "years": "Inactivation years"}
            problems.append(_relabel(str(exc), labels))
    return out, problems


def _treatment_label(t: Treatment, i: int, n_form: int) -> str:
    if i < n_form:
        return "Removal year" if isinstance(t, Removal) else "Inactivation start year"
    return f"Treatment {i + 1} (kept from the scenario) year"


def parse_form(
    values: Mapping[str, Any],
    load_now: float,
    extra: Sequence[Mapping[str, Any]] = (),
    description: str = "",
) -> tuple[Scenario | None, dict[str, list[str]]]:
    """The scenario the form describes, or None and the problems by form section.

    ``load_now`` [kg yr⁻¹] stands in for a blank starting load; ``extra``
    treatments (``to_dict`` form) are kept from an edited scenario beyond
    the one removal and one inactivation the form shows.  Messages are the
    model's own validation messages, with the form's labels for its field names.
    """
    problems: dict[str, list[str]] = {s: [] for s in SECTIONS}
    fields: dict[str, Any] = {}

    def check(section: str, key: str, get: Callable[[], Any]) -> None:
        """One scenario field, validated by the model on its own (a one-year scenario carries it)."""
        try:
            v = get()
            if v is None and key != "seed":
                return  # blank: the model's default
            base: dict[str, Any] = {"name": "check", "years": 1, "load": ConstantLoad(0.0)}
            Scenario(**(base | {key: v}))
            fields[key] = v
        except ValueError as exc:
            problems[section].append(_relabel(str(exc), _SCENARIO_LABELS))

    check("basics", "name", lambda: "" if values.get("name") is None else str(values.get("name")))
    check("basics", "years", lambda: _whole(values.get("years"), "Horizon"))
    try:
        load: LoadSchedule | None = _parse_load(values, load_now)
    except ValueError as exc:
        load = None
        problems["load"].append(str(exc))
    treatments, t_problems = _parse_treatments(values)
    problems["treatments"] += t_problems
    n_form = len(treatments)
    for i, d in enumerate(extra):
        try:
            carrier = {"name": "x", "years": MAX_YEARS, "load": {"kind": "constant", "kg_per_yr": 0}, "treatments": [d]}
            treatments.append(Scenario.from_dict(carrier).treatments[0])
        except ValueError as exc:
            problems["treatments"].append(f"Treatment {i + n_form + 1} (kept from the scenario): {exc}")
    check("variability", "variability_cv", lambda: _number(values.get("cv"), "Load variability (CV)", required=False))
    check(
        "variability",
        "process_noise_sd_kg",
        lambda: _number(values.get("noise_sd"), "Process noise sd", required=False),
    )
    check("variability", "members", lambda: _whole(values.get("members"), "Members"))
    check("variability", "seed", lambda: _whole(values.get("seed"), "Seed", required=False))
    rule = values.get("clear_rule") or "separatrix"
    if rule == "fixed":
        check("variability", "clear_threshold", lambda: _number(values.get("clear_tp"), "Fixed clear TP"))
    else:
        fields["clear_threshold"] = rule
    check(
        "variability",
        "recovery_stay_years",
        lambda: _whole(values.get("stay_years"), "Clear years in a row", required=False),
    )
    if any(problems.values()) or load is None:
        return None, problems
    try:
        scenario = Scenario(load=load, treatments=tuple(treatments), description=description, **fields)
    except ValueError as exc:
        msg = str(exc)
        m = re.match(r"treatments\[(\d+)\]\.year", msg)
        if m:
            i = int(m.group(1))
            problems["treatments"].append(_treatment_label(treatments[i], i, n_form) + msg[m.end() :])
        elif msg.startswith("load."):
            labels = {"load.kg_per_yr": "Loads of years 1, 2, …", "load.year": "Step year"}
            problems["load"].append(_relabel(msg, labels))
        else:
            key = msg.split(" ", 1)[0]
            problems[_SCENARIO_SECTION.get(key, "variability")].append(_relabel(msg, _SCENARIO_LABELS))
        return None, problems
    return scenario, problems


def form_from_scenario(s: Scenario) -> tuple[dict[str, str], list[dict[str, Any]]]:
    """Form entries that describe ``s``, and the treatments beyond the form's one removal and one inactivation."""
    v = dict(FORM_DEFAULTS)
    for k in ("load_from", "cut_percent", "cut_years", "step_to", "step_year", "table"):
        v[k] = ""
    v.update(
        name=s.name,
        years=str(s.years),
        load_kind=s.load.kind,
        cv=_fmt(s.variability_cv),
        noise_sd="" if s.process_noise_sd_kg == 0 else _fmt(s.process_noise_sd_kg),
        members=str(s.members),
        seed="" if s.seed is None else str(s.seed),
        stay_years=str(s.recovery_stay_years),
    )
    load = s.load
    if isinstance(load, ConstantLoad):
        v["load_from"] = _fmt(load.kg_per_yr)
    elif isinstance(load, LinearCut):
        v.update(load_from=_fmt(load.from_kg_per_yr), cut_percent=_fmt(load.percent), cut_years=str(load.over_years))
    elif isinstance(load, StepLoad):
        v.update(load_from=_fmt(load.from_kg_per_yr), step_to=_fmt(load.to_kg_per_yr), step_year=str(load.year))
    else:
        v["table"] = ", ".join(_fmt(x) for x in load.kg_per_yr)
    if isinstance(s.clear_threshold, str):
        v["clear_rule"] = s.clear_threshold
    else:
        v.update(clear_rule="fixed", clear_tp=_fmt(s.clear_threshold))
    extra: list[dict[str, Any]] = []
    removal = inact = None
    for t in s.treatments:
        if isinstance(t, Removal) and removal is None:
            removal = t
        elif isinstance(t, Inactivation) and inact is None:
            inact = t
        else:
            extra.append(t.to_dict())
    for k in ("removal_kg", "removal_year", "inact_percent", "inact_year", "inact_years"):
        v[k] = ""
    if removal is not None:
        v.update(removal_kg=_fmt(removal.kg), removal_year=str(removal.year))
    if inact is not None:
        v.update(inact_percent=_fmt(inact.percent), inact_year=str(inact.year), inact_years=str(inact.years))
    return v, extra


# --------------------------------------------------------------------------
# the plan's scenarios
# --------------------------------------------------------------------------
def scenarios_of(plan: Mapping[str, Any] | None) -> list[Scenario]:
    """The stored plan's scenarios (entries that no longer read are left out)."""
    out = []
    for d in (plan or {}).get("scenarios", []) or []:
        try:
            out.append(Scenario.from_dict(d))
        except ValueError:
            continue
    return out


def _plan_data(scenarios: Sequence[Scenario]) -> dict[str, Any]:
    return {"scenarios": [s.to_dict() for s in scenarios]}


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


def _copy_name(name: str, names: Sequence[str], tag: str = "copy") -> str:
    base = f"{name} ({tag})"[:120]
    if base not in names:
        return base
    k = 2
    while f"{name} ({tag} {k})"[:120] in names:
        k += 1
    return f"{name} ({tag} {k})"[:120]


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
    section) and ``status``.  The scenarios already built are never lost: a
    bad form only produces messages.
    """
    scenarios = scenarios_of(plan)
    names = [s.name for s in scenarios]
    sel = selected[0] if selected and 0 <= selected[0] < len(scenarios) else None
    out: dict[str, Any] = {}
    if trigger in (ids.PLAN_ADD, ids.PLAN_UPDATE):
        editing_name = (editing or {}).get("name")
        if trigger == ids.PLAN_UPDATE and editing_name not in names:
            return {"status": "No scenario is being edited: select one in the list and press Edit.", "editing": None}
        extra = (editing or {}).get("extra", []) if trigger == ids.PLAN_UPDATE else []
        description = (editing or {}).get("description", "") if trigger == ids.PLAN_UPDATE else ""
        scenario, problems = parse_form(values, load_now, extra, description)
        others = [n for n in names if trigger == ids.PLAN_ADD or n != editing_name]
        if scenario is not None and scenario.name in others:
            problems["basics"].append(
                f"Name: {scenario.name!r} is already in the plan; choose another name, or select that scenario "
                "and press Edit"
            )
            scenario = None
        out["messages"] = problems
        if scenario is None:
            out["status"] = "Not added: fix the entries named in red. The plan's scenarios are unchanged."
            if trigger == ids.PLAN_UPDATE:
                out["status"] = "Changes not saved: fix the entries named in red. The plan's scenarios are unchanged."
            return out
        if trigger == ids.PLAN_ADD:
            if len(scenarios) >= MAX_SCENARIOS:
                out["status"] = f"A plan holds at most {MAX_SCENARIOS} scenarios: delete one before adding another."
                return out
            scenarios.append(scenario)
            names.append(scenario.name)
            out.update(
                plan=_plan_data(scenarios),
                selected=[len(scenarios) - 1],
                form={"name": free_name(names)},
                status=f"Added {scenario.name!r}: {len(scenarios)} scenario{'s' if len(scenarios) != 1 else ''} "
                "in the plan.",
            )
            return out
        i = names.index(str(editing_name))
        scenarios[i] = scenario
        out.update(
            plan=_plan_data(scenarios),
            selected=[i],
            editing={"name": scenario.name, "extra": extra, "description": description},
            status=f"Saved the changes to {scenario.name!r}.",
        )
        return out
    if trigger in (ids.PLAN_EDIT, ids.PLAN_DUPLICATE, ids.PLAN_DELETE) and sel is None:
        return {"status": "Select a scenario in the list first (the round button at the start of its row)."}
    assert sel is not None or trigger not in (ids.PLAN_EDIT, ids.PLAN_DUPLICATE, ids.PLAN_DELETE)
    if trigger == ids.PLAN_EDIT and sel is not None:
        s = scenarios[sel]
        form, extra = form_from_scenario(s)
        status = (
            f"Editing {s.name!r}: change the fields and press 'Save changes'; 'Add to the plan' adds a new "
            "scenario instead."
        )
        if extra:
            status += (
                f" It has {len(extra)} more treatment{'s' if len(extra) != 1 else ''} than the form shows; "
                "they are kept as they are."
            )
        return {
            "form": form,
            "editing": {"name": s.name, "extra": extra, "description": s.description},
            "messages": {k: [] for k in SECTIONS},
            "status": status,
        }
    if trigger == ids.PLAN_DUPLICATE and sel is not None:
        if len(scenarios) >= MAX_SCENARIOS:
            return {"status": f"A plan holds at most {MAX_SCENARIOS} scenarios: delete one before duplicating."}
        copy = replace(scenarios[sel], name=_copy_name(scenarios[sel].name, names))
        scenarios.insert(sel + 1, copy)
        return {
            "plan": _plan_data(scenarios),
            "selected": [sel + 1],
            "status": f"Duplicated {scenarios[sel].name!r} as {copy.name!r}.",
        }
    if trigger == ids.PLAN_DELETE and sel is not None:
        gone = scenarios.pop(sel)
        out = {
            "plan": _plan_data(scenarios),
            "selected": [],
            "status": f"Deleted {gone.name!r}: {len(scenarios)} scenario{'s' if len(scenarios) != 1 else ''} left.",
        }
        if (editing or {}).get("name") == gone.name:
            out["editing"] = None
        return out
    return {}


# --------------------------------------------------------------------------
# results in the browser: a compact, JSON-ready form of a comparison
# --------------------------------------------------------------------------
def _r6(a: Any) -> list[float]:
    """Numbers to six significant digits (the results store stays small)."""
    return [float(f"{x:.6g}") for x in np.asarray(a, dtype=float).ravel()]


_SCALARS = (
    "recovery_years_median",
    "p_recovered",
    "p_flip",
    "p_relapse",
    "p_clear_final",
    "p_clear_final_se",
    "final_tp_median_ug_l",
    "final_tp_p05_ug_l",
    "final_tp_p95_ug_l",
    "end_state",
    "load_cut_kg",
    "in_lake_removal_kg",
    "message",
)


def result_to_store(r: ScenarioResult) -> dict[str, Any]:
    """One scenario's outcomes and yearly series; recovery years as counts per year (members are exchangeable)."""
    rec = r.recovery_year
    finite = rec[np.isfinite(rec)].astype(int)
    counts = np.bincount(finite, minlength=r.years.size)
    return {
        "scenario": r.scenario.to_dict(),
        "load": _r6(r.load_kg_per_yr),
        "threshold": _r6(r.threshold_tp_ug_l),
        "median": _r6(r.tp_median_ug_l),
        "p05": _r6(r.tp_p05_ug_l),
        "p95": _r6(r.tp_p95_ug_l),
        "p_clear": _r6(r.p_clear),
        "recovered_in_year": [int(c) for c in counts],
        "never_recovered": int(rec.size - finite.size),
        **{k: getattr(r, k) for k in _SCALARS},
    }


def result_from_store(d: Mapping[str, Any], lake: ScenarioLake) -> ScenarioResult:
    scenario = Scenario.from_dict(d["scenario"])
    counts = np.asarray(d["recovered_in_year"], dtype=int)
    years = np.arange(scenario.years + 1)
    rec = np.concatenate([np.repeat(years[: counts.size].astype(float), counts), np.full(d["never_recovered"], np.nan)])
    return ScenarioResult(
        name=scenario.name,
        scenario=scenario,
        lake=lake,
        years=years,
        load_kg_per_yr=np.asarray(d["load"], dtype=float),
        threshold_tp_ug_l=np.asarray(d["threshold"], dtype=float),
        tp_median_ug_l=np.asarray(d["median"], dtype=float),
        tp_p05_ug_l=np.asarray(d["p05"], dtype=float),
        tp_p95_ug_l=np.asarray(d["p95"], dtype=float),
        p_clear=np.asarray(d["p_clear"], dtype=float),
        recovery_year=rec,
        sample_tp_ug_l=np.empty((0, scenario.years + 1)),
        **{k: d[k] for k in _SCALARS},
    )


def comparison_to_store(comp: Comparison, when: datetime | None = None) -> dict[str, Any]:
    return {
        "lake": comp.plan.lake.to_dict(),
        "regime": comp.regime,
        "tipping": comp.tipping_load_kg_per_yr,
        "recovery": comp.recovery_load_kg_per_yr,
        "run_at": (when or datetime.now(UTC)).strftime("%Y-%m-%d %H:%M UTC"),
        "results": [result_to_store(r) for r in comp.results],
    }


def comparison_from_store(data: Mapping[str, Any], precaution: Mapping[str, Any] | None = None) -> Comparison:
    """The stored run as a :class:`Comparison`; a precautionary load found for one of its scenarios is attached."""
    lake = ScenarioLake.from_dict(data["lake"])
    results = [result_from_store(d, lake) for d in data["results"]]
    if precaution and _same_lake(precaution.get("lake", {}), data["lake"]):
        for i, r in enumerate(results):
            if r.name == precaution.get("scenario"):
                pr = PrecautionResult(**precaution["result"])
                s = replace(r.scenario, precaution=Precaution(precaution["within_years"], precaution["max_percent"]))
                results[i] = replace(r, scenario=s, precaution=pr)
    return Comparison(
        plan=Plan(lake, tuple(r.scenario for r in results)),
        results=tuple(results),
        regime=data["regime"],
        tipping_load_kg_per_yr=data["tipping"],
        recovery_load_kg_per_yr=data["recovery"],
        message=f"{len(results)} scenarios compared",
    )


# --------------------------------------------------------------------------
# cooperative cancel
# --------------------------------------------------------------------------
def cancel_folder() -> Path:
    """Folder of cancel flags, inside the background-callback cache."""
    from .server import cache_dir  # the app factory imports this module

    return cache_dir() / "plan-cancel"


def new_token(folder: Path) -> str:
    """A fresh run token; flags older than a day are cleared on the way."""
    try:
        now = time.time()
        for f in folder.glob("*"):
            if now - f.stat().st_mtime > 86400:
                f.unlink(missing_ok=True)
    except OSError:
        pass
    return uuid.uuid4().hex


def _flag(folder: Path, token: Any) -> Path | None:
    return folder / token if isinstance(token, str) and _TOKEN.fullmatch(token) else None


def request_cancel(folder: Path, token: Any) -> bool:
    """Leave the cancel flag of run ``token``; False for a token that is not one of ours."""
    flag = _flag(folder, token)
    if flag is None:
        return False
    folder.mkdir(parents=True, exist_ok=True)
    flag.touch()
    return True


def cancel_hook(folder: Path, token: Any) -> Callable[[], bool]:
    flag = _flag(folder, token)
    return (lambda: False) if flag is None else flag.exists


def _clear_flag(folder: Path, token: Any) -> None:
    flag = _flag(folder, token)
    if flag is not None:
        flag.unlink(missing_ok=True)


def _progress_reporter(set_progress: SetProgress, with_bar: bool = True) -> Callable[[float, str], None]:
    """The model's ``progress(fraction, message)`` as Dash progress: (bar value, text), or (text,)."""
    last = [-1.0]

    def progress(fraction: float, message: str) -> None:
        pct = math.floor(100 * fraction)
        if pct != last[0]:
            last[0] = pct
            text = f"{pct}% — {message}"
            set_progress((str(pct), text) if with_bar else (text,))

    return progress


def _scenario_words(msg: str, scenarios: Sequence[Scenario]) -> str:
    m = re.match(r"scenarios\[(\d+)\]\.?", msg)
    if m and int(m.group(1)) < len(scenarios):
        return f"Scenario {scenarios[int(m.group(1))].name!r}: " + msg[m.end() :]
    return msg


# --------------------------------------------------------------------------
# callbacks
# --------------------------------------------------------------------------
def on_load_kind(kind: str | None) -> list[dict[str, str]]:
    """Show the load fields of the chosen kind only."""
    shown = {
        "from": kind != "table",
        "linear_cut": kind == "linear_cut",
        "step": kind == "step",
        "table": kind == "table",
    }
    return [{} if shown[g] else {"display": "none"} for g in ids.PLAN_LOAD_GROUPS]


def on_lake_note(tab: str | None, lake: Lake, history: dict[str, Any] | None) -> tuple[Any, Any, Any]:
    """Which lake the plan is for and where it starts; the load now as the form's default starting load.

    Recomputed when the view is opened (the history only changes while another view is on show).
    """
    if tab != "plans":
        return no_update, no_update, no_update
    params, profile = lake_from_store(lake)
    p, load, year = current_state(lake, history)
    tp = float(profile.concentration(p))
    where = "the lake's state now in 'The lake now'" + (f" (year {year})" if year is not None else "")
    if year is None:
        where = "its clear equilibrium at today's load"
    fs = folds(params)
    fold_text = f" Tipping load {fs[0].load:,.0f} kg/yr, recovery load {max(fs[1].load, 0):,.0f} kg/yr." if fs else ""
    note = [
        html.B(profile.name),
        f": scenarios start at TP {tp:.1f} µg/L ({p:,.0f} kg P), {where}, with the load now {load:,.0f} kg/yr."
        + fold_text,
    ]
    return note, f"{load:,.0f} (the load now)", profile.name


def on_plan_action(*args: Any) -> tuple[Any, ...]:
    """Add, save changes, edit, duplicate or delete; the Dash side of :func:`plan_action`."""
    n = len(FORM_KEYS)
    values = dict(zip(FORM_KEYS, args[5 : 5 + n], strict=True))
    selected, plan, editing, lake, history = args[5 + n :]
    _, load_now, _ = current_state(lake, history)
    res = plan_action(ctx.triggered_id, values, selected, plan, editing, load_now)
    return action_outputs(res, editing)


def action_outputs(res: Mapping[str, Any], editing: Mapping[str, Any] | None) -> tuple[Any, ...]:
    """The outputs of :func:`on_plan_action` from the result of :func:`plan_action`."""
    form = res.get("form", {})
    messages = res.get("messages")
    new_editing = res["editing"] if "editing" in res else editing
    editing_name = (new_editing or {}).get("name")
    return (
        res.get("plan", no_update),
        res["editing"] if "editing" in res else no_update,
        res.get("selected", no_update),
        *[form.get(k, no_update) for k in FORM_KEYS],
        *[no_update if messages is None else [html.Div(m) for m in messages.get(s, [])] for s in SECTIONS],
        res.get("status", no_update),
        editing_name is None,
        "Save changes to the scenario being edited" if editing_name is None else f"Save changes to {editing_name!r}",
    )


def on_plan_store(plan: dict[str, Any] | None, chosen: str | None) -> tuple[Any, Any, Any]:
    """Scenario list rows and the precaution form's choice of scenario."""
    scenarios = scenarios_of(plan)
    rows = list_rows(scenarios)
    names = [s.name for s in scenarios]
    options = [{"label": n, "value": n} for n in names]
    value = chosen if chosen in names else (names[0] if names else None)
    return rows, options, value


def on_run_request(_clicks: int, plan: dict[str, Any] | None, *, folder: Path) -> tuple[Any, str]:
    if not scenarios_of(plan):
        return no_update, "Add a scenario to the plan first."
    return {"token": new_token(folder)}, ""


def run_plan(
    set_progress: SetProgress,
    request: dict[str, Any] | None,
    plan: dict[str, Any] | None,
    lake: Lake,
    history: dict[str, Any] | None,
    *,
    folder: Path,
) -> tuple[Any, str]:
    """Run every scenario of the plan on the current lake; runs as a background callback."""
    token = (request or {}).get("token")
    scenarios = scenarios_of(plan)
    if not scenarios:
        return no_update, "Add a scenario to the plan first."
    try:
        the_plan = Plan(plan_lake(lake, history), tuple(scenarios))
    except ValueError as exc:
        return no_update, f"Not run: {_scenario_words(str(exc), scenarios)}. The previous results are kept."
    set_progress(("0", "starting"))
    try:
        comp = compare_plan(
            the_plan,
            progress=_progress_reporter(set_progress),
            cancel=cancel_hook(folder, token),
            sample_paths=0,
        )
    except RunCancelled:
        set_progress(("0", "cancelled"))
        return no_update, "Cancelled. The results shown (if any) are from the previous run."
    except ValueError as exc:
        set_progress(("0", "not run"))
        return no_update, f"Not run: {_scenario_words(str(exc), scenarios)}. The previous results are kept."
    finally:
        _clear_flag(folder, token)
    set_progress(("100", "done"))
    n = len(comp.results)
    return comparison_to_store(comp), f"Ran {n} scenario{'s' if n != 1 else ''}."


def on_cancel(
    _clicks: int, run: dict[str, Any] | None, prec: dict[str, Any] | None, *, folder: Path
) -> tuple[str, str]:
    """Ask the running jobs to stop (they stop between chunks of members)."""
    asked = [request_cancel(folder, (r or {}).get("token")) for r in (run, prec)]
    return ("Stopping the run…" if asked[0] else no_update), ("Stopping…" if asked[1] else no_update)  # type: ignore[return-value]


def results_note(data: Mapping[str, Any], current: Mapping[str, Any] | None) -> list[Any]:
    lake = ScenarioLake.from_dict(data["lake"])
    n = len(data["results"])
    text = (
        f"Run of {data['run_at']}: {n} scenario{'s' if n != 1 else ''} for {lake.name}, starting at TP "
        f"{lake.initial_tp_ug_l:.1f} µg/L; the lake is {data['regime']}"
    )
    if data.get("tipping") is not None:
        text += f" (tipping load {data['tipping']:,.0f} kg/yr, recovery load {max(data['recovery'], 0):,.0f} kg/yr)"
    out: list[Any] = [text + "."]
    if current is not None and not _same_lake(current, data["lake"]):
        out.append(
            html.Div(
                "The lake or its state has changed since this run: run the plan again for the lake as it is now.",
                className="readout-warning",
            )
        )
    return out


def on_results(data: dict[str, Any] | None, meeting_value: list[str] | None) -> tuple[Any, ...]:
    """Outcome table (fewer columns in the meeting view) and figures of the last run."""
    meeting = is_meeting(meeting_value)
    columns = table_columns(meeting)
    if not data or not data.get("results"):
        blank = empty_figure("Run the plan to see its scenarios here.", meeting=meeting)
        return columns, [], blank, blank, blank, blank
    try:
        comp = comparison_from_store(data)
    except (ValueError, KeyError, TypeError):
        blank = empty_figure("The stored results could not be read; run the plan again.", meeting=meeting)
        return columns, [], blank, blank, blank, blank
    figs = result_figures(comp.results, meeting=meeting)
    return (columns, outcome_table(comp.results), *figs.values())


def on_results_note(data: dict[str, Any] | None, tab: str | None, lake: Lake, history: dict[str, Any] | None) -> Any:
    """What the last run was, and whether the lake has changed since."""
    if tab != "plans":
        return no_update  # worked out when the view is opened
    if not data or not data.get("results"):
        return "No run yet: add scenarios and press 'Run the plan'."
    try:
        current: dict[str, Any] | None = plan_lake(lake, history).to_dict()
    except ValueError:
        current = None
    try:
        return results_note(data, current)
    except (ValueError, KeyError, TypeError):
        return "The stored results could not be read; run the plan again."


def on_precaution_request(
    _clicks: int,
    scenario_name: str | None,
    years_text: Any,
    percent_text: Any,
    plan: dict[str, Any] | None,
    lake: Lake,
    history: dict[str, Any] | None,
    *,
    folder: Path,
) -> tuple[Any, str]:
    """Check the precaution form; a good one becomes a request for the background search."""
    scenarios = {s.name: s for s in scenarios_of(plan)}
    if not scenarios:
        return no_update, "Add a scenario to the plan first: its variability is what the search uses."
    if scenario_name not in scenarios:
        return no_update, "Choose the scenario whose variability to use."
    try:
        within = _whole(years_text, "Within years")
        percent = _number(percent_text, "At most (% chance of flipping)")
        pr = Precaution(within, percent)  # type: ignore[arg-type]
    except ValueError as exc:
        labels = {"within_years": "Within years", "max_percent": "At most (% chance of flipping)"}
        return no_update, _relabel(str(exc), labels)
    try:
        slake = plan_lake(lake, history)
        Plan(slake, (scenarios[scenario_name],))
    except ValueError as exc:
        return no_update, f"Cannot search: {_scenario_words(str(exc), [scenarios[scenario_name]])}"
    return (
        {
            "token": new_token(folder),
            "scenario": scenarios[scenario_name].to_dict(),
            "within_years": pr.within_years,
            "max_percent": pr.max_percent,
            "lake": slake.to_dict(),
        },
        "",
    )


def run_precaution(set_progress: SetProgress, request: dict[str, Any] | None, *, folder: Path) -> tuple[Any, str]:
    """The precautionary load under a scenario's variability; runs as a background callback."""
    if not request:
        return no_update, ""
    token = request.get("token")
    lake = ScenarioLake.from_dict(request["lake"])
    scenario = replace(
        Scenario.from_dict(request["scenario"]),
        precaution=Precaution(request["within_years"], request["max_percent"]),
    )
    reporter = _progress_reporter(set_progress, with_bar=False)
    try:
        pr = scenario_precaution(
            lake, scenario, progress=lambda f, m: reporter(f, m), cancel=cancel_hook(folder, token)
        )
    except RunCancelled:
        set_progress(("cancelled",))
        return no_update, "Cancelled. The answer shown (if any) is from before."
    except ValueError as exc:
        set_progress(("not run",))
        return no_update, f"Cannot search: {exc}"
    finally:
        _clear_flag(folder, token)
    set_progress(("done",))
    return (
        {
            "scenario": scenario.name,
            "within_years": request["within_years"],
            "max_percent": request["max_percent"],
            "lake": request["lake"],
            "variability": list_rows([scenario])[0]["ensemble"],
            "result": asdict(pr),
        },
        "",
    )


def precaution_words(data: Mapping[str, Any], load_now: float | None = None) -> list[Any]:
    """The precautionary load in words, with its Monte-Carlo error."""
    r = data["result"]
    n, x = data["within_years"], data["max_percent"]
    head = f"Under {data['scenario']!r} ({data['variability']}), at most {x:g}% chance of flipping within {n} years"
    if r["status"] == "none":
        return [html.Div(f"{head}: no sustained load meets this limit — {r['message']}.", className="readout-warning")]
    load = r["load_kg_per_yr"]
    if r["status"] == "no_variability":
        body = (
            f"{head}: without variability the clear state holds up to {load:,.0f} kg/yr (the top of the clear range), "
            "with no Monte-Carlo error."
        )
    else:
        se = r["standard_error_kg_per_yr"]
        err = (
            f" ± {se:,.0f} kg/yr (Monte-Carlo error, one standard error)"
            if se is not None
            else (" (Monte-Carlo error not available: the chance of flipping barely changes with the load there)")
        )
        body = f"{head}: a sustained load of at most {load:,.0f}{err}"
        if r["probability"] is not None:
            body += f"; chance of flipping there {100 * r['probability']:.1f}% of {r['members']:,} members"
        body += "."
    out: list[Any] = [html.Div(body, className="readout-row", id="plan-prec-answer")]
    if load_now is not None and load is not None:
        if load_now > load:
            out.append(
                html.Div(
                    f"The load now, {load_now:,.0f} kg/yr, is above it: a cut of "
                    f"{100 * (1 - load / load_now):.0f}% would meet the limit.",
                    className="readout-row",
                )
            )
        else:
            out.append(html.Div(f"The load now, {load_now:,.0f} kg/yr, is below it.", className="readout-row"))
    return out


def on_precaution_store(data: dict[str, Any] | None, lake: Lake, history: dict[str, Any] | None) -> Any:
    if not data:
        return ""
    _, load_now, _ = current_state(lake, history)
    try:
        return precaution_words(data, load_now)
    except (KeyError, TypeError):
        return "The stored answer could not be read; search again."


# saving ---------------------------------------------------------------------
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
            if "locked" not in str(exc) or i == attempts - 1:
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
    name_text: Any, plan: dict[str, Any] | None, lake: Lake, history: dict[str, Any] | None, data_dir: Path | None
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
        return f"Not saved: {_scenario_words(str(exc), scenarios)}. Your scenarios are still here."
    n = len(scenarios)
    msg = f"Saved {n} scenario{'s' if n != 1 else ''} as plan {name!r} (save number {items[0].revision} of this plan)."
    others = [h for h in held if h not in {s.name for s in scenarios}]
    if others:
        msg += (
            f" The saved plan also holds {', '.join(repr(o) for o in others)} from earlier saves (by you or someone "
            "else); every scenario is kept at its latest revision."
        )
    return msg


def on_save(
    _clicks: int,
    name_text: Any,
    plan: dict[str, Any] | None,
    lake: Lake,
    history: dict[str, Any] | None,
    *,
    data_dir: Path | None,
) -> tuple[Any, Any]:
    msg = save_plan(name_text, plan, lake, history, data_dir)
    try:
        return msg, saved_options(data_dir)
    except ValueError as exc:
        return f"{msg} The list of saved plans could not be read: {exc}", no_update


def on_saved_refresh(tab: str | None, *, data_dir: Path | None) -> tuple[Any, Any]:
    """Read the list of saved plans when the view is opened."""
    if tab != "plans":
        return no_update, no_update
    try:
        return saved_options(data_dir), ""
    except ValueError as exc:
        return [], f"The saved plans could not be read: {exc}"


def on_saved_select(name: str | None, lake: Lake, history: dict[str, Any] | None, *, data_dir: Path | None) -> Any:
    if not name:
        return ""
    try:
        with open_store(data_dir) as st:
            saved = st.load_plan(name)
    except ValueError as exc:
        return f"This plan cannot be read: {exc}"
    out = [f"Scenarios: {', '.join(s.name for s in saved.scenarios)}. Saved for a lake with {lake_words(saved.lake)}."]
    try:
        now = plan_lake(lake, history)
        if not _same_lake(now.to_dict(), saved.lake.to_dict()):
            out.append(
                " The current lake differs (" + lake_words(now) + "): the scenarios would run on the current lake."
            )
    except ValueError:
        pass
    return "".join(out)


def merge_saved(plan: Mapping[str, Any] | None, saved: Sequence[Scenario]) -> tuple[dict[str, Any], str]:
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
            s = replace(s, name=_copy_name(s.name, list(by_name), "saved"))
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
    return _plan_data(scenarios), "; ".join(parts) + "."


def on_load_saved(
    _clicks: int, name: str | None, plan: dict[str, Any] | None, *, data_dir: Path | None
) -> tuple[Any, str]:
    if not name:
        return no_update, "Choose a saved plan first."
    try:
        with open_store(data_dir) as st:
            saved = st.load_plan(name)
    except ValueError as exc:
        return no_update, f"Not loaded: {exc}. The plan's scenarios are unchanged."
    data, msg = merge_saved(plan, saved.scenarios)
    return data, f"From {name!r}: {msg}"


# exports ----------------------------------------------------------------------
def _slug(name: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "-", name).strip("-").lower()
    return s[:60] or "plan"


def trajectories_csv(comp: Comparison) -> str:
    """The yearly series of every scenario, in the CSV form of ``turnback report``."""
    with tempfile.TemporaryDirectory() as d:
        paths = write_csv(comp, d)
        return paths[0].read_text(encoding="utf-8")


def table_csv(comp: Comparison) -> str:
    """The outcome table as CSV (raw numbers, empty where undefined)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    keys = list(TABLE_COLUMNS)
    w.writerow(keys)
    for row in outcome_table(comp.results):
        w.writerow(["" if row[k] is None else row[k] for k in keys])
    return buf.getvalue()


def export(
    trigger: str | None, data: Mapping[str, Any] | None, precaution: Mapping[str, Any] | None
) -> tuple[Any, str]:
    """The download for one export button: the HTML report, or a CSV."""
    if not data or not data.get("results"):
        return no_update, "Run the plan first: the exports are made from the last completed run."
    try:
        comp = comparison_from_store(data, precaution)
    except (ValueError, KeyError, TypeError):
        return no_update, "The stored results could not be read; run the plan again."
    stem = f"turnback-{_slug(comp.plan.lake.name)}"
    if trigger == ids.PLAN_EXPORT_REPORT:
        text = build_report_html(comp, source="the dashboard")
        return {"content": text, "filename": f"{stem}-report.html", "type": "text/html"}, ""
    if trigger == ids.PLAN_EXPORT_TRAJECTORIES:
        return {"content": trajectories_csv(comp), "filename": f"{stem}-trajectories.csv", "type": "text/csv"}, ""
    if trigger == ids.PLAN_EXPORT_TABLE:
        return {"content": table_csv(comp), "filename": f"{stem}-outcomes.csv", "type": "text/csv"}, ""
    return no_update, ""


def on_export(
    _r: int, _t: int, _o: int, data: dict[str, Any] | None, precaution: dict[str, Any] | None
) -> tuple[Any, str]:
    return export(ctx.triggered_id, data, precaution)


# --------------------------------------------------------------------------
def register(app: Dash, data_dir: Path | None) -> None:
    """Register the plans view's callbacks; saved scenarios live in ``data_dir`` (see turnback.model.io.store)."""
    folder = cancel_folder()
    form_states = [State(ids.PLAN_FORM[k], "value") for k in FORM_KEYS]

    app.callback(
        [Output(g, "style") for g in ids.PLAN_LOAD_GROUPS.values()],
        Input(ids.PLAN_FORM["load_kind"], "value"),
    )(on_load_kind)
    app.callback(
        Output(ids.PLAN_LAKE_NOTE, "children"),
        Output(ids.PLAN_FORM["load_from"], "placeholder"),
        Output(ids.PLAN_SAVE_NAME, "placeholder"),
        Input(ids.VIEW_TABS, "value"),
        Input(ids.LAKE_STORE, "data"),
        State(ids.HISTORY_STORE, "data"),
    )(on_lake_note)
    app.callback(
        Output(ids.PLAN_STORE, "data"),
        Output(ids.PLAN_EDITING, "data"),
        Output(ids.PLAN_LIST, "selected_rows"),
        *[Output(ids.PLAN_FORM[k], "value") for k in FORM_KEYS],
        *[Output(ids.PLAN_MESSAGES[s], "children") for s in SECTIONS],
        Output(ids.PLAN_STATUS, "children"),
        Output(ids.PLAN_UPDATE, "disabled"),
        Output(ids.PLAN_UPDATE, "children"),
        Input(ids.PLAN_ADD, "n_clicks"),
        Input(ids.PLAN_UPDATE, "n_clicks"),
        Input(ids.PLAN_EDIT, "n_clicks"),
        Input(ids.PLAN_DUPLICATE, "n_clicks"),
        Input(ids.PLAN_DELETE, "n_clicks"),
        *form_states,
        State(ids.PLAN_LIST, "selected_rows"),
        State(ids.PLAN_STORE, "data"),
        State(ids.PLAN_EDITING, "data"),
        State(ids.LAKE_STORE, "data"),
        State(ids.HISTORY_STORE, "data"),
        prevent_initial_call=True,
    )(on_plan_action)
    app.callback(
        Output(ids.PLAN_LIST, "data"),
        Output(ids.PLAN_PREC_SCENARIO, "options"),
        Output(ids.PLAN_PREC_SCENARIO, "value"),
        Input(ids.PLAN_STORE, "data"),
        State(ids.PLAN_PREC_SCENARIO, "value"),
    )(on_plan_store)

    # run
    app.callback(
        Output(ids.PLAN_RUN_REQUEST, "data"),
        Output(ids.PLAN_RUN_MESSAGE, "children"),
        Input(ids.PLAN_RUN, "n_clicks"),
        State(ids.PLAN_STORE, "data"),
        prevent_initial_call=True,
    )(lambda clicks, plan: on_run_request(clicks, plan, folder=folder))

    def _run(set_progress: SetProgress, request: Any, plan: Any, lake: Any, history: Any) -> tuple[Any, str]:
        return run_plan(set_progress, request, plan, lake, history, folder=folder)

    app.callback(
        Output(ids.PLAN_RESULTS_STORE, "data"),
        Output(ids.PLAN_RUN_MESSAGE, "children", allow_duplicate=True),
        Input(ids.PLAN_RUN_REQUEST, "data"),
        State(ids.PLAN_STORE, "data"),
        State(ids.LAKE_STORE, "data"),
        State(ids.HISTORY_STORE, "data"),
        background=True,
        progress=[Output(ids.PLAN_PROGRESS, "value"), Output(ids.PLAN_PROGRESS_TEXT, "children")],
        running=[
            (Output(ids.PLAN_RUN, "disabled"), True, False),
            (Output(ids.PLAN_CANCEL, "disabled"), False, True),
        ],
        interval=300,
        prevent_initial_call=True,
    )(_run)
    app.callback(
        Output(ids.PLAN_RUN_MESSAGE, "children", allow_duplicate=True),
        Output(ids.PLAN_PREC_MESSAGE, "children", allow_duplicate=True),
        Input(ids.PLAN_CANCEL, "n_clicks"),
        State(ids.PLAN_RUN_REQUEST, "data"),
        State(ids.PLAN_PRECAUTION_REQUEST, "data"),
        prevent_initial_call=True,
    )(lambda clicks, run, prec: on_cancel(clicks, run, prec, folder=folder))
    app.callback(
        Output(ids.PLAN_TABLE, "columns"),
        Output(ids.PLAN_TABLE, "data"),
        Output(ids.PLAN_TRAJECTORY_GRAPH, "figure"),
        Output(ids.PLAN_CLEAR_GRAPH, "figure"),
        Output(ids.PLAN_RECOVERY_GRAPH, "figure"),
        Output(ids.PLAN_LOAD_GRAPH, "figure"),
        Input(ids.PLAN_RESULTS_STORE, "data"),
        Input(ids.MEETING_TOGGLE, "value"),
    )(on_results)
    app.callback(
        Output(ids.PLAN_RESULTS_NOTE, "children"),
        Input(ids.PLAN_RESULTS_STORE, "data"),
        Input(ids.VIEW_TABS, "value"),
        State(ids.LAKE_STORE, "data"),
        State(ids.HISTORY_STORE, "data"),
    )(on_results_note)

    # precaution
    app.callback(
        Output(ids.PLAN_PRECAUTION_REQUEST, "data"),
        Output(ids.PLAN_PREC_MESSAGE, "children"),
        Input(ids.PLAN_PREC_BUTTON, "n_clicks"),
        State(ids.PLAN_PREC_SCENARIO, "value"),
        State(ids.PLAN_PREC_YEARS, "value"),
        State(ids.PLAN_PREC_PERCENT, "value"),
        State(ids.PLAN_STORE, "data"),
        State(ids.LAKE_STORE, "data"),
        State(ids.HISTORY_STORE, "data"),
        prevent_initial_call=True,
    )(lambda *a: on_precaution_request(*a, folder=folder))

    def _precaution(set_progress: SetProgress, request: Any) -> tuple[Any, str]:
        return run_precaution(set_progress, request, folder=folder)

    app.callback(
        Output(ids.PLAN_PRECAUTION_STORE, "data"),
        Output(ids.PLAN_PREC_MESSAGE, "children", allow_duplicate=True),
        Input(ids.PLAN_PRECAUTION_REQUEST, "data"),
        background=True,
        progress=[Output(ids.PLAN_PREC_PROGRESS_TEXT, "children")],
        running=[(Output(ids.PLAN_PREC_BUTTON, "disabled"), True, False)],
        interval=300,
        prevent_initial_call=True,
    )(_precaution)
    app.callback(
        Output(ids.PLAN_PREC_RESULT, "children"),
        Input(ids.PLAN_PRECAUTION_STORE, "data"),
        State(ids.LAKE_STORE, "data"),
        State(ids.HISTORY_STORE, "data"),
    )(on_precaution_store)

    # save and find again
    app.callback(
        Output(ids.PLAN_SAVE_MESSAGE, "children"),
        Output(ids.PLAN_SAVED_LIST, "options"),
        Input(ids.PLAN_SAVE, "n_clicks"),
        State(ids.PLAN_SAVE_NAME, "value"),
        State(ids.PLAN_STORE, "data"),
        State(ids.LAKE_STORE, "data"),
        State(ids.HISTORY_STORE, "data"),
        prevent_initial_call=True,
    )(lambda *a: on_save(*a, data_dir=data_dir))
    app.callback(
        Output(ids.PLAN_SAVED_LIST, "options", allow_duplicate=True),
        Output(ids.PLAN_SAVED_DETAILS, "children", allow_duplicate=True),
        Input(ids.VIEW_TABS, "value"),
        prevent_initial_call="initial_duplicate",
    )(lambda tab: on_saved_refresh(tab, data_dir=data_dir))
    app.callback(
        Output(ids.PLAN_SAVED_DETAILS, "children"),
        Input(ids.PLAN_SAVED_LIST, "value"),
        State(ids.LAKE_STORE, "data"),
        State(ids.HISTORY_STORE, "data"),
        prevent_initial_call=True,
    )(lambda *a: on_saved_select(*a, data_dir=data_dir))
    app.callback(
        Output(ids.PLAN_STORE, "data", allow_duplicate=True),
        Output(ids.PLAN_SAVE_MESSAGE, "children", allow_duplicate=True),
        Input(ids.PLAN_LOAD_SAVED, "n_clicks"),
        State(ids.PLAN_SAVED_LIST, "value"),
        State(ids.PLAN_STORE, "data"),
        prevent_initial_call=True,
    )(lambda *a: on_load_saved(*a, data_dir=data_dir))

    # export
    app.callback(
        Output(ids.PLAN_DOWNLOAD, "data"),
        Output(ids.PLAN_EXPORT_MESSAGE, "children"),
        Input(ids.PLAN_EXPORT_REPORT, "n_clicks"),
        Input(ids.PLAN_EXPORT_TRAJECTORIES, "n_clicks"),
        Input(ids.PLAN_EXPORT_TABLE, "n_clicks"),
        State(ids.PLAN_RESULTS_STORE, "data"),
        State(ids.PLAN_PRECAUTION_STORE, "data"),
        prevent_initial_call=True,
    )(on_export)
