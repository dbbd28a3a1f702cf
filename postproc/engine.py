"""Design a stored run: part by part, family by family, in batches of whole members that
go through the pipeline (postproc.pipeline). Every member of the input leaves with a
status: designed by its family, or invalid, not-covered, no-forces, no-geometry.
"""

from __future__ import annotations

import functools
import math
import pickle
import re
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.parquet as pq

from postproc import combos as combos_mod
from postproc import joints as joints_mod
from postproc import memory, stages
from postproc import units
from postproc.codes import aci318_19 as aci
from postproc.settings import Settings
from postproc.store import Run
# re-exported: engine.MEMBER_COLUMNS, ZONE_COLUMNS, SelfCheckError, STATUSES are part of its interface
from postproc.pipeline import MEMBER_COLUMNS, ZONE_COLUMNS, BatchInput, SelfCheckError, design_batch, row  # noqa: F401
from postproc.pipeline import beams as beam_family
from postproc.pipeline import deep as deep_step
from postproc.pipeline import columns as column_family
from postproc.terms import STATUSES  # noqa: F401

FAMILIES = (beam_family, column_family)  # each designs the members of its KINDS; other kinds are not-covered
BATCH_CELLS = 500_000  # combinations x stations per batch: bounds memory (and stays in cache), not results


def member_columns(U: units.UnitSystem = units.SI) -> list[str]:
    """members.csv's columns in a unit system: MEMBER_COLUMNS, unit suffixes swapped (postproc.units)."""
    return U.cols(MEMBER_COLUMNS)


def zone_columns(U: units.UnitSystem = units.SI) -> list[str]:
    """zones.csv's columns in a unit system."""
    return U.cols(ZONE_COLUMNS)


@dataclass
class Result:
    members: pd.DataFrame  # member_columns(units)
    zones: pd.DataFrame  # zone_columns(units)
    combos: combos_mod.ComboSet
    warnings: list[str] = field(default_factory=list)
    joints: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(columns=joints_mod.COLUMNS))
    units: units.UnitSystem = units.SI
    stage_seconds: dict[str, float] = field(default_factory=dict)  # seconds by stage, summed over processes (timed only)


# names analysis programs give basic load cases (common practice): D, L, Lr, S, R, W, E, with an axis or a number
BASIC_CASE_NAME = re.compile(r"(d|dl|dead|sdl|l|ll|live|lr|s|snow|r|rain|w|wind|e|eq|quake)([ _-]?[xyz0-9+-]*)",
                             re.IGNORECASE)


def combination_set(run: Run, case_names: list[str], settings: Settings) -> tuple[combos_mod.ComboSet, list[str]]:
    cases = run.cases()
    if cases is None:
        basic = [c for c in case_names if BASIC_CASE_NAME.fullmatch(c.strip())]
        if len({c.strip()[0].lower() for c in basic}) < 2:  # one letter alone may name anything
            return combos_mod.prefactored(case_names), []
        return combos_mod.prefactored(case_names), [
            f"without cases.csv every case of forces.csv is taken as an already factored combination, but "
            f"{len(basic)} of them are named as basic load cases ({', '.join(sorted(basic)[:8])}"
            f"{', ...' if len(basic) > 8 else ''}): designed so, they are not factored; if they are basic cases, give "
            "their types in cases.csv (--cases) to combine them by Table 5.3.1"]
    types = dict(zip(cases.column("case").to_pylist(), cases.column("type").to_pylist()))
    patterns = {}
    if "pattern" in cases.column_names:
        patterns = dict(zip(cases.column("case").to_pylist(), cases.column("pattern").fill_null("").to_pylist()))
    unused = sorted(set(types) - set(case_names))
    warnings = [f"cases.csv lists case '{c}', which has no rows in forces.csv" for c in unused]
    return combos_mod.aci_5_3_1(types, case_names, settings.combinations, patterns), warnings


