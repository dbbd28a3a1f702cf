"""A folder of immutable, self-checking runs.

    STORE/
      RUN/manifest.json        inputs with sha256, unit system, code edition, tool version,
                               and every file of the run with its size and sha256, sealed
      RUN/members.parquet      validated members table (input schema, in the run's unit system)
      RUN/forces/part-*.parquet  validated forces in parts of whole members, each sorted by
                                 member, case, station
      RUN/cases.parquet        basic load cases, where given
      RUN/design/...           written once, by the design stage, before the run appears
      RUN/schedule/VARIANT/    added later by `schedule`: its own sealed manifest.json

Every write goes to a hidden temporary folder inside the store and is renamed into
place, so a crash never leaves a half-written run visible; an existing run or design
is never overwritten. A run's name is claimed atomically (a claim file created
exclusively in ``.claims/``) before any work, so two runs never pick the same name.

The manifest lists every file of the run with its size and sha256, and carries a seal:
the sha256 of the manifest's own content. Readers open only listed files and check
each against its listing as they read it (the bytes checked are the bytes parsed), so
a flipped bit, a truncated or deleted file, or a stray file added to a folder never
changes a result: the run is reported damaged, by name and file, and every other run
keeps working. ``Store.verify`` checks every file of every run.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import functools
import hashlib
import math
import json
import os
import re
import shutil
import zlib
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.parquet as pq

from postproc.adapters import digests
from postproc.adapters.csv_tables import sort_part
from postproc import __version__, locks, memory
from postproc import units as unit_systems
from postproc.codes import aci318_19

UNITS = {"length": "m for length_m and x_m, mm for *_mm", "force": "kN", "moment": "kN*m", "stress": "MPa"}
UNITS_US = {"length": "ft for length_ft and x_ft, in for *_in", "force": "kip", "moment": "kip*ft", "stress": "psi"}
PART_BYTES = 24 << 20  # CSV bytes per stored part of the forces (small enough to balance 2 workers)
MEMORY_BYTES = 512 << 20  # forces files up to this size are partitioned in memory, larger ones spill to disk
# resident bytes of the ingest per byte of CSV: held in Arrow, and while a block is validated
# (measured on the synthetic frames: see README, performance); both bounds follow the memory setting
ARROW_PER_CSV_BYTE = 3.0
# CSV block size as a share of [run] memory_mb: a block being validated takes about 14 times its size, and
# pyarrow's streaming CSV reader reads raw blocks ahead in the background while one is validated (measured:
# some 20 to 30 blocks in flight on a 2-core machine; 24 MB blocks held 700 MB), so blocks stay small
BLOCK_PER_MEMORY = 1 / 256
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,99}$")
MANIFEST = "manifest.json"
SEAL = "seal"  # key of the manifest's own sha256
SEALED_FOLDERS = ("schedule",)  # folders whose sub-folders are added later, each with its own sealed manifest


class StoreError(Exception):
    """A store operation that cannot proceed (existing run, bad name, missing run)."""


class DamagedRun(StoreError):
    """A file of a stored run is not as its manifest lists it (or the manifest is damaged)."""

    def __init__(self, run: str, file: str, reason: str):
        self.run, self.file, self.reason = run, file, reason
        super().__init__(f"run '{run}' is damaged: {file}: {reason}; other runs are not affected "
                         f"(`shearpost verify` checks the whole store)")


def sha256_of(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _canonical(doc: dict) -> bytes:
    return json.dumps(doc, sort_keys=True, separators=(",", ":"), ensure_ascii=True, allow_nan=True).encode()


def seal_of(doc: dict) -> str:
    """The sha256 of a manifest's content without its seal."""
    return hashlib.sha256(_canonical({k: v for k, v in doc.items() if k != SEAL})).hexdigest()


