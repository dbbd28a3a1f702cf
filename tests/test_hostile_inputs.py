"""The hostile-input corpus of issue 9: over two thousand inputs of the kinds a real office
produces, each run through the command line in-process (`cli.main([...])`).

Every case asserts the exit code; where it is an error, that the first line of stderr
names the file, the line and the column; and that nothing was written (no store folder,
no out folder, every input byte-identical). Where the input is valid, the results must be
those of the plain files (members.csv byte-identical to a reference run), and every guess
the readers made must be said among the run's warnings.

Groups, one or more per item of the issue:

  missing   every spelling of a missing or not-a-number value (blank, NaN, #N/A, NA, null,
            1.#QNAN, -1.#IND, spreadsheet errors, ...) in every column, required and optional,
            of members.csv, forces.csv and cases.csv (item 1)
  fill      the same in optional columns with `[input] fill` set: valid, the cells counted, the
            design that of the value written out; fill of a required column refused (item 1)
  out       --out on an input (same file by any path, link or hard link), a file, inside the
            store; `export` likewise (item 2)
  ifc       a line cut, lost, joined to the next or given twice anywhere in a small IFC model;
            its BOM and CRLF forms (item 3)
  store     see test_damaged_store_is_named_and_other_runs_work: a bit flipped in each file of a
            stored run, a file deleted, a stray file added, the manifest edited (item 4)
  dialect   ; and tab delimiters, decimal commas, UTF-8 with BOM, UTF-16 LE/BE with and without
            BOM, Windows-1252, trailing empty columns, each plain and with an error (item 7)
  ids       NFC/NFD, zero-width characters, ids that match only ignoring case (item 7)
  nul       NUL-filled tails and NUL bytes, in every file (item 8)
  settings  nan and inf in the settings, bad dialect values in the map (items 1, 7)

The expected outcomes follow the README as issue 9 sets it (Input tables, Missing values,
Exit codes, the store); CSV conventions are RFC 4180, the encodings' byte-order marks
Unicode's. The outcome distribution is written to the terminal at the end of the module.
"""

from __future__ import annotations

import collections
import contextlib
import hashlib
import io
import json
import os
import random
import re
import shutil
import tempfile
import unicodedata
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd
import pytest

from postproc import cli
from postproc.store import Run, Store
from tests.conftest import print_tally

EXIT_DAMAGED = getattr(cli, "EXIT_DAMAGED", 4)

# ---------------------------------------------------------------- the plain model (3 files)

MEMBER_HEADER = ["member", "kind", "length_m", "b_mm", "h_mm", "d_mm", "cover_mm", "fc_mpa", "fyt_mpa", "fy_mpa",
                 "lambda", "support_i", "support_j", "face_i_mm", "face_j_mm", "load_face", "bf_mm", "hf_mm",
                 "as_tension_mm2", "level", "group"]
MEMBER_ROWS = [  # B1 rectangular with cover; B2 a T beam with d, flange and tension steel (invented demo values)
    ["B1", "beam", "6.0", "300", "600", "", "60", "30", "420", "420", "1.0", "column", "column", "200.0", "200.0",
     "top", "", "", "", "L1 Süd–Ost", "G1"],
    ["B2", "beam", "5.0", "350", "650", "590.5", "", "35", "420", "420", "0.85", "column", "girder", "200.0", "150.0",
     "top", "900.0", "120.5", "1500.0", "L2", "G1"],
]
FORCE_HEADER = ["member", "case", "x_m", "V_kN", "N_kN", "T_kNm", "M_kNm"]
CASE_HEADER = ["case", "type"]
CASE_ROWS = [["D", "D"], ["L·1", "L"]]
NUMERIC = {"members": {"length_m", "b_mm", "h_mm", "d_mm", "cover_mm", "fc_mpa", "fyt_mpa", "fy_mpa", "lambda",
                       "face_i_mm", "face_j_mm", "bf_mm", "hf_mm", "as_tension_mm2"},
           "forces": {"x_m", "V_kN", "N_kN", "T_kNm", "M_kNm"}, "cases": set()}
REQUIRED = {"members": {"member", "length_m", "b_mm", "h_mm", "fc_mpa", "fyt_mpa", "support_i", "support_j"},
            "forces": {"member", "case", "x_m", "V_kN"}, "cases": {"case", "type"}}


def force_rows() -> list[list[str]]:
    """Uniform-load shear (V = w (L/2 - x)), a constant tension on B1 and a small torque on B2."""
    rows = []
    for member, L, n_kN, t_kNm in (("B1", 6.0, 150.0, 0.0), ("B2", 5.0, -40.0, 2.5)):
        for case, w in (("D", 24.0), ("L·1", 11.5)):
            for k in range(5):
                x = L * k / 4
                rows.append([member, case, f"{x:.3f}", f"{w * (L / 2 - x):.3f}", f"{n_kN:.1f}",
                             f"{t_kNm * (1 if case == 'D' else 0.5):.2f}", f"{w * x * (L - x) / 2:.3f}"])
    return rows


BASE = {"members": (MEMBER_HEADER, MEMBER_ROWS), "forces": (FORCE_HEADER, force_rows()),
        "cases": (CASE_HEADER, CASE_ROWS)}
FILES = {"members": "members.csv", "forces": "forces.csv", "cases": "cases.csv"}


