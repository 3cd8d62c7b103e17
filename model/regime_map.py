r"""The two-parameter regime map: load against loss rate or against maximum recycling.

In the dimensionless form of Carpenter, Ludwig & Brock (1999)
(:math:`x = P/m`, :math:`a = L/r`, :math:`b = s m / r`) an equilibrium
satisfies :math:`a = b x - g(x)` with :math:`g(x) = x^q/(1+x^q)`, and a fold
adds :math:`b = g'(x)`, :math:`g'(x) = q x^{q-1}/(1+x^q)^2`.  Taking the
lake state :math:`x` as the parameter gives both fold curves exactly, with
no root finding:

.. math::

    b(x) = g'(x) = \frac{q\, g (1-g)}{x}, \qquad
    a(x) = x g'(x) - g(x) = g\,\bigl(q (1-g) - 1\bigr)
         = \frac{x^q (q - 1 - x^q)}{(1+x^q)^2}.

For :math:`x < x_c` this is the **tipping** fold (end of the clear-water
branch), for :math:`x > x_c` the **recovery** fold (end of the turbid
branch); they meet at the **cusp** :math:`x_c^q = (q-1)/(q+1)`,
:math:`b_c = g'(x_c)` (for :math:`q = 2`, :math:`b_c = 3\sqrt3/8`,
:math:`a_c = 1/8`).  The recovery fold crosses zero load at
:math:`x^q = q - 1`, :math:`b_{irr} = (q-1)^{(q-1)/q}/q`: below it the lake is
**irreversible**.  Derivations in :mod:`turnback.model.equilibrium`.

Two planes are offered, each for fixed values of the other parameters:

``axis="loss_rate"``
    :math:`s = (r/m)\, b(x)`, :math:`L = r\, a(x)`.  Reversible for
    :math:`s \ge s_c = b_c r/m`, hysteretic for :math:`s_{irr} < s < s_c`,
    irreversible for :math:`s \le s_{irr} = b_{irr} r/m`.
``axis="recycling_max"``
    :math:`r = s m / b(x)`, :math:`L = r\, a(x) = s m\, x (q - 1 - x^q)/q`.
    Reversible for :math:`r \le r_c = s m / b_c`, hysteretic for
    :math:`r_c < r < r_{irr}`, irreversible for :math:`r \ge r_{irr} = s m/b_{irr}`.

Between the two fold curves the lake has two stable states (clear and
turbid); outside them one.  The regime is a property of the parameters
alone, so in either plane it is a band of the parameter axis; the fold
curves give the load thresholds within the band.  All loads are in the
units of ``r`` per year [kg yr⁻¹], ``s`` in [yr⁻¹].

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import expit

from .equilibrium import Regime, cusp_b, folds, irreversible_b, regime_from_folds
from .params import LakeParameters

__all__ = [
    "Axis",
    "CuspPoint",
    "FoldCurve",
    "RegimeGrid",
    "RegimeMap",
    "SampleRegimes",
    "classify_samples",
    "regime_map",
]

Axis = Literal["loss_rate", "recycling_max"]
States = Literal["single", "clear", "turbid", "both"]
_AXES: tuple[Axis, ...] = ("loss_rate", "recycling_max")
_REGIMES: tuple[Regime, ...] = ("reversible", "hysteretic", "irreversible")


# --------------------------------------------------------------------------
# the parametric fold condition
# --------------------------------------------------------------------------
def _fold_ab(x: NDArray[np.float64], q: float) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """``(a(x), b(x))`` on the fold locus, stable for small and large ``x``."""
    z = q * np.log(x)
    g = expit(z)
    one_minus_g = expit(-z)
    b = q * g * one_minus_g / x
    a = g * (q * one_minus_g - 1.0)
    return a, b


def _fold_x(b: float, q: float) -> tuple[float, float] | None:
    """The two states where ``g'(x) = b`` (tipping, recovery), from the engine; None if none."""
    fs = folds(LakeParameters(loss_rate=b, recycling_max=1.0, recycling_half=1.0, recycling_exponent=q))
    if len(fs) != 2:
        return None
    return fs[0].x, fs[1].x


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class FoldCurve:
    """One fold curve in the map's plane, ordered by the lake state ``x``.

    Attributes
    ----------
    kind : {"tipping", "recovery"}
    load : ndarray
        Load at the fold [kg yr⁻¹] (negative parts of the recovery curve
        lie below zero load: the irreversible part).
    parameter : ndarray
        ``s`` [yr⁻¹] or ``r`` [kg yr⁻¹] at the fold.
    p : ndarray
        Lake P at the fold [kg].
    x : ndarray
        Dimensionless state ``P/m`` at the fold.
    """

    kind: Literal["tipping", "recovery"]
    load: NDArray[np.float64]
    parameter: NDArray[np.float64]
    p: NDArray[np.float64]
    x: NDArray[np.float64]


