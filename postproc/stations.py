"""Station grid, resampling of each load case, and the critical-section rule.

All members of a batch are handled at once as flat arrays (struct of arrays):
station k belongs to member ``member[k]``, lies ``x[k]`` from node i, and takes
the limit of the force diagram from the left (``side`` 0) or the right (``side`` 1).
A jump in the input (two rows at one ``x_m``) becomes two stations at that x, the
left and the right limit, so concentrated loads are never smeared. Lengths and forces
are in the run's internal units (mm and N, or in and lb; postproc.units).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from postproc.settings import Stations

BEARING = ("column", "wall")  # supports whose reaction puts the end region in compression (9.4.3.2(a))


@dataclass(frozen=True)
class Geometry:
    """Per-member arrays of a batch, in the run's internal length (mm or in)."""

    length: np.ndarray
    face_i: np.ndarray
    face_j: np.ndarray
    d: np.ndarray
    h: np.ndarray
    support_i: np.ndarray  # object array of support names
    support_j: np.ndarray
    load_top: np.ndarray  # bool

    @property
    def start(self) -> np.ndarray:
        return self.face_i

    @property
    def end(self) -> np.ndarray:
        return self.length - self.face_j

    @property
    def clear_span(self) -> np.ndarray:
        return self.end - self.start


@dataclass(frozen=True)
class Samples:
    """Input force rows of a batch, sorted by (member, case, x), file order kept within a station."""

    member: np.ndarray  # int index into the batch's members
    case: np.ndarray  # int index into the case list
    x: np.ndarray  # from node i (mm or in)
    values: dict[str, np.ndarray]  # V, N (N or lb), T, M (N*mm or lb*in)

    @staticmethod
    def build(member, case, x, values, tolerance: float = 0.0) -> Samples:
        """Rows sorted by (member, case, x), file order kept within a station; rows of one
        member and case closer than ``tolerance`` are one station (at the first row's x),
        so that two of them are a jump whatever rounding the export did."""
        if not _is_sorted(member, case, x):  # the store keeps forces in this order already
            order = np.lexsort((x, case, member))  # stable: jump rows keep their file order
            member, case, x = member[order], case[order], x[order]
            values = {k: v[order] for k, v in values.items()}
        if tolerance > 0 and len(x) > 1:
            close = (member[1:] == member[:-1]) & (case[1:] == case[:-1]) & (np.diff(x) < tolerance)
            if close.any():
                start = np.concatenate([[True], ~close])
                x = x[start][np.cumsum(start) - 1]
        return Samples(member, case, x, values)


def _is_sorted(member, case, x) -> bool:
    dm, dc, dx = np.diff(member), np.diff(case), np.diff(x)
    return bool(np.all((dm > 0) | ((dm == 0) & ((dc > 0) | ((dc == 0) & (dx >= 0))))))


@dataclass(frozen=True)
class Grid:
    member: np.ndarray
    x: np.ndarray
    side: np.ndarray  # 0 left limit, 1 right limit
    offsets: np.ndarray  # stations of member m are offsets[m]:offsets[m+1]


@dataclass(frozen=True)
class EndRules:
    """Critical-section rule per member end and the station each station takes its design force from."""

    crit_i: np.ndarray  # 'd', 'face' or 'free'
    crit_j: np.ndarray
    source: np.ndarray  # per station: index of the station whose forces govern there
    point_load_near_bearing: np.ndarray  # per member: a concentrated load within 2h of a bearing face


def jumps(s: Samples, settings: Stations, n_members: int, key: str = "V") -> tuple[np.ndarray, np.ndarray]:
    """Concentrated loads (key "V") or torques (key "T"): (member, x) of jumps larger than
    the tolerance in any case (``settings.point_load``, or ``point_torque`` for torque)."""
    same = (s.member[1:] == s.member[:-1]) & (s.case[1:] == s.case[:-1]) & (s.x[1:] == s.x[:-1])
    v = s.values[key]
    vmax = np.zeros(n_members)
    np.maximum.at(vmax, s.member, np.abs(v))
    size = np.abs(v[1:] - v[:-1])
    least = settings.point_load if key == "V" else settings.point_torque
    tol = np.maximum(least, settings.point_load_fraction * vmax[s.member[1:]])
    hit = same & (size > tol)
    return s.member[1:][hit], s.x[1:][hit]


