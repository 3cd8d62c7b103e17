"""Pieces shared by the subcommands (not a command itself)."""

from __future__ import annotations

import argparse


def number(text: str) -> float:
    """argparse type: a float, or a one-line error naming the text."""
    try:
        return float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
