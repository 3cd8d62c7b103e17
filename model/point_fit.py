r"""The point fit: conditional least squares of the annual map on the log scale.

The error model, the working coordinates ``(s, ln r, ln m, ln q)`` and the
bounds are described in :mod:`turnback.model.fit`.  This module holds the
residuals and their Jacobian, vectorised over many records at once, the
profile grid that seeds the optimiser, the damped Gauss–Newton refit used by
the bootstrap, and :func:`fit_transitions`, the multi-start
:func:`scipy.optimize.least_squares` fit with its standard errors and
residual diagnostics.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import least_squares
from scipy.special import expit

from .params import LakeParameters
from .validation import FieldError

__all__ = [
    "PARAM_NAMES",
    "PARAM_UNITS",
    "FitBounds",
    "ParameterEstimate",
    "PointFit",
    "ResidualDiagnostics",
    "as_1d",
    "fit_transitions",
    "grid_starts",
    "refit_batch",
    "theta_to_params",
]

PARAM_NAMES = ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")
PARAM_UNITS = ("[yr⁻¹]", "[kg yr⁻¹]", "[kg]", "[–]")


@dataclass(frozen=True)
class FitBounds:
    """Box bounds of the fit.

    ``loss_rate`` [yr⁻¹] and ``recycling_exponent`` [–] are absolute;
    ``recycling_max`` is in multiples of the largest observed lake P per
    year and ``recycling_half`` in multiples of the smallest (low end) and
    largest (high end) observed lake P.
    """

    loss_rate: tuple[float, float] = (0.001, 0.999)
    recycling_max: tuple[float, float] = (1.0e-4, 10.0)
    recycling_half: tuple[float, float] = (0.1, 10.0)
    recycling_exponent: tuple[float, float] = (1.0, 20.0)

    def __post_init__(self) -> None:
        for name in ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent"):
            lo, hi = getattr(self, name)
            if not (math.isfinite(lo) and math.isfinite(hi) and 0.0 < lo < hi):
                raise ValueError(f"bounds for {name} must be two finite numbers 0 < low < high; got {(lo, hi)}")
        if self.loss_rate[1] >= 1.0:
            raise ValueError("the upper bound of loss_rate must be below 1 yr⁻¹ for the lognormal error model")
        if self.recycling_exponent[0] < 1.0:
            raise ValueError("the lower bound of recycling_exponent must be at least 1")

    def working(self, p_obs: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Bounds in the working coordinates ``(s, ln r, ln m, ln q)`` for this record."""
        p_min, p_max = float(np.min(p_obs)), float(np.max(p_obs))
        lo = np.array(
            [
                self.loss_rate[0],
                math.log(self.recycling_max[0] * p_max),
                math.log(self.recycling_half[0] * p_min),
                math.log(self.recycling_exponent[0]),
            ]
        )
        hi = np.array(
            [
                self.loss_rate[1],
                math.log(self.recycling_max[1] * p_max),
                math.log(self.recycling_half[1] * p_max),
                math.log(self.recycling_exponent[1]),
            ]
        )
        return lo, hi


@dataclass(frozen=True)
class ParameterEstimate:
    """One fitted parameter.

    ``std_error`` is the asymptotic standard error from the Jacobian,
    ``σ̂² (JᵀJ)⁻¹`` transformed by the delta method; ``None`` when the
    estimate is at a bound (``at_bound``) or the data do not inform it
    (``identified`` False: the Jacobian is singular along it).
    """

    name: str
    value: float
    std_error: float | None
    unit: str
    at_bound: bool
    identified: bool = True


@dataclass(frozen=True)
class ResidualDiagnostics:
    """Residuals of the fit on the log scale, ``ln P_{t+1} - ln F``.

    Attributes
    ----------
    n : int
        Number of annual transitions.
    sd : float
        Residual standard deviation ``sqrt(SSE/(n-4))`` [–] (≈ coefficient
        of variation of the annual step).
    lag1_autocorrelation : float
        ``Σ e_t e_{t+1} / Σ e_t²`` of the centred residuals; near 0 for
        independent errors (about ±2/√n by chance).
    shapiro_w, shapiro_p : float
        Shapiro–Wilk test of normality of the residuals (scipy.stats.shapiro).
    """

    n: int
    sd: float
    lag1_autocorrelation: float
    shapiro_w: float
    shapiro_p: float


