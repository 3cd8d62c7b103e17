"""Reading and checking monitoring CSV files, the malformed-file corpus and the demo record."""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from turnback.model.demo import DEMO_PROFILE
from turnback.model.io.monitoring_csv import MAX_BYTES, MIN_YEARS, MonitoringError, parse_monitoring
from turnback.model.record import MonitoringSeries

ROOT = Path(__file__).resolve().parents[2]
MALFORMED = Path(__file__).resolve().parents[1] / "malformed"
DEMO_CSV = ROOT / "sample_data" / "amberlin_monitoring.csv"


def good_csv(n: int = 12, extra: str = "") -> str:
    head = "year,load_kg,tp_ug_l" + extra
    rows = [f"{1990 + i},{300 + 10 * i},{20.0 + 2 * i}" + ("," * extra.count(",")) for i in range(n)]
    return head + "\n" + "\n".join(rows) + "\n"


# --------------------------------------------------------------------------
# files that should be read
# --------------------------------------------------------------------------
def test_reads_values_and_line_numbers() -> None:
    s = parse_monitoring(good_csv().encode())
    assert s.n_years == 12
    assert s.years.tolist() == list(range(1990, 2002))
    assert s.load_kg_per_yr[3] == 330.0 and s.tp_ug_l[3] == 26.0
    assert s.lines.tolist() == list(range(2, 14))  # header on line 1
    assert s.secchi_m is None and s.chl_ug_l is None


def test_arrays_are_read_only_and_the_source_is_untouched() -> None:
    raw = bytearray(good_csv().encode())
    before = bytes(raw)
    s = parse_monitoring(raw)
    assert bytes(raw) == before
    with pytest.raises(ValueError):
        s.tp_ug_l[0] = 1.0


def test_bytes_and_path_give_the_same_series(tmp_path: Path) -> None:
    f = tmp_path / "lake.csv"
    f.write_text(good_csv())
    a, b = parse_monitoring(f), parse_monitoring(str(f))
    c = parse_monitoring(f.read_bytes())
    for x in (b, c):
        assert np.array_equal(a.years, x.years) and np.array_equal(a.tp_ug_l, x.tp_ug_l)


def test_tolerant_of_common_spreadsheet_output() -> None:
    # Byte-order mark, CRLF line ends, quoted cells, upper-case padded header, comments, blank lines,
    # an extra column and empty optional cells.
    text = '\ufeff# exported 2024\r\n Year , LOAD_KG,"tp_ug_l",secchi_m,chl_ug_l,notes\r\n\r\n'
    for i in range(11):
        secchi = "" if i == 4 else f"{2.0 - 0.1 * i:.1f}"
        text += f'{2000 + i},"{400 + i}",{30 + i},{secchi},{10 + i},"ok, checked"\r\n'
    s = parse_monitoring(text.encode("utf-8"))
    assert s.n_years == 11
    assert s.secchi_m is not None and math.isnan(s.secchi_m[4]) and s.secchi_m[0] == 2.0
    assert s.chl_ug_l is not None and s.chl_ug_l[10] == 20.0
    assert s.notes == ("ignored column 'notes'",)
    assert s.lines[0] == 4  # comment on line 1, header on 2, blank 3


def test_utf16_with_bom_is_read() -> None:
    s = parse_monitoring(good_csv().encode("utf-16"))
    assert s.n_years == 12


def test_mass_from_concentration() -> None:
    # P [kg] = TP [µg/L] · V [m³] / 1e6: 1 µg/L in 1e6 m³ is 1 kg (1 µg/L = 1 mg/m³; by hand).
    s = parse_monitoring(good_csv().encode())
    assert s.p_kg(1.0e6)[0] == pytest.approx(20.0)
    assert s.p_kg(DEMO_PROFILE.volume_m3)[0] == pytest.approx(DEMO_PROFILE.mass(20.0))
    with pytest.raises(ValueError, match="volume"):
        s.p_kg(-1.0)


def test_minimum_length_is_accepted() -> None:
    assert parse_monitoring(good_csv(MIN_YEARS).encode()).n_years == MIN_YEARS
    with pytest.raises(MonitoringError, match=f"only {MIN_YEARS - 1} years"):
        parse_monitoring(good_csv(MIN_YEARS - 1).encode())


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    start=st.integers(1850, 2100),
    loads=st.lists(st.floats(0.0, 1e6, allow_nan=False), min_size=MIN_YEARS, max_size=60),
    data=st.data(),
)
def test_round_trip_of_any_valid_record(start: int, loads: list[float], data: st.DataObject) -> None:
    n = len(loads)
    if start + n - 1 > 2200 or max(loads) < 1.0:
        return
    tp = data.draw(st.lists(st.floats(1.0, 5000.0, allow_nan=False), min_size=n, max_size=n))
    if max(tp) == min(tp):
        return
    rows = [f"{start + i},{lo!r},{t!r}\n" for i, (lo, t) in enumerate(zip(loads, tp, strict=True))]
    text = "year,load_kg,tp_ug_l\n" + "".join(rows)
    s = parse_monitoring(text.encode())
    assert s.years.tolist() == list(range(start, start + n))
    assert s.load_kg_per_yr.tolist() == loads and s.tp_ug_l.tolist() == tp  # repr round-trips floats exactly


