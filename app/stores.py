"""What the browser keeps: a schema for every ``dcc.Store`` and the codec to and from it.

All session state lives in the browser (``storage_type="session"``, or
``"memory"`` for one-shot requests); the server keeps nothing between
requests, so two tabs are two lakes.  Each store holds plain JSON; the
TypedDicts below say what is in it, and the functions turn model objects
into that JSON and back.  The store ids are in :mod:`app.ids`.

=========================  ==================  =========================================
store                      schema              codec
=========================  ==================  =========================================
``LAKE_STORE``             :class:`LakeStore`  :func:`lake_to_store`, :func:`lake_from_store`
``HISTORY_STORE``          :class:`HistoryStore`  :func:`new_history` (advanced in views/lake)
``RECORD_STORE``           :class:`RecordStore`  :func:`record_to_store`, :func:`series_from_store`
``FIT_STORE``              :class:`FitStore`   built in views/record/fit.py
``PLAN_STORE``             :class:`PlanStore`  :func:`plan_to_store`, :func:`scenarios_of`
``PLAN_EDITING``           :class:`EditingStore`  plain values
``PLAN_RESULTS_STORE``     :class:`ResultsStore`  :func:`comparison_to_store`, :func:`comparison_from_store`
``PLAN_PRECAUTION_STORE``  :class:`PrecautionStore`  :func:`precaution_to_store` (read by :func:`comparison_from_store`)
``PLAN_RUN_REQUEST``       :class:`RunRequest`  ``{"token"}``
``PLAN_PRECAUTION_REQUEST``  :class:`PrecautionRequest`  built from the precaution form
``REGION_STORE``           :class:`RegionStore`  built in views/region/results.py
``REGION_FILES``           :class:`RegionFiles`  built in views/region/files.py (memory)
=========================  ==================  =========================================
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import asdict, replace
from datetime import UTC, datetime
from typing import Any, NotRequired, TypedDict

import numpy as np
from turnback.model.equilibrium import equilibria
from turnback.model.io.monitoring_csv import parse_monitoring
from turnback.model.io.resources import DEMO_RECORD_NAME, demo_record_bytes
from turnback.model.lake_models import AnyLakeParameters
from turnback.model.outcomes import Comparison, ScenarioResult
from turnback.model.params import LakeParameters, LakeProfile
from turnback.model.plan import Plan, Precaution, Scenario, ScenarioLake
from turnback.model.precaution import PrecautionResult
from turnback.model.record import MonitoringSeries
from turnback.model.two_pool import TwoPoolParameters
from turnback.model.two_pool_equilibrium import equilibria as two_pool_equilibria

#: relative tolerance of :func:`same_lake`
SAME_LAKE_RTOL = 1e-5


# --------------------------------------------------------------------------
# schemas
# --------------------------------------------------------------------------
class LakeStart(TypedDict):
    year: int
    p: float  # lake (water) P [kg]
    m: NotRequired[float]  # two-pool lake: sediment P [kg]


class LakeStore(TypedDict):
    """``LAKE_STORE``: the last valid lake.

    A one-box lake has no ``model`` key (exactly as before the two-pool lake);
    a two-pool lake says ``"model": "two-pool"`` and ``params`` holds
    ``TwoPoolParameters.to_dict()``.
    """

    params: dict[str, float]  # LakeParameters.to_dict() or TwoPoolParameters.to_dict()
    profile: dict[str, Any]  # LakeProfile.to_dict()
    start: NotRequired[LakeStart]  # where a fitted lake starts: the last observed year
    model: NotRequired[str]  # "two-pool" (absent: one-box)


class HistoryStore(TypedDict):
    """``HISTORY_STORE``: every state the lake passed through this session, in time order."""

    lake_key: str  # the lake it belongs to (:func:`lake_key`)
    year: list[int]
    load: list[float]  # [kg yr⁻¹]
    p: list[float]  # lake (water) P [kg]
    event: list[str]  # "start", "load", "removal", "after-removal" or ""
    m: NotRequired[list[float]]  # two-pool lake: sediment P [kg]


class RecordStore(TypedDict):
    """``RECORD_STORE``: the monitoring series on show (None where a cell was empty).

    A record read from a sample file also keeps each annual mean's standard
    error, its number of samples and whether it was flagged for too few.
    """

    name: str
    year: list[int]
    load_kg: list[float]
    tp_ug_l: list[float]
    secchi_m: list[float | None] | None
    chl_ug_l: list[float | None] | None
    tp_se_ug_l: NotRequired[list[float]]
    n_samples: NotRequired[list[int]]
    few_samples: NotRequired[list[bool]]


class Band(TypedDict):
    estimate: float | None
    low: float | None
    high: float | None
    constrained: bool


class Observed(TypedDict):
    year: list[int]
    load: list[float]
    tp: list[float]


class FitStore(TypedDict):
    """``FIT_STORE``: the last fit, what the figures and the readout need of it."""

    lake_key: str  # the fitted lake's key
    record_name: str
    params: dict[str, float]
    se: dict[str, float | None]
    tipping: Band
    recovery: Band
    regime_probability: dict[str, float]
    warnings: list[str]
    replicates: int
    cloud: list[list[float]]  # bootstrap or posterior lakes (rows of s, r, m, q): regime map, plans' draws
    observed: Observed
    proposal: NotRequired[dict[str, Any]]  # the fitted lake (a LakeStore), put in use only by "Use this fitted lake"
    side: NotRequired[str]  # which states the record shows: "both", "clear" or "turbid"
    plausible: NotRequired[list[float]]  # the range the bands are clipped to [kg yr⁻¹]
    known: NotRequired[list[str]]  # what a one-state record does say about the threshold it cannot place
    trust: NotRequired[dict[str, Any]]  # model.fit_trust.FitTrust: level, checks, start
    method: NotRequired[str]  # "conditional_least_squares" or "state_space_laplace"


class PlanStore(TypedDict):
    """``PLAN_STORE``: the plan's scenarios, each as ``Scenario.to_dict()``."""

    scenarios: list[dict[str, Any]]


