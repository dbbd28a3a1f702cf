"""Readers and validators for members.csv, forces.csv and cases.csv (schema in DESIGN.md).

Files are parsed by pyarrow. Validation is vectorised; only when something is wrong
is the file looked at again to tell the exact line (blank lines make the data-row
index differ from the line number). A value holding a line break is refused: no id,
label or number has one, and it is the mark of a quote left open.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.csv as pcsv

from postproc.adapters.errors import InputError
from postproc.adapters.mapping import ColumnMap, TableMap
from postproc.codes import aci318_19 as aci
from postproc.settings import FRAMES  # moment frames of ACI 318-19 Chapter 18

SUPPORTS = ("column", "wall", "girder", "hanger", "free")
KINDS = ("beam", "column")
LOAD_FACES = ("top", "bottom")
CASE_TYPES = ("D", "L", "Lr", "S", "R", "W", "E")
MAX_REPORTED = 20  # problems listed in one error before "and N more"
csv.field_size_limit(2**31 - 1)  # the error path reads files with csv too: values of any length
BROKEN = "a quoted value runs over a line break: is a quote unbalanced?"
# A number as pyarrow reads one: ASCII digits, optional sign, point and exponent, or inf/nan.
NUMBER = re.compile(r"^[+-]?((\d+\.?\d*|\.\d+)([eE][+-]?\d+)?|inf|infinity|nan)$", re.IGNORECASE | re.ASCII)


@dataclass(frozen=True)
class Col:
    name: str
    numeric: bool
    required: bool = False


MEMBER_COLUMNS = (
    Col("member", False, True), Col("kind", False), Col("length_m", True, True),
    Col("b_mm", True, True), Col("h_mm", True, True), Col("d_mm", True), Col("cover_mm", True),
    Col("fc_mpa", True, True), Col("fyt_mpa", True, True), Col("fy_mpa", True), Col("lambda", True),
    Col("support_i", False, True), Col("support_j", False, True),
    Col("face_i_mm", True), Col("face_j_mm", True), Col("load_face", False),
    Col("bf_mm", True), Col("hf_mm", True), Col("as_tension_mm2", True),
    Col("level", False), Col("group", False),
    # moment frames of the seismic system (ACI 318-19 Chapter 18) and columns
    Col("frame", False), Col("as_top_i_mm2", True), Col("as_bot_i_mm2", True), Col("as_top_j_mm2", True),
    Col("as_bot_j_mm2", True), Col("db_long_mm", True), Col("n_long", True), Col("diameter_mm", True),
    Col("ties_b", True), Col("ties_h", True), Col("as_long_mm2", True),
    # member end coordinates (m): the joints of special moment frames (18.8) and the report's plans
    *(Col(f"{axis}_{end}_m", True) for end in ("i", "j") for axis in ("x", "y", "z")),
)
COORDINATES = tuple(f"{axis}_{end}_m" for end in ("i", "j") for axis in ("x", "y", "z"))
BEAM_END_BARS = ("as_top_i_mm2", "as_bot_i_mm2", "as_top_j_mm2", "as_bot_j_mm2", "db_long_mm")
FORCE_COLUMNS = (
    Col("member", False, True), Col("case", False, True), Col("x_m", True, True),
    Col("V_kN", True, True), Col("N_kN", True), Col("T_kNm", True), Col("M_kNm", True),
    Col("Vb_kN", True),  # shear parallel to the section's b side (columns; beams optional)
)
CASE_COLUMNS = (Col("case", False, True), Col("type", False, True), Col("pattern", False))

KNOWN_COLUMNS = {
    "members": tuple(c.name for c in MEMBER_COLUMNS),
    "forces": tuple(c.name for c in FORCE_COLUMNS),
    "cases": tuple(c.name for c in CASE_COLUMNS),
}


class Problems:
    """Collects row problems of one file and raises them together with exact lines.

    ``row_ids`` maps the rows of the table being checked to data-row numbers of the file
    (0 = the first record after the header); by default they are the same.
    """

    def __init__(self, path: Path, table: TableMap, row_ids: np.ndarray | None = None):
        self.path = path
        self.table = table
        self.row_ids = row_ids
        self.items: list[tuple[int, str | None, str]] = []  # (data row index, our column, message)

    def add(self, rows: np.ndarray, column: str | None, message: str | list[str]) -> None:
        rows = np.flatnonzero(rows) if rows.dtype == bool else rows
        for k, r in enumerate(rows[:MAX_REPORTED]):
            row = int(r) if self.row_ids is None else int(self.row_ids[r])
            self.items.append((row, column, message[k] if isinstance(message, list) else message))

    def raise_if_any(self) -> None:
        if not self.items:
            return
        self.items.sort(key=lambda item: item[0])
        lines = record_lines(self.path, self.items[min(len(self.items), MAX_REPORTED) - 1][0])
        shown = self.items[:MAX_REPORTED]
        errors = [InputError(self.path, msg, lines[r] if r < len(lines) else None,
                             None if col is None else self.table.source_name(col)) for r, col, msg in shown]
        raise InputErrors(errors, len(self.items) - len(shown))


class InputErrors(InputError):
    """Several input problems at once; the message lists each on its own line."""

    def __init__(self, errors: list[InputError], more: int = 0):
        self.errors = errors
        text = "\n".join(str(e) for e in errors)
        if more:
            text += f"\n... and {more} more problems"
        first = errors[0]
        Exception.__init__(self, text)
        self.file, self.line, self.column, self.detail = first.file, first.line, first.column, text


class _Malformed(Exception):
    """The csv module could not read a record; ``line`` is where that record starts."""

    def __init__(self, line: int, error: csv.Error):
        super().__init__(str(error))
        self.line = line


def _records(fh, strict: bool = False):
    """(line, record) for every non-blank record after the header, ``line`` being the one
    the record starts on; a malformed record raises _Malformed."""
    reader = csv.reader(fh, strict=strict)
    start, k = 1, 0
    while True:
        try:
            rec = next(reader)
        except StopIteration:
            return
        except csv.Error as err:
            raise _Malformed(start, err) from None
        if k > 0 and rec:
            yield start, rec
        k += 1
        start = reader.line_num + 1


def record_lines(path: Path, upto: int) -> list[int]:
    """Line number on which each data record starts, for records 0..upto (pyarrow skips
    blank lines and quoted fields may span lines, so the two differ)."""
    lines: list[int] = []
    with open(path, encoding="utf-8-sig", errors="replace", newline="") as fh:
        try:
            for line, _ in _records(fh):
                lines.append(line)
                if len(lines) > upto:
                    break
        except _Malformed:
            pass  # lines past a malformed one are not known; their errors name no line
    return lines


def _header(path: Path) -> list[str]:
    if not path.exists():
        raise InputError(path, "file not found")
    if path.is_dir():
        raise InputError(path, "is a folder, not a CSV file")
    with path.open("rb") as fh:
        head = fh.read(1 << 20)
    if not head.strip():
        raise InputError(path, "the file is empty (no header line)", 1)
    lines = head.splitlines()  # LF, CRLF and CR-only line ends alike
    if not lines[0].strip():
        raise InputError(path, "the first line is blank; the header must be on line 1", 1)
    if len(lines) == 1 or not any(line.strip() for line in lines[1:]):
        raise InputError(path, "has a header but no data rows", 1)
    try:
        text = lines[0].decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(path, "the header is not UTF-8 text; save the file as UTF-8 CSV", 1) from None
    return [h.strip() for h in next(csv.reader([text]))]


def _diagnose(path: Path, header: list[str], table: TableMap, cols: tuple[Col, ...], exc: Exception) -> InputError:
    """Find the line and column behind a pyarrow parse or conversion failure."""
    raw = path.read_bytes()
    raw = raw[3:] if raw.startswith(b"\xef\xbb\xbf") else raw  # offsets below count from after a BOM
    try:
        raw.decode("utf-8")
    except UnicodeDecodeError as bad:
        line = raw[: bad.start].count(b"\n") + 1
        return InputError(path, "not UTF-8 text (bytes that no UTF-8 text has); save the file as UTF-8 CSV", line)
    index = {name: k for k, name in enumerate(header)}
    numeric = [(c.name, index[table.source_name(c.name)]) for c in cols if c.numeric and table.source_name(c.name) in index]
    try:
        for line, rec in _records(io.StringIO(raw.decode("utf-8"), newline="")):
            if len(rec) != len(header):
                return InputError(path, f"expected {len(header)} fields as in the header, found {len(rec)}", line)
            for ours, pos in numeric:
                value = rec[pos].strip()
                if value and not NUMBER.match(value):
                    return InputError(path, f"'{value[:40]}' is not a number", line, table.source_name(ours))
    except _Malformed as bad:
        return InputError(path, f"malformed CSV ({bad})", bad.line)
    return InputError(path, f"could not be read as CSV ({exc})")


@dataclass(frozen=True)
class CsvSpec:
    """What to read from one CSV file: its header, and the export's columns and types."""

    path: Path
    cols: tuple[Col, ...]
    table: TableMap
    header: list[str]
    present: frozenset
    types: dict
    quoted: bool  # the file has quote characters

    def read_options(self, block_size: int | None = None) -> pcsv.ReadOptions:
        """Our reading of the header (names trimmed) replaces pyarrow's."""
        kw = {} if block_size is None else {"block_size": block_size}
        return pcsv.ReadOptions(column_names=self.header, skip_rows=1, use_threads=True, **kw)

    def convert_options(self, only: list[str] | None = None) -> pcsv.ConvertOptions:
        types = self.types if only is None else {self.table.source_name(c): self.types[self.table.source_name(c)]
                                                 for c in only}
        return pcsv.ConvertOptions(column_types=types, include_columns=list(types),
                                   strings_can_be_null=False, quoted_strings_can_be_null=False)

    def diagnose(self, exc: Exception) -> InputError:
        return _diagnose(self.path, self.header, self.table, self.cols, exc)

    def broken_rows(self, raw: pa.Table) -> np.ndarray:
        """Rows where a text value holds a line break: an open quote ran on over lines
        (only possible where the file has quotes at all)."""
        bad = np.zeros(raw.num_rows, bool)
        if not self.quoted:
            return bad
        for name in raw.column_names:
            col = raw.column(name)
            if pa.types.is_string(col.type):
                for brk in ("\n", "\r"):
                    bad |= pac.match_substring(col.fill_null(""), brk).to_numpy(zero_copy_only=False)
        return bad

    def to_ours(self, raw: pa.Table) -> pa.Table:
        """Our column names and units; columns the file lacks are null."""
        arrays, names = [], []
        for c in self.cols:
            src = self.table.source_name(c.name)
            if src in self.present:
                arr = raw.column(src).combine_chunks() if raw.num_rows else pa.array([], type=self.types[src])
                if c.numeric and c.name in self.table.factors:
                    arr = pac.multiply(arr, self.table.factors[c.name])
                if not c.numeric:
                    arr = pac.utf8_trim_whitespace(arr)
            else:
                arr = pa.nulls(raw.num_rows, type=pa.float64() if c.numeric else pa.string())
            arrays.append(arr)
            names.append(c.name)
        return pa.table(arrays, names=names)


