"""The two-pool lake: parameters, closed-form curve and folds, stability, the annual map and its limits."""

from __future__ import annotations

import json
import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from scipy.optimize import root
from turnback.model.continuation import continue_equilibria, two_pool_system
from turnback.model.demo import DEMO_PARAMETERS, DEMO_TWO_POOL_PARAMETERS
from turnback.model.dynamics import simulate
from turnback.model.equilibrium import equilibria as one_box_equilibria
from turnback.model.equilibrium import folds as one_box_folds
from turnback.model.two_pool import TwoPoolParameters, map_limits_message
from turnback.model.two_pool_equilibrium import (
    analyze_two_pool,
    equilibria,
    equilibrium_curve,
    fold_fractions,
    folds,
    regime,
)
from turnback.model.two_pool_regime_map import two_pool_regime_map
from turnback.model.validation import FieldError

DEMO = DEMO_TWO_POOL_PARAMETERS

# Random lakes with the annual map's limits (s + h <= 1, b + r <= 1) and a steep recycling switch.
lakes = st.builds(
    TwoPoolParameters,
    sedimentation=st.floats(0.1, 0.8),
    outflow=st.floats(0.0, 0.2),
    burial=st.floats(0.01, 0.2),
    recycling_rate=st.floats(0.05, 0.6),
    recycling_half=st.floats(10.0, 1e5),
    recycling_exponent=st.floats(2.0, 12.0),
)


def test_parameters_validate_and_round_trip() -> None:
    assert TwoPoolParameters.from_json(DEMO.to_json()) == DEMO
    assert json.loads(DEMO.to_json())["recycling_rate"] == 0.25
    with pytest.raises(FieldError) as err:
        TwoPoolParameters(0.4, -0.1, 0.05, 0.2, 100.0, 4.0)
    assert err.value.path == ("outflow",)
    with pytest.raises(FieldError) as err:
        TwoPoolParameters.from_dict(DEMO.to_dict() | {"loss_rate": 1.0})
    assert err.value.path == ("loss_rate",)
    assert TwoPoolParameters(0.4, 0.0, 0.05, 0.2, 100.0, 4.0).h == 0.0  # a closed lake has no outflow
    assert map_limits_message(replace(DEMO, outflow=0.6)) is not None
    assert map_limits_message(DEMO) is None


def test_balance_and_load_are_the_closed_form() -> None:
    p = np.linspace(1.0, 5000.0, 50)
    m_star = DEMO.sediment_balance(p)
    rates = np.array([DEMO.rate(0.0, (pp, mm), DEMO.load_at(pp)) for pp, mm in zip(p, m_star, strict=True)])
    assert np.max(np.abs(rates)) < 1e-9 * 500.0  # both pools at rest: dP/dt = dM/dt = 0 by construction
    # L(P) = h P + b M*: at balance the load leaves by outflow and burial (mass balance, no source)
    assert np.allclose(DEMO.load_at(p), DEMO.h * p + DEMO.b * m_star, rtol=1e-14)


def _folds_by_scipy(params: TwoPoolParameters) -> list[tuple[float, float, float]]:
    """Folds from scipy's general root finder on F = 0, det J = 0, started from a coarse grid scan of L(P)."""
    p = np.geomspace(1e-3 * params.m, 1e3 * params.m, 4000)
    slope = np.diff(params.load_at(p))
    out = []
    for i in np.flatnonzero(np.sign(slope[1:]) != np.sign(slope[:-1])):
        guess = np.array([p[i + 1], float(params.sediment_balance(p[i + 1])), float(params.load_at(p[i + 1]))])

        def system(y: np.ndarray) -> np.ndarray:
            pp, mm, load = y
            f = params.rate(0.0, (pp, mm), load)
            return np.array([f[0], f[1], np.linalg.det(params.jacobian(pp, mm)) * params.m])

        sol = root(system, guess, method="hybr", options={"xtol": 1e-13})
        assert np.max(np.abs(system(sol.x))) < 1e-9 * max(guess[2], 1.0), sol.message
        out.append(tuple(float(v) for v in sol.x))
    return out


