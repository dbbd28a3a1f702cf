"""Project settings: a TOML file (``--config``) over common-practice defaults.

    units = "si"                    # "si" (N, mm, MPa) or "us" (inch-pound: lb, in, psi); --units overrides

    [combinations]
    reduced_live_factor = false     # ACI 318-19 5.3.3: 0.5L in 5.3.1 (c), (d), (e)
    vertical_earthquake = 0.0       # c of the vertical effect Ev = c D the general building code adds to
                                    # E (0.2 S_DS): (1.2 + c)D in (e) and in Ve's gravity load, (0.9 - c)D in (g)

    [stations]
    max_step_mm = 50                # station grid at most this far apart ...
    steps_per_d = 8                 # ... and at most d/8 apart
    point_load_kN = 1.0             # a jump in V larger than this and than
    point_load_fraction = 0.02      # this fraction of the member's largest |V| is a concentrated load
    tolerance_mm = 1.0              # rows of one member and case closer than this are one station;
                                    # a station this far past the member's length is rounding
    steep_slope_kN_per_m = 2000.0   # a steeper change of V between rows is warned about (a spread load?)

    [detailing]
    ladder = [["#10", 2], ["#13", 2], ["#10", 4], ["#13", 4], ["#16", 4]]
    spacing_module_mm = 25
    min_spacing_mm = 75
    first_stirrup = "fixed"         # "fixed" (first_stirrup_mm from the face) or "half" (s/2)
    first_stirrup_mm = 50
    max_zones_per_end = 3
    stirrups_throughout = true      # false: omit stirrups where the code permits
    clear_cover_mm = 40             # to the stirrup, for leg spacing and bar lengths
    stirrup_shape = "closed"        # "closed" (135-degree hooks) or "open" (U); torsion forces closed
    open_hook_deg = 90              # hooks of open stirrups: 90 or 135

    [input]                         # the input tables
    fill = { N_kN = 0.0 }           # value of the missing cells of these optional columns (our units);
                                    # without it a missing cell is an input error
    [deep]                          # deep beams and D-regions (9.9.1.1) designed by strut-and-tie (Ch. 23)
    bearing_mm = 0                  # bearing length along the member at a column or wall; 0: twice the
                                    #   face offset (the node on the support's centreline)
    bearing_max_h = 1.0             # a longer bearing is taken as this many h next to the face
    load_width_mm = 300             # loaded length of a concentrated load (the width of a column on it)
    frame_shear_tolerance = 0.05    # a whole-member model is refused where the frame's face shear exceeds
                                    #   its simple-span reaction by more than this fraction
    compression_limit = 0.10        # axial compression up to this x f'c Ag is carried by the top chord
    end_cover_mm = 50               # member end to the end of the tie bars

    [ifc]                           # members read from an IFC model
    fc_mpa = 35                     # where the model gives no f'c
    fyt_mpa = 420
    cover_mm = 60
    tolerance_mm = 50               # how far a beam end may be from its support
    length_tolerance_mm = 20        # IFC length against the force table's last station

    [columns]
    biaxial_shear = "code"          # "code" (22.5.1.10, 22.5.1.11) or "elliptical" (sqrt of the sum of squares)
    circular_transverse = "hoops"   # circular columns: "hoops" (circular ties or hoops) or "spiral" (25.7.3)

    [run]                           # how a run uses the machine (never its results)
    memory_mb = 1536                # largest resident memory of any one process of the run, MB (ingest
                                    #   and each design worker): forces spill to disk beyond a quarter of
                                    #   it, and the design cuts stored parts into tasks that fit

    [report]
    detail_sections = 500           # report.html draws member sections for at most this many members,
                                    #   the first in review order; `shearpost report --member ID` any other

    [frames]                        # moment frames of the seismic-force-resisting system (ACI 318-19 Ch. 18)
    by_group = { perimeter = "special" }  # frame of every member of a group whose members.csv `frame` is empty
    omega_o = 3.0                   # overstrength factor of the general building code, for 18.4.2.3(b)
    joint_tolerance_mm = 50         # how far a beam end may be from a column's joint (special-frame joints)

Omega_o comes from the general building code, not from ACI 318: 3.0 is the value commonly
tabulated there for reinforced-concrete moment frames (from memory); set the one your code
gives.

In an inch-pound run (``units = "us"``) the settings carry inch-pound names and defaults
(``max_step_in = 2``, ``point_load_kip = 0.2``, ``tolerance_in = 0.04``,
``steep_slope_kip_per_ft = 137``; ladder of #3, #4, #5 bars, ``spacing_module_in = 1``,
``min_spacing_in = 3``, ``first_stirrup_in = 2``, ``clear_cover_in = 1.5``; ``fc_psi =
5000``, ``fyt_psi = 60000``, ``cover_in = 2.5``, ``tolerance_in = 2``,
``length_tolerance_in = 0.75``; ``joint_tolerance_in = 2``; ``bearing_in = 0``,
``load_width_in = 12``, ``end_cover_in = 2``). A setting may be spelt in
either system (``min_spacing_mm = 75`` in an inch-pound run is 2.95 in); giving both
spellings of one is an error.

The stages read the unit-carrying settings through unit-neutral properties in the run's
internal units (``detailing.min_spacing``: mm or in; ``stations.point_load``: N or lb).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field, fields, replace
from typing import ClassVar
from pathlib import Path

from postproc.adapters.errors import InputError, read_toml

# ASTM A615/A615M Table 1: nominal diameter (mm) and area (mm^2) of deformed bars (A615M designations).
BAR_CATALOGUE = {
    "#10": (9.5, 71.0),
    "#13": (12.7, 129.0),
    "#16": (15.9, 199.0),
    "#19": (19.1, 284.0),
}
# ASTM A615/A615M Table 1: nominal diameter (in) and area (in^2) of deformed bars (inch-pound designations).
BAR_CATALOGUE_US = {
    "#3": (0.375, 0.11),
    "#4": (0.500, 0.20),
    "#5": (0.625, 0.31),
    "#6": (0.750, 0.44),
}
BARS = {"si": BAR_CATALOGUE, "us": BAR_CATALOGUE_US}


def bar_catalogue(units: str) -> dict[str, tuple[float, float]]:
    """The bar sizes of a unit system: name -> (nominal diameter, area), mm and mm^2 or in and in^2."""
    return BARS[units]


@dataclass(frozen=True)
class Combinations:
    reduced_live_factor: bool = False
    vertical_earthquake: float = 0.0  # c of Ev = c D (0.2 S_DS, the general building code's), with E


@dataclass(frozen=True)
class Stations:
    """Station grid and force-table tolerances, SI."""

    max_step_mm: float = 50.0
    steps_per_d: float = 8.0
    point_load_kN: float = 1.0
    point_load_fraction: float = 0.02
    tolerance_mm: float = 1.0
    steep_slope_kN_per_m: float = 2000.0

    # in the run's internal units (N, mm), as the stages use them
    coverage_slack: ClassVar[float] = 10.0  # forces this short of a face are exported stations rounded (mm)

    @property
    def max_step(self) -> float:
        return self.max_step_mm

    @property
    def tolerance(self) -> float:
        return self.tolerance_mm

    @property
    def point_load(self) -> float:
        """A jump in V larger than this (N) may be a concentrated load."""
        return self.point_load_kN * 1e3

    @property
    def point_torque(self) -> float:
        """The same number read as a torque, kN*m, in N*mm."""
        return self.point_load_kN * 1e6

    @property
    def steep_slope(self) -> float:
        return self.steep_slope_kN_per_m  # N/mm


@dataclass(frozen=True)
class StationsUS:
    """Station grid and force-table tolerances, inch-pound (the SI defaults rounded: common practice)."""

    max_step_in: float = 2.0
    steps_per_d: float = 8.0
    point_load_kip: float = 0.2
    point_load_fraction: float = 0.02
    tolerance_in: float = 0.04
    steep_slope_kip_per_ft: float = 137.0

    coverage_slack: ClassVar[float] = 0.4  # in

    @property
    def max_step(self) -> float:
        return self.max_step_in

    @property
    def tolerance(self) -> float:
        return self.tolerance_in

    @property
    def point_load(self) -> float:
        """A jump in V larger than this (lb) may be a concentrated load."""
        return self.point_load_kip * 1e3

    @property
    def point_torque(self) -> float:
        """The same number read as a torque, kip*ft, in lb*in."""
        return self.point_load_kip * 12e3

    @property
    def steep_slope(self) -> float:
        return self.steep_slope_kip_per_ft * 1e3 / 12.0  # lb/in


@dataclass(frozen=True)
class Detailing:
    """Stirrup detailing, SI (common practice)."""

    ladder: tuple[tuple[str, int], ...] = (("#10", 2), ("#13", 2), ("#10", 4), ("#13", 4), ("#16", 4))
    spacing_module_mm: float = 25.0
    min_spacing_mm: float = 75.0
    first_stirrup: str = "fixed"
    first_stirrup_mm: float = 50.0
    max_zones_per_end: int = 3
    stirrups_throughout: bool = True
    clear_cover_mm: float = 40.0
    stirrup_shape: str = "closed"
    open_hook_deg: int = 90

    # set-out resolution (common practice): positions kept to 0.1 mm; the middle run's end
    # gaps split on whole millimetres; gaps that differ by no more than the rounding of two
    # positions (0.1 mm) are one zone, so that count x spacing spans a zone exactly; 0.05 mm slack
    position_decimals: ClassVar[int] = 1
    setout_step: ClassVar[float] = 1.0
    same_gap: ClassVar[float] = 0.15
    gap_slack: ClassVar[float] = 0.05

    @property
    def bars(self) -> dict[str, tuple[float, float]]:
        return BAR_CATALOGUE

    @property
    def spacing_module(self) -> float:
        return self.spacing_module_mm

    @property
    def min_spacing(self) -> float:
        return self.min_spacing_mm

    @property
    def first_stirrup_at(self) -> float:
        return self.first_stirrup_mm

    @property
    def clear_cover(self) -> float:
        return self.clear_cover_mm


@dataclass(frozen=True)
class DetailingUS:
    """Stirrup detailing, inch-pound: ASTM A615 bars; spacings on a 1 in module, at least 3 in,
    the first stirrup 2 in from the face (common practice); clear cover 1.5 in to the
    stirrup (ACI 318-19 Table 20.5.1.3.1, beams not exposed to weather or ground: 1-1/2 in,
    from memory)."""

    ladder: tuple[tuple[str, int], ...] = (("#3", 2), ("#4", 2), ("#3", 4), ("#4", 4), ("#5", 4))
    spacing_module_in: float = 1.0
    min_spacing_in: float = 3.0
    first_stirrup: str = "fixed"
    first_stirrup_in: float = 2.0
    max_zones_per_end: int = 3
    stirrups_throughout: bool = True
    clear_cover_in: float = 1.5
    stirrup_shape: str = "closed"
    open_hook_deg: int = 90

    # positions kept to 0.001 in; the middle run's end gaps split on 1/8 in (common practice);
    # gaps within the rounding of two positions (0.002 in) are one zone
    position_decimals: ClassVar[int] = 3
    setout_step: ClassVar[float] = 0.125
    same_gap: ClassVar[float] = 0.005
    gap_slack: ClassVar[float] = 0.002

    @property
    def bars(self) -> dict[str, tuple[float, float]]:
        return BAR_CATALOGUE_US

    @property
    def spacing_module(self) -> float:
        return self.spacing_module_in

    @property
    def min_spacing(self) -> float:
        return self.min_spacing_in

    @property
    def first_stirrup_at(self) -> float:
        return self.first_stirrup_in

    @property
    def clear_cover(self) -> float:
        return self.clear_cover_in


@dataclass(frozen=True)
class Deep:
    bearing_mm: float = 0.0  # bearing length at a column or wall; 0: twice the face offset
    bearing_max_h: float = 1.0
    load_width_mm: float = 300.0
    frame_shear_tolerance: float = 0.05
    compression_limit: float = 0.10
    end_cover_mm: float = 50.0

    @property
    def bearing(self) -> float:
        return self.bearing_mm

    @property
    def load_width(self) -> float:
        return self.load_width_mm

    @property
    def end_cover(self) -> float:
        return self.end_cover_mm


@dataclass(frozen=True)
class DeepUS:
    bearing_in: float = 0.0
    bearing_max_h: float = 1.0
    load_width_in: float = 12.0  # the SI 300 mm, rounded (common practice)
    frame_shear_tolerance: float = 0.05
    compression_limit: float = 0.10
    end_cover_in: float = 2.0  # the SI 50 mm, rounded (common practice)

    @property
    def bearing(self) -> float:
        return self.bearing_in

    @property
    def load_width(self) -> float:
        return self.load_width_in

    @property
    def end_cover(self) -> float:
        return self.end_cover_in


@dataclass(frozen=True)
class Ifc:
    fc_mpa: float = 35.0  # where the model gives no f'c (a warning per member)
    fyt_mpa: float = 420.0
    cover_mm: float = 60.0  # face to centroid of the tension steel, where the model gives none
    tolerance_mm: float = 50.0  # how far a beam end may be from what it frames into
    length_tolerance_mm: float = 20.0  # IFC length against the force table's last station

    def si(self) -> Ifc:
        """These defaults in SI (the IFC reader works in SI)."""
        return self


@dataclass(frozen=True)
class IfcUS:
    fc_psi: float = 5000.0  # common practice
    fyt_psi: float = 60_000.0  # Grade 60
    cover_in: float = 2.5
    tolerance_in: float = 2.0
    length_tolerance_in: float = 0.75

    def si(self) -> Ifc:
        from postproc import units

        return Ifc(**{si: getattr(self, f.name) * units.factor(f.name, si)
                      for f, si in ((f, units.si_name(f.name)) for f in fields(self))})


FRAMES = ("none", "ordinary", "intermediate", "special")  # moment frames of ACI 318-19 Chapter 18


@dataclass(frozen=True)
class Frames:
    by_group: dict = field(default_factory=dict)  # group label -> frame, for members whose `frame` is empty
    omega_o: float = 3.0  # overstrength factor for 18.4.2.3(b); the general building code's value (from memory)
    joint_tolerance_mm: float = 50.0  # beam ends within this of a column's joint frame into it

    @property
    def joint_tolerance(self) -> float:
        return self.joint_tolerance_mm


@dataclass(frozen=True)
class FramesUS:
    by_group: dict = field(default_factory=dict)
    omega_o: float = 3.0
    joint_tolerance_in: float = 2.0  # the SI 50 mm, rounded (common practice)

    @property
    def joint_tolerance(self) -> float:
        return self.joint_tolerance_in


@dataclass(frozen=True)
class Columns:
    """Column design choices (no units: the same in both systems)."""

    biaxial_shear: str = "code"  # "code" (ACI 318-19 22.5.1.10, 22.5.1.11) or "elliptical" (common practice)
    circular_transverse: str = "hoops"  # circular columns: "hoops" (circular ties or hoops) or "spiral" (25.7.3)


@dataclass(frozen=True)
class Resources:
    """How a run uses the machine (no units: the same in both systems; no effect on results)."""

    # largest resident memory of any one process of a run (the main process while it reads the
    # forces, each worker while it designs), MB: ingest keeps the forces in memory only while they
    # fit in a quarter of it, and the design cuts a stored part into tasks small enough for it
    memory_mb: int = 1536


@dataclass(frozen=True)
class Report:
    """report.html (no units)."""

    # a member section (shear diagram, elevation) is drawn for at most this many members, the
    # first in review order (those needing action first); the index and the overview always list
    # every member, and `shearpost report --member ID` writes any member's section on demand
    detail_sections: int = 500


@dataclass(frozen=True)
class Input:
    # optional numeric column -> value of its missing cells (blank, NaN, #N/A, ...), in the unit
    # its name carries; either spelling (N_kN or N_kip) is accepted and kept in the run's spelling
    # and unit; a column not named here refuses missing cells (an input error naming file, line
    # and column)
    fill: dict = field(default_factory=dict)


SECTIONS = {
    "si": {"combinations": Combinations, "stations": Stations, "detailing": Detailing, "ifc": Ifc, "frames": Frames,
           "input": Input, "deep": Deep, "columns": Columns, "run": Resources, "report": Report},
    "us": {"combinations": Combinations, "stations": StationsUS, "detailing": DetailingUS, "ifc": IfcUS,
           "frames": FramesUS, "input": Input, "deep": DeepUS, "columns": Columns, "run": Resources, "report": Report},
}


@dataclass(frozen=True)
class Settings:
    combinations: Combinations = field(default_factory=Combinations)
    stations: Stations | StationsUS = field(default_factory=Stations)
    detailing: Detailing | DetailingUS = field(default_factory=Detailing)
    ifc: Ifc | IfcUS = field(default_factory=Ifc)
    frames: Frames | FramesUS = field(default_factory=Frames)
    input: Input = field(default_factory=Input)
    units: str = "si"  # the run's unit system: "si" or "us" (postproc.units)
    deep: Deep | DeepUS = field(default_factory=Deep)
    columns: Columns = field(default_factory=Columns)
    run: Resources = field(default_factory=Resources)
    report: Report = field(default_factory=Report)

    def as_dict(self) -> dict:
        return asdict(self)

    @staticmethod
    def defaults(units: str = "si") -> Settings:
        """The common-practice settings of a unit system."""
        kinds = SECTIONS[_units_name(None, units)]
        return Settings(**{name: cls() for name, cls in kinds.items()}, units=units)


def _units_name(path, value) -> str:
    if value not in SECTIONS:
        raise InputError(path, f"units must be \"si\" or \"us\" (inch-pound), not {value!r}")
    return value


def load_settings(path: str | Path | None, units: str | None = None) -> Settings:
    """Settings from a TOML file; unknown sections or keys are errors, not silently ignored.
    ``units`` ("si" or "us", the command line's --units) overrides the file's ``units``."""
    if path is None:
        return Settings.defaults(_units_name("--units", units or "si"))
    path = Path(path)
    return validated_settings(read_toml(path, "settings"), path, units)


def validated_settings(doc: dict, path: Path, units: str | None = None) -> Settings:
    """Settings from the sections of a settings file (or the same as a dict, from Python),
    checked as the file is; errors name ``path``. ``units`` overrides the document's."""
    from postproc import units as unit_names

    doc = dict(doc)
    system = _units_name(path, units or doc.pop("units", "si"))
    doc.pop("units", None)
    s = Settings.defaults(system)
    sections = SECTIONS[system]
    for name, values in doc.items():
        if name not in sections or not isinstance(values, dict):
            raise InputError(path, f"unknown section [{name}]; known: {', '.join(sections)}")
        current = getattr(s, name)
        known = {f.name: f for f in fields(current)}
        given: dict[str, str] = {}  # field -> the key that set it
        for key, value in values.items():
            target, scale = key, None
            if key not in known:  # the other unit system's spelling of a setting
                target = unit_names.system(system).col(unit_names.si_name(key))
                if target not in known or target == key:
                    raise InputError(path, f"[{name}] has no setting '{key}'; known: {', '.join(known)}")
                scale = unit_names.factor(key, target)
            if target in given:
                raise InputError(path, f"[{name}] gives both '{given[target]}' and '{key}' (one setting in two units); "
                                       "give one")
            given[target] = key
            default = getattr(current, target)
            if target == "ladder":
                value = _ladder(path, value, current.bars)
            elif target == "by_group":
                value = _by_group(path, value)
            elif target == "fill":
                value = _fill(path, value, system)
            elif isinstance(default, bool):
                if not isinstance(value, bool):
                    raise InputError(path, f"[{name}].{key} must be true or false")
            elif isinstance(default, (int, float)):
                if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
                        or value < 0:  # TOML has nan and inf: neither is a setting
                    raise InputError(path, f"[{name}].{key} must be a non-negative number")
                if scale is not None:  # converted, to 12 significant digits (76.2 mm is 3 in, not 3.0000000000000004)
                    value = float(f"{value * scale:.12g}")
                value = type(default)(value)
            current = replace(current, **{target: value})
        s = replace(s, **{name: current})
    d = s.detailing
    col = unit_names.system(system).col
    if d.first_stirrup not in ("fixed", "half"):
        raise InputError(path, "[detailing].first_stirrup must be \"fixed\" or \"half\"")
    if d.spacing_module <= 0 or d.min_spacing < d.spacing_module:
        raise InputError(path, f"[detailing] needs {col('spacing_module_mm')} > 0 and "
                               f"{col('min_spacing_mm')} >= {col('spacing_module_mm')}")
    if d.stirrup_shape not in ("closed", "open") or d.open_hook_deg not in (90, 135):
        raise InputError(path, "[detailing] needs stirrup_shape \"closed\" or \"open\" and open_hook_deg 90 or 135")
    from postproc.codes.aci318_19 import edition

    large = [bar for bar, _ in d.ladder if d.bars[bar][0] > edition(system).hook_small_db_max]
    if d.stirrup_shape == "open" and large:
        small = [bar for bar, (db, _) in d.bars.items() if db <= edition(system).hook_small_db_max]
        raise InputError(path, f"[detailing] open {large[0]} stirrups need the extra embedment of ACI 318-19 "
                               f"25.7.1.3(b), which is not checked: use stirrup_shape = \"closed\" or bars up to "
                               f"{small[-1]}")
    if d.max_zones_per_end < 1:
        raise InputError(path, "[detailing].max_zones_per_end must be at least 1")
    if s.frames.omega_o <= 0:
        raise InputError(path, "[frames].omega_o must be greater than zero")
    if s.combinations.vertical_earthquake > 0.5:
        raise InputError(path, "[combinations].vertical_earthquake is c of Ev = c D, 0.2 S_DS: at most 0.5 (S_DS "
                               "2.5); a larger value is likely S_DS itself")
    if s.deep.load_width <= 0 or s.deep.bearing_max_h <= 0:
        raise InputError(path, f"[deep] needs {col('load_width_mm')} > 0 and bearing_max_h > 0")
    if s.columns.biaxial_shear not in ("code", "elliptical"):
        raise InputError(path, "[columns].biaxial_shear must be \"code\" (22.5.1.10, 22.5.1.11) or \"elliptical\"")
    if s.run.memory_mb < 256:
        raise InputError(path, "[run].memory_mb must be at least 256 (the libraries alone take about 150 MB)")
    if s.columns.circular_transverse not in ("hoops", "spiral"):
        raise InputError(path, "[columns].circular_transverse must be \"hoops\" or \"spiral\"")
    return s


def _ladder(path: Path, value, bars: dict) -> tuple[tuple[str, int], ...]:
    out = []
    for item in value if isinstance(value, list) else [None]:
        if (not isinstance(item, list) or len(item) != 2 or item[0] not in bars
                or not isinstance(item[1], int) or item[1] < 2):
            raise InputError(path, "[detailing].ladder must list [bar, legs] pairs, bar one of "
                                   f"{', '.join(bars)}, legs a whole number >= 2")
        out.append((item[0], item[1]))
    if not out:
        raise InputError(path, "[detailing].ladder must not be empty")
    return tuple(out)


def _by_group(path: Path, value) -> dict:
    """[frames].by_group: a table of group label -> frame."""
    if not isinstance(value, dict):
        raise InputError(path, '[frames].by_group must be a table of group = frame, e.g. { perimeter = "special" }')
    for group, frame in value.items():
        if frame not in FRAMES:
            raise InputError(path, f"[frames].by_group: group '{group}' has frame {frame!r}; "
                                   f"frame must be one of {', '.join(FRAMES)}")
    return dict(value)


def _fill(path: Path, value, system: str = "si") -> dict:
    """[input].fill: optional numeric column -> value, either spelling of the column; kept in
    the run's spelling, the value converted to the run's unit (12 significant digits)."""
    from postproc import units as unit_names
    from postproc.adapters.csv_tables import FILLABLE  # (the readers' column lists, our SI names)

    U = unit_names.system(system)
    if not isinstance(value, dict):
        raise InputError(path, f"[input].fill must be a table: fill = {{ {U.col('N_kN')} = 0.0 }}")
    out: dict[str, float] = {}
    given: dict[str, str] = {}
    for column, number in value.items():
        si = unit_names.si_name(column)
        if si not in FILLABLE:
            raise InputError(path, f"[input].fill names '{column}', which is not an optional numeric column; "
                                   f"one of {', '.join(U.col(c) for c in FILLABLE)}")
        if isinstance(number, bool) or not isinstance(number, (int, float)) or not math.isfinite(number):
            raise InputError(path, f"[input].fill.{column} must be a finite number")
        ours = U.col(si)
        if ours in given:
            raise InputError(path, f"[input].fill gives both '{given[ours]}' and '{column}' (one column in two "
                                   "units); give one")
        given[ours] = column
        out[ours] = float(number) if column == ours else float(f"{number * unit_names.factor(column, ours):.12g}")
    return out


def settings_from_dict(doc: dict) -> Settings:
    """The settings a run was designed with, from its manifest (a run from before the two
    unit systems is SI)."""
    system = doc.get("units", "si")
    kinds = SECTIONS[system]
    d = dict(doc.get("detailing", {}))
    if "ladder" in d:
        d["ladder"] = tuple((bar, int(legs)) for bar, legs in d["ladder"])
    return Settings(combinations=kinds["combinations"](**doc.get("combinations", {})),
                    stations=kinds["stations"](**doc.get("stations", {})), detailing=kinds["detailing"](**d),
                    ifc=kinds["ifc"](**doc.get("ifc", {})), frames=kinds["frames"](**doc.get("frames", {})),
                    deep=kinds["deep"](**doc.get("deep", {})), columns=Columns(**doc.get("columns", {})),
                    input=Input(**doc.get("input", {})), run=Resources(**doc.get("run", {})),
                    report=Report(**doc.get("report", {})), units=system)
