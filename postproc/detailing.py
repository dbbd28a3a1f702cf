"""Stirrup layouts a detailer can build, from the per-station demand.

For each member one (bar, legs) is chosen from the settings' ladder: the first whose
spacing at the highest demand, rounded down to the spacing module, is not below the
practical minimum, and whose legs satisfy the spacing across the width (Table
9.7.6.2.2). Stirrup positions are then set out: runs from each supported end toward
the point of least demand (a cantilever from its fixed end), at most
``max_zones_per_end`` spacings from each end counting the middle run, which is
centred between the end runs. Every gap between neighbouring stirrups lies between
the practical minimum spacing and the spacing the demand allows everywhere in it; the
gap from a face or a free end to the nearest stirrup is held to the same limit. The
zones of zones.csv are derived from the positions (``zones_batch``, a whole batch at once), so the
two can never disagree.

Lengths are in the run's internal unit (mm or in), bars those of its unit system
(``Detailing.bars``), hooks and bends those of its edition of ACI 318-19 (``u``).
"""

from __future__ import annotations

import functools
import itertools
from dataclasses import dataclass, field, replace

import numpy as np

from postproc import kernels
from postproc.codes import aci318_19 as aci
from postproc.codes.aci318_19 import SI, Edition
from postproc.settings import Detailing, bar_catalogue

STEEL_DENSITY = 7850e-9  # kg/mm^3 (common practice)
STEEL_DENSITY_US = 490.0 / 1728.0  # lb/in^3: 490 lb/ft^3 (common practice)


def steel_density(u: Edition = SI) -> float:
    """Mass of steel per unit volume: kg/mm^3 or lb/in^3."""
    return STEEL_DENSITY if u.units == "si" else STEEL_DENSITY_US


@dataclass(frozen=True)
class Zone:
    """Stirrups at ``start``, ``start + spacing``, ... ``end`` (from face i); an empty
    zone (count 0) runs between the stirrups that bound it; a single stirrup has no spacing."""

    start: float
    end: float
    spacing: float  # nan: one stirrup or none
    count: int


@dataclass
class Layout:
    bar: str
    legs: int
    positions: np.ndarray  # every stirrup from face i (mm or in), ascending
    empty: list[tuple[float, float]] = field(default_factory=list)  # spans left without stirrups on purpose
    message: str = ""

    @property
    def count(self) -> int:
        return len(self.positions)


