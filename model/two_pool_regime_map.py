r"""The two-parameter regime map of the two-pool lake: load against one lake parameter.

For a two-pool lake (:mod:`turnback.model.two_pool`) the fold curves in the
(load, parameter) plane are traced by pseudo-arclength continuation of the
fold conditions ``F(P, M, L) = 0``, ``det J = 0``
(:func:`turnback.model.continuation.continue_folds`), started from the folds
of the closed form (:func:`turnback.model.two_pool_equilibrium.folds`).  The
tipping and recovery fold curves meet at a cusp, a turning point of the
parameter along the traced curve.  Between the two curves the lake has two
stable states (subject to the Hopf caution of
:mod:`turnback.model.two_pool_equilibrium`), outside them one.  The regime
along the parameter axis comes from the one rule,
:func:`turnback.model.equilibrium.regime_from_folds`, applied to the
closed-form folds at each parameter value.

Loads are in [kg yr⁻¹], water and sediment P in [kg], rates in [yr⁻¹].

References
----------
Carpenter, S. R. (2005). Eutrophication of aquatic ecosystems: bistability
and soil phosphorus. PNAS 102(29), 10002–10005.

Kuznetsov, Yu. A. (2004). Elements of Applied Bifurcation Theory, 3rd ed.,
ch. 10. Springer.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from .continuation import continue_folds, two_pool_fold_system
from .equilibrium import Regime
from .two_pool import TwoPoolParameters
from .two_pool_equilibrium import TwoPoolFold, folds, regime

__all__ = ["TWO_POOL_AXES", "TwoPoolAxis", "TwoPoolFoldCurve", "TwoPoolRegimeMap", "two_pool_regime_map"]

TwoPoolAxis = Literal["sedimentation", "outflow", "burial", "recycling_rate", "recycling_exponent"]
TWO_POOL_AXES: tuple[TwoPoolAxis, ...] = ("sedimentation", "outflow", "burial", "recycling_rate", "recycling_exponent")


@dataclass(frozen=True)
class TwoPoolFoldCurve:
    """One fold curve, ordered by the parameter.

    ``load`` [kg yr⁻¹], ``parameter``, water P ``p`` and sediment P ``m`` [kg].
    """

    kind: Literal["tipping", "recovery"]
    load: NDArray[np.float64]
    parameter: NDArray[np.float64]
    p: NDArray[np.float64]
    m: NDArray[np.float64]


@dataclass(frozen=True)
class TwoPoolRegimeMap:
    """Fold curves, cusps and regime bands of a two-pool lake in the (load, parameter) plane.

    Attributes
    ----------
    axis : str
        The parameter on the second axis; the others are held at ``params``.
    params : TwoPoolParameters
    parameter_range : (float, float)
    tipping, recovery : TwoPoolFoldCurve
        Empty arrays when no fold lies in the range.
    cusps : tuple of (parameter, load)
        Where the fold curves meet.
    bands : tuple of (low, high, regime)
        The regime along the parameter axis, in contiguous bands.
    status : {"ok", "incomplete"}
        ``incomplete`` when a continuation stopped before leaving the range.
    message : str
    """

    axis: TwoPoolAxis
    params: TwoPoolParameters
    parameter_range: tuple[float, float]
    tipping: TwoPoolFoldCurve
    recovery: TwoPoolFoldCurve
    cusps: tuple[tuple[float, float], ...]
    bands: tuple[tuple[float, float, Regime], ...]
    status: Literal["ok", "incomplete"]
    message: str


def _default_range(params: TwoPoolParameters, axis: TwoPoolAxis) -> tuple[float, float]:
    v = getattr(params, axis)
    if axis == "outflow":
        return 0.0, max(5.0 * v, 0.5)
    if axis == "recycling_exponent":
        return 1.0, max(5.0 * v, 2.0)
    return v / 5.0, 5.0 * v


def _with(params: TwoPoolParameters, axis: str, value: float) -> TwoPoolParameters | None:
    try:
        return replace(params, **{axis: float(value)})
    except ValueError:
        return None


def _regime_at(params: TwoPoolParameters, axis: str, v: float) -> Regime | None:
    lake = _with(params, axis, v)
    return None if lake is None else regime(lake)


def _bands(
    params: TwoPoolParameters, axis: str, lo: float, hi: float, n: int
) -> tuple[tuple[float, float, Regime], ...]:
    """Contiguous regime bands along the axis; each change of regime is bisected to rounding."""
    grid = np.linspace(lo, hi, n)
    regs = [_regime_at(params, axis, float(v)) for v in grid]
    out: list[tuple[float, float, Regime]] = []
    for i, (v, reg) in enumerate(zip(grid, regs, strict=True)):
        if reg is None:
            continue
        start = float(v)
        if i > 0 and regs[i - 1] is not None and regs[i - 1] != reg:
            a, b = float(grid[i - 1]), float(v)
            for _ in range(80):
                mid = 0.5 * (a + b)
                if mid in (a, b):
                    break
                if _regime_at(params, axis, mid) == reg:
                    b = mid
                else:
                    a = mid
            start = b
            out[-1] = (out[-1][0], b, out[-1][2])
        if out and out[-1][2] == reg:
            out[-1] = (out[-1][0], float(v), reg)
        else:
            out.append((start, float(v), reg))
    return tuple(out)


def _start(params: TwoPoolParameters, axis: str, lo: float, hi: float) -> tuple[float, tuple[TwoPoolFold, ...]]:
    """A parameter value with folds, nearest the lake's own, and its folds; ``()`` when none in the range."""
    own = getattr(params, axis)
    fs = folds(params) if lo <= own <= hi else ()
    if fs:
        return own, fs
    grid = np.linspace(lo, hi, 129)
    for v in grid[np.argsort(np.abs(grid - own))]:
        lake = _with(params, axis, v)
        if lake is not None:
            fs = folds(lake)
            if fs:
                return float(v), fs
    return own, ()