@settings(max_examples=150, deadline=None)
@given(st.binary(max_size=400))
def test_arbitrary_bytes_give_a_message_never_a_crash(raw: bytes) -> None:
    try:
        parse_monitoring(raw)
    except MonitoringError as exc:
        assert str(exc) and "\n" not in str(exc)


# --------------------------------------------------------------------------
# the malformed-file corpus: one file per problem, the message each must give
# --------------------------------------------------------------------------
CORPUS = {
    "empty.csv": "the file is empty; it needs a header line year,load_kg,tp_ug_l",
    "whitespace_only.csv": "the file is empty",
    "header_only.csv": "has a header (line 1) but no data rows; add one row per year",
    "missing_tp_column.csv": "line 1: the header has no column 'tp_ug_l'",
    "tp_column_in_mg_per_l.csv": "found 'tp_mg_l': give TP in µg/L in a column named tp_ug_l (multiply mg/L by 1000)",
    "tp_values_in_mg_per_l.csv": "column tp_ug_l: every value is below 1 (largest 0.042); this looks like mg/L — "
    "multiply by 1000",
    "non_numeric_load.csv": "line 6, column load_kg: 'n/a' is not a number",
    "negative_tp.csv": "line 5, column tp_ug_l: '-26.0' is negative",
    "empty_tp_cell.csv": "line 8, column tp_ug_l is empty; fill in the value",
    "duplicate_year.csv": "line 7, column year: year 1994 appears again (first on line 6)",
    "unsorted_years.csv": "line 6, column year: year 1993 comes after 1994 (line 5); sort the rows by year",
    "year_gap.csv": "line 7, column year: years 1995–1996 are missing between 1994 (line 6) and 1997",
    "too_few_years.csv": "only 6 years of data (1990–1995, lines 2–7); the fit needs at least 10",
    "too_many_rows.csv": "more than 5000 data rows",
    "binary_data.csv": "line 1: the file holds binary data (a NUL byte), not CSV text",
    "excel_workbook.csv": "Excel workbook (.xlsx), not CSV text; open it in its program and save or export",
    "pdf_document.csv": "the file is a PDF document, not CSV text",
    "json_document.csv": "the file looks like JSON, not CSV",
    "html_page.csv": "the file looks like a web page or XML",
    "semicolon_separated.csv": "line 1: the columns are separated by semicolons, not commas",
    "tab_separated.csv": "line 1: the columns are separated by tabs, not commas",
    "utf16_tab_separated.csv": "line 1: the columns are separated by tabs, not commas",
    "decimal_comma.csv": "line 4, column tp_ug_l: '24,5' uses a decimal comma; write it with a decimal point (24.5)",
    "ragged_row.csv": "line 9 has 2 fields but the header has 3 columns",
    "fractional_year.csv": "line 3, column year: '1991.5' is not a whole year",
    "year_out_of_range.csv": "line 2, column year: '90' is not a calendar year",
    "nan_value.csv": "line 10, column tp_ug_l: 'NaN' is not a finite number",
    "censored_value.csv": "line 11, column tp_ug_l: '<5' is a censored value",
    "units_in_cell.csv": "line 12, column tp_ug_l: '40 ug/L' has text after the number; give the plain number",
    "no_header.csv": "line 1 should be the header row",
    "duplicate_column.csv": "line 1: column 'tp_ug_l' appears twice in the header",
    "unterminated_quote.csv": "line 5: the CSV cannot be read",
    "zero_tp.csv": "line 13, column tp_ug_l: total phosphorus of 0 is not a measured lake value",
    "secchi_in_cm.csv": "column secchi_m: values up to 250 are deeper than any lake's Secchi depth in metres; "
    "this looks like cm — divide by 100",
    "load_in_tonnes.csv": "column load_kg: every load is below 1 kg (largest 0.41); this looks like tonnes — "
    "multiply by 1000",
    "latin1_text.csv": "line 7: the file is not UTF-8 text",
    "constant_tp.csv": "column tp_ug_l: every year has the same value (25)",
}


def test_corpus_is_complete() -> None:
    files = sorted(p.name for p in MALFORMED.glob("*.csv"))
    assert len(files) >= 20
    assert files == sorted(CORPUS), "every corpus file needs its expected message here, and every entry a file"


@pytest.mark.parametrize("name", sorted(CORPUS))
def test_malformed_file_gets_its_message(name: str) -> None:
    path = MALFORMED / name
    with pytest.raises(MonitoringError) as info:
        parse_monitoring(path)
    message = str(info.value)
    assert CORPUS[name] in message
    assert "\n" not in message and "Traceback" not in message
    assert isinstance(info.value, ValueError)
    with pytest.raises(MonitoringError) as again:  # the same from the uploaded bytes
        parse_monitoring(path.read_bytes())
    assert str(again.value) == message


