"""``python -m turnback``: the same as the ``turnback`` command."""

from turnback.app.cli import entry

entry()
