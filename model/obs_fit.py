r"""The fit that knows sampling error: maximum likelihood and posterior draws of the state-space model.

The model and its Laplace-approximated likelihood are in
:mod:`turnback.model.state_space`: the true lake P follows the annual map
with lognormal process error (SD ``σ``), and the observed annual log-mean is
the true state plus Gaussian observation error (SD ``τ_t``, from the
samples' standard errors, or one ``τ`` estimated with the rest when only
annual means are given).

Estimation
----------
* **Maximum likelihood**: L-BFGS-B (:func:`scipy.optimize.minimize`) on the
  working coordinates ``(s, ln r, ln m, ln q, ln σ[, ln τ])`` within the
  box of :class:`~turnback.model.point_fit.FitBounds` (``σ`` and ``τ`` in
  [0.005, 2]), with central-difference gradients computed as one batch,
  started from the conditional least-squares fit with several splits of
  its residual scatter between process and observation error.  Standard
  errors from the inverse of the finite-difference Hessian (delta method
  for ``r``, ``m``, ``q``).
* **Posterior draws**: the affine-invariant ensemble sampler with the
  parallel stretch move (Goodman & Weare 2010; Foreman-Mackey et al. 2013).
  The prior is flat within the box on ``(s, ln r, ln m, ln q)`` and on the
  SDs ``σ`` and ``τ`` themselves, the uniform prior on a standard deviation
  that Gelman (2006) recommends for variance components: a flat prior on
  ``ln σ`` would pile mass near ``σ = 0`` when the record cannot tell
  process from observation error, which makes the dynamics look
  deterministic and the fold bands too narrow (measured in the coverage
  study).  The walkers start
  in a small ball around the maximum-likelihood point; after a burn-in the
  ensemble is kept every ``thin`` steps.  The sampler needs no tuning and
  is invariant to the strong correlations between ``r``, ``m`` and ``q``.
  Each proposal's inner Laplace problem starts from the states of the
  walker it moves.

The fold bands of a fit by this method are therefore equal-tailed posterior
credible intervals, and the regime probabilities posterior shares; their
frequentist coverage is measured in ``bench/bench_coverage.py``.

References
----------
Goodman, J. & Weare, J. (2010). Ensemble samplers with affine invariance.
Communications in Applied Mathematics and Computational Science 5(1), 65–80.

Gelman, A. (2006). Prior distributions for variance parameters in
hierarchical models. Bayesian Analysis 1(3), 515–534.

Foreman-Mackey, D., Hogg, D. W., Lang, D. & Goodman, J. (2013). emcee: the
MCMC hammer. Publications of the Astronomical Society of the Pacific
125(925), 306–312.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import minimize

from .equilibrium import folds, regime_from_folds
from .params import LakeParameters
from .point_fit import (
    PARAM_NAMES,
    PARAM_UNITS,
    FitBounds,
    ParameterEstimate,
    PointFit,
    ResidualDiagnostics,
    as_1d,
    fit_transitions,
    theta_to_params,
)
from .progress import Cancel, Progress, check_cancel, report
from .state_space import innovations, laplace_loglik, state_step

__all__ = ["SD_BOUNDS", "FoldDraws", "ObservationErrorFit", "fit_observation_error", "folds_of_draws"]

#: Bounds of the process and observation SDs on the log scale [–].
SD_BOUNDS = (0.005, 2.0)
TauSource = Literal["samples", "estimated"]


@dataclass(frozen=True, eq=False)
class FoldDraws:
    """Folds of many parameter sets (rows ``s, r, m, q``).

    Loads [kg yr⁻¹], lake P [kg] and regime; ``nan`` where a set has no folds.
    """

    tipping: NDArray[np.float64]
    recovery: NDArray[np.float64]
    tipping_p: NDArray[np.float64]
    recovery_p: NDArray[np.float64]
    regime: NDArray[np.str_]


def folds_of_draws(params: NDArray[np.float64]) -> FoldDraws:
    """The folds of each parameter set (rows ``s, r, m, q``) by :func:`turnback.model.equilibrium.folds`."""
    k = params.shape[0]
    tip, rec, tip_p, rec_p = (np.full(k, np.nan) for _ in range(4))
    reg = np.empty(k, dtype="<U12")
    for i in range(k):
        s, r, m, q = (float(v) for v in params[i])
        fs = folds(LakeParameters(loss_rate=s, recycling_max=r, recycling_half=m, recycling_exponent=q))
        reg[i] = regime_from_folds(fs)
        if fs:
            tip[i], rec[i], tip_p[i], rec_p[i] = fs[0].load, fs[1].load, fs[0].p, fs[1].p
    return FoldDraws(tip, rec, tip_p, rec_p, reg)


@dataclass(frozen=True, eq=False)
class ObservationErrorFit:
    """Maximum-likelihood estimate and posterior draws of the state-space model.

    Attributes
    ----------
    point : PointFit
        The maximum-likelihood lake parameters in the form of the least-squares
        fit: estimates with standard errors; ``residuals`` are the process
        residuals at the most likely states, and ``diagnostics`` describe the
        standardised one-step-ahead prediction errors
        (:func:`~turnback.model.state_space.innovations`; SD near 1 under the model).
    process_sd : float
        ``σ̂`` [–].
    observation_sd : float or None
        ``τ̂`` [–] when estimated; None when taken from the samples.
    tau : ndarray, shape (n,)
        Observation SD used in each year [–].
    tau_source : {"samples", "estimated"}
    loglik : float
        Laplace log-likelihood at the estimate.
    states : ndarray, shape (n,)
        Most likely true lake P [kg] given the estimate.
    draws : ndarray, shape (D, k)
        Posterior draws in working coordinates ``(s, ln r, ln m, ln q, ln σ[, ln τ])``.
    acceptance : float
        Share of accepted stretch moves after burn-in.
    evaluations : int
        Likelihood evaluations (each over one parameter set).
    """

    point: PointFit
    process_sd: float
    observation_sd: float | None
    tau: NDArray[np.float64]
    tau_source: TauSource
    loglik: float
    states: NDArray[np.float64]
    draws: NDArray[np.float64]
    acceptance: float
    evaluations: int

    @property
    def draw_params(self) -> NDArray[np.float64]:
        """Posterior draws of ``(s, r, m, q)`` [yr⁻¹, kg yr⁻¹, kg, –]."""
        return np.column_stack([self.draws[:, 0], np.exp(self.draws[:, 1:4])])


class _Target:
    """The log posterior (flat prior in the box) of one record, evaluated for batches."""

    def __init__(
        self,
        y: NDArray[np.float64],
        load: NDArray[np.float64],
        tau: NDArray[np.float64] | None,
        lo: NDArray[np.float64],
        hi: NDArray[np.float64],
    ) -> None:
        self.y, self.load, self.tau, self.lo, self.hi = y, load, tau, lo, hi
        self.evaluations = 0

    def __call__(
        self, theta: NDArray[np.float64], x0: NDArray[np.float64] | None = None, *, box: bool = True
    ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        th = np.atleast_2d(theta)
        tau = self.tau if self.tau is not None else np.exp(th[:, 5:6])
        inside = np.all((th >= self.lo) & (th <= self.hi), axis=1) if box else np.ones(th.shape[0], dtype=bool)
        ll = np.full(th.shape[0], -np.inf)
        modes = np.broadcast_to(self.y, (th.shape[0], self.y.size)).copy() if x0 is None else x0.copy()
        if inside.any():
            t_in = tau if np.ndim(tau) == 1 else tau[inside]
            res = laplace_loglik(th[inside], self.y, self.load, t_in, x0=None if x0 is None else x0[inside])
            ll[inside] = res.loglik
            modes[inside] = res.mode
            self.evaluations += int(inside.sum())
        return ll, modes

    def log_prior(self, theta: NDArray[np.float64]) -> NDArray[np.float64]:
        """Flat on ``(s, ln r, ln m, ln q)`` and on the SDs themselves (not their logs), within the box.

        In the working coordinate ``ln σ`` a flat prior on ``σ`` has density
        ``∝ σ``: the term ``ln σ (+ ln τ)``.
        """
        th = np.atleast_2d(theta)
        out: NDArray[np.float64] = np.sum(th[:, 4:], axis=1)
        return out


def _fd_gradient(target: _Target, th: NDArray[np.float64], h: float = 1e-5) -> tuple[float, NDArray[np.float64]]:
    d = th.size
    pts = np.vstack([th, th + h * np.eye(d), th - h * np.eye(d)])
    ll, _ = target(pts, box=False)
    f = -ll
    if not np.all(np.isfinite(f)):
        return (float(f[0]) if np.isfinite(f[0]) else 1e300), np.zeros(d)
    return float(f[0]), (f[1 : d + 1] - f[d + 1 :]) / (2.0 * h)


def _fd_hessian(target: _Target, th: NDArray[np.float64], h: float = 2e-3) -> NDArray[np.float64]:
    """Central-difference Hessian of the log-likelihood, all points in one batch."""
    d = th.size
    eye = np.eye(d)
    pts = [th]
    for i in range(d):
        pts += [th + h * eye[i], th - h * eye[i]]
    pairs = [(i, j) for i in range(d) for j in range(i + 1, d)]
    for i, j in pairs:
        for a, b in ((1, 1), (1, -1), (-1, 1), (-1, -1)):
            pts.append(th + h * (a * eye[i] + b * eye[j]))
    ll, _ = target(np.array(pts), box=False)
    f0 = ll[0]
    hess = np.empty((d, d))
    for i in range(d):
        hess[i, i] = (ll[1 + 2 * i] - 2.0 * f0 + ll[2 + 2 * i]) / (h * h)
    base = 1 + 2 * d
    for k, (i, j) in enumerate(pairs):
        pp, pm, mp, mm = ll[base + 4 * k : base + 4 * k + 4]
        hess[i, j] = hess[j, i] = (pp - pm - mp + mm) / (4.0 * h * h)
    return hess


def _estimates(
    th: NDArray[np.float64], cov: NDArray[np.float64] | None, lo: NDArray[np.float64], hi: NDArray[np.float64]
) -> tuple[ParameterEstimate, ...]:
    params = theta_to_params(th[:4])
    values = (params.s, params.r, params.m, params.q)
    span = hi - lo
    at_bound = (th[:4] <= lo[:4] + 1e-4 * span[:4]) | (th[:4] >= hi[:4] - 1e-4 * span[:4])
    out = []
    for k in range(4):
        se = None
        ident = cov is not None and math.isfinite(float(cov[k, k])) and float(cov[k, k]) > 0.0
        if ident and not at_bound[k] and cov is not None:
            se = math.sqrt(float(cov[k, k])) * (1.0 if k == 0 else values[k])
        out.append(ParameterEstimate(PARAM_NAMES[k], values[k], se, PARAM_UNITS[k], bool(at_bound[k]), ident))
    return tuple(out)


def _covariance(hess: NDArray[np.float64], rcond: float = 1e-10) -> NDArray[np.float64] | None:
    """``(-H)⁻¹`` when ``-H`` is positive definite (scaled eigenvalues above ``rcond``), else None."""
    neg = -hess
    d = np.sqrt(np.abs(np.diag(neg)))
    if not np.all(np.isfinite(neg)) or np.any(d <= 0.0):
        return None
    scaled = neg / np.outer(d, d)
    w, v = np.linalg.eigh(scaled)
    if w.min() <= rcond * max(w.max(), 1e-300):
        return None
    out: NDArray[np.float64] = (v / w) @ v.T / np.outer(d, d)
    return out


def _diagnostics(res: NDArray[np.float64], n_par: int) -> ResidualDiagnostics:
    from scipy.stats import shapiro  # imported here: scipy.stats is slow to import

    n = res.size
    sd = float(math.sqrt(np.sum(res**2) / max(n - n_par, 1)))
    c = res - res.mean()
    denom = float(np.sum(c * c))
    rho = float(np.sum(c[1:] * c[:-1]) / denom) if denom > 0 else 0.0
    w, pv = (float(v) for v in shapiro(res)) if n >= 3 and denom > 0 else (math.nan, math.nan)
    return ResidualDiagnostics(n=n, sd=sd, lag1_autocorrelation=rho, shapiro_w=w, shapiro_p=pv)


def _reflect(x: NDArray[np.float64], lo: NDArray[np.float64], hi: NDArray[np.float64]) -> NDArray[np.float64]:
    span = hi - lo
    y = np.mod(x - lo, 2.0 * span)
    out: NDArray[np.float64] = lo + np.where(y > span, 2.0 * span - y, y)
    return out


def fit_observation_error(
    p_obs: ArrayLike,
    load: ArrayLike,
    *,
    se_log: ArrayLike | None = None,
    bounds: FitBounds | None = None,
    draws: int = 1000,
    rng: np.random.Generator | int | None = None,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    n_walkers: int = 40,
    burn_in: int = 300,
    thin: int = 8,
    n_starts: int = 8,
) -> ObservationErrorFit:
    r"""Fit the state-space model with process and observation error (module docstring).

    Parameters
    ----------
    p_obs : array_like, shape (n,)
        Observed lake P (annual means) [kg], > 0.
    load : array_like, shape (n,)
        External load [kg yr⁻¹]; the load of year ``t`` drives the step into it.
    se_log : array_like, shape (n,), optional
        Standard error of each observed log annual mean [–] (``SE/mean``);
        None: one observation SD is estimated.
    bounds : FitBounds, optional
    draws : int
        Posterior draws to keep, at least 1.
    rng : numpy Generator, int or None
        Seeds the least-squares starts and the sampler.
    progress, cancel : callables, optional
    n_walkers : int
        Ensemble size (even, at least twice the number of parameters).
    burn_in, thin : int
        Steps discarded at the start; steps between kept ensembles.
    n_starts : int
        Starting points of the least-squares fit that seeds the optimiser.

    Returns
    -------
    ObservationErrorFit

    Raises
    ------
    ValueError
        When no fit converges.
    """
    p = as_1d("p_obs", p_obs)
    lt = as_1d("load", load)
    if p.size != lt.size:
        raise ValueError("p_obs and load must have one value per year")
    gen = np.random.default_rng(rng)
    bounds = bounds or FitBounds()
    cls = fit_transitions(p[:-1], lt[1:], p[1:], bounds=bounds, p_scale=p, n_starts=n_starts, rng=gen)
    if cls.status != "ok" or cls.diagnostics is None:
        raise ValueError(f"the model could not be fitted to this record: {cls.message}")
    lo4, hi4 = cls.bounds
    lsd, hsd = math.log(SD_BOUNDS[0]), math.log(SD_BOUNDS[1])
    estimate_tau = se_log is None
    tau = None if se_log is None else as_1d("se_log", se_log)
    if tau is not None and (tau.size != p.size or np.any(tau <= 0.0)):
        raise ValueError("se_log must be one positive value per year")
    k = 6 if estimate_tau else 5
    lo = np.concatenate([lo4, [lsd] * (k - 4)])
    hi = np.concatenate([hi4, [hsd] * (k - 4)])
    y = np.log(p)
    target = _Target(y, lt, tau, lo, hi)
    sd0 = max(cls.diagnostics.sd, 2.0 * SD_BOUNDS[0])
    splits = ((0.8, 0.5), (1.0, 0.05), (0.5, 0.8)) if estimate_tau else ((1.0, 0.0), (0.6, 0.0))
    report(progress, 0.0, "maximum likelihood")
    best = None
    for a, b in splits:
        start = np.concatenate([cls.theta, [math.log(a * sd0)], [math.log(max(b * sd0, 0.01))] if estimate_tau else []])
        start = np.clip(start, lo + 1e-6 * (hi - lo), hi - 1e-6 * (hi - lo))
        sol = minimize(
            lambda th: _fd_gradient(target, th),
            start,
            jac=True,
            method="L-BFGS-B",
            bounds=list(zip(lo, hi, strict=True)),
            options={"maxiter": 400, "ftol": 1e-11, "gtol": 1e-7},
        )
        if np.isfinite(sol.fun) and (best is None or sol.fun < best.fun):
            best = sol
        check_cancel(cancel)
    if best is None or not np.isfinite(best.fun):
        raise ValueError("the model with observation error could not be fitted to this record")
    th = np.asarray(best.x, dtype=float)
    ll_hat, modes = target(th[None, :])
    hess = _fd_hessian(target, np.clip(th, lo + 2.5e-3, hi - 2.5e-3))
    cov = _covariance(hess)
    report(progress, 0.1, "maximum likelihood found; drawing from the posterior")

    # posterior draws: the parallel stretch move
    w = max(2 * ((max(n_walkers, 2 * k) + 1) // 2), 2 * k)
    if cov is not None:
        chol = np.linalg.cholesky(cov + 1e-12 * np.eye(k))
        pos = th + 0.3 * (gen.standard_normal((w, k)) @ chol.T)
    else:
        pos = th + 1e-3 * (hi - lo) * gen.standard_normal((w, k))
    pos = _reflect(pos, lo, hi)
    lp, wm = target(pos, np.broadcast_to(modes[0], (w, y.size)).copy())
    lp = lp + target.log_prior(pos)
    for _ in range(20):
        bad = ~np.isfinite(lp)
        if not bad.any():
            break
        pos[bad] = _reflect(th + 1e-4 * (hi - lo) * gen.standard_normal((int(bad.sum()), k)), lo, hi)
        lp[bad], wm[bad] = target(pos[bad], np.broadcast_to(modes[0], (int(bad.sum()), y.size)).copy())
        lp[bad] += target.log_prior(pos[bad])
    n_keep = max(1, math.ceil(draws / w))
    total = burn_in + n_keep * thin
    kept = []
    accepted = tried = 0
    a = 2.0
    half = w // 2
    for step in range(total):
        for first in (True, False):
            mine = np.arange(half) if first else np.arange(half, w)
            other = np.arange(half, w) if first else np.arange(half)
            j = gen.choice(other, size=half)
            z = ((a - 1.0) * gen.random(half) + 1.0) ** 2 / a
            prop = pos[j] + z[:, None] * (pos[mine] - pos[j])
            lp_new, m_new = target(prop, wm[mine])
            lp_new = lp_new + target.log_prior(prop)
            log_acc = (k - 1) * np.log(z) + lp_new - lp[mine]
            ok = np.log(gen.random(half)) < log_acc
            pos[mine[ok]] = prop[ok]
            lp[mine[ok]] = lp_new[ok]
            wm[mine[ok]] = m_new[ok]
            if step >= burn_in:
                accepted += int(ok.sum())
                tried += half
        if step >= burn_in and (step - burn_in) % thin == thin - 1:
            kept.append(pos.copy())
        if step % 10 == 0:
            check_cancel(cancel)
            report(progress, 0.1 + 0.85 * step / total, f"posterior draws: step {step:,} of {total:,}")
    chain = np.concatenate(kept)[:draws]

    # the point estimate in the least-squares fit's form
    states = np.exp(modes[0])

    g, _, _ = state_step(th[None, :], modes[:, :-1], lt[1:])
    resid = (modes[0, 1:] - g[0]).astype(float)
    tau_used = np.full(p.size, math.exp(th[5])) if estimate_tau else np.asarray(tau, dtype=float)
    standardised = innovations(th, y, lt, tau_used)
    point = PointFit(
        status="ok",
        message=f"maximum likelihood with observation error ({target.evaluations:,} likelihood evaluations)",
        params=theta_to_params(th[:4]),
        estimates=_estimates(th, cov, lo, hi),
        diagnostics=_diagnostics(standardised, 0),
        residuals=resid,
        sse=float(-ll_hat[0]),
        theta=th[:4].copy(),
        bounds=(lo4, hi4),
        n_starts=len(splits),
        nfev=target.evaluations,
    )
    report(progress, 0.95, "posterior draws: folds of each draw")
    return ObservationErrorFit(
        point=point,
        process_sd=math.exp(th[4]),
        observation_sd=math.exp(th[5]) if estimate_tau else None,
        tau=tau_used,
        tau_source="estimated" if estimate_tau else "samples",
        loglik=float(ll_hat[0]),
        states=states,
        draws=chain,
        acceptance=accepted / tried if tried else 0.0,
        evaluations=target.evaluations,
    )
