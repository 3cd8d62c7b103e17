r"""Residual-bootstrap refits of a point fit, and the folds of each refit.

A residual bootstrap (Efron & Tibshirani 1993, *An Introduction to the
Bootstrap*, ch. 8–9): residuals of the fit, centred and inflated by
``sqrt(n/(n-4))`` for the four fitted parameters (Davison & Hinkley 1997,
*Bootstrap Methods and their Application*, sec. 6.2.3, from memory), are
resampled with replacement.  The ``"recursive"`` scheme simulates each
replicate record forward from the first observed year with the fitted map
and the observed loads (the model-based time-series bootstrap of Efron &
Tibshirani 1993, sec. 8.5); ``"fixed"`` keeps the observed states as
regressors.  Each replicate is refitted (vectorised damped Gauss–Newton from
the point estimate and from the best point of a coarse profile grid) and its
folds are found with :func:`turnback.model.equilibrium.folds`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import expit

from .equilibrium import folds, regime_from_folds
from .point_fit import PointFit, as_1d, grid_starts, refit_batch, theta_to_params
from .progress import Progress, report
from .validation import FieldError

__all__ = ["DEFAULT_REPLICATES", "MIN_REPLICATES", "BootstrapDraws", "Scheme", "bootstrap_refits"]

#: Default number of bootstrap replicates.
DEFAULT_REPLICATES = 1000
#: Fewest replicates accepted; at least 500 are recommended for 90% intervals.
MIN_REPLICATES = 100

Scheme = Literal["recursive", "fixed"]


@dataclass(frozen=True, eq=False)
class BootstrapDraws:
    """The bootstrap refits, one entry per replicate.

    ``params`` has columns ``(s, r, m, q)``; ``tipping``/``recovery`` are
    the fold loads [kg yr⁻¹] and ``tipping_p``/``recovery_p`` the fold lake
    P [kg], ``nan`` for a replicate without folds; ``used`` is False for a refit
    that did not converge (left out of every summary).  The observation-error
    fit (:mod:`turnback.model.obs_fit`) hands its posterior draws over in the
    same form, with ``scheme = "posterior"``.
    """

    params: NDArray[np.float64]
    sse: NDArray[np.float64]
    used: NDArray[np.bool_]
    tipping: NDArray[np.float64]
    recovery: NDArray[np.float64]
    tipping_p: NDArray[np.float64]
    recovery_p: NDArray[np.float64]
    regime: NDArray[np.str_]
    scheme: Scheme | Literal["posterior"]

    @property
    def n(self) -> int:
        return int(self.sse.size)


def bootstrap_refits(
    point: PointFit,
    p_obs: ArrayLike,
    load: ArrayLike,
    *,
    replicates: int = DEFAULT_REPLICATES,
    scheme: Scheme = "recursive",
    rng: np.random.Generator | int | None = None,
    progress: Progress | None = None,
    chunk: int = 100,
    max_iter: int = 200,
) -> BootstrapDraws:
    """Residual-bootstrap refits of a point fit and the folds of each.

    Parameters
    ----------
    point : PointFit
        A successful fit of the same record.
    p_obs : array_like, shape (n,)
        Observed lake P in each year [kg].
    load : array_like, shape (n - 1,)
        Load of each transition [kg yr⁻¹] (the loads of years 2..n).
    replicates : int
        Number of bootstrap replicates, at least :data:`MIN_REPLICATES`.
    scheme : {"recursive", "fixed"}
        ``recursive``: replicate states are simulated with the fitted map,
        ``P*_{t+1} = F(P*_t, L_t; θ̂) · exp(e*_t)`` from ``P*_0 = P_0``;
        ``fixed``: the observed states are kept and
        ``ln P*_{t+1} = ln F(P_t, L_t; θ̂) + e*_t``.
    rng : numpy.random.Generator or int or None
    progress : callable(fraction, message), optional
        Called as replicates finish.
    chunk : int
        Replicates refitted together.
    max_iter : int
        Iteration cap of each vectorised refit.

    Returns
    -------
    BootstrapDraws

    References
    ----------
    Efron & Tibshirani (1993), An Introduction to the Bootstrap, ch. 8–9 and 13.
    """
    if point.status != "ok" or point.params is None:
        raise FieldError(("point",), "must be a successful point fit")
    if replicates < MIN_REPLICATES:
        raise FieldError(("replicates",), f"must be at least {MIN_REPLICATES} (1000 recommended)")
    if scheme not in ("recursive", "fixed"):
        raise FieldError(("scheme",), "must be 'recursive' or 'fixed'")
    x = as_1d("p_obs", p_obs)
    lt = as_1d("load", load)
    if lt.size != x.size - 1:
        raise FieldError(("load",), "must have one entry per transition (one fewer than p_obs)")
    gen = np.random.default_rng(rng)
    lo, hi = point.bounds
    theta_hat = point.theta
    res = point.residuals
    n = res.size
    pool = (res - res.mean()) * math.sqrt(n / max(n - 4, 1))
    draws = pool[gen.integers(0, n, size=(replicates, n))]

    s, r, m, q = point.params.s, point.params.r, point.params.m, point.params.q
    out_theta = np.empty((replicates, 4))
    out_sse = np.empty(replicates)
    out_conv = np.empty(replicates, dtype=bool)
    tip = np.full(replicates, np.nan)
    rec = np.full(replicates, np.nan)
    tip_p = np.full(replicates, np.nan)
    rec_p = np.full(replicates, np.nan)
    reg = np.empty(replicates, dtype="<U12")
    report(progress, 0.0, f"0 of {replicates:,} bootstrap refits")
    for start in range(0, replicates, chunk):
        stop = min(start + chunk, replicates)
        eps = draws[start:stop]
        bsz = stop - start
        if scheme == "recursive":
            states = np.empty((bsz, n + 1))
            states[:, 0] = x[0]
            pcur = np.full(bsz, x[0])
            for t in range(n):
                h = expit(q * (np.log(pcur) - math.log(m)))
                pcur = (pcur * (1.0 - s) + lt[t] + r * h) * np.exp(eps[:, t])
                states[:, t + 1] = pcur
            p_prev, p_next = states[:, :-1], states[:, 1:]
        else:
            h = expit(q * (np.log(x[:-1]) - math.log(m)))
            fitted = x[:-1] * (1.0 - s) + lt + r * h
            p_prev = np.broadcast_to(x[:-1], (bsz, n))
            p_next = fitted * np.exp(eps)
        pts, gsse = grid_starts(p_prev, p_next, lt, lo, hi)
        grid_best = pts[np.arange(bsz), np.argmin(gsse, axis=1)]
        th0 = np.concatenate([np.broadcast_to(theta_hat, (bsz, 4)), grid_best])
        th, sse, conv = refit_batch(
            th0, np.concatenate([p_prev, p_prev]), np.concatenate([p_next, p_next]), lt, lo, hi, max_iter=max_iter
        )
        pick = np.where(sse[:bsz] <= sse[bsz:], 0, bsz) + np.arange(bsz)
        out_theta[start:stop] = th[pick]
        out_sse[start:stop] = sse[pick]
        out_conv[start:stop] = conv[pick] & np.isfinite(sse[pick])
        for i in range(start, stop):
            if not out_conv[i]:
                reg[i] = ""
                continue
            fs = folds(theta_to_params(out_theta[i]))
            reg[i] = regime_from_folds(fs)
            if fs:
                tip[i], rec[i] = fs[0].load, fs[1].load
                tip_p[i], rec_p[i] = fs[0].p, fs[1].p
        report(progress, stop / replicates, f"{stop:,} of {replicates:,} bootstrap refits")
    params = np.column_stack([out_theta[:, 0], np.exp(out_theta[:, 1:])])
    return BootstrapDraws(
        params=params,
        sse=out_sse,
        used=out_conv,
        tipping=tip,
        recovery=rec,
        tipping_p=tip_p,
        recovery_p=rec_p,
        regime=reg,
        scheme=scheme,
    )
