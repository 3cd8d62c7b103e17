"""The ``turnback screen`` contract: JSON and CSV output, order, failed lakes, exit codes, progress."""

from __future__ import annotations

import csv
import io
import json
import os
import pty
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest
from turnback.app.cli import main
from turnback.model.io.region_csv import read_region
from turnback.model.screening import RESULT_KEYS, ScreenFailure, screen_many

ROOT = Path(__file__).resolve().parents[2]
REGION = ROOT / "sample_data" / "region"
LAKES = REGION / "LAKES.csv"
RECORDS = REGION / "RECORDS.csv"


def strict_json(text: str) -> Any:
    def refuse(name: str) -> None:
        raise AssertionError(f"{name} is not JSON")

    return json.loads(text, parse_constant=refuse)


def run_cli(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    code = main(["screen", *map(str, args)])
    out = capsys.readouterr()
    return code, out.out, out.err


def lake_table() -> list[dict[str, str]]:
    return list(csv.DictReader(LAKES.read_text(encoding="utf-8").splitlines()))


def subset(tmp_path: Path, keep: set[str], name: str = "LAKES.csv") -> Path:
    """A lake table with only the lakes in ``keep``."""
    lines = LAKES.read_text(encoding="utf-8").splitlines()
    out = tmp_path / name
    out.write_text("\n".join([lines[0], *(ln for ln in lines[1:] if ln.split(",")[0] in keep)]) + "\n")
    return out


def given_ids() -> list[str]:
    return [r["lake_id"] for r in lake_table() if r["loss_rate"]]


# --------------------------------------------------------------------------
# the contract, run as a user runs it
# --------------------------------------------------------------------------
def test_json_and_csv_contract_on_the_demo_region(tmp_path: Path) -> None:
    out_csv = tmp_path / "out.csv"
    run = subprocess.run(
        [sys.executable, "-m", "turnback", "screen", str(LAKES), "--records", str(RECORDS), "--replicates", "100",
         "-o", str(out_csv), "--json"],
        capture_output=True, text=True, timeout=300, cwd=tmp_path,
    )  # fmt: skip
    assert run.returncode == 0, run.stderr
    assert run.stderr == ""  # no progress bar when stderr is not a terminal
    data = strict_json(run.stdout)
    assert set(data) == {"lakes", "failed"}
    table = lake_table()
    order = [r["lake_id"] for r in table]
    assert [d["lake_id"] for d in data["lakes"]] + [d["lake_id"] for d in data["failed"]] == order  # input order
    assert [f["lake_id"] for f in data["failed"]] == ["R40"]
    assert set(data["failed"][0]) == {"lake_id", "message"} and "at least 10" in data["failed"][0]["message"]
    params = {r["lake_id"]: bool(r["loss_rate"]) for r in table}
    for d in data["lakes"]:
        assert list(d) == list(RESULT_KEYS)
        assert d["regime"] in ("reversible", "hysteretic", "irreversible")
        assert d["state"] in ("clear", "turbid", "single", None)
        assert isinstance(d["warnings"], list)
        if params[d["lake_id"]]:
            assert d["p_irreversible"] is None and d["p_hysteretic"] is None
        else:
            assert 0.0 <= d["p_irreversible"] <= 1.0 and 0.0 <= d["p_hysteretic"] <= 1.0
            assert d["state"] is not None  # fitted from a record, so there is a last observation
        if d["tipping_load"] is None:
            assert d["margin_kg_yr"] is None
        else:
            load = float(next(r["load_kg_yr"] for r in table if r["lake_id"] == d["lake_id"]))
            assert d["margin_kg_yr"] == pytest.approx(d["tipping_load"] - load, rel=1e-12, abs=1e-9)
    # The command is a thin layer: the lakes are what the screening loop says, lake for lake.
    region = read_region(LAKES, RECORDS)
    ref = [r.to_dict() for r in screen_many(region.lakes, replicates=100, rng=1) if not isinstance(r, ScreenFailure)]
    assert data["lakes"] == json.loads(json.dumps(ref))
    # -o writes the same columns and values.
    rows = list(csv.reader(io.StringIO(out_csv.read_text(encoding="utf-8"))))
    assert rows[0] == list(RESULT_KEYS)
    assert len(rows) == 1 + len(data["lakes"])
    for row, d in zip(rows[1:], data["lakes"], strict=True):
        for key, cell in zip(RESULT_KEYS, row, strict=True):
            want = d[key]
            if want is None:
                assert cell == ""
            elif isinstance(want, float):
                assert float(cell) == want
            elif isinstance(want, list):
                assert cell == " | ".join(want)
            else:
                assert cell == want


def test_progress_bar_shows_on_a_terminal(tmp_path: Path) -> None:
    lakes = subset(tmp_path, set(given_ids()[:3]))
    master, slave = pty.openpty()
    try:
        run = subprocess.run(
            [sys.executable, "-m", "turnback", "screen", str(lakes), "--json"],
            stdout=subprocess.PIPE, stderr=slave, text=True, timeout=120, cwd=tmp_path,
        )  # fmt: skip
        os.close(slave)
        shown = b""
        while True:
            try:
                chunk = os.read(master, 4096)
            except OSError:
                break
            if not chunk:
                break
            shown += chunk
    finally:
        os.close(master)
    assert run.returncode == 0
    text = shown.decode()
    assert "3 of 3 lakes screened" in text and "[" + "#" * 30 + "]" in text
    assert len(strict_json(run.stdout)["lakes"]) == 3


def test_table_is_ranked_by_margin_and_names_failed_lakes(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    keep = set(given_ids()) | {"R40"}
    code, out, err = run_cli(capsys, subset(tmp_path, keep), "--records", RECORDS)
    assert code == 0 and err == ""
    listed = [ln.split()[0] for ln in out.splitlines() if ln[:1] == "R" and len(ln.split()) >= 7]
    data = {d["lake_id"]: d for d in strict_json(run_cli(capsys, subset(tmp_path, keep), "--json")[1])["lakes"]}
    margins = [data[k]["margin_kg_yr"] for k in listed if data[k]["margin_kg_yr"] is not None]
    assert margins == sorted(margins) and len(margins) > 5
    assert "Not screened (1):" in out and "R40:" in out
    assert "not a water-safety assessment" in out


# --------------------------------------------------------------------------
# the same engine as `turnback analyze` and `turnback fit`
# --------------------------------------------------------------------------
def _state_from_analyze(res: dict[str, Any], p_last: float, load: float) -> str:
    """The basin rule on `analyze --json` output: below the separatrix clear, above it turbid."""
    if res["regime"] == "reversible":
        return "single"
    if load > res["tipping_load"]:
        return "turbid"
    if load < res["recovery_load"]:
        return "clear"
    middle = res["equilibria"][1]["p"]
    return "clear" if p_last < middle else "turbid"


def test_screen_numbers_are_those_of_turnback_analyze(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    ids = given_ids()
    code, out, _ = run_cli(capsys, subset(tmp_path, set(ids)), "--records", RECORDS, "--json")
    assert code == 0
    screened = {d["lake_id"]: d for d in strict_json(out)["lakes"]}
    assert list(screened) == ids
    last_tp: dict[str, float] = {}
    for row in csv.DictReader(RECORDS.read_text(encoding="utf-8").splitlines()):
        last_tp[row["lake_id"]] = float(row["tp_ug_l"])  # rows are in year order
    regimes = set()
    for row in lake_table():
        if row["lake_id"] not in screened:
            continue
        d = screened[row["lake_id"]]
        load = float(row["load_kg_yr"])
        code = main(
            ["analyze", "--loss-rate", row["loss_rate"], "--recycling-max", row["recycling_max"], "--recycling-half",
             row["recycling_half"], "--recycling-exponent", row["recycling_exponent"], "--load", str(load), "--json"]
        )  # fmt: skip
        ref = strict_json(capsys.readouterr().out)
        assert code == 0
        # Reference: `turnback analyze --json` on the same lake (the same engine, one lake at a time).
        assert d["regime"] == ref["regime"]
        assert d["tipping_load"] == ref["tipping_load"] and d["recovery_load"] == ref["recovery_load"]
        if ref["tipping_load"] is not None:
            assert d["margin_kg_yr"] == ref["tipping_load"] - load
        if row["lake_id"] in last_tp:
            p_last = last_tp[row["lake_id"]] * float(row["volume_m3"]) / 1e6
            assert d["state"] == _state_from_analyze(ref, p_last, load)
        else:
            assert d["state"] is None
        regimes.add(d["regime"])
    assert regimes == {"reversible", "hysteretic", "irreversible"}  # the demo region has all three


def test_a_fitted_lake_is_what_turnback_fit_says(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    row = next(r for r in lake_table() if not r["loss_rate"] and r["lake_id"] != "R40")
    lake_id = row["lake_id"]
    one = tmp_path / "one.csv"
    with RECORDS.open(encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["lake_id"] == lake_id]
    one.write_text("year,load_kg,tp_ug_l\n" + "".join(f"{r['year']},{r['load_kg']},{r['tp_ug_l']}\n" for r in rows))
    assert main(["fit", str(one), "--volume-m3", row["volume_m3"], "--replicates", "120", "--seed", "7", "--json"]) == 0
    ref = strict_json(capsys.readouterr().out)
    lakes = subset(tmp_path, {lake_id})
    code, out, _ = run_cli(capsys, lakes, "--records", RECORDS, "--replicates", "120", "--seed", "7", "--json")
    assert code == 0
    (d,) = strict_json(out)["lakes"]
    # Reference: `turnback fit --json` with the same seed and replicates on the lake's rows alone.
    assert d["tipping_load"] == ref["tipping_load"]["estimate"]
    assert d["recovery_load"] == ref["recovery_load"]["estimate"]
    assert d["p_irreversible"] == ref["regime_probability"]["irreversible"]
    assert d["p_hysteretic"] == ref["regime_probability"]["hysteretic"]
    assert set(ref["warnings"]) <= set(d["warnings"])


def test_loads_file_gives_the_same_screen_as_a_load_column(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    lake_id = next(r["lake_id"] for r in lake_table() if not r["loss_rate"])
    with RECORDS.open(encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["lake_id"] == lake_id]
    recs = tmp_path / "RECORDS.csv"
    recs.write_text("lake_id,year,tp_ug_l\n" + "".join(f"{lake_id},{r['year']},{r['tp_ug_l']}\n" for r in rows))
    loads = tmp_path / "LOADS.csv"
    loads.write_text("lake_id,year,load_kg\n" + "".join(f"{lake_id},{r['year']},{r['load_kg']}\n" for r in rows))
    lakes = subset(tmp_path, {lake_id})
    args = ("--replicates", "100", "--json")
    code, with_loads, _ = run_cli(capsys, lakes, "--records", recs, "--loads", loads, *args)
    assert code == 0
    code, with_column, _ = run_cli(capsys, lakes, "--records", RECORDS, *args)
    assert code == 0 and strict_json(with_loads) == strict_json(with_column)


# --------------------------------------------------------------------------
# exit codes
# --------------------------------------------------------------------------
def test_a_bad_lake_does_not_stop_the_batch(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    lakes = tmp_path / "LAKES.csv"
    lakes.write_text(
        "lake_id,volume_m3,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent\n"
        "A,2.79e7,420,0.5,1800,2500,4\nB,-1,420,0.5,1800,2500,4\nC,2.79e7,420,,,,\n"
    )
    code, out, err = run_cli(capsys, lakes, "--json")
    assert code == 0 and err == ""
    data = strict_json(out)
    assert [d["lake_id"] for d in data["lakes"]] == ["A"]
    assert [f["lake_id"] for f in data["failed"]] == ["B", "C"]
    assert "volume_m3 must be greater than 0" in data["failed"][0]["message"]


@pytest.mark.parametrize(
    ("args", "says"),
    [
        (["{nothing_screens}"], "no lake could be screened; lake 'C'"),
        (["{missing_column}"], "no column 'load_kg_yr'"),
        (["{absent}"], "cannot read"),
        (["{good}", "--replicates", "5"], "--replicates must be between 100 and"),
        (["{good}", "--seed", "-1"], "--seed must be"),
        (["{good}", "--workers", "0"], "--workers must be between 1 and"),
        (["{good}", "--scheduler", "my cluster"], "--scheduler must be 'local' or the address"),
        (["{good}", "--scheduler", "tcp://127.0.0.1:8786", "--workers", "2"], "--workers is for --scheduler local"),
        (["{good}", "--loads", "{good}"], "give --records RECORDS.csv as well"),
        (["{good}", "-o", "{absent}/out.csv"], "cannot write"),
    ],
)
def test_bad_input_exits_2_with_one_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], args: list[str], says: str
) -> None:
    files = {
        "nothing_screens": "lake_id,volume_m3,load_kg_yr\nC,2.79e7,420\n",
        "missing_column": "lake_id,volume_m3\nA,1\n",
        "good": "lake_id,volume_m3,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent\n"
        "A,2.79e7,420,0.5,1800,2500,4\n",
    }
    names = {k: tmp_path / f"{k}.csv" for k in files} | {"absent": tmp_path / "absent"}
    for k, text in files.items():
        names[k].write_text(text)
    code, out, err = run_cli(capsys, *(a.format(**names) for a in args))
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and err.startswith("turnback screen: error: ") and says in err, err


def test_bad_input_from_a_user_shell_has_no_traceback(tmp_path: Path) -> None:
    bad = tmp_path / "LAKES.csv"
    bad.write_bytes(b"PK\x03\x04 a workbook")
    run = subprocess.run(
        [sys.executable, "-m", "turnback", "screen", str(bad)], capture_output=True, text=True, timeout=120
    )
    assert run.returncode == 2 and run.stdout == ""
    assert run.stderr.count("\n") == 1 and "Excel workbook" in run.stderr and "Traceback" not in run.stderr
