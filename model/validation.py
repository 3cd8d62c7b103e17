"""One family of input checks, raising one structured error.

Every value that comes from outside (a plan file, a lake file, a form field,
a command-line option, a browser store) is checked here.  A bad value raises
:class:`FieldError`, a :class:`ValueError` that carries the *path* of the
field (``("scenarios", 1, "load", "percent")``) beside the reason
(``"must be between 0 and 100 [%]; got 120"``).  Its text is the one line a
user reads, ``scenarios[1].load.percent must be between 0 and 100 [%]; got
120``; the dashboard maps ``.path`` to the form field instead of parsing the
text.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import fields
from typing import Any, ClassVar, Self, cast

import numpy as np

__all__ = [
    "FieldError",
    "NumberFields",
    "finite_number",
    "known_keys",
    "mapping",
    "number",
    "number_text",
    "path_text",
    "range_text",
    "text",
    "whole",
    "within",
]

PathPart = str | int
Path = tuple[PathPart, ...]


def path_text(path: Sequence[PathPart]) -> str:
    """``("scenarios", 1, "load")`` → ``"scenarios[1].load"``."""
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            name = part if part.isprintable() and part.strip() == part and part else repr(part)
            out += f".{name}" if out else name
    return out


class FieldError(ValueError):
    """A bad input value: where it is (``path``) and what is wrong with it (``reason``).

    Parameters
    ----------
    path : sequence of str or int
        Keys and list indices from the top of the input to the field; empty
        for a problem with the input as a whole.
    reason : str
        What is wrong and what to give instead, starting with a verb
        ("must be …", "is required", "is not a known field; use …").
    """

    def __init__(self, path: Sequence[PathPart], reason: str) -> None:
        self.path: Path = tuple(path)
        self.reason = reason
        super().__init__(self.message)

    @property
    def field(self) -> str:
        """The dotted path, ``scenarios[1].load.percent``."""
        return path_text(self.path)

    @property
    def message(self) -> str:
        return f"{self.field} {self.reason}" if self.path else self.reason

    def __str__(self) -> str:
        return self.message

    def under(self, *prefix: PathPart) -> FieldError:
        """The same error seen from ``prefix`` (its path lengthened at the front)."""
        return FieldError((*prefix, *self.path), self.reason)


@contextmanager
def within(*prefix: PathPart) -> Iterator[None]:
    """Lengthen the path of every :class:`FieldError` raised inside by ``prefix``."""
    try:
        yield
    except FieldError as exc:
        raise exc.under(*prefix) from None


def _g(x: float) -> str:
    return f"{x:g}"


def range_text(lo: float | None, hi: float | None, lo_open: bool = False, hi_open: bool = False) -> str:
    """Words for an allowed range: ``between 0 and 100``, ``greater than 0``, …"""
    if lo is not None and hi is not None:
        if lo_open or hi_open:
            left = "greater than" if lo_open else "at least"
            right = "below" if hi_open else "at most"
            return f"{left} {_g(lo)} and {right} {_g(hi)}"
        return f"between {_g(lo)} and {_g(hi)}"
    if lo is not None:
        return f"greater than {_g(lo)}" if lo_open else f"at least {_g(lo)}"
    if hi is not None:
        return f"below {_g(hi)}" if hi_open else f"at most {_g(hi)}"
    return "a finite number"


def _shown(value: object) -> str:
    r = repr(value)
    return r if len(r) <= 40 else r[:37] + "..."


def _as_float(value: object) -> float | None:
    """A real number (not a bool) as a float, or None; huge integers give inf."""
    if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
        return None
    try:
        return float(value)
    except OverflowError:
        return math.inf


def number(
    value: object,
    path: Sequence[PathPart] = (),
    *,
    lo: float | None = None,
    hi: float | None = None,
    lo_open: bool = False,
    hi_open: bool = False,
    unit: str = "",
) -> float:
    """``value`` as a finite float within the range, or :class:`FieldError` at ``path``.

    Booleans, text and other types are refused (a JSON ``true`` is not 1).
    """
    rng = range_text(lo, hi, lo_open, hi_open)
    u = f" {unit}" if unit else ""
    v = _as_float(value)
    if v is None:
        kind = "a finite number" if lo is None and hi is None else f"a number ({rng})"
        raise FieldError(path, f"must be {kind}{u}; got {_shown(value)}")
    bad = not math.isfinite(v)
    if lo is not None and (v < lo or (lo_open and v == lo)):
        bad = True
    if hi is not None and (v > hi or (hi_open and v == hi)):
        bad = True
    if bad:
        raise FieldError(path, f"must be {rng}{u}; got {_shown(value)}")
    return v


def finite_number(value: object, path: Sequence[PathPart] = (), unit: str = "") -> float:
    """``value`` as a finite float of any sign."""
    return number(value, path, unit=unit)


def whole(value: object, path: Sequence[PathPart], lo: int, hi: int) -> int:
    """``value`` as an int in ``[lo, hi]`` (integral floats accepted), or :class:`FieldError`."""
    reason = f"must be a whole number between {lo} and {hi}; got {_shown(value)}"
    v = _as_float(value)
    if v is None or not math.isfinite(v) or v != math.floor(v) or not lo <= v <= hi:
        raise FieldError(path, reason)
    return int(v)


def text(value: object, path: Sequence[PathPart], max_len: int = 120, allow_empty: bool = False) -> str:
    """``value`` as printable text, stripped, at most ``max_len`` characters."""
    if not isinstance(value, str):
        raise FieldError(path, f"must be text; got {_shown(value)}")
    v = value.strip()
    if not v and not allow_empty:
        raise FieldError(path, "must not be empty")
    if len(v) > max_len:
        raise FieldError(path, f"must be at most {max_len} characters")
    if not v.isprintable():
        raise FieldError(path, "must be printable text (no line breaks or control characters)")
    return v


def mapping(value: object, path: Sequence[PathPart], what: str) -> Mapping[str, Any]:
    """``value`` as a mapping (a JSON object), or :class:`FieldError` saying what it should hold."""
    if not isinstance(value, Mapping):
        raise FieldError(path, f"must be an object ({what}); got {type(value).__name__}")
    for key in value:
        if not isinstance(key, str):
            raise FieldError(path, f"must have text keys; got {_shown(key)}")
    return value


def known_keys(
    data: Mapping[str, Any], path: Sequence[PathPart], required: Sequence[str], optional: Sequence[str] = ()
) -> None:
    """Refuse unknown keys and missing required keys of ``data``."""
    allowed = (*required, *optional)
    for key in data:
        if key not in allowed:
            raise FieldError((*path, key), f"is not a known field; use {', '.join(allowed)}")
    for key in required:
        if key not in data:
            raise FieldError((*path, key), "is required")


# Plain ASCII decimal numbers: no digit separators ("1_000", "1,000"), no
# non-ASCII digits, no "inf"/"nan" words.
_NUMBER = re.compile(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?", re.ASCII)


def number_text(
    raw: object,
    path: Sequence[PathPart] = (),
    *,
    lo: float | None = None,
    hi: float | None = None,
    lo_open: bool = False,
    hi_open: bool = False,
    unit: str = "",
) -> float:
    """A number typed as text (a form field, a command-line option, a CSV cell), checked strictly.

    Accepts plain decimal notation with an optional exponent; refuses digit
    separators, non-ASCII digits and words such as ``inf`` with a message
    that shows what to type.
    """
    if isinstance(raw, int | float) and not isinstance(raw, bool):
        return number(raw, path, lo=lo, hi=hi, lo_open=lo_open, hi_open=hi_open, unit=unit)
    s = "" if raw is None else str(raw).strip()
    if s == "":
        raise FieldError(path, "is empty: enter a number")
    if not _NUMBER.fullmatch(s):
        raise FieldError(
            path, f"is not a number: write a plain number such as 0.5 or 1200 (no separators or words); got {_shown(s)}"
        )
    return number(float(s), path, lo=lo, hi=hi, lo_open=lo_open, hi_open=hi_open, unit=unit)


class NumberFields:
    """JSON round trip for a frozen dataclass of named numbers (model parameters).

    ``from_dict`` refuses unknown and missing keys with a :class:`FieldError`
    naming them; the dataclass's own ``__post_init__`` checks the values.
    ``WHAT`` says what the fields are, for that message.
    """

    WHAT: ClassVar[str] = "the parameters"

    def to_dict(self) -> dict[str, float]:
        return {f.name: getattr(self, f.name) for f in fields(cast(Any, self))}

    @classmethod
    def from_dict(cls, data: object) -> Self:
        names = [f.name for f in fields(cast(Any, cls))]
        d = mapping(data, (), f"{cls.WHAT}: " + ", ".join(names))
        known_keys(d, (), names)
        return cls(**{n: d[n] for n in names})

    def to_json(self) -> str:
        return json.dumps(self.to_dict())

    @classmethod
    def from_json(cls, text: str) -> Self:
        return cls.from_dict(json.loads(text))
