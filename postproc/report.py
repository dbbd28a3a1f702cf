"""Outputs: the detailer tables (CSV), the run summary (terminal with rich, or JSON).

Every file is written under a temporary name beside its place and renamed into place,
with the permissions the umask gives (0644 under the usual umask 022), so that
colleagues on a shared drive can open it.
"""

from __future__ import annotations

import contextlib
import csv
import json
import os
import uuid
from pathlib import Path

import pandas as pd
from rich.console import Console
from rich.markup import escape
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn
from rich import box
from rich.table import Table

from postproc import units
from postproc.engine import STATUSES, Result, member_columns, zone_columns
from postproc.joints import COLUMNS as JOINT_COLUMNS
from postproc.terms import NEEDS_ACTION, label

CAUTION = ("Results assist a licensed structural engineer, who checks them; "
           "the governing local building code prevails.")


def write_atomic(path: Path, fill) -> Path:
    """Write ``path`` as ``fill(text_file)`` writes it: to a temporary name in the same
    folder, then renamed into place (a reader never sees half a file). The file is created
    by open(), so it gets the mode the umask gives, unlike tempfile's private 0600."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{path.name}.{uuid.uuid4().hex}.tmp")
    try:
        with open(tmp, "x", newline="", encoding="utf-8") as fh:
            fill(fh)
        os.replace(tmp, path)
    finally:
        tmp.unlink(missing_ok=True)
    return path


WHOLE_NUMBERS = ("legs_vb",)  # counts kept as floats for their empty rows (a beam's zone has no Vb legs)


def write_tables(members: pd.DataFrame, zones: pd.DataFrame, out_dir: Path, names: dict[str, str] | None = None,
                 joints: pd.DataFrame | None = None) -> list[Path]:
    """members.csv and zones.csv in ``out_dir`` (or under the file names ``names`` gives
    them), and joints.csv where the run has joints of special moment frames (postproc.joints),
    in the unit system the tables are named in."""
    written = []
    U = units.system_of(members.columns)
    tables = [("members.csv", members, member_columns(U)), ("zones.csv", zones, zone_columns(U))]
    if joints is not None and len(joints):
        tables.append(("joints.csv", joints, U.cols(JOINT_COLUMNS)))
    for name, df, cols in tables:
        df = df.astype({c: "Int64" for c in WHOLE_NUMBERS if c in df})  # 3, not 3.0; empty where none
        path = Path(out_dir) / (names or {}).get(name, name)
        written.append(write_atomic(path, lambda fh, df=df, cols=cols: df.to_csv(
            fh, columns=cols, index=False, quoting=csv.QUOTE_MINIMAL, lineterminator="\n")))
    return written


def summary(result: Result, run_name: str, out_dir: Path | None, top: int = 10) -> dict:
    """The run in brief: members needing action first, then counts, the governing members
    (ranked as `shearpost govern` ranks them), stirrups and warnings."""
    from postproc.govern import rank_order

    m = result.members
    U = result.units
    vu_i, vu_j, mass = U.col("vu_design_i_kN"), U.col("vu_design_j_kN"), U.col("stirrup_mass_kg")
    counts = {s: int((m["status"] == s).sum()) for s in STATUSES}
    action = m[m["status"].isin(NEEDS_ACTION)]
    ranked = m.iloc[rank_order(m)].head(top)
    ranked = ranked[ranked["status"].isin(NEEDS_ACTION) | ranked["utilization"].notna()]
    return {
        "run": run_name,
        "output": None if out_dir is None else str(out_dir),
        "units": U.name,
        "members": int(len(m)),
        "needs_action": {"count": int(len(action)),
                         "by_status": {s: counts[s] for s in NEEDS_ACTION if counts[s]},
                         "members": action["member"].head(50).tolist()},
        "status": counts,
        "combinations": {"count": result.combos.distinct_count,
                         "source": "cases taken as already factored combinations (no cases.csv)"
                         if result.combos.prefactored else "ACI 318-19 Table 5.3.1 from basic load cases"},
        "governing": [
            {k: (None if pd.isna(r[k]) else r[k]) for k in ("member", "status", "utilization", "governing_case",
                                                            vu_i, vu_j, *U.cols(VB_DESIGN))}
            for _, r in ranked.iterrows()],
        "joints": {"count": int(len(result.joints)), "over": result.joints.loc[
            result.joints["status"] != "ok", "joint"].head(50).tolist()},
        "stirrups_total": int(m["stirrups_total"].sum()),
        mass: round(float(m[mass].sum()), 1),
        "warnings": result.warnings,
        "caution": CAUTION,
    }


def print_summary(doc: dict, console: Console) -> None:
    console.print(f"[bold]shearpost[/bold] run [cyan]{shown(doc['run'])}[/cyan]: {doc['members']} members, "
                  f"{doc['combinations']['count']} combinations ({doc['combinations']['source']})")
    act = doc["needs_action"]
    if act["count"]:
        by = ", ".join(f"{n} {s}" for s, n in act["by_status"].items())
        names = ", ".join(shown(n) for n in act["members"][:8]) + (" ..." if act["count"] > 8 else "")
        console.print(f"[bold]Needs action: {act['count']} member(s)[/bold] ({by}): {names}", highlight=False)
    else:
        console.print("Needs action: none", highlight=False)
    st = Table(title="Members by status", title_justify="left")
    st.add_column("status")
    st.add_column("members", justify="right")
    for status in (*NEEDS_ACTION, *(s for s in doc["status"] if s not in NEEDS_ACTION)):
        if doc["status"].get(status):
            st.add_row(status, str(doc["status"][status]))
    console.print(st)
    U = units.system(doc.get("units"))
    gov = pd.DataFrame(doc["governing"], columns=["member", "status", "utilization", "governing_case",
                                                 *U.cols(["vu_design_i_kN", "vu_design_j_kN", *VB_DESIGN])])
    gov.insert(0, "rank", range(1, len(gov) + 1))
    console.print(f"Governing members (the first {len(gov)}, as `shearpost govern` ranks them)")
    console.print(governing_table(gov, console.width))
    console.print(f"Stirrups: {doc['stirrups_total']:,} stirrup sets, {doc[U.col('stirrup_mass_kg')]:,.1f} {U.mass}")
    joints = doc.get("joints", {})
    if joints.get("count"):
        over = joints["over"]
        console.print(f"Joints of special moment frames (18.8): {joints['count']:,} checked (joint x direction), "
                      + (f"[bold]{len(over)} need action[/bold]: " + ", ".join(shown(j) for j in over[:8])
                         if over else "none over phi*Vn"), highlight=False)
    if doc["warnings"]:
        console.print(f"[yellow]{len(doc['warnings'])} warning(s):[/yellow]")
        for w in doc["warnings"][:15]:
            console.print(f"  - {shown(w)}", highlight=False)
        if len(doc["warnings"]) > 15:
            console.print(f"  ... and {len(doc['warnings']) - 15} more (see --json)")
    if doc["output"]:
        files = "members.csv, zones.csv" + (", joints.csv" if doc.get("joints", {}).get("count") else "") \
            + (" and report.html" if doc.get("report") else "")
        console.print(f"Written to {shown(doc['output'])}: {files}")
    console.print(f"[italic]{doc['caution']}[/italic]")


VB_DESIGN = ("vb_design_i_kN", "vb_design_j_kN")  # the design shear parallel to b, at each end


def governing_table(df: pd.DataFrame, width: int) -> Table:
    """Ranked members as a terminal table no wider than ``width``: whole combination names,
    never broken across lines; columns are left out, least useful first, until the table
    fits (the csv and json formats keep every column). Column names are those of the
    table's unit system; the cells are keyed by their SI names."""
    U = units.system_of(df.columns)
    # each end's larger direction (a column may be governed by Vb), and the larger end
    end = {e: df[[c for c in U.cols([f"vu_design_{e}_kN", f"vb_design_{e}_kN"]) if c in df]].astype(float).abs()
           .max(axis=1) for e in "ij"}
    vu = pd.concat(end.values(), axis=1).max(axis=1)
    by_vb = any((end[e] > df[U.col(f"vu_design_{e}_kN")].astype(float).abs().fillna(0.0)).any() for e in "ij")
    cells = {
        "rank": df["rank"].astype(str), "member": df["member"].map(shown),
        "status": df["status"], "utilization": df["utilization"].map(lambda u: "" if u is None or u != u else f"{u:.3f}"),
        "governing_case": df["governing_case"].map(lambda c: "" if c is None or c != c else shown(c)),
        "vu_design_i_kN": end["i"].map(_kn), "vu_design_j_kN": end["j"].map(_kn),
        "vu_design_kN": vu.map(_kn),
    }
    if "level" in df:
        cells["level"] = df["level"].map(shown)
    if "stirrups_total" in df:
        cells["stirrups_total"] = df["stirrups_total"].map(lambda n: f"{int(n):,}")
    right = {"rank", "utilization", "vu_design_i_kN", "vu_design_j_kN", "vu_design_kN", "stirrups_total"}
    choices = (["rank", "member", "level", "status", "utilization", "governing_case", "vu_design_i_kN",
                "vu_design_j_kN", "stirrups_total"],
               ["rank", "member", "level", "status", "utilization", "governing_case", "vu_design_kN", "stirrups_total"],
               ["rank", "member", "status", "utilization", "governing_case", "vu_design_kN", "stirrups_total"],
               ["rank", "member", "status", "utilization", "governing_case", "vu_design_kN"],
               ["rank", "member", "status", "utilization", "governing_case"])
    measure = Console(width=10_000)
    for columns in choices:
        if not set(columns) <= set(cells):
            continue
        t = Table(box=box.SIMPLE_HEAD, pad_edge=False, collapse_padding=True,
                  caption="Vu: the larger of V and Vb at the end (a column governed by Vb)" if by_vb else None)
        for col in columns:
            t.add_column("#" if col == "rank" else label(U.col(col)), justify="right" if col in right else "left",
                         no_wrap=col != "member", overflow="fold" if col == "member" else "ellipsis")
        for row in zip(*(cells[c] for c in columns)):
            t.add_row(*row)
        if measure.measure(t).maximum <= width:
            break
    return t


def _kn(v) -> str:
    return "" if v is None or v != v else f"{v:,.1f}"


_CONTROL = {c: f"\\x{c:02x}" for c in [*range(0x00, 0x20), 0x7F]}


def shown(value) -> str:
    """Text for the terminal: control characters made visible (\\x1b, not an escape
    sequence) and rich markup escaped, so member ids print exactly as they are."""
    return escape(str(value).translate(_CONTROL))


def dump_json(doc: dict) -> str:
    return json.dumps(doc, indent=2, default=float)


@contextlib.contextmanager
def progress_bars(enabled: bool):
    """Rich progress bars for long steps; ``task(description, total)`` returns an advance
    function. Silent (no-op advances) when disabled: --json, or output not a terminal."""
    if not enabled:
        yield lambda description, total=None: (lambda n=1: None)
        return
    columns = (TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn())
    with Progress(*columns, console=Console(stderr=True), transient=True) as bars:
        def task(description: str, total: float | None = None):
            tid = bars.add_task(description, total=total)
            return lambda n=1: bars.advance(tid, n)
        yield task
