"""The screening benchmark still runs (tiny sizes; no timing is asserted)."""

from __future__ import annotations

import pytest

from bench.bench_screen import bench_analysis, bench_fitted


@pytest.mark.slow
def test_screen_bench_runs_tiny(capsys: pytest.CaptureFixture[str]) -> None:
    bench_analysis(40, 2, with_cluster=False)
    bench_fitted(2, 100)
    out = capsys.readouterr().out
    assert "ratio peer/screen" in out and "peak memory" in out and "speed-up 1 -> 2 workers" in out