@dataclass(frozen=True)
class CuspPoint:
    """Where the two fold curves meet: ``x_c^q = (q−1)/(q+1)``, ``b_c = g'(x_c)``.

    ``load`` [kg yr⁻¹], ``parameter`` (``s`` [yr⁻¹] or ``r`` [kg yr⁻¹]),
    ``p`` [kg], and the dimensionless ``x``, ``a``, ``b``.
    """

    load: float
    parameter: float
    p: float
    x: float
    a: float
    b: float


@dataclass(frozen=True)
class RegimeGrid:
    """Classification of (load, parameter) points.

    Arrays share the broadcast shape of the inputs.

    Attributes
    ----------
    load, parameter : ndarray
    regime : ndarray of str
        ``reversible``, ``hysteretic`` or ``irreversible`` (depends on the
        parameter only).
    n_stable : ndarray of int
        Number of stable equilibria at that load (1 or 2).
    states : ndarray of str
        ``single`` (reversible: one state that moves smoothly with load),
        ``clear`` (only the clear-water state), ``turbid`` (only the turbid
        state) or ``both`` (between the fold curves).
    """

    load: NDArray[np.float64]
    parameter: NDArray[np.float64]
    regime: NDArray[np.str_]
    n_stable: NDArray[np.int_]
    states: NDArray[np.str_]


@dataclass(frozen=True)
class SampleRegimes:
    """Regime of each parameter sample (e.g. a bootstrap cloud).

    Attributes
    ----------
    regime : ndarray of str
        One entry per sample.
    b : ndarray
        Dimensionless loss ``s m / r`` of each sample.
    counts : dict
        Samples per regime (all three keys present).
    fractions : dict
        Share of samples per regime.
    """

    regime: NDArray[np.str_]
    b: NDArray[np.float64]
    counts: dict[str, int]
    fractions: dict[str, float]


