"""The ``turnback analyze`` contract, run as a user would (a subprocess)."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
from turnback.model.equilibrium import folds
from turnback.model.params import DimensionlessLake

BASE = ["--loss-rate", "0.8", "--recycling-max", "1", "--recycling-half", "1", "--recycling-exponent", "8"]


def turnback(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "turnback", *args], capture_output=True, text=True, timeout=60)


def test_json_contract_hysteretic() -> None:
    out = turnback("analyze", *BASE, "--load", "0.3", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert set(data) == {"regime", "folds", "tipping_load", "recovery_load", "equilibria"}
    assert data["regime"] == "hysteretic"
    # Check values given with the task: q = 8, b = 0.8 folds at a = 0.143650 and 0.509526.
    assert [round(f["load"], 6) for f in data["folds"]] == [0.509526, 0.14365]
    assert data["folds"][0]["p"] < data["folds"][1]["p"]
    assert data["tipping_load"] == pytest.approx(0.509526, abs=1e-6)
    assert data["recovery_load"] == pytest.approx(0.143650, abs=1e-6)
    assert [e["stable"] for e in data["equilibria"]] == [True, False, True]
    assert data["equilibria"][1]["p"] == pytest.approx(1.0, rel=1e-12)  # 0.3 - 0.8 + 1/2 = 0 by hand
    ref = folds(DimensionlessLake(b=0.8, q=8).to_parameters())
    assert data["tipping_load"] == ref[0].load


def test_json_contract_reversible_and_irreversible() -> None:
    rev = json.loads(
        turnback(
            "analyze",
            "--loss-rate",
            "2",
            "--recycling-max",
            "1",
            "--recycling-half",
            "1",
            "--recycling-exponent",
            "2",
            "--json",
        ).stdout
    )
    assert rev == {"regime": "reversible", "folds": [], "tipping_load": None, "recovery_load": None}
    irr = json.loads(
        turnback(
            "analyze",
            "--loss-rate",
            "0.4",
            "--recycling-max",
            "1",
            "--recycling-half",
            "1",
            "--recycling-exponent",
            "2",
            "--json",
        ).stdout
    )
    assert irr["regime"] == "irreversible" and irr["recovery_load"] < 0  # b = 0.4 < 1/2 (closed form, q = 2)


def test_units_follow_the_parameters() -> None:
    # Scaling r and m by 1000 scales loads and P by 1000 (the dimensionless form).
    a = json.loads(turnback("analyze", *BASE, "--json").stdout)
    b = json.loads(
        turnback(
            "analyze",
            "--loss-rate",
            "0.8",
            "--recycling-max",
            "1000",
            "--recycling-half",
            "1000",
            "--recycling-exponent",
            "8",
            "--json",
        ).stdout
    )
    assert b["tipping_load"] == pytest.approx(1000 * a["tipping_load"], rel=1e-12)
    assert b["folds"][1]["p"] == pytest.approx(1000 * a["folds"][1]["p"], rel=1e-12)


def test_lake_file_adds_concentrations(tmp_path) -> None:
    lake = tmp_path / "lake.toml"
    lake.write_text('name = "Pond"\narea_km2 = 2.0\nvolume_m3 = 1.0e6\nload_kg_yr = 0.3\n')
    data = json.loads(turnback("analyze", *BASE, "--lake", str(lake), "--load", "0.3", "--json").stdout)
    assert data["folds"][0]["tp_ug_l"] == pytest.approx(data["folds"][0]["p"])  # 1 kg in 1e6 m³ = 1 µg/L
    assert data["folds"][0]["areal_load_mg_m2_yr"] == pytest.approx(data["folds"][0]["load"] / 2.0)
    assert data["equilibria"][1]["tp_ug_l"] == pytest.approx(1.0)


def test_table_output_and_demo() -> None:
    out = turnback("analyze", "--demo")
    assert out.returncode == 0
    assert "Tipping load" in out.stdout and "Recovery load" in out.stdout and "hysteretic" in out.stdout


def test_curve_option() -> None:
    data = json.loads(turnback("analyze", *BASE, "--load-range", "0", "1", "--points", "500", "--json").stdout)
    assert len(data["curve"]) >= 490
    assert {c["branch"] for c in data["curve"]} == {"lower", "middle", "upper"}


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["--loss-rate", "-1"], "--loss-rate"),
        (["--loss-rate", "0"], "--loss-rate"),
        (["--loss-rate", "nan"], "--loss-rate"),
        (["--loss-rate", "inf"], "--loss-rate"),
        (["--recycling-exponent", "0"], "--recycling-exponent"),
        (["--recycling-exponent", "-3"], "--recycling-exponent"),
        (["--recycling-half", "abc"], "not a number"),
        (["--load-range", "5", "1"], "reversed"),
        (["--lake", "no-such-file.json"], "cannot read"),
        (["--load", "nan"], "--load"),
    ],
)
def test_bad_input_exits_2_with_one_line(args: list[str], fragment: str) -> None:
    merged = list(BASE)
    if args[0] in merged:  # replace one parameter's value
        merged[merged.index(args[0]) + 1] = args[1]
    else:  # add an option
        merged += args
    out = turnback("analyze", *merged, "--json")
    assert out.returncode == 2
    assert fragment in out.stderr
    assert "Traceback" not in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1
    assert out.stdout == ""


def test_missing_parameter_says_what_to_give() -> None:
    out = turnback("analyze", "--loss-rate", "0.5", "--json")
    assert out.returncode == 2 and "--recycling-max is required" in out.stderr


def test_unreadable_lake_file(tmp_path) -> None:
    bad = tmp_path / "lake.json"
    bad.write_text("[1, 2]")
    out = turnback("analyze", *BASE, "--lake", str(bad))
    assert out.returncode == 2 and "must hold an object" in out.stderr and "Traceback" not in out.stderr
