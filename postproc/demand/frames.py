"""Beams of moment frames of the seismic-force-resisting system (ACI 318-19 Chapter 18).

Pure arrays: per member the flexural strengths of the faces and the member checks of
Chapter 18; per station the capacity-design shear, the hinge zones and the rules that
apply there. The beam family (postproc.pipeline.frame_beams) turns these into a further
candidate combination per station and into spacing limits, so that the demand, the layout,
the self-check and the records of postproc.pipeline.beams cover Chapter 18 without a
separate path.

Sign convention (README): V = dM/dx with M sagging positive, so a beam under gravity has
V > 0 near node i. Sway 1 puts the top bars in tension at face i and the bottom bars at
face j (V1 = (Mpr- i + Mpr+ j)/ln > 0); sway 2 the opposite (V2 < 0).

Units are the run's (N, mm, MPa or lb, in, psi), the provisions those of its edition
(``FrameBeams.u``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from postproc import sections, units
from postproc.codes import aci318_19 as aci
from postproc.codes.aci318_19 import SI, Edition

CODES = {"none": 0, "ordinary": 1, "intermediate": 2, "special": 3}
NONE, ORDINARY, INTERMEDIATE, SPECIAL = 0, 1, 2, 3
NAMES = {v: k for k, v in CODES.items()}
FACES = ("as_top_i_mm2", "as_bot_i_mm2", "as_top_j_mm2", "as_bot_j_mm2")
CLEAR_BAR_SPACING_MM = SI.bar_clear_spacing_min  # 25.2.1 (SI; the edition's bar_clear_spacing_min in general)


@dataclass(frozen=True)
class FrameBeams:
    """Per member of a batch (N, mm or lb, in; NaN where a frame or its bars are not given)."""

    code: np.ndarray  # CODES
    as_top_i: np.ndarray
    as_bot_i: np.ndarray
    as_top_j: np.ndarray
    as_bot_j: np.ndarray
    db_long: np.ndarray
    fy: np.ndarray
    mn_neg_i: np.ndarray  # Mn with the top bars in tension, face i (22.2)
    mn_pos_i: np.ndarray  # Mn with the bottom bars in tension (the flange in compression)
    mn_neg_j: np.ndarray
    mn_pos_j: np.ndarray
    mpr_neg_i: np.ndarray  # Mpr, 1.25 fy and phi = 1 (Chapter 2; 18.6.5.1)
    mpr_pos_i: np.ndarray
    mpr_neg_j: np.ndarray
    mpr_pos_j: np.ndarray
    u: Edition = SI  # the edition (and units) of the arrays

    @property
    def capacity(self) -> np.ndarray:
        """Members designed for a capacity-design shear (special 18.6.5, intermediate 18.4.2.3)."""
        return self.code >= INTERMEDIATE

    @property
    def bars_given(self) -> np.ndarray:
        return np.isfinite(self.as_top_i) & np.isfinite(self.db_long)


def frame_beams(bm: pd.DataFrame, U: units.UnitSystem = units.SI) -> FrameBeams:
    """Mn and Mpr of both faces of every frame beam of a batch, both signs, at P = 0, by
    strain compatibility (postproc.sections, checked against concreteproperties): d from
    the top face to the bottom bars, d' = cover_mm (else h - d) to the top bars, the flange
    bf x hf at the top (in compression under positive moment), the bars of each layer of
    diameter db_long_mm where it displaces the block. ``bm`` is named in the unit system
    ``U``, whose edition the strengths are computed with."""
    n = len(bm)
    u = aci.edition(U.name)
    frame = bm["frame"].fillna("none").to_numpy(object) if "frame" in bm else np.full(n, "none", object)
    code = np.array([CODES.get(f, NONE) for f in frame], dtype=np.int8)
    num = lambda c: bm[U.col(c)].to_numpy(float) if U.col(c) in bm else np.full(n, np.nan)  # noqa: E731
    faces = [num(c) for c in FACES]
    db = num("db_long_mm")
    fy = num("fy_mpa")
    h, d = num("h_mm"), num("d_mm")
    cover = num("cover_mm")
    nan = np.full(n, np.nan)
    out = dict(mn_neg_i=nan, mn_pos_i=nan, mn_neg_j=nan, mn_pos_j=nan,
               mpr_neg_i=nan, mpr_pos_i=nan, mpr_neg_j=nan, mpr_pos_j=nan)
    have = (code > NONE) & np.isfinite(faces[0]) & np.isfinite(db)
    if have.any():
        k = np.flatnonzero(have)
        two = np.concatenate([k, k])  # face i, then face j
        d_prime = np.where(np.isfinite(cover), cover, h - d)
        r = sections.beam_end_strengths(
            num("b_mm")[two], h[two], d[two], np.concatenate([faces[0][k], faces[2][k]]),
            np.concatenate([faces[1][k], faces[3][k]]), num("fc_mpa")[two], fy[two], d_prime=d_prime[two],
            bf=num("bf_mm")[two], hf=num("hf_mm")[two], db_top=db[two], db_bot=db[two], u=u)
        m = len(k)
        for name, values in (("mn_neg", r.mn_neg), ("mn_pos", r.mn_pos), ("mpr_neg", r.mpr_neg),
                             ("mpr_pos", r.mpr_pos)):
            for end, part in (("i", values[:m]), ("j", values[m:])):
                arr = np.full(n, np.nan)
                arr[k] = part
                out[f"{name}_{end}"] = arr
    return FrameBeams(code, *faces, db, fy, **out, u=u)


def bar_area(db):
    """Area of one bar of diameter db (common practice: the nominal circle)."""
    return np.pi * np.asarray(db, float) ** 2 / 4.0


def member_problems(fb: FrameBeams, clear_span, b, h, d, fc) -> np.ndarray:
    """Per member, the Chapter 18 requirements of the longitudinal bars and proportions that
    the inputs show unmet ('' where none): special 18.6.2.1, 18.6.3.1, 18.6.3.2; intermediate
    18.4.2.1, 18.4.2.2; ordinary 18.3.2 (where bars are given). The bar counts are the bars
    of db_long_mm that fit in each face's steel: at least two at each face is necessary for
    two continuous bars; that they run through is for the engineer to confirm."""
    out = np.full(len(fb.code), "", dtype=object)
    u = fb.u
    U = units.system(u.units)
    mm, area = U.length, U.area
    two = bar_area(fb.db_long) * 2.0 * (1 - 1e-9)
    faces = {"top i": fb.as_top_i, "bottom i": fb.as_bot_i, "top j": fb.as_top_j, "bottom j": fb.as_bot_j}
    as_min = aci.rho_w_lower_bound(fc, fb.fy, u) * b * d  # 9.6.1.2
    rho_max = aci.smf_beam_rho_max(fb.fy, u)
    for m in np.flatnonzero((fb.code > NONE) & fb.bars_given):
        found = []
        clause = {SPECIAL: "18.6.3.1", INTERMEDIATE: "18.4.2.1", ORDINARY: "18.3.2"}[int(fb.code[m])]
        few = [f for f, a in faces.items() if a[m] < two[m]]
        if few:
            found.append(f"{clause}: two continuous bars at top and bottom, but the steel at the {', '.join(few)} "
                         f"face holds fewer than two bars of {fb.db_long[m]:g} {mm}")
        if fb.code[m] == SPECIAL:
            if not aci.smf_beam_dimensions_ok(clear_span[m], d[m], b[m], h[m], u):
                found.append(f"18.6.2.1: clear span {clear_span[m]:,.0f} {mm} at least 4d = {4 * d[m]:,.0f} {mm} and "
                             f"bw = {b[m]:g} {mm} at least min(0.3h, {u.smf_beam_bw_min:g}) = "
                             f"{min(0.3 * h[m], u.smf_beam_bw_min):g} {mm}")
            low = [f for f, a in faces.items() if a[m] < as_min[m] * (1 - 1e-9)]
            high = [f for f, a in faces.items() if a[m] > rho_max[m] * b[m] * d[m] * (1 + 1e-9)]
            if low:
                found.append(f"18.6.3.1: As at the {', '.join(low)} face below As,min = "
                             f"{as_min[m]:,.{0 if U.name == 'si' else 2}f} {area} (9.6.1.2)")
            if high:
                found.append(f"18.6.3.1: As at the {', '.join(high)} face above rho = {rho_max[m]:g}")
        if fb.code[m] >= INTERMEDIATE:
            face, span = (0.5, 0.25) if fb.code[m] == SPECIAL else (1 / 3, 1 / 5)
            ok = aci.beam_moment_balance_ok(fb.mn_pos_i[m], fb.mn_neg_i[m], fb.mn_pos_j[m], fb.mn_neg_j[m], face, span)
            if not ok:
                c = "18.6.3.2" if fb.code[m] == SPECIAL else "18.4.2.2"
                found.append(f"{c}: Mn+ at each face at least {face:.2g} of Mn- there and every face strength at "
                             f"least {span:.2g} of the largest (Mn- {fb.mn_neg_i[m] / U.per_moment:,.0f} / "
                             f"{fb.mn_neg_j[m] / U.per_moment:,.0f}, Mn+ {fb.mn_pos_i[m] / U.per_moment:,.0f} / "
                             f"{fb.mn_pos_j[m] / U.per_moment:,.0f} {U.moment} at i / j)")
        out[m] = "; ".join(found)
    return out


def sway_shears(fb: FrameBeams, clear_span, probable: bool) -> tuple[np.ndarray, np.ndarray]:
    """Per member, the shear of the two sway directions from the face strengths of opposite
    sign: Mpr (18.6.5.1) or Mn (18.4.2.3(a)) over the clear span. Returns (V1 > 0, V2 < 0)."""
    if probable:
        return aci.sway_shears(fb.mpr_neg_i, fb.mpr_pos_i, fb.mpr_neg_j, fb.mpr_pos_j, clear_span)
    return aci.sway_shears(fb.mn_neg_i, fb.mn_pos_i, fb.mn_neg_j, fb.mn_pos_j, clear_span)


def capacity_shear(g_max, g_min, v1, v2, reversed_sign) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per station, the capacity-design shear from the gravity shear on the clear span
    (largest and smallest over the gravity combinations, ``g_max``, ``g_min``) and the sway
    shears ``v1``, ``v2`` of its member: Ve = the largest |g + V_sway| over both sways and
    every gravity combination (18.6.5.1, Fig. R18.6.5; |g + V| is convex in g, so the
    extremes of g suffice).

    Where the member's V looks signed against the convention (``reversed_sign``), the sway
    cannot be paired with the gravity by direction and Ve = max |g| + max |V_sway| (never
    less). Returns (Ve, its earthquake-induced part |V_sway|, the sway: 0 for 1, 1 for 2)."""
    a1 = np.maximum(np.abs(g_max + v1), np.abs(g_min + v1))
    a2 = np.maximum(np.abs(g_max + v2), np.abs(g_min + v2))
    first = a1 >= a2
    ve = np.maximum(a1, a2)
    safe = np.maximum(np.abs(g_max), np.abs(g_min)) + np.maximum(np.abs(v1), np.abs(v2))
    ve = np.where(reversed_sign, safe, ve)
    first = np.where(reversed_sign, np.abs(v1) >= np.abs(v2), first)
    return ve, np.where(first, np.abs(v1), np.abs(v2)), np.where(first, 0, 1).astype(np.int8)


