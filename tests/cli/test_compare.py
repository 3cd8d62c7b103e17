"""The ``turnback compare PLAN.json --json`` contract and the bad-plan corpus."""

from __future__ import annotations

import copy
import json
import os
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest
from turnback.app.cli import main
from turnback.model.equilibrium import equilibria
from turnback.model.params import LakeParameters

ROOT = Path(__file__).resolve().parents[2]

# The shape the contract must accept, verbatim from the task.
EXAMPLE: dict[str, Any] = {
    "lake": {
        "loss_rate": 0.8,
        "recycling_max": 30000,
        "recycling_half": 25000,
        "recycling_exponent": 6,
        "volume_m3": 2.0e8,
        "initial_tp_ug_l": 120,
    },
    "scenarios": [
        {
            "name": "hold",
            "years": 40,
            "load": {"kind": "constant", "kg_per_yr": 9000},
            "variability_cv": 0.0,
            "members": 1,
            "seed": 1,
            "treatments": [],
        },
        {
            "name": "cut",
            "years": 40,
            "load": {"kind": "linear_cut", "from_kg_per_yr": 9000, "percent": 60, "over_years": 10},
            "variability_cv": 0.3,
            "members": 2000,
            "seed": 2,
            "treatments": [{"kind": "removal", "year": 3, "kg": 5000}],
        },
    ],
}


def turnback(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "turnback", *args],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=cwd,
        env=os.environ | {"PYTHONPATH": str(ROOT)},
    )