def test_file_over_the_size_limit(tmp_path: Path) -> None:
    big = tmp_path / "big.csv"
    big.write_bytes(good_csv().encode() + b"# padding\n" * (MAX_BYTES // 10 + 1))
    with pytest.raises(MonitoringError, match="larger than the 2 MB limit"):
        parse_monitoring(big)
    with pytest.raises(MonitoringError, match="larger than the 2 MB limit"):
        parse_monitoring(big.read_bytes())


def test_missing_file_and_folder(tmp_path: Path) -> None:
    with pytest.raises(MonitoringError, match="cannot read monitoring file"):
        parse_monitoring(tmp_path / "absent.csv")
    with pytest.raises(MonitoringError, match="is a folder; give a regular file"):
        parse_monitoring(tmp_path)


def test_several_problems_are_all_kept() -> None:
    text = good_csv().replace("1993,330,26.0", "1993,abc,26.0").replace("1996,360,32.0", "1996,360,-1")
    with pytest.raises(MonitoringError) as info:
        parse_monitoring(text.encode())
    assert len(info.value.problems) == 2
    assert "line 5, column load_kg" in str(info.value) and "line 8, column tp_ug_l" in str(info.value)


def test_many_problems_are_summarised_on_one_line() -> None:
    text = "year,load_kg,tp_ug_l\n" + "".join(f"{1990 + i},x,1\n" for i in range(12))
    with pytest.raises(MonitoringError) as info:
        parse_monitoring(text.encode())
    assert len(info.value.problems) == 12
    assert "and 9 more problems" in str(info.value) and "\n" not in str(info.value)


def test_series_checks_its_own_shape() -> None:
    with pytest.raises(ValueError, match="one value per year"):
        MonitoringSeries(years=np.arange(3), load_kg_per_yr=np.ones(2), tp_ug_l=np.ones(3))


# --------------------------------------------------------------------------
# the demo record
# --------------------------------------------------------------------------
def test_demo_file_is_what_the_script_makes(tmp_path: Path) -> None:
    out = tmp_path / "regenerated.csv"
    run = subprocess.run(
        [sys.executable, str(ROOT / "sample_data" / "make_demo_series.py"), "--out", str(out)],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert run.returncode == 0, run.stderr
    assert out.read_bytes() == DEMO_CSV.read_bytes()


def test_demo_record_tells_its_story() -> None:
    s = parse_monitoring(DEMO_CSV)
    assert 40 <= s.n_years <= 50 and s.years[0] == 1979
    assert s.secchi_m is not None and s.chl_ug_l is not None
    tp = s.tp_ug_l
    year = {int(y): i for i, y in enumerate(s.years)}
    assert tp[: year[1985]].max() < 40  # clear at the start
    assert tp[year[1995] : year[2006]].min() > 100  # turbid through the high-load years and the first cut
    assert tp[year[2017] :].max() < 50  # clear again after the deep cut
    # Carlson (1977), A trophic state index for lakes, Limnol. Oceanogr. 22:361-369: TSI(TP) = 14.42 ln TP + 4.15,
    # Chl = exp((TSI - 30.6)/9.81), SD = exp((60 - TSI)/14.41); the file adds lognormal noise (SD 0.20, 0.15).
    tsi = 14.42 * np.log(tp) + 4.15
    chl_resid = np.log(s.chl_ug_l) - (tsi - 30.6) / 9.81
    sd_resid = np.log(s.secchi_m) - (60.0 - tsi) / 14.41
    assert abs(chl_resid.mean()) < 0.15 and 0.1 < chl_resid.std() < 0.35
    assert abs(sd_resid.mean()) < 0.12 and 0.07 < sd_resid.std() < 0.3


@pytest.mark.parametrize("raw", [b"#", b"# only a comment\n", b",,,\n,,\n"])
def test_comments_or_empty_cells_only(raw: bytes) -> None:
    # Found by the arbitrary-bytes property test above.
    with pytest.raises(MonitoringError, match="only comment lines or empty cells"):
        parse_monitoring(raw)


@settings(max_examples=150, deadline=None)
@given(st.text(alphabet='0123456789.,-+e"<>; \n\r\t#', max_size=300))
def test_csv_like_noise_after_a_good_header_gives_a_message(body: str) -> None:
    try:
        parse_monitoring(("year,load_kg,tp_ug_l,secchi_m\n" + body).encode())
    except MonitoringError as exc:
        assert str(exc) and "\n" not in str(exc)


def test_the_year_rule_admits_the_longest_record() -> None:
    # the row limit and the year rule agree: MAX_ROWS consecutive four-digit years are a valid record
    from turnback.model.io.monitoring_csv import MAX_ROWS

    rows = [f"{1000 + i},{300 + i % 7},{20 + i % 5}\n" for i in range(MAX_ROWS)]
    s = parse_monitoring(("year,load_kg,tp_ug_l\n" + "".join(rows)).encode())
    assert s.years.size == MAX_ROWS