def hinge_zones(x_clear, clear_span, h) -> np.ndarray:
    """Per station: 1 within 2h of face i, 2 within 2h of face j (1 where both), 0 elsewhere
    (18.6.4.1(a), 18.4.2.4). ``clear_span`` and ``h`` per station."""
    length = aci.smf_beam_hoop_zone_length(h)
    at_i = x_clear <= length + 1e-9
    at_j = x_clear >= clear_span - length - 1e-9
    return np.where(at_i, 1, np.where(at_j, 2, 0)).astype(np.int8)


def vc_zero_zones(zone, member, n_members, ve, ve_eq, least_compression, Ag, fc) -> np.ndarray:
    """Per station, Vc = 0 by 18.6.5.2 over a hinge zone where (a) the earthquake-induced shear
    is at least half the largest required shear Ve in that zone (taken at the station of the
    largest Ve), and (b) the axial compression is under Ag f'c/20 (the least compression of
    any combination in the zone: Vc = 0 whenever some combination satisfies (b)). ``zone``
    from hinge_zones (0: not in a hinge zone); the other arrays per station, ``Ag``, ``fc``
    per member."""
    out = np.zeros(len(zone), bool)
    for z in (1, 2):
        here = np.flatnonzero(zone == z)
        if not len(here):
            continue
        m = member[here]
        order = np.lexsort((-np.arange(len(here)), ve[here], m))  # per member, the largest Ve last
        last = np.flatnonzero(np.r_[m[order][1:] != m[order][:-1], True])
        top = here[order[last]]
        ve_max = np.zeros(n_members)
        eq_at = np.zeros(n_members)
        ve_max[member[top]], eq_at[member[top]] = ve[top], ve_eq[top]
        comp = np.full(n_members, np.inf)
        np.minimum.at(comp, m, least_compression[here])
        zero = aci.vc_taken_as_zero(eq_at, ve_max, comp, Ag, fc) & np.isfinite(ve_max)
        out[here] = zero[m]
    return out


