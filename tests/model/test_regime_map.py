"""The two-parameter regime map: fold curves vs the engine, cusp, irreversible boundary, classifiers."""

from __future__ import annotations

import math

import numpy as np
import pytest
from turnback.model.demo import DEMO_PARAMETERS
from turnback.model.equilibrium import cusp_b, equilibria, folds, irreversible_b, regime
from turnback.model.params import LakeParameters
from turnback.model.regime_map import classify_samples, regime_map

LAKES = [
    LakeParameters(loss_rate=0.4, recycling_max=1.0, recycling_half=1.0, recycling_exponent=2.0),
    DEMO_PARAMETERS,
    LakeParameters(loss_rate=0.8, recycling_max=1000.0, recycling_half=1000.0, recycling_exponent=8.0),
]


@pytest.mark.parametrize("axis", ["loss_rate", "recycling_max"])
@pytest.mark.parametrize("lake", LAKES, ids=["q2", "demo", "q8"])
def test_fold_curves_match_engine_folds(lake: LakeParameters, axis: str) -> None:
    # The parametric fold curve at each sampled point is a fold of the one-parameter engine
    # (model.equilibrium.folds, Brent's method on ln g'(x) = ln b) at that parameter value.
    rm = regime_map(lake, axis)  # type: ignore[arg-type]
    assert rm.tipping.load.size == 400 and rm.recovery.load.size == 400
    for curve, which in ((rm.tipping, 0), (rm.recovery, 1)):
        for k in range(1, curve.load.size - 1, 13):  # the last/first point is the cusp itself
            fs = folds(rm._with(float(curve.parameter[k])))
            assert len(fs) == 2
            assert fs[which].kind == curve.kind
            assert fs[which].load == pytest.approx(curve.load[k], rel=1e-9, abs=1e-12 * lake.r)
            assert fs[which].p == pytest.approx(curve.p[k], rel=1e-9)
    # one line through the cusp, tipping then recovery
    assert rm.fold_load.size == 800 and list(np.unique(rm.fold_kind)) == ["recovery", "tipping"]
    assert rm.tipping.x[-1] == rm.recovery.x[0] == rm.cusp.x  # type: ignore[union-attr]


def test_cusp_for_q2_closed_form() -> None:
    # model/equilibrium.py docstring derivation: x_c = 1/sqrt(3), b_c = 3 sqrt(3)/8, a_c = 1/8 for q = 2
    lake = LakeParameters(loss_rate=0.4, recycling_max=1.0, recycling_half=1.0, recycling_exponent=2.0)
    rm = regime_map(lake, "loss_rate")
    c = rm.cusp
    assert c is not None
    assert c.x == pytest.approx(1.0 / math.sqrt(3.0), rel=1e-14)
    assert c.b == pytest.approx(3.0 * math.sqrt(3.0) / 8.0, rel=1e-14)
    assert c.a == pytest.approx(1.0 / 8.0, rel=1e-14)
    assert (c.parameter, c.load) == pytest.approx((3.0 * math.sqrt(3.0) / 8.0, 1.0 / 8.0), rel=1e-14)
    # units: with r = 1000 kg/yr and m = 500 kg, s_c = b_c r/m and L_c = a_c r
    big = LakeParameters(loss_rate=0.4, recycling_max=1000.0, recycling_half=500.0, recycling_exponent=2.0)
    cb = regime_map(big, "loss_rate").cusp
    assert cb is not None
    assert (cb.parameter, cb.load, cb.p) == pytest.approx((c.b * 2.0, 125.0, 500.0 / math.sqrt(3.0)), rel=1e-13)
    # on the recycling axis: r_c = s m / b_c and L_c = a_c r_c
    cr = regime_map(lake, "recycling_max").cusp
    assert cr is not None
    r_c = 0.4 / c.b
    assert (cr.parameter, cr.load) == pytest.approx((r_c, r_c / 8.0), rel=1e-13)
    # the cusp sits where the engine's two folds merge
    assert folds(rm._with(c.parameter * (1 - 1e-6))) and not folds(rm._with(c.parameter * (1 + 1e-6)))