@dataclass
class PartResult:
    rows: pd.DataFrame  # members.csv rows (MEMBER_COLUMNS, SI-keyed): columns, not a dict per member
    zones: pd.DataFrame  # zones.csv rows (ZONE_COLUMNS)
    warnings: list[str]
    members: set[str]  # every member id found in the part's forces
    stirrups: pd.DataFrame  # member, x_mm: every stirrup's position from face i
    tables: dict[str, pd.DataFrame] = field(default_factory=dict)
    stage_seconds: dict[str, float] = field(default_factory=dict)


def design_run(run: Run, settings: Settings, folder: Path, map_parts=map, progress=None, timed: bool = False) -> Result:
    """Design every member of a stored run, part by part (each part holds whole members).

    ``map_parts(fn, tasks)`` runs the tasks (the built-in map, or an engine's; its
    ``workers`` attribute, where it has one, sizes the tasks: ``design_tasks``); each
    task's station trace is written to ``folder``/stations by its worker, so a worker's memory
    is bounded by the task size; the stirrup positions of each task are appended to
    ``folder``/stirrups.parquet as it comes, and the families' own tables (strut-and-tie
    models) to ``folder``/stm_<name>.parquet (``TableSpill``): none of them is held whole.
    The tables are named in the unit system of ``settings``.
    ``timed``: the seconds of each stage, in every process, are gathered into
    ``Result.stage_seconds`` (postproc.stages; `shearpost bench`).
    """
    U = units.system(settings.units)
    members = run.members().to_pandas()
    input_order = pd.Index(members["member"])  # ids are unique (members.csv and IFC are checked)
    cset, warnings = combination_set(run, run.manifest()["cases"], settings)
    warnings += chapter_18_warnings(members, cset, settings.combinations.vertical_earthquake)
    joints, joint_warnings = joints_mod.design_joints(members, settings)
    warnings += joint_warnings
    rows: list[dict] = []  # members not designed here (invalid, not covered, no forces, no geometry)
    reason = members["invalid_reason"] if "invalid_reason" in members else pd.Series(None, index=members.index)
    invalid = reason.notna() & (reason != "")
    for m, why in zip(members.loc[invalid, "member"], reason[invalid]):
        rows.append(row(m, "invalid", why))
    members = members[~invalid]
    covered = members["kind"].isin([k for f in FAMILIES for k in f.KINDS])
    for m, kind in zip(members.loc[~covered, "member"], members.loc[~covered, "kind"]):
        rows.append(row(m, "not-covered", f"the design of members of kind '{kind}' is not covered yet"))
    designable = members[covered].sort_values("member").reset_index(drop=True)
    for family in FAMILIES:  # what a family needs from the whole table (a column's joints: the beams there)
        if hasattr(family, "prepare"):
            designable = family.prepare(designable, settings)
    del members, reason, invalid, covered  # the whole table: designable holds what the tasks need
    memory.release()

    designed: list[pd.DataFrame] = []
    zone_spill = folder / "zones-parts.pickle"  # the tasks' zone rows wait on disk until the members' are joined
    tables = TableSpill(folder / "stm-parts", {name: folder / f"stm_{name}.parquet" for name in deep_step.TABLES})
    stations_dir = folder / "stations"
    stations_dir.mkdir(exist_ok=True)
    x_col = U.col("x_mm")
    work, strays, rows_of_part = design_tasks([str(p) for p in run.force_parts()], designable, cset, settings,
                                              getattr(map_parts, "workers", 1))
    task = functools.partial(design_task, cset=cset, settings=settings, stations_dir=str(stations_dir), timed=timed)
    stage_seconds: dict[str, float] = {}
    with pq.ParquetWriter(folder / "stirrups.parquet", pa.schema([("member", pa.large_string()),
                                                                  (x_col, pa.float64())])) as positions, \
            open(zone_spill, "wb") as zone_file:
        # each task's stirrups appended as it comes
        for t, part in zip(work, map_parts(task, _WithMembers(work, designable, rows_of_part))):
            designed.append(part.rows)
            pickle.dump(part.zones, zone_file, pickle.HIGHEST_PROTOCOL)  # this process's own, read back below
            warnings.extend(part.warnings)
            if len(part.stirrups):
                positions.write_table(pa.table({
                    "member": pa.array(part.stirrups["member"].astype(str), pa.large_string()),
                    x_col: pa.array(part.stirrups["x_mm"].astype(float), pa.float64())}))
            for name, df in part.tables.items():
                tables.add(name, df)
            stages.merge(stage_seconds, part.stage_seconds)
            if progress:
                progress(1 / t.of)
    tables.write()
    designable = designable[["member", "kind"]]  # all the rest is needed no more (columns_without_vb)
    memory.release()  # with what the tasks' results took on their way in
    for m in sorted(m for m in strays if m not in input_order):
        rows.append(row(m, "no-geometry", "forces given but no row in the members table"))
    with_forces = np.zeros(len(designable), bool)
    for at in rows_of_part.values():
        with_forces[at] = True
    for m in designable["member"][~with_forces]:
        rows.append(row(m, "no-forces", "no rows in the forces table"))

    designed.insert(0, pd.DataFrame(rows, columns=MEMBER_COLUMNS))  # the list itself: _joined empties it
    out = _joined(designed, MEMBER_COLUMNS, input_order)
    warnings += columns_without_vb(out, designable)
    warnings[:0] = force_scale_hint(out, U)  # first: it explains the rest
    memory.release()
    with open(zone_spill, "rb") as zone_file:
        zones = [pickle.load(zone_file) for _ in work]
    zone_spill.unlink()
    zdf = _joined(zones, ZONE_COLUMNS, input_order, within="zone")
    memory.release()
    # the records are keyed by the SI spelling of each column; the tables take the run's (postproc.pipeline)
    return Result(out.rename(columns=U.rename(MEMBER_COLUMNS)), zdf.rename(columns=U.rename(ZONE_COLUMNS)), cset,
                  warnings, joints.rename(columns=U.rename(joints_mod.COLUMNS)), U, stage_seconds)