def hoop_spacing_limits(code, zone, d, db_long, fy, u: Edition = SI) -> tuple[np.ndarray, np.ndarray]:
    """Per station, the spacing limits of Chapter 18 that do not depend on the hoop bar, and
    the multiple of the hoop bar diameter that also limits it (inf where none):
    special: hoops d/4, 6 db (5 db Grade 550 | 80), 150 mm | 6 in (18.6.4.4), stirrups
    elsewhere d/2 (18.6.4.6); intermediate: hoops d/4, 8 db (6 db Grade 550 | 80), 24 db of
    the hoop, 300 mm | 12 in (18.4.2.4), d/2 elsewhere (18.4.2.5); ordinary and none: no
    limit beyond Chapter 9."""
    hinge = zone > 0
    special = np.where(hinge, aci.smf_beam_hoop_spacing(d, db_long, fy, u), aci.smf_beam_stirrup_spacing_elsewhere(d))
    inter = np.where(hinge, aci.imf_beam_hoop_spacing(d, db_long, np.inf, fy, u),
                     aci.imf_beam_stirrup_spacing_elsewhere(d))
    limit = np.where(code == SPECIAL, special, np.where(code == INTERMEDIATE, inter, np.inf))
    hoop_multiple = np.where((code == INTERMEDIATE) & hinge, 24.0, np.inf)  # 18.4.2.4(c)
    return limit, hoop_multiple


