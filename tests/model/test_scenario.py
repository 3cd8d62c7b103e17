"""Scenario plans: schedules, ensembles, outcomes and the precautionary load.

Independent references used here: a plain Python loop of the annual map, the
closed-form equilibrium engine, and a transfer-operator (discretised
transition kernel) computation of the flip probability.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import lognorm, norm
from turnback.model.clear_state import clear_threshold_kg, recovery_years
from turnback.model.ensemble import compare_plan, run_scenario
from turnback.model.equilibrium import equilibria, folds
from turnback.model.params import LakeParameters
from turnback.model.plan import Plan, Precaution, Scenario, ScenarioLake
from turnback.model.precaution import flip_probability, precautionary_load
from turnback.model.progress import RunCancelled
from turnback.model.schedules import ConstantLoad, Inactivation, LinearCut, Removal, StepLoad, TableLoad
from turnback.model.variability import lognormal_sigma, varied

# The lake of the PLAN.json example: b = s m / r = 2/3, q = 6 (hysteretic).
PARAMS = LakeParameters(loss_rate=0.8, recycling_max=30000.0, recycling_half=25000.0, recycling_exponent=6.0)
VOLUME = 2.0e8


def lake(tp: float = 120.0) -> ScenarioLake:
    return ScenarioLake(PARAMS, VOLUME, tp, "Lake Amberlin (fictional)")


def plain_loop(p0: float, loads: list[float], removal: list[float], scale: list[float]) -> list[float]:
    # Carpenter, Ludwig & Brock 1999 (Ecol. Appl. 9:751-771), annual map written out by hand:
    # P <- max(P - R, 0); P <- max(P + L - s P + c r P^q/(m^q + P^q), 0).
    s, r, m, q = PARAMS.s, PARAMS.r, PARAMS.m, PARAMS.q
    out = [p0]
    for load, rem, c in zip(loads, removal, scale, strict=True):
        p = max(out[-1] - rem, 0.0)
        out.append(max(p + load - s * p + c * r * p**q / (m**q + p**q), 0.0))
    return out


# --------------------------------------------------------------------------
# schedules and year numbering
# --------------------------------------------------------------------------
def test_load_schedules_by_year() -> None:
    # Year t = 1 ... T; hand-computed values (common practice, no source).
    assert LinearCut(1000.0, 60.0, 4).loads(6).tolist() == pytest.approx([850, 700, 550, 400, 400, 400])
    assert StepLoad(1000.0, 300.0, 3).loads(5).tolist() == [1000, 1000, 300, 300, 300]
    assert ConstantLoad(5.0).loads(3).tolist() == [5, 5, 5]
    assert TableLoad((1.0, 2.0, 3.0)).loads(3).tolist() == [1, 2, 3]
    sc = Scenario(
        "t", 6, ConstantLoad(1.0), treatments=(Inactivation(2, 50, 2), Inactivation(3, 50, 10), Removal(1, 7))
    )
    assert sc.recycling_scale_by_year().tolist() == [1, 0.5, 0.25, 0.5, 0.5, 0.5]
    assert sc.removal_by_year().tolist() == [7, 0, 0, 0, 0, 0]


def test_zero_noise_members_equal_a_plain_loop() -> None:
    sc = Scenario(
        "cut",
        30,
        LinearCut(9000.0, 60.0, 10),
        members=4,
        seed=3,
        treatments=(Removal(3, 5000.0), Inactivation(5, 40.0, 4), Removal(12, 2000.0)),
    )
    res = run_scenario(lake(), sc)
    ref = plain_loop(
        lake().initial_p_kg,
        sc.loads().tolist(),
        sc.removal_by_year().tolist(),
        sc.recycling_scale_by_year().tolist(),
    )
    ref_tp = np.array(ref) * 1e6 / VOLUME  # TP = 10^6 P / V (µg/L from kg and m³; unit conversion)
    assert res.sample_tp_ug_l.shape == (4, 31)
    for member in res.sample_tp_ug_l:
        assert member == pytest.approx(ref_tp, rel=1e-12)
    assert res.tp_median_ug_l == pytest.approx(ref_tp, rel=1e-12)
    assert res.tp_p05_ug_l == pytest.approx(ref_tp, rel=1e-12) and res.tp_p95_ug_l == pytest.approx(ref_tp, rel=1e-12)
    assert res.in_lake_removal_kg == pytest.approx(7000.0)
    assert res.load_cut_kg == pytest.approx(float(np.sum(9000.0 - sc.loads())))


@pytest.mark.parametrize("start_tp, branch", [(120.0, "upper"), (100.0, "lower")])
def test_long_run_state_is_the_engines_equilibrium_on_the_right_branch(start_tp: float, branch: str) -> None:
    # At 9000 kg/yr the separatrix is at 21001 kg (105 µg/L): 120 µg/L starts turbid, 100 µg/L clear.
    res = run_scenario(lake(start_tp), Scenario("hold", 300, ConstantLoad(9000.0)))
    eq = {e.branch: e for e in equilibria(PARAMS, 9000.0)}  # the closed-form engine
    assert res.final_tp_median_ug_l == pytest.approx(eq[branch].p * 1e6 / VOLUME, rel=1e-10)
    assert res.p_clear_final == (1.0 if branch == "lower" else 0.0)
    assert res.end_state == ("clear" if branch == "lower" else "turbid")


# --------------------------------------------------------------------------
# variability
# --------------------------------------------------------------------------
def test_lognormal_variability_is_mean_preserving() -> None:
    # Lognormal moments (common practice, no source): E[exp(σZ − σ²/2)] = 1, sd = sqrt(exp(σ²) − 1) = cv.
    cv = 0.4
    assert math.sqrt(math.expm1(lognormal_sigma(cv) ** 2)) == pytest.approx(cv, rel=1e-14)
    z = np.random.default_rng(0).standard_normal((200_000, 1, 1))
    yearly, noise = varied(np.array([1000.0]), z, cv, 0.0)
    assert noise is None
    se = 1000.0 * cv / math.sqrt(z.shape[0])
    assert abs(yearly.mean() - 1000.0) < 4 * se
    assert yearly.std() == pytest.approx(1000.0 * cv, rel=0.02)


def _transfer_operator_flip(load: float, n_years: int, cv: float, sd: float, cells: int = 1500) -> tuple[float, float]:
    """Flip probability within n_years from the clear equilibrium by a discretised transition kernel.

    Ulam/Nyström-type scheme (common practice, no source): survival u_n(x) = ∫_{y < thr} k(x, y) u_{n−1}(y) dy,
    collocated at cell midpoints on [0, thr], each cell's kernel mass integrated exactly through the
    noise CDF (scipy.stats lognorm / norm, a general-purpose library).  Written independently of the
    ensemble code: it never calls model.dynamics.
    """
    s, r, m, q = PARAMS.s, PARAMS.r, PARAMS.m, PARAMS.q
    thr = clear_threshold_kg(PARAMS, load)
    p0 = next(e.p for e in equilibria(PARAMS, load) if e.branch == "lower")
    edges = np.linspace(0.0, thr, cells + 1)

    def kernel_rows(x: np.ndarray) -> np.ndarray:
        drift = (1.0 - s) * x + r * x**q / (m**q + x**q)  # next P without the load
        if sd == 0.0:
            sigma = math.sqrt(math.log(1.0 + cv * cv))
            dist = lognorm(s=sigma, scale=math.exp(-0.5 * sigma * sigma))  # mean 1, sd cv
            cdf = dist.cdf(np.clip((edges[None, :] - drift[:, None]) / load, 0.0, None))
        else:
            cdf = norm.cdf((edges[None, :] - drift[:, None] - load) / sd)
            cdf[:, 0] = 0.0  # P clipped at zero: the mass below 0 lands in the first cell
        return np.diff(cdf, axis=1)

    mids = 0.5 * (edges[1:] + edges[:-1])
    k = kernel_rows(mids)
    u = np.ones(cells)
    for _ in range(n_years - 1):
        u = k @ u
    return 1.0 - float((kernel_rows(np.array([p0])) @ u)[0]), p0


@pytest.mark.parametrize(
    "load, cv, sd, n_years",
    [(9500.0, 0.35, 0.0, 10), (10000.0, 0.3, 0.0, 15), (9000.0, 0.0, 3000.0, 10)],
)
def test_flip_probability_matches_a_transfer_operator(load: float, cv: float, sd: float, n_years: int) -> None:
    ref, p0 = _transfer_operator_flip(load, n_years, cv, sd)
    assert 0.05 < ref < 0.95  # a case with power to tell a wrong model apart
    # The product path: a scenario held at the load, starting at its clear equilibrium.
    sc = Scenario("hold", n_years, ConstantLoad(load), variability_cv=cv, process_noise_sd_kg=sd, members=20000, seed=5)
    res = run_scenario(ScenarioLake(PARAMS, VOLUME, p0 * 1e6 / VOLUME), sc)
    assert res.p_flip is not None
    se = math.sqrt(ref * (1 - ref) / sc.members)
    assert abs(res.p_flip - ref) < 4 * se  # Monte-Carlo error, binomial (common practice)
    est = flip_probability(
        PARAMS, load, within_years=n_years, variability_cv=cv, process_noise_sd_kg=sd, members=20000, rng=6
    )
    assert abs(est.probability - ref) < 4 * se
    assert est.standard_error == pytest.approx(se, rel=0.1)


# --------------------------------------------------------------------------
# outcomes
# --------------------------------------------------------------------------
def test_recovery_years_by_hand() -> None:
    # Hand-made clear flags (common practice, no source).
    clear = np.array(
        [
            [0, 0, 1, 1, 1, 0, 1],  # clear 2..4: recovers in year 2
            [0, 1, 1, 0, 1, 1, 1],  # 1..2 too short; 4..6: year 4
            [1, 1, 1, 1, 1, 1, 1],  # already clear: year 0
            [0, 0, 0, 0, 0, 1, 1],  # 5..6 only two years: never
        ],
        dtype=bool,
    )
    out = recovery_years(clear, 3)
    assert out[:3].tolist() == [2, 4, 0] and math.isnan(out[3])
    assert recovery_years(clear, 1)[3] == 5


def test_outcomes_of_a_stochastic_cut() -> None:
    sc = Scenario(
        "cut",
        40,
        LinearCut(9000.0, 60.0, 10),
        variability_cv=0.3,
        members=3000,
        seed=2,
        treatments=(Removal(3, 5000.0),),
    )
    res = run_scenario(lake(), sc)
    assert res.p_flip is None  # no member starts clear (120 µg/L is above the separatrix at 8460 kg/yr)
    assert np.all(res.tp_p05_ug_l <= res.tp_median_ug_l) and np.all(res.tp_median_ug_l <= res.tp_p95_ug_l)
    assert 0.0 < res.p_clear_final < 1.0 and res.end_state == "mixed"
    assert res.p_recovered == pytest.approx(float(np.isfinite(res.recovery_year).mean()))
    # Fewer than half recover, so there is no median.
    assert res.p_recovered < 0.5 and res.recovery_years_median is None
    # The ensemble mean load equals the schedule: total removed uses the schedule.
    assert res.load_cut_kg == pytest.approx(float(np.sum(9000.0 - sc.loads())))
    assert res.threshold_tp_ug_l[-1] == pytest.approx(clear_threshold_kg(PARAMS, 3600.0) * 1e6 / VOLUME)
    # p_clear at the end is the fraction of members below the final threshold (checked against the band).
    assert res.p_clear_final_se == pytest.approx(math.sqrt(res.p_clear_final * (1 - res.p_clear_final) / 3000))


def test_members_do_not_depend_on_chunking() -> None:
    big = Scenario("a", 12, ConstantLoad(8000.0), variability_cv=0.3, process_noise_sd_kg=500.0, members=5000, seed=9)
    small = Scenario("a", 12, ConstantLoad(8000.0), variability_cv=0.3, process_noise_sd_kg=500.0, members=7, seed=9)
    a = run_scenario(lake(50.0), big, sample_paths=7).sample_tp_ug_l
    b = run_scenario(lake(50.0), small, sample_paths=7).sample_tp_ug_l
    assert np.array_equal(a, b)


def test_flip_and_relapse_for_a_lake_that_starts_clear() -> None:
    low = next(e.p for e in equilibria(PARAMS, 9500.0) if e.branch == "lower")
    sc = Scenario("near", 30, ConstantLoad(9500.0), variability_cv=0.35, members=2000, seed=1)
    res = run_scenario(ScenarioLake(PARAMS, VOLUME, low * 1e6 / VOLUME), sc)
    assert res.p_flip is not None and 0.3 < res.p_flip < 1.0
    assert res.p_clear[0] == 1.0
    assert res.p_relapse is not None and res.p_relapse > 0.0


def test_tipping_fold_and_fixed_thresholds() -> None:
    tip = folds(PARAMS)[0]
    a = run_scenario(lake(), Scenario("f", 5, ConstantLoad(3000.0), clear_threshold="tipping_fold"))
    assert a.threshold_tp_ug_l == pytest.approx(np.full(6, tip.p * 1e6 / VOLUME))
    b = run_scenario(lake(), Scenario("x", 5, ConstantLoad(3000.0), clear_threshold=150.0))
    assert np.all(b.threshold_tp_ug_l == 150.0)
    assert b.p_clear[0] == 1.0  # 120 < 150 µg/L


def test_threshold_is_continuous_across_the_folds() -> None:
    tip, rec = folds(PARAMS)
    for fold in (tip, rec):
        for side in (1 - 1e-6, 1 + 1e-6):
            assert clear_threshold_kg(PARAMS, fold.load * side) == pytest.approx(fold.p, rel=2e-2)


def test_progress_and_cancel() -> None:
    sc = Scenario("p", 10, ConstantLoad(8000.0), variability_cv=0.2, members=9000, seed=1)
    seen: list[float] = []
    run_scenario(lake(), sc, progress=lambda f, m: seen.append(f))
    assert seen == sorted(seen) and seen[-1] == 1.0 and len(seen) >= 3
    calls = iter([False, True])
    with pytest.raises(RunCancelled):
        run_scenario(lake(), sc, cancel=lambda: next(calls, True))


def test_compare_keeps_input_order_and_seeds() -> None:
    plan = Plan(
        lake(),
        (
            Scenario("b", 10, ConstantLoad(9000.0), variability_cv=0.2, members=300, seed=1),
            Scenario("a", 10, StepLoad(9000.0, 2000.0, 2), variability_cv=0.2, members=300, seed=1),
        ),
    )
    fractions: list[float] = []
    c = compare_plan(plan, progress=lambda f, m: fractions.append(f))
    assert [r.name for r in c.results] == ["b", "a"]
    assert fractions[-1] == pytest.approx(1.0) and fractions == sorted(fractions)
    again = compare_plan(plan)
    assert np.array_equal(c.results[0].tp_median_ug_l, again.results[0].tp_median_ug_l)
    assert c.regime == "hysteretic" and c.tipping_load_kg_per_yr == pytest.approx(folds(PARAMS)[0].load)


# --------------------------------------------------------------------------
# precautionary load
# --------------------------------------------------------------------------
def test_precautionary_load_brackets_the_limit() -> None:
    res = precautionary_load(PARAMS, within_years=10, max_probability=0.1, variability_cv=0.3, members=2000, rng=4)
    assert res.status == "ok" and res.load_kg_per_yr is not None and res.standard_error_kg_per_yr is not None
    assert 0.0 < res.load_kg_per_yr < folds(PARAMS)[0].load
    # On the same random numbers, the answer is within the limit and a little more load breaks it.
    at = flip_probability(PARAMS, res.load_kg_per_yr, within_years=10, variability_cv=0.3, members=2000, rng=4)
    above = flip_probability(
        PARAMS, res.load_kg_per_yr * 1.001 + 1.0, within_years=10, variability_cv=0.3, members=2000, rng=4
    )
    assert at.probability <= 0.1 < above.probability
    # Against the transfer operator (independent): the true flip probability at the answer is near 10 %.
    ref, _ = _transfer_operator_flip(res.load_kg_per_yr, 10, 0.3, 0.0)
    assert abs(ref - 0.1) < 4 * math.sqrt(0.1 * 0.9 / 2000)


def test_precautionary_load_error_matches_the_spread_over_seeds() -> None:
    # The stated Monte-Carlo error should match the scatter of answers from independent ensembles
    # (sd of 8 replicates: a chi distribution with 7 degrees of freedom; wide bounds, common practice).
    runs = [
        precautionary_load(PARAMS, within_years=10, max_probability=0.2, variability_cv=0.3, members=400, rng=seed)
        for seed in range(8)
    ]
    answers = np.array([r.load_kg_per_yr for r in runs], dtype=float)
    stated = float(np.mean([r.standard_error_kg_per_yr for r in runs]))
    ratio = float(np.std(answers, ddof=1)) / stated
    assert 0.4 < ratio < 2.5, ratio


def test_precautionary_load_without_variability_is_the_tipping_load() -> None:
    res = precautionary_load(PARAMS, within_years=10, max_probability=0.05, variability_cv=0.0)
    assert res.status == "no_variability"
    assert res.load_kg_per_yr == pytest.approx(folds(PARAMS)[0].load)  # Carpenter et al. 1999: the fold


def test_precautionary_load_from_a_scenario() -> None:
    sc = Scenario(
        "p", 20, ConstantLoad(5000.0), variability_cv=0.3, members=1000, seed=3, precaution=Precaution(10, 10.0)
    )
    res = run_scenario(lake(), sc)
    assert res.precaution is not None and res.precaution.status == "ok"
    direct = precautionary_load(PARAMS, within_years=10, max_probability=0.1, variability_cv=0.3, members=1000, rng=3)
    assert res.precaution.load_kg_per_yr == direct.load_kg_per_yr


# --------------------------------------------------------------------------
# validation and JSON
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "make, fragment",
    [
        (lambda: LinearCut(9000.0, 120.0, 10), "percent must be between 0 and 100"),
        (lambda: Scenario("a", 5, TableLoad((1.0, 2.0))), "load.kg_per_yr must have one value a year"),
        (lambda: Scenario("a", 5, ConstantLoad(1.0), treatments=(Removal(6, 1.0),)), "treatments[0].year"),
        (lambda: Scenario("a", 5, ConstantLoad(1.0), members=0), "members must be a whole number"),
        (lambda: Scenario("a", 5, ConstantLoad(1.0), variability_cv=-0.1), "variability_cv must be between 0"),
        (lambda: Scenario("a", 5, ConstantLoad(1.0), clear_threshold="murky"), "clear_threshold must be"),
        (lambda: ScenarioLake(LakeParameters(2.5, 1.0, 1.0, 2.0), 1.0, 1.0), "loss_rate must be below 2"),
        (lambda: Inactivation(1, 0.0, 2), "percent must be greater than 0"),
        (lambda: ConstantLoad(float("nan")), "kg_per_yr must be at least 0"),
    ],
)
def test_bad_values_name_the_field(make, fragment: str) -> None:
    with pytest.raises(ValueError) as info:
        make()
    assert fragment in str(info.value)


def test_no_folds_needs_a_fixed_threshold() -> None:
    reversible = ScenarioLake(LakeParameters(2.0 - 1e-9, 1.0, 1.0, 2.0), 1.0e6, 1.0)
    with pytest.raises(ValueError, match=r"scenarios\[0\]\.clear_threshold must be a TP"):
        Plan(reversible, (Scenario("a", 5, ConstantLoad(0.1)),))
    plan = Plan(reversible, (Scenario("a", 5, ConstantLoad(0.1), clear_threshold=0.5),))
    assert compare_plan(plan).results[0].p_clear[0] == 0.0  # starts at 1 µg/L, above 0.5


scenarios = st.builds(
    Scenario,
    name=st.text(alphabet="abcxyz -", min_size=1, max_size=8).filter(lambda s: s.strip() != ""),
    years=st.just(12),
    load=st.one_of(
        st.builds(ConstantLoad, st.floats(0, 1e5)),
        st.builds(LinearCut, st.floats(0, 1e5), st.floats(0, 100), st.integers(1, 30)),
        st.builds(StepLoad, st.floats(0, 1e5), st.floats(0, 1e5), st.integers(1, 12)),
        st.builds(TableLoad, st.tuples(*[st.floats(0, 1e5)] * 12)),
    ),
    variability_cv=st.floats(0, 5),
    members=st.integers(1, 1000),
    seed=st.one_of(st.none(), st.integers(0, 2**40)),
    treatments=st.lists(
        st.one_of(
            st.builds(Removal, st.integers(1, 12), st.floats(1e-3, 1e5)),
            st.builds(Inactivation, st.integers(1, 12), st.floats(1e-3, 100), st.integers(1, 5)),
        ),
        max_size=3,
    ).map(tuple),
    clear_threshold=st.one_of(st.sampled_from(["separatrix", "tipping_fold"]), st.floats(1e-3, 1e3)),
)


@settings(max_examples=40, deadline=None)
@given(scenarios)
def test_scenario_round_trips_through_json(sc: Scenario) -> None:
    assert Scenario.from_json(sc.to_json()) == sc
    assert Plan.from_json(Plan(lake(), (sc,)).to_json()) == Plan(lake(), (sc,))


def test_precautionary_load_reports_progress_and_can_be_cancelled() -> None:
    seen: list[float] = []
    precautionary_load(
        PARAMS,
        within_years=5,
        max_probability=0.1,
        variability_cv=0.3,
        members=200,
        rng=1,
        progress=lambda f, m: seen.append(f),
    )
    assert seen == sorted(seen) and seen[-1] == 1.0
    calls = iter([False, False, True])
    with pytest.raises(RunCancelled):
        precautionary_load(
            PARAMS, within_years=5, max_probability=0.1, variability_cv=0.3, members=200, cancel=lambda: next(calls)
        )
