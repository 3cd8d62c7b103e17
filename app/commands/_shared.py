"""Pieces shared by the subcommands (not a command itself)."""

from __future__ import annotations

import argparse
import json
import math
from typing import Any

from turnback.model.validation import number_text


def number(text: str) -> float:
    """argparse type: a plain finite number (no separators, no words such as inf), or a one-line error."""
    try:
        return number_text(text)
    except ValueError as exc:
        reason = getattr(exc, "reason", str(exc))
        raise argparse.ArgumentTypeError(f"{text!r} {reason}") from None


def _finite(obj: Any) -> Any:
    """``obj`` with every non-finite float replaced by None (JSON has no NaN or infinity)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_finite(v) for v in obj]
    return obj


def print_json(obj: Any) -> None:
    """Print one strictly valid JSON object (a value that is not a finite number becomes null)."""
    print(json.dumps(_finite(obj), allow_nan=False, ensure_ascii=False))
