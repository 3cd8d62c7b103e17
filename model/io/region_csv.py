r"""A region's lakes from CSV files: the lake table, the records and the loads.

LAKES.csv
---------
One row per lake (UTF-8 CSV with a header line; blank and ``#`` lines are
skipped, other columns ignored)::

    lake_id,name,volume_m3,area_km2,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent
    L01,Tarnby Water (fictional),2.4e7,5.1,380,0.45,1500,2200,4

==================  ========  ===================================================
column              needed    meaning
==================  ========  ===================================================
lake_id             yes       unique text
name                no        display name
volume_m3           yes       lake volume [m³], > 0
area_km2            no        surface area [km²], > 0
load_kg_yr          yes       today's external total phosphorus load [kg yr⁻¹]
loss_rate           no        ``s`` [yr⁻¹] ┐ all four columns or none; in a row,
recycling_max       no        ``r`` [kg yr⁻¹]│ all four cells filled (the lake is
recycling_half      no        ``m`` [kg]     │ analysed) or all four empty (it is
recycling_exponent  no        ``q`` [–]      ┘ fitted from its records)
==================  ========  ===================================================

RECORDS.csv
-----------
Long format: ``lake_id`` plus the columns of the annual monitoring file
(:mod:`turnback.model.io.monitoring_csv`: ``year``, ``load_kg``,
``tp_ug_l``, optional ``secchi_m``, ``chl_ug_l``), one row per lake and
year.  Each lake's rows are checked by the same reader as ``turnback fit``
(consecutive years, units, at least ten years), with the line numbers of
RECORDS.csv in its messages.

LOADS.csv
---------
Long format ``lake_id,year,load_kg`` [kg yr⁻¹]: the load of each record
year, for records kept without a ``load_kg`` column.  The loads are then
given once: RECORDS.csv must not have ``load_kg`` as well.

Errors
------
A file that cannot be used as a whole (not CSV text, a missing column,
a repeated ``lake_id``) raises :class:`RegionError`, one line that says what
to fix.  A problem with one lake (a bad cell, three of the four
parameters, a record that cannot be read) does not stop the others: that
lake becomes a :class:`~turnback.model.screening.ScreenFailure` with the
message.
"""

from __future__ import annotations

import codecs
import csv
import difflib
import io
import math
import os
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from ..params import LakeParameters
from ..record import MonitoringSeries
from ..screening import RegionLake, ScreenFailure
from ..validation import FieldError, number_text, text
from .files import FileTooLarge, read_bounded
from .monitoring_csv import MonitoringError, parse_monitoring

__all__ = [
    "LAKE_COLUMNS",
    "LOAD_COLUMNS",
    "MAX_BYTES",
    "MAX_LAKES",
    "PARAMETER_COLUMNS",
    "Region",
    "RegionError",
    "read_region",
]

#: Largest accepted file of each kind [bytes] (200 MB).
MAX_BYTES = 200_000_000
#: Most lakes in one lake table.
MAX_LAKES = 1_000_000

PARAMETER_COLUMNS = ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")
LAKE_COLUMNS = ("lake_id", "name", "volume_m3", "area_km2", "load_kg_yr", *PARAMETER_COLUMNS)
_LAKE_REQUIRED = ("lake_id", "volume_m3", "load_kg_yr")
LOAD_COLUMNS = ("lake_id", "year", "load_kg")
_RECORD_COLUMNS = ("lake_id", "year", "load_kg", "tp_ug_l", "secchi_m", "chl_ug_l")
_PARAMETER_UNITS = {
    "loss_rate": "[yr⁻¹]",
    "recycling_max": "[kg yr⁻¹]",
    "recycling_half": "[kg]",
    "recycling_exponent": "[–]",
}
_SIGNATURES = (
    (b"PK\x03\x04", "a zip archive such as an Excel workbook (.xlsx)"),
    (b"\xd0\xcf\x11\xe0", "an old-style Excel workbook (.xls)"),
    (b"%PDF", "a PDF document"),
    (b"\x1f\x8b", "a gzip-compressed file"),
    (b"SQLite format 3", "an SQLite database"),
)
_LINE_REF = re.compile(r"\b(lines?) (\d+)(?:–(\d+))?")