@dataclass
class Doc:
    """One CSV file to render, with the line of every record kept."""

    which: str
    header: list[str]
    rows: list[list[str]]
    delimiter: str = ","
    decimal: str = "."
    encoding: str = "utf-8"
    bom: bool = False
    newline: str = "\n"
    blank_after: dict = field(default_factory=dict)  # record index (0 = header) -> blank lines after it
    trailing: int = 0  # empty columns at the end of every line (a spreadsheet's)
    tail: bytes = b""  # raw bytes appended after the text

    def cell(self, column: str, value: str) -> str:
        if self.decimal == "," and column in NUMERIC[self.which] and re.fullmatch(r"[+-]?\d+\.\d+", value):
            value = value.replace(".", ",")
        if any(ch in value for ch in (self.delimiter, '"', "\n")):
            value = '"' + value.replace('"', '""') + '"'
        return value

    def render(self) -> tuple[bytes, list[int]]:
        lines, parts, line = [], [], 1
        for k, rec in enumerate([self.header, *self.rows]):
            fields = list(rec) if k == 0 else [self.cell(c, v) for c, v in zip(self.header, rec)] + rec[len(self.header):]
            parts.append(self.delimiter.join(fields + [""] * self.trailing))
            lines.append(line)
            for _ in range(self.blank_after.get(k, 0)):
                parts.append("")
            line += 1 + self.blank_after.get(k, 0)
        text = ("\ufeff" if self.bom else "") + self.newline.join(parts) + self.newline
        return text.encode(self.encoding) + self.tail, lines


def doc(which: str) -> Doc:
    header, rows = BASE[which]
    return Doc(which, list(header), [list(r) for r in rows])


def layout(rng: random.Random, d: Doc) -> None:
    """Changes that keep a file valid, so that the errors meet them: BOM, CRLF, blank lines."""
    d.bom = rng.random() < 0.25
    d.newline = "\r\n" if rng.random() < 0.25 else "\n"
    if rng.random() < 0.35:
        k = rng.randrange(0, len(d.rows) + 1)
        d.blank_after[k] = rng.randint(1, 2)


# ---------------------------------------------------------------- cases


@dataclass
class Case:
    group: str
    note: str
    files: dict[str, bytes]  # name in the input folder -> content (the plain files are added for the others)
    args: list[str]  # extra arguments of `run`, or a whole other command line (first word not starting '-')
    code: int | tuple
    file: str | None = None  # the file the first error line names (a name in the input folder)
    line: int | None = None
    lines: tuple = ()  # any of these lines (where the exact one is open)
    columns: tuple = ()
    words: tuple = ()  # fragments stderr (errors) or the run's warnings (valid runs) must hold
    same_design: bool = False  # a valid run's members.csv must equal the plain run's
    check: object = None  # extra check on a valid run: check(folder, summary)
    prepare: object = None  # prepare(folder) before the run (links, folders)


def valid(group, note, files, args=(), words=(), same=True, check=None,
          codes=(cli.EXIT_OK, cli.EXIT_RESIZE)) -> Case:
    return Case(group, note, files, list(args), codes, words=tuple(words), same_design=same, check=check)


def invalid(group, note, d: Doc, row: int | None, columns=(), words=(), args=()) -> Case:
    data, lines = d.render()
    return Case(group, note, {FILES[d.which]: data}, list(args), cli.EXIT_INPUT, FILES[d.which],
                None if row is None else lines[row + 1], columns=tuple(columns), words=tuple(words))


DEFAULTED = {"fy_mpa", "lambda", "face_i_mm", "face_j_mm"}  # members.csv: a blank cell is the README's default
SPELLINGS = ["", " ", "NAN", "nan", "NaN", "-nan", "#N/A", "NA", "N/A", "n/a", "null", "NULL", "1.#QNAN", "-1.#IND",
             "#NA", "#VALUE!", "#DIV/0!"]


def missing_cases() -> list[Case]:
    out = []
    for which, (header, rows) in BASE.items():
        for column in header:
            for s_k, spelling in enumerate(SPELLINGS):
                for variant in range(2 if which != "cases" else 1):
                    rng = random.Random(f"missing-{which}-{column}-{s_k}-{variant}")
                    d = doc(which)
                    layout(rng, d)
                    r = variant if which != "forces" else rng.randrange(len(d.rows))
                    if column == "d_mm":
                        r = 1  # B2 gives d (B1 its cover)
                    if column in ("cover_mm", "bf_mm", "hf_mm", "as_tension_mm2"):
                        r = 0 if column == "cover_mm" else 1
                    d.rows[r][header.index(column)] = spelling
                    note = f"{which}.{column}[{r}]={spelling!r}"
                    blank = spelling.strip() == ""
                    numeric = column in NUMERIC[which]
                    if numeric and column in ("bf_mm", "as_tension_mm2") and spelling == "":
                        out.append(valid("missing", note, {FILES[which]: d.render()[0]}, same=False))
                    elif numeric and column in DEFAULTED and spelling == "":  # an empty cell takes the default
                        out.append(valid("missing", note, {FILES[which]: d.render()[0]}, same=False))
                    elif numeric and column in ("d_mm", "cover_mm") and spelling == "":
                        out.append(invalid("missing", note, d, r, ["d_mm"], ["give d_mm or cover_mm"]))
                    elif numeric and column == "hf_mm" and spelling == "":
                        out.append(invalid("missing", note, d, r, ["hf_mm"], ["flange thickness"]))
                    elif numeric:
                        out.append(invalid("missing", note, d, r, [column]))
                    elif column in ("level", "group") and blank:
                        out.append(valid("missing", note, {FILES[which]: d.render()[0]}, same=False))
                    elif column in ("kind", "load_face") and blank:
                        out.append(valid("missing", note, {FILES[which]: d.render()[0]}))  # the defaults beam, top
                    else:  # required text, or a marker in any text column
                        out.append(invalid("missing", note, d, r, [column]))
    return out


# (bf_mm, hf_mm and as_tension_mm2 are left out: a fill there fills B1's blank "not given" cells as well)
FILLABLE = {"members": ["fy_mpa", "lambda", "face_i_mm", "face_j_mm"],
            "forces": ["N_kN", "T_kNm", "M_kNm"]}


def settings(text: str) -> bytes:
    return text.encode()


