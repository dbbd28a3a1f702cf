"""Beam-column joints of special moment frames (ACI 318-19 18.8): the joint shear from the
beams' bars at 1.25 fy less the column shear, against phi*Vn of Table 18.8.4.3.

Where the joints are. A joint is the top of a column (a member of kind ``column``); a beam
end frames into it where, in plan, the end lies within the tolerance ([frames]
joint_tolerance_mm) plus half the column's larger side of the column's axis, and its height
lies between the column top less the beam depth (a beam axis drawn at mid-depth, as physical
models place it) less the tolerance and the column top plus the tolerance. The column
above is the one whose bottom lies within the tolerance of that top. All of it comes from
the member end coordinates x_i_m ... z_j_m (members.csv, or read from an IFC model); without
them the joints are not checked, and the run says so.

Per joint and direction of the beams through it (beams within 10 degrees of one line):
    Vu = 1.25 fy (As,top of the beam on one side + As,bot of the beam on the other side)
         - Vcol, the larger of the two sway directions (18.8.2.1, 18.8.4.1; Fig. R18.8.2);
    Vcol = (Mpr- + Mpr+ of those beams at the joint) / H, H the mean of the storey heights
         above and below (contraflexure at mid-height; the height below alone where no
         column continues above, a smaller Vcol: common practice, safe);
    phi*Vn = 0.85 coefficient lambda sqrt(f'c) Aj (Table 18.8.4.3, 21.2.4.4), f'c of the
         column below; the coefficient from the column continuing above (15.2.6), a beam
         on the far side (15.2.7), and transverse beams on both sides at least 3/4 of the
         face they frame into (15.2.8).
The columns' orientation is not in the inputs: phi*Vn is the lesser of the two ways the
column's b and h can lie (exact for square columns), and 18.8.2.3 is checked with the
column's lesser side and db_long_mm (the smallest bar given: a joint it fails surely fails).
A frame beam's axis is placed where the coordinates put it: the effective width is held to
twice the distance from the axis of the beam farthest off the column's axis to the nearer
column side (18.8.4.3(b)); a model drawn on the axes has no offset, and the run says so.

The members table comes in the run's unit system (coordinates in m or ft, sections in mm
or in), and the joint shear strength is that of its edition (Table 18.8.4.3: 1.7, 1.2,
1.0 sqrt(MPa) or 20, 15, 12 sqrt(psi)); the table is keyed by the SI column names and
named in the run's system by the engine.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from postproc import units
from postproc.codes import aci318_19 as aci
from postproc.demand import frames as fr
from postproc.settings import Settings

COLUMNS = ["joint", "members", "vu_kN", "phi_vn_kN", "utilization", "status", "message", "direction", "level",
           "column_below", "column_above", "coefficient", "aj_mm2"]  # SI names (units.UnitSystem.cols)
COORDS = ["x_i_m", "y_i_m", "z_i_m", "x_j_m", "y_j_m", "z_j_m"]
DTYPES = {"joint": str, "members": str, "vu_kN": float, "phi_vn_kN": float, "utilization": float, "status": str,
          "message": str, "direction": str, "level": str, "column_below": str, "column_above": str,
          "coefficient": float, "aj_mm2": float}
OFFSET_TOLERANCE = {"si": 1.0, "us": 0.04}  # mm | in: a beam's axis this close to its column's is on it (rounding)
PARALLEL_SIN = np.sin(np.radians(10.0))  # beams within 10 degrees of one line pass one direction of the joint
STATUSES = ("ok", "resize")


def design_joints(members: pd.DataFrame, settings: Settings) -> tuple[pd.DataFrame, list[str]]:
    """The joint table of a run's members (the validated input table, in the run's column
    names) and warnings."""
    U = units.system(settings.units)
    col, coords = U.col, U.cols(COORDS)
    m = members.reset_index(drop=True)
    empty = pd.DataFrame(columns=COLUMNS)
    frame = m["frame"].fillna("none") if "frame" in m else pd.Series("none", index=m.index)
    kind = m["kind"].fillna("beam")
    valid = m["invalid_reason"].isna() | (m["invalid_reason"] == "") if "invalid_reason" in m \
        else pd.Series(True, index=m.index)
    special = (kind == "beam") & (frame == "special") & valid
    if not special.any():
        return empty, []
    has_xyz = m.reindex(columns=coords).notna().all(axis=1) if set(coords) <= set(m.columns) \
        else pd.Series(False, index=m.index)
    if not (special & has_xyz).any():
        return empty, [f"{int(special.sum())} beam(s) of special moment frames, but the members table gives no end "
                       f"coordinates ({coords[0]} ... {coords[-1]}): the beam-column joints (ACI 318-19 18.8) are not "
                       "checked"]
    from scipy.spatial import cKDTree  # here: worker processes import the engine, not this

    span = U.per_span  # coordinates and lengths in m | ft; sections in mm | in
    tol = settings.frames.joint_tolerance / span
    cols = np.flatnonzero(((kind == "column") & has_xyz & valid).to_numpy())
    beams = np.flatnonzero(((kind == "beam") & has_xyz & valid).to_numpy())
    xyz = m[coords].to_numpy(float).reshape(-1, 2, 3)
    fb = fr.frame_beams(m, U)
    warnings = []
    if not len(cols):
        return empty, [f"{int(special.sum())} beam(s) of special moment frames, but no column with end coordinates: "
                       "the beam-column joints (ACI 318-19 18.8) are not checked"]

    low = np.argmin(xyz[cols, :, 2], axis=1)
    bottom, top = xyz[cols, low], xyz[cols, 1 - low]
    col_b, col_h = m[col("b_mm")].to_numpy(float)[cols], m[col("h_mm")].to_numpy(float)[cols]
    reach = tol + np.maximum(col_b, col_h) / (2 * span)
    above = _column_above(cKDTree(bottom), top, bottom, tol)

    # beam ends framing into each column top
    ends = np.concatenate([np.stack([beams, np.zeros(len(beams), int)], 1), np.stack([beams, np.ones(len(beams), int)], 1)])
    pts = xyz[ends[:, 0], ends[:, 1]]
    far = xyz[ends[:, 0], 1 - ends[:, 1]]
    depth = m[col("h_mm")].to_numpy(float)[ends[:, 0]] / span
    tree = cKDTree(top[:, :2])
    joint_of = np.full(len(ends), -1)
    best = np.full(len(ends), np.inf)
    for e, near in enumerate(tree.query_ball_point(pts[:, :2], r=float(reach.max()))):
        for k in near:
            plan = np.hypot(*(pts[e, :2] - top[k, :2]))
            dz = pts[e, 2] - top[k, 2]
            if plan <= reach[k] and -(depth[e] + tol) <= dz <= tol and plan + abs(dz) < best[e]:
                joint_of[e], best[e] = k, plan + abs(dz)
    missing = [m["member"].iat[b] for b, end, k in zip(ends[:, 0], ends[:, 1], joint_of)
               if special.iat[b] and k < 0 and m[f"support_{'ij'[end]}"].iat[b] == "column"]
    if missing:
        warnings.append(f"{len(missing)} end(s) of special-frame beams on a column support meet no column top in the "
                        f"coordinates (e.g. {', '.join(map(str, missing[:3]))}): those joints are not checked (18.8)")

    rows = []
    length = m[col("length_m")].to_numpy(float) * span
    t = _Columns(m, U)
    is_special = special.to_numpy()
    offset_max = 0.0  # the largest offset of a beam's axis from its column's (mm | in)
    for k in np.unique(joint_of[joint_of >= 0]):
        here = np.flatnonzero(joint_of == k)
        if not is_special[ends[here, 0]].any():
            continue
        away = far[here, :2] - pts[here, :2]
        away = away / np.maximum(np.hypot(away[:, 0], away[:, 1]), 1e-12)[:, None]
        rel = pts[here, :2] - top[k, :2]  # the beam's axis from the column's, in plan: its perpendicular distance
        offset = np.abs(rel[:, 0] * away[:, 1] - rel[:, 1] * away[:, 0]) * span
        offset_max = max(offset_max, float(offset[is_special[ends[here, 0]]].max()))
        c, c_above = cols[k], (cols[above[k]] if above[k] >= 0 else -1)
        storey = (length[c] + length[c_above]) / 2 if c_above >= 0 else length[c]
        for axis in _axes(away):
            along = np.abs(away[:, 0] * axis[1] - away[:, 1] * axis[0]) <= PARALLEL_SIN
            if is_special[ends[here, 0]][along].any():  # a direction with beams of the special frame
                rows.append(_joint_row(t, fb, is_special, ends[here], away, offset, axis, c, c_above, storey, U))
    table = pd.DataFrame(rows, columns=COLUMNS)
    if len(table) and offset_max <= OFFSET_TOLERANCE[U.name]:
        warnings.append("joints (18.8): every special-frame beam meets its column on the column's axis in the member "
                        "coordinates, so the effective width limit for a beam offset from that axis (twice the "
                        "smaller distance from the beam's axis to a column side, 18.8.4.3(b)) took no effect; where "
                        "beams are offset in the building (e.g. flush with a column face) but drawn on the axes, check "
                        "those joints with their real offset, or give coordinates that place the beams where they are")
    for r in table[table.status != "ok"].itertuples():
        warnings.append(f"joint {r.joint} ({r.direction}): {r.message}")
    return table, warnings


def _column_above(tree, top: np.ndarray, bottom: np.ndarray, tol: float) -> np.ndarray:
    """For each column top, the index of the column whose bottom stands on it (-1: none);
    ``tree`` a KD-tree of the bottoms."""
    out = np.full(len(top), -1)
    for k, near in enumerate(tree.query_ball_point(top, r=tol)):
        near = [j for j in near if j != k]
        if near:
            out[k] = near[int(np.argmin(np.linalg.norm(bottom[near] - top[k], axis=1)))]
    return out


def _axes(away: np.ndarray) -> list[np.ndarray]:
    """The directions (unit plan vectors, up to sign) of the beams at a joint, beams within
    10 degrees of a line grouped."""
    axes: list[np.ndarray] = []
    for v in away:
        if not any(abs(v[0] * a[1] - v[1] * a[0]) <= PARALLEL_SIN for a in axes):
            axes.append(v)
    return axes


class _Columns:
    """The members table's columns a joint row reads, taken out of the table once (a column
    read from a DataFrame per joint was most of the joints' time)."""

    def __init__(self, m: pd.DataFrame, U: units.UnitSystem):
        col = U.col
        self.b, self.h = m[col("b_mm")].to_numpy(float), m[col("h_mm")].to_numpy(float)
        self.fy, self.fc = m[col("fy_mpa")].to_numpy(float), m[col("fc_mpa")].to_numpy(float)
        self.lam = m["lambda"].to_numpy(float) if "lambda" in m else None
        self.member = list(m["member"])  # the table's own values, as .iat gives them
        self.level = list(m["level"]) if "level" in m else None


