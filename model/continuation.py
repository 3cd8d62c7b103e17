r"""Pseudo-arclength continuation of equilibria for any model ``x' = F(x, L)``.

The one-state lake model has a closed-form equilibrium curve
(:mod:`turnback.model.equilibrium`); models with more state variables (for example a
lake with a sediment-P pool) do not.  This module traces their equilibria as
the load ``L`` varies, detects folds and reports stability from the
eigenvalues of the Jacobian.

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

__all__ = ["ContinuationFold", "ContinuationResult", "continue_equilibria", "lake_system"]

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