class TableSpill:
    """Tables that arrive task by task and are written as one Parquet file each, never held
    whole: each task's piece goes to a file of its own under ``folder``; ``write`` then
    appends the pieces in order to the final file, each cast to the schema that unifies them
    all (a column empty in one task and text in another is text), and removes ``folder``.
    A table that never arrives is written empty, with a text ``member`` column."""

    def __init__(self, folder: Path, targets: dict[str, Path]):
        self.folder, self.targets, self.pieces = folder, targets, {name: [] for name in targets}

    def add(self, name: str, df: pd.DataFrame) -> None:
        if not len(df):
            return
        self.folder.mkdir(exist_ok=True)
        path = self.folder / f"{name}-{len(self.pieces[name]):05d}.parquet"
        pq.write_table(pa.Table.from_pandas(df, preserve_index=False), path)
        self.pieces[name].append(path)

    def write(self) -> None:
        for name, target in self.targets.items():
            pieces = self.pieces[name]
            if not pieces:
                empty = pd.DataFrame({"member": pd.Series([], dtype=str)})
                pq.write_table(pa.Table.from_pandas(empty, preserve_index=False), target)
                continue
            schema = pa.unify_schemas([pq.read_schema(p) for p in pieces], promote_options="permissive")
            with pq.ParquetWriter(target, schema) as out:
                for p in pieces:
                    t = pq.read_table(p)
                    for f in schema:  # a column a piece lacks is empty there, as pd.concat would leave it
                        if f.name not in t.column_names:
                            t = t.append_column(f.name, pa.nulls(t.num_rows, f.type))
                    out.write_table(t.select(schema.names).cast(schema))
                    p.unlink()
        if self.folder.exists():
            self.folder.rmdir()


