"""Column mapping: read an analysis program's own export without editing it.

A mapping file is TOML with one table per input table (``members``, ``forces``,
``cases``); each may hold

    [forces]
    columns = { member = "elem_id", case = "load_id", x_m = "pos", V_kN = "shear_z" }
    units   = { x_m = "mm", V_kN = "N" }  # unit the export uses for that column
    flip    = ["V_kN"]                    # columns whose sign is opposite to ours

``columns`` maps our column name to the export's column name; ``units`` names the
export's unit, converted into the unit our column name carries; ``flip`` multiplies
by -1 after conversion. Anything not mentioned is read under our own name and unit.

Units are read by pint, in the spellings engineers write: ``kN*m``, ``kN.m``, ``kN-m``,
``kNm``, ``kip-ft``, ``N/mm2``, ``N/mm^2``, ``mm2``, ``psi``, ``ksi``, ``lbf*in``, ...; a
unit of another quantity (a force for a length) is refused.

How the file is written may be given too, where detection (postproc.adapters.encoding)
should not guess:

    encoding  = "cp1252"                      # utf-8, utf-16-le, utf-16-be, cp1252, latin-1
    delimiter = ";"                           # ",", ";" or "\t"
    decimal   = ","                           # "." or ","

An ``[elements]`` section says that the forces file is an element-force export to be
chained into members; it is passed on as it is and read by postproc.adapters.elements.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass, field
from pathlib import Path

from postproc.adapters.encoding import check_choice
from postproc.adapters.errors import InputError, read_toml

DIALECT_KEYS = ("encoding", "delimiter", "decimal")  # how the file is written (else detected)

# Our column suffix -> the unit our column carries, and the quantity in words. Both unit
# systems' spellings (postproc.units): a column named in either carries its own unit.
_LENGTH, _FORCE = "length (mm, m, in, ft, ...)", "force (N, kN, kip, lbf, ...)"
_MOMENT = "moment (kN*m, N*mm, kip*ft, ...)"
_SUFFIX = {
    "_mm2": ("mm**2", "area (mm2, cm2, in2, ...)"), "_in2": ("inch**2", "area (in2, mm2, cm2, ...)"),
    "_kNm": ("kN*m", _MOMENT), "_kipft": ("kip*ft", _MOMENT),
    "_kN": ("kN", _FORCE), "_kip": ("kip", _FORCE),
    "_mm": ("mm", _LENGTH), "_in": ("inch", _LENGTH), "_ft": ("ft", _LENGTH), "_m": ("m", _LENGTH),
    "_mpa": ("MPa", "stress (MPa, N/mm2, psi, ksi, ...)"), "_psi": ("psi", "stress (psi, ksi, MPa, ...)"),
    "_ksi": ("ksi", "stress (ksi, psi, MPa, ...)"),
}
# moments written without an operator, as tables often do (kNm: kilonewton metre, not a prefixed unit)
_RUN_TOGETHER = {"Nm": "N*m", "kNm": "kN*m", "MNm": "MN*m", "Nmm": "N*mm", "kNmm": "kN*mm"}


@functools.cache
def _registry():
    import pint

    return pint.UnitRegistry()


def _pint_spelling(unit: str) -> str:
    """An engineer's unit text as pint reads it: '-' and '·' between units are products
    (kip-ft), a trailing 2 or 3 is a power (mm2), run-together moments are split (kNm)."""
    text = unit.strip().replace("·", "*").replace("²", "2").replace("³", "3")
    text = re.sub(r"(?<=[A-Za-z])-(?=[A-Za-z])", "*", text)
    text = re.sub(r"[A-Za-z]+", lambda m: _RUN_TOGETHER.get(m.group(0), m.group(0)), text)
    return re.sub(r"(?<=[A-Za-z])([23])\b", r"**\1", text)


def quantity_factor(unit: str, ours: str) -> float:
    """Factor that turns a value in ``unit`` into one in ``ours`` (pint spellings)."""
    return float(_registry().Quantity(1.0, _pint_spelling(str(unit))).to(ours).magnitude)


def unit_factor(our_column: str, unit: str) -> float:
    """Factor that turns a value in ``unit`` into the unit our column name carries.
    KeyError for a unit pint does not know or one of another quantity."""
    import pint

    for suffix, (ours, quantity) in _SUFFIX.items():
        if our_column.endswith(suffix):
            try:
                return quantity_factor(unit, ours)
            except pint.DimensionalityError:
                raise KeyError(f"unit '{unit}' is not a unit of {quantity}") from None
            except Exception:  # noqa: BLE001 - pint's parser raises assorted errors on malformed text
                raise KeyError(f"unit '{unit}' is not known; expected a unit of {quantity}") from None
    raise KeyError(f"column '{our_column}' carries no unit")


@dataclass(frozen=True)
class TableMap:
    """How one input table's columns map onto ours."""

    columns: dict[str, str] = field(default_factory=dict)  # ours -> theirs
    factors: dict[str, float] = field(default_factory=dict)  # ours -> multiplier (units and sign)
    encoding: str | None = None  # None: detected from the file
    delimiter: str | None = None
    decimal: str | None = None

    def source_name(self, ours: str) -> str:
        return self.columns.get(ours, ours)


@dataclass(frozen=True)
class ColumnMap:
    """The mapping for all input tables; empty by default (our own schema)."""

    tables: dict[str, TableMap] = field(default_factory=dict)
    elements: dict | None = None  # the [elements] section (element chaining), see adapters/elements.py
    source: Path | None = None  # the mapping file: files that [elements] names are relative to it

    def table(self, name: str) -> TableMap:
        return self.tables.get(name, TableMap())


def load_column_map(path: str | Path | None, known: dict[str, tuple[str, ...]]) -> ColumnMap:
    """Read a mapping file; ``known`` lists our column names per table for validation."""
    if path is None:
        return ColumnMap()
    path = Path(path)
    doc = read_toml(path, "mapping")
    elements = doc.pop("elements", None)
    if elements is not None and not isinstance(elements, dict):
        raise InputError(path, "[elements] must be a table")
    tables = {}
    for name, spec in doc.items():
        if name not in known:
            raise InputError(path, f"unknown table [{name}]; expected one of {', '.join([*known, 'elements'])}")
        if not isinstance(spec, dict):
            raise InputError(path, f"[{name}] must be a table")
        unknown_keys = set(spec) - {"columns", "units", "flip", *DIALECT_KEYS}
        if unknown_keys:
            raise InputError(path, f"[{name}] has unknown keys {sorted(unknown_keys)}; "
                                   f"use columns, units, flip, {', '.join(DIALECT_KEYS)}")
        dialect = {key: check_choice(path, name, key, spec[key]) for key in DIALECT_KEYS if key in spec}
        columns = dict(spec.get("columns", {}))
        units = dict(spec.get("units", {}))
        flip = list(spec.get("flip", []))
        for ours in [*columns, *units, *flip]:
            if ours not in known[name]:
                raise InputError(path, f"[{name}] names '{ours}', which is not a column of {name}.csv")
        factors = {}
        for ours, unit in units.items():
            try:
                factors[ours] = unit_factor(ours, str(unit))
            except KeyError as exc:
                raise InputError(path, f"[{name}].units.{ours}: {exc.args[0]}") from None
        for ours in flip:
            factors[ours] = -factors.get(ours, 1.0)
        theirs = list(columns.values())
        if len(set(theirs)) != len(theirs):
            raise InputError(path, f"[{name}].columns maps two of our columns to one export column")
        tables[name] = TableMap(columns=columns, factors=factors, **dialect)
    return ColumnMap(tables, elements, path)