def listing(folder: Path, skip=()) -> dict[str, dict]:
    """Every file under ``folder`` (but its manifest and the sub-folders ``skip``) with size
    and sha256, by path relative to the folder (always with '/')."""
    files = sorted(p for p in folder.rglob("*") if p.is_file() and p.relative_to(folder).as_posix() != MANIFEST
                   and not any(p.relative_to(folder).as_posix().startswith(s + "/") for s in skip)
                   and not any(part.startswith(".tmp-") for part in p.relative_to(folder).parts))

    def entry(p: Path) -> tuple[str, dict]:
        return p.relative_to(folder).as_posix(), {"size": p.stat().st_size, "sha256": sha256_of(p)}

    with ThreadPoolExecutor(max_workers=2) as pool:  # hashing releases the GIL
        return dict(pool.map(entry, files))


def seal_folder(folder: Path, doc: dict | None = None, skip=()) -> None:
    """Write (or complete) ``folder``'s manifest.json: ``doc``, or the manifest already
    there, with the listing of every file and the seal; written to a temporary name and
    renamed over the old manifest (a reader sees the old one or the new one)."""
    path = folder / MANIFEST
    doc = dict(doc if doc is not None else json.loads(path.read_text(encoding="utf-8")))
    doc["files"] = listing(folder, skip)
    doc[SEAL] = seal_of(doc)
    tmp = folder / f".{MANIFEST}.{os.getpid()}.tmp"
    _write_json(tmp, doc)
    os.replace(tmp, path)


