"""Checking what a user typed into the lake and model settings.

Pure: values in, a new lake (or nothing) and one message per field out.
The caller keeps the last valid lake when any field is wrong.
"""

from __future__ import annotations

import math
from typing import Any

from turnback.model.params import LakeParameters, LakeProfile

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


def _parse(name: str, raw: Any) -> tuple[float | None, str]:
    label, unit, lo, hi, lo_inclusive = FIELD_RULES[name]
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
        if name == "loss_rate":
            extra = " (the annual model needs a fraction of the lake's P lost per year, below 1)"
            return None, f"{label} must be greater than 0 and below 1{extra}."
        return None, f"{label} must be {bound} {lo:g} and below {hi:g} {unit}.".replace("  ", " ")
    return v, ""


def check_settings(values: dict[str, Any], name: str) -> tuple[LakeStore | None, dict[str, str]]:
    """Parse the settings; return the new lake (or None) and a message per field ('' when fine)."""
    parsed: dict[str, float] = {}
    messages: dict[str, str] = {}
    for field in FIELD_RULES:
        v, msg = _parse(field, values.get(field))
        messages[field] = msg
        if v is not None:
            parsed[field] = v
    if any(messages.values()):
        return None, messages
    params = LakeParameters(
        loss_rate=parsed["loss_rate"],
        recycling_max=parsed["recycling_max"],
        recycling_half=parsed["recycling_half"],
        recycling_exponent=parsed["recycling_exponent"],
    )
    profile = LakeProfile.from_depth(name, parsed["area_km2"], parsed["mean_depth_m"], parsed["load_kg_yr"])
    return lake_to_store(params, profile), messages
