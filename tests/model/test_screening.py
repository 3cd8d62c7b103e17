"""Screening one lake and planning the chunks: turnback.model.screening."""

from __future__ import annotations

import ast
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.fit import fit_monitoring
from turnback.model.io.monitoring_csv import parse_monitoring
from turnback.model.params import LakeParameters
from turnback.model.progress import RunCancelled
from turnback.model.record import MonitoringSeries
from turnback.model.screening import (
    MAX_ANALYSIS_CHUNK,
    MIN_ANALYSIS_CHUNK,
    RESULT_KEYS,
    RegionLake,
    ScreenFailure,
    ScreenResult,
    plan_chunks,
    screen_lake,
    screen_many,
)
from turnback.model.validation import FieldError

ROOT = Path(__file__).resolve().parents[2]
DEMO_CSV = ROOT / "sample_data" / "amberlin_monitoring.csv"
V = DEMO_PROFILE.volume_m3


def record_ending_at(tp_last: float, n: int = 12) -> MonitoringSeries:
    tp = np.linspace(20.0, tp_last, n)
    return MonitoringSeries(years=np.arange(2000, 2000 + n), load_kg_per_yr=np.full(n, 400.0), tp_ug_l=tp)


def lake(lake_id: str = "A", load: float = 420.0, **kw: object) -> RegionLake:
    return RegionLake(lake_id=lake_id, volume_m3=V, load_kg_per_yr=load, **kw)  # type: ignore[arg-type]


# --------------------------------------------------------------------------
# the lake object
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("kw", "path"),
    [
        ({"lake_id": " "}, ("lake_id",)),
        ({"volume_m3": 0.0}, ("volume_m3",)),
        ({"volume_m3": math.nan}, ("volume_m3",)),
        ({"load_kg_per_yr": -1.0}, ("load_kg_yr",)),
        ({"area_km2": -2.0}, ("area_km2",)),
    ],
)
def test_region_lake_refuses_bad_values_with_the_field(kw: dict[str, object], path: tuple[str, ...]) -> None:
    base: dict[str, object] = {"lake_id": "A", "volume_m3": V, "load_kg_per_yr": 420.0}
    with pytest.raises(FieldError) as err:
        RegionLake(**(base | kw))  # type: ignore[arg-type]
    assert err.value.path == path


# --------------------------------------------------------------------------
# a lake with parameters: analysis only
# --------------------------------------------------------------------------
def _folds_by_sympy(p: LakeParameters) -> tuple[float, float]:
    """Fold loads from f = 0 and df/dP = 0 solved by sympy (an outside root finder)."""
    P, L = sp.symbols("P L", positive=True)
    f = L - p.s * P + p.r * P**p.q / (p.m**p.q + P**p.q)
    loads = []
    for guess in (0.6 * p.m, 1.6 * p.m):
        sol = sp.nsolve([f, sp.diff(f, P)], [P, L], [guess, 0.3 * p.r], prec=30)
        loads.append(float(sol[1]))
    return max(loads), min(loads)


def test_a_lake_with_parameters_is_analysed_only() -> None:
    res = screen_lake(lake(params=DEMO_PARAMETERS))
    tip, rec = _folds_by_sympy(DEMO_PARAMETERS)
    # Reference: sympy.nsolve on f = f' = 0 (general-purpose library).
    assert res.tipping_load == pytest.approx(tip, rel=1e-10)
    assert res.recovery_load == pytest.approx(rec, rel=1e-10)
    assert res.regime == "hysteretic"  # both folds at positive load (Carpenter, Ludwig & Brock 1999 classes)
    assert res.margin_kg_yr == pytest.approx(tip - 420.0, rel=1e-12)
    assert res.p_irreversible is None and res.p_hysteretic is None
    assert res.state is None  # no record, no last observation
    assert not res.fitted and res.params == DEMO_PARAMETERS
    assert res.warnings == ()
    assert set(res.to_dict()) == set(RESULT_KEYS)


def test_load_past_the_tipping_load_is_said_in_words() -> None:
    res = screen_lake(lake(load=700.0, params=DEMO_PARAMETERS))
    assert res.margin_kg_yr is not None and res.margin_kg_yr < 0
    assert any("above the tipping load" in w for w in res.warnings)


def test_reversible_lake_has_no_thresholds_and_no_margin() -> None:
    p = LakeParameters(loss_rate=0.9, recycling_max=1000.0, recycling_half=2500.0, recycling_exponent=2.0)
    res = screen_lake(lake(params=p))
    assert (res.regime, res.tipping_load, res.recovery_load, res.margin_kg_yr) == ("reversible", None, None, None)


def _settles_clear(p: LakeParameters, load: float, p0: float) -> bool:
    """Run the annual map P <- P + L - sP + r P^q/(m^q + P^q) for 2000 years (written out here, not the product's)."""
    x = p0
    for _ in range(2000):
        x = max(x + load - p.s * x + p.r * x**p.q / (p.m**p.q + x**p.q), 0.0)
    return x < p.m  # the clear equilibrium of the demo lake lies well below m, the turbid one well above


@pytest.mark.parametrize("tp_last", [20.0, 55.0, 75.0, 140.0])
def test_state_is_the_basin_of_the_last_observed_year_at_todays_load(tp_last: float) -> None:
    res = screen_lake(lake(params=DEMO_PARAMETERS, record=record_ending_at(tp_last)))
    clear = _settles_clear(DEMO_PARAMETERS, 420.0, tp_last * V / 1e6)
    # Reference: the basin found by iterating the map to its end state (common practice, no source).
    assert res.state == ("clear" if clear else "turbid")