def _joint_row(t: _Columns, fb: fr.FrameBeams, special: np.ndarray, ends, away, offset, axis, c, c_above, storey,
               U: units.UnitSystem) -> dict:
    u, mm = fb.u, U.length
    along = np.abs(away[:, 0] * axis[1] - away[:, 1] * axis[0]) <= PARALLEL_SIN
    side = np.sign(away @ axis)
    beams, end = ends[:, 0], ends[:, 1]
    bw, h, fy = t.b, t.h, t.fy
    top = np.where(end == 0, fb.as_top_i[beams], fb.as_top_j[beams])
    bot = np.where(end == 0, fb.as_bot_i[beams], fb.as_bot_j[beams])
    mpr_neg = np.where(end == 0, fb.mpr_neg_i[beams], fb.mpr_neg_j[beams])
    mpr_pos = np.where(end == 0, fb.mpr_pos_i[beams], fb.mpr_pos_j[beams])
    frame_beam = along & special[beams]

    def side_values(sgn):
        pick = np.flatnonzero(frame_beam & (side == sgn))
        if not len(pick):
            return 0.0, 0.0, 0.0, 0.0
        k = pick[np.argmax(top[pick] + bot[pick])]  # the stronger where two frame beams share a side
        return (float(aci.probable_bar_force(top[k], fy[beams[k]])), float(aci.probable_bar_force(bot[k], fy[beams[k]])),
                float(mpr_neg[k]), float(mpr_pos[k]))

    t_a, c_a, neg_a, pos_a = side_values(1)
    t_b, c_b, neg_b, pos_b = side_values(-1)
    # sway 1: top bars in tension on side +, bottom bars on side -; sway 2: the other way (18.8.2.1)
    vu = max(float(aci.joint_shear_demand(t_a, c_b, aci.column_shear_at_joint(neg_a + pos_b, storey))),
             float(aci.joint_shear_demand(c_a, t_b, aci.column_shear_at_joint(pos_a + neg_b, storey))))
    both_sides = (along & (side > 0)).any() and (along & (side < 0)).any()  # 15.2.7: a beam beyond the joint
    across = ~along & (np.abs(away @ axis) <= PARALLEL_SIN)  # perpendicular beams
    perp = np.array([-axis[1], axis[0]])
    col_b, col_h, fc = float(t.b[c]), float(t.h[c]), float(t.fc[c])
    lam = float(t.lam[c]) if t.lam is not None and np.isfinite(t.lam[c]) else 1.0
    bw_min = float(bw[beams[frame_beam]].min())
    off = float(offset[frame_beam].max())  # the frame beam farthest off the column's axis
    ways = ((col_h, col_b), (col_b, col_h))  # the orientation is not known: the lesser, of those that hold the beam
    ways = [w for w in ways if off <= w[1] / 2 + OFFSET_TOLERANCE[U.name]] or list(ways)
    best = None
    for depth, width in ways:
        sides = [bw[beams[across & (np.sign(away @ perp) == s)]] for s in (1, -1)]
        confined = all(len(w) and aci.transverse_beams_confine(w.max(), w.max(), depth) for w in sides)
        coef = float(aci.joint_strength_coefficient(c_above >= 0, both_sides, confined, u))
        edge = max(width / 2 - off, 0.0)  # from that beam's axis to the nearer column side
        bj = float(aci.joint_effective_width(width, depth, bw_min, edge))
        phi_vn = float(aci.joint_design_strength(fc, bj, depth, coef, lam))
        if best is None or phi_vn < best[0]:
            best = (phi_vn, coef, bj * depth, bj, 2 * edge < min(width, bw_min + depth))
    phi_vn, coef, aj, bj, by_offset = best
    util = vu / phi_vn if phi_vn > 0 else np.inf  # bj = 0: a beam axis at or beyond the column side
    nd = 0 if U.name == "si" else 1
    msgs = [f"bj = {bj:,.{nd}f} {mm}, twice the distance from a beam's axis {off:,.{nd}f} {mm} off the column's to "
            "the nearer column side (18.8.4.3(b))"] if by_offset else []
    if util > 1.0:
        msgs.append(f"Vu {vu / U.per_force:,.1f} {U.force} exceeds phi*Vn {phi_vn / U.per_force:,.1f} {U.force} "
                    "(18.8.4.3): enlarge the column or raise f'c")
    db = fb.db_long[beams[frame_beam]]
    through = frame_beam & both_sides
    depth_short = bool(through.any()) and not aci.joint_depth_ok(
        min(col_b, col_h), np.nanmax(db), fy[beams[frame_beam]].max(), h[beams[frame_beam]].max(), lam, u)
    if depth_short:
        msgs.append(f"18.8.2.3: the column side along the beam bars, at least {min(col_b, col_h):g} {mm}, must be at "
                    f"least 20 db of the largest beam bar (here db_long {np.nanmax(db):g} {mm}, the smallest given) and "
                    "half the beam depth")
    names = [t.member[b] for b in beams[along]]
    level = t.level[beams[frame_beam][0]] if t.level is not None else ""
    return dict(joint=f"{t.member[c]}:top", members=" ".join(map(str, names)), vu_kN=round(vu / U.per_force, 2),
                phi_vn_kN=round(phi_vn / U.per_force, 2), utilization=round(util, 3),
                status="ok" if util <= 1.0 and not depth_short else "resize", message="; ".join(msgs),
                direction=_direction(axis), level=level,
                column_below=t.member[c], column_above=t.member[c_above] if c_above >= 0 else "",
                coefficient=coef, aj_mm2=round(aj, 0 if U.name == "si" else 1))


def _direction(axis: np.ndarray) -> str:
    angle = float(np.degrees(np.arctan2(axis[1], axis[0]))) % 180.0
    for name, a in (("x", 0.0), ("y", 90.0), ("x", 180.0)):
        if abs(angle - a) <= 10.0:
            return name
    return f"{angle:.0f} deg"