class RegionError(ValueError):
    """A region file that cannot be used as a whole; ``str()`` is one line that says what to fix."""


@dataclass(frozen=True)
class Region:
    """A region read from its files.

    Attributes
    ----------
    entries : tuple
        One entry per lake in the order of the lake table: a
        :class:`~turnback.model.screening.RegionLake` ready to screen, or a
        :class:`~turnback.model.screening.ScreenFailure` saying what to fix.
    notes : tuple of str
        Things the reader ignored (unknown columns, records of lakes not in
        the table, loads of lakes without records), in plain words.
    """

    entries: tuple[RegionLake | ScreenFailure, ...]
    notes: tuple[str, ...] = field(default=())

    @property
    def lakes(self) -> tuple[RegionLake, ...]:
        """The lakes ready to screen, in order."""
        return tuple(e for e in self.entries if isinstance(e, RegionLake))


# --------------------------------------------------------------------------
# reading a CSV file into (line, row) pairs
# --------------------------------------------------------------------------
def _read_bytes(source: bytes | str | os.PathLike[str], label: str) -> bytes:
    if isinstance(source, bytes | bytearray | memoryview):
        raw = bytes(source)
    else:
        try:
            raw = read_bounded(source, MAX_BYTES, label)
        except FileTooLarge:
            raise RegionError(f"{label} is larger than {MAX_BYTES / 1e6:.0f} MB; split the region into parts") from None
        except ValueError as exc:
            raise RegionError(str(exc)) from None
    if len(raw) > MAX_BYTES:
        raise RegionError(f"{label} is larger than {MAX_BYTES / 1e6:.0f} MB; split the region into parts")
    return raw


def _decode(raw: bytes, label: str) -> str:
    for magic, what in _SIGNATURES:
        if raw.startswith(magic):
            raise RegionError(f"{label} is {what}, not CSV text; export the table as CSV (comma-separated, UTF-8)")
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            return raw.decode("utf-16")
        except UnicodeDecodeError:
            raise RegionError(f"{label} starts like UTF-16 text but cannot be decoded; save it as CSV UTF-8") from None
    if b"\x00" in raw:
        raise RegionError(f"{label} holds binary data (a NUL byte), not CSV text; save the table as CSV UTF-8")
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise RegionError(
            f"{label} line {line} is not UTF-8 text (byte 0x{raw[exc.start]:02x}); save the table as 'CSV UTF-8'"
        ) from None


def _rows(
    source: bytes | str | os.PathLike[str], label: str, hint: str
) -> tuple[int, list[str], list[tuple[int, list[str]]]]:
    """Header line number, header cells and ``(line, cells)`` of each data row."""
    text_ = _decode(_read_bytes(source, label), label)
    head = text_.lstrip()
    if head[:1] in ("{", "[", "<"):
        raise RegionError(f"{label} is not a CSV table; give a comma-separated table with the header {hint}")
    reader = csv.reader(io.StringIO(text_, newline=""), strict=True)
    header: list[str] | None = None
    header_line = 0
    rows: list[tuple[int, list[str]]] = []
    last = 0
    try:
        for row in reader:
            line = last + 1
            last = reader.line_num
            if not row or all(c.strip() == "" for c in row) or row[0].lstrip().startswith("#"):
                continue
            if header is None:
                header, header_line = row, line
            else:
                rows.append((line, row))
    except csv.Error as exc:
        raise RegionError(f"{label} line {last + 1} cannot be read as CSV ({exc}); check the quotation marks") from None
    if header is None:
        raise RegionError(f"{label} is empty; it needs the header {hint} and one row below it per lake")
    if len(header) == 1:
        for sep, name in ((";", "semicolons"), ("\t", "tabs"), ("|", "vertical bars")):
            if sep in header[0]:
                raise RegionError(f"{label} line {header_line}: the columns are separated by {name}; use commas")
    return header_line, header, rows