def test_demo_folds_against_quadratic_continuation_and_scipy() -> None:
    fs = folds(DEMO)
    assert [f.kind for f in fs] == ["tipping", "recovery"] and fs[0].p < fs[1].p
    # closed form: the recycling fractions at the folds are the roots of the quadratic in g
    assert [float(DEMO.recycling(f.p)) for f in fs] == pytest.approx(list(fold_fractions(DEMO)), rel=1e-12)
    # an independent root finder (scipy.optimize.root, general-purpose reference library) on F = 0, det J = 0
    ref = _folds_by_scipy(DEMO)
    assert len(ref) == 2
    for f, (p, m, load) in zip(fs, ref, strict=True):
        assert f.p == pytest.approx(p, rel=1e-9)
        assert f.m == pytest.approx(m, rel=1e-9)
        assert f.load == pytest.approx(load, rel=1e-12)
    # pseudo-arclength continuation of the two-state system (the product's other route)
    rhs, jx, jl = two_pool_system(DEMO)
    p0 = 10.0
    res = continue_equilibria(
        rhs,
        jx,
        jl,
        np.array([p0, DEMO.sediment_balance(p0)]),
        float(DEMO.load_at(p0)),
        (0.0, 2.0 * fs[0].load),
        scale=(np.array([DEMO.m, 5.0 * DEMO.m]), 2.0 * fs[0].load),
        domain=lambda x: bool(x[0] > 0.0),
    )
    assert res.status == 0 and len(res.folds) == 2
    for f, c in zip(fs, res.folds, strict=True):
        assert c.load == pytest.approx(f.load, rel=1e-12)
        assert c.x[0] == pytest.approx(f.p, rel=1e-9)
        assert c.x[1] == pytest.approx(f.m, rel=1e-9)
    # every continuation point lies on the closed-form curve, with the engine's stability
    assert np.allclose(DEMO.load_at(res.x[:, 0]), res.load, rtol=1e-9, atol=1e-9 * fs[0].load)
    assert np.allclose(DEMO.sediment_balance(res.x[:, 0]), res.x[:, 1], rtol=1e-8)


@settings(max_examples=40, deadline=None)
@given(lakes)
def test_random_lakes_folds_agree_with_scipy(params: TwoPoolParameters) -> None:
    fs = folds(params)
    ref = _folds_by_scipy(params)
    assert len(fs) == len(ref) or min(abs(f.load - fs[0].load) for f in fs) < 1e-6 * fs[0].load  # near a cusp
    if len(fs) == len(ref) == 2:
        for f, (p, _, load) in zip(fs, ref, strict=True):
            assert f.p == pytest.approx(p, rel=1e-7)
            assert f.load == pytest.approx(load, rel=1e-10)
    assert regime(params) in ("reversible", "hysteretic")  # L(P) > 0 for P > 0: never irreversible while b > 0


@settings(max_examples=40, deadline=None)
@given(lakes, st.floats(0.05, 1.5))
def test_equilibria_and_stability_from_the_jacobian(params: TwoPoolParameters, frac: float) -> None:
    fs = folds(params)
    top = fs[0].load if fs else float(params.load_at(params.m))
    eqs = equilibria(params, frac * top)
    assert 1 <= len(eqs) <= 3
    assert [e.p for e in eqs] == sorted(e.p for e in eqs)
    for e in eqs:
        assert float(params.load_at(e.p)) == pytest.approx(frac * top, rel=1e-10)
        # eigenvalues by numpy.linalg (general-purpose reference library)
        lam = np.linalg.eigvals(params.jacobian(e.p, e.m))
        assert e.slope == pytest.approx(float(np.max(lam.real)), rel=1e-6, abs=1e-10)
        if abs(np.max(lam.real)) > 1e-7:
            assert e.stable == bool(np.max(lam.real) < 0)
        radius = float(np.max(np.abs(1.0 + lam)))
        if abs(radius - 1.0) > 1e-7:
            assert e.map_stable == (radius < 1.0)
        if e.branch == "middle":
            assert not e.stable  # the saddle: det J = D dL/dP < 0
        if np.all(np.isreal(lam)) and e.stable:
            assert e.map_stable  # real eigenvalues above -2 (the map's limits): the two agree


def test_map_and_equations_disagree_only_with_complex_eigenvalues() -> None:
    # Strong flushing and weak burial put a Hopf point on the turbid branch (h r g > b (b + r g) at the fold).
    lake = TwoPoolParameters(0.45, 0.3, 0.03, 0.2, 1100.0, 8.0)
    c = equilibrium_curve(lake, n_points=3000)
    lost = (c.branch == "upper") & ~c.stable
    assert lost.sum() > 5  # part of the turbid branch oscillates before the recovery fold
    differ = c.stable != c.map_stable
    for p in c.p[differ]:
        lam = np.linalg.eigvals(lake.jacobian(p, float(lake.sediment_balance(p))))
        assert np.any(np.abs(lam.imag) > 0)


