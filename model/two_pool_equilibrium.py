r"""Equilibria, folds, stability and regime of the two-pool lake.

The lake (:mod:`turnback.model.two_pool`, Carpenter 2005) is

.. math::

    \dot P = L - (s + h) P + r M g(P), \qquad
    \dot M = s P - b M - r M g(P), \qquad g(P) = \frac{P^q}{m^q + P^q}.

Equilibrium curve
    :math:`M^* = s P / (b + r g)` and
    :math:`L(P) = (s + h) P - r g\, s P / (b + r g) = h P + s b P / D`,
    :math:`D = b + r g(P)`: explicit in the water P, so the whole curve is
    traced exactly by walking along :math:`P` (no root finding).

Folds (closed form)
    With :math:`P g'(P) = q g (1 - g)`,

    .. math:: D^2 \frac{dL}{dP} = h D^2 + s b D - s b r q\, g (1 - g) =: \varphi(g),

    a quadratic in :math:`g`:
    :math:`\varphi = A g^2 + B g + C` with :math:`A = r (h r + s b q)`,
    :math:`B = b r (2h + s - s q)`, :math:`C = b^2 (h + s)`.  Since
    :math:`\varphi(0) = C > 0`, :math:`\varphi(1) = (b + r)(h (b + r) + s b) > 0`
    and the vertex :math:`g_v = -B/2A < 1/2`, the lake has two folds exactly
    when :math:`B < 0` (i.e. :math:`s (q - 1) > 2 h`) and
    :math:`B^2 > 4 A C`; both roots then lie in (0, 1).  The roots are
    polished by Brent's method on :math:`\varphi` in :math:`u = \ln(P/m)` to
    machine precision.  The fold at the smaller :math:`P` (a local maximum
    of :math:`L`) is the **tipping** fold, the other the **recovery** fold.
    :math:`L(P) > 0` for :math:`P > 0`, so with :math:`b > 0` the recovery
    fold is at a positive load: the regime (one rule,
    :func:`turnback.model.equilibrium.regime_from_folds`) is reversible or
    hysteretic.

Stability (2×2 Jacobian)
    At an equilibrium, with :math:`w = r M^* g'(P) = r s q g (1 - g)/D`,

    .. math::

        J = \begin{pmatrix} -(s + h) + w & r g \\ s - w & -D \end{pmatrix},\qquad
        \operatorname{tr} J = -(s + h) + w - D,\qquad
        \det J = s b + h D - w b = D \, \frac{dL}{dP}.

    The differential equations are stable where both eigenvalues have a
    negative real part: :math:`\det J > 0` and :math:`\operatorname{tr} J < 0`.
    So the falling part of the curve (:math:`dL/dP < 0`) is a saddle, the
    separatrix between the clear and turbid basins, and stability changes at
    the folds.  The annual map :math:`x \mapsto x + F(x)` is stable where the
    eigenvalues :math:`1 + \lambda` lie inside the unit circle; by the Jury
    conditions: :math:`\det J > 0`, :math:`\operatorname{tr} J + \det J < 0`
    and :math:`4 + 2 \operatorname{tr} J + \det J > 0`.

When the map and the differential equations agree
    Both lose stability at the folds (:math:`\det J = 0`).  Elsewhere they
    agree at every equilibrium where (a) no real eigenvalue lies at or below
    −2 and (b) no complex pair lies outside the unit circle centred at −1.
    (a) holds for every lake the annual map accepts: the column Gershgorin
    discs of :math:`J` lie in :math:`\operatorname{Re}\lambda \ge -\max(2s + h, b + 2r)`,
    and the map's limits :math:`s + h \le 1`, :math:`b + r \le 1` keep that
    above −2 (the one-box analogue is :math:`s < 2`).  (b) holds whenever
    the eigenvalues are real, which is guaranteed where
    :math:`J_{12} J_{21} \ge 0`, i.e. :math:`r q g (1 - g) \le b + r g`, at
    every state when :math:`b \ge r (q - 1)^2 / 4q`.  Otherwise a complex
    pair with :math:`-\det J < \operatorname{tr} J < 0` (just before a Hopf
    point of the differential equations) is stable for the equations and
    unstable for the map.  Each :class:`TwoPoolEquilibrium` carries both
    answers (``stable`` for the equations, ``map_stable`` for the map).

References
----------
Carpenter, S. R. (2005). Eutrophication of aquatic ecosystems: bistability
and soil phosphorus. PNAS 102(29), 10002–10005.

Jury, E. I. (1964). Theory and Application of the z-Transform Method. Wiley.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import brentq
from scipy.special import expit

from .equilibrium import Branch, Equilibrium, EquilibriumCurve, Fold, Regime, regime_from_folds
from .two_pool import TwoPoolParameters

__all__ = [
    "TwoPoolAnalysis",
    "TwoPoolCurve",
    "TwoPoolEquilibrium",
    "TwoPoolFold",
    "analyze_two_pool",
    "default_load_range",
    "equilibria",
    "equilibrium_curve",
    "fold_fractions",
    "folds",
    "regime",
    "stability",
]

_UTOL = 1e-15
_RTOL = 4.0 * np.finfo(float).eps


# --------------------------------------------------------------------------
# result objects
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class TwoPoolFold(Fold):
    """A fold of the two-pool curve.

    ``load`` [kg yr⁻¹], water P ``p`` [kg], sediment P ``m`` [kg] and
    ``kind`` as for :class:`~turnback.model.equilibrium.Fold`; ``x = P/m``
    (with ``m`` the recycling half-saturation) and ``a = L / ((s + h) m)``
    are the dimensionless state and load.
    """

    m: float


@dataclass(frozen=True)
class TwoPoolEquilibrium(Equilibrium):
    """One equilibrium of the two-pool lake at a given load.

    Attributes
    ----------
    p, m : float
        Water P and sediment P [kg].
    stable : bool
        Stable for the differential equations (both eigenvalues of the
        Jacobian with negative real part).
    map_stable : bool
        Stable for the annual map (both ``1 + λ`` inside the unit circle).
    branch : str
        ``lower``, ``middle``, ``upper`` or ``single`` by the folds.
    slope : float
        Largest real part of the Jacobian's eigenvalues [yr⁻¹].
    return_time : float
        ``1/|slope|`` [yr] when stable, ``nan`` otherwise.
    eigenvalues : tuple of complex
    """

    m: float
    map_stable: bool
    eigenvalues: tuple[complex, complex]


@dataclass(frozen=True)
class TwoPoolCurve(EquilibriumCurve):
    """The two-pool equilibrium curve: :class:`EquilibriumCurve` plus sediment P ``m`` [kg] and map stability."""

    m: NDArray[np.float64]
    map_stable: NDArray[np.bool_]


@dataclass(frozen=True)
class TwoPoolAnalysis:
    """Everything the engine says about a two-pool lake."""

    params: TwoPoolParameters
    regime: Regime
    folds: tuple[TwoPoolFold, ...]
    tipping_load: float | None
    recovery_load: float | None
    curve: TwoPoolCurve
    load: float | None = None
    equilibria: tuple[TwoPoolEquilibrium, ...] = field(default=())
    message: str = ""


# --------------------------------------------------------------------------
# the pieces, vectorised over P
# --------------------------------------------------------------------------
def _g_pair(params: TwoPoolParameters, p: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """``g(P)`` and ``1 - g(P)``, each accurate in its own tail."""
    with np.errstate(divide="ignore"):
        z = params.q * (np.log(p) - math.log(params.m))
    return np.where(p > 0.0, expit(z), 0.0), np.where(p > 0.0, expit(-z), 1.0)


def _balance(params: TwoPoolParameters, p: NDArray[np.float64]) -> dict[str, NDArray[np.float64]]:
    """``g``, ``D``, ``M*``, ``L`` and the Jacobian's trace and determinant at equilibrium."""
    s, h, b, r, q = params.s, params.h, params.b, params.r, params.q
    g, one_minus_g = _g_pair(params, p)
    d = b + r * g
    m_sed = s * p / d
    load = h * p + b * m_sed
    w = r * s * q * g * one_minus_g / d
    tr = -(s + h) + w - d
    det = s * b + h * d - w * b
    return {"g": g, "d": d, "m": m_sed, "load": load, "tr": tr, "det": det}


