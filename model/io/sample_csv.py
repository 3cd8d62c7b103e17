r"""Sample-level monitoring files: one row per water sample, and the loads that go with them.

File format
-----------
A comma-separated text file (UTF-8, or UTF-16 with a byte-order mark), one
header line and one row per sample::

    date,site,depth_m,tp_ug_l
    1998-05-12,North basin,0.5,31.2
    1998-05-12,North basin,4.0,<5
    1998-06-09,South basin,0.5,28.0

=========  ========  ===========================================================
column     needed    meaning
=========  ========  ===========================================================
date       yes       sampling date, ISO ``YYYY-MM-DD``
tp_ug_l    one of    total phosphorus [µg L⁻¹]; ``<X`` is below the detection
tp_mg_l    the two   limit ``X``.  ``tp_mg_l`` is in mg L⁻¹ (converted ×1000).
site       no        site name (default: one site)
depth_m    no        sample depth [m] (empty cells allowed)
load_kg    no        the year's external load [kg yr⁻¹], on at least one row
                     of each year (instead of a loads file)
=========  ========  ===========================================================

The loads come from a second file (``year,load_kg``, one row per year) or
from the ``load_kg`` column.  Annual means and their standard errors follow
the rules of :mod:`turnback.model.sample_means`.  Every problem gets one
line naming the file line and column and what to fix
(:class:`~turnback.model.io.monitoring_csv.MonitoringError`).

:func:`read_record` reads either format: a header with a ``date`` column is
a sample file, anything else goes to the annual reader
(:func:`~turnback.model.io.monitoring_csv.parse_monitoring`).
"""

from __future__ import annotations

import csv
import datetime as dt
import difflib
import io
import math
import os
import re
from typing import Literal

import numpy as np

from ..record import MonitoringSeries
from ..sample_means import SampleRules, SampleSet, annual_means
from ..validation import FieldError
from .files import FileTooLarge, read_bounded
from .monitoring_csv import MIN_YEARS, MonitoringError, _cell_number, _decode, parse_monitoring

__all__ = [
    "MAX_SAMPLE_BYTES",
    "MAX_SAMPLE_ROWS",
    "detect_format",
    "parse_loads",
    "parse_samples",
    "read_record",
]

#: Largest accepted sample file [bytes] (8 MB).
MAX_SAMPLE_BYTES = 8_000_000
#: Most sample rows.
MAX_SAMPLE_ROWS = 200_000
#: Largest loads file [bytes].
MAX_LOADS_BYTES = 2_000_000

Source = bytes | bytearray | memoryview | str | os.PathLike[str]
_HINT = "date,tp_ug_l (or tp_mg_l), optionally site,depth_m,load_kg"
_LOADS_HINT = "year,load_kg"
_ISO = re.compile(r"^\d{4}-\d{2}-\d{2}$")
_EPOCH = dt.date(1970, 1, 1)


def _raw(source: Source, limit: int, what: str) -> bytes:
    if isinstance(source, bytes | bytearray | memoryview):
        raw = bytes(source)
        if len(raw) > limit:
            raise MonitoringError(f"the {what} is {len(raw) / 1e6:.1f} MB, larger than the {limit / 1e6:.0f} MB limit")
        return raw
    if isinstance(source, str | os.PathLike):
        try:
            return read_bounded(source, limit, what)
        except FileTooLarge as exc:
            raise MonitoringError(
                f"the {what} is {exc.size / 1e6:.1f} MB, larger than the {limit / 1e6:.0f} MB limit"
            ) from None
        except ValueError as exc:
            raise MonitoringError(str(exc)) from None
    raise TypeError(f"expected bytes or a file path; got {type(source).__name__}")


def _rows(text: str, max_rows: int, prefix: str = "") -> tuple[list[str], int, list[tuple[int, list[str]]]]:
    """Header, its line, and the data rows with their lines (blank and ``#`` lines skipped)."""
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
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
                continue
            rows.append((line, row))
            if len(rows) > max_rows:
                raise MonitoringError(f"{prefix}line {line}: more than {max_rows:,} data rows; check the file")
    except csv.Error as exc:
        raise MonitoringError(
            f"{prefix}line {last + 1}: the CSV cannot be read ({exc}); check the quotation marks on that line"
        ) from None
    if header is None:
        raise MonitoringError(f"{prefix}the file is empty; it needs a header line and one row per entry below it")
    if len(header) == 1:
        for sep, name in ((";", "semicolons"), ("\t", "tabs"), ("|", "vertical bars")):
            if sep in header[0]:
                raise MonitoringError(
                    f"{prefix}line {header_line}: the columns are separated by {name}, not commas; save the file "
                    "as comma-separated CSV"
                )
    return header, header_line, rows