def prepare(path: str | Path, name: str, cols: tuple[Col, ...], cmap: ColumnMap) -> CsvSpec:
    """Check the header: no column named twice, every required column present."""
    path = Path(path)
    table = cmap.table(name)
    header = _header(path)
    if len(set(header)) != len(header):
        dup = next(h for h in header if header.count(h) > 1)
        raise InputError(path, "the header names this column twice", 1, dup)
    present = set(header)
    missing = [c for c in cols if c.required and table.source_name(c.name) not in present]
    if missing:
        raise InputErrors([InputError(path, "required column is missing", 1, table.source_name(c.name)) for c in missing])
    # every column is read, the export's others as text: a quote left open in any of them would
    # otherwise swallow the lines after it unseen
    types = {h: pa.string() for h in header if h}
    types.update({table.source_name(c.name): (pa.float64() if c.numeric else pa.string())
                  for c in cols if table.source_name(c.name) in present})
    quotes = _check_quotes(path)
    return CsvSpec(path, cols, table, header, frozenset(present), types, quotes > 0)


def _check_quotes(path: Path) -> int:
    """An odd number of quote characters means a quoted value never ends (a cut file, say).
    Returns the number of quote characters."""
    count = 0
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(16 << 20), b""):
            count += chunk.count(b'"')
    if count % 2 == 0:
        return count
    # an odd count may also be a quote inside a value (B"1), which is text: find out
    with open(path, encoding="utf-8-sig", errors="replace", newline="") as fh:
        try:
            for _ in _records(fh, strict=True):
                pass
        except _Malformed as bad:
            raise InputError(path, "a quoted value never ends (an unbalanced quote, or a cut file)", bad.line) from None
    return count


