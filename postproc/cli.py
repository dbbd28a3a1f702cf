# PYTHON_ARGCOMPLETE_OK  (shell completion when argcomplete is installed: `pip install shearpost[completion]`)
"""Command line: argument parsing, help, exit codes, and calls into the stages.

Only argparse and the standard library load before a command runs, so that `--help` and
`--version` answer at once; each command imports the stages it needs.

A fault of the environment (a full or read-only disk, memory, a dead worker, Ctrl-C, a
closed pipe, a damaged store, a busy run) gives one line on stderr and its own exit code
(EXIT_CODES; postproc.faults), never a traceback.
"""

from __future__ import annotations

import argparse
import math
import os
import re
import sys
import textwrap
from pathlib import Path

from postproc import __version__
from postproc.terms import NEEDS_ACTION, STATUSES, label

# The exit codes, in one table: --help prints it, and new codes added here appear there.
EXIT_CODES: dict[int, str] = {
    0: "success",
    1: "bad input (the message names file, line and column; nothing is written), or a run in "
       "which no member could be designed (the message says why)",
    2: "usage error: a bad option or value, an unknown run or member, a run name that exists or is being "
       "written, --out that is a file, inside the store or on an input",
    3: "some members (or joints of special moment frames) need resizing (run, demo; compare with "
       "--fail-on-new-resize)",
    4: "a stored run is damaged (its name and the damaged file are given); other runs keep working",
    5: "busy: another shearpost process is writing into the same run or output folder",
    6: "the store or output folder cannot be written (read-only, permissions)",
    7: "the disk is full",
    8: "out of memory, in this process or in a worker",
    9: "a worker process died (killed, e.g. by the system when memory ran out)",
    10: "another error reading or writing a file",
    11: "the design's own self-check failed: a defect of shearpost; nothing was stored",
    12: "some members were not designed: no-geometry (not in the members table), no-forces, invalid (an input "
        "the design needs is missing or out of range) or deep-beam (to be modelled by hand) (run, demo; "
        "members.csv gives each one's status and why; before 3 where both apply)",
    130: "interrupted (Ctrl-C)",
    141: "the output was closed early (e.g. piped into head): the command finishes its work, the rest of "
         "its output is dropped",
}
EXIT_OK, EXIT_INPUT, EXIT_USAGE, EXIT_RESIZE = 0, 1, 2, 3
EXIT_DAMAGED, EXIT_BUSY, EXIT_READ_ONLY, EXIT_DISK_FULL, EXIT_MEMORY, EXIT_WORKER, EXIT_IO, EXIT_INTERNAL = range(4, 12)
EXIT_UNDESIGNED = 12
RUNS_WIDE = 100  # terminal columns from which `runs` shows each run's inputs
RUNS_OTHER_COLUMNS = 62  # what the table of `runs` takes besides the run names (without the inputs)
EXIT_INTERRUPTED, EXIT_BROKEN_PIPE = 130, 141  # 128 + SIGINT, 128 + SIGPIPE, as shells report them
FAULT_EXIT = {"damaged": EXIT_DAMAGED, "busy": EXIT_BUSY, "read-only": EXIT_READ_ONLY, "disk-full": EXIT_DISK_FULL,
              "memory": EXIT_MEMORY, "worker": EXIT_WORKER, "io": EXIT_IO, "internal": EXIT_INTERNAL,
              "interrupted": EXIT_INTERRUPTED, "broken-pipe": EXIT_BROKEN_PIPE}  # postproc.faults kinds
STORE_ENV = "SHEARPOST_STORE"  # the store folder, unless --store names one
DEFAULT_STORE = "shearpost-store"
GLOBAL_OPTIONS = ("store", "json", "config")


# ----------------------------------------------------------------------------- option values


def positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a whole number of at least 1, got {text}")
    return value


