"""Benchmark: screening a region on Dask, against per-lake loops and one worker, in one run.

1. **Analysis only.**  10,000 invented lakes with given parameters (regimes
   mixed: reversible, hysteretic, irreversible) in a LAKES.csv.  Product:
   ``turnback screen LAKES.csv --json`` as a user runs it (a subprocess:
   start-up, reading the file, screening, the JSON), once as it is (so
   little work runs in the command's own process) and once with
   ``--workers 2`` (a ``LocalCluster`` of two worker processes), each with
   the peak memory of the whole process tree
   (the sum of the resident set sizes of the command and its workers,
   sampled every 20 ms: an upper bound, shared pages count twice).  Peer: a
   per-lake loop in this process over
   :func:`turnback.model.equilibrium.analyze` with today's load, the engine
   call ``turnback analyze`` makes (its lakes already in memory).  The peer's
   fold loads must equal the product's.  Goals: ≤ 30 s and ≤ 500 MB on two
   cores.
2. **Fitted.**  200 lakes without parameters, each fitted with a 200-replicate
   bootstrap (their records are the demo region's records-only lakes, in
   turn), on a ``LocalCluster`` of two workers against one worker; the
   clusters are started before the clock starts (start-up is printed
   apart).  The two runs must agree lake for lake.  Goal: near-linear
   speed-up.

Prints times, ratios and memory.  Not a CI gate; never asserts a time.
Run: ``.venv/bin/python -m bench.bench_screen`` (``--lakes``, ``--fitted``,
``--replicates`` for other sizes).
"""

from __future__ import annotations

import argparse
import json
import logging
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import psutil
from distributed import Client, LocalCluster
from turnback.model.distributed import screen_on_client
from turnback.model.equilibrium import analyze, cusp_b, irreversible_b
from turnback.model.io.region_csv import read_region
from turnback.model.params import LakeParameters
from turnback.model.screening import RegionLake, ScreenResult

REGION = Path(__file__).resolve().parent.parent / "sample_data" / "region"
HEADER = "lake_id,name,volume_m3,area_km2,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent"


def invented_lakes(n: int, seed: int = 7) -> list[tuple[str, float, float, LakeParameters]]:
    """``n`` invented lakes: (id, volume [m³], today's load [kg yr⁻¹], parameters), regimes mixed."""
    rng = np.random.default_rng(seed)
    out = []
    for i in range(n):
        q = float(rng.uniform(1.5, 8.0))
        b_c, b_irr = cusp_b(q), irreversible_b(q)
        b = float(rng.uniform(0.6 * b_irr, 1.4 * b_c))
        volume = float(rng.uniform(1e6, 2e8))
        m = float(rng.uniform(30.0, 150.0)) * volume / 1e6
        s = float(rng.uniform(0.2, 0.9))
        p = LakeParameters(loss_rate=s, recycling_max=s * m / b, recycling_half=m, recycling_exponent=q)
        load = float(rng.uniform(0.1, 1.0)) * s * m
        out.append((f"L{i:05d}", volume, load, p))
    return out


