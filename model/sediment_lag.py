r"""The sediment legacy in time: where a two-pool lake is heading, and the years until clear water.

At a load ``L`` held constant, the annual map of :mod:`turnback.model.dynamics`
(the two-pool form after Carpenter 2005)

.. math::

    P_{t+1} = P_t + L - (s + h) P_t + r M_t g(P_t), \qquad
    M_{t+1} = M_t + s P_t - b M_t - r M_t g(P_t)

carries the lake from its present water P ``P`` and sediment P ``M`` [kg]
towards a stable equilibrium (:func:`turnback.model.two_pool_equilibrium.equilibria`).
Unlike the one-box lake, the state now has two numbers, and the water can
stay turbid for years after a load cut while the sediment P drains and keeps
feeding the water (Søndergaard, Jensen & Jeppesen 2003; Jeppesen et al. 2005).

* :func:`years_to_clear` counts the years, at a constant load, until the
  water P first falls below the clear-state threshold of the plans
  (:func:`turnback.model.clear_state.clear_threshold_kg`: the saddle's water
  P at this load, held at the fold's P beyond the folds) — the lag until
  clear water.  It works for both lake models.
* :func:`two_pool_outlook` is the two-pool counterpart of
  :func:`turnback.model.outlook.lake_outlook`: the same
  :class:`~turnback.model.outlook.Outlook`, found by running the map itself
  until both pools are within ``settle_tol`` of a stable equilibrium, plus
  the sediment P now and at the target.

References
----------
Carpenter, S. R. (2005). Eutrophication of aquatic ecosystems: bistability
and soil phosphorus. PNAS 102(29), 10002–10005.

Søndergaard, M., Jensen, J. P. & Jeppesen, E. (2003). Role of sediment and
internal loading of phosphorus in shallow lakes. Hydrobiologia 506–509,
135–145.

Jeppesen, E. et al. (2005). Lake responses to reduced nutrient loading – an
analysis of contemporary long-term data from 35 case studies. Freshwater
Biology 50, 1747–1771.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .clear_state import clear_threshold_kg
from .dynamics import simulate
from .lake_models import AnyLakeParameters, lake_folds
from .outlook import Direction, Outlook, Side
from .two_pool import TwoPoolParameters
from .two_pool_equilibrium import equilibria

__all__ = ["TwoPoolOutlook", "sediment_lag_years", "two_pool_outlook", "years_to_clear"]

#: years run per call of the map while searching
_CHUNK = 64


def years_to_clear(
    params: AnyLakeParameters,
    load: float,
    p0: float,
    m0: float | None = None,
    *,
    max_years: int = 1000,
) -> int | None:
    """Years at constant ``load`` [kg yr⁻¹] until the water P first falls below the clear threshold.

    Parameters
    ----------
    params : LakeParameters or TwoPoolParameters
    load : float
        Load held from now on [kg yr⁻¹].
    p0 : float
        (Water) P now [kg].
    m0 : float, optional
        Two-pool lake: sediment P now [kg] (default: in balance with ``p0``).
    max_years : int
        Longest run tried [yr].

    Returns
    -------
    int or None
        0 when the lake is clear now; the first year ``t`` with
        ``P_t < threshold``; None when the lake has no folds (no clear state
        to count to) or stays turbid for ``max_years``.
    """
    fs = lake_folds(params)
    if not fs:
        return None
    threshold = clear_threshold_kg(params, load, fs=fs)
    if p0 < threshold:
        return 0
    p, m = float(p0), m0
    done = 0
    while done < max_years:
        n = min(_CHUNK, max_years - done)
        if isinstance(params, TwoPoolParameters):
            traj = simulate(params, p, np.full(n, float(load)), m0=m)
            assert traj.m is not None
            m = float(traj.m[-1])
        else:
            traj = simulate(params, p, np.full(n, float(load)))
        path = traj.p[1:]
        below = np.flatnonzero(path < threshold)
        if below.size:
            return done + int(below[0]) + 1
        done += n
        p = float(path[-1])
    return None


@dataclass(frozen=True)
class TwoPoolOutlook(Outlook):
    """:class:`~turnback.model.outlook.Outlook` of a two-pool lake, with its sediment P.

    Attributes
    ----------
    m_now : float
        Sediment P now [kg].
    m_target : float
        Sediment P of the state the lake settles in [kg].
    """

    m_now: float = 0.0
    m_target: float = 0.0


def _side(params: TwoPoolParameters, load: float, p: float) -> Side:
    if not lake_folds(params):
        return "single"
    return "clear" if p < clear_threshold_kg(params, load) else "turbid"


def two_pool_outlook(
    params: TwoPoolParameters,
    load: float,
    p_now: float,
    m_now: float,
    *,
    settle_tol: float = 0.02,
    max_years: int = 2000,
) -> TwoPoolOutlook:
    """Where a two-pool lake is, where it is heading at ``load`` held constant, which way and how long.

    The map is run from ``(p_now, m_now)`` until both pools come within
    ``settle_tol`` (relative) of one stable equilibrium and stay there; the
    years counted are the first year from which they stay.  ``direction``
    follows the water P (``worse`` when it rises towards the target).

    Parameters
    ----------
    params : TwoPoolParameters
    load : float
        Load held [kg yr⁻¹].
    p_now, m_now : float
        Water P and sediment P now [kg].
    settle_tol : float
        Relative distance that counts as settled [–].
    max_years : int
        Longest run tried [yr].

    Returns
    -------
    TwoPoolOutlook
        ``years`` is None when the lake has not settled within ``max_years``;
        the target is then the stable state nearest to where the run ended.
    """
    if not 0.0 < settle_tol < 1.0:
        raise ValueError("settle_tol must be a fraction in (0, 1)")
    eqs = equilibria(params, load)
    stable = [e for e in eqs if e.map_stable] or list(eqs)
    if not stable:
        raise ValueError(f"no equilibrium at load {load:g} kg/yr")
    fs = lake_folds(params)

    def within(p: np.ndarray, m: np.ndarray, e: object) -> np.ndarray:
        ep, em = e.p, e.m  # type: ignore[attr-defined]
        return (np.abs(p - ep) <= settle_tol * max(ep, 1e-12 * params.m)) & (
            np.abs(m - em) <= settle_tol * max(em, 1e-12 * params.m)
        )

    ps, ms = [np.array([p_now], dtype=float)], [np.array([m_now], dtype=float)]
    p, m = float(p_now), float(m_now)
    target = None
    done = 0
    while True:
        last_p, last_m = np.array([p]), np.array([m])
        hits = [e for e in stable if within(last_p, last_m, e)[0]]
        if hits:
            target = hits[0]
            break
        if done >= max_years:
            break
        n = min(_CHUNK, max_years - done)
        traj = simulate(params, p, np.full(n, float(load)), m0=m)
        assert traj.m is not None
        ps.append(traj.p[1:])
        ms.append(traj.m[1:])
        p, m = float(traj.p[-1]), float(traj.m[-1])
        done += n
    path_p, path_m = np.concatenate(ps), np.concatenate(ms)
    years: int | None
    if target is None:
        target = min(stable, key=lambda e: abs(e.p - p) / max(e.p, 1e-12) + abs(e.m - m) / max(e.m, 1e-12))
        years = None
    else:
        ok = within(path_p, path_m, target)
        outside = np.flatnonzero(~ok)
        years = 0 if outside.size == 0 else int(outside[-1]) + 1
    heading: Side = "single" if not fs else ("clear" if target.branch == "lower" else "turbid")
    direction: Direction = "steady" if years == 0 else ("worse" if target.p > p_now else "better")
    now = heading if years == 0 else _side(params, load, p_now)
    return TwoPoolOutlook(
        load=float(load),
        p_now=float(p_now),
        now=now,
        heading=heading,
        p_target=float(target.p),
        direction=direction,
        years=years,
        max_years=max_years,
        settle_tol=settle_tol,
        m_now=float(m_now),
        m_target=float(target.m),
    )


def sediment_lag_years(two_pool_years: float | None, one_box_years: float | None) -> float | None:
    """Lag from the sediment [yr]: recovery year of the two-pool lake minus that of its one-box comparison.

    None when either lake does not recover (a median recovery year of None).
    """
    if two_pool_years is None or one_box_years is None:
        return None
    return float(two_pool_years) - float(one_box_years)