@dataclass(frozen=True, eq=False)
class PointFit:
    """The conditional least-squares (maximum-likelihood) fit.

    ``status`` is ``"ok"`` or ``"failed"`` (no start converged; ``params``
    is ``None`` and ``message`` says why).  ``theta`` holds the working
    coordinates ``(s, ln r, ln m, ln q)``, ``bounds`` their box.
    """

    status: Literal["ok", "failed"]
    message: str
    params: LakeParameters | None
    estimates: tuple[ParameterEstimate, ...]
    diagnostics: ResidualDiagnostics | None
    residuals: NDArray[np.float64]
    sse: float
    theta: NDArray[np.float64]
    bounds: tuple[NDArray[np.float64], NDArray[np.float64]]
    n_starts: int
    nfev: int


def _resid(
    theta: NDArray[np.float64], log_p: NDArray[np.float64], p: NDArray[np.float64], load: NDArray[np.float64], y: Any
) -> NDArray[np.float64]:
    """Residuals ``y - ln F`` for working parameters ``theta`` (B, 4); states (B, T) or (T,)."""
    s = theta[:, 0:1]
    r = np.exp(theta[:, 1:2])
    q = np.exp(theta[:, 3:4])
    h = expit(q * (log_p - theta[:, 2:3]))
    out: NDArray[np.float64] = y - np.log(p * (1.0 - s) + load + r * h)
    return out


