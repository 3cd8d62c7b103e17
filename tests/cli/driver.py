"""Run many command lines in one interpreter (what ``python -m turnback`` does, without its start-up each time)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path
from typing import Any

DRIVER = r"""
import contextlib, io, json, sys, traceback
from turnback.app.cli import main
cases = json.loads(sys.stdin.read())
out = []
for argv in cases:
    err, std = io.StringIO(), io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(std):
        try:
            rc = main(argv)
        except SystemExit as exc:
            rc = exc.code
        except BaseException:
            rc = "escaped"
            err.write(traceback.format_exc())
    out.append({"rc": rc, "stderr": err.getvalue(), "stdout": std.getvalue()})
print(json.dumps(out))
"""


def run_many(cases: list[list[str]], cwd: Path, env: dict[str, str] | None = None, timeout: float = 600) -> list[Any]:
    """Each command line's exit status, stdout and stderr, in order."""
    proc = subprocess.run(
        [sys.executable, "-c", DRIVER],
        input=json.dumps(cases),
        capture_output=True,
        text=True,
        timeout=timeout,
        cwd=cwd,
        env=env,
    )
    assert proc.returncode == 0, proc.stderr[-3000:]
    results: list[Any] = json.loads(proc.stdout)
    return results
