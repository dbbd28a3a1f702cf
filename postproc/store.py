"""A folder of immutable runs.

    STORE/
      RUN/manifest.json        inputs with sha256, units, code edition, tool version
      RUN/members.parquet      validated members table (input schema, SI units)
      RUN/forces/part-*.parquet  validated forces in parts of whole members, each sorted by
                                 member, case, station
      RUN/cases.parquet        basic load cases, where given
      RUN/design/...           written once, by the design stage

Every write goes to a hidden temporary folder inside the store and is renamed into
place, so a crash never leaves a half-written run visible; an existing run or design
is never overwritten.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import math
import json
import os
import re
import shutil
import uuid
import zlib
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.parquet as pq

from postproc.adapters.csv_tables import sort_part
from postproc import __version__
from postproc.codes import aci318_19

UNITS = {"length": "m for length_m and x_m, mm for *_mm", "force": "kN", "moment": "kN*m", "stress": "MPa"}
PART_BYTES = 24 << 20  # CSV bytes per stored part of the forces (small enough to balance 2 workers)
MEMORY_BYTES = 512 << 20  # forces files up to this size are partitioned in memory, larger ones spill to disk
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,99}$")


class StoreError(Exception):
    """A store operation that cannot proceed (existing run, bad name, missing run)."""


def sha256_of(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


@dataclass(frozen=True)
class Run:
    path: Path

    @property
    def name(self) -> str:
        return self.path.name

    def manifest(self) -> dict:
        return json.loads((self.path / "manifest.json").read_text(encoding="utf-8"))

    def members(self) -> pa.Table:
        return pq.read_table(self.path / "members.parquet")

    def force_parts(self) -> list[Path]:
        """The forces, as parts that each hold whole members."""
        return sorted((self.path / "forces").glob("part-*.parquet"))

    def forces(self, columns: list[str] | None = None) -> pa.Table:
        return pq.read_table(self.path / "forces", columns=columns)

    def cases(self) -> pa.Table | None:
        p = self.path / "cases.parquet"
        return pq.read_table(p) if p.exists() else None

    @property
    def design_path(self) -> Path:
        return self.path / "design"

    def has_design(self) -> bool:
        return (self.design_path / "manifest.json").exists()


class Store:
    def __init__(self, root: str | Path):
        self.root = Path(root)

    def runs(self) -> list[Run]:
        if not self.root.exists():
            return []
        return [Run(p) for p in sorted(self.root.iterdir())
                if p.is_dir() and not p.name.startswith(".") and (p / "manifest.json").exists()]

    def run(self, name: str) -> Run:
        r = Run(self.root / name)
        if not _NAME.fullmatch(name) or not (r.path / "manifest.json").exists():
            raise StoreError(f"no run named '{name}' in {self.root}")
        return r

    def latest(self) -> Run:
        """The most recently created run."""
        runs = self.runs()
        if not runs:
            raise StoreError(f"no runs in {self.root}; create one with `shearpost run` or `shearpost demo`")
        return max(runs, key=lambda r: (r.manifest()["created"], r.name))

    def new_name(self, today: _dt.date | None = None) -> str:
        stamp = (today or _dt.date.today()).strftime("%Y%m%d")
        taken = {r.name for r in self.runs()}
        k = 1
        while f"{stamp}-{k:03d}" in taken or (self.root / f"{stamp}-{k:03d}").exists():
            k += 1
        return f"{stamp}-{k:03d}"

    def check_new_name(self, name: str) -> None:
        if not _NAME.fullmatch(name):
            raise StoreError(f"run name '{name}' is not allowed: use letters, digits, '.', '_' and '-' "
                             "(at most 100, not starting with '.' or '-')")
        if (self.root / name).exists():
            raise StoreError(f"run '{name}' already exists in {self.root}; runs are never overwritten, "
                             "choose another --run name")

    def ingest(self, name: str, members: pa.Table, cases: pa.Table | None, source, inputs: dict[str, Path],
               warnings: list[str], extra: dict | None = None, progress=None, then=None) -> Run:
        """Write a new run atomically and return it. ``then(run)``, if given, runs on the
        complete but not yet visible run (the design stage writes its design/ there), so
        that the run appears with its design or not at all.

        ``source`` streams validated force batches (``batches()``, ``check_part()``,
        ``size()``, see postproc.adapters.csv_tables.ForcesReader). Rows are spread over parts by a
        hash of the member id, so that every part holds whole members; each part is then
        checked, sorted by member, case, station and file row, and written. Memory is
        bounded by the part size, not by the model.
        """
        self.check_new_name(name)
        n_parts = max(1, math.ceil(source.size() / PART_BYTES))

        def write(tmp: Path) -> None:
            pq.write_table(members, tmp / "members.parquet")
            if cases is not None:
                pq.write_table(cases, tmp / "cases.parquet")
            parts = _PartBuffer(tmp / "spill", in_memory=source.size() <= MEMORY_BYTES)
            try:
                for batch in source.batches():
                    part = part_of(batch.column("member"), n_parts)
                    order = np.argsort(part, kind="stable")
                    batch = batch.take(order)
                    bounds = np.searchsorted(part[order], np.arange(n_parts + 1))
                    for k in np.flatnonzero(np.diff(bounds)):
                        parts.add(int(k), batch.slice(bounds[k], bounds[k + 1] - bounds[k]))
                    if progress:
                        progress(batch.num_rows)
            finally:
                parts.close()
            (tmp / "forces").mkdir()
            part_keys = parts.keys()  # before finish() drains the buffer

            def finish(k: int) -> None:
                t = sort_part(parts.take(k))
                source.check_part(t)
                pq.write_table(t.drop_columns(["_row"]), tmp / "forces" / f"part-{k:05d}.parquet")

            with ThreadPoolExecutor(max_workers=2) as pool:  # sorting and writing release the GIL
                list(pool.map(finish, part_keys))
            parts.remove()
            manifest = {
                "run": name,
                "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
                "tool": "shearpost", "tool_version": __version__,
                "code_edition": aci318_19.EDITION,
                "units": UNITS,
                "inputs": {role: {"path": str(p), "sha256": sha256_of(p)} for role, p in inputs.items()},
                "counts": {"members": members.num_rows, "force_rows": source.rows, "force_parts": len(part_keys),
                           "cases": None if cases is None else cases.num_rows},
                "cases": sorted(source.case_names),
                "warnings": warnings,
                **(extra or {}),
            }
            _write_json(tmp / "manifest.json", manifest)
            if then is not None:
                then(Run(tmp))

        self._atomic(self.root / name, write)
        return Run(self.root / name)

    def write_design(self, run: Run, write) -> Path:
        """Write a run's design folder once, atomically: ``write(folder)`` fills a temporary
        folder, which is renamed into place only when it is complete."""
        if run.design_path.exists():
            raise StoreError(f"run '{run.name}' already has a design; runs are immutable")
        self._atomic(run.design_path, write, staging=run.path)
        return run.design_path

    def _atomic(self, final: Path, write, staging: Path | None = None) -> None:
        staging = staging or self.root
        created = not staging.exists()
        staging.mkdir(parents=True, exist_ok=True)
        tmp = staging / f".tmp-{final.name}-{uuid.uuid4().hex}"
        tmp.mkdir()
        done = False
        try:
            write(tmp)
            _fsync_dir(tmp)
            try:
                os.rename(tmp, final)  # fails if final exists and is not empty
            except OSError:
                raise StoreError(f"'{final}' already exists; runs are never overwritten") from None
            _fsync_dir(staging)
            done = True
        finally:
            if tmp.exists():
                shutil.rmtree(tmp, ignore_errors=True)
            if not done and created and not any(staging.iterdir()):
                staging.rmdir()  # a failed first write leaves no empty store behind


class _PartBuffer:
    """Rows gathered per part: in memory for files up to MEMORY_BYTES, else in spill files."""

    def __init__(self, folder: Path, in_memory: bool):
        self.folder, self.in_memory = folder, in_memory
        self.tables: dict[int, list[pa.Table]] = {}
        self.writers: dict[int, pq.ParquetWriter] = {}
        if not in_memory:
            folder.mkdir()

    def add(self, k: int, t: pa.Table) -> None:
        if self.in_memory:
            self.tables.setdefault(k, []).append(t)
            return
        if k not in self.writers:  # uncompressed: read back once, soon
            self.writers[k] = pq.ParquetWriter(self.folder / f"{k:05d}.parquet", t.schema, compression="none")
        self.writers[k].write_table(t)

    def close(self) -> None:
        for w in self.writers.values():
            w.close()

    def keys(self) -> list[int]:
        return sorted(self.tables if self.in_memory else self.writers)

    def take(self, k: int) -> pa.Table:
        if self.in_memory:
            return pa.concat_tables(self.tables.pop(k))
        path = self.folder / f"{k:05d}.parquet"
        t = pq.read_table(path)
        path.unlink()
        return t

    def remove(self) -> None:
        if not self.in_memory:
            shutil.rmtree(self.folder, ignore_errors=True)


def part_of(member: pa.ChunkedArray | pa.Array, n_parts: int) -> np.ndarray:
    """Part number of each row: CRC-32 of the member id modulo the number of parts (stable
    across processes and machines, unlike Python's hash)."""
    arr = member.combine_chunks() if isinstance(member, pa.ChunkedArray) else member
    enc = pac.dictionary_encode(arr)
    per_name = np.array([zlib.crc32(m.encode("utf-8")) % n_parts for m in enc.dictionary.to_pylist()], np.int64)
    return per_name[enc.indices.to_numpy(zero_copy_only=False)] if len(per_name) else np.zeros(len(arr), np.int64)


def _write_json(path: Path, doc: dict) -> None:
    with open(path, "w", encoding="utf-8") as fh:
        json.dump(doc, fh, indent=2, sort_keys=False)
        fh.flush()
        os.fsync(fh.fileno())


def _fsync_dir(path: Path) -> None:
    """Make a rename inside ``path`` durable. Windows cannot open a folder as a file
    (NTFS journals the rename itself), so there this is a no-op."""
    if os.name == "nt":
        return
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
