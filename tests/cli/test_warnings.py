"""The ``turnback warnings`` contract, run as a user would (subprocesses)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from turnback.model.demo import DEMO_PROFILE
from turnback.model.early_warning import early_warning
from turnback.model.io.monitoring_csv import parse_monitoring
from turnback.model.stretch_warnings import record_warnings
from turnback.model.stretches import split_record

from tests.cli.test_fit import run_many
from tests.model.test_monitoring import CORPUS

ROOT = Path(__file__).resolve().parents[2]
DEMO_CSV = ROOT / "sample_data" / "amberlin_monitoring.csv"
MALFORMED = Path(__file__).resolve().parents[1] / "malformed"
VOLUME = str(DEMO_PROFILE.volume_m3)
INDICATORS = ("variance", "ac1", "skewness")
STRETCH_KEYS = {"from_year", "to_year", "state", "ends_in_shift", *INDICATORS}


def turnback(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "turnback", *args], capture_output=True, text=True, timeout=120, cwd=ROOT
    )


def _refuse(name: str) -> None:
    raise ValueError(f"non-standard JSON constant {name}")


def _json(out: subprocess.CompletedProcess[str]) -> dict:
    assert out.returncode == 0, out.stderr
    assert out.stderr == ""
    assert len(out.stdout.strip().splitlines()) == 1
    data: dict = json.loads(out.stdout, parse_constant=_refuse)  # strictly valid: no NaN or Infinity
    return data


def test_json_contract_on_the_demo_record() -> None:
    data = _json(turnback("warnings", str(DEMO_CSV), "--volume-m3", VOLUME, "--json"))
    # whole-record keys: the record view's numbers (early_warning with 500 surrogates, seed 20261202)
    s = parse_monitoring(DEMO_CSV)
    view = early_warning(s.tp_ug_l, s.years, n_surrogates=500, rng=20261202)
    assert data["window"] == view.window == 22 and data["bandwidth"] == view.bandwidth == 9.0
    for k in INDICATORS:
        assert set(data[k]) == {"tau", "p_value"}
        assert data[k]["tau"] == getattr(view, k).tau and data[k]["p_value"] == getattr(view, k).p_value
    # stretches in time order, tiling the record
    st = data["stretches"]
    assert [(x["from_year"], x["to_year"], x["state"]) for x in st] == [
        (1979, 1988, "clear"),
        (1989, 2008, "turbid"),
        (2009, 2023, "clear"),
    ]
    assert [x["ends_in_shift"] for x in st] == [True, True, False]
    for x in st:
        assert STRETCH_KEYS <= set(x)
    short = st[0]
    assert all(short[k] is None for k in INDICATORS) and short["sensitivity"] is None
    assert short["note"].startswith("too short to say")
    for x in st[1:]:
        assert x["note"] is None
        for k in INDICATORS:
            assert set(x[k]) == {"tau", "p_value"} and -1 <= x[k]["tau"] <= 1 and 0 < x[k]["p_value"] <= 1
        sens = x["sensitivity"]
        assert len(sens["cells"]) == len(sens["windows"]) * len(sens["bandwidths"])
        assert set(sens["sign_depends_on_choices"]) == set(INDICATORS)
    assert data["split"]["method"] == "fitted_separatrix"
    assert data["words"][-1].startswith("Rising signs are not a forecast")
    # a thin layer: the model in-process gives the same object
    ref = record_warnings(s, split_record(s, volume_m3=DEMO_PROFILE.volume_m3)).to_dict()
    assert data == json.loads(json.dumps(ref))


def test_lake_file_no_fit_and_no_volume(tmp_path: Path) -> None:
    lake = tmp_path / "amberlin.toml"
    lake.write_text(f'name = "Lake Amberlin (fictional)"\narea_km2 = 6.2\nvolume_m3 = {VOLUME}\nload_kg_yr = 420\n')
    results = run_many(
        [
            ["warnings", str(DEMO_CSV), "--lake", str(lake), "--json", "--surrogates", "99"],
            ["warnings", str(DEMO_CSV), "--volume-m3", VOLUME, "--json", "--surrogates", "99"],
            ["warnings", str(DEMO_CSV), "--no-fit", "--json", "--surrogates", "99"],
            ["warnings", str(DEMO_CSV), "--json", "--surrogates", "99"],
            ["warnings", str(DEMO_CSV), "--surrogates", "99", "--seed", "4"],
        ]
    )
    assert all(r["rc"] == 0 and r["stderr"] == "" for r in results), results
    by_lake, by_volume, no_fit, bare = (json.loads(str(r["stdout"])) for r in results[:4])
    assert by_lake == by_volume
    assert no_fit == bare and bare["split"]["method"] == "change_points"
    assert {x["state"] for x in bare["stretches"]} == {"lower", "higher"}
    assert bare["variance"] == by_volume["variance"]  # the whole record does not depend on the split
    text = str(results[4]["stdout"])
    for fragment in ("Whole record (window 22 yr", "1979–1988", "too short to say", "not a forecast", "seed 4"):
        assert fragment in text


def test_bad_input_exits_2_with_one_line(tmp_path: Path) -> None:
    lake = tmp_path / "lake.json"
    lake.write_text('{"name": "Pond", "area_km2": 1, "volume_m3": 1e6, "load_kg_yr": 1}')
    demo = str(DEMO_CSV)
    cases = {
        "give the lake volume once": ["warnings", demo, "--volume-m3", "1e6", "--lake", str(lake)],
        "--no-fit uses change points only": ["warnings", demo, "--no-fit", "--volume-m3", "1e6"],
        "--volume-m3 must be a finite number greater than 0": ["warnings", demo, "--volume-m3", "-5"],
        "--surrogates must be between 0 and 100000": ["warnings", demo, "--surrogates", "-1"],
        "--seed must be a whole number >= 0": ["warnings", demo, "--seed", "-1"],
        "cannot read monitoring file": ["warnings", str(tmp_path / "absent.csv")],
        CORPUS["year_gap.csv"]: ["warnings", str(MALFORMED / "year_gap.csv"), "--json"],
        CORPUS["binary_data.csv"]: ["warnings", str(MALFORMED / "binary_data.csv"), "--volume-m3", "1e6"],
        CORPUS["too_few_years.csv"]: ["warnings", str(MALFORMED / "too_few_years.csv")],
    }
    results = run_many(list(cases.values()))
    for fragment, res in zip(cases, results, strict=True):
        stderr = str(res["stderr"])
        assert res["rc"] == 2, (fragment, res)
        assert fragment in stderr and "Traceback" not in stderr, (fragment, stderr)
        assert len(stderr.strip().splitlines()) == 1 and res["stdout"] == ""
