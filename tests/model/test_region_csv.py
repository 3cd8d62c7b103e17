"""Reading a region's lake table, records and loads: turnback.model.io.region_csv."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from turnback.model.io.monitoring_csv import parse_monitoring
from turnback.model.io.region_csv import RegionError, read_region
from turnback.model.screening import RegionLake, ScreenFailure

ROOT = Path(__file__).resolve().parents[2]
REGION = ROOT / "sample_data" / "region"
DEMO_CSV = ROOT / "sample_data" / "amberlin_monitoring.csv"

HEADER = "lake_id,name,volume_m3,area_km2,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent\n"
GIVEN = "A,Lake A (fictional),2.79e7,6.2,420,0.5,1800,2500,4\n"
FITTED = "B,,2.79e7,,420,,,,\n"


def demo_rows(lake_id: str, with_load: bool = True) -> str:
    """The demo lake's record as rows of a long RECORDS.csv."""
    out = []
    for line in DEMO_CSV.read_text(encoding="utf-8").splitlines()[1:]:
        year, load, tp, _, _ = line.split(",")
        out.append(f"{lake_id},{year},{load},{tp}" if with_load else f"{lake_id},{year},{tp}")
    return "\n".join(out) + "\n"


def entry(region_entries: tuple[object, ...], lake_id: str) -> object:
    return next(e for e in region_entries if getattr(e, "lake_id", None) == lake_id)