def _joined(frames: list[pd.DataFrame], columns: list[str], input_order: pd.Index,
            within: str | None = None) -> pd.DataFrame:
    """The parts' record tables as one, its rows in the input order of
    their members (members the input lacks last, by id; ``within``: the column that orders
    the rows of one member, in a stable sort), each column typed as if built from all the
    records at once (a column that is empty in one part, or holds another type there, is
    read again from its values). Built one column at a time, each taken out of the parts
    as it is joined (its pages handed back: memory.release) and inserted without
    consolidating the table's blocks, so that the parts and the whole are never held
    twice; ``frames`` is emptied, so that the caller's list does not keep the parts alive."""
    parts = [dict(f.items()) for f in frames if len(f)]  # each part as its columns
    frames.clear()
    if not parts:
        return pd.DataFrame(columns=columns)

    def join(c: str) -> pd.Series:
        col = pd.concat([p.pop(c) for p in parts], ignore_index=True)
        return pd.Series(col.tolist(), dtype=None) if col.dtype == object else col

    keys = {"member": join("member")}
    position = input_order.get_indexer(keys["member"])
    missing = position < 0
    if missing.any():
        position[missing] = len(input_order) + pd.factorize(keys["member"][missing], sort=True)[0]
    if within is None:
        order = np.argsort(position, kind="stable")
    else:
        keys[within] = join(within)
        order = np.lexsort((keys[within].to_numpy(), position))
    out = pd.DataFrame(index=pd.RangeIndex(len(order)))
    for c in columns:
        out[c] = (keys.pop(c) if c in keys else join(c)).take(order).reset_index(drop=True)
        memory.release()
    parts.clear()
    return out


def chapter_18_warnings(members: pd.DataFrame, cset: combos_mod.ComboSet, ev: float = 0.0) -> list[str]:
    """Where the run has earthquake cases: one warning that E is taken as given where the
    settings add no vertical effect (``ev``: c of Ev = c D); one that Chapter 18 is applied
    to nothing where no member belongs to a moment frame; where some member belongs to a
    special one, one that phi = 0.60 of 21.2.4.1 is not applied to the other members."""
    quake = sorted(c for c, t in cset.types.items() if t == "E")
    if not quake:
        return []
    named = f"{', '.join(quake[:5])}{' ...' if len(quake) > 5 else ''}"
    out = [] if ev > 0 else [
        f"E is taken as its cases give it ({named}): a vertical earthquake effect the general building code adds to E "
        "(e.g. 0.2 S_DS D) is NOT added, in Table 5.3.1 (e) and (g) or in the gravity load of Ve (Chapter 18); set "
        "[combinations] vertical_earthquake = 0.2 S_DS, or include it in the E cases, where it applies"]
    frame = members["frame"].fillna("none") if "frame" in members else pd.Series("none", index=members.index)
    if frame.eq("special").any() and frame.ne("special").any():
        return out + ["a structure with special moment frames: phi = 0.60 for shear of 21.2.4.1 (a member designed to "
                      "resist E whose Vn is less than the shear at its nominal flexural strength) is NOT applied; the "
                      "members outside the special frames are designed with phi = 0.75: check by hand any of them that "
                      "resists E"]
    if frame.ne("none").any():
        return out
    return out + [f"the run has earthquake cases ({named}) but no member is marked as part of a moment frame "
                  "(members.csv `frame`, or [frames] by_group in the settings): ACI 318-19 Chapter 18 (capacity-design "
                  "shear, hoops, joints) was NOT applied; every member is designed by Chapters 9 and 22 alone"]


def columns_without_vb(out: pd.DataFrame, members: pd.DataFrame) -> list[str]:
    """Columns designed with Vb zero at both faces in every combination (forces.csv without
    Vb_kN, an element export, or a plane-frame analysis): their ties are designed for the
    analysis V alone, so each says so in its message (``out`` is changed in place) and one
    warning names them; a frame column's Ve from Mpr parallel to b still applies (18.7.6.1.1)."""
    if "kind" not in members:
        return []
    columns = set(members.loc[members["kind"] == "column", "member"])
    flat = (out["member"].isin(columns) & out["status"].isin(["designed", "resize"])
            & out["vb_design_i_kN"].fillna(0.0).eq(0.0) & out["vb_design_j_kN"].fillna(0.0).eq(0.0))
    if not flat.any():
        return []
    note = ("Vb_kN is zero at both faces in every combination (not given?): the analysis shear parallel to b is "
            "taken as zero")
    out.loc[flat, "message"] = [f"{m}; {note}" if isinstance(m, str) and m else note for m in out.loc[flat, "message"]]
    names = sorted(out.loc[flat, "member"])
    return [f"{len(names)} column(s) with Vb_kN zero at both faces in every combination ({', '.join(names[:5])}"
            f"{' ...' if len(names) > 5 else ''}): their ties are designed for V (parallel to h) alone, with Vb taken "
            "as zero; give Vb_kN from a three-dimensional analysis, or confirm the plane frame"]