def read_table(path: str | Path, name: str, cols: tuple[Col, ...], cmap: ColumnMap) -> tuple[pa.Table, Problems]:
    """Read one (small) CSV whole into a pyarrow table with our column names and units."""
    spec = prepare(path, name, cols, cmap)
    try:
        # one block for the whole (small) file, so that no value, however long, straddles two blocks
        block = max(1 << 20, spec.path.stat().st_size + 1)
        raw = pcsv.read_csv(spec.path, read_options=spec.read_options(block), convert_options=spec.convert_options())
    except (pa.ArrowInvalid, pa.ArrowException) as exc:
        raise spec.diagnose(exc) from None
    out = spec.to_ours(raw)
    if out.num_rows == 0:
        raise InputError(spec.path, "has a header but no data rows", 1)
    probs = Problems(spec.path, spec.table)
    probs.add(spec.broken_rows(raw), None, BROKEN)
    return out, probs


def _num(t: pa.Table, name: str) -> np.ndarray:
    return t.column(name).to_numpy(zero_copy_only=False).astype(float)


def _str(t: pa.Table, name: str) -> np.ndarray:
    return np.asarray(t.column(name).fill_null("").to_pylist(), dtype=object)


def _blank(t: pa.Table, name: str) -> np.ndarray:
    """True where a text column is empty (fast, for large tables)."""
    col = t.column(name).fill_null("")
    return pac.equal(col, "").to_numpy(zero_copy_only=False)


