r"""When a lake counts as clear, and when it has recovered.

Clear state
    By default a lake is *clear* in year ``t`` when its P is below the
    unstable separatrix (middle equilibrium) of the untreated lake at that
    year's scheduled load; beyond the folds the threshold is held at the P of
    the nearest fold (the tipping-fold P above the tipping load, the
    recovery-fold P below the recovery load), which makes it continuous in
    the load.  Year 0 uses the load of year 1.  This is the rule
    ``clear_threshold = "separatrix"``: clear means "on the clear side of the
    basin boundary".  Below the recovery load every state is bound for clear
    water, so a lake can count as clear while its TP is still falling.  The
    rule ``"tipping_fold"`` instead uses the fixed TP of the tipping fold, the
    highest TP any clear-water equilibrium has ("TP within the clear-water
    range"); a number gives a fixed TP [µg L⁻¹] (needed for lakes without
    folds).  The threshold is that of the untreated lake.  "Turbid" means not
    clear.

Recovery time
    The first year ``t >= 0`` in which the lake is clear and stays clear for
    ``recovery_stay_years`` consecutive years (``t`` to ``t + k − 1``, default
    ``k = 3``), all within the horizon; members that never do are "not
    recovered".

Parameter draws
    A one-box lake with ``parameter_draws`` judges each member by its own
    lake (:func:`draw_thresholds_by_year`): its own separatrix or tipping
    fold; a drawn lake without folds takes the plan lake's threshold.  A
    fixed TP is the same for every member.

Two-pool lakes
    The same rules act on the *water* P, the P that monitoring sees, with
    the folds and the saddle of the two-pool curve
    (:mod:`turnback.model.two_pool_equilibrium`).  The true boundary between
    the clear and turbid basins is the saddle's stable manifold, a curve in
    the (water P, sediment P) plane; the rule replaces it by the line of
    constant water P through the saddle.  A lake that dips below that line
    while it holds so much sediment P that it goes back to turbid counts as
    clear for those years and turbid again afterwards (a relapse in the
    outcomes); requiring ``recovery_stay_years`` consecutive clear years
    guards the recovery year against such passages.  After a load cut below
    the recovery load, the case of a plan, there is only the clear state, and
    the rule counts the years until the water P falls below the recovery
    fold's water P, which is what the sediment delays.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from .equilibrium import Fold
from .lake_models import AnyLakeParameters, lake_equilibria, lake_folds
from .parameter_draws import DrawFolds, ParameterDraws
from .plan import NO_FOLDS, Scenario, ScenarioLake
from .validation import FieldError

__all__ = [
    "clear_threshold_kg",
    "draw_thresholds_by_year",
    "recovery_years",
    "scenario_clear_below_kg",
    "thresholds_by_year",
]


def scenario_clear_below_kg(lake: ScenarioLake, scenario: Scenario) -> float | None:
    """The scenario's fixed clear threshold [kg], or None for the separatrix rule.

    ``"tipping_fold"`` gives the P of the tipping fold; a number is a TP [µg L⁻¹].

    Raises
    ------
    ValueError
        When a fold-based rule is asked of a lake without folds.
    """
    rule = scenario.clear_threshold
    if not isinstance(rule, str):
        return float(lake.mass(rule))
    fs = lake_folds(lake.params)
    if not fs:
        raise FieldError(("clear_threshold",), NO_FOLDS)
    return None if rule == "separatrix" else fs[0].p


def _separatrix_kg(params: AnyLakeParameters, load: float, fs: tuple[Fold, ...]) -> float:
    tip, rec = fs[0], fs[1]
    if load >= tip.load:
        return tip.p
    if load <= rec.load:
        return rec.p
    mids = [e.p for e in lake_equilibria(params, load) if e.branch == "middle"]
    if mids:
        return mids[0]
    # numerically at a fold: the nearer fold's P
    return tip.p if abs(load - tip.load) <= abs(load - rec.load) else rec.p


def clear_threshold_kg(
    params: AnyLakeParameters, load: float, *, clear_below_kg: float | None = None, fs: tuple[Fold, ...] | None = None
) -> float:
    """Lake P [kg] below which the lake counts as clear at ``load`` [kg yr⁻¹].

    The unstable separatrix ``P_u(L)`` (middle equilibrium of
    ``L − s P + r P^q/(m^q + P^q) = 0``, Carpenter, Ludwig & Brock 1999),
    held at the tipping-fold P for loads at or above the tipping load and at
    the recovery-fold P at or below the recovery load; or ``clear_below_kg``
    when given.

    Raises
    ------
    ValueError
        When the lake has no folds and no fixed threshold is given.
    """
    if clear_below_kg is not None:
        return float(clear_below_kg)
    if fs is None:
        fs = lake_folds(params)
    if not fs:
        raise FieldError(("clear_threshold",), NO_FOLDS)
    return _separatrix_kg(params, float(load), fs)


def thresholds_by_year(
    params: AnyLakeParameters, loads: NDArray[np.float64], clear_below_kg: float | None
) -> NDArray[np.float64]:
    """Threshold [kg] for years 0 … T: year 0 uses year 1's load."""
    fs = lake_folds(params)
    cache: dict[float, float] = {}
    out = np.empty(loads.size + 1)
    for i, load in enumerate(np.concatenate([loads[:1], loads])):
        key = float(load)
        if key not in cache:
            cache[key] = clear_threshold_kg(params, key, clear_below_kg=clear_below_kg, fs=fs)
        out[i] = cache[key]
    return out


