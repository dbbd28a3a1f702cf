"""One vocabulary for every output: terminal, CSV, JSON and the HTML report.

Column names (members.csv, zones.csv, JSON keys) are the stable contract; the terminal
and the report show the same quantities under the labels below, and nowhere else are
they named differently. Importing this module is free (no numpy), so that the command
line can build its help without loading the engine.
"""

from __future__ import annotations

# Every member leaves with one of these (members.csv `status`).
STATUSES = ("designed", "resize", "deep-beam", "no-forces", "no-geometry", "invalid", "not-covered")
# Members an engineer must act on before the design is complete, in the order they are listed.
NEEDS_ACTION = ("resize", "deep-beam", "invalid", "no-forces", "no-geometry")

# column -> the label a person reads (terminal tables, report headings)
LABELS = {
    "member": "member",
    "level": "level",
    "group": "group",
    "status": "status",
    "utilization": "utilization",
    "governing_case": "governing combination",
    "vu_design_i_kN": "Vu,i kN",
    "vu_design_j_kN": "Vu,j kN",
    "vu_design_kN": "Vu kN",
    "phi_vc_kN": "phi*Vc kN",
    "phi_vn_limit_kN": "phi*Vn,max kN",
    "stirrups_total": "stirrup sets",
    "stirrup_mass_kg": "stirrup mass kg",
    "utilization_a": "utilization A",
    "utilization_b": "utilization B",
    "utilization_change": "utilization change",
    "vu_change_rel": "Vu change (relative)",
    "stirrup_mass_change_kg": "stirrup mass change kg",
    "method": "method",
    "tie_as_req_mm2": "tie As,req mm^2",
    "tie_bars": "tie bars",
    "web_bars": "web bars",
}
# members.csv `method`: what designed a member (empty where nothing did)
METHODS = ("sectional", "strut-and-tie", "strut-and-tie+sectional")
MOMENT_UNIT = "kN*m"  # how moments are written in text (the column suffix is _kNm; kip*ft and _kipft inch-pound)
# the words of a label in an inch-pound run (columns named by postproc.units)
_US_WORDS = {"kN*m": "kip*ft", "kN": "kip", "kg": "lb", "mass": "weight", "mm": "in", "MPa": "psi"}


def label(column: str) -> str:
    """The label of a column named in either unit system."""
    if column in LABELS:
        return LABELS[column]
    from postproc.units import si_name

    si = si_name(column)
    if si == column or si not in LABELS:
        return column
    import re

    return re.sub(r"kN\*m|\bkN\b|\bkg\b|\bmass\b|\bmm\b|\bMPa\b", lambda m: _US_WORDS[m.group(0)], LABELS[si])


def did_you_mean(unknown: str, known, n: int = 3) -> str:
    """'; did you mean X or Y?' for an unknown id, from the close matches among ``known`` ('' if none)."""
    import difflib

    close = difflib.get_close_matches(str(unknown), [str(k) for k in known], n=n, cutoff=0.6)
    if not close:
        return ""
    return "; did you mean " + " or ".join(repr(c) for c in close) + "?"


def with_frame(message: str, frame: str) -> str:
    """A message template for one member's moment frame: ``{frame}`` its name, ``{a}`` its
    article ('a special', 'an intermediate')."""
    return message.format(frame=frame, a="an" if frame[:1] in "aeiou" else "a")