def non_negative(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None
    if not math.isfinite(value) or value < 0:
        raise argparse.ArgumentTypeError(f"expected a number of 0 or more, got {text}")
    return value


def case_factor(text: str) -> tuple[str, float]:
    """CASE=FACTOR, e.g. L=1.3."""
    case, sep, value = text.partition("=")
    if not sep or not case.strip():
        raise argparse.ArgumentTypeError(f"expected CASE=FACTOR (e.g. L=1.3), got {text!r}")
    try:
        factor = float(value)
    except ValueError:
        raise argparse.ArgumentTypeError(f"the factor of {case.strip()!r} is not a number: {value!r}") from None
    if not math.isfinite(factor):
        raise argparse.ArgumentTypeError(f"the factor of {case.strip()!r} must be a finite number")
    return case.strip(), factor


# ----------------------------------------------------------------------------- parser


def _wrap(text: str, indent: str = "") -> str:
    return textwrap.fill(text, width=79, initial_indent=indent, subsequent_indent=indent)


def _example(command: str) -> str:
    """An example command line, continued with a backslash before an option where it is long."""
    lines, current = [], "  "
    for k, part in enumerate(re.split(r" (?=--)", command)):
        if k and len(current) + 1 + len(part) > 76:
            lines.append(current + " \\")
            current = "      " + part
        else:
            current += (" " if k else "") + part
    return "\n".join([*lines, current])


def _exit_code_text() -> str:
    return "exit codes:\n" + "\n".join(textwrap.fill(text, width=79, initial_indent=f"  {code:>3}  ",
                                                      subsequent_indent="       ")
                                       for code, text in sorted(EXIT_CODES.items()))


COMMANDS = {
    # name: (one-line help, description, examples, global options that apply)
    "run": ("design every member of an analysis export and write the tables",
            "Ingest a members table (CSV or IFC) and a forces table as a new, immutable run in the store, design the "
            "shear reinforcement of every member to ACI 318-19, and write members.csv, zones.csv and report.html "
            "to --out. Every member of the input leaves with a status that says why.",
            ["shearpost run --members members.csv --forces forces.csv --cases cases.csv --out results/",
             "shearpost run --members model.ifc --forces forces.csv --out results/ --run level-2-rev-b",
             "shearpost run --members m.csv --forces export.csv --map export-map.toml --out results/ --json",
             "shearpost run --units us --members members.csv --forces forces.csv --out results/"],
            {"store", "json", "config"}),
    "demo": ("design the demo building that ships with shearpost",
             "Design the demo building (a reinforced-concrete frame of our own, with its analysis results) exactly "
             "as `run` would, into ./shearpost-demo by default. --scale changes a load case, to try `compare`.",
             ["shearpost demo --run base", "shearpost demo --scale L=1.3 --run more-live",
              "shearpost demo --without-frames --run no-frames", "shearpost demo --ifc --out demo-ifc/",
              "shearpost demo --units us --run base-us"],
             {"store", "json", "config"}),
    "govern": ("rank the members: those needing action first, then by utilization",
               "Rank the members of a designed run for review: members that need action (resize, deep-beam, "
               "invalid, no-forces, no-geometry) first, then the designed members by utilization (the larger of "
               "Vu/phi*Vn provided and Vu over the section limit), highest first; not-covered members last.",
               ["shearpost govern --top 20", "shearpost govern --level L2 --status resize",
                "shearpost govern --format csv > governing.csv"],
               {"store", "json"}),
    "compare": ("what changed between two runs",
                "Compare two runs of the store member by member: members added and removed, status changes, "
                "design-shear and utilization changes above the thresholds, every changed stirrup layout (before "
                "and after) and the change of stirrup mass.",
                ["shearpost compare base more-live",
                 "shearpost compare rev-a rev-b --threshold 0.05 --fail-on-new-resize"],
                {"store", "json"}),
    "runs": ("list the store's runs with their inputs",
             "List the runs of the store: when each was created, its members and force rows, whether it is "
             "designed, and its input files with their sha256.",
             ["shearpost runs", "shearpost --store //server/project/shearpost-store runs --json"],
             {"store", "json"}),
    "schedule": ("beam marks and the bar schedule (CSV and Parquet)",
                 "Group typical beams under marks (same section, materials and stirrup layout; mark numbers carry "
                 "over from the previous run) and write the bar schedule: each stirrup shape with its bent "
                 "dimensions, cut length, count and mass, per member, mark, level and bar size.",
                 ["shearpost schedule --out schedule/", "shearpost schedule --run rev-b --envelope-groups --out sched/"],
                 {"store", "json"}),
    "explain": ("the whole calculation of one member, clause by clause",
                "Show the calculation of one member step by step, each step with its ACI 318-19 clause, from the "
                "stored run: inputs, critical sections, demand, each zone's capacity and spacing limits.",
                ["shearpost explain L2-SB-23", "shearpost explain L2-SB-23 --run base --json"],
                {"store", "json"}),
    "report": ("write the HTML report of a designed run again",
               "Write the self-contained HTML report of a designed run (one file, nothing fetched): summary, "
               "member index, overview by level, and per member the shear diagram above the stirrup elevation.",
               ["shearpost report --out report.html", "shearpost report --run base --member L2-SB-23 --out one.html"],
               {"store"}),
    "export": ("write members.csv, zones.csv and report.html of a stored run again",
               "Write the tables and the report of a stored run into a folder, exactly as `run` writes them (all "
               "together, never onto an input): for a run whose outputs were lost, or were never written because "
               "the disk was full.",
               ["shearpost export --out results/", "shearpost export --run rev-b --out rev-b/ --no-report"],
               {"store"}),
    "verify": ("check every file of every run against its manifest",
               "Check every file of every run of the store (or of --run) against the run's manifest, which lists "
               "each file with its size and sha256: damaged, missing and stray files are named by run. Exit 4 "
               "when a run is damaged; the other runs keep working.",
               ["shearpost verify", "shearpost verify --run rev-b --json"],
               {"store", "json"}),
    "bench": ("design a synthetic frame and time it against bare reads",
              "Generate a deterministic synthetic frame, time the ingest and the design against bare reads of the "
              "same data, check a sample against a per-member reference, and report the peak memory.",
              ["shearpost bench --members 1000 --cases 40", "shearpost bench --members 10000 --cases 8 --basic",
               "shearpost bench --members 10000 --workers 2 --json"],
              {"json"}),
}


def _globals(q: argparse.ArgumentParser, which: set[str], top: bool = False) -> None:
    """The global options; SUPPRESS keeps a subcommand from overwriting a value given
    before it, so that each may come before or after the subcommand."""
    g = q.add_argument_group("global options (before or after the command)") if not top else q
    if "store" in which:
        g.add_argument("--store", type=Path, default=argparse.SUPPRESS,
                       help=f"store folder (default: ${STORE_ENV}, else ./{DEFAULT_STORE})")
    if "json" in which:
        g.add_argument("--json", action="store_true", default=argparse.SUPPRESS,
                       help="print the result as JSON on stdout (for scripts)")
    if "config" in which:
        g.add_argument("--config", type=Path, default=argparse.SUPPRESS,
                       help="settings TOML (default: common-practice values, see the README)")


def _engine_options(q: argparse.ArgumentParser) -> None:
    q.add_argument("--engine", choices=("local", "dask"), default="local",
                   help="local: this machine (default); dask: dask.distributed, a local cluster or --scheduler")
    q.add_argument("--workers", type=positive_int, default=min(2, os.cpu_count() or 1),
                   help="worker processes (default: up to 2)")
    q.add_argument("--scheduler", help="dask scheduler address, e.g. tcp://10.0.0.5:8786 (with --engine dask)")


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="shearpost", formatter_class=argparse.RawDescriptionHelpFormatter,
        description=_wrap("Shear reinforcement of reinforced-concrete frame members to ACI 318-19, from the force "
                          "tables of a frame analysis. Results assist a licensed structural engineer, who checks "
                          "them."),
        epilog="examples:\n  shearpost demo\n  shearpost govern --top 10\n  shearpost explain L2-SB-23\n\n"
               + _wrap(f"The global options --store, --json and --config may come before or after the command. "
                       f"The store folder is ${STORE_ENV} unless --store names one. "
                       "'shearpost COMMAND --help' explains a command.") + f"\n\n{_exit_code_text()}")
    p.add_argument("--version", action="version", version=f"shearpost {__version__}")
    _globals(p, set(GLOBAL_OPTIONS), top=True)
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")
    q = {}
    for name, (short, description, examples, applies) in COMMANDS.items():
        q[name] = sub.add_parser(
            name, help=short, description=_wrap(description), formatter_class=argparse.RawDescriptionHelpFormatter,
            epilog="examples:\n" + "\n".join(map(_example, examples)) + f"\n\n{_exit_code_text()}")
        _globals(q[name], applies)

    r = q["run"]
    r.add_argument("--members", type=Path, required=True, help="members.csv, or an IFC model (.ifc)")
    r.add_argument("--forces", type=Path, required=True, help="forces.csv: member, case, x_m, V_kN, ...")
    r.add_argument("--cases", type=Path, help="cases.csv (case,type); without it every case is taken as an "
                                              "already factored combination")
    r.add_argument("--map", type=Path, help="column-mapping TOML: read another program's export as it is")
    r.add_argument("--ifc-key", choices=("auto", "globalid", "name", "tag"), default="auto",
                   help="IFC attribute that matches the forces table's member ids (default: auto, the one of "
                        "GlobalId, Name, Tag that matches most)")
    r.add_argument("--out", type=Path, required=True, help="folder for members.csv, zones.csv and report.html")
    for d in (r, q["demo"]):
        d.add_argument("--units", choices=("si", "us"), default=None,
                       help="si: SI units and the SI edition of ACI 318-19 (N, mm, MPa; the default); us: inch-pound "
                            "units and the inch-pound edition (lb, in, psi; #3, #4, #5 bars); default: the settings' "
                            "units, else si. Input columns may be named in either system")
        d.add_argument("--run", dest="run_name", metavar="NAME", help="name of the new run (default: the date and a counter)")
        d.add_argument("--no-report", action="store_true", help="do not write report.html")
    d = q["demo"]
    d.add_argument("--out", type=Path, default=Path("shearpost-demo"), help="output folder (default ./shearpost-demo)")
    d.add_argument("--ifc", action="store_true", help="read the demo's geometry from its IFC model")
    d.add_argument("--scale", action="append", default=[], type=case_factor, metavar="CASE=FACTOR",
                   help="scale one load case of the demo, e.g. L=1.3 (repeatable)")
    d.add_argument("--without-frames", action="store_true",
                   help="design the demo as if no beam belonged to a moment frame (Chapters 9 and 22 only), to "
                        "`compare` with the capacity design of its special moment frames")
    for name in ("run", "demo"):
        _engine_options(q[name])

    for name in ("govern", "schedule", "explain", "report", "export"):
        q[name].add_argument("--run", dest="run_name", metavar="NAME", help="run to use (default: the latest)")
    q["verify"].add_argument("--run", dest="run_name", metavar="NAME", help="this run only (default: every run)")
    q["export"].add_argument("--out", type=Path, required=True, help="folder for members.csv, zones.csv and report.html")
    q["export"].add_argument("--no-report", action="store_true", help="do not write report.html")

    g = q["govern"]
    g.add_argument("--level", action="append", default=[], help="only this level (repeatable)")
    g.add_argument("--group", action="append", default=[], help="only this group (repeatable)")
    g.add_argument("--status", action="append", default=[], choices=STATUSES, metavar="STATUS",
                   help=f"only this status (repeatable): {', '.join(STATUSES)}")
    g.add_argument("--top", type=positive_int, metavar="N", help="the first N members only")
    g.add_argument("--format", choices=("table", "csv", "json"), default=None,
                   help="table (default; fits the terminal), csv (every column), json (every column); "
                        "--json is --format json")

    c = q["compare"]
    c.add_argument("run_a", metavar="RUN_A", help="the earlier run (the reference)")
    c.add_argument("run_b", metavar="RUN_B", help="the later run, compared with RUN_A")
    c.add_argument("--threshold", type=non_negative, default=0.02,
                   help="utilization change to report (default 0.02)")
    c.add_argument("--vu-threshold", type=non_negative, default=0.05,
                   help="relative change of the end design shears to report (default 0.05)")
    c.add_argument("--fail-on-new-resize", action="store_true",
                   help="exit 3 when a member of RUN_B needs resizing that did not in RUN_A")

    s = q["schedule"]
    s.add_argument("--out", type=Path, required=True, help="folder for the schedule files")
    s.add_argument("--envelope-groups", action="store_true",
                   help="members of one group with the same section and span share the most demanding layout")

    e = q["explain"]
    e.add_argument("member", metavar="MEMBER", help="the member id, as in members.csv")

    h = q["report"]
    h.add_argument("--out", type=Path, required=True, help="the HTML file to write")
    h.add_argument("--member", action="append", default=[], help="detail sections for this member only (repeatable)")

    b = q["bench"]
    b.add_argument("--members", type=positive_int, default=10_000, help="members (default 10,000)")
    b.add_argument("--cases", type=positive_int, default=40, help="factored combinations (default 40), or basic "
                                                                    "load cases with --basic")
    b.add_argument("--basic", action="store_true", help="basic load cases in a cases.csv (dead, live in patterns, "
                                                        "roof, wind, earthquake), combined by Table 5.3.1")
    b.add_argument("--stations", type=positive_int, default=21, help="output stations per member (default 21)")
    b.add_argument("--seed", type=int, default=1, help="seed of the synthetic frame (default 1)")
    b.add_argument("--sample", type=positive_int, default=30, help="members checked by the per-member reference")
    b.add_argument("--keep", type=Path, help="keep the generated model and store in this folder")
    _engine_options(b)
    return p


