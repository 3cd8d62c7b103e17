r"""Fit the lake model to a monitoring record, with bootstrap bands on the folds.

The model
---------
The one dynamic model of the product, the annual map of
:mod:`turnback.model.dynamics` (Carpenter, Ludwig & Brock 1999)::

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
are found with :func:`turnback.model.equilibrium.folds`.

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

Observation error
-----------------
``method="observation_error"`` fits the state-space model of
:mod:`turnback.model.state_space` instead: the observed annual log-mean is
the true state plus Gaussian observation error, with its SD from the
samples' standard errors (``se_log``) or estimated; the likelihood
integrates the true states out by the Laplace approximation, the estimate
is its maximum and the bands come from posterior draws
(:mod:`turnback.model.obs_fit`).  Conditional least squares stays the fast
path (``method="least_squares"``); :attr:`FitResult.method` says which a
fit used.

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
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import expit

from .bootstrap import DEFAULT_REPLICATES, MIN_REPLICATES, BootstrapDraws, Scheme, bootstrap_refits
from .equilibrium import Regime, folds, regime_from_folds
from .fit_warnings import FitFacts, fit_warnings
from .fold_bands import MIN_FOLD_REPLICATES, RegimeProbability, ThresholdBand, regime_probability, threshold_band
from .obs_fit import ObservationErrorFit, fit_observation_error, folds_of_draws
from .params import LakeParameters
from .point_fit import FitBounds, ParameterEstimate, PointFit, ResidualDiagnostics, as_1d, fit_transitions, refit_batch
from .progress import Cancel, Progress
from .record import MonitoringSeries
from .validation import FieldError

__all__ = [
    "DEFAULT_REPLICATES",
    "MAX_PARAMETER_DRAWS",
    "METHODS",
    "MIN_BRANCH_YEARS",
    "MIN_REPLICATES",
    "BootstrapDraws",
    "FitBounds",
    "FitResult",
    "Method",
    "ParameterEstimate",
    "PointFit",
    "RegimeProbability",
    "ResidualDiagnostics",
    "Scheme",
    "Side",
    "ThresholdBand",
    "bootstrap_refits",
    "fit_lake",
    "fit_monitoring",
    "fit_transitions",
    "refit_batch",
]

#: Years a record must spend on a branch for the threshold that ends it to count as constrained.
MIN_BRANCH_YEARS = 3

Side = Literal["both", "clear", "turbid"]
Method = Literal["least_squares", "observation_error"]
METHODS: tuple[Method, ...] = ("least_squares", "observation_error")
#: What ``to_dict()["method"]`` calls each method.
METHOD_KEYS = {"least_squares": "conditional_least_squares", "observation_error": "state_space_laplace"}
#: Most parameter sets ``to_dict()`` hands over for plans.
MAX_PARAMETER_DRAWS = 1000
_POSTERIOR_WORDS = (
    ("bootstrap refits", "posterior draws"),
    ("bootstrap replicates", "posterior draws"),
    ("bootstrap band", "posterior band"),
    ("refits did not converge", "draws could not be used"),
)


@dataclass(frozen=True, eq=False)
class FitResult:
    """Everything :func:`fit_lake` says about a record.

    ``status`` is ``"ok"`` when there are no warnings and ``"warning"``
    otherwise; ``message`` is a one-line summary; ``warnings`` the
    plain-words caveats; ``side`` which states the record shows
    (``"both"``, or ``"clear"``/``"turbid"`` for a one-state record).  ``to_dict()`` gives the JSON contract of
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
    side: Side = "both"
    method: Method = "least_squares"
    observation: ObservationErrorFit | None = None

    @property
    def process_sd(self) -> float:
        """Process-error SD on the log scale [–]: the residual SD, or ``σ̂`` of the observation-error fit."""
        if self.observation is not None:
            return self.observation.process_sd
        return self.point.diagnostics.sd if self.point.diagnostics is not None else math.nan

    def parameter_draws(self, limit: int = MAX_PARAMETER_DRAWS) -> list[dict[str, float]]:
        """The bootstrap refits or posterior draws (at most ``limit``) as parameter objects for a plan."""
        rows = self.draws.params[self.draws.used][:limit]
        return [
            dict(
                zip(("loss_rate", "recycling_max", "recycling_half", "recycling_exponent"), map(float, r), strict=True)
            )
            for r in rows
        ]

    def error_model(self) -> dict[str, Any]:
        """``{"process_sd", "observation_sd", "observation_sd_source"}``: the error model as fitted."""
        obs = self.observation
        if obs is None:
            return {"process_sd": self.process_sd, "observation_sd": None, "observation_sd_source": "not_modelled"}
        value = obs.observation_sd if obs.observation_sd is not None else float(np.median(obs.tau))
        return {"process_sd": obs.process_sd, "observation_sd": value, "observation_sd_source": obs.tau_source}

    def to_dict(self) -> dict[str, Any]:
        """The ``turnback fit --json`` object (units kg and yr)."""
        return {
            "params": self.params.to_dict(),
            "tipping_load": self.tipping_load.to_dict(),
            "recovery_load": self.recovery_load.to_dict(),
            "regime_probability": self.regime_probability.to_dict(),
            "warnings": list(self.warnings),
            "method": METHOD_KEYS[self.method],
            "error_model": self.error_model(),
            "parameter_draws": self.parameter_draws(),
        }


