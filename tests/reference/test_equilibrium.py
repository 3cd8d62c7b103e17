"""The equilibrium engine against references the project did not write."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
import sympy as sp
from turnback.model.equilibrium import analyze, cusp_b, equilibria, folds, irreversible_b, regime
from turnback.model.management import removal_needed, safety_margin
from turnback.model.params import DimensionlessLake, LakeParameters, LakeProfile


def dimensionless(b: float, q: float) -> LakeParameters:
    return DimensionlessLake(b=b, q=q).to_parameters()


# --- closed forms -----------------------------------------------------------
# Regime classes: Carpenter, Ludwig & Brock 1999, "Management of eutrophication
# for lakes subject to potentially irreversible change", Ecol. Appl. 9:751-771.
# The boundaries follow from the fold conditions (derived in model.equilibrium).


def test_cusp_for_q2_is_3_sqrt3_over_8() -> None:
    # Closed form for q = 2: b_c = 3*sqrt(3)/8 at x = 1/sqrt(3), a = 1/8 (derived from f = f' = f'' = 0).
    assert cusp_b(2.0) == pytest.approx(3 * math.sqrt(3) / 8, rel=1e-14)
    near = dimensionless(cusp_b(2.0) * (1 - 1e-7), 2.0)
    fs = folds(near)
    assert len(fs) == 2
    for f in fs:
        assert f.x == pytest.approx(1 / math.sqrt(3), rel=1e-3)
        assert f.a == pytest.approx(1 / 8, rel=1e-6)
    assert regime(dimensionless(cusp_b(2.0) * (1 + 1e-7), 2.0)) == "reversible"


def test_irreversible_boundary_for_q2_is_one_half() -> None:
    # Closed form for q = 2: the recovery fold reaches zero load at b = 1/2, x = 1.
    assert irreversible_b(2.0) == pytest.approx(0.5, rel=1e-15)
    assert regime(dimensionless(0.5 * (1 + 1e-9), 2.0)) == "hysteretic"
    assert regime(dimensionless(0.5 * (1 - 1e-9), 2.0)) == "irreversible"
    f = folds(dimensionless(0.5, 2.0))[1]
    assert f.x == pytest.approx(1.0, rel=1e-7)
    assert f.a == pytest.approx(0.0, abs=1e-12)


@pytest.mark.parametrize("q", [1.5, 2.0, 3.0, 4.0, 6.5, 8.0, 12.0, 20.0])
def test_general_q_boundaries(q: float) -> None:
    # Cusp: x^q = (q-1)/(q+1); irreversible boundary: x^q = q-1, b = (q-1)^((q-1)/q)/q.
    bc = cusp_b(q)
    fs = folds(dimensionless(bc * (1 - 1e-10), q))
    assert len(fs) == 2
    xc = ((q - 1) / (q + 1)) ** (1 / q)
    assert fs[0].x == pytest.approx(xc, rel=1e-3) and fs[1].x == pytest.approx(xc, rel=1e-3)
    bi = irreversible_b(q)
    assert bi == pytest.approx((q - 1) ** ((q - 1) / q) / q, rel=1e-15)
    f = folds(dimensionless(bi, q))[1]
    assert f.x == pytest.approx((q - 1) ** (1 / q), rel=1e-8)
    assert f.a == pytest.approx(0.0, abs=1e-12)
    assert bi < bc


# --- an independent route: discriminant of the equilibrium polynomial --------
# For integer q, (a - b x)(1 + x^q) + x^q = 0 is a polynomial in x; its double
# roots (folds) are the real roots in a of its discriminant (computed with sympy,
# a general-purpose computer-algebra library).


def sympy_fold_loads(b: sp.Rational, q: int) -> list[float]:
    x, a = sp.symbols("x a")
    poly = sp.expand((a - b * x) * (1 + x**q) + x**q)
    disc = sp.Poly(sp.discriminant(poly, x), a)
    out = []
    for root in disc.nroots(n=30, maxsteps=500):
        if abs(sp.im(root)) > 1e-20:
            continue
        av = sp.re(root)
        # keep roots whose double root lies at positive x (numpy's companion-matrix roots)
        coeffs = [float(c) for c in sp.Poly(poly.subs(a, av), x).all_coeffs()]
        dcoeffs = np.polyder(coeffs)
        xs = [z.real for z in np.roots(coeffs) if abs(z.imag) < 1e-4 and z.real > 0]
        if any(abs(np.polyval(dcoeffs, z)) < 1e-5 for z in xs):
            out.append(float(av))
    return sorted(out)


@pytest.mark.parametrize(
    "b, q, expected",
    [
        # Check values given with the task (dimensionless q = 8, b = 0.8 and q = 2, b = 0.6),
        # confirmed here by the sympy discriminant.
        (sp.Rational(4, 5), 8, (0.143650, 0.509526)),
        (sp.Rational(3, 5), 2, (0.08972, 0.10209)),
    ],
)
def test_folds_match_sympy_discriminant_and_check_values(b: sp.Rational, q: int, expected: tuple[float, float]) -> None:
    fs = folds(dimensionless(float(b), q))
    engine = sorted(f.a for f in fs)
    ref = sympy_fold_loads(b, q)
    assert len(ref) == 2
    assert engine == pytest.approx(ref, rel=1e-10)
    assert engine[0] == pytest.approx(expected[0], abs=5e-6 if q == 8 else 5e-5)
    assert engine[1] == pytest.approx(expected[1], abs=5e-6 if q == 8 else 5e-5)


@pytest.mark.parametrize(
    "b, q", [(sp.Rational(1, 2), 3), (sp.Rational(9, 10), 5), (sp.Rational(7, 10), 4), (sp.Rational(3, 10), 2)]
)
def test_more_discriminant_cases(b: sp.Rational, q: int) -> None:
    fs = folds(dimensionless(float(b), q))
    ref = sympy_fold_loads(b, q)
    assert sorted(f.a for f in fs) == pytest.approx(ref, rel=1e-10)


# --- equilibria, stability and management numbers -----------------------------


def test_equilibria_at_a_load_between_the_folds() -> None:
    # q = 8, b = 0.8, a = 0.3: x = 1 is an equilibrium by hand (0.3 - 0.8 + 1/2 = 0).
    p = dimensionless(0.8, 8)
    eqs = equilibria(p, 0.3)
    assert [e.branch for e in eqs] == ["lower", "middle", "upper"]
    assert [e.stable for e in eqs] == [True, False, True]
    assert eqs[1].p == pytest.approx(1.0, rel=1e-13)
    assert math.isnan(eqs[1].return_time)


def test_return_time_grows_towards_the_fold() -> None:
    # Critical slowing down: 1/|f'| diverges as the tipping fold is approached (Scheffer et al. 2009, Nature 461:53).
    p = dimensionless(0.8, 8)
    tip = folds(p)[0].load
    times = [equilibria(p, tip * frac)[0].return_time for frac in (0.5, 0.9, 0.99, 0.9999)]
    assert all(t2 > t1 for t1, t2 in itertools.pairwise(times))
    assert times[-1] > 20 * times[0]


def test_curve_has_three_branches_and_exact_folds() -> None:
    p = LakeParameters(0.8, 30000, 25000, 6)
    res = analyze(p, load=9000)
    assert res.regime == "hysteretic"
    names = [seg[0] for seg in res.curve.segments()]
    assert names == ["lower", "middle", "upper"]
    assert res.curve.load.max() == pytest.approx(2 * res.tipping_load, rel=1e-12)
    # the fold points are on the curve exactly
    assert np.min(np.abs(res.curve.p - res.folds[0].p)) == 0.0
    assert np.min(np.abs(res.curve.p - res.folds[1].p)) == 0.0
    assert len(res.curve) >= 1990


def test_removal_needed_crosses_the_separatrix() -> None:
    p = LakeParameters(0.5, 1800, 2500, 4)
    prof = LakeProfile(name="T", area_km2=1, volume_m3=2.79e7, load_kg_per_yr=420)
    need = removal_needed(p, 420.0, margin=0.1, profile=prof)
    eqs = equilibria(p, 420.0)
    assert need.status == "needed"
    assert need.kg == pytest.approx(eqs[2].p - 0.9 * eqs[1].p, rel=1e-12)
    assert need.ug_l == pytest.approx(prof.concentration(need.kg))
    assert removal_needed(p, 100.0).status == "not_needed"
    assert removal_needed(p, 900.0).status == "no_lasting_effect"


def test_safety_margin() -> None:
    p = LakeParameters(0.5, 1800, 2500, 4)
    tip = folds(p)[0].load
    sm = safety_margin(p, 400.0)
    assert sm.kg_per_yr == pytest.approx(tip - 400.0)
    assert sm.percent == pytest.approx(100 * (tip - 400.0) / 400.0)
    assert safety_margin(dimensionless(2.0, 2.0), 0.1).tipping_load is None


def test_q_at_most_one_is_reversible() -> None:
    for q in (0.5, 1.0):
        p = dimensionless(0.3, q)
        assert regime(p) == "reversible"
        assert [e.stable for e in equilibria(p, 0.2)] == [True]


@pytest.mark.parametrize("bad", [(5.0, 1.0), (1.0, 1.0), (math.nan, 1.0)])
def test_curve_rejects_bad_ranges(bad: tuple[float, float]) -> None:
    with pytest.raises(ValueError, match="load range"):
        analyze(dimensionless(0.8, 8), load_range=bad)
