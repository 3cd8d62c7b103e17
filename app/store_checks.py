"""The server's trust boundary: what a browser may send back in each store and input.

The browser keeps the session (app.stores), so whatever a request carries
may have been changed by the client.  Every callback request is checked here
before any callback runs (:mod:`turnback.app.guard`): its size and nesting,
that every number is finite, and each store against its schema and ranges.
A bad payload raises :class:`StoreError` with a message for the user; the
callback does not run and the page keeps its last good state.

The limits also bound the work a request can buy: a record is at most
:data:`~turnback.model.io.monitoring_csv.MAX_ROWS` years, a history at most
:data:`MAX_HISTORY_POINTS` states, a plan at most
:data:`~turnback.model.plan.MAX_SCENARIOS` scenarios, each within the
plan's own member and year limits.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from functools import partial
from typing import Any

from turnback.model.io.monitoring_csv import MAX_ROWS
from turnback.model.params import MAX_VALUE, LakeParameters, LakeProfile
from turnback.model.plan import MAX_SCENARIOS, MAX_YEARS, Scenario, ScenarioLake
from turnback.model.schedules import treatment_from_dict
from turnback.model.two_pool import TwoPoolParameters, check_map_limits
from turnback.model.validation import FieldError

from . import ids

__all__ = [
    "MAX_HISTORY_POINTS",
    "MAX_REQUEST_BYTES",
    "MAX_UPLOAD_BYTES",
    "StoreError",
    "check_payload_value",
    "check_store",
    "surrogate_count",
]

#: Largest upload the record view accepts [bytes] (the monitoring reader's own limit is 2 MB).
MAX_UPLOAD_BYTES = 4_000_000
#: Largest request the server reads [bytes]: an upload as a data URL (4/3 of its size) and the page's stores.
MAX_REQUEST_BYTES = 16_000_000
#: Most states a session's history may hold (a long meeting adds a few hundred).
MAX_HISTORY_POINTS = 20_000
#: Deepest nesting of any value a request carries.
MAX_DEPTH = 12
#: Longest text any input carries (an uploaded file's data URL is checked against the upload limit instead).
MAX_TEXT = 20_000
#: Most list entries anywhere in one value.
MAX_ITEMS = 400_000
#: Most bootstrap lakes a fit keeps for the regime map.
MAX_CLOUD = 2_000
#: Most lakes a region screen in the dashboard holds (views/region/results.py MAX_LAKES).
MAX_REGION_LAKES = 2000
#: Longest data URL of one region file (base64 of an upload at the limit, and its header).
MAX_REGION_FILE_TEXT = MAX_UPLOAD_BYTES * 4 // 3 + 200
#: stores whose text may be as long as an upload's data URL
LARGE_TEXT_STORES = (ids.REGION_FILES,)
_TOKEN = re.compile(r"[0-9a-f]{32}")
#: Surrogate series times record years the warning signs may cost per request.
SURROGATE_BUDGET = 250_000


def surrogate_count(n_years: int) -> int:
    """AR(1) surrogates for a record of ``n_years``: 500, fewer for long records so the work stays bounded."""
    return int(min(500, max(50, SURROGATE_BUDGET // max(int(n_years), 1))))


#: what each store and checked input is called in a message
LABELS = {
    ids.LAKE_STORE: "the lake",
    ids.HISTORY_STORE: "the lake's history",
    ids.HISTORY_TAIL: "the lake's latest state",
    ids.RECORD_STORE: "the monitoring record",
    ids.FIT_STORE: "the fit",
    ids.PLAN_STORE: "the plan",
    ids.PLAN_EDITING: "the scenario being edited",
    ids.PLAN_RESULTS_STORE: "the plan's results",
    ids.PLAN_PRECAUTION_STORE: "the precautionary-load answer",
    ids.PLAN_RUN_REQUEST: "the run request",
    ids.PLAN_PRECAUTION_REQUEST: "the precautionary-load request",
    ids.LOAD_SLIDER: "the phosphorus load",
}


def label(component_id: str) -> str:
    """Plain words for a component in a message."""
    return LABELS.get(component_id, "a value")


class StoreError(ValueError):
    """A store or input a browser sent back that the server will not use; the message says what happened."""


def _bad(what: str, why: str) -> StoreError:
    return StoreError(
        f"The page sent back {what} that cannot be used ({why}); nothing was changed. "
        "If this keeps happening, reload the page."
    )


# --------------------------------------------------------------------------
# any value: size, nesting, finite numbers
# --------------------------------------------------------------------------
def check_payload_value(value: Any, what: str, *, max_text: int = MAX_TEXT) -> None:
    """Refuse values too deep, too long or holding a number that is not finite."""
    items = 0
    stack: list[tuple[Any, int]] = [(value, 0)]
    while stack:
        v, depth = stack.pop()
        if depth > MAX_DEPTH:
            raise _bad(what, f"nested more than {MAX_DEPTH} levels")
        if isinstance(v, float) and not math.isfinite(v):
            raise _bad(what, "a number that is not finite")
        if isinstance(v, int) and not isinstance(v, bool) and abs(v) > 10**18:
            raise _bad(what, "a number too large")
        if isinstance(v, str) and len(v) > max_text:
            raise _bad(what, f"text longer than {max_text:,} characters")
        if isinstance(v, list | tuple):
            items += len(v)
            stack.extend((x, depth + 1) for x in v)
        elif isinstance(v, dict):
            items += len(v)
            for k, x in v.items():
                if not isinstance(k, str) or len(k) > 200:
                    raise _bad(what, "a malformed key")
                stack.append((x, depth + 1))
        if items > MAX_ITEMS:
            raise _bad(what, f"more than {MAX_ITEMS:,} entries")


# --------------------------------------------------------------------------
# pieces
# --------------------------------------------------------------------------
def _dict(v: Any, what: str) -> Mapping[str, Any]:
    if not isinstance(v, dict):
        raise _bad(what, f"expected an object, got {type(v).__name__}")
    return v


def _list(v: Any, what: str, max_len: int, *, min_len: int = 0) -> list[Any]:
    if not isinstance(v, list):
        raise _bad(what, f"expected a list, got {type(v).__name__}")
    if not min_len <= len(v) <= max_len:
        raise _bad(what, f"a list of {len(v)} entries, outside {min_len} to {max_len:,}")
    return v


def _numbers(v: Any, what: str, n: int, lo: float, hi: float, *, allow_none: bool = False) -> None:
    for x in _list(v, what, n, min_len=n):
        if x is None and allow_none:
            continue
        if isinstance(x, bool) or not isinstance(x, int | float) or not lo <= x <= hi:
            raise _bad(what, f"a value {x!r} outside {lo:g} to {hi:g}")


def _text(v: Any, what: str, max_len: int = 200) -> None:
    if not isinstance(v, str) or len(v) > max_len:
        raise _bad(what, "a malformed name")


def _model(build: Callable[[], object], what: str) -> None:
    try:
        build()
    except (FieldError, ValueError, TypeError, KeyError) as exc:
        raise _bad(what, str(exc)) from None


# --------------------------------------------------------------------------
# the stores
# --------------------------------------------------------------------------
def check_lake(v: Any) -> None:
    d = _dict(v, "a lake")
    model = d.get("model", "one-box")
    if model == "two-pool":
        # the annual map's limits too: every two-pool lake in the store must run
        _model(lambda: check_map_limits(TwoPoolParameters.from_dict(d["params"])), "a lake")
        _model(lambda: LakeProfile.from_dict(d["profile"]), "a lake")
    elif model == "one-box" and "model" not in d:
        _model(lambda: (LakeParameters.from_dict(d["params"]), LakeProfile.from_dict(d["profile"])), "a lake")
    else:
        raise _bad("a lake", "an unknown lake model")
    if "start" in d:
        s = _dict(d["start"], "a lake's start")
        _numbers([s.get("year")], "a lake's start year", 1, -10_000, 10_000)
        _numbers([s.get("p")], "a lake's start", 1, 0.0, MAX_VALUE)
        if "m" in s:
            if model != "two-pool":
                raise _bad("a lake", "a sediment start for a one-box lake")
            _numbers([s.get("m")], "a lake's sediment start", 1, 0.0, MAX_VALUE)
        if set(s) - {"year", "p", "m"}:
            raise _bad("a lake's start", "unknown fields")
    if set(d) - {"params", "profile", "start", "model"}:
        raise _bad("a lake", "unknown fields")


def check_history(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "a history")
    _text(d.get("lake_key"), "a history")
    n = len(_list(d.get("year"), "a history", MAX_HISTORY_POINTS, min_len=1))
    _numbers(d.get("year"), "a history's years", n, -1e7, 1e7)
    _numbers(d.get("load"), "a history's loads", n, 0.0, MAX_VALUE)
    _numbers(d.get("p"), "a history's lake P", n, 0.0, MAX_VALUE)
    if "m" in d:
        _numbers(d.get("m"), "a history's sediment P", n, 0.0, MAX_VALUE)
    for e in _list(d.get("event"), "a history's events", n, min_len=n):
        _text(e, "a history's events", 40)


def check_history_tail(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "the lake's latest state")
    _text(d.get("lake_key"), "the lake's latest state")
    _numbers([d.get("year"), d.get("first", d.get("year"))], "the lake's latest year", 2, -1e7, 1e7)
    _numbers([d.get("load")], "the lake's latest load", 1, 0.0, MAX_VALUE)
    _numbers([d.get("p")], "the lake's latest P", 1, 0.0, MAX_VALUE)
    _numbers([d.get("n")], "the history's length", 1, 1, MAX_HISTORY_POINTS)
    if "m" in d:
        _numbers([d.get("m")], "the lake's latest sediment P", 1, 0.0, MAX_VALUE)
    if "change" in d:
        c = _dict(d["change"], "the lake's last inflow change")
        _numbers([c.get("year")], "the lake's last inflow change", 1, -1e7, 1e7)
        _numbers([c.get("lag")], "the years until clear water", 1, 0, 1e7, allow_none=True)
        if set(c) - {"year", "lag"}:
            raise _bad("the lake's last inflow change", "unknown fields")


def check_record(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "a monitoring record")
    _text(d.get("name"), "a monitoring record", 300)
    n = len(_list(d.get("year"), "a monitoring record", MAX_ROWS, min_len=2))
    _numbers(d.get("year"), "a record's years", n, -10_000, 10_000)
    _numbers(d.get("load_kg"), "a record's loads", n, 0.0, 1e12)
    _numbers(d.get("tp_ug_l"), "a record's TP", n, 1e-9, 1e6)
    for key in ("secchi_m", "chl_ug_l"):
        if d.get(key) is not None:
            _numbers(d[key], f"a record's {key}", n, 0.0, 1e6, allow_none=True)
    if d.get("tp_se_ug_l") is not None:  # a record read from a sample file
        _numbers(d["tp_se_ug_l"], "a record's standard errors", n, 1e-12, 1e6)
        _numbers(d.get("n_samples"), "a record's sample counts", n, 1, 1e7)
        if not isinstance(d.get("few_samples"), list) or not all(isinstance(x, bool) for x in d["few_samples"]):
            raise _bad("a monitoring record", "malformed flags of years with few samples")
        _list(d["few_samples"], "a monitoring record", n, min_len=n)


def check_fit(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "a fit")
    _text(d.get("lake_key"), "a fit")
    _model(lambda: LakeParameters.from_dict(d["params"]), "a fit")
    for row in _list(d.get("cloud", []), "a fit's bootstrap lakes", MAX_CLOUD):
        _numbers(row, "a fit's bootstrap lake", 4, 1e-300, MAX_VALUE)
    for w in _list(d.get("warnings", []), "a fit's warnings", 100):
        _text(w, "a fit's warnings", 2000)
    probs = _dict(d.get("regime_probability", {}), "a fit's regime shares")
    _numbers(list(probs.values()), "a fit's regime shares", len(probs), 0.0, 1.0)
    obs = _dict(d.get("observed", {"year": [], "load": [], "tp": []}), "a fit's observed years")
    n = len(_list(obs.get("year"), "a fit's observed years", MAX_ROWS))
    _numbers(obs.get("load"), "a fit's observed loads", n, 0.0, 1e12)
    _numbers(obs.get("tp"), "a fit's observed TP", n, 0.0, 1e6)


def check_plan(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "a plan")
    for s in _list(d.get("scenarios"), "a plan's scenarios", MAX_SCENARIOS):
        _model(partial(Scenario.from_dict, s), "a plan's scenario")


def check_editing(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "the scenario being edited")
    _text(d.get("name"), "the scenario being edited")
    for t in _list(d.get("extra", []), "the scenario's treatments", 50):
        _model(partial(treatment_from_dict, t), "a treatment")


def check_results(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "plan results")
    _model(lambda: ScenarioLake.from_dict(d["lake"]), "plan results")
    for r in _list(d.get("results"), "plan results", MAX_SCENARIOS):
        r = _dict(r, "a scenario's results")
        _model(partial(Scenario.from_dict, r.get("scenario")), "a scenario's results")
        for key in ("load", "threshold", "median", "p05", "p95", "p_clear", "recovered_in_year"):
            if key in r:
                series = _list(r[key], "a scenario's yearly results", MAX_YEARS + 1)
                _numbers(series, "a scenario's yearly results", len(series), -MAX_VALUE, MAX_VALUE)
    if "other" in d:
        check_other_results(d["other"])


def check_other_results(v: Any) -> None:
    """The side-by-side run under the other lake model (``PLAN_RESULTS_STORE["other"]``)."""
    d = _dict(v, "plan results")
    if set(d) - {"lake", "model", "results"} or d.get("model") not in ("one-box", "two-pool"):
        raise _bad("plan results", "a malformed side-by-side run")
    check_results({"lake": d.get("lake"), "results": d.get("results")})


def check_token_request(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "a run request")
    if not isinstance(d.get("token"), str) or not _TOKEN.fullmatch(d["token"]):
        raise _bad("a run request", "a malformed token")
    if "scenario" in d:
        _model(lambda: Scenario.from_dict(d["scenario"]), "a precaution request")
        _model(lambda: ScenarioLake.from_dict(d["lake"]), "a precaution request")
        _numbers([d.get("within_years")], "a precaution request", 1, 1, MAX_YEARS)
        _numbers([d.get("max_percent")], "a precaution request", 1, 0.0, 100.0)


def check_precaution_answer(v: Any) -> None:
    if v is None:
        return
    d = _dict(v, "a precautionary-load answer")
    _model(lambda: ScenarioLake.from_dict(d["lake"]), "a precautionary-load answer")
    _dict(d.get("result"), "a precautionary-load answer")


def check_region(v: Any) -> None:
    """``REGION_STORE``: the last screen (every lake's parameters must make a lake the engine takes)."""
    if v is None:
        return
    d = _dict(v, "a region screen")
    _text(d.get("source"), "a region screen", 500)
    _numbers([d.get("replicates"), d.get("seed")], "a region screen", 2, 0, 1e9)
    for row in _list(d.get("lakes"), "a region's lakes", MAX_REGION_LAKES):
        r = _dict(row, "a screened lake")
        _text(r.get("lake_id"), "a screened lake", 120)
        if r.get("regime") not in ("reversible", "hysteretic", "irreversible"):
            raise _bad("a screened lake", "an unknown regime")
        _model(partial(LakeParameters.from_dict, r.get("params")), "a screened lake")
        _numbers([r.get("load_kg_yr"), r.get("volume_m3")], "a screened lake", 2, 0.0, MAX_VALUE)
        _numbers([r.get("area_km2")], "a screened lake's area", 1, 1e-12, MAX_VALUE, allow_none=True)
        loads = [r.get("tipping_load"), r.get("recovery_load"), r.get("margin_kg_yr")]
        _numbers(loads, "a screened lake's loads", 3, -MAX_VALUE, MAX_VALUE, allow_none=True)
        shares = [r.get("p_irreversible"), r.get("p_hysteretic")]
        _numbers(shares, "a screened lake's regime shares", 2, 0.0, 1.0, allow_none=True)
        for w in _list(r.get("warnings", []), "a screened lake's warnings", 100):
            _text(w, "a screened lake's warnings", 2000)
        if "start" in r:
            s = _dict(r["start"], "a screened lake's last year")
            _numbers([s.get("year")], "a screened lake's last year", 1, -10_000, 10_000)
            _numbers([s.get("p")], "a screened lake's last year", 1, 0.0, MAX_VALUE)
    for f in _list(d.get("failed", []), "a region's failed lakes", MAX_REGION_LAKES):
        f = _dict(f, "a failed lake")
        _text(f.get("lake_id"), "a failed lake", 120)
        _text(f.get("message"), "a failed lake", 2000)


def check_region_files(v: Any) -> None:
    """``REGION_FILES``: at most two files, each a name and a data URL within the upload limit."""
    if v is None:
        return
    d = _dict(v, "the region's files")
    if set(d) != {"lakes", "records"}:
        raise _bad("the region's files", "other fields than the lake table and the records")
    for key in ("lakes", "records"):
        if d.get(key) is None:
            continue
        f = _dict(d[key], "a region file")
        _text(f.get("name"), "a region file", 200)
        if not isinstance(f.get("contents"), str) or len(f["contents"]) > MAX_REGION_FILE_TEXT:
            raise _bad("a region file", f"not a data URL of at most {MAX_UPLOAD_BYTES // 1_000_000} MB")


#: store id -> its check
CHECKS: dict[str, Callable[[Any], None]] = {
    ids.LAKE_STORE: check_lake,
    ids.HISTORY_STORE: check_history,
    ids.HISTORY_TAIL: check_history_tail,
    ids.RECORD_STORE: check_record,
    ids.FIT_STORE: check_fit,
    ids.PLAN_STORE: check_plan,
    ids.PLAN_EDITING: check_editing,
    ids.PLAN_RESULTS_STORE: check_results,
    ids.PLAN_PRECAUTION_STORE: check_precaution_answer,
    ids.PLAN_RUN_REQUEST: check_token_request,
    ids.PLAN_PRECAUTION_REQUEST: check_token_request,
    ids.REGION_STORE: check_region,
    ids.REGION_FILES: check_region_files,
}


def check_store(store_id: str, value: Any) -> None:
    """Check one store's value against its schema; :class:`StoreError` when it is bad."""
    check = CHECKS.get(store_id)
    if check is not None:
        check(value)