def fill_cases() -> list[Case]:
    out = []
    for which, columns in FILLABLE.items():
        header, rows = BASE[which]
        for column in columns:
            for spelling in ["", "NAN", "#N/A", "null", "-1.#IND"]:
                d = doc(which)
                r = 1 if column in ("bf_mm", "hf_mm", "as_tension_mm2") else 0
                value = float(d.rows[r][header.index(column)])
                if which == "forces":  # every row of one member and case shares the value: fill the one cell
                    r = 2
                    value = float(d.rows[r][header.index(column)])
                d.rows[r][header.index(column)] = spelling
                cfg = settings(f"[input]\nfill = {{ {column} = {value!r} }}\n")
                out.append(valid("fill", f"{which}.{column}={spelling!r} filled with {value}",
                                 {FILES[which]: d.render()[0], "settings.toml": cfg}, ["--config", "{in}/settings.toml"],
                                 words=[f"1 missing cell(s) of column '{column}' filled with {value:g}"]))
    for column in ["length_m", "b_mm", "h_mm", "fc_mpa", "fyt_mpa", "x_m", "V_kN", "member", "level"]:
        out.append(Case("fill", f"fill of {column}", {"settings.toml": settings(f"[input]\nfill = {{ {column} = 1.0 }}\n")},
                        ["--config", "{in}/settings.toml"], cli.EXIT_INPUT, "settings.toml",
                        words=(f"[input].fill names '{column}'",)))
    for bad in ["nan", "inf", "-inf", '"0"', "true", "[1.0]"]:
        out.append(Case("fill", f"fill value {bad}", {"settings.toml": settings(f"[input]\nfill = {{ N_kN = {bad} }}\n")},
                        ["--config", "{in}/settings.toml"], cli.EXIT_INPUT, "settings.toml", words=("[input].fill",)))
    return out


def settings_cases() -> list[Case]:
    out = []
    for section, key in [("stations", "max_step_mm"), ("stations", "steps_per_d"), ("stations", "point_load_kN"),
                         ("detailing", "spacing_module_mm"), ("detailing", "min_spacing_mm"),
                         ("detailing", "first_stirrup_mm"), ("detailing", "clear_cover_mm"), ("ifc", "fc_mpa"),
                         ("ifc", "tolerance_mm")]:
        for bad in ["nan", "inf"]:
            out.append(Case("settings", f"[{section}].{key} = {bad}",
                            {"settings.toml": settings(f"[{section}]\n{key} = {bad}\n")},
                            ["--config", "{in}/settings.toml"], cli.EXIT_INPUT, "settings.toml",
                            words=(f"[{section}].{key}",)))
    for table, key, value in [("forces", "encoding", '"ebcdic"'), ("forces", "delimiter", '"|"'),
                              ("members", "decimal", '";"'), ("members", "delimiter", "5"),
                              ("cases", "encoding", '"utf-32"')]:
        out.append(Case("settings", f"map [{table}].{key} = {value}",
                        {"map.toml": settings(f"[{table}]\n{key} = {value}\n")}, ["--map", "{in}/map.toml"],
                        cli.EXIT_INPUT, "map.toml", words=(f"[{table}].{key}",)))
    out.append(Case("settings", "map decimal comma with comma delimiter",
                    {"map.toml": settings('[forces]\ndelimiter = ","\ndecimal = ","\n')}, ["--map", "{in}/map.toml"],
                    cli.EXIT_INPUT, "forces.csv", words=("decimal separator and the delimiter",)))
    return out


ENCODINGS = {  # name -> (codec, byte-order mark written, the notice expected)
    "utf-8": ("utf-8", False, None),
    "utf-8-bom": ("utf-8", True, None),
    "utf-16-le-bom": ("utf-16-le", True, "UTF-16 LE (byte-order mark)"),
    "utf-16-be-bom": ("utf-16-be", True, "UTF-16 BE (byte-order mark)"),
    "utf-16-le": ("utf-16-le", False, "UTF-16 LE: guessed"),
    "utf-16-be": ("utf-16-be", False, "UTF-16 BE: guessed"),
    "cp1252": ("cp1252", False, "Windows-1252 (guessed"),
}
DIALECTS = [(",", "."), (";", "."), (";", ","), ("\t", "."), ("\t", ",")]
ERRORS = ["none", "number", "missing", "fields", "nul"]


def dialect_cases() -> list[Case]:
    out = []
    for which in BASE:
        for enc_name, (codec, bom, notice) in ENCODINGS.items():
            for delimiter, decimal in DIALECTS:
                for error in ERRORS:
                    rng = random.Random(f"dialect-{which}-{enc_name}-{delimiter}-{decimal}-{error}")
                    d = doc(which)
                    d.delimiter, d.decimal, d.encoding, d.bom = delimiter, decimal, codec, bom
                    d.newline = rng.choice(["\n", "\r\n"])
                    d.trailing = rng.choice([0, 0, 2])
                    header = d.header
                    note = f"{which} {enc_name} {delimiter!r} {decimal!r} +{d.trailing} {error}"
                    if error == "none":
                        words = [w for w in (notice, {";": "semicolons", "\t": "tabs"}.get(delimiter),
                                             "decimal commas" if decimal == "," and which != "cases" else None) if w]
                        out.append(valid("dialect", note, {FILES[which]: d.render()[0]}, words=words,
                                         check=_check_level if which == "members" else None))
                        continue
                    r = rng.randrange(len(d.rows))
                    numeric = [c for c in header if c in NUMERIC[which]]
                    if error == "number":
                        column = rng.choice(numeric) if numeric else "type"
                        d.rows[r][header.index(column)] = "1.2.3" if numeric else "X"
                        out.append(invalid("dialect", note, d, r, [column]))
                    elif error == "missing":
                        column = rng.choice(numeric or ["case"])
                        d.rows[r][header.index(column)] = "#N/A"
                        out.append(invalid("dialect", note, d, r, [column]))
                    elif error == "fields":
                        d.rows[r] = d.rows[r] + ["7"]
                        out.append(invalid("dialect", note, d, r))
                    else:
                        column = rng.choice(numeric or ["case"])
                        d.rows[r][header.index(column)] = "1\x002" if numeric else "D\x00"
                        out.append(invalid("dialect", note, d, r, [column]))
    # the same dialects named in the map: nothing is guessed
    for delimiter, decimal in DIALECTS[1:]:
        for enc_name in ("utf-16-le", "cp1252"):
            codec = ENCODINGS[enc_name][0]
            d = doc("forces")
            d.delimiter, d.decimal, d.encoding = delimiter, decimal, codec
            mapping = (f'[forces]\nencoding = "{codec}"\ndelimiter = "{delimiter.replace(chr(9), chr(92) + "t")}"\n'
                       f'decimal = "{decimal}"\n')
            out.append(valid("dialect", f"map: forces {enc_name} {delimiter!r} {decimal!r}",
                             {"forces.csv": d.render()[0], "map.toml": mapping.encode()}, ["--map", "{in}/map.toml"],
                             check=_no_guess))
    return out