SCALE_HINT_SHARE, SCALE_HINT_UTILIZATION = 0.8, 5.0  # common practice: a building's members, not a hard rule


def force_scale_hint(out: pd.DataFrame, U: units.UnitSystem) -> list[str]:
    """A warning where the forces look scaled wrong: most of the designed members sent to
    resize, the median one five times over its section limits. Sections sized by an
    engineer are not, so the likely cause is forces in N (lb) under a kN (kip) header, or
    values from another export's units; the members' statuses stand as designed."""
    tried = out[out["status"].isin(["designed", "resize"])]
    if len(tried) < 5:
        return []
    resize = tried["status"].eq("resize").mean()
    median = float(tried["utilization"].astype(float).median())
    if resize < SCALE_HINT_SHARE or not median > SCALE_HINT_UTILIZATION:
        return []
    force, per, col = (U.force, "N", "V_kN") if U.name == "si" else (U.force, "lbf", "V_kip")
    return [f"{resize:.0%} of the {len(tried):,} members designed need resizing, the median one at {median:,.1f} "
            f"times its shear limits: are forces.csv's values in {force}? Forces in {per} under a {force} header look "
            f"like this; a --map file converts them ([forces] units = {{ {col} = \"{per}\", ... }} for each force "
            "column)"]


@dataclass(frozen=True)
class Task:
    """One unit of design work: the members ``first`` to ``last`` (ids, inclusive) of one
    family in one stored part (``family`` None: every member of the part). The station
    trace goes to ``trace_name``; tasks listed in order give the tables in stored order
    (part, family, member), however many tasks a part is cut into."""

    part: str
    family: int | None = None
    first: str | None = None
    last: str | None = None
    trace_name: str = ""
    of: int = 1  # tasks of this part (progress counts parts)


# resident bytes a design task holds per force row while it runs, measured on the synthetic
# frames (the station trace of a whole task, 7 to 8 stations of about 40 columns per input row,
# dominates); the base is what the libraries take before any data
TASK_BYTES_PER_ROW = 2_600
PROCESS_BASE_MB = 320