def _names(
    header: list[str], header_line: int, label: str, required: Sequence[str], known: Sequence[str]
) -> dict[str, int]:
    """Column index by normalised name; :class:`RegionError` for a repeated or missing column."""
    names = [h.strip().strip('"').strip().lower().replace(" ", "_") for h in header]
    index: dict[str, int] = {}
    for i, n in enumerate(names):
        if not n:
            continue
        if n in index:
            raise RegionError(
                f"{label} line {header_line}: column {n!r} appears twice (columns {index[n] + 1} and {i + 1})"
            )
        index[n] = i
    for col in required:
        if col not in index:
            close = difflib.get_close_matches(col, [n for n in index if n not in known], n=1)
            hint = f"; is {close[0]!r} meant to be {col!r}? rename it" if close else ""
            raise RegionError(
                f"{label} line {header_line}: the header has no column {col!r}{hint} "
                f"(it needs {', '.join(required)}; it has {', '.join(repr(n) for n in index)})"
            )
    return index


def _cell(row: list[str], index: dict[str, int], col: str) -> str:
    i = index.get(col)
    if i is None or i >= len(row):
        return ""
    return row[i].strip().strip('"').strip()


def _ignored(index: dict[str, int], known: Sequence[str], label: str) -> list[str]:
    return [f"{label}: ignored column {n!r}" for n in index if n not in known]


# --------------------------------------------------------------------------
# the lake table
# --------------------------------------------------------------------------
def _lake(line: int, row: list[str], width: int, index: dict[str, int], label: str, lake_id: str) -> RegionLake | str:
    """One row as a lake, or a message saying what to fix."""
    where = f"{label} line {line}"
    if len(row) != width:
        return (
            f"{where} has {len(row)} fields but the header has {width} columns; check for missing or extra commas "
            "(a value such as 1,5 needs a decimal point)"
        )
    try:
        volume = number_text(_cell(row, index, "volume_m3"), ("volume_m3",), lo=0.0, lo_open=True, unit="[m³]")
        load = number_text(_cell(row, index, "load_kg_yr"), ("load_kg_yr",), lo=0.0, unit="[kg yr⁻¹]")
        area_cell = _cell(row, index, "area_km2")
        area = number_text(area_cell, ("area_km2",), lo=0.0, lo_open=True, unit="[km²]") if area_cell else None
        name = text(_cell(row, index, "name"), ("name",), allow_empty=True) or None
        cells = {c: _cell(row, index, c) for c in PARAMETER_COLUMNS if c in index}
        filled = [c for c, v in cells.items() if v]
        params = None
        if filled and len(filled) < len(PARAMETER_COLUMNS):
            empty = [c for c in PARAMETER_COLUMNS if c not in filled]
            return (
                f"{where}: {', '.join(filled)} given but {', '.join(empty)} empty; give all four model "
                "parameters, or leave all four empty to fit the lake from its records"
            )
        if filled:
            values = {
                c: number_text(cells[c], (c,), lo=0.0, lo_open=True, unit=_PARAMETER_UNITS[c])
                for c in PARAMETER_COLUMNS
            }
            params = LakeParameters(**values)
        return RegionLake(
            lake_id=lake_id, volume_m3=volume, load_kg_per_yr=load, name=name, area_km2=area, params=params
        )
    except FieldError as exc:
        return f"{where}: {exc}"


