"""Claims and locks that work the same on Linux, macOS and Windows.

A claim is a file created exclusively (``O_CREAT | O_EXCL``: of two processes, exactly
one succeeds) that records its owner: host name, process id and process start time.
A claim whose owner is gone (on this host: no process with that id and start time) is
stale and is taken over; one held by a live process, or by a process on another host
(whose life cannot be seen from here), is not. Taking over a stale claim is itself
done under a short exclusive "break" claim, so that two processes that both find the
same stale claim cannot both take it.

Temporary folders carry their owner in their name (``.tmp-<final>-<pid>-<start>-<host>-<id>``),
so that the next run can remove those of a dead process, and only those.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import re
import socket
import time
import uuid
from dataclasses import asdict, dataclass
from pathlib import Path

WAIT_S = 10.0  # how long a command waits for a lock another process holds
BREAK_STALE_S = 60.0  # a break claim or an unreadable claim older than this is left over from a crash
TMP_NAME = re.compile(r"^\.tmp-(?P<final>.+)-(?P<pid>\d+)-(?P<started>\d+)-(?P<host>[0-9a-f]{8})-[0-9a-f]{12}$")


class Busy(Exception):
    """Another live process holds the claim or lock."""


@dataclass(frozen=True)
class Owner:
    host: str
    pid: int
    started: float  # process start time, seconds since the epoch

    @classmethod
    def me(cls) -> Owner:
        return cls(socket.gethostname(), os.getpid(), _started(os.getpid()))

    def alive(self) -> bool:
        """False only where this owner is certainly gone (a process of this host that no
        longer runs); a process on another host counts as alive."""
        import psutil  # (imported where used: the import path stays light and portable)

        if self.host != socket.gethostname():
            return True
        try:
            return abs(_started(self.pid) - self.started) < 1.0  # the same pid, not a later process given it
        except psutil.NoSuchProcess:
            return False
        except psutil.Error:
            return True

    def __str__(self) -> str:
        return f"process {self.pid} on {self.host}"


def _started(pid: int) -> float:
    import psutil

    return psutil.Process(pid).create_time()


def host_tag(host: str | None = None) -> str:
    return hashlib.sha256((host or socket.gethostname()).encode()).hexdigest()[:8]


def read_owner(path: Path) -> Owner | None:
    try:
        return Owner(**json.loads(path.read_text(encoding="utf-8")))
    except (OSError, ValueError, TypeError):
        return None


def _create(path: Path) -> bool:
    """Create ``path`` exclusively with our owner record; False if it exists."""
    try:
        fd = os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
    except FileExistsError:
        return False
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(asdict(Owner.me()), fh)
    except BaseException:  # (a full disk): no claim without its owner is left behind
        with contextlib.suppress(OSError):
            path.unlink()
        raise
    return True


def _age(path: Path) -> float:
    try:
        return time.time() - path.stat().st_mtime
    except OSError:
        return 0.0


def stale(path: Path) -> bool:
    """A claim file left by a process that is gone (or unreadable, and old)."""
    owner = read_owner(path)
    if owner is None:
        return path.exists() and _age(path) > BREAK_STALE_S  # being written, unless old
    return not owner.alive()


def claim(path: Path) -> bool:
    """Take the claim ``path`` (creating its folder); True if taken, False if a live
    process holds it. A stale claim is taken over."""
    for _ in range(5):
        path.parent.mkdir(parents=True, exist_ok=True)
        try:
            if _create(path):
                return True
        except FileNotFoundError:  # the folder was removed (emptied by another process) meanwhile
            continue
        if not stale(path):
            return False
        breaker = path.with_name(path.name + ".break")
        if not _create(breaker):
            if _age(breaker) > BREAK_STALE_S:
                with contextlib.suppress(OSError):
                    breaker.unlink()
            time.sleep(0.05)
            continue
        try:
            if stale(path):  # still the stale one, under the break claim: nobody else replaces it now
                with contextlib.suppress(FileNotFoundError):
                    path.unlink()
        finally:
            with contextlib.suppress(OSError):
                breaker.unlink()
    return False


def release(path: Path) -> None:
    """Give up a claim we hold, and its folder where that is left empty."""
    owner = read_owner(path)
    if owner is not None and owner == Owner.me():
        with contextlib.suppress(FileNotFoundError):
            path.unlink()
    with contextlib.suppress(OSError):
        path.parent.rmdir()  # only if empty


def holder(path: Path) -> str:
    owner = read_owner(path)
    return str(owner) if owner else "another process"


@contextlib.contextmanager
def held(path: Path, what: str, wait_s: float | None = None):
    """Hold the lock ``path`` for the block, waiting up to ``wait_s`` (default WAIT_S) for
    another process to release it; Busy after that."""
    deadline = time.monotonic() + (WAIT_S if wait_s is None else wait_s)
    while not claim(path):
        if time.monotonic() > deadline:
            raise Busy(f"{what} is in use by {holder(path)}; try again when it has finished")
        time.sleep(0.1)
    try:
        yield
    finally:
        release(path)


def tmp_name(final: str) -> str:
    """The name of a temporary folder for ``final``, carrying its owner."""
    me = Owner.me()
    return f".tmp-{final}-{me.pid}-{int(me.started * 1000)}-{host_tag(me.host)}-{uuid.uuid4().hex[:12]}"


def tmp_is_stale(name: str) -> bool:
    """A temporary folder of a process of this host that is gone."""
    m = TMP_NAME.match(name)
    if m is None or m["host"] != host_tag():
        return False
    owner = Owner(socket.gethostname(), int(m["pid"]), int(m["started"]) / 1000)
    return not owner.alive()