def design_tasks(parts: list[str], members: pd.DataFrame, cset, settings: Settings,
                 workers: int = 1) -> tuple[list[Task], set[str], dict[str, np.ndarray]]:
    """The design's tasks, the member ids of the forces that ``members`` lacks (not kept for
    all members: a set of every id holds tens of MB on a large model), and the positions in
    ``members`` of each part's members (a task travels with those alone). Each stored part is cut,
    family by family, at the starts of its batches (``batch_starts``: the results stay
    those of an uncut part to the last bit), into pieces of about equal rows, so that the
    pieces number a multiple of ``workers`` (no worker idles while another designs the last
    part) and each fits [run] memory_mb in its worker (``TASK_BYTES_PER_ROW``). A part that
    needs no cutting stays one task."""
    workers = max(workers, 1)
    cap = max(1.0, (settings.run.memory_mb - PROCESS_BASE_MB) * 2**20 / TASK_BYTES_PER_ROW)  # rows per task
    strays: set[str] = set()
    per_part = []  # (part, units: [(family, first id, last id, rows)])
    rows_of_part = {}
    where = pd.Index(members["member"])
    for part in parts:
        counts = pac.value_counts(pq.read_table(part, columns=["member"]).column("member").combine_chunks())
        rows_of = dict(zip(counts.field("values").to_pylist(), counts.field("counts").to_pylist()))
        at = where.get_indexer(list(rows_of))
        strays.update(m for m, k in zip(rows_of, at) if k < 0)
        rows_of_part[part] = np.sort(at[at >= 0])
        here = members.iloc[rows_of_part[part]]
        units_ = []
        for k, family in enumerate(FAMILIES):
            mine = here[here["kind"].isin(family.KINDS)].reset_index(drop=True)
            if not len(mine):
                continue
            names = mine["member"].tolist()
            starts = batch_starts(mine, cset, settings, family).tolist()
            for a, b in zip(starts, [*starts[1:], len(names)]):
                units_.append((k, names[a], names[b - 1], sum(rows_of[m] for m in names[a:b])))
        per_part.append((part, units_))
    total = sum(u[3] for _, us in per_part for u in us)
    part_rows = [sum(u[3] for u in us) for _, us in per_part]
    if workers == 1 and all(r <= cap for r in part_rows):
        return [Task(p, trace_name=Path(p).name) for p, _ in per_part], strays, rows_of_part
    pieces = [1] * len(per_part)
    for m in range(1, 64):  # the fewest pieces that number a multiple of the workers
        target = max(total / (m * workers), 1.0)
        pieces = [max(1, round(r / target), math.ceil(r / cap)) for r in part_rows]
        if sum(pieces) % workers == 0:
            break
    tasks = []
    for (part, us), k, rows in zip(per_part, pieces, part_rows):
        stem = Path(part).name
        if k == 1 and len({u[0] for u in us}) <= 1:
            tasks.append(Task(part, trace_name=stem))
            continue
        batch_rows = np.array([u[3] for u in us], np.int64)
        piece = _pieces(batch_rows, k)
        while k < len(us) and np.bincount(piece, batch_rows).max() > max(cap, batch_rows.max()):
            k += 1  # the memory first: a piece over the bound is cut again (a batch is never cut)
            piece = _pieces(batch_rows, k)
        fam = np.array([u[0] for u in us])
        first = np.flatnonzero(np.r_[True, (piece[1:] != piece[:-1]) | (fam[1:] != fam[:-1])]).tolist()
        mine = [(us[a][0], us[a][1], us[b - 1][2]) for a, b in zip(first, [*first[1:], len(us)])]
        tasks += [Task(part, f, lo, hi, stem if j == 0 else f"{stem[:-len('.parquet')]}.t{j:04d}.parquet", len(mine))
                  for j, (f, lo, hi) in enumerate(mine)]
    return tasks, strays, rows_of_part


