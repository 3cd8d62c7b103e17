"""Sample files and parameter draws through the command line: fit, warnings and compare."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from tests.cli.test_fit import run_many
from tests.model.test_samples import SAMPLE_CORPUS, loads_file

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_data" / "amberlin_samples.csv"
LOADS = ROOT / "sample_data" / "amberlin_loads.csv"
ANNUAL = ROOT / "sample_data" / "amberlin_monitoring.csv"
CORPUS_DIR = ROOT / "tests" / "malformed" / "samples"
VOLUME = "2.79e7"


def turnback(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "turnback", *args], capture_output=True, text=True, timeout=300, cwd=ROOT
    )


def test_fit_a_sample_file_and_paste_its_draws_into_a_plan(tmp_path: Path) -> None:
    out = turnback("fit", str(SAMPLES), "--loads", str(LOADS), "--volume-m3", VOLUME, "--replicates", "200", "--json")
    assert out.returncode == 0, out.stderr
    assert out.stderr == ""
    data = json.loads(out.stdout)
    assert data["method"] == "state_space_laplace"  # a sample file: the observation-error fit by default
    assert data["error_model"]["observation_sd_source"] == "samples"
    assert len(data["parameter_draws"]) == 200
    assert set(data["parameter_draws"][0]) == {"loss_rate", "recycling_max", "recycling_half", "recycling_exponent"}
    assert data["tipping_load"]["low"] < data["tipping_load"]["high"]
    lake = data["params"] | {"volume_m3": 2.79e7, "initial_tp_ug_l": 40.0, "parameter_draws": data["parameter_draws"]}
    scenario = {
        "name": "hold",
        "years": 15,
        "load": {"kind": "constant", "kg_per_yr": 420},
        "variability_cv": 0.3,
        "members": 1000,
        "seed": 1,
    }
    plan = tmp_path / "plan.json"
    plan.write_text(json.dumps({"lake": lake, "scenarios": [scenario]}))
    cmp = turnback("compare", str(plan), "--json", "--full")
    assert cmp.returncode == 0, cmp.stderr
    row = json.loads(cmp.stdout)["scenarios"][0]
    spread = row["p_flip_across_draws"]
    assert spread["draws"] == 200 and spread["members_per_draw"] == [5, 5]
    assert spread["min"] <= row["p_flip"] <= spread["max"]
    short = turnback("compare", str(plan), "--json")
    assert "p_flip_across_draws" not in json.loads(short.stdout)["scenarios"][0]  # the short contract is unchanged


def test_method_and_sample_options_through_the_command() -> None:
    cases = [
        ["fit", str(SAMPLES), "--loads", str(LOADS), "--volume-m3", VOLUME, "--replicates", "100", "--json",
         "--method", "least-squares", "--censored", "limit", "--season", "6-9", "--min-samples", "3"],
        ["fit", str(ANNUAL), "--volume-m3", VOLUME, "--loads", str(LOADS)],
        ["fit", str(ANNUAL), "--volume-m3", VOLUME, "--season", "6-9"],
        ["fit", str(SAMPLES), "--loads", str(LOADS), "--volume-m3", VOLUME, "--season", "10-5"],
        ["fit", str(SAMPLES), "--volume-m3", VOLUME],
        ["fit", str(SAMPLES), "--loads", str(LOADS), "--volume-m3", VOLUME, "--model", "two-pool",
         "--burial", "0.05", "--recycling-rate", "0.2", "--method", "observation-error"],
    ]  # fmt: skip
    res = run_many(cases)
    ok = json.loads(str(res[0]["stdout"]))
    assert res[0]["rc"] == 0 and ok["method"] == "conditional_least_squares"
    assert len(ok["parameter_draws"]) <= 100
    for r, fragment in zip(
        res[1:],
        (
            "leave out the loads file (--loads)",
            "apply to sample files",
            "is not a growing season",
            "the sample file has no loads",
            "--method belongs to the one-box fit",
        ),
        strict=True,
    ):
        assert r["rc"] == 2, r
        assert fragment in str(r["stderr"]), r
        assert len(str(r["stderr"]).strip().splitlines()) == 1 and "Traceback" not in str(r["stderr"])


def test_sample_corpus_through_the_command() -> None:
    names = sorted(SAMPLE_CORPUS)
    cases = []
    for n in names:
        lf = loads_file(SAMPLE_CORPUS[n][1])
        cases.append(
            ["fit", str(CORPUS_DIR / n), "--volume-m3", "1e6", "--json"] + ([] if lf is None else ["--loads", str(lf)])
        )
    for name, res in zip(names, run_many(cases), strict=True):
        stderr = str(res["stderr"])
        assert res["rc"] == 2, (name, res)
        assert SAMPLE_CORPUS[name][0] in stderr, name
        assert "Traceback" not in stderr and len(stderr.strip().splitlines()) == 1, name
        assert res["stdout"] == "", name


def test_warnings_accepts_both_formats() -> None:
    res = run_many(
        [
            ["warnings", str(SAMPLES), "--loads", str(LOADS), "--no-fit", "--surrogates", "50", "--json"],
            ["warnings", str(ANNUAL), "--no-fit", "--surrogates", "50", "--json"],
            ["warnings", str(SAMPLES), "--no-fit", "--json"],
        ]
    )
    samples, annual = (json.loads(str(r["stdout"])) for r in res[:2])
    assert res[0]["rc"] == 0 and res[1]["rc"] == 0
    for key in ("window", "bandwidth", "variance", "ac1", "skewness", "stretches"):
        assert key in samples
    # the same years and window: the indicators run on the annual means of the samples
    assert samples["window"] == annual["window"]
    assert res[2]["rc"] == 2 and "the sample file has no loads" in str(res[2]["stderr"])
