"""Screening many lakes on Dask: this machine's cores, or a running Dask cluster.

The lakes are screened by :func:`turnback.model.screening.screen_chunk`,
one task per chunk of lakes (:func:`turnback.model.screening.plan_chunks`:
a fitted lake per task, analysis-only lakes in runs of hundreds), submitted
to a ``dask.distributed`` client with ``retries``.  A worker that dies mid-run
loses no lake: the scheduler hands its tasks to the other workers, and a task
that raised is run again up to ``retries`` times.  A chunk that still fails
turns each of its lakes into a :class:`~turnback.model.screening.ScreenFailure`
saying so; it never stops the batch.

``scheduler="local"`` starts a :class:`distributed.LocalCluster` of worker
processes, one thread each, without the web dashboard.  The lakes are
screened in this process instead when that is as fast: with one worker, a
batch that is a single chunk, or, when the number of workers is not given,
a batch whose estimated single-core work is under :data:`INLINE_SECONDS`
(:func:`turnback.model.screening.estimated_seconds`; 10,000 analysis-only
lakes take about one second), since starting worker processes takes a
second or more.  Any other
``scheduler`` is the address of a running scheduler (``tcp://host:8786``),
whose workers must have the same version of ``turnback`` installed.

The pure screening core (:mod:`turnback.model.screening`) never imports this
module or Dask.
"""

from __future__ import annotations

import logging
import re
from collections.abc import Sequence

import dask.system
from distributed import Client, Future, LocalCluster, as_completed

from .bootstrap import DEFAULT_REPLICATES
from .progress import Cancel, Progress, RunCancelled, check_cancel, report
from .screening import (
    RegionLake,
    ScreenFailure,
    ScreenResult,
    estimated_seconds,
    plan_chunks,
    screen_chunk,
    screen_many,
)
from .validation import FieldError

__all__ = [
    "CONNECT_TIMEOUT",
    "DEFAULT_RETRIES",
    "INLINE_SECONDS",
    "check_address",
    "default_workers",
    "screen_on_client",
    "screen_region",
]

#: Times a task that raised is run again (a worker's death is handled by the scheduler besides).
DEFAULT_RETRIES = 3
#: Seconds to wait for a scheduler to answer, and for its first worker.
CONNECT_TIMEOUT = 15.0
#: Below this much single-core work [s] the local scheduler screens in this process, unless workers are asked for:
#: starting worker processes takes a second or more.
INLINE_SECONDS = 2.0

_ADDRESS = re.compile(r"^(tcp|tls|ucx|ws|wss)://[^\s/]+:\d+/?$|^[A-Za-z0-9_.\-\[\]:]+:\d+$")

Outcome = ScreenResult | ScreenFailure


def default_workers() -> int:
    """This machine's usable cores (CPU affinity and container limits respected)."""
    return max(1, int(dask.system.CPU_COUNT))


def check_address(address: str) -> str:
    """A scheduler address such as ``tcp://10.0.0.5:8786``, or :class:`FieldError`."""
    address = address.strip()
    if not _ADDRESS.match(address):
        raise FieldError(
            ("scheduler",),
            f"must be 'local' or the address of a running Dask scheduler such as tcp://10.0.0.5:8786; got {address!r}",
        )
    return address


def _chunk_failed(exc: BaseException) -> str:
    name = type(exc).__name__
    if isinstance(exc, ModuleNotFoundError | ImportError) or "No module named" in str(exc):
        return (
            f"could not be screened: the Dask workers cannot import turnback ({exc}); install the same version "
            "of turnback on every worker"
        )
    return f"could not be screened on the cluster ({name}: {exc}); run the screen again or check the workers"


