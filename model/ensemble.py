r"""Running a scenario's ensemble through the annual map, and comparing a plan's scenarios.

Every scenario is run with the one dynamic model of the product, the annual
map of :func:`turnback.model.dynamics.simulate`,

.. math:: P_{t+1} = P_t - R_t + L_t\,\mu_t - s (P_t - R_t) + c_t\, r \frac{(P_t - R_t)^q}{m^q + (P_t - R_t)^q}
          + \sigma_P\, \eta_t

(Carpenter, Ludwig & Brock 1999, Ecological Applications 9:751–771), or its
two-pool form with a mobile sediment-P pool (:mod:`turnback.model.two_pool`,
Carpenter 2005, PNAS 102:10002–10005; dredging takes sediment P, inactivation
scales the recycling from the sediment), with
lake P ``P`` [kg], scheduled load ``L_t`` [kg yr⁻¹], in-lake removal ``R_t``
[kg] taken out at the start of the year, recycling multiplier ``c_t`` in
[0, 1] from sediment P inactivation, the load multiplier ``μ_t`` and the
process noise ``σ_P η_t`` of :mod:`turnback.model.variability`, and lake P
kept at or above zero.  Year numbering is that of :mod:`turnback.model.plan`.

Parameter draws
    A one-box lake with ``parameter_draws`` (:mod:`turnback.model.parameter_draws`)
    runs member ``i`` with parameter set ``i mod n``, and judges it by that
    set's own clear threshold; members draw the same random numbers as
    without draws, so the two are compared on common random numbers.

Simulating (:func:`simulate_members`) is kept apart from summarising
(:func:`turnback.model.outcomes.summarise`).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from .clear_state import draw_thresholds_by_year, scenario_clear_below_kg, thresholds_by_year
from .dynamics import simulate
from .equilibrium import regime_from_folds
from .lake_models import lake_folds
from .outcomes import Comparison, ScenarioResult, summarise
from .plan import Plan, Scenario, ScenarioLake
from .precaution import scenario_precaution
from .progress import Cancel, Progress, RngLike, check_cancel, report, scaled
from .variability import n_sources, varied

__all__ = ["compare_plan", "run_scenario", "simulate_members", "simulate_pools"]

#: Members simulated together (bounds memory; results do not depend on it).
CHUNK_MEMBERS = 4096


def simulate_members(
    lake: ScenarioLake,
    scenario: Scenario,
    gen: np.random.Generator,
    *,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
) -> NDArray[np.float64]:
    """Lake (water) P [kg] of every member in years 0 … T, shape (members, years + 1).

    Without randomness every member is the same path (a read-only broadcast
    of one row).  Member ``i`` draws its standard normals (load, then process
    noise; shape (sources, T)) in member order, so results do not depend on
    how the run is chunked.  ``cancel()`` is checked between chunks.
    """
    return simulate_pools(lake, scenario, gen, progress=progress, cancel=cancel)[0]


def simulate_pools(
    lake: ScenarioLake,
    scenario: Scenario,
    gen: np.random.Generator,
    *,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
) -> tuple[NDArray[np.float64], NDArray[np.float64] | None]:
    """Water P and, for a two-pool lake, sediment P [kg] of every member, each (members, years + 1).

    As :func:`simulate_members`; the sediment is None for a one-box lake.
    """
    params = lake.params
    T, M = scenario.years, scenario.members
    loads = scenario.loads()
    removal = scenario.removal_by_year()
    scale = scenario.recycling_scale_by_year()
    p0 = lake.initial_p_kg
    cv, sd = scenario.variability_cv, scenario.process_noise_sd_kg
    n_src = n_sources(cv, sd)
    m0 = lake.initial_m_kg
    dredge = None if m0 is None else scenario.sediment_removal_by_year()
    check_cancel(cancel)
    draws = lake.parameter_draws
    if draws is not None:
        P_d = np.empty((M, T + 1))
        for start in range(0, M, CHUNK_MEMBERS):
            check_cancel(cancel)
            c = min(CHUNK_MEMBERS, M - start)
            z = gen.standard_normal((c, n_src, T)) if n_src else np.empty((c, 0, T))
            yearly, noise = varied(loads, z, cv, sd)
            traj = simulate(
                draws.take(draws.member_draw(start, start + c)),
                p0,
                yearly,
                recycling_scale=scale,
                removal=removal,
                process_noise=noise,
            )
            P_d[start : start + c] = traj.p
            report(progress, (start + c) / M, f"{start + c:,} of {M:,} members")
        return P_d, None
    if n_src == 0:
        one = simulate(
            params, p0, loads[None, :], recycling_scale=scale, removal=removal, m0=m0, sediment_removal=dredge
        )
        sed = None if one.m is None else np.broadcast_to(one.m, (M, T + 1))
        return np.broadcast_to(one.p, (M, T + 1)), sed
    P = np.empty((M, T + 1))
    S = None if m0 is None else np.empty((M, T + 1))
    for start in range(0, M, CHUNK_MEMBERS):
        check_cancel(cancel)
        c = min(CHUNK_MEMBERS, M - start)
        yearly, noise = varied(loads, gen.standard_normal((c, n_src, T)), cv, sd)
        # year-major memory so that each year's slice is contiguous inside simulate (faster)
        traj = simulate(
            params,
            p0,
            np.asfortranarray(yearly),
            recycling_scale=scale,
            removal=removal,
            process_noise=None if noise is None else np.asfortranarray(noise),
            m0=m0,
            sediment_removal=dredge,
        )
        P[start : start + c] = traj.p
        if S is not None and traj.m is not None:
            S[start : start + c] = traj.m
        report(progress, (start + c) / M, f"{start + c:,} of {M:,} members")
    return P, S


def run_scenario(
    lake: ScenarioLake,
    scenario: Scenario,
    *,
    rng: RngLike = None,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    sample_paths: int = 20,
    with_precaution: bool = True,
) -> ScenarioResult:
    """Run one scenario's ensemble through the annual map and summarise it.

    Parameters
    ----------
    lake : ScenarioLake
    scenario : Scenario
    rng : numpy Generator, int or None
        Random numbers; None uses ``default_rng(scenario.seed)``.
    progress : callable(fraction, message), optional
    cancel : callable() -> bool, optional
        Checked between chunks of members; True raises
        :class:`~turnback.model.progress.RunCancelled`.
    sample_paths : int
        How many members' TP paths to keep.
    with_precaution : bool
        Also solve ``scenario.precaution`` when set.

    Returns
    -------
    ScenarioResult
    """
    gen = np.random.default_rng(scenario.seed if rng is None else rng)
    has_prec = with_precaution and scenario.precaution is not None
    share = 0.6 if has_prec else 1.0
    thr = thresholds_by_year(lake.params, scenario.loads(), scenario_clear_below_kg(lake, scenario))
    draws = lake.parameter_draws
    member_thr = member_draw = None
    if draws is not None:
        member_draw = draws.member_draw(0, scenario.members)
        member_thr = draw_thresholds_by_year(draws, scenario, thr)[member_draw]
    P, S = simulate_pools(
        lake, scenario, gen, progress=scaled(progress, 0.0, share, f"{scenario.name}: "), cancel=cancel
    )
    precaution = None
    if has_prec:
        precaution = scenario_precaution(
            lake,
            scenario,
            rng=gen if rng is not None else None,
            progress=scaled(progress, share, 1.0 - share, f"{scenario.name}: "),
            cancel=cancel,
        )
    report(progress, 1.0, f"{scenario.name}: done")
    identical = draws is None and n_sources(scenario.variability_cv, scenario.process_noise_sd_kg) == 0
    return summarise(
        lake,
        scenario,
        P,
        thr,
        identical_members=identical,
        sample_paths=sample_paths,
        precaution=precaution,
        sediment_kg=S,
        member_threshold_kg=member_thr,
        member_draw=member_draw,
    )


def compare_plan(
    plan: Plan,
    *,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    sample_paths: int = 20,
) -> Comparison:
    """Run every scenario of ``plan`` (each with its own seed) and return them in input order.

    ``progress(fraction, message)`` is called as members finish, weighted
    by members × years; ``cancel()`` is checked between chunks.
    """
    fs = lake_folds(plan.lake.params)
    weights = [float(s.members * s.years) * (2.0 if s.precaution else 1.0) for s in plan.scenarios]
    total = sum(weights)
    done = 0.0
    results = []
    for s, w in zip(plan.scenarios, weights, strict=True):
        sub = scaled(progress, done / total, w / total)
        results.append(run_scenario(plan.lake, s, progress=sub, cancel=cancel, sample_paths=sample_paths))
        done += w
    return Comparison(
        plan=plan,
        results=tuple(results),
        regime=regime_from_folds(fs),
        tipping_load_kg_per_yr=fs[0].load if fs else None,
        recovery_load_kg_per_yr=fs[1].load if fs else None,
        message=f"{len(results)} scenario{'s' if len(results) != 1 else ''} compared",
    )