def _read_lakes(
    source: bytes | str | os.PathLike[str], label: str
) -> tuple[list[tuple[int, str, RegionLake | str]], list[str]]:
    hint = "lake_id,name,volume_m3,area_km2,load_kg_yr (optionally the four model parameters)"
    header_line, header, rows = _rows(source, label, hint)
    index = _names(header, header_line, label, _LAKE_REQUIRED, LAKE_COLUMNS)
    present = [c for c in PARAMETER_COLUMNS if c in index]
    if present and len(present) < len(PARAMETER_COLUMNS):
        missing = [c for c in PARAMETER_COLUMNS if c not in index]
        raise RegionError(
            f"{label} line {header_line}: the header has {', '.join(present)} but not {', '.join(missing)}; "
            "give all four parameter columns (cells may be empty for lakes to fit) or none"
        )
    if not rows:
        raise RegionError(f"{label} has a header (line {header_line}) but no lakes; add one row per lake")
    if len(rows) > MAX_LAKES:
        raise RegionError(f"{label} has more than {MAX_LAKES} lakes; split the region into parts")
    seen: dict[str, int] = {}
    out: list[tuple[int, str, RegionLake | str]] = []
    for line, row in rows:
        lake_id = _cell(row, index, "lake_id")
        if not lake_id:
            raise RegionError(f"{label} line {line}: lake_id is empty; give every lake a unique id")
        if not lake_id.isprintable() or len(lake_id) > 120:
            raise RegionError(f"{label} line {line}: lake_id must be printable text of at most 120 characters")
        if lake_id in seen:
            raise RegionError(
                f"{label} line {line}: lake_id {lake_id!r} appears again (first on line {seen[lake_id]}); "
                "give every lake a unique id"
            )
        seen[lake_id] = line
        out.append((line, lake_id, _lake(line, row, len(header), index, label, lake_id)))
    return out, _ignored(index, LAKE_COLUMNS, label)


# --------------------------------------------------------------------------
# the loads and the records
# --------------------------------------------------------------------------
def _read_loads(source: bytes | str | os.PathLike[str], label: str) -> dict[str, dict[int, float] | str]:
    """Loads by lake and year, or one message for a lake with a bad row."""
    header_line, header, rows = _rows(source, label, ",".join(LOAD_COLUMNS))
    index = _names(header, header_line, label, LOAD_COLUMNS, LOAD_COLUMNS)
    out: dict[str, dict[int, float] | str] = {}
    first: dict[tuple[str, int], int] = {}
    for line, row in rows:
        lake_id = _cell(row, index, "lake_id")
        if not lake_id:
            raise RegionError(f"{label} line {line}: lake_id is empty; give the lake of every load")
        if isinstance(out.get(lake_id), str):
            continue
        loads = out.setdefault(lake_id, {})
        assert isinstance(loads, dict)
        try:
            if len(row) != len(header):
                raise FieldError((), f"has {len(row)} fields but the header has {len(header)} columns")
            year_f = number_text(_cell(row, index, "year"), ("year",), lo=1800, hi=2200)
            if year_f != math.floor(year_f):
                raise FieldError(("year",), f"must be a whole calendar year; got {_cell(row, index, 'year')!r}")
            year = int(year_f)
            load = number_text(_cell(row, index, "load_kg"), ("load_kg",), lo=0.0, unit="[kg yr⁻¹]")
        except FieldError as exc:
            out[lake_id] = f"{label} line {line}: {exc}"
            continue
        if (lake_id, year) in first:
            out[lake_id] = (
                f"{label} line {line}: lake {lake_id!r} has a second load for {year} (first on line "
                f"{first[lake_id, year]}); give one load per lake and year"
            )
            continue
        first[lake_id, year] = line
        loads[year] = load
    return out


def _remap_lines(message: str, lines: list[int]) -> str:
    """Line numbers of a one-lake file (header on line 1) as lines of the region's file."""

    def one(n: str) -> str:
        k = int(n) - 1
        return str(lines[k]) if 0 <= k < len(lines) else n

    def sub(m: re.Match[str]) -> str:
        word, a, b = m.group(1), m.group(2), m.group(3)
        return f"{word} {one(a)}" + (f"–{one(b)}" if b else "")

    return _LINE_REF.sub(sub, message)