@dataclass(frozen=True)
class Run:
    """A run of the store. ``staged``: the run being written (not yet visible): its files
    are read as they are, not checked against a listing that does not exist yet."""

    path: Path
    staged: bool = False

    @property
    def name(self) -> str:
        return self.path.name

    @functools.cached_property
    def _manifest(self) -> dict:
        return self._sealed_json(MANIFEST)

    def manifest(self) -> dict:
        if self.staged:
            return json.loads((self.path / MANIFEST).read_text(encoding="utf-8"))
        return self._manifest

    def _sealed_json(self, rel: str) -> dict:
        """A sealed manifest (the run's or a sealed folder's), checked against its seal."""
        try:
            doc = json.loads((self.path / rel).read_bytes().decode("utf-8"))
        except FileNotFoundError:
            raise DamagedRun(self.name, rel, "missing") from None
        except (ValueError, UnicodeDecodeError) as exc:
            raise DamagedRun(self.name, rel, f"not a readable manifest ({exc})") from None
        if not isinstance(doc, dict) or not isinstance(doc.get("files"), dict):
            raise DamagedRun(self.name, rel, "lists no files (damaged, or written by an older shearpost)")
        if doc.get(SEAL) != seal_of(doc):
            raise DamagedRun(self.name, rel, "its content does not match its seal (edited or damaged)")
        return doc

    def files(self) -> dict[str, dict]:
        """The run's listed files (path relative to the run -> size, sha256)."""
        return self.manifest()["files"]

    def read_bytes(self, rel: str, listed: dict | None = None) -> bytes:
        """A listed file's bytes, checked against its size and sha256 (the bytes returned are
        the bytes checked)."""
        if self.staged:
            return (self.path / rel).read_bytes()
        entry = (listed if listed is not None else self.files()).get(rel)
        if entry is None:
            raise DamagedRun(self.name, rel, "not listed in the manifest") if (self.path / rel).exists() else \
                StoreError(f"run '{self.name}' has no {rel}")
        try:
            with open(self.path / rel, "rb") as fh:
                data = fh.read(entry["size"] + 1)
        except FileNotFoundError:
            raise DamagedRun(self.name, rel, "missing") from None
        if len(data) != entry["size"]:
            raise DamagedRun(self.name, rel, f"{len(data):,} bytes where {entry['size']:,} were stored")
        if hashlib.sha256(data).hexdigest() != entry["sha256"]:
            raise DamagedRun(self.name, rel, "its sha256 does not match the manifest (changed after it was stored)")
        return data

    def listed_under(self, folder: str, listed: dict | None = None) -> list[str]:
        """Listed files under a folder of the run (never a file that is merely there)."""
        if self.staged:
            base = self.path / folder
            return sorted(p.relative_to(self.path).as_posix() for p in base.rglob("*") if p.is_file())
        prefix = folder.rstrip("/") + "/"
        return sorted(k for k in (listed if listed is not None else self.files()) if k.startswith(prefix))

    def table(self, rel: str, columns: list[str] | None = None, filters=None) -> pa.Table:
        """A Parquet file of the run, or every listed file of a folder of them, checked."""
        names = [rel] if rel.endswith(".parquet") else self.listed_under(rel)
        if not names:
            raise StoreError(f"run '{self.name}' has no {rel}")
        parts = []
        for n in names:  # parts of different families may hold different columns: a missing one reads as null
            data = self.read_bytes(n)
            schema = pq.read_schema(pa.BufferReader(data))
            have = None if columns is None else [c for c in columns if c in schema.names]
            if filters and any(c in schema.names and pa.types.is_null(schema.field(c).type) for c, *_ in filters):
                # a column without a value (a table written empty from pandas): no row can match, and Arrow
                # refuses to compare it with the filter's values
                t = pq.read_table(pa.BufferReader(data), columns=have).slice(0, 0)
            else:
                t = pq.read_table(pa.BufferReader(data), columns=have, filters=filters)
            for c in [] if columns is None else [c for c in columns if c not in t.column_names]:
                t = t.append_column(c, pa.nulls(t.num_rows, pa.float64()))
            parts.append(t if columns is None else t.select(columns))
        return parts[0] if len(parts) == 1 else pa.concat_tables(parts, promote_options="default")

    def json(self, rel: str) -> dict:
        return json.loads(self.read_bytes(rel).decode("utf-8"))

    @property
    def units(self) -> unit_systems.UnitSystem:
        """The run's unit system (its tables' column names and units); runs stored before
        there were two are SI."""
        return unit_systems.system(self.manifest().get("unit_system", "si"))

    def members(self) -> pa.Table:
        return self.table("members.parquet")

    def force_parts(self) -> list[Path]:
        """The forces, as parts that each hold whole members."""
        return [self.path / rel for rel in self.listed_under("forces") if rel.endswith(".parquet")]

    def forces(self, columns: list[str] | None = None, filters=None) -> pa.Table:
        return self.table("forces", columns, filters)

    def forces_of(self, member: str, columns: list[str] | None = None) -> pa.Table:
        """The force rows of one member: from the one part that can hold it (parts are
        chosen by a hash of the member id), else from all."""
        n = self.manifest()["counts"].get("force_buckets")
        rel = None if n is None else f"forces/part-{zlib.crc32(member.encode('utf-8')) % n:05d}.parquet"
        if rel is not None and rel not in self.files():  # no member falls in that part: none has rows
            return self.table(self.listed_under("forces")[0], columns).slice(0, 0)
        return self.table(rel or "forces", columns, [("member", "==", member)])

    def cases(self) -> pa.Table | None:
        if self.staged:
            p = self.path / "cases.parquet"
            return pq.read_table(p) if p.exists() else None
        return self.table("cases.parquet") if "cases.parquet" in self.files() else None

    @property
    def design_path(self) -> Path:
        return self.path / "design"

    def has_design(self) -> bool:
        if self.staged:
            return (self.design_path / MANIFEST).exists()
        return "design/manifest.json" in self.files()

    def design_manifest(self) -> dict:
        return self.json("design/manifest.json")

    def sealed(self, folder: str) -> dict | None:
        """The listing of a folder added later (a schedule variant), checked; None if absent."""
        if not (self.path / folder).exists():
            return None
        doc = self._sealed_json(f"{folder}/{MANIFEST}")  # (a folder is renamed in with its manifest: never without)
        return {f"{folder}/{k}": v for k, v in doc["files"].items()}

    def verify(self) -> list[str]:
        """Every problem of the run's files: damaged, missing or unlisted (empty: intact)."""
        problems: list[str] = []
        try:
            listed = dict(self.files())
        except DamagedRun as exc:
            return [f"{exc.file}: {exc.reason}"]
        for top in SEALED_FOLDERS:
            base = self.path / top
            for sub in sorted(p for p in base.iterdir() if p.is_dir() and not p.name.startswith(".")) \
                    if base.is_dir() else []:
                try:
                    listed.update(self.sealed(f"{top}/{sub.name}") or {})
                except DamagedRun as exc:
                    problems.append(f"{exc.file}: {exc.reason}")
        for rel in sorted(listed):
            try:
                self.read_bytes(rel, listed)
            except DamagedRun as exc:
                problems.append(f"{exc.file}: {exc.reason}")
        known = set(listed) | {MANIFEST}
        for p in sorted(self.path.rglob("*")):
            rel = p.relative_to(self.path).as_posix()
            if p.is_file() and rel not in known and not _sealed_manifest(rel) \
                    and not any(part.startswith(".tmp-") for part in p.relative_to(self.path).parts):
                problems.append(f"{rel}: not a file of the run (not listed; readers ignore it)")
        return problems