@pytest.mark.parametrize("q", [2.0, 4.0, 8.0])
def test_irreversible_boundary_where_recovery_fold_crosses_zero_load(q: float) -> None:
    # closed form x^q = q - 1, b_irr = (q-1)^((q-1)/q)/q (model.equilibrium docstring); for q = 2: x = 1, b = 1/2
    lake = LakeParameters(loss_rate=0.3, recycling_max=2.0, recycling_half=3.0, recycling_exponent=q)
    rm = regime_map(lake, "loss_rate")
    rec = rm.recovery
    k = int(np.flatnonzero(np.diff(np.sign(rec.load)))[0])
    frac = rec.load[k] / (rec.load[k] - rec.load[k + 1])
    s_zero = rec.parameter[k] + frac * (rec.parameter[k + 1] - rec.parameter[k])
    x_zero = rec.x[k] + frac * (rec.x[k + 1] - rec.x[k])
    assert rm.irreversible_parameter == pytest.approx(irreversible_b(q) * lake.r / lake.m, rel=1e-14)
    assert s_zero == pytest.approx(rm.irreversible_parameter, rel=1e-4)  # linear interpolation on 400 points
    assert x_zero == pytest.approx((q - 1.0) ** (1.0 / q), rel=1e-3)
    if q == 2.0:
        assert irreversible_b(q) == 0.5
    assert rm.cusp_parameter == pytest.approx(cusp_b(q) * lake.r / lake.m, rel=1e-14)


@pytest.mark.parametrize("axis", ["loss_rate", "recycling_max"])
def test_bands_cover_the_range_in_order(axis: str) -> None:
    rm = regime_map(DEMO_PARAMETERS, axis)  # type: ignore[arg-type]
    lo, hi = rm.parameter_range
    assert rm.bands[0][1] == lo and rm.bands[-1][2] == hi
    for (_, _, a), (_, b, _) in zip(rm.bands, rm.bands[1:], strict=False):
        assert a == b
    names = [b[0] for b in rm.bands]
    expected = ["irreversible", "hysteretic", "reversible"]
    assert names == (expected if axis == "loss_rate" else expected[::-1])
    assert lo < rm.lake_parameter < hi
    # every band's regime is the engine's regime at its middle
    for name, a, b in rm.bands:
        assert regime(rm._with(0.5 * (a + b))) == name


@pytest.mark.parametrize("axis", ["loss_rate", "recycling_max"])
def test_grid_classification_agrees_with_engine_equilibria(axis: str) -> None:
    # number of stable states from model.equilibrium.equilibria at random points of the map
    rm = regime_map(DEMO_PARAMETERS, axis)  # type: ignore[arg-type]
    assert rm.cusp is not None
    loads = np.linspace(0.0, 1.3 * rm.cusp.load, 37)
    pars = np.linspace(*rm.parameter_range, 29)
    g = rm.grid(loads, pars)
    assert g.regime.shape == (29, 37) and g.n_stable.shape == (29, 37)
    assert set(np.unique(g.states)) == {"single", "clear", "turbid", "both"}
    rng = np.random.default_rng(3)
    for i, j in zip(rng.integers(0, 29, 150), rng.integers(0, 37, 150), strict=True):
        p = rm._with(float(pars[i]))
        eqs = equilibria(p, float(loads[j]))
        stable = [e for e in eqs if e.stable]
        assert g.n_stable[i, j] == len(stable)
        assert g.regime[i, j] == regime(p)
        kinds = {e.branch for e in stable}
        expect = {"single": {"single"}, "clear": {"lower"}, "turbid": {"upper"}, "both": {"lower", "upper"}}
        assert kinds == expect[str(g.states[i, j])]


def test_classify_samples_matches_engine_regime() -> None:
    rng = np.random.default_rng(0)
    n = 400
    samples = np.column_stack(
        [rng.uniform(0.1, 2.0, n), rng.uniform(0.5, 3.0, n), rng.uniform(0.5, 3.0, n), rng.uniform(0.8, 8.0, n)]
    )
    res = classify_samples(samples)
    engine = [regime(LakeParameters(*row)) for row in samples]
    assert list(res.regime) == engine
    assert sum(res.counts.values()) == n and set(res.counts) == {"reversible", "hysteretic", "irreversible"}
    assert min(res.counts.values()) > 20  # the test exercises all three regimes
    assert sum(res.fractions.values()) == pytest.approx(1.0)
    # same answer from LakeParameters objects and from a column mapping
    objs = [LakeParameters(*row) for row in samples[:10]]
    cols = {
        k: samples[:10, i] for i, k in enumerate(["loss_rate", "recycling_max", "recycling_half", "recycling_exponent"])
    }
    assert list(classify_samples(objs).regime) == engine[:10] == list(classify_samples(cols).regime)


