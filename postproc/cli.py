"""Command line: argument parsing and calls into the stages.

Exit codes: 0 success, 1 bad input, 2 usage error, 3 some members need resizing.
"""

from __future__ import annotations

import argparse
import importlib.resources
import os
import sys
from pathlib import Path

from rich.console import Console
from rich.table import Table

from postproc.adapters import csv_tables, elements, ifc
from postproc.adapters.errors import InputError
from postproc.adapters.mapping import load_column_map
from postproc import __version__, bench, engine, engines, explain, govern, html_report, report, schedule
from postproc.settings import load_settings, settings_from_dict
from postproc.store import Store, StoreError

EXIT_OK, EXIT_INPUT, EXIT_USAGE, EXIT_RESIZE = 0, 1, 2, 3
SAMPLE = Path(str(importlib.resources.files("postproc.sample_results")))


def engine_options(q: argparse.ArgumentParser) -> None:
    q.add_argument("--engine", choices=("local", "dask"), default="local",
                   help="local (this machine) or dask (dask.distributed: a local cluster, or --scheduler)")
    q.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1),
                   help="worker processes (default: up to 2)")
    q.add_argument("--scheduler", help="dask scheduler address, e.g. tcp://10.0.0.5:8786 (with --engine dask)")


def map_parts(args):
    if args.engine == "dask":
        return engines.dask(args.scheduler, max(args.workers, 1))
    return engines.local(args.workers)


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="shearpost", description="Shear reinforcement of RC frame members (ACI 318-19).")
    p.add_argument("--version", action="version", version=f"shearpost {__version__}")
    sub = p.add_subparsers(dest="command", required=True)

    def common(q: argparse.ArgumentParser) -> None:
        q.add_argument("--config", type=Path, help="settings TOML (defaults: common practice)")
        q.add_argument("--store", type=Path, default=Path("shearpost-store"), help="store folder (default ./shearpost-store)")
        q.add_argument("--run", dest="run_name", help="name of the new run (default: date and a counter)")
        q.add_argument("--json", action="store_true", help="print the summary as JSON")
        q.add_argument("--no-report", action="store_true", help="do not write report.html")

    r = sub.add_parser("run", help="ingest analysis results, design every member, write the tables")
    r.add_argument("--members", type=Path, required=True, help="members.csv, or an IFC model (.ifc)")
    r.add_argument("--ifc-key", choices=("auto", "globalid", "name", "tag"), default="auto",
                   help="IFC attribute that matches the forces table's member ids (default: auto, the one of "
                        "GlobalId, Name, Tag that matches most)")
    r.add_argument("--forces", type=Path, required=True, help="forces.csv")
    r.add_argument("--cases", type=Path, help="cases.csv (case,type); without it cases are factored combinations")
    r.add_argument("--map", type=Path, help="column-mapping TOML for an analysis program's own export")
    r.add_argument("--out", type=Path, required=True, help="folder for members.csv, zones.csv and report.html")
    common(r)
    engine_options(r)

    d = sub.add_parser("demo", help="design the demo building in sample_results/")
    d.add_argument("--out", type=Path, default=Path("shearpost-demo"), help="output folder (default ./shearpost-demo)")
    d.add_argument("--ifc", action="store_true", help="read the demo's geometry from its IFC model")
    d.add_argument("--scale", action="append", default=[], metavar="CASE=FACTOR",
                   help="scale one load case of the demo, e.g. L=1.3 (a changed load, for `compare`)")
    common(d)
    engine_options(d)

    def stored(q: argparse.ArgumentParser, run_arg: bool = True) -> None:
        q.add_argument("--store", type=Path, default=Path("shearpost-store"), help="store folder (default ./shearpost-store)")
        if run_arg:
            q.add_argument("--run", dest="run_name", help="run to use (default: the latest)")

    g = sub.add_parser("govern", help="rank members by utilization, failures first")
    stored(g)
    g.add_argument("--level", action="append", default=[], help="only this level (repeatable)")
    g.add_argument("--group", action="append", default=[], help="only this group (repeatable)")
    g.add_argument("--status", action="append", default=[], choices=engine.STATUSES, help="only this status (repeatable)")
    g.add_argument("--top", type=int, help="first N members only")
    g.add_argument("--format", choices=("table", "csv", "json"), default="table")

    c = sub.add_parser("compare", help="what changed between two runs")
    c.add_argument("run_a")
    c.add_argument("run_b")
    stored(c, run_arg=False)
    c.add_argument("--threshold", type=float, default=0.02, help="utilization change to report (default 0.02)")
    c.add_argument("--vu-threshold", type=float, default=0.05,
                   help="relative change of the end design shears to report (default 0.05)")
    c.add_argument("--fail-on-new-resize", action="store_true",
                   help="exit 3 when a member of RUN_B needs resizing that did not in RUN_A")
    c.add_argument("--json", action="store_true")

    rs = sub.add_parser("runs", help="list the store's runs")
    stored(rs, run_arg=False)
    rs.add_argument("--json", action="store_true")

    sc = sub.add_parser("schedule", help="beam marks and bar schedule (CSV and Parquet)")
    stored(sc)
    sc.add_argument("--out", type=Path, required=True, help="folder for the schedule files")
    sc.add_argument("--envelope-groups", action="store_true",
                    help="members of one group with the same section and span share the most demanding layout")

    b = sub.add_parser("bench", help="design a synthetic frame and time it against bare reads")
    b.add_argument("--members", type=int, default=10_000, help="members (default 10,000)")
    b.add_argument("--cases", type=int, default=40, help="factored combinations (default 40)")
    b.add_argument("--stations", type=int, default=21, help="output stations per member (default 21)")
    b.add_argument("--seed", type=int, default=1)
    b.add_argument("--sample", type=int, default=30, help="members checked by the per-member reference")
    b.add_argument("--keep", type=Path, help="keep the generated model and store in this folder")
    b.add_argument("--json", action="store_true")
    engine_options(b)

    h = sub.add_parser("report", help="the HTML report of a designed run (one self-contained file)")
    stored(h)
    h.add_argument("--out", type=Path, required=True, help="the HTML file to write")
    h.add_argument("--member", action="append", default=[], help="detail sections for these members only")

    e = sub.add_parser("explain", help="the whole calculation of one member, clause by clause")
    e.add_argument("member")
    stored(e)
    e.add_argument("--json", action="store_true")
    return p