def _resid_jac(
    theta: NDArray[np.float64], log_p: NDArray[np.float64], p: NDArray[np.float64], load: NDArray[np.float64], y: Any
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Residuals (B, T) and their Jacobian (B, T, 4) in ``(s, ln r, ln m, ln q)``.

    With ``h = expit(q (ln P - ln m))`` and ``F = P (1-s) + L + r h``:
    ``∂e/∂s = P/F``, ``∂e/∂ln r = -r h/F``, ``∂e/∂ln m = q r h (1-h)/F``,
    ``∂e/∂ln q = -q (ln P - ln m) r h (1-h)/F``.
    """
    s = theta[:, 0:1]
    r = np.exp(theta[:, 1:2])
    q = np.exp(theta[:, 3:4])
    d = log_p - theta[:, 2:3]
    h = expit(q * d)
    big_f = p * (1.0 - s) + load + r * h
    e = y - np.log(big_f)
    inv = 1.0 / big_f
    rh1 = r * h * (1.0 - h) * q * inv
    b, t = e.shape
    jac = np.empty((b, t, 4))
    jac[..., 0] = np.broadcast_to(p * inv, (b, t))
    jac[..., 1] = -r * h * inv
    jac[..., 2] = rh1
    jac[..., 3] = -rh1 * d
    return e, jac


def theta_to_params(theta: NDArray[np.float64]) -> LakeParameters:
    return LakeParameters(
        loss_rate=float(theta[0]),
        recycling_max=float(math.exp(theta[1])),
        recycling_half=float(math.exp(theta[2])),
        recycling_exponent=float(math.exp(theta[3])),
    )


_GRID_Q = np.log(np.array([1.2, 1.6, 2.2, 3.0, 4.0, 5.5, 7.5, 10.0, 14.0, 19.0]))


def grid_starts(
    p_prev: NDArray[np.float64],
    p_next: NDArray[np.float64],
    load: NDArray[np.float64],
    lo: NDArray[np.float64],
    hi: NDArray[np.float64],
    n_m: int = 12,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Profile grid over ``(ln m, ln q)`` with ``(s, r)`` by weighted linear least squares.

    For fixed ``m`` and ``q`` the step ``P_{t+1} - P_t - L = -s P_t + r h_t``
    is linear in ``s`` and ``r``; weights ``1/P_{t+1}`` approximate the log
    scale.  Returns the grid's working points (B, G, 4) and their log-scale
    SSE (B, G), for states of shape (B, T).
    """
    ln_m = np.linspace(lo[2], hi[2], n_m)
    ln_q = _GRID_Q[(_GRID_Q >= lo[3]) & (_GRID_Q <= hi[3])]
    if ln_q.size == 0:
        ln_q = np.array([0.5 * (lo[3] + hi[3])])
    mm, qq = np.meshgrid(ln_m, ln_q, indexing="ij")
    mm, qq = mm.ravel(), qq.ravel()  # (G,)
    log_p = np.log(p_prev)[:, None, :]  # (B, 1, T)
    h = expit(np.exp(qq)[None, :, None] * (log_p - mm[None, :, None]))  # (B, G, T)
    w = 1.0 / p_next[:, None, :]
    x1 = -p_prev[:, None, :] * w
    x2 = h * w
    yy = (p_next - p_prev - load)[:, None, :] * w
    a11 = np.sum(x1 * x1, axis=-1)
    a12 = np.sum(x1 * x2, axis=-1)
    a22 = np.sum(x2 * x2, axis=-1)
    b1 = np.sum(x1 * yy, axis=-1)
    b2 = np.sum(x2 * yy, axis=-1)
    det = a11 * a22 - a12 * a12
    with np.errstate(divide="ignore", invalid="ignore"):
        s = (a22 * b1 - a12 * b2) / det
        r = (a11 * b2 - a12 * b1) / det
    s = np.clip(np.nan_to_num(s, nan=0.5 * (lo[0] + hi[0])), lo[0], hi[0])
    r = np.clip(np.nan_to_num(r, nan=math.exp(lo[1])), math.exp(lo[1]), math.exp(hi[1]))
    big_f = p_prev[:, None, :] * (1.0 - s[..., None]) + load + r[..., None] * h
    sse = np.sum((np.log(p_next)[:, None, :] - np.log(big_f)) ** 2, axis=-1)
    b = p_prev.shape[0]
    pts = np.stack([s, np.log(r), np.broadcast_to(mm, (b, mm.size)), np.broadcast_to(qq, (b, qq.size))], axis=-1)
    return pts, sse


def refit_batch(
    theta0: NDArray[np.float64],
    p_prev: NDArray[np.float64],
    p_next: NDArray[np.float64],
    load: NDArray[np.float64],
    lo: NDArray[np.float64],
    hi: NDArray[np.float64],
    *,
    max_iter: int = 200,
    ftol: float = 1e-10,
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.bool_]]:
    """Refit many records at once by damped Gauss–Newton (Levenberg–Marquardt) within bounds.

    Parameters
    ----------
    theta0 : ndarray, shape (B, 4)
        Starting points in ``(s, ln r, ln m, ln q)``.
    p_prev, p_next : ndarray, shape (B, T) or (T,)
        Lake P [kg] before and after each transition.
    load : ndarray, shape (T,)
        Load of each transition [kg yr⁻¹].
    lo, hi : ndarray, shape (4,)
        Box bounds in working coordinates.
    max_iter : int
        Iteration cap.
    ftol : float
        Converged when an accepted step lowers the SSE by less than
        ``ftol · (1 + SSE)`` or the projected gradient vanishes.

    Returns
    -------
    theta : ndarray (B, 4), sse : ndarray (B,), converged : ndarray of bool (B,)

    Notes
    -----
    Each replicate has its own damping ``λ`` (Marquardt scaling by the
    diagonal of ``JᵀJ``); a coordinate at a bound whose gradient points out
    of the box is held fixed for that step.
    """
    b = theta0.shape[0]
    p_prev = np.broadcast_to(p_prev, (b, load.size))
    p_next = np.broadcast_to(p_next, (b, load.size))
    log_p = np.log(p_prev)
    y = np.log(p_next)
    theta = np.clip(theta0.astype(float, copy=True), lo, hi)
    e, jac = _resid_jac(theta, log_p, p_prev, load, y)
    sse = np.sum(e * e, axis=1)
    lam = np.full(b, 1e-3)
    converged = np.zeros(b, dtype=bool)
    eye = np.eye(4)
    span = hi - lo
    for _ in range(max_iter):
        act = ~converged
        if not act.any():
            break
        ia = np.flatnonzero(act)
        j = jac[ia]
        g = np.einsum("btk,bt->bk", j, e[ia])
        th = theta[ia]
        held = ((th <= lo + 1e-12 * span) & (g > 0.0)) | ((th >= hi - 1e-12 * span) & (g < 0.0))
        free = ~held
        grad_free = np.where(free, g, 0.0)
        small = np.max(np.abs(grad_free), axis=1) <= 1e-12 * (1.0 + sse[ia])
        converged[ia[small]] = True
        a = np.einsum("btk,btl->bkl", j, j)
        mask = free[:, :, None] & free[:, None, :]
        a = np.where(mask, a, 0.0)
        d = np.maximum(np.einsum("bkk->bk", a), 1e-12)
        mat = a + lam[ia, None, None] * d[:, :, None] * eye + (~free)[:, :, None] * eye
        try:
            step = -np.linalg.solve(mat, grad_free[..., None])[..., 0]
        except np.linalg.LinAlgError:
            step = -np.einsum("bkl,bl->bk", np.linalg.pinv(mat), grad_free)
        step = np.where(free, step, 0.0)
        new = np.clip(th + step, lo, hi)
        e_new = _resid(new, log_p[ia], p_prev[ia], load, y[ia])
        sse_new = np.sum(e_new * e_new, axis=1)
        ok = np.isfinite(sse_new) & (sse_new < sse[ia])
        gain = sse[ia] - sse_new
        idx_ok = ia[ok]
        theta[idx_ok] = new[ok]
        conv_now = ok & (gain <= ftol * (1.0 + sse[ia]))
        sse[idx_ok] = sse_new[ok]
        if idx_ok.size:
            e_ok, j_ok = _resid_jac(theta[idx_ok], log_p[idx_ok], p_prev[idx_ok], load, y[idx_ok])
            e[idx_ok] = e_ok
            jac[idx_ok] = j_ok
        lam[idx_ok] = np.maximum(lam[idx_ok] / 3.0, 1e-12)
        bad = ia[~ok]
        lam[bad] = lam[bad] * 4.0
        converged[ia[conv_now]] = True
        converged[bad[lam[bad] > 1e10]] = True  # no downhill step left: a (local) minimum within tolerance
    return theta, sse, converged