def _check_required_numbers(t: pa.Table, cols: tuple[Col, ...], probs: Problems) -> None:
    for c in cols:
        if not c.numeric:
            continue
        v = _num(t, c.name)
        if c.required:
            probs.add(np.isnan(v), c.name, "missing or NaN value")
        probs.add(np.isinf(v), c.name, "value is infinite")


# Magnitudes beyond which a value is taken as a unit mistake, not a structure (common practice).
PLAUSIBLE_MEMBERS = {"length_m": (0.05, 500.0), "b_mm": (50.0, 20000.0), "h_mm": (50.0, 20000.0),
                     "d_mm": (25.0, 20000.0), "cover_mm": (None, 1000.0), "fc_mpa": (None, 200.0),
                     "fyt_mpa": (None, 2000.0), "fy_mpa": (None, 2000.0), "face_i_mm": (None, 20000.0),
                     "face_j_mm": (None, 20000.0), "bf_mm": (None, 50000.0), "hf_mm": (None, 5000.0),
                     "as_tension_mm2": (None, 1e7), "as_top_i_mm2": (None, 1e7), "as_bot_i_mm2": (None, 1e7),
                     "as_top_j_mm2": (None, 1e7), "as_bot_j_mm2": (None, 1e7), "db_long_mm": (6.0, 80.0),
                     **{c: (-1e6, 1e6) for c in COORDINATES}}
PLAUSIBLE_FORCES = {"x_m": (None, 500.0), "V_kN": (-1e6, 1e6), "N_kN": (-1e7, 1e7), "T_kNm": (-1e7, 1e7),
                    "M_kNm": (-1e8, 1e8)}


def _check_plausible(t: pa.Table, probs: Problems, limits: dict) -> None:
    for name, (lo, hi) in limits.items():
        v = _num(t, name)
        with np.errstate(invalid="ignore"):
            if lo is not None:
                probs.add((v < lo) & (v > 0 if lo > 0 else True), name,
                          f"{lo:g} is the least plausible value: check the units")
            probs.add(np.abs(v) > hi if lo is not None and lo < 0 else v > hi, name,
                      f"beyond {hi:g}, not plausible: check the units")


def _check_required_strings(t: pa.Table, cols: tuple[Col, ...], probs: Problems) -> None:
    for c in cols:
        if c.required and not c.numeric:
            probs.add(_blank(t, c.name), c.name, "missing value")



def _check_choice(values: np.ndarray, allowed: tuple[str, ...], column: str, probs: Problems) -> None:
    bad = ~np.isin(values, allowed)
    probs.add(bad, column, [f"'{v}' is not one of {', '.join(allowed)}" for v in values[bad][:MAX_REPORTED]])