def test_place_puts_samples_where_their_own_state_is() -> None:
    rm = regime_map(DEMO_PARAMETERS, "loss_rate")
    rng = np.random.default_rng(9)
    n = 60
    samples = {
        "loss_rate": rng.uniform(0.2, 0.9, n),
        "recycling_max": rng.uniform(1200.0, 2400.0, n),
        "recycling_half": rng.uniform(2000.0, 3000.0, n),
        "recycling_exponent": np.full(n, DEMO_PARAMETERS.q),
    }
    load = 420.0
    eq_load, eq_par, same_q = rm.place(samples, load)
    assert same_q.all()
    g = rm.classify(eq_load, eq_par)
    for k in range(n):
        own = LakeParameters(*(samples[c][k] for c in samples))
        assert g.n_stable[k] == sum(e.stable for e in equilibria(own, load))
        assert g.regime[k] == regime(own)


def test_q_at_most_one_has_no_folds() -> None:
    lake = LakeParameters(loss_rate=0.5, recycling_max=1.0, recycling_half=1.0, recycling_exponent=1.0)
    rm = regime_map(lake)
    assert rm.cusp is None and rm.fold_load.size == 0 and rm.bands == (("reversible", *rm.parameter_range),)
    g = rm.grid([0.0, 1.0], [0.3, 0.6])
    assert (g.regime == "reversible").all() and (g.n_stable == 1).all() and (g.states == "single").all()
    assert classify_samples([lake]).regime[0] == "reversible"


def test_range_above_the_cusp_has_no_fold_curves() -> None:
    lake = LakeParameters(loss_rate=0.4, recycling_max=1.0, recycling_half=1.0, recycling_exponent=2.0)
    rm = regime_map(lake, "loss_rate", parameter_range=(0.7, 1.0))  # b_c = 0.6495
    assert rm.tipping.load.size == 0 and rm.bands == (("reversible", 0.7, 1.0),)


@pytest.mark.parametrize(
    "kwargs, fragment",
    [
        ({"axis": "recycling_half"}, "axis"),
        ({"parameter_range": (1.0, 0.5)}, "range"),
        ({"parameter_range": (0.0, 0.5)}, "range"),
        ({"n_points": 3}, "n_points"),
    ],
)
def test_bad_map_arguments(kwargs: dict, fragment: str) -> None:
    with pytest.raises(ValueError, match=fragment):
        regime_map(DEMO_PARAMETERS, **kwargs)


def test_bad_points_and_samples() -> None:
    rm = regime_map(DEMO_PARAMETERS)
    with pytest.raises(ValueError, match="loads"):
        rm.classify([-1.0], [0.5])
    with pytest.raises(ValueError, match="loss_rate"):
        rm.classify([1.0], [0.0])
    with pytest.raises(ValueError, match="shape"):
        classify_samples(np.ones((3, 3)))
    with pytest.raises(ValueError, match="recycling_exponent"):
        classify_samples(np.array([[0.5, 1.0, 1.0, -2.0]]))
    with pytest.raises(ValueError, match="missing"):
        classify_samples({"loss_rate": [0.5]})


@pytest.mark.parametrize("q", [1.5, 2.0, 4.0, 8.0])
@pytest.mark.parametrize("edge", ["cusp", "irreversible"])
@pytest.mark.parametrize("side", [1.0 - 1e-7, 1.0 + 1e-7])
def test_classify_samples_right_at_the_regime_edges(q: float, edge: str, side: float) -> None:
    # closed-form b_c and b_irr (model.equilibrium) against the engine's fold-based regime, 1e-7 either side
    b = (cusp_b(q) if edge == "cusp" else irreversible_b(q)) * side
    lake = LakeParameters(loss_rate=b * 3.0 / 2.0, recycling_max=3.0, recycling_half=2.0, recycling_exponent=q)
    assert classify_samples([lake]).regime[0] == regime(lake)


def test_points_exactly_on_the_fold_curves() -> None:
    # a fold equilibrium is not stable (engine convention): on the tipping curve only the turbid state is
    # left, on the recovery curve only the clear one; just inside the wedge both
    rm = regime_map(DEMO_PARAMETERS, "loss_rate")
    fs = folds(DEMO_PARAMETERS)
    s = DEMO_PARAMETERS.s
    tip, rec = fs[0].load, fs[1].load
    g = rm.classify([tip, rec, tip * (1 - 1e-9), rec * (1 + 1e-9), tip * (1 + 1e-9), rec * (1 - 1e-9)], s)
    assert list(g.states) == ["turbid", "clear", "both", "both", "turbid", "clear"]
    assert list(g.n_stable) == [1, 1, 2, 2, 1, 1]
    for load, n in zip(g.load, g.n_stable, strict=True):
        assert sum(e.stable for e in equilibria(DEMO_PARAMETERS, float(load))) == n
