"""The session's history of the lake: every state it passed through, advanced by the annual map.

Pure functions on the ``HISTORY_STORE`` dict (see :class:`app.stores.HistoryStore`):
they take the stored dict and return a new one.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from turnback.model.dynamics import simulate
from turnback.model.params import LakeParameters

MAX_HISTORY = 4000  # points kept per session; the oldest are dropped beyond this
MAX_YEARS_PER_CHANGE = 200
MAX_SETTLE_YEARS = 1000  # "run until settled" runs at most this many years at once

History = dict[str, Any]


def _trim(h: History) -> History:
    extra = len(h["year"]) - MAX_HISTORY
    if extra > 0:
        for k in ("year", "load", "p", "event"):
            h[k] = h[k][extra:]
    return h


def _copy(history: Mapping[str, Any]) -> History:
    return {k: list(v) if isinstance(v, list) else v for k, v in history.items()}


def advance(
    history: Mapping[str, Any],
    params: LakeParameters,
    load: float,
    years: int,
    event: str = "load",
    limit: int = MAX_YEARS_PER_CHANGE,
) -> History:
    """Run the annual map ``years`` years at ``load`` from the last state and append."""
    years = int(years)
    if not 1 <= years <= limit:
        raise ValueError(f"years per change must be between 1 and {limit}")
    traj = simulate(params, history["p"][-1], np.full(years, float(load)))
    y0 = history["year"][-1]
    h = _copy(history)
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


def remove_p(history: Mapping[str, Any], params: LakeParameters, kg: float, years: int) -> History:
    """Take ``kg`` of P out of the lake now, then let ``years`` years pass at the same load."""
    kg = float(kg)
    h = _copy(history)
    h["year"].append(h["year"][-1])
    h["load"].append(h["load"][-1])
    h["p"].append(max(h["p"][-1] - kg, 0.0))
    h["event"].append("removal")
    return advance(h, params, h["load"][-1], years, event="after-removal")


def restart(history: Mapping[str, Any]) -> History:
    """A history that starts again at the last state."""
    new = dict(history)
    for k in ("year", "load", "p"):
        new[k] = [history[k][-1]]
    new["event"] = ["start"]
    return new


# --------------------------------------------------------------------------
# the tail: what a load change needs, so the whole history never travels
# --------------------------------------------------------------------------
def tail_of(history: Mapping[str, Any]) -> dict[str, Any]:
    """The last state of a history and its length (the ``HISTORY_TAIL`` store)."""
    return {
        "lake_key": history["lake_key"],
        "year": history["year"][-1],
        "load": history["load"][-1],
        "p": history["p"][-1],
        "n": len(history["year"]),
        "first": history["year"][0],
    }


def from_tail(tail: Mapping[str, Any]) -> History:
    """A one-point history at the tail's state (the appended points follow it)."""
    return {
        "lake_key": tail["lake_key"],
        "year": [tail["year"]],
        "load": [tail["load"]],
        "p": [tail["p"]],
        "event": [""],
    }


def appended(short: Mapping[str, Any]) -> History:
    """The points a step added to a one-point history made by :func:`from_tail`."""
    return {k: list(short[k][1:]) for k in ("year", "load", "p", "event")}
