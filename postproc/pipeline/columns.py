"""Columns (ACI 318-19 Chapters 10, 22 and 25; Chapter 18 in moment frames): the family steps
of the batch pipeline.

geometry -> (shared resample; candidates with V, Vb and T signed) -> frame demand (capacity
design, lo) -> demand cases -> options -> layout -> provided -> check -> records.

A column's stations run from its bottom node (x = 0, end i) up; its clear height lies between
the faces ``face_i_mm`` and ``face_j_mm``. The critical section is at the face at both ends:
no shear is taken at d from a joint face (common practice: the reaction of a beam does not
put a column's end region into the compression 9.4.3.2 asks for).

Units: the run's internal units (N, mm, MPa or lb, in, psi) and the edition of ACI 318-19 of
its unit system, as for every family (postproc.pipeline); records are keyed by the SI names.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import pandas as pd
import pyarrow as pa

from postproc import combos as combos_mod
from postproc import detailing, sections, stations, units
from postproc.codes import aci318_19 as aci
from postproc.demand import columns as demand
from postproc.pipeline import (BatchOutput, MemberGeometry, Resampled, SelfCheckError, edition, governing, row,
                               unit_system)
from postproc.pipeline.deep import METHOD_SECTIONAL
from postproc.settings import Settings

KINDS = ("column",)
USES_VB = True  # both shear directions
ALL_COMBINATIONS = True  # with V, Vb, T and N about every combination stays a candidate (engine.batch_starts)
SIGNED = ("V", "Vb", "T")  # quantities whose sign does not matter to the demand
ZONED_FRAMES = ("special", "intermediate")  # frames with end zones lo (18.7.5.1, 18.4.3.3)
EQ = "E"  # the load type of earthquake cases (cases.csv)
MOMENT_SAMPLES = 17  # axial loads sampled over the factored range before the peak is refined
REFINE_STEPS = 24  # golden-section steps on the bracket around the sampled peak
PLACEHOLDER_BARS = (4.0, 0.04)  # n_long and db_long / least side standing in for a member whose bars are invalid


@dataclass(frozen=True)
class Members(MemberGeometry):
    """Step 1, geometry: per-member arrays."""

    sec: demand.ColumnSection
    frame: np.ndarray  # none, ordinary, intermediate, special
    free_i: np.ndarray
    free_j: np.ndarray
    lo: np.ndarray  # end-zone length from each joint face (0: none)
    given_v: np.ndarray  # ties_h: legs parallel to h, as given (NaN: designed)
    given_vb: np.ndarray  # ties_b
    beams_i: np.ndarray  # moment the beams at the bottom joint can deliver (N mm, NaN: not limited)
    beams_j: np.ndarray  # ... at the top joint
    joint_note: np.ndarray  # why the beams' limit was or was not applied (18.7.6.1.1)
    problem: np.ndarray  # '' or why the member cannot be designed (status invalid)


def _numbers(df: pd.DataFrame, U: units.UnitSystem):
    """The members table's column of an SI name, in the run's spelling (NaN where absent)."""
    return lambda name: df[U.col(name)].to_numpy(float) if U.col(name) in df else np.full(len(df), np.nan)


def _geometry(df: pd.DataFrame, settings: Settings) -> Members:
    n = len(df)
    U, u = unit_system(settings), edition(settings)
    _num = _numbers(df, U)
    D = _num("diameter_mm")
    circular = np.isfinite(D)
    b, h = np.where(circular, D, _num("b_mm")), np.where(circular, D, _num("h_mm"))
    cover, d_in = _num("cover_mm"), _num("d_mm")
    edge = np.where(np.isfinite(cover), cover, h - d_in)  # face to the bar centres (as h - d for beams)
    db, n_long = _num("db_long_mm"), _num("n_long")
    problem = np.full(n, "", dtype=object)
    no_bars = ~(np.isfinite(db) & np.isfinite(n_long))
    problem[no_bars] = (f"a column needs its longitudinal bars, {U.col('db_long_mm')} and n_long: ties are spaced by "
                        "25.7.2.1 and laid out by 25.7.2.3 from them")
    odd = ~no_bars & ~circular & ((n_long < 4) | (n_long % 2 != 0))
    problem[odd] = "n_long of a rectangular column must be even and at least 4 (bars placed symmetrically, one in each corner)"
    few = ~no_bars & circular & (n_long < 4)
    problem[few] = "a circular column needs at least 4 bars (10.7.3.1)"
    no_edge = ~np.isfinite(edge) | (edge <= 0)
    problem[(problem == "") & no_edge] = f"give {U.col('cover_mm')} (face to the centre of the longitudinal bars)"
    tight = (problem == "") & (edge - db / 2 - u.tie_db[0] <= 0)
    problem[tight] = f"{U.col('cover_mm')} (face to bar centre) leaves no room for a tie outside the longitudinal bars"
    bad = problem != ""
    n_long = np.where(bad, PLACEHOLDER_BARS[0], n_long)
    db = np.where(bad, PLACEHOLDER_BARS[1] * np.minimum(b, h), db)
    edge = np.where(bad | no_edge, np.minimum(b, h) * 0.15, edge)
    sec = demand.column_sections(b, h, np.where(circular, D, np.nan), edge, _num("fc_mpa"), _num("fyt_mpa"),
                                 _num("fy_mpa"), _num("lambda"), db, n_long,
                                 np.where(bad, np.nan, _num("as_long_mm2")), u)
    given_v, given_vb = _num("ties_h"), _num("ties_b")
    n_b, _, n_h, _ = demand.face_bars(sec)
    over = ~bad & ~circular & ((given_v > n_b) | (given_vb > n_h))
    problem[over] = "more tie legs (ties_h, ties_b) than bars on the faces they cross: each leg engages a bar"
    on_circle = ~bad & circular & (np.isfinite(given_v) | np.isfinite(given_vb))
    problem[on_circle] = "ties_h and ties_b are for rectangular columns; a circular hoop or spiral has none"
    frame = df["frame"].fillna("none").to_numpy(object) if "frame" in df else np.full(n, "none", object)
    length = _num("length_m") * U.per_span
    face_i, face_j = _num("face_i_mm"), _num("face_j_mm")
    clear = length - face_i - face_j
    depth = np.maximum(b, h)
    lo = np.where(frame == "special", aci.smf_column_lo(depth, clear, u),
                  np.where(frame == "intermediate", aci.imf_column_lo(depth, clear, u), 0.0))
    d_grid = np.where(lo > 0, lo, np.minimum(sec.d_v, sec.d_vb))  # stations at lo from each face
    g = stations.Geometry(length=length, face_i=face_i, face_j=face_j, d=d_grid, h=depth,
                          support_i=df["support_i"].to_numpy(object), support_j=df["support_j"].to_numpy(object),
                          load_top=np.zeros(n, bool))  # critical sections at the faces
    note = df["_joint_note"].to_numpy(object) if "_joint_note" in df else np.full(n, NO_JOINTS, object)
    beams = lambda name: df[name].to_numpy(float) if name in df else np.full(n, np.nan)  # noqa: E731 (prepare's)
    return Members(df["member"].to_numpy(object), g, sec, frame, g.support_i == "free", g.support_j == "free", lo,
                   given_v, given_vb, beams("_beams_m_i"), beams("_beams_m_j"), note, problem)


# ----------------------------------------------------------------------------- joints (18.7.6.1.1)

NO_JOINTS = "no member coordinates ({}) identify its joints"
COORDS = ("x_i_m", "y_i_m", "z_i_m", "x_j_m", "y_j_m", "z_j_m")  # SI names (the run spells them)


def prepare(members: pd.DataFrame, settings: Settings) -> pd.DataFrame:
    """The moment that the beams framing into each end joint of a special-frame column can deliver
    to it (18.7.6.1.1: the column shear need not exceed what joint strengths based on the beams'
    Mpr give), from the whole members table: ``_beams_m_i``, ``_beams_m_j`` (N*mm | lb*in; NaN where not
    limited) and ``_joint_note``. A beam frames into a joint where one of its ends lies within half
    the column's larger side plus [frames] ``joint_tolerance`` of the column's node in plan and within
    the beam's depth in height. Each beam gives the larger of its Mpr+ and Mpr- at that end
    (sections.beam_end_strengths) moved to the joint centre by its sway shear (Mpr at both ends
    over its clear span) times half the column's larger side; the beams along each plan axis are
    summed and the larger axis taken, and the whole sum is given to this column (the columns
    above and below share it in truth): every step errs toward a larger limit, i.e. a larger Ve."""
    U, u = unit_system(settings), edition(settings)
    col = U.col
    out = members.copy()
    cols = out["kind"] == "column"
    out["_beams_m_i"], out["_beams_m_j"] = np.nan, np.nan
    out["_joint_note"] = pd.Series(NO_JOINTS.format(" ... ".join(U.cols([COORDS[0], COORDS[-1]]))), index=out.index,
                                   dtype=object)
    coords = U.cols(COORDS)
    if not all(c in out for c in coords) or not cols.any():
        return out
    xyz = out[coords].to_numpy(float) * U.per_span  # internal lengths (mm | in)
    placed = np.isfinite(xyz).all(axis=1)
    special = cols & (out.get("frame", pd.Series("none", index=out.index)) == "special")
    todo = np.flatnonzero(special.to_numpy() & placed)
    beams = np.flatnonzero((out["kind"] == "beam").to_numpy() & placed)
    if not len(todo):
        return out
    tol = settings.frames.joint_tolerance
    bm = out.iloc[beams]
    bcol = lambda name: bm[col(name)].to_numpy(float)  # noqa: E731
    ends = {}
    for e in ("i", "j"):
        top, bot = col(f"as_top_{e}_mm2"), col(f"as_bot_{e}_mm2")
        have = (bm[top].notna() & bm[bot].notna()).to_numpy() if top in bm and bot in bm else np.zeros(len(bm), bool)
        mpr = np.full(len(bm), np.nan)
        if have.any():
            r = sections.beam_end_strengths(
                bcol("b_mm")[have], bcol("h_mm")[have], bcol("d_mm")[have], bm[top].to_numpy(float)[have],
                bm[bot].to_numpy(float)[have], bcol("fc_mpa")[have], bcol("fy_mpa")[have], bf=bcol("bf_mm")[have],
                hf=bcol("hf_mm")[have], u=u)
            mpr[have] = np.fmax(r.mpr_pos, r.mpr_neg)
        ends[e] = mpr
    ln = bcol("length_m") * U.per_span - bcol("face_i_mm") - bcol("face_j_mm")
    sway = (np.nan_to_num(ends["i"], nan=0.0) + np.nan_to_num(ends["j"], nan=0.0)) / ln  # N
    sway = np.where(np.isfinite(ends["i"]) & np.isfinite(ends["j"]), sway,
                    2 * np.fmax(ends["i"], ends["j"]) / ln)
    bxyz = xyz[beams]
    axis = np.abs(bxyz[:, 3:5] - bxyz[:, 0:2])
    along_x = axis[:, 0] >= axis[:, 1]
    notes, lim_i, lim_j = [], np.full(len(out), np.nan), np.full(len(out), np.nan)
    for k in todo:
        c = out.iloc[k]
        reach = np.nanmax([c.get(col(k_), np.nan) for k_ in ("b_mm", "h_mm", "diameter_mm")] + [0.0])
        got, said = [], []
        for end, p in (("bottom", xyz[k, :3]), ("top", xyz[k, 3:])):
            framing = []
            for e, off in (("i", 0), ("j", 3)):
                q = bxyz[:, off:off + 3]
                near = (np.hypot(q[:, 0] - p[0], q[:, 1] - p[1]) <= reach / 2 + tol) & \
                    (np.abs(q[:, 2] - p[2]) <= bcol("h_mm") + tol)
                framing += [(j, e) for j in np.flatnonzero(near)]
            if not framing:
                got.append(np.nan)
                said.append(f"{end}: no beam frames in")
                continue
            m = np.array([ends[e][j] for j, e in framing])
            if not np.isfinite(m).all():
                got.append(np.nan)
                lacking = sorted({str(bm.member.iloc[j]) for (j, e), v in zip(framing, m) if not np.isfinite(v)})
                said.append(f"{end}: beam(s) {', '.join(lacking[:4])} lack their end bars ({col('as_top_i_mm2')} ...)")
                continue
            at_axis = m + np.array([sway[j] for j, _ in framing]) * reach / 2.0
            on_x = np.array([along_x[j] for j, _ in framing])
            got.append(max(at_axis[on_x].sum(), at_axis[~on_x].sum()))
            said.append(f"{end}: {len(framing)} beam(s), {got[-1] / U.per_moment:,.0f} {U.moment}")
        z_i, z_j = xyz[k, 2], xyz[k, 5]
        if z_i > z_j:  # node i above node j: the member runs down; keep the joints at their ends
            said.append("node i lies above node j: stations run from node i")
        lim_i[k], lim_j[k] = got
        notes.append((k, "; ".join(said)))
    out["_beams_m_i"], out["_beams_m_j"] = lim_i, lim_j
    for k, text in notes:
        out.iat[k, out.columns.get_loc("_joint_note")] = text
    return out


# ----------------------------------------------------------------------------- frame demand


@dataclass(frozen=True)
class FrameDemand:
    """Capacity design of frame columns (18.7.6, 18.4.3.1, 18.3.3) and the end zones."""

    ve_v: np.ndarray  # per member, N (NaN: none)
    ve_vb: np.ndarray
    moment_v: np.ndarray  # per member: the end moment behind Ve (Mpr or Mn, N mm, before the beams' limit)
    moment_vb: np.ndarray
    p_range: np.ndarray  # per member (2,): least and largest factored compression, N
    in_lo: np.ndarray  # per station
    zero_v: np.ndarray  # per station: Vc = 0 (18.7.6.2.1)
    zero_vb: np.ndarray
    nu_least: np.ndarray  # per station: least compression of any combination
    notes: list[list[str]]  # per member
    problems: np.ndarray  # per member: '' or why no capacity shear exists


def _column_sections(mb: Members, direction: str, spiral: np.ndarray) -> sections.Sections:
    s = mb.sec
    if not s.circular.any():
        return sections.rectangular_column_sections(s.b, s.h, s.n_long.astype(int), s.db_long, s.edge, s.fc, s.fy,
                                                    direction=direction, bar_area=s.bar_area, u=s.u)
    rect = sections.rectangular_column_sections(np.where(s.circular, 10 * s.edge, s.b),
                                                np.where(s.circular, 10 * s.edge, s.h),
                                                np.where(s.circular, 4, s.n_long).astype(int), s.db_long, s.edge,
                                                s.fc, s.fy, direction=direction, bar_area=s.bar_area, u=s.u)
    circ = sections.circular_column_sections(s.b, s.n_long.astype(int), s.db_long, s.edge, s.fc, s.fy,
                                             bar_area=s.bar_area, spiral=spiral, u=s.u)
    return _stack(rect, circ, s.circular)


def _stack(a: sections.Sections, b: sections.Sections, use_b: np.ndarray) -> sections.Sections:
    """Row-wise choice between two batches of sections (arrays padded to a common width)."""
    out = {}
    for f in a.__dataclass_fields__:
        x, y = getattr(a, f), getattr(b, f)
        if not isinstance(x, np.ndarray):  # the edition: one for the batch
            out[f] = x
        elif x.ndim == 2:
            w = max(x.shape[1], y.shape[1])
            x = np.pad(x, ((0, 0), (0, w - x.shape[1])))
            y = np.pad(y, ((0, 0), (0, w - y.shape[1])))
            out[f] = np.where(use_b[:, None], y, x)
        else:
            out[f] = np.where(use_b, y, x)
    return sections.Sections(**out)


def largest_moment(sec: sections.Sections, p_least: np.ndarray, p_most: np.ndarray, kind: str) -> np.ndarray:
    """The largest Mpr ("probable") or Mn ("nominal") of each section over the factored axial loads
    between p_least and p_most (18.7.6.1.1, 18.4.3.1(a)): sampled at MOMENT_SAMPLES loads, then the
    peak refined by golden sections between the neighbours of the best sample (M(P) of a column
    section rises to the balanced point and falls beyond it). NaN where no load balances."""
    n = len(p_least)
    grid = p_least[:, None] + (p_most - p_least)[:, None] * np.linspace(0.0, 1.0, MOMENT_SAMPLES)[None, :]
    strength = sections.probable_moment if kind == "probable" else sections.nominal_moment
    pairs = sec.take(np.repeat(np.arange(n), MOMENT_SAMPLES))
    m = strength(pairs, grid.reshape(-1)).moment.reshape(n, MOMENT_SAMPLES)
    best = np.nanargmax(np.where(np.isnan(m), -np.inf, m), axis=1)
    top = np.take_along_axis(m, best[:, None], axis=1)[:, 0]
    lo = grid[np.arange(n), np.maximum(best - 1, 0)]
    hi = grid[np.arange(n), np.minimum(best + 1, MOMENT_SAMPLES - 1)]
    ratio = (np.sqrt(5.0) - 1.0) / 2.0
    twice = sec.take(np.tile(np.arange(n), 2))  # both points of a golden-section step in one call
    for _ in range(REFINE_STEPS):
        a, b = hi - ratio * (hi - lo), lo + ratio * (hi - lo)
        ma, mb = np.split(strength(twice, np.concatenate([a, b])).moment, 2)
        top = np.fmax(top, np.fmax(ma, mb))
        left = np.nan_to_num(ma, nan=-np.inf) >= np.nan_to_num(mb, nan=-np.inf)
        lo, hi = np.where(left, lo, a), np.where(left, b, hi)
    return top


def _frame_demand(mb: Members, rs: Resampled, cand, cset: combos_mod.ComboSet, settings: Settings,
                  spiral: np.ndarray) -> FrameDemand:
    grid, n = rs.grid, len(mb.names)
    S = len(grid.x)
    starts = grid.offsets[:-1]
    n_lo, n_hi = combos_mod.extremes(cset, rs.case_values["N"])  # tension positive
    nu_least = -n_hi
    p_least = np.minimum.reduceat(-n_hi, starts) if S else np.zeros(n)
    p_most = np.maximum.reduceat(-n_lo, starts) if S else np.zeros(n)
    clear = mb.geo.clear_span
    x = rs.x_clear
    lo_st = mb.lo[grid.member]
    in_lo = (lo_st > 0) & ((x <= lo_st + 1e-6) | (x >= clear[grid.member] - lo_st - 1e-6))
    ve = {"v": np.full(n, np.nan), "vb": np.full(n, np.nan)}
    moment = {"v": np.full(n, np.nan), "vb": np.full(n, np.nan)}
    notes: list[list[str]] = [[] for _ in range(n)]
    problems = np.full(n, "", dtype=object)
    special = (mb.frame == "special") & (mb.problem == "")
    intermediate = (mb.frame == "intermediate") & (mb.problem == "")
    short = {"v": (mb.frame == "ordinary") & aci.ordinary_frame_short_column(clear, mb.sec.h) & (mb.problem == ""),
             "vb": (mb.frame == "ordinary") & aci.ordinary_frame_short_column(clear, mb.sec.b) & (mb.problem == "")}
    env = {k: demand.segment_max(np.abs(cand.values.get(q, np.zeros(len(cand)))), cand.bounds)
           for k, q in (("v", "V"), ("vb", "Vb"))}
    U = unit_system(settings)
    amplified = combos_mod.amplified_earthquake(cset, settings.frames.omega_o)
    for k, direction in (("v", "h"), ("vb", "b")):
        nominal = intermediate | short[k]
        use = special | nominal
        if not use.any():
            continue
        sec = _column_sections(mb, direction, spiral)
        idx = np.flatnonzero(use)
        kinds = np.where(special[idx], "probable", "nominal")
        m = np.full(n, np.nan)
        for kind in ("probable", "nominal"):
            sel = idx[kinds == kind]
            if len(sel):
                m[sel] = largest_moment(sec.take(sel), p_least[sel], p_most[sel], kind)
        moment[k] = m
        for j in np.flatnonzero(use & ~np.isfinite(m)):
            problems[j] = (f"no strain state balances the factored axial forces {p_least[j] / U.per_force:,.0f} to "
                           f"{p_most[j] / U.per_force:,.0f} {U.force}: the axial strength of the section is exceeded "
                           "(22.4)")
        # 18.7.6.1.1: Mpr at both ends, each limited by what the beams at that joint deliver
        ve_special = (np.fmin(m, mb.beams_i) + np.fmin(m, mb.beams_j)) / clear
        ve_a = 2.0 * m / clear  # 18.4.3.1(a): Mn at both ends in reverse curvature
        ve_b = np.full(n, np.nan)
        if amplified.rows:
            lo_v, hi_v = combos_mod.extremes(amplified, rs.case_values["V" if k == "v" else "Vb"])
            ve_b = np.maximum.reduceat(np.maximum(np.abs(lo_v), np.abs(hi_v)), starts) if S else ve_b
        ve[k] = np.where(special, ve_special, np.where(nominal, np.fmin(ve_a, ve_b), np.nan))
    # Vc = 0 over lo (18.7.6.2.1): the earthquake part of the shear (Ve from Mpr: all of it) at least half
    # the largest shear required in that end zone, and Pu < Ag f'c/20
    zero = {}
    region = np.where(~in_lo, -1, np.where(x <= lo_st + 1e-6, 0, 1))
    for k in ("v", "vb"):
        need = np.zeros((n, 2))
        on = region >= 0
        np.maximum.at(need, (grid.member[on], region[on]), env[k][on])
        ve_st = np.nan_to_num(ve[k], nan=0.0)[grid.member]
        most = np.maximum(ve_st, need[grid.member, np.maximum(region, 0)])
        sec_ag, sec_fc = mb.sec.Ag[grid.member], mb.sec.fc[grid.member]
        zero[k] = in_lo & special[grid.member] & aci.vc_taken_as_zero(ve_st, most, nu_least, sec_ag, sec_fc) \
            & (ve_st > 0)
    for m in np.flatnonzero(special | intermediate | short["v"] | short["vb"]):
        notes[m] = _frame_notes(mb, m, ve, moment, p_least, p_most, special, intermediate, short, amplified.rows, cset,
                                zero, grid, settings)
    return FrameDemand(ve["v"], ve["vb"], moment["v"], moment["vb"], np.column_stack([p_least, p_most]), in_lo,
                       zero["v"], zero["vb"], nu_least, notes, problems)


def _frame_notes(mb, m, ve, moment, p_least, p_most, special, intermediate, short, amplified_rows, cset, zero, grid,
                 settings) -> list[str]:
    U = unit_system(settings)
    kn = lambda v: "-" if not np.isfinite(v) else f"{v / U.per_force:,.0f} {U.force}"  # noqa: E731
    knm = lambda v: "-" if not np.isfinite(v) else f"{v / U.per_moment:,.0f} {U.moment}"  # noqa: E731
    lo = f"{mb.lo[m]:,.{0 if U.name == 'si' else 1}f} {U.length}"
    rng = f"Pu {p_least[m] / U.per_force:,.0f} to {p_most[m] / U.per_force:,.0f} {U.force}"
    sl = slice(grid.offsets[m], grid.offsets[m + 1])
    if special[m]:
        out = [f"special moment frame (18.7): lo = {lo} from each joint face (18.7.5.1)",
               f"Ve = {kn(ve['v'][m])} (V) and {kn(ve['vb'][m])} (Vb) from Mpr = {knm(moment['v'][m])} and "
               f"{knm(moment['vb'][m])}, the largest over {rng} (18.7.6.1.1), each direction alone"]
        limited = np.isfinite(mb.beams_i[m]) or np.isfinite(mb.beams_j[m])
        out.append(("end moments limited by the beams' Mpr at the joints (18.7.6.1.1; " if limited else
                    "Ve not limited by the beams' Mpr (18.7.6.1.1): ") + str(mb.joint_note[m]) + (")" if limited else ""))
        if zero["v"][sl].any() or zero["vb"][sl].any():
            out.append("Vc = 0 over lo (18.7.6.2.1)")
        out.append("not checked here: strong column-weak beam (18.7.3.2), joints (18.8: joints.csv), splices (18.7.4.3), "
                   "columns under discontinued walls (18.7.5.6)")
        return out
    if intermediate[m]:
        head = [f"intermediate moment frame (18.4.3): hoops over lo = {lo} from each joint face (18.4.3.3), beyond "
                "it the spacing of 10.7.6.5.2 (18.4.3.5)"]
    else:
        which = " and ".join(d for d, k in (("V", "v"), ("Vb", "vb")) if short[k][m])
        head = [f"ordinary moment frame, clear height <= 5 c1 for {which}: shear by 18.4.3.1 (18.3.3)"]
    b_text = ("18.4.3.1(b) not evaluated: the case types (cases.csv) are needed to find E" if cset.prefactored else
              "18.4.3.1(b) not evaluated: no earthquake case (type E)" if not amplified_rows else
              f"(b) the combinations with {settings.frames.omega_o:g}E")
    return head + [f"Ve = {kn(ve['v'][m])} (V) and {kn(ve['vb'][m])} (Vb): the lesser of (a) Mn at both ends, "
                   f"{knm(moment['v'][m])} and {knm(moment['vb'][m])} the largest over {rng}, and {b_text}"]


# ----------------------------------------------------------------------------- options and allowed spacing


@dataclass(frozen=True)
class Option:
    ties: demand.Ties
    usable: np.ndarray  # per member: the bar may tie these bars (25.7.2.2) and the legs are as given or designed


def _options(mb: Members, pu_most: np.ndarray, spiral: np.ndarray, settings: Settings) -> tuple[list[Option], np.ndarray]:
    """Every tie choice: each ladder bar (smallest first) with the least legs (25.7.2.3; 18.7.5.2(e)
    hx <= 350 mm | 14 in in special frames, (f) every bar and hx <= 200 mm | 8 in where Pu > 0.3 Ag f'c
    or f'c > 70 MPa | 10,000 psi), then each bar with every perimeter bar supported. Legs given (ties_h, ties_b)
    are kept, raised to the least where fewer. Returns the options and, per member, whether the
    given legs were raised."""
    s, u = mb.sec, mb.sec.u
    special = mb.frame == "special"
    every = special & ((pu_most > 0.3 * s.Ag * s.fc) | (s.fc > u.high_fc))
    # 18.7.5.2(e), (f): hx <= 350 mm | 14 in, or 200 mm | 8 in; 1e9: no limit outside special frames
    hx_max = np.where(special, np.where(every, u.smf_column_hx_high, u.smf_beam_hx_max), 1e9)
    base_v, base_vb = demand.legs_needed(s, hx_max, every)
    raised = (np.isfinite(mb.given_v) & (mb.given_v < base_v)) | (np.isfinite(mb.given_vb) & (mb.given_vb < base_vb))
    lv = np.where(np.isfinite(mb.given_v), np.maximum(mb.given_v, base_v), base_v)
    lvb = np.where(np.isfinite(mb.given_vb), np.maximum(mb.given_vb, base_vb), base_vb)
    n_b, _, n_h, _ = demand.face_bars(s)
    all_v = np.where(np.isfinite(mb.given_v) | s.circular, lv, n_b)
    all_vb = np.where(np.isfinite(mb.given_vb) | s.circular, lvb, n_h)
    catalogue = settings.detailing.bars
    bars = list(dict.fromkeys(bar for bar, _ in settings.detailing.ladder))
    bars.sort(key=lambda bar: catalogue[bar][0])
    out = []
    for legs_v, legs_vb, extra in ((lv, lvb, False), (all_v, all_vb, True)):
        if extra and np.array_equal(legs_v, lv) and np.array_equal(legs_vb, lvb):
            break
        for bar in bars:
            db, area = catalogue[bar]
            usable = aci.tie_bar_ok(s.db_long, db, u=u) & ((legs_v != lv) | (legs_vb != lvb) | ~extra)
            usable &= ~spiral | (db >= u.tie_db[0])  # 25.7.3.2: a spiral at least No. 10 | No. 3
            out.append(Option(demand.ties(s, bar, area, db, legs_v, legs_vb), usable))
    return out, raised


@dataclass(frozen=True)
class Allowed:
    """Per station, for one option: the spacing the demand allows and what it is made of."""

    spacing: np.ndarray  # on the module; inf where no tie is needed (never for columns)
    limit: np.ndarray  # the same before rounding down to the module (the self-check's bound)
    t_env: np.ndarray  # least 1/s over the station's cases
    t_case: np.ndarray  # per case
    s_max: np.ndarray  # the spacing rules (10.7.6.5.2, 25.7.2.1, 9.7.6.3.3, 18.7.5.3, 18.7.5.5, 18.4.3.3, 18.4.3.5)
    t_conf: np.ndarray  # least 1/s for confinement (Table 18.7.5.4, 25.7.3.3)
    needed: np.ndarray  # shear reinforcement required (Av,min or strength)


def _allowed(mb: Members, rs: Resampled, cases: demand.Cases, sec_c: demand.GatheredSection, opt: Option,
             fr: FrameDemand, spiral: np.ndarray, settings: Settings) -> Allowed:
    grid = rs.grid
    mem = grid.member
    tie = opt.ties
    u = mb.sec.u
    tie_c = tie.take(mem[cases.station], ("Aoh", "legs_v", "legs_vb"))  # what required_t reads, per case
    rule = settings.columns.biaxial_shear
    t_case = demand.required_t(cases, sec_c, tie_c, tie.area, rule)
    t_env = demand.segment_max(t_case, cases.bounds)
    s = mb.sec.take(mem)
    t = tie.take(mem)
    # shear reinforcement is required in a direction where Vu > 0.5 phi Vc in some case (10.6.2.1); where it is
    # not, no steel is needed there for strength either (the interaction of 22.5.1.11 starts above 0.5)
    need_v = demand.segment_any(cases.minimum_v, cases.bounds)
    need_vb = demand.segment_any(cases.minimum_vb, cases.bounds)
    needed = need_v | need_vb | demand.segment_any(t_case > 0, cases.bounds)
    heavy_v, heavy_vb = (demand.segment_any(h, cases.bounds) for h in demand.heavy(cases, sec_c))
    shear_v = aci.column_max_shear_spacing(np.where(heavy_v, np.inf, 0.0), s.fc, s.bw_v, s.d_v, u)
    shear_vb = aci.column_max_shear_spacing(np.where(heavy_vb, np.inf, 0.0), s.fc, s.bw_vb, s.d_vb, u)
    special, intermediate = (mb.frame == "special")[mem], (mb.frame == "intermediate")[mem]
    # 10.7.6.5.2, the d of each direction where that direction needs shear reinforcement; in an intermediate
    # frame's column outside lo in both directions, whether or not it is needed (18.4.3.5)
    always = intermediate & ~fr.in_lo
    s_max = np.minimum(np.where(need_v | always, shear_v, np.inf), np.where(need_vb | always, shear_vb, np.inf))
    s_max = np.where(spiral[mem], s_max, np.minimum(s_max, t["s_support"]))  # 25.7.2.1; spirals: 25.7.3.1 below
    torsion = demand.segment_any(cases.torsion, cases.bounds)
    s_max = np.where(torsion, np.minimum(s_max, aci.torsion_max_spacing(t["ph"], u)), s_max)
    s_max = np.where(special & fr.in_lo, np.minimum(s_max, aci.smf_column_so(s.least, s.db_long, t["hx"], s.fy, u)),
                     s_max)
    s_max = np.where(special & ~fr.in_lo, np.minimum(s_max, aci.smf_column_spacing_beyond_lo(s.db_long, s.fy, u)), s_max)
    s_max = np.where(intermediate & fr.in_lo, np.minimum(s_max, aci.imf_column_so(s.least, s.db_long, s.fy, u)), s_max)
    p_most = fr.p_range[:, 1][mem]
    t_conf = np.zeros(len(mem))
    conf = special & fr.in_lo
    if conf.any():
        rect = aci.smf_column_ash_over_sbc(s.Ag, t["Ach"], s.fc, s.fyt_conf, p_most, t["nl"], u)
        t_rect = np.maximum(rect * t["bc_b"] / (t["legs_v"] * tie.area), rect * t["bc_h"] / (t["legs_vb"] * tie.area))
        rho = aci.smf_column_rho_s(s.Ag, t["Ach"], s.fc, s.fyt_conf, p_most, u)
        t_circ = rho * t["bc_b"] / (4.0 * tie.area)  # rho_s = 4 Ab / (Dc s) (common practice)
        t_conf = np.where(conf, np.where(s.circular, t_circ, t_rect), 0.0)
    if spiral.any():
        sp = spiral[mem]
        least_rho = aci.spiral_min_rho_s(s.Ag, t["Ach"], s.fc, s.fyt_conf, u)
        t_conf = np.where(sp, np.maximum(t_conf, least_rho * t["bc_b"] / (4.0 * tie.area)), t_conf)
        s_max = np.where(sp, np.minimum(s_max, aci.spiral_pitch_limits(tie.db, u)[1]), s_max)
    with np.errstate(divide="ignore"):
        limit = np.minimum.reduce([np.where(t_env > 0, 1.0 / t_env, np.inf), np.where(t_conf > 0, 1.0 / t_conf, np.inf),
                                   s_max])
    limit = _with_neighbours(limit, mem, np.minimum)
    return Allowed(detailing.floor_to_module(limit, settings.detailing.spacing_module), limit, t_env, t_case,
                   s_max, t_conf, needed)


# ----------------------------------------------------------------------------- layout


@dataclass(frozen=True)
class Layouts:
    option: np.ndarray  # per member: chosen option, -1 where not laid out
    layouts: dict[int, detailing.Layout]
    reasons: dict[int, str]
    allowed: list[Allowed]
    stirrups: detailing.Stirrups  # the positions of every laid-out member, one array


def _tie_settings(settings: Settings):
    """Ties start half a spacing from each face (10.7.6.1.2, 10.7.6.1.3: the bottom tie within s/2 of
    the footing or slab, the top tie within s/2 of the beams' lowest bars; 18.4.3.3: the first hoop
    within so/2 of the joint face) and run over the whole clear height (25.7.2)."""
    return replace(settings.detailing, first_stirrup="half", stirrups_throughout=True)


def _layout(mb: Members, rs: Resampled, opts: list[Option], allowed: list[Allowed], blocked: np.ndarray,
            torsion_over: list[np.ndarray], spiral: np.ndarray, settings: Settings) -> Layouts:
    """The first tie option of the ladder that each member's allowed spacing, the practical minimum
    and the cross-sectional limit of 22.7.7.1(a) (``torsion_over``: with that option's Aoh and ph)
    admit, laid out along the clear height."""
    grid, n = rs.grid, len(mb.names)
    st = _tie_settings(settings)
    U = unit_system(settings)
    starts = grid.offsets[:-1]
    option = np.full(n, -1)
    reasons: dict[int, str] = {}
    layouts: dict[int, detailing.Layout] = {}
    least = [np.minimum.reduceat(a.spacing, starts) if len(grid.x) else np.zeros(n) for a in allowed]
    tried: dict[int, list[str]] = {m: [] for m in np.flatnonzero(~blocked)}  # members not laid out yet
    close_at_faces = np.ones(n, bool)  # ties: one within s/2 of each face
    for k, (opt, a) in enumerate(zip(opts, allowed)):  # option by option, each member's first that works
        ties = []
        for m in list(tried):
            if not opt.usable[m]:
                continue
            sl = slice(grid.offsets[m], grid.offsets[m + 1])
            if torsion_over[k][m]:  # a larger bar's smaller Aoh may pass where this one does not, or the reverse
                tried[m].append(f"{opt.ties.bar}: Vu and Tu exceed the cross-sectional limit of 22.7.7.1(a) with its "
                                "Aoh and ph")
                continue
            floor = aci.spiral_pitch_limits(opt.ties.db, mb.sec.u)[0] if spiral[m] else st.min_spacing
            if not np.isfinite(a.t_env[sl]).all():
                tried[m].append(f"{opt.ties.bar} ({int(opt.ties.legs_v[m])} x {int(opt.ties.legs_vb[m])} legs): "
                                "the biaxial interaction cannot be met at the section limit")
                continue
            if least[k][m] < floor - 1e-9:
                tried[m].append(f"{opt.ties.bar} ({int(opt.ties.legs_v[m])} x {int(opt.ties.legs_vb[m])} legs) at "
                                f"{least[k][m]:g} {U.length}")
                continue
            if spiral[m]:
                layouts[m] = detailing.Layout(opt.ties.bar, int(opt.ties.legs_v[m]),
                                              *_spiral_positions(float(mb.geo.clear_span[m]), float(least[k][m]), st))
                option[m] = k
                del tried[m]
            else:
                ties.append(m)
        got = detailing.layout_positions_batch(rs.x_clear, a.spacing, grid.offsets, np.array(ties, np.int64),
                                               mb.geo.clear_span, mb.free_i, mb.free_j, st, close_at_faces, st)
        for m in ties:
            if isinstance(got[m], str):
                tried[m].append(f"{opt.ties.bar}: {got[m]}")
                continue
            layouts[m] = detailing.Layout(opt.ties.bar, int(opt.ties.legs_v[m]), *got[m])
            option[m] = k
            del tried[m]
    for m, why in tried.items():
        what = "pitch" if spiral[m] else f"{st.min_spacing:g} {U.length} minimum spacing"
        reasons[m] = (f"no tie bar and legs of the ladder work at the {what}: " + "; ".join(why) if why else
                      "no tie bar of the ladder may tie these bars (25.7.2.2: No. 13 ties around No. 36 bars)")
    layouts = dict(sorted(layouts.items()))  # member by member, as the records read them
    return Layouts(option, layouts, reasons, allowed, detailing.Stirrups.gather(layouts, n))


def _spiral_positions(clear: float, pitch: float, st):
    """One pitch throughout, the turns centred so that each face is at most half a pitch away."""
    turns = int(np.ceil(clear / pitch - 1e-9))
    start = (clear - (turns - 1) * pitch) / 2.0
    return np.round(start + pitch * np.arange(turns), st.position_decimals), [], "spiral"


# ----------------------------------------------------------------------------- provided and self-check


@dataclass(frozen=True)
class Provided:
    on: np.ndarray  # per station
    spacing: np.ndarray
    option: np.ndarray  # per station (0 where not laid out)


def _provided(mb: Members, rs: Resampled, lay: Layouts) -> Provided:
    grid = rs.grid
    sp = lay.stirrups  # members not laid out have none: inf there
    spacing = detailing.provided_spacing_batch(sp.x, sp.offsets, mb.geo.clear_span, grid.member, rs.x_clear,
                                               detailing.jump_sides(grid.member, grid.x, grid.side))
    return Provided(lay.option[grid.member] >= 0, spacing, np.maximum(lay.option, 0)[grid.member])


@dataclass(frozen=True)
class Capacity:
    """Per case, of the provided layout (or of nothing where not laid out)."""

    strength: demand.Strength
    utilization: np.ndarray  # the strength utilization and the section limits


def _capacity(mb: Members, rs: Resampled, cases: demand.Cases, sec_c, opts: list[Option], prov: Provided,
              settings: Settings, spacing: np.ndarray | None = None) -> Capacity:
    """phi Vn of the provided ties for every case at the gap in force around its station (or at
    ``spacing`` per station)."""
    spacing = prov.spacing if spacing is None else spacing
    mem_c = rs.grid.member[cases.station]
    k_c = prov.option[cases.station]
    area = np.array([o.ties.area for o in opts])[k_c]
    tie = {name: _pick([getattr(o.ties, name) for o in opts], k_c, mem_c) for name in ("legs_v", "legs_vb", "Aoh", "ph")}
    with np.errstate(divide="ignore"):
        t = np.where(prov.on[cases.station] & np.isfinite(spacing[cases.station]), 1.0 / spacing[cases.station], 0.0)
    amin_v, amin_vb = demand.av_min(sec_c)
    got = demand.strength(cases, sec_c, tie, area, t, amin_v, amin_vb, settings.columns.biaxial_shear)
    r_v, r_vb = demand.shear_ratios(cases, sec_c)
    tl = demand.torsion_ratios(cases, sec_c, tie)
    return Capacity(got, np.maximum.reduce([got.utilization, r_v, r_vb, tl]))


def _check(mb: Members, rs: Resampled, cases: demand.Cases, cap: Capacity, prov: Provided, lay: Layouts,
           settings: Settings) -> None:
    """The self-check: every case of every station of every laid-out member at the gap in force
    there; Av,min where required; every spacing rule and the confinement; the section limits; ties
    inside the clear height, at least the practical minimum apart, the end ones within half the
    allowed spacing of each face."""
    grid = rs.grid
    st_util = demand.segment_max(cap.utilization, cases.bounds)  # at the widest gap of a station and its neighbours
    k = prov.option
    on = prov.on
    a_limit = _pick([a.limit for a in lay.allowed], k)
    s_max = _pick([a.s_max for a in lay.allowed], k)
    t_conf = _pick([a.t_conf for a in lay.allowed], k)
    wide = _with_neighbours(prov.spacing, grid.member, np.maximum)
    with np.errstate(divide="ignore"):
        t_prov = np.where(np.isfinite(wide), 1.0 / wide, 0.0)
    g = cap.strength
    lacks_min = (cases.minimum_v & ~g.has_min_v) | (cases.minimum_vb & ~g.has_min_vb)
    bad_min = demand.segment_any(lacks_min, cases.bounds)
    bad = on & ((st_util > 1.0 + demand.TOL) | bad_min | (prov.spacing > s_max * (1 + demand.TOL))
                | (t_prov < t_conf * (1 - demand.TOL)) | ~np.isfinite(prov.spacing))
    if bad.any():
        j = np.flatnonzero(bad)[0]
        m = grid.member[j]
        raise SelfCheckError(f"ties of column {mb.names[m]} fail their self-check at x = {rs.x_clear[j]:.1f} "
                             f"(utilization {st_util[j]:.3f}, s = {prov.spacing[j]:g}, s_max = {s_max[j]:g}, "
                             f"Av,min {'missing' if bad_min[j] else 'met'}, confinement 1/s >= {t_conf[j]:.5f})")
    smin, slack = settings.detailing.min_spacing, settings.detailing.gap_slack
    sp, clear = lay.stirrups, mb.geo.clear_span
    laid = np.zeros(len(clear), bool)
    laid[list(lay.layouts)] = True
    has = sp.counts > 0
    first_x, last_x, least_gap = sp.extents()
    exempt = np.zeros(len(clear), bool)
    exempt[[m for m, lay_m in lay.layouts.items() if lay_m.message in ("spiral", "end zones meet; one zone throughout")]] = True
    first_st, last_st = grid.offsets[:-1], grid.offsets[1:] - 1
    with np.errstate(invalid="ignore"):
        outside = laid & (~has | (first_x <= 0) | (last_x >= clear))
        close = laid & (least_gap < smin - slack) & ~exempt
        far_i = laid & ~mb.free_i & (first_x > a_limit[first_st] / 2.0 + slack)
        far_j = laid & ~mb.free_j & (clear - last_x > a_limit[last_st] / 2.0 + slack)
    for m in np.flatnonzero(outside | close | far_i | far_j)[:1]:  # the first failing member, as a member loop finds it
        if outside[m]:
            raise SelfCheckError(f"ties of column {mb.names[m]} do not lie within its clear height")
        if close[m]:
            raise SelfCheckError(f"ties of column {mb.names[m]} are {least_gap[m]:g} apart, under the {smin:g} minimum")
        gap, allowed = (first_x[m], a_limit[first_st[m]]) if far_i[m] else (clear[m] - last_x[m], a_limit[last_st[m]])
        raise SelfCheckError(f"the end tie of column {mb.names[m]} is {gap:g} from a face, over half the "
                             f"allowed spacing {allowed:g} (10.7.6.1.2, 10.7.6.1.3)")


def _with_neighbours(values: np.ndarray, member: np.ndarray, pick) -> np.ndarray:
    """Each station's value combined (``pick``: np.minimum or np.maximum) with its neighbours' on the
    same member. A gap between ties that holds a station reaches at most to the stations on either
    side, and between two stations each force varies linearly, so the demand there is at most the
    larger at those two (the checks are convex in the forces): the allowed spacing of a station is
    the least of its own and its neighbours', and the self-check takes the widest gap among them."""
    out = values.copy()
    same = member[1:] == member[:-1]
    out[1:] = np.where(same, pick(out[1:], values[:-1]), out[1:])
    out[:-1] = np.where(same, pick(out[:-1], values[1:]), out[:-1])
    return out


def _pick(per_option: list[np.ndarray], k: np.ndarray, member: np.ndarray | None = None) -> np.ndarray:
    """Element-wise choice among the options' arrays: per station (k), or per member taken at
    ``member`` for option k."""
    stack = np.stack(per_option)
    return stack[k, np.arange(len(k))] if member is None else stack[k, member]


# ----------------------------------------------------------------------------- records


def _kind_of_zone(frame: str, spiral: bool, lo: float, clear: float, zone: detailing.Zone) -> str:
    if spiral:
        return "spiral"
    if frame == "special":
        return "hoop"  # 18.7.5.2 in lo, 18.7.5.5 beyond it: hoops throughout
    if frame == "intermediate" and (zone.start < lo - 1e-6 or zone.end > clear - lo + 1e-6):
        return "hoop"  # 18.4.3.3
    return "tie"


def _vc_equation(c: demand.Cases, sec_c: demand.GatheredSection, with_min: np.ndarray, zero: np.ndarray,
                 at: np.ndarray) -> np.ndarray:
    """The equation of Table 22.5.5.1 that gave Vc, of the cases ``at`` alone (the governing ones)."""
    sec, with_min, hi = sec_c.take(at), with_min[at], c.vc_v_hi[at]
    a = aci.vc_with_min_stirrups(sec.fc, sec.bw_v, sec.d_v, c.nu[at], sec.Ag, sec.lam, u=sec.u)
    cap = aci.vc_cap(sec.fc, sec.bw_v, sec.d_v, sec.lam, u=sec.u)
    vc = np.where(with_min, hi, c.vc_v_lo[at])
    out = np.where(with_min, np.where(np.isclose(hi, a, rtol=1e-9, atol=1e-6), "22.5.5.1(a)", "22.5.5.1(b)"),
                   "22.5.5.1(c)").astype(object)
    out = np.where(np.isclose(vc, cap, rtol=1e-9) & (vc > 0), "22.5.5.1.1 cap", out)
    out = np.where(vc <= 0, "Vc = 0 (axial tension)", out)
    return np.where(zero[at], "Vc = 0 (18.7.6.2.1)", out)


CAPACITY_NAMES = {("special", demand.CAPACITY_V): "Ve from Mpr, V (18.7.6.1.1)",
                  ("special", demand.CAPACITY_VB): "Ve from Mpr, Vb (18.7.6.1.1)",
                  ("other", demand.CAPACITY_V): "Ve, V (18.4.3.1)", ("other", demand.CAPACITY_VB): "Ve, Vb (18.4.3.1)"}


def _records(mb: Members, rs: Resampled, cset, cand, cases: demand.Cases, sec_c, opts: list[Option],
             lay: Layouts, prov: Provided, cap: Capacity, fr: FrameDemand, spiral: np.ndarray, raised: np.ndarray,
             blocked_msg: dict[int, tuple[str, str]], settings: Settings):
    grid, n = rs.grid, len(mb.names)
    S = len(grid.x)
    U, u = unit_system(settings), mb.sec.u
    nd = settings.detailing.position_decimals
    area_nd = 0 if U.name == "si" else 2  # mm^2 whole, in^2 to 0.01
    g = cap.strength
    util = cap.utilization
    tie_rank = np.maximum(g.r_v, g.r_vb)
    r_v_sec, r_vb_sec = demand.shear_ratios(cases, sec_c)
    u_v, u_vb = np.maximum(g.r_v, r_v_sec), np.maximum(g.r_vb, r_vb_sec)
    on_c = prov.on[cases.station]
    u_v, u_vb = np.where(on_c, u_v, r_v_sec), np.where(on_c, u_vb, r_vb_sec)
    util = np.where(on_c, util, np.maximum(r_v_sec, r_vb_sec))
    gov_station = governing(util, tie_rank, cases.bounds) if len(cases.station) else np.zeros(S, int)
    member_bounds = cases.bounds[grid.offsets]
    gov_member = governing(util, tie_rank, member_bounds)
    names = _case_names(mb, cases, cand, cset, rs, np.concatenate([gov_station, gov_member]))
    name_station, name_member = names[:S], names[S:]
    zero_v = np.where(cases.kind == demand.CAPACITY_VB, False, fr.zero_v[cases.station])
    with_min = np.where(on_c, g.has_min_v, True)
    eq = _vc_equation(cases, sec_c, with_min, zero_v & (cases.vc_v_hi == 0), np.concatenate([gov_station, gov_member]))
    eq_station, eq_member = eq[:S], eq[S:]
    vc_v_used = np.where(with_min, cases.vc_v_hi, cases.vc_v_lo)
    vc_vb_used = np.where(np.where(on_c, g.has_min_vb, True), cases.vc_vb_hi, cases.vc_vb_lo)
    lim_v = aci.section_limit(cases.vc_v_hi, sec_c.fc, sec_c.bw_v, sec_c.d_v, u)
    lim_vb = aci.section_limit(cases.vc_vb_hi, sec_c.fc, sec_c.bw_vb, sec_c.d_vb, u)
    util_v_m = demand.segment_max(u_v, member_bounds)
    util_vb_m = demand.segment_max(u_vb, member_bounds)
    # the design shear of each direction: the combinations' and, in frames, Ve of that direction (18.7.6.1, 18.4.3.1)
    vmax_v = demand.segment_max(cases.vu_v * (cases.kind != demand.CAPACITY_VB), cases.bounds)
    vmax_vb = demand.segment_max(cases.vu_vb * (cases.kind != demand.CAPACITY_V), cases.bounds)
    k_ref = np.where(lay.option >= 0, lay.option, 0)[grid.member]
    aoh = _pick([o.ties.Aoh for o in opts], k_ref, grid.member)
    ph = _pick([o.ties.ph for o in opts], k_ref, grid.member)
    al = np.zeros(len(cases.station))
    if cases.torsion.any():
        s_ = sec_c
        at = cases.ata / aoh[cases.station]
        al = np.where(cases.torsion, aci.al_required(at, ph[cases.station], s_.fyt, s_.fy, s_.fc, s_.Acp,
                                                     np.minimum(s_.bw_v, s_.bw_vb), u), 0.0)
    al_member = demand.segment_max(al, member_bounds)

    rows, zones = [], []
    first_st, last_st = grid.offsets[:-1], grid.offsets[1:] - 1
    sp = lay.stirrups
    zb = detailing.zones_batch(sp.x, sp.offsets, mb.geo.clear_span, sp.hole_lo, sp.hole_hi)  # every laid-out member
    z_bounds = np.searchsorted(zb.group, np.arange(n + 1))
    z_all = [detailing.Zone(*z) for z in zip(zb.start.tolist(), zb.end.tolist(), zb.spacing.tolist(), zb.count.tolist())]
    designed = np.zeros(n, bool)
    for m in range(n):
        name = mb.names[m]
        if mb.problem[m]:
            rows.append(row(name, "invalid", mb.problem[m]))
            continue
        j = gov_member[m]
        kn = lambda v: round(float(v) / U.per_force, 2)  # noqa: E731 (kN | kip)
        common = dict(
            crit_i="free" if mb.free_i[m] else "face", crit_j="free" if mb.free_j[m] else "face",
            vu_design_i_kN=kn(vmax_v[first_st[m]]), vu_design_j_kN=kn(vmax_v[last_st[m]]),
            vb_design_i_kN=kn(vmax_vb[first_st[m]]), vb_design_j_kN=kn(vmax_vb[last_st[m]]),
            governing_case=name_member[m], phi_vc_kN=kn(aci.PHI_SHEAR * vc_v_used[j]),
            phi_vn_limit_kN=kn(lim_v[j]), utilization=round(float(util[j]), 3),
            x_governing_mm=round(float(rs.x_clear[cases.station[j]]), nd), vu_kN=kn(cases.vu_v[j]),
            vb_kN=kn(cases.vu_vb[j]), nu_kN=kn(cases.nu[j]), tu_kNm=round(cases.tu[j] / U.per_moment, 3),
            vc_equation=eq_member[m], al_torsion_mm2=round(float(al_member[m]), area_nd) if al_member[m] > 0 else None,
            utilization_v=round(float(util_v_m[m]), 3), utilization_vb=round(float(util_vb_m[m]), 3),
            phi_vc_vb_kN=kn(aci.PHI_SHEAR * vc_vb_used[j]), phi_vn_limit_vb_kN=kn(lim_vb[j]),
            ve_v_kN=kn(fr.ve_v[m]) if np.isfinite(fr.ve_v[m]) else None,
            ve_vb_kN=kn(fr.ve_vb[m]) if np.isfinite(fr.ve_vb[m]) else None,
            lo_mm=round(float(mb.lo[m]), nd) if mb.lo[m] > 0 else None)
        notes = list(fr.notes[m])
        if m in blocked_msg:
            rows.append(row(name, blocked_msg[m][0], blocked_msg[m][1], **common))
            continue
        if lay.option[m] < 0:
            rows.append(row(name, "resize", lay.reasons[m], method=METHOD_SECTIONAL, **common))
            continue
        layout = lay.layouts[m]
        opt = opts[lay.option[m]].ties
        lv, lvb = int(opt.legs_v[m]), int(opt.legs_vb[m])
        circular = bool(mb.sec.circular[m])
        clear = float(mb.geo.clear_span[m])
        zl = z_all[z_bounds[m]:z_bounds[m + 1]]
        kinds = [_kind_of_zone(str(mb.frame[m]), bool(spiral[m]), float(mb.lo[m]), clear, z) for z in zl]
        if spiral[m]:
            pitch = float(np.diff(layout.positions).min()) if len(layout.positions) > 1 else clear
            mass = detailing.set_mass([detailing.spiral_shape(float(mb.sec.b[m]), float(opt.clear[m]), opt.bar, pitch,
                                                              len(layout.positions), u)], u)
        else:
            mass = 0.0
            for z, kind in zip(zl, kinds):
                if z.count:
                    mass += z.count * detailing.set_mass(detailing.tie_set(
                        float(mb.sec.b[m]), float(mb.sec.h[m]), float(opt.clear[m]), opt.bar, lv, lvb, circular, kind,
                        u), u)
        legs_note = (f"{lv} legs parallel to h, {lvb} parallel to b" if not circular else
                     "circular, two effective legs (R22.5.8.5.3)")
        if raised[m]:
            notes.append(f"ties_h/ties_b raised to {lv} and {lvb} legs: 25.7.2.3" +
                         (" and 18.7.5.2" if mb.frame[m] == "special" else ""))
        if al_member[m] > 0:
            notes.append(f"torsion: add Al = {al_member[m]:,.{area_nd}f} {U.area} of longitudinal bars around the perimeter "
                         "(22.7.6.1, 9.6.4.3)")
        if layout.message and layout.message != "spiral":
            notes.append(layout.message)
        what = "a spiral" if spiral[m] else "hoops" if set(kinds) == {"hoop"} else \
            "hoops over lo, ties beyond" if "hoop" in kinds else "ties"
        message = "; ".join([f"{opt.bar} {what}, {legs_note}"] + notes)
        rows.append(row(name, "designed", message, stirrups_total=layout.count, stirrup_mass_kg=round(mass, 2),
                        method=METHOD_SECTIONAL, **common))
        designed[m] = True
        for zk, (zone, kind) in enumerate(zip(zl, kinds), start=1):
            zones.append(dict(member=name, zone=zk, start_mm=round(zone.start, nd), end_mm=round(zone.end, nd),
                              bar=opt.bar if zone.count else "", legs=lv if zone.count else 0,
                              spacing_mm=round(zone.spacing, nd) if np.isfinite(zone.spacing) else None,
                              count=zone.count, kind=kind, legs_vb=lvb if zone.count else 0))
    trace = _trace(mb, rs, cases, sec_c, opts, lay, prov, cap, fr, gov_station, name_station, vmax_v, vmax_vb,
                   vc_v_used, vc_vb_used, lim_v, lim_vb, eq_station, u_v, u_vb, util, settings)
    mine = designed[sp.member]
    pos = (pd.DataFrame({"member": mb.names[sp.member[mine]], "x_mm": sp.x[mine]}) if designed.any()
           else pd.DataFrame(columns=["member", "x_mm"]))
    return rows, zones, trace, pos


def _case_names(mb, cases: demand.Cases, cand, cset, rs, which: np.ndarray) -> np.ndarray:
    out = np.empty(len(which), dtype=object)
    is_combo = cases.kind[which] == demand.COMBINATION
    out[is_combo] = cand.names(cset, cases.cand[which[is_combo]])
    for k in np.flatnonzero(~is_combo):
        m = rs.grid.member[cases.station[which[k]]]
        out[k] = CAPACITY_NAMES[("special" if mb.frame[m] == "special" else "other", int(cases.kind[which[k]]))]
    return out


def _trace(mb, rs, cases, sec_c, opts, lay, prov, cap, fr, g, name_station, vmax_v, vmax_vb, vc_v_used, vc_vb_used,
           lim_v, lim_vb, eq_station, u_v, u_vb, util, settings) -> pa.Table:
    grid = rs.grid
    S = len(grid.x)
    U = unit_system(settings)
    on = prov.on
    k = prov.option
    mem = grid.member
    area = np.array([o.ties.area for o in opts])[k]
    legs_v = _pick([o.ties.legs_v for o in opts], k, mem)
    aoh = _pick([o.ties.Aoh for o in opts], k, mem)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_prov = np.where(on & np.isfinite(prov.spacing), 1.0 / prov.spacing, 0.0)
    t_env = _pick([a.t_env for a in lay.allowed], k)
    t_case = _pick([a.t_case for a in lay.allowed], k[cases.station])
    s = mb.sec.take(mem)
    amin_v, _ = demand.av_min(s)
    at_case = np.where(cases.torsion, cases.ata / aoh[cases.station], 0.0)
    at_env = demand.segment_max(at_case, cases.bounds)
    # Av/s each direction needs at the least 1/s of its station's cases, with the chosen legs
    largest_v = governing(cases.vu_v, None, cases.bounds)
    largest_vb = governing(cases.vu_vb, None, cases.bounds)
    s_max = _pick([a.s_max for a in lay.allowed], k)
    s_allowed = _pick([a.spacing for a in lay.allowed], k)
    with np.errstate(divide="ignore"):
        s_conf = 1.0 / _pick([a.t_conf for a in lay.allowed], k)
    vc_zero = fr.zero_v | fr.zero_vb
    take = lambda values, idx: pa.array(list(values), pa.string()).take(pa.array(idx))
    nan = np.full(S, np.nan)
    return pa.table({
        "member": take(mb.names, mem), "x_mm": np.round(rs.x_clear, 2), "side": grid.side,
        "governing_case": pa.array(list(name_station), pa.string()), "vu_kN": cases.vu_v[g] / U.per_force,
        "vu_max_kN": vmax_v / U.per_force, "nu_kN": cases.nu[g] / U.per_force, "tu_kNm": cases.tu[g] / U.per_moment,
        # each direction's phi*Vc, phi*Vn, section limit and Av,min threshold at its own largest Vu (what its
        # diagram draws; another direction's case, e.g. a Ve case of the other sway, may keep Vc there)
        "phi_vc_kN": aci.PHI_SHEAR * vc_v_used[largest_v] / U.per_force,
        "phi_vn_kN": np.where(on, cap.strength.phi_vn_v[largest_v], nan) / U.per_force,
        "phi_vn_limit_kN": lim_v[largest_v] / U.per_force,
        "avmin_threshold_kN": 0.5 * aci.PHI_SHEAR * cases.vc_v_lo[largest_v] / U.per_force,  # 10.6.2.1
        "vc_equation": pa.array(list(eq_station), pa.string()),
        "av_s_req": np.where(on, legs_v * area * t_case[g], nan), "at_s_req": at_case[g],
        "av_s_env": np.where(on, legs_v * area * t_env, nan), "at_s_env": at_env,
        "av_min_s": amin_v, "avmin_required": demand.segment_any(cases.minimum_v, cases.bounds),
        "torsion": demand.segment_any(cases.torsion, cases.bounds),
        "s_max_mm": s_max, "s_allowed_mm": np.where(on, s_allowed, nan), "spacing_mm": np.where(on, prov.spacing, nan),
        "av_s_prov": np.where(on, legs_v * area * t_prov, nan), "utilization": util[g],
        # the direction parallel to b, the capacity design, the end zones
        "vb_kN": cases.vu_vb[g] / U.per_force, "vb_max_kN": vmax_vb / U.per_force, "phi_vc_vb_kN": aci.PHI_SHEAR * vc_vb_used[largest_vb] / U.per_force,
        "phi_vn_vb_kN": np.where(on, cap.strength.phi_vn_vb[largest_vb], nan) / U.per_force,
        "phi_vn_limit_vb_kN": lim_vb[largest_vb] / U.per_force,
        "avmin_threshold_vb_kN": 0.5 * aci.PHI_SHEAR * cases.vc_vb_lo[largest_vb] / U.per_force,
        "utilization_v": u_v[g], "utilization_vb": u_vb[g],
        "ve_kN": fr.ve_v[mem] / U.per_force, "ve_vb_kN": fr.ve_vb[mem] / U.per_force,
        "vc_zero": vc_zero, "s_confinement_mm": np.where(on, s_conf, nan),
    })


# ----------------------------------------------------------------------------- the family step


def design(mb: Members, rs: Resampled, cand, cset, settings: Settings) -> BatchOutput:
    """Frame demand, demand cases, options, layout, self-check and records of a batch of columns."""
    grid, n = rs.grid, len(mb.names)
    S = len(grid.x)
    spiral = mb.sec.circular & (settings.columns.circular_transverse == "spiral")
    few = spiral & (mb.sec.n_long < 6) & (mb.problem == "")
    problem = mb.problem.copy()
    problem[few] = "a spirally reinforced column needs at least 6 bars (10.7.3.1)"
    mb = replace(mb, problem=problem)
    fr = _frame_demand(mb, rs, cand, cset, settings, spiral)
    sec_st = mb.sec.take(grid.member)
    parts = [demand.combination_cases(sec_st, cand)]
    combo = parts[0]
    for key, zero in (("v", fr.zero_v), ("vb", fr.zero_vb)):  # Vc = 0 over lo for every shear there (18.7.6.2.1)
        z = zero[combo["station"]]
        combo[f"vc_{key}_hi"] = np.where(z, 0.0, combo[f"vc_{key}_hi"])
        combo[f"vc_{key}_lo"] = np.where(z, 0.0, combo[f"vc_{key}_lo"])
        combo[f"minimum_{key}"] = combo[f"minimum_{key}"] | (z & (combo[f"vu_{key}"] > 0))
    if np.isfinite(fr.ve_v).any() or np.isfinite(fr.ve_vb).any():
        parts.append(demand.capacity_cases(sec_st, fr.ve_v[grid.member], fr.ve_vb[grid.member], fr.nu_least,
                                           fr.zero_v, fr.zero_vb))
    cases = demand.merge(parts, S)
    sec_c = mb.sec.gathered(grid.member[cases.station])  # per case, the arrays gathered as read
    p_most = fr.p_range[:, 1]
    opts, raised = _options(mb, p_most, spiral, settings)
    allowed = [_allowed(mb, rs, cases, sec_c, o, fr, spiral, settings) for o in opts]

    blocked_msg: dict[int, tuple[str, str]] = {}
    r_v, r_vb = demand.shear_ratios(cases, sec_c)
    worst_v = demand.segment_max(r_v, cases.bounds[grid.offsets])
    worst_vb = demand.segment_max(r_vb, cases.bounds[grid.offsets])
    for m in range(n):
        if mb.problem[m]:
            blocked_msg[m] = ("invalid", mb.problem[m])
        elif fr.problems[m]:
            blocked_msg[m] = ("resize", fr.problems[m])
        elif max(worst_v[m], worst_vb[m]) > 1.0:
            parts_ = []
            for ratio, bw, d, label in ((worst_v[m], mb.sec.bw_v[m], mb.sec.d_v[m], "V"),
                                        (worst_vb[m], mb.sec.bw_vb[m], mb.sec.d_vb[m], "Vb")):
                if ratio > 1.0:
                    parts_.append(f"{label}: ratio {ratio:.2f}, needs bw*d of about {bw * d * ratio:,.0f} "
                                  f"{unit_system(settings).area}")
            blocked_msg[m] = ("resize", "Vu exceeds the section limit of 22.5.1.2 (" + "; ".join(parts_) + ")")
        elif mb.frame[m] == "special":
            why = []
            if not aci.smf_column_dimensions_ok(mb.sec.b[m], mb.sec.h[m], mb.sec.u):
                U = unit_system(settings)
                why.append(f"least side {min(mb.sec.b[m], mb.sec.h[m]):g} {U.length}: at least "
                           f"{mb.sec.u.smf_column_min_dim:g} {U.length} and 0.4 of the other (18.7.2.1)")
            if not aci.smf_column_steel_ratio_ok(mb.sec.ast[m], mb.sec.Ag[m]):
                why.append(f"longitudinal steel {100 * mb.sec.ast[m] / mb.sec.Ag[m]:.2f} % of Ag, outside 1 % to 6 % "
                           "(18.7.4.1)")
            if why:
                blocked_msg[m] = ("resize", "special moment frame column: " + "; ".join(why))
    torsion_over = []  # per tie option, the members whose Vu and Tu exceed 22.7.7.1(a) with its Aoh and ph
    for opt in opts:
        tie_c = opt.ties.take(grid.member[cases.station], ("Aoh", "ph"))  # what torsion_ratios reads
        ratio = demand.segment_max(demand.torsion_ratios(cases, sec_c, tie_c), cases.bounds[grid.offsets])
        torsion_over.append(ratio > 1.0)
    torsion_bad = np.logical_and.reduce(torsion_over) if torsion_over else np.zeros(n, bool)
    for m in np.flatnonzero(torsion_bad & ~np.isin(np.arange(n), list(blocked_msg))):
        blocked_msg[m] = ("resize", "Vu and Tu exceed the cross-sectional limit of 22.7.7.1(a) with every tie bar: "
                                    "enlarge the section or raise f'c")
    blocked = np.zeros(n, bool)
    blocked[list(blocked_msg)] = True
    lay = _layout(mb, rs, opts, allowed, blocked, torsion_over, spiral, settings)
    prov = _provided(mb, rs, lay)
    cap = _capacity(mb, rs, cases, sec_c, opts, prov, settings)
    _check(mb, rs, cases, _capacity(mb, rs, cases, sec_c, opts, prov, settings,
                                    _with_neighbours(prov.spacing, rs.grid.member, np.maximum)), prov, lay, settings)
    rows, zones, trace, positions = _records(mb, rs, cset, cand, cases, sec_c, opts, lay, prov, cap, fr, spiral,
                                             raised, blocked_msg, settings)
    return BatchOutput(rows, zones, trace, rs.warnings, positions)


geometry = _geometry
signed = SIGNED
