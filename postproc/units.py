"""The unit system of a run: SI (the default) or inch-pound.

One unit system inside each run, converted at the edges (DESIGN.md). A run's internal
units are N, mm and MPa (SI) or lb, in and psi (inch-pound); its tables carry the
units in their column names:

    quantity                   SI column suffix        inch-pound column suffix
    member length, station     _m      (m)             _ft     (ft)
    section, position          _mm     (mm)            _in     (in)
    area                       _mm2    (mm^2)          _in2    (in^2)
    force                      _kN     (kN)            _kip    (kip)
    moment, torque             _kNm    (kN*m)          _kipft  (kip*ft)
    stress                     _mpa    (MPa)           _psi    (psi)   (inputs also _ksi)
    mass                       _kg     (kg)            _lb     (lb; "mass" is "weight" in the name)
    force per length           _kN_per_m               _kip_per_ft

so that ``vu_design_i_kN`` of an SI run is ``vu_design_i_kip`` of an inch-pound run,
``stirrup_mass_kg`` is ``stirrup_weight_lb``, and every other name is the same. A table
keeps its columns in the same order in both systems. This module is plain Python (no
numpy), so that the command line can use it before the engine loads.
"""

from __future__ import annotations

from dataclasses import dataclass

# SI suffix -> inch-pound suffix, longest first (so that _kNm is not read as _kN + "m")
_SWAPS = (("_kN_per_m", "_kip_per_ft"), ("_kNm", "_kipft"), ("_mm2", "_in2"), ("_kN", "_kip"), ("_mm", "_in"),
          ("_mpa", "_psi"), ("_MPa", "_psi"), ("_kg", "_lb"), ("_m", "_ft"))
# other inch-pound spellings an input table may use for a quantity (converted on reading)
_EXTRA_INPUT = {"_mpa": ("_ksi",)}
# the pint spelling of the unit each column suffix carries (SI and inch-pound)
SUFFIX_UNITS = {
    "_kN_per_m": "kN/m", "_kip_per_ft": "kip/ft", "_kNm": "kN*m", "_kipft": "kip*ft", "_mm2": "mm**2",
    "_in2": "inch**2", "_kN": "kN", "_kip": "kip", "_mm": "mm", "_in": "inch", "_mpa": "MPa", "_MPa": "MPa",
    "_psi": "psi", "_ksi": "ksi", "_kg": "kg", "_lb": "lb", "_m": "m", "_ft": "ft",
}


@dataclass(frozen=True)
class UnitSystem:
    """Names, units and factors of one unit system.

    A table's force (``force`` units) times ``per_force`` is the internal force (N or
    lb), a moment (``moment`` units) times ``per_moment`` the internal moment (N*mm or
    lb*in), a member length or station (``span`` units) times ``per_span`` the internal
    length (mm or in). Sections, positions, areas and stresses are in the internal units
    in the tables too.
    """

    name: str  # "si" | "us"
    title: str
    span: str  # member lengths and stations in tables: m | ft
    length: str  # sections, positions, spacings (internal): mm | in
    area: str  # mm^2 | in^2
    force: str  # in tables: kN | kip
    moment: str  # in tables: kN*m | kip*ft
    stress: str  # internal: MPa | psi
    mass: str  # kg | lb
    mass_word: str  # "mass" | "weight": how the tables and texts name it
    per_span: float  # internal length per span unit: 1000 mm/m | 12 in/ft
    per_force: float  # internal force per table force: 1000 N/kN | 1000 lb/kip
    per_moment: float  # internal moment per table moment: 1e6 N*mm/(kN*m) | 12000 lb*in/(kip*ft)

    def col(self, si_name: str) -> str:
        """The column name of this system for a column named ``si_name`` in SI."""
        return si_name if self.name == "si" else us_name(si_name)

    def cols(self, si_names) -> list[str]:
        return [self.col(c) for c in si_names]

    def rename(self, names) -> dict[str, str]:
        """{SI name: this system's name} for the given SI names (for DataFrame.rename)."""
        return {c: self.col(c) for c in names}


SI = UnitSystem(name="si", title="SI (N, mm, MPa)", span="m", length="mm", area="mm^2", force="kN", moment="kN*m",
                stress="MPa", mass="kg", mass_word="mass",
                per_span=1e3, per_force=1e3, per_moment=1e6)
US = UnitSystem(name="us", title="inch-pound (lb, in, psi)", span="ft", length="in", area="in^2", force="kip",
                moment="kip*ft", stress="psi", mass="lb", mass_word="weight",
                per_span=12.0, per_force=1e3, per_moment=12e3)
SYSTEMS = {"si": SI, "us": US}


def system(name: str | None) -> UnitSystem:
    """The unit system named "si" or "us" (None: SI, the default)."""
    if name is None:
        return SI
    try:
        return SYSTEMS[str(name).lower()]
    except KeyError:
        raise ValueError(f"unknown unit system {name!r}: use \"si\" or \"us\" (inch-pound)") from None


def us_name(si_name: str) -> str:
    """``vu_design_i_kN`` -> ``vu_design_i_kip``; ``stirrup_mass_kg`` -> ``stirrup_weight_lb``;
    a name without a unit suffix is returned as it is."""
    for si, us in _SWAPS:
        if si_name.endswith(si):
            stem = si_name[: -len(si)]
            if si == "_kg":
                stem = stem.replace("mass", "weight")
            return stem + us
    return si_name


def si_name(name: str) -> str:
    """The SI spelling of a column named in either system (the inverse of ``us_name``)."""
    for si, us in _SWAPS:
        if si == "_MPa":
            continue  # _psi reads back as _mpa, the spelling of the input tables
        if name.endswith(us):
            stem = name[: -len(us)]
            if us == "_lb":
                stem = stem.replace("weight", "mass")
            return stem + si
    if name.endswith("_ksi"):
        return name[: -len("_ksi")] + "_mpa"
    return name


