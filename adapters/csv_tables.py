"""Readers and validators for members.csv, forces.csv and cases.csv (schema in DESIGN.md).

Files are parsed by pyarrow in their own encoding, delimiter and decimal separator
(postproc.adapters.encoding: given in the mapping file, or detected and reported),
and hashed while they are parsed (postproc.adapters.digests), so that the run's
manifest describes the bytes that were designed. Validation is vectorised; only when
something is wrong is the file read again, streamed, to tell the exact line (blank
lines make the data-row index differ from the line number). A value holding a line
break is refused: no id, label or number has one, and it is the mark of a quote left
open. A NUL byte, or a "line" longer than any record, is a damaged file.

No missing value gets through: a blank cell and every spelling of a missing or
not-a-number value (NaN, #N/A, NA, null, 1.#QNAN, -1.#IND, ...) is an error naming
file, line and column, in required and optional columns alike, unless the settings
say how to fill that column (``[input] fill``; the run's notices count the cells
filled). Where a blank cell is documented as "not given" it stays so: d_mm or
cover_mm (one of the two per row), bf_mm and hf_mm (no flange), as_tension_mm2 (not
known), and the bars of frame beams and columns (given where needed). A column the
file does not have takes its documented default.

Member and case ids are compared as Unicode NFC with zero-width characters removed
(both reported where they changed an id).

Units: a column's name carries its unit, and each quantity may be spelt in either unit
system (``b_mm`` or ``b_in``, ``fc_mpa``, ``fc_psi`` or ``fc_ksi``, ``V_kN`` or ``V_kip``:
postproc.units), one spelling per table. A table is read into the unit system of the run
(``units``) and leaves under that system's names. Inside this module the columns go by
their SI key (``Col.name``, "our column"), whatever the run's units: the checks are
written once, with their limits in the run's units.
"""

from __future__ import annotations

import codecs
import csv
import difflib
import re
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.csv as pcsv

from postproc import units as unit_names
from postproc.adapters import digests, encoding
from postproc.adapters.errors import InputError
from postproc.adapters.mapping import ColumnMap, TableMap
from postproc.codes import aci318_19 as aci
from postproc.settings import FRAMES  # moment frames of ACI 318-19 Chapter 18
from postproc.terms import with_frame
from postproc.units import SI, UnitSystem

SUPPORTS = ("column", "wall", "girder", "hanger", "free")
KINDS = ("beam", "column")
LOAD_FACES = ("top", "bottom")
CASE_TYPES = ("D", "L", "Lr", "S", "R", "W", "E")
MAX_REPORTED = 20  # problems listed in one error before "and N more"
csv.field_size_limit(2**31 - 1)  # the error path reads files with csv too: values of any length
BROKEN = "a quoted value runs over a line break: is a quote unbalanced?"
# A number as pyarrow reads one: ASCII digits, optional sign, point and exponent, or inf/nan.
NUMBER = re.compile(r"^[+-]?((\d+\.?\d*|\.\d+)([eE][+-]?\d+)?|inf|infinity|nan)$", re.IGNORECASE | re.ASCII)
NUMBER_COMMA = re.compile(r"^[+-]?((\d+,?\d*|,\d+)([eE][+-]?\d+)?|inf|infinity|nan)$", re.IGNORECASE | re.ASCII)
# Spellings of a missing, not-a-number or failed value (spreadsheets, databases, C runtimes), lower case.
MISSING_MARKERS = frozenset(m.lower() for m in (
    "NA", "N/A", "#N/A", "#N/A N/A", "#NA", "NaN", "-NaN", "+NaN", "NULL", "1.#QNAN", "-1.#QNAN",
    "1.#IND", "-1.#IND", "1.#SNAN", "#NULL!", "#NUM!", "#VALUE!", "#DIV/0!", "#REF!", "#NAME?"))
# blank: documented "not given" (one of d/cover; no flange; As not known; frame and column bars and end
# coordinates where needed), or "the default" (fy 420 MPa, lambda 1.0, faces at the nodes): as if the column
# were absent for that member. In forces.csv every blank is an error (a blank N_kN is not zero).
BLANK_NOT_GIVEN = frozenset({"d_mm", "cover_mm", "bf_mm", "hf_mm", "as_tension_mm2", "as_top_i_mm2", "as_bot_i_mm2",
                             "as_top_j_mm2", "as_bot_j_mm2", "db_long_mm", "n_long", "diameter_mm", "ties_b",
                             "ties_h", "as_long_mm2", "fy_mpa", "lambda", "face_i_mm", "face_j_mm",
                             "x_i_m", "y_i_m", "z_i_m", "x_j_m", "y_j_m", "z_j_m"})
FREE_TEXT = frozenset({"member", "case", "level", "group", "pattern"})
ZERO_WIDTH = "[\u200b\u200c\u200d\u2060\ufeff]"


@dataclass(frozen=True)
class Col:
    name: str
    numeric: bool
    required: bool = False