def _names(header: list[str]) -> list[str]:
    return [h.strip().strip('"').strip().lower().replace(" ", "_") for h in header]


def detect_format(raw: bytes) -> Literal["annual", "samples"]:
    """``"samples"`` when the header line names a ``date`` column, else ``"annual"``.

    Unreadable bytes count as annual, so that the annual reader's messages
    (binary data, a workbook, …) apply.
    """
    try:
        text = _decode(raw)
    except MonitoringError:
        return "annual"
    for line in text.splitlines():
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        return "samples" if "date" in _names(line.split(",")) else "annual"
    return "annual"


# --------------------------------------------------------------------------
# cells
# --------------------------------------------------------------------------
def _date(cell: str, line: int) -> dt.date | str:
    where = f"line {line}, column date"
    c = cell.strip().strip('"').strip()
    if c == "":
        return f"{where} is empty; give the sampling date as YYYY-MM-DD"
    if not _ISO.match(c):
        return f"{where}: {c!r} is not an ISO date; write it as YYYY-MM-DD (for example 2001-05-12)"
    try:
        d = dt.date.fromisoformat(c)
    except ValueError:
        return f"{where}: {c!r} is not a real date (no such day in that month); check the day and the month"
    if not 1800 <= d.year <= 2200:
        return f"{where}: {c!r} is outside the years 1800–2200; check the year"
    return d


def _tp(cell: str, line: int, col: str) -> tuple[float, bool] | str:
    """The value and whether it is censored (``<X``), or a problem message."""
    where = f"line {line}, column {col}"
    c = cell.strip().strip('"').strip()
    censored = c.startswith("<")
    if censored:
        c = c[1:].strip()
        if c == "":
            return f"{where}: '<' needs the detection limit after it, such as <5"
    v = _cell_number(c, line, col)
    if isinstance(v, str):
        return v
    if v < 0.0:
        return f"{where}: {cell.strip()!r} is negative; concentrations are never below zero — check the sign"
    if v == 0.0:
        return (
            f"{where}: total phosphorus of 0 is not a measured value; write a value below the detection limit "
            "as <X with X the limit"
        )
    return v, censored


def _header(names: list[str], line: int) -> tuple[dict[str, int], str] | str:
    seen: dict[str, int] = {}
    for i, n in enumerate(names):
        if n and n in seen:
            return f"line {line}: column {n!r} appears twice in the header (columns {seen[n] + 1} and {i + 1})"
        seen[n] = i
    has_ug, has_mg = "tp_ug_l" in seen, "tp_mg_l" in seen
    if has_ug and has_mg:
        return (
            f"line {line}: the header has both tp_ug_l and tp_mg_l (mixed units); give TP in one column, in one "
            "unit — convert mg/L to µg/L by multiplying by 1000, or keep only tp_mg_l"
        )
    if not (has_ug or has_mg):
        close = difflib.get_close_matches("tp_ug_l", [n for n in names if n], n=1, cutoff=0.5)
        hint = f"; is {close[0]!r} meant to be 'tp_ug_l'? rename it" if close else ""
        return f"line {line}: the sample file has no TP column: name it tp_ug_l (µg/L) or tp_mg_l (mg/L){hint}"
    return seen, ("tp_ug_l" if has_ug else "tp_mg_l")