def frame_bar_problems(frame: np.ndarray, kind: np.ndarray, bars: dict[str, np.ndarray],
                       support_i: np.ndarray, support_j: np.ndarray) -> list[tuple[np.ndarray, str, str]]:
    """What a moment-frame beam lacks (ACI 318-19 Chapter 18), as (rows, column, message).

    Beams of special and intermediate frames need the steel at both faces and the smallest
    bar diameter (Mpr or Mn at the faces: 18.6.5.1, 18.4.2.3(a); hoop spacing: 18.6.4.4,
    18.4.2.4) and a joint at each end (a free end has no Mpr to develop); beams of ordinary
    frames need them only for the two-bar check of 18.3.2, so all or none. ``bars`` holds
    the BEAM_END_BARS columns (NaN where not given)."""
    beam = kind == "beam"
    capacity = beam & np.isin(frame, ("special", "intermediate"))
    ordinary = beam & (frame == "ordinary")
    given = np.column_stack([~np.isnan(bars[c]) for c in BEAM_END_BARS])
    out = []
    for k, c in enumerate(BEAM_END_BARS):
        out.append((capacity & ~given[:, k], c,
                    f"a beam of a {'{frame}'} moment frame needs {c} (ACI 318-19 "
                    + ("18.6.4.4, 18.4.2.4: the hoop spacing" if c == "db_long_mm" else
                       "18.6.5.1, 18.4.2.3: Mpr or Mn at the faces") + ")"))
        out.append((ordinary & given.any(axis=1) & ~given[:, k], c,
                    f"an ordinary-frame beam with bars needs all of {', '.join(BEAM_END_BARS)} (the two-bar check of "
                    "ACI 318-19 18.3.2), or none"))
    for end, sup in (("support_i", support_i), ("support_j", support_j)):
        out.append((capacity & (sup == "free"), end, "a beam of a {frame} moment frame spans between joints; a free "
                                                     "end develops no Mpr or Mn (ACI 318-19 18.6.5.1, 18.4.2.3)"))
    return out


