r"""A lake's own monitoring record: reading and checking the CSV file.

File format
-----------
A comma-separated text file (UTF-8, or UTF-16 with a byte-order mark), one
header line and one row per year::

    year,load_kg,tp_ug_l,secchi_m,chl_ug_l
    1990,310,38.2,2.9,9.1
    1991,295,36.0,3.1,8.4

=========  ========  ===========================================================
column     needed    meaning
=========  ========  ===========================================================
year       yes       four-digit calendar year (1000 to 9999), a whole number;
                     consecutive, ascending
load_kg    yes       external total phosphorus load that year [kg yr⁻¹], >= 0
tp_ug_l    yes       annual or growing-season mean lake total phosphorus
                     [µg L⁻¹], > 0
secchi_m   no        mean Secchi depth [m], > 0 (empty cells allowed)
chl_ug_l   no        mean chlorophyll a [µg L⁻¹], >= 0 (empty cells allowed)
=========  ========  ===========================================================

Column names are matched without regard to case or surrounding spaces;
other columns are ignored (and listed in :attr:`MonitoringSeries.notes`).
Blank lines and lines starting with ``#`` are skipped.  At least
:data:`MIN_YEARS` consecutive years are needed; the file may be at most
:data:`MAX_BYTES` bytes and :data:`MAX_ROWS` data rows.

The lake volume ``V`` [m³] is not part of the file; the lake P mass is
``P = TP · V / 10⁶`` [kg] (:meth:`MonitoringSeries.p_kg`).

Every problem found is reported by :class:`MonitoringError` (a
``ValueError``) with a message that names the file line and column and says
what to fix.  Parsing is a pure function: nothing is written or changed.
"""

from __future__ import annotations

import codecs
import csv
import difflib
import io
import math
import os
import re

import numpy as np
from numpy.typing import NDArray

from ..record import MonitoringSeries
from .files import FileTooLarge, read_bounded

__all__ = [
    "MAX_BYTES",
    "MAX_ROWS",
    "MIN_YEARS",
    "MonitoringError",
    "MonitoringSeries",
    "parse_monitoring",
]

#: Largest accepted file [bytes] (2 MB).
MAX_BYTES = 2_000_000
#: Largest accepted number of data rows.
MAX_ROWS = 5000
#: Fewest consecutive years the fit accepts.
MIN_YEARS = 10

REQUIRED = ("year", "load_kg", "tp_ug_l")
OPTIONAL = ("secchi_m", "chl_ug_l")
_HEADER_HINT = "year,load_kg,tp_ug_l (optionally secchi_m,chl_ug_l)"
#: Years are four-digit calendar years, so a two-digit "90" is caught, and the longest record
#: (:data:`MAX_ROWS` consecutive years) fits within the range.
_YEAR_RANGE = (1000, 9999)
_MAX_LISTED = 3

_UNIT_HINTS = {
    "tp_mg_l": "give TP in µg/L in a column named tp_ug_l (multiply mg/L by 1000)",
    "tp_mg_per_l": "give TP in µg/L in a column named tp_ug_l (multiply mg/L by 1000)",
    "tp": "name the TP column tp_ug_l and give it in µg/L",
    "load": "name the load column load_kg and give it in kg per year",
    "load_t": "give the load in kg in a column named load_kg (multiply tonnes by 1000)",
    "load_kg_yr": "name the load column load_kg (kg per year)",
    "secchi_cm": "give Secchi depth in metres in a column named secchi_m (divide cm by 100)",
    "chl_mg_l": "give chlorophyll a in µg/L in a column named chl_ug_l (multiply mg/L by 1000)",
}

_SIGNATURES = (
    (b"PK\x03\x04", "a zip archive such as an Excel workbook (.xlsx)"),
    (b"\xd0\xcf\x11\xe0", "an old-style Excel workbook (.xls)"),
    (b"%PDF", "a PDF document"),
    (b"\x1f\x8b", "a gzip-compressed file"),
    (b"\x89PNG", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"SQLite format 3", "an SQLite database"),
)