def _sides(
    p: NDArray[np.float64], lt: NDArray[np.float64], q: float, m: float, r: float, draws: BootstrapDraws
) -> tuple[Side, float]:
    """Which states the record shows, and the median share of P supply from recycling.

    Asked of every replicate with folds (its own fold P), so that one badly
    placed point fit cannot decide it: the record visits both branches when
    at least half of the used replicates see :data:`MIN_BRANCH_YEARS` years
    on each.  Otherwise the share of the lake's P supply that the fitted
    recycling provides, ``r h(P_t) / (L_t + r h(P_t))``, says which state it
    shows (small on the clear branch, large on the turbid one).
    """
    used = draws.used
    n_used = int(np.sum(used))
    with_folds = used & np.isfinite(draws.tipping)
    n_clear = np.sum(p[None, :] < draws.tipping_p[:, None], axis=1)
    n_turbid = np.sum(p[None, :] > draws.recovery_p[:, None], axis=1)
    both = with_folds & (n_clear >= MIN_BRANCH_YEARS) & (n_turbid >= MIN_BRANCH_YEARS)
    share_both = float(np.sum(both)) / n_used if n_used else 0.0
    h = expit(q * (np.log(p[:-1]) - math.log(m)))
    internal = float(np.median(r * h / (lt[1:] + r * h)))
    if share_both >= 0.5:
        return "both", internal
    return ("clear" if internal < 0.5 else "turbid"), internal


def _fmt_load(v: float | None) -> str:
    return "undefined" if v is None else f"{v:,.0f}"