def _lake_records(
    header: list[str],
    index: dict[str, int],
    header_line: int,
    rows: list[tuple[int, list[str]]],
    lake_id: str,
    loads: dict[int, float] | str | None,
    label: str,
    loads_label: str,
) -> MonitoringSeries | str:
    """One lake's rows, read by the monitoring reader, or a message saying what to fix."""
    if isinstance(loads, str):
        return loads
    lid = index["lake_id"]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header[:lid] + header[lid + 1 :] + (["load_kg"] if loads is not None else []))
    for line, row in rows:
        if len(row) != len(header):
            return (
                f"{label} line {line} has {len(row)} fields but the header has {len(header)} columns; check for "
                "missing or extra commas (a value such as 1,5 needs a decimal point)"
            )
        cells = row[:lid] + row[lid + 1 :]
        if loads is not None:
            year_text = _cell(row, index, "year")
            try:
                year: int | None = int(float(year_text))
            except (ValueError, OverflowError):
                year = None  # the reader names the bad year
            if year is not None and year not in loads:
                return (
                    f"{loads_label} has no load for lake {lake_id!r} in {year} ({label} line {line}); add a row "
                    f"{lake_id},{year},<load in kg>"
                )
            cells.append(repr(loads[year]) if year is not None else "")
        w.writerow(cells)
    try:
        return parse_monitoring(buf.getvalue().encode("utf-8"))
    except MonitoringError as exc:
        mapped = " | ".join(_remap_lines(p, [header_line] + [ln for ln, _ in rows]) for p in exc.problems[:3])
        more = len(exc.problems) - 3
        if more > 0:
            mapped += f" | and {more} more problem{'s' if more > 1 else ''}"
        return f"{label}, lake {lake_id!r}: {mapped}"


def _read_records(
    source: bytes | str | os.PathLike[str],
    label: str,
    loads: dict[str, dict[int, float] | str] | None,
    loads_label: str,
) -> tuple[dict[str, MonitoringSeries | str], list[str]]:
    hint = "lake_id,year,load_kg,tp_ug_l (optionally secchi_m,chl_ug_l)"
    header_line, header, rows = _rows(source, label, hint)
    required = ("lake_id", "year", "tp_ug_l") if loads is not None else ("lake_id", "year", "load_kg", "tp_ug_l")
    if loads is None:
        names = [h.strip().strip('"').strip().lower() for h in header]
        if "load_kg" not in names and "lake_id" in names and "tp_ug_l" in names:
            raise RegionError(
                f"{label} line {header_line}: the header has no column 'load_kg'; add each year's load [kg] "
                "or give the loads in a separate file with --loads LOADS.csv (lake_id,year,load_kg)"
            )
    index = _names(header, header_line, label, required, _RECORD_COLUMNS)
    if loads is not None and "load_kg" in index:
        raise RegionError(
            f"{label} line {header_line} has a load_kg column and a loads file was given too; give each year's "
            "load once (drop the column or the loads file)"
        )
    by_lake: dict[str, list[tuple[int, list[str]]]] = {}
    for line, row in rows:
        lake_id = _cell(row, index, "lake_id")
        if not lake_id:
            raise RegionError(f"{label} line {line}: lake_id is empty; give the lake of every row")
        by_lake.setdefault(lake_id, []).append((line, row))
    out: dict[str, MonitoringSeries | str] = {}
    for lake_id, lake_rows in by_lake.items():
        lake_loads = None if loads is None else loads.get(lake_id, {})
        out[lake_id] = _lake_records(header, index, header_line, lake_rows, lake_id, lake_loads, label, loads_label)
    return out, _ignored(index, _RECORD_COLUMNS, label)