def _sealed_manifest(rel: str) -> bool:
    parts = rel.split("/")
    return len(parts) == 3 and parts[0] in SEALED_FOLDERS and parts[2] == MANIFEST


class Store:
    def __init__(self, root: str | Path):
        self.root = Path(root)

    def runs(self) -> list[Run]:
        """Every run folder of the store, damaged or not (a folder without its manifest is a
        damaged run; hidden folders are the store's own)."""
        if not self.root.is_dir():
            return []
        return [Run(p) for p in sorted(self.root.iterdir()) if p.is_dir() and not p.name.startswith(".")]

    def run(self, name: str) -> Run:
        r = Run(self.root / name)
        if not _NAME.fullmatch(name) or not r.path.is_dir():
            raise StoreError(f"no run named '{name}' in {self.root}")
        r.manifest()  # a damaged run is said so at once
        return r

    def intact_runs(self) -> tuple[list[Run], list[DamagedRun]]:
        """The runs whose manifests are intact, and what is wrong with the others."""
        good, bad = [], []
        for r in self.runs():
            try:
                r.manifest()
                good.append(r)
            except DamagedRun as exc:
                bad.append(exc)
        return good, bad

    def latest(self) -> Run:
        """The most recently created run (of those whose manifests are intact)."""
        runs, _ = self.intact_runs()
        if not runs:
            raise StoreError(f"no runs in {self.root}; create one with `shearpost run` or `shearpost demo`")
        return max(runs, key=lambda r: (r.manifest()["created"], r.name))

    # ---------------------------------------------------------------- names, claims, locks

    def _claim_path(self, name: str) -> Path:
        return self.root / ".claims" / name

    def lock_path(self, name: str) -> Path:
        return self.root / ".locks" / name

    def new_name(self, today: _dt.date | None = None) -> str:
        """The first free name of the day (not taken, not being written); not claimed."""
        stamp = (today or _dt.date.today()).strftime("%Y%m%d")
        k = 1
        while (self.root / f"{stamp}-{k:03d}").exists() or self._claimed(f"{stamp}-{k:03d}"):
            k += 1
        return f"{stamp}-{k:03d}"

    def _claimed(self, name: str) -> bool:
        p = self._claim_path(name)
        return p.exists() and not locks.stale(p)

    def check_new_name(self, name: str) -> None:
        if not _NAME.fullmatch(name):
            raise StoreError(f"run name '{name}' is not allowed: use ASCII letters (a-z, A-Z), digits, '.', '_' and '-' "
                             "(at most 100, not starting with '.' or '-')")
        if (self.root / name).exists():
            raise StoreError(f"run '{name}' already exists in {self.root}; runs are never overwritten, "
                             "choose another --run name")

    @contextlib.contextmanager
    def reserve(self, name: str | None = None, today: _dt.date | None = None):
        """Claim a run name for the block: ``name``, or the first free name of the day. Two
        processes never hold one name; a name held by a live process is a StoreError. A
        store folder made here and left empty (a failed first run) is removed again."""
        created = not self.root.exists()
        try:
            if name is not None:
                self.check_new_name(name)
            self.root.mkdir(parents=True, exist_ok=True)
            while True:
                chosen = name or self.new_name(today)
                if locks.claim(self._claim_path(chosen)):
                    break
                if name is not None:
                    raise StoreError(f"run '{name}' is being written by {locks.holder(self._claim_path(name))}; "
                                     "choose another --run name")
            try:
                self.check_new_name(chosen)  # made by another process just before our claim
                yield chosen
            finally:
                locks.release(self._claim_path(chosen))
        finally:
            if created:
                with contextlib.suppress(OSError):
                    self.root.rmdir()  # only if empty

    def clean_stale(self) -> list[Path]:
        """Remove the temporary folders of runs whose process is gone (on this host); the
        folders removed. A temporary folder of a live process, or of another host, stays."""
        removed = []
        for folder in [self.root, *(r.path for r in self.runs()), *(r.path / "schedule" for r in self.runs())]:
            if not folder.is_dir():
                continue
            for p in folder.iterdir():
                if p.is_dir() and locks.tmp_is_stale(p.name):
                    shutil.rmtree(p, ignore_errors=True)
                    removed.append(p)
        return removed

    # ---------------------------------------------------------------- writing

    def ingest(self, name: str, members: pa.Table, cases: pa.Table | None, source, inputs: dict[str, Path],
               warnings: list[str], extra: dict | None = None, progress=None, then=None,
               units: unit_systems.UnitSystem = unit_systems.SI, memory_mb: float | None = None) -> Run:
        """Write a new run atomically and return it. ``then(run)``, if given, runs on the
        complete but not yet visible run (the design stage writes its design/ there), so
        that the run appears with its design or not at all. Claim the name first
        (``reserve``) where another process may write into the same store.

        ``source`` streams validated force batches (``batches()``, ``check_part()``,
        ``size()``, see postproc.adapters.csv_tables.ForcesReader). Rows are spread over parts by a
        hash of the member id, so that every part holds whole members; each part is then
        checked, sorted by member, case, station and file row, and written. Memory is
        bounded by the part size, not by the model. The inputs' sha256 are those of the
        bytes the readers parsed (postproc.adapters.digests), where they recorded them.
        ``units``: the unit system the tables are in (recorded in the manifest, with the
        edition of ACI 318-19 it designs with). ``memory_mb`` ([run] memory_mb) bounds this
        process's resident memory: the forces are partitioned in memory only while they fit in
        a quarter of it, and read in blocks of a 64th of it (at most the reader's own block).
        """
        self.check_new_name(name)
        n_parts = max(1, math.ceil(source.size() / PART_BYTES))
        in_memory = source.size() <= MEMORY_BYTES
        if memory_mb is not None:
            budget = memory_mb * 2**20
            in_memory = in_memory and source.size() * ARROW_PER_CSV_BYTE <= budget / 4
            if hasattr(source, "BLOCK"):
                source.BLOCK = int(min(source.BLOCK, max(1 << 20, budget * BLOCK_PER_MEMORY)))

        def write(tmp: Path) -> None:
            pq.write_table(members, tmp / "members.parquet")
            if cases is not None:
                pq.write_table(cases, tmp / "cases.parquet")
            parts = _PartBuffer(tmp / "spill", in_memory=in_memory)
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
                "code_edition": aci318_19.edition(units.name).title,
                "unit_system": units.name,
                "units": UNITS if units.name == "si" else UNITS_US,
                "inputs": {role: {"path": str(p), "sha256": digests.recorded(p) or sha256_of(p)}
                           for role, p in inputs.items()},
                "counts": {"members": members.num_rows, "force_rows": source.rows, "force_parts": len(part_keys),
                           "force_buckets": n_parts, "cases": None if cases is None else cases.num_rows},
                "cases": sorted(source.case_names),
                "warnings": warnings,
                **(extra or {}),
            }
            _write_json(tmp / MANIFEST, manifest)
            if then is not None:
                memory.release()  # the ingest's buffers, kept by the allocators, before the design starts
                then(Run(tmp, staged=True))
            seal_folder(tmp, skip=SEALED_FOLDERS)

        self._atomic(self.root / name, write)
        return Run(self.root / name)

    def write_design(self, run: Run, write) -> Path:
        """Write a stored run's design folder once (runs made by ``ingest`` without ``then``,
        as the bench makes them), under the run's lock: ``write(folder)`` fills a temporary
        folder, renamed into place when complete; then the run's manifest is sealed again
        with the design's files listed (replaced atomically)."""
        with locks.held(self.lock_path(run.name), f"run '{run.name}'"):
            if run.has_design() or run.design_path.exists():
                raise StoreError(f"run '{run.name}' already has a design; runs are immutable")
            self._atomic(run.design_path, write, staging=run.path)
            doc = {k: v for k, v in run.manifest().items() if k not in ("files", SEAL)}
            seal_folder(run.path, doc, skip=SEALED_FOLDERS)
        return run.design_path

    def add_sealed(self, run: Run, folder: str, write) -> None:
        """Add a sealed folder to a stored run (a schedule variant), atomically, under the
        run's lock: ``write(tmp)`` fills it, its manifest is sealed, then it is renamed in."""
        final = run.path / folder
        with locks.held(self.lock_path(run.name), f"run '{run.name}'"):
            if run.sealed(folder) is not None:  # made meanwhile by another process (or damaged: said so)
                return
            final.parent.mkdir(parents=True, exist_ok=True)

            def sealed_write(tmp: Path) -> None:
                write(tmp)
                seal_folder(tmp, {"run": run.name, "folder": folder})

            self._atomic(final, sealed_write, staging=final.parent)

    def _atomic(self, final: Path, write, staging: Path | None = None) -> None:
        staging = staging or self.root
        created = not staging.exists()
        staging.mkdir(parents=True, exist_ok=True)
        tmp = staging / locks.tmp_name(final.name)
        tmp.mkdir()
        done = False
        try:
            write(tmp)
            _fsync_dir(tmp)
            try:
                os.rename(tmp, final)  # fails if final exists and is not empty
            except OSError:
                if final.exists():
                    raise StoreError(f"'{final}' already exists; runs are never overwritten") from None
                raise
            _fsync_dir(staging)
            done = True
        finally:
            if tmp.exists():
                shutil.rmtree(tmp, ignore_errors=True)
            if not done and created:
                with contextlib.suppress(OSError):
                    staging.rmdir()  # a failed first write leaves no empty store behind


