"""The hindcast study of bench/bench_warning_signs.py still runs (two records a lake; nothing is asserted of times)."""

from __future__ import annotations

import pytest

from bench.bench_warning_signs import main


def test_hindcast_bench_runs_tiny(capsys: pytest.CaptureFixture[str]) -> None:
    main(["2"])
    out = capsys.readouterr().out
    assert "fitted split vs true crossing" in out and "matched null" in out and "ratio" in out
