"""The ``turnback`` command line.

Each subcommand lives in its own module under :mod:`turnback.app.commands` and
provides ``add_parser(subparsers)`` and ``run(args) -> int``.  Bad input
exits with status 2 and a one-line message that says what to fix; no
traceback is ever shown.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from typing import NoReturn

from .commands import COMMANDS


class UsageError(Exception):
    """Bad input from the command line: exit 2 with this message."""


class _Parser(argparse.ArgumentParser):
    """ArgumentParser that reports errors on one line and exits with status 2."""

    def error(self, message: str) -> NoReturn:
        self.exit(2, f"{self.prog}: error: {message} (see {self.prog} --help)\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="turnback",
        description="Lake phosphorus hysteresis: equilibria, tipping and recovery loads, scenarios.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for module in COMMANDS:
        module.add_parser(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    try:
        return int(args.run(args))
    except (UsageError, ValueError) as exc:
        print(f"turnback {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return 130
    except Exception as exc:  # never show a traceback to a user
        print(f"turnback {args.command}: internal error: {type(exc).__name__}: {exc}", file=sys.stderr)
        return 1


def entry() -> None:
    """Console-script entry point."""
    sys.exit(main())


if __name__ == "__main__":  # pragma: no cover
    entry()