# --------------------------------------------------------------------------
# loads
# --------------------------------------------------------------------------
def parse_loads(source: Source) -> dict[int, tuple[float, int]]:
    """Read a loads file (``year,load_kg``, one row per year): ``{year: (load [kg yr⁻¹], line)}``.

    Raises
    ------
    MonitoringError
        Messages start with ``loads file:`` and name the line and column.
    """
    pre = "loads file: "
    try:
        text = _decode(_raw(source, MAX_LOADS_BYTES, "loads file"))
    except MonitoringError as exc:
        raise MonitoringError(pre + str(exc)) from None
    if text.strip() == "":
        raise MonitoringError(f"{pre}the file is empty; it needs the header {_LOADS_HINT} and one row per year")
    header, hline, rows = _rows(text, 5000, pre)
    names = _names(header)
    idx = {n: i for i, n in enumerate(names) if n}
    missing = [c for c in ("year", "load_kg") if c not in idx]
    if missing:
        raise MonitoringError(
            f"{pre}line {hline}: the header has no column {missing[0]!r} (it must name {_LOADS_HINT})"
        )
    out: dict[int, tuple[float, int]] = {}
    problems: list[str] = []
    for line, row in rows:
        if len(row) != len(header):
            problems.append(f"{pre}line {line} has {len(row)} fields but the header has {len(header)} columns")
            continue
        y = _cell_number(row[idx["year"]], line, "year")
        v = _cell_number(row[idx["load_kg"]], line, "load_kg")
        if isinstance(y, str) or isinstance(v, str):
            problems.extend(pre + m for m in (y, v) if isinstance(m, str))
            continue
        if y != math.floor(y) or not 1800 <= y <= 2200:
            problems.append(f"{pre}line {line}, column year: {row[idx['year']].strip()!r} is not a calendar year")
            continue
        if v < 0.0:
            problems.append(f"{pre}line {line}, column load_kg: {v:g} is negative; loads are never below zero")
            continue
        if int(y) in out:
            problems.append(
                f"{pre}line {line}, column year: year {int(y)} appears again (first on line {out[int(y)][1]}); "
                "give one row per year"
            )
            continue
        out[int(y)] = (v, line)
    if problems:
        raise MonitoringError(problems)
    if not out:
        raise MonitoringError(f"{pre}the file has a header (line {hline}) but no rows; add one row per year")
    positive = [v for v, _ in out.values() if v > 0]
    if positive and max(positive) < 1.0:
        raise MonitoringError(
            f"{pre}line {hline}, column load_kg: every load is below 1 kg (largest {max(positive):.4g}); this looks "
            "like tonnes — multiply by 1000 to give kg"
        )
    return out