def _curve(kind: Literal["tipping", "recovery"], parts: list[tuple[NDArray[np.float64], ...]]) -> TwoPoolFoldCurve:
    if not parts:
        empty = np.empty(0)
        return TwoPoolFoldCurve(kind, empty, empty, empty, empty)
    par, load, p, m = (np.concatenate([pt[i] for pt in parts]) for i in range(4))
    order = np.argsort(par, kind="stable")
    par, load, p, m = par[order], load[order], p[order], m[order]
    keep = np.concatenate([[True], np.diff(par) > 1e-12 * max(float(np.max(np.abs(par))), 1e-300)])
    return TwoPoolFoldCurve(kind, load[keep], par[keep], p[keep], m[keep])


def two_pool_regime_map(
    params: TwoPoolParameters,
    axis: TwoPoolAxis = "burial",
    parameter_range: tuple[float, float] | None = None,
    *,
    max_steps: int = 3000,
    n_bands: int = 201,
) -> TwoPoolRegimeMap:
    """Fold curves of the two-pool lake against load and ``axis``, by continuation.

    Parameters
    ----------
    params : TwoPoolParameters
    axis : str
        One of :data:`TWO_POOL_AXES`.
    parameter_range : (float, float), optional
        Default: a fifth to five times the lake's own value (outflow from 0,
        the exponent from 1).
    max_steps : int
        Step limit of each continuation.
    n_bands : int
        Parameter values at which the regime is evaluated for the bands.
    """
    if axis not in TWO_POOL_AXES:
        raise ValueError(f"axis must be one of {', '.join(TWO_POOL_AXES)}; got {axis!r}")
    lo, hi = _default_range(params, axis) if parameter_range is None else map(float, parameter_range)
    if not (np.isfinite(lo) and np.isfinite(hi) and 0.0 <= lo < hi):
        raise ValueError(f"parameter range must be two finite numbers 0 <= low < high; got {lo:g} to {hi:g}")
    bands = _bands(params, axis, lo, hi, n_bands)
    v0, fs = _start(params, axis, lo, hi)
    parts: dict[str, list[tuple[NDArray[np.float64], ...]]] = {"tipping": [], "recovery": []}
    cusps: list[tuple[float, float]] = []
    status: Literal["ok", "incomplete"] = "ok"
    if fs:
        rhs, jac_x, jac_load = two_pool_fold_system(params, axis)
        det_scale = (params.s + params.h + params.b + params.r) ** 2
        p_cap = 1e4 * max(f.p for f in fs)
        m_cap = 1e4 * max(f.m for f in fs)

        def domain(x: NDArray[np.float64]) -> bool:
            return bool(0.0 < x[0] < p_cap and 0.0 < x[1] < m_cap)

        for f in fs:
            for direction in (1.0, -1.0):
                res = continue_folds(
                    rhs,
                    jac_x,
                    jac_load,
                    np.array([f.p, f.m]),
                    f.load,
                    v0,
                    (lo, hi),
                    direction=direction,
                    det_scale=det_scale,
                    domain=domain,
                    max_steps=max_steps,
                )
                end = res.parameter.size
                if res.cusps:
                    end = res.cusps[0]
                    for c_par, c_load, _ in res.cusp_points[:1]:
                        if lo <= c_par <= hi and not any(abs(c_par - c) <= 1e-9 * (hi - lo) for c, _ in cusps):
                            cusps.append((c_par, c_load))
                elif res.status not in (0, 3):
                    status = "incomplete"
                inside = (res.parameter[:end] >= lo) & (res.parameter[:end] <= hi)
                parts[f.kind].append(
                    tuple(a[:end][inside] for a in (res.parameter, res.load, res.x[:, 0], res.x[:, 1]))
                )
    tipping, recovery = _curve("tipping", parts["tipping"]), _curve("recovery", parts["recovery"])
    msg = (
        f"fold curves against {axis} from {lo:g} to {hi:g}: {tipping.load.size} tipping and "
        f"{recovery.load.size} recovery points, {len(cusps)} cusp{'s' if len(cusps) != 1 else ''}"
    )
    if not fs:
        msg = f"no folds for {axis} from {lo:g} to {hi:g}: the lake is reversible across the range"
    return TwoPoolRegimeMap(
        axis=axis,
        params=params,
        parameter_range=(lo, hi),
        tipping=tipping,
        recovery=recovery,
        cusps=tuple(sorted(cusps)),
        bands=bands,
        status=status,
        message=msg,
    )
