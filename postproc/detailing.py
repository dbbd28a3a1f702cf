"""Stirrup zones a detailer can build, from the per-station demand.

For each member one (bar, legs) is chosen from the settings' ladder: the first whose
spacing at the highest demand, rounded down to the spacing module, is not below the
practical minimum, and whose legs satisfy the spacing across the width (Table
9.7.6.2.2). Zones then run from each supported end toward the point of least demand
(a cantilever from its fixed end), at most ``max_zones_per_end`` from each end
counting the middle zone, with spacings chosen to use the fewest stirrups.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from postproc.settings import BAR_CATALOGUE, Detailing

STEEL_DENSITY = 7850e-9  # kg/mm^3 (common practice)


@dataclass
class Zone:
    start: float  # mm from the face at end i
    end: float
    spacing: float  # inf: no stirrups in this zone
    positions: np.ndarray = field(default_factory=lambda: np.empty(0))  # the zone's stirrups, mm from face i

    @property
    def count(self) -> int:
        return len(self.positions)


@dataclass
class Layout:
    bar: str
    legs: int
    zones: list[Zone]
    message: str = ""

    @property
    def count(self) -> int:
        return sum(z.count for z in self.zones)

    @property
    def positions(self) -> np.ndarray:
        return np.sort(np.concatenate([z.positions for z in self.zones])) if self.zones else np.empty(0)


def hook_extension(db: float, degrees: int) -> float:
    """Straight extension of a stirrup hook (Table 25.3.2): 90 degrees, #10 to #16
    max(6 db, 75 mm) and #19 to #25 12 db; 135 degrees, #10 to #25 max(6 db, 75 mm)."""
    if degrees == 90 and db > 16.0:
        return 12.0 * db
    return max(6.0 * db, 75.0)


def bend_diameter(db: float) -> float:
    """Minimum inside bend diameter of stirrups (Table 25.3.3): 4 db to #16, 6 db for #19 to #25."""
    return 4.0 * db if db <= 16.0 else 6.0 * db


@dataclass(frozen=True)
class Shape:
    """One bent bar of a stirrup set. A and B are out-to-out dimensions, mm."""

    name: str  # closed-135, inner-closed-135, open-90, open-135, single-leg-135-90
    bar: str
    A: float
    B: float
    hook_mm: float
    bend_diameter_mm: float
    cut_length_mm: float
    per_set: int


def _cut_length(straights: float, arcs_deg: float, r: float, tails: float) -> float:
    return straights + np.pi * r * arcs_deg / 180.0 + tails


def stirrup_set(b: float, h: float, cover: float, bar: str, legs: int, closed: bool, open_hook: int = 90) -> list[Shape]:
    """The bars of one stirrup set and their cut lengths, measured on the bar centreline.

    Outside dimensions A = b - 2 cover, B = h - 2 cover; centreline a = A - db, c = B - db;
    bend radius to the centreline r = D/2 + db/2 with D from Table 25.3.3; tails from
    Table 25.3.2. A closed stirrup with 135-degree hooks at one corner (25.7.1.6(a) where
    torsion acts): straights 2a + 2c - 8r, arcs 3 x 90 + 2 x 135 = 540 degrees, two tails.
    An open (U) stirrup: straights 2c + a - 6r, arcs 2 x 90 plus two hooks, two tails
    (25.7.1.3). Sets of more than two legs add inner closed stirrups one leg-spacing
    wide, and a single leg with a 135 and a 90 degree hook for an odd leg.
    """
    db, _ = BAR_CATALOGUE[bar]
    D = bend_diameter(db)
    r = D / 2 + db / 2
    A, B = b - 2 * cover, h - 2 * cover
    a, c = A - db, B - db
    e135, e90 = hook_extension(db, 135), hook_extension(db, 90)
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


def set_mass(shapes: list[Shape]) -> float:
    """Mass of one stirrup set, kg (steel 7850 kg/m^3)."""
    return sum(s.cut_length_mm * s.per_set * BAR_CATALOGUE[s.bar][1] for s in shapes) * STEEL_DENSITY


def legs_for_width(b: float, cover: float, db: float, s_across: float) -> int:
    """Least number of legs so that legs are at most s_across apart across the width (Table 9.7.6.2.2)."""
    w = b - 2 * cover - db
    return max(2, int(np.ceil(w / s_across - 1e-9)) + 1)


def leg_spacing(b: float, cover: float, db: float, legs: int) -> float:
    """Centre distance between adjacent legs across the width, legs evenly spread."""
    return (b - 2 * cover - db) / max(legs - 1, 1)


def gaps_within_spacing(layout: "Layout", clear_span: float, free_i: bool, free_j: bool) -> bool:
    """Every gap between neighbouring stirrups, and from a supported face to the stirrup
    next to it, is within the spacing the zones state there (what the self-check uses)."""
    x = layout.positions
    if not len(x):
        return True
    edges = [x[0]] if not free_i else []
    mids = [x[0] / 2] if not free_i else []
    if not free_j:
        edges.append(clear_span - x[-1])
        mids.append((clear_span + x[-1]) / 2)
    gaps = np.concatenate([np.diff(x), edges])
    where = np.concatenate([(x[1:] + x[:-1]) / 2, mids])
    return bool(np.all(gaps <= provided_spacing(layout, where) + 1e-6))