def parse(argv: list[str] | None) -> argparse.Namespace:
    """Parse, then settle the global options: refused where they do not apply, else defaulted."""
    p = _parser()
    if "_ARGCOMPLETE" in os.environ:  # completing a command line in the shell, not running it
        try:
            import argcomplete
        except ImportError:
            pass
        else:
            argcomplete.autocomplete(p)
    args = p.parse_args(argv)
    applies = COMMANDS[args.command][3]
    for option in GLOBAL_OPTIONS:
        if option not in applies and getattr(args, option, None) not in (None, False):
            p.error(f"--{option} does not apply to `shearpost {args.command}`")
    args.store = Path(getattr(args, "store", None) or os.environ.get(STORE_ENV) or DEFAULT_STORE)
    args.json = getattr(args, "json", False)
    args.config = getattr(args, "config", None)
    if args.command == "govern":
        if args.json and args.format not in (None, "json"):
            p.error(f"--json and --format {args.format} contradict each other")
        args.format = "json" if args.json else (args.format or "table")
    return args


# ----------------------------------------------------------------------------- output


class _QuietWhenClosed:
    """stdout that goes quiet when its reader stops early (`shearpost govern --format csv | head`):
    the rest of the output goes to the null device, as the Python documentation advises
    for SIGPIPE; the command finishes its work, then says so in one line (exit 141)."""

    def __init__(self, stream):
        self._stream = stream
        self.closed_early = False

    def write(self, text: str) -> int:
        try:
            return self._stream.write(text)
        except BrokenPipeError:
            self._silence()
            return len(text)

    def flush(self) -> None:
        try:
            self._stream.flush()
        except BrokenPipeError:
            self._silence()

    def _silence(self) -> None:
        self.closed_early = True
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, self._stream.fileno())
        os.close(devnull)

    def __getattr__(self, name):
        return getattr(self._stream, name)


