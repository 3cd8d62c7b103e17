"""Reading a PLAN.json file (the format is described in the README and :mod:`turnback.model.plan`)."""

from __future__ import annotations

import json
from pathlib import Path

from ..plan import Plan

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
    p = Path(path)
    try:
        if p.is_dir():
            raise ValueError(f"plan file {str(path)!r} is a folder; give the PLAN.json file")
        raw = p.read_bytes()
    except OSError as exc:
        raise ValueError(f"cannot read plan file {str(path)!r}: {exc.strerror or exc}") from None
    if len(raw) > MAX_PLAN_BYTES:
        raise ValueError(f"plan file {str(path)!r} is larger than {MAX_PLAN_BYTES // 1_000_000} MB")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ValueError(f"plan file {str(path)!r} is not UTF-8 text") from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise ValueError(
            f"plan file {str(path)!r} is not valid JSON: {exc.msg} at line {exc.lineno} column {exc.colno}"
        ) from None
    except RecursionError:
        raise ValueError(f"plan file {str(path)!r} is nested too deeply to be a plan") from None
    return Plan.from_dict(data)