def _load_scalar(params: TwoPoolParameters, p: float) -> float:
    """``L(P) = h P + s b P / (b + r g(P))`` [kg yr⁻¹] for one ``P`` (plain floats, for the root finders)."""
    if p <= 0.0:
        return 0.0
    z = params.q * (math.log(p) - math.log(params.m))
    if z >= 0.0:
        g = 1.0 / (1.0 + math.exp(-z))
    else:
        e = math.exp(z)
        g = e / (1.0 + e)
    return params.h * p + params.s * params.b * p / (params.b + params.r * g)


def stability(tr: NDArray[np.float64], det: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Largest real part of the eigenvalues [yr⁻¹] and spectral radius of ``I + J`` [–], from trace and determinant."""
    disc = tr * tr - 4.0 * det
    root = np.sqrt(np.abs(disc))
    real = disc >= 0.0
    max_re = np.where(real, 0.5 * (tr + root), 0.5 * tr)
    l1, l2 = 0.5 * (tr + root), 0.5 * (tr - root)
    radius_real = np.maximum(np.abs(1.0 + l1), np.abs(1.0 + l2))
    radius_complex = np.sqrt(np.maximum(1.0 + tr + det, 0.0))
    return max_re, np.where(real, radius_real, radius_complex)


def _tolerance(params: TwoPoolParameters) -> float:
    """Eigenvalues within this of neutral count as not stable (a fold point, to rounding) [yr⁻¹]."""
    return 1e-9 * (params.s + params.h + params.b + params.r)


# --------------------------------------------------------------------------
# folds and regime
# --------------------------------------------------------------------------
def fold_fractions(params: TwoPoolParameters) -> tuple[float, ...]:
    """The recycling fractions ``g`` at the folds from the quadratic ``φ(g) = 0``, ascending (closed form).

    Empty when the lake has no folds.  Uses the cancellation-free form of the
    quadratic formula; :func:`folds` polishes these to machine precision.
    """
    s, h, b, r, q = params.s, params.h, params.b, params.r, params.q
    a_ = r * (h * r + s * b * q)
    b_ = b * r * (2.0 * h + s - s * q)
    c_ = b * b * (h + s)
    disc = b_ * b_ - 4.0 * a_ * c_
    if b_ >= 0.0 or disc <= 0.0:
        return ()
    top = -b_ + math.sqrt(disc)
    return (2.0 * c_ / top, top / (2.0 * a_))


def _phi_u(params: TwoPoolParameters, u: float) -> float:
    """``φ = D² dL/dP`` at ``P = m e^u``, scaled by ``1/(b (s + h))`` [yr⁻¹]."""
    s, h, b, r, q = params.s, params.h, params.b, params.r, params.q
    g = float(expit(q * u))
    one_minus_g = float(expit(-q * u))
    d = b + r * g
    return (h * d * d + s * b * d - s * b * r * q * g * one_minus_g) / (b * (s + h))


def _critical_p(params: TwoPoolParameters) -> list[float]:
    """Water P [kg] at the two folds, ascending; empty without folds."""
    gs = fold_fractions(params)
    if not gs:
        return []
    s, h, b, r, q = params.s, params.h, params.b, params.r, params.q
    g_v = -(b * r * (2.0 * h + s - s * q)) / (2.0 * r * (h * r + s * b * q))
    u_v = (math.log(g_v) - math.log1p(-g_v)) / q
    if _phi_u(params, u_v) >= 0.0:  # roots that rounding puts on top of each other: a cusp, no folds
        return []
    out = []
    for g, direction in zip(gs, (-1.0, 1.0), strict=True):
        u_guess = (math.log(g) - math.log1p(-g)) / q
        step = max(abs(u_guess - u_v), 1e-3)
        far = u_v + direction * step
        while _phi_u(params, far) < 0.0:
            step *= 2.0
            far = u_v + direction * step
        lo, hi = (far, u_v) if direction < 0 else (u_v, far)
        u = brentq(lambda uu: _phi_u(params, uu), lo, hi, xtol=_UTOL, rtol=_RTOL, maxiter=400)
        out.append(params.m * math.exp(u))
    return out


def folds(params: TwoPoolParameters) -> tuple[TwoPoolFold, ...]:
    """The folds of the two-pool curve, ascending in water P: (tipping, recovery), or ().

    Each solves ``dL/dP = 0`` (equivalently ``det J = 0`` at equilibrium) to
    machine precision in the water P; load and sediment P follow from the
    closed form ``L(P)``, ``M*(P)``.
    """
    ps = _critical_p(params)
    if len(ps) != 2:
        return ()
    st = _balance(params, np.array(ps))
    scale = (params.s + params.h) * params.m
    return tuple(
        TwoPoolFold(
            load=float(st["load"][i]),
            p=ps[i],
            kind=kind,  # type: ignore[arg-type]
            x=ps[i] / params.m,
            a=float(st["load"][i]) / scale,
            m=float(st["m"][i]),
        )
        for i, kind in enumerate(("tipping", "recovery"))
    )


def regime(params: TwoPoolParameters) -> Regime:
    """``reversible`` or ``hysteretic`` (never ``irreversible`` while burial > 0), by the one regime rule."""
    return regime_from_folds(folds(params))


# --------------------------------------------------------------------------
# equilibria at one load
# --------------------------------------------------------------------------
def _segment_names(n_crit: int) -> list[Branch]:
    return ["lower", "middle", "upper"] if n_crit == 2 else ["single"]


def _p_end(params: TwoPoolParameters, load: float) -> float:
    """A water P [kg] where ``L(P) >= load``: ``L(P) >= P (h + s b/(b + r))``."""
    return abs(load) / (params.h + params.s * params.b / (params.b + params.r)) * (1.0 + 1e-9) + 1e-300


def _equilibrium_at(params: TwoPoolParameters, p: float, branch: Branch) -> TwoPoolEquilibrium:
    st = _balance(params, np.array([p]))
    tr, det = st["tr"], st["det"]
    max_re, radius = stability(tr, det)
    tol = _tolerance(params)
    disc = float(tr[0] ** 2 - 4.0 * det[0])
    root = complex(math.sqrt(disc)) if disc >= 0.0 else complex(0.0, math.sqrt(-disc))
    eig = (0.5 * (float(tr[0]) + root), 0.5 * (float(tr[0]) - root))
    stable = bool(max_re[0] < -tol)
    return TwoPoolEquilibrium(
        p=p,
        stable=stable,
        branch=branch,
        slope=float(max_re[0]),
        return_time=1.0 / abs(float(max_re[0])) if stable else math.nan,
        m=float(st["m"][0]),
        map_stable=bool(radius[0] < 1.0 - tol),
        eigenvalues=eig,
    )


def equilibria(params: TwoPoolParameters, load: float) -> tuple[TwoPoolEquilibrium, ...]:
    """All equilibria at ``load`` [kg yr⁻¹] with water P >= 0, ascending in water P.

    Between the folds: the clear (lower) and turbid (upper) states and the
    saddle (middle) between their basins.  A negative load has none (every
    equilibrium needs ``L = h P + b M* >= 0``).
    """
    load = float(load)
    if not math.isfinite(load):
        raise ValueError(f"load must be a finite number [kg yr⁻¹]; got {load!r}")
    if load < 0.0:
        return ()
    crit = _critical_p(params)
    names = _segment_names(len(crit))
    bounds = [0.0, *crit, max(_p_end(params, load), *(crit or [0.0]))]
    out: list[TwoPoolEquilibrium] = []

    def f(pp: float) -> float:
        return _load_scalar(params, pp) - load

    for i in range(len(bounds) - 1):
        p0, p1 = bounds[i], bounds[i + 1]
        f0, f1 = f(p0), f(p1)
        if f0 == 0.0:
            p = p0
        elif f1 == 0.0:
            p = p1
        elif (f0 < 0.0) != (f1 < 0.0):
            p = brentq(f, p0, p1, xtol=1e-15 * p1, rtol=_RTOL, maxiter=400)
        else:
            continue
        if out and abs(out[-1].p - p) <= 1e-14 * p:
            continue  # a fold point shared by two segments
        out.append(_equilibrium_at(params, p, names[i]))
    return tuple(out)


# --------------------------------------------------------------------------
# the curve
# --------------------------------------------------------------------------
def default_load_range(params: TwoPoolParameters, fs: tuple[TwoPoolFold, ...] | None = None) -> tuple[float, float]:
    """Zero to twice the tipping load [kg yr⁻¹]; without folds, to the load holding water P at ``3 m``."""
    if fs is None:
        fs = folds(params)
    if fs:
        return 0.0, 2.0 * fs[0].load
    return 0.0, float(params.load_at(3.0 * params.m))


def _p_at_load(params: TwoPoolParameters, target: float, p0: float, p1: float) -> float:
    f0 = _load_scalar(params, p0) - target
    if f0 == 0.0:
        return p0
    f1 = _load_scalar(params, p1) - target
    if f1 == 0.0:
        return p1
    return float(brentq(lambda pp: _load_scalar(params, pp) - target, p0, p1, xtol=1e-15 * p1, rtol=_RTOL, maxiter=400))


def equilibrium_curve(
    params: TwoPoolParameters,
    load_range: tuple[float, float] | None = None,
    n_points: int = 2000,
    *,
    _crit: list[float] | None = None,
) -> TwoPoolCurve:
    """Trace the equilibrium curve over ``load_range`` [kg yr⁻¹], walking along the water P.

    Points are spaced evenly in arc length (axes scaled to the range), with
    both folds included exactly; each carries its branch, sediment P,
    stability for the equations and for the map.

    Raises
    ------
    ValueError
        When the range is reversed or not finite, or ``n_points < 10``.
    """
    crit = _critical_p(params) if _crit is None else _crit
    if load_range is None:
        load_range = default_load_range(params)
    lo, hi = float(load_range[0]), float(load_range[1])
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise ValueError("load range must be two finite numbers [kg yr⁻¹]")
    if not lo < hi:
        raise ValueError(f"load range is reversed or empty: {lo:g} to {hi:g}; give the lower load first")
    if n_points < 10:
        raise ValueError("n_points must be at least 10")
    names = _segment_names(len(crit))
    p_top = max(_p_end(params, max(hi, 0.0)), *(crit or [0.0]))
    bounds = [0.0, *crit, p_top]
    pieces: list[tuple[Branch, float, float]] = []
    for i in range(len(bounds) - 1):
        p0, p1 = bounds[i], bounds[i + 1]
        y0, y1 = _load_scalar(params, p0), _load_scalar(params, p1)
        c_lo, c_hi = max(min(y0, y1), lo), min(max(y0, y1), hi)
        if c_lo > c_hi:
            continue
        ends = [p0 if t == y0 else p1 if t == y1 else _p_at_load(params, t, p0, p1) for t in (c_lo, c_hi)]
        ps, pe = min(ends), max(ends)
        if pe > ps or not pieces:
            pieces.append((names[i], ps, pe))
    dense = 512
    all_p = [np.linspace(ps, pe, dense) for _, ps, pe in pieces]
    if all_p:
        p_span = max(max(float(pp[-1]) for pp in all_p) - min(float(pp[0]) for pp in all_p), 1e-300)
    else:
        p_span = 1.0
    lengths = []
    for pp in all_p:
        ll = _balance(params, pp)["load"]
        lengths.append(np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(ll) / (hi - lo), np.diff(pp) / p_span))]))
    total = sum(float(ln[-1]) for ln in lengths) or 1.0
    p_parts, name_parts = [], []
    for (name, ps, pe), pp, ln in zip(pieces, all_p, lengths, strict=True):
        k = max(2, round(n_points * float(ln[-1]) / total))
        pi = np.interp(np.linspace(0.0, float(ln[-1]), k), ln, pp) if ln[-1] > 0.0 else np.full(k, ps)
        pi[0], pi[-1] = ps, pe
        p_parts.append(pi)
        name_parts.append(np.full(k, name))
    p_all = np.concatenate(p_parts) if p_parts else np.empty(0)
    br = np.concatenate(name_parts) if name_parts else np.empty(0, dtype=str)
    st = _balance(params, p_all)
    max_re, radius = stability(st["tr"], st["det"])
    tol = _tolerance(params)
    stable = max_re < -tol
    with np.errstate(divide="ignore"):
        ret = np.where(stable, 1.0 / np.abs(max_re), np.nan)
    return TwoPoolCurve(
        load=st["load"],
        p=p_all,
        branch=br,
        stable=stable,
        slope=max_re,
        return_time=ret,
        m=st["m"],
        map_stable=radius < 1.0 - tol,
    )


_MESSAGES: dict[str, str] = {
    "reversible": "No folds: the lake has one stable state at every load; after a load cut the water still "
    "waits for the sediment P to drain.",
    "hysteretic": "Two folds: past the tipping load the lake flips to turbid, and the load must come down to "
    "the recovery load to bring it back; the sediment P then keeps feeding the water for years.",
    "irreversible": "The recovery fold lies at a negative load: no load cut alone restores the lake.",
}


def analyze_two_pool(
    params: TwoPoolParameters,
    load: float | None = None,
    load_range: tuple[float, float] | None = None,
    n_points: int = 2000,
) -> TwoPoolAnalysis:
    """Full equilibrium analysis of a two-pool lake: curve, folds, regime, thresholds, equilibria at ``load``."""
    fs = folds(params)
    reg = regime_from_folds(fs)
    if load_range is None:
        load_range = default_load_range(params, fs)
    curve = equilibrium_curve(params, load_range, n_points, _crit=[f.p for f in fs])
    eqs = equilibria(params, load) if load is not None else ()
    return TwoPoolAnalysis(
        params=params,
        regime=reg,
        folds=fs,
        tipping_load=fs[0].load if fs else None,
        recovery_load=fs[1].load if fs else None,
        curve=curve,
        load=load,
        equilibria=eqs,
        message=_MESSAGES[reg],
    )