# --------------------------------------------------------------------------
# the region
# --------------------------------------------------------------------------
def _label(source: object, default: str) -> str:
    if isinstance(source, str | os.PathLike):
        return Path(source).name
    return default


def read_region(
    lakes: bytes | str | os.PathLike[str],
    records: bytes | str | os.PathLike[str] | None = None,
    loads: bytes | str | os.PathLike[str] | None = None,
) -> Region:
    """Read a region's lake table and, when given, its records and loads.

    Parameters
    ----------
    lakes : bytes or path
        The lake table (LAKES.csv).
    records : bytes or path, optional
        The lakes' annual monitoring rows in long format (RECORDS.csv).
    loads : bytes or path, optional
        Each record year's load in long format (LOADS.csv); only with
        ``records``, which must then have no ``load_kg`` column.

    Returns
    -------
    Region
        One entry per lake in the lake table's order (a lake or a failure);
        records of lakes missing from the table are ignored, with a note.

    Raises
    ------
    RegionError
        For a file that cannot be used as a whole; one line that says what to fix.

    Notes
    -----
    Pure function of the files' contents: nothing is written.
    """
    lakes_label = _label(lakes, "LAKES.csv")
    records_label = _label(records, "RECORDS.csv")
    loads_label = _label(loads, "LOADS.csv")
    if loads is not None and records is None:
        raise RegionError("a loads file is used with the records it belongs to; give --records RECORDS.csv as well")
    table, notes = _read_lakes(lakes, lakes_label)
    series: dict[str, MonitoringSeries | str] = {}
    if records is not None:
        load_map = _read_loads(loads, loads_label) if loads is not None else None
        series, record_notes = _read_records(records, records_label, load_map, loads_label)
        notes += record_notes
        if load_map is not None:
            unused = sorted(set(load_map) - set(series))
            if unused:
                shown = ", ".join(repr(u) for u in unused[:3]) + (" …" if len(unused) > 3 else "")
                notes.append(f"{loads_label}: loads of lakes without records ignored ({shown})")
    entries: list[RegionLake | ScreenFailure] = []
    for line, lake_id, lake in table:
        if isinstance(lake, str):
            entries.append(ScreenFailure(lake_id, lake))
            continue
        rec = series.get(lake_id)
        if isinstance(rec, str):
            if lake.fitted:
                entries.append(ScreenFailure(lake_id, rec))
                continue
            note = f"Its records could not be read, so the state is not given: {rec}"
            entries.append(_with(lake, record=None, notes=(note,)))
        elif rec is None and lake.fitted:
            where = f"{records_label}" if records is not None else "a records file (--records RECORDS.csv)"
            entries.append(
                ScreenFailure(
                    lake_id,
                    f"{lakes_label} line {line}: lake {lake_id!r} has no model parameters and no rows in {where}; "
                    "give loss_rate, recycling_max, recycling_half and recycling_exponent, or its annual records",
                )
            )
        else:
            entries.append(_with(lake, record=rec, notes=()))
    in_table = {lid for _, lid, _ in table}
    orphans = [lake_id for lake_id in series if lake_id not in in_table]
    if orphans:
        shown = ", ".join(repr(o) for o in orphans[:3]) + (f" and {len(orphans) - 3} more" if len(orphans) > 3 else "")
        notes.append(
            f"{records_label}: rows of {len(orphans)} lake{'s' if len(orphans) > 1 else ''} not in {lakes_label} "
            f"ignored ({shown}); add a row to {lakes_label} to screen them"
        )
    return Region(entries=tuple(entries), notes=tuple(notes))


def _with(lake: RegionLake, record: MonitoringSeries | None, notes: tuple[str, ...]) -> RegionLake:
    return RegionLake(
        lake_id=lake.lake_id,
        volume_m3=lake.volume_m3,
        load_kg_per_yr=lake.load_kg_per_yr,
        name=lake.name,
        area_km2=lake.area_km2,
        params=lake.params,
        record=record,
        notes=notes,
    )