def _error(text: str) -> None:
    """Errors go to stderr unwrapped, so that file, line and column stay on one line."""
    print(text, file=sys.stderr)


def main(argv: list[str] | None = None) -> int:
    args = parse(argv)
    args.state = {}  # how far `run` got, to say it in the message of a fault
    stdout = sys.stdout
    sys.stdout = quiet = _QuietWhenClosed(stdout)
    try:
        code = COMMAND_FUNCTIONS[args.command](args)
        sys.stdout.flush()
        if quiet.closed_early:
            raise BrokenPipeError
        return code
    except BaseException as exc:  # faults of the environment: one line and their own code, no traceback
        from postproc import faults

        fault = faults.describe(exc)
        if fault is None:
            raise
        kind, text = fault
        _error(f"error: {text}{_left(args.state, kind)}")
        return FAULT_EXIT[kind]
    finally:
        sys.stdout = stdout


def _left(state: dict, kind: str) -> str:
    """What a fault left behind, for `run`: nothing stored, or a stored run without its tables."""
    if state.get("written"):
        return f"; run {state['run']} is stored and its tables are in {state['out']}"
    if state.get("run"):
        return (f"; run {state['run']} is stored, but its tables were not all written: write them with "
                f"`shearpost export --run {state['run']} --store {state['store']} --out DIR`")
    if state.get("started") and kind != "damaged":
        return "; nothing was stored"
    return ""


def _console():
    from rich.console import Console

    return Console()


# ----------------------------------------------------------------------------- design commands


