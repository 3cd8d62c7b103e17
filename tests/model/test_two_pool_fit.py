"""The two-pool fit with the sediment parameters fixed or bounded by the user."""

from __future__ import annotations

import numpy as np
import pytest
from turnback.model.demo import DEMO_TWO_POOL_PARAMETERS as DEMO
from turnback.model.dynamics import simulate
from turnback.model.two_pool_equilibrium import equilibria
from turnback.model.two_pool_fit import fit_two_pool
from turnback.model.validation import FieldError


def _record(sd: float, seed: int = 4) -> tuple[np.ndarray, np.ndarray]:
    """A record of the demo lake pushed past its tipping load, with lognormal process error."""
    gen = np.random.default_rng(seed)
    loads = np.concatenate([np.full(20, 300.0), np.linspace(300, 520, 10), np.full(15, 520.0)])
    p = [equilibria(DEMO, 300.0)[0].p]
    m = float(DEMO.sediment_balance(p[0]))
    for t in range(1, loads.size):
        tr = simulate(DEMO, p[-1], loads[t : t + 1], m0=m)
        assert tr.m is not None
        p.append(float(tr.p[-1]) * float(np.exp(sd * gen.standard_normal())))
        m = float(tr.m[-1])
    return np.array(p), loads


def test_exact_record_with_the_true_sediment_gives_back_the_lake() -> None:
    p, loads = _record(0.0)
    res = fit_two_pool(p, loads, burial=DEMO.b, recycling_rate=DEMO.r, outflow=DEMO.h, rng=1)
    assert res.sigma < 1e-4
    assert res.params.s == pytest.approx(DEMO.s, rel=1e-3)
    assert res.params.m == pytest.approx(DEMO.m, rel=1e-3)
    assert res.params.q == pytest.approx(DEMO.q, rel=1e-2)
    assert res.fixed == ("outflow", "burial", "recycling_rate")
    assert len(res.recovery.grid) == 1 and res.recovery.low == res.recovery.at_fit
    assert res.recovery.at_fit is not None and 5 <= res.recovery.at_fit <= 30
    assert "rarely tells" in res.warnings[0] and "fixed by you" in res.warnings[0]


def test_ranges_give_a_spread_of_recovery_years() -> None:
    p, loads = _record(0.05)
    res = fit_two_pool(p, loads, burial=(0.03, 0.12), recycling_rate=(0.1, 0.4), grid=3, rng=2)
    assert 0.03 <= res.params.b <= 0.12 and 0.1 <= res.params.r <= 0.4
    assert len(res.recovery.grid) == 9
    assert {b for b, _, _ in res.recovery.grid} == {0.03, 0.075, 0.12}
    years = [y for _, _, y in res.recovery.grid if y is not None]
    assert res.recovery.low == min(years)
    assert "within the ranges you gave" in res.warnings[0]
    assert res.to_dict()["recovery_years"]["grid"][0].keys() == {"burial", "recycling_rate", "recovery_years"}


@pytest.mark.parametrize(
    "kwargs, path",
    [
        ({"burial": (0.2, 0.1), "recycling_rate": 0.2}, ("burial",)),
        ({"burial": 0.6, "recycling_rate": 0.6}, ("recycling_rate",)),
        ({"burial": 0.0, "recycling_rate": 0.2}, ("burial",)),
        ({"burial": 0.05, "recycling_rate": 0.2, "cut_percent": 0.0}, ("cut_percent",)),
    ],
)
def test_bad_settings_name_the_field(kwargs: dict, path: tuple) -> None:
    p, loads = _record(0.0)
    with pytest.raises(FieldError) as err:
        fit_two_pool(p, loads, **kwargs)
    assert err.value.path == path