@dataclass(frozen=True)
class Stirrups:
    """The stirrup positions of a batch of members, one array: member m's (ascending, from face
    i) are ``x[offsets[m]:offsets[m + 1]]`` (none where not laid out); its span left without
    stirrups on purpose is ``hole_lo[m]`` to ``hole_hi[m]`` (NaN where none)."""

    x: np.ndarray
    offsets: np.ndarray
    hole_lo: np.ndarray
    hole_hi: np.ndarray

    @property
    def counts(self) -> np.ndarray:
        return np.diff(self.offsets)

    @property
    def member(self) -> np.ndarray:
        """Per stirrup: its member."""
        return np.repeat(np.arange(len(self.offsets) - 1), self.counts)

    def extents(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Per member: its first and last stirrup (NaN where it has none) and the least gap
        between two of its stirrups (inf where it has fewer than two), for the self-checks."""
        has, x = self.counts > 0, self.x
        first = np.where(has, x[np.minimum(self.offsets[:-1], max(len(x) - 1, 0))] if len(x) else 0.0, np.nan)
        last = np.where(has, x[np.maximum(self.offsets[1:] - 1, 0)] if len(x) else 0.0, np.nan)
        member = self.member
        inner = member[1:] == member[:-1] if len(x) else np.zeros(0, bool)
        least_gap = np.full(len(self.offsets) - 1, np.inf)
        np.minimum.at(least_gap, member[1:][inner], np.diff(x)[inner])
        return first, last, least_gap

    @classmethod
    def gather(cls, layouts: dict[int, Layout], n: int) -> Stirrups:
        """The layouts of members 0 .. n - 1 (a dict by member) as one batch."""
        counts = np.zeros(n, np.int64)
        lo, hi = np.full(n, np.nan), np.full(n, np.nan)
        for m, lay in layouts.items():
            counts[m] = len(lay.positions)
            if lay.empty:  # layout_positions leaves one span at most
                (lo[m], hi[m]), = lay.empty
        order = sorted(layouts)
        x = np.concatenate([layouts[m].positions for m in order]) if order else np.zeros(0)
        return cls(x.astype(float, copy=False), np.r_[0, np.cumsum(counts)], lo, hi)


def hook_extension(db: float, degrees: int, u: Edition = SI) -> float:
    """Straight extension of a stirrup hook (Table 25.3.2): 90 degrees, No. 10 to No. 16 | No. 3
    to No. 5 max(6 db, 75 mm | 3 in) and No. 19 to No. 25 | No. 6 to No. 8 12 db; 135 degrees,
    all of them max(6 db, 75 mm | 3 in)."""
    if degrees == 90 and db > u.hook_small_db_max:
        return 12.0 * db
    return max(6.0 * db, u.hook_min_extension)


def bend_diameter(db: float, u: Edition = SI) -> float:
    """Minimum inside bend diameter of stirrups (Table 25.3.3): 4 db to No. 16 | No. 5, 6 db for
    No. 19 to No. 25 | No. 6 to No. 8."""
    return 4.0 * db if db <= u.hook_small_db_max else 6.0 * db


@dataclass(frozen=True)
class Shape:
    """One bent bar of a stirrup set. A and B are out-to-out dimensions; all lengths in mm or in."""

    name: str  # closed-135, inner-closed-135, open-90, open-135, single-leg-135-90
    bar: str
    A: float
    B: float
    hook: float
    bend_diameter: float
    cut_length: float
    per_set: int


def _cut_length(straights: float, arcs_deg: float, r: float, tails: float) -> float:
    return straights + np.pi * r * arcs_deg / 180.0 + tails


def stirrup_set(b: float, h: float, cover: float, bar: str, legs: int, closed: bool, open_hook: int = 90,
                u: Edition = SI) -> list[Shape]:
    """The bars of one stirrup set and their cut lengths, measured on the bar centreline.

    Outside dimensions A = b - 2 cover, B = h - 2 cover; centreline a = A - db, c = B - db;
    bend radius to the centreline r = D/2 + db/2 with D from Table 25.3.3; tails from
    Table 25.3.2. A closed stirrup with 135-degree hooks at one corner (25.7.1.6(a) where
    torsion acts): straights 2a + 2c - 8r, arcs 3 x 90 + 2 x 135 = 540 degrees, two tails.
    An open (U) stirrup: straights 2c + a - 6r, arcs 2 x 90 plus two hooks, two tails
    (25.7.1.3). Sets of more than two legs add inner closed stirrups one leg-spacing
    wide, and a single leg with a 135 and a 90 degree hook for an odd leg.
    """
    db, _ = bar_catalogue(u.units)[bar]
    D = bend_diameter(db, u)
    r = D / 2 + db / 2
    A, B = b - 2 * cover, h - 2 * cover
    a, c = A - db, B - db
    e135, e90 = hook_extension(db, 135, u), hook_extension(db, 90, u)
    shapes = []
    if closed:
        shapes.append(Shape("closed-135", bar, A, B, e135, D, _cut_length(2 * a + 2 * c - 8 * r, 540, r, 2 * e135), 1))
    else:
        e = e90 if open_hook == 90 else e135
        shapes.append(Shape(f"open-{open_hook}", bar, A, B, e, D,
                            _cut_length(2 * c + a - 6 * r, 180 + 2 * open_hook, r, 2 * e), 1))
    inner = legs // 2 - 1
    if inner > 0:
        ai = a / (legs - 1)  # centreline width spanning one leg spacing
        shapes.append(Shape("inner-closed-135", bar, ai + db, B, e135, D,
                            _cut_length(2 * ai + 2 * c - 8 * r, 540, r, 2 * e135), inner))
    if legs % 2:
        shapes.append(Shape("single-leg-135-90", bar, db, B, e135, D,
                            _cut_length(c - 2 * r, 225, r, e135 + e90), 1))
    return shapes


HOOP_NAMES = {"closed-135": "hoop-135", "inner-closed-135": "inner-hoop-135", "single-leg-135-90": "crosstie-135-90"}


def hoop_set(b: float, h: float, cover: float, bar: str, legs: int, u: Edition = SI) -> list[Shape]:
    """The bars of one hoop set of a frame beam (18.6.4, 18.4.2.4): a closed hoop and inner
    hoops with seismic hooks (135 degrees, 6 db and at least 75 mm | 3 in: Chapter 2,
    25.3.4), an odd leg as a crosstie with a seismic hook and a 90-degree hook (25.7.1.6.1,
    18.6.4.3). The seismic hook is the 135-degree stirrup hook of Table 25.3.2 for No. 10 to
    No. 25 | No. 3 to No. 8, so the cut lengths are those of ``stirrup_set``."""
    seismic = float(aci.seismic_hook_extension(bar_catalogue(u.units)[bar][0], u))
    return [replace(s, name=HOOP_NAMES[s.name], hook=seismic) for s in stirrup_set(b, h, cover, bar, legs, True, u=u)]


def set_mass(shapes: list[Shape], u: Edition = SI) -> float:
    """Mass of one stirrup set: kg (steel 7850 kg/m^3) or lb (490 lb/ft^3)."""
    bars = bar_catalogue(u.units)
    return sum(s.cut_length * s.per_set * bars[s.bar][1] for s in shapes) * steel_density(u)




def legs_for_width(b: float, cover: float, db: float, s_across: float) -> int:
    """Least number of legs so that legs are at most s_across apart across the width (Table 9.7.6.2.2)."""
    w = b - 2 * cover - db
    return max(2, int(np.ceil(w / s_across - 1e-9)) + 1)


def leg_spacing(b: float, cover: float, db: float, legs: int) -> float:
    """Centre distance between adjacent legs across the width, legs evenly spread."""
    return (b - 2 * cover - db) / np.maximum(legs - 1, 1)


def floor_to_module(s: np.ndarray, module: float) -> np.ndarray:
    """Round a spacing down to the practical module (common practice: 25 mm or 1 in)."""
    with np.errstate(invalid="ignore"):
        return np.where(np.isfinite(s), np.floor(s / module + 1e-9) * module, s)


def choose_levels(u: np.ndarray, s_env: np.ndarray, max_levels: int) -> np.ndarray:
    """Spacings per station from one face, nondecreasing toward the middle, at most ``max_levels``
    distinct values, each <= the allowed spacing, using the fewest stirrups: every choice of
    levels (the tightest always among them) is scored in one step, the first of the least
    cost wins (postproc.reference.choose_levels scores them one by one)."""
    values = np.unique(s_env)
    if len(values) <= max_levels:
        return s_env
    widths = np.diff(np.concatenate([u, [u[-1]]]))
    pos = np.searchsorted(values, s_env)
    lengths = np.bincount(pos, weights=widths, minlength=len(values))
    use = _level_choices(len(values), max_levels)  # (choices, values): the level each value is set to
    denominators = values[use]
    cost = np.sum(lengths / np.where(np.isfinite(denominators), denominators, 1e12), axis=1)
    return values[use[np.argmin(cost)]][pos]


@functools.lru_cache(maxsize=256)
def _level_choices(n_values: int, max_levels: int) -> np.ndarray:
    """Every set of ``max_levels`` of ``n_values`` sorted spacings holding the least, in the order of
    itertools.combinations; row c gives, for each value, the largest chosen level not above it."""
    chosen = np.array([(0, *rest) for rest in itertools.combinations(range(1, n_values), max_levels - 1)])
    at = (chosen[:, :, None] <= np.arange(n_values)[None, None, :]).sum(axis=1) - 1
    use = np.take_along_axis(chosen, at, axis=1)
    use.flags.writeable = False
    return use


@dataclass
class _Run:
    spacing: float
    positions: list[float]


def _end_runs(u: np.ndarray, s_env: np.ndarray, first, max_zones: int,
              span: float) -> tuple[list[_Run], float] | None:
    """Runs of stirrups from one face (u measured from it, ascending), tightest first.

    The first stirrup is ``first(s)`` from the face for a first run at spacing s; each
    run's stirrups follow the last stirrup before them at the run's spacing, and a run
    ends on the first stirrup at or past every station that needs its spacing; the first
    run has two stirrups at least, as the stations between the face and its first stirrup
    take the gap after it. No stirrup comes closer to the far end (``span`` away) than
    the first-stirrup distance. Returns the runs before the middle and the spacing of the
    middle (the last level; inf where no stirrups are needed), or None where a run would
    need to reach past the far end (the caller then sets the tightest spacing throughout)."""
    suffix_min = np.minimum.accumulate(s_env[::-1])[::-1]  # nondecreasing toward the middle
    levels = choose_levels(u, suffix_min, max_zones)
    starts = np.concatenate([[0], np.flatnonzero(levels[1:] != levels[:-1]) + 1])
    runs: list[_Run] = []
    last = None
    for k, i0 in enumerate(starts[:-1]):
        s = float(levels[i0])
        boundary = float(u[starts[k + 1]])  # stations before it need a spacing <= s
        limit = span - first(s)
        x = first(s) if last is None else last + s
        pos = [x]
        # the stations between the face and the first stirrup take the gap after it: the
        # first run has at least two stirrups
        while pos[-1] < boundary - 1e-9 or (last is None and len(pos) < 2):
            pos.append(pos[-1] + s)
        if pos[-1] > limit + 1e-9:
            while pos and pos[-1] > limit + 1e-9:
                pos.pop()
            if not pos or span - pos[-1] > s + 1e-9:  # the far end's stations would be left too wide a gap
                return None
        runs.append(_Run(s, pos))
        last = pos[-1]
    return runs, float(levels[starts[-1]])


def _continued(a: float, b: float, s: float, smin: float, fixed_a: bool, face_b: float | None,
               close_at_face: bool = False) -> list[float] | None:
    """The run carries on from a at spacing s and closes at b with one gap in [smin, s].
    With ``face_b`` (b is where a stirrup first-stirrup distance from that face or free
    end would go), the run may instead end anywhere leaving at most s to the face, unless
    ``close_at_face`` asks for a stirrup at b (the first hoop from a face, 18.6.4.4)."""
    pos = [a] if fixed_a else []
    if face_b is None:
        k = int(np.floor((b - smin - a) / s + 1e-9))
        if k < 0 or b - (a + k * s) > s + 1e-9:
            return None
        return pos + [a + j * s for j in range(1, k + 1)]
    k = int(np.floor((b - a) / s + 1e-9))
    if k < 0:
        return None
    run = pos + [a + j * s for j in range(1, k + 1)]
    last = a + k * s
    if abs(b - last) <= 1e-9 or (face_b - last <= s + 1e-9 and not close_at_face):
        return run
    if smin - 1e-9 <= b - last <= s + 1e-9:  # one more, first-stirrup distance from the face
        return run + [b]
    return None


def _centred(a: float, b: float, s: float, smin: float, fixed_a: bool, fixed_b: bool,
             st: Detailing = Detailing()) -> list[float] | None:
    """Stirrups at spacing s between a and b, centred, so that the gaps at both ends lie in
    [smin, s]. ``fixed_a``: a is a stirrup to be placed (not one already there), and the
    same for b. Returns the new positions (with a and b where fixed), or None. Positions
    fall on the settings' set-out step (``st``)."""
    d = b - a
    if d < -1e-9:
        return None
    if d <= s + 1e-9:  # one gap
        if d >= smin - 1e-9:
            return [a] * fixed_a + [b] * fixed_b
        if fixed_a and fixed_b:  # both to be placed and closer than smin: one stirrup between
            return [round((a + b) / 2, st.position_decimals)]
        return None
    n = int(np.ceil(d / s - 1e-9)) - 1  # stirrups strictly between
    g = d - (n - 1) * s  # the two end gaps together, in (s, 2s]
    if g < 2 * smin - 1e-9:
        return None
    g_a = np.floor(g / 2 / st.setout_step) * st.setout_step  # on the set-out step (whole mm, 1/8 in): the anchors
    inner = [a + g_a + k * s for k in range(n)]
    return [a] * fixed_a + inner + [b] * fixed_b


def _fit_between(left: list[_Run], right: list[_Run], a: float, b: float, s: float, st: Detailing,
                 fixed_a: bool, face_b: float | None, close_at_face: bool = False) -> list[float] | None:
    """The middle run from a to b: carried on from a at its spacing and closed at b
    (``_continued``), else centred between them; where neither keeps every gap between
    the practical minimum and its spacing, an end run is extended by one or more of its
    own stirrups, or the spacing is made one or more modules tighter (least change first)."""
    smin, module = st.min_spacing, st.spacing_module
    tries = []
    for extra in range(4):
        for i in range(extra + 1):
            j = extra - i
            if (i and not left) or (j and not right):
                continue
            tries.append((i, j))
    spacings = [s - k * module for k in range(int((s - smin) // module) + 1)]
    for s_try in spacings:
        for i, j in tries:
            a2 = a + i * left[-1].spacing if i else a
            b2 = b - j * right[-1].spacing if j else b
            got = _continued(a2, b2, s_try, smin, fixed_a, face_b, close_at_face) if not j else None
            if got is None:
                got = _centred(a2, b2, s_try, smin, fixed_a, face_b is not None, st)
            if got is not None:
                ext_a = [a + k * left[-1].spacing for k in range(1, i + 1)]
                ext_b = [b - k * right[-1].spacing for k in range(j, 0, -1)]
                return ext_a + got + ext_b
    return None


NONE_NEEDED = "no stirrups required"
NO_SET_OUT = "the stirrups cannot be set out within the minimum spacing and the allowed spacing"
ZONES_MET = "end zones meet; one zone throughout"


def layout_positions(u: np.ndarray, s_env: np.ndarray, clear_span: float, free_i: bool, free_j: bool,
                     st: Detailing, close_at_faces: bool = False) -> tuple[np.ndarray, list[tuple[float, float]], str] | str:
    """Stirrup positions for one member from the allowed spacing at each station (u from
    face i; inf where none is needed). ``close_at_faces``: the stirrup nearest each face
    stands the first-stirrup distance from it (hoops of frame beams, 18.6.4.4, 18.4.2.4),
    where otherwise the last may stand anywhere up to its spacing from face j. Returns
    (positions, empty spans, note), or a string that says why no layout is possible."""
    first = (lambda s: st.first_stirrup_at) if st.first_stirrup == "fixed" else (lambda s: s / 2.0)
    if np.all(np.isinf(s_env)):
        return np.empty(0), [(0.0, clear_span)], NONE_NEEDED
    zmax = st.max_zones_per_end
    if free_i or free_j:  # a cantilever, set out from its fixed end
        v = u if free_j else (clear_span - u)[::-1]
        env = s_env if free_j else s_env[::-1]
        pos, empty = _cantilever(v, env, clear_span, first, zmax, st)
        if pos is None:
            return NO_SET_OUT
        if not free_j:
            pos = clear_span - pos[::-1]
            empty = [(clear_span - e, clear_span - s) for s, e in reversed(empty)]
        return _rounded(pos, st), empty, ""
    finite = np.where(np.isfinite(s_env), s_env, 1e12)
    best = np.flatnonzero(finite == finite.max())
    m = best[np.argmin(np.abs(u[best] - clear_span / 2))]  # least demand, nearest mid-span
    ends = (_end_runs(u[: m + 1], s_env[: m + 1], first, zmax, clear_span),
            _end_runs((clear_span - u[m:])[::-1], s_env[m:][::-1], first, zmax, clear_span))
    note = ""
    if ends[0] is None or ends[1] is None:  # a tight run reaching the far end: the tightest spacing throughout
        left, right, s_mid = [], [], float(np.min(s_env))
        note = ZONES_MET
    else:
        (left, s_l), (right, s_r) = ends
        right = [_Run(r.spacing, [clear_span - x for x in r.positions]) for r in right]  # from face j, descending
        s_mid = min(s_l, s_r)
        for side in (left, right):  # an end run as wide as the middle is part of it
            while side and side[-1].spacing >= s_mid:
                side.pop()
    a = left[-1].positions[-1] if left else None
    b = right[-1].positions[-1] if right else None
    if a is not None and b is not None and b - a < st.min_spacing - 1e-9:
        left, right, note = [], [], ZONES_MET  # the tightest spacing throughout
        s_mid = float(np.min(s_env))
        a = b = None
    if not np.isfinite(s_mid):  # nothing needed in the middle
        pos = [x for r in left for x in r.positions] + [x for r in reversed(right) for x in r.positions[::-1]]
        lo = a if a is not None else 0.0
        hi = b if b is not None else clear_span
        empty = [(lo, hi)] if hi - lo > st.min_spacing else []  # not the mere edge before a stirrup
        return _rounded(np.array(sorted(pos)), st), empty, ""
    fixed_a, face_b = a is None, (clear_span if b is None else None)
    a = first(s_mid) if a is None else a
    b = clear_span - first(s_mid) if b is None else b
    mid = _fit_between(left, right, a, b, s_mid, st, fixed_a, face_b, close_at_faces)
    if mid is None:
        return NO_SET_OUT
    pos = [x for r in left for x in r.positions] + mid + [x for r in reversed(right) for x in r.positions[::-1]]
    return _rounded(np.array(sorted(pos)), st), [], note


def layout_positions_batch(u: np.ndarray, s_env: np.ndarray, offsets: np.ndarray, todo: np.ndarray,
                           clear_span: np.ndarray, free_i: np.ndarray, free_j: np.ndarray, st: Detailing,
                           at_faces: np.ndarray, st_faces: Detailing) -> dict:
    """``layout_positions`` of the members ``todo`` of a batch (member m's stations are
    ``offsets[m]:offsets[m + 1]``); those marked ``at_faces`` with ``st_faces`` and
    ``close_at_faces``. A dict by member of what ``layout_positions`` returns: the same
    values, from one compiled call over the batch where the compiled kernels are used. From
    ``layout_positions`` itself: a member with NaN or a spacing not above zero among its
    stations or a length not finite, hoop members whose settings differ from ``st`` beyond
    the first stirrup, and the rare case of two stirrups to place closer than the minimum."""
    todo = np.asarray(todo, np.int64)
    stations = int(np.sum(offsets[todo + 1] - offsets[todo])) if len(todo) else 0
    by_python = todo
    out = {}
    if len(todo) and st.max_zones_per_end >= 1 and kernels.use_compiled(stations):
        bad = ~np.isfinite(clear_span)
        odd = ~np.isfinite(u) | np.isnan(s_env) | ~(s_env > 0)
        member = np.repeat(np.arange(len(offsets) - 1), np.diff(offsets))
        bad[member[odd]] = True
        if not _same_but_first(st_faces, st):  # the kernel takes only the first stirrup from st_faces
            bad |= np.asarray(at_faces, bool)
        fast = todo[~bad[todo]]
        what, x, starts, hole = kernels.set_out(u, s_env, offsets, fast, clear_span, free_i, free_j, st, at_faces,
                                                st_faces)
        x = _rounded(x, st)
        for m in fast:
            w = what[m]
            if w == kernels.NONE_NEEDED:
                out[m] = (np.empty(0), [(0.0, float(clear_span[m]))], NONE_NEEDED)
            elif w == kernels.NO_SET_OUT:
                out[m] = NO_SET_OUT
            elif w != kernels.BY_PYTHON:
                empty = [(float(hole[m, 0]), float(hole[m, 1]))] if np.isfinite(hole[m, 0]) else []
                out[m] = (x[starts[m]:starts[m + 1]], empty, ZONES_MET if w == kernels.ZONES_MET else "")
        by_python = todo[bad[todo] | (what[todo] == kernels.BY_PYTHON)]
    for m in by_python:
        sl = slice(offsets[m], offsets[m + 1])
        out[m] = layout_positions(u[sl], s_env[sl], float(clear_span[m]), bool(free_i[m]), bool(free_j[m]),
                                  st_faces if at_faces[m] else st, close_at_faces=bool(at_faces[m]))
    return out


def _same_but_first(a: Detailing, b: Detailing) -> bool:
    """Whether two detailing settings differ in their first stirrup alone."""
    first = "first_stirrup_mm" if hasattr(b, "first_stirrup_mm") else "first_stirrup_in"
    return type(a) is type(b) and replace(a, first_stirrup=b.first_stirrup, **{first: b.first_stirrup_at}) == b


def _cantilever(v, env, span, first, zmax, st: Detailing):
    """Positions from the fixed face (v from it) to the free end; the stirrup nearest the
    tip is ``first`` from it wherever the tip region needs stirrups."""
    ends = _end_runs(v, env, first, zmax, span)
    runs, s_tip = ends if ends is not None else ([], float(np.min(env)))
    if not np.isfinite(s_tip):  # the tip region needs none
        pos = [x for r in runs for x in r.positions]
        return np.array(pos), [(pos[-1] if pos else 0.0, span)]
    tip = span - first(s_tip)
    while runs and runs[-1].positions[-1] > tip - st.min_spacing + 1e-9:
        runs.pop()  # a run reaching the tip: the tighter spacing carries on to it instead
        s_tip = float(np.min(env))
    a = runs[-1].positions[-1] if runs else first(s_tip)
    mid = _fit_between(runs, [], a, tip, s_tip, st, not runs, span)
    if mid is None:
        return None, []
    return np.array([x for r in runs for x in r.positions] + mid), []


def _rounded(pos: np.ndarray, st: Detailing) -> np.ndarray:
    return np.round(pos, st.position_decimals)


@dataclass(frozen=True)
class Zones:
    """Zones of a batch of stirrup groups, in order (group by group, from face i): zone k
    holds ``count[k]`` stirrups from ``start[k]`` to ``end[k]`` at ``spacing[k]`` (NaN: one
    stirrup or none) and belongs to group ``group[k]``."""

    group: np.ndarray
    start: np.ndarray
    end: np.ndarray
    spacing: np.ndarray
    count: np.ndarray


def zones_batch(x: np.ndarray, offsets: np.ndarray, clear_span: np.ndarray, hole_lo: np.ndarray,
                hole_hi: np.ndarray, same_gap: float = Detailing.same_gap) -> Zones:
    """Zones as a detailer sets them out, derived from the stirrup positions of every group
    of a batch at once (group g: ``x[offsets[g]:offsets[g + 1]]``, ascending, in a clear span
    ``clear_span[g]``, with at most one span left without stirrups on purpose, ``hole_lo[g]``
    to ``hole_hi[g]``, NaN where none).

    Runs of equal gaps are zones (a run goes on while each gap is within ``same_gap`` of its
    first: 0.15 mm, or the inch-pound settings' 0.005 in, above the rounding of two
    positions); where two runs meet, the stirrup between them belongs to the tighter one; a
    lone gap between two runs (a transition) belongs to neither, so each zone is "count
    stirrups from start to end at spacing". Spans left without stirrups on purpose are zones
    of count 0. postproc.reference.zones_from_positions is the same, one group at a time."""
    G, N = len(offsets) - 1, len(x)
    counts = np.diff(offsets)
    grp = np.repeat(np.arange(G), counts)
    with np.errstate(invalid="ignore"):
        has_hole = hole_hi > hole_lo  # NaN: none
    # gap k lies between stirrups k and k + 1; it is a gap of its group where both are in it
    gap = np.diff(x)
    valid = grp[1:] == grp[:-1] if N else np.zeros(0, bool)
    g_of = grp[:-1] if N else np.zeros(0, np.int64)
    hole_gap = valid & has_hole[g_of] & (hole_lo[g_of] <= x[:-1] + 1e-6) & (hole_hi[g_of] >= x[1:] - 1e-6)
    # where a run starting at gap k would end: while the next gap is within same_gap of gap k
    end = np.arange(len(gap))
    cur = np.flatnonzero(valid & ~hole_gap)
    while len(cur):
        nxt = np.minimum(end[cur] + 1, max(len(gap) - 1, 0))
        go = (end[cur] + 1 < len(gap)) & valid[nxt] & ~hole_gap[nxt] & (np.abs(gap[nxt] - gap[cur]) < same_gap)
        cur = cur[go]
        end[cur] += 1
    # the runs: from the first gap of each group, each starting after the last one ends
    start = np.zeros(len(gap), bool)
    cur = offsets[:-1][counts > 1]
    while len(cur):
        start[cur] = True
        nxt = end[cur] + 1
        cur = nxt[(nxt < len(gap)) & valid[np.minimum(nxt, max(len(gap) - 1, 0))]]
    run = start & ~hole_gap  # a gap inside a hole is no run
    latest = np.maximum.accumulate(np.where(start, np.arange(len(gap)), -1)) if len(gap) else np.zeros(0, np.int64)
    run_of = np.where(valid & ~hole_gap, latest, -1)  # the run (its first gap) each gap is in
    multi = np.zeros(len(gap), bool)
    multi[run] = end[run] > np.flatnonzero(run)
    # owners: the stirrups of runs of two gaps or more, the tighter run first where two meet
    owner = np.full(N, -1)
    left = np.full(N, -1)  # the run through the gap before each stirrup
    right = np.full(N, -1)  # the run through the gap after it
    if len(gap):
        in_multi = (run_of >= 0) & multi[np.maximum(run_of, 0)]
        left[1:] = np.where(in_multi, run_of, -1)
        right[:-1] = np.where(in_multi, run_of, -1)
    lg = np.where(left >= 0, gap[np.maximum(left, 0)] if len(gap) else 0.0, np.inf)
    rg = np.where(right >= 0, gap[np.maximum(right, 0)] if len(gap) else 0.0, np.inf)
    owner = np.where((left >= 0) & (lg <= rg), left, right)  # equal gaps: the earlier run (a stable order)
    # a lone gap between two stirrups nobody owns: in a chain of such gaps, every other one from its first
    lone = run & ~multi
    free = lone.copy()
    if len(gap):
        free &= (owner[:-1] < 0) & (owner[1:] < 0)
    idx = np.arange(len(gap))
    chain_start = free & ~np.concatenate([[False], free[:-1]])
    first = np.maximum.accumulate(np.where(chain_start, idx, 0)) if len(gap) else idx
    claim = free & ((idx - first) % 2 == 0)
    owner[:-1][claim] = idx[claim]
    owner[1:][claim] = idx[claim]
    # zones: stirrups of one owner together, every other stirrup alone
    together = np.zeros(N, bool)  # stirrup k joins the zone of stirrup k - 1
    if N:
        together[1:] = valid & (owner[1:] >= 0) & (owner[1:] == owner[:-1])
    heads = np.flatnonzero(~together)
    tails = np.concatenate([heads[1:] - 1, [N - 1]]) if len(heads) else heads
    cnt = tails - heads + 1
    spacing = _segment_median(gap, heads, cnt - 1)
    z_group = grp[heads]
    after_hole = np.zeros(len(heads), bool)
    inner = tails < N - 1
    after_hole[inner] = hole_gap[tails[inner]] & valid[tails[inner]]
    # the pieces in order: a leading empty zone, the zones (each maybe followed by an empty one), a trailing one
    nonempty = counts > 0
    first_x = np.where(nonempty, x[np.minimum(offsets[:-1], max(N - 1, 0))] if N else 0.0, np.nan)
    last_x = np.where(nonempty, x[np.maximum(offsets[1:] - 1, 0)] if N else 0.0, np.nan)
    with np.errstate(invalid="ignore"):
        lead = nonempty & has_hole & (hole_lo <= 0.0) & (0.0 < first_x)
        trail = nonempty & has_hole & (hole_hi >= clear_span) & (last_x < clear_span)
    g_all = np.arange(G)
    e = np.flatnonzero(after_hole)
    pieces = [  # (group, order within it, start, end, spacing, count)
        (g_all[~nonempty], np.full((~nonempty).sum(), -1), np.zeros((~nonempty).sum()), clear_span[~nonempty],
         np.full((~nonempty).sum(), np.nan), np.zeros((~nonempty).sum(), np.int64)),
        (g_all[lead], np.full(lead.sum(), -1), np.zeros(lead.sum()), first_x[lead], np.full(lead.sum(), np.nan),
         np.zeros(lead.sum(), np.int64)),
        (z_group, 2 * heads, x[heads], x[tails], spacing, cnt),
        (z_group[e], 2 * tails[e] + 1, x[tails[e]], x[tails[e] + 1], np.full(len(e), np.nan), np.zeros(len(e), np.int64)),
        (g_all[trail], np.full(trail.sum(), 2 * N + 2), last_x[trail], clear_span[trail], np.full(trail.sum(), np.nan),
         np.zeros(trail.sum(), np.int64)),
    ]
    cols = [np.concatenate([p[c] for p in pieces]) for c in range(6)]
    order = np.lexsort((cols[1], cols[0]))
    return Zones(cols[0][order].astype(np.int64), cols[2][order].astype(float), cols[3][order].astype(float),
                 cols[4][order].astype(float), cols[5][order].astype(np.int64))


def _segment_median(values: np.ndarray, heads: np.ndarray, lengths: np.ndarray) -> np.ndarray:
    """The median of values[heads[k]:heads[k] + lengths[k]] for each k (NaN where empty), as
    numpy.median gives it: the middle value, or the mean of the two middle ones."""
    out = np.full(len(heads), np.nan)
    has = lengths > 0
    if not has.any():
        return out
    seg = np.repeat(np.arange(len(heads))[has], lengths[has])
    idx = np.repeat(heads[has] - np.cumsum(np.r_[0, lengths[has][:-1]]), lengths[has]) + np.arange(len(seg))
    order = np.lexsort((values[idx], seg))
    v = values[idx][order]
    base = np.cumsum(np.r_[0, lengths[has][:-1]])
    n = lengths[has]
    lo, hi = v[base + (n - 1) // 2], v[base + n // 2]
    out[has] = np.where(n % 2 == 1, hi, (lo + hi) / 2.0)
    return out


def provided_spacing_batch(x: np.ndarray, offsets: np.ndarray, clear_span: np.ndarray, station_group: np.ndarray,
                           stations: np.ndarray, side: np.ndarray | None = None) -> np.ndarray:
    """Spacing in force at each station of a batch: the gap between the stirrups on either
    side; beyond the first or last stirrup, the larger of the gap to the face or free end
    and the gap next to it; inf where there are none (and where ``station_group`` is -1).
    Group g's stirrups are ``x[offsets[g]:offsets[g + 1]]``, ascending, in a clear span
    ``clear_span[g]``. At a station on a stirrup, ``side`` says which gap it stands for: -1
    the one before it (the left limit of a jump), +1 the one after it (the right limit), 0
    the larger of the two (shear continuous there). postproc.reference.provided_spacing is
    the same, one member at a time."""
    S, G = len(stations), len(offsets) - 1
    out = np.full(S, np.inf)
    counts = np.diff(offsets)
    sel = np.flatnonzero(station_group >= 0)
    sel = sel[counts[station_group[sel]] > 0]
    if not len(sel):
        return out
    # ext: for each group, the gap before each of its stirrups and the gap after the last
    grp = np.repeat(np.arange(G), counts)
    e_off = offsets + np.arange(G + 1)
    ext = np.empty(len(x) + G)
    local = np.arange(len(x)) - offsets[grp]
    gaps = np.diff(x)
    ext[e_off[grp] + local] = np.r_[0.0, gaps]
    lone = counts == 1
    filled = counts > 0
    first, last = offsets[:-1][filled], offsets[1:][filled] - 1
    ext[e_off[:-1][filled]] = np.maximum(x[first], np.where(lone[filled], 0.0, ext[e_off[:-1][filled] + 1]))
    ext[e_off[1:][filled] - 1] = np.maximum(clear_span[filled] - x[last],
                                             np.where(lone[filled], 0.0, ext[e_off[1:][filled] - 2]))
    # k: the group's stirrups before each station (strictly), by one sort of stirrups and stations together
    g_s, x_s = station_group[sel], stations[sel]
    keys_g = np.concatenate([g_s, grp])
    keys_x = np.concatenate([x_s, x])
    tag = np.concatenate([np.zeros(len(sel), np.int8), np.ones(len(x), np.int8)])  # a station before a stirrup at it
    order = np.lexsort((tag, keys_x, keys_g))
    is_stirrup = tag[order] == 1
    before_count = np.cumsum(is_stirrup) - is_stirrup  # stirrups ahead of each in the merged order
    k = np.empty(len(order), np.int64)
    k[order] = before_count
    k = k[:len(sel)] - offsets[g_s]
    n = counts[g_s]
    base = e_off[g_s]
    on = (k < n) & (x[offsets[g_s] + np.minimum(k, n - 1)] == x_s)
    before, after = ext[base + k], ext[base + np.minimum(k + 1, n)]
    side = np.zeros(S, np.int8) if side is None else side
    sd = side[sel]
    at_stirrup = np.where(sd < 0, before, np.where(sd > 0, after, np.maximum(before, after)))
    out[sel] = np.where(on, at_stirrup, before)
    return out


def provided_spacing(x: np.ndarray, stations: np.ndarray, clear_span: float, side: np.ndarray | None = None) -> np.ndarray:
    """``provided_spacing_batch`` for one member's stirrups ``x`` at its ``stations``."""
    return provided_spacing_batch(np.asarray(x, float), np.array([0, len(x)]), np.array([clear_span], float),
                                  np.zeros(len(stations), np.int64), np.asarray(stations, float), side)


def jump_sides(member: np.ndarray, x: np.ndarray, side: np.ndarray) -> np.ndarray:
    """Per station of a grid sorted by (member, x, side): -1 for the left limit of a
    jump, +1 for its right limit, 0 where the shear is continuous (see provided_spacing)."""
    partner = np.zeros(len(x), bool)
    partner[1:] = (member[1:] == member[:-1]) & (x[1:] == x[:-1]) & (side[:-1] == 0) & (side[1:] == 1)
    return np.where(side == 0, -1, np.where(partner, 1, 0)).astype(np.int8)


# ----------------------------------------------------------------------------- column ties

SPIRAL_EXTRA_TURNS = 1.5  # 25.7.3.4: 1.5 extra turns at each end anchor a spiral (from memory)
CIRCULAR_TIE_LAP = {"si": 150.0, "us": 6.0}  # 25.7.2.4: the ends of a circular tie overlap 150 mm | 6 in (from memory)


def tie_set(b: float, h: float, clear: float, bar: str, legs_v: int, legs_vb: int, circular: bool,
            name: str = "tie", u: Edition = SI) -> list[Shape]:
    """The bars of one tie or hoop set of a column, cut lengths on the bar centreline.

    Rectangle: a perimeter ``name`` (closed, 135-degree hooks: Table 25.3.2 for ties, the seismic
    hook of 25.3.4 for hoops, the same extension max(6 db, 75 mm | 3 in) for bars up to No. 25 |
    No. 8) of outside dimensions b - 2 clear by h - 2 clear, and crossties (25.3.5: a 135-degree
    hook at one end and a 90-degree one at the other, alternated end for end, 18.7.5.2(c)):
    legs_v - 2 across the b faces (parallel to h) and legs_vb - 2 across the h faces. Circle: one
    circular tie or hoop of outside diameter D - 2 clear whose ends overlap 150 mm | 6 in and end
    in 90-degree hooks (25.7.2.4; the seismic hook of a circular hoop, 25.3.4).
    """
    db, _ = bar_catalogue(u.units)[bar]
    D = bend_diameter(db, u)
    r = D / 2 + db / 2
    e135, e90 = hook_extension(db, 135, u), hook_extension(db, 90, u)
    if circular:
        A = b - 2 * clear
        cut = np.pi * (A - db) + CIRCULAR_TIE_LAP[u.units] + 2 * (e90 + np.pi * r / 2)
        return [Shape(f"circular-{name}", bar, A, A, e90, D, float(cut), 1)]
    perimeter = stirrup_set(b, h, clear, bar, 2, True, u=u)[0]
    shapes = [replace(perimeter, name=f"{name}-135")]
    for count, across in ((legs_v - 2, h), (legs_vb - 2, b)):
        if count > 0:
            B = across - 2 * clear
            shapes.append(Shape("crosstie-135-90", bar, db, B, e135, D, _cut_length(B - db - 2 * r, 225, r, e135 + e90),
                                int(count)))
    return shapes


def spiral_shape(diameter: float, clear: float, bar: str, pitch: float, turns: float, u: Edition = SI) -> Shape:
    """A spiral of ``turns`` turns at ``pitch`` plus 1.5 extra turns at each end (25.7.3.4), outside
    diameter D - 2 clear; cut length on the helix of the bar centreline (splices not included)."""
    db, _ = bar_catalogue(u.units)[bar]
    A = diameter - 2 * clear
    per_turn = float(np.hypot(np.pi * (A - db), pitch))
    return Shape("spiral", bar, A, pitch, 0.0, 0.0, per_turn * (turns + 2 * SPIRAL_EXTRA_TURNS), 1)
