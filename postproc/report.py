"""Outputs: the detailer tables (CSV), the run summary (terminal with rich, or JSON)."""

from __future__ import annotations

import contextlib
import csv
import json
import os
import tempfile
from pathlib import Path

import pandas as pd
from rich.console import Console
from rich.markup import escape
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn
from rich.table import Table

from postproc.engine import MEMBER_COLUMNS, STATUSES, ZONE_COLUMNS, Result

CAUTION = ("Results assist a licensed structural engineer, who checks them; "
           "the governing local building code prevails.")


def write_tables(result: Result, out_dir: Path) -> list[Path]:
    """members.csv and zones.csv, each written to a temporary name and renamed into place."""
    out_dir.mkdir(parents=True, exist_ok=True)
    written = []
    for name, df, cols in (("members.csv", result.members, MEMBER_COLUMNS), ("zones.csv", result.zones, ZONE_COLUMNS)):
        path = out_dir / name
        fd, tmp = tempfile.mkstemp(prefix=f".{name}.", dir=out_dir)
        with os.fdopen(fd, "w", newline="", encoding="utf-8") as fh:
            df.to_csv(fh, columns=cols, index=False, quoting=csv.QUOTE_MINIMAL, lineterminator="\n")
        os.replace(tmp, path)
        written.append(path)
    return written


def summary(result: Result, run_name: str, out_dir: Path | None, top: int = 10) -> dict:
    m = result.members
    counts = {s: int((m["status"] == s).sum()) for s in STATUSES}
    ranked = m[m["utilization"].notna()].sort_values("utilization", ascending=False).head(top)
    return {
        "run": run_name,
        "output": None if out_dir is None else str(out_dir),
        "members": int(len(m)),
        "status": counts,
        "combinations": {"count": result.combos.distinct_count,
                         "source": "cases taken as already factored combinations (no cases.csv)"
                         if result.combos.prefactored else "ACI 318-19 Table 5.3.1 from basic load cases"},
        "governing": [
            {k: (None if pd.isna(r[k]) else r[k]) for k in ("member", "status", "utilization", "governing_case",
                                                            "vu_design_i_kN", "vu_design_j_kN")}
            for _, r in ranked.iterrows()],
        "stirrups_total": int(m["stirrups_total"].sum()),
        "stirrup_mass_kg": round(float(m["stirrup_mass_kg"].sum()), 1),
        "warnings": result.warnings,
        "caution": CAUTION,
    }


def print_summary(doc: dict, console: Console) -> None:
    console.print(f"[bold]shearpost[/bold] run [cyan]{shown(doc['run'])}[/cyan]: {doc['members']} members, "
                  f"{doc['combinations']['count']} combinations ({doc['combinations']['source']})")
    st = Table(title="Members by status", title_justify="left")
    st.add_column("status")
    st.add_column("members", justify="right")
    for status, n in doc["status"].items():
        if n:
            st.add_row(status, str(n))
    console.print(st)
    gov = Table(title=f"Governing members (top {len(doc['governing'])} by utilization)", title_justify="left")
    for col, just in (("member", "left"), ("status", "left"), ("utilization", "right"),
                      ("governing combination", "left"), ("Vu,i kN", "right"), ("Vu,j kN", "right")):
        gov.add_column(col, justify=just, overflow="fold")
    for g in doc["governing"]:
        gov.add_row(shown(g["member"]), g["status"], f"{g['utilization']:.3f}", shown(g["governing_case"]),
                    _num(g["vu_design_i_kN"]), _num(g["vu_design_j_kN"]))
    console.print(gov)
    console.print(f"Stirrups: {doc['stirrups_total']:,} sets, {doc['stirrup_mass_kg']:,.1f} kg")
    if doc["warnings"]:
        console.print(f"[yellow]{len(doc['warnings'])} warning(s):[/yellow]")
        for w in doc["warnings"][:15]:
            console.print(f"  - {shown(w)}", highlight=False)
        if len(doc["warnings"]) > 15:
            console.print(f"  ... and {len(doc['warnings']) - 15} more (see --json)")
    if doc["output"]:
        files = "members.csv, zones.csv" + (" and report.html" if doc.get("report") else "")
        console.print(f"Written to {shown(doc['output'])}: {files}")
    console.print(f"[italic]{doc['caution']}[/italic]")


_CONTROL = {c: f"\\x{c:02x}" for c in [*range(0x00, 0x20), 0x7F]}


def shown(value) -> str:
    """Text for the terminal: control characters made visible (\\x1b, not an escape
    sequence) and rich markup escaped, so member ids print exactly as they are."""
    return escape(str(value).translate(_CONTROL))


def _num(v) -> str:
    return "" if v is None else f"{v:,.1f}"


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
