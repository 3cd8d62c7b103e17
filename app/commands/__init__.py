"""Subcommands of ``turnback``; each module has ``add_parser`` and ``run``."""

from __future__ import annotations

from . import analyze, serve

COMMANDS = (analyze, serve)
