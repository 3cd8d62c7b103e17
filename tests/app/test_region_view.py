"""The region view without a browser: files, the screen, the table, the regime plane, opening a lake, exports.

The demo region is the invented one in sample_data/region (40 fictional
lakes).  Expected regimes and thresholds come from the engine and from the
command line run in the same test, never from numbers typed in here.
"""

from __future__ import annotations

import html
import json
import math
import re
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from dash import no_update
from turnback.app import ids
from turnback.app.cli import main
from turnback.app.store_checks import StoreError, check_lake, check_region, check_region_files
from turnback.app.views.region import callbacks as cb
from turnback.app.views.region.export import cautions, export, summary_html
from turnback.app.views.region.figures import (
    exponent_choices,
    plane_figure,
    plane_point,
    table_columns,
    table_rows,
    unit_lake_map,
)
from turnback.app.views.region.files import data_url, update_files
from turnback.app.views.region.results import find_row, lake_to_open, ranked, region_csv
from turnback.model.equilibrium import cusp_b, irreversible_b
from turnback.model.params import LakeParameters
from turnback.model.screening import RESULT_KEYS

ROOT = Path(__file__).resolve().parents[2]
REGION = ROOT / "sample_data" / "region"
LAKES = (REGION / "LAKES.csv").read_bytes()
RECORDS = (REGION / "RECORDS.csv").read_bytes()
REPLICATES = 100  # the smallest the fit allows: the test is about the view, not the bootstrap


def through_browser(value: Any) -> Any:
    """A value as the browser hands it back: JSON, whole floats written as integers."""

    def ints(v: Any) -> Any:
        if isinstance(v, float) and v.is_integer() and abs(v) < 2**53:
            return int(v)
        if isinstance(v, dict):
            return {k: ints(x) for k, x in v.items()}
        if isinstance(v, list):
            return [ints(x) for x in v]
        return v

    return ints(json.loads(json.dumps(value)))


@pytest.fixture(scope="module")
def files() -> dict[str, Any]:
    new, note, message = update_files("demo", None, None, None, None)
    assert message == "" and "40 lakes" in note
    return new  # type: ignore[no-any-return]


@pytest.fixture(scope="module")
def store(files: dict[str, Any]) -> dict[str, Any]:
    shown: list[tuple[str, ...]] = []
    out, message = cb.run_screen(shown.append, 1, files, REPLICATES)
    assert message == ""
    assert shown and shown[-1][0] == "100"  # the progress bar ends full
    return through_browser(out)  # type: ignore[no-any-return]


# --------------------------------------------------------------------------
# files
# --------------------------------------------------------------------------
def test_a_bad_lake_table_is_refused_in_one_line_and_the_files_stay(files: dict[str, Any]) -> None:
    bad = data_url(b"lake_id;volume_m3;load_kg_yr\nA;1e6;10\n")
    new, note, message = update_files("upload", "lakes", bad, "north.csv", files)
    assert new is no_update and note is no_update
    assert "\n" not in message and "semicolons" in message and "unchanged" in message


def test_records_before_the_lake_table_wait_for_it() -> None:
    new, note, message = update_files("upload", "records", data_url(RECORDS), "RECORDS.csv", None)
    assert new["records"]["name"] == "RECORDS.csv" and new["lakes"] is None
    assert "LAKES.csv" in note and message == ""
    new2, note2, message2 = update_files("upload", "lakes", data_url(LAKES), "LAKES.csv", new)
    assert new2["lakes"]["name"] == "LAKES.csv" and new2["records"]["name"] == "RECORDS.csv"
    assert "to fit from their records" in note2 and message2 == ""


def test_a_bad_records_file_is_set_aside_and_the_lake_table_kept(files: dict[str, Any]) -> None:
    pending = {"lakes": None, "records": {"name": "broken.csv", "contents": data_url(b"lake_id,year\nR23,x\n")}}
    new, _, message = update_files("upload", "lakes", data_url(LAKES), "LAKES.csv", pending)
    assert new["lakes"]["name"] == "LAKES.csv" and new["records"] is None
    assert "broken.csv was set aside" in message and "\n" not in message