class EditingStore(TypedDict):
    """``PLAN_EDITING``: the scenario the form is editing (the store holds None otherwise)."""

    name: str
    extra: list[dict[str, Any]]  # treatments beyond the form's one removal and one inactivation
    description: NotRequired[str]


class RunRequest(TypedDict):
    """``PLAN_RUN_REQUEST`` (memory: a reload never re-runs)."""

    token: str  # the run's cancel token (see app.background)


class PrecautionRequest(TypedDict):
    """``PLAN_PRECAUTION_REQUEST`` (memory)."""

    token: str
    scenario: dict[str, Any]
    within_years: int
    max_percent: float
    lake: dict[str, Any]  # ScenarioLake.to_dict()


class PrecautionStore(TypedDict):
    """``PLAN_PRECAUTION_STORE``: the last precautionary-load answer."""

    scenario: str
    within_years: int
    max_percent: float
    lake: dict[str, Any]
    variability: str  # the scenario's ensemble in words
    result: dict[str, Any]  # PrecautionResult as a dict


class ResultEntry(TypedDict, total=False):
    """One scenario of a run: its outcomes (the keys of ``_SCALARS``) and yearly series (six digits)."""

    scenario: dict[str, Any]
    load: list[float]
    threshold: list[float]
    median: list[float]
    p05: list[float]
    p95: list[float]
    p_clear: list[float]
    recovered_in_year: list[int]  # members recovering in each year (members are exchangeable)
    never_recovered: int


class ResultsStore(TypedDict):
    """``PLAN_RESULTS_STORE``: the last completed run."""

    lake: dict[str, Any]
    regime: str
    tipping: float | None
    recovery: float | None
    run_at: str
    results: list[ResultEntry]
    plan: NotRequired[list[dict[str, Any]]]  # the plan's scenarios when it ran (the results go stale when they change)


