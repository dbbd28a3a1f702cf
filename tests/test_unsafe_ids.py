"""Member ids and case names are data, never paths, markup or terminal control.

Ids come from analysis exports and may hold anything: path separators, "..", control
characters, commas and quotes, leading "=", "+", "-", "@" (formula-like text for spreadsheet
programs), unicode of every kind, very long names. DESIGN.md: the member column is a "unique
id"; outputs name every member of the input; the store's runs are named from the date and a
counter or by --run. Common practice for such tools: an id is never used to build a file path,
it round-trips through the output CSV exactly, and printing it never changes or breaks the
terminal output.

Each test designs through the CLI, in a working folder nested a few levels deep inside pytest's
tmp folder (so that a path built from "../../x" would land inside the snapshot), and compares a
snapshot of that whole tree before and after.
"""

from __future__ import annotations

import io
import json
import re
import unicodedata
from pathlib import Path

import pandas as pd
import pyarrow.parquet as pq
import pytest

from postproc import cli
from postproc.store import Store
from tests.conftest import beam, rows_from_function, write_inputs

PATHLIKE = ["a/b", "..\\x", "../../etc", "..", ".", "../../../escape", "/abs/shearpost-unsafe-id", "C:\\temp\\x",
            "./hidden", ".tmp-fake", "design", "manifest.json"]
CONTROL = ["tab\there", "bell\x07", "\x1b[31mred\x1b[0m", "back\bspace", "form\x0cfeed", "del\x7f"]
CSV_LIKE = ["B,1", 'B"1', '"quoted"', "'single'", "semi;colon", "B1,", ",B1"]
FORMULA = ["=1+1", "+1", "-1", "@SUM(A1)", "=HYPERLINK(\"http://example.invalid\",\"x\")", "-2+3", "=cmd|' /C x'!A0"]
UNICODE = ["Träger-Ü1", "梁-1", "🏗️B", "Ω-7", "e\u0301", "\u202eB1", "B\u200b1", "B\u00a01", "Ｂ１", "ß", "ﬁ"]
# (spellings of a missing value - NA, null, nan, #N/A - are refused as ids: tests/test_hostile_inputs.py)
LOOKS_LIKE_DATA = ["None", "nil", "TRUE", "007", "1.0", "1e3", "-0"]
MARKUP = ["[/]", "[bold]x", "[link=file:///etc/passwd]x[/link]", "[red]", "\\[x]"]
LONG = ["L" * 300, "M" * 5000]
IDS = PATHLIKE + CONTROL + CSV_LIKE + FORMULA + UNICODE + LOOKS_LIKE_DATA + LONG


def as_read(ids: list[str]) -> list[str]:
    """Ids as the readers compare them: Unicode NFC, zero-width characters removed (issue 9;
    the run's notices list each id changed). 'e' + combining acute becomes 'é', 'B\u200b1' 'B1'."""
    return [unicodedata.normalize("NFC", re.sub("[\u200b\u200c\u200d\u2060\ufeff]", "", i)) for i in ids]
CASES = ["U/1", "..", "../../c", "=1+2", "+W", "-E", "@D", "tab\tcase", "\x1b[1mC", "C,1", 'C"1', "Ü-case",
         "None", "C" * 300]
SAFE_NAME = re.compile(r"^[A-Za-z0-9._-]+$")


def tree(root: Path) -> dict[str, int | None]:
    """Every file (size) and folder (None) under root."""
    return {str(p.relative_to(root)): (p.stat().st_size if p.is_file() else None) for p in root.rglob("*")}


def read_csv(path: Path) -> pd.DataFrame:
    """Read an output table back as text, exactly (no NA guessing, no number parsing)."""
    return pd.read_csv(path, dtype=str, keep_default_na=False, na_filter=False, encoding="utf-8")


def model(ids: list[str], cases: list[str], stations: int = 5):
    members = [beam(m, 5.0) for m in ids]
    forces = []
    for k, m in enumerate(ids):
        for j, c in enumerate(cases):
            a = 40.0 + 3.0 * k + j  # shear of a uniform load; every member and case distinct
            forces += rows_from_function(m, c, 5.0, lambda x, a=a: a - 2 * a / 5.0 * x, n=stations)
    return members, forces


@pytest.fixture
def workdir(tmp_path, monkeypatch):
    root = tmp_path / "a" / "b" / "c" / "root"
    root.mkdir(parents=True)
    monkeypatch.chdir(root)  # relative paths built from ids would also land in the snapshot
    return tmp_path, root


def design_through_cli(root: Path, ids, cases, extra=(), json_out=True):
    members, forces = model(ids, cases)
    paths = write_inputs(root / "in", members, forces)
    argv = ["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]),
            "--store", str(root / "store"), "--out", str(root / "out"), *extra]
    return cli.main(argv + (["--json"] if json_out else [])), paths


