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
    history: Mapping[str, Any], params: LakeParameters, load: float, years: int, event: str = "load"
) -> History:
    """Run the annual map ``years`` years at ``load`` from the last state and append."""
    years = int(years)
    if not 1 <= years <= MAX_YEARS_PER_CHANGE:
        raise ValueError(f"years per change must be between 1 and {MAX_YEARS_PER_CHANGE}")
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
