"""Validation, JSON round trips and unit conversions of the lake objects."""

from __future__ import annotations

import math

import pytest
from turnback.model.io.lake_file import load_profile_file
from turnback.model.params import DimensionlessLake, LakeParameters, LakeProfile

GOOD = {"loss_rate": 0.5, "recycling_max": 1800.0, "recycling_half": 2500.0, "recycling_exponent": 4.0}


@pytest.mark.parametrize("field", list(GOOD))
@pytest.mark.parametrize("bad", [0.0, -1.0, math.nan, math.inf, -math.inf, "abc", None])
def test_parameters_reject_bad_values_naming_the_field(field: str, bad: object) -> None:
    values = dict(GOOD, **{field: bad})
    with pytest.raises(ValueError, match=field):
        LakeParameters(**values)  # type: ignore[arg-type]


def test_parameters_message_gives_allowed_range() -> None:
    with pytest.raises(ValueError, match="greater than 0"):
        LakeParameters(**dict(GOOD, recycling_exponent=-2))


def test_parameters_round_trip_json_and_are_frozen() -> None:
    p = LakeParameters(**GOOD)
    assert LakeParameters.from_json(p.to_json()) == p
    with pytest.raises(AttributeError):
        p.loss_rate = 1.0  # type: ignore[misc]


def test_parameters_from_dict_names_missing_fields() -> None:
    with pytest.raises(ValueError, match="recycling_half"):
        LakeParameters.from_dict({"loss_rate": 1, "recycling_max": 1, "recycling_exponent": 2})


def test_dimensionless_round_trip() -> None:
    # b = s m / r (Carpenter, Ludwig & Brock 1999, Ecol. Appl. 9:751).
    p = LakeParameters(**GOOD)
    d = p.to_dimensionless()
    assert d.b == pytest.approx(0.5 * 2500 / 1800, rel=1e-15)
    back = d.to_parameters(recycling_max=1800.0, recycling_half=2500.0)
    assert back.loss_rate == pytest.approx(p.loss_rate, rel=1e-15)
    with pytest.raises(ValueError, match="b"):
        DimensionlessLake(b=-1, q=2)


def test_profile_unit_conversions() -> None:
    # 1 kg in 1e6 m³ = 1e9 µg / 1e9 L = 1 µg/L; 1 kg/yr over 1 km² = 1 mg/m²/yr (common practice, no source).
    prof = LakeProfile(name="Test", area_km2=1.0, volume_m3=1.0e6, load_kg_per_yr=10.0)
    assert prof.concentration(1.0) == pytest.approx(1.0)
    assert prof.mass(prof.concentration(1234.5)) == pytest.approx(1234.5)
    assert prof.areal_load(1.0) == pytest.approx(1.0)
    assert prof.load_from_areal(prof.areal_load(77.0)) == pytest.approx(77.0)
    deep = LakeProfile.from_depth("Deep", area_km2=2.0, mean_depth_m=5.0, load_kg_per_yr=0.0)
    assert deep.volume_m3 == pytest.approx(1.0e7)
    assert deep.mean_depth_m == pytest.approx(5.0)
    assert LakeProfile.from_json(deep.to_json()) == deep


@pytest.mark.parametrize(
    "data, fragment",
    [
        ({"name": "", "area_km2": 1, "volume_m3": 1, "load_kg_yr": 1}, "name"),
        ({"name": "x", "area_km2": -1, "volume_m3": 1, "load_kg_yr": 1}, "area_km2"),
        ({"name": "x", "area_km2": 1, "volume_m3": 1, "load_kg_yr": -5}, "load_kg_yr"),
        ({"name": "x", "area_km2": 1, "load_kg_yr": 1}, "volume_m3 or mean_depth_m"),
        ({"name": "x", "area_km2": 1, "volume_m3": 1, "mean_depth_m": 1, "load_kg_yr": 1}, "not both"),
        ({"name": "x", "area_km2": 1, "volume_m3": 1, "load_kg_yr": 1, "colour": 3}, "colour is not a known field"),
    ],
)
def test_profile_rejects_bad_fields(data: dict, fragment: str) -> None:
    with pytest.raises(ValueError, match=fragment):
        LakeProfile.from_dict(data)


def test_profile_file_json_and_toml(tmp_path) -> None:
    j = tmp_path / "lake.json"
    j.write_text(
        '{"name": "Pond", "area_km2": 1, "mean_depth_m": 3, "load_kg_yr": 50,'
        ' "parameters": {"loss_rate": 0.5, "recycling_max": 100, "recycling_half": 80, "recycling_exponent": 3}}'
    )
    prof, params = load_profile_file(j)
    assert prof.volume_m3 == pytest.approx(3e6) and params is not None and params.q == 3
    t = tmp_path / "lake.toml"
    t.write_text('name = "Pond"\narea_km2 = 1\nvolume_m3 = 2e6\nload_kg_yr = 50\n')
    prof2, params2 = load_profile_file(t)
    assert prof2.volume_m3 == 2e6 and params2 is None
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    with pytest.raises(ValueError, match="not valid JSON"):
        load_profile_file(bad)
    with pytest.raises(ValueError, match="cannot read"):
        load_profile_file(tmp_path / "missing.json")