def spellings(si: str) -> tuple[str, ...]:
    """Every spelling an input table may use for the column named ``si`` in SI: the SI
    name, the inch-pound name, and any other inch-pound unit accepted (f'c in ksi)."""
    out = [si]
    us = us_name(si)
    if us != si:
        out.append(us)
        for suffix, extra in _EXTRA_INPUT.items():
            if si.endswith(suffix):
                out += [si[: -len(suffix)] + e for e in extra]
    return tuple(out)


def unit_of(column: str) -> str | None:
    """The unit (pint spelling) a column's name carries, or None."""
    for suffix in sorted(SUFFIX_UNITS, key=len, reverse=True):
        if column.endswith(suffix):
            return SUFFIX_UNITS[suffix]
    return None


def unit_label(column: str) -> str:
    """The unit a column's name carries as a person reads it (MPa, in, mm^2), or ''."""
    unit = unit_of(column)
    return unit.replace("**", "^").replace("inch", "in") if unit else ""


def factor(from_column: str, to_column: str) -> float:
    """Factor that turns a value of ``from_column`` into one of ``to_column`` (the same
    quantity spelt in any unit system); 1.0 where the two carry the same unit."""
    a, b = unit_of(from_column), unit_of(to_column)
    if a == b:
        return 1.0
    from postproc.adapters.mapping import quantity_factor

    return quantity_factor(a, b)


def convert_names(names, target: UnitSystem) -> list[tuple[str, str, float]]:
    """(name, new name, factor) of each column, named in either unit system (each by its
    own suffix), for ``target``."""
    out = []
    for name in names:
        new = target.col(si_name(name))
        out.append((name, new, factor(name, new) if new != name else 1.0))
    return out


def convert_table(t, source: UnitSystem | None, target: UnitSystem, digits: int | None = None):
    """A pyarrow Table or pandas DataFrame with its unit-carrying columns renamed and
    converted for ``target`` (other columns as they are). ``source``: the unit system the
    table is named in (None: each column by its own suffix); nothing is done where it is
    the target's. ``digits``: converted values rounded to that many significant digits
    (a value that went through SI and back, 60,000 psi, stays 60,000)."""
    if source is not None and source.name == target.name:
        return t
    plan = convert_names(list(t.columns if hasattr(t, "iloc") else t.column_names), target)
    if hasattr(t, "iloc"):  # pandas
        out = t.copy()
        for name, _, f in plan:
            if f != 1.0:
                out[name] = _significant(out[name].to_numpy(float) * f, digits)
        return out.rename(columns={name: new for name, new, _ in plan})
    import pyarrow as pa
    import pyarrow.compute as pac

    def scaled(col, f):
        if digits is None:
            return pac.multiply(col, f)
        return pa.array(_significant(col.to_numpy() * f, digits), from_pandas=True)  # NaN (a missing value) -> null

    arrays = [scaled(t.column(name), f) if f != 1.0 else t.column(name) for name, _, f in plan]
    return type(t).from_arrays(arrays, names=[new for _, new, _ in plan])


def _significant(values, digits: int | None):
    import numpy as np

    if digits is None:
        return values
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = 10.0 ** (digits - 1 - np.floor(np.log10(np.abs(values))))
        return np.where(np.isfinite(scale) & (values != 0), np.round(values * scale) / scale, values)


# ASTM A615/A615M: the grades of deformed bars under their two designations, Grade 40 [280],
# Grade 60 [420], Grade 75 [520], Grade 80 [550], Grade 100 [690] (yield strength, psi and MPa).
BAR_GRADES_PSI = {280.0: 40_000.0, 420.0: 60_000.0, 520.0: 75_000.0, 550.0: 80_000.0, 690.0: 100_000.0}


def convert_csv(source_path, target_path, target: UnitSystem | str, grades: bool = False):
    """Write a copy of an input table (members.csv, forces.csv) with its columns named and
    valued in ``target`` (a UnitSystem, or "si" | "us"): the tool's own conversion, so that
    nobody converts by hand.

    ``grades``: yield strengths (``fy_mpa``, ``fyt_mpa``) that are a bar grade of ASTM
    A615M become that grade's inch-pound value (420 MPa -> 60,000 psi, Grade 60 [420]:
    the same bars) rather than the exact 60,916 psi, which the inch-pound edition would cap
    at 60,000 psi for shear. Only towards inch-pound, where the
    grade's psi value is the lower. Other values convert exactly."""
    import pandas as pd

    target = target if isinstance(target, UnitSystem) else system(target)
    df = pd.read_csv(source_path, keep_default_na=False, na_values=[""], dtype={"member": str, "case": str})
    out = convert_table(df, None, target)
    if grades and target.name == "us":
        for col in ("fy_mpa", "fyt_mpa"):
            if col in df:
                grade = df[col].map(BAR_GRADES_PSI)
                out[target.col(col)] = grade.where(grade.notna(), out[target.col(col)])
    from postproc.report import write_atomic

    return write_atomic(target_path, lambda fh: out.to_csv(fh, index=False, lineterminator="\n"))


def system_of(columns) -> UnitSystem:
    """The unit system a table is named in: inch-pound where any column carries an inch-pound
    unit, else SI (a table without unit columns is SI)."""
    return US if any(si_name(str(c)) != str(c) for c in columns) else SI


def si_keyed(df):
    """A pandas DataFrame of a run with its columns renamed to their SI spelling, the values as
    they are (in the run's units): for code that reads both systems' tables under one set of
    keys and writes the units beside the numbers itself (explain, the HTML report)."""
    return df.rename(columns={c: si for c in df.columns if (si := si_name(str(c))) != c})