class MonitoringError(ValueError):
    """A monitoring file that cannot be used, with a message for the user.

    ``str(error)`` is one line that names the first problems (file line and
    column) and says what to fix; :attr:`problems` holds every problem found,
    one message each.
    """

    def __init__(self, problems: str | list[str] | tuple[str, ...]) -> None:
        items = (problems,) if isinstance(problems, str) else tuple(problems)
        if not items:
            items = ("the monitoring file cannot be used",)
        self.problems: tuple[str, ...] = items
        shown = " | ".join(items[:_MAX_LISTED])
        more = len(items) - _MAX_LISTED
        if more > 0:
            shown += f" | and {more} more problem{'s' if more > 1 else ''} of the same kind"
        super().__init__(shown)


# --------------------------------------------------------------------------
# reading the bytes
# --------------------------------------------------------------------------
def _read_source(source: bytes | bytearray | memoryview | str | os.PathLike[str]) -> bytes:
    if isinstance(source, bytes | bytearray | memoryview):
        raw = bytes(source)
        if len(raw) > MAX_BYTES:
            raise MonitoringError(_too_large(len(raw)))
        return raw
    if isinstance(source, str | os.PathLike):
        try:
            return read_bounded(source, MAX_BYTES, "monitoring file")
        except FileTooLarge as exc:
            raise MonitoringError(_too_large(exc.size)) from None
        except ValueError as exc:
            raise MonitoringError(str(exc)) from None
    raise TypeError(f"parse_monitoring takes bytes or a file path; got {type(source).__name__}")


def _too_large(n_bytes: int) -> str:
    return (
        f"the file is {n_bytes / 1e6:.1f} MB, larger than the {MAX_BYTES / 1e6:.0f} MB limit; a monitoring "
        "record is one row a year — check that this is the right file, or keep only the columns "
        f"{_HEADER_HINT}"
    )


def _decode(raw: bytes) -> str:
    for magic, what in _SIGNATURES:
        if raw.startswith(magic):
            return _fail(
                f"the file is {what}, not CSV text; open it in its program and save or export the table as "
                f"CSV (comma-separated), with the header {_HEADER_HINT}"
            )
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            return raw.decode("utf-16")
        except UnicodeDecodeError:
            return _fail("the file starts like UTF-16 text but cannot be decoded; save it as CSV UTF-8")
    if b"\x00" in raw:
        line = raw[: raw.index(b"\x00")].count(b"\n") + 1
        return _fail(
            f"line {line}: the file holds binary data (a NUL byte), not CSV text; save the monitoring table as "
            f"CSV (comma-separated text) with the header {_HEADER_HINT}"
        )
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        return _fail(
            f"line {line}: the file is not UTF-8 text (byte 0x{raw[exc.start]:02x} cannot be read); "
            "save it as 'CSV UTF-8' in the spreadsheet program"
        )
    bad = re.search(r"[\x01-\x08\x0b\x0c\x0e-\x1f\x7f]", text)
    if bad is not None:
        line = text[: bad.start()].count("\n") + 1
        return _fail(
            f"line {line}: the file holds control characters, so it is binary data rather than CSV text; "
            "save the monitoring table as CSV (comma-separated text)"
        )
    return text


def _fail(message: str) -> str:
    raise MonitoringError(message)


