r"""Flip probability and the precautionary load.

Precautionary load
    The largest sustained load for which the probability of flipping within
    ``N`` years, starting from the clear equilibrium at that load, is at most
    ``X``; found by bisection on one ensemble with common random numbers.
    Its Monte-Carlo error is the binomial standard error of the probability
    at the answer, ``sqrt(X (1 − X) / M)``, converted to load through the
    local slope ``dp/dL`` (a central difference on the same random numbers).

Parameter draws
    With a lake's ``parameter_draws`` (one-box), member ``i`` runs draw
    ``i mod n``: it starts at that draw's own clear equilibrium at the trial
    load, is judged by that draw's own threshold, and counts as flipped when
    the draw has no clear state at that load (above its tipping load).  The
    probability is then over both sources, the year-to-year variability and
    what the record leaves unknown; the search range reaches the largest
    tipping load of any draw.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from .clear_state import clear_threshold_kg, scenario_clear_below_kg
from .dynamics import simulate
from .equilibrium import Fold
from .lake_models import AnyLakeParameters, lake_equilibria, lake_folds, lake_load_at
from .parameter_draws import DrawFolds, ParameterDraws
from .plan import MAX_CELLS, MAX_MEMBERS, MAX_YEARS, NO_FOLDS, Scenario, ScenarioLake
from .progress import Cancel, Progress, RngLike, check_cancel, report
from .validation import FieldError, number, whole
from .variability import n_sources, varied

DrawRule = Literal["separatrix", "tipping_fold", "fixed"]

__all__ = ["FlipEstimate", "PrecautionResult", "flip_probability", "precautionary_load", "scenario_precaution"]


@dataclass(frozen=True)
class FlipEstimate:
    """Ensemble estimate of the probability of flipping within ``within_years`` at a sustained load.

    Attributes
    ----------
    probability : float
        Fraction of members turbid in at least one of years 1 … N [–].
    standard_error : float
        Binomial Monte-Carlo error ``sqrt(p (1 − p)/M)`` [–].
    load_kg_per_yr, start_p_kg, threshold_p_kg : float
        The load [kg yr⁻¹], the starting lake P [kg] and the clear threshold [kg].
    """

    probability: float
    standard_error: float
    members: int
    within_years: int
    load_kg_per_yr: float
    start_p_kg: float
    threshold_p_kg: float
    status: Literal["ok", "starts_turbid"] = "ok"
    message: str = ""


@dataclass(frozen=True)
class PrecautionResult:
    """The largest sustained load with ``P(flip within N years) <= X``.

    Attributes
    ----------
    status : {"ok", "none", "no_variability"}
        ``none`` when even zero load breaks the limit; ``no_variability``
        when there is no noise, so the answer is the top of the clear range
        (the tipping load with the separatrix threshold) with zero error.
    load_kg_per_yr : float or None
        The precautionary load [kg yr⁻¹].
    standard_error_kg_per_yr : float or None
        Monte-Carlo error of the load [kg yr⁻¹] (delta method, module docstring).
    probability : float or None
        Ensemble flip probability at the answer [–].
    upper_limit_kg_per_yr : float
        Top of the searched range [kg yr⁻¹]: where the clear state reaches the threshold.
    """

    status: Literal["ok", "none", "no_variability"]
    load_kg_per_yr: float | None
    standard_error_kg_per_yr: float | None
    probability: float | None
    within_years: int
    max_probability: float
    members: int
    upper_limit_kg_per_yr: float
    slope_per_kg_per_yr: float | None
    iterations: int
    message: str


def _clear_equilibrium(params: AnyLakeParameters, load: float) -> float:
    """The lowest stable equilibrium at ``load`` [kg] (the clear state, or the only state).

    A two-pool lake starts with its sediment in balance there (the default of
    :func:`~turnback.model.dynamics.simulate`).
    """
    eqs = [e for e in lake_equilibria(params, load) if e.branch in ("lower", "single")]
    if not eqs:
        raise FieldError(("load",), f"has no clear state for the lake at {load:g} kg/yr (above the tipping load)")
    return eqs[0].p


def _load_at_equilibrium(params: AnyLakeParameters, p: float) -> float:
    """Load [kg yr⁻¹] that holds the lake at P [kg]: ``s P − r P^q/(m^q + P^q)`` (one-box)."""
    return lake_load_at(params, p)


def _flips(
    params: AnyLakeParameters,
    load: float,
    z: NDArray[np.float64],
    cv: float,
    sd: float,
    p0: float | None,
    clear_below_kg: float | None,
    fs: tuple[Fold, ...],
) -> tuple[NDArray[np.bool_], float, float]:
    thr = clear_threshold_kg(params, load, clear_below_kg=clear_below_kg, fs=fs)
    start = _clear_equilibrium(params, load) if p0 is None else float(p0)
    n = z.shape[0]
    if start >= thr:
        return np.ones(n, dtype=bool), start, thr
    yearly, noise = varied(np.full(z.shape[-1], float(load)), z, cv, sd)
    P = simulate(params, start, yearly, process_noise=noise).p
    flipped: NDArray[np.bool_] = np.asarray((P[:, 1:] >= thr).any(axis=1), dtype=bool)
    return flipped, start, thr


def _flips_draws(
    params: AnyLakeParameters,
    draws: ParameterDraws,
    fd: DrawFolds,
    rule: DrawRule,
    load: float,
    z: NDArray[np.float64],
    cv: float,
    sd: float,
    clear_below_kg: float | None,
    fs: tuple[Fold, ...],
) -> NDArray[np.bool_]:
    """Which members flip within the horizon at a sustained load, each member with its own draw."""
    m = z.shape[0]
    idx = draws.member_draw(0, m)
    start = draws.clear_equilibrium_kg([load], fd)[:, 0]
    nominal = clear_threshold_kg(params, load, clear_below_kg=clear_below_kg, fs=fs) if fs or clear_below_kg else np.nan
    if rule == "separatrix":
        thr = draws.separatrix_kg([load], fd)[:, 0]
    elif rule == "tipping_fold":
        thr = fd.tipping_p.copy()
    else:
        thr = np.full(draws.n, float(nominal))
    thr = np.where(np.isfinite(thr), thr, nominal)
    s0, t0 = start[idx], thr[idx]
    gone = ~np.isfinite(s0) | ~(s0 < t0)
    yearly, noise = varied(np.full(z.shape[-1], float(load)), z, cv, sd)
    P = simulate(draws.take(idx), np.where(gone, 0.0, s0), np.ascontiguousarray(yearly), process_noise=noise).p
    flipped: NDArray[np.bool_] = gone | (P[:, 1:] >= t0[:, None]).any(axis=1)
    return flipped


def flip_probability(
    params: AnyLakeParameters,
    load: float,
    *,
    within_years: int,
    variability_cv: float,
    process_noise_sd_kg: float = 0.0,
    members: int = 2000,
    p0_kg: float | None = None,
    clear_below_kg: float | None = None,
    rng: RngLike = None,
) -> FlipEstimate:
    """Probability that a clear lake turns turbid within ``within_years`` at a sustained load.

    Members start at ``p0_kg`` (default: the clear equilibrium at ``load``)
    and run the annual map with the mean-preserving lognormal load
    ``L μ_t`` and optional process noise; a member flips when its P reaches
    the clear threshold (:func:`clear_threshold_kg`) in any of years 1 … N.

    Returns
    -------
    FlipEstimate
        With the binomial standard error ``sqrt(p (1 − p) / M)``.
    """
    load = number(load, ("load",), lo=0.0, unit="[kg yr⁻¹]")
    n_years = whole(within_years, ("within_years",), 1, MAX_YEARS)
    m = whole(members, ("members",), 1, MAX_MEMBERS)
    cv = number(variability_cv, ("variability_cv",), lo=0.0, hi=5.0)
    sd = number(process_noise_sd_kg, ("process_noise_sd_kg",), lo=0.0)
    fs = lake_folds(params)
    gen = np.random.default_rng(rng)
    z = gen.standard_normal((m, n_sources(cv, sd), n_years))
    flipped, start, thr = _flips(params, load, z, cv, sd, p0_kg, clear_below_kg, fs)
    p = float(flipped.mean())
    if start >= thr:
        return FlipEstimate(
            1.0,
            0.0,
            m,
            n_years,
            load,
            start,
            thr,
            "starts_turbid",
            "the starting state is not below the clear threshold",
        )
    return FlipEstimate(
        p,
        math.sqrt(p * (1.0 - p) / m),
        m,
        n_years,
        load,
        start,
        thr,
        "ok",
        f"{p:.1%} of {m:,} members flip within {n_years} years",
    )


def precautionary_load(
    params: AnyLakeParameters,
    *,
    within_years: int,
    max_probability: float,
    variability_cv: float,
    process_noise_sd_kg: float = 0.0,
    members: int = 2000,
    clear_below_kg: float | None = None,
    rng: RngLike = None,
    load_rtol: float = 1e-4,
    max_iter: int = 60,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    draws: ParameterDraws | None = None,
    draw_rule: DrawRule = "separatrix",
) -> PrecautionResult:
    r"""Largest sustained load ``L*`` with ``P(flip within N years | start clear at L) <= X``.

    One set of standard normals (members × sources × N) is drawn and reused
    for every trial load (common random numbers), so the ensemble estimate
    :math:`\hat p(L)` is a step function that is non-decreasing in ``L``
    for ``s <= 1`` (the annual map is then increasing in both ``P`` and
    ``L``).  For a two-pool lake (members start at the clear state with the
    sediment in balance) that monotonicity is not guaranteed; the bisection
    then finds one load where the estimate crosses ``X``.  Bisection on ``[0, L_max)`` keeps ``p̂(lo) <= X < p̂(hi)``
    until ``hi − lo <= load_rtol · L_max``; ``L* = lo``.  ``L_max`` is where
    the clear state reaches the threshold (the tipping load with the
    separatrix threshold, Carpenter, Ludwig & Brock 1999).

    Monte-Carlo error: ``SE_p = sqrt(X (1 − X) / M)`` converted to load by
    the local slope, ``SE_L = SE_p / (dp̂/dL)``, with ``dp̂/dL`` a central
    difference over ``L* ± h`` on the same random numbers; ``h`` starts at
    2 % of ``L_max`` and doubles (up to 32 %) until at least 10 members
    change state.

    Parameters
    ----------
    params : LakeParameters
    within_years : int
        ``N`` [yr].
    max_probability : float
        ``X`` in (0, 1) [–].
    variability_cv, process_noise_sd_kg : float
        As in :class:`Scenario`.
    members : int
        Ensemble size ``M``.
    clear_below_kg : float, optional
        Fixed clear threshold [kg]; default the separatrix.
    rng : numpy Generator, int or None
    load_rtol : float
        Bisection tolerance relative to ``L_max``.
    max_iter : int
    progress, cancel : callables, optional
        As in :func:`run_scenario`; checked every bisection step.
    draws : ParameterDraws, optional
        One-box parameter sets; member ``i`` runs set ``i mod n`` (module
        docstring).  The probability is then over both sources.
    draw_rule : {"separatrix", "tipping_fold", "fixed"}
        Which threshold each draw is judged by (``fixed``: ``clear_below_kg``).
    """
    n_years = whole(within_years, ("within_years",), 1, MAX_YEARS)
    x = number(max_probability, ("max_probability",), lo=0.0, hi=1.0, lo_open=True, hi_open=True)
    m = whole(members, ("members",), 1, MAX_MEMBERS)
    if m * n_years > MAX_CELLS:
        raise FieldError(("members",), f"× within_years must be at most {MAX_CELLS:,}")
    cv = number(variability_cv, ("variability_cv",), lo=0.0, hi=5.0)
    sd = number(process_noise_sd_kg, ("process_noise_sd_kg",), lo=0.0)
    tol = number(load_rtol, ("load_rtol",), lo=0.0, hi=0.1, lo_open=True)
    fs = lake_folds(params)
    if clear_below_kg is None:
        if not fs:
            raise FieldError(("clear_threshold",), NO_FOLDS)
        l_max = fs[0].load
    else:
        thr = number(clear_below_kg, ("clear_below_kg",), lo=0.0, lo_open=True, unit="[kg]")
        if fs and thr >= fs[0].p:
            l_max = fs[0].load  # the clear branch ends (tipping fold) before it reaches the threshold
        else:
            l_max = _load_at_equilibrium(params, thr)  # the clear (or only) branch reaches the threshold here
    fd = None
    if draws is not None:
        fd = draws.folds()
        if draw_rule != "fixed" and fd.has.any():
            l_max = max(l_max, float(np.nanmax(fd.tipping)))
    if l_max <= 0.0:
        return PrecautionResult(
            "none",
            None,
            None,
            None,
            n_years,
            x,
            m,
            l_max,
            None,
            0,
            "the clear state is at or above the threshold even at zero load",
        )
    if n_sources(cv, sd) == 0 and draws is None:
        return PrecautionResult(
            "no_variability",
            l_max,
            0.0,
            0.0,
            n_years,
            x,
            m,
            l_max,
            None,
            0,
            "without variability a lake at its clear state stays there up to the top of the clear range",
        )
    gen = np.random.default_rng(rng)
    z = gen.standard_normal((m, n_sources(cv, sd), n_years))
    top = l_max * (1.0 - 1e-9)

    def p_hat(load: float) -> float:
        if draws is not None and fd is not None:
            return float(_flips_draws(params, draws, fd, draw_rule, load, z, cv, sd, clear_below_kg, fs).mean())
        return float(_flips(params, load, z, cv, sd, None, clear_below_kg, fs)[0].mean())

    p_lo = p_hat(0.0)
    if p_lo > x:
        return PrecautionResult(
            "none",
            None,
            None,
            p_lo,
            n_years,
            x,
            m,
            l_max,
            None,
            1,
            f"even at zero load {p_lo:.1%} of members flip within {n_years} years, above {x:.1%}",
        )
    if draws is not None and p_hat(top) <= x:
        msg = f"every load up to the top of the searched range ({top:,.0f} kg/yr) keeps the chance at or below {x:.1%}"
        return PrecautionResult("ok", top, None, p_hat(top), n_years, x, m, l_max, None, 1, msg)
    lo, hi = 0.0, top
    p_at_lo = p_lo
    it = 0
    n_planned = max(1, math.ceil(math.log2(1.0 / tol)))
    while hi - lo > tol * l_max and it < max_iter:
        check_cancel(cancel)
        mid = 0.5 * (lo + hi)
        pm = p_hat(mid)
        if pm <= x:
            lo, p_at_lo = mid, pm
        else:
            hi = mid
        it += 1
        report(progress, 0.9 * min(it / n_planned, 1.0), f"precautionary load: step {it}")
    # local slope on the same random numbers
    slope = None
    h = 0.02 * l_max
    for _ in range(5):
        a, b = max(0.0, lo - h), min(top, lo + h)
        pa, pb = p_hat(a), p_hat(b)
        if (pb - pa) * m >= 10 or h >= 0.32 * l_max:
            slope = (pb - pa) / (b - a) if b > a else None
            break
        h *= 2.0
    report(progress, 1.0, "precautionary load: done")
    se_p = math.sqrt(x * (1.0 - x) / m)
    se = se_p / slope if slope else None
    both = " over the variability and the parameter draws" if draws is not None else ""
    msg = (
        f"largest sustained load with at most {x:.1%} chance of flipping within {n_years} years{both}: {lo:,.0f} kg/yr"
    )
    msg += f" ± {se:,.0f} (Monte-Carlo error)" if se is not None else " (Monte-Carlo error not available)"
    return PrecautionResult("ok", lo, se, p_at_lo, n_years, x, m, l_max, slope, it, msg)


def scenario_precaution(
    lake: ScenarioLake,
    scenario: Scenario,
    *,
    rng: RngLike = None,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
) -> PrecautionResult:
    """:func:`precautionary_load` for ``scenario.precaution`` under the scenario's variability and members.

    ``rng`` None uses ``default_rng(scenario.seed)``.
    """
    if scenario.precaution is None:
        raise FieldError(("precaution",), "is not set for this scenario")
    pr = scenario.precaution
    clear_below = scenario_clear_below_kg(lake, scenario)
    rule = scenario.clear_threshold
    draw_rule: DrawRule = rule if rule in ("separatrix", "tipping_fold") else "fixed"  # type: ignore[assignment]
    return precautionary_load(
        lake.params,
        within_years=pr.within_years,
        max_probability=pr.max_percent / 100.0,
        variability_cv=scenario.variability_cv,
        process_noise_sd_kg=scenario.process_noise_sd_kg,
        members=min(scenario.members, MAX_CELLS // pr.within_years),
        clear_below_kg=clear_below,
        rng=np.random.default_rng(scenario.seed) if rng is None else rng,
        progress=progress,
        cancel=cancel,
        draws=lake.parameter_draws,
        draw_rule=draw_rule,
    )