class _PartBuffer:
    """Rows gathered per part: in memory while they fit the memory setting, else in spill
    files. A spill file is an Arrow IPC stream (each slice written through as it comes):
    a Parquet writer holds column buffers per open file, about 20 MB each once the slices
    are large, which across a hundred-odd parts was most of the ingest's memory."""

    def __init__(self, folder: Path, in_memory: bool):
        self.folder, self.in_memory = folder, in_memory
        self.tables: dict[int, list[pa.Table]] = {}
        self.writers: dict[int, pa.ipc.RecordBatchStreamWriter] = {}
        self.files: dict[int, pa.NativeFile] = {}
        if not in_memory:
            folder.mkdir()

    def add(self, k: int, t: pa.Table) -> None:
        if self.in_memory:
            self.tables.setdefault(k, []).append(t)
            return
        if k not in self.writers:  # uncompressed: read back once, soon
            self.files[k] = pa.OSFile(str(self.folder / f"{k:05d}.arrows"), "wb")
            self.writers[k] = pa.ipc.new_stream(self.files[k], t.schema)
        self.writers[k].write_table(t)

    def close(self) -> None:
        for k, w in self.writers.items():
            w.close()
            self.files[k].close()

    def keys(self) -> list[int]:
        return sorted(self.tables if self.in_memory else self.writers)

    def take(self, k: int) -> pa.Table:
        if self.in_memory:
            return pa.concat_tables(self.tables.pop(k))
        path = self.folder / f"{k:05d}.arrows"
        with pa.OSFile(str(path), "rb") as fh:
            t = pa.ipc.open_stream(fh).read_all()
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
