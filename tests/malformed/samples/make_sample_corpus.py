"""Write the malformed sample-file corpus: one small file per problem (deterministic; no randomness).

Each file is a valid sample file for 2001–2012 (two sites, five visits a
growing season) with one problem put in.  Run from the repository root:
``.venv/bin/python tests/malformed/samples/make_sample_corpus.py``.
"""

from __future__ import annotations

from pathlib import Path

HERE = Path(__file__).resolve().parent
YEARS = range(2001, 2013)
SITES = ("North basin", "South basin")
MONTHS = (5, 6, 7, 8, 9)


def value(year: int, month: int, site: int) -> float:
    """A made-up TP [µg/L] with some scatter within the year."""
    return round(20.0 + 2.0 * (year - 2001) + (month - 7) * 1.5 * (1 if site == 0 else -1) + site, 1)


def rows(header: str = "date,site,tp_ug_l") -> list[str]:
    out = [header]
    for y in YEARS:
        for mo in MONTHS:
            for i, s in enumerate(SITES):
                out.append(f"{y}-{mo:02d}-1{i + 2},{s},{value(y, mo, i)}")
    return out


def write(name: str, lines: list[str]) -> None:
    (HERE / name).write_text("\n".join(lines) + "\n", encoding="utf-8")


def main() -> None:
    good = rows()
    r = list(good)
    r[7] = r[7].replace("2001-08-12", "12/08/2001")
    write("unparseable_date.csv", r)
    r = list(good)
    r[5] = r[5].replace("2001-07-12", "2001-02-30")
    write("impossible_date.csv", r)
    mg = [f"{float(x.split(',')[-1]) / 1000:.4f}" for x in good[1:]]
    write("mixed_units.csv", ["date,site,tp_ug_l,tp_mg_l"] + [f"{x},{v}" for x, v in zip(good[1:], mg, strict=True)])
    write("every_value_censored.csv", [good[0]] + [",".join([*x.split(",")[:2], "<5"]) for x in good[1:]])
    write("one_sample_a_year.csv", [good[0]] + [f"{y}-07-15,North basin,{value(y, 7, 0)}" for y in YEARS])
    write("loads_missing_for_sampled_years.csv", good)
    r = list(good)
    r.insert(30, "2003-07-20,Nroth basin,31.5")
    write("site_with_a_single_sample.csv", r)
    in_mg = [f"{x.rsplit(',', 1)[0]},{v}" for x, v in zip(good[1:], mg, strict=True)]
    write("values_in_mg_per_l.csv", [good[0], *in_mg])
    write("no_loads.csv", good)
    r = ["date,site,tp_ug_l,load_kg"]
    for x in good[1:]:
        r.append(f"{x},{300 + int(x[:4]) - 2001}")
    r[25] = r[25].rsplit(",", 1)[0] + ",999"
    write("conflicting_loads_on_rows.csv", r)
    r = list(good)
    r[12] = r[12].rsplit(",", 1)[0] + ",<"
    write("censored_without_limit.csv", r)
    write("year_without_samples.csv", [x for x in good if not x.startswith("2005-")])
    (HERE / "loads").mkdir(exist_ok=True)
    loads = ["year,load_kg"] + [f"{y},{300 + y - 2001}" for y in YEARS]
    (HERE / "loads" / "good_loads.csv").write_text("\n".join(loads) + "\n", encoding="utf-8")
    short = [x for x in loads if not x.startswith(("2006", "2007"))]
    (HERE / "loads" / "short_loads.csv").write_text("\n".join(short) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
