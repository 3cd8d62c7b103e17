"""The two-pool contracts of ``turnback analyze``, ``compare`` and ``fit``, run as a user would (a subprocess)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from turnback.model.demo import DEMO_TWO_POOL_PARAMETERS as DEMO
from turnback.model.dynamics import simulate
from turnback.model.two_pool_equilibrium import equilibria, folds

FLAGS = {
    "--sedimentation": "0.45",
    "--outflow": "0.05",
    "--burial": "0.06",
    "--recycling-rate": "0.25",
    "--recycling-half": "1650",
    "--recycling-exponent": "6",
}
BASE = ["--model", "two-pool", *[x for kv in FLAGS.items() for x in kv]]


def turnback(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "turnback", *args], capture_output=True, text=True, timeout=120)


def test_analyze_json_contract() -> None:
    out = turnback("analyze", *BASE, "--load", "420", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert set(data) == {"regime", "folds", "tipping_load", "recovery_load", "equilibria"}
    assert data["regime"] == "hysteretic"
    assert [set(f) for f in data["folds"]] == [{"load", "p", "m"}] * 2
    assert data["folds"][0]["p"] < data["folds"][1]["p"]
    ref = folds(DEMO)
    assert data["tipping_load"] == ref[0].load and data["recovery_load"] == ref[1].load
    assert [e["stable"] for e in data["equilibria"]] == [True, False, True]
    assert [set(e) for e in data["equilibria"]] == [{"p", "m", "stable"}] * 3
    ps = [e["p"] for e in data["equilibria"]]
    assert ps == sorted(ps)
    for e in data["equilibria"]:
        # the values satisfy the two-pool balance written out by hand: L = h P + b M, M = s P / (b + r g)
        g = e["p"] ** 6 / (1650.0**6 + e["p"] ** 6)
        assert e["m"] == pytest.approx(0.45 * e["p"] / (0.06 + 0.25 * g), rel=1e-12)
        assert 0.05 * e["p"] + 0.06 * e["m"] == pytest.approx(420.0, rel=1e-12)


def test_analyze_reversible_without_load_and_text_output() -> None:
    rev = json.loads(turnback("analyze", *BASE[:-2], "--recycling-exponent", "2", "--json").stdout)
    assert rev == {"regime": "reversible", "folds": [], "tipping_load": None, "recovery_load": None}
    text = turnback("analyze", "--model", "two-pool", "--demo")
    assert text.returncode == 0
    assert "sediment P" in text.stdout and "Tipping load" in text.stdout and "permits" in text.stdout


def test_analyze_units_follow_the_parameters_and_lake_file(tmp_path: Path) -> None:
    # Multiplying m by 1000 multiplies loads and both pools by 1000 (the rates are per year).
    a = json.loads(turnback("analyze", *BASE, "--json").stdout)
    big = [*BASE[:-4], "--recycling-half", "1650000", "--recycling-exponent", "6"]
    b = json.loads(turnback("analyze", *big, "--json").stdout)
    assert b["tipping_load"] == pytest.approx(1000 * a["tipping_load"], rel=1e-10)
    assert b["folds"][1]["m"] == pytest.approx(1000 * a["folds"][1]["m"], rel=1e-10)
    lake = tmp_path / "lake.toml"
    lake.write_text(
        'name = "Pond"\narea_km2 = 2.0\nvolume_m3 = 1.0e6\nload_kg_yr = 400\n'
        '[parameters]\nmodel = "two-pool"\nsedimentation = 0.45\noutflow = 0.05\nburial = 0.06\n'
        "recycling_rate = 0.25\nrecycling_half = 1650\nrecycling_exponent = 6\n"
    )
    data = json.loads(turnback("analyze", "--model", "two-pool", "--lake", str(lake), "--json").stdout)
    assert data["folds"][0]["tp_ug_l"] == pytest.approx(data["folds"][0]["p"])  # 1 kg in 1e6 m³ = 1 µg/L
    assert len(data["equilibria"]) == 3  # the lake's own load, 400 kg/yr, between the folds
    one_box = turnback("analyze", "--lake", str(lake), "--json")
    assert one_box.returncode == 2 and "two-pool" in one_box.stderr


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["--outflow", "-1"], "--outflow"),
        (["--burial", "0"], "--burial"),
        (["--recycling-rate", "nan"], "--recycling-rate"),
        (["--loss-rate", "0.5"], "--loss-rate"),
    ],
)
def test_analyze_bad_input_is_one_line(args: list[str], fragment: str) -> None:
    flags = dict(FLAGS)
    rest = []
    for i in range(0, len(args), 2):
        if args[i] in flags:
            flags[args[i]] = args[i + 1]
        else:
            rest += args[i : i + 2]
    out = turnback("analyze", "--model", "two-pool", *[x for kv in flags.items() for x in kv], *rest, "--json")
    assert out.returncode == 2
    assert fragment in out.stderr and len(out.stderr.strip().splitlines()) == 1
    assert "Traceback" not in out.stderr


def test_one_box_refuses_two_pool_flags() -> None:
    out = turnback(
        "analyze", "--loss-rate", "0.8", "--recycling-max", "1", "--recycling-half", "1", "--recycling-exponent", "8",
        "--burial", "0.1",
    )  # fmt: skip
    assert out.returncode == 2 and "--model two-pool" in out.stderr


def _plan(tmp_path: Path, lake_extra: dict | None = None, treatments: list | None = None) -> Path:
    lake = {"model": "two-pool", **DEMO.to_dict(), "volume_m3": 2.79e7, "initial_tp_ug_l": 108.34, **(lake_extra or {})}
    cut = {"kind": "step", "from_kg_per_yr": 420, "to_kg_per_yr": 210, "year": 1}
    plan = {
        "lake": lake,
        "scenarios": [
            {"name": "hold", "years": 40, "load": {"kind": "constant", "kg_per_yr": 420}},
            {"name": "cut", "years": 40, "load": cut, "treatments": treatments or []},
        ],
    }
    path = tmp_path / "PLAN.json"
    path.write_text(json.dumps(plan))
    return path


def test_compare_two_pool_plan(tmp_path: Path) -> None:
    path = _plan(tmp_path)
    out = turnback("compare", str(path), "--json", "--full")
    assert out.returncode == 0, out.stderr
    rows = json.loads(out.stdout)["scenarios"]
    assert [r["name"] for r in rows] == ["hold", "cut"]
    assert all("sediment_p_final_median_kg" in r for r in rows)
    eq = equilibria(DEMO, 420.0)[-1]
    # starts in balance with the water (M* at the turbid state) and stays there at the same load
    assert rows[0]["sediment_p_final_median_kg"] == pytest.approx(eq.m, rel=1e-3)
    assert rows[0]["p_clear_final"] == 0.0 and rows[1]["p_clear_final"] == 1.0
    assert 10 <= rows[1]["recovery_years_median"] <= 20
    short = json.loads(turnback("compare", str(path), "--json").stdout)["scenarios"]
    assert set(short[0]) == {"name", "p_clear_final", "p_flip", "recovery_years_median", "final_tp_median_ug_l"}
    # dredging the sediment at the start shortens the wait
    dredged = _plan(tmp_path, treatments=[{"kind": "removal", "year": 1, "kg": 3000, "pool": "sediment"}])
    row = json.loads(turnback("compare", str(dredged), "--json", "--full").stdout)["scenarios"][1]
    assert row["recovery_years_median"] < rows[1]["recovery_years_median"]
    assert row["in_lake_removal_kg"] == pytest.approx(3000.0)


def test_compare_two_pool_plan_errors(tmp_path: Path) -> None:
    bad = _plan(tmp_path, {"outflow": 0.6})
    out = turnback("compare", str(bad), "--json")
    assert out.returncode == 2 and "lake.outflow" in out.stderr and "at most 1" in out.stderr
    bad = _plan(tmp_path, {"loss_rate": 0.5})
    out = turnback("compare", str(bad), "--json")
    assert out.returncode == 2 and "lake.loss_rate" in out.stderr


def _record(tmp_path: Path) -> Path:
    gen = np.random.default_rng(4)
    loads = np.concatenate([np.full(20, 300.0), np.linspace(300, 520, 10), np.full(10, 520.0)])
    p = [equilibria(DEMO, 300.0)[0].p]
    m = float(DEMO.sediment_balance(p[0]))
    for t in range(1, loads.size):
        tr = simulate(DEMO, p[-1], loads[t : t + 1], m0=m)
        assert tr.m is not None
        p.append(float(tr.p[-1]) * float(np.exp(0.05 * gen.standard_normal())))
        m = float(tr.m[-1])
    rows = ["year,load_kg,tp_ug_l"] + [
        f"{2000 + i},{lv:.3f},{pv / 27.9:.4f}" for i, (lv, pv) in enumerate(zip(loads, p, strict=True))
    ]
    path = tmp_path / "record.csv"
    path.write_text("\n".join(rows) + "\n")
    return path


def test_fit_two_pool_json(tmp_path: Path) -> None:
    path = _record(tmp_path)
    base = ["fit", str(path), "--volume-m3", "2.79e7", "--model", "two-pool", "--json"]
    out = turnback(*base, "--burial", "0.06", "--recycling-rate-range", "0.15", "0.35")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["model"] == "two-pool" and data["params"]["burial"] == 0.06
    assert 0.15 <= data["params"]["recycling_rate"] <= 0.35
    assert data["fixed"] == ["burial"] and data["ranges"]["recycling_rate"] == [0.15, 0.35]
    grid = data["recovery_years"]["grid"]
    assert len(grid) == 4 and {g["burial"] for g in grid} == {0.06}
    assert any("rarely tells" in w for w in data["warnings"])
    missing = turnback(*base, "--burial", "0.06")
    assert missing.returncode == 2 and "--recycling-rate" in missing.stderr
    one_box = turnback("fit", str(path), "--volume-m3", "2.79e7", "--burial", "0.06", "--json")
    assert one_box.returncode == 2 and "--model two-pool" in one_box.stderr
