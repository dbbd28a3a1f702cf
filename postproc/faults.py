"""Faults of the environment, said in one line each, and worker processes that never
outlive the command that started them.

``describe`` turns an exception that is not a defect of the input or of the tool's own
logic (a read-only or full disk, memory, a worker that died, Ctrl-C, a closed pipe, a
damaged store, a busy run) into a kind and one clear line; the command line maps each
kind to its exit code (postproc.cli.EXIT_CODES).

Worker processes run ``worker_init``: they ignore Ctrl-C (the main process handles it
and stops them), and a watchdog thread ends a worker within a second or two of its
main process going away, whatever killed it (the out-of-memory killer takes the main
process alone). The check is the main process's id and start time (psutil), so it works
on Linux, macOS and Windows alike, and a new process that got the same id later is not
mistaken for it.
"""

from __future__ import annotations

import errno
import os
import signal
import threading
import time
from concurrent.futures.process import BrokenProcessPool

from postproc.engine import SelfCheckError
from postproc.locks import Busy
from postproc.store import DamagedRun

WATCH_S = 0.5  # how often a worker checks that its main process is there

NO_SPACE = (errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC))
READ_ONLY = (errno.EROFS, errno.EACCES, errno.EPERM)


def _oserror_kind(exc: BaseException) -> str | None:
    no = getattr(exc, "errno", None)
    text = str(exc)
    if no in NO_SPACE or "No space left on device" in text or "Disk quota exceeded" in text:
        return "disk-full"
    if no in READ_ONLY or isinstance(exc, PermissionError) or "Read-only file system" in text \
            or "Permission denied" in text:
        return "read-only"
    return None


def describe(exc: BaseException) -> tuple[str, str] | None:
    """(kind, one line) for a fault of the environment; None for anything else."""
    if isinstance(exc, KeyboardInterrupt):
        return "interrupted", "interrupted (Ctrl-C)"
    if isinstance(exc, BrokenPipeError):
        return "broken-pipe", "the output was closed before everything was written (broken pipe)"
    if isinstance(exc, DamagedRun):
        return "damaged", str(exc)
    if isinstance(exc, Busy):
        return "busy", str(exc)
    if isinstance(exc, BrokenProcessPool):
        return "worker", ("a worker process died while designing (killed, or out of memory: "
                          "try fewer --workers, or a machine with more memory)")
    if isinstance(exc, MemoryError):
        return "memory", "out of memory (try fewer --workers, or a machine with more memory)"
    if isinstance(exc, SelfCheckError):
        return "internal", f"internal self-check failed, a defect of shearpost (please report it): {exc}"
    if isinstance(exc, OSError):
        kind = _oserror_kind(exc)
        where = f" ({exc.filename})" if getattr(exc, "filename", None) else ""
        if kind == "disk-full":
            return kind, f"the disk is full{where}"
        if kind == "read-only":
            return kind, f"cannot write{where}: read-only or not permitted ({exc.strerror or exc})"
        return "io", f"could not read or write a file{where}: {exc.strerror or exc}"
    return None


# ---------------------------------------------------------------- workers


def worker_init(main_pid: int, main_started: float) -> None:
    """Run in each worker process when it starts (ProcessPoolExecutor ``initializer``)."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C reaches the whole process group: the main process acts
    threading.Thread(target=_watch, args=(main_pid, main_started), name="shearpost-watchdog", daemon=True).start()


def main_identity() -> tuple[int, float]:
    import psutil

    pid = os.getpid()
    return pid, psutil.Process(pid).create_time()


def _watch(main_pid: int, main_started: float) -> None:
    import psutil

    while True:
        time.sleep(WATCH_S)
        try:
            gone = abs(psutil.Process(main_pid).create_time() - main_started) > 1.0
        except psutil.NoSuchProcess:
            gone = True
        except psutil.Error:
            gone = False
        if gone:
            os._exit(70)  # the main process is gone: nobody will take this worker's result


def terminate(pool) -> None:
    """Stop a process pool's workers now (on Ctrl-C, a failure or a dead worker), rather
    than wait for the parts they are designing."""
    processes = list(getattr(pool, "_processes", {}).values())  # (no public API before Python 3.14)
    pool.shutdown(wait=False, cancel_futures=True)
    for p in processes:
        try:
            p.terminate()
        except (OSError, ValueError):
            pass
    for p in processes:
        try:
            p.join(timeout=5)
        except (OSError, ValueError, AssertionError):
            pass