def read_ifc(path: Path, key: str, st, wanted: set[str]):
    """Members from an IFC model, with the settings' defaults for what the model lacks. With
    key 'auto', the attribute (GlobalId, Name, Tag) that matches most force-table members."""
    defaults = ifc.IfcDefaults(fc_mpa=st.fc_mpa, fyt_mpa=st.fyt_mpa, cover_mm=st.cover_mm, tolerance_mm=st.tolerance_mm)
    if key != "auto":
        return ifc.read_ifc_members(path, key=key, defaults=defaults)
    best, first_error = None, None
    for k in ("globalid", "name", "tag"):
        try:
            table, warnings = ifc.read_ifc_members(path, key=k, defaults=defaults)
        except InputError as exc:
            first_error = first_error or exc
            continue
        hits = len(wanted & set(table.column("member").to_pylist()))
        if best is None or hits > best[0]:
            best = (hits, k, table, warnings)
    if best is None:
        raise first_error
    hits, k, table, warnings = best
    return table, [f"IFC members matched to the forces table by {k} ({hits} of {len(wanted)} members)", *warnings]


def scaled_demo_forces(scales: list[str], out: Path) -> Path:
    """The demo's forces with some load cases scaled, written beside the outputs (so that
    the run's manifest points at the file that was designed)."""
    import pandas as pd

    factors = {}
    for item in scales:
        case, _, value = item.partition("=")
        factors[case.strip()] = float(value)
    forces = pd.read_csv(SAMPLE / "forces.csv")
    unknown = sorted(set(factors) - set(forces["case"]))
    if unknown:
        raise ValueError(f"no case {', '.join(unknown)} in the demo (cases: {', '.join(sorted(forces['case'].unique()))})")
    f = forces["case"].map(factors).fillna(1.0)
    for col in ("V_kN", "N_kN", "T_kNm", "M_kNm"):
        forces[col] = (forces[col] * f).round(3)
    out.mkdir(parents=True, exist_ok=True)
    path = out / ("forces-" + "-".join(f"{c}x{v:g}" for c, v in sorted(factors.items())) + ".csv")
    forces.to_csv(path, index=False)
    return path