# --------------------------------------------------------------------------
# cells
# --------------------------------------------------------------------------
_DECIMAL_COMMA = re.compile(r"^[-+]?\d+,\d+$")
_NUMBER_WITH_UNIT = re.compile(r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*[^\d\s.,+-].*$")
_PLAIN_NUMBER = re.compile(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?", re.ASCII)
#: Largest plausible value of each column (far beyond any lake); larger is a unit or typing slip.
_UPPER = {"load_kg": 1.0e12, "tp_ug_l": 1.0e6, "secchi_m": 1.0e4, "chl_ug_l": 1.0e6}


def _cell_number(text: str, line: int, column: str) -> float | str:
    """The cell as a float, or a problem message."""
    where = f"line {line}, column {column}"
    cell = text.strip().strip('"').strip()
    if cell == "":
        return f"{where} is empty; fill in the value for that year"
    try:
        value = float(cell)
    except ValueError:
        if _DECIMAL_COMMA.match(cell):
            return f"{where}: {cell!r} uses a decimal comma; write it with a decimal point ({cell.replace(',', '.')})"
        if cell[0] in "<>≤≥":
            return (
                f"{where}: {cell!r} is a censored value (below or above a detection limit); give a number, "
                "for example the detection limit itself, and note it in your records"
            )
        if _NUMBER_WITH_UNIT.match(cell):
            return f"{where}: {cell!r} has text after the number; give the plain number without units"
        return f"{where}: {cell!r} is not a number; write a plain number such as 41.5 (decimal point, no units)"
    if not math.isfinite(value):
        return f"{where}: {cell!r} is not a finite number; give the measured value for that year"
    if not _PLAIN_NUMBER.fullmatch(cell):
        return (
            f"{where}: {cell!r} is not a plain number; write digits 0-9 with a decimal point and no separators, "
            "such as 1200 or 41.5"
        )
    return value


def _header_names(header: list[str], line: int) -> list[str] | str:
    names = [h.strip().strip('"').strip().lower().replace(" ", "_") for h in header]
    if names and all(not isinstance(_cell_number(n, line, "-"), str) for n in names if n):
        return (
            f"line {line} should be the header row ({_HEADER_HINT}) but holds numbers; add the header line "
            "above the data"
        )
    seen: dict[str, int] = {}
    for i, n in enumerate(names):
        if n and n in seen:
            return f"line {line}: column {n!r} appears twice in the header (columns {seen[n] + 1} and {i + 1})"
        seen[n] = i
    missing = [c for c in REQUIRED if c not in seen]
    if missing:
        problems = []
        for c in missing:
            hint = ""
            for n in names:
                if n in _UNIT_HINTS and _UNIT_HINTS[n].find(c) >= 0:
                    hint = f"; found {n!r}: {_UNIT_HINTS[n]}"
                    break
            else:
                close = difflib.get_close_matches(c, [n for n in names if n not in REQUIRED + OPTIONAL], n=1)
                if close:
                    hint = f"; is {close[0]!r} meant to be {c!r}? rename it"
            problems.append(f"line {line}: the header has no column {c!r}{hint}")
        shown = ", ".join(repr(n) for n in names if n)
        return " | ".join(problems) + f" (the header must name {_HEADER_HINT}; it has {shown})"
    return names


# --------------------------------------------------------------------------
# the parser
# --------------------------------------------------------------------------
def parse_monitoring(source: bytes | bytearray | memoryview | str | os.PathLike[str]) -> MonitoringSeries:
    """Read and check an annual monitoring CSV.

    Parameters
    ----------
    source : bytes or path
        The file's contents (as the dashboard receives an upload), or a path
        to it (``str`` or :class:`os.PathLike`).  A ``str`` is always taken
        as a path.

    Returns
    -------
    MonitoringSeries
        Years, load [kg yr⁻¹], TP [µg L⁻¹] and, when given, Secchi depth [m]
        and chlorophyll a [µg L⁻¹].

    Raises
    ------
    MonitoringError
        For every problem found, with the file line and column and what to
        fix: not CSV text (binary, a workbook, JSON, HTML), empty or header
        only, a missing column, rows of the wrong length, empty, non-numeric
        or negative cells, years that repeat, go backwards or skip, fewer
        than :data:`MIN_YEARS` years, more than :data:`MAX_ROWS` rows or
        :data:`MAX_BYTES` bytes, and columns whose values look like the
        wrong unit (TP in mg L⁻¹, load in tonnes, Secchi depth in cm,
        chlorophyll in mg L⁻¹).

    Notes
    -----
    Pure function: the source is only read.
    """
    text = _decode(_read_source(source))
    if text.strip() == "":
        raise MonitoringError(f"the file is empty; it needs a header line {_HEADER_HINT} and one row per year below it")
    head = text.lstrip()
    if head[0] in "{[":
        raise MonitoringError(
            "the file looks like JSON, not CSV; give a comma-separated table with the header "
            f"{_HEADER_HINT} and one row per year"
        )
    if head[0] == "<":
        raise MonitoringError(
            "the file looks like a web page or XML (it starts with '<'), not CSV; download or export the raw "
            f"table as CSV with the header {_HEADER_HINT}"
        )

    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    header: list[str] | None = None
    header_line = 0
    rows: list[tuple[int, list[str]]] = []
    last_line = 0
    try:
        for row in reader:
            line = last_line + 1  # where this record starts (a quoted cell may span lines)
            last_line = reader.line_num
            if not row or all(c.strip() == "" for c in row) or row[0].lstrip().startswith("#"):
                continue
            if header is None:
                header, header_line = row, line
                continue
            rows.append((line, row))
            if len(rows) > MAX_ROWS:
                raise MonitoringError(
                    f"line {line}: the file has more than {MAX_ROWS} data rows; a monitoring record is one row "
                    "a year — check that this is the right file"
                )
    except csv.Error as exc:
        raise MonitoringError(
            f"line {last_line + 1}: the CSV cannot be read ({exc}); check the quotation marks on that line"
        ) from None
    if header is None:
        raise MonitoringError(
            f"the file holds only comment lines or empty cells; it needs a header line {_HEADER_HINT} and one row "
            "per year below it"
        )

    if len(header) == 1:
        only = header[0]
        for sep, name in ((";", "semicolons"), ("\t", "tabs"), ("|", "vertical bars")):
            if sep in only:
                raise MonitoringError(
                    f"line {header_line}: the columns are separated by {name}, not commas; save the file as "
                    f"comma-separated CSV (or replace the {name} by commas)"
                )
    names = _header_names(header, header_line)
    if isinstance(names, str):
        raise MonitoringError(names)
    if not rows:
        raise MonitoringError(
            f"the file has a header (line {header_line}) but no data rows; add one row per year below it"
        )
    index = {n: i for i, n in enumerate(names) if n}
    extra = [n for n in names if n and n not in REQUIRED + OPTIONAL]
    notes = tuple(f"ignored column {n!r}" for n in extra)
    present_optional = [c for c in OPTIONAL if c in index]

    problems: list[str] = []
    values: dict[str, list[float]] = {c: [] for c in REQUIRED + OPTIONAL}
    lines: list[int] = []
    for line, row in rows:
        if len(row) != len(header):
            problems.append(
                f"line {line} has {len(row)} field{'s' if len(row) != 1 else ''} but the header has "
                f"{len(header)} columns; check for missing or extra commas (a value such as 1,5 needs a "
                "decimal point)"
            )
            continue
        lines.append(line)
        for col in REQUIRED + tuple(present_optional):
            cell = row[index[col]]
            if col in OPTIONAL and cell.strip().strip('"').strip() == "":
                values[col].append(math.nan)
                continue
            v = _cell_number(cell, line, col)
            if isinstance(v, str):
                problems.append(v)
                values[col].append(math.nan)
                continue
            problem = _cell_range(col, v, cell.strip(), line)
            if problem:
                problems.append(problem)
            values[col].append(v)
    if problems:
        raise MonitoringError(problems)

    years_f = np.array(values["year"])
    years = years_f.astype(np.int64)
    line_arr = np.array(lines, dtype=np.int64)
    problems.extend(_sequence_problems(years, line_arr))
    if problems:
        raise MonitoringError(problems)
    if years.size < MIN_YEARS:
        span = (
            f"{years[0]}, line {line_arr[0]}"
            if years.size == 1
            else f"{years[0]}–{years[-1]}, lines {line_arr[0]}–{line_arr[-1]}"
        )
        raise MonitoringError(
            f"only {years.size} year{'s' if years.size != 1 else ''} of data ({span}); the fit needs at least "
            f"{MIN_YEARS} consecutive years"
        )
    load = np.array(values["load_kg"])
    tp = np.array(values["tp_ug_l"])
    secchi = np.array(values["secchi_m"]) if "secchi_m" in index else None
    chl = np.array(values["chl_ug_l"]) if "chl_ug_l" in index else None
    problems.extend(_unit_problems(load, tp, secchi, chl, header_line))
    if problems:
        raise MonitoringError(problems)
    return MonitoringSeries(
        years=years, load_kg_per_yr=load, tp_ug_l=tp, secchi_m=secchi, chl_ug_l=chl, lines=line_arr, notes=notes
    )


def _cell_range(col: str, v: float, cell: str, line: int) -> str | None:
    where = f"line {line}, column {col}"
    if col == "year":
        if v != math.floor(v):
            return f"{where}: {cell!r} is not a whole year; give the calendar year, such as 1998"
        if not _YEAR_RANGE[0] <= v <= _YEAR_RANGE[1]:
            return (
                f"{where}: {cell!r} is not a calendar year between {_YEAR_RANGE[0]} and {_YEAR_RANGE[1]}; "
                "give the full year, such as 1998"
            )
        return None
    if v < 0.0:
        return f"{where}: {cell!r} is negative; loads and concentrations are never below zero — check the sign"
    if col == "tp_ug_l" and v == 0.0:
        return (
            f"{where}: total phosphorus of 0 is not a measured lake value; give the measurement (or the "
            "detection limit) for that year"
        )
    if col == "secchi_m" and v == 0.0:
        return f"{where}: a Secchi depth of 0 m is not possible; give the measured depth or leave the cell empty"
    if col in _UPPER and v > _UPPER[col]:
        return f"{where}: {cell!r} is larger than any lake value ({_UPPER[col]:g}); check the unit and the digits"
    return None


def _sequence_problems(years: NDArray[np.int64], lines: NDArray[np.int64]) -> list[str]:
    problems: list[str] = []
    first_seen: dict[int, int] = {}
    for y, ln in zip(years.tolist(), lines.tolist(), strict=True):
        if y in first_seen:
            problems.append(
                f"line {ln}, column year: year {y} appears again (first on line {first_seen[y]}); give one row per "
                "year (average repeated measurements first)"
            )
        else:
            first_seen[y] = ln
    if problems:
        return problems
    for i in range(1, years.size):
        if years[i] < years[i - 1]:
            problems.append(
                f"line {lines[i]}, column year: year {years[i]} comes after {years[i - 1]} (line {lines[i - 1]}); "
                "sort the rows by year, oldest first"
            )
    if problems:
        return problems
    for i in range(1, years.size):
        gap = int(years[i] - years[i - 1])
        if gap > 1:
            missing = f"year {years[i - 1] + 1} is" if gap == 2 else f"years {years[i - 1] + 1}–{years[i] - 1} are"
            problems.append(
                f"line {lines[i]}, column year: {missing} missing between {years[i - 1]} (line {lines[i - 1]}) and "
                f"{years[i]}; the model steps one year at a time, so fill in the missing "
                f"year{'s' if gap > 2 else ''} or give only an unbroken run of years"
            )
    return problems


def _unit_problems(
    load: NDArray[np.float64],
    tp: NDArray[np.float64],
    secchi: NDArray[np.float64] | None,
    chl: NDArray[np.float64] | None,
    header_line: int,
) -> list[str]:
    problems = []
    where = f"line {header_line}"
    if float(np.max(tp)) < 1.0:
        problems.append(
            f"{where}, column tp_ug_l: every value is below 1 (largest {np.max(tp):.4g}); this looks like mg/L — "
            "multiply by 1000 to give µg/L"
        )
    elif float(np.min(tp)) > 10_000.0:
        problems.append(
            f"{where}, column tp_ug_l: every value is above 10000 (smallest {np.min(tp):.6g}), more than any lake "
            "holds in µg/L; this looks like ng/L — divide by 1000 to give µg/L"
        )
    elif float(np.ptp(tp)) == 0.0:
        problems.append(
            f"{where}, column tp_ug_l: every year has the same value ({tp[0]:g}); the fit needs the measured "
            "yearly means, not a filled-in constant"
        )
    positive = load[load > 0.0]
    if positive.size == 0:
        problems.append(f"{where}, column load_kg: every load is zero; give the external load for each year in kg")
    elif float(np.max(positive)) < 1.0:
        problems.append(
            f"{where}, column load_kg: every load is below 1 kg (largest {np.max(positive):.4g}); this looks like "
            "tonnes — multiply by 1000 to give kg"
        )
    if secchi is not None and np.any(np.isfinite(secchi)) and float(np.nanmax(secchi)) > 50.0:
        problems.append(
            f"{where}, column secchi_m: values up to {np.nanmax(secchi):.4g} are deeper than any lake's Secchi "
            "depth in metres; this looks like cm — divide by 100 to give m"
        )
    if chl is not None and np.any(np.isfinite(chl)) and 0.0 < float(np.nanmax(chl)) < 0.1:
        problems.append(
            f"{where}, column chl_ug_l: every value is below 0.1 (largest {np.nanmax(chl):.4g}); this looks like "
            "mg/L — multiply by 1000 to give µg/L"
        )
    return problems
