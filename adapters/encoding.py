"""How a CSV file is written: its encoding, field delimiter and decimal separator.

Each is taken from the column-mapping file where it names one (``encoding``,
``delimiter``, ``decimal`` in the table's section), else detected from the start of
the file, and every guess is reported as a notice:

- encoding: a byte-order mark says UTF-8, UTF-16 LE or UTF-16 BE; without one, a
  pattern of zero bytes in every other position is UTF-16 (LE or BE by where they
  fall); else UTF-8 where the text decodes as UTF-8; else, where it holds no UTF-8
  sequence at all and decodes as Windows-1252, Windows-1252 (the usual ANSI export of
  spreadsheet programs in Western locales). A file that mixes UTF-8 with other bytes
  is read as UTF-8, and the stray byte is an error on its line.
- delimiter: the one of ``,`` ``;`` and tab that splits the header into the most
  known column names (comma on a tie).
- decimal separator: with a delimiter other than a comma, a comma where the sample
  of data rows shows numbers such as ``1,5`` in a known numeric column.

Common practice of CSV exports (RFC 4180 for the quoting; Unicode for the BOMs).
"""

from __future__ import annotations

import codecs
import csv
import io
import re
from dataclasses import dataclass, field, replace
from pathlib import Path

from postproc.adapters.errors import InputError