MEMBER_COLUMNS = (
    Col("member", False, True), Col("kind", False), Col("length_m", True, True),
    Col("b_mm", True), Col("h_mm", True), Col("d_mm", True), Col("cover_mm", True),  # b, h: unless circular
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

KNOWN_COLUMNS = {  # every spelling of every column (a mapping file may name any)
    "members": tuple(sp for c in MEMBER_COLUMNS for sp in unit_names.spellings(c.name)),
    "forces": tuple(sp for c in FORCE_COLUMNS for sp in unit_names.spellings(c.name)),
    "cases": tuple(c.name for c in CASE_COLUMNS),
}
# optional numeric columns a setting may fill; b and h are optional only because a blank pair means a
# circular section (diameter_mm): filling them would silently turn it rectangular
FILLABLE = tuple(c.name for c in (*MEMBER_COLUMNS, *FORCE_COLUMNS)
                 if c.numeric and not c.required and c.name not in ("b_mm", "h_mm"))


def missing_hint(column: str, required: bool) -> str:
    if required:
        return "give the value"
    return f"give the value, or say how to fill the column in the settings: [input] fill = {{ {column} = ... }}"


class Problems:
    """Collects row problems of one file and raises them together with exact lines.

    ``row_ids`` maps the rows of the table being checked to data-row numbers of the file
    (0 = the first record after the header); by default they are the same.
    """

    def __init__(self, spec: CsvSpec, row_ids: np.ndarray | None = None):
        self.spec = spec
        self.path = spec.path
        self.table = spec.table
        self.row_ids = row_ids
        self.items: list[tuple[int, str | None, str]] = []  # (data row index, our column, message)
        self.unlisted = 0  # problems found beyond the MAX_REPORTED of one check (counted, not listed)

    def add(self, rows: np.ndarray, column: str | None, message: str | list[str]) -> None:
        rows = np.flatnonzero(rows) if rows.dtype == bool else rows
        self.unlisted += max(len(rows) - MAX_REPORTED, 0)
        for k, r in enumerate(rows[:MAX_REPORTED]):
            row = int(r) if self.row_ids is None else int(self.row_ids[r])
            self.items.append((row, column, message[k] if isinstance(message, list) else message))

    def raise_if_any(self) -> None:
        if not self.items:
            return
        self.items.sort(key=lambda item: item[0])
        lines = record_lines(self.spec, self.items[min(len(self.items), MAX_REPORTED) - 1][0])
        shown = self.items[:MAX_REPORTED]
        errors = [InputError(self.path, msg, lines[r] if r < len(lines) else None,
                             None if col is None else self.table.source_name(col)) for r, col, msg in shown]
        raise InputErrors(errors, len(self.items) - len(shown) + self.unlisted)


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


def _records(fh, dialect: encoding.Dialect, strict: bool = False):
    """(line, record) for every non-blank record after the header, ``line`` being the one
    the record starts on; a malformed record raises _Malformed."""
    reader = dialect.reader(fh, strict=strict)
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


def record_lines(source: CsvSpec | Path, upto: int) -> list[int]:
    """Line number on which each data record starts, for records 0..upto (pyarrow skips
    blank lines and quoted fields may span lines, so the two differ). ``source``: the
    file's CsvSpec, or a path (read as UTF-8 with commas)."""
    spec = source if isinstance(source, CsvSpec) else None
    path, dialect = (spec.path, spec.dialect) if spec else (Path(source), encoding.Dialect())
    lines: list[int] = []
    with dialect.open_text(path, errors="replace") as fh:
        try:
            for line, _ in _records(fh, dialect):
                lines.append(line)
                if len(lines) > upto:
                    break
        except _Malformed:
            pass  # lines past a malformed one are not known; their errors name no line
    return lines


def _unnamed(k: int) -> str:
    return f"(unnamed column {k + 1})"


def _header(path: Path, table: TableMap, cols: tuple[Col, ...]) -> tuple[list[str], encoding.Dialect]:
    """The header's column names (an empty name becomes an unnamed column, which is not
    read) and how the file is written."""
    if not path.exists():
        raise InputError(path, "file not found")
    if path.is_dir():
        raise InputError(path, "is a folder, not a CSV file")
    with path.open("rb") as fh:
        head = fh.read(1 << 20)
    known = {table.source_name(sp) for c in cols for sp in unit_names.spellings(c.name)}  # either unit system
    numeric = {table.source_name(sp) for c in cols if c.numeric for sp in unit_names.spellings(c.name)}
    dialect = encoding.detect(path, head, known, numeric, table.encoding, table.delimiter, table.decimal)
    text = codecs.getincrementaldecoder(dialect.encoding)("replace").decode(head[dialect.bom:], final=False)
    if not text.strip():
        raise InputError(path, "the file is empty (no header line)", 1)
    lines = text.splitlines()  # LF, CRLF and CR-only line ends alike
    if not lines[0].strip():
        raise InputError(path, "the first line is blank; the header must be on line 1", 1)
    if len(lines) == 1 or not any(line.strip() for line in lines[1:]):
        raise InputError(path, "has a header but no data rows", 1)
    if "\ufffd" in lines[0] and "\ufffd" not in _strict_prefix(head[dialect.bom:], dialect, len(lines[0])):
        raise InputError(path, f"the header is not {dialect.name} text; save the file as UTF-8 CSV", 1)
    names = [h.strip() for h in next(csv.reader([lines[0]], delimiter=dialect.delimiter))]
    if "\x00" in lines[0]:
        raise InputError(path, "the header holds a NUL byte (\\x00): the file is damaged or not text", 1,
                         next((n for n in names if "\x00" in n), None))
    return [h if h else _unnamed(k) for k, h in enumerate(names)], dialect


def header_names(path: str | Path) -> list[str]:
    """The names of a members or forces CSV file's header line, trimmed (in the file's own
    encoding and delimiter)."""
    return _header(Path(path), TableMap(), (*MEMBER_COLUMNS, *FORCE_COLUMNS))[0]


def _strict_prefix(data: bytes, dialect: encoding.Dialect, chars: int) -> str:
    """The first ``chars`` characters of ``data`` decoded strictly ('\ufffd' where that fails)."""
    try:
        return codecs.getincrementaldecoder(dialect.encoding)("strict").decode(data, final=False)[:chars]
    except UnicodeDecodeError as bad:
        good = bad.object[: bad.start].decode(dialect.encoding, errors="replace")
        return (good + "\ufffd")[:chars]


def _bad_text_line(path: Path, dialect: encoding.Dialect) -> int | None:
    """The line of the first byte that is not text in the file's encoding (streamed)."""
    decoder = codecs.getincrementaldecoder(dialect.encoding)("strict")
    lines = 1
    with open(path, "rb") as fh:
        fh.seek(dialect.bom)
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            try:
                lines += decoder.decode(chunk).count("\n")
            except UnicodeDecodeError as bad:
                good = bad.object[: bad.start].decode(dialect.encoding, errors="replace")
                return lines + good.count("\n")
        try:
            decoder.decode(b"", final=True)
        except UnicodeDecodeError:
            return lines
    return None


def _scan_file(path: Path, dialect: encoding.Dialect) -> digests.ByteScan:
    """The raw checks of a whole file, streamed (for the error path)."""
    scan = digests.ByteScan(dialect.single_byte_ascii)
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            scan.update(chunk)
    return scan


def _diagnose(spec: CsvSpec, exc: Exception) -> InputError:
    """Find the line and column behind a pyarrow parse or conversion failure, reading the
    file as a stream (memory does not grow with the file)."""
    path, dialect, header = spec.path, spec.dialect, spec.header
    if (problem := spec.scan_problem(_scan_file(path, dialect))) is not None:
        return problem
    index = {name: k for k, name in enumerate(header)}
    numeric = [(c, index[spec.table.source_name(c.name)]) for c in spec.cols
               if c.numeric and spec.table.source_name(c.name) in index and c.name not in spec.fill]
    number = (NUMBER_COMMA if dialect.decimal == "," else NUMBER).match
    width = len(header)
    try:
        with dialect.open_text(path) as fh:
            for line, rec in _records(fh, dialect):
                if len(rec) != width:
                    return InputError(path, f"expected {width} fields as in the header, found {len(rec)}", line)
                for c, pos in numeric:
                    raw = rec[pos]
                    if not raw or number(raw.strip()):
                        continue  # (blank, or a number: the common cases, first)
                    value = raw.strip()
                    where = dict(line=line, column=spec.table.source_name(c.name))
                    if value.lower() in MISSING_MARKERS:
                        return InputError(path, f"'{value[:40]}' marks a missing value: "
                                                f"{missing_hint(spec.fill_name(c.name), c.required)}", **where)
                    if not value:
                        return InputError(path, "a cell of spaces only: leave it empty or give the value", **where)
                    other = " (the decimal separator of this file is ',')" if dialect.decimal == "," else ""
                    return InputError(path, f"'{value[:40]}' is not a number{other}", **where)
    except UnicodeDecodeError:
        return InputError(path, f"not {dialect.name} text (bytes that no {dialect.name} text has); "
                                "save the file as UTF-8 CSV", _bad_text_line(path, dialect))
    except _Malformed as bad:
        return InputError(path, f"malformed CSV ({bad})", bad.line)
    return InputError(path, f"could not be read as CSV ({exc})")


@dataclass(frozen=True)
class CsvSpec:
    """What to read from one CSV file: its header, the export's columns and types, how the
    file is written, and the columns the settings fill."""

    path: Path
    cols: tuple[Col, ...]
    table: TableMap
    header: list[str]
    present: frozenset
    types: dict
    dialect: encoding.Dialect
    fill: dict = field(default_factory=dict)  # our column -> value for its missing cells (the run's unit)
    units: UnitSystem = SI  # the run's unit system: the columns are read into its units
    unread: tuple[str, ...] = ()  # the header's other columns (read as text, checked, not used)
    hints: dict = field(default_factory=dict)  # of those, the ones that look like a column of ours: what they look like

    def unread_notes(self) -> list[str]:
        """A notice naming the header's columns that are not used, if any, and one for each that
        looks like a column of ours."""
        if not self.unread:
            return []
        return [f"{self.path}: column(s) not used: {', '.join(repr(h) for h in self.unread)} (not columns "
                "shearpost reads in this table; see the README's input tables)",
                *(f"{self.path}: column '{h}' is not used: {hint}" for h, hint in self.hints.items())]

    def fill_name(self, column: str) -> str:
        """How the settings' [input] fill names one of our columns: the file's spelling of it,
        or (a column a mapping file renames) the run's."""
        src = self.table.source_name(column)
        return src if unit_names.si_name(src) == column else self.units.col(column)

    def read_options(self, block_size: int | None = None) -> pcsv.ReadOptions:
        """Our reading of the header (names trimmed) replaces pyarrow's."""
        kw = {} if block_size is None else {"block_size": block_size}
        enc = "utf8" if self.dialect.encoding == "utf-8" else self.dialect.encoding
        return pcsv.ReadOptions(column_names=self.header, skip_rows=1, use_threads=True, encoding=enc, **kw)

    def parse_options(self) -> pcsv.ParseOptions:
        return pcsv.ParseOptions(delimiter=self.dialect.delimiter)

    def convert_options(self, only: list[str] | None = None) -> pcsv.ConvertOptions:
        types = self.types if only is None else {self.table.source_name(c): self.types[self.table.source_name(c)]
                                                 for c in only}
        return pcsv.ConvertOptions(column_types=types, include_columns=list(types), null_values=[""],
                                   strings_can_be_null=False, quoted_strings_can_be_null=True,
                                   decimal_point=self.dialect.decimal)

    def diagnose(self, exc: Exception) -> InputError:
        return _diagnose(self, exc)

    def scan_problem(self, scan: digests.ByteScan) -> InputError | None:
        """What the raw scan of the whole file found: a NUL byte, a line too long to be a
        record, a quote that never ends (None: nothing)."""
        if scan.nul_at is not None:
            return _nul_error(self, scan.nul_at)
        if scan.long_at is not None:
            return InputError(self.path, f"a line longer than {digests.LONG_LINE >> 20} MB: the file has no line "
                                         "ends there (damaged, or not a CSV file)",
                              digests.line_of(self.path, scan.long_at))
        if scan.quotes % 2:
            # an odd count may also be a quote inside a value (B"1), which is text: find out
            with self.dialect.open_text(self.path, errors="replace") as fh:
                try:
                    for _ in _records(fh, self.dialect, strict=True):
                        pass
                except _Malformed as bad:
                    return InputError(self.path, "a quoted value never ends (an unbalanced quote, or a cut file)",
                                      bad.line)
        return None

    def broken_rows(self, raw: pa.Table, quoted: bool) -> np.ndarray:
        """Rows where a text value holds a line break: an open quote ran on over lines
        (only possible where the file has quotes at all)."""
        bad = np.zeros(raw.num_rows, bool)
        if not quoted:
            return bad
        for name in raw.column_names:
            col = raw.column(name)
            if pa.types.is_string(col.type):
                for brk in ("\n", "\r"):
                    bad |= pac.match_substring(col.fill_null(""), brk).to_numpy(zero_copy_only=False)
        return bad

    def to_ours(self, raw: pa.Table, probs: Problems, tally: Tally) -> pa.Table:
        """Our column names and units; columns the file lacks are null; filled columns
        filled (counted in ``tally``), ids normalised."""
        arrays, names = [], []
        for c in self.cols:
            src = self.table.source_name(c.name)
            if src in self.present:
                arr = raw.column(src).combine_chunks() if raw.num_rows else pa.array([], type=self.types[src])
                factor = self.table.factors.get(c.name) if c.numeric else None
                if c.name in self.fill:  # the fill value is in the run's unit: the file's numbers are converted first
                    arr = _filled(arr, c.name, self.fill[c.name], self.dialect.decimal, probs, tally, factor)
                elif factor is not None:
                    arr = pac.multiply(arr, factor)
                if not c.numeric:
                    arr, changed = normalise_text(pac.utf8_trim_whitespace(arr))
                    if c.name in ("member", "case"):
                        tally.normalised(c.name, changed)
            else:
                arr = pa.nulls(raw.num_rows, type=pa.float64() if c.numeric else pa.string())
            arrays.append(arr)
            names.append(c.name)
        return pa.table(arrays, names=names)


@dataclass
class Tally:
    """What reading changed, for the run's notices: cells filled, ids normalised."""

    filled: dict = field(default_factory=dict)  # our column -> cells filled
    examples: dict = field(default_factory=dict)  # member/case -> [(as written, as read)]
    past_end: dict = field(default_factory=dict)  # member -> farthest its stations lie outside it (span unit)
    swapped: list = field(default_factory=list)  # (data row, data row, member, case, x): a jump's rows that look swapped

    def normalised(self, column: str, changed: list[tuple[str, str]]) -> None:
        if changed:
            seen = self.examples.setdefault(column, [])
            seen.extend(pair for pair in changed if pair not in seen)

    def notices(self, path: Path, fill: dict, table: TableMap) -> list[str]:
        out = [f"{path}: {n:,} missing cell(s) of column '{table.source_name(col)}' filled with {fill[col]:g} "
               f"([input] fill in the settings)" for col, n in self.filled.items() if n]
        for col, pairs in self.examples.items():
            shown = ", ".join(f"{a!r} read as {b!r}" for a, b in pairs[:5])
            more = f" and {len(pairs) - 5} more" if len(pairs) > 5 else ""
            out.append(f"{path}: {len(pairs)} {col} id(s) normalised (Unicode NFC, zero-width characters "
                       f"removed): {shown}{more}")
        return out

    def outside(self, t: pa.Table, hair: np.ndarray, over: np.ndarray) -> None:
        """Keep, per member, the farthest of its rows ``hair`` lie outside it (``over``, span unit)."""
        if hair.any():
            members = np.asarray(t.column("member").to_pylist(), dtype=object)
            for m, o in zip(members[hair], over[hair]):
                self.past_end[m] = max(o, self.past_end.get(m, 0.0))

    def swapped_notice(self, spec: CsvSpec, units: UnitSystem) -> list[str]:
        """One line for the jumps whose two rows look swapped (``swapped_jumps``), the first few
        named by their lines."""
        if not self.swapped:
            return []
        found = sorted(self.swapped)
        shown = found[:5]
        lines = record_lines(spec, max(max(a, b) for a, b, *_ in shown))
        named = "; ".join(f"lines {lines[a]} and {lines[b]} (member {m}, case {c}, x = {x:.3f} {units.span})"
                          for a, b, m, c, x in shown) + (f"; and {len(found) - 5} more" if len(found) > 5 else "")
        return [f"{spec.path}: the two rows of a jump look swapped at {len(found)} station(s): the first continues the "
                "shear on the right of the station and the second the shear on its left (a table sorted or shuffled "
                "after the export?). They are read in the file's order, left then right; check them: " + named]

    def past_end_notice(self, path: Path, tolerance: float, units: UnitSystem) -> list[str]:
        """One line for the members whose stations lie before node i or past their length by no
        more than the station tolerance (``tolerance``, the run's internal length): lengths and
        stations rounded differently, read as given."""
        if not self.past_end:
            return []
        names = sorted(self.past_end)
        worst = max(self.past_end.values()) * units.per_span
        shown = ", ".join(names[:5]) + (f" and {len(names) - 5} more" if len(names) > 5 else "")
        return [f"{path}: stations of {len(names)} member(s) lie up to {worst:.2g} {units.length} before node i or past "
                f"the member's length, within the station tolerance ({tolerance:g} {units.length}; rounding of the lengths or "
                f"of the stations): read where they are, the design covers the clear span: {shown}"]


def normalise_text(arr: pa.Array) -> tuple[pa.Array, list[tuple[str, str]]]:
    """Text as Unicode NFC without zero-width characters; the distinct values changed."""
    if not len(arr) or pac.all(pac.string_is_ascii(arr)).as_py() is not False:
        return arr, []
    enc = pac.dictionary_encode(arr)
    values = enc.dictionary
    fixed = pac.utf8_normalize(pac.replace_substring_regex(values, ZERO_WIDTH, ""), "NFC")
    changed = [(a, b) for a, b in zip(values.to_pylist(), fixed.to_pylist()) if a != b]
    if not changed:
        return arr, []
    return fixed.take(enc.indices), changed


def _filled(arr: pa.Array, column: str, value: float, decimal: str, probs: Problems, tally: Tally,
            factor: float | None = None) -> pa.Array:
    """A numeric column read as text, its numbers times ``factor`` (into the run's unit) and
    its missing cells (blank or any missing spelling) set to ``value``; a cell that is
    neither a number nor missing is a problem."""
    text = pac.utf8_trim_whitespace(arr.cast(pa.string()))
    missing = pac.or_(pac.equal(text, ""), pac.is_in(pac.utf8_lower(text), value_set=pa.array(sorted(MISSING_MARKERS))))
    missing = pac.or_(missing, pac.equal(pac.utf8_lower(text), "nan"))
    number = NUMBER_COMMA if decimal == "," else NUMBER
    ok = pac.match_substring_regex(text, number.pattern, ignore_case=True)
    bad = pac.and_(pac.invert(missing), pac.invert(ok)).to_numpy(zero_copy_only=False)
    if bad.any():
        values = text.to_pylist()
        probs.add(bad, column, [f"'{values[r][:40]}' is not a number" for r in np.flatnonzero(bad)[:MAX_REPORTED]])
    clean = pac.if_else(pac.or_(missing, pa.array(bad)), "0", text)
    if decimal == ",":
        clean = pac.replace_substring(clean, ",", ".")
    numbers = pac.cast(clean, pa.float64())
    if factor is not None:
        numbers = pac.multiply(numbers, factor)
    tally.filled[column] = tally.filled.get(column, 0) + int(pac.sum(missing).as_py() or 0)
    return pac.if_else(missing, pa.scalar(float(value)), numbers)


def _nul_error(spec: CsvSpec, offset: int) -> InputError:
    """A NUL byte: its line and, where the line is short enough to read, its column."""
    line = digests.line_of(spec.path, offset)
    column = None
    with open(spec.path, "rb") as fh:
        start = max(0, offset - (1 << 16))
        fh.seek(start)
        around = fh.read(offset - start + (1 << 16))
    k = offset - start
    first, last = around.rfind(b"\n", 0, k) + 1, around.find(b"\n", k)
    if first > 0 or start == 0:
        text = around[first: last if last >= 0 else len(around)].decode(spec.dialect.encoding, errors="replace")
        try:
            fields = next(csv.reader([text.rstrip("\r")], delimiter=spec.dialect.delimiter))
        except (csv.Error, StopIteration):
            fields = []
        for name, value in zip(spec.header, fields):
            if "\x00" in value:
                column = name
                break
    return InputError(spec.path, "a NUL byte (\\x00): the file is damaged (zeros where text should be) "
                                 "or not a text file", line, column)


def stream_blocks(spec: CsvSpec, block: int, only: list[str] | None = None):
    """(raw block, whether the bytes read so far hold a quote) for every block of a large
    file, hashed as it is parsed (the digest recorded at its end); the raw checks of the
    whole file (NUL bytes, overlong lines, a quote that never ends) follow the last block,
    and a NUL byte stops the parser at once."""
    d = spec.dialect
    source = digests.HashingSource(spec.path, d.single_byte_ascii, d.bom)
    try:
        try:
            reader = pcsv.open_csv(source, read_options=spec.read_options(block), parse_options=spec.parse_options(),
                                   convert_options=spec.convert_options(only))
            for batch in reader:
                yield pa.Table.from_batches([batch]), source.scan.quotes > 0 or not d.single_byte_ascii
            while source.read(1 << 20):  # the parser stops at the last record: hash to the end
                pass
        except digests.Damaged:
            raise spec.scan_problem(source.scan) from None
        except (pa.ArrowException, UnicodeError) as exc:
            raise spec.diagnose(exc) from None
    finally:
        source.close()
    if (problem := spec.scan_problem(source.scan)) is not None:
        raise problem


def prepare(path: str | Path, name: str, cols: tuple[Col, ...], cmap: ColumnMap,
            fill: dict | None = None, units: UnitSystem = SI) -> CsvSpec:
    """Check the header: no column named twice, no quantity in two spellings, every
    required column present. The spec reads each column under our (SI) key, converted
    into the unit of ``units``; ``fill`` (column in either spelling -> value in the run's
    unit) gives the value of the missing cells of optional columns."""
    path = Path(path)
    header, dialect = _header(path, cmap.table(name), cols)
    named = [h for k, h in enumerate(header) if h != _unnamed(k)]
    if len(set(named)) != len(named):
        dup = next(h for h in named if named.count(h) > 1)
        raise InputError(path, "the header names this column twice", 1, dup)
    present = set(named)
    table = _resolved(path, cmap.table(name), cols, present, units)
    missing = [c for c in cols if c.required and table.source_name(c.name) not in present]
    if missing:
        raise InputErrors([InputError(path, "required column is missing" + _other_spellings(c.name, units)
                                      + "".join(f"; the header has '{h}'" for h in named if _looks_like(h, c.name)), 1,
                                      table.source_name(c.name)) for c in missing])
    unread, hints = _unread(path, named, cols, table, present)
    fill = {unit_names.si_name(k): v for k, v in (fill or {}).items()}
    fills = {c.name: float(fill[c.name]) for c in cols
             if c.name in fill and c.numeric and not c.required and table.source_name(c.name) in present}
    # every column is read, the export's others as text: a quote left open in any of them would
    # otherwise swallow the lines after it unseen
    types = {h: pa.string() for h in header}
    types.update({table.source_name(c.name): (pa.float64() if c.numeric and c.name not in fills else pa.string())
                  for c in cols if table.source_name(c.name) in present})
    return CsvSpec(path, cols, table, header, frozenset(present), types, dialect, fills, units, unread, hints)


FACE_SHARE = 0.25  # a beam's node-to-face distance above this share of its length is warned about (common practice)
NEAR_MISS = 0.85  # difflib's ratio above which a header name is taken for a misspelling of one of ours
# our optional columns whose absence could make a design unconservative: a header name that looks like one of
# them is refused; one that looks like another column of ours is named in a warning
UNSAFE_ABSENT = frozenset({"T_kNm", "Vb_kN", "N_kN", "lambda", "load_face", "kind", "frame", "fy_mpa",
                           "face_i_mm", "face_j_mm"})  # a face at the node lengthens ln: a lower Ve (18.6.5.1)
UNIT_WORDS = frozenset({"m", "cm", "mm", "in", "ft", "n", "kn", "mn", "lb", "lbf", "kip", "kips", "nm", "nmm", "knm",
                        "knmm", "kncm", "kipft", "kipin", "lbft", "lbin", "mpa", "kpa", "pa", "psi", "ksi", "mm2", "cm2",
                        "m2", "in2", "ft2", "kg", "t"})
AXIS_MARKS = frozenset("xyz0123456789")  # My_kNm, V2_kN: another axis (u: Tu, Vu are factored values)
# what exports call the forces whose absence could be unconservative (common practice: local x along the
# member makes Mx or Tx a torsion and Fx or Nx the axial force; 2/3 and y/z the two shear directions)
QUANTITY_NAMES = {"T_kNm": frozenset({"t", "tu", "torsion", "torque", "torsional_moment", "mt", "tx", "mx", "m1", "t1"}),
                  "N_kN": frozenset({"n", "nu", "p", "pu", "axial", "axial_force", "normal_force", "fx", "nx", "f1",
                                     "n1"}),
                  "Vb_kN": frozenset({"vb", "vy", "vz", "v2", "v3", "fy", "fz", "f2", "f3", "shear_y", "shear_z",
                                      "shear_2", "shear_3"})}


def _looks_like(header_name: str, spelling: str) -> str | None:
    """How a header name looks like one of our spellings: "case" (the same but for upper and
    lower case), "unit" (the same quantity without its unit or in another unit), "spelling" (a
    close misspelling, not the name with an axis or a number added: My_kNm, V2_kN are other
    quantities), or None."""
    low, ours = header_name.lower(), spelling.lower()
    if low == ours:
        return "case"
    if unit_names.unit_of(spelling):
        our_stem = ours.rsplit("_", 1)[0]
        stem, _, word = low.rpartition("_")
        if low == our_stem or (stem == our_stem and word in UNIT_WORDS):
            return "unit"
    match = difflib.SequenceMatcher(None, ours, low)
    changes = [(op, low[j1:j2]) for op, _, _, j1, j2 in match.get_opcodes() if op != "equal"]
    axis_added = all(op == "insert" and set(text) <= AXIS_MARKS for op, text in changes)
    return "spelling" if match.ratio() >= NEAR_MISS and not axis_added else None


QUANTITY_WORDS = {"T_kNm": "the torsion", "N_kN": "the axial force", "Vb_kN": "the shear parallel to b"}


def _quantity_named(header_name: str, missing: set[str]) -> tuple[str, str] | None:
    """(our column, what it is) where a header names, by a word exports use (QUANTITY_NAMES),
    a force whose column is missing and whose absence could be unconservative; else None.
    The words are compared without case, brackets, spaces and unit words (``Torsion [kNm]``)."""
    words = [w for w in re.split(r"[^a-z0-9]+", header_name.lower()) if w and w not in UNIT_WORDS]
    stem = "_".join(words)
    for ours, names in QUANTITY_NAMES.items():
        if ours in missing and stem in names:
            return ours, QUANTITY_WORDS[ours]
    return None


def _unread(path: Path, named: list[str], cols: tuple[Col, ...], table: TableMap,
            present: set[str]) -> tuple[tuple[str, ...], dict[str, str]]:
    """The header's columns that are not read, and for those that look like a column of ours the
    file does not give, what they look like. Where that column's absence could make the design
    unconservative (``UNSAFE_ABSENT``: a torsion, Vb or N read as none, say), the name is refused."""
    read = {table.source_name(c.name) for c in cols}
    absent = [(table.source_name(sp), c.name) for c in cols if table.source_name(c.name) not in present
              for sp in unit_names.spellings(c.name)]
    unread = tuple(h for h in named if h not in read)
    hints = {}
    missing = {ours for _, ours in absent}
    for h in unread:
        found = next(((how, meant, ours) for meant, ours in absent if (how := _looks_like(h, meant))), None)
        if found is None:
            if (named_as := _quantity_named(h, missing)) is not None:
                raise InputError(path, f"is not a column shearpost reads, and its name is what exports call "
                                       f"{named_as[1]} (column '{table.source_name(named_as[0])}'), which this table "
                                       f"does not give: read as absent, {named_as[1]} would be taken as zero. Rename or "
                                       "map it (--map) if it is that quantity, else remove the column", 1, h)
            continue
        how, meant, ours = found
        hint = (f"did you mean column '{meant}'? Names are exact" if how != "unit" else
                f"it looks like column '{meant}' without its unit or in another unit: give it as '{meant}', or map it "
                "with its unit in a column-mapping file (--map, units = ...)")
        if ours in UNSAFE_ABSENT:
            raise InputError(path, f"is not a column shearpost reads; {hint} (read as absent, it would count as not "
                                   "given: rename it, or map it in a column-mapping file, --map)", 1, h)
        hints[h] = hint
    return unread, hints


def si_keyed(given: TableMap) -> TableMap:
    """A mapping whose columns are named in either unit system, keyed by the SI names, its
    factors converting into SI units (for readers that work in SI: element exports)."""
    columns, factors = {}, {}
    for key in {*given.columns, *given.factors}:
        si = unit_names.si_name(key)
        if key in given.columns:
            columns[si] = given.columns[key]
        f = given.factors.get(key, 1.0) * unit_names.factor(key, si)
        if f != 1.0 or key in given.factors:
            factors[si] = f
    return replace(given, columns=columns, factors=factors)


def _other_spellings(si: str, units: UnitSystem) -> str:
    others = [sp for sp in unit_names.spellings(si) if sp != units.col(si)]
    return f" (or {' or '.join(others)})" if others else ""


def _resolved(path: Path, given: TableMap, cols: tuple[Col, ...], present: set[str], units: UnitSystem) -> TableMap:
    """The mapping under our (SI) keys: for each of our columns, the export column that holds
    it (a mapping file's, else a header's spelling of it) and the factor into the unit of the
    run's spelling. Two spellings of one quantity are an error naming the second."""
    columns, factors = {}, {}
    for c in cols:
        spelt = unit_names.spellings(c.name)
        mapped = [sp for sp in spelt if sp in given.columns or sp in given.factors]
        found = mapped or [sp for sp in spelt if sp in present]
        if len(found) > 1:
            where = "the mapping file maps" if mapped else "the header has"
            raise InputError(path, f"{where} both {found[0]} and {found[1]}: give each quantity in one unit", 1,
                             given.source_name(found[1]))
        if not found:
            continue
        sp = found[0]
        columns[c.name] = given.source_name(sp)
        f = given.factors.get(sp)
        to_run = unit_names.factor(sp, units.col(c.name)) if c.numeric else 1.0
        if to_run != 1.0:
            f = to_run if f is None else f * to_run
        if f is not None:
            factors[c.name] = f
    return replace(given, columns={k: v for k, v in columns.items() if v != k}, factors=factors)


def read_table(path: str | Path, name: str, cols: tuple[Col, ...], cmap: ColumnMap,
               fill: dict | None = None, units: UnitSystem = SI) -> tuple[pa.Table, Problems, list[str]]:
    """Read one (small) CSV whole into a pyarrow table with our column keys, in the units of
    ``units``; the problems found so far and the notices."""
    spec = prepare(path, name, cols, cmap, fill, units)
    data = digests.read_bytes(spec.path)
    scan = digests.scan_bytes(data, spec.dialect.single_byte_ascii)
    if (problem := spec.scan_problem(scan)) is not None:
        raise problem
    try:
        # one block for the whole (small) file, so that no value, however long, straddles two blocks
        block = max(1 << 20, len(data) + 1)
        raw = pcsv.read_csv(pa.BufferReader(memoryview(data)[spec.dialect.bom:]), read_options=spec.read_options(block),
                            parse_options=spec.parse_options(), convert_options=spec.convert_options())
    except (pa.ArrowException, UnicodeError) as exc:
        raise spec.diagnose(exc) from None
    probs = Problems(spec)
    tally = Tally()
    out = spec.to_ours(raw, probs, tally)
    if out.num_rows == 0:
        raise InputError(spec.path, "has a header but no data rows", 1)
    probs.add(spec.broken_rows(raw, scan.quotes > 0 or not spec.dialect.single_byte_ascii), None, BROKEN)
    return out, probs, [*spec.dialect.notes, *spec.unread_notes(), *tally.notices(spec.path, spec.fill, spec.table)]


def _num(t: pa.Table, name: str) -> np.ndarray:
    return t.column(name).to_numpy(zero_copy_only=False).astype(float)


def _str(t: pa.Table, name: str) -> np.ndarray:
    return np.asarray(t.column(name).fill_null("").to_pylist(), dtype=object)


def _blank(t: pa.Table, name: str) -> np.ndarray:
    """True where a text column is empty (fast, for large tables)."""
    col = t.column(name).fill_null("")
    return pac.equal(col, "").to_numpy(zero_copy_only=False)


def checked_block(spec: CsvSpec, raw: pa.Table, quoted, first_row: int, tally: Tally):
    """One block of a forces file (rows from ``first_row``, 0-based) in our schema, with what
    every forces reader checks first: broken rows, numbers, text. Returns the table, its
    Problems (raise them once the reader's own checks are added) and the rows' ids."""
    ids = np.arange(first_row, first_row + raw.num_rows, dtype=np.int64)
    probs = Problems(spec, ids)
    t = spec.to_ours(raw, probs, tally)
    probs.add(spec.broken_rows(raw, quoted), None, BROKEN)
    _check_numbers(t, spec, probs)
    _check_text(t, spec, probs)
    return t, probs, ids


def _check_numbers(t: pa.Table, spec: CsvSpec, probs: Problems, cols: tuple[Col, ...] | None = None,
                   blank_ok=BLANK_NOT_GIVEN) -> None:
    """No blank, NaN or infinite number in a column the file has (a blank is allowed only
    where it is documented as "not given": ``blank_ok``; filled columns have no missing
    cells left). ``cols``: those of the file's columns that ``t`` holds (default: all)."""
    for c in spec.cols if cols is None else cols:
        if not c.numeric or spec.table.source_name(c.name) not in spec.present:
            continue
        col = t.column(c.name)
        v = _num(t, c.name)
        blank = col.is_null().to_numpy(zero_copy_only=False)
        hint = missing_hint(spec.fill_name(c.name), c.required)
        probs.add(np.isnan(v) & ~blank, c.name, f"missing or NaN value (NaN): {hint}")
        if c.name not in blank_ok:
            probs.add(blank, c.name, f"missing or NaN value (a blank cell): {hint}")
        probs.add(np.isinf(v), c.name, "value is infinite")


def _check_text(t: pa.Table, spec: CsvSpec, probs: Problems, cols: tuple[Col, ...] | None = None) -> None:
    """Required text present; no missing-value spelling (#N/A, NA, null, ...) as an id or
    label, no NUL. ``cols``: those of the file's columns that ``t`` holds (default: all)."""
    for c in spec.cols if cols is None else cols:
        if c.numeric or spec.table.source_name(c.name) not in spec.present:
            continue
        if c.required:
            probs.add(_blank(t, c.name), c.name, "missing value")
        rows, values = _marker_rows(t.column(c.name), c.name in FREE_TEXT)
        probs.add(rows, c.name, [("holds a NUL byte (\\x00): the file is damaged" if "\x00" in v else
                                  f"'{v}' marks a missing value, not an id or label: "
                                  f"{missing_hint(spec.fill_name(c.name), True)}")
                                 for v in values])


def _marker_rows(col, markers: bool) -> tuple[np.ndarray, list[str]]:
    """Rows holding a NUL character or (``markers``) a missing-value spelling, and those
    values (distinct values checked once)."""
    codes, values = _codes(col)
    bad = np.array([v is not None and ("\x00" in v or (markers and v.lower() in MISSING_MARKERS))
                    for v in values], bool)
    if not bad.any():
        return np.zeros(0, np.int64), []
    rows = np.flatnonzero(bad[codes])
    return rows, [values[codes[r]] for r in rows[:MAX_REPORTED]]


def case_only_matches(members: set[str], forced: set[str]) -> list[str]:
    """A warning listing the ids of the forces table that match a member id only when
    upper and lower case are not told apart (they are not matched)."""
    folded: dict[str, list[str]] = {}
    for m in members:
        folded.setdefault(m.casefold(), []).append(m)
    pairs = [(f, sorted(folded[f.casefold()])[0]) for f in sorted(forced - members) if f.casefold() in folded]
    if not pairs:
        return []
    shown = ", ".join(f"{f!r} ~ {m!r}" for f, m in pairs[:10])
    more = f" and {len(pairs) - 10} more" if len(pairs) > 10 else ""
    return [f"{len(pairs)} member id(s) of the forces table match a member only when upper and lower case are "
            f"not told apart, and are not matched (forces ~ members): {shown}{more}"]


# Magnitudes beyond which a value is taken as a unit mistake, not a structure (common practice).
PLAUSIBLE_MEMBERS = {"length_m": (0.05, 500.0), "b_mm": (50.0, 20000.0), "h_mm": (50.0, 20000.0),
                     "d_mm": (25.0, 20000.0), "cover_mm": (None, 1000.0), "fc_mpa": (None, 200.0),
                     "fyt_mpa": (None, 2000.0), "fy_mpa": (None, 2000.0), "face_i_mm": (None, 20000.0),
                     "face_j_mm": (None, 20000.0), "bf_mm": (None, 50000.0), "hf_mm": (None, 5000.0),
                     "as_tension_mm2": (None, 1e7), "as_top_i_mm2": (None, 1e7), "as_bot_i_mm2": (None, 1e7),
                     "as_top_j_mm2": (None, 1e7), "as_bot_j_mm2": (None, 1e7), "db_long_mm": (6.0, 80.0),
                     "diameter_mm": (50.0, 20000.0),
                     **{c: (-1e6, 1e6) for c in COORDINATES}}
PLAUSIBLE_FORCES = {"x_m": (None, 500.0), "V_kN": (-1e6, 1e6), "N_kN": (-1e7, 1e7), "T_kNm": (-1e7, 1e7),
                    "M_kNm": (-1e8, 1e8)}


def _check_plausible(t: pa.Table, probs: Problems, limits: dict, units: UnitSystem = SI) -> None:
    """Limits given in SI, checked in the run's units (the message names the unit of the
    limit: a column in the other system's unit is read converted)."""
    for name, (lo, hi) in limits.items():
        ours = units.col(name)
        f = unit_names.factor(name, ours)
        lo, hi = (None if lo is None else lo * f), hi * f
        unit = f" {unit_names.unit_label(ours)}".rstrip()
        v = _num(t, name)
        with np.errstate(invalid="ignore"):
            if lo is not None:
                probs.add((v < lo) & (v > 0 if lo > 0 else True), name,
                          f"{lo:g}{unit} is the least plausible value: check the units")
            probs.add(np.abs(v) > hi if lo is not None and lo < 0 else v > hi, name,
                      f"beyond {hi:g}{unit}, not plausible: check the units")


def _check_choice(values: np.ndarray, allowed: tuple[str, ...], column: str, probs: Problems) -> None:
    bad = ~np.isin(values, allowed)
    probs.add(bad, column, [f"'{v}' is not one of {', '.join(allowed)}" for v in values[bad][:MAX_REPORTED]])


def frame_bar_problems(frame: np.ndarray, kind: np.ndarray, bars: dict[str, np.ndarray],
                       support_i: np.ndarray, support_j: np.ndarray, named=str) -> list[tuple[np.ndarray, str, str]]:
    """What a moment-frame beam lacks (ACI 318-19 Chapter 18), as (rows, column, message).

    Beams of special and intermediate frames need the steel at both faces and the smallest
    bar diameter (Mpr or Mn at the faces: 18.6.5.1, 18.4.2.3(a); hoop spacing: 18.6.4.4,
    18.4.2.4) and a joint at each end (a free end has no Mpr to develop); beams of ordinary
    frames need them only for the two-bar check of 18.3.2, so all or none. ``bars`` holds
    the BEAM_END_BARS columns (NaN where not given); ``named`` gives the name the file uses
    for one of our columns (its unit system's spelling). The messages are templates of each
    member's frame, filled by ``with_frame``."""
    beam = kind == "beam"
    capacity = beam & np.isin(frame, ("special", "intermediate"))
    ordinary = beam & (frame == "ordinary")
    given = np.column_stack([~np.isnan(bars[c]) for c in BEAM_END_BARS])
    out = []
    for k, c in enumerate(BEAM_END_BARS):
        out.append((capacity & ~given[:, k], c,
                    f"a beam of {'{a}'} {'{frame}'} moment frame needs {named(c)} (ACI 318-19 "
                    + ("18.6.4.4, 18.4.2.4: the hoop spacing" if c == "db_long_mm" else
                       "18.6.5.1, 18.4.2.3: Mpr or Mn at the faces") + ")"))
        out.append((ordinary & given.any(axis=1) & ~given[:, k], c,
                    f"an ordinary-frame beam with bars needs all of {', '.join(map(named, BEAM_END_BARS))} (the two-bar "
                    "check of "
                    "ACI 318-19 18.3.2), or none"))
    for end, sup in (("support_i", support_i), ("support_j", support_j)):
        out.append((capacity & (sup == "free"), end, "a beam of {a} {frame} moment frame spans between joints; a free "
                                                     "end develops no Mpr or Mn (ACI 318-19 18.6.5.1, 18.4.2.3)"))
    return out


def read_members(path: str | Path, cmap: ColumnMap, frame_by_group: dict[str, str] | None = None,
                 fill: dict | None = None, units: UnitSystem = SI) -> tuple[pa.Table, list[str]]:
    """members.csv -> validated table (the columns of ``units``, d filled, defaults applied) and
    warnings. Limits are those of the edition of ACI 318-19 in the run's units.

    ``frame_by_group`` (settings [frames].by_group) gives the frame of members whose `frame`
    cell is empty, by their group label; a value in the file wins. ``fill`` gives the value
    of the missing cells of optional columns."""
    u = aci.edition(units.name)
    t, probs, notices = read_table(path, "members", MEMBER_COLUMNS, cmap, fill, units)
    named = probs.table.source_name  # the file's name of one of our columns
    spec = probs.spec
    if named("diameter_mm") not in spec.present:  # no circular section: b and h are required columns
        missing = [c for c in ("b_mm", "h_mm") if named(c) not in spec.present]
        if missing:
            raise InputErrors([InputError(spec.path, "required column is missing", 1, named(c)) for c in missing])
    _check_numbers(t, spec, probs, blank_ok=BLANK_NOT_GIVEN | {"b_mm", "h_mm"})  # b, h: checked below
    _check_text(t, spec, probs)
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
    _check_plausible(t, probs, PLAUSIBLE_MEMBERS, units)
    # a circular section (columns) gives its diameter and neither b nor h; every other gives both
    diameter = _num(t, "diameter_mm")
    circular = ~np.isnan(diameter)
    for name, v in (("b_mm", b), ("h_mm", h)):
        probs.add(~circular & np.isnan(v), name, f"missing or NaN value (give {named('b_mm')} and {named('h_mm')}, or "
                                                 f"{named('diameter_mm')} for a circular column)")
        probs.add(circular & ~np.isnan(v), name, f"a circular section ({named('diameter_mm')}) takes no "
                                                 f"{named('b_mm')} or {named('h_mm')}: leave them empty")
    probs.add(circular & (kind == "beam"), "diameter_mm", "circular sections are designed as columns only (kind column)")
    probs.add(circular & ~np.isnan(_num(t, "d_mm")), "d_mm", f"a circular section takes d = 0.8 D (22.5.2.2): give "
                                                             f"{named('cover_mm')} (face to bar centre) instead")
    probs.add(circular & np.isnan(_num(t, "cover_mm")), "cover_mm", f"a circular column needs {named('cover_mm')}, "
                                                                    "face to the centre of its longitudinal bars")
    h = np.where(circular, diameter, h)
    d_given, cover = _num(t, "d_mm"), _num(t, "cover_mm")
    neither = np.isnan(d_given) & np.isnan(cover)
    alike = [h for h, hint in spec.hints.items() if f"'{named('d_mm')}'" in hint or f"'{named('cover_mm')}'" in hint]
    probs.add(neither & ~circular, "d_mm", f"give {named('d_mm')} or {named('cover_mm')}"
              + "".join(f"; the header has '{h}' (names are exact)" for h in alike))
    d = np.where(circular, 0.8 * diameter, np.where(np.isnan(d_given), h - cover, d_given))
    probs.add(~np.isnan(d_given) & (d_given <= 0), "d_mm", "must be greater than zero")
    probs.add(~np.isnan(d_given) & (d_given >= h), "d_mm", f"effective depth must be less than {named('h_mm')}")
    probs.add(np.isnan(d_given) & ~np.isnan(cover) & ((cover <= 0) | (cover >= h)), "cover_mm",
              f"must be greater than zero and less than {named('h_mm')}")
    least_d = 25.0 * unit_names.factor("d_mm", units.col("d_mm"))  # 25 mm (1 in)
    probs.add(np.isnan(d_given) & (cover > 0) & (cover < h) & (h - cover < least_d), "cover_mm",
              f"leaves an effective depth under {least_d:.3g} {units.length}, not plausible: check the units")

    fc, fyt = _num(t, "fc_mpa"), _num(t, "fyt_mpa")
    probs.add(fc < u.fc_min, "fc_mpa", f"f'c below {u.fc_min:,g} {units.stress}, the least ACI 318-19 19.2.1.1 admits")
    probs.add(fyt <= 0, "fyt_mpa", "must be greater than zero")
    fy = _num(t, "fy_mpa")
    probs.add(fy <= 0, "fy_mpa", "must be greater than zero")
    lam = _num(t, "lambda")
    probs.add((lam <= 0) | (lam > 1), "lambda", "lightweight factor must be in (0, 1]")
    face_i, face_j = np.nan_to_num(_num(t, "face_i_mm")), np.nan_to_num(_num(t, "face_j_mm"))
    probs.add(face_i < 0, "face_i_mm", "must not be negative")
    probs.add(face_j < 0, "face_j_mm", "must not be negative")
    with np.errstate(over="ignore"):  # an absurd length is reported by the plausibility check
        probs.add((face_i + face_j) >= L * units.per_span, "face_j_mm", "support faces leave no clear span")
    bf, hf = _num(t, "bf_mm"), _num(t, "hf_mm")
    probs.add(~np.isnan(bf) & (bf < b), "bf_mm", f"flange width must be at least the web width {named('b_mm')}")
    probs.add(~np.isnan(hf) & ((hf <= 0) | (hf >= h)), "hf_mm", f"flange thickness must be in (0, {named('h_mm')})")
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
    for rows, column, message in frame_bar_problems(frame, kind, bars, _str(t, "support_i"), _str(t, "support_j"),
                                                    named):
        rows = np.flatnonzero(rows)
        probs.add(rows, column, [with_frame(message, frame[r]) + (
            f" (frame from [frames].by_group of group '{group[r]}')" if from_group[r] else "") for r in rows[:MAX_REPORTED]])
    with np.errstate(over="ignore"):  # an absurd section is reported by the plausibility check
        gross = b * h
    for c in BEAM_END_BARS[:4]:
        probs.add(bars[c] > gross, c, f"more steel than the gross section {named('b_mm')} x {named('h_mm')}: check the "
                                      "units")
    coords = np.column_stack([_num(t, c) for c in COORDINATES])
    some = ~np.isnan(coords)
    partial = some.any(axis=1) & ~some.all(axis=1)
    for k, c in enumerate(COORDINATES):
        probs.add(partial & ~some[:, k], c, f"give all six end coordinates ({', '.join(map(named, COORDINATES))}) "
                                            "or none")
    probs.raise_if_any()

    warnings = notices
    for end, face in (("i", face_i), ("j", face_j)):  # a beam's: half a support's width, a quarter of it is rare
        wide = (kind == "beam") & (face > FACE_SHARE * L * units.per_span) \
            & (face + (face_j if end == "i" else face_i) < L * units.per_span)
        for m, f, length in zip(member[wide], face[wide], L[wide]):
            warnings.append(f"member {m}: {named(f'face_{end}_mm')} = {f:,g} {units.length} is more than a quarter "
                            f"of its length ({length:g} {units.span}): the node-to-face distance is half the supporting "
                            "member's width; check the value (the clear span is designed as given)")
    # the cap applies in the design whatever the excess; said where fyt is more than a grade's soft conversion above
    # it (413.7 MPa = 60,002 psi is Grade 60 given in MPa, not a stronger steel)
    capped = fyt > u.fyt_max * aci.GRADE_SOFT_CONVERSION
    if capped.any():  # one line for them all: it must not bury the other warnings
        shown = ", ".join(f"{m} ({v:,g} {units.stress})" for m, v in zip(member[capped][:5], fyt[capped][:5]))
        more = f" and {int(capped.sum()) - 5} more" if capped.sum() > 5 else ""
        warnings.append(f"fyt of {int(capped.sum())} member(s) capped at {u.fyt_max:,g} {units.stress} for shear "
                        f"(ACI 318-19 20.2.2.4): {shown}{more}")
    fy_default = np.isnan(fy)
    out = t.set_column(t.schema.get_field_index("kind"), "kind", pa.array(kind.tolist(), pa.string()))
    out = out.set_column(out.schema.get_field_index("load_face"), "load_face", pa.array(load_face.tolist(), pa.string()))
    out = out.set_column(out.schema.get_field_index("frame"), "frame", pa.array(frame.tolist(), pa.string()))
    out = out.set_column(out.schema.get_field_index("d_mm"), "d_mm", pa.array(d))
    # fy defaults to Grade 420 | 60, the usual longitudinal bar (common practice); used only for rho_w bounds.
    out = out.set_column(out.schema.get_field_index("fy_mpa"), "fy_mpa",
                         pa.array(np.where(fy_default, u.fy_default, fy)))
    out = out.set_column(out.schema.get_field_index("lambda"), "lambda", pa.array(np.where(np.isnan(lam), 1.0, lam)))
    out = out.set_column(out.schema.get_field_index("face_i_mm"), "face_i_mm", pa.array(face_i))
    out = out.set_column(out.schema.get_field_index("face_j_mm"), "face_j_mm", pa.array(face_j))
    for name in ("level", "group"):
        out = out.set_column(out.schema.get_field_index(name), name, pa.array(_str(out, name).tolist(), pa.string()))
    return out.rename_columns(units.cols(out.column_names)), warnings


class ForcesReader:
    """forces.csv, read and validated in blocks so that memory does not grow with the file.

    ``batches()`` yields validated tables (our columns plus ``_row``, the data-row number
    for exact error lines); ``check_part()`` runs the checks that need all rows of a
    member (a third row at a station, exact duplicates) on a member-complete part.
    """

    BLOCK = 64 << 20  # bytes of CSV per block

    def __init__(self, path: str | Path, cmap: ColumnMap, lengths_m: dict[str, float] | None = None,
                 cases: pa.Table | None = None, cases_path: str | Path | None = None, tolerance_mm: float = 1.0,
                 fill: dict | None = None, units: UnitSystem = SI):
        """``lengths_m``: member lengths in the run's span unit (m or ft); ``tolerance_mm``: rows
        closer than this (mm or in, the run's internal length) are one station; the batches
        come in the run's units and under its column names."""
        self.units = units
        self.spec = prepare(path, "forces", FORCE_COLUMNS, cmap, fill, units)
        self.tolerance_mm = tolerance_mm
        self.path = self.spec.path
        self.lengths_m = lengths_m
        self.cases, self.cases_path = cases, cases_path
        self.case_names: set[str] = set()
        self.member_names: set[str] = set()
        self.rows = 0
        self.tally = Tally()

    def size(self) -> int:
        return self.path.stat().st_size

    def notices(self) -> list[str]:
        """What reading changed (after ``batches``): cells filled, ids normalised. How the
        file is written (a detected dialect) is in ``spec.dialect.notes``. The columns not used
        come first."""
        return [*self.spec.unread_notes(), *self.tally.notices(self.path, self.spec.fill, self.spec.table),
                *self.tally.past_end_notice(self.path, self.tolerance_mm, self.units),
                *self.tally.swapped_notice(self.spec, self.units)]

    def _stream(self, only: list[str] | None = None):
        return stream_blocks(self.spec, self.BLOCK, only)

    def forget_members(self) -> None:
        """Let go of what was kept per member while reading (the lengths the stations were
        checked against, the ids seen), once the notices that need them are given: the design
        that follows the ingest needs neither (about 190 MB at 580,000 members)."""
        self.lengths_m, self.member_names = None, set()

    def member_ids(self) -> set[str]:
        """The member ids of the file (reads one column)."""
        out: set[str] = set()
        for t, _ in self._stream(["member"]):
            col = normalise_text(pac.utf8_trim_whitespace(t.column(self.spec.table.source_name("member")).combine_chunks()))[0]
            out.update(pac.unique(col).to_pylist())
        return out

    def batches(self):
        self.rows, self.case_names, self.member_names, self.tally = 0, set(), set(), Tally()
        for raw, quoted in self._stream():
            t, probs, ids = checked_block(self.spec, raw, quoted, self.rows, self.tally)
            x = _num(t, "x_m")
            before = x < -self.tolerance_mm / self.units.per_span  # within the tolerance: rounding, read as given
            probs.add(before, "x_m", f"station before node i ({self.spec.table.source_name('x_m')} < 0)")
            self.tally.outside(t, (x < -1e-9) & ~before, -x)
            _check_plausible(t, probs, PLAUSIBLE_FORCES, self.units)
            if self.lengths_m is not None:
                L = _lookup(t.column("member"), self.lengths_m)
                past = x - L * (1 + 1e-9) - 1e-6
                beyond = past > self.tolerance_mm / self.units.per_span  # a hair past: rounding (one station)
                self.tally.outside(t, (past > 0) & ~beyond, x - L)
                span = self.units.span
                probs.add(beyond, "x_m", [f"station {x[r]:g} {span} lies beyond the member length {L[r]:g} {span}"
                                          for r in np.flatnonzero(beyond)[:MAX_REPORTED]])
            probs.raise_if_any()
            for name in ("N_kN", "T_kNm", "M_kNm", "Vb_kN"):  # absent from the file: zero (present: checked above)
                t = t.set_column(t.schema.get_field_index(name), name, pac.fill_null(t.column(name), 0.0))
            self.rows += t.num_rows
            self.case_names.update(pac.unique(t.column("case")).to_pylist())
            self.member_names.update(pac.unique(t.column("member")).to_pylist())
            yield t.append_column("_row", pa.array(ids)).rename_columns([*self.units.cols(t.column_names), "_row"])
        if self.rows == 0:
            raise InputError(self.path, "has a header but no data rows", 1)
        if self.cases is not None:
            check_cases_cover_forces(self.cases, self.case_names, self.cases_path)

    def check_part(self, t: pa.Table) -> None:
        """Checks of a member-complete part (the run's column names) sorted by member, case,
        station and _row."""
        probs = Problems(self.spec, t.column("_row").to_numpy())
        _check_station_rows(t, probs, presorted=True, tolerance_mm=self.tolerance_mm, units=self.units)
        probs.raise_if_any()
        self.tally.swapped.extend(swapped_jumps(t, self.tolerance_mm, self.units))

    def read_all(self) -> pa.Table:
        """The whole file as one validated table (for small files and tests)."""
        t = sort_part(pa.concat_tables(list(self.batches())))
        self.check_part(t)
        return t.drop_columns(["_row"])


def station_column(t: pa.Table) -> str:
    """The station column of a forces table in either unit system (x_m or x_ft)."""
    return next(c for c in unit_names.spellings("x_m") if c in t.column_names)


def sort_part(t: pa.Table) -> pa.Table:
    """Rows by member, case and station; the file row breaks ties, so the two rows of a
    jump keep their left-then-right order. Ids are sorted once as distinct values and
    the rows by their ranks (much faster than comparing strings row by row)."""
    keys = [_ranks(t.column("member")), _ranks(t.column("case")), t.column(station_column(t)).to_numpy(),
            t.column("_row").to_numpy()]
    if _in_order(keys):  # a file already sorted by member, case and station: nothing to move
        return t
    return t.take(pa.array(np.lexsort(keys[::-1])))


def _in_order(keys: list[np.ndarray]) -> bool:
    """Whether the rows are already in the order of the keys (first key first), as lexsort
    would put them: one pass over neighbouring rows, no sort."""
    if not len(keys[0]):
        return True
    tied = np.ones(len(keys[0]) - 1, bool)  # rows equal on every key so far
    for k in keys:
        a, b = k[:-1], k[1:]
        if np.any(tied & (b < a)):
            return False
        tied &= a == b
    return True


def _ranks(col: pa.ChunkedArray) -> np.ndarray:
    """Rank of each row's value among the distinct values, in the order Arrow sorts text."""
    codes, values = _codes(col)
    rank = np.empty(len(values), np.int64)
    rank[np.argsort(np.array(values, dtype=object), kind="stable")] = np.arange(len(values))
    return rank[codes]


def read_forces(path: str | Path, cmap: ColumnMap, lengths_m: dict[str, float] | None = None,
                tolerance_mm: float = 1.0, units: UnitSystem = SI, fill: dict | None = None) -> pa.Table:
    """forces.csv -> validated table (the columns of ``units``); optional N, T, M default to zero."""
    return ForcesReader(path, cmap, lengths_m, tolerance_mm=tolerance_mm, fill=fill, units=units).read_all()


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


def swapped_jumps(t: pa.Table, tolerance_mm: float, units: UnitSystem) -> list[tuple]:
    """The jumps (two rows at one station) of a part sorted by member, case, station and file
    row whose rows look swapped: V extrapolated to the station from the two stations on each
    side (straight lines, as a distributed load gives) meets the second row on the left and the
    first on the right far better than the other way round (the order as given misses by more
    than half the jump, swapped by less than a tenth of that). Common practice: an export
    writes the left value first; a table sorted by value or shuffled loses that order. Each
    as (data row of the first, of the second, member, case, x in the span unit)."""
    m_idx, members = _codes(t.column("member"))
    c_idx, cases = _codes(t.column("case"))
    x = t.column(station_column(t)).to_numpy() * units.per_span  # mm | in
    v = t.column(units.col("V_kN")).to_numpy()
    n = len(x)
    if n < 6:
        return []
    seg = m_idx.astype(np.int64) * (len(cases) + 1) + c_idx
    first = np.flatnonzero((seg[1:] == seg[:-1]) & (np.abs(np.diff(x)) <= tolerance_mm))  # rows i, i + 1: a jump
    in_pair = np.zeros(n, bool)
    in_pair[first], in_pair[first + 1] = True, True
    i = first[(first >= 2) & (first + 3 < n)]
    l1, l2, r1, r2 = i - 1, i - 2, i + 2, i + 3
    plain = ~(in_pair[l1] | in_pair[l2] | in_pair[r1] | in_pair[r2])
    ok = plain & (seg[l2] == seg[i]) & (seg[r2] == seg[i]) & (x[l1] > x[l2]) & (x[r2] > x[r1])
    i, l1, l2, r1, r2 = i[ok], l1[ok], l2[ok], r1[ok], r2[ok]
    left = v[l1] + (v[l1] - v[l2]) * (x[i] - x[l1]) / (x[l1] - x[l2])
    right = v[r1] + (v[r1] - v[r2]) * (x[i] - x[r1]) / (x[r1] - x[r2])
    a, b = v[i], v[i + 1]
    given, swapped = np.abs(a - left) + np.abs(b - right), np.abs(b - left) + np.abs(a - right)
    bad = (given > 0.5 * np.abs(a - b)) & (swapped < 0.1 * given)
    rows = t.column("_row").to_numpy()
    return [(int(rows[k]), int(rows[k + 1]), members[m_idx[k]], cases[c_idx[k]], x[k] / units.per_span)
            for k in i[bad]]


def _check_station_rows(t: pa.Table, probs: Problems, presorted: bool = False, tolerance_mm: float = 0.0,
                        units: UnitSystem = SI) -> None:
    """At most two rows per (member, case, station): two are a jump (equal rows a jump of
    zero, as chained elements give at a node). Rows closer than ``tolerance_mm`` (the run's
    internal length, mm or in) are one station. ``presorted``: rows already grouped by
    member and case and sorted by x."""
    m_idx, _ = _codes(t.column("member"))
    c_idx, _ = _codes(t.column("case"))
    x = t.column(station_column(t)).to_numpy()
    order = np.arange(len(x)) if presorted else np.lexsort((x, c_idx, m_idx))
    ms, cs, xs = m_idx[order], c_idx[order], x[order]
    dx = np.diff(xs)
    same = (ms[1:] == ms[:-1]) & (cs[1:] == cs[:-1]) & ((dx == 0) | (dx * units.per_span < tolerance_mm))
    triple = np.zeros(len(order), bool)
    triple[2:] = same[1:] & same[:-1]
    where = "one station" if tolerance_mm <= 0 else \
        f"one station (rows within {tolerance_mm:g} {units.length} are one)"
    probs.add(np.sort(order[triple]), "x_m", f"a third row at {where}; a jump takes exactly two rows")


def read_cases(path: str | Path, cmap: ColumnMap, notices: list[str] | None = None) -> pa.Table:
    """cases.csv -> validated table of basic load cases and their types (how the file was
    read is added to ``notices``)."""
    t, probs, notes = read_table(path, "cases", CASE_COLUMNS, cmap)
    if notices is not None:
        notices.extend(notes)
    _check_text(t, probs.spec, probs)
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
