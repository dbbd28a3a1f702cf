"""Project settings: a TOML file (``--config``) over common-practice defaults.

    [combinations]
    reduced_live_factor = false     # ACI 318-19 5.3.3: 0.5L in 5.3.1 (c), (d), (e)

    [stations]
    max_step_mm = 50                # station grid at most this far apart ...
    steps_per_d = 8                 # ... and at most d/8 apart
    point_load_kN = 1.0             # a jump in V larger than this and than
    point_load_fraction = 0.02      # this fraction of the member's largest |V| is a concentrated load
    tolerance_mm = 1.0              # rows of one member and case closer than this are one station
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

    [ifc]                           # members read from an IFC model
    fc_mpa = 35                     # where the model gives no f'c
    fyt_mpa = 420
    cover_mm = 60
    tolerance_mm = 50               # how far a beam end may be from its support
    length_tolerance_mm = 20        # IFC length against the force table's last station

    [frames]                        # moment frames of the seismic-force-resisting system (ACI 318-19 Ch. 18)
    by_group = { perimeter = "special" }  # frame of every member of a group whose members.csv `frame` is empty
    omega_o = 3.0                   # overstrength factor of the general building code, for 18.4.2.3(b)
    joint_tolerance_mm = 50         # how far a beam end may be from a column's joint (special-frame joints)

Omega_o comes from the general building code, not from ACI 318: 3.0 is the value commonly
tabulated there for reinforced-concrete moment frames (from memory); set the one your code
gives.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field, fields, replace
from pathlib import Path

from postproc.adapters.errors import InputError, read_toml

# ASTM A615/A615M Table 1: nominal diameter (mm) and area (mm^2) of deformed bars.
BAR_CATALOGUE = {
    "#10": (9.5, 71.0),
    "#13": (12.7, 129.0),
    "#16": (15.9, 199.0),
    "#19": (19.1, 284.0),
}


@dataclass(frozen=True)
class Combinations:
    reduced_live_factor: bool = False


@dataclass(frozen=True)
class Stations:
    max_step_mm: float = 50.0
    steps_per_d: float = 8.0
    point_load_kN: float = 1.0
    point_load_fraction: float = 0.02
    tolerance_mm: float = 1.0
    steep_slope_kN_per_m: float = 2000.0


@dataclass(frozen=True)
class Detailing:
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


@dataclass(frozen=True)
class Ifc:
    fc_mpa: float = 35.0  # where the model gives no f'c (a warning per member)
    fyt_mpa: float = 420.0
    cover_mm: float = 60.0  # face to centroid of the tension steel, where the model gives none
    tolerance_mm: float = 50.0  # how far a beam end may be from what it frames into
    length_tolerance_mm: float = 20.0  # IFC length against the force table's last station


FRAMES = ("none", "ordinary", "intermediate", "special")  # moment frames of ACI 318-19 Chapter 18


@dataclass(frozen=True)
class Frames:
    by_group: dict = field(default_factory=dict)  # group label -> frame, for members whose `frame` is empty
    omega_o: float = 3.0  # overstrength factor for 18.4.2.3(b); the general building code's value (from memory)
    joint_tolerance_mm: float = 50.0  # beam ends within this of a column's joint frame into it


@dataclass(frozen=True)
class Input:
    # optional numeric column -> value of its missing cells (blank, NaN, #N/A, ...), in our unit;
    # a column not named here refuses missing cells (an input error naming file, line and column)
    fill: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Settings:
    combinations: Combinations = field(default_factory=Combinations)
    stations: Stations = field(default_factory=Stations)
    detailing: Detailing = field(default_factory=Detailing)
    ifc: Ifc = field(default_factory=Ifc)
    frames: Frames = field(default_factory=Frames)
    input: Input = field(default_factory=Input)

    def as_dict(self) -> dict:
        return asdict(self)


def load_settings(path: str | Path | None) -> Settings:
    """Settings from a TOML file; unknown sections or keys are errors, not silently ignored."""
    if path is None:
        return Settings()
    path = Path(path)
    return validated_settings(read_toml(path, "settings"), path)


def validated_settings(doc: dict, path: Path) -> Settings:
    """Settings from the sections of a settings file (or the same as a dict, from Python),
    checked as the file is; errors name ``path``."""
    s = Settings()
    sections = {f.name: f for f in fields(Settings)}
    for name, values in doc.items():
        if name not in sections or not isinstance(values, dict):
            raise InputError(path, f"unknown section [{name}]; known: {', '.join(sections)}")
        current = getattr(s, name)
        known = {f.name: f for f in fields(current)}
        for key, value in values.items():
            if key not in known:
                raise InputError(path, f"[{name}] has no setting '{key}'; known: {', '.join(known)}")
            default = getattr(current, key)
            if key == "ladder":
                value = _ladder(path, value)
            elif key == "by_group":
                value = _by_group(path, value)
            elif key == "fill":
                value = _fill(path, value)
            elif isinstance(default, bool):
                if not isinstance(value, bool):
                    raise InputError(path, f"[{name}].{key} must be true or false")
            elif isinstance(default, (int, float)):
                if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
                        or value < 0:  # TOML has nan and inf: neither is a setting
                    raise InputError(path, f"[{name}].{key} must be a non-negative number")
                value = type(default)(value)
            current = replace(current, **{key: value})
        s = replace(s, **{name: current})
    d = s.detailing
    if d.first_stirrup not in ("fixed", "half"):
        raise InputError(path, "[detailing].first_stirrup must be \"fixed\" or \"half\"")
    if d.spacing_module_mm <= 0 or d.min_spacing_mm < d.spacing_module_mm:
        raise InputError(path, "[detailing] needs spacing_module_mm > 0 and min_spacing_mm >= spacing_module_mm")
    if d.stirrup_shape not in ("closed", "open") or d.open_hook_deg not in (90, 135):
        raise InputError(path, "[detailing] needs stirrup_shape \"closed\" or \"open\" and open_hook_deg 90 or 135")
    if d.stirrup_shape == "open" and any(bar == "#19" for bar, _ in d.ladder):
        raise InputError(path, "[detailing] open #19 stirrups need the extra embedment of ACI 318-19 25.7.1.3(b), "
                               "which is not checked: use stirrup_shape = \"closed\" or bars up to #16")
    if d.max_zones_per_end < 1:
        raise InputError(path, "[detailing].max_zones_per_end must be at least 1")
    if s.frames.omega_o <= 0:
        raise InputError(path, "[frames].omega_o must be greater than zero")
    return s


def _ladder(path: Path, value) -> tuple[tuple[str, int], ...]:
    out = []
    for item in value if isinstance(value, list) else [None]:
        if (not isinstance(item, list) or len(item) != 2 or item[0] not in BAR_CATALOGUE
                or not isinstance(item[1], int) or item[1] < 2):
            raise InputError(path, "[detailing].ladder must list [bar, legs] pairs, bar one of "
                                   f"{', '.join(BAR_CATALOGUE)}, legs a whole number >= 2")
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


def _fill(path: Path, value) -> dict:
    from postproc.adapters.csv_tables import FILLABLE  # (the readers' column lists)

    if not isinstance(value, dict):
        raise InputError(path, "[input].fill must be a table: fill = { N_kN = 0.0 }")
    for column, number in value.items():
        if column not in FILLABLE:
            raise InputError(path, f"[input].fill names '{column}', which is not an optional numeric column; "
                                   f"one of {', '.join(FILLABLE)}")
        if isinstance(number, bool) or not isinstance(number, (int, float)) or not math.isfinite(number):
            raise InputError(path, f"[input].fill.{column} must be a finite number")
    return {k: float(v) for k, v in value.items()}


def settings_from_dict(doc: dict) -> Settings:
    """The settings a run was designed with, from its manifest."""
    d = dict(doc.get("detailing", {}))
    if "ladder" in d:
        d["ladder"] = tuple((bar, int(legs)) for bar, legs in d["ladder"])
    return Settings(combinations=Combinations(**doc.get("combinations", {})), stations=Stations(**doc.get("stations", {})),
                    detailing=Detailing(**d), ifc=Ifc(**doc.get("ifc", {})), frames=Frames(**doc.get("frames", {})),
                    input=Input(**doc.get("input", {})))