def sample_folder() -> Path:
    """The demo building's inputs, installed as package data."""
    import importlib.resources

    return Path(str(importlib.resources.files("postproc.sample_results")))


def scaled_demo_forces(factors: dict[str, float], out: Path) -> Path:
    """The demo's forces with some load cases scaled, written beside the outputs (so that
    the run's manifest points at the file that was designed)."""
    import pandas as pd

    from postproc.report import write_atomic

    forces = pd.read_csv(sample_folder() / "forces.csv")
    unknown = sorted(set(factors) - set(forces["case"]))
    if unknown:
        raise ValueError(f"no case {', '.join(unknown)} in the demo (cases: {', '.join(sorted(forces['case'].unique()))})")
    f = forces["case"].map(factors).fillna(1.0)
    for col in ("V_kN", "N_kN", "T_kNm", "M_kNm"):
        forces[col] = (forces[col] * f).round(3)
    path = out / ("forces-" + "-".join(f"{c}x{v:g}" for c, v in sorted(factors.items())) + ".csv")
    return write_atomic(path, lambda fh: forces.to_csv(fh, index=False, lineterminator="\n"))


def unframed_demo_members(out: Path) -> Path:
    """The demo's members with every `frame` set to none, written beside the outputs (so that
    the run's manifest points at the file that was designed)."""
    import pandas as pd

    from postproc.report import write_atomic

    members = pd.read_csv(sample_folder() / "members.csv", keep_default_na=False, na_values=[""])
    members["frame"] = "none"
    return write_atomic(out / "members-without-frames.csv", lambda fh: members.to_csv(fh, index=False, lineterminator="\n"))


def inch_pound_demo_inputs(members: Path, forces: Path, out: Path) -> tuple[Path, Path]:
    """The demo's tables in inch-pound units (length_ft, b_in, fc_psi, V_kip, ...), converted by
    the tool and written beside the outputs, so that the run reads them as a US export and
    its manifest points at the files that were designed; its Grade 420 bars are Grade 60
    (units.convert_csv). An IFC model is read as it is."""
    from postproc import units

    folder = out / "inputs-us"
    if members.suffix.lower() != ".ifc":
        members = units.convert_csv(members, folder / "members.csv", units.US, grades=True)
    return members, units.convert_csv(forces, folder / forces.name, units.US)


def cmd_design(args) -> int:
    """`run` and `demo`: ingest, design, write the tables and the report, summarise."""
    from postproc import api, engines, export, memory, report
    from postproc.adapters.errors import InputError
    from postproc.settings import load_settings
    from postproc.store import DamagedRun, Store, StoreError

    if args.command == "demo":
        sample = sample_folder()
        args.members = sample / ("demo_building.ifc" if args.ifc else "members.csv")
        args.forces, args.cases, args.map, args.ifc_key = sample / "forces.csv", sample / "cases.csv", None, "auto"
        if not args.members.exists():
            _error(f"error: the demo's data is missing from {sample}; reinstall shearpost")
            return EXIT_USAGE
        if args.scale:
            try:
                args.forces = scaled_demo_forces(dict(args.scale), args.out)
            except ValueError as exc:
                _error(f"shearpost demo: error: --scale: {exc}")
                return EXIT_USAGE
        if args.without_frames:
            if args.ifc:
                _error("shearpost demo: error: --without-frames works on the demo's members.csv, not with --ifc")
                return EXIT_USAGE
            args.members = unframed_demo_members(args.out)
        if args.units == "us":
            args.members, args.forces = inch_pound_demo_inputs(args.members, args.forces, args.out)
    store = Store(args.store)
    inputs = {role: path for role, path in (("members", args.members), ("forces", args.forces), ("cases", args.cases),
                                            ("column_map", args.map), ("settings", args.config)) if path}
    try:
        export.check_out(args.out, inputs, store)
        if args.run_name is not None:
            store.check_new_name(args.run_name)
    except (export.OutError, StoreError) as exc:
        _error(f"error: {exc}")
        return EXIT_USAGE
    if store.root.is_dir():
        store.clean_stale()  # temporary folders of runs whose process is gone
    args.state.update(started=True, store=str(args.store))
    show_progress = not args.json and sys.stderr.isatty()
    if args.engine == "dask":
        map_parts = engines.dask(args.scheduler, args.workers)
    else:
        map_parts = engines.local(args.workers)
    try:
        settings = load_settings(args.config, args.units)
        with report.progress_bars(show_progress) as task:
            run, result = api.ingest_and_design(store, args.run_name, args.members, args.forces, args.cases,
                                                args.map, settings, args.config, map_parts, args.ifc_key, task)
    except InputError as exc:
        _error(f"error: {exc}")
        _error("nothing was written")
        return EXIT_INPUT
    except StoreError as exc:
        if isinstance(exc, DamagedRun):
            raise
        _error(f"error: {exc}")
        return EXIT_USAGE
    args.state.update(run=run.name)
    doc = report.summary(result, run.name, args.out)
    doc["report"] = None if args.no_report else str(args.out / "report.html")
    why = api.nothing_designed(result.members)
    doc["nothing_designed"] = why
    del result  # the outputs are written from the stored run: its tables are not held twice
    memory.release()
    with report.progress_bars(show_progress) as task:
        export.write_outputs(run, args.out, not args.no_report,
                             None if args.no_report else task("writing report.html", 1))
    args.state.update(written=True, out=str(args.out))
    if args.json:
        print(report.dump_json(doc))
    else:
        report.print_summary(doc, _console())
        if args.command == "demo":
            paths = [Path(p) for p in (args.members, args.forces, args.cases) if p]
            one_folder = len({p.parent for p in paths}) == 1
            names = ", ".join(p.name for p in paths) + " in:" if one_folder else "inputs:"
            console = _console()
            console.print(f"Start your own tables from the demo's {names}", highlight=False)
            for where in [paths[0].parent] if one_folder else paths:  # a path on a line of its own, never broken
                console.print(f"  {where}", highlight=False, soft_wrap=True)
    if why:
        _error(f"error: run {run.name}: {why}")
        _error(f"the statuses are in {args.out / 'members.csv'}")
        return EXIT_INPUT
    return outcome(doc)


