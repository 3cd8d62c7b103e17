"""Property tests of every reader: whatever bytes or JSON values come in, the answer is a result or one
``ValueError`` that says what to fix, never another exception (common practice, no source)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st
from turnback.model.io.files import loads_strict
from turnback.model.io.lake_file import load_profile_file
from turnback.model.io.plan_file import load_plan_file
from turnback.model.io.region_csv import read_region
from turnback.model.params import LakeParameters, LakeProfile
from turnback.model.plan import Plan

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])

json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=20),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=12), inner, max_size=4),
    max_leaves=25,
)
PLAN_KEYS = [
    "lake",
    "scenarios",
    "description",
    "name",
    "years",
    "load",
    "kind",
    "kg_per_yr",
    "percent",
    "loss_rate",
    "recycling_max",
    "recycling_half",
    "recycling_exponent",
    "volume_m3",
    "initial_tp_ug_l",
]
plan_like = st.recursive(
    st.none()
    | st.booleans()
    | st.integers(min_value=-(10**30), max_value=10**30)
    | st.floats()
    | st.sampled_from(["constant", "linear_cut", "step", "table", "removal", "inactivation", "separatrix", ""]),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.sampled_from(PLAN_KEYS), inner, max_size=6),
    max_leaves=30,
)


def _only_value_errors(fn: Any, *args: Any) -> None:
    try:
        fn(*args)
    except ValueError as exc:
        assert str(exc).strip() and "\n" not in str(exc).strip()


@SETTINGS
@given(st.text(max_size=300))
def test_strict_json_reads_or_says_why(text: str) -> None:
    _only_value_errors(loads_strict, text, "the file")


@SETTINGS
@given(plan_like)
def test_plan_from_any_json_value(value: Any) -> None:
    _only_value_errors(Plan.from_dict, value)


@SETTINGS
@given(json_values)
@example({"0\n": 1})  # an unknown key with a line break: the message stays one line
def test_lake_parts_from_any_json_value(value: Any) -> None:
    _only_value_errors(LakeProfile.from_dict, value)
    _only_value_errors(LakeParameters.from_dict, value)


@SETTINGS
@given(st.binary(max_size=400))
def test_plan_file_from_any_bytes(tmp_path_factory: Any, raw: bytes) -> None:
    path = Path(tmp_path_factory.mktemp("plan")) / "PLAN.json"
    path.write_bytes(raw)
    _only_value_errors(load_plan_file, path)


@SETTINGS
@given(st.binary(max_size=400), st.sampled_from(["lake.json", "lake.toml"]))
def test_lake_file_from_any_bytes(tmp_path_factory: Any, raw: bytes, name: str) -> None:
    path = Path(tmp_path_factory.mktemp("lake")) / name
    path.write_bytes(raw)
    _only_value_errors(load_profile_file, path)


@SETTINGS
@given(
    st.dictionaries(
        st.sampled_from(["name", "area_km2", "volume_m3", "mean_depth_m", "load_kg_yr", "parameters"]),
        json_values,
        max_size=6,
    )
)
def test_lake_file_from_any_json_object(tmp_path_factory: Any, obj: dict[str, Any]) -> None:
    path = Path(tmp_path_factory.mktemp("lakej")) / "lake.json"
    path.write_text(json.dumps(obj))
    _only_value_errors(load_profile_file, path)


LAKES_HEAD = "lake_id,name,volume_m3,area_km2,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent\n"
cells = st.sampled_from(["", "1", "0", "-1", "1e6", "nan", "abc", "1_000", "2500", "4", "0.5", "\u0661", '"x,y"'])


@SETTINGS
@given(st.lists(st.lists(cells, min_size=0, max_size=11), max_size=6))
def test_region_file_from_csv_like_rows(tmp_path_factory: Any, rows: list[list[str]]) -> None:
    path = Path(tmp_path_factory.mktemp("region")) / "LAKES.csv"
    path.write_text(LAKES_HEAD + "\n".join(",".join(r) for r in rows) + "\n")
    _only_value_errors(read_region, path)