# --------------------------------------------------------------------------
# the demo region
# --------------------------------------------------------------------------
def test_demo_region_is_what_the_script_makes(tmp_path: Path) -> None:
    run = subprocess.run(
        [sys.executable, str(ROOT / "sample_data" / "make_demo_region.py"), "--out-dir", str(tmp_path)],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert run.returncode == 0, run.stderr
    for name in ("LAKES.csv", "RECORDS.csv"):
        assert (tmp_path / name).read_bytes() == (REGION / name).read_bytes(), name


def test_demo_region_has_forty_lakes_of_each_kind() -> None:
    region = read_region(REGION / "LAKES.csv", REGION / "RECORDS.csv")
    assert len(region.entries) == 40 and len(region.lakes) == 39
    given = [lk for lk in region.lakes if not lk.fitted]
    assert sum(lk.record is not None for lk in given) >= 10  # parameters and records
    assert sum(lk.record is None for lk in given) >= 5  # parameters only
    assert sum(lk.fitted for lk in region.lakes) >= 15  # records only
    assert all("(fictional)" in (lk.name or "") for lk in region.lakes)
    (failed,) = [e for e in region.entries if isinstance(e, ScreenFailure)]
    # The short record's message names its own lines of RECORDS.csv.
    lines = [
        i
        for i, t in enumerate((REGION / "RECORDS.csv").read_text(encoding="utf-8").splitlines(), 1)
        if t.startswith(failed.lake_id + ",")
    ]
    assert f"lines {lines[0]}–{lines[-1]}" in failed.message and "at least 10" in failed.message


# --------------------------------------------------------------------------
# lakes and records
# --------------------------------------------------------------------------
def test_records_are_read_by_the_monitoring_reader_per_lake() -> None:
    records = ("lake_id,year,load_kg,tp_ug_l\n" + demo_rows("B") + demo_rows("A")).encode()
    region = read_region((HEADER + GIVEN + FITTED).encode(), records)
    a, b = region.entries
    assert isinstance(a, RegionLake) and isinstance(b, RegionLake)
    ref = parse_monitoring(DEMO_CSV)
    for lk in (a, b):
        assert lk.record is not None
        assert np.array_equal(lk.record.years, ref.years)
        assert np.array_equal(lk.record.tp_ug_l, ref.tp_ug_l)
        assert np.array_equal(lk.record.load_kg_per_yr, ref.load_kg_per_yr)
    assert a.params is not None and a.params.q == 4.0 and b.fitted
    assert a.name == "Lake A (fictional)" and b.name is None and b.area_km2 is None


def test_loads_file_supplies_the_loads_of_records_without_them() -> None:
    records = ("lake_id,year,tp_ug_l\n" + demo_rows("B", with_load=False)).encode()
    ref = parse_monitoring(DEMO_CSV)
    loads = "lake_id,year,load_kg\n" + "".join(
        f"B,{y},{ld}\n" for y, ld in zip(ref.years.tolist(), ref.load_kg_per_yr.tolist(), strict=True)
    )
    loads += "Z,2001,5\n"
    region = read_region((HEADER + FITTED).encode(), records, loads.encode())
    (b,) = region.lakes
    assert b.record is not None and np.array_equal(b.record.load_kg_per_yr, ref.load_kg_per_yr)
    assert any("'Z'" in n for n in region.notes)


def test_a_missing_or_bad_load_fails_that_lake_only() -> None:
    records = ("lake_id,year,tp_ug_l\n" + demo_rows("B", with_load=False) + demo_rows("C", with_load=False)).encode()
    ref = parse_monitoring(DEMO_CSV)
    years = ref.years.tolist()
    loads = "lake_id,year,load_kg\n" + "".join(f"B,{y},300\n" for y in years[:-1])
    loads += "".join(f"C,{y},{'-5' if y == years[3] else '300'}\n" for y in years)
    table = (HEADER + FITTED + FITTED.replace("B,", "C,")).encode()
    b, c = read_region(table, records, loads.encode()).entries
    assert isinstance(b, ScreenFailure) and f"no load for lake 'B' in {years[-1]}" in b.message
    bad_line = 1 + 44 + 4  # header, B's 44 loads, then C's 4th
    assert isinstance(c, ScreenFailure) and f"LOADS.csv line {bad_line}: load_kg must be at least 0" in c.message


def test_a_record_problem_names_the_line_of_the_region_file() -> None:
    rows_b = demo_rows("B").splitlines()
    rows_b[7] = rows_b[7].rsplit(",", 1)[0] + ",0.0"  # TP of 0 on the 8th row of B
    records = "lake_id,year,load_kg,tp_ug_l\n" + demo_rows("A") + "\n".join(rows_b) + "\n"
    b = read_region((HEADER + GIVEN + FITTED).encode(), records.encode()).entries[1]
    assert isinstance(b, ScreenFailure)
    bad_line = 1 + 45 + 8  # header, A's 45 rows, then B's 8th row
    assert f"line {bad_line}, column tp_ug_l" in b.message and b.message.startswith("RECORDS.csv, lake 'B'")


def test_a_lake_with_parameters_keeps_going_when_its_record_is_unreadable() -> None:
    records = ("lake_id,year,load_kg,tp_ug_l\n" + "\n".join(demo_rows("A").splitlines()[:4]) + "\n").encode()
    (a,) = read_region((HEADER + GIVEN).encode(), records).entries
    assert isinstance(a, RegionLake) and a.record is None
    assert len(a.notes) == 1 and "state is not given" in a.notes[0] and "at least 10" in a.notes[0]


@pytest.mark.parametrize(
    ("row", "says"),
    [
        ("C,,-3,,420,,,,", "line 3: volume_m3 must be greater than 0"),
        ("C,,2e7,,lots,,,,", "line 3: load_kg_yr is not a number"),
        ("C,,2e7,,420,0.5,1800,,", "recycling_half, recycling_exponent empty; give all four"),
        ("C,,2e7,,420,0.5,1800,2500,0", "recycling_exponent must be greater than 0"),
        ("C,,2e7,,420", "has 5 fields but the header has 9 columns"),
        ("C,,2e7,,420,,,,", "no model parameters and no rows in a records file"),
    ],
)
def test_a_bad_lake_row_fails_that_lake_and_says_what_to_fix(row: str, says: str) -> None:
    region = read_region((HEADER + GIVEN + row + "\n").encode())
    a, c = region.entries
    assert isinstance(a, RegionLake)
    assert isinstance(c, ScreenFailure) and c.lake_id == "C" and says in c.message


def test_records_of_a_lake_not_in_the_table_are_ignored_with_a_note() -> None:
    records = ("lake_id,year,load_kg,tp_ug_l\n" + demo_rows("A") + demo_rows("Q")).encode()
    region = read_region((HEADER + GIVEN).encode(), records)
    assert [e.lake_id for e in region.entries] == ["A"]
    assert any("'Q'" in n and "not in LAKES.csv ignored" in n for n in region.notes)


# --------------------------------------------------------------------------
# files that cannot be used at all
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("lakes", "says"),
    [
        (b"", "is empty"),
        (b"lake_id,volume_m3\nA,1\n", "no column 'load_kg_yr'"),
        (b"lake_id,volume,load_kg_yr\nA,1,2\n", "is 'volume' meant to be 'volume_m3'"),
        (b"lake_id;volume_m3;load_kg_yr\nA;1;2\n", "separated by semicolons"),
        (b"PK\x03\x04rest", "Excel workbook"),
        (b'{"lakes": []}', "not a CSV table"),
        (HEADER.encode(), "no lakes"),
        ((HEADER + GIVEN + GIVEN).encode(), "lake_id 'A' appears again (first on line 2)"),
        ((HEADER + ",,1,,2,,,,\n").encode(), "line 2: lake_id is empty"),
        (b"lake_id,volume_m3,load_kg_yr,loss_rate\nA,1,2,0.5\n", "give all four parameter columns"),
        (b"lake_id,volume_m3,volume_m3,load_kg_yr\nA,1,1,2\n", "'volume_m3' appears twice"),
        (b"lake_id,volume_m3,load_kg_yr\n\xff\xfeA", "not UTF-8"),
    ],
)
def test_a_lake_table_that_cannot_be_used_is_one_error(lakes: bytes, says: str) -> None:
    with pytest.raises(RegionError) as err:
        read_region(lakes)
    assert says in str(err.value) and "\n" not in str(err.value)


def test_records_and_loads_that_cannot_be_used_are_one_error(tmp_path: Path) -> None:
    table = (HEADER + FITTED).encode()
    with pytest.raises(RegionError, match="no column 'load_kg'; add each year's load"):
        read_region(table, b"lake_id,year,tp_ug_l\nB,2000,3\n")
    with pytest.raises(RegionError, match="give each year's load once"):
        read_region(table, b"lake_id,year,load_kg,tp_ug_l\nB,2000,3,4\n", b"lake_id,year,load_kg\nB,2000,3\n")
    with pytest.raises(RegionError, match=r"give --records RECORDS\.csv as well"):
        read_region(table, None, b"lake_id,year,load_kg\n")
    with pytest.raises(RegionError, match=r"cannot read RECORDS\.csv"):
        read_region(table, tmp_path / "RECORDS.csv")
    with pytest.raises(RegionError, match=r"RECORDS\.csv line 2: lake_id is empty"):
        read_region(table, b"lake_id,year,load_kg,tp_ug_l\n,2000,3,4\n")
