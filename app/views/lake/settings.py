"""Checking what a user typed into the lake and model settings.

Pure: values in, a new lake (or nothing) and one message per field out.
The caller keeps the last valid lake when any field is wrong.  Two lake
models: the one-box lake (``FIELD_RULES``'s s, r, m, q) and the two-pool
lake (``TWO_POOL_RULES``: the water and its mud; the mud keeps feeding the
water); the profile fields belong to both.
"""

from __future__ import annotations

import math
from typing import Any

from turnback.model.params import LakeParameters, LakeProfile
from turnback.model.two_pool import TwoPoolParameters, map_limits_message

from ...stores import LakeStore, lake_to_store

#: field -> (label, unit, lower bound, upper bound, lower inclusive)
FIELD_RULES: dict[str, tuple[str, str, float, float, bool]] = {
    "loss_rate": ("Loss rate s", "per year", 0.0, 1.0, False),
    "recycling_max": ("Maximum recycling r", "kg per year", 0.0, 1e12, False),
    "recycling_half": ("Recycling half-saturation m", "kg", 0.0, 1e12, False),
    "recycling_exponent": ("Recycling exponent q", "", 0.0, 60.0, False),
    "area_km2": ("Surface area", "km²", 0.0, 1e6, False),
    "mean_depth_m": ("Mean depth", "m", 0.0, 2000.0, False),
    "load_kg_yr": ("Present-day load", "kg per year", 0.0, 1e12, True),
}

#: the one-box lake's own fields (the others are the profile, shared by both models)
ONE_BOX_FIELDS = ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")

#: two-pool field -> (label, unit, lower bound, upper bound, lower inclusive)
TWO_POOL_RULES: dict[str, tuple[str, str, float, float, bool]] = {
    "sedimentation": ("Sedimentation s (water P settling to the mud)", "per year", 0.0, 1.0, False),
    "outflow": ("Outflow h (water P flushed out)", "per year", 0.0, 1.0, True),
    "burial": ("Burial b (mud P buried for good)", "per year", 0.0, 1.0, False),
    "recycling_rate": ("Recycling rate r (most of the mud P released a year)", "per year", 0.0, 1.0, False),
    "recycling_half": ("Recycling half-saturation m", "kg", 0.0, 1e12, False),
    "recycling_exponent": ("Recycling exponent q", "", 0.0, 60.0, False),
}

#: the lake models offered: value -> label (the two-pool lake in plain words)
MODEL_OPTIONS = {
    "one-box": "One box: the lake's water alone",
    "two-pool": "Two pools: water and mud (the mud keeps feeding the water)",
}


def _parse(
    name: str, raw: Any, rules: dict[str, tuple[str, str, float, float, bool]] = FIELD_RULES
) -> tuple[float | None, str]:
    label, unit, lo, hi, lo_inclusive = rules[name]
    text = "" if raw is None else str(raw).strip().replace(",", "")
    if text == "":
        return None, f"{label}: enter a number."
    try:
        v = float(text)
    except ValueError:
        return None, f"{label}: '{raw}' is not a number; enter digits such as 0.5."
    if not math.isfinite(v):
        return None, f"{label}: enter a finite number."
    below = v < lo if lo_inclusive else v <= lo
    if below or v >= hi:
        bound = "at least" if lo_inclusive else "greater than"
        extra = ""
        if name == "loss_rate" and rules is FIELD_RULES:
            extra = " (the annual model needs a fraction of the lake's P lost per year, below 1)"
            return None, f"{label} must be greater than 0 and below 1{extra}."
        return None, f"{label} must be {bound} {lo:g} and below {hi:g} {unit}.".replace("  ", " ")
    return v, ""


def check_settings(values: dict[str, Any], name: str) -> tuple[LakeStore | None, dict[str, str]]:
    """Parse the one-box settings; return the new lake (or None) and a message per field ('' when fine)."""
    lake, messages, _ = check_model_settings("one-box", values, {}, name)
    return lake, messages


def check_model_settings(
    model: str, values: dict[str, Any], pool_values: dict[str, Any], name: str
) -> tuple[LakeStore | None, dict[str, str], dict[str, str]]:
    """Parse the settings of the chosen lake model.

    Returns the new lake (or None), a message per one-box and profile field
    and a message per two-pool field ('' when fine).  Only the chosen
    model's fields are checked; the other model's messages are ''.  A
    two-pool lake must fit the annual map (s + h ≤ 1, b + r ≤ 1); the
    message goes beside the outflow or the recycling rate.
    """
    parsed: dict[str, float] = {}
    messages: dict[str, str] = {f: "" for f in FIELD_RULES}
    pool_messages: dict[str, str] = {f: "" for f in TWO_POOL_RULES}
    two = model == "two-pool"
    for field in FIELD_RULES:
        if two and field in ONE_BOX_FIELDS:
            continue
        v, msg = _parse(field, values.get(field))
        messages[field] = msg
        if v is not None:
            parsed[field] = v
    pool: dict[str, float] = {}
    if two:
        for field in TWO_POOL_RULES:
            v, msg = _parse(field, pool_values.get(field), TWO_POOL_RULES)
            pool_messages[field] = msg
            if v is not None:
                pool[field] = v
    if any(messages.values()) or any(pool_messages.values()):
        return None, messages, pool_messages
    profile = LakeProfile.from_depth(name, parsed["area_km2"], parsed["mean_depth_m"], parsed["load_kg_yr"])
    if two:
        params2 = TwoPoolParameters(**pool)
        limit = map_limits_message(params2)
        if limit is not None:
            field = "outflow" if params2.s + params2.h > 1.0 else "recycling_rate"
            pool_messages[field] = limit[0].upper() + limit[1:] + "."
            return None, messages, pool_messages
        return lake_to_store(params2, profile), messages, pool_messages
    params = LakeParameters(
        loss_rate=parsed["loss_rate"],
        recycling_max=parsed["recycling_max"],
        recycling_half=parsed["recycling_half"],
        recycling_exponent=parsed["recycling_exponent"],
    )
    return lake_to_store(params, profile), messages, pool_messages
