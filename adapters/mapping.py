"""Column mapping: read an analysis program's own export without editing it.

A mapping file is TOML with one table per input table (``members``, ``forces``,
``cases``); each may hold

    [forces]
    columns = { member = "Frame", case = "Combo", x_m = "Station", V_kN = "V2" }
    units   = { x_m = "mm", V_kN = "N" }      # unit the export uses for that column
    flip    = ["V_kN"]                        # columns whose sign is opposite to ours

``columns`` maps our column name to the export's column name; ``units`` names the
export's unit, converted into the unit our column name carries; ``flip`` multiplies
by -1 after conversion. Anything not mentioned is read under our own name and unit.

An ``[elements]`` section says that the forces file is an element-force export to be
chained into members; it is passed on as it is and read by postproc.adapters.elements.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from postproc.adapters.errors import InputError, read_toml

# Factors to the SI base unit of each quantity (m, N, N*m, Pa, m^2).
_LENGTH = {"m": 1.0, "mm": 1e-3, "cm": 1e-2, "ft": 0.3048, "in": 0.0254}
_FORCE = {"N": 1.0, "kN": 1e3, "MN": 1e6, "kip": 4448.2216152605, "lbf": 4.4482216152605}
_MOMENT = {
    "N*m": 1.0, "kN*m": 1e3, "N*mm": 1e-3, "kN*mm": 1.0, "MN*m": 1e6,
    "kip*ft": 4448.2216152605 * 0.3048, "kip*in": 4448.2216152605 * 0.0254,
    "lbf*ft": 4.4482216152605 * 0.3048, "lbf*in": 4.4482216152605 * 0.0254,
}
_STRESS = {"Pa": 1.0, "kPa": 1e3, "MPa": 1e6, "GPa": 1e9, "psi": 6894.757293168, "ksi": 6894757.293168}
_AREA = {"m2": 1.0, "mm2": 1e-6, "cm2": 1e-4, "in2": 0.0254**2}

# Our column suffix -> (quantity table, our unit).
_SUFFIX = {
    "_mm2": (_AREA, "mm2"), "_kNm": (_MOMENT, "kN*m"), "_kN": (_FORCE, "kN"),
    "_mm": (_LENGTH, "mm"), "_m": (_LENGTH, "m"), "_mpa": (_STRESS, "MPa"),
}


def unit_factor(our_column: str, unit: str) -> float:
    """Factor that turns a value in ``unit`` into the unit our column name carries."""
    for suffix, (table, ours) in _SUFFIX.items():
        if our_column.endswith(suffix):
            key = unit.replace(" ", "").replace("·", "*")
            if key == "kNm":
                key = "kN*m"
            if key not in table:
                raise KeyError(f"unit '{unit}' is not a unit of this quantity; known: {', '.join(table)}")
            return table[key] / table[ours]
    raise KeyError(f"column '{our_column}' carries no unit")


@dataclass(frozen=True)
class TableMap:
    """How one input table's columns map onto ours."""

    columns: dict[str, str] = field(default_factory=dict)  # ours -> theirs
    factors: dict[str, float] = field(default_factory=dict)  # ours -> multiplier (units and sign)

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
        unknown_keys = set(spec) - {"columns", "units", "flip"}
        if unknown_keys:
            raise InputError(path, f"[{name}] has unknown keys {sorted(unknown_keys)}; use columns, units, flip")
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
        tables[name] = TableMap(columns=columns, factors=factors)
    return ColumnMap(tables, elements, path)