def draw_thresholds_by_year(
    draws: ParameterDraws,
    scenario: Scenario,
    nominal_kg: NDArray[np.float64],
    fd: DrawFolds | None = None,
) -> NDArray[np.float64]:
    """Clear threshold [kg] of each parameter draw in years 0 … T, shape (n, T + 1).

    ``nominal_kg`` (T + 1,) is the plan lake's own threshold
    (:func:`thresholds_by_year`): the threshold of a fixed TP, and of any draw
    without folds.
    """
    rule = scenario.clear_threshold
    n = draws.n
    if not isinstance(rule, str):
        return np.broadcast_to(nominal_kg, (n, nominal_kg.size))
    fd = fd or draws.folds()
    if rule == "tipping_fold":
        per = np.broadcast_to(fd.tipping_p[:, None], (n, nominal_kg.size))
    else:
        loads = scenario.loads()
        year_loads = np.concatenate([loads[:1], loads])
        uniq, inv = np.unique(year_loads, return_inverse=True)
        per = draws.separatrix_kg(uniq, fd)[:, inv]
    out: NDArray[np.float64] = np.where(np.isfinite(per), per, nominal_kg[None, :])
    return out


def recovery_years(clear: NDArray[np.bool_], stay_years: int) -> NDArray[np.float64]:
    """First year each member is clear and stays clear ``stay_years`` years; NaN when it never does.

    Parameters
    ----------
    clear : ndarray of bool, shape (members, T + 1)
        Clear flag in years 0 … T.
    stay_years : int
        ``k >= 1``: the run ``t … t + k − 1`` must be clear and end by year T.
    """
    clear = np.asarray(clear, dtype=bool)
    n, width = clear.shape
    k = int(stay_years)
    out = np.full(n, np.nan)
    if k < 1 or k > width:
        return out
    w = width - k + 1
    if k <= 16:  # ok[:, t]: clear in every year t … t + k − 1
        ok = clear[:, :w].copy()
        for j in range(1, k):
            ok &= clear[:, j : j + w]
    else:
        c = np.concatenate([np.zeros((n, 1), dtype=np.int64), np.cumsum(clear, axis=1)], axis=1)
        ok = (c[:, k:] - c[:, :-k]) == k
    has = ok.any(axis=1)
    out[has] = np.argmax(ok[has], axis=1)
    return out


# --------------------------------------------------------------------------
# random numbers shared by every ensemble
