"""Where a model error points, for the plans view: the one place that reads the model's messages.

The model's validation messages start with the field they are about
(``scenarios[1].load.percent must be between 0 and 100 [%]; got 120``).
:func:`field_of_error` reads that field as a path; every mapping from a
model error to a form field, a form label or a scenario goes through it, so
that when the model raises :class:`model.validation.FieldError` (which
carries ``.path`` and ``.reason``) only that function changes.  The
store's "database is locked" is recognised in :func:`store_busy` alone.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence

from turnback.model.scenario import Scenario
from turnback.model.validation import PathPart, path_text

_PATH = re.compile(r"[A-Za-z_]\w*(?:\[\d+\])*(?:\.[A-Za-z_]\w*(?:\[\d+\])*)*")
_PART = re.compile(r"([A-Za-z_]\w*)|\[(\d+)\]")


def field_of_error(exc: BaseException | str) -> tuple[tuple[PathPart, ...], str]:
    """The field a model error names, as a path (``("scenarios", 1, "load", "percent")``), and the reason.

    Read from the start of the message, up to the first space (so any first
    word that could be a name reads as one); a message that starts
    otherwise gives ``((), message)``.
    """
    text = str(exc)
    m = _PATH.match(text)
    if m is None or text[m.end() : m.end() + 1] not in (" ", ""):
        return (), text
    path = tuple(int(index) if index else name for name, index in _PART.findall(m.group()))
    return path, text[m.end() + 1 :]


def _join(head: str, reason: str) -> str:
    return f"{head} {reason}" if reason else head


def relabel(exc: BaseException | str, labels: Mapping[str, str]) -> str:
    """The message with the form's label for the model's field name (``labels``: field text -> label).

    A load table's ``kg_per_yr[i]`` becomes "Load of year i+1"; a message
    about another field is only capitalised.
    """
    path, reason = field_of_error(exc)
    field = path_text(path)
    if path and field in labels:
        return _join(labels[field], reason)
    if len(path) == 2 and path[0] == "kg_per_yr" and isinstance(path[1], int):
        return _join(f"Load of year {path[1] + 1}", reason)
    text = str(exc)
    return text[:1].upper() + text[1:]


def scenario_words(exc: BaseException | str, scenarios: Sequence[Scenario]) -> str:
    """A plan's error with the scenario named: ``scenarios[1].load…`` -> ``Scenario 'Cut': load…``."""
    path, reason = field_of_error(exc)
    if len(path) >= 2 and path[0] == "scenarios" and isinstance(path[1], int) and path[1] < len(scenarios):
        return f"Scenario {scenarios[path[1]].name!r}: " + path_text(path[2:]) + (f" {reason}" if reason else "")
    return str(exc)


def store_busy(exc: BaseException) -> bool:
    """Whether the store could not be opened only because another session holds it for a moment."""
    return "locked" in str(exc)