def _diagnostics(res: NDArray[np.float64], n_par: int = 4) -> ResidualDiagnostics:
    n = res.size
    sd = float(math.sqrt(np.sum(res**2) / max(n - n_par, 1)))
    c = res - res.mean()
    denom = float(np.sum(c * c))
    rho = float(np.sum(c[1:] * c[:-1]) / denom) if denom > 0 else 0.0
    if n >= 3 and denom > 0:
        from scipy.stats import shapiro  # imported here: scipy.stats is slow to import

        sw = shapiro(res)
        w, pv = float(sw.statistic), float(sw.pvalue)
    else:
        w, pv = math.nan, math.nan
    return ResidualDiagnostics(n=n, sd=sd, lag1_autocorrelation=rho, shapiro_w=w, shapiro_p=pv)


def _covariance(jac: NDArray[np.float64], sigma2: float, rcond: float) -> tuple[NDArray[np.float64], NDArray[np.bool_]]:
    """``σ² (JᵀJ)⁻¹`` and which parameters the Jacobian cannot inform.

    ``JᵀJ`` is scaled to unit diagonal; a parameter is *unidentified* when
    its column of ``J`` is zero or it loads (|component| > 0.05) on an
    eigenvector whose eigenvalue is below ``rcond`` times the largest.  A
    plain pseudo-inverse would give such a parameter a variance near zero,
    a false precision.
    """
    a = jac.T @ jac
    d = np.sqrt(np.maximum(np.diag(a), 0.0))
    dead = d <= 1e-12 * max(float(d.max()), 1e-300)
    d_safe = np.where(dead, 1.0, d)
    a_s = a / np.outer(d_safe, d_safe)
    a_s[dead, :] = 0.0
    a_s[:, dead] = 0.0
    w, v = np.linalg.eigh(a_s)
    null = w < rcond * max(float(w.max()), 1e-300)
    involved = dead | np.any(np.abs(v[:, null]) > 0.05, axis=1)
    cov = sigma2 * np.linalg.pinv(a_s) / np.outer(d_safe, d_safe)
    return cov, involved


def as_1d(name: str, values: ArrayLike) -> NDArray[np.float64]:
    """``values`` as a 1-D float array of finite numbers, or :class:`FieldError` naming ``name``."""
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise FieldError((name,), "must be numbers, one a year") from None
    if arr.ndim != 1:
        raise FieldError((name,), "must be one value a year (a 1-D sequence)")
    bad = np.flatnonzero(~np.isfinite(arr))
    if bad.size:
        raise FieldError((name,), f"must hold finite numbers only; entry {int(bad[0])} is {arr[bad[0]]!r}")
    return arr


