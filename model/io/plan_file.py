"""Reading a PLAN.json file (the format is described in the README and :mod:`turnback.model.plan`)."""

from __future__ import annotations

from pathlib import Path

from ..plan import Plan
from .files import read_json_file

__all__ = ["MAX_PLAN_BYTES", "load_plan_file"]

#: Largest plan file read [bytes].
MAX_PLAN_BYTES = 20_000_000


def load_plan_file(path: str | Path) -> Plan:
    """Read and validate a PLAN.json file.

    Raises
    ------
    ValueError
        For a missing, unreadable, non-JSON or malformed plan; the message
        names the field to fix (``scenarios[1].load.percent must be between 0 and 100 [%]; got 120``).
    """
    return Plan.from_dict(read_json_file(path, MAX_PLAN_BYTES, "plan file"))