@dataclass(frozen=True)
class RegimeMap:
    """Fold curves, cusp and regime bands of a lake in the (load, parameter) plane.

    Attributes
    ----------
    axis : {"loss_rate", "recycling_max"}
        The parameter on the second axis.
    params : LakeParameters
        The lake; all parameters but ``axis`` are held at these values, and
        ``params``' own value of ``axis`` is the lake's place on the map.
    parameter_range : (float, float)
        Range of the parameter covered by the curves.
    tipping, recovery : FoldCurve
        The two fold curves (empty arrays when no fold lies in the range).
    fold_load, fold_parameter : ndarray
        Both curves as one line through the cusp (tipping then recovery,
        ascending ``x``), for drawing.
    fold_kind : ndarray of str
        ``tipping`` or ``recovery`` for each point of that line.
    cusp : CuspPoint or None
        ``None`` for ``q <= 1`` (no folds anywhere).
    cusp_parameter, irreversible_parameter : float or None
        ``s_c`` and ``s_irr`` (or ``r_c`` and ``r_irr``): the edges of the
        regime bands.
    bands : tuple of (regime, lo, hi)
        The regime bands of the parameter within ``parameter_range``.
    """

    axis: Axis
    params: LakeParameters
    parameter_range: tuple[float, float]
    tipping: FoldCurve
    recovery: FoldCurve
    fold_load: NDArray[np.float64]
    fold_parameter: NDArray[np.float64]
    fold_kind: NDArray[np.str_]
    cusp: CuspPoint | None
    cusp_parameter: float | None
    irreversible_parameter: float | None
    bands: tuple[tuple[Regime, float, float], ...]

    @property
    def lake_parameter(self) -> float:
        """The lake's own value of the map's parameter."""
        return float(getattr(self.params, self.axis))

    def _with(self, value: float) -> LakeParameters:
        return replace(self.params, **{self.axis: value})

    def classify(self, load: ArrayLike, parameter: ArrayLike) -> RegimeGrid:
        """Regime, number of stable states and which states, at (load, parameter) points.

        ``load`` [kg yr⁻¹] and ``parameter`` broadcast against each other.
        The fold loads at each distinct parameter value come from the
        engine (:func:`turnback.model.equilibrium.folds`), so the classes agree with
        :func:`turnback.model.equilibrium.equilibria`.  A point exactly on a fold
        curve counts the fold as not stable.

        Raises
        ------
        ValueError
            For negative or non-finite loads, or parameters that are not
            finite numbers > 0.
        """
        try:
            ld, pa = np.broadcast_arrays(np.asarray(load, dtype=float), np.asarray(parameter, dtype=float))
        except ValueError:
            raise ValueError("load and parameter must have shapes that broadcast together") from None
        if not np.all(np.isfinite(ld)) or np.any(ld < 0.0):
            raise ValueError("loads must be finite numbers >= 0 [kg yr⁻¹]")
        if not np.all(np.isfinite(pa)) or np.any(pa <= 0.0):
            raise ValueError(f"{self.axis} values must be finite numbers greater than 0")
        uniq, inverse = np.unique(pa, return_inverse=True)
        tip = np.full(uniq.shape, np.nan)
        rec = np.full(uniq.shape, np.nan)
        reg = np.empty(uniq.shape, dtype="<U12")
        for i, v in enumerate(uniq):
            fs = folds(self._with(float(v)))
            reg[i] = regime_from_folds(fs)
            if fs:
                tip[i], rec[i] = fs[0].load, fs[1].load
        inverse = inverse.reshape(pa.shape)
        t, r, g = tip[inverse], rec[inverse], reg[inverse]
        has = np.isfinite(t)
        both = has & (ld > r) & (ld < t)
        turbid = has & (ld >= t)
        states = np.where(~has, "single", np.where(both, "both", np.where(turbid, "turbid", "clear")))
        n_stable = np.where(both, 2, 1)
        return RegimeGrid(load=ld, parameter=pa, regime=g, n_stable=n_stable, states=states.astype("<U6"))

    def grid(self, loads: ArrayLike, parameters: ArrayLike) -> RegimeGrid:
        """:meth:`classify` on the mesh of 1-D ``loads`` (columns) and ``parameters`` (rows).

        Arrays have shape ``(len(parameters), len(loads))``, row ``i`` at
        ``parameters[i]`` — the layout of a heatmap with load on x.
        """
        lo = np.asarray(loads, dtype=float).ravel()
        pa = np.asarray(parameters, dtype=float).ravel()
        return self.classify(lo[np.newaxis, :], pa[:, np.newaxis])

    def place(
        self, samples: Any, load: ArrayLike
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.bool_]]:
        """Where parameter samples sit on this map at a given load.

        Each sample is moved to the point of this map's plane with the same
        dimensionless ``a = L/r`` and ``b = s m/r``; for samples with this
        map's ``q`` that point has exactly the sample's regime and stable
        states.

        Returns
        -------
        (load, parameter, same_q) : tuple of ndarray
            ``same_q`` is False where a sample's ``q`` differs from the
            map's, so its placement is only indicative (use
            :func:`classify_samples` for its exact regime).
        """
        s, r, m, q = _sample_columns(samples)
        ld = np.broadcast_to(np.asarray(load, dtype=float), s.shape)
        a = ld / r
        b = s * m / r
        p0 = self.params
        if self.axis == "loss_rate":
            par = b * p0.r / p0.m
            eq_load = a * p0.r
        else:
            par = p0.s * p0.m / b
            eq_load = a * par
        same_q = np.isclose(q, p0.q, rtol=1e-12, atol=0.0)
        return eq_load, par, same_q


# --------------------------------------------------------------------------
# building the map
# --------------------------------------------------------------------------
def _to_parameter(b: NDArray[np.float64] | float, axis: Axis, p: LakeParameters) -> Any:
    if axis == "loss_rate":
        return b * p.r / p.m
    return p.s * p.m / b


def _to_b(v: float, axis: Axis, p: LakeParameters) -> float:
    if axis == "loss_rate":
        return v * p.m / p.r
    return p.s * p.m / v


def _default_range(axis: Axis, p: LakeParameters) -> tuple[float, float]:
    own = float(getattr(p, axis))
    if not p.q > 1.0:
        return 0.5 * own, 2.0 * own
    pc = float(_to_parameter(cusp_b(p.q), axis, p))
    pirr = float(_to_parameter(irreversible_b(p.q), axis, p))
    if axis == "loss_rate":
        return min(pc / 20.0, 0.5 * own), 1.5 * max(pc, own)
    return 0.5 * min(pc, own), 2.0 * max(pirr, own)


