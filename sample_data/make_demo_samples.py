r"""Generate the invented sample-level record of Lake Amberlin (a fictional lake) and its loads file.

Every number is made up for demonstration; no real lake is described.

The annual means of the invented annual record (``amberlin_monitoring.csv``,
made by ``make_demo_series.py``) are taken as the true growing-season mean
TP of each year.  Each year has visits to two sites, North basin and South
basin, in the months May–October, plus one winter visit in February (outside
the growing season, left out by the default rule); a few visits also sample
at 3 m depth.  Each sample is the true mean times a site factor (1.05 for the
North basin, 0.95 for the South basin) times lognormal scatter,
``exp(ε)``, ``ε ~ N(0, 0.25²)``.  Values below the detection limit (15 µg/L
until 1990, 2 µg/L after) are written ``<15`` or ``<2``.  In 1983 and 1996
only three growing-season visits were made, all to the North basin (flagged
by the default rule).

Writes ``amberlin_samples.csv`` (``date,site,depth_m,tp_ug_l``) and
``amberlin_loads.csv`` (``year,load_kg``) beside this script.  Run from the
repository root::

    .venv/bin/python sample_data/make_demo_samples.py
"""

from __future__ import annotations

import argparse
import csv
import math
import sys
from pathlib import Path

import numpy as np

SEED = 20260512
SCATTER_SD = 0.25
SITES = (("North basin", 1.05), ("South basin", 0.95))
FEW_VISIT_YEARS = (1983, 1996)
HERE = Path(__file__).resolve().parent


def annual_record(path: Path) -> list[tuple[int, float, float]]:
    """``(year, load_kg, tp_ug_l)`` of the invented annual record."""
    with path.open(encoding="utf-8", newline="") as fh:
        return [(int(r["year"]), float(r["load_kg"]), float(r["tp_ug_l"])) for r in csv.DictReader(fh)]


def make_samples(record: list[tuple[int, float, float]], seed: int = SEED) -> list[tuple[str, str, str, str]]:
    """Rows ``(date, site, depth_m, tp_ug_l)`` as text."""
    rng = np.random.default_rng(seed)
    rows: list[tuple[str, str, str, str]] = []
    for year, _, tp in record:
        limit = 15.0 if year <= 1990 else 2.0
        few = year in FEW_VISIT_YEARS
        months = [6, 8, 9] if few else [5, 6, 7, 8, 9, 10]
        visits = [(2, 14)] + [(m, int(rng.integers(3, 26))) for m in months]
        for month, day in visits:
            for site, factor in SITES[:1] if few else SITES:
                depths = [0.5, 3.0] if (month == 7 and site == "North basin") else [0.5]
                for depth in depths:
                    value = tp * factor * math.exp(rng.normal(0.0, SCATTER_SD))
                    cell = f"<{limit:g}" if value < limit else f"{value:.1f}"
                    rows.append((f"{year}-{month:02d}-{day:02d}", site, f"{depth:g}", cell))
    return rows


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Write the invented Lake Amberlin sample file and loads file.")
    parser.add_argument("--folder", default=str(HERE))
    args = parser.parse_args(argv)
    out = Path(args.folder)
    record = annual_record(HERE / "amberlin_monitoring.csv")
    lines = ["date,site,depth_m,tp_ug_l"] + [",".join(r) for r in make_samples(record)]
    (out / "amberlin_samples.csv").write_text("\n".join(lines) + "\n", encoding="utf-8", newline="")
    loads = ["year,load_kg"] + [f"{y},{ld:.1f}" for y, ld, _ in record]
    (out / "amberlin_loads.csv").write_text("\n".join(loads) + "\n", encoding="utf-8", newline="")
    return 0


if __name__ == "__main__":
    sys.exit(main())