def _error(text: str) -> None:
    """Errors go to stderr unwrapped, so that file, line and column stay on one line."""
    print(text, file=sys.stderr)


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    console = Console(stderr=False)
    if args.command in REVIEW:
        try:
            return REVIEW[args.command](args, Store(getattr(args, "store", "shearpost-store")), console)
        except StoreError as exc:
            _error(f"error: {exc}")
            return EXIT_USAGE
    if args.command == "demo":
        args.members = SAMPLE / ("demo_building.ifc" if args.ifc else "members.csv")
        args.forces, args.cases, args.map, args.ifc_key = SAMPLE / "forces.csv", SAMPLE / "cases.csv", None, "auto"
        if not args.members.exists():
            _error(f"demo data not found in {SAMPLE}; install from a checkout with `pip install -e .`")
            return EXIT_USAGE
        if args.scale:
            try:
                args.forces = scaled_demo_forces(args.scale, args.out)
            except ValueError as exc:
                _error(f"error: --scale: {exc}")
                return EXIT_USAGE
    store = Store(args.store)
    try:
        name = args.run_name or store.new_name()
        store.check_new_name(name)
    except StoreError as exc:
        _error(f"error: {exc}")
        return EXIT_USAGE
    show_progress = not args.json and sys.stderr.isatty()
    try:
        settings = load_settings(args.config)
        cmap = load_column_map(args.map, csv_tables.KNOWN_COLUMNS)
        cases = csv_tables.read_cases(args.cases, cmap) if args.cases else None
        if args.members.suffix.lower() == ".ifc":
            probe = elements.forces_source(args.forces, cmap)
            members, warnings = read_ifc(args.members, args.ifc_key, settings.ifc, probe.member_ids())
            lengths = None
        else:
            members, warnings = csv_tables.read_members(args.members, cmap)
            lengths = dict(zip(members.column("member").to_pylist(), members.column("length_m").to_pylist()))
        source = elements.forces_source(args.forces, cmap, lengths, cases, args.cases, warnings,
                                        settings.stations.tolerance_mm)
        inputs = {"members": args.members, "forces": args.forces, **elements.extra_inputs(source)}
        for role, path in (("cases", args.cases), ("column_map", args.map), ("settings", args.config)):
            if path:
                inputs[role] = path
        holder = {}

        def design(staged) -> None:
            """Design the staged run into its design/ folder before the run becomes visible."""
            if args.members.suffix.lower() == ".ifc":
                found = {m: L for m, L in zip(members.column("member").to_pylist(),
                                              members.column("length_m").to_pylist()) if L is not None}
                warnings.extend(ifc.length_mismatches(found, staged.forces(["member", "x_m"]),
                                                      settings.ifc.length_tolerance_mm))
            folder = staged.design_path
            folder.mkdir()
            advance = holder["task"]("designing (parts)", len(staged.force_parts()))
            holder["result"] = result = engine.design_into(staged, settings, folder, map_parts(args), advance)
            result.warnings[:0] = warnings
            (folder / "manifest.json").write_text(report.dump_json(engine.design_manifest(result, settings)),
                                                  encoding="utf-8")

        with report.progress_bars(show_progress) as task:
            holder["task"] = task
            run = store.ingest(name, members, cases, source, inputs, warnings, {"settings": settings.as_dict()},
                               progress=task("reading forces (rows)"), then=design)
    except InputError as exc:
        _error(f"error: {exc}")
        _error("nothing was written")
        return EXIT_INPUT
    except StoreError as exc:
        _error(f"error: {exc}")
        return EXIT_USAGE
    result = holder["result"]
    report.write_tables(result, args.out)
    if not args.no_report:
        with report.progress_bars(show_progress) as task:
            done = task("writing report.html", 1)
            html_report.write_html_report(run, args.out / "report.html")
            done()
    doc = report.summary(result, run.name, args.out)
    doc["report"] = None if args.no_report else str(args.out / "report.html")
    try:
        if args.json:
            print(report.dump_json(doc))
        else:
            report.print_summary(doc, console)
    except BrokenPipeError:  # the reader of a pipe stopped early (e.g. `| head`): as the Python docs advise
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
    return EXIT_RESIZE if doc["status"]["resize"] else EXIT_OK