class RegionRow(TypedDict):
    """One screened lake: the keys of ``turnback screen --json``, and what the region view needs besides."""

    lake_id: str
    name: str | None
    regime: str
    tipping_load: float | None  # [kg yr⁻¹]
    recovery_load: float | None
    margin_kg_yr: float | None
    state: str | None  # "clear", "turbid", "single" or None
    p_irreversible: float | None
    p_hysteretic: float | None
    warnings: list[str]
    fitted: bool
    load_kg_yr: float  # today's load [kg yr⁻¹]
    params: dict[str, float]  # LakeParameters.to_dict(), given or fitted
    volume_m3: float
    area_km2: float | None
    start: NotRequired[LakeStart]  # the last observed year, for a lake with a record


class RegionStore(TypedDict):
    """``REGION_STORE``: the last completed screen of a region, lakes in the lake table's order."""

    source: str  # the files' names
    replicates: int
    seed: int
    run_at: str
    lakes: list[RegionRow]
    failed: list[dict[str, str]]  # {"lake_id", "message"}
    notes: list[str]


class RegionFile(TypedDict):
    name: str
    contents: str  # the upload's data URL


class RegionFiles(TypedDict):
    """``REGION_FILES`` (memory): the files the next screen reads; a bad upload never replaces one."""

    lakes: RegionFile | None
    records: RegionFile | None


# --------------------------------------------------------------------------
# the lake
# --------------------------------------------------------------------------
def lake_to_store(params: AnyLakeParameters, profile: LakeProfile) -> LakeStore:
    store: LakeStore = {"params": params.to_dict(), "profile": profile.to_dict()}
    if isinstance(params, TwoPoolParameters):
        store["model"] = "two-pool"
    return store


def lake_from_store(data: Mapping[str, Any]) -> tuple[AnyLakeParameters, LakeProfile]:
    """The lake's parameters (of its model) and profile."""
    model = data.get("model", "one-box")
    if model == "two-pool":
        return TwoPoolParameters.from_dict(data["params"]), LakeProfile.from_dict(data["profile"])
    if model != "one-box":
        raise ValueError(f"unknown lake model {model!r}")
    return LakeParameters.from_dict(data["params"]), LakeProfile.from_dict(data["profile"])


def is_two_pool(data: Mapping[str, Any] | None) -> bool:
    """Whether a stored lake is a two-pool lake."""
    return bool(data) and data.get("model") == "two-pool"  # type: ignore[union-attr]


def _canonical(v: Any) -> Any:
    """Numbers as floats, so a lake keeps its key through the browser (which writes 2.79e7 as 27900000)."""
    if isinstance(v, bool):
        return v
    if isinstance(v, int | float):
        return float(v)
    if isinstance(v, dict):
        return {k: _canonical(x) for k, x in v.items()}
    if isinstance(v, list | tuple):
        return [_canonical(x) for x in v]
    return v


def lake_key(data: Mapping[str, Any]) -> str:
    """A short fingerprint of a lake, stable through JSON in the browser."""
    return hashlib.sha1(json.dumps(_canonical(data), sort_keys=True).encode()).hexdigest()[:16]


def _lake_numbers(lake: Mapping[str, Any]) -> dict[str, float]:
    if "params" in lake and "profile" in lake:  # a LakeStore
        params, profile = lake_from_store(lake)
        return params.to_dict() | {
            "area_km2": profile.area_km2,
            "mean_depth_m": profile.mean_depth_m,
            "load_kg_yr": profile.load_kg_per_yr,
        }
    # a ScenarioLake.to_dict()
    out = {k: float(v) for k, v in lake.items() if k not in ("name", "model", "parameter_draws")}
    return out | ({"two_pool": 1.0} if lake.get("model") == "two-pool" else {})


