"""The precautionary load: checking the request, and the search itself (a background job)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

from dash import no_update
from turnback.model.plan import Plan, Precaution, Scenario, ScenarioLake
from turnback.model.precaution import scenario_precaution
from turnback.model.progress import RunCancelled

from ...background import ProgressReporter, SetProgress, cancel_hook, clear_flag, new_token
from ...stores import PrecautionRequest, precaution_to_store, scenarios_of
from .errors import scenario_words
from .form import parse_precaution
from .readout import plan_lake
from .scenarios import list_rows


def precaution_request(
    scenario_name: str | None,
    years_text: Any,
    percent_text: Any,
    plan: Mapping[str, Any] | None,
    lake: Mapping[str, Any],
    history: Mapping[str, Any] | None,
    folder: Path,
    fit: Mapping[str, Any] | None = None,
) -> tuple[PrecautionRequest | None, str]:
    """Check the precaution form; a good one becomes a request for the background search (else a message)."""
    scenarios = {s.name: s for s in scenarios_of(plan)}
    if not scenarios:
        return None, "Add a scenario to the plan first: its variability is what the search uses."
    if scenario_name not in scenarios:
        return None, "Choose the scenario whose variability to use."
    try:
        pr = parse_precaution(years_text, percent_text)
    except ValueError as exc:
        return None, str(exc)
    try:
        slake = plan_lake(lake, history, fit=fit)
        Plan(slake, (scenarios[scenario_name],))
    except ValueError as exc:
        return None, f"Cannot search: {scenario_words(exc, [scenarios[scenario_name]])}"
    request: PrecautionRequest = {
        "token": new_token(folder),
        "scenario": scenarios[scenario_name].to_dict(),
        "within_years": pr.within_years,
        "max_percent": pr.max_percent,
        "lake": slake.to_dict(),
    }
    return request, ""


def run_precaution(set_progress: SetProgress, request: Mapping[str, Any] | None, *, folder: Path) -> tuple[Any, str]:
    """The precautionary load under a scenario's variability; runs as a background callback."""
    if not request:
        return no_update, ""
    token = request.get("token")
    lake = ScenarioLake.from_dict(request["lake"])
    precaution = Precaution(request["within_years"], request["max_percent"])
    scenario = replace(Scenario.from_dict(request["scenario"]), precaution=precaution)
    progress = ProgressReporter(set_progress, bar=False)
    try:
        pr = scenario_precaution(lake, scenario, progress=progress.fraction, cancel=cancel_hook(folder, token))
    except RunCancelled:
        progress.show(0, "cancelled")
        return no_update, "Cancelled. The answer shown (if any) is from before."
    except ValueError as exc:
        progress.show(0, "not run")
        return no_update, f"Cannot search: {exc}"
    finally:
        clear_flag(folder, token)
    progress.show(100, "done")
    return precaution_to_store(request, scenario, list_rows([scenario])[0]["ensemble"], pr), ""
