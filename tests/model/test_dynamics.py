"""The annual map against a plain loop and against the engine's equilibria."""

from __future__ import annotations

import numpy as np
import pytest
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.dynamics import simulate
from turnback.model.equilibrium import equilibria, folds


def plain_loop(p0: float, loads: list[float]) -> list[float]:
    # Carpenter, Ludwig & Brock 1999: P[t+1] = P[t] + L[t] - s P[t] + r P^q/(m^q + P^q), written out by hand.
    out = [p0]
    for load in loads:
        p = out[-1]
        out.append(p + load - P.s * p + P.r * p**P.q / (P.m**P.q + p**P.q))
    return out


def test_matches_plain_loop() -> None:
    loads = list(np.linspace(300, 700, 30))
    traj = simulate(P, 800.0, loads)
    assert traj.p.tolist() == pytest.approx(plain_loop(800.0, loads), rel=1e-12)


def test_settles_on_the_branch_it_starts_in() -> None:
    load = 420.0
    low, mid, high = equilibria(P, load)
    traj = simulate(P, np.array([0.0, 0.95 * mid.p, 1.05 * mid.p, 2 * high.p]), np.full((4, 400), load))
    assert traj.final == pytest.approx([low.p, low.p, high.p, high.p], rel=1e-9)


def test_hysteresis_loop() -> None:
    tip, rec = folds(P)
    up = simulate(P, 0.0, np.full(300, 1.05 * tip.load)).final
    back = simulate(P, up, np.full(300, 0.95 * tip.load)).final
    assert back > tip.p  # still turbid at a load that was clear before
    down = simulate(P, back, np.full(300, 0.95 * rec.load)).final
    assert down < rec.p


def test_removal_and_inactivation_and_shapes() -> None:
    traj = simulate(P, 4000.0, np.full((2, 3, 5), 400.0), removal=np.array([3000.0, 0, 0, 0, 0]), recycling_scale=0.5)
    assert traj.p.shape == (2, 3, 6)
    assert traj.p[0, 0, 1] < 2000.0
    with pytest.raises(ValueError, match="loss_rate"):
        simulate(type(P)(2.5, 1, 1, 2), 1.0, [1.0])