def _run_of(args, store: Store):
    return store.run(args.run_name) if args.run_name else store.latest()


def _print_frame(df, console: Console, title: str) -> None:
    """A table with units-aware number formats: kN and kg to 0.1, ratios to 0.001."""
    t = Table(title=title, title_justify="left")
    digits = [1 if ("kN" in str(c) or "kg" in str(c)) else 3 for c in df.columns]
    for col in df.columns:
        numeric = df[col].dtype.kind in "if"
        t.add_column(str(col), justify="right" if numeric else "left", no_wrap=str(col) in ("member", "rank", "status"),
                     overflow="fold")
    for row in df.itertuples(index=False):
        t.add_row(*["" if (isinstance(v, float) and v != v) else (f"{v:,.{n}f}" if isinstance(v, float) else report.shown(v))
                    for v, n in zip(row, digits)])
    console.print(t)


def cmd_govern(args, store: Store, console: Console) -> int:
    run = _run_of(args, store)
    df = govern.rank(run, args.level, args.group, args.status, args.top)
    if args.format == "csv":
        df.to_csv(sys.stdout, index=False, lineterminator="\n")
    elif args.format == "json":
        print(df.to_json(orient="records", indent=2))
    else:
        shown = df[["rank", "member", "level", "status", "utilization", "governing_case", "vu_design_i_kN",
                    "vu_design_j_kN", "stirrups_total"]].rename(columns={
            "utilization": "util.", "governing_case": "governing combination", "vu_design_i_kN": "Vu,i kN",
            "vu_design_j_kN": "Vu,j kN", "stirrups_total": "sets"})
        _print_frame(shown, console, f"Governing members of run {run.name}")
        console.print(f"[italic]{report.CAUTION}[/italic]")
    return EXIT_OK


def cmd_compare(args, store: Store, console: Console) -> int:
    diff = govern.compare(store.run(args.run_a), store.run(args.run_b), args.threshold, args.vu_threshold)
    if args.json:
        print(report.dump_json(diff.as_dict()))
    else:
        console.print(f"[bold]{diff.run_a}[/bold] -> [bold]{diff.run_b}[/bold]")
        console.print(f"added: {report.shown(', '.join(diff.added) or 'none')}")
        console.print(f"removed: {report.shown(', '.join(diff.removed) or 'none')}")
        for df, title in ((diff.status_changes, "Status changes"),
                          (diff.demand_changes, f"Design shear changes above {args.vu_threshold:.0%}"),
                          (diff.utilization_changes, f"Utilization changes above {args.threshold:g}"),
                          (diff.layout_changes, "Stirrup layouts changed (send these to the detailers)")):
            if len(df):
                _print_frame(df, console, title)
            else:
                console.print(f"{title}: none")
        console.print(f"Stirrup mass {diff.mass_a_kg:,.1f} kg -> {diff.mass_b_kg:,.1f} kg "
                      f"({diff.mass_b_kg - diff.mass_a_kg:+,.1f} kg)")
        if diff.newly_resize:
            console.print(f"[bold]Newly need resizing:[/bold] {report.shown(', '.join(diff.newly_resize))}")
    return EXIT_RESIZE if args.fail_on_new_resize and diff.newly_resize else EXIT_OK