def floor_to_module(s: np.ndarray, module: float) -> np.ndarray:
    """Round a spacing down to the practical module (common practice: 25 mm)."""
    with np.errstate(invalid="ignore"):
        return np.where(np.isfinite(s), np.floor(s / module + 1e-9) * module, s)


def allowed_spacing(need_av_s: np.ndarray, need_at_s: np.ndarray, s_max: np.ndarray, stirrups_here: np.ndarray,
                    bar_area: float, legs: int, module: float) -> np.ndarray:
    """Largest spacing, on the module, that the demand at each station admits (inf: none needed)."""
    per_leg = need_av_s / legs + need_at_s
    with np.errstate(divide="ignore"):
        s = np.where(per_leg > 0, bar_area / per_leg, np.inf)
    s = np.where(stirrups_here | (per_leg > 0), np.minimum(s, s_max), np.inf)
    return floor_to_module(s, module)


def choose_levels(u: np.ndarray, s_env: np.ndarray, max_levels: int) -> np.ndarray:
    """Spacings per station from one face, nondecreasing toward the middle, at most ``max_levels``
    distinct values, each <= the allowed spacing, using the fewest stirrups."""
    values = np.unique(s_env)
    if len(values) <= max_levels:
        return s_env
    widths = np.diff(np.concatenate([u, [u[-1]]]))
    pos = np.searchsorted(values, s_env)
    lengths = np.bincount(pos, weights=widths, minlength=len(values))
    best, best_cost = None, np.inf
    for rest in itertools.combinations(range(1, len(values)), max_levels - 1):
        chosen = np.array((0, *rest))
        use = chosen[np.searchsorted(chosen, np.arange(len(values)), side="right") - 1]
        cost = np.sum(lengths / np.where(np.isfinite(values[use]), values[use], 1e12))
        if cost < best_cost:
            best, best_cost = use, cost
    return values[best][pos]


def _end_zones(u: np.ndarray, s_env: np.ndarray, first, max_zones: int,
               to_end: float | None) -> tuple[list[Zone], float, float]:
    """Zones from one face (u measured from it, ascending).

    Each zone's stirrups follow the last stirrup of the zone before it at the zone's
    spacing (the first one at the first-stirrup distance from the face), and the zone
    ends on its last stirrup, past every station that needs its spacing. Returns the
    zones before the middle, the position of their last stirrup (0: none) and the
    spacing of the middle zone. With ``to_end`` (a cantilever) the last zone is included
    and its stirrups reach that distance from the face.
    """
    suffix_min = np.minimum.accumulate(s_env[::-1])[::-1]  # nondecreasing toward the middle
    levels = choose_levels(u, suffix_min, max_zones)
    starts = np.concatenate([[0], np.flatnonzero(levels[1:] != levels[:-1]) + 1])
    zones: list[Zone] = []
    last = 0.0
    for k, i0 in enumerate(starts):
        s = float(levels[i0])
        is_last = k == len(starts) - 1
        if is_last and to_end is None:
            return zones, last, s
        # every station before the next level's first station needs a spacing <= s
        boundary = float(to_end) if is_last else float(u[starts[k + 1]])
        if not np.isfinite(s):
            zones.append(Zone(last, boundary, np.inf))
            last = boundary
            continue
        if zones and last >= boundary:
            continue  # already covered by the tighter zone before
        begin = first(s) if not zones else last + s
        if is_last:  # cantilever: the last stirrup stays within the free end's cover allowance
            if begin > boundary + 1e-9:
                if zones:
                    continue  # the zone before reaches the free end already
                begin = boundary  # a very short cantilever: one stirrup
            n = int(np.floor((boundary - begin) / s + 1e-9)) + 1
        else:
            n = max(1, int(np.ceil((boundary - begin) / s - 1e-9)) + 1)
            if to_end is not None:  # a cantilever's zones never run past its free end
                n = min(n, int(np.floor((to_end - begin) / s + 1e-9)) + 1)
                if n < 1:
                    continue
        pos = begin + s * np.arange(n)
        # a zone ends on its last stirrup; one held back from a cantilever's free end still
        # serves up to its boundary (the gap there is less than its spacing)
        end = max(float(pos[-1]), boundary) if to_end is not None and not is_last else float(pos[-1])
        zones.append(Zone(last, end, s, pos))
        last = end
    return zones, last, float(levels[-1])