def legs_for_bar_support(fb: FrameBeams, b, cover_to_stirrup, stirrup_db, u: Edition = SI) -> np.ndarray:
    """Per member, the hoop legs across the width that 18.6.4.2 asks of special-frame beams:
    the bars nearest the top and bottom faces supported by 25.7.2.3 (every corner and
    alternate bar, no unsupported bar more than 150 mm | 6 in clear from a supported one) with
    the supported bars at most 350 mm | 14 in apart. The bars of the layer nearest a face are
    taken as As / (bar of db_long_mm), rounded up (db_long_mm is the smallest bar: never fewer
    bars than there are), but no more than one layer holds at the least clear spacing of
    25.2.1 (max(25 mm | 1 in, db); from memory), evenly spread inside the stirrup. 2 for
    other members."""
    width = b - 2.0 * (cover_to_stirrup + stirrup_db) - fb.db_long  # between the centres of the corner bars
    fit = np.floor(width / (fb.db_long + np.fmax(u.bar_clear_spacing_min, fb.db_long)) + 1e-9) + 1  # one layer
    n_bars = np.ceil(np.fmax.reduce([fb.as_top_i, fb.as_bot_i, fb.as_top_j, fb.as_bot_j]) / bar_area(fb.db_long) - 1e-9)
    n_bars = np.where(np.isfinite(n_bars), np.clip(np.fmin(n_bars, fit), 2, None), 2).astype(int)
    spacing = np.where(n_bars > 1, width / np.maximum(n_bars - 1, 1), width)
    legs = aci.legs_required(n_bars, np.maximum(np.nan_to_num(spacing, nan=1.0), 1.0), np.nan_to_num(fb.db_long),
                             hx_max=u.smf_beam_hx_max, u=u)
    return np.where((fb.code == SPECIAL) & fb.bars_given, legs, 2)


def gravity_without_end_moments(v, member, x, n_members) -> np.ndarray:
    """The shear of a gravity case on the clear span as a simple beam (Fig. R18.6.5): the
    analysis shear less its end-moment part (M_j - M_i)/ln, which is the mean of V over the
    clear span (dM/dx = V, so the integral of V over ln is M_j - M_i). ``v`` (n_cases, S) on
    a station grid that spans each clear span, in order (jumps as two stations: exact for
    the piecewise-linear diagram)."""
    same = member[1:] == member[:-1]
    dx = np.where(same, np.diff(x), 0.0)
    area = np.zeros((v.shape[0], n_members))
    np.add.at(area.T, member[1:], (dx * (v[:, 1:] + v[:, :-1]) / 2.0).T)
    span = np.zeros(n_members)
    np.add.at(span, member[1:], dx)
    mean = np.where(span > 0, area / np.where(span > 0, span, 1.0), 0.0)
    return v - mean[:, member]