def write_lakes_csv(path: Path, lakes: list[tuple[str, float, float, LakeParameters]]) -> None:
    lines = [HEADER]
    for lake_id, volume, load, p in lakes:
        lines.append(f"{lake_id},,{volume!r},,{load!r},{p.s!r},{p.r!r},{p.m!r},{p.q!r}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def run_with_peak_memory(cmd: list[str]) -> tuple[float, float, str]:
    """Wall time [s], peak summed RSS of the process tree [MB] and stdout of ``cmd``."""
    with tempfile.TemporaryFile() as out:
        t0 = time.perf_counter()
        proc = subprocess.Popen(cmd, stdout=out, stderr=subprocess.PIPE)
        root = psutil.Process(proc.pid)
        peak = 0
        while proc.poll() is None:
            try:
                procs = [root, *root.children(recursive=True)]
                peak = max(peak, sum(p.memory_info().rss for p in procs if p.is_running()))
            except psutil.Error:
                pass
            time.sleep(0.02)
        wall = time.perf_counter() - t0
        err = proc.stderr.read().decode() if proc.stderr else ""
        if proc.returncode != 0:
            raise RuntimeError(f"turnback screen failed: {err}")
        out.seek(0)
        return wall, peak / 1e6, out.read().decode()


def analysis_peer(lakes: list[tuple[str, float, float, LakeParameters]]) -> tuple[float, list[float | None]]:
    t0 = time.perf_counter()
    tips = [analyze(p, load=load).tipping_load for _, _, load, p in lakes]
    return time.perf_counter() - t0, tips


def bench_analysis(n: int, workers: int, with_cluster: bool = True) -> None:
    lakes = invented_lakes(n)
    peer_s, peer_tips = analysis_peer(lakes)
    runs = {}
    with tempfile.TemporaryDirectory() as tmp:
        csv_path = Path(tmp) / "LAKES.csv"
        write_lakes_csv(csv_path, lakes)
        base = [sys.executable, "-m", "turnback", "screen", str(csv_path), "--json"]
        modes: list[tuple[str, list[str]]] = [("default", [])]
        if with_cluster:
            modes.append((f"--workers {workers}", ["--workers", str(workers)]))
        for label, extra in modes:
            wall, peak_mb, stdout = run_with_peak_memory(base + extra)
            data = json.loads(stdout)
            assert len(data["lakes"]) == n and not data["failed"]
            got = [d["tipping_load"] for d in data["lakes"]]
            assert got == peer_tips, "the screen's tipping loads differ from analyze's"
            runs[label] = (wall, peak_mb)
    regimes = {r: sum(d["regime"] == r for d in data["lakes"]) for r in ("reversible", "hysteretic", "irreversible")}
    print(f"1. Analysis only: {n:,} lakes with parameters ({regimes})")
    print(f"   peer: per-lake loop over analyze(params, load), in memory   {peer_s:8.2f} s")
    for label, (wall, peak_mb) in runs.items():
        how = "in this process (small work)" if label == "default" else "LocalCluster"
        print(f"   turnback screen {label:<13} {how:<29} {wall:8.2f} s   ratio peer/screen {peer_s / wall:5.2f} x")
        print(f"      peak memory, command and workers (sum of RSS)         {peak_mb:8.0f} MB")
    print("   goals: <= 30 s and <= 500 MB on two cores")


def fitted_lakes(n: int) -> list[RegionLake]:
    """``n`` lakes without parameters, their records taken in turn from the demo region's records-only lakes."""
    demo = [lk for lk in read_region(REGION / "LAKES.csv", REGION / "RECORDS.csv").lakes if lk.fitted]
    out = []
    for i in range(n):
        src = demo[i % len(demo)]
        out.append(RegionLake(f"F{i:04d}", src.volume_m3, src.load_kg_per_yr, record=src.record))
    return out


def fitted_run(lakes: list[RegionLake], workers: int, replicates: int) -> tuple[float, float, float, list[object]]:
    """Cluster start [s], run [s], the workers' CPU time during the run [s], and the results."""
    t0 = time.perf_counter()
    with (
        LocalCluster(
            n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None, silence_logs=logging.ERROR
        ) as cluster,
        Client(cluster, set_as_default=False) as client,
    ):
        client.run(lambda: __import__("turnback.model.screening"))  # workers import the model before the clock
        start = time.perf_counter() - t0
        cpu0 = client.run(time.process_time)
        t1 = time.perf_counter()
        res = screen_on_client(client, lakes, n_workers=workers, replicates=replicates, rng=1)
        run = time.perf_counter() - t1
        cpu1 = client.run(time.process_time)
        cpu = sum(cpu1[w] - cpu0[w] for w in cpu1)
        return start, run, cpu, list(res)


def bench_fitted(n: int, replicates: int) -> None:
    lakes = fitted_lakes(n)
    start1, run1, cpu1, res1 = fitted_run(lakes, 1, replicates)
    start2, run2, cpu2, res2 = fitted_run(lakes, 2, replicates)
    assert res1 == res2, "one worker and two workers disagree"
    ok = sum(isinstance(r, ScreenResult) for r in res1)
    print(f"2. Fitted: {n} lakes x {replicates} bootstrap replicates ({ok} screened)")
    for label, start, run, cpu in (("1 worker ", start1, run1, cpu1), ("2 workers", start2, run2, cpu2)):
        print(
            f"   LocalCluster, {label} {run:8.2f} s   workers' CPU {cpu:7.2f} s = {cpu / run:4.2f} cores busy"
            f"   (cluster start {start:.2f} s)"
        )
    print(f"   speed-up 1 -> 2 workers  {run1 / run2:8.2f} x   (linear: 2.00 x)")
    print(
        f"   CPU time per lake: {cpu1 / n:.3f} s with 1 worker, {cpu2 / n:.3f} s with 2; fewer cores busy than"
        " workers means other load on the machine kept them from whole cores"
    )


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0] if __doc__ else None)
    parser.add_argument("--lakes", type=int, default=10_000)
    parser.add_argument("--fitted", type=int, default=200)
    parser.add_argument("--replicates", type=int, default=200)
    parser.add_argument("--workers", type=int, default=2)
    args = parser.parse_args(argv)
    load = ", ".join(f"{x:.1f}" for x in psutil.getloadavg())
    print(f"machine: {psutil.cpu_count()} logical cores, load average {load}")
    if args.lakes:
        bench_analysis(args.lakes, args.workers)
    if args.fitted:
        bench_fitted(args.fitted, args.replicates)


if __name__ == "__main__":
    main()
