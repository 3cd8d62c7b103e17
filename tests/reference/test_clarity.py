"""Clarity and trophic state from TP: Carlson (1977), Carlson & Simpson (1996), OECD (1982), WHO (2003)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from turnback.model.clarity import (
    OECD_CLASSES,
    chl_from_tsi,
    clarity,
    clarity_series,
    expected_chl,
    expected_secchi,
    oecd_class_chl,
    oecd_class_secchi,
    oecd_class_tp,
    secchi_from_tsi,
    tsi_chl,
    tsi_class,
    tsi_secchi,
    tsi_tp,
    who_caution,
)
from turnback.model.clarity_observed import compare_observed

# --------------------------------------------------------------------------
# Carlson (1977), A trophic state index for lakes, Limnol. Oceanogr. 22:361-369, table of
# TSI against Secchi depth, TP and chlorophyll (values from memory; the TP and Secchi columns
# agree with secondary sources).  The table prints rounded values (two significant figures),
# so the formulas are compared with 1 % relative tolerance (0.1 TSI units the other way).
# --------------------------------------------------------------------------
CARLSON_ROWS = [  # TSI, Secchi [m], TP [µg/L]
    (40.0, 4.0, 12.0),
    (50.0, 2.0, 24.0),
    (60.0, 1.0, 48.0),
    (70.0, 0.5, 96.0),
]


@pytest.mark.parametrize("tsi, sd, tp", CARLSON_ROWS)
def test_carlson_table_secchi_and_tp(tsi: float, sd: float, tp: float) -> None:
    # Carlson (1977) table, rounded: 1 % tolerance
    assert secchi_from_tsi(tsi) == pytest.approx(sd, rel=0.01)
    assert math.exp((tsi - 4.15) / 14.42) == pytest.approx(tp, rel=0.01)
    assert tsi_secchi(sd) == pytest.approx(tsi, abs=0.1)
    assert tsi_tp(tp) == pytest.approx(tsi, abs=0.1)
    # TSI equivalence: the table's TP gives (nearly) the table's Secchi depth of the same row
    assert expected_secchi(tp) == pytest.approx(sd, rel=0.01)


@pytest.mark.parametrize("tsi, chl", [(40.0, 2.6), (60.0, 20.0), (70.0, 56.0)])
def test_carlson_table_chlorophyll_rows_that_follow_the_formula(tsi: float, chl: float) -> None:
    # Carlson (1977) table chlorophyll, rounded to two figures: 1 % tolerance
    assert chl_from_tsi(tsi) == pytest.approx(chl, rel=0.01)


def test_carlson_chlorophyll_at_tsi_50_follows_the_formula_not_the_printed_table() -> None:
    # Carlson (1977) prints 6.4 µg/L at TSI 50, but his own formula TSI = 9.81 ln Chl + 30.6 puts 6.4 µg/L
    # at TSI 48.8 and gives 7.23 µg/L at TSI 50 (hand calculation: exp(19.4/9.81)).  More than rounding
    # separates them; we follow the formula and do not test against the printed 6.4.
    assert tsi_chl(6.4) == pytest.approx(48.8, abs=0.05)
    assert chl_from_tsi(50.0) == pytest.approx(math.exp(19.4 / 9.81), rel=1e-12)
    assert chl_from_tsi(50.0) == pytest.approx(7.23, abs=0.01)


def test_carlson_formulas_at_unit_values() -> None:
    # Carlson (1977) formulas at ln 1 = 0: the constants themselves
    assert tsi_secchi(1.0) == 60.0
    assert tsi_chl(1.0) == pytest.approx(30.6, abs=1e-12)
    assert tsi_tp(1.0) == pytest.approx(4.15, abs=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=0.01, max_value=5000.0))
def test_tsi_equivalence_route(tp: float) -> None:
    # The route: TSI(TP) first, then the Chl and SD with the same TSI (Carlson 1977 formulas)
    t = tsi_tp(tp)
    assert tsi_chl(expected_chl(tp)) == pytest.approx(t, abs=1e-9)
    assert tsi_secchi(expected_secchi(tp)) == pytest.approx(t, abs=1e-9)
    est = clarity(tp)
    assert (est.tsi_tp, est.chl_ug_l, est.secchi_m) == pytest.approx((t, expected_chl(tp), expected_secchi(tp)))


def test_vector_functions_match_scalars() -> None:
    tp = np.array([[2.0, 10.0, 35.0], [60.0, 100.0, 400.0]])
    ser = clarity_series(tp)
    assert ser.tsi_tp.shape == tp.shape and ser.oecd_class.shape == tp.shape
    for idx in np.ndindex(tp.shape):
        est = clarity(float(tp[idx]))
        assert ser.tsi_tp[idx] == pytest.approx(est.tsi_tp, rel=1e-14)
        assert ser.chl_ug_l[idx] == pytest.approx(est.chl_ug_l, rel=1e-14)
        assert ser.secchi_m[idx] == pytest.approx(est.secchi_m, rel=1e-14)
        assert ser.oecd_class[idx] == est.oecd_class
        assert ser.tsi_class[idx] == est.tsi_class
        assert ser.who_level[idx] == est.who.level
    np.testing.assert_allclose(tsi_tp(tp), ser.tsi_tp)
    np.testing.assert_allclose(expected_secchi(tp), ser.secchi_m)
    assert list(oecd_class_tp(tp[0])) == list(ser.oecd_class[0])
    assert isinstance(tsi_tp(3.0), float) and isinstance(oecd_class_tp(3.0), str)


# --------------------------------------------------------------------------
# Carlson & Simpson (1996) bands as documented: <40, [40, 50), [50, 70), >=70
# (the 40/50/70 cut points checked against secondary sources citing that guide)
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "tsi, name",
    [
        (10.0, "oligotrophic"),
        (39.999, "oligotrophic"),
        (40.0, "mesotrophic"),
        (49.999, "mesotrophic"),
        (50.0, "eutrophic"),
        (69.999, "eutrophic"),
        (70.0, "hypertrophic"),
        (95.0, "hypertrophic"),
    ],
)
def test_tsi_bands(tsi: float, name: str) -> None:
    assert tsi_class(tsi) == name


# --------------------------------------------------------------------------
# OECD (1982) fixed boundary system, annual means (Vollenweider & Kerekes), as reproduced by the
# Soil & Water Conservation Society of Metro Halifax: TP <=4, <=10, 10-35, 35-100, >=100 µg/L;
# Chl <=1, <=2.5, 2.5-8, 8-25, >=25 µg/L; SD >=12, >=6, 6-3, 3-1.5, <=1.5 m.  The table's
# overlapping middle edge (35, 8, 3) goes to the less enriched class, as documented in model.clarity.
# --------------------------------------------------------------------------
ULTRA, OLIGO, MESO, EU, HYPER = OECD_CLASSES


@pytest.mark.parametrize(
    "tp, name",
    [
        (1.0, ULTRA),
        (4.0, ULTRA),  # "<= 4"
        (4.000001, OLIGO),
        (10.0, OLIGO),  # "<= 10"
        (10.000001, MESO),
        (20.0, MESO),
        (35.0, MESO),  # overlap "10-35" / "35-100": less enriched class
        (35.000001, EU),
        (99.9999, EU),
        (100.0, HYPER),  # ">= 100"
        (500.0, HYPER),
    ],
)
def test_oecd_tp_boundaries(tp: float, name: str) -> None:
    assert oecd_class_tp(tp) == name
    assert clarity(tp).oecd_class == name


@pytest.mark.parametrize(
    "chl, name",
    [
        (0.5, ULTRA),
        (1.0, ULTRA),
        (1.000001, OLIGO),
        (2.5, OLIGO),
        (2.500001, MESO),
        (8.0, MESO),
        (8.000001, EU),
        (24.9999, EU),
        (25.0, HYPER),
        (80.0, HYPER),
    ],
)
def test_oecd_chlorophyll_boundaries(chl: float, name: str) -> None:
    assert oecd_class_chl(chl) == name


@pytest.mark.parametrize(
    "sd, name",
    [
        (20.0, ULTRA),
        (12.0, ULTRA),  # ">= 12"
        (11.9999, OLIGO),
        (6.0, OLIGO),  # ">= 6"
        (5.9999, MESO),
        (3.0, MESO),  # overlap "6-3" / "3-1.5": less enriched class
        (2.9999, EU),
        (1.500001, EU),
        (1.5, HYPER),  # "<= 1.5"
        (0.3, HYPER),
    ],
)
def test_oecd_secchi_boundaries(sd: float, name: str) -> None:
    assert oecd_class_secchi(sd) == name


def test_oecd_classes_over_arrays() -> None:
    got = oecd_class_tp(np.array([4.0, 10.0, 35.0, 100.0]))
    assert list(got) == [ULTRA, OLIGO, MESO, HYPER]


# --------------------------------------------------------------------------
# WHO (2003) Guidelines for safe recreational water environments, Vol. 1, ch. 8: chlorophyll-a
# 10 µg/L (low probability of adverse effects) and 50 µg/L (moderate), cyanobacteria dominant.
# Levels checked against the US EPA summary of that table.
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "chl, level, guidance",
    [
        (2.0, "below_guidance", None),
        (9.999, "below_guidance", None),
        (10.0, "low_probability", 10.0),
        (49.999, "low_probability", 10.0),
        (50.0, "moderate_probability", 50.0),
        (300.0, "moderate_probability", 50.0),
    ],
)
def test_who_levels(chl: float, level: str, guidance: float | None) -> None:
    c = who_caution(chl)
    assert c.level == level and c.guidance_ug_l == guidance
    assert "local health advisories" in c.text
    assert "safe" not in c.text.lower()  # never says the water is safe
    if level == "below_guidance":
        assert "implies nothing" in c.text
    else:
        assert f"{guidance:g} µg/L" in c.text and "cyanobacteria" in c.text


def test_estimate_carries_the_caution_and_a_sentence() -> None:
    est = clarity(35.0)
    assert est.who.level == "low_probability"  # expected chl 12.6 µg/L >= 10
    s = est.sentence
    assert s.startswith("Expected summer Secchi depth about 1.4 m")
    assert "eutrophic" in s and "Carlson TSI 55" in s and "OECD class mesotrophic" in s
    assert est.to_dict() == {
        "tsi_tp": est.tsi_tp,
        "chl_ug_l": est.chl_ug_l,
        "secchi_m": est.secchi_m,
        "oecd_class": "mesotrophic",
        "tsi_class": "eutrophic",
    }
    assert clarity(500.0).notes == ()
    assert "outside Carlson's 0-100 scale" in clarity(0.5).notes[0]


# --------------------------------------------------------------------------
# observed against expected
# --------------------------------------------------------------------------
def test_compare_observed_on_the_line_gives_zero_deviation() -> None:
    tp = np.array([12.0, 24.0, 48.0])
    c = compare_observed(tp, secchi_m=expected_secchi(tp), chl_ug_l=expected_chl(tp))
    np.testing.assert_allclose(c.secchi_ratio, 1.0, rtol=1e-12)
    np.testing.assert_allclose(c.chl_minus_tp, 0.0, atol=1e-9)
    np.testing.assert_allclose(c.secchi_minus_tp, 0.0, atol=1e-9)
    assert any("about what the phosphorus" in n for n in c.notes)


def test_compare_observed_reads_deviations() -> None:
    # Carlson's deviation reading (Carlson & Simpson 1996, via a state agency summary; from memory):
    # turbid for its algae -> non-algal turbidity; low chl for its TP -> something else limits algae.
    c = compare_observed([40.0, 40.0], secchi_m=[0.4, 0.5], chl_ug_l=[5.0, 6.0])
    assert np.all(c.secchi_ratio < 1.0)
    assert np.all(c.chl_minus_tp < -5.0)
    text = " ".join(c.notes)
    assert "other than phosphorus" in text and "non-algal" in text
    # Secchi deviation in TSI units is 14.41 ln(expected/observed) (Carlson 1977 formula)
    assert c.secchi_minus_tp[0] == pytest.approx(14.41 * math.log(c.expected_secchi_m[0] / 0.4), rel=1e-12)


def test_compare_observed_keeps_missing_values_missing() -> None:
    c = compare_observed([20.0, np.nan, 30.0], secchi_m=[2.0, 1.5, np.nan])
    assert np.isnan(c.secchi_ratio[1]) and np.isnan(c.secchi_ratio[2]) and np.isfinite(c.secchi_ratio[0])
    assert np.all(np.isnan(c.chl_ratio))
    with pytest.raises(ValueError, match="secchi_m"):
        compare_observed([20.0, 30.0], secchi_m=[2.0, 0.0])
    with pytest.raises(ValueError, match="same length"):
        compare_observed([20.0, 30.0], secchi_m=[2.0, 1.0, 3.0])


# --------------------------------------------------------------------------
# bad input
# --------------------------------------------------------------------------
@pytest.mark.parametrize("bad", [0.0, -3.0, math.nan, math.inf, "abc", None])
def test_bad_tp_raises_value_error_naming_the_field(bad: object) -> None:
    with pytest.raises(ValueError, match="tp_ug_l"):
        clarity(bad)  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="tp_ug_l"):
        tsi_tp(bad)  # type: ignore[arg-type]


def test_bad_entry_in_a_series_is_named() -> None:
    with pytest.raises(ValueError, match="entry 2"):
        clarity_series([5.0, 10.0, -1.0])
    with pytest.raises(ValueError, match="between"):
        clarity(1e7)
    with pytest.raises(ValueError, match="one TP value"):
        clarity([1.0, 2.0])  # type: ignore[arg-type]


def test_us_customary_factors_are_the_nist_definitions() -> None:
    from turnback.model import units

    # NIST Special Publication 811 (2008), Guide for the Use of the International System of Units, appendix B
    # (exact conversion factors): 1 lb = 0.45359237 kg, 1 ft = 0.3048 m, 1 acre = 4046.8564224 m²,
    # 1 acre-ft = 1233.48183754752 m³ (from memory; the acre and acre-foot on the survey-foot basis as tabulated).
    assert units.KG_PER_LB == 0.45359237
    assert units.M_PER_FT == 0.3048
    assert units.M2_PER_ACRE == 4046.8564224
    assert units.M3_PER_ACRE_FT == 1233.48183754752
    assert units.M3_PER_ACRE_FT / units.M2_PER_ACRE == pytest.approx(units.M_PER_FT, rel=1e-12)  # one foot deep