def test_json_contract(tmp_path: Path) -> None:
    plan = dict(copy.deepcopy(EXAMPLE))
    plan["scenarios"].append(  # type: ignore[attr-defined]
        {
            "name": "deep",
            "years": 40,
            "load": {"kind": "step", "from_kg_per_yr": 9000, "to_kg_per_yr": 800, "year": 1},
            "treatments": [{"kind": "inactivation", "year": 1, "percent": 50, "years": 3}],
        }
    )
    (tmp_path / "PLAN.json").write_text(json.dumps(plan), encoding="utf-8")
    out = turnback("compare", "PLAN.json", "--json", cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert list(data) == ["scenarios"]
    keys = ["name", "p_clear_final", "p_flip", "recovery_years_median", "final_tp_median_ug_l"]
    assert [list(s) for s in data["scenarios"]] == [keys] * 3
    hold, cut, deep = data["scenarios"]
    assert [hold["name"], cut["name"], deep["name"]] == ["hold", "cut", "deep"]
    # hold: 120 µg/L is above the separatrix at 9000 kg/yr, so the lake settles on the turbid branch
    # given by the closed-form engine (Carpenter, Ludwig & Brock 1999 equilibria).
    upper = equilibria(LakeParameters(0.8, 30000, 25000, 6), 9000)[-1].p * 1e6 / 2.0e8
    assert hold["final_tp_median_ug_l"] == pytest.approx(upper, rel=1e-9)
    assert hold["p_clear_final"] == 0.0 and hold["p_flip"] is None and hold["recovery_years_median"] is None
    assert 0.0 < cut["p_clear_final"] < 1.0 and cut["p_flip"] is None
    # deep: the load drops below the recovery load (1148 kg/yr), so the lake must recover.
    assert deep["p_clear_final"] == 1.0 and deep["recovery_years_median"] is not None
    assert deep["final_tp_median_ug_l"] < 20.0
    again = turnback("compare", "PLAN.json", "--json", cwd=tmp_path)
    assert again.stdout == out.stdout  # seeded: the same plan gives the same numbers
    full = json.loads(turnback("compare", "PLAN.json", "--json", "--full", cwd=tmp_path).stdout)
    assert full["scenarios"][1]["members"] == 2000 and "total_removed_kg" in full["scenarios"][1]
    table = turnback("compare", "PLAN.json", cwd=tmp_path)
    assert table.returncode == 0 and "hold" in table.stdout and "health authorities" in table.stdout


def _with(path: str, value: Any) -> dict[str, Any]:
    """EXAMPLE with the value at a dotted path replaced (``...=DELETE`` removes it)."""
    plan = copy.deepcopy(EXAMPLE)
    node: Any = plan
    parts = path.replace("]", "").replace("[", ".").split(".")
    for p in parts[:-1]:
        node = node[int(p)] if p.isdigit() else node[p]
    last = parts[-1]
    key: Any = int(last) if last.isdigit() else last
    if value is DELETE:
        del node[key]
    else:
        node[key] = value
    return plan


DELETE = object()

# Each malformed plan and the message it must give (common practice: name the field and what to fix).
CORPUS: list[tuple[Any, str]] = [
    (_with("scenarios[1].load.percent", 120), "scenarios[1].load.percent must be between 0 and 100"),
    (_with("lake.recycling_max", DELETE), "lake.recycling_max is required"),
    (_with("lake.volum_m3", 1.0), "lake.volum_m3 is not a known field"),
    (_with("lake.loss_rate", 2.5), "lake.loss_rate must be below 2"),
    (_with("lake.loss_rate", "0.8"), "lake.loss_rate must be a number"),
    (_with("lake.initial_tp_ug_l", -5), "lake.initial_tp_ug_l must be at least 0"),
    (_with("scenarios[0].load.kind", "linear"), "scenarios[0].load.kind must be one of constant, linear_cut"),
    (
        _with("scenarios[0].load", {"kind": "table", "kg_per_yr": [1, 2, 3]}),
        "scenarios[0].load.kg_per_yr must have one value a year: 40 values",
    ),
    (
        _with("scenarios[0].load", {"kind": "table", "kg_per_yr": [1] * 39 + [-1]}),
        "scenarios[0].load.kg_per_yr[39] must be at least 0",
    ),
    (
        _with("scenarios[0].load", {"kind": "step", "from_kg_per_yr": 1, "to_kg_per_yr": 2, "year": 41}),
        "scenarios[0].load.year must be between 1 and 40",
    ),
    (_with("scenarios[0].load.kg_per_yr", "9000"), "scenarios[0].load.kg_per_yr must be a number"),
    (_with("scenarios[0].load.kg_per_yr", float("nan")), "scenarios[0].load.kg_per_yr must be at least 0"),
    (_with("scenarios[1].load.over_years", 2.5), "scenarios[1].load.over_years must be a whole number"),
    (_with("scenarios[1].treatments[0].year", 41), "scenarios[1].treatments[0].year must be between 1 and 40"),
    (_with("scenarios[1].treatments[0].kg", 0), "scenarios[1].treatments[0].kg must be greater than 0"),
    (_with("scenarios[1].treatments[0].kind", "alum"), "scenarios[1].treatments[0].kind must be one of removal"),
    (
        _with("scenarios[1].treatments[0]", {"kind": "inactivation", "year": 2, "percent": 150, "years": 3}),
        "scenarios[1].treatments[0].percent must be greater than 0 and at most 100",
    ),
    (_with("scenarios[1].treatments", {"kind": "removal"}), "scenarios[1].treatments must be a list"),
    (_with("scenarios[1].variability_cv", -0.3), "scenarios[1].variability_cv must be between 0 and 5"),
    (_with("scenarios[0].members", 0), "scenarios[0].members must be a whole number between 1 and 100000"),
    (_with("scenarios[0].members", True), "scenarios[0].members must be a whole number"),
    (_with("scenarios[0].years", 0), "scenarios[0].years must be a whole number between 1 and 1000"),
    (_with("scenarios[0].seed", -1), "scenarios[0].seed must be a whole number"),
    (_with("scenarios[1].name", "hold"), "scenarios[1].name 'hold' is already used by scenarios[0]"),
    (_with("scenarios[0].name", " "), "scenarios[0].name must not be empty"),
    (_with("scenarios[0].clear_threshold", "murky"), "scenarios[0].clear_threshold must be"),
    (_with("scenarios[0].colour", "red"), "scenarios[0].colour is not a known field"),
    (_with("scenarios", []), "scenarios must be a non-empty list"),
    (_with("scenarios[0]", 5), "scenarios[0] must be an object"),
    (_with("lake", [1, 2]), "lake must be an object"),
    ([1, 2], "the plan must be a JSON object"),
]


@pytest.mark.parametrize("plan, fragment", CORPUS, ids=[f for _, f in CORPUS])
def test_bad_plan_exits_2_naming_the_field(
    plan: Any, fragment: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "PLAN.json"
    path.write_text(json.dumps(plan), encoding="utf-8")
    before = path.read_bytes()
    code = main(["compare", str(path), "--json"])
    out, err = capsys.readouterr()
    assert code == 2
    assert fragment in err, err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert out == ""
    assert path.read_bytes() == before  # the user's file is untouched


@pytest.mark.parametrize(
    "text, fragment",
    [('{"lake": ', "is not valid JSON"), ("\ufffe\x00\x01", "is not")],
)
def test_unreadable_plans(text: str, fragment: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "PLAN.json"
    path.write_text(text, encoding="utf-8")
    assert main(["compare", str(path)]) == 2
    assert fragment in capsys.readouterr().err


def test_missing_plan_as_a_user_sees_it(tmp_path: Path) -> None:
    out = turnback("compare", "nowhere.json", "--json", cwd=tmp_path)
    assert out.returncode == 2 and "cannot read plan file 'nowhere.json'" in out.stderr
    assert "Traceback" not in out.stderr and out.stdout == ""
    (tmp_path / "PLAN.json").write_text(json.dumps(_with("scenarios[1].load.percent", 120)), encoding="utf-8")
    bad = turnback("compare", "PLAN.json", "--json", cwd=tmp_path)
    assert bad.returncode == 2 and "scenarios[1].load.percent must be between 0 and 100" in bad.stderr
    assert len(bad.stderr.strip().splitlines()) == 1 and "Traceback" not in bad.stderr