def screen_on_client(
    client: Client,
    lakes: Sequence[RegionLake],
    *,
    n_workers: int,
    replicates: int = DEFAULT_REPLICATES,
    rng: int | None = 1,
    progress: Progress | None = None,
    retries: int = DEFAULT_RETRIES,
    cancel: Cancel | None = None,
) -> list[Outcome]:
    """Screen ``lakes`` through a connected Dask client; results in input order.

    Parameters
    ----------
    client : distributed.Client
    lakes : sequence of RegionLake
    n_workers : int
        Worker threads the chunks are planned for.
    replicates, rng
        As :func:`turnback.model.screening.screen_lake`.
    progress : callable(fraction, message), optional
        Called in this process as each chunk comes back.
    retries : int
        Passed to ``Client.submit``.
    cancel : callable() -> bool, optional
        Asked as each chunk comes back; when it returns True the remaining
        tasks are cancelled and :class:`~turnback.model.progress.RunCancelled`
        is raised.
    """
    n = len(lakes)
    chunks = plan_chunks(lakes, n_workers)
    futures: dict[Future, tuple[int, ...]] = {}
    for idx in chunks:
        fut = client.submit(screen_chunk, [lakes[i] for i in idx], replicates, rng, retries=retries, pure=False)
        futures[fut] = idx
    out: list[Outcome | None] = [None] * n
    done = 0
    try:
        for fut in as_completed(list(futures), loop=client.loop):
            check_cancel(cancel)
            idx = futures[fut]
            try:
                results = fut.result()
            except Exception as exc:  # a chunk that failed on every try: its lakes fail, the batch goes on
                message = _chunk_failed(exc)
                results = [ScreenFailure(lakes[i].lake_id, message) for i in idx]
            for i, res in zip(idx, results, strict=True):
                out[i] = res
            done += len(idx)
            report(progress, done / n, f"{done} of {n} lakes screened")
            fut.release()
    except RunCancelled:
        client.cancel([f for f in futures if not f.done()])
        raise
    assert all(o is not None for o in out)
    return [o for o in out if o is not None]


def screen_region(
    lakes: Sequence[RegionLake],
    *,
    replicates: int = DEFAULT_REPLICATES,
    rng: int | None = 1,
    scheduler: str = "local",
    workers: int | None = None,
    progress: Progress | None = None,
    retries: int = DEFAULT_RETRIES,
    cancel: Cancel | None = None,
) -> list[Outcome]:
    """Screen a region's lakes on this machine's cores or on a running Dask cluster.

    Parameters
    ----------
    lakes : sequence of RegionLake
    replicates : int
        Bootstrap replicates of each fitted lake.
    rng : int or None
        Seed used afresh for each fitted lake (its result equals
        ``turnback fit --seed`` on its record, whatever the order or chunking).
    scheduler : str
        ``"local"`` for a :class:`distributed.LocalCluster` on this machine, or
        the address of a running scheduler (``tcp://host:8786``).
    workers : int, optional
        Local worker processes (default: this machine's cores, and a small
        batch runs in this process); not used with an address, where the
        cluster's own workers run the tasks.
    progress : callable(fraction, message), optional
    retries : int
        Times a task that raised is run again.
    cancel : callable() -> bool, optional
        Asked between lakes (in this process) or chunks (on workers);
        :class:`~turnback.model.progress.RunCancelled` is raised when it
        returns True.

    Returns
    -------
    list of ScreenResult or ScreenFailure
        One per lake, in input order.

    Raises
    ------
    ValueError
        For a bad address or worker count, or a scheduler that cannot be
        reached or has no workers.
    """
    if not lakes:
        return []
    if scheduler != "local":
        address = check_address(scheduler)
        if workers is not None:
            raise FieldError(("workers",), "is for the local scheduler; a cluster's workers are started with it")
        try:
            client = Client(address, timeout=CONNECT_TIMEOUT, set_as_default=False)
        except (OSError, TimeoutError) as exc:
            raise ValueError(
                f"cannot reach a Dask scheduler at {address} ({exc}); start one with 'dask scheduler' "
                "or use --scheduler local"
            ) from None
        with client:
            try:
                client.wait_for_workers(1, timeout=CONNECT_TIMEOUT)
            except TimeoutError:
                raise ValueError(
                    f"the Dask scheduler at {address} has no workers; start some with 'dask worker {address}'"
                ) from None
            threads = sum(int(w.get("nthreads", 1)) for w in client.scheduler_info()["workers"].values())
            return screen_on_client(
                client,
                lakes,
                n_workers=max(1, threads),
                replicates=replicates,
                rng=rng,
                progress=progress,
                retries=retries,
                cancel=cancel,
            )
    n_workers = default_workers() if workers is None else workers
    if not 1 <= n_workers <= 1024:
        raise FieldError(("workers",), f"must be between 1 and 1024; got {n_workers}")
    small = workers is None and estimated_seconds(lakes, replicates) < INLINE_SECONDS
    if small or n_workers == 1 or len(plan_chunks(lakes, n_workers)) == 1:
        return screen_many(lakes, replicates=replicates, rng=rng, progress=progress, cancel=cancel)
    with (
        LocalCluster(
            n_workers=n_workers,
            threads_per_worker=1,
            processes=True,
            dashboard_address=None,
            silence_logs=logging.ERROR,
        ) as cluster,
        Client(cluster, set_as_default=False) as client,
    ):
        return screen_on_client(
            client,
            lakes,
            n_workers=n_workers,
            replicates=replicates,
            rng=rng,
            progress=progress,
            retries=retries,
            cancel=cancel,
        )