def same_lake(a: Mapping[str, Any], b: Mapping[str, Any]) -> bool:
    """Whether two lakes have the same numbers, to 1e-5 relative (names and a fitted start aside).

    Takes two :class:`LakeStore` (parameters and profile numbers) or two
    ``ScenarioLake.to_dict()`` forms (parameters, volume, starting TP).  The
    tolerance is loose because the numbers pass through the browser, which
    rounds them: the settings fields show six significant digits, so a lake
    read back from them differs from the stored one by up to 5e-6 relative.
    """
    if a.get("parameter_draws") != b.get("parameter_draws"):  # a plan's lakes: the same draws, or none
        return False
    xa, xb = _lake_numbers(a), _lake_numbers(b)
    if set(xa) != set(xb):
        return False
    return all(abs(xa[k] - xb[k]) <= SAME_LAKE_RTOL * max(abs(xa[k]), abs(xb[k]), 1e-12) for k in xa)


# --------------------------------------------------------------------------
# the history
# --------------------------------------------------------------------------
def starting_state(params: AnyLakeParameters, load: float) -> float:
    """Where a lake starts at ``load`` [kg]: (water) P.

    One-box: the clear-water equilibrium where it exists, else the only
    stable one.  Two-pool: the turbid equilibrium where it exists (the lake
    with a sediment legacy the model is for), else the only stable one.
    """
    if isinstance(params, TwoPoolParameters):
        return two_pool_start(params, load)[0]
    stable = [e for e in equilibria(params, load) if e.stable]
    return stable[0].p if stable else equilibria(params, load)[0].p


def two_pool_start(params: TwoPoolParameters, load: float) -> tuple[float, float]:
    """Water P and sediment P [kg] where a two-pool lake starts at ``load``: its turbid state where it has one."""
    eqs = two_pool_equilibria(params, load)
    stable = [e for e in eqs if e.stable] or list(eqs)
    e = stable[-1]
    return e.p, e.m


def new_history(lake: Mapping[str, Any]) -> HistoryStore:
    """A history of one point: the lake's start (a fitted lake's last observed year, else its starting state).

    A two-pool lake's history carries its sediment P too (``m``).
    """
    params, profile = lake_from_store(lake)
    load = profile.load_kg_per_yr
    start = lake.get("start") or {}
    p = float(start["p"]) if "p" in start else starting_state(params, load)
    out: HistoryStore = {
        "lake_key": lake_key(lake),
        "year": [int(start.get("year", 0))],
        "load": [load],
        "p": [p],
        "event": ["start"],
    }
    if isinstance(params, TwoPoolParameters):
        if "m" in start:
            m = float(start["m"])
        elif "p" in start:
            m = float(params.sediment_balance(p))
        else:
            m = two_pool_start(params, load)[1]
        out["m"] = [m]
    return out


def history_of(lake: Mapping[str, Any], history: Mapping[str, Any] | None) -> Mapping[str, Any] | None:
    """The history when it belongs to this very lake, else None."""
    return history if history and history.get("lake_key") == lake_key(lake) else None


def state_now(lake: Mapping[str, Any], history: Mapping[str, Any] | None) -> tuple[float, float, int | None]:
    """Lake P now [kg], the load now [kg yr⁻¹] and the year of 'The lake now' (None: not from the history).

    The last state of the session's history when it belongs to this lake,
    else the clear equilibrium at the profile's present-day load.
    """
    _, profile = lake_from_store(lake)
    h = history_of(lake, history)
    if h and h.get("p"):
        return float(h["p"][-1]), float(h["load"][-1]), int(h["year"][-1])
    start = new_history(lake)
    return float(start["p"][0]), profile.load_kg_per_yr, None


def sediment_now(lake: Mapping[str, Any], history: Mapping[str, Any] | None) -> float | None:
    """Sediment P now [kg] of a two-pool lake (the history's last state, else its start); None for one-box."""
    params, _ = lake_from_store(lake)
    if not isinstance(params, TwoPoolParameters):
        return None
    h = history_of(lake, history)
    if h and h.get("m"):
        return float(h["m"][-1])
    return float(new_history(lake)["m"][-1])