def _pieces(batch_rows: np.ndarray, k: int) -> np.ndarray:
    """Piece of each batch, cutting a part's batches into k runs of about equal rows."""
    done = np.cumsum(batch_rows) - batch_rows  # rows before each batch
    return np.minimum(done * k // max(int(batch_rows.sum()), 1), k - 1)


class _WithMembers:
    """Each task with the members it designs (those of its part; of a cut part, those of its
    family from ``first`` to ``last``), the pair made as it is taken: the local engine makes
    a few ahead of the results (engines.local), so the members' rows are not copied for
    every task at once (a dask cluster takes them all at the start)."""

    def __init__(self, tasks: list[Task], members: pd.DataFrame, rows_of_part: dict[str, np.ndarray]):
        self.tasks, self.members, self.rows_of_part = tasks, members, rows_of_part

    def __len__(self) -> int:
        return len(self.tasks)

    def __iter__(self):
        for t in self.tasks:
            mine = self.members.iloc[self.rows_of_part[t.part]]
            if t.first is not None:  # the ids compare as the part's filter compares them (by code point)
                ids = mine["member"]
                mine = mine[(ids >= t.first) & (ids <= t.last) & mine["kind"].isin(FAMILIES[t.family].KINDS)]
            yield t, mine.reset_index(drop=True)


def design_task(item: tuple[Task, pd.DataFrame], **kw) -> PartResult:
    """``design_part`` of a task and the members of its part, as ``design_tasks`` gives them."""
    task, members = item
    return design_part(task, members, **kw)


def design_part(task: Task | str, members: pd.DataFrame, cset: combos_mod.ComboSet, settings: Settings,
                stations_dir: str | None = None, timed: bool = False) -> PartResult:
    """Design the members of one task, whose forces are in one stored part (a pure function of
    its inputs, so that any engine may run the tasks in any order or place), family by
    family, in batches. The task's station trace is written to ``stations_dir`` under the
    task's file name, by the worker itself."""
    task = Task(task, trace_name=Path(task).name) if isinstance(task, str) else task
    if timed:
        stages.instrument()
        stages.take()
        started = time.perf_counter()
    part_path = task.part
    U = units.system(settings.units)
    present = set(pq.read_schema(part_path).names)
    vb = U.col("Vb_kN")  # not in the parts of element exports
    within = None if task.first is None else [("member", ">=", task.first), ("member", "<=", task.last)]
    forces = pq.read_table(part_path, columns=["member", *(c for c in U.cols(["case", "x_m", "V_kN", "Vb_kN", "N_kN",
                                                                               "T_kNm"]) if c in present or c != vb)],
                           filters=within)
    member_col = forces.column("member").combine_chunks()
    seen = set(pac.unique(member_col).to_pylist())
    members = members[members["member"].isin(seen)].reset_index(drop=True)
    outputs = []
    for k, family in enumerate(FAMILIES):
        if task.family is not None and k != task.family:
            continue
        mine = members[members["kind"].isin(family.KINDS)].reset_index(drop=True)
        if len(mine):
            outputs += _family_batches(family, mine, forces, member_col, cset, settings)
    traces = [o.trace for o in outputs]
    if stations_dir is not None and traces:
        with stages.clock("trace write"):
            trace = pa.concat_tables(traces, promote_options="default")
            trace = trace.rename_columns(U.cols(trace.column_names))
            # dictionaries for the text and flag columns alone: the station values seldom repeat, and
            # building their dictionaries took half the write (the file is about 7 % larger)
            pq.write_table(trace, Path(stations_dir) / task.trace_name,
                           use_dictionary=[f.name for f in trace.schema if not pa.types.is_floating(f.type)])
    positions = pd.concat([o.stirrups for o in outputs], ignore_index=True) if outputs \
        else pd.DataFrame(columns=["member", "x_mm"])
    tables: dict[str, list[pd.DataFrame]] = {}
    for o in outputs:
        for name, df in o.tables.items():
            tables.setdefault(name, []).append(df)
    spent = {}
    if timed:  # what no named step took: reading the part, cutting batches, gathering the outputs
        spent = stages.take()
        spent["other design"] = time.perf_counter() - started - sum(spent.values())
    # the records travel as tables: one dict per member would be pickled and kept field by field
    return PartResult(pd.DataFrame([r for o in outputs for r in o.rows], columns=MEMBER_COLUMNS),
                      pd.DataFrame([z for o in outputs for z in o.zones], columns=ZONE_COLUMNS),
                      [w for o in outputs for w in o.warnings], seen, positions,
                      {name: pd.concat(dfs, ignore_index=True) for name, dfs in tables.items()}, spent)


def _family_batches(family, members: pd.DataFrame, forces: pa.Table, member_col, cset, settings: Settings):
    """The force rows of one family's members, cut into batches of whole members bounded by
    BATCH_CELLS (station-candidate cells), each designed by the pipeline. Stations, forces
    and moments go into the run's internal units (mm, N, N*mm or in, lb, lb*in)."""
    U = units.system(settings.units)
    names = pa.array(members["member"].tolist(), pa.string())
    f_member = pac.index_in(member_col, value_set=names).fill_null(-1).to_numpy().astype(np.int64)
    sel = np.flatnonzero(f_member >= 0)
    col = lambda si_name: forces.column(U.col(si_name)).to_numpy()[sel]  # noqa: E731
    f_member = f_member[sel]
    cidx = pac.index_in(forces.column("case").combine_chunks(), value_set=pa.array(cset.cases)).to_numpy()
    cidx = cidx[sel].astype(np.int64)
    x = col("x_m") * U.per_span
    values = {"V": col("V_kN") * U.per_force, "N": col("N_kN") * U.per_force, "T": col("T_kNm") * U.per_moment}
    if family.USES_VB:  # shear parallel to b (columns); beams design for V alone (see README)
        values["Vb"] = col("Vb_kN") * U.per_force if U.col("Vb_kN") in forces.column_names else np.zeros(len(sel))
    if np.any(np.diff(f_member) < 0):  # parts are sorted by member id; keep any other source safe
        order = np.argsort(f_member, kind="stable")
        f_member, x, cidx = f_member[order], x[order], cidx[order]
        values = {k: v[order] for k, v in values.items()}
    bounds = np.searchsorted(f_member, np.arange(len(members) + 1))
    out = []
    cuts = batch_starts(members, cset, settings, family)
    for start, stop in zip(cuts.tolist(), [*cuts[1:].tolist(), len(members)]):
        r0, r1 = bounds[start], bounds[stop]
        batch = BatchInput(members.iloc[start:stop].reset_index(drop=True), f_member[r0:r1] - start, cidx[r0:r1],
                           x[r0:r1], {k: v[r0:r1] for k, v in values.items()})
        out.append(design_batch(family, batch, cset, settings))
    return out


def batch_starts(members: pd.DataFrame, cset, settings: Settings, family) -> np.ndarray:
    """Where the batches of a family's members begin (positions): each batch takes members
    while their estimated station-candidate cells stay within BATCH_CELLS. Greedy from the
    first member, so a task that begins at one of these positions cuts the same batches
    after it (and the batch's sums, to the last bit, stay those of an uncut part). A family
    whose stations keep about every combination (``ALL_COMBINATIONS``: a column's four
    coordinates) counts them all; else about two per row of the table."""
    U = units.system(settings.units)
    d = members[U.col("d_mm")].to_numpy()
    clear = members[U.col("length_m")].to_numpy() * U.per_span - members[U.col("face_i_mm")].to_numpy() \
        - members[U.col("face_j_mm")].to_numpy()
    per_station = max(2 * len(cset.rows), len(cset.cases))
    if getattr(family, "ALL_COMBINATIONS", False):
        per_station = max(per_station, cset.distinct_count)
    est = (clear / np.minimum(settings.stations.max_step, d / settings.stations.steps_per_d) + 8) * per_station
    starts, start = [], 0
    while start < len(members):
        starts.append(start)
        start += max(1, int(np.searchsorted(np.cumsum(est[start:]), BATCH_CELLS)))
    return np.array(starts, np.int64)


def design_into(run: Run, settings: Settings, folder: Path, map_parts=map, progress=None, timed: bool = False) -> Result:
    """Design a run and write its design folder's contents into ``folder`` (a temporary
    folder the store renames into place): member results, zones, stirrups, joints, the
    strut-and-tie models' tables, combinations and the per-station trace (stations/, one
    file per task)."""
    result = design_run(run, settings, folder, map_parts, progress, timed)  # writes stations/, stirrups, stm_*
    write_parquet(result.members, folder / "members.parquet")
    write_parquet(result.zones, folder / "zones.parquet")
    pq.write_table(pa.Table.from_pandas(result.joints.astype({result.units.col(c): t for c, t in
                                                              joints_mod.DTYPES.items()}), preserve_index=False),
                   folder / "joints.parquet")
    try:  # every distinct combination with its factors, where they can be listed one by one
        names, factors = result.combos.explicit
    except ValueError:
        names, factors = [], np.zeros((0, len(result.combos.cases)))
    pq.write_table(pa.table({"combination": pa.array(names, pa.string()),
                             **{c: factors[:, k] for k, c in enumerate(result.combos.cases)}}),
                   folder / "combinations.parquet")
    return result


def write_parquet(df: pd.DataFrame, path: Path, rows: int = 65_536) -> None:
    """A DataFrame as Parquet, converted a slice of ``rows`` at a time under the schema of the
    whole frame (the table is never held twice: once in pandas, once in Arrow)."""
    schema = pa.Schema.from_pandas(df, preserve_index=False)
    with pq.ParquetWriter(path, schema) as writer:
        for start in range(0, max(len(df), 1), rows):
            writer.write_table(pa.Table.from_pandas(df.iloc[start:start + rows], schema=schema, preserve_index=False))


def design_manifest(result: Result, settings: Settings) -> dict:
    return {"code_edition": aci.edition(settings.units).title, "unit_system": settings.units,
            "settings": settings.as_dict(),
            "combinations_prefactored": result.combos.prefactored, "combination_rules": result.combos.describe(),
            "combinations_counted": result.combos.count, "warnings": result.warnings}
