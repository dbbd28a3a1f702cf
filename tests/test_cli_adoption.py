"""The command line as a new user meets it: help that teaches, options in either place,
clear usage errors, quiet pipes, loud failures, and files colleagues can open."""

from __future__ import annotations

import json
import os
import re
import stat
import subprocess
import sys
from pathlib import Path

import pytest
from rich.console import Console

from postproc import cli, report
from postproc.store import Store
from tests.conftest import beam, rows_from_function, write_inputs

ROOT = Path(__file__).resolve().parents[1]


def shearpost(*args, cwd=None, env=None, **kw) -> subprocess.CompletedProcess:
    """The command as a user runs it, in its own process."""
    return subprocess.run([sys.executable, "-m", "postproc.cli", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd, env={**os.environ, "PYTHONPATH": str(ROOT), **(env or {})}, timeout=300, **kw)


@pytest.fixture(scope="module")
def store(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("cli")
    assert cli.main(["demo", "--store", str(tmp / "store"), "--out", str(tmp / "out"), "--run", "base", "--json"]) == 0
    return tmp / "store"


@pytest.mark.parametrize("command", list(cli.COMMANDS))
def test_every_subcommand_help_has_a_description_examples_and_the_exit_codes(command, capsys):
    with pytest.raises(SystemExit) as done:
        cli.main([command, "--help"])
    assert done.value.code == 0
    text = capsys.readouterr().out
    assert "examples:" in text and f"\n  shearpost {command}" in text
    description = cli.COMMANDS[command][1]
    assert " ".join(description.split()[:6]) in " ".join(text.split())
    for code, meaning in cli.EXIT_CODES.items():  # the one table, whatever codes it holds
        assert f"  {code}  " in text and " ".join(meaning.split()[:4]) in " ".join(text.split())
    assert all(len(line) <= 80 for line in text.splitlines()), "help wider than 80 columns"


def test_every_option_has_help(capsys):
    parser = cli._parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    for name, p in sub.choices.items():
        for action in p._actions:
            assert action.help, f"{name}: {action.option_strings or action.dest} has no help"


def test_global_options_before_or_after_the_command_and_from_the_environment(store, capsys):
    for argv in (["--store", str(store), "govern", "--top", "2", "--json"],
                 ["govern", "--store", str(store), "--top", "2", "--json"],
                 ["--json", "govern", "--top", "2", "--store", str(store)]):
        assert cli.main(argv) == 0
        assert [r["rank"] for r in json.loads(capsys.readouterr().out)] == [1, 2]
    os.environ[cli.STORE_ENV] = str(store)
    try:
        assert cli.main(["runs", "--json"]) == 0
    finally:
        del os.environ[cli.STORE_ENV]
    assert [r["run"] for r in json.loads(capsys.readouterr().out)["runs"]] == ["base"]


@pytest.mark.parametrize("argv, message", [
    (["demo", "--scale", "L"], "expected CASE=FACTOR"),
    (["demo", "--scale", "L=x"], "is not a number"),
    (["govern", "--top", "-3"], "at least 1"),
    (["govern", "--top", "many"], "expected a whole number"),
    (["compare", "a", "b", "--threshold", "-1"], "0 or more"),
    (["run", "--members", "m.csv", "--forces", "f.csv", "--out", "o", "--workers", "0"], "at least 1"),
    (["--config", "x.toml", "govern"], "--config does not apply"),
    (["govern", "--json", "--format", "csv"], "contradict"),
])
def test_bad_option_values_are_usage_errors(argv, message, capsys):
    with pytest.raises(SystemExit) as done:
        cli.main(argv)
    assert done.value.code == cli.EXIT_USAGE
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err


def test_unknown_member_suggests_close_ids(store, tmp_path, capsys):
    assert cli.main(["explain", "L2-SB-32", "--store", str(store)]) == cli.EXIT_USAGE
    err = capsys.readouterr().err
    assert "no member 'L2-SB-32'" in err and "did you mean" in err and "'L2-SB-23'" in err
    assert cli.main(["report", "--member", "L2SB23", "--out", str(tmp_path / "r.html"), "--store", str(store)]) == 2
    assert "did you mean 'L2-SB-23'" in capsys.readouterr().err


def test_broken_pipe_is_quiet(store):
    """The reader goes away before the output is written (as `| head` does): no traceback; the
    command finishes, then says so in one line with its own exit code (141, issue 9)."""
    p = subprocess.Popen([sys.executable, "-m", "postproc.cli", "govern", "--format", "csv", "--store", str(store)],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, env={**os.environ, "PYTHONPATH": str(ROOT)})
    p.stdout.close()  # closed before the command has loaded: every write meets a broken pipe
    err = p.stderr.read().decode()
    assert p.wait(timeout=120) == 141
    assert "Traceback" not in err and "BrokenPipe" not in err and "Exception ignored" not in err, err
    assert len(err.strip().splitlines()) == 1 and "broken pipe" in err, err


def test_govern_fits_80_columns_without_breaking_combination_names(store):
    import pandas as pd

    from postproc import govern
    from postproc.store import Store

    df = govern.rank(Store(store).run("base"), top=40)
    for width in (80, 100, 140):
        console = Console(width=width, record=True, file=open(os.devnull, "w"))
        console.print(report.governing_table(df, width))
        lines = console.export_text().splitlines()
        assert all(len(line) <= width for line in lines)
        body = "\n".join(lines)
        for name in df.governing_case.dropna():
            assert name in body  # each combination name whole on one line
    assert isinstance(df, pd.DataFrame)


def test_members_needing_action_rank_first(run_design, capsys):
    L = 6.0
    members = [beam("OK", L), beam("DEEP", 2.0, h_mm=700.0), beam("NOFORCE", L),
               {**beam("COL", 3.0), "kind": "column", "db_long_mm": 20.0, "n_long": 8},
               beam("HOT", L)]
    forces = (rows_from_function("OK", "U", L, lambda x: 100 - 33 * x, n=5)
              + rows_from_function("DEEP", "U", 2.0, lambda x: 100 - 100 * x, n=5)
              + rows_from_function("HOT", "U", L, lambda x: 380 - 126 * x, n=5)
              + rows_from_function("COL", "U", 3.0, lambda x: 20.0, n=3))
    res = run_design(members, forces)
    capsys.readouterr()
    assert cli.main(["govern", "--store", str(res.store), "--format", "json"]) == 0
    ranked = json.loads(capsys.readouterr().out)
    order = [r["member"] for r in ranked]
    # needing action (deep-beam: clear span <= 4h, 9.9.1.1(a); no-forces) before the designed, by utilization
    # (the column, 20 kN on 300 x 600, last)
    assert order[:2] == ["DEEP", "NOFORCE"] and order[2:4] == ["HOT", "OK"] and order[-1] == "COL"
    assert ranked[2]["utilization"] > ranked[3]["utilization"]


def test_a_run_that_designs_nothing_exits_1_and_says_why(tmp_path, capsys):
    paths = write_inputs(tmp_path / "in", [beam("B-1", 6.0), beam("B-2", 6.0)],
                         rows_from_function("frame_7", "U", 6.0, lambda x: 100 - 30 * x, n=5)
                         + rows_from_function("frame_8", "U", 6.0, lambda x: 100 - 30 * x, n=5))
    code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]),
                     "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out")])
    captured = capsys.readouterr()
    assert code == cli.EXIT_INPUT
    assert "no member was designed" in captured.err
    assert "'B-1'" in captured.err and "'frame_7'" in captured.err  # what the ids of each side look like
    assert (tmp_path / "out" / "report.html").exists()  # the report does not crash on it
    assert "Needs action: 4 members" in (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    # a compact report (fewer detail sections than members) and one member's page read the drawn members'
    # zones alone: the run has none, and its empty zones table must not break the filtered read
    (tmp_path / "compact.toml").write_text("[report]\ndetail_sections = 1\n", encoding="utf-8")
    code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]), "--config",
                     str(tmp_path / "compact.toml"), "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out3")])
    captured = capsys.readouterr()
    assert code == cli.EXIT_INPUT and "no member was designed" in captured.err
    assert "A compact report" in (tmp_path / "out3" / "report.html").read_text(encoding="utf-8")
    code = cli.main(["report", "--store", str(tmp_path / "store"), "--member", "B-1", "--out",
                     str(tmp_path / "B-1.html")])
    assert code == cli.EXIT_OK and "B-1" in (tmp_path / "B-1.html").read_text(encoding="utf-8")
    capsys.readouterr()
    columns_only = write_inputs(tmp_path / "cols", [{**beam("C1", 3.0), "kind": "column"}],
                                rows_from_function("C1", "U", 3.0, lambda x: 10.0, n=3))
    code = cli.main(["run", "--members", str(columns_only["members"]), "--forces", str(columns_only["forces"]),
                     "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out2"), "--no-report", "--json"])
    captured = capsys.readouterr()
    assert code == cli.EXIT_INPUT and "invalid members" in captured.err and "db_long_mm" in captured.err
    assert "no member was designed" in json.loads(captured.out)["nothing_designed"]