def test_long_run_states_of_the_map_are_the_stable_equilibria() -> None:
    load = 400.0  # between the demo's folds
    eqs = equilibria(DEMO, load)
    assert [e.branch for e in eqs] == ["lower", "middle", "upper"]
    stable = np.array([[e.p, e.m] for e in eqs if e.stable])
    saddle = np.array([eqs[1].p, eqs[1].m])
    gen = np.random.default_rng(5)
    p0 = gen.uniform(0.0, 3.0 * eqs[2].p, 400)
    m0 = gen.uniform(0.0, 3.0 * eqs[0].m, 400)
    tr = simulate(DEMO, p0, np.full((400, 1500), load), m0=m0)
    end = np.stack([tr.p[:, -1], tr.m[:, -1]], axis=1)
    d = np.min(np.linalg.norm(end[:, None, :] - stable[None, :, :], axis=2), axis=1)
    assert np.all(d < 1e-6 * eqs[2].m)
    assert np.min(np.linalg.norm(end - saddle, axis=1)) > 0.1 * saddle[0]
    hits = {int(np.argmin(np.linalg.norm(stable - e, axis=1))) for e in end}
    assert hits == {0, 1}  # both basins are reached from somewhere


def test_simulate_two_pool_matches_a_plain_loop_and_treatments_act_on_the_right_pool() -> None:
    gen = np.random.default_rng(2)
    loads = 400.0 * np.exp(0.3 * gen.standard_normal((5, 30)))
    scale = np.where(np.arange(30) < 10, 0.5, 1.0)
    rem = np.zeros(30)
    rem[3] = 500.0
    dredge = np.zeros(30)
    dredge[5] = 2000.0
    tr = simulate(DEMO, 2000.0, loads, m0=5000.0, recycling_scale=scale, removal=rem, sediment_removal=dredge)
    s, h, b, r = DEMO.s, DEMO.h, DEMO.b, DEMO.r
    for i in range(5):  # the equations of the README, written out (common practice, no source)
        p, m = 2000.0, 5000.0
        for t in range(30):
            p, m = max(p - rem[t], 0.0), max(m - dredge[t], 0.0)
            flux = scale[t] * r * m * float(DEMO.recycling(p))
            p, m = max(p + loads[i, t] - (s + h) * p + flux, 0.0), max(m + s * p - b * m - flux, 0.0)
            assert tr.p[i, t + 1] == pytest.approx(p, rel=1e-12)
            assert tr.m[i, t + 1] == pytest.approx(m, rel=1e-12)
    # default start: sediment in balance with the water
    one = simulate(DEMO, 1500.0, np.full(3, 0.0))
    assert one.m is not None and one.m[0] == pytest.approx(DEMO.sediment_balance(1500.0))
    with pytest.raises(ValueError, match="two-pool"):
        simulate(DEMO_PARAMETERS, 100.0, np.ones(3), m0=1.0)
    with pytest.raises(ValueError, match="at most 1"):
        simulate(replace(DEMO, recycling_rate=0.99), 100.0, np.ones(3))


def test_slow_large_sediment_pool_gives_the_one_box_lake() -> None:
    # r, b divided by k and the pool multiplied by k: the water follows the one-box model with
    # s1 = s + h and r1 = r M0 (Carpenter, Ludwig & Brock 1999 form), more closely as k grows.
    m0, p0 = 4000.0, 2500.0
    one = simulate(DEMO.one_box_frozen(m0), p0, np.full(15, 380.0)).p
    errs = []
    for k in (10.0, 100.0, 1000.0):
        lake = replace(DEMO, burial=DEMO.b / k, recycling_rate=DEMO.r / k)
        two = simulate(lake, p0, np.full(15, 380.0), m0=k * m0).p
        errs.append(float(np.max(np.abs(two - one))))
    assert errs[0] > errs[1] > errs[2]
    assert errs[2] < 0.01 * errs[0] * 1.5 and errs[2] < 2.0  # error ~ 1/k


