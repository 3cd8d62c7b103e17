"""Subcommands of ``turnback``.

Every module in this package that defines ``add_parser(subparsers)`` and
``run(args) -> int`` is a subcommand; they are found here automatically,
so adding a command means adding one module.
"""

from __future__ import annotations

import importlib
import pkgutil
from types import ModuleType


def _discover() -> tuple[ModuleType, ...]:
    found = []
    for info in sorted(pkgutil.iter_modules(__path__), key=lambda i: i.name):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        if hasattr(module, "add_parser") and hasattr(module, "run"):
            found.append(module)
    return tuple(found)


COMMANDS = _discover()