def read_members(path: str | Path, cmap: ColumnMap, frame_by_group: dict[str, str] | None = None
                 ) -> tuple[pa.Table, list[str]]:
    """members.csv -> validated table (our columns, d_mm filled, defaults applied) and warnings.

    ``frame_by_group`` (settings [frames].by_group) gives the frame of members whose `frame`
    cell is empty, by their group label; a value in the file wins."""
    t, probs = read_table(path, "members", MEMBER_COLUMNS, cmap)
    _check_required_numbers(t, MEMBER_COLUMNS, probs)
    _check_required_strings(t, MEMBER_COLUMNS, probs)
    member = _str(t, "member")
    _, first, counts = np.unique(member, return_index=True, return_counts=True)
    dup_rows = np.setdiff1d(np.arange(len(member)), first)
    probs.add(dup_rows, "member", [f"member '{member[r]}' is listed twice" for r in dup_rows[:MAX_REPORTED]])

    kind = _str(t, "kind")
    kind[kind == ""] = "beam"
    _check_choice(kind, KINDS, "kind", probs)
    for end in ("support_i", "support_j"):
        s = _str(t, end)
        _check_choice(s, SUPPORTS, end, probs)
    both_free = (_str(t, "support_i") == "free") & (_str(t, "support_j") == "free")
    probs.add(both_free, "support_j", "both ends free: a member needs at least one support")
    load_face = _str(t, "load_face")
    load_face[load_face == ""] = "top"
    _check_choice(load_face, LOAD_FACES, "load_face", probs)

    L, b, h = _num(t, "length_m"), _num(t, "b_mm"), _num(t, "h_mm")
    for name, v in (("length_m", L), ("b_mm", b), ("h_mm", h)):
        probs.add(v <= 0, name, "must be greater than zero")
    _check_plausible(t, probs, PLAUSIBLE_MEMBERS)
    d_given, cover = _num(t, "d_mm"), _num(t, "cover_mm")
    neither = np.isnan(d_given) & np.isnan(cover)
    probs.add(neither, "d_mm", "give d_mm or cover_mm")
    d = np.where(np.isnan(d_given), h - cover, d_given)
    probs.add(~np.isnan(d_given) & (d_given <= 0), "d_mm", "must be greater than zero")
    probs.add(~np.isnan(d_given) & (d_given >= h), "d_mm", "effective depth must be less than h_mm")
    probs.add(np.isnan(d_given) & ~np.isnan(cover) & ((cover <= 0) | (cover >= h)), "cover_mm",
              "must be greater than zero and less than h_mm")
    probs.add(np.isnan(d_given) & (cover > 0) & (cover < h) & (h - cover < 25.0), "cover_mm",
              "leaves an effective depth under 25 mm, not plausible: check the units")

    fc, fyt = _num(t, "fc_mpa"), _num(t, "fyt_mpa")
    probs.add(fc < aci.FC_MIN_MPA, "fc_mpa", f"f'c below {aci.FC_MIN_MPA:g} MPa, the least ACI 318-19 19.2.1.1 admits")
    probs.add(fyt <= 0, "fyt_mpa", "must be greater than zero")
    fy = _num(t, "fy_mpa")
    probs.add(fy <= 0, "fy_mpa", "must be greater than zero")
    lam = _num(t, "lambda")
    probs.add((lam <= 0) | (lam > 1), "lambda", "lightweight factor must be in (0, 1]")
    face_i, face_j = np.nan_to_num(_num(t, "face_i_mm")), np.nan_to_num(_num(t, "face_j_mm"))
    probs.add(face_i < 0, "face_i_mm", "must not be negative")
    probs.add(face_j < 0, "face_j_mm", "must not be negative")
    with np.errstate(over="ignore"):  # an absurd length is reported by the plausibility check
        probs.add((face_i + face_j) >= L * 1000.0, "face_j_mm", "support faces leave no clear span")
    bf, hf = _num(t, "bf_mm"), _num(t, "hf_mm")
    probs.add(~np.isnan(bf) & (bf < b), "bf_mm", "flange width must be at least the web width b_mm")
    probs.add(~np.isnan(hf) & ((hf <= 0) | (hf >= h)), "hf_mm", "flange thickness must be in (0, h_mm)")
    probs.add(~np.isnan(bf) & np.isnan(hf), "hf_mm", "a flange width needs a flange thickness")
    As = _num(t, "as_tension_mm2")
    probs.add(~np.isnan(As) & (As <= 0), "as_tension_mm2", "must be greater than zero")
    frame = _str(t, "frame")
    group = _str(t, "group")
    from_group = (frame == "") & np.isin(group, list(frame_by_group or {}))
    frame[from_group] = [frame_by_group[g] for g in group[from_group]]
    frame[frame == ""] = "none"
    _check_choice(frame, FRAMES, "frame", probs)
    for name in ("as_top_i_mm2", "as_bot_i_mm2", "as_top_j_mm2", "as_bot_j_mm2", "db_long_mm", "n_long",
                 "diameter_mm", "ties_b", "ties_h", "as_long_mm2"):
        v = _num(t, name)
        probs.add(~np.isnan(v) & (v <= 0), name, "must be greater than zero")
    for name in ("n_long", "ties_b", "ties_h"):
        v = _num(t, name)
        probs.add(~np.isnan(v) & (v != np.round(v)), name, "must be a whole number")
    bars = {c: _num(t, c) for c in BEAM_END_BARS}
    for rows, column, message in frame_bar_problems(frame, kind, bars, _str(t, "support_i"), _str(t, "support_j")):
        rows = np.flatnonzero(rows)
        probs.add(rows, column, [message.format(frame=frame[r]) + (
            f" (frame from [frames].by_group of group '{group[r]}')" if from_group[r] else "") for r in rows[:MAX_REPORTED]])
    with np.errstate(over="ignore"):  # an absurd section is reported by the plausibility check
        gross = b * h
    for c in BEAM_END_BARS[:4]:
        probs.add(bars[c] > gross, c, "more steel than the gross section b_mm x h_mm: check the units")
    coords = np.column_stack([_num(t, c) for c in COORDINATES])
    some = ~np.isnan(coords)
    partial = some.any(axis=1) & ~some.all(axis=1)
    for k, c in enumerate(COORDINATES):
        probs.add(partial & ~some[:, k], c, f"give all six end coordinates ({', '.join(COORDINATES)}) or none")
    probs.raise_if_any()

    warnings = []
    capped = fyt > aci.FYT_MAX_MPA
    for m, v in zip(member[capped], fyt[capped]):
        warnings.append(f"member {m}: fyt {v:g} MPa capped at {aci.FYT_MAX_MPA:g} MPa for shear (ACI 318-19 20.2.2.4)")
    fy_default = np.isnan(fy)
    out = t.set_column(t.schema.get_field_index("kind"), "kind", pa.array(kind.tolist(), pa.string()))
    out = out.set_column(out.schema.get_field_index("load_face"), "load_face", pa.array(load_face.tolist(), pa.string()))
    out = out.set_column(out.schema.get_field_index("frame"), "frame", pa.array(frame.tolist(), pa.string()))
    out = out.set_column(out.schema.get_field_index("d_mm"), "d_mm", pa.array(d))
    # fy defaults to Grade 420, the usual longitudinal bar (common practice); used only for rho_w bounds.
    out = out.set_column(out.schema.get_field_index("fy_mpa"), "fy_mpa", pa.array(np.where(fy_default, 420.0, fy)))
    out = out.set_column(out.schema.get_field_index("lambda"), "lambda", pa.array(np.where(np.isnan(lam), 1.0, lam)))
    out = out.set_column(out.schema.get_field_index("face_i_mm"), "face_i_mm", pa.array(face_i))
    out = out.set_column(out.schema.get_field_index("face_j_mm"), "face_j_mm", pa.array(face_j))
    for name in ("level", "group"):
        out = out.set_column(out.schema.get_field_index(name), name, pa.array(_str(out, name).tolist(), pa.string()))
    return out, warnings