# --------------------------------------------------------------------------
# samples
# --------------------------------------------------------------------------
def parse_samples(
    source: Source,
    loads: Source | None = None,
    rules: SampleRules | None = None,
) -> MonitoringSeries:
    """Read a sample-level monitoring file and its loads into an annual record with standard errors.

    Parameters
    ----------
    source : bytes or path
        The sample file (bytes as uploaded, or a path).
    loads : bytes or path, optional
        The loads file (``year,load_kg``).  Without it the sample file must
        carry a ``load_kg`` column.
    rules : SampleRules, optional
        Season, detection-limit rule, fewest samples, deepest sample.

    Returns
    -------
    MonitoringSeries
        Annual means [µg L⁻¹] with ``tp_se_ug_l``, ``n_samples``,
        ``few_samples``; loads [kg yr⁻¹]; notes and warnings.

    Raises
    ------
    MonitoringError
        Naming the line and column and what to fix: dates that are not ISO
        or not real, mixed units, censored values everywhere, one sample a
        year, loads missing for sampled years, a site with a single sample,
        and the problems the annual reader also finds.
    """
    text = _decode(_raw(source, MAX_SAMPLE_BYTES, "monitoring file"))
    if text.strip() == "":
        raise MonitoringError(f"the file is empty; it needs the header {_HINT} and one row per sample")
    header, hline, rows = _rows(text, MAX_SAMPLE_ROWS)
    names = _names(header)
    got = _header(names, hline)
    if isinstance(got, str):
        raise MonitoringError(got)
    idx, tp_col = got
    if not rows:
        raise MonitoringError(f"the file has a header (line {hline}) but no rows; add one row per sample")
    known = {"date", "tp_ug_l", "tp_mg_l", "site", "depth_m", "load_kg"}
    notes = [f"ignored column {n!r}" for n in names if n and n not in known]
    has_site, has_depth, has_load = "site" in idx, "depth_m" in idx, "load_kg" in idx
    if loads is not None and has_load:
        raise MonitoringError(
            f"line {hline}: the loads are given twice, in a loads file and in the load_kg column; give them once"
        )
    scale = 1000.0 if tp_col == "tp_mg_l" else 1.0

    problems: list[str] = []
    years, months, days, values, cens, sites, depths, lines = [], [], [], [], [], [], [], []
    row_loads: dict[int, list[tuple[float, int]]] = {}
    for line, row in rows:
        if len(row) != len(header):
            problems.append(
                f"line {line} has {len(row)} field{'s' if len(row) != 1 else ''} but the header has {len(header)} "
                "columns; check for missing or extra commas"
            )
            continue
        d = _date(row[idx["date"]], line)
        tv = _tp(row[idx[tp_col]], line, tp_col)
        site = row[idx["site"]].strip().strip('"').strip() if has_site else ""
        depth = math.nan
        if has_depth and row[idx["depth_m"]].strip() != "":
            dv = _cell_number(row[idx["depth_m"]], line, "depth_m")
            if isinstance(dv, str):
                problems.append(dv)
            elif dv < 0.0 or dv > 2000.0:
                problems.append(f"line {line}, column depth_m: {dv:g} is not a sample depth in metres (0–2000)")
            else:
                depth = dv
        if has_site and site == "":
            problems.append(f"line {line}, column site is empty; name the site (or leave out the site column)")
        for p in (d, tv):
            if isinstance(p, str):
                problems.append(p)
        if isinstance(d, str) or isinstance(tv, str):
            continue
        if has_load and row[idx["load_kg"]].strip() != "":
            lv = _cell_number(row[idx["load_kg"]], line, "load_kg")
            if isinstance(lv, str):
                problems.append(lv)
            elif lv < 0.0:
                problems.append(f"line {line}, column load_kg: {lv:g} is negative; loads are never below zero")
            else:
                row_loads.setdefault(d.year, []).append((lv, line))
        years.append(d.year)
        months.append(d.month)
        days.append((d - _EPOCH).days)
        values.append(tv[0] * scale)
        cens.append(tv[1])
        sites.append(site)
        depths.append(depth)
        lines.append(line)
    if problems:
        raise MonitoringError(problems)
    vals = np.array(values)
    raw_vals = vals / scale
    if tp_col == "tp_ug_l" and float(np.max(raw_vals)) < 1.0:
        raise MonitoringError(
            f"line {hline}, column tp_ug_l: every value is below 1 (largest {np.max(raw_vals):.4g}); this looks like "
            "mg/L — name the column tp_mg_l, or multiply by 1000"
        )
    if tp_col == "tp_mg_l" and float(np.min(raw_vals)) > 10.0:
        raise MonitoringError(
            f"line {hline}, column tp_mg_l: every value is above 10 mg/L (smallest {np.min(raw_vals):.4g}), more "
            "than any lake holds; this looks like µg/L — name the column tp_ug_l"
        )
    if has_site:
        _check_sites(sites, lines)
    samples = SampleSet(
        year=np.array(years, dtype=np.int64),
        month=np.array(months, dtype=np.int64),
        day_number=np.array(days, dtype=np.int64),
        value_ug_l=vals,
        censored=np.array(cens, dtype=bool),
        site=tuple(sites),
        depth_m=np.array(depths, dtype=float),
        lines=np.array(lines, dtype=np.int64),
    )
    try:
        am = annual_means(samples, rules)
    except FieldError as exc:
        where = f"line {hline}, column {tp_col if exc.path == ('tp',) else 'date'}"
        raise MonitoringError(f"{where}: {exc.reason}") from None
    _check_years(am.years, am.first_line, am.n_samples)
    load = _year_loads(am.years, am.first_line, loads, row_loads, has_load, hline)
    return MonitoringSeries(
        years=am.years,
        load_kg_per_yr=load,
        tp_ug_l=am.tp_ug_l,
        lines=am.first_line,
        notes=tuple(notes) + am.notes,
        tp_se_ug_l=am.se_ug_l,
        n_samples=am.n_samples,
        few_samples=am.few_samples,
        warnings=am.warnings,
    )


def _check_sites(sites: list[str], lines: list[int]) -> None:
    counts: dict[str, int] = {}
    first: dict[str, int] = {}
    for s, ln in zip(sites, lines, strict=True):
        counts[s] = counts.get(s, 0) + 1
        first.setdefault(s, ln)
    if len(counts) < 2:
        return
    lonely = [s for s, c in counts.items() if c == 1]
    problems = []
    for s in lonely:
        others = [o for o in counts if o != s and counts[o] > 1]
        close = difflib.get_close_matches(s, others, n=1, cutoff=0.6)
        hint = f"is it {close[0]!r}?" if close else f"the other sites are {', '.join(repr(o) for o in others[:4])}"
        problems.append(
            f"line {first[s]}, column site: site {s!r} has a single sample in the whole file, so it cannot have a "
            f"site mean with a scatter; check the spelling ({hint}) or leave the row out"
        )
    if problems:
        raise MonitoringError(problems)