def fit_of(lake: Mapping[str, Any], fit: Mapping[str, Any] | None) -> Mapping[str, Any] | None:
    """The monitoring fit, when it belongs to this very lake."""
    return fit if fit and fit.get("lake_key") == lake_key(lake) else None


# --------------------------------------------------------------------------
# the monitoring record
# --------------------------------------------------------------------------
def record_to_store(series: MonitoringSeries, name: str) -> RecordStore:
    def col(a: Any) -> list[float | None] | None:
        if a is None:
            return None
        return [None if not math.isfinite(v) else float(v) for v in np.asarray(a, dtype=float)]

    out: RecordStore = {
        "name": name,
        "year": [int(y) for y in series.years],
        "load_kg": [float(v) for v in series.load_kg_per_yr],
        "tp_ug_l": [float(v) for v in series.tp_ug_l],
        "secchi_m": col(series.secchi_m),
        "chl_ug_l": col(series.chl_ug_l),
    }
    if series.tp_se_ug_l is not None and series.n_samples is not None and series.few_samples is not None:
        out["tp_se_ug_l"] = [float(v) for v in series.tp_se_ug_l]
        out["n_samples"] = [int(v) for v in series.n_samples]
        out["few_samples"] = [bool(v) for v in series.few_samples]
    return out


def series_from_store(record: Mapping[str, Any]) -> MonitoringSeries:
    def arr(key: str) -> Any:
        v = record.get(key)
        return None if v is None else np.array([np.nan if x is None else x for x in v], dtype=float)

    return MonitoringSeries(
        years=np.asarray(record["year"], dtype=np.int64),
        load_kg_per_yr=np.asarray(record["load_kg"], dtype=float),
        tp_ug_l=np.asarray(record["tp_ug_l"], dtype=float),
        secchi_m=arr("secchi_m"),
        chl_ug_l=arr("chl_ug_l"),
        tp_se_ug_l=arr("tp_se_ug_l"),
        n_samples=None if record.get("n_samples") is None else np.asarray(record["n_samples"], dtype=np.int64),
        few_samples=None if record.get("few_samples") is None else np.asarray(record["few_samples"], dtype=bool),
    )


def demo_record() -> RecordStore | None:
    """The invented record of the demo lake, or None if the sample file is missing."""
    try:
        return record_to_store(parse_monitoring(demo_record_bytes()), DEMO_RECORD_NAME)
    except (OSError, ValueError):
        return None


# --------------------------------------------------------------------------
# the plan
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


def plan_to_store(scenarios: Sequence[Scenario]) -> PlanStore:
    return {"scenarios": [s.to_dict() for s in scenarios]}


# --------------------------------------------------------------------------
# results of a run: a compact, JSON-ready form of a comparison
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


def result_to_store(r: ScenarioResult) -> ResultEntry:
    """One scenario's outcomes and yearly series; recovery years as counts per year (members are exchangeable)."""
    rec = r.recovery_year
    finite = rec[np.isfinite(rec)].astype(int)
    counts = np.bincount(finite, minlength=r.years.size)
    entry: dict[str, Any] = {
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
    return entry  # type: ignore[return-value]


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


def comparison_to_store(comp: Comparison, when: datetime | None = None) -> ResultsStore:
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
    if precaution and same_lake(precaution.get("lake", {}), data["lake"]):
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


def precaution_to_store(
    request: Mapping[str, Any], scenario: Scenario, variability: str, result: PrecautionResult
) -> PrecautionStore:
    """The answer of a precautionary-load search asked for by ``request`` (a :class:`PrecautionRequest`)."""
    return {
        "scenario": scenario.name,
        "within_years": request["within_years"],
        "max_percent": request["max_percent"],
        "lake": request["lake"],
        "variability": variability,
        "result": asdict(result),
    }