def test_fast_small_sediment_pool_gives_a_one_state_lake_without_lag() -> None:
    # b and r multiplied by k: same curve and folds, sediment tracks M*(P); the water follows
    # dP/dt = L - L(P).  Checked against scipy's solve_ivp (general-purpose reference library).
    fs = folds(DEMO)
    for k in (5.0, 50.0):
        fast = DEMO.fast_sediment(k)
        assert [f.load for f in folds(fast)] == pytest.approx([f.load for f in fs], rel=1e-12)
    p0, load, t_end = 3000.0, 200.0, 40.0
    opts = {"rtol": 1e-10, "atol": 1e-8, "method": "LSODA", "dense_output": True}
    reduced = solve_ivp(DEMO.one_state_rate, (0.0, t_end), [p0], args=(load,), **opts)
    errs = []
    for k in (10.0, 100.0, 1000.0):
        fast = DEMO.fast_sediment(k)
        sol = solve_ivp(fast.rate, (0.0, t_end), [p0, fast.sediment_balance(p0)], args=(load,), **opts)
        t = np.linspace(0.0, t_end, 200)
        errs.append(float(np.max(np.abs(sol.sol(t)[0] - reduced.sol(t)[0]))))
    assert errs[0] > errs[1] > errs[2] and errs[2] < 0.05 * errs[0]  # error ~ 1/k


def test_analysis_is_complete_and_curve_matches_closed_form() -> None:
    res = analyze_two_pool(DEMO, load=420.0)
    assert res.regime == "hysteretic" and res.tipping_load == folds(DEMO)[0].load
    c = res.curve
    assert set(c.branch) == {"lower", "middle", "upper"}
    assert np.allclose(DEMO.load_at(c.p), c.load, rtol=1e-12)
    assert np.allclose(DEMO.sediment_balance(c.p), c.m, rtol=1e-12)
    assert np.all(c.stable[c.branch == "middle"] == False)  # noqa: E712
    # both folds are on the curve exactly
    for f in res.folds:
        assert np.min(np.abs(c.p - f.p)) == 0.0


def test_regime_map_fold_curves_agree_with_the_closed_form() -> None:
    rm = two_pool_regime_map(DEMO, "burial", (0.02, 0.3))
    assert rm.tipping.load.size > 10 and rm.recovery.load.size > 10
    for curve in (rm.tipping, rm.recovery):
        for par, load, p in list(zip(curve.parameter, curve.load, curve.p, strict=True))[::5]:
            fs = folds(replace(DEMO, burial=float(par)))
            assert fs, par
            f = fs[0] if curve.kind == "tipping" else fs[1]
            assert load == pytest.approx(f.load, rel=1e-9)
            assert p == pytest.approx(f.p, rel=1e-7)
    # the cusp from continuation is where the closed-form regime changes
    assert len(rm.cusps) == 1
    hyst = [band for band in rm.bands if band[2] == "hysteretic"]
    assert hyst and hyst[0][1] == pytest.approx(rm.cusps[0][0], rel=1e-6)
    assert regime(replace(DEMO, burial=rm.cusps[0][0] * 0.99)) == "hysteretic"
    assert regime(replace(DEMO, burial=rm.cusps[0][0] * 1.01)) == "reversible"


def test_demo_recovery_lag_after_a_load_cut() -> None:
    # After a load cut, lakes commonly stay turbid for 10-20 years while sediment P keeps coming back:
    # Carpenter (2005, PNAS 102:10002-10005); Søndergaard, Jensen & Jeppesen (2003, Hydrobiologia
    # 506-509:135-145); Jeppesen et al. (2005, Freshwater Biology 50:1747-1771). The 10-20-year range
    # is from memory (not checked against the texts).
    cut = 210.0  # half the demo's present load of 420 kg/yr, below the recovery load
    two_folds = folds(DEMO)
    up = equilibria(DEMO, 420.0)[-1]
    two = simulate(DEMO, up.p, np.full(60, cut), m0=up.m).p
    clear_two = two < two_folds[1].p  # below the recovery fold's water P (no saddle below the recovery load)
    years_two = next(t for t in range(58) if clear_two[t : t + 3].all())
    assert 10 <= years_two <= 20
    # the one-box demo lake recovers sooner after the same cut
    ob_folds = one_box_folds(DEMO_PARAMETERS)
    assert cut < ob_folds[1].load
    start = one_box_equilibria(DEMO_PARAMETERS, 420.0)[-1].p
    one = simulate(DEMO_PARAMETERS, start, np.full(60, cut)).p
    clear_one = one < ob_folds[1].p
    years_one = next(t for t in range(58) if clear_one[t : t + 3].all())
    assert years_one < years_two
    assert math.isfinite(up.m) and up.m > 0
