"""The ``turnback fit`` contract, run as a user would (subprocesses)."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.dynamics import annual_step
from turnback.model.equilibrium import equilibria
from turnback.model.fit import fit_monitoring
from turnback.model.io.monitoring_csv import parse_monitoring

from tests.model.test_monitoring import CORPUS

from .driver import run_many as _run_many


def run_many(cases: list[list[str]], cwd: Path | None = None) -> list[dict[str, object]]:
    return list(_run_many(cases, cwd or ROOT, timeout=300))

ROOT = Path(__file__).resolve().parents[2]
DEMO_CSV = ROOT / "sample_data" / "amberlin_monitoring.csv"
MALFORMED = Path(__file__).resolve().parents[1] / "malformed"
VOLUME = str(DEMO_PROFILE.volume_m3)


def turnback(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "turnback", *args], capture_output=True, text=True, timeout=120, cwd=ROOT
    )


def test_json_contract_on_the_demo_record() -> None:
    out = turnback("fit", str(DEMO_CSV), "--volume-m3", VOLUME, "--json")
    assert out.returncode == 0, out.stderr
    assert out.stderr == ""  # no progress lines with --json
    assert len(out.stdout.strip().splitlines()) == 1
    data = json.loads(out.stdout)
    assert set(data) == {
        "params", "tipping_load", "recovery_load", "regime_probability", "warnings", "method", "error_model",
        "parameter_draws",
    }  # fmt: skip
    assert data["method"] == "conditional_least_squares"  # annual means: the fast path by default
    assert data["error_model"]["observation_sd_source"] == "not_modelled"
    assert 0 < len(data["parameter_draws"]) <= 1000
    assert set(data["params"]) == {"loss_rate", "recycling_max", "recycling_half", "recycling_exponent"}
    assert all(isinstance(v, float) and v > 0 for v in data["params"].values())
    for key in ("tipping_load", "recovery_load"):
        band = data[key]
        assert set(band) == {"estimate", "low", "high"}
        assert band["low"] <= band["estimate"] <= band["high"]
    assert data["recovery_load"]["high"] < data["tipping_load"]["high"]
    probs = data["regime_probability"]
    assert set(probs) == {"reversible", "hysteretic", "irreversible"}
    assert math.isclose(sum(probs.values()), 1.0, rel_tol=1e-12)
    assert probs["hysteretic"] > 0.9  # the demo lake is hysteretic (model.demo, folds at 544 and 285 kg/yr)
    assert isinstance(data["warnings"], list) and all(isinstance(w, str) for w in data["warnings"])
    # The command is a thin layer: the same seed (default 1) and defaults in-process give the same object.
    same = fit_monitoring(parse_monitoring(DEMO_CSV), DEMO_PROFILE.volume_m3, rng=1).to_dict()
    assert data == json.loads(json.dumps(same))


def test_lake_file_gives_the_volume(tmp_path: Path) -> None:
    lake = tmp_path / "amberlin.toml"
    lake.write_text(f'name = "Lake Amberlin (fictional)"\narea_km2 = 6.2\nvolume_m3 = {VOLUME}\nload_kg_yr = 420\n')
    out = turnback("fit", str(DEMO_CSV), "--lake", str(lake), "--replicates", "200", "--seed", "3", "--json")
    assert out.returncode == 0, out.stderr
    ref = fit_monitoring(parse_monitoring(DEMO_CSV), DEMO_PROFILE.volume_m3, replicates=200, rng=3).to_dict()
    assert json.loads(out.stdout) == json.loads(json.dumps(ref))


def test_table_and_progress(tmp_path: Path) -> None:
    out = turnback("fit", str(DEMO_CSV), "--volume-m3", VOLUME, "--replicates", "200")
    assert out.returncode == 0, out.stderr
    for text in ("tipping load", "recovery load", "loss rate s", "Regime (best fit: hysteretic)", "Warnings:"):
        assert text in out.stdout
    assert "Only 200 bootstrap replicates" in out.stdout
    assert "200 of 200 bootstrap refits" in out.stderr and "Traceback" not in out.stderr


def test_one_state_record_gets_nulls_and_the_warning(tmp_path: Path) -> None:
    g = np.random.default_rng(3)
    loads = np.linspace(200.0, 450.0, 40) * np.exp(g.normal(0.0, 0.12, 40))  # below the tipping load throughout
    p = [equilibria(DEMO_PARAMETERS, loads[0])[0].p]
    for t in range(1, 40):
        p.append(float(annual_step(DEMO_PARAMETERS, p[-1], loads[t])) * math.exp(g.normal(0.0, 0.08)))
    tp = DEMO_PROFILE.concentration(np.array(p))
    f = tmp_path / "clear.csv"
    f.write_text("year,load_kg,tp_ug_l\n" + "".join(f"{1980 + i},{loads[i]:.1f},{tp[i]:.2f}\n" for i in range(40)))
    out = turnback("fit", str(f), "--volume-m3", VOLUME, "--replicates", "200", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["recovery_load"]["estimate"] is None and data["tipping_load"]["estimate"] is None
    assert data["recovery_load"]["low"] is not None
    assert any(
        "never shows the turbid state" in w and "recovery load is not constrained" in w for w in data["warnings"]
    )


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["fit", str(DEMO_CSV), "--json"], "the lake volume is needed: give --volume-m3"),
        (["fit", str(MALFORMED / "binary_data.csv"), "--volume-m3", "1e6", "--json"], CORPUS["binary_data.csv"]),
        (["fit", str(MALFORMED / "year_gap.csv"), "--volume-m3", "1e6", "--json"], CORPUS["year_gap.csv"]),
        (["fit", str(MALFORMED / "empty.csv"), "--volume-m3", "1e6"], CORPUS["empty.csv"]),
    ],
)
def test_bad_input_exits_2_with_one_line(args: list[str], fragment: str) -> None:
    out = turnback(*args)
    assert out.returncode == 2
    assert fragment in out.stderr
    assert "Traceback" not in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1
    assert out.stdout == ""


def test_every_corpus_file_through_the_command() -> None:
    names = sorted(CORPUS)
    results = run_many([["fit", str(MALFORMED / n), "--volume-m3", "1e6", "--json"] for n in names])
    for name, res in zip(names, results, strict=True):
        stderr = str(res["stderr"])
        assert res["rc"] == 2, (name, res)
        assert CORPUS[name] in stderr, name
        assert "Traceback" not in stderr, name
        assert len(stderr.strip().splitlines()) == 1, name
        assert res["stdout"] == "", name


def test_bad_options_through_the_command(tmp_path: Path) -> None:
    lake = tmp_path / "lake.json"
    lake.write_text('{"name": "Pond", "area_km2": 1, "volume_m3": 1e6, "load_kg_yr": 1}')
    demo = str(DEMO_CSV)
    cases = {
        "give the lake volume once": ["fit", demo, "--volume-m3", "1e6", "--lake", str(lake)],
        "--volume-m3 must be a finite number greater than 0": ["fit", demo, "--volume-m3", "-5"],
        "argument --volume-m3: 'nan' is not a number": ["fit", demo, "--volume-m3", "nan"],
        "--replicates must be between 100 and 100000": ["fit", demo, "--volume-m3", "1e6", "--replicates", "5"],
        "--seed must be a whole number >= 0": ["fit", demo, "--volume-m3", "1e6", "--seed", "-1"],
        "invalid int value": ["fit", demo, "--volume-m3", "1e6", "--replicates", "many"],
        "cannot read monitoring file": ["fit", str(tmp_path / "absent.csv"), "--volume-m3", "1e6"],
        "cannot read lake file": ["fit", demo, "--lake", str(tmp_path / "absent.toml")],
    }
    results = run_many(list(cases.values()))
    for fragment, res in zip(cases, results, strict=True):
        stderr = str(res["stderr"])
        assert res["rc"] == 2, (fragment, res)
        assert fragment in stderr and "Traceback" not in stderr, (fragment, stderr)
        assert len(stderr.strip().splitlines()) == 1 and res["stdout"] == ""