def _check_level(folder: Path, summary: dict) -> None:
    """The members table as stored: B1's level label decoded as written (not mojibake)."""
    run = Store(folder / "store").latest()
    levels = run.members().to_pandas().set_index("member")["level"]
    assert levels["B1"] == "L1 Süd–Ost", levels["B1"]


def _no_guess(folder: Path, summary: dict) -> None:
    assert not [w for w in summary["warnings"] if "guessed" in w or "detected" in w], summary["warnings"]


def nul_cases() -> list[Case]:
    out = []
    for which in BASE:
        for n in (1, 7, 1000, 100_000, 3_000_000):
            for final_newline in (True, False):
                d = doc(which)
                data, lines = d.render()
                if not final_newline:
                    data = data.rstrip(b"\n")
                d_tail = data + b"\x00" * n
                line = data.count(b"\n") + 1
                out.append(Case("nul", f"{which} + {n} NUL bytes{'' if final_newline else ' (no final newline)'}",
                                {FILES[which]: d_tail}, [], cli.EXIT_INPUT, FILES[which], line, words=("NUL",)))
        for r in range(len(BASE[which][1])):
            d = doc(which)
            column = d.header[r % len(d.header)]
            d.rows[r][d.header.index(column)] += "\x00"
            out.append(invalid("nul", f"{which} NUL in {column}[{r}]", d, r, [column], ["NUL"]))
    return out


def id_cases() -> list[Case]:
    """Ids as exports write them: NFD accents, zero-width characters, upper/lower case."""
    out = []
    nfc, nfd = "Bé3", unicodedata.normalize("NFD", "Bé3")
    for zw in ("\u200b", "\u200c", "\u200d", "\u2060", "\ufeff"):
        for where in ("members", "forces"):
            for pos in (0, 1, 2):
                ids = {"members": "B1", "forces": "B1"}
                ids[where] = "B1"[:pos] + zw + "B1"[pos:]
                m, f = doc("members"), doc("forces")
                m.rows[0][0] = ids["members"]
                for row in f.rows:
                    if row[0] == "B1":
                        row[0] = ids["forces"]
                out.append(valid("ids", f"zero-width U+{ord(zw):04X} in the {where} id at {pos}",
                                 {"members.csv": m.render()[0], "forces.csv": f.render()[0]},
                                 words=["id(s) normalised"]))
    for members_id, forces_id in ((nfc, nfd), (nfd, nfc), (nfd, nfd)):
        m, f = doc("members"), doc("forces")
        m.rows[0][0] = members_id
        for row in f.rows:
            if row[0] == "B1":
                row[0] = forces_id
        out.append(valid("ids", f"ids {ascii(members_id)} / {ascii(forces_id)}",
                         {"members.csv": m.render()[0], "forces.csv": f.render()[0]},
                         words=["id(s) normalised"], same=False, check=_designed_both))
    for forces_id in ("b1", " b1"):
        m, f = doc("members"), doc("forces")
        for row in f.rows:
            if row[0] == "B1":
                row[0] = forces_id
        out.append(valid("ids", f"forces id {forces_id!r} for member B1", {"forces.csv": f.render()[0]},
                         words=["match a member only when upper and lower case are not told apart", "'b1' ~ 'B1'"],
                         same=False, check=_case_mismatch, codes=(cli.EXIT_UNDESIGNED,)))  # B1 no-forces, b1 no-geometry
    return out


def _designed_both(folder: Path, summary: dict) -> None:
    m = pd.read_csv(folder / "out" / "members.csv")
    assert set(m["status"]) <= {"designed", "resize"}, m[["member", "status"]]


def _case_mismatch(folder: Path, summary: dict) -> None:
    m = pd.read_csv(folder / "out" / "members.csv", keep_default_na=False).set_index("member")
    assert m.loc["B1", "status"] == "no-forces" and m.loc["b1", "status"] == "no-geometry"


def out_cases() -> list[Case]:
    """--out where writing would overwrite an input, by every path that reaches it."""
    out = []
    roles = {"members": "--members", "forces": "--forces", "cases": "--cases", "map": "--map", "settings": "--config"}
    contents = {"members": None, "forces": None, "cases": None, "map": b"[forces]\n", "settings": b"[stations]\n"}
    for role, flag in roles.items():
        for name in ("members.csv", "zones.csv", "report.html"):
            for spelling in ("{in}", "{in}/", "{in}/../in", "{link}", "{hard}"):
                def prepare(folder, role=role, name=name, spelling=spelling, flag=flag):
                    try:
                        if spelling == "{link}":
                            (folder / "link").symlink_to(folder / "in", target_is_directory=True)
                        if spelling == "{hard}":
                            (folder / "elsewhere").mkdir()
                            os.link(folder / "in" / name, folder / "elsewhere" / name)
                    except OSError as exc:  # (Windows without the privilege to make links)
                        pytest.skip(f"cannot make the link here: {exc}")

                files = {name: contents[role] if contents[role] is not None else _plain(role)}
                out_dir = {"{link}": "{folder}/link", "{hard}": "{folder}/elsewhere"}.get(spelling, spelling)
                args = [flag, "{in}/" + name, "--out", out_dir]
                out.append(Case("out", f"{role} as {name}, --out {spelling}", files, args, cli.EXIT_USAGE,
                                words=("would overwrite",), prepare=prepare))
    for which in ("file", "store", "store/run"):
        def prepare(folder, which=which):
            (folder / "afile").write_text("not a folder")
        target = {"file": "{folder}/afile", "store": "{store}", "store/run": "{store}/x"}[which]
        words = {"file": "is an existing file", "store": "inside the store", "store/run": "inside the store"}[which]
        out.append(Case("out", f"--out {which}", {}, ["--out", target], cli.EXIT_USAGE, words=(words,),
                        prepare=prepare))
    return out