def assert_nothing_outside(tmp: Path, root: Path, before: dict) -> None:
    after = tree(tmp)
    new = sorted(set(after) - set(before))
    prefix = str(root.relative_to(tmp))
    ours = ("in", "store", "out", "sched")  # the test's inputs, and the folders the CLI was given
    outside = [p for p in new if not any(p == f"{prefix}/{o}" or p.startswith(f"{prefix}/{o}/") for o in ours)]
    assert not outside, f"files made outside the store and out folders: {outside[:10]}"
    assert {k: v for k, v in after.items() if k in before} == before, "an existing file changed"
    assert not Path("/abs/shearpost-unsafe-id").exists()  # the absolute id, had it been used as a path
    for folder in (root / "store", root / "out"):
        for p in folder.rglob("*"):
            for part in p.relative_to(folder).parts:
                assert SAFE_NAME.match(part), f"a path in {folder.name} holds a name the tool did not make: {part!r}"


def test_nasty_ids_and_cases_round_trip_and_write_nothing_outside(workdir):
    tmp, root = workdir
    before = tree(tmp)
    code, paths = design_through_cli(root, IDS, CASES)
    assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
    assert_nothing_outside(tmp, root, before)

    # the run is named from the date and a counter, not from any id
    runs = Store(root / "store").runs()
    assert [r.name for r in runs] and all(re.fullmatch(r"\d{8}-\d{3}", r.name) for r in runs)

    # members.csv: one row per input member, the ids exactly as given (after normalisation)
    m = read_csv(root / "out" / "members.csv")
    assert sorted(m["member"]) == sorted(as_read(IDS))
    assert set(m["status"]) == {"designed"}
    assert set(m["governing_case"]) <= set(CASES)
    # zones.csv: the same ids, every designed member with its zones
    z = read_csv(root / "out" / "zones.csv")
    assert set(z["member"]) == set(as_read(IDS))
    # and inside the store: the design tables and the station trace carry the same ids
    run = runs[-1]
    assert sorted(pq.read_table(run.design_path / "members.parquet").column("member").to_pylist()) == sorted(as_read(IDS))
    stations = run.design_path / ("stations.parquet" if (run.design_path / "stations.parquet").exists() else "stations")
    assert set(pq.read_table(stations, columns=["member"]).column("member").to_pylist()) == set(as_read(IDS))
    assert set(run.forces(["case"]).column("case").to_pylist()) == set(CASES)


def test_a_named_run_takes_the_given_name_only(workdir):
    tmp, root = workdir
    before = tree(tmp)
    code, _ = design_through_cli(root, PATHLIKE + CONTROL, ["../../c", "U/1"], extra=["--run", "ids-run"])
    assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
    assert_nothing_outside(tmp, root, before)
    assert [p.name for p in (root / "store").iterdir()] == ["ids-run"]


def test_review_outputs_keep_the_ids(workdir, capsys):
    """govern --format csv and the bar schedule name the same members, written where asked."""
    tmp, root = workdir
    ids = PATHLIKE + CSV_LIKE + FORMULA + UNICODE[:4] + LOOKS_LIKE_DATA
    code, _ = design_through_cli(root, ids, CASES[:6])
    assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
    before = tree(tmp)
    capsys.readouterr()
    assert cli.main(["govern", "--store", str(root / "store"), "--format", "csv"]) == cli.EXIT_OK
    g = pd.read_csv(io.StringIO(capsys.readouterr().out), dtype=str, keep_default_na=False, na_filter=False)
    assert sorted(g["member"]) == sorted(ids)
    assert cli.main(["schedule", "--store", str(root / "store"), "--out", str(root / "sched")]) == cli.EXIT_OK
    s = read_csv(root / "sched" / "schedule_members.csv")
    assert sorted(s["member"]) == sorted(ids)
    assert_nothing_outside(tmp, root, before)


def test_formula_like_ids_are_kept_as_text(workdir, record_property):
    """DESIGN.md does not say whether formula-like text is neutralised in the CSV outputs; what
    matters here is that the id comes back exactly. The raw cells are recorded for the report."""
    tmp, root = workdir
    code, _ = design_through_cli(root, FORMULA, ["=1+2", "@D"])
    assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
    raw = (root / "out" / "members.csv").read_text(encoding="utf-8").splitlines()[1:]
    record_property("raw_formula_cells", json.dumps([line.split(",")[0] for line in raw]))
    assert sorted(read_csv(root / "out" / "members.csv")["member"]) == sorted(FORMULA)


