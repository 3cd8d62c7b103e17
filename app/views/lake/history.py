"""The session's history of the lake: every state it passed through, advanced by the annual map.

Pure functions on the ``HISTORY_STORE`` dict (see :class:`app.stores.HistoryStore`):
they take the stored dict and return a new one.  A two-pool lake's history
also carries its sediment P (``m``), advanced by the same annual map.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from turnback.model.dynamics import simulate
from turnback.model.lake_models import AnyLakeParameters
from turnback.model.sediment_lag import years_to_clear
from turnback.model.two_pool import TwoPoolParameters

MAX_HISTORY = 4000  # points kept per session; the oldest are dropped beyond this
MAX_YEARS_PER_CHANGE = 200
MAX_SETTLE_YEARS = 1000  # "run until settled" runs at most this many years at once

MAX_LAG_YEARS = 1000  # the years until clear water are counted up to this many

History = dict[str, Any]


def _keys(h: Mapping[str, Any]) -> tuple[str, ...]:
    """The per-point lists of a history: a two-pool lake's has the sediment P ``m`` too."""
    return ("year", "load", "p", "event", "m") if "m" in h else ("year", "load", "p", "event")


def _trim(h: History) -> History:
    extra = len(h["year"]) - MAX_HISTORY
    if extra > 0:
        for k in _keys(h):
            h[k] = h[k][extra:]
    return h


def _copy(history: Mapping[str, Any]) -> History:
    return {k: list(v) if isinstance(v, list) else v for k, v in history.items()}


def advance(
    history: Mapping[str, Any],
    params: AnyLakeParameters,
    load: float,
    years: int,
    event: str = "load",
    limit: int = MAX_YEARS_PER_CHANGE,
) -> History:
    """Run the annual map ``years`` years at ``load`` from the last state and append.

    A two-pool lake runs from its last water and sediment P (``m``) and
    appends both.
    """
    years = int(years)
    if not 1 <= years <= limit:
        raise ValueError(f"years per change must be between 1 and {limit}")
    two = isinstance(params, TwoPoolParameters)
    if two and "m" not in history:
        raise ValueError("a two-pool lake's history must carry its sediment P")
    m0 = history["m"][-1] if two else None
    traj = simulate(params, history["p"][-1], np.full(years, float(load)), m0=m0)
    y0 = history["year"][-1]
    h = _copy(history)
    if float(load) != h["load"][-1]:
        # the load changes first (a horizontal step on the figure), then the lake responds
        h["year"].append(y0)
        h["load"].append(float(load))
        h["p"].append(h["p"][-1])
        if two:
            h["m"].append(h["m"][-1])
        h["event"].append(event)
        event = ""
    h["year"] += list(range(y0 + 1, y0 + years + 1))
    h["load"] += [float(load)] * years
    h["p"] += [float(v) for v in traj.p[1:]]
    if two:
        assert traj.m is not None
        h["m"] += [float(v) for v in traj.m[1:]]
    h["event"] += [event] + [""] * (years - 1)
    return _trim(h)


def remove_p(history: Mapping[str, Any], params: AnyLakeParameters, kg: float, years: int) -> History:
    """Take ``kg`` of P out of the lake (the water) now, then let ``years`` years pass at the same load."""
    kg = float(kg)
    h = _copy(history)
    h["year"].append(h["year"][-1])
    h["load"].append(h["load"][-1])
    h["p"].append(max(h["p"][-1] - kg, 0.0))
    if "m" in h:
        h["m"].append(h["m"][-1])
    h["event"].append("removal")
    return advance(h, params, h["load"][-1], years, event="after-removal")


def restart(history: Mapping[str, Any]) -> History:
    """A history that starts again at the last state."""
    new = dict(history)
    for k in _keys(history):
        new[k] = [history[k][-1]]
    new["event"] = ["start"]
    return new


def last_change(history: Mapping[str, Any], params: AnyLakeParameters) -> dict[str, Any] | None:
    """The history's last inflow change or removal, and the years from it until clear water.

    Returns ``{"year", "lag"}``: the session year of the change and the years
    the annual map needs from the state just after it, at the load after it,
    until the water P falls below the clear-state threshold
    (:func:`turnback.model.sediment_lag.years_to_clear`; 0 when clear at
    once, None when not within :data:`MAX_LAG_YEARS` or the lake has no
    folds).  None when the history holds no change.
    """
    load, event = history["load"], history["event"]
    for i in range(len(load) - 1, 0, -1):
        if load[i] != load[i - 1] or event[i] == "removal":
            m0 = history["m"][i] if "m" in history else None
            lag = years_to_clear(params, load[i], history["p"][i], m0, max_years=MAX_LAG_YEARS)
            return {"year": int(history["year"][i]), "lag": lag}
    return None


# --------------------------------------------------------------------------
# the tail: what a load change needs, so the whole history never travels
# --------------------------------------------------------------------------
def tail_of(history: Mapping[str, Any], change: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The last state of a history and its length (the ``HISTORY_TAIL`` store).

    A two-pool lake's tail carries the sediment P (``m``); ``change`` is the
    last inflow change and its years until clear water (:func:`last_change`).
    """
    tail = {
        "lake_key": history["lake_key"],
        "year": history["year"][-1],
        "load": history["load"][-1],
        "p": history["p"][-1],
        "n": len(history["year"]),
        "first": history["year"][0],
    }
    if "m" in history:
        tail["m"] = history["m"][-1]
    if change is not None:
        tail["change"] = dict(change)
    return tail


def from_tail(tail: Mapping[str, Any]) -> History:
    """A one-point history at the tail's state (the appended points follow it)."""
    short = {
        "lake_key": tail["lake_key"],
        "year": [tail["year"]],
        "load": [tail["load"]],
        "p": [tail["p"]],
        "event": [""],
    }
    if "m" in tail:
        short["m"] = [tail["m"]]
    return short


def appended(short: Mapping[str, Any]) -> History:
    """The points a step added to a one-point history made by :func:`from_tail`."""
    return {k: list(short[k][1:]) for k in _keys(short)}