def doubled(s: Samples, least_stations: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """(member, case) of the members and cases with two rows at every one of their stations (at
    least ``least_stations`` of them) and a jump between the two somewhere: a table given twice
    with other values, not concentrated loads (which stand at a few stations)."""
    if len(s.x) < 2:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    new_group = np.concatenate([[True], (s.member[1:] != s.member[:-1]) | (s.case[1:] != s.case[:-1])])
    new_station = new_group | np.concatenate([[True], s.x[1:] != s.x[:-1]])
    group = np.cumsum(new_group) - 1
    rows = np.bincount(group)
    stations_of = np.bincount(group, weights=new_station)
    same = ~new_station[1:]
    differs = np.zeros(len(rows), bool)
    jump = same & np.any([v[1:] != v[:-1] for v in s.values.values()], axis=0)  # V is always among the values
    differs[group[1:][jump]] = True
    hit = (rows == 2 * stations_of) & (stations_of >= least_stations) & differs
    first = np.flatnonzero(new_group)[hit]
    return s.member[first], s.case[first]


def steep_slopes(s: Samples, settings: Stations, n_members: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Neighbouring rows of one member and case whose shear changes faster than
    ``settings.steep_slope`` by more than the concentrated-load tolerance: a concentrated
    load the export spread over a short length. Returns (member, case, x at the start,
    change in V) of each, for warnings; the design takes the rows as given (a linear
    change between them)."""
    same = (s.member[1:] == s.member[:-1]) & (s.case[1:] == s.case[:-1]) & (s.x[1:] > s.x[:-1])
    v = s.values["V"]
    vmax = np.zeros(n_members)
    np.maximum.at(vmax, s.member, np.abs(v))
    dv = v[1:] - v[:-1]
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.abs(dv) / (s.x[1:] - s.x[:-1])  # N/mm (= kN/m) or lb/in
    tol = np.maximum(settings.point_load, settings.point_load_fraction * vmax[s.member[1:]])
    hit = same & (slope > settings.steep_slope) & (np.abs(dv) > tol)
    return s.member[1:][hit], s.case[1:][hit], s.x[:-1][hit], dv[hit]


def build_grid(g: Geometry, s: Samples, settings: Stations) -> Grid:
    """Stations at most min(max_step, d/steps_per_d) apart over each clear span, plus every
    input station, both limits at every jump, and the sections at d from each face."""
    n = len(g.length)
    a, b = g.start, g.end
    step = np.minimum(settings.max_step, g.d / settings.steps_per_d)
    counts = np.ceil((b - a) / step).astype(np.int64) + 1
    mem_u = np.repeat(np.arange(n), counts)
    first = np.cumsum(counts) - counts
    k = np.arange(counts.sum()) - np.repeat(first, counts)
    x_u = a[mem_u] + (b - a)[mem_u] * k / (counts[mem_u] - 1)

    inside = (s.x > a[s.member]) & (s.x < b[s.member])
    mem_in, x_in = s.member[inside], s.x[inside]
    jm, jx = jumps(s, settings, n)
    jin = (jx > a[jm]) & (jx < b[jm])
    crit_m = np.concatenate([np.arange(n), np.arange(n)])
    crit_x = np.concatenate([a + g.d, b - g.d])
    cin = (crit_x > a[crit_m]) & (crit_x < b[crit_m])

    member = np.concatenate([mem_u, mem_in, jm[jin], crit_m[cin]])
    x = np.concatenate([x_u, x_in, jx[jin], crit_x[cin]])
    side = np.concatenate([np.ones(len(x_u) + len(x_in), np.int8), np.zeros(jin.sum(), np.int8),
                           np.ones(cin.sum(), np.int8)])
    side[np.isclose(x, b[member], rtol=0, atol=1e-9)] = 0  # at the far face, the value from the span side
    order = np.lexsort((side, x, member))
    member, x, side = member[order], x[order], side[order]
    keep = np.ones(len(x), bool)
    keep[1:] = (member[1:] != member[:-1]) | (x[1:] != x[:-1]) | (side[1:] != side[:-1])
    member, x, side = member[keep], x[keep], side[keep]
    offsets = np.searchsorted(member, np.arange(n + 1))
    return Grid(member, x, side, offsets)


def _weights(gp, seg_p, gq, seg_q, right, xp, xq):
    """Bracketing input rows (lo, hi) and the weight t of hi for each query; missing where
    the query's segment has no rows. Jumps: a right-limit query at an input station takes
    the last row there, a left-limit query the first. ``gp``/``gq`` are global keys for
    the search; ``xp``/``xq`` the stations themselves, from which t is computed (the same
    bits whichever members share the batch)."""
    i_r = np.searchsorted(gp, gq, side="right")
    hi = i_r.copy()
    if not right.all():
        left = ~right
        hi[left] = np.searchsorted(gp, gq[left], side="left")
    lo = hi - 1
    npts = len(gp)
    lo_c, hi_c = np.clip(lo, 0, npts - 1), np.clip(hi, 0, npts - 1)
    lo_ok = (lo >= 0) & (seg_p[lo_c] == seg_q)
    hi_ok = (hi < npts) & (seg_p[hi_c] == seg_q)
    exact_lo = lo_ok & right & (xp[lo_c] == xq)
    exact_hi = hi_ok & ~right & (xp[hi_c] == xq)
    dx = xp[hi_c] - xp[lo_c]
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.where(lo_ok & hi_ok & (dx > 0), (xq - xp[lo_c]) / dx, 0.0)
    t = np.where(exact_lo, 0.0, np.where(exact_hi, 1.0, t))
    t = np.where(lo_ok & ~hi_ok, 0.0, np.where(hi_ok & ~lo_ok, 1.0, t))  # hold the end value
    return lo_c, hi_c, t, ~(lo_ok | hi_ok)


def interpolate(s: Samples, n_cases: int, q_member: np.ndarray, q_x: np.ndarray, q_side: np.ndarray,
                span: float) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """Piecewise-linear value of every case at every query point, keeping jumps.

    Returns ({quantity: (n_cases, n_q)}, missing (n_cases, n_q) bool): missing where a
    member has no rows for a case (value 0 there). Beyond the first or last input
    station of a member the end value is held. When every case of every member has
    the same stations (the usual export), the brackets are found once per member and
    reused for all cases.
    """
    n_members = int(max(s.member.max(initial=-1), q_member.max(initial=-1))) + 1
    seg_p = s.member.astype(np.int64) * n_cases + s.case
    counts = np.bincount(seg_p, minlength=n_members * n_cases).reshape(n_members, n_cases)
    seg_start = np.concatenate([[0], np.cumsum(counts.ravel())])
    right = q_side.astype(bool)
    same = bool(len(seg_p)) and bool((counts == counts[:, :1]).all()) and bool((counts > 0).all())
    if same:
        template = seg_start[seg_p - s.case] + (np.arange(len(seg_p)) - seg_start[seg_p])
        same = bool(np.array_equal(s.x, s.x[template]))
    if same:
        first = s.case == 0
        rows0 = np.flatnonzero(first)
        gp0 = s.member[first].astype(np.int64) * span + s.x[first]
        lo, hi, t, missing1 = _weights(gp0, s.member[first].astype(np.int64), q_member * span + q_x,
                                       q_member.astype(np.int64), right, s.x[first], q_x)
        shift = (seg_start[:-1].reshape(n_members, n_cases) - seg_start[:-1].reshape(n_members, n_cases)[:, :1])
        offs = shift[q_member].T  # (n_cases, n_q)
        lo2, hi2 = rows0[lo][None, :] + offs, rows0[hi][None, :] + offs
        t2 = np.broadcast_to(t, lo2.shape)
        missing = np.broadcast_to(missing1, lo2.shape)
    else:
        cases = np.arange(n_cases)
        gp = seg_p * span + s.x
        seg_q = q_member.astype(np.int64)[None, :] * n_cases + cases[:, None]
        gq = seg_q * span + q_x[None, :]
        lo2, hi2, t2, missing = _weights(gp, seg_p, gq, seg_q, np.broadcast_to(right, gq.shape), s.x,
                                         np.broadcast_to(q_x, gq.shape))
    out = {}
    for key, v in s.values.items():
        val = v[lo2] * (1.0 - t2) + v[hi2] * t2
        out[key] = np.where(missing, 0.0, val)
    return out, missing


def end_rules(g: Geometry, grid: Grid, s: Samples, settings: Stations) -> EndRules:
    """Critical section at each supported end (ACI 318-19 9.4.3.2).

    Between the face and d, Vu at d may be used only where (a) the support reaction
    puts the end region in compression (column or wall), (b) loads act at or near the
    top of the member, and (c) no concentrated load acts between the face and d;
    otherwise the section at the face governs. A free end has no critical section.
    Also flags concentrated loads within 2h of a bearing face (deep beam, 9.9.1.1(b)).
    """
    n = len(g.length)
    a, b = g.start, g.end
    jm, jx = jumps(s, settings, n)
    near_i = np.zeros(n, bool)
    near_j = np.zeros(n, bool)
    deep_i = np.zeros(n, bool)
    deep_j = np.zeros(n, bool)
    # a jump at or behind a face is the support's own reaction, not a load on the span
    np.logical_or.at(near_i, jm, (jx > a[jm]) & (jx <= a[jm] + g.d[jm]))
    np.logical_or.at(near_j, jm, (jx < b[jm]) & (jx >= b[jm] - g.d[jm]))
    np.logical_or.at(deep_i, jm, (jx > a[jm]) & (jx <= a[jm] + 2 * g.h[jm]))
    np.logical_or.at(deep_j, jm, (jx < b[jm]) & (jx >= b[jm] - 2 * g.h[jm]))
    if "T" in s.values:  # 9.4.4.3: a concentrated torque within d of the face puts the section at the face
        tm, tx = jumps(s, settings, n, "T")
        np.logical_or.at(near_i, tm, (tx > a[tm]) & (tx <= a[tm] + g.d[tm]))
        np.logical_or.at(near_j, tm, (tx < b[tm]) & (tx >= b[tm] - g.d[tm]))
    bearing_i = np.isin(g.support_i, BEARING)
    bearing_j = np.isin(g.support_j, BEARING)
    free_i = g.support_i == "free"
    free_j = g.support_j == "free"
    fits = g.clear_span > 2 * g.d
    use_d_i = bearing_i & g.load_top & ~near_i & fits
    use_d_j = bearing_j & g.load_top & ~near_j & fits
    crit_i = np.where(free_i, "free", np.where(use_d_i, "d", "face")).astype(object)
    crit_j = np.where(free_j, "free", np.where(use_d_j, "d", "face")).astype(object)

    source = np.arange(len(grid.x))
    xm = grid.x
    mem = grid.member
    # index of the station at a + d (right limit) and b - d (left side is the same: no jump there)
    at_i = _station_index(grid, a + g.d)
    at_j = _station_index(grid, b - g.d)
    in_i = use_d_i[mem] & (xm < (a + g.d)[mem])
    in_j = use_d_j[mem] & (xm > (b - g.d)[mem])
    source = np.where(in_i, at_i[mem], source)
    source = np.where(in_j, at_j[mem], source)
    point_near = (deep_i & bearing_i & g.load_top) | (deep_j & bearing_j & g.load_top)
    return EndRules(crit_i, crit_j, source, point_near)


def _station_index(grid: Grid, x: np.ndarray) -> np.ndarray:
    """Per member, the index of the first station at or after x (the crit stations exist exactly)."""
    n = len(x)
    out = np.empty(n, np.int64)
    for_member = grid.offsets
    # vectorised: search within each member's slice using a global key
    span = float(np.max(grid.x) + 1.0) if len(grid.x) else 1.0
    key = grid.member * span + grid.x
    q = np.arange(n) * span + x
    idx = np.searchsorted(key, q, side="left")
    out[:] = np.clip(idx, for_member[:-1], np.maximum(for_member[1:] - 1, for_member[:-1]))
    return out
