"""The scenario form of the plans view: its entries to a :class:`model.scenario.Scenario` and back.

Pure functions.  Messages are the model's own validation messages, with
the form's labels for its field names (see :mod:`.errors`).
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping, Sequence
from typing import Any

from turnback.model.plan import MAX_YEARS, Precaution, Scenario
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
from turnback.model.validation import path_text

from ... import ids
from .errors import field_of_error, relabel

FORM_KEYS: tuple[str, ...] = tuple(ids.PLAN_FORM)
SECTIONS: tuple[str, ...] = tuple(ids.PLAN_MESSAGES)

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
            raise ValueError(relabel(exc, {"kg_per_yr": "Loads of years 1, 2, …"})) from None
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
        raise ValueError(relabel(exc, labels)) from None
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
            problems.append(relabel(exc, {"year": "Removal year", "kg": "P removal"}))
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
            problems.append(relabel(exc, labels))
    return out, problems


def _treatment_label(t: Treatment, i: int, n_form: int) -> str:
    if i < n_form:
        return "Removal year" if isinstance(t, Removal) else "Inactivation start year"
    return f"Treatment {i + 1} (kept from the scenario) year"


def _scenario_problem(exc: ValueError, treatments: Sequence[Treatment], n_form: int) -> tuple[str, str]:
    """The form section and message of a scenario-wide problem (a field that clashes with the horizon)."""
    path, reason = field_of_error(exc)
    if len(path) == 3 and path[0] == "treatments" and isinstance(path[1], int) and path[2] == "year":
        return "treatments", _treatment_label(treatments[path[1]], path[1], n_form) + f" {reason}"
    if len(path) > 1 and path[0] == "load":
        return "load", relabel(exc, {"load.kg_per_yr": "Loads of years 1, 2, …", "load.year": "Step year"})
    key = path_text(path) if path else str(exc).split(" ", 1)[0]
    return _SCENARIO_SECTION.get(key, "variability"), relabel(exc, _SCENARIO_LABELS)


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
            problems[section].append(relabel(exc, _SCENARIO_LABELS))

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
        section, message = _scenario_problem(exc, treatments, n_form)
        problems[section].append(message)
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


def parse_precaution(years_text: Any, percent_text: Any) -> Precaution:
    """The precaution form's entries as a :class:`Precaution` (ValueError with the form's labels)."""
    try:
        within = _whole(years_text, "Within years")
        percent = _number(percent_text, "At most (% chance of flipping)")
        return Precaution(within, percent)  # type: ignore[arg-type]
    except ValueError as exc:
        labels = {"within_years": "Within years", "max_percent": "At most (% chance of flipping)"}
        raise ValueError(relabel(exc, labels)) from None