def _plain(which: str) -> bytes:
    return doc(which).render()[0]


def all_cases() -> list[Case]:
    """Every case once (two generators may make the same input)."""
    seen, out = set(), []
    for c in [*missing_cases(), *fill_cases(), *settings_cases(), *dialect_cases(), *nul_cases(), *id_cases(),
              *out_cases(), *ifc_cases()]:
        key = (c.group, tuple(sorted(c.files.items())), tuple(c.args), c.note if c.prepare else "")
        if key not in seen:
            seen.add(key)
            out.append(c)
    return out


# ---------------------------------------------------------------- IFC


IFC_FORCES_MEMBERS = {"G1": 8.0, "G2": 8.0, "B1": 6.0, "B2": 6.0, "S1": 6.0, "K1": 2.0, "E1": 5.0}


def ifc_model() -> bytes:
    from tests.test_ifc import frame  # (a small frame: 4 columns, 7 beams, a wall)

    import tempfile
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "frame.ifc"
        frame("IFC4", "m").write(path)
        return path.read_bytes()


def ifc_forces() -> bytes:
    rows = ["member,case,x_m,V_kN"]
    for member, L in IFC_FORCES_MEMBERS.items():
        for k in range(5):
            x = L * k / 4
            cantilever = member == "K1"
            rows.append(f"{member},D,{x:.3f},{(20 * (L - x)) if cantilever else 20 * (L / 2 - x):.3f}")
    return ("\n".join(rows) + "\n").encode()


IFC = ifc_model()
IFC_ARGS = ["--members", "{in}/frame.ifc", "--cases", None]  # (no cases.csv: the IFC case is factored)


def ifc_cases() -> list[Case]:
    out = []
    lines = IFC.split(b"\n")
    data_start = lines.index(b"DATA;")
    data_end = lines.index(b"ENDSEC;", data_start)
    ids = {k: m.group(1) for k in range(data_start + 1, data_end) if (m := re.match(rb"#(\d+)=", lines[k]))}
    forces = ifc_forces()

    def case(note, body: list[bytes], expect_lines, words=("could not be read as IFC",)):
        return Case("ifc", note, {"frame.ifc": b"\n".join(body), "forces.csv": forces}, ["--members", "{in}/frame.ifc"],
                    cli.EXIT_INPUT, "frame.ifc", lines=tuple(expect_lines), words=tuple(words))

    for k in range(data_start + 1, data_end):  # a line cut short (the rest of it lost)
        rng = random.Random(f"ifc-cut-{k}")
        at = rng.randint(1, len(lines[k]) - 1)
        out.append(case(f"line {k + 1} cut at {at}", lines[:k] + [lines[k][:at]] + lines[k + 1:], (k + 1, k + 2)))
    for k in range(data_start + 1, data_end):  # a line lost: a line that refers to it is named
        ref = re.compile(rb"#" + ids[k] + rb"\b")
        users = [j + 1 - (j > k) for j in range(data_start + 1, data_end) if j != k and ref.search(
            lines[j].split(b"=", 1)[1])]
        if users and k % 2 == 0:
            out.append(case(f"line {k + 1} (#{ids[k].decode()}) lost", lines[:k] + lines[k + 1:], users))
    for k in range(data_start + 1, data_end - 1, 4):  # a line joined to the next (its ';' lost)
        joined = lines[k].rstrip(b";") + lines[k + 1]
        out.append(case(f"lines {k + 1} and {k + 2} joined", lines[:k] + [joined] + lines[k + 2:], (k + 1,)))
    for k in range(data_start + 1, data_end, 9):  # an instance given twice
        out.append(case(f"line {k + 1} given twice", lines[:k + 1] + [lines[k]] + lines[k + 1:], (k + 2,),
                        words=("given twice",)))
    bom_crlf = {"BOM": b"\xef\xbb\xbf" + IFC, "CRLF": IFC.replace(b"\n", b"\r\n"),
                "BOM and CRLF": b"\xef\xbb\xbf" + IFC.replace(b"\n", b"\r\n")}
    for note, body in bom_crlf.items():
        out.append(Case("ifc", f"the IFC with {note}", {"frame.ifc": body, "forces.csv": forces},
                        ["--members", "{in}/frame.ifc"], (cli.EXIT_OK, cli.EXIT_RESIZE, cli.EXIT_UNDESIGNED), check=_ifc_design))
    return out


def _ifc_design(folder: Path, summary: dict) -> None:
    m = pd.read_csv(folder / "out" / "members.csv").set_index("member")
    assert set(IFC_FORCES_MEMBERS) <= set(m.index)
    assert set(m.loc[list(IFC_FORCES_MEMBERS), "status"]) <= {"designed", "resize", "deep-beam"}


# ---------------------------------------------------------------- running a case


CASES = all_cases()
OUTCOMES: collections.Counter = collections.Counter()
STORE_OUTCOMES: collections.Counter = collections.Counter()
LINE = re.compile(r"line (\d+)")


@pytest.fixture(scope="module")
def corpus_root(tmp_path_factory, request):
    root = tmp_path_factory.mktemp("hostile")
    yield root
    report_outcomes(request, "hostile-input corpus", OUTCOMES)


def report_outcomes(request, title: str, counter: collections.Counter) -> None:
    total = counter.pop(("all", None), 0)
    if not total:
        return
    lines = [f"{title}: {total} inputs (group -> exit code: count)"]
    lines += [f"  {group:9s} -> {code}: {n}" for (group, code), n in sorted(counter.items(), key=str) if n]
    print_tally(request, lines)
    counter.clear()