NOT_DESIGNED = tuple(s for s in NEEDS_ACTION if s != "resize")  # exit code 12


def outcome(doc: dict) -> int:
    """The exit code of a designed run from its summary: members not designed first, then
    members or joints to resize."""
    if any(doc["status"][s] for s in NOT_DESIGNED):
        return EXIT_UNDESIGNED
    return EXIT_RESIZE if doc["status"]["resize"] or doc["joints"]["over"] else EXIT_OK


# ----------------------------------------------------------------------------- review commands


def _review(fn):
    """A command on a store's runs: a missing store, run or member is a usage error."""

    def run(args) -> int:
        from postproc.store import DamagedRun, Store, StoreError

        try:
            return fn(args, Store(args.store))
        except StoreError as exc:
            if isinstance(exc, DamagedRun):  # a fault of the store: exit 4 (main)
                raise
            _error(f"error: {exc}")
            return EXIT_USAGE

    return run


def _run_of(args, store):
    if args.run_name:
        return store.run(args.run_name)
    run = store.latest()
    for damaged in store.intact_runs()[1]:  # never silent: a damaged run may be newer than the one taken
        _error(f"warning: {damaged}; the latest intact run, {run.name}, is used")
    return run


def _print_frame(df, console, title: str) -> None:
    """A table under the shared labels, units-aware number formats: kN, kip, kg and lb to 0.1, ratios to 0.001."""
    from rich.table import Table

    from postproc.report import shown

    t = Table(title=title, title_justify="left")
    digits = [1 if str(c).endswith(("_kN", "_kg", "_kip", "_lb")) else 3 for c in df.columns]
    for col in df.columns:
        numeric = df[col].dtype.kind in "if"
        t.add_column(label(str(col)), justify="right" if numeric else "left",
                     no_wrap=str(col) in ("member", "rank", "status", "governing_case"), overflow="fold")
    for row in df.itertuples(index=False):
        t.add_row(*["" if (isinstance(v, float) and v != v) else (f"{v:,.{n}f}" if isinstance(v, float) else shown(v))
                    for v, n in zip(row, digits)])
    console.print(t)


@_review
def cmd_govern(args, store) -> int:
    from postproc import govern, report

    run = _run_of(args, store)
    try:
        df = govern.rank(run, args.level, args.group, args.status, args.top)
    except govern.UnknownFilter as exc:  # matching nothing, it would print an empty table and exit 0
        option = {"level": "--level", "group": "--group", "status": "--status"}[exc.column]
        _error(f"error: {option} {exc} (run {run.name})")
        return EXIT_USAGE
    if args.format == "csv":
        df.to_csv(sys.stdout, index=False, lineterminator="\n")
    elif args.format == "json":
        print(df.to_json(orient="records", indent=2))
    else:
        console = _console()
        console.print(f"Members of run {report.shown(run.name)}, those needing action first "
                      f"({len(df):,} shown)", highlight=False)
        console.print(report.governing_table(df, console.width))
        console.print(f"[italic]{report.CAUTION}[/italic]")
    return EXIT_OK


@_review
def cmd_compare(args, store) -> int:
    from postproc import govern, report

    diff = govern.compare(store.run(args.run_a), store.run(args.run_b), args.threshold, args.vu_threshold)
    if args.json:
        print(report.dump_json(diff.as_dict()))
    else:
        console = _console()
        console.print(f"[bold]{report.shown(diff.run_a)}[/bold] (A) -> [bold]{report.shown(diff.run_b)}[/bold] (B)")
        if diff.note:
            console.print(report.shown(diff.note))
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
        U = diff.units
        left = diff.mass_left_out
        a, b = diff.stirrup_mass_a, diff.stirrup_mass_b
        console.print(f"Stirrup {U.mass_word} of the members designed in both runs: {a:,.1f} {U.mass} -> "
                      f"{b:,.1f} {U.mass} ({b - a:+,.1f} {U.mass})"
                      + (f"; left out, designed in one run only: {report.shown(', '.join(left[:10]))}"
                         + (f" and {len(left) - 10} more" if len(left) > 10 else "") if left else ""))
        if diff.newly_resize:
            console.print(f"[bold]Newly need resizing:[/bold] {report.shown(', '.join(diff.newly_resize))}")
    return EXIT_RESIZE if args.fail_on_new_resize and diff.newly_resize else EXIT_OK


