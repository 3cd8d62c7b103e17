r"""Where the lake is, which way it is moving, and about how long it needs to settle.

At a load ``L`` held constant, the annual map of :mod:`turnback.model.dynamics`
(Carpenter, Ludwig & Brock 1999)

.. math:: P_{t+1} = P_t + L - s P_t + r \frac{P_t^q}{m^q + P_t^q}

carries the lake from its present P towards the stable equilibrium whose
basin holds it (:func:`turnback.model.management.read_state`).  For
``s < 1`` the map is increasing in ``P``, so the path is monotone: it never
overshoots and never crosses an equilibrium.  The outlook reads

* **where the lake is**: clear or turbid by the clear-state rule of
  :func:`turnback.model.clear_state.clear_threshold_kg` (below the
  separatrix at this load, held at the fold's P beyond the folds); a lake
  without folds has one state only (``"single"``);
* **where it is heading**: the attractor, clear or turbid, and its TP;
* **which way**: ``"worse"`` when lake P rises towards it, ``"better"`` when
  it falls, ``"steady"`` when it is already within ``settle_tol`` of it;
* **how long**: the years the map needs to bring P within ``settle_tol``
  (relative) of the attractor, found by running the map itself, up to
  ``max_years``.  Near a fold the approach slows (critical slowing down:
  the return time ``1/|∂f/∂P|`` grows without bound), so the count can be
  large or beyond ``max_years``.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from .clear_state import clear_threshold_kg
from .dynamics import simulate
from .equilibrium import Fold, folds
from .management import read_state
from .params import LakeParameters

__all__ = ["Outlook", "Side", "lake_outlook", "years_to_settle"]

Side = Literal["clear", "turbid", "single"]
Direction = Literal["worse", "better", "steady"]

#: Years run per call of the map while counting (the count stops at the first year within tolerance).
_CHUNK = 64


@dataclass(frozen=True)
class Outlook:
    """The lake's state now and where it is heading at a constant load.

    Attributes
    ----------
    load : float
        The load held [kg yr⁻¹].
    p_now : float
        Lake P now [kg].
    now : {"clear", "turbid", "single"}
        The state the lake is in now (``single``: the lake has no folds).
    heading : {"clear", "turbid", "single"}
        The state it settles in at this load.
    p_target : float
        Lake P of that state [kg].
    direction : {"worse", "better", "steady"}
        ``worse`` when P rises towards the target, ``better`` when it falls.
    years : int or None
        Years the map needs to come within ``settle_tol`` of ``p_target``
        (0 when it is already there); None when it needs more than ``max_years``.
    max_years : int
        The longest run tried.
    settle_tol : float
        Relative tolerance of "settled" [–].
    """

    load: float
    p_now: float
    now: Side
    heading: Side
    p_target: float
    direction: Direction
    years: int | None
    max_years: int
    settle_tol: float

    @property
    def changes_state(self) -> bool:
        """Whether the lake will end in a different state from the one it is in now."""
        return self.now != self.heading

    @property
    def settled(self) -> bool:
        return self.direction == "steady"


def years_to_settle(
    params: LakeParameters,
    p0: float,
    load: float,
    p_target: float,
    *,
    settle_tol: float = 0.02,
    max_years: int = 2000,
) -> int | None:
    """Years of the annual map at constant ``load`` until P is within ``settle_tol`` of ``p_target``.

    Parameters
    ----------
    params : LakeParameters
    p0 : float
        Starting lake P [kg].
    load : float
        Load held constant [kg yr⁻¹].
    p_target : float
        The equilibrium approached [kg] (the attractor of ``p0``).
    settle_tol : float
        Relative tolerance, ``|P_t − P*| <= settle_tol · P*``.
    max_years : int
        Longest run tried [yr].

    Returns
    -------
    int or None
        The first ``t`` with ``|P_t − P*| <= settle_tol · P*`` (0 when ``p0``
        already is), or None when no ``t <= max_years`` is.
    """
    if not 0.0 < settle_tol < 1.0:
        raise ValueError("settle_tol must be a fraction in (0, 1)")
    tol = settle_tol * max(abs(p_target), 1e-12 * params.m)
    if abs(p0 - p_target) <= tol:
        return 0
    p = float(p0)
    done = 0
    while done < max_years:
        n = min(_CHUNK, max_years - done)
        path = simulate(params, p, np.full(n, float(load))).p[1:]
        close = np.flatnonzero(np.abs(path - p_target) <= tol)
        if close.size:
            return done + int(close[0]) + 1
        done += n
        p = float(path[-1])
    return None


def _side(params: LakeParameters, load: float, p: float, fs: tuple[Fold, ...]) -> Side:
    if not fs:
        return "single"
    return "clear" if p < clear_threshold_kg(params, load, fs=fs) else "turbid"


def lake_outlook(
    params: LakeParameters,
    load: float,
    p_now: float,
    *,
    settle_tol: float = 0.02,
    max_years: int = 2000,
) -> Outlook:
    """Where the lake is, where it is heading at ``load`` held constant, which way and how long.

    Parameters
    ----------
    params : LakeParameters
    load : float
        Load held from now on [kg yr⁻¹].
    p_now : float
        Lake P now [kg].
    settle_tol : float
        Relative distance from the target that counts as settled [–].
    max_years : int
        Longest run of the map tried when counting the years [yr].

    Returns
    -------
    Outlook
    """
    fs = folds(params)
    reading = read_state(params, load, p_now, settle_tol=settle_tol)
    target = reading.attractor.p
    heading: Side = "single" if not fs else ("clear" if reading.attractor.branch == "lower" else "turbid")
    if not fs:
        heading = "single"
    years = years_to_settle(params, p_now, load, target, settle_tol=settle_tol, max_years=max_years)
    if years == 0:
        direction: Direction = "steady"
    else:
        direction = "worse" if target > p_now else "better"
    now = _side(params, load, p_now, fs)
    if years == 0:
        now = heading  # settled: the state it is in is the one it sits at
    return Outlook(
        load=float(load),
        p_now=float(p_now),
        now=now,
        heading=heading,
        p_target=float(target),
        direction=direction,
        years=years,
        max_years=max_years,
        settle_tol=settle_tol,
    )
