r"""Equilibria, folds and regime of the phosphorus-recycling lake model.

The rate of change of lake phosphorus is

.. math:: f(P, L) = L - s P + r \frac{P^q}{m^q + P^q}

In the dimensionless form of Carpenter, Ludwig & Brock (1999)
(:math:`x = P/m`, :math:`a = L/r`, :math:`b = s m / r`) the equilibria
satisfy :math:`a = b x - g(x)` with :math:`g(x) = x^q/(1+x^q)`.  The load at
equilibrium is therefore an explicit function of the lake state, and the
whole equilibrium curve is traced exactly by walking along :math:`x`; no
grid search over the load is involved.

Stability
    :math:`\partial f/\partial P = (r/m)\,(g'(x) - b) = -(r/m)\, a'(x)`, so an
    equilibrium is stable where the curve :math:`a(x)` rises and unstable
    where it falls.  The same holds for the annual map
    :math:`P_{t+1} = P_t + f(P_t, L_t)` whenever :math:`s < 2` [yr⁻¹], because
    :math:`\partial f/\partial P \ge -s` everywhere.

Folds
    Where :math:`a'(x) = 0`, i.e. :math:`g'(x) = b` with
    :math:`g'(x) = q x^{q-1}/(1+x^q)^2`.  They are found by solving
    :math:`\ln g'(x) = \ln b` in :math:`u = \ln x` on either side of the
    maximum of :math:`g'` with Brent's method to machine precision.

Cusp (derivation)
    :math:`d \ln g'/dx = (q-1)/x - 2 q x^{q-1}/(1+x^q) = 0` gives
    :math:`x_c^q = (q-1)/(q+1)`; the two folds merge when
    :math:`b = g'(x_c)`.  For :math:`q = 2`: :math:`x_c = 1/\sqrt3`,
    :math:`b_c = 3\sqrt3/8 \approx 0.6495`, :math:`a_c = b_c x_c - g(x_c) = 1/8`.
    For :math:`b \ge b_c` there are no folds (reversible).

Irreversible boundary (derivation)
    The recovery fold sits at zero load when :math:`a = 0` and
    :math:`a' = 0`: :math:`b x = g(x)` and :math:`b = g'(x)`.  Dividing,
    :math:`1 + x^q = q`, so :math:`x^q = q - 1` and
    :math:`b_{irr} = g(x)/x = (q-1)^{(q-1)/q}/q`.  For :math:`q = 2`:
    :math:`x = 1`, :math:`b_{irr} = 1/2`.  For :math:`b < b_{irr}` the
    recovery load is negative: no load cut alone restores the lake.

Only :math:`q > 1` gives a pair of folds.  For :math:`q \le 1` the curve has
at most one turning point, at a negative load, outside the physical
domain; such lakes are reported as reversible with no folds.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import brentq
from scipy.special import expit

from .params import LakeParameters

__all__ = [
    "Branch",
    "Equilibrium",
    "EquilibriumCurve",
    "Fold",
    "LakeAnalysis",
    "Regime",
    "analyze",
    "cusp_b",
    "equilibria",
    "equilibrium_curve",
    "folds",
    "irreversible_b",
    "regime",
]

Regime = Literal["reversible", "hysteretic", "irreversible"]
Branch = Literal["lower", "middle", "upper", "single"]

_UTOL = 1e-15  # absolute tolerance in u = ln x, i.e. relative in x
_RTOL = 4.0 * np.finfo(float).eps


# --------------------------------------------------------------------------
# scalar pieces of the dimensionless model, stable for large q and tiny x
# --------------------------------------------------------------------------
def _log_expit(z: float) -> float:
    """ln(1/(1+e^{-z})) without overflow."""
    if z >= 0.0:
        return -math.log1p(math.exp(-z))
    return z - math.log1p(math.exp(z))


def _g(x: float, q: float) -> float:
    """g(x) = x^q/(1+x^q)."""
    if x <= 0.0:
        return 0.0
    z = q * math.log(x)
    return math.exp(_log_expit(z))


def _log_gprime(u: float, q: float) -> float:
    """ln g'(x) at x = e^u, with g'(x) = (q/x) g (1-g)."""
    z = q * u
    return math.log(q) - u + _log_expit(z) + _log_expit(-z)


def _gprime(x: float, q: float) -> float:
    if x <= 0.0:
        if q > 1.0:
            return 0.0
        return 1.0 if q == 1.0 else math.inf
    return math.exp(_log_gprime(math.log(x), q))


def _a_of_x(x: float, b: float, q: float) -> float:
    """Dimensionless load at equilibrium, a(x) = b x - g(x)."""
    return b * x - _g(x, q)


def _g_vec(x: NDArray[np.float64], q: float) -> NDArray[np.float64]:
    with np.errstate(divide="ignore"):
        z = q * np.log(x)
    return np.where(x > 0.0, expit(z), 0.0)


def _gprime_vec(x: NDArray[np.float64], q: float) -> NDArray[np.float64]:
    with np.errstate(divide="ignore", invalid="ignore"):
        z = q * np.log(x)
        out = q * expit(z) * expit(-z) / x
    if q > 1.0:
        zero_value = 0.0
    elif q == 1.0:
        zero_value = 1.0
    else:
        zero_value = math.inf
    return np.where(x > 0.0, out, zero_value)


# --------------------------------------------------------------------------
# closed-form boundaries
# --------------------------------------------------------------------------
def cusp_b(q: float) -> float:
    """Dimensionless loss ``b`` at the cusp, where the two folds merge.

    ``x_c^q = (q-1)/(q+1)`` and ``b_c = g'(x_c)``; for ``q = 2``,
    ``b_c = 3√3/8``.  Defined for ``q > 1``.

    References
    ----------
    Carpenter, Ludwig & Brock (1999), Ecological Applications 9:751–771.
    """
    if not q > 1.0:
        raise ValueError("the cusp exists only for recycling_exponent q > 1")
    xq = (q - 1.0) / (q + 1.0)
    x = xq ** (1.0 / q)
    return q * x ** (q - 1.0) / (1.0 + xq) ** 2


def irreversible_b(q: float) -> float:
    """Dimensionless loss ``b`` below which the recovery fold is at a negative load.

    ``x^q = q - 1`` and ``b_irr = (q-1)^((q-1)/q) / q``; for ``q = 2``,
    ``b_irr = 1/2``.  Defined for ``q > 1``.
    """
    if not q > 1.0:
        raise ValueError("the irreversible boundary exists only for recycling_exponent q > 1")
    return (q - 1.0) ** ((q - 1.0) / q) / q


# --------------------------------------------------------------------------
# result objects
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Fold:
    """A fold (saddle-node) of the equilibrium curve.

    Attributes
    ----------
    load : float
        Load at the fold [kg yr⁻¹].
    p : float
        Lake P mass at the fold [kg].
    kind : {"tipping", "recovery"}
        ``tipping`` ends the clear-water (lower) branch, ``recovery`` ends the
        turbid (upper) branch.
    x, a : float
        The same point in dimensionless units.
    """

    load: float
    p: float
    kind: Literal["tipping", "recovery"]
    x: float
    a: float


@dataclass(frozen=True)
class Equilibrium:
    """One equilibrium at a given load.

    Attributes
    ----------
    p : float
        Lake P mass [kg].
    stable : bool
        True where ``∂f/∂P < 0``.
    branch : str
        ``lower`` (clear-water), ``middle`` (unstable separatrix), ``upper``
        (turbid) or ``single`` (the only branch of a lake without folds).
    slope : float
        ``∂f/∂P`` [yr⁻¹] at the equilibrium.
    return_time : float
        Linearised return time ``1/|∂f/∂P|`` [yr] for a stable equilibrium,
        ``nan`` otherwise.
    """

    p: float
    stable: bool
    branch: Branch
    slope: float
    return_time: float


@dataclass(frozen=True)
class EquilibriumCurve:
    """The equilibrium curve over a load range, ordered along the curve.

    Arrays have one entry per point.  ``branch`` holds the branch names and
    ``stable`` the stability; ``return_time`` [yr] is ``nan`` on the
    unstable branch.
    """

    load: NDArray[np.float64]
    p: NDArray[np.float64]
    branch: NDArray[np.str_]
    stable: NDArray[np.bool_]
    slope: NDArray[np.float64]
    return_time: NDArray[np.float64]

    def __len__(self) -> int:
        return int(self.load.size)

    def segments(self) -> list[tuple[Branch, NDArray[np.float64], NDArray[np.float64]]]:
        """(branch, load, p) for each branch piece, in curve order."""
        out: list[tuple[Branch, NDArray[np.float64], NDArray[np.float64]]] = []
        if len(self) == 0:
            return out
        cuts = np.flatnonzero(self.branch[1:] != self.branch[:-1]) + 1
        for idx in np.split(np.arange(len(self)), cuts):
            out.append((str(self.branch[idx[0]]), self.load[idx], self.p[idx]))  # type: ignore[arg-type]
        return out


@dataclass(frozen=True)
class LakeAnalysis:
    """Everything the engine says about a lake, as one result object."""

    params: LakeParameters
    regime: Regime
    folds: tuple[Fold, ...]
    tipping_load: float | None
    recovery_load: float | None
    curve: EquilibriumCurve
    load: float | None = None
    equilibria: tuple[Equilibrium, ...] = field(default=())
    message: str = ""


# --------------------------------------------------------------------------
# folds and regime
# --------------------------------------------------------------------------
def _critical_x(b: float, q: float) -> list[float]:
    """Dimensionless states where ``a'(x) = 0``, ascending.

    Two points for a hysteretic or irreversible lake, none for a reversible
    one; for ``q <= 1`` possibly one (at a negative load).
    """
    lnb = math.log(b)

    def phi(u: float) -> float:
        return _log_gprime(u, q) - lnb

    if q > 1.0:
        u_c = math.log((q - 1.0) / (q + 1.0)) / q
        if phi(u_c) <= 0.0:
            return []
        roots = []
        for direction in (-1.0, 1.0):
            step = 1.0
            u_far = u_c + direction * step
            while phi(u_far) > 0.0:
                step *= 2.0
                u_far = u_c + direction * step
            lo, hi = (u_far, u_c) if direction < 0 else (u_c, u_far)
            u = brentq(phi, lo, hi, xtol=_UTOL, rtol=_RTOL, maxiter=400)
            roots.append(math.exp(u))
        return roots
    # q <= 1: g' decreasing; a single crossing when g'(0+) > b
    if q == 1.0 and b >= 1.0:
        return []
    hi = 1.0
    while phi(hi) > 0.0:
        hi *= 2.0
    lo = -1.0
    while phi(lo) < 0.0:
        lo *= 2.0
    return [math.exp(brentq(phi, lo, hi, xtol=_UTOL, rtol=_RTOL, maxiter=400))]


def folds(params: LakeParameters) -> tuple[Fold, ...]:
    """The folds of the equilibrium curve, in ascending lake P.

    The first is the tipping fold (end of the clear branch, a local maximum
    of load along the curve), the second the recovery fold (end of the turbid
    branch, a local minimum).  Empty for a reversible lake.

    Each fold solves ``f = ∂f/∂P = 0`` to machine precision in the lake
    state; the load follows from the explicit relation ``L = s P - r g(P/m)``.
    """
    dim = params.to_dimensionless()
    xs = _critical_x(dim.b, dim.q)
    if len(xs) != 2:
        return ()
    out = []
    for x, kind in zip(xs, ("tipping", "recovery"), strict=True):
        a = _a_of_x(x, dim.b, dim.q)
        out.append(Fold(load=a * params.r, p=x * params.m, kind=kind, x=x, a=a))  # type: ignore[arg-type]
    return tuple(out)


def regime_from_folds(fs: tuple[Fold, ...]) -> Regime:
    """The regime a lake's folds say: the one rule of the whole product.

    ``reversible`` with no folds; ``hysteretic`` when the recovery fold
    (``fs[1]``, where the turbid branch ends) is at a positive load, so a
    large enough load cut brings the lake back; ``irreversible`` when it is
    at zero or negative load, so no load cut alone does (Carpenter, Ludwig &
    Brock 1999).
    """
    if not fs:
        return "reversible"
    return "hysteretic" if fs[1].load > 0.0 else "irreversible"


def regime(params: LakeParameters) -> Regime:
    """``reversible`` (no folds), ``hysteretic`` (both folds at positive load)
    or ``irreversible`` (recovery fold at zero or negative load).

    Class definitions after Carpenter, Ludwig & Brock (1999).
    """
    return regime_from_folds(folds(params))


# --------------------------------------------------------------------------
# equilibria at one load
# --------------------------------------------------------------------------
def _segment_names(n_crit: int) -> list[Branch]:
    if n_crit == 2:
        return ["lower", "middle", "upper"]
    if n_crit == 1:
        return ["middle", "single"]
    return ["single"]


def _equilibrium_at(x: float, params: LakeParameters, branch: Branch) -> Equilibrium:
    dim_b, q = params.to_dimensionless().b, params.q
    gp = _gprime(x, q)
    slope = (params.r / params.m) * (gp - dim_b) if math.isfinite(gp) else math.inf
    # a fold point (slope ~ 0 to rounding) counts as not stable
    tol = 1e-9 * params.r / params.m * max(dim_b, 1e-300)
    stable = slope < -tol
    return Equilibrium(
        p=x * params.m,
        stable=bool(stable),
        branch=branch,
        slope=float(slope),
        return_time=(1.0 / abs(slope)) if stable else math.nan,
    )


def _equilibria_x(a: float, b: float, q: float, crit: list[float]) -> list[tuple[float, int]]:
    """Dimensionless equilibria at load ``a`` as (x, segment index), ascending."""
    bounds = [0.0, *crit, (abs(a) + 1.0) / b + 1.0]
    found: list[tuple[float, int]] = []
    for i in range(len(bounds) - 1):
        x0, x1 = bounds[i], bounds[i + 1]
        f0 = _a_of_x(x0, b, q) - a
        f1 = _a_of_x(x1, b, q) - a
        if f0 == 0.0:
            x = x0
        elif f1 == 0.0:
            x = x1
        elif (f0 < 0.0) != (f1 < 0.0):
            x = brentq(lambda xx: _a_of_x(xx, b, q) - a, x0, x1, xtol=1e-15 * x1, rtol=_RTOL, maxiter=400)
        else:
            continue
        if found and abs(found[-1][0] - x) <= 1e-14 * x:
            continue  # a fold point shared by two segments
        found.append((x, i))
    return found


def equilibria(params: LakeParameters, load: float) -> tuple[Equilibrium, ...]:
    """All equilibria at ``load`` [kg yr⁻¹], in ascending lake P [kg].

    Each carries its stability.  Between the folds there are three: the clear
    (lower) and turbid (upper) stable states and the unstable separatrix
    (middle) between their basins of attraction.  Only ``P >= 0`` is
    considered.
    """
    load = float(load)
    if not math.isfinite(load):
        raise ValueError(f"load must be a finite number [kg yr⁻¹]; got {load!r}")
    dim = params.to_dimensionless()
    crit = _critical_x(dim.b, dim.q)
    names = _segment_names(len(crit))
    out = []
    for x, seg in _equilibria_x(load / params.r, dim.b, dim.q, crit):
        out.append(_equilibrium_at(x, params, names[seg]))
    return tuple(out)


# --------------------------------------------------------------------------
# the curve
# --------------------------------------------------------------------------
def _x_at_a(a: float, b: float, q: float, x0: float, x1: float) -> float:
    f0 = _a_of_x(x0, b, q) - a
    if f0 == 0.0:
        return x0
    f1 = _a_of_x(x1, b, q) - a
    if f1 == 0.0:
        return x1
    return float(brentq(lambda xx: _a_of_x(xx, b, q) - a, x0, x1, xtol=1e-15 * x1, rtol=_RTOL, maxiter=400))


def default_load_range(params: LakeParameters, fs: tuple[Fold, ...] | None = None) -> tuple[float, float]:
    """A load range [kg yr⁻¹] that shows the lake's whole story.

    From zero (or just below a negative recovery load) to twice the tipping
    load; for a lake without folds, to the load that holds the lake at
    three times the recycling half-saturation.
    """
    if fs is None:
        fs = folds(params)
    if fs:
        lo = min(0.0, 1.15 * fs[1].load)
        return lo, 2.0 * fs[0].load
    return 0.0, max(params.s * 3.0 * params.m - params.r * _g(3.0, params.q), 1e-9 * params.r)


def equilibrium_curve(
    params: LakeParameters,
    load_range: tuple[float, float] | None = None,
    n_points: int = 2000,
) -> EquilibriumCurve:
    """Trace the equilibrium curve over ``load_range`` [kg yr⁻¹].

    The curve is parameterised by the lake state and sampled at ``n_points``
    points spaced evenly in arc length (in axes scaled to the range), with
    both folds included exactly.  Each point carries its branch and
    stability.

    Raises
    ------
    ValueError
        When the range is reversed or not finite, or ``n_points < 10``.
    """
    dim = params.to_dimensionless()
    b, q = dim.b, dim.q
    crit = _critical_x(b, q)
    if load_range is None:
        load_range = default_load_range(params)
    lo, hi = float(load_range[0]), float(load_range[1])
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise ValueError("load range must be two finite numbers [kg yr⁻¹]")
    if not lo < hi:
        raise ValueError(f"load range is reversed or empty: {lo:g} to {hi:g}; give the lower load first")
    if n_points < 10:
        raise ValueError("n_points must be at least 10")
    a_lo, a_hi = lo / params.r, hi / params.r
    names = _segment_names(len(crit))
    x_end = (abs(a_hi) + 1.0) / b + 1.0
    bounds = [0.0, *crit, x_end]

    pieces: list[tuple[Branch, float, float]] = []
    for i in range(len(bounds) - 1):
        x0, x1 = bounds[i], bounds[i + 1]
        y0, y1 = _a_of_x(x0, b, q), _a_of_x(x1, b, q)
        seg_lo, seg_hi = min(y0, y1), max(y0, y1)
        c_lo, c_hi = max(seg_lo, a_lo), min(seg_hi, a_hi)
        if c_lo > c_hi:
            continue
        # x at the clipped ends (each segment is monotone)
        ends = []
        for target in (c_lo, c_hi):
            if target == y0:
                ends.append(x0)
            elif target == y1:
                ends.append(x1)
            else:
                ends.append(_x_at_a(target, b, q, x0, x1))
        xs, xe = min(ends), max(ends)
        if xe > xs or len(pieces) == 0:
            pieces.append((names[i], xs, xe))

    # dense sampling of each piece, then even arc length
    dense = 64
    scale_a = a_hi - a_lo
    all_x = [np.linspace(xs, xe, dense * 8) for _, xs, xe in pieces]
    x_span = max(max(float(xx[-1]) for xx in all_x) - min(float(xx[0]) for xx in all_x), 1e-300)
    lengths = []
    for xx in all_x:
        aa = b * xx - _g_vec(xx, q)
        lengths.append(np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(aa) / scale_a, np.diff(xx) / x_span))]))
    total = sum(float(ln[-1]) for ln in lengths) or 1.0
    x_parts = []
    name_parts = []
    for (name, xs, xe), xx, ln in zip(pieces, all_x, lengths, strict=True):
        k = max(2, round(n_points * float(ln[-1]) / total))
        if ln[-1] > 0.0:
            xi = np.interp(np.linspace(0.0, float(ln[-1]), k), ln, xx)
        else:
            xi = np.full(k, xs)
        xi[0], xi[-1] = xs, xe
        x_parts.append(xi)
        name_parts.append(np.full(k, name))
    x_all = np.concatenate(x_parts) if x_parts else np.empty(0)
    br = np.concatenate(name_parts) if name_parts else np.empty(0, dtype=str)
    a_all = b * x_all - _g_vec(x_all, q)
    slope = (params.r / params.m) * (_gprime_vec(x_all, q) - b)
    stable = np.isin(br, ("lower", "upper", "single"))
    with np.errstate(divide="ignore"):
        ret = np.where(stable, 1.0 / np.abs(slope), np.nan)
    return EquilibriumCurve(
        load=a_all * params.r,
        p=x_all * params.m,
        branch=br,
        stable=stable,
        slope=slope,
        return_time=ret,
    )


def analyze(
    params: LakeParameters,
    load: float | None = None,
    load_range: tuple[float, float] | None = None,
    n_points: int = 2000,
) -> LakeAnalysis:
    """Full equilibrium analysis: curve, folds, regime, thresholds, equilibria at ``load``."""
    fs = folds(params)
    reg = regime_from_folds(fs)
    if load_range is None:
        load_range = default_load_range(params, fs)
    curve = equilibrium_curve(params, load_range, n_points)
    eqs = equilibria(params, load) if load is not None else ()
    messages = {
        "reversible": "No folds: the lake has one stable state at every load and recovers when the load is cut.",
        "hysteretic": "Two folds at positive load: past the tipping load the lake flips to turbid, "
        "and the load must come down to the recovery load to bring it back.",
        "irreversible": "The recovery fold lies at a negative load: no load cut alone restores the lake; "
        "in-lake P removal is needed.",
    }
    return LakeAnalysis(
        params=params,
        regime=reg,
        folds=fs,
        tipping_load=fs[0].load if fs else None,
        recovery_load=fs[1].load if fs else None,
        curve=curve,
        load=load,
        equilibria=eqs,
        message=messages[reg],
    )
