"""The two-pool benchmark still runs its pieces (tiny sizes; no timing is asserted)."""

from __future__ import annotations

import numpy as np
from turnback.model.dynamics import simulate

from bench.bench_two_pool import P, analysis, continuation_peer, map_loop


def test_two_pool_bench_pieces_run_and_agree() -> None:
    analysis()
    assert continuation_peer() > 10
    loads = [380.0, 200.0, 500.0, 300.0]
    ref = map_loop(2000.0, 4000.0, loads)
    got = simulate(P, 2000.0, np.array(loads), m0=4000.0).p
    assert np.allclose(got, ref, rtol=1e-12)