def _check_years(years: np.ndarray, first_line: np.ndarray, n: np.ndarray) -> None:
    problems = []
    for i in range(1, years.size):
        gap = int(years[i] - years[i - 1])
        if gap > 1:
            missing = f"{years[i - 1] + 1}" if gap == 2 else f"{years[i - 1] + 1}–{years[i] - 1}"
            problems.append(
                f"line {first_line[i]}, column date: no growing-season samples in {missing}, between {years[i - 1]} "
                f"and {years[i]}; the model steps one year at a time, so give samples for every year or only an "
                "unbroken run of years"
            )
    if problems:
        raise MonitoringError(problems)
    if years.size < MIN_YEARS:
        raise MonitoringError(
            f"only {years.size} year{'s' if years.size != 1 else ''} with growing-season samples "
            f"({years[0]}–{years[-1]}, from line {first_line[0]}); the fit needs at least {MIN_YEARS} consecutive years"
        )


def _year_loads(
    years: np.ndarray,
    first_line: np.ndarray,
    loads: Source | None,
    row_loads: dict[int, list[tuple[float, int]]],
    has_load: bool,
    hline: int,
) -> np.ndarray:
    out = np.empty(years.size)
    if loads is not None:
        table = parse_loads(loads)
        missing = [(int(y), int(ln)) for y, ln in zip(years, first_line, strict=True) if int(y) not in table]
        if missing:
            listed = ", ".join(str(y) for y, _ in missing[:8]) + (" …" if len(missing) > 8 else "")
            raise MonitoringError(
                f"loads file: no load for {listed} ({len(missing)} sampled year{'s' if len(missing) != 1 else ''}, "
                f"first sampled on line {missing[0][1]} of the sample file); add a row year,load_kg for each sampled "
                "year"
            )
        for i, y in enumerate(years):
            out[i] = table[int(y)][0]
    elif has_load:
        problems = []
        for i, (y, ln) in enumerate(zip(years, first_line, strict=True)):
            given = row_loads.get(int(y), [])
            if not given:
                problems.append(
                    f"line {ln}, column load_kg: no load for {int(y)}; give the year's load on at least one of its rows"
                )
                continue
            v0, l0 = given[0]
            for v, lv in given[1:]:
                if v != v0:
                    problems.append(
                        f"line {lv}, column load_kg: {v:g} differs from {v0:g} given for {int(y)} on line {l0}; give "
                        "each year's load once, or the same on every row"
                    )
                    break
            out[i] = v0
        if problems:
            raise MonitoringError(problems)
    else:
        raise MonitoringError(
            f"line {hline}: the sample file has no loads; give a loads file with the columns {_LOADS_HINT} (one row "
            "per year; on the command line --loads LOADS.csv) or a load_kg column on the sample rows"
        )
    positive = out[out > 0.0]
    if positive.size == 0:
        raise MonitoringError("every load is zero; give the external load for each year in kg")
    return out


def read_record(
    source: Source,
    loads: Source | None = None,
    rules: SampleRules | None = None,
) -> MonitoringSeries:
    """Read a monitoring record in either format (the header decides).

    A header with a ``date`` column is a sample file (:func:`parse_samples`);
    otherwise the annual reader (:func:`~turnback.model.io.monitoring_csv.parse_monitoring`)
    reads it, and ``loads`` and ``rules`` must not be given.
    """
    raw = _raw(source, MAX_SAMPLE_BYTES, "monitoring file")
    if detect_format(raw) == "samples":
        return parse_samples(raw, loads, rules)
    if loads is not None:
        raise MonitoringError(
            "this is an annual monitoring file (one row a year with load_kg): its loads are in the file, so leave out "
            "the loads file (--loads)"
        )
    if rules is not None and rules != SampleRules():
        raise MonitoringError(
            "the season, detection-limit and sample-count rules apply to sample files (a date column); this is an "
            "annual file"
        )
    return parse_monitoring(raw)
