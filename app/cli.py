"""The ``turnback`` command line.

Each subcommand lives in its own module under :mod:`turnback.app.commands`
and provides ``add_parser(subparsers)`` and ``run(args) -> int``.  Bad input
exits with status 2 and a one-line message that says what to fix; no
traceback is ever shown, numerical warnings never reach the user, and a
closed output pipe (``turnback analyze --demo | head -1``) ends quietly.
"""

from __future__ import annotations

import argparse
import os
import re
import sys
import warnings
from collections.abc import Sequence
from typing import NoReturn

import numpy as np

from .commands import COMMANDS


class UsageError(Exception):
    """Bad input from the command line: exit 2 with this message."""


# Option values that are negative numbers, in any notation (-5, -0.5, -1e6, -.5E-3): argparse's own
# pattern misses exponents and would read "-1e6" as an unknown option.
_NEGATIVE_NUMBER = re.compile(r"^-(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")


class _Parser(argparse.ArgumentParser):
    """ArgumentParser that reports errors on one line, exits with status 2 and reads -1e6 as a number."""

    def __init__(self, *args: object, **kwargs: object) -> None:
        super().__init__(*args, **kwargs)  # type: ignore[arg-type]
        self._negative_number_matcher = _NEGATIVE_NUMBER

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


def _one_line(text: object) -> str:
    return " ".join(str(text).split())


def _quiet_stdout() -> None:
    """After a broken pipe: point stdout at /dev/null so the interpreter's final flush stays silent."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    try:
        with warnings.catch_warnings(), np.errstate(all="ignore"):
            warnings.simplefilter("ignore")
            code = int(args.run(args))
        sys.stdout.flush()
        return code
    except BrokenPipeError:
        _quiet_stdout()
        return 0
    except (UsageError, ValueError) as exc:
        print(f"turnback {args.command}: error: {_one_line(exc)}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return 130
    except Exception as exc:  # never show a traceback to a user
        print(f"turnback {args.command}: internal error: {type(exc).__name__}: {_one_line(exc)}", file=sys.stderr)
        return 1


def entry() -> None:
    """Console-script entry point."""
    sys.exit(main())


if __name__ == "__main__":  # pragma: no cover
    entry()