def _resample(
    x: NDArray[np.float64], load: NDArray[np.float64], par: NDArray[np.float64], n: int, scales: tuple[float, float]
) -> NDArray[np.float64]:
    """``n`` values of ``x`` evenly spaced in arc length of (load, parameter), ends kept."""
    seg = np.hypot(np.diff(load) / scales[0], np.diff(par) / scales[1])
    s = np.concatenate([[0.0], np.cumsum(seg)])
    if s[-1] <= 0.0:
        return np.full(n, x[0])
    out = np.interp(np.linspace(0.0, s[-1], n), s, x)
    out[0], out[-1] = x[0], x[-1]
    return out


def regime_map(
    params: LakeParameters,
    axis: Axis = "loss_rate",
    parameter_range: tuple[float, float] | None = None,
    n_points: int = 400,
) -> RegimeMap:
    """Fold curves and regime bands of ``params`` in the (load, ``axis``) plane.

    Parameters
    ----------
    params : LakeParameters
        The lake; the parameters other than ``axis`` are held fixed.
    axis : {"loss_rate", "recycling_max"}
        The parameter on the second axis: ``s`` [yr⁻¹] or ``r`` [kg yr⁻¹].
    parameter_range : (float, float), optional
        Range of that parameter; by default one that shows all three
        regimes and the lake's own value.
    n_points : int
        Points on each fold curve (evenly spaced along the curve).

    Raises
    ------
    ValueError
        For an unknown axis, a reversed or non-positive range, or
        ``n_points < 10``.
    """
    if axis not in _AXES:
        raise ValueError(f"axis must be 'loss_rate' or 'recycling_max'; got {axis!r}")
    if not isinstance(n_points, int | np.integer) or n_points < 10:
        raise ValueError("n_points must be a whole number >= 10")
    if parameter_range is None:
        parameter_range = _default_range(axis, params)
    lo, hi = float(parameter_range[0]), float(parameter_range[1])
    if not (math.isfinite(lo) and math.isfinite(hi) and 0.0 < lo < hi):
        raise ValueError(f"{axis} range must be two finite numbers with 0 < low < high; got {lo:g} to {hi:g}")
    q, r, m = params.q, params.r, params.m
    empty = np.empty(0)

    def curve(kind: Literal["tipping", "recovery"], xs: NDArray[np.float64]) -> FoldCurve:
        a, b = _fold_ab(xs, q)
        par = np.asarray(_to_parameter(b, axis, params), dtype=float)
        load = a * (r if axis == "loss_rate" else par)
        return FoldCurve(kind, load, par, xs * m, xs)

    if not q > 1.0:
        none = FoldCurve("tipping", empty, empty, empty, empty)
        return RegimeMap(
            axis,
            params,
            (lo, hi),
            none,
            replace(none, kind="recovery"),
            empty,
            empty,
            np.empty(0, dtype="<U8"),
            None,
            None,
            None,
            (("reversible", lo, hi),),
        )

    bc, birr = cusp_b(q), irreversible_b(q)
    xc = ((q - 1.0) / (q + 1.0)) ** (1.0 / q)
    ac = float(_fold_ab(np.array([xc]), q)[0][0])
    pc = float(_to_parameter(bc, axis, params))
    pirr = float(_to_parameter(birr, axis, params))
    cusp = CuspPoint(load=ac * (r if axis == "loss_rate" else pc), parameter=pc, p=xc * m, x=xc, a=ac, b=bc)

    # range of b covered, and the x interval of each curve inside it
    b_ends = sorted((_to_b(lo, axis, params), _to_b(hi, axis, params)))
    b_lo, b_hi = b_ends
    if b_lo >= bc:
        tipping = FoldCurve("tipping", empty, empty, empty, empty)
        recovery = FoldCurve("recovery", empty, empty, empty, empty)
    else:
        far = _fold_x(b_lo, q)
        assert far is not None
        if b_hi >= bc:
            near: tuple[float, float] = (xc, xc)
        else:
            got = _fold_x(b_hi, q)
            assert got is not None
            near = got
        dense = 4096
        xt = np.exp(np.linspace(math.log(far[0]), math.log(near[0]), dense))
        xr = np.exp(np.linspace(math.log(near[1]), math.log(far[1]), dense))
        ct, cr = curve("tipping", xt), curve("recovery", xr)
        all_load = np.concatenate([ct.load, cr.load])
        scales = (max(float(np.ptp(all_load)), 1e-300), hi - lo)
        xt = _resample(xt, ct.load, ct.parameter, n_points, scales)
        xr = _resample(xr, cr.load, cr.parameter, n_points, scales)
        tipping, recovery = curve("tipping", xt), curve("recovery", xr)

    # regime bands of the parameter inside the range (ascending parameter)
    if axis == "loss_rate":
        edges: list[tuple[Regime, float, float]] = [
            ("irreversible", 0.0, pirr),
            ("hysteretic", pirr, pc),
            ("reversible", pc, math.inf),
        ]
    else:
        edges = [("reversible", 0.0, pc), ("hysteretic", pc, pirr), ("irreversible", pirr, math.inf)]
    bands = tuple((name, max(a, lo), min(b, hi)) for name, a, b in edges if min(b, hi) > max(a, lo))

    return RegimeMap(
        axis=axis,
        params=params,
        parameter_range=(lo, hi),
        tipping=tipping,
        recovery=recovery,
        fold_load=np.concatenate([tipping.load, recovery.load]),
        fold_parameter=np.concatenate([tipping.parameter, recovery.parameter]),
        fold_kind=np.concatenate([np.full(tipping.load.size, "tipping"), np.full(recovery.load.size, "recovery")]),
        cusp=cusp,
        cusp_parameter=pc,
        irreversible_parameter=pirr,
        bands=bands,
    )