def cmd_runs(args, store: Store, console: Console) -> int:
    rows = []
    for r in store.runs():
        man = r.manifest()
        rows.append({"run": r.name, "created": man["created"], "members": man["counts"]["members"],
                     "force_rows": man["counts"]["force_rows"], "designed": r.has_design(),
                     "inputs": {k: {"path": v["path"], "sha256": v["sha256"]} for k, v in man["inputs"].items()},
                     "tool_version": man["tool_version"], "code_edition": man["code_edition"]})
    if args.json:
        print(report.dump_json({"store": str(store.root), "runs": rows}))
        return EXIT_OK
    t = Table(title=f"Runs in {store.root}", title_justify="left")
    for col in ("run", "created (UTC)", "members", "force rows", "designed", "inputs"):
        t.add_column(col, overflow="fold")
    for r in rows:
        t.add_row(r["run"], r["created"][:16].replace("T", " "), str(r["members"]), f"{r['force_rows']:,}",
                  "yes" if r["designed"] else "no", ", ".join(Path(v["path"]).name for v in r["inputs"].values()))
    console.print(t)
    return EXIT_OK


def cmd_schedule(args, store: Store, console: Console) -> int:
    run = _run_of(args, store)
    settings = settings_from_dict(run.manifest().get("settings", {}))
    sched = schedule.for_run(store, run, settings.detailing, args.envelope_groups)
    paths = sched.write(args.out)
    console.print(f"run {run.name}: {len(sched.marks)} marks for {len(sched.members)} designed members, "
                  f"{int(sched.bars['count'].sum()):,} bars, {sched.bars.mass_kg.sum():,.1f} kg")
    _print_frame(sched.by_bar, console, "By bar size")
    console.print(f"written: {', '.join(p.name for p in paths if p.suffix == '.csv')} (and .parquet) in {args.out}")
    console.print(f"[italic]{report.CAUTION}[/italic]")
    return EXIT_OK


def cmd_explain(args, store: Store, console: Console) -> int:
    run = _run_of(args, store)
    steps = explain.explain(run, args.member, settings_from_dict(run.manifest().get("settings", {})))
    if args.json:
        print(report.dump_json({"run": run.name, "member": args.member, "steps": [s.__dict__ for s in steps],
                                "caution": report.CAUTION}))
        return EXIT_OK
    console.print(f"[bold]{report.shown(args.member)}[/bold] in run {report.shown(run.name)}", highlight=False)
    for s in steps:
        console.print(f"[bold]{report.shown(s.title)}[/bold]" + (f"  [dim]ACI 318-19 {s.clause}[/dim]" if s.clause else ""),
                      highlight=False)
        for line in s.lines:
            console.print(f"  {report.shown(line)}", highlight=False)
    console.print(f"[italic]{report.CAUTION}[/italic]")
    return EXIT_OK


def cmd_bench(args, store: Store, console: Console) -> int:
    show = not args.json and sys.stderr.isatty()
    with report.progress_bars(show) as task:
        figures = bench.run(args.members, args.cases, args.stations, args.seed, args.sample, map_parts(args),
                            args.workers if args.engine == "local" else 0, args.keep, task("bench: reading forces (rows)"))
    if args.json:
        print(report.dump_json({**figures.__dict__, "end_to_end_s": figures.end_to_end_s}))
        return EXIT_OK
    t = Table(title="shearpost bench (one run, this machine)", title_justify="left", show_header=False)
    t.add_column("what")
    t.add_column("measured", overflow="fold")
    for what, text in figures.rows():
        t.add_row(what, text)
    console.print(t)
    return EXIT_OK


def cmd_report(args, store: Store, console: Console) -> int:
    run = _run_of(args, store)
    try:
        path = html_report.write_html_report(run, args.out, args.member or None)
    except ValueError as exc:
        _error(f"error: {exc}")
        return EXIT_USAGE
    console.print(f"report of run {report.shown(run.name)} written to {report.shown(path)}")
    return EXIT_OK


REVIEW = {"report": cmd_report, "bench": cmd_bench, "govern": cmd_govern, "compare": cmd_compare, "runs": cmd_runs, "schedule": cmd_schedule,
          "explain": cmd_explain}


if __name__ == "__main__":
    sys.exit(main())
