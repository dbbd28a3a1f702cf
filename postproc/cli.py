"""Command line: argument parsing and calls into the stages.

Exit codes: 0 success, 1 bad input, 2 usage error, 3 some members need resizing.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from rich.console import Console

from adapters import csv_tables
from adapters.errors import InputError
from adapters.mapping import load_column_map
from postproc import __version__, engine, report
from postproc.settings import load_settings
from postproc.store import Store, StoreError

EXIT_OK, EXIT_INPUT, EXIT_USAGE, EXIT_RESIZE = 0, 1, 2, 3
SAMPLE = Path(__file__).resolve().parent.parent / "sample_results"


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="shearpost", description="Shear reinforcement of RC frame members (ACI 318-19).")
    p.add_argument("--version", action="version", version=f"shearpost {__version__}")
    sub = p.add_subparsers(dest="command", required=True)

    def common(q: argparse.ArgumentParser) -> None:
        q.add_argument("--config", type=Path, help="settings TOML (defaults: common practice)")
        q.add_argument("--store", type=Path, default=Path("shearpost-store"), help="store folder (default ./shearpost-store)")
        q.add_argument("--run", dest="run_name", help="name of the new run (default: date and a counter)")
        q.add_argument("--json", action="store_true", help="print the summary as JSON")

    r = sub.add_parser("run", help="ingest analysis results, design every member, write the tables")
    r.add_argument("--members", type=Path, required=True, help="members.csv")
    r.add_argument("--forces", type=Path, required=True, help="forces.csv")
    r.add_argument("--cases", type=Path, help="cases.csv (case,type); without it cases are factored combinations")
    r.add_argument("--map", type=Path, help="column-mapping TOML for an analysis program's own export")
    r.add_argument("--out", type=Path, required=True, help="folder for members.csv and zones.csv")
    common(r)

    d = sub.add_parser("demo", help="design the demo building in sample_results/")
    d.add_argument("--out", type=Path, default=Path("shearpost-demo"), help="output folder (default ./shearpost-demo)")
    common(d)
    return p


def _error(text: str) -> None:
    """Errors go to stderr unwrapped, so that file, line and column stay on one line."""
    print(text, file=sys.stderr)


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    console = Console(stderr=False)
    if args.command == "demo":
        args.members, args.forces = SAMPLE / "members.csv", SAMPLE / "forces.csv"
        args.cases, args.map = SAMPLE / "cases.csv", None
        if not args.members.exists():
            _error(f"demo data not found in {SAMPLE}; install from a checkout with `pip install -e .`")
            return EXIT_USAGE
    store = Store(args.store)
    try:
        name = args.run_name or store.new_name()
        store.check_new_name(name)
    except StoreError as exc:
        _error(f"error: {exc}")
        return EXIT_USAGE
    try:
        settings = load_settings(args.config)
        cmap = load_column_map(args.map, csv_tables.KNOWN_COLUMNS)
        members, warnings = csv_tables.read_members(args.members, cmap)
        lengths = dict(zip(members.column("member").to_pylist(), members.column("length_m").to_pylist()))
        forces = csv_tables.read_forces(args.forces, cmap, lengths)
        cases = csv_tables.read_cases(args.cases, cmap) if args.cases else None
        if cases is not None:
            csv_tables.check_cases_cover_forces(cases, forces, args.cases)
    except InputError as exc:
        _error(f"error: {exc}")
        _error("nothing was written")
        return EXIT_INPUT

    inputs = {"members": args.members, "forces": args.forces}
    if args.cases:
        inputs["cases"] = args.cases
    if args.map:
        inputs["column_map"] = args.map
    if args.config:
        inputs["settings"] = args.config
    try:
        run = store.ingest(name, members, forces, cases, inputs, warnings, {"settings": settings.as_dict()})
    except StoreError as exc:
        _error(f"error: {exc}")
        return EXIT_USAGE
    result = engine.design_run(run, settings)
    result.warnings[:0] = warnings
    store.write_design(run, engine.design_tables(result), engine.design_manifest(result, settings))
    report.write_tables(result, args.out)
    doc = report.summary(result, run.name, args.out)
    try:
        if args.json:
            print(report.dump_json(doc))
        else:
            report.print_summary(doc, console)
    except BrokenPipeError:  # the reader of a pipe stopped early (e.g. `| head`): as the Python docs advise
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
    return EXIT_RESIZE if doc["status"]["resize"] else EXIT_OK


if __name__ == "__main__":
    sys.exit(main())
