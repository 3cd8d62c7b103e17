"""The plans view in words: the lake the plan is for, the last run, the precautionary load.  Layout only."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import html
from turnback.model.lake_models import lake_folds
from turnback.model.parameter_draws import ParameterDraws
from turnback.model.plan import ScenarioLake
from turnback.model.two_pool import TwoPoolParameters

from ... import ids
from ...stores import fit_of, lake_from_store, same_lake, sediment_now, state_now


def fit_draws(lake: Mapping[str, Any], fit: Mapping[str, Any] | None) -> ParameterDraws | None:
    """The lakes the last fit leaves possible (its bootstrap or posterior draws), when the fit is of this lake."""
    f = fit_of(lake, fit)
    cloud = (f or {}).get("cloud") or []
    if not cloud:
        return None
    try:
        return ParameterDraws.from_rows(cloud)
    except ValueError:
        return None


def plan_lake(
    lake: Mapping[str, Any],
    history: Mapping[str, Any] | None,
    name: str | None = None,
    fit: Mapping[str, Any] | None = None,
) -> ScenarioLake:
    """The current lake as a :class:`ScenarioLake` starting at its state now (ValueError if the map cannot run it).

    After a fit of this lake its members run the fit's parameter draws (:func:`fit_draws`); a two-pool lake
    starts with its sediment P now too.
    """
    params, profile = lake_from_store(lake)
    p, _, _ = state_now(lake, history)
    m = sediment_now(lake, history)
    return ScenarioLake(
        params,
        profile.volume_m3,
        float(profile.concentration(p)),
        name=name or profile.name,
        initial_sediment_p_kg=m,
        parameter_draws=fit_draws(lake, fit) if m is None else None,
    )


def draws_words(draws: ParameterDraws | None) -> str:
    """What the parameter draws mean for a plan, in plain words ('' without draws)."""
    if draws is None:
        return ""
    return (
        f" The monitoring record does not pin the lake down, so each scenario's members take turns among the "
        f"{draws.n} lakes the last fit found possible: the chances shown include both the year-to-year "
        "variability and what the record leaves unknown. Change the lake's settings to plan with one lake."
    )


def lake_words(lake: ScenarioLake) -> str:
    p = lake.params
    if isinstance(p, TwoPoolParameters):
        mud = (
            "" if lake.initial_sediment_p_kg is None else f", starting sediment P {lake.initial_sediment_p_kg:,.0f} kg"
        )
        return (
            f"two-pool lake: sedimentation {p.s:g}/yr, outflow {p.h:g}/yr, burial {p.b:g}/yr, recycling rate "
            f"{p.r:g}/yr, half-saturation {p.m:,.6g} kg, exponent {p.q:g}, volume {lake.volume_m3:.4g} m³, "
            f"starting TP {lake.initial_tp_ug_l:.1f} µg/L{mud}"
        )
    return (
        f"loss rate {p.s:g}/yr, maximum recycling {p.r:,.6g} kg/yr, half-saturation {p.m:,.6g} kg, exponent {p.q:g}, "
        f"volume {lake.volume_m3:.4g} m³, starting TP {lake.initial_tp_ug_l:.1f} µg/L"
    )


def lake_note(
    lake: Mapping[str, Any], history: Mapping[str, Any] | None, fit: Mapping[str, Any] | None = None
) -> list[Any]:
    """Which lake the plan is for, where its scenarios start, and whether they use the fit's draws."""
    params, profile = lake_from_store(lake)
    p, load, year = state_now(lake, history)
    tp = float(profile.concentration(p))
    m = sediment_now(lake, history)
    mud = f" and {m:,.0f} kg P in the mud" if m is not None else ""
    where = "the lake's state now in 'The lake now'" + (f" (year {year})" if year is not None else "")
    if year is None:
        where = "its turbid state at today's load" if m is not None else "its clear equilibrium at today's load"
    fs = lake_folds(params)
    fold_text = f" Tipping load {fs[0].load:,.0f} kg/yr, recovery load {max(fs[1].load, 0):,.0f} kg/yr." if fs else ""
    return [
        html.B(profile.name),
        f": scenarios start at TP {tp:.1f} µg/L ({p:,.0f} kg P{mud}), {where}, with the load now {load:,.0f} kg/yr."
        + fold_text
        + draws_words(fit_draws(lake, fit) if m is None else None),
    ]


def is_stale(data: Mapping[str, Any] | None, plan: Mapping[str, Any] | None, current: Mapping[str, Any] | None) -> str:
    """Why the last run no longer matches the plan or the lake ('' when it still does)."""
    if not data or not data.get("results"):
        return ""
    if "plan" in data and list(data["plan"]) != list((plan or {}).get("scenarios", [])):
        return "the plan's scenarios changed since this run"
    if current is not None and not same_lake(current, data["lake"]):
        return "the lake or its state changed since this run"
    return ""


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
    if current is not None and not same_lake(current, data["lake"]):
        out.append(
            html.Div(
                "The lake or its state has changed since this run: run the plan again for the lake as it is now.",
                className="readout-warning",
            )
        )
    return out


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
    out: list[Any] = [html.Div(body, className="readout-row", id=ids.PLAN_PREC_ANSWER)]
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