def test_manifest_counts_the_force_parts(store):
    from postproc.store import Store

    run = Store(store).run("base")
    assert run.manifest()["counts"]["force_parts"] == len(run.force_parts()) >= 1


def test_outputs_have_the_mode_the_umask_gives(tmp_path):
    """members.csv, zones.csv and report.html are readable by colleagues (0644 under umask 022)."""
    if os.name == "nt":
        pytest.skip("POSIX permission bits")
    old = os.umask(0o022)
    try:
        assert cli.main(["demo", "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out"), "--json"]) == 0
        assert cli.main(["schedule", "--store", str(tmp_path / "store"), "--out", str(tmp_path / "sched")]) == 0
        assert cli.main(["report", "--store", str(tmp_path / "store"), "--out", str(tmp_path / "again.html")]) == 0
    finally:
        os.umask(old)
    files = [tmp_path / "out" / n for n in ("members.csv", "zones.csv", "report.html")]
    files += [tmp_path / "again.html", *sorted((tmp_path / "sched").glob("*.csv"))]
    for path in files:
        assert stat.S_IMODE(path.stat().st_mode) == 0o644, path.name
    assert not list((tmp_path / "out").glob(".*"))  # no temporary file left behind


def test_portable_import_path_without_posix_modules():
    """Every module imports, and `--help` of every command runs, with `resource` and `fcntl`
    missing (as on Windows)."""
    code = """
import sys
sys.modules["resource"] = None
sys.modules["fcntl"] = None
import importlib, pkgutil, io, contextlib
import postproc
names = [m.name for m in pkgutil.walk_packages(postproc.__path__, "postproc.")]
assert len(names) > 20, names
for name in names:
    importlib.import_module(name)
from postproc import cli, report
for command in [None, *cli.COMMANDS]:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        try:
            cli.main([command, "--help"] if command else ["--help"])
        except SystemExit as done:
            assert done.code == 0, (command, done.code)
    assert "exit codes" in out.getvalue(), command
from postproc import engines
assert engines.start_method() in ("forkserver", "spawn")
print("imported", len(names))
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=300,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert out.returncode == 0, out.stderr[-3000:]
    assert re.match(r"imported \d+", out.stdout)


def test_version_and_help_load_no_numpy():
    code = ("import sys, io, contextlib\nfrom postproc import cli\nbuf = io.StringIO()\n"
            "with contextlib.redirect_stdout(buf):\n    try:\n        cli.main(['--version'])\n"
            "    except SystemExit:\n        pass\n"
            "assert 'numpy' not in sys.modules and 'pandas' not in sys.modules, 'heavy imports for --version'\n"
            "print(buf.getvalue().strip())")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert out.returncode == 0, out.stderr
    from postproc import __version__

    assert out.stdout.strip() == f"shearpost {__version__}"


def test_a_steel_only_ifc_model_exits_1_with_the_reason(tmp_path, capsys):
    """A model whose beams are all steel designs nothing: exit 1 naming why, and a report that opens."""
    from tests.test_ifc import Model

    m = Model("IFC4", "m")
    steel = [m.beam("SG1", (0, 0, 3.0), (6, 0, 3.0), m.ishape(0.3, 0.15, 0.01, 0.015)),
             m.beam("SG2", (0, 5, 3.0), (6, 5, 3.0), m.ishape(0.3, 0.15, 0.01, 0.015))]
    m.material("Steel S355", steel)
    model = m.write(tmp_path / "steel.ifc")
    forces = write_inputs(tmp_path / "in", [], rows_from_function("SG1", "U", 6.0, lambda x: 80 - 26 * x, n=5)
                          + rows_from_function("SG2", "U", 6.0, lambda x: 80 - 26 * x, n=5))["forces"]
    code = cli.main(["run", "--members", str(model), "--forces", str(forces), "--store", str(tmp_path / "store"),
                     "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == cli.EXIT_INPUT
    assert "no member was designed (2 invalid)" in err and "steel I-shape profile" in err
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert "Needs action: 2 members" in html and "SG1" in html


def test_the_demo_says_where_its_inputs_are(tmp_path, capsys):
    """A new user starts from the demo's tables: the demo names them, and their folder on a line of
    its own (to copy; never broken, however narrow the terminal)."""
    code = cli.main(["demo", "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out"), "--no-report"])
    lines = capsys.readouterr().out.splitlines()
    at = next(k for k, x in enumerate(lines) if x.startswith("Start your own tables from the demo's"))
    assert code == 0
    folder = Path(lines[at + 1].strip())
    assert lines[at].endswith("members.csv, forces.csv, cases.csv in:")
    assert all((folder / name).is_file() for name in ("members.csv", "forces.csv", "cases.csv"))


def test_runs_keeps_each_value_whole_at_80_columns(tmp_path, capsys, monkeypatch):
    """`runs` in a terminal of 80 columns keeps run ids and times whole (they are copied into
    other commands) and says where the inputs are; from 100 columns it lists them too; a run
    name too long for the table gives one run a line."""
    store = str(tmp_path / "store")
    assert cli.main(["demo", "--store", store, "--out", str(tmp_path / "out"), "--no-report", "--json"]) == 0
    capsys.readouterr()
    name = Store(tmp_path / "store").latest().name
    stamp = re.compile(r"\d{4}-\d\d-\d\d \d\d:\d\d")
    for columns in (80, 120):
        monkeypatch.setenv("COLUMNS", str(columns))
        assert cli.main(["runs", "--store", store]) == 0
        lines = capsys.readouterr().out.splitlines()
        assert max(len(x.rstrip()) for x in lines) <= columns
        row = next(x for x in lines if name in x)
        assert stamp.search(row), row  # the time whole, on the same line
        assert ("members.csv" in row) == (columns >= cli.RUNS_WIDE), row
        assert any("--json" in x for x in lines) == (columns < cli.RUNS_WIDE)
    long_name = "tower-b-level-3-revision-7-final-x"
    assert cli.main(["demo", "--store", store, "--out", str(tmp_path / "out2"), "--no-report", "--json",
                     "--run", long_name]) == 0
    capsys.readouterr()
    monkeypatch.setenv("COLUMNS", "80")
    assert cli.main(["runs", "--store", store]) == 0
    lines = capsys.readouterr().out.splitlines()
    k = lines.index(long_name)  # whole, on a line of its own
    assert stamp.search(lines[k + 1]) and "designed" in lines[k + 1]
    assert lines[lines.index(name) + 1].startswith("  created")
