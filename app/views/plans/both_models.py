"""A plan run under both lake models side by side, and the lag the sediment adds.

The lake in use is one model; the comparison lake is the lake of the other
model in the lake settings (their fields stay filled in when the other
model is chosen: by default the demo lake in that model), with the same
volume and starting TP.  A two-pool comparison lake starts with its sediment
P in balance with that water P (``M* = s P₀ / (b + r g(P₀))``).  Each
scenario's "lag from the sediment" is its median recovery year under the
two-pool lake minus that under the one-box lake
(:func:`turnback.model.sediment_lag.sediment_lag_years`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any

from turnback.model.ensemble import compare_plan
from turnback.model.lake_models import model_name
from turnback.model.outcomes import Comparison, ScenarioResult
from turnback.model.plan import Plan, ScenarioLake
from turnback.model.progress import Cancel
from turnback.model.sediment_lag import sediment_lag_years

from ...stores import lake_from_store, result_from_store, result_to_store
from ...vocabulary import term
from ..lake.settings import check_model_settings
from .figures import starts_clear

#: the other model of each
OTHER = {"one-box": "two-pool", "two-pool": "one-box"}


def other_lake(
    lake: ScenarioLake, values: Mapping[str, Any], pool_values: Mapping[str, Any]
) -> tuple[ScenarioLake | None, str]:
    """The comparison lake of the other model, from the settings' fields; (None, why) when they do not make one."""
    other = OTHER[lake.model]
    store, messages, pool_messages = check_model_settings(other, dict(values), dict(pool_values), lake.name)
    if store is None:
        wrong = "; ".join(m for m in (*messages.values(), *pool_messages.values()) if m)
        return None, f"the {other} lake in the lake settings has a wrong value ({wrong})"
    params, _ = lake_from_store(store)
    name = f"{lake.name} ({term('one_box' if other == 'one-box' else 'two_pool', False)})"
    try:
        return ScenarioLake(params, lake.volume_m3, lake.initial_tp_ug_l, name=name), ""
    except ValueError as exc:
        return None, f"the {other} lake in the lake settings cannot run: {exc}"


def run_other(
    plan: Plan, other: ScenarioLake, progress: Callable[[float, str], None] | None, cancel: Cancel | None
) -> Comparison:
    """The same scenarios on the comparison lake."""
    return compare_plan(Plan(other, plan.scenarios), progress=progress, cancel=cancel, sample_paths=0)


def other_to_store(comp: Comparison) -> dict[str, Any]:
    """The comparison run, kept beside the main results (``PLAN_RESULTS_STORE["other"]``)."""
    return {
        "lake": comp.plan.lake.to_dict(),
        "model": comp.plan.lake.model,
        "results": [result_to_store(r) for r in comp.results],
    }


def other_results(data: Mapping[str, Any]) -> list[ScenarioResult]:
    """The comparison run's results from the store (empty when there is none)."""
    other = data.get("other")
    if not other:
        return []
    lake = ScenarioLake.from_dict(other["lake"])
    return [result_from_store(d, lake) for d in other["results"]]


def model_words(model: str, meeting: bool) -> str:
    return term("two_pool" if model == "two-pool" else "one_box", meeting)


def side_by_side(
    rows: Sequence[dict[str, Any]],
    results: Sequence[ScenarioResult],
    others: Sequence[ScenarioResult],
    model: str,
    meeting: bool,
) -> list[dict[str, Any]]:
    """Table rows of both runs: each scenario, then the same scenario under the other model.

    Every row gets ``model``; rows of the two-pool run get ``lag_years``
    (two-pool minus one-box median recovery year; None where either does not
    recover, or the lake starts clear).
    """
    by_name = {r.name: r for r in others}
    out: list[dict[str, Any]] = []
    for row, r in zip(rows, results, strict=True):
        o = by_name.get(r.name)
        main = dict(row) | {"model": model_words(model, meeting), "lag_years": None}
        if o is None:
            out.append(main)
            continue
        two, one = (r, o) if model == "two-pool" else (o, r)
        lag = None
        if not starts_clear(two):
            lag = sediment_lag_years(two.recovery_years_median, one.recovery_years_median)
        main["lag_years"] = lag if model == "two-pool" else None
        out.append(main)
        out.append(_other_row(o, OTHER[model], lag if model == "one-box" else None, meeting))
    return out


def _other_row(o: ScenarioResult, model: str, lag: float | None, meeting: bool) -> dict[str, Any]:
    from .figures import outcome_table

    row = outcome_table([o], meeting)[0]
    return (
        row
        | {"scenario": f"{o.name} · {model_words(model, meeting)}", "model": model_words(model, meeting)}
        | {"lag_years": lag}
    )


def both_columns(meeting: bool) -> list[dict[str, Any]]:
    """The two columns a side-by-side run adds: the lake model and the lag from the sediment [yr]."""
    return [
        {"field": "model", "headerName": "Lake model", "sortable": True, "cellDataType": "text", "minWidth": 120},
        {
            "field": "lag_years",
            "headerName": term("lag_column", meeting),
            "sortable": True,
            "cellDataType": "number",
            "type": "rightAligned",
            "valueFormatter": {"function": "params.value == null ? '–' : d3.format('.0f')(params.value)"},
        },
    ]


def model_of(lake: ScenarioLake) -> str:
    return model_name(lake.params)
