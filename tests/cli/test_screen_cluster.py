"""``turnback screen`` on a real Dask cluster: a scheduler and two workers on loopback, one killed mid-run."""

from __future__ import annotations

import json
import os
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from distributed import Client
from turnback.app.cli import main
from turnback.model import distributed as dist
from turnback.model.io.region_csv import read_region
from turnback.model.progress import RunCancelled
from turnback.model.screening import RegionLake, ScreenFailure, ScreenResult, screen_many

ROOT = Path(__file__).resolve().parents[2]
REGION = ROOT / "sample_data" / "region"
REPLICATES = 100
N_FITTED = 6

pytestmark = pytest.mark.slow


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _lake_table(tmp: Path, keep: list[str]) -> Path:
    lines = (REGION / "LAKES.csv").read_text(encoding="utf-8").splitlines()
    out = tmp / "LAKES.csv"
    out.write_text("\n".join([lines[0], *(ln for ln in lines[1:] if ln.split(",")[0] in keep)]) + "\n")
    return out


@pytest.fixture(scope="module")
def region(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, list[RegionLake], list[ScreenResult]]:
    """The demo lakes with parameters and six fitted ones, and what the in-process loop says of them."""
    every = read_region(REGION / "LAKES.csv", REGION / "RECORDS.csv").lakes
    lakes = [lk for lk in every if not lk.fitted] + [lk for lk in every if lk.fitted][:N_FITTED]
    order = {lk.lake_id: i for i, lk in enumerate(every)}
    lakes.sort(key=lambda lk: order[lk.lake_id])
    table = _lake_table(tmp_path_factory.mktemp("region"), [lk.lake_id for lk in lakes])
    reference = screen_many(lakes, replicates=REPLICATES, rng=1)
    assert all(isinstance(r, ScreenResult) for r in reference)
    return table, lakes, [r for r in reference if isinstance(r, ScreenResult)]


@pytest.fixture(scope="module")
def cluster(
    tmp_path_factory: pytest.TempPathFactory,
) -> Iterator[tuple[str, Client, dict[int, subprocess.Popen[bytes]]]]:
    """``dask scheduler`` and two ``dask worker`` processes on loopback, stopped by their PIDs afterwards."""
    logs = tmp_path_factory.mktemp("dask")
    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    procs: list[subprocess.Popen[bytes]] = []

    def start(name: str, *args: str) -> subprocess.Popen[bytes]:
        log = (logs / f"{name}.log").open("wb")
        proc = subprocess.Popen([sys.executable, "-m", "dask", *args], stdout=log, stderr=log, cwd=logs)
        procs.append(proc)
        return proc

    client = None
    try:
        start("scheduler", "scheduler", "--host", "127.0.0.1", "--port", str(port), "--no-dashboard")
        workers = {}
        for i in range(2):
            w = start(f"worker{i}", "worker", address, "--nthreads", "1", "--no-nanny", "--no-dashboard",
                      "--host", "127.0.0.1", "--name", f"w{i}")  # fmt: skip
            workers[w.pid] = w
        client = Client(address, timeout=60, set_as_default=False)
        client.wait_for_workers(2, timeout=60)
        yield address, client, workers
    finally:
        if client is not None:
            client.close()
        for proc in procs:
            if proc.poll() is None:
                os.kill(proc.pid, signal.SIGKILL)
            proc.wait(timeout=30)


def test_a_local_cluster_gives_what_the_in_process_loop_gives(
    region: tuple[Path, list[RegionLake], list[ScreenResult]],
) -> None:
    _, lakes, reference = region
    seen: list[float] = []
    out = dist.screen_region(lakes, replicates=REPLICATES, rng=1, workers=2, progress=lambda f, m: seen.append(f))
    assert out == reference
    assert len(seen) == N_FITTED + 1 and seen[-1] == 1.0  # one task per fitted lake, one for the others


def test_cluster_results_equal_the_local_run_lake_for_lake(
    cluster: tuple[str, Client, dict[int, Any]],
    region: tuple[Path, list[RegionLake], list[ScreenResult]],
    capsys: pytest.CaptureFixture[str],
) -> None:
    address, _, _ = cluster
    table, _, reference = region
    code = main(["screen", str(table), "--records", str(REGION / "RECORDS.csv"), "--replicates", str(REPLICATES),
                 "--scheduler", address, "--json"])  # fmt: skip
    out = capsys.readouterr()
    assert code == 0, out.err
    data = json.loads(out.out)
    assert data["failed"] == []
    assert data["lakes"] == json.loads(json.dumps([r.to_dict() for r in reference]))


def test_a_cancelled_run_stops_and_leaves_the_workers_idle(
    cluster: tuple[str, Client, dict[int, Any]],
    region: tuple[Path, list[RegionLake], list[ScreenResult]],
) -> None:
    _, client, _ = cluster
    _, lakes, _ = region
    asked: list[int] = []

    def cancel() -> bool:
        asked.append(1)
        return len(asked) >= 2  # after the first chunk is back

    with pytest.raises(RunCancelled):
        dist.screen_on_client(client, lakes, n_workers=2, replicates=REPLICATES, rng=1, cancel=cancel)
    deadline = time.monotonic() + 30
    while any(client.processing().values()) and time.monotonic() < deadline:
        time.sleep(0.05)
    assert not any(client.processing().values())


def test_a_worker_killed_mid_run_loses_no_lake(
    cluster: tuple[str, Client, dict[int, subprocess.Popen[bytes]]],
    region: tuple[Path, list[RegionLake], list[ScreenResult]],
) -> None:
    _, client, workers = cluster
    _, lakes, reference = region
    killed: dict[str, Any] = {}
    pids = {addr: int(pid) for addr, pid in client.run(os.getpid).items()}
    assert sorted(pids.values()) == sorted(workers)

    def kill_a_busy_worker(fraction: float, message: str) -> None:
        if killed or fraction >= 1.0:
            return
        for addr, keys in client.processing().items():
            pid = pids.get(addr)
            if keys and pid in workers:
                os.kill(pid, signal.SIGKILL)  # mid-task: the scheduler must hand its work to the other worker
                killed.update(pid=pid, keys=list(keys), at=fraction)
                return

    out = dist.screen_on_client(client, lakes, n_workers=2, replicates=REPLICATES, rng=1, progress=kill_a_busy_worker)
    assert killed, "no worker was busy when the first chunk came back"
    assert killed["keys"] and killed["at"] < 1.0
    assert workers[killed["pid"]].wait(timeout=30) == -signal.SIGKILL
    assert not any(isinstance(o, ScreenFailure) for o in out)
    assert [o.lake_id for o in out] == [lk.lake_id for lk in lakes]  # every lake, in input order
    assert out == reference  # and each as the in-process loop says, parameters and all
    deadline = time.monotonic() + 30
    while len(client.scheduler_info()["workers"]) != 1 and time.monotonic() < deadline:
        time.sleep(0.1)
    assert len(client.scheduler_info()["workers"]) == 1


def test_an_unreachable_scheduler_exits_2_with_one_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(dist, "CONNECT_TIMEOUT", 1.0)
    lakes = tmp_path / "LAKES.csv"
    lakes.write_text("lake_id,volume_m3,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent\n"
                     "A,2.79e7,420,0.5,1800,2500,4\n")  # fmt: skip
    address = f"tcp://127.0.0.1:{_free_port()}"
    assert main(["screen", str(lakes), "--scheduler", address]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and f"cannot reach a Dask scheduler at {address}" in err