@pytest.fixture(scope="module")
def reference(corpus_root) -> bytes:
    """members.csv of the plain model."""
    folder = corpus_root / "reference"
    code, _, _ = execute(folder, Case("reference", "plain", {}, [], 0))
    assert code in (cli.EXIT_OK, cli.EXIT_RESIZE)
    return (folder / "out" / "members.csv").read_bytes()


def execute(folder: Path, case: Case, capsys=None) -> tuple[int, str, str]:
    inputs = folder / "in"
    inputs.mkdir(parents=True)
    for which, name in FILES.items():
        (inputs / name).write_bytes(_plain(which))
    for name, data in case.files.items():
        (inputs / name).write_bytes(data)
    if case.prepare:
        case.prepare(folder)
    subst = {"{in}": str(inputs), "{store}": str(folder / "store"), "{out}": str(folder / "out"),
             "{folder}": str(folder)}

    def fill(arg: str) -> str:
        for k, v in subst.items():
            arg = arg.replace(k, v)
        return arg

    argv = ["run", "--members", f"{inputs}/members.csv", "--forces", f"{inputs}/forces.csv",
            "--cases", f"{inputs}/cases.csv", "--store", str(folder / "store"), "--out", str(folder / "out"),
            "--json", "--no-report"]
    extra = [fill(a) for a in case.args]
    for flag in ("--members", "--forces", "--cases", "--out"):  # a case's own value replaces the plain one
        if flag in extra:
            k = argv.index(flag)
            del argv[k:k + 2]
    if case.group == "ifc":
        k = argv.index("--cases")
        del argv[k:k + 2]
    if capsys is not None:
        capsys.readouterr()
    code = cli.main(argv + extra)
    out, err = capsys.readouterr() if capsys is not None else ("", "")
    return code, out, err


def snapshot(folder: Path) -> dict[str, str]:
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()} if folder.exists() else {}


@pytest.mark.parametrize("k", range(len(CASES)), ids=[f"{c.group}:{c.note}"[:120] for c in CASES])
def test_hostile_input(corpus_root, reference, capsys, k):
    case = CASES[k]
    folder = corpus_root / f"c{k}"
    OUTCOMES[("all", None)] += 1
    OUTCOMES[(case.group, "raised")] += 1  # taken back below unless cli.main raises
    inputs_before = {}
    code, out, err = None, "", ""
    folder.mkdir()

    def snap_inputs():
        return snapshot(folder / "in") | {f"link:{p}": h for p, h in snapshot(folder / "elsewhere").items()}

    # the inputs as written, before the run: compared after it
    real_prepare = case.prepare

    def prepare(f):
        if real_prepare:
            real_prepare(f)
        inputs_before.update(snap_inputs())

    case_run = Case(**{**case.__dict__, "prepare": prepare})
    code, out, err = execute(folder, case_run, capsys)
    OUTCOMES[(case.group, "raised")] -= 1
    OUTCOMES[(case.group, code)] += 1
    what = f"{case.note} -> exit {code}; stderr: {err[:600]!r}"
    assert snap_inputs() == inputs_before, f"an input changed: {what}"
    expected = case.code if isinstance(case.code, tuple) else (case.code,)
    assert code in expected, what

    if code in (cli.EXIT_OK, cli.EXIT_RESIZE, cli.EXIT_UNDESIGNED):
        summary = json.loads(out)
        assert (folder / "out" / "members.csv").exists(), what
        for w in case.words:
            assert any(w in line for line in summary["warnings"]), f"no warning with {w!r}: {summary['warnings']}"
        if case.same_design:
            assert (folder / "out" / "members.csv").read_bytes() == reference, f"the design differs: {what}"
        if case.check:
            case.check(folder, summary)
        return

    first = err.splitlines()[0] if err else ""
    assert first.startswith("error: "), what
    assert "Traceback" not in err, what
    if case.file is not None:
        path = str(folder / "in" / case.file)
        assert first.startswith(f"error: {path}"), f"the first line must name {path}: {what}"
        listed = [int(n) for n in LINE.findall(err)]
        if case.line is not None:
            assert LINE.search(first) and int(LINE.search(first).group(1)) == case.line, \
                f"expected line {case.line}: {what}"
        elif case.lines:
            assert set(listed) & set(case.lines), f"expected one of lines {case.lines}: {what}"
        if case.columns:
            assert any(f"column '{c}'" in err for c in case.columns), f"expected a column of {case.columns}: {what}"
    for w in case.words:
        assert w in err, f"expected {w!r} in the message: {what}"
    assert not (folder / "store").exists(), f"the store folder was created: {what}"
    if "--out" not in case.args:
        assert not (folder / "out").exists(), f"the out folder was created: {what}"


def test_the_corpus_has_more_than_two_thousand_inputs():
    groups = collections.Counter(c.group for c in CASES)
    assert sum(groups.values()) + len(STORE_CASES) >= 2000, groups
    assert set(groups) >= {"missing", "fill", "settings", "dialect", "nul", "ids", "out", "ifc"}


# ---------------------------------------------------------------- a damaged store


STM_FILES = [f"design/stm_{n}.parquet" for n in ("faces", "members", "models", "nodes", "struts", "ties")]
RUN_FILES = sorted(["cases.parquet", "design/combinations.parquet", "design/joints.parquet", "design/manifest.json",
                    "design/members.parquet",
                    "design/stations/part-00000.parquet", "design/stirrups.parquet", "design/zones.parquet",
                    "forces/part-00000.parquet", "members.parquet", *STM_FILES])
# the strut-and-tie tables are written and read alike: one of them stands for all in the damage cases
DAMAGED_FILES = [f for f in RUN_FILES if f not in STM_FILES or f == "design/stm_struts.parquet"]
SCHEDULE_FILES = [f"schedule/plain/schedule_{n}.{e}" for n in ("bars", "by_bar", "by_level", "marks", "members")
                  for e in ("csv", "parquet")]