def test_an_unreadable_upload_says_so(files: dict[str, Any]) -> None:
    new, _, message = update_files("upload", "lakes", "data:text/csv;base64,@@@", "x.csv", files)
    assert new is no_update and "could not be read" in message


def test_the_files_store_passes_its_check_and_junk_does_not(files: dict[str, Any]) -> None:
    check_region_files(files)
    for bad in ({"lakes": {"name": "x", "contents": 5}}, {"other": None}, "text"):
        with pytest.raises(StoreError):
            check_region_files(bad)


# --------------------------------------------------------------------------
# the screen
# --------------------------------------------------------------------------
def test_the_screen_keeps_every_lake_in_order(store: dict[str, Any]) -> None:
    lake_ids = [line.split(",")[0] for line in LAKES.decode().splitlines()[1:]]
    screened = [r["lake_id"] for r in store["lakes"]]
    failed = [f["lake_id"] for f in store["failed"]]
    assert sorted(screened + failed) == sorted(lake_ids)
    assert screened == [i for i in lake_ids if i in screened]
    assert store["replicates"] == REPLICATES and store["seed"] == 1
    check_region(store)


def test_the_csv_export_is_what_turnback_screen_writes(store: dict[str, Any], tmp_path: Path) -> None:
    lakes, records, out = tmp_path / "LAKES.csv", tmp_path / "RECORDS.csv", tmp_path / "out.csv"
    lakes.write_bytes(LAKES)
    records.write_bytes(RECORDS)
    assert main(["screen", str(lakes), "--records", str(records), "--replicates", str(REPLICATES),
                 "--workers", "1", "-o", str(out)]) == 0  # fmt: skip
    # the same command's writer, the same per-lake screen and seed: the same file, byte for byte
    assert region_csv(store) == out.read_text(encoding="utf-8")
    assert region_csv(store).splitlines()[0] == ",".join(RESULT_KEYS)


def test_bad_replicates_or_no_files_leave_the_results(files: dict[str, Any]) -> None:
    out, message = cb.run_screen(lambda _: None, 1, files, "many")
    assert out is no_update and "whole number" in message
    out, message = cb.run_screen(lambda _: None, 1, None, 1000)
    assert out is no_update and "LAKES.csv" in message


def test_a_region_where_no_lake_screens_keeps_the_last_results() -> None:
    table = b"lake_id,volume_m3,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent\nX,1e6,10,,,,\n"
    files = {"lakes": {"name": "LAKES.csv", "contents": data_url(table)}, "records": None}
    out, message = cb.run_screen(lambda _: None, 1, files, 1000)
    assert out is no_update and message.startswith("No lake could be screened") and "X" in message


# --------------------------------------------------------------------------
# the table
# --------------------------------------------------------------------------
def test_the_table_is_ranked_by_margin_with_lakes_without_one_last(store: dict[str, Any]) -> None:
    rows = ranked(store["lakes"])
    margins = [r["margin_kg_yr"] for r in rows]
    known = [m for m in margins if m is not None]
    assert known == sorted(known) and margins[: len(known)] == known
    shown = cb.on_results(store, [], ids.TAB_REGION)
    assert [r["lake_id"] for r in shown["rows"]] == [r["lake_id"] for r in rows]
    assert cb.on_results(store, [], ids.TAB_LAKE)["rows"] is no_update


def test_the_meeting_table_speaks_plainly(store: dict[str, Any]) -> None:
    jargon = ("hysteretic", "bootstrap", "fold", "regime", "p(", "[kg")
    heads = " ".join(c["headerName"] for c in table_columns(meeting=True)).lower()
    assert not [w for w in jargon if w in heads]
    words = {r["regime"] for r in table_rows(store["lakes"], meeting=True)}
    assert not [w for w in jargon for word in words if w in word.lower()]
    technical = {c["field"] for c in table_columns()}
    assert {"margin_kg_yr", "tipping_load", "recovery_load", "p_irreversible", "p_hysteretic"} <= technical