class ForcesReader:
    """forces.csv, read and validated in blocks so that memory does not grow with the file.

    ``batches()`` yields validated tables (our columns plus ``_row``, the data-row number
    for exact error lines); ``check_part()`` runs the checks that need all rows of a
    member (a third row at a station, exact duplicates) on a member-complete part.
    """

    BLOCK = 64 << 20  # bytes of CSV per block

    def __init__(self, path: str | Path, cmap: ColumnMap, lengths_m: dict[str, float] | None = None,
                 cases: pa.Table | None = None, cases_path: str | Path | None = None, tolerance_mm: float = 1.0):
        self.spec = prepare(path, "forces", FORCE_COLUMNS, cmap)
        self.tolerance_mm = tolerance_mm
        self.path = self.spec.path
        self.lengths_m = lengths_m
        self.cases, self.cases_path = cases, cases_path
        self.case_names: set[str] = set()
        self.rows = 0

    def size(self) -> int:
        return self.path.stat().st_size

    def _stream(self, only: list[str] | None = None):
        try:
            reader = pcsv.open_csv(self.path, read_options=self.spec.read_options(self.BLOCK),
                                   convert_options=self.spec.convert_options(only))
            for batch in reader:
                yield pa.Table.from_batches([batch])
        except (pa.ArrowInvalid, pa.ArrowException) as exc:
            raise self.spec.diagnose(exc) from None

    def member_ids(self) -> set[str]:
        """The member ids of the file (reads one column)."""
        out: set[str] = set()
        for t in self._stream(["member"]):
            out.update(pac.unique(pac.utf8_trim_whitespace(t.column(self.spec.table.source_name("member")))).to_pylist())
        return out

    def batches(self):
        self.rows, self.case_names = 0, set()
        for raw in self._stream():
            t = self.spec.to_ours(raw)
            ids = np.arange(self.rows, self.rows + t.num_rows, dtype=np.int64)
            probs = Problems(self.path, self.spec.table, ids)
            probs.add(self.spec.broken_rows(raw), None, BROKEN)
            _check_required_numbers(t, FORCE_COLUMNS, probs)
            _check_required_strings(t, FORCE_COLUMNS, probs)
            x = _num(t, "x_m")
            probs.add(x < 0, "x_m", "station before node i (x_m < 0)")
            _check_plausible(t, probs, PLAUSIBLE_FORCES)
            if self.lengths_m is not None:
                L = _lookup(t.column("member"), self.lengths_m)
                beyond = x > L * (1 + 1e-9) + 1e-6
                probs.add(beyond, "x_m", [f"station {x[r]:g} m lies beyond the member length {L[r]:g} m"
                                          for r in np.flatnonzero(beyond)[:MAX_REPORTED]])
            probs.raise_if_any()
            for name in ("N_kN", "T_kNm", "M_kNm", "Vb_kN"):
                t = t.set_column(t.schema.get_field_index(name), name, pac.fill_null(t.column(name), 0.0))
            self.rows += t.num_rows
            self.case_names.update(pac.unique(t.column("case")).to_pylist())
            yield t.append_column("_row", pa.array(ids))
        if self.rows == 0:
            raise InputError(self.path, "has a header but no data rows", 1)
        if self.cases is not None:
            check_cases_cover_forces(self.cases, self.case_names, self.cases_path)

    def check_part(self, t: pa.Table) -> None:
        """Checks of a member-complete part sorted by member, case, x_m and _row."""
        probs = Problems(self.path, self.spec.table, t.column("_row").to_numpy())
        _check_station_rows(t, probs, presorted=True, tolerance_mm=self.tolerance_mm)
        probs.raise_if_any()

    def read_all(self) -> pa.Table:
        """The whole file as one validated table (for small files and tests)."""
        t = sort_part(pa.concat_tables(list(self.batches())))
        self.check_part(t)
        return t.drop_columns(["_row"])


