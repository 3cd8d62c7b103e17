"""Reading a lake file (JSON or TOML): the lake's profile and, optionally, its model parameters."""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

from ..params import LakeParameters, LakeProfile
from ..validation import within
from .files import read_bounded, read_json_file

__all__ = ["MAX_LAKE_BYTES", "load_profile_file"]

#: Largest lake file read [bytes]: a lake profile is a few lines.
MAX_LAKE_BYTES = 1_000_000


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
    if p.suffix.lower() == ".toml":
        raw = read_bounded(path, MAX_LAKE_BYTES, "lake file")
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError:
            raise ValueError(f"lake file {str(path)!r} is not UTF-8 text; save it as UTF-8") from None
        try:
            data: Any = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise ValueError(f"lake file {str(path)!r} is not valid TOML: {exc}") from None
        except RecursionError:
            raise ValueError(f"lake file {str(path)!r} is nested too deeply to be a lake file") from None
    else:
        data = read_json_file(path, MAX_LAKE_BYTES, "lake file")
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