# --------------------------------------------------------------------------
# parameter samples
# --------------------------------------------------------------------------
_NAMES = ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")


def _sample_columns(samples: Any) -> tuple[NDArray[np.float64], ...]:
    """``(s, r, m, q)`` arrays from LakeParameters objects, a mapping of columns or an (n, 4) array."""
    if isinstance(samples, LakeParameters):
        samples = [samples]
    if isinstance(samples, Mapping):
        missing = [k for k in _NAMES if k not in samples]
        if missing:
            raise ValueError(f"parameter samples are missing {', '.join(missing)}")
        cols = [np.atleast_1d(np.asarray(samples[k], dtype=float)) for k in _NAMES]
        try:
            cols = list(np.broadcast_arrays(*cols))
        except ValueError:
            raise ValueError("parameter sample columns must have the same length") from None
    elif isinstance(samples, Sequence) and samples and all(isinstance(p, LakeParameters) for p in samples):
        cols = [np.array([getattr(p, k) for p in samples], dtype=float) for k in _NAMES]
    else:
        try:
            arr = np.asarray(samples, dtype=float)
        except (TypeError, ValueError):
            raise ValueError(
                "parameter samples must be LakeParameters, a mapping of the four parameter columns or an (n, 4) array"
            ) from None
        if arr.ndim != 2 or arr.shape[1] != 4:
            raise ValueError(f"a parameter sample array must have shape (n, 4) in the order {', '.join(_NAMES)}")
        cols = [arr[:, i] for i in range(4)]
    for name, c in zip(_NAMES, cols, strict=True):
        if c.size == 0:
            raise ValueError("there are no parameter samples")
        if not np.all(np.isfinite(c)) or np.any(c <= 0.0):
            raise ValueError(f"{name} samples must be finite numbers greater than 0")
    return tuple(cols)


def classify_samples(samples: Any) -> SampleRegimes:
    """Regime of each parameter sample, from the closed-form boundaries.

    ``b = s m / r``; reversible for ``q <= 1`` or ``b >= b_c(q)``,
    irreversible for ``b <= b_irr(q)``, hysteretic between (see
    :func:`turnback.model.equilibrium.cusp_b`, :func:`turnback.model.equilibrium.irreversible_b`).
    The same classes as :func:`turnback.model.equilibrium.regime`, up to rounding
    for a sample within ~1e-12 of a boundary.

    Parameters
    ----------
    samples
        A sequence of :class:`LakeParameters`, a mapping with the columns
        ``loss_rate``, ``recycling_max``, ``recycling_half``,
        ``recycling_exponent``, or an array of shape (n, 4) in that order.
    """
    s, r, m, q = _sample_columns(samples)
    b = s * m / r
    folds_possible = q > 1.0
    qs = np.where(folds_possible, q, 2.0)  # placeholder where q <= 1, masked below
    xc_q = (qs - 1.0) / (qs + 1.0)
    bc = qs * xc_q ** ((qs - 1.0) / qs) / (1.0 + xc_q) ** 2
    birr = (qs - 1.0) ** ((qs - 1.0) / qs) / qs
    reg = np.where(
        ~folds_possible | (b >= bc),
        "reversible",
        np.where(b <= birr, "irreversible", "hysteretic"),
    ).astype("<U12")
    counts: dict[str, int] = {k: int(np.count_nonzero(reg == k)) for k in _REGIMES}
    total = reg.size
    return SampleRegimes(regime=reg, b=b, counts=counts, fractions={k: v / total for k, v in counts.items()})