def sort_part(t: pa.Table) -> pa.Table:
    """Rows by member, case and station; the file row breaks ties, so the two rows of a
    jump keep their left-then-right order. Ids are sorted once as distinct values and
    the rows by their ranks (much faster than comparing strings row by row)."""
    keys = [_ranks(t.column("member")), _ranks(t.column("case")), t.column("x_m").to_numpy(),
            t.column("_row").to_numpy()]
    return t.take(pa.array(np.lexsort(keys[::-1])))


def _ranks(col: pa.ChunkedArray) -> np.ndarray:
    """Rank of each row's value among the distinct values, in the order Arrow sorts text."""
    codes, values = _codes(col)
    rank = np.empty(len(values), np.int64)
    rank[np.argsort(np.array(values, dtype=object), kind="stable")] = np.arange(len(values))
    return rank[codes]


def read_forces(path: str | Path, cmap: ColumnMap, lengths_m: dict[str, float] | None = None,
                tolerance_mm: float = 1.0) -> pa.Table:
    """forces.csv -> validated table; optional N, T, M default to zero."""
    return ForcesReader(path, cmap, lengths_m, tolerance_mm=tolerance_mm).read_all()


def _lookup(member: pa.ChunkedArray, lengths_m: dict[str, float]) -> np.ndarray:
    """Member length per force row (inf for members without geometry)."""
    codes, names = _codes(member)
    per_name = np.array([lengths_m.get(m, np.inf) for m in names])
    return per_name[codes] if len(per_name) else np.full(len(member), np.inf)


def _codes(col: pa.ChunkedArray | pa.Array) -> tuple[np.ndarray, list]:
    """Integer code per row and the distinct values (pyarrow dictionary encoding)."""
    arr = col.combine_chunks() if isinstance(col, pa.ChunkedArray) else col
    enc = pac.dictionary_encode(arr)
    return enc.indices.to_numpy(zero_copy_only=False), enc.dictionary.to_pylist()


def _check_station_rows(t: pa.Table, probs: Problems, presorted: bool = False, tolerance_mm: float = 0.0) -> None:
    """At most two rows per (member, case, station): two are a jump (equal rows a jump of
    zero, as chained elements give at a node). Rows closer than ``tolerance_mm`` are one
    station. ``presorted``: rows already grouped by member and case and sorted by x."""
    m_idx, _ = _codes(t.column("member"))
    c_idx, _ = _codes(t.column("case"))
    x = t.column("x_m").to_numpy()
    order = np.arange(len(x)) if presorted else np.lexsort((x, c_idx, m_idx))
    ms, cs, xs = m_idx[order], c_idx[order], x[order]
    dx = np.diff(xs)
    same = (ms[1:] == ms[:-1]) & (cs[1:] == cs[:-1]) & ((dx == 0) | (dx * 1e3 < tolerance_mm))
    triple = np.zeros(len(order), bool)
    triple[2:] = same[1:] & same[:-1]
    where = "one station" if tolerance_mm <= 0 else f"one station (rows within {tolerance_mm:g} mm are one)"
    probs.add(np.sort(order[triple]), "x_m", f"a third row at {where}; a jump takes exactly two rows")


def read_cases(path: str | Path, cmap: ColumnMap) -> pa.Table:
    """cases.csv -> validated table of basic load cases and their types."""
    t, probs = read_table(path, "cases", CASE_COLUMNS, cmap)
    _check_required_strings(t, CASE_COLUMNS, probs)
    types = _str(t, "type")
    _check_choice(types, CASE_TYPES, "type", probs)
    case = _str(t, "case")
    _, first = np.unique(case, return_index=True)
    dup = np.setdiff1d(np.arange(len(case)), first)
    probs.add(dup, "case", "case listed twice")
    pattern = _str(t, "pattern")
    probs.add((pattern != "") & ~np.isin(types, ("L", "Lr", "S", "R")), "pattern",
              "a pattern label groups alternative arrangements of a variable load (L, Lr, S, R); dead loads always "
              "act, and W and E cases are alternatives already")
    probs.raise_if_any()
    return t.set_column(t.schema.get_field_index("pattern"), "pattern", pa.array(pattern.tolist(), pa.string()))


def check_cases_cover_forces(cases: pa.Table, used: set[str], cases_path: str | Path) -> None:
    """With cases.csv, every case of forces.csv must have a type."""
    typed = set(cases.column("case").to_pylist())
    untyped = sorted(set(used) - typed)
    if untyped:
        shown = ", ".join(f"'{c}'" for c in untyped[:10])
        raise InputError(cases_path, f"case(s) {shown} of the forces table have no row here; give each a type "
                                     f"({', '.join(CASE_TYPES)})", None, "case")
