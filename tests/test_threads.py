"""BLAS/OpenMP thread limits apply inside shearpost's workers (and in this process only while a
design runs), never to the rest of the Python session."""

from __future__ import annotations

import numpy  # noqa: F401  (loads the BLAS whose threads are counted)
from threadpoolctl import threadpool_info

from postproc import engines


def _blas_threads(_part) -> list[int]:
    return [pool["num_threads"] for pool in threadpool_info()]


def test_workers_run_with_one_blas_thread_and_the_session_keeps_its_own():
    before = _blas_threads(None)
    assert before, "numpy's BLAS not found by threadpoolctl"
    in_workers = list(engines.local(2)(_blas_threads, ["a", "b", "c"]))
    assert in_workers and all(n == 1 for pools in in_workers for n in pools)
    in_process = list(engines.local(1)(_blas_threads, ["a"]))
    assert all(n == 1 for pools in in_process for n in pools)
    assert _blas_threads(None) == before  # restored: the session's setting is its own
