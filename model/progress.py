"""Progress reports, cooperative cancel and random-number arguments shared by long computations.

One ``Progress`` type for the whole product: ``progress(fraction, message)``
with ``fraction`` in [0, 1] and a plain-words message.  Long runs (fits,
ensembles, the precautionary load) check ``cancel()`` between chunks of work
and raise :class:`RunCancelled` when it returns True.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TypeAlias

import numpy as np

__all__ = ["Cancel", "Progress", "RngLike", "RunCancelled", "check_cancel", "report", "scaled"]

Progress: TypeAlias = Callable[[float, str], None]
"""``progress(fraction, message)`` with ``fraction`` in [0, 1]."""
Cancel: TypeAlias = Callable[[], bool]
"""``cancel()`` returns True to stop the run (:class:`RunCancelled` is raised)."""
RngLike: TypeAlias = np.random.Generator | int | None
"""A seed, a generator, or None for fresh entropy."""


class RunCancelled(Exception):
    """Raised when the ``cancel`` hook of a run returns True."""


def report(progress: Progress | None, fraction: float, message: str) -> None:
    """Call ``progress`` (when given) with ``fraction`` clipped to [0, 1]."""
    if progress is not None:
        progress(min(max(fraction, 0.0), 1.0), message)


def scaled(progress: Progress | None, start: float, width: float, prefix: str = "") -> Progress | None:
    """A progress hook for a sub-task that covers ``[start, start + width]`` of the whole."""
    if progress is None:
        return None

    def sub(fraction: float, message: str) -> None:
        report(progress, start + width * fraction, f"{prefix}{message}")

    return sub


def check_cancel(cancel: Cancel | None) -> None:
    """Raise :class:`RunCancelled` when ``cancel()`` says so."""
    if cancel is not None and cancel():
        raise RunCancelled("the run was cancelled")
