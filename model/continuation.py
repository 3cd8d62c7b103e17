r"""Pseudo-arclength continuation of equilibria for any model ``x' = F(x, L)``.

The one-state lake model has a closed-form equilibrium curve
(:mod:`turnback.model.equilibrium`), and so has the two-pool lake
(:mod:`turnback.model.two_pool_equilibrium`); this module is the independent
route for both and for any model ``x' = F(x, L)``.  It traces equilibria as
the load ``L`` varies, detects folds and reports stability from the
eigenvalues of the Jacobian (:func:`continue_equilibria`, with
:func:`lake_system` and :func:`two_pool_system`), and traces a fold through
a second parameter (:func:`continue_folds`), which gives the fold curves of
a two-parameter regime map.

Method (Keller's pseudo-arclength continuation)
    With ``y = (x, L)`` and unit tangent ``t`` at a point ``y_k`` on the curve,
    the predictor is ``y_p = y_k + Δs t`` and the corrector solves by Newton

    .. math:: F(y) = 0, \qquad t \cdot (y - y_p) = 0

    whose Jacobian ``[[F_x, F_L], [tᵀ]]`` stays regular at folds, so the
    curve is followed round them.  The tangent solves
    ``[[F_x, F_L], [t_kᵀ]] t = (0, 1)``.  A fold is where the load component
    of the tangent changes sign; it is refined by Brent's method on the step
    length until that component is zero.

Stability
    An equilibrium is stable when every eigenvalue of ``F_x`` has a negative
    real part.

Fold curves (two parameters)
    A fold satisfies ``F(x, L, p) = 0`` and ``det F_x = 0``.  With the
    augmented state ``X = (x, L)`` and the second parameter ``p`` in the
    place of the load, these ``n + 1`` equations are again a curve traced by
    the same pseudo-arclength method; a turning point of ``p`` along it is a
    cusp, where the two fold curves meet (Kuznetsov 2004, sec. 10.2).  The
    derivatives of ``det F_x`` are central differences; Newton's corrector
    still converges to the exact zero because the residual is exact.

References
----------
Keller, H. B. (1977). Numerical solution of bifurcation and nonlinear
eigenvalue problems. In P. H. Rabinowitz (ed.), Applications of Bifurcation
Theory, 359–384. Academic Press.

Kuznetsov, Yu. A. (2004). Elements of Applied Bifurcation Theory, 3rd ed.,
ch. 10. Springer.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import brentq

from .params import LakeParameters, recycling_fraction
from .two_pool import TwoPoolParameters

__all__ = [
    "ContinuationFold",
    "ContinuationResult",
    "FoldCurveResult",
    "continue_equilibria",
    "continue_folds",
    "lake_system",
    "two_pool_fold_system",
    "two_pool_system",
]

Vector = NDArray[np.float64]
RHS = Callable[[Vector, float], Vector]
Jac = Callable[[Vector, float], NDArray[np.float64]]


@dataclass(frozen=True)
class ContinuationFold:
    """A fold found by continuation: load [model units] and state."""

    load: float
    x: Vector


@dataclass(frozen=True)
class ContinuationResult:
    """Result of :func:`continue_equilibria`.

    Attributes
    ----------
    load : ndarray, shape (k,)
        Load at each point along the curve.
    x : ndarray, shape (k, n)
        State at each point.
    stable : ndarray of bool, shape (k,)
    max_real_eig : ndarray, shape (k,)
        Largest real part of the Jacobian's eigenvalues.
    folds : tuple of ContinuationFold
        Folds in the order met along the curve.
    status : int
        0 the load range was left (normal end), 1 the step limit was reached,
        2 the corrector failed with the smallest step, 3 the state left the
        domain.
    message : str
    """

    load: Vector
    x: NDArray[np.float64]
    stable: NDArray[np.bool_]
    max_real_eig: Vector
    folds: tuple[ContinuationFold, ...]
    status: int
    message: str


def _augmented(jx: NDArray[np.float64], jl: Vector, t: Vector) -> NDArray[np.float64]:
    n = jx.shape[0]
    a = np.empty((n + 1, n + 1))
    a[:n, :n] = jx
    a[:n, n] = jl
    a[n, :] = t
    return a


def continue_equilibria(
    rhs: RHS,
    jac_x: Jac,
    jac_load: Callable[[Vector, float], Vector],
    x0: Vector,
    load0: float,
    load_range: tuple[float, float],
    *,
    direction: float = 1.0,
    ds: float = 0.01,
    ds_min: float = 1e-8,
    ds_max: float = 0.05,
    max_steps: int = 20000,
    tol: float = 1e-12,
    scale: tuple[Vector | float, float] | None = None,
    domain: Callable[[Vector], bool] | None = None,
) -> ContinuationResult:
    """Trace equilibria of ``x' = F(x, L)`` from ``(x0, load0)``.

    Parameters
    ----------
    rhs : callable ``F(x, L) -> ndarray (n,)``
    jac_x : callable ``F_x(x, L) -> ndarray (n, n)``
    jac_load : callable ``F_L(x, L) -> ndarray (n,)``
    x0 : array_like (n,)
        Guess of an equilibrium at ``load0``; it is corrected first.
    load0 : float
    load_range : (float, float)
        Continuation stops once the load leaves this interval.
    direction : float
        +1 to start towards higher loads, -1 towards lower.
    ds, ds_min, ds_max : float
        Initial, smallest and largest step in scaled arc length.
    max_steps : int
    tol : float
        Newton tolerance on the scaled residual and step.
    scale : (x_scale, load_scale), optional
        Typical sizes used to make arc length dimensionless; by default the
        size of ``x0`` and the width of ``load_range``.
    domain : callable, optional
        ``domain(x) -> bool``; continuation stops where it turns False.

    Returns
    -------
    ContinuationResult
    """
    x0 = np.atleast_1d(np.asarray(x0, dtype=float))
    n = x0.size
    lo, hi = float(load_range[0]), float(load_range[1])
    if not lo < hi:
        raise ValueError("load_range must be increasing")
    if scale is None:
        xs = np.maximum(np.abs(x0), 1e-12)
        ls = hi - lo
    else:
        xs = np.broadcast_to(np.asarray(scale[0], dtype=float), (n,)).copy()
        ls = float(scale[1])
    w = np.concatenate([xs, [ls]])  # y = w * z

    def F(z: Vector) -> Vector:
        y = w * z
        return np.asarray(rhs(y[:n], float(y[n])), dtype=float)

    def J(z: Vector) -> tuple[NDArray[np.float64], Vector]:
        y = w * z
        jx = np.atleast_2d(np.asarray(jac_x(y[:n], float(y[n])), dtype=float)) * xs[None, :]
        jl = np.atleast_1d(np.asarray(jac_load(y[:n], float(y[n])), dtype=float)) * ls
        return jx, jl

    fscale = max(float(np.max(np.abs(F(np.concatenate([x0 / xs, [0.0]]))))), 1.0)

    # correct the starting point at fixed load
    z = np.concatenate([x0 / xs, [load0 / ls]])
    for _ in range(100):
        jx, _jl = J(z)
        dx = np.linalg.solve(jx, -F(z))
        z[:n] += dx
        if np.max(np.abs(dx)) < tol:
            break
    else:
        raise ValueError("no equilibrium found near x0 at load0")

    def tangent(zz: Vector, t_prev: Vector) -> Vector:
        jx, jl = J(zz)
        rhs_v = np.zeros(n + 1)
        rhs_v[n] = 1.0
        t: Vector = np.asarray(np.linalg.solve(_augmented(jx, jl, t_prev), rhs_v), dtype=np.float64)
        t /= np.linalg.norm(t)
        if np.dot(t, t_prev) < 0:
            t = -t
        return t

    def correct(zp: Vector, t: Vector) -> Vector | None:
        zz = zp.copy()
        for _ in range(25):
            jx, jl = J(zz)
            res = np.concatenate([F(zz) / fscale, [np.dot(t, zz - zp)]])
            a = _augmented(jx / fscale, jl / fscale, t)
            try:
                step = np.linalg.solve(a, -res)
            except np.linalg.LinAlgError:
                return None
            zz = zz + step
            if not np.all(np.isfinite(zz)):
                return None
            if np.max(np.abs(step)) < tol and np.max(np.abs(F(zz))) / fscale < 1e3 * tol:
                return zz
        return None

    e = np.zeros(n + 1)
    e[n] = np.sign(direction) or 1.0
    t = tangent(z, e)
    pts = [z.copy()]
    found: list[ContinuationFold] = []
    status, message = 1, "step limit reached"
    h = ds
    for _ in range(max_steps):
        zn = correct(z + h * t, t)
        if zn is None:
            h *= 0.5
            if h < ds_min:
                status, message = 2, "corrector failed at the smallest step"
                break
            continue
        tn = tangent(zn, t)
        if np.sign(tn[n]) != np.sign(t[n]) and tn[n] != 0.0:
            z_prev, t_prev = z, t

            def load_component(hh: float, z_prev: Vector = z_prev, t_prev: Vector = t_prev) -> float:
                zz = correct(z_prev + hh * t_prev, t_prev)
                if zz is None:
                    raise RuntimeError("corrector failed while refining a fold")
                return float(tangent(zz, t_prev)[n])

            try:
                hf = brentq(load_component, 0.0, h, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200)
                zf = correct(z_prev + hf * t_prev, t_prev)
            except (RuntimeError, ValueError):
                zf = zn
            if zf is not None:
                yf = w * zf
                found.append(ContinuationFold(load=float(yf[n]), x=yf[:n].copy()))
        z, t = zn, tn
        pts.append(z.copy())
        y = w * z
        if not (lo <= y[n] <= hi):
            status, message = 0, "left the load range"
            break
        if domain is not None and not domain(y[:n]):
            status, message = 3, "left the state domain"
            break
        h = min(h * 1.3, ds_max)

    ys = np.array(pts) * w[None, :]
    xs_out = ys[:, :n]
    loads = ys[:, n]
    eig = np.empty(len(ys))
    for i, yy in enumerate(ys):
        jx = np.atleast_2d(np.asarray(jac_x(yy[:n], float(yy[n])), dtype=float))
        eig[i] = float(np.max(np.linalg.eigvals(jx).real))
    return ContinuationResult(
        load=loads,
        x=xs_out,
        stable=eig < 0.0,
        max_real_eig=eig,
        folds=tuple(found),
        status=status,
        message=message,
    )


def lake_system(params: LakeParameters) -> tuple[RHS, Jac, Callable[[Vector, float], Vector]]:
    """``F``, ``F_x`` and ``F_L`` of the one-state lake model for :func:`continue_equilibria`.

    ``F(P, L) = L - s P + r h(P)``, ``F_P = -s + r h'(P)``, ``F_L = 1``,
    with ``h(P) = P^q/(m^q + P^q)`` and ``h'(P) = q h (1 - h) / P``.
    """
    s, r, m, q = params.s, params.r, params.m, params.q

    def rhs(x: Vector, load: float) -> Vector:
        return np.asarray(load - s * x + r * recycling_fraction(x, m, q), dtype=float)

    def jac_x(x: Vector, load: float) -> NDArray[np.float64]:
        h = np.asarray(recycling_fraction(x, m, q), dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            dh = np.where(x > 0, q * h * (1.0 - h) / x, 0.0)
        return np.atleast_2d(-s + r * dh)

    def jac_load(x: Vector, load: float) -> Vector:
        return np.ones(np.atleast_1d(x).shape)

    return rhs, jac_x, jac_load


def two_pool_system(params: TwoPoolParameters) -> tuple[RHS, Jac, Callable[[Vector, float], Vector]]:
    """``F``, ``F_x`` and ``F_L`` of the two-pool lake for :func:`continue_equilibria`, state ``x = (P, M)``.

    ``F = (L - (s+h) P + r M g(P), s P - b M - r M g(P))``, ``F_L = (1, 0)``
    and ``F_x`` from :meth:`~turnback.model.two_pool.TwoPoolParameters.jacobian`.
    """

    def rhs(x: Vector, load: float) -> Vector:
        return params.rate(0.0, x, load)

    def jac_x(x: Vector, load: float) -> NDArray[np.float64]:
        return params.jacobian(float(x[0]), float(x[1]))

    def jac_load(x: Vector, load: float) -> Vector:
        return np.array([1.0, 0.0])

    return rhs, jac_x, jac_load


def _two_pool_parts(values: dict[str, float], x: Vector, load: float) -> tuple[Vector, NDArray[np.float64]]:
    """``F`` and ``F_x`` of the two-pool lake from plain numbers (any values, no validation)."""
    s, h, b, r = values["sedimentation"], values["outflow"], values["burial"], values["recycling_rate"]
    mh, q = values["recycling_half"], values["recycling_exponent"]
    p, m_sed = float(x[0]), float(x[1])
    g = float(recycling_fraction(p, mh, q)) if mh > 0.0 else 1.0
    dg = q * g * (1.0 - g) / p if p > 0.0 else 0.0
    u = r * m_sed * dg
    f = np.array([load - (s + h) * p + r * m_sed * g, s * p - b * m_sed - r * m_sed * g])
    return f, np.array([[-(s + h) + u, r * g], [s - u, -(b + r * g)]])


def two_pool_fold_system(
    params: TwoPoolParameters, axis: str
) -> tuple[
    Callable[[Vector, float, float], Vector],
    Callable[[Vector, float, float], NDArray[np.float64]],
    Callable[[Vector, float, float], Vector],
]:
    """``F``, ``F_x`` and ``F_L`` of the two-pool lake as functions of ``(x, L, p)`` for :func:`continue_folds`.

    ``p`` replaces the parameter named ``axis`` (a field of
    :class:`~turnback.model.two_pool.TwoPoolParameters`); the others stay at ``params``.
    """
    base = params.to_dict()
    if axis not in base:
        raise ValueError(f"axis must be one of {', '.join(base)}; got {axis!r}")

    def rhs(x: Vector, load: float, par: float) -> Vector:
        return _two_pool_parts(base | {axis: par}, x, load)[0]

    def jac_x(x: Vector, load: float, par: float) -> NDArray[np.float64]:
        return _two_pool_parts(base | {axis: par}, x, load)[1]

    def jac_load(x: Vector, load: float, par: float) -> Vector:
        return np.array([1.0, 0.0])

    return rhs, jac_x, jac_load


@dataclass(frozen=True)
class FoldCurveResult:
    """A fold traced through a second parameter by :func:`continue_folds`.

    Attributes
    ----------
    parameter : ndarray, shape (k,)
        The second parameter at each point.
    load : ndarray, shape (k,)
        Load at the fold.
    x : ndarray, shape (k, n)
        State at the fold.
    cusps : tuple of int
        Indices where the parameter turns (cusps, where two fold curves meet).
    cusp_points : tuple of (parameter, load, x)
        The cusps refined to where the parameter's tangent component is zero.
    status, message
        As :class:`ContinuationResult`.
    """

    parameter: Vector
    load: Vector
    x: NDArray[np.float64]
    cusps: tuple[int, ...]
    cusp_points: tuple[tuple[float, float, Vector], ...]
    status: int
    message: str


def continue_folds(
    rhs: Callable[[Vector, float, float], Vector],
    jac_x: Callable[[Vector, float, float], NDArray[np.float64]],
    jac_load: Callable[[Vector, float, float], Vector],
    x0: Vector,
    load0: float,
    par0: float,
    par_range: tuple[float, float],
    *,
    direction: float = 1.0,
    det_scale: float = 1.0,
    fd_step: float = 1e-6,
    domain: Callable[[Vector], bool] | None = None,
    **kwargs: float,
) -> FoldCurveResult:
    """Trace the fold through ``(x0, load0)`` as the second parameter moves from ``par0``.

    Parameters
    ----------
    rhs, jac_x, jac_load : callables of ``(x, L, p)``
        ``F``, ``F_x`` and ``F_L`` with the second parameter ``p``.
    x0, load0 : starting guess of a fold at ``par0`` (corrected first).
    par_range : (float, float)
        Continuation stops once ``p`` leaves this interval.
    direction : +1 or -1
        Start towards larger or smaller ``p``.
    det_scale : float
        Typical size of ``det F_x``, so that both kinds of residual weigh alike.
    fd_step : float
        Relative step of the central differences.
    domain : callable, optional
        ``domain(x) -> bool`` on the state; continuation stops where it turns False.
    **kwargs
        Passed to :func:`continue_equilibria` (``ds``, ``ds_max``, ``max_steps``, ``tol``).
    """
    x0 = np.atleast_1d(np.asarray(x0, dtype=float))
    n = x0.size
    typical = np.concatenate([np.maximum(np.abs(x0), 1e-12), [max(abs(load0), 1e-12)]])

    def det(xx: Vector, load: float, par: float) -> float:
        return float(np.linalg.det(np.atleast_2d(jac_x(xx, load, par)))) / det_scale

    def g(big: Vector, par: float) -> Vector:
        return np.concatenate([np.atleast_1d(rhs(big[:n], float(big[n]), par)), [det(big[:n], float(big[n]), par)]])

    def g_big(big: Vector, par: float) -> NDArray[np.float64]:
        out = np.empty((n + 1, n + 1))
        out[:n, :n] = np.atleast_2d(jac_x(big[:n], float(big[n]), par))
        out[:n, n] = np.atleast_1d(jac_load(big[:n], float(big[n]), par))
        for j in range(n + 1):
            step = fd_step * max(abs(float(big[j])), float(typical[j]))
            up, down = big.copy(), big.copy()
            up[j] += step
            down[j] -= step
            out[n, j] = (det(up[:n], float(up[n]), par) - det(down[:n], float(down[n]), par)) / (2.0 * step)
        return out

    def g_par(big: Vector, par: float) -> Vector:
        step = fd_step * max(abs(par), 1e-12)
        return (g(big, par + step) - g(big, par - step)) / (2.0 * step)

    def big_domain(big: Vector) -> bool:
        return domain is None or bool(domain(big[:n]))

    res = continue_equilibria(
        g,
        g_big,
        g_par,
        np.concatenate([x0, [load0]]),
        par0,
        par_range,
        direction=direction,
        scale=(typical, par_range[1] - par_range[0]),
        domain=big_domain,
        **kwargs,  # type: ignore[arg-type]
    )
    dp = np.diff(res.load)
    cusps = tuple(int(i) + 1 for i in np.flatnonzero(dp[:-1] * dp[1:] < 0.0))
    return FoldCurveResult(
        parameter=res.load,
        load=res.x[:, n],
        x=res.x[:, :n].copy(),
        cusps=cusps,
        cusp_points=tuple((f.load, float(f.x[n]), f.x[:n].copy()) for f in res.folds),
        status=res.status,
        message=res.message,
    )
