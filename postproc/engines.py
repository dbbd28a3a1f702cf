"""Engines that run the design of a run's parts: in this process, in local worker
processes, or on a dask.distributed cluster. Each returns a map(fn, parts) that yields
results in part order, so every engine gives the same tables."""

from __future__ import annotations

import multiprocessing as mp
from concurrent.futures import ProcessPoolExecutor


def local(workers: int = 1):
    """Parts in this process (workers <= 1) or in that many worker processes."""
    if workers <= 1:
        return map

    def run(fn, parts):
        parts = list(parts)
        if len(parts) <= 1:
            yield from map(fn, parts)
            return
        ctx = mp.get_context("forkserver")  # no fork of a process that already runs Arrow threads
        ctx.set_forkserver_preload(["postproc.engine"])
        with ProcessPoolExecutor(max_workers=min(workers, len(parts)), mp_context=ctx) as pool:
            yield from pool.map(fn, parts)

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

    return run