def test_state_of_a_lake_with_one_stable_state_is_single() -> None:
    p = LakeParameters(loss_rate=0.9, recycling_max=1000.0, recycling_half=2500.0, recycling_exponent=2.0)
    assert screen_lake(lake(params=p, record=record_ending_at(60.0))).state == "single"


# --------------------------------------------------------------------------
# a lake without parameters: fitted
# --------------------------------------------------------------------------
def test_a_fitted_lake_is_what_fit_monitoring_says_with_the_same_seed() -> None:
    series = parse_monitoring(DEMO_CSV)
    res = screen_lake(lake(record=series), replicates=150, rng=4)
    ref = fit_monitoring(series, V, replicates=150, rng=4)
    assert res.fitted and res.params == ref.params and res.regime == ref.regime
    assert res.tipping_load == ref.tipping_load.estimate and res.recovery_load == ref.recovery_load.estimate
    assert res.p_irreversible == ref.regime_probability.irreversible
    assert res.p_hysteretic == ref.regime_probability.hysteretic
    assert res.margin_kg_yr == pytest.approx(ref.tipping_load.estimate - 420.0)  # type: ignore[operator]
    assert res.state in ("clear", "turbid")
    assert set(ref.warnings) <= set(res.warnings)


def test_a_lake_with_neither_parameters_nor_record_fails_with_what_to_give() -> None:
    with pytest.raises(ValueError, match="recycling_exponent"):
        screen_lake(lake())


def test_screen_many_keeps_order_and_never_stops_on_a_bad_lake() -> None:
    short = MonitoringSeries(years=np.arange(2000, 2005), load_kg_per_yr=np.full(5, 400.0), tp_ug_l=np.full(5, 30.0))
    lakes = [lake("A", params=DEMO_PARAMETERS), lake("B"), lake("C", record=short), lake("D", params=DEMO_PARAMETERS)]
    seen: list[float] = []
    out = screen_many(lakes, replicates=100, progress=lambda f, m: seen.append(f))
    assert [o.lake_id for o in out] == ["A", "B", "C", "D"]
    assert [type(o) for o in out] == [ScreenResult, ScreenFailure, ScreenFailure, ScreenResult]
    assert "7 consecutive years" in out[2].message  # type: ignore[union-attr]
    assert seen == [0.25, 0.5, 0.75, 1.0]


def test_screen_many_stops_when_cancelled() -> None:
    lakes = [lake(f"P{i}", params=DEMO_PARAMETERS) for i in range(5)]
    done: list[str] = []
    with pytest.raises(RunCancelled):
        screen_many(lakes, progress=lambda f, m: done.append(m), cancel=lambda: len(done) >= 2)
    assert done == ["1 of 5 lakes screened", "2 of 5 lakes screened"]


def test_failures_have_the_contract_keys() -> None:
    assert ScreenFailure("X", "fix it").to_dict() == {"lake_id": "X", "message": "fix it"}


# --------------------------------------------------------------------------
# chunks
# --------------------------------------------------------------------------
def test_chunks_cover_every_lake_once_fitted_lakes_alone() -> None:
    lakes = [lake(f"F{i}", record=record_ending_at(30.0)) for i in range(5)]
    lakes += [lake(f"P{i}", params=DEMO_PARAMETERS) for i in range(3000)]
    chunks = plan_chunks(lakes, n_workers=2)
    flat = sorted(i for c in chunks for i in c)
    assert flat == list(range(len(lakes)))
    assert chunks[:5] == [(0,), (1,), (2,), (3,), (4,)]  # the long tasks first
    sizes = [len(c) for c in chunks[5:]]
    assert all(MIN_ANALYSIS_CHUNK <= s <= MAX_ANALYSIS_CHUNK for s in sizes[:-1]) and sum(sizes) == 3000
    assert len(sizes) == 8  # about four tasks per worker: ceil(3000 / 8) = 375 lakes a task


def test_a_few_hundred_analysis_lakes_are_one_chunk_and_ten_thousand_are_many() -> None:
    assert len(plan_chunks([lake(f"P{i}", params=DEMO_PARAMETERS) for i in range(150)], 8)) == 1
    many = plan_chunks([lake(f"P{i}", params=DEMO_PARAMETERS) for i in range(10_000)], 2)
    assert len(many) == 10 and {len(c) for c in many} == {MAX_ANALYSIS_CHUNK}
    with pytest.raises(FieldError):
        plan_chunks([], 0)


# --------------------------------------------------------------------------
# layering: the pure core never touches Dask
# --------------------------------------------------------------------------
def test_the_pure_screening_core_does_not_import_dask() -> None:
    for name in ("screening.py", "fit.py", "equilibrium.py"):
        tree = ast.parse((ROOT / "model" / name).read_text(encoding="utf-8"))
        mods = {a.name for n in ast.walk(tree) if isinstance(n, ast.Import) for a in n.names}
        mods |= {n.module or "" for n in ast.walk(tree) if isinstance(n, ast.ImportFrom)}
        assert not any(m.split(".")[0] in ("dask", "distributed") or m.endswith("distributed") for m in mods), name
    code = "import sys, turnback.model.screening, turnback.model.io.region_csv; print('distributed' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