COMMANDS = {  # a reader command on run 'beta' of the store
    "govern": ["govern", "--run", "beta", "--format", "csv"],
    "compare": ["compare", "alpha", "beta", "--json"],
    "explain": ["explain", "B2", "--run", "beta", "--json"],
    "schedule": ["schedule", "--run", "beta", "--out", "{out}"],
    "export": ["export", "--run", "beta", "--out", "{out}", "--no-report"],
    "report": ["report", "--run", "beta", "--out", "{out}/r.html", "--member", "B1"],
}


@dataclass
class StoreCase:
    note: str
    damage: str  # flip, delete, stray, edit
    file: str  # the file damaged (or the stray file made)
    command: str
    arg: float = 0.0  # where in the file the bit flips (fraction of its length), or which edit


def store_cases() -> list[StoreCase]:
    out = []
    rng = random.Random("store")
    names = list(COMMANDS)
    for f in ["manifest.json", *DAMAGED_FILES, "schedule/plain/manifest.json", *SCHEDULE_FILES]:
        for k in range(9):
            out.append(StoreCase(f"bit flipped in {f} ({k})", "flip", f, names[(k + len(out)) % len(names)],
                                 rng.random()))
        out.append(StoreCase(f"{f} deleted", "delete", f, names[len(out) % len(names)]))
        out.append(StoreCase(f"{f} cut short", "truncate", f, names[len(out) % len(names)], rng.random()))
    for f in ["forces/part-00077.parquet", "design/stations/part-00077.parquet", "design/extra.parquet",
              "schedule/plain/extra.csv", "notes.txt"]:
        for command in names:
            out.append(StoreCase(f"stray {f}", "stray", f, command))
    for k, edit in enumerate(["settings", "file size", "file sha256", "counts", "drop seal", "json", "files",
                              "design settings"]):
        for command in names:
            out.append(StoreCase(f"manifest edit: {edit}", "edit", "design/manifest.json" if edit == "design settings"
                                 else "manifest.json", command, k))
    return out


STORE_CASES = store_cases()


def store_with_runs(root: Path, names, cases: bool = False) -> Path:
    """root/store with one designed run per name, of the plain inputs (written to root/in),
    with their cases.csv where ``cases``. Returns the store folder."""
    inputs = root / "in"
    inputs.mkdir()
    for which, name in FILES.items():
        (inputs / name).write_bytes(_plain(which))
    store = root / "store"
    for name in names:
        given = ["--cases", str(inputs / "cases.csv")] if cases else []
        assert cli.main(["run", "--members", str(inputs / "members.csv"), "--forces", str(inputs / "forces.csv"),
                         *given, "--store", str(store), "--out", str(root / name), "--run", name, "--no-report",
                         "--json"]) in (cli.EXIT_OK, cli.EXIT_RESIZE)
    return store


@pytest.fixture(scope="module")
def two_runs(tmp_path_factory, request):
    """A store with runs 'alpha' and 'beta' (beta with a stored schedule), the files each reader
    command reads of beta, and each command's output on the intact store."""
    root = tmp_path_factory.mktemp("store")
    store = store_with_runs(root, ("alpha", "beta"), cases=True)
    assert cli.main(["schedule", "--run", "beta", "--store", str(store), "--out", str(root / "sched")]) == cli.EXIT_OK
    beta = Run(store / "beta")
    assert sorted(beta.files()) == RUN_FILES, sorted(beta.files())
    assert sorted(beta.sealed("schedule/plain")) == SCHEDULE_FILES
    reads, outputs = {}, {}
    original = Run.read_bytes
    for name, argv in COMMANDS.items():
        seen = set()

        def spy(self, rel, listed=None, seen=seen):
            if self.name == "beta":
                seen.add(rel)
            return original(self, rel, listed)

        Run.read_bytes = spy
        try:
            code, text = run_command(argv, store, request)
        finally:
            Run.read_bytes = original
        assert code == cli.EXIT_OK, (name, text)
        reads[name], outputs[name] = seen, text
    yield store, reads, outputs
    report_outcomes(request, "damaged-store corpus", STORE_OUTCOMES)


def run_command(argv, store: Path, request) -> tuple[int, str]:
    """A command on the store; its stdout, a marker line, its stderr (the out path written as {out}).
    The out folder's path has the same length in every call (mkdtemp's fixed-length suffix), so
    that terminal lines wrap alike wherever the test runs (a worker's temporary folder differs)."""
    out = Path(tempfile.mkdtemp(prefix="shearpost-out-")) / "o"
    request.addfinalizer(lambda: shutil.rmtree(out.parent, ignore_errors=True))
    buf_out, buf_err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(buf_out), contextlib.redirect_stderr(buf_err):
        code = cli.main([a.replace("{out}", str(out)) for a in argv] + ["--store", str(store)])
    return code, (buf_out.getvalue() + "\n--stderr--\n" + buf_err.getvalue()).replace(str(out), "{out}")


def damage(path: Path, case: StoreCase) -> None:
    if case.damage == "flip":
        data = bytearray(path.read_bytes())
        k = min(int(case.arg * len(data)), len(data) - 1)
        data[k] ^= 1 << (k % 8)
        path.write_bytes(bytes(data))
    elif case.damage == "delete":
        path.unlink()
    elif case.damage == "truncate":
        data = path.read_bytes()
        path.write_bytes(data[:int(case.arg * len(data))])
    elif case.damage == "stray":
        source = {"forces": "forces/part-00000.parquet", "design/stations": "design/stations/part-00000.parquet",
                  "design": "design/members.parquet"}.get(str(Path(case.file).parent))
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes((path.parents[len(Path(case.file).parts) - 1] / source).read_bytes() if source else b"x,y\n")
    else:
        doc_ = json.loads(path.read_text(encoding="utf-8"))
        edit = int(case.arg)
        if edit == 0:
            doc_["settings"]["detailing"]["spacing_module_mm"] = 50.0
        elif edit == 1:
            doc_["files"]["members.parquet"]["size"] += 1
        elif edit == 2:
            doc_["files"]["members.parquet"]["sha256"] = "0" * 64
        elif edit == 3:
            doc_["counts"]["members"] += 1
        elif edit == 4:
            doc_.pop("seal")
        elif edit == 5:
            path.write_text(json.dumps(doc_)[:-3], encoding="utf-8")
            return
        elif edit == 6:
            doc_["files"].pop("design/zones.parquet")
        else:
            doc_["settings"]["detailing"]["min_spacing_mm"] = 150.0
        path.write_text(json.dumps(doc_, indent=2), encoding="utf-8")