def test_failed_lakes_are_listed_with_their_messages(store: dict[str, Any]) -> None:
    failed = [{"lake_id": "Z9", "message": "LAKES.csv line 9: volume_m3 must be > 0 [m³]; got '-1'"}]
    shown = cb.failed_list({**store, "failed": failed}, meeting=True)
    assert "Z9: LAKES.csv line 9" in str(shown)


# --------------------------------------------------------------------------
# the regime plane
# --------------------------------------------------------------------------
def test_plane_coordinates_are_the_dimensionless_load_and_loss() -> None:
    # Carpenter, Ludwig & Brock (1999): a = L/r, b = s m/r
    row = {"load_kg_yr": 300.0, "params": {"loss_rate": 0.5, "recycling_max": 1500.0, "recycling_half": 2400.0,
                                           "recycling_exponent": 4.0}}  # fmt: skip
    a, b, q = plane_point(row)
    assert a == pytest.approx(300.0 / 1500.0) and b == pytest.approx(0.5 * 2400.0 / 1500.0) and q == 4.0


def test_the_regions_are_drawn_at_the_cusp_and_the_irreversible_edge() -> None:
    # q = 2: b_c = 3√3/8 and b_irr = 1/2 (Carpenter, Ludwig & Brock 1999; derived again in model/regime_map.py)
    rmap = unit_lake_map(2.0, (0.2, 1.2))
    edges = {name: (lo, hi) for name, lo, hi in rmap.bands}
    assert edges["irreversible"][1] == pytest.approx(0.5, rel=1e-12)
    assert edges["hysteretic"][1] == pytest.approx(3 * math.sqrt(3) / 8, rel=1e-12)
    rows = [{"lake_id": "A", "regime": "hysteretic", "load_kg_yr": 100.0, "fitted": False,
             "params": {"loss_rate": 0.3, "recycling_max": 1000.0, "recycling_half": 2000.0,
                        "recycling_exponent": 2.0}}]  # fmt: skip
    fig = plane_figure(rows, 2.0)
    ys = sorted({round(float(s.y0), 9) for s in fig.layout.shapes} | {round(float(s.y1), 9) for s in fig.layout.shapes})
    assert round(0.5, 9) in ys and round(3 * math.sqrt(3) / 8, 9) in ys


def test_each_lake_of_the_drawn_exponent_sits_in_the_region_of_its_own_regime(store: dict[str, Any]) -> None:
    q = exponent_choices(store["lakes"])[0][0]
    checked = 0
    for row in store["lakes"]:
        _, b, q_lake = plane_point(row)
        if abs(q_lake - q) > 1e-9:
            continue
        want = "reversible" if b >= cusp_b(q) else "irreversible" if b <= irreversible_b(q) else "hysteretic"
        assert row["regime"] == want, row["lake_id"]
        checked += 1
    assert checked >= 3


def test_the_plane_marks_every_lake_with_its_id_and_colour(store: dict[str, Any]) -> None:
    q = exponent_choices(store["lakes"])[0][0]
    fig = plane_figure(store["lakes"], q)
    lakes = [t for t in fig.data if t.customdata is not None]
    ids_on_plane = sorted(str(c[0]) for t in lakes for c in t.customdata)
    assert ids_on_plane == sorted(r["lake_id"] for r in store["lakes"])
    hollow = sum(str(s).endswith("-open") for t in lakes for s in t.marker.symbol)
    other = sum(abs(plane_point(r)[2] - q) > 0.25 for r in store["lakes"])
    assert hollow == other
    _, note = cb.on_plane(store, q, ["on"], ids.TAB_REGION)
    assert "hollow" in note or other == 0
    assert cb.on_plane(store, q, [], ids.TAB_MAP) == (no_update, no_update)