ENCODINGS = ("utf-8", "utf-16-le", "utf-16-be", "cp1252", "latin-1")
DELIMITERS = {",": "comma", ";": "semicolon", "\t": "tab"}
DECIMALS = (".", ",")
UTF32_BOMS = (b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")
BOMS = ((b"\xef\xbb\xbf", "utf-8"), (b"\xff\xfe", "utf-16-le"), (b"\xfe\xff", "utf-16-be"))
COMMA_DECIMAL = re.compile(r"^[+-]?\d*,\d+([eE][+-]?\d+)?$")
SAMPLE_ROWS = 500


@dataclass(frozen=True)
class Dialect:
    """The encoding (a Python codec name), byte-order mark, delimiter and decimal separator."""

    encoding: str = "utf-8"
    bom: int = 0  # bytes of byte-order mark at the start of the file
    delimiter: str = ","
    decimal: str = "."
    notes: tuple[str, ...] = field(default=())

    @property
    def single_byte_ascii(self) -> bool:
        """Quotes, line ends and NULs are single ASCII bytes (UTF-8 and the 8-bit code pages)."""
        return not self.encoding.startswith("utf-16")

    def open_text(self, path: Path, errors: str = "strict") -> io.TextIOWrapper:
        """The file as text after its byte-order mark, with line ends left to the csv module."""
        raw = open(path, "rb")
        raw.seek(self.bom)
        return io.TextIOWrapper(raw, encoding=self.encoding, errors=errors, newline="")

    def reader(self, fh, strict: bool = False):
        return csv.reader(fh, delimiter=self.delimiter, strict=strict)

    def decode(self, data: bytes, errors: str = "strict") -> str:
        return data.decode(self.encoding, errors=errors)

    @property
    def name(self) -> str:
        return {"utf-8": "UTF-8", "utf-16-le": "UTF-16 LE", "utf-16-be": "UTF-16 BE", "cp1252": "Windows-1252",
                "latin-1": "Latin-1"}.get(self.encoding, self.encoding)


def check_choice(path, section: str, key: str, value) -> str:
    """A dialect value of the mapping file, checked; InputError naming the file otherwise."""
    allowed = {"encoding": ENCODINGS, "delimiter": tuple(DELIMITERS), "decimal": DECIMALS}[key]
    text = str(value).lower() if key == "encoding" else str(value)
    text = {"utf8": "utf-8", "utf-16le": "utf-16-le", "utf-16be": "utf-16-be", "windows-1252": "cp1252",
            "iso-8859-1": "latin-1", "\\t": "\t", "tab": "\t"}.get(text, text)
    if text not in allowed:
        shown = ", ".join(repr(a) for a in allowed)
        raise InputError(path, f"[{section}].{key} = {value!r} is not known; use one of {shown}")
    return text


def detect(path: Path, head: bytes, known: set[str], numeric: set[str], encoding: str | None = None,
           delimiter: str | None = None, decimal: str | None = None) -> Dialect:
    """The dialect of a CSV file from its first bytes (``head``), ``known`` being the column
    names the reader looks for and ``numeric`` those that hold numbers; values given
    (from the mapping file) are taken as they are."""
    notes: list[str] = []
    if encoding is None:
        enc, bom, note = _detect_encoding(path, head)
        if note:
            notes.append(note)
    else:
        enc, bom = encoding, _bom_length(head, encoding)
    dialect = Dialect(enc, bom)
    text = _head_text(head[bom:], enc)
    lines = text.splitlines()
    first = lines[0] if lines else ""
    if delimiter is None:
        delimiter = _detect_delimiter(first, known)
        if delimiter != ",":
            notes.append(f"fields are separated by {DELIMITERS[delimiter]}s (detected from the header)")
    dialect = replace(dialect, delimiter=delimiter)
    if decimal is None:
        decimal, note = _detect_decimal(text, dialect, numeric)
        if note:
            notes.append(note)
    elif decimal == delimiter:
        raise InputError(path, "the decimal separator and the delimiter are both "
                               f"{DELIMITERS.get(delimiter, repr(delimiter))}s; set them apart in the mapping file")
    return replace(dialect, decimal=decimal, notes=tuple(f"{path}: {n}" for n in notes))


def _bom_length(head: bytes, encoding: str) -> int:
    for bom, enc in BOMS:
        if head.startswith(bom) and enc == encoding:
            return len(bom)
    return 0


def _detect_encoding(path: Path, head: bytes) -> tuple[str, int, str | None]:
    if head.startswith(UTF32_BOMS):
        raise InputError(path, "the file is UTF-32 text, which is not read; save it as UTF-8 CSV", 1)
    for bom, enc in BOMS:
        if head.startswith(bom):
            return enc, len(bom), None if enc == "utf-8" else f"read as {_name(enc)} (byte-order mark)"
    sample = head[:4096]
    pairs = len(sample) // 2
    if pairs >= 2:
        even_nul = sample[0:2 * pairs:2].count(0)
        odd_nul = sample[1:2 * pairs:2].count(0)
        # ASCII text in UTF-16 has a zero in every other byte; a NUL character puts one on the other side too
        if odd_nul > 0.3 * pairs and even_nul * 4 < odd_nul:
            return "utf-16-le", 0, "read as UTF-16 LE: guessed from the zero bytes, the file has no byte-order mark"
        if even_nul > 0.3 * pairs and odd_nul * 4 < even_nul:
            return "utf-16-be", 0, "read as UTF-16 BE: guessed from the zero bytes, the file has no byte-order mark"
    decoder = codecs.getincrementaldecoder("utf-8")("strict")
    try:
        decoder.decode(head, final=False)  # a character cut at the end of the head is not an error
        return "utf-8", 0, None
    except UnicodeDecodeError:
        pass
    has_utf8 = any(ord(c) > 0x7F and c != "\ufffd" for c in head.decode("utf-8", errors="replace"))
    if not has_utf8:
        try:
            head.decode("cp1252")
        except UnicodeDecodeError:
            return "utf-8", 0, None  # neither: read as UTF-8, and the bad byte is located
        return "cp1252", 0, ("not UTF-8 text: read as Windows-1252 (guessed; set `encoding` in the "
                             "mapping file if the file is in another code page)")
    return "utf-8", 0, None  # UTF-8 with a stray byte: located as an error where it stands


def _name(encoding: str) -> str:
    return Dialect(encoding).name


def _head_text(head: bytes, encoding: str) -> str:
    """The head decoded for detection (a character cut at its end, or a bad byte, replaced)."""
    return codecs.getincrementaldecoder(encoding)("replace").decode(head, final=False)


def _detect_delimiter(first_line: str, known: set[str]) -> str:
    """The delimiter that splits the header into the most known column names (comma on a tie)."""
    def score(delim: str) -> int:
        try:
            return sum(h.strip() in known for h in next(csv.reader([first_line], delimiter=delim), []))
        except csv.Error:
            return -1
    return max(DELIMITERS, key=score)  # the first of the best: the comma wins a tie


def _detect_decimal(text: str, dialect: Dialect, numeric: set[str]) -> tuple[str, str | None]:
    if dialect.delimiter == ",":
        return ".", None
    rows = dialect.reader(io.StringIO(text, newline=""))
    try:
        header = [h.strip() for h in next(rows, [])]
        cols = [k for k, h in enumerate(header) if h in numeric]
        comma, line = 0, None
        for k, rec in enumerate(rows):
            if k >= SAMPLE_ROWS:
                break
            for c in cols:
                if c < len(rec):
                    value = rec[c].strip()
                    if COMMA_DECIMAL.match(value):
                        comma += 1
                        line = line or (rows.line_num, value)
    except csv.Error:
        return ".", None
    if comma:
        return ",", f"decimal commas (e.g. '{line[1]}' on line {line[0]}): numbers read with ',' as the decimal separator"
    return ".", None
