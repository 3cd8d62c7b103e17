"""Per-session lake and history, as plain JSON-ready dicts for ``dcc.Store``.

Pure functions: they take the stored dicts and return new ones; nothing is
kept on the server, so two browser tabs are two independent lakes.
"""

from __future__ import annotations

import hashlib
import json
from typing import Any

import numpy as np
from turnback.model.dynamics import simulate
from turnback.model.equilibrium import equilibria
from turnback.model.params import LakeParameters, LakeProfile

MAX_HISTORY = 4000  # points kept per session; the oldest are dropped beyond this
MAX_YEARS = 200

Lake = dict[str, Any]
History = dict[str, Any]


def is_meeting(toggle_value: list[str] | None) -> bool:
    """Whether the meeting-view checklist is ticked."""
    return "on" in (toggle_value or [])


def lake_to_store(params: LakeParameters, profile: LakeProfile) -> Lake:
    return {"params": params.to_dict(), "profile": profile.to_dict()}


def lake_from_store(data: Lake) -> tuple[LakeParameters, LakeProfile]:
    return LakeParameters.from_dict(data["params"]), LakeProfile.from_dict(data["profile"])


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


def lake_key(data: Lake) -> str:
    """A short fingerprint of a lake, stable through JSON in the browser."""
    return hashlib.sha1(json.dumps(_canonical(data), sort_keys=True).encode()).hexdigest()[:16]


def starting_state(params: LakeParameters, load: float) -> float:
    """The clear-water equilibrium at ``load`` where it exists, else the only stable one [kg]."""
    stable = [e for e in equilibria(params, load) if e.stable]
    return stable[0].p if stable else equilibria(params, load)[0].p


def new_history(lake: Lake) -> History:
    params, profile = lake_from_store(lake)
    load = profile.load_kg_per_yr
    start = lake.get("start") or {}
    return {
        "lake_key": lake_key(lake),
        "year": [int(start.get("year", 0))],
        "load": [load],
        "p": [float(start["p"]) if "p" in start else starting_state(params, load)],
        "event": ["start"],
    }


def _trim(h: History) -> History:
    extra = len(h["year"]) - MAX_HISTORY
    if extra > 0:
        for k in ("year", "load", "p", "event"):
            h[k] = h[k][extra:]
    return h


def advance(history: History, params: LakeParameters, load: float, years: int, event: str = "load") -> History:
    """Run the annual map ``years`` years at ``load`` from the last state and append."""
    years = int(years)
    if not 1 <= years <= MAX_YEARS:
        raise ValueError(f"years per change must be between 1 and {MAX_YEARS}")
    traj = simulate(params, history["p"][-1], np.full(years, float(load)))
    y0 = history["year"][-1]
    h = {k: list(v) if isinstance(v, list) else v for k, v in history.items()}
    if float(load) != h["load"][-1]:
        # the load changes first (a horizontal step on the figure), then the lake responds
        h["year"].append(y0)
        h["load"].append(float(load))
        h["p"].append(h["p"][-1])
        h["event"].append(event)
        event = ""
    h["year"] += list(range(y0 + 1, y0 + years + 1))
    h["load"] += [float(load)] * years
    h["p"] += [float(v) for v in traj.p[1:]]
    h["event"] += [event] + [""] * (years - 1)
    return _trim(h)


def remove_p(history: History, params: LakeParameters, kg: float, years: int) -> History:
    """Take ``kg`` of P out of the lake now, then let ``years`` years pass at the same load."""
    kg = float(kg)
    h = {k: list(v) if isinstance(v, list) else v for k, v in history.items()}
    h["year"].append(h["year"][-1])
    h["load"].append(h["load"][-1])
    h["p"].append(max(h["p"][-1] - kg, 0.0))
    h["event"].append("removal")
    return advance(h, params, h["load"][-1], years, event="after-removal")