# --------------------------------------------------------------------------
# opening a lake in "The lake now"
# --------------------------------------------------------------------------
def test_a_row_opens_its_lake_with_its_own_numbers(store: dict[str, Any]) -> None:
    row = next(r for r in store["lakes"] if r["fitted"])
    lake, tab, message, selected, click = cb.open_lake(ids.REGION_TABLE, [{"lake_id": row["lake_id"]}], None, store)
    assert tab == ids.TAB_LAKE and selected == [] and click is None and "Opened" in message
    check_lake(through_browser(lake))
    assert LakeParameters.from_dict(lake["params"]) == LakeParameters.from_dict(row["params"])
    assert lake["profile"]["load_kg_yr"] == pytest.approx(row["load_kg_yr"])
    assert lake["profile"]["volume_m3"] == pytest.approx(row["volume_m3"])
    # it starts in the last observed year, at the lake P measured then (P = TP V / 10⁶)
    last = [ln.split(",") for ln in RECORDS.decode().splitlines()[1:] if ln.startswith(row["lake_id"] + ",")][-1]
    assert lake["start"]["year"] == int(last[1])
    assert lake["start"]["p"] == pytest.approx(float(last[3]) * row["volume_m3"] / 1e6, rel=1e-12)


def test_a_point_on_the_plane_opens_its_lake(store: dict[str, Any]) -> None:
    row = store["lakes"][0]
    click = {"points": [{"customdata": [row["lake_id"], row["name"], 3.0]}]}
    lake, tab, *_ = cb.open_lake(ids.REGION_GRAPH, None, click, store)
    assert tab == ids.TAB_LAKE and lake["profile"]["name"] == row["name"]


def test_a_lake_that_cannot_be_opened_says_what_to_fix(store: dict[str, Any]) -> None:
    row = {**store["lakes"][0], "area_km2": None}
    lake, message = lake_to_open(row)
    assert lake is None and "area_km2" in message
    out = cb.open_lake(ids.REGION_TABLE, [{"lake_id": "nope"}], None, store)
    assert out[0] is no_update and out[1] is no_update and "not among" in out[2]
    assert cb.open_lake(ids.REGION_TABLE, [], None, store)[0] is no_update  # a cleared selection opens nothing
    assert find_row(None, "R01") is None


# --------------------------------------------------------------------------
# exports and the store's check
# --------------------------------------------------------------------------
def test_the_html_summary_is_standalone_with_the_cautions(store: dict[str, Any]) -> None:
    page = summary_html(store)
    # plotly.js inline: no script or stylesheet is fetched (common practice, no source)
    assert re.search(r"<script[^>]*\ssrc=", page) is None and re.search(r"<link[^>]*\shref=", page) is None
    assert "Plotly" in page and page.count('<tr class="regime-') == len(store["lakes"])
    for c in cautions():
        assert html.escape(c) in page
    assert "health authorities" in page and "permits" in page


def test_the_export_buttons(store: dict[str, Any]) -> None:
    csv_out, message = export(ids.REGION_EXPORT_CSV, store)
    assert message == "" and csv_out["filename"].endswith(".csv") and csv_out["type"] == "text/csv"
    html_out, _ = export(ids.REGION_EXPORT_HTML, store)
    assert html_out["filename"].endswith(".html")
    nothing, message = export(ids.REGION_EXPORT_CSV, None)
    assert nothing is no_update and "Screen a region first" in message


def test_the_region_store_check_refuses_junk(store: dict[str, Any]) -> None:
    row = store["lakes"][0]
    bad_rows = [
        {**row, "regime": "maybe"},
        {**row, "params": {**row["params"], "recycling_exponent": -1}},
        {**row, "p_irreversible": 7.0},
        {**row, "load_kg_yr": float("inf")},
    ]
    for bad in bad_rows:
        with pytest.raises(StoreError):
            check_region({**store, "lakes": [bad]})
    with pytest.raises(StoreError):
        check_region({**store, "lakes": [row] * 2001})


def test_progress_values_are_whole_percents(files: dict[str, Any]) -> None:
    shown: list[tuple[str, ...]] = []
    small = {"lakes": {"name": "LAKES.csv", "contents": data_url(b"\n".join(LAKES.splitlines()[:6]))}, "records": None}
    out, _ = cb.run_screen(shown.append, 1, small, REPLICATES)
    assert len(out["lakes"]) == 5
    assert all(0 <= int(v[0]) <= 100 for v in shown) and np.all(np.diff([int(v[0]) for v in shown]) >= 0)