@pytest.mark.parametrize("k", range(len(STORE_CASES)), ids=[f"{c.note} / {c.command}" for c in STORE_CASES])
def test_damaged_store_is_named_and_other_runs_work(two_runs, tmp_path, request, k):
    """A stored run damaged in one file: a command that reads the file stops with exit 4 naming
    the run and the file; one that does not gives exactly the intact run's output; `verify`
    names the file; `runs` lists the run (DAMAGED where its manifest is), and run alpha keeps
    working. Nothing is written into the store."""
    case = STORE_CASES[k]
    store, reads, outputs = two_runs
    target = store / "beta" / case.file
    saved = target.read_bytes() if target.exists() else None
    before = snapshot(store)
    STORE_OUTCOMES[("all", None)] += 1
    try:
        damage(target, case)
        damaged = snapshot(store)
        code, text = run_command(COMMANDS[case.command], store, request)
        STORE_OUTCOMES[(case.damage, code)] += 1
        run_manifest = case.file == "manifest.json"
        # the files the command opens (seen on the intact store), its run's manifest, and a schedule's own
        # manifest for `schedule`; a stray file is never opened
        read = case.damage != "stray" and (case.file in reads[case.command] or run_manifest or
                                           (case.file == "schedule/plain/manifest.json" and case.command == "schedule"))
        if read:
            assert code == EXIT_DAMAGED, f"{case.note}: exit {code}: {text[-800:]}"
            err = text.split("--stderr--")[1].strip().splitlines()
            assert len(err) == 1 and err[0].startswith("error: run 'beta' is damaged: "), text[-800:]
            assert f": {case.file}: " in err[0], err[0]
            assert "Traceback" not in text
        else:
            assert code == cli.EXIT_OK, f"{case.note}: exit {code}: {text[-800:]}"
            assert text == outputs[case.command], f"{case.note}: the output changed"
        assert snapshot(store) == damaged, "a reader wrote into the store"
        code, text = run_command(["verify", "--run", "beta"], store, request)
        assert code == EXIT_DAMAGED and case.file in text, text
        if k % 4 == 0:  # (on a quarter of the cases) the store's other run works
            code, text = run_command(["runs", "--json"], store, request)
            assert code == cli.EXIT_OK
            listed = {r["run"]: r for r in json.loads(text.split("--stderr--")[0])["runs"]}
            assert set(listed) == {"alpha", "beta"}
            assert bool(listed["beta"]["damaged"]) == run_manifest and not listed["alpha"]["damaged"]
            code, text = run_command(["govern", "--run", "alpha", "--format", "csv"], store, request)
            assert code == cli.EXIT_OK and text == outputs["govern"], text
    finally:
        if saved is not None:
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(saved)
        elif target.exists():
            target.unlink()
        shutil.rmtree(tmp_path / "out", ignore_errors=True)
    assert snapshot(store) == before


def test_an_edited_manifest_never_changes_a_schedule(tmp_path):
    """Issue 9: editing the settings in a run's manifest changed the mass of the schedule built
    from it by 15 %, silently. The manifest is sealed: the edit is named and nothing is built."""
    inputs = tmp_path / "in"
    inputs.mkdir()
    for which, name in FILES.items():
        (inputs / name).write_bytes(_plain(which))
    store = tmp_path / "store"
    assert cli.main(["run", "--members", str(inputs / "members.csv"), "--forces", str(inputs / "forces.csv"),
                     "--store", str(store), "--out", str(tmp_path / "out"), "--run", "r", "--no-report",
                     "--json"]) in (cli.EXIT_OK, cli.EXIT_RESIZE)
    manifest = store / "r" / "manifest.json"
    doc_ = json.loads(manifest.read_text(encoding="utf-8"))
    doc_["settings"]["detailing"]["ladder"] = [["#13", 2]]
    manifest.write_text(json.dumps(doc_, indent=2), encoding="utf-8")
    buf = io.StringIO()
    with contextlib.redirect_stderr(buf):
        code = cli.main(["schedule", "--store", str(store), "--run", "r", "--out", str(tmp_path / "sched")])
    assert code == EXIT_DAMAGED and "run 'r' is damaged: manifest.json" in buf.getvalue(), buf.getvalue()
    assert not (store / "r" / "schedule").exists() and not (tmp_path / "sched").exists()


def test_runs_lists_a_run_with_a_damaged_manifest_and_the_others(tmp_path, capsys):
    """Issue 9: one damaged manifest broke `runs` for the whole store (a traceback). Now the run
    is listed as damaged, with the file, and every other run as usual."""
    store = store_with_runs(tmp_path, ("one", "two"))
    (store / "one" / "manifest.json").write_text("{\"run\": \"one\", \"created\":", encoding="utf-8")  # cut short
    capsys.readouterr()
    assert cli.main(["runs", "--store", str(store), "--json"]) == cli.EXIT_OK
    rows = {r["run"]: r for r in json.loads(capsys.readouterr().out)["runs"]}
    assert rows["one"]["damaged"].startswith("manifest.json: not a readable manifest") and not rows["two"]["damaged"]
    assert cli.main(["runs", "--store", str(store)]) == cli.EXIT_OK and "DAMAGED" in capsys.readouterr().out
    assert cli.main(["govern", "--store", str(store), "--run", "two"]) == cli.EXIT_OK
    capsys.readouterr()
    assert cli.main(["govern", "--store", str(store), "--run", "one"]) == EXIT_DAMAGED
    assert capsys.readouterr().err.startswith("error: run 'one' is damaged: manifest.json")