def fit_transitions(
    p_prev: ArrayLike,
    load: ArrayLike,
    p_next: ArrayLike,
    *,
    bounds: FitBounds | None = None,
    p_scale: ArrayLike | None = None,
    n_starts: int = 8,
    rng: np.random.Generator | int | None = None,
    ftol: float = 1e-12,
    xtol: float = 1e-12,
    max_nfev: int = 500,
    rcond: float = 1e-10,
) -> PointFit:
    r"""Conditional least-squares fit of the annual map to observed transitions.

    Minimises ``Σ_t (ln P_{t+1} - ln F(P_t, L_t; θ))²``, the maximum-
    likelihood criterion under lognormal process error (module docstring),
    with :func:`scipy.optimize.least_squares` (trust-region reflective,
    analytic Jacobian) from ``n_starts`` starting points: the best points of
    a profile grid over ``(m, q)`` and random points in the box drawn from
    ``rng``.

    Parameters
    ----------
    p_prev, load, p_next : array_like, shape (T,)
        Lake P before [kg], load [kg yr⁻¹] and lake P after each transition.
    bounds : FitBounds, optional
    p_scale : array_like, optional
        Observed lake P the relative bounds refer to (default: all states).
    n_starts : int
        Starting points, at least 1.
    rng : numpy.random.Generator or int or None
        Source of the random starts.
    ftol, xtol, max_nfev
        Passed to :func:`scipy.optimize.least_squares`.
    rcond : float
        Relative eigenvalue of the scaled ``JᵀJ`` below which a direction
        counts as uninformed by the data; parameters along it get no
        standard error.

    Returns
    -------
    PointFit
        With standard errors ``sqrt(diag(σ̂² (JᵀJ)⁻¹))`` mapped by the delta
        method (``se(r) = r · se(ln r)``) and residual diagnostics.
    """
    x0 = as_1d("p_prev", p_prev)
    lt = as_1d("load", load)
    x1 = as_1d("p_next", p_next)
    if not (x0.size == lt.size == x1.size):
        raise ValueError("p_prev, load and p_next must have the same length")
    if x0.size < 6:
        raise ValueError("the fit needs at least 6 annual transitions")
    if np.any(x0 <= 0) or np.any(x1 <= 0) or np.any(lt < 0):
        raise ValueError("lake P must be > 0 and loads >= 0")
    if n_starts < 1:
        raise ValueError("n_starts must be at least 1")
    bounds = bounds or FitBounds()
    scale = np.concatenate([x0, x1]) if p_scale is None else np.asarray(p_scale, dtype=float)
    lo, hi = bounds.working(scale)
    gen = np.random.default_rng(rng)

    pts, sse = grid_starts(x0[None, :], x1[None, :], lt, lo, hi)
    order = np.argsort(sse[0])
    n_grid = max(1, (n_starts + 1) // 2)
    starts = [pts[0, i] for i in order[:n_grid]]
    starts += [lo + gen.random(4) * (hi - lo) for _ in range(n_starts - n_grid)]
    log_x0 = np.log(x0)[None, :]
    y = np.log(x1)[None, :]

    def fun(th: NDArray[np.float64]) -> NDArray[np.float64]:
        return _resid(th[None, :], log_x0, x0[None, :], lt, y)[0]

    def jac(th: NDArray[np.float64]) -> NDArray[np.float64]:
        return _resid_jac(th[None, :], log_x0, x0[None, :], lt, y)[1][0]

    best = None
    nfev = 0
    for st in starts:
        st = np.clip(st, lo + 1e-9 * (hi - lo), hi - 1e-9 * (hi - lo))
        sol = least_squares(
            fun, st, jac=jac, bounds=(lo, hi), method="trf", x_scale="jac", ftol=ftol, xtol=xtol, max_nfev=max_nfev
        )
        nfev += int(sol.nfev)
        if np.isfinite(sol.cost) and (best is None or sol.cost < best.cost):
            best = sol
    if best is None:
        return PointFit(
            "failed", "no starting point reached a finite fit", None, (), None, np.empty(0), math.inf,
            np.full(4, np.nan), (lo, hi), len(starts), nfev,
        )  # fmt: skip
    theta = np.asarray(best.x, dtype=float)
    res = fun(theta)
    sse_best = float(np.sum(res**2))
    n = res.size
    sigma2 = sse_best / max(n - 4, 1)
    j = jac(theta)
    span = hi - lo
    at_bound = (theta <= lo + 1e-6 * span) | (theta >= hi - 1e-6 * span)
    cov, unidentified = _covariance(j, sigma2, rcond)
    estimates = []
    params = theta_to_params(theta)
    values = (params.s, params.r, params.m, params.q)
    for k in range(4):
        var = float(cov[k, k])
        se: float | None
        if at_bound[k] or unidentified[k] or not math.isfinite(var) or var <= 0:
            se = None
        else:
            se = math.sqrt(var) * (1.0 if k == 0 else values[k])
        estimates.append(
            ParameterEstimate(
                PARAM_NAMES[k], values[k], se, PARAM_UNITS[k], bool(at_bound[k]), not bool(unidentified[k])
            )
        )
    return PointFit(
        status="ok",
        message=f"fitted {n} annual transitions from {len(starts)} starts",
        params=params,
        estimates=tuple(estimates),
        diagnostics=_diagnostics(res),
        residuals=res,
        sse=sse_best,
        theta=theta,
        bounds=(lo, hi),
        n_starts=len(starts),
        nfev=nfev,
    )
