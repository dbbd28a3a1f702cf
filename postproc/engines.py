"""Engines that run the design of a run's parts: in this process, in local worker
processes, or on a dask.distributed cluster. Each returns a map(fn, parts) that yields
results in part order, so every engine gives the same tables.

The kernels multiply small matrices (combinations x cases) over long arrays; BLAS and
OpenMP worker threads only spin there and fight the engine's own processes. So the
design runs with one such thread per process: in worker processes from their start, and
in this process only while the design runs (threadpoolctl), never for the rest of the
session. dask.distributed workers get the same limit from dask's own worker environment
(OMP_NUM_THREADS, MKL_NUM_THREADS, OPENBLAS_NUM_THREADS = 1).
"""

from __future__ import annotations

import itertools
import multiprocessing as mp
from collections import deque
from concurrent.futures import ProcessPoolExecutor

from postproc import faults

# imported once by the fork server, not by each worker; the first makes its workers ignore Ctrl-C from the start
PRELOAD = ["postproc.forkserver_preload", "postproc.engine", "postproc.faults"]


def start_method() -> str:
    """forkserver where the platform has it (no fork of a process that already runs Arrow
    threads), else spawn (Windows); both exist on macOS."""
    return "forkserver" if "forkserver" in mp.get_all_start_methods() else "spawn"


def _worker_start(main_pid: int, main_started: float) -> None:
    """Worker initializer: one BLAS/OpenMP thread in this worker process; Ctrl-C left to the
    main process, and a watchdog that ends the worker when the main process is gone."""
    faults.worker_init(main_pid, main_started)  # first: Ctrl-C ignored before anything slow
    from threadpoolctl import threadpool_limits

    threadpool_limits(1)


def _start_fork_server() -> None:
    """Start the fork server now, where the platform has one: it imports and warms its
    modules (PRELOAD, about 1.5 s of one core) while this process reads the inputs, instead
    of when the first worker is needed. It ends with this process."""
    ctx = mp.get_context(start_method())
    if ctx.get_start_method() != "forkserver":
        return
    ctx.set_forkserver_preload(PRELOAD)
    from multiprocessing import forkserver

    forkserver.ensure_running()


def local(workers: int = 1):
    """Parts in this process (workers <= 1) or in that many worker processes. Workers
    ignore Ctrl-C, end themselves when the main process goes away, and are stopped at
    once when anything fails or the caller stops early (postproc.faults). ``parts`` may be
    a sized iterable whose items are made as they are taken: at most two per worker are
    made and sent ahead of the results taken. With workers, the fork server is started at
    once (``_start_fork_server``): its start overlaps the ingest."""
    if workers > 1:
        _start_fork_server()

    def run(fn, parts):
        from threadpoolctl import threadpool_limits

        if workers <= 1 or len(parts) <= 1:
            with threadpool_limits(1):  # restored when the design is done
                yield from map(fn, parts)
            return
        ctx = mp.get_context(start_method())  # its fork server, preload set, started by local() already
        pool = ProcessPoolExecutor(max_workers=min(workers, len(parts)), mp_context=ctx,
                                   initializer=_worker_start, initargs=faults.main_identity())
        items = iter(parts)
        try:
            ahead = deque(pool.submit(fn, item) for item in itertools.islice(items, 2 * workers))
            while ahead:
                done = ahead.popleft().result()
                for item in itertools.islice(items, 1):
                    ahead.append(pool.submit(fn, item))
                yield done
        except BaseException:
            faults.terminate(pool)
            raise
        pool.shutdown(wait=True)

    run.workers = workers  # the design cuts its tasks to a multiple of it (engine.design_tasks)
    return run


def dask(address: str | None = None, workers: int = 2):
    """Parts as dask.distributed tasks: on the scheduler at ``address``, or on a local
    cluster of ``workers`` processes. On a real cluster every worker must see the store
    at the same path (a shared file system)."""
    from dask.distributed import Client, LocalCluster

    def run(fn, parts):
        parts = list(parts)
        cluster = None if address else LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                                                    dashboard_address=None)
        try:
            with Client(address or cluster) as client:
                futures = client.map(fn, parts, pure=False)
                for future in futures:
                    yield future.result()
        finally:
            if cluster is not None:
                cluster.close()

    run.workers = workers
    return run