@_review
def cmd_runs(args, store) -> int:
    from rich import box
    from rich.table import Table

    from postproc import report

    from postproc.store import DamagedRun

    rows = []
    for r in store.runs():
        try:
            man = r.manifest()
        except DamagedRun as exc:  # listed as damaged; the other runs are listed as usual
            rows.append({"run": r.name, "damaged": f"{exc.file}: {exc.reason}", "created": "", "members": None,
                         "force_rows": None, "designed": None, "inputs": {}, "tool_version": None,
                         "code_edition": None, "unit_system": None})
            continue
        rows.append({"run": r.name, "damaged": None, "created": man["created"], "members": man["counts"]["members"],
                     "force_rows": man["counts"]["force_rows"], "designed": r.has_design(),
                     "inputs": {k: {"path": v["path"], "sha256": v["sha256"]} for k, v in man["inputs"].items()},
                     "tool_version": man["tool_version"], "code_edition": man["code_edition"],
                     "unit_system": man.get("unit_system", "si")})
    if args.json:
        print(report.dump_json({"store": str(store.root), "runs": rows}))
        return EXIT_OK
    console = _console()
    wide = console.width >= RUNS_WIDE  # a narrow terminal leaves the inputs out rather than break every value
    longest = max((len(report.shown(r["run"])) for r in rows), default=3)
    created = lambda r: r["created"][:16].replace("T", " ")  # noqa: E731
    damaged = lambda r: report.shown(r["damaged"]) + " (`shearpost verify`)"  # noqa: E731
    if longest + RUNS_OTHER_COLUMNS > console.width:  # not even the table without inputs fits: one run a line
        console.print(f"Runs in {report.shown(store.root)}", highlight=False)
        for r in rows:
            what = ("DAMAGED: " + damaged(r) if r["damaged"] else
                    f"created {created(r)} UTC, {r['unit_system']}, {r['members']} members, "
                    f"{r['force_rows']:,} force rows, {'designed' if r['designed'] else 'not designed'}")
            console.print(report.shown(r["run"]), highlight=False, soft_wrap=True)
            console.print(f"  {what}", highlight=False)
        return EXIT_OK
    t = Table(title=f"Runs in {report.shown(store.root)}", title_justify="left", box=box.SIMPLE_HEAD, pad_edge=False,
              collapse_padding=True)
    for col in ("run", "created (UTC)", "units", "members", "force rows", "designed", *(["inputs"] if wide else [])):
        t.add_column(col, overflow="fold", no_wrap=col != "inputs")  # ids and times whole, to copy them
    for r in rows:
        if r["damaged"]:
            t.add_row(report.shown(r["run"]), "", "", "", "", "[bold red]DAMAGED[/bold red]",
                      *([damaged(r)] if wide else []))
            continue
        t.add_row(report.shown(r["run"]), created(r), r["unit_system"], str(r["members"]),
                  f"{r['force_rows']:,}", "yes" if r["designed"] else "no",
                  *([report.shown(", ".join(Path(v["path"]).name for v in r["inputs"].values()))] if wide else []))
    console.print(t)
    if not wide:
        console.print(f"(inputs and damaged files: in a terminal of {RUNS_WIDE} columns or more, or with --json)",
                      highlight=False)
    return EXIT_OK


@_review
def cmd_verify(args, store) -> int:
    """Every file of every run (or of --run) against its manifest: damaged, missing or stray."""
    from postproc import report
    from postproc.store import StoreError

    runs = store.runs()
    if args.run_name:
        runs = [r for r in runs if r.name == args.run_name]
        if not runs:
            raise StoreError(f"no run named '{args.run_name}' in {store.root}")
    found = {r.name: r.verify() for r in runs}
    stale = [p for p in store.root.rglob(".tmp-*") if p.is_dir()] if store.root.is_dir() else []
    if args.json:
        print(report.dump_json({"store": str(store.root), "runs": [{"run": n, "intact": not p, "problems": p}
                                                                    for n, p in found.items()],
                                "temporary_folders": [str(p) for p in stale]}))
    else:
        console = _console()
        for n, problems in found.items():
            console.print(f"run {report.shown(n)}: " + ("intact" if not problems else
                                                       f"[bold red]DAMAGED[/bold red] ({len(problems)} problem(s))"),
                          highlight=False)
            for line in problems:
                console.print(f"  {report.shown(line)}", highlight=False)
        for p in stale:
            console.print(f"temporary folder {report.shown(p)} (a run being written, or left by one that "
                          "stopped; removed by the next `run` once its process is gone)", highlight=False)
        if not found:
            console.print(f"no runs in {report.shown(store.root)}", highlight=False)
    if any(found.values()):
        _error(f"error: {sum(bool(p) for p in found.values())} damaged run(s): "
               f"{', '.join(n for n, p in found.items() if p)}")
        return EXIT_DAMAGED
    return EXIT_OK


@_review
def cmd_export(args, store) -> int:
    """A stored run's members.csv, zones.csv and report.html, written again."""
    from postproc import export, report

    run = _run_of(args, store)
    inputs = {role: Path(v["path"]) for role, v in run.manifest()["inputs"].items()}
    try:
        export.check_out(args.out, inputs, store)
    except export.OutError as exc:
        _error(f"error: {exc}")
        return EXIT_USAGE
    if not run.has_design():
        _error(f"error: run '{run.name}' has no design")
        return EXIT_USAGE
    paths = export.write_outputs(run, args.out, not args.no_report)
    _console().print(f"run {report.shown(run.name)}: {', '.join(p.name for p in paths)} written to "
                     f"{report.shown(args.out)}", highlight=False)
    return EXIT_OK


