"""Sample-level monitoring files: the rules that make annual means, the reader, and the malformed-sample corpus."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from turnback.model.io.monitoring_csv import MonitoringError, parse_monitoring
from turnback.model.io.sample_csv import detect_format, parse_samples, read_record
from turnback.model.sample_means import SampleRules, SampleSet, annual_means, substitute_censored
from turnback.model.validation import FieldError

ROOT = Path(__file__).resolve().parents[2]
DEMO_SAMPLES = ROOT / "sample_data" / "amberlin_samples.csv"
DEMO_LOADS = ROOT / "sample_data" / "amberlin_loads.csv"
DEMO_ANNUAL = ROOT / "sample_data" / "amberlin_monitoring.csv"
CORPUS_DIR = ROOT / "tests" / "malformed" / "samples"
GOOD_LOADS = CORPUS_DIR / "loads" / "good_loads.csv"


def samples(rows: list[tuple[str, str, float, bool]], depth: list[float] | None = None) -> SampleSet:
    """A SampleSet from ``(date, site, value, censored)`` rows."""
    dates = [np.datetime64(d, "D") for d, _, _, _ in rows]
    return SampleSet(
        year=np.array([int(d.astype("datetime64[Y]").astype(int)) + 1970 for d in dates]),
        month=np.array([int(d.astype("datetime64[M]").astype(int)) % 12 + 1 for d in dates]),
        day_number=np.array([int(d.astype(int)) for d in dates]),
        value_ug_l=np.array([v for _, _, v, _ in rows]),
        censored=np.array([c for _, _, _, c in rows]),
        site=tuple(s for _, s, _, _ in rows),
        depth_m=np.array(depth if depth is not None else [math.nan] * len(rows)),
        lines=np.arange(2, len(rows) + 2),
    )


# --------------------------------------------------------------------------
# the rules, by hand
# --------------------------------------------------------------------------
def test_mean_of_site_means_and_its_standard_error() -> None:
    rows = [
        ("2001-05-10", "A", 10.0, False),
        ("2001-06-10", "A", 14.0, False),
        ("2001-07-10", "A", 12.0, False),
        ("2001-06-11", "B", 30.0, False),
        ("2001-08-11", "B", 34.0, False),
    ]
    am = annual_means(samples(rows))
    # Rule 4: mean of site means, (12 + 32)/2 = 22 (not the mean of the five samples, 20).
    assert am.tp_ug_l[0] == pytest.approx(22.0)
    # Rule 5: SE² = (v_A/n_A + v_B/n_B)/k² with sample variances v_A = 4, v_B = 8 (common practice, no source).
    assert am.se_ug_l[0] == pytest.approx(math.sqrt(4.0 / 3 + 8.0 / 2) / 2)
    assert am.n_samples[0] == 5 and am.n_sites[0] == 2 and not am.few_samples[0]
    assert am.se_log[0] == pytest.approx(am.se_ug_l[0] / 22.0)


def test_depth_profile_is_one_visit_and_season_and_depth_filters() -> None:
    rows = [
        ("2001-05-10", "A", 10.0, False),
        ("2001-05-10", "A", 20.0, False),  # same visit, 5 m: averaged with the surface sample (15)
        ("2001-06-10", "A", 17.0, False),
        ("2001-07-10", "A", 16.0, False),
        ("2001-08-10", "A", 14.0, False),
        ("2001-02-10", "A", 99.0, False),  # winter: outside the default May–October season
    ]
    am = annual_means(samples(rows, depth=[0.5, 5.0, 0.5, 0.5, 0.5, 0.5]))
    assert am.n_samples[0] == 4
    assert am.tp_ug_l[0] == pytest.approx((15.0 + 17.0 + 16.0 + 14.0) / 4)
    assert any("outside the growing season" in n for n in am.notes)
    shallow = annual_means(samples(rows, depth=[0.5, 5.0, 0.5, 0.5, 0.5, 0.5]), SampleRules(max_depth_m=2.0))
    assert shallow.tp_ug_l[0] == pytest.approx((10.0 + 17.0 + 16.0 + 14.0) / 4)
    winter = annual_means(samples(rows, depth=[0.5, 5.0, 0.5, 0.5, 0.5, 0.5]), SampleRules(season=(1, 12)))
    assert winter.n_samples[0] == 5


def test_few_samples_are_flagged_and_widened_by_the_stated_factor() -> None:
    rows = [(f"2001-0{m}-10", "A", v, False) for m, v in zip(range(5, 10), (10.0, 12.0, 14.0, 11.0, 13.0), strict=True)]
    rows += [("2002-06-10", "A", 20.0, False), ("2002-08-10", "A", 22.0, False)]
    am = annual_means(samples(rows))
    assert list(am.few_samples) == [False, True]
    # Rule 6: max(own, pooled) × sqrt(4/2); pooled CV from both site-years (weights n-1 = 4 and 1).
    c2 = (4 * np.var([10, 12, 14, 11, 13], ddof=1) / 12.0**2 + 1 * np.var([20, 22], ddof=1) / 21.0**2) / 5
    own = math.sqrt(np.var([20, 22], ddof=1) / 2)
    pooled = math.sqrt(c2) * 21.0 / math.sqrt(2)
    assert am.pooled_cv == pytest.approx(math.sqrt(c2))
    assert am.se_ug_l[1] == pytest.approx(max(own, pooled) * math.sqrt(4 / 2))
    assert any("fewer than 4 samples in 2002 (2)" in w for w in am.warnings)
    loose = annual_means(samples(rows), SampleRules(min_samples=2))
    assert not loose.few_samples.any() and loose.se_ug_l[1] == pytest.approx(own)


def test_censored_rule_follows_the_substitution_rule() -> None:
    # Substitution of one-half the detection limit (and its bounds, zero and the limit) as described by Helsel
    # (2012), Statistics for Censored Environmental Data Using Minitab and R, 2nd ed., on substitution methods
    # (from memory, not checked against the text): <4 counts as 2, as 4 or as 0.
    rows = [
        ("2001-05-10", "A", 10.0, False),
        ("2001-06-10", "A", 4.0, True),
        ("2001-07-10", "A", 20.0, False),
        ("2001-08-10", "A", 30.0, False),
    ]
    for rule, sub in (("half", 2.0), ("limit", 4.0), ("zero", 0.0)):
        am = annual_means(samples(rows), SampleRules(censored=rule))  # type: ignore[arg-type]
        assert am.tp_ug_l[0] == pytest.approx((10.0 + sub + 20.0 + 30.0) / 4), rule
        assert am.n_censored[0] == 1
    am = annual_means(samples(rows))
    assert any("1 of 4 samples" in w and "half the limit" in w for w in am.warnings)
    v = substitute_censored(np.array([4.0, 7.0]), np.array([True, False]), "half")
    assert list(v) == [2.0, 7.0]


def test_rules_refuse_nonsense() -> None:
    with pytest.raises(FieldError, match="season"):
        SampleRules(season=(10, 5))
    with pytest.raises(FieldError, match="censored"):
        SampleRules(censored="double")  # type: ignore[arg-type]
    with pytest.raises(FieldError, match="min_samples"):
        SampleRules(min_samples=0)
    only_winter = [("2001-01-10", "A", 10.0, False), ("2001-02-10", "A", 12.0, False)]
    with pytest.raises(FieldError, match="no sample falls in the growing season"):
        annual_means(samples(only_winter))


# --------------------------------------------------------------------------
# the reader
# --------------------------------------------------------------------------
def test_demo_sample_file_reads_into_annual_means_with_errors() -> None:
    s = read_record(DEMO_SAMPLES, DEMO_LOADS)
    annual = parse_monitoring(DEMO_ANNUAL)
    assert s.from_samples and s.n_years == 45
    assert list(s.years) == list(annual.years)
    assert np.array_equal(s.load_kg_per_yr, annual.load_kg_per_yr)
    # The invented samples scatter around the annual record's TP (sample_data/make_demo_samples.py):
    # the annual means come back within a few standard errors.
    z = (s.tp_ug_l - annual.tp_ug_l) / s.tp_se_ug_l
    assert np.mean(np.abs(z) < 3.0) > 0.95
    assert s.se_log is not None and 0.02 < float(np.median(s.se_log)) < 0.2
    assert list(s.years[s.few_samples]) == [1983, 1996]
    assert any("below the detection limit" in w for w in s.warnings)


def test_mg_per_l_column_and_load_column_give_the_same_record(tmp_path: Path) -> None:
    text = DEMO_SAMPLES.read_text().splitlines()
    loads = {int(y): v for y, v in (line.split(",") for line in DEMO_LOADS.read_text().splitlines()[1:])}
    mg = ["date,site,depth_m,tp_mg_l,load_kg"]
    for line in text[1:]:
        d, site, depth, tp = line.split(",")
        cell = f"<{float(tp[1:]) / 1000:g}" if tp.startswith("<") else f"{float(tp) / 1000:.4f}"
        mg.append(f"{d},{site},{depth},{cell},{loads[int(d[:4])]}")
    f = tmp_path / "mg.csv"
    f.write_text("\n".join(mg) + "\n")
    a = read_record(DEMO_SAMPLES, DEMO_LOADS)
    b = read_record(f)
    assert np.allclose(a.tp_ug_l, b.tp_ug_l, rtol=2e-3)
    assert np.array_equal(a.load_kg_per_yr, b.load_kg_per_yr)


def test_formats_are_told_apart_by_the_header() -> None:
    assert detect_format(DEMO_SAMPLES.read_bytes()) == "samples"
    assert detect_format(DEMO_ANNUAL.read_bytes()) == "annual"
    assert detect_format(b"\x00\x01binary") == "annual"
    annual = read_record(DEMO_ANNUAL)
    assert not annual.from_samples and annual.se_log is None
    assert np.array_equal(annual.tp_ug_l, parse_monitoring(DEMO_ANNUAL).tp_ug_l)
    with pytest.raises(MonitoringError, match="leave out the loads file"):
        read_record(DEMO_ANNUAL, DEMO_LOADS)
    with pytest.raises(MonitoringError, match="apply to sample files"):
        read_record(DEMO_ANNUAL, None, SampleRules(min_samples=2))


# --------------------------------------------------------------------------
# the malformed-sample corpus: one file per problem, the message each must give
# --------------------------------------------------------------------------
#: file -> (message fragment, loads file or None)
SAMPLE_CORPUS = {
    "unparseable_date.csv": ("line 8, column date: '12/08/2001' is not an ISO date; write it as YYYY-MM-DD", "good"),
    "impossible_date.csv": ("line 6, column date: '2001-02-30' is not a real date", "good"),
    "mixed_units.csv": ("line 1: the header has both tp_ug_l and tp_mg_l (mixed units); give TP in one column", "good"),
    "every_value_censored.csv": (
        "column tp_ug_l: every value in the growing season is below its detection limit",
        "good",
    ),
    "one_sample_a_year.csv": ("no site is sampled twice within any growing season", "good"),
    "loads_missing_for_sampled_years.csv": (
        "loads file: no load for 2006, 2007 (2 sampled years, first sampled on line 52 of the sample file); add a row",
        "short",
    ),
    "site_with_a_single_sample.csv": (
        "line 31, column site: site 'Nroth basin' has a single sample in the whole file",
        "good",
    ),
    "values_in_mg_per_l.csv": ("column tp_ug_l: every value is below 1 (largest 0.046); this looks like mg/L", "good"),
    "no_loads.csv": ("the sample file has no loads; give a loads file with the columns year,load_kg", None),
    "conflicting_loads_on_rows.csv": ("line 26, column load_kg: 999 differs from 302 given for 2003 on line 22", None),
    "censored_without_limit.csv": ("line 13, column tp_ug_l: '<' needs the detection limit after it", "good"),
    "year_without_samples.csv": (
        "line 42, column date: no growing-season samples in 2005, between 2004 and 2006",
        "good",
    ),
}


def loads_file(which: str | None) -> Path | None:
    return None if which is None else CORPUS_DIR / "loads" / f"{which}_loads.csv"


def test_sample_corpus_is_complete() -> None:
    files = sorted(p.name for p in CORPUS_DIR.glob("*.csv"))
    assert files == sorted(SAMPLE_CORPUS), "every sample corpus file needs its expected message here"


@pytest.mark.parametrize("name", sorted(SAMPLE_CORPUS))
def test_malformed_sample_file_gets_its_message(name: str) -> None:
    fragment, which = SAMPLE_CORPUS[name]
    path = CORPUS_DIR / name
    with pytest.raises(MonitoringError) as info:
        read_record(path, loads_file(which))
    message = str(info.value)
    assert fragment in message
    assert "\n" not in message and "Traceback" not in message
    with pytest.raises(MonitoringError) as again:  # the same from the uploaded bytes
        parse_samples(path.read_bytes(), None if which is None else loads_file(which).read_bytes())  # type: ignore[union-attr]
    assert str(again.value) == message


def test_the_corpus_base_is_a_good_file(tmp_path: Path) -> None:
    # The corpus files are a good file with one problem put in (make_sample_corpus.py); the good file reads.
    good = (CORPUS_DIR / "no_loads.csv").read_bytes()
    s = parse_samples(good, GOOD_LOADS.read_bytes())
    assert s.n_years == 12 and s.from_samples
