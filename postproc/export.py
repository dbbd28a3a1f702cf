"""The detailer tables and the report of a stored run, written into an output folder.

`run` writes its outputs this way once the run is committed, and `shearpost export`
writes them again from any stored run: a failed write (a full disk, say) never strands
a run whose tables cannot be had. The files are written under hidden temporary names
and renamed into place together at the end, so that the folder never holds the
members.csv of one run beside the zones.csv of another; two processes writing into one
folder take turns (a lock file in the folder). An output never replaces an input file.
"""

from __future__ import annotations

import contextlib
import os
import uuid
from pathlib import Path

from postproc import html_report, locks, memory, report
from postproc.store import Run, Store

OUTPUTS = ("members.csv", "zones.csv", "joints.csv", "report.html")
LOCK = ".shearpost-writing"


class OutError(Exception):
    """--out cannot be used (a usage error): it is a file, inside the store, or on an input."""


def _same(a: Path, b: Path) -> bool:
    if os.path.normcase(os.path.realpath(a)) == os.path.normcase(os.path.realpath(b)):
        return True
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def check_out(out: Path, inputs: dict[str, Path], store: Store | None, names=OUTPUTS) -> None:
    """Refuse an output folder that is a file, lies inside the store, or would overwrite
    an input (the same file under an output name, by any path or link)."""
    if out.exists() and not out.is_dir():
        raise OutError(f"--out {out} is an existing file; give a folder")
    if store is not None:
        root, target = os.path.realpath(store.root), os.path.realpath(out)
        if target == root or target.startswith(root.rstrip(os.sep) + os.sep):
            raise OutError(f"--out {out} lies inside the store {store.root}; give a folder outside it")
    for role, path in inputs.items():
        if path is None:
            continue
        for name in names:
            if _same(out / name, Path(path)):
                raise OutError(f"--out {out}: writing {name} there would overwrite the {role} input {path}; "
                               "give another folder")


def stored_result(run: Run) -> tuple:
    """The members, zones and joints (None where the run has none) tables of a stored design."""
    members = run.table("design/members.parquet").to_pandas()
    zones = run.table("design/zones.parquet").to_pandas()
    joints = run.table("design/joints.parquet").to_pandas() if "design/joints.parquet" in run.files() else None
    return members, zones, joints


def write_outputs(run: Run, out: Path, with_report: bool = True, progress=None) -> list[Path]:
    """members.csv, zones.csv, joints.csv (where the run has joints of special moment
    frames) and (``with_report``) report.html of a stored run, written together; on any
    failure the folder keeps what it held before."""
    if not run.has_design():
        raise ValueError(f"run '{run.name}' has no design")
    members, zones, joints = stored_result(run)
    has_joints = joints is not None and len(joints) > 0
    names = [n for n in OUTPUTS if (n != "joints.csv" or has_joints) and (n != "report.html" or with_report)]
    with locks.held(out / LOCK, f"output folder {out}"):
        tag = uuid.uuid4().hex[:8]
        staged: dict[str, tuple[Path, Path]] = {}
        try:
            for name in names:
                staged[name] = (out / f".{name}.{tag}.tmp", out / name)
            report.write_tables(members, zones, out, {n: staged[n][0].name for n in names if n.endswith(".csv")},
                                joints if has_joints else None)
            del members, zones
            memory.release()  # before the report reads the run again
            if with_report:
                html_report.write_html_report(run, staged["report.html"][0])
                if progress:
                    progress()
            for tmp, final in staged.values():
                os.replace(tmp, final)
        finally:
            for tmp, _ in staged.values():
                with contextlib.suppress(FileNotFoundError):
                    tmp.unlink()
    return [final for _, final in staged.values()]
