"""The benchmarks still run (tiny sizes; no timing is asserted)."""

from __future__ import annotations

from bench.bench_latency import server_side


def test_latency_bench_server_side_runs() -> None:
    patch_ms, full_ms = server_side(n_changes=3, n_full=1)
    assert patch_ms > 0 and full_ms > 0
