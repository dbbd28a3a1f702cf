"""The sha256 of each input file, taken over the bytes that were actually parsed.

The readers hash a file while they read it (a whole small file at once, the forces as
the parser streams them) and record the digest here; the store writes the recorded
digest into the run's manifest. A file read twice in one run (the forces are read once
for their member ids when the geometry comes from IFC) must give the same digest both
times, else it changed while it was being read and the run stops: the manifest could
otherwise describe bytes that were never designed.

While the bytes pass, ``ByteScan`` also notes what the CSV readers check on the raw
file: the number of quote characters (an odd number is a quote left open), the first
NUL byte (a file damaged by a failed copy or disk is often filled with zeros), and a
line too long to be a record (no line ends where there should be).
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import os
from pathlib import Path

from postproc.adapters.errors import InputError

LONG_LINE = 32 << 20  # bytes: no record of ours is this long; a longer "line" is a damaged file

_recorded: dict[str, str] | None = None  # while a run reads its inputs: path -> digest


@contextlib.contextmanager
def session():
    """Digests are recorded (and two reads of one file compared) within a session: one run."""
    global _recorded
    _recorded = {}
    try:
        yield
    finally:
        _recorded = None


def _key(path) -> str:
    return os.path.realpath(path)


def record(path, digest: str) -> None:
    """Note the digest of the bytes of ``path`` just parsed; a different digest from an
    earlier read in this run means the file changed in between."""
    if _recorded is None:
        return
    prev = _recorded.get(_key(path))
    if prev is not None and prev != digest:
        raise InputError(path, "the file changed while it was being read (two reads gave different bytes); "
                               "run again once the program writing it has finished")
    _recorded[_key(path)] = digest


def recorded(path) -> str | None:
    return None if _recorded is None else _recorded.get(_key(path))


def read_bytes(path) -> bytes:
    """A whole (small) file, its digest recorded."""
    data = Path(path).read_bytes()
    record(path, hashlib.sha256(data).hexdigest())
    return data


class ByteScan:
    """Hash and raw checks of a file's bytes, fed in order. ``single_byte``: quotes, NULs
    and line ends are single bytes (UTF-8, 8-bit code pages), so they are counted here."""

    def __init__(self, single_byte: bool = True):
        self.single_byte = single_byte
        self.sha = hashlib.sha256()
        self.size = 0
        self.quotes = 0
        self.nul_at: int | None = None
        self.long_at: int | None = None  # offset of a line end more than LONG_LINE bytes after the one before
        self._gap = 0  # bytes since the last line end

    def update(self, chunk) -> None:
        self.sha.update(chunk)
        if self.single_byte:
            data = bytes(chunk) if not isinstance(chunk, bytes) else chunk
            self.quotes += data.count(b'"')
            if self.nul_at is None and (k := data.find(b"\0")) >= 0:
                self.nul_at = self.size + k
            if self.long_at is None:
                first = data.find(b"\n")
                if first < 0:
                    self._gap += len(data)
                    if self._gap > LONG_LINE:
                        self.long_at = self.size + len(data) - self._gap
                else:
                    if self._gap + first > LONG_LINE:
                        self.long_at = self.size - self._gap
                    self._gap = len(data) - data.rfind(b"\n") - 1
        self.size += len(chunk)

    def digest(self) -> str:
        return self.sha.hexdigest()


def scan_bytes(data: bytes, single_byte: bool = True) -> ByteScan:
    s = ByteScan(single_byte)
    s.update(data)
    return s


class Damaged(Exception):
    """The raw scan found a NUL byte or an overlong line: the parser is fed no more (it would
    gather a "line" of zeros into memory however long it runs)."""


class HashingSource(io.RawIOBase):
    """A file for the CSV parser: read from start to end, every byte hashed and scanned on
    the way; the digest is recorded when the end is reached. The first ``skip`` bytes (a
    byte-order mark) are hashed but not passed on. Damaged is raised at the first NUL byte
    or overlong line."""

    def __init__(self, path: Path, single_byte: bool = True, skip: int = 0):
        super().__init__()
        self.path = path
        self.fh = open(path, "rb", buffering=0)
        self.scan = ByteScan(single_byte)
        self.done = False
        if skip:
            self.scan.update(self.fh.read(skip))

    def readable(self) -> bool:
        return True

    def read(self, n: int = -1) -> bytes:
        data = self.fh.read() if n is None or n < 0 else self.fh.read(n)
        if data:
            self.scan.update(data)
            if self.scan.nul_at is not None or self.scan.long_at is not None:
                raise Damaged(self.path)
        elif not self.done:
            self.done = True
            record(self.path, self.scan.digest())
        return data

    def readinto(self, buffer) -> int:
        data = self.read(len(buffer))
        buffer[: len(data)] = data
        return len(data)

    def close(self) -> None:
        if not self.closed:
            self.fh.close()
        super().close()


def line_of(path: Path, offset: int) -> int:
    """The 1-based line on which byte ``offset`` of a single-byte-line-end file stands
    (read in chunks: memory does not grow with the file)."""
    n = 1
    with open(path, "rb") as fh:
        pos = 0
        while pos < offset:
            chunk = fh.read(min(1 << 20, offset - pos))
            if not chunk:
                break
            n += chunk.count(b"\n")
            pos += len(chunk)
    return n
