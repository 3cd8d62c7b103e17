"""Reading a lake file (JSON or TOML): the lake's profile and, optionally, its model parameters."""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

from ..params import LakeParameters, LakeProfile
from ..two_pool import TwoPoolParameters
from ..validation import within
from .files import read_bounded, read_json_file

__all__ = ["MAX_LAKE_BYTES", "load_lake_file", "load_profile_file"]

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
        malformed file (or one whose parameters are those of the two-pool lake).
    """
    profile, params = load_lake_file(path)
    if isinstance(params, TwoPoolParameters):
        raise ValueError(
            f"lake file {str(path)!r} holds two-pool parameters ('model = \"two-pool\"'); use it with --model two-pool"
        )
    return profile, params


def load_lake_file(path: str | Path) -> tuple[LakeProfile, LakeParameters | TwoPoolParameters | None]:
    """Read a lake file whose ``parameters`` table may be for either lake model.

    As :func:`load_profile_file`; a ``parameters`` table with
    ``model = "two-pool"`` holds the six two-pool parameters
    (``sedimentation``, ``outflow``, ``burial``, ``recycling_rate``,
    ``recycling_half``, ``recycling_exponent``), one with ``model =
    "one-box"`` or no ``model`` the four one-box parameters.
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
    params: LakeParameters | TwoPoolParameters | None = None
    if params_data is not None:
        if not isinstance(params_data, dict):
            raise ValueError("'parameters' in the lake file must be a table of the four model parameters")
        params_data = dict(params_data)
        model = params_data.pop("model", "one-box")
        with within("parameters"):
            if model == "two-pool":
                params = TwoPoolParameters.from_dict(params_data)
            elif model == "one-box":
                params = LakeParameters.from_dict(params_data)
            else:
                raise ValueError(f"parameters.model must be 'one-box' or 'two-pool'; got {model!r}")
    return profile, params