@_review
def cmd_schedule(args, store) -> int:
    from postproc import report, schedule
    from postproc.settings import settings_from_dict

    run = _run_of(args, store)
    settings = settings_from_dict(run.manifest().get("settings", {}))
    sched = schedule.for_run(store, run, settings.detailing, args.envelope_groups)
    paths = sched.write(args.out)
    U = run.units
    mass, stm_mass, total = U.col("stirrup_mass_kg"), "strut_and_tie_" + U.col("mass_kg"), "total_" + U.col("mass_kg")
    bar_mass = sched.bars[U.col("mass_kg")].to_numpy()
    longitudinal = schedule.is_strut_and_tie_bar(sched.bars)
    doc = {"run": run.name, "marks": len(sched.marks), "designed_members": len(sched.members),
           "bars": int(sched.bars["count"].sum()), mass: round(float(bar_mass[~longitudinal].sum()), 1),
           stm_mass: round(float(bar_mass[longitudinal].sum()), 1), total: round(float(bar_mass.sum()), 1),
           "by_bar": sched.by_bar.to_dict("records"), "files": [str(p) for p in paths], "caution": report.CAUTION}
    if args.json:
        print(report.dump_json(doc))
        return EXIT_OK
    console = _console()
    stm_part = (f"; strut-and-tie ties and web bars {doc[stm_mass]:,.1f} {U.mass}" if longitudinal.any() else "")
    console.print(f"run {report.shown(run.name)}: {doc['marks']} marks for {doc['designed_members']} designed members, "
                  f"{doc['bars']:,} bars, {doc[total]:,.1f} {U.mass} (stirrups, hoops and ties "
                  f"{doc[mass]:,.1f} {U.mass}{stm_part})", highlight=False)
    _print_frame(sched.by_bar, console, "By bar size")
    console.print(f"written: {', '.join(p.name for p in paths if p.suffix == '.csv')} (and .parquet) in "
                  f"{report.shown(args.out)}")
    console.print(f"[italic]{report.CAUTION}[/italic]")
    return EXIT_OK


@_review
def cmd_explain(args, store) -> int:
    from postproc import explain, govern, report
    from postproc.settings import settings_from_dict
    from postproc.terms import did_you_mean

    run = _run_of(args, store)
    known = govern.design_table(run, "members", columns=["member"])["member"].tolist()
    if args.member not in known:
        _error(f"error: no member {args.member!r} in run {run.name}{did_you_mean(args.member, known)}")
        return EXIT_USAGE
    steps = explain.explain(run, args.member, settings_from_dict(run.manifest().get("settings", {})))
    if args.json:
        print(report.dump_json({"run": run.name, "member": args.member, "steps": [s.__dict__ for s in steps],
                                "caution": report.CAUTION}))
        return EXIT_OK
    console = _console()
    console.print(f"[bold]{report.shown(args.member)}[/bold] in run {report.shown(run.name)}", highlight=False)
    for s in steps:
        console.print(f"[bold]{report.shown(s.title)}[/bold]" + (f"  [dim]ACI 318-19 {s.clause}[/dim]" if s.clause else ""),
                      highlight=False)
        for line in s.lines:
            console.print(f"  {report.shown(line)}", highlight=False)
    console.print(f"[italic]{report.CAUTION}[/italic]")
    return EXIT_OK


@_review
def cmd_report(args, store) -> int:
    from postproc import html_report, report

    run = _run_of(args, store)
    try:
        path = html_report.write_html_report(run, args.out, args.member or None)
    except ValueError as exc:
        _error(f"error: {exc}")
        return EXIT_USAGE
    _console().print(f"report of run {report.shown(run.name)} written to {report.shown(path)}", highlight=False)
    return EXIT_OK


def cmd_bench(args) -> int:
    from rich.table import Table

    from postproc import bench, engines, report

    show = not args.json and sys.stderr.isatty()
    map_parts = engines.dask(args.scheduler, args.workers) if args.engine == "dask" else engines.local(args.workers)
    with report.progress_bars(show) as task:
        figures = bench.run(args.members, args.cases, args.stations, args.seed, args.sample, map_parts,
                            args.workers if args.engine == "local" else 0, args.keep, task("bench: reading forces (rows)"),
                            args.basic)
    if args.json:
        print(report.dump_json({**figures.__dict__, "end_to_end_s": figures.end_to_end_s}))
        return EXIT_OK
    t = Table(title="shearpost bench (one run, this machine)", title_justify="left", show_header=False)
    t.add_column("what")
    t.add_column("measured", overflow="fold")
    for what, text in figures.rows():
        t.add_row(what, text)
    _console().print(t)
    return EXIT_OK


COMMAND_FUNCTIONS = {"run": cmd_design, "demo": cmd_design, "govern": cmd_govern, "compare": cmd_compare,
                     "runs": cmd_runs, "schedule": cmd_schedule, "explain": cmd_explain, "report": cmd_report,
                     "export": cmd_export, "verify": cmd_verify, "bench": cmd_bench}


if __name__ == "__main__":
    sys.exit(main())