def fit_lake(
    p_kg: ArrayLike,
    load_kg_per_yr: ArrayLike,
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
    method: Method = "least_squares",
    se_log: ArrayLike | None = None,
    cancel: Cancel | None = None,
) -> FitResult:
    """Fit the annual map to a record of lake P and load, with bootstrap bands on the folds.

    Parameters
    ----------
    p_kg : array_like, shape (n,)
        Lake P mass in consecutive years [kg], all > 0.
    load_kg_per_yr : array_like, shape (n,)
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
    progress : callable(fraction, message), optional
        Called as the bootstrap proceeds.
    bounds : FitBounds, optional
    n_starts : int
        Starting points of the point fit.
    years : tuple of int, optional
        First and last calendar year, carried into the result.
    method : {"least_squares", "observation_error"}
        Conditional least squares with a residual bootstrap (the fast path),
        or the state-space fit with observation error and ``replicates``
        posterior draws (module docstring).
    se_log : array_like, optional
        With ``method="observation_error"``: the standard error of each
        observed log annual mean [–]; None estimates one observation SD.
    cancel : callable() -> bool, optional
        Checked by the observation-error fit between sampler steps.

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
    p = as_1d("p_kg", p_kg)
    lt = as_1d("load_kg_per_yr", load_kg_per_yr)
    if p.size != lt.size:
        raise FieldError(("load_kg_per_yr",), "must have one value per year, as many as p_kg")
    if p.size < 7:
        raise FieldError(("p_kg",), "must cover at least 7 consecutive years for the fit")
    if np.any(p <= 0.0):
        raise FieldError(("p_kg",), "must be greater than 0 in every year (lake P)")
    if np.any(lt < 0.0):
        raise FieldError(("load_kg_per_yr",), "must be >= 0 in every year")
    if not 0.5 <= level < 1.0:
        raise FieldError(("level",), "must be in [0.5, 1), e.g. 0.9")
    if replicates < MIN_REPLICATES:
        raise FieldError(("replicates",), f"must be at least {MIN_REPLICATES} (1000 recommended)")
    if method not in METHODS:
        raise FieldError(("method",), f"must be one of {', '.join(METHODS)}; got {method!r}")
    if se_log is not None and method != "observation_error":
        raise FieldError(("se_log",), "is used only by the observation-error fit (method='observation_error')")
    gen = np.random.default_rng(rng)
    observation = None
    if method == "observation_error":
        observation = fit_observation_error(
            p, lt, se_log=se_log, bounds=bounds, draws=replicates, rng=gen, progress=progress, cancel=cancel,
            n_starts=n_starts,
        )  # fmt: skip
        point = observation.point
        draws = _posterior_draws(observation)
    else:
        point = fit_transitions(p[:-1], lt[1:], p[1:], bounds=bounds, p_scale=p, n_starts=n_starts, rng=gen)
        if point.status != "ok" or point.params is None:
            raise ValueError(f"the model could not be fitted to this record: {point.message}")
        draws = bootstrap_refits(point, p, lt[1:], replicates=replicates, scheme=scheme, rng=gen, progress=progress)
    assert point.params is not None
    params = point.params
    fs = folds(params)
    used = draws.used
    side, internal = _sides(p, lt, params.q, params.m, params.r, draws)
    tip_ok = rec_ok = bool(fs) and side == "both"
    l_max = float(np.max(lt))
    plausible = (-2.0 * l_max, 5.0 * l_max)
    tip_band = threshold_band("tipping_load", draws.tipping, used, fs[0].load if fs else None, tip_ok, level, plausible)
    rec_band = threshold_band(
        "recovery_load", draws.recovery, used, fs[1].load if fs else None, rec_ok, level, plausible
    )
    assert point.diagnostics is not None
    facts = FitFacts(
        has_folds=bool(fs),
        n_with_folds=int(np.sum(used & np.isfinite(draws.tipping))),
        side=side,
        internal_share=internal,
        tipping=tip_band,
        recovery=rec_band,
        plausible=plausible,
        estimates=point.estimates,
        diagnostics=point.diagnostics,
        replicates=replicates,
        replicates_used=int(np.sum(used)),
        min_fold_replicates=MIN_FOLD_REPLICATES,
        regime_probability=regime_probability(draws),
    )
    warnings = fit_warnings(facts)
    if method == "observation_error":
        warnings = tuple(_posterior_words(w) for w in warnings)
    point_regime: Regime = regime_from_folds(fs)
    pct = f"{level:.0%}"
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
        regime_probability=facts.regime_probability or regime_probability(draws),
        warnings=warnings,
        replicates=replicates,
        replicates_used=facts.replicates_used,
        level=level,
        draws=draws,
        volume_m3=volume_m3,
        years=years,
        side=side,
        method=method,
        observation=observation,
    )


def _posterior_draws(obs: ObservationErrorFit) -> BootstrapDraws:
    """The posterior draws in the form of the bootstrap's refits (every draw used)."""
    params = obs.draw_params
    fd = folds_of_draws(params)
    k = params.shape[0]
    return BootstrapDraws(
        params=params,
        sse=np.zeros(k),
        used=np.ones(k, dtype=bool),
        tipping=fd.tipping,
        recovery=fd.recovery,
        tipping_p=fd.tipping_p,
        recovery_p=fd.recovery_p,
        regime=fd.regime,
        scheme="posterior",
    )


def _posterior_words(text: str) -> str:
    """A caveat written for bootstrap refits, said of posterior draws."""
    for old, new in _POSTERIOR_WORDS:
        text = text.replace(old, new)
    return text


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
    method: Method | None = None,
    cancel: Cancel | None = None,
) -> FitResult:
    """Fit a checked monitoring record (:func:`turnback.model.io.monitoring_csv.parse_monitoring`).

    Lake P is ``P = TP · V / 10⁶`` [kg] with ``TP`` [µg L⁻¹] and the lake
    volume ``V`` [m³]; everything else as :func:`fit_lake`.  ``method``
    None chooses the observation-error fit for a record built from samples
    (its standard errors give the observation error) and conditional least
    squares for annual means.  Pure function: the series is not changed.
    """
    if method is None:
        method = "observation_error" if series.from_samples else "least_squares"
    se_log = series.se_log if method == "observation_error" else None
    p = series.p_kg(volume_m3)
    return fit_lake(
        p,
        series.load_kg_per_yr,
        volume_m3=float(volume_m3),
        replicates=replicates,
        level=level,
        scheme=scheme,
        rng=rng,
        progress=progress,
        bounds=bounds,
        n_starts=n_starts,
        years=(int(series.years[0]), int(series.years[-1])),
        method=method,
        se_log=se_log,
        cancel=cancel,
    )