@pytest.mark.parametrize("nasty", ["line\nbreak", "carriage\rreturn", "crlf\r\nid"], ids=["LF", "CR", "CRLF"])
def test_ids_with_line_breaks_are_designed_or_refused_cleanly(workdir, capsys, nasty):
    """A line break inside a quoted id is valid CSV; the readers may refuse it (it also looks like
    an unbalanced quote). Either way: exact round trip, or exit 1 naming the line, nothing written."""
    tmp, root = workdir
    before = tree(tmp)
    capsys.readouterr()
    code, paths = design_through_cli(root, ["B1", nasty], ["U"])
    err = capsys.readouterr().err
    if code == cli.EXIT_INPUT:
        assert err.startswith(f"error: {paths['members']}, line ") or err.startswith(f"error: {paths['forces']}, line ")
        assert tree(tmp).keys() - before.keys() <= {str((root / "in").relative_to(tmp))} | {
            str(p.relative_to(tmp)) for p in (root / "in").rglob("*")}
        assert not (root / "store").exists() and not (root / "out").exists()
    else:
        assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
        assert sorted(read_csv(root / "out" / "members.csv")["member"]) == sorted(["B1", nasty])


# ---------------------------------------------------------------- printing ids to the terminal


def test_terminal_summary_prints_markup_like_ids_literally(workdir, capsys):
    # Found at commit 83bd8a9 (fixed in 56cda6e): the run summary put ids and case names into
    # rich tables as markup; an id "[/]" raised rich.errors.MarkupError out of cli.main after the
    # run, its design and the tables had been written, and "[bold]x" was shown as a bold "x".
    tmp, root = workdir
    capsys.readouterr()
    code, _ = design_through_cli(root, ["[/]", "[bold]x", "B1"], ["[/]", "U"], json_out=False)
    out = capsys.readouterr().out
    assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
    assert "[bold]x" in out and "[/]" in out


@pytest.fixture
def designed_markup_ids(workdir):
    tmp, root = workdir
    code, _ = design_through_cli(root, ["[/]", "[bold]x", "\x1b[31mred\x1b[0m", "B1"], ["U", "\x1b]0;title\x07"])
    assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
    return str(root / "store")


def test_govern_table_prints_markup_like_ids_literally(designed_markup_ids, capsys):
    # Found at commit 83bd8a9 (fixed in 56cda6e): `govern` (table format) raised
    # rich.errors.MarkupError ("closing tag '[/]' at position 0 has nothing to close").
    capsys.readouterr()
    assert cli.main(["govern", "--store", designed_markup_ids]) == cli.EXIT_OK
    out = capsys.readouterr().out
    assert "[bold]x" in out and "[/]" in out


@pytest.mark.parametrize("member", ["[/]", "[bold]x"])
def test_explain_prints_markup_like_ids_literally(designed_markup_ids, capsys, member):
    # Found at commit 83bd8a9 (fixed in 56cda6e): `explain` titled its page "[bold]{member}[/bold]"
    # with markup on: "[/]" raised MarkupError, and "[bold]x" was titled "x in run ...".
    capsys.readouterr()
    assert cli.main(["explain", member, "--store", designed_markup_ids]) == cli.EXIT_OK
    assert capsys.readouterr().out.splitlines()[0].startswith(f"{member} in run")


def test_control_characters_in_ids_do_not_reach_the_terminal_raw(workdir, capsys):
    # Terminal injection (common practice for command-line tools: show control characters
    # escaped). Found at commit 83bd8a9 (fixed in 56cda6e): ids and case names holding ESC
    # sequences or BEL were printed to the terminal unchanged. The JSON and CSV outputs keep
    # them exactly, as they should.
    tmp, root = workdir
    capsys.readouterr()
    code, _ = design_through_cli(root, ["\x1b[31mred\x1b[0m", "bell\x07", "B1"], ["\x1b]0;title\x07", "U"],
                                 json_out=False)
    out = capsys.readouterr().out
    assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
    assert "\x1b" not in out and "\x07" not in out, "raw control characters printed by the run summary"


@pytest.mark.parametrize("member", ["\x1b[31mred\x1b[0m", "B1"], ids=["ESC-id", "plain-id-ESC-case"])
def test_explain_does_not_print_control_characters_raw(designed_markup_ids, capsys, member):
    # As above, for `explain`: the id and the governing case name (here a window-title escape
    # "\x1b]0;title\x07") were printed unchanged at commit 83bd8a9.
    capsys.readouterr()
    assert cli.main(["explain", member, "--store", designed_markup_ids]) == cli.EXIT_OK
    out = capsys.readouterr().out
    assert "\x1b" not in out and "\x07" not in out
