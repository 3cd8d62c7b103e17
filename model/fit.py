r"""Fit the lake model to a monitoring record, with bootstrap bands on the folds.

The model
---------
The one dynamic model of the product, the annual map of
:mod:`model.dynamics` (Carpenter, Ludwig & Brock 1999)::

    F(P_t, L_t) = P_t + L_t - s P_t + r P_t^q / (m^q + P_t^q)

with lake P ``P_t`` [kg] in year ``t`` (``TP · V / 10⁶``), external load
``L_t`` [kg yr⁻¹], loss rate ``s`` [yr⁻¹], maximum recycling ``r``
[kg yr⁻¹], half-saturation ``m`` [kg] and exponent ``q`` [–].  Row ``t`` of
a monitoring file gives ``L_t`` and ``P_t``; the load of year ``t`` carries
the lake from ``P_{t-1}`` to ``P_t``, so the first year's load is not used.

Error model
-----------
Lognormal process error on each annual transition, given the observed
state of the year before::

    ln P_{t+1} = ln F(P_t, L_{t+1}; θ) + ε_t,    ε_t ~ iid N(0, σ²)

The maximum-likelihood estimate of ``θ = (s, r, m, q)`` under this model is
the conditional least-squares fit of ``ln P_{t+1}`` on ``ln F``, which is
what :func:`fit_lake` computes.  Why lognormal rather than additive
Gaussian error in kg:

* year-to-year scatter of lake TP grows with its level (a turbid lake
  varies by more kilograms than a clear one), and lognormal error gives a
  constant *relative* scatter; water-quality concentrations are commonly
  analysed on the log scale (common practice, no source);
* ``F > 0`` whenever ``s < 1`` and ``L >= 0``, so every simulated year stays
  positive without the clipping at zero an additive error would need;
* ``σ`` is dimensionless (about the coefficient of variation) and
  comparable between lakes.

The observed TP is taken as the lake state: measurement error in TP is not
modelled.  Such errors-in-variables tend to flatten the fitted recycling
curve; intervals then understate the uncertainty.

Parameter bounds
----------------
``s`` in [0.001, 0.999] yr⁻¹ (an annual map that loses more than all its P
in a year is not a lake); ``q`` in [1, 20] (``q < 1`` would make recycling
steepest at zero P, which sediment release is not; ``q = 1`` is allowed and
has no folds, so the data can always choose a reversible lake); ``r`` in
[10⁻⁴, 10] and ``m`` in [0.1 P_min, 10 P_max], both relative to the
observed lake P.  The optimiser works in ``(s, ln r, ln m, ln q)``.

Uncertainty
-----------
A residual bootstrap (Efron & Tibshirani 1993, *An Introduction to the
Bootstrap*, ch. 8–9): residuals of the fit, centred and inflated by
``sqrt(n/(n-4))`` for the four fitted parameters (Davison & Hinkley 1997,
*Bootstrap Methods and their Application*, sec. 6.2.3, from memory), are
resampled with replacement.  The default ``"recursive"`` scheme simulates
each replicate record forward from the first observed year with the fitted
map and the observed loads, so the replicate's own states carry the noise
(the model-based time-series bootstrap of Efron & Tibshirani 1993,
sec. 8.5); ``"fixed"`` keeps the observed states as regressors.  Each
replicate is refitted (vectorised damped Gauss–Newton from the point
estimate and from the best point of a coarse profile grid) and its folds
are found with :func:`model.equilibrium.folds`.

Percentile intervals (Efron & Tibshirani 1993, ch. 13) at ``level`` are
taken **over the replicates whose lake has folds**; the share of such
replicates is reported as ``fold_fraction`` and every replicate counts
towards the regime probabilities (``reversible`` when it has no fold).  The
regime probabilities are bootstrap proportions, not Bayesian posterior
probabilities.

Identifiability
---------------
The folds are constrained by the data only when the record visits both
branches.  A replicate "sees" both when the record has at least
:data:`MIN_BRANCH_YEARS` years below its tipping fold's lake P (clear
water) and as many above its recovery fold's lake P (turbid); the record
visits both branches when at least half of the bootstrap replicates agree.
Otherwise the record stays in one state, told by the share of the lake's P
supply that the fitted recycling provides, ``r h(P_t) / (L_t + r h(P_t))``
(median below 1/2: clear water; above: turbid).  The threshold that ends
the state the record never shows (the recovery load for a clear record,
the tipping load for a turbid one) is named in a plain-words warning;
both thresholds then get ``estimate = None`` (the point fit's fold of a
one-state record is not a number to quote) and are reported as their
bootstrap bands.  Every band is clipped to the plausible range
``[-2 L_max, 5 L_max]`` (``L_max`` the largest load in the record); a
clipped band sets ``clipped``, withholds the estimate and adds a warning.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.

Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap.
Chapman & Hall, New York.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import least_squares
from scipy.special import expit

from .equilibrium import Regime, folds
from .monitoring import MonitoringSeries
from .params import LakeParameters

__all__ = [
    "DEFAULT_REPLICATES",
    "MIN_BRANCH_YEARS",
    "BootstrapDraws",
    "FitBounds",
    "FitResult",
    "ParameterEstimate",
    "PointFit",
    "RegimeProbability",
    "ResidualDiagnostics",
    "ThresholdBand",
    "bootstrap_refits",
    "fit_lake",
    "fit_monitoring",
    "fit_transitions",
    "refit_batch",
]

PARAM_NAMES = ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")
_UNITS = ("[yr⁻¹]", "[kg yr⁻¹]", "[kg]", "[–]")
_PLAIN = ("loss rate", "maximum recycling rate", "recycling half-saturation", "recycling exponent")

#: Default number of bootstrap replicates.
DEFAULT_REPLICATES = 1000
#: Fewest replicates accepted; at least 500 are recommended for 90% intervals.
MIN_REPLICATES = 100
#: Years a record must spend on a branch for the threshold that ends it to count as constrained.
MIN_BRANCH_YEARS = 3
#: Fewest replicates with folds needed to quote an interval.
MIN_FOLD_REPLICATES = 20

Progress = Callable[[int, int], None]
Scheme = Literal["recursive", "fixed"]


# --------------------------------------------------------------------------
# result objects
# --------------------------------------------------------------------------
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


@dataclass(frozen=True)
class ThresholdBand:
    """A fold load with its bootstrap band.

    Attributes
    ----------
    name : {"tipping_load", "recovery_load"}
    estimate : float or None
        The point fit's fold load [kg yr⁻¹]; ``None`` when the point fit has
        no folds or the record does not constrain this threshold.
    point_value : float or None
        The point fit's fold load even when it is not constrained.
    low, high : float or None
        Percentile interval at ``level`` [kg yr⁻¹] over the replicates with
        folds; ``None`` when fewer than :data:`MIN_FOLD_REPLICATES` have one.
    level : float
        Nominal coverage, e.g. 0.9.
    fold_fraction : float
        Share of the used replicates whose lake has folds.
    constrained : bool
        Whether the record visits the branch this threshold ends and the band
        lies within ``plausible_range``.
    clipped : bool
        Whether ``low``/``high`` were clipped to ``plausible_range`` (the
        estimate is then withheld).
    plausible_range : tuple of float
        ``[-2 L_max, 5 L_max]`` [kg yr⁻¹].
    """

    name: Literal["tipping_load", "recovery_load"]
    estimate: float | None
    point_value: float | None
    low: float | None
    high: float | None
    level: float
    fold_fraction: float
    constrained: bool
    clipped: bool
    plausible_range: tuple[float, float]

    def to_dict(self) -> dict[str, float | None]:
        """``{"estimate", "low", "high"}`` for the JSON contract."""
        return {"estimate": self.estimate, "low": self.low, "high": self.high}


@dataclass(frozen=True)
class RegimeProbability:
    """Share of bootstrap replicates in each regime (sums to 1)."""

    reversible: float
    hysteretic: float
    irreversible: float

    def to_dict(self) -> dict[str, float]:
        return {"reversible": self.reversible, "hysteretic": self.hysteretic, "irreversible": self.irreversible}


@dataclass(frozen=True, eq=False)
class BootstrapDraws:
    """The bootstrap refits, one entry per replicate.

    ``params`` has columns ``(s, r, m, q)``; ``tipping``/``recovery`` are
    the fold loads [kg yr⁻¹] and ``tipping_p``/``recovery_p`` the fold lake
    P [kg], ``nan`` for a replicate without folds; ``used`` is False for a refit
    that did not converge (left out of every summary).
    """

    params: NDArray[np.float64]
    sse: NDArray[np.float64]
    used: NDArray[np.bool_]
    tipping: NDArray[np.float64]
    recovery: NDArray[np.float64]
    tipping_p: NDArray[np.float64]
    recovery_p: NDArray[np.float64]
    regime: NDArray[np.str_]
    scheme: Scheme

    @property
    def n(self) -> int:
        return int(self.sse.size)


@dataclass(frozen=True, eq=False)
class FitResult:
    """Everything :func:`fit_lake` says about a record.

    ``status`` is ``"ok"`` when there are no warnings and ``"warning"``
    otherwise; ``message`` is a one-line summary; ``warnings`` the
    plain-words caveats.  ``to_dict()`` gives the JSON contract of
    ``turnback fit --json``.
    """

    status: Literal["ok", "warning"]
    message: str
    params: LakeParameters
    point: PointFit
    regime: Regime
    tipping_load: ThresholdBand
    recovery_load: ThresholdBand
    regime_probability: RegimeProbability
    warnings: tuple[str, ...]
    replicates: int
    replicates_used: int
    level: float
    draws: BootstrapDraws
    volume_m3: float | None = None
    years: tuple[int, int] | None = None

    def to_dict(self) -> dict[str, Any]:
        """The ``turnback fit --json`` object (units kg and yr)."""
        return {
            "params": self.params.to_dict(),
            "tipping_load": self.tipping_load.to_dict(),
            "recovery_load": self.recovery_load.to_dict(),
            "regime_probability": self.regime_probability.to_dict(),
            "warnings": list(self.warnings),
        }


# --------------------------------------------------------------------------
# the model on the log scale, vectorised over replicates
# --------------------------------------------------------------------------
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


def _theta_to_params(theta: NDArray[np.float64]) -> LakeParameters:
    return LakeParameters(
        loss_rate=float(theta[0]),
        recycling_max=float(math.exp(theta[1])),
        recycling_half=float(math.exp(theta[2])),
        recycling_exponent=float(math.exp(theta[3])),
    )


def _params_to_theta(params: LakeParameters) -> NDArray[np.float64]:
    return np.array([params.s, math.log(params.r), math.log(params.m), math.log(params.q)])


_GRID_Q = np.log(np.array([1.2, 1.6, 2.2, 3.0, 4.0, 5.5, 7.5, 10.0, 14.0, 19.0]))


def _grid_starts(
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


# --------------------------------------------------------------------------
# the point fit
# --------------------------------------------------------------------------
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


def _as_1d(name: str, values: ArrayLike) -> NDArray[np.float64]:
    arr = np.asarray(values, dtype=float)
    if arr.ndim != 1:
        raise ValueError(f"{name} must be one value a year (a 1-D sequence)")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must hold finite numbers only")
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
    x0 = _as_1d("p_prev", p_prev)
    lt = _as_1d("load", load)
    x1 = _as_1d("p_next", p_next)
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

    pts, sse = _grid_starts(x0[None, :], x1[None, :], lt, lo, hi)
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
    params = _theta_to_params(theta)
    values = (params.s, params.r, params.m, params.q)
    for k in range(4):
        var = float(cov[k, k])
        se: float | None
        if at_bound[k] or unidentified[k] or not math.isfinite(var) or var <= 0:
            se = None
        else:
            se = math.sqrt(var) * (1.0 if k == 0 else values[k])
        estimates.append(
            ParameterEstimate(PARAM_NAMES[k], values[k], se, _UNITS[k], bool(at_bound[k]), not bool(unidentified[k]))
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


# --------------------------------------------------------------------------
# the bootstrap
# --------------------------------------------------------------------------
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
    progress : callable(done, total), optional
        Called with the number of replicates finished.
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
        raise ValueError("the bootstrap needs a successful point fit")
    if replicates < MIN_REPLICATES:
        raise ValueError(f"replicates must be at least {MIN_REPLICATES} (1000 recommended)")
    if scheme not in ("recursive", "fixed"):
        raise ValueError("scheme must be 'recursive' or 'fixed'")
    x = _as_1d("p_obs", p_obs)
    lt = _as_1d("load", load)
    if lt.size != x.size - 1:
        raise ValueError("load must have one entry per transition (one fewer than p_obs)")
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
    if progress is not None:
        progress(0, replicates)
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
        pts, gsse = _grid_starts(p_prev, p_next, lt, lo, hi)
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
            fs = folds(_theta_to_params(out_theta[i]))
            if fs:
                tip[i], rec[i] = fs[0].load, fs[1].load
                tip_p[i], rec_p[i] = fs[0].p, fs[1].p
                reg[i] = "hysteretic" if fs[1].load > 0.0 else "irreversible"
            else:
                reg[i] = "reversible"
        if progress is not None:
            progress(stop, replicates)
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


# --------------------------------------------------------------------------
# the whole analysis
# --------------------------------------------------------------------------
def _band(
    name: Literal["tipping_load", "recovery_load"],
    values: NDArray[np.float64],
    used: NDArray[np.bool_],
    point_value: float | None,
    constrained: bool,
    level: float,
    plausible: tuple[float, float],
) -> ThresholdBand:
    good = values[used & np.isfinite(values)]
    n_used = int(np.sum(used))
    frac = good.size / n_used if n_used else 0.0
    low: float | None = None
    high: float | None = None
    clipped = False
    if good.size >= MIN_FOLD_REPLICATES:
        a = (1.0 - level) / 2.0
        lo_v, hi_v = (float(v) for v in np.quantile(good, [a, 1.0 - a]))
        if lo_v < plausible[0] or hi_v > plausible[1]:
            clipped = True
        low = min(max(lo_v, plausible[0]), plausible[1])
        high = min(max(hi_v, plausible[0]), plausible[1])
    constrained = constrained and not clipped and point_value is not None
    estimate = point_value if constrained else None
    return ThresholdBand(name, estimate, point_value, low, high, level, frac, constrained, clipped, plausible)


def _fmt_load(v: float | None) -> str:
    return "undefined" if v is None else f"{v:,.0f}"


def fit_lake(
    p_kg: ArrayLike,
    load_kg: ArrayLike,
    *,
    volume_m3: float | None = None,
    replicates: int = DEFAULT_REPLICATES,
    level: float = 0.9,
    scheme: Scheme = "recursive",
    rng: np.random.Generator | int | None = None,
    progress: Progress | None = None,
    bounds: FitBounds | None = None,
    n_starts: int = 8,
    years: tuple[int, int] | None = None,
) -> FitResult:
    """Fit the annual map to a record of lake P and load, with bootstrap bands on the folds.

    Parameters
    ----------
    p_kg : array_like, shape (n,)
        Lake P mass in consecutive years [kg], all > 0.
    load_kg : array_like, shape (n,)
        External load in the same years [kg yr⁻¹], >= 0; the load of year
        ``t`` drives the step from year ``t-1`` to ``t`` (the first is unused).
    volume_m3 : float, optional
        Lake volume [m³], carried into the result.
    replicates : int
        Bootstrap replicates (default 1000; at least 100, 500 or more
        recommended).
    level : float
        Nominal coverage of the intervals, in (0, 1); default 0.9.
    scheme : {"recursive", "fixed"}
        Bootstrap scheme (:func:`bootstrap_refits`).
    rng : numpy.random.Generator or int or None
        Seed or generator for the random starts and the bootstrap; the same
        seed gives the same result.
    progress : callable(done, total), optional
        Called as the bootstrap proceeds.
    bounds : FitBounds, optional
    n_starts : int
        Starting points of the point fit.
    years : tuple of int, optional
        First and last calendar year, carried into the result.

    Returns
    -------
    FitResult

    Raises
    ------
    ValueError
        For records too short, non-positive P, negative loads, a bad
        ``level`` or ``replicates``, or when no fit converges.

    References
    ----------
    Carpenter, Ludwig & Brock (1999), Ecological Applications 9:751–771;
    Efron & Tibshirani (1993), An Introduction to the Bootstrap.
    """
    p = _as_1d("p_kg", p_kg)
    lt = _as_1d("load_kg", load_kg)
    if p.size != lt.size:
        raise ValueError("p_kg and load_kg must have one value per year each")
    if p.size < 7:
        raise ValueError("the fit needs at least 7 consecutive years")
    if np.any(p <= 0.0):
        raise ValueError("lake P must be greater than 0 in every year")
    if np.any(lt < 0.0):
        raise ValueError("loads must be >= 0 in every year")
    if not 0.5 <= level < 1.0:
        raise ValueError("level must be in [0.5, 1), e.g. 0.9")
    if replicates < MIN_REPLICATES:
        raise ValueError(f"replicates must be at least {MIN_REPLICATES} (1000 recommended)")
    gen = np.random.default_rng(rng)
    point = fit_transitions(p[:-1], lt[1:], p[1:], bounds=bounds, p_scale=p, n_starts=n_starts, rng=gen)
    if point.status != "ok" or point.params is None:
        raise ValueError(f"the model could not be fitted to this record: {point.message}")
    draws = bootstrap_refits(point, p, lt[1:], replicates=replicates, scheme=scheme, rng=gen, progress=progress)
    params = point.params
    fs = folds(params)
    used = draws.used
    n_used = int(np.sum(used))
    warnings: list[str] = []

    # Does the record visit both branches?  Asked of every replicate with folds (its own fold P), so
    # that one badly placed point fit cannot decide it.
    with_folds = used & np.isfinite(draws.tipping)
    n_clear = np.sum(p[None, :] < draws.tipping_p[:, None], axis=1)
    n_turbid = np.sum(p[None, :] > draws.recovery_p[:, None], axis=1)
    both = with_folds & (n_clear >= MIN_BRANCH_YEARS) & (n_turbid >= MIN_BRANCH_YEARS)
    share_both = float(np.sum(both)) / n_used if n_used else 0.0
    visits_both = share_both >= 0.5
    # Which state a one-branch record shows: the share of the lake's P supply that the fitted
    # recycling provides, r h(P_t) / (L_t + r h(P_t)); small on the clear branch, large on the turbid one.
    h = expit(params.q * (np.log(p[:-1]) - math.log(params.m)))
    internal = float(np.median(params.r * h / (lt[1:] + params.r * h)))
    side: Literal["both", "clear", "turbid"] = "both" if visits_both else ("clear" if internal < 0.5 else "turbid")
    tip_ok = rec_ok = bool(fs) and side == "both"
    l_max = float(np.max(lt))
    plausible = (-2.0 * l_max, 5.0 * l_max)
    tip_band = _band("tipping_load", draws.tipping, used, fs[0].load if fs else None, tip_ok, level, plausible)
    rec_band = _band("recovery_load", draws.recovery, used, fs[1].load if fs else None, rec_ok, level, plausible)
    pct = f"{level:.0%}"

    if not fs and int(np.sum(with_folds)) < MIN_FOLD_REPLICATES:
        warnings.append(
            "Neither the fit nor its bootstrap refits show folds: the record is consistent with a reversible lake, "
            "so there is no tipping or recovery load to report."
        )
    elif side != "both":
        missing, shown, lost = (
            ("turbid", "clear-water", "recovery load") if side == "clear" else ("clear-water", "turbid", "tipping load")
        )
        band = rec_band if side == "clear" else tip_band
        span = (
            f"; it is reported only as the wide bootstrap band {_fmt_load(band.low)} to {_fmt_load(band.high)} kg/yr"
            if band.low is not None
            else "; no band can be given"
        )
        warnings.append(
            f"The record never shows the {missing} state (it stays in the {shown} state, with sediment recycling "
            f"supplying {internal:.0%} of the lake's P in a typical year), so the {lost} is not constrained by the "
            f"data{span}."
        )
        kept, kept_band = ("tipping load", tip_band) if side == "clear" else ("recovery load", rec_band)
        if kept_band.low is not None:
            warnings.append(
                f"With one state only, the {kept} is bounded only loosely, by the {shown} years: "
                f"{pct} band {_fmt_load(kept_band.low)} to {_fmt_load(kept_band.high)} kg/yr, no single estimate."
            )
    for band, label in ((tip_band, "tipping load"), (rec_band, "recovery load")):
        if band.clipped:
            warnings.append(
                f"The {pct} band for the {label} reaches beyond the plausible range "
                f"({plausible[0]:,.0f} to {plausible[1]:,.0f} kg/yr) and is clipped to it."
            )
        elif (
            side == "both"
            and band.constrained
            and band.estimate is not None
            and band.low is not None
            and band.high is not None
            and band.high - band.low > abs(band.estimate)
        ):
            warnings.append(
                f"The {pct} band for the {label} is wide ({band.low:,.0f} to {band.high:,.0f} kg/yr): "
                "the record constrains it only loosely."
            )
    frac = tip_band.fold_fraction
    if fs and frac < 0.95:
        warnings.append(
            f"{1.0 - frac:.0%} of the bootstrap refits show no folds (a reversible lake); the intervals are over "
            f"the {frac:.0%} that have folds."
        )
    if not fs and frac > 0.0 and tip_band.low is not None:
        warnings.append(
            f"The best fit has no folds, but {frac:.0%} of the bootstrap refits do; the intervals are over those."
        )
    for est, plain in zip(point.estimates, _PLAIN, strict=True):
        if est.at_bound:
            warnings.append(
                f"The fitted {plain} ({est.value:.4g} {est.unit}) is at the edge of its allowed range, so the "
                "data do not pin it down."
            )
        elif not est.identified:
            warnings.append(
                f"The record carries no information on the {plain} near its fitted value ({est.value:.4g} "
                f"{est.unit}); it has no standard error."
            )
    diag = point.diagnostics
    assert diag is not None
    if abs(diag.lag1_autocorrelation) > 2.0 / math.sqrt(diag.n):
        warnings.append(
            f"The residuals are autocorrelated (lag-1 {diag.lag1_autocorrelation:+.2f}): the model misses some "
            "year-to-year memory of the lake, so the intervals are likely too narrow."
        )
    if math.isfinite(diag.shapiro_p) and diag.shapiro_p < 0.01:
        warnings.append(
            f"The residuals depart from the lognormal error model (Shapiro–Wilk p = {diag.shapiro_p:.3f}); "
            "treat the intervals as rough."
        )
    if replicates < 500:
        warnings.append(f"Only {replicates} bootstrap replicates: the ends of the {pct} intervals are rough; use 1000.")
    n_failed = replicates - n_used
    if n_failed > 0.01 * replicates:
        warnings.append(f"{n_failed} of {replicates} bootstrap refits did not converge and were left out.")

    counts = {k: float(np.sum(draws.regime[used] == k)) for k in ("reversible", "hysteretic", "irreversible")}
    total = sum(counts.values()) or 1.0
    probs = RegimeProbability(**{k: v / total for k, v in counts.items()})
    point_regime: Regime = "reversible" if not fs else ("hysteretic" if fs[1].load > 0.0 else "irreversible")
    message = (
        f"{point_regime} lake; tipping load {_fmt_load(tip_band.estimate)} kg/yr "
        f"({pct} band {_fmt_load(tip_band.low)} to {_fmt_load(tip_band.high)}), recovery load "
        f"{_fmt_load(rec_band.estimate)} kg/yr ({pct} band {_fmt_load(rec_band.low)} to {_fmt_load(rec_band.high)})"
    )
    return FitResult(
        status="warning" if warnings else "ok",
        message=message,
        params=params,
        point=point,
        regime=point_regime,
        tipping_load=tip_band,
        recovery_load=rec_band,
        regime_probability=probs,
        warnings=tuple(warnings),
        replicates=replicates,
        replicates_used=n_used,
        level=level,
        draws=draws,
        volume_m3=volume_m3,
        years=years,
    )


def fit_monitoring(
    series: MonitoringSeries,
    volume_m3: float,
    *,
    replicates: int = DEFAULT_REPLICATES,
    level: float = 0.9,
    scheme: Scheme = "recursive",
    rng: np.random.Generator | int | None = None,
    progress: Progress | None = None,
    bounds: FitBounds | None = None,
    n_starts: int = 8,
) -> FitResult:
    """Fit a checked monitoring record (:func:`model.monitoring.parse_monitoring`).

    Lake P is ``P = TP · V / 10⁶`` [kg] with ``TP`` [µg L⁻¹] and the lake
    volume ``V`` [m³]; everything else as :func:`fit_lake`.  Pure function:
    the series is not changed.
    """
    p = series.p_kg(volume_m3)
    return fit_lake(
        p,
        series.load_kg,
        volume_m3=float(volume_m3),
        replicates=replicates,
        level=level,
        scheme=scheme,
        rng=rng,
        progress=progress,
        bounds=bounds,
        n_starts=n_starts,
        years=(int(series.years[0]), int(series.years[-1])),
    )