def _middle(lo: float, hi: float, s: float, fixed_lo: float | None, fixed_hi: float | None) -> np.ndarray:
    """Stirrups of the middle zone between the end zones' last stirrups lo and hi.

    Between two end zones they sit at the spacing, centred, so that the two end gaps are
    equal and between s/2 and s (no odd short gap). Where a side has no end zone its
    first stirrup is at the first-stirrup distance (fixed_lo / fixed_hi) and the run
    starts there; the far gap is then at most s.
    """
    if fixed_lo is None and fixed_hi is None:
        n = max(int(np.ceil((hi - lo) / s - 1e-9)) - 1, 0)
        g = (hi - lo - (n - 1) * s) / 2
        return lo + g + s * np.arange(n)
    if fixed_lo is not None:
        end = hi if fixed_hi is None else fixed_hi
        n = int(np.ceil((end - fixed_lo) / s - 1e-9)) + (0 if fixed_hi is None else 1)
        pos = fixed_lo + s * np.arange(n)
        return np.append(pos[pos < end - 1e-9], [] if fixed_hi is None else [fixed_hi])
    n = int(np.ceil((fixed_hi - lo) / s - 1e-9))
    return np.sort(fixed_hi - s * np.arange(n))


def layout_member(x: np.ndarray, clear_span: float, need_av_s, need_at_s, s_max, s_across, stirrups_here,
                  b: float, free_i: bool, free_j: bool, st: Detailing) -> Layout | str:
    """Zones for one member (x: stations from face i); a string explains why none can be built."""
    module, smin = st.spacing_module_mm, st.min_spacing_mm
    first = (lambda s: st.first_stirrup_mm) if st.first_stirrup == "fixed" else (lambda s: s / 2.0)
    tried = []
    for bar, ladder_legs in st.ladder:
        db, area = BAR_CATALOGUE[bar]
        legs = max(ladder_legs, legs_for_width(b, st.clear_cover_mm, db, s_across))
        s_env = allowed_spacing(need_av_s, need_at_s, s_max, stirrups_here, area, legs, module)
        tight = float(np.min(s_env))
        tried.append(f"{bar} x{legs} legs at {tight:g} mm")
        if tight >= smin:
            break
    else:
        return (f"no (bar, legs) of the ladder works at the {smin:g} mm minimum spacing: {'; '.join(tried)}")
    if np.all(np.isinf(s_env)):
        return Layout(bar, legs, [Zone(0.0, clear_span, np.inf)], "no stirrups required")
    zmax = st.max_zones_per_end
    if free_i or free_j:  # a cantilever: zones from the fixed end to the free end
        u = x if free_j else (clear_span - x)[::-1]
        env = s_env if free_j else s_env[::-1]
        zones, _, _ = _end_zones(u, env, first, zmax, to_end=clear_span - first(float(env.min())))
        zones[-1].end = clear_span
        return Layout(bar, legs, zones if free_j else _mirror(zones, clear_span))
    finite = np.where(np.isfinite(s_env), s_env, 1e12)
    best = np.flatnonzero(finite == finite.max())
    m = best[np.argmin(np.abs(x[best] - clear_span / 2))]  # least demand, nearest mid-span
    zi, last_i, mid_i = _end_zones(x[: m + 1], s_env[: m + 1], first, zmax, None)
    zj, last_j, mid_j = _end_zones((clear_span - x[m:])[::-1], s_env[m:][::-1], first, zmax, None)
    s_mid = min(mid_i, mid_j)
    for side in (zi, zj):  # an end zone as wide as the middle is part of it
        while side and side[-1].spacing >= s_mid:
            side.pop()
    last_i = zi[-1].end if zi else 0.0
    last_j = zj[-1].end if zj else 0.0
    lo, hi = last_i, clear_span - last_j
    if not np.isfinite(s_mid):
        middle = Zone(lo, hi, np.inf)
    else:
        f = first(s_mid)
        if hi - lo <= 0 or (not zi and not zj and clear_span <= 2 * f):
            s = float(np.min(s_env))  # end zones meet: one zone at the tightest spacing
            n = int(np.ceil((clear_span - 2 * first(s)) / s - 1e-9)) + 1
            pos = first(s) + np.linspace(0.0, clear_span - 2 * first(s), n) if n > 1 else np.array([clear_span / 2])
            return Layout(bar, legs, [Zone(0.0, clear_span, s, pos)], "end zones meet; one zone throughout")
        pos = _middle(lo, hi, s_mid, None if zi else f, None if zj else clear_span - f)
        middle = Zone(lo, hi, s_mid, pos)
    return Layout(bar, legs, zi + [middle] + _mirror(zj, clear_span))


def _mirror(zones: list[Zone], span: float) -> list[Zone]:
    return [Zone(span - z.end, span - z.start, z.spacing, np.sort(span - z.positions)) for z in reversed(zones)]


def provided_spacing(layout: Layout, x: np.ndarray) -> np.ndarray:
    """Spacing in force at each station; on a zone boundary the smaller of the two."""
    starts = np.array([z.start for z in layout.zones])
    ends = np.array([z.end for z in layout.zones])
    sp = np.array([z.spacing for z in layout.zones])
    k_hi = np.clip(np.searchsorted(ends, x, side="left"), 0, len(sp) - 1)
    k_lo = np.clip(np.searchsorted(starts, x, side="right") - 1, 0, len(sp) - 1)
    return np.minimum(sp[k_hi], sp[k_lo])
