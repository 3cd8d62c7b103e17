"""Reading a lake file (JSON or TOML): the lake's profile and, optionally, its model parameters."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from ..params import LakeParameters, LakeProfile
from ..validation import within

__all__ = ["load_profile_file"]


def load_profile_file(path: str | Path) -> tuple[LakeProfile, LakeParameters | None]:
    """Read a lake profile from a JSON or TOML file.

    The file holds the profile fields at the top level (``name``,
    ``area_km2``, ``volume_m3`` or ``mean_depth_m``, ``load_kg_yr``) and,
    optionally, a ``parameters`` table with the four model parameters.

    Raises
    ------
    ValueError
        With a message that says what to fix, for a missing, unreadable or
        malformed file.
    """
    p = Path(path)
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise ValueError(f"cannot read lake file {str(path)!r}: {exc.strerror or exc}") from None
    if len(raw) > 1_000_000:
        raise ValueError(f"lake file {str(path)!r} is larger than 1 MB; a lake profile is a few lines")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise ValueError(f"lake file {str(path)!r} is not UTF-8 text") from None
    data: Any
    if p.suffix.lower() == ".toml":
        import tomllib

        try:
            data = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise ValueError(f"lake file {str(path)!r} is not valid TOML: {exc}") from None
    else:
        try:
            data = json.loads(text)
        except json.JSONDecodeError as exc:
            raise ValueError(f"lake file {str(path)!r} is not valid JSON: {exc.msg} at line {exc.lineno}") from None
    if not isinstance(data, dict):
        raise ValueError(f"lake file {str(path)!r} must hold an object of lake profile fields")
    data = dict(data)
    params_data = data.pop("parameters", None)
    profile = LakeProfile.from_dict(data)
    params = None
    if params_data is not None:
        if not isinstance(params_data, dict):
            raise ValueError("'parameters' in the lake file must be a table of the four model parameters")
        with within("parameters"):
            params = LakeParameters.from_dict(params_data)
    return profile, params
