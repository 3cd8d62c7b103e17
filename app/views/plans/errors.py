"""Where a model error points, for the plans view.

The model raises :class:`turnback.model.validation.FieldError`, which
carries the field's path (``("scenarios", 1, "load", "percent")``) and the
reason (``must be between 0 and 100 [%]; got 120``).  Every mapping from a
model error to a form field, a form label or a scenario goes through
:func:`field_of_error`; the store being busy is
:class:`turnback.model.io.store.StoreBusy`.  No message text is parsed.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from turnback.model.io.store import StoreBusy
from turnback.model.plan import Scenario
from turnback.model.validation import FieldError, PathPart, path_text


def field_of_error(exc: BaseException | str) -> tuple[tuple[PathPart, ...], str]:
    """The field a model error names, as a path (``("scenarios", 1, "load", "percent")``), and the reason.

    Any other error (or plain text) gives ``((), message)``.
    """
    if isinstance(exc, FieldError):
        return exc.path, exc.reason
    return (), str(exc)


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
    return isinstance(exc, StoreBusy)
