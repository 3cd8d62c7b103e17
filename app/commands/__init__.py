"""Subcommands of ``turnback``.

Every module in this package that defines ``add_parser(subparsers)`` and
``run(args) -> int`` is a subcommand; they are found here automatically,
so adding a command means adding one module.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
from types import ModuleType
from typing import Any


def _discover() -> tuple[ModuleType, ...]:
    found = []
    for info in sorted(pkgutil.iter_modules(__path__), key=lambda i: i.name):
        if info.name.startswith("_"):
            continue
        try:
            module = importlib.import_module(f"{__name__}.{info.name}")
        except ImportError as exc:  # one broken command must not take the others down
            found.append(_unavailable(info.name, exc))
            continue
        if hasattr(module, "add_parser") and hasattr(module, "run"):
            found.append(module)
    return tuple(found)


def _unavailable(name: str, exc: ImportError) -> ModuleType:
    """A stand-in command that says why the real one could not be loaded."""
    stub = ModuleType(f"{__name__}.{name}")

    def add_parser(sub: Any) -> None:
        p = sub.add_parser(name, help=f"(unavailable: {exc})", add_help=False)
        p.add_argument("rest", nargs=argparse.REMAINDER)
        p.set_defaults(run=run)

    def run(args: argparse.Namespace) -> int:
        raise ValueError(f"the '{name}' command could not be loaded ({exc}); reinstall with pip install -e .")

    stub.add_parser = add_parser  # type: ignore[attr-defined]
    stub.run = run  # type: ignore[attr-defined]
    return stub


COMMANDS = _discover()
