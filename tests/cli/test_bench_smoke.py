"""The benchmarks still run (tiny sizes; no timing is asserted)."""

from __future__ import annotations

from bench.bench_latency import server_side


def test_latency_bench_server_side_runs() -> None:
    patch_ms, full_ms = server_side(n_changes=3, n_full=1)
    assert patch_ms > 0 and full_ms > 0


def test_fit_bench_times_the_observation_error_fit() -> None:
    from bench.bench_fit import observation_error_times

    times = observation_error_times(runs=1, draws=100, warm_up=False)
    assert set(times) == {"old", "new, SE from samples", "new, SE estimated"}
    assert all(t > 0 for t in times.values())
