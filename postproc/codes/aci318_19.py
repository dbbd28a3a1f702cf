"""ACI 318-19 one-way shear and torsion provisions for nonprestressed beams, SI units.

Pure, vectorised functions: every argument may be a scalar or a numpy array and
arrays broadcast against each other. Units are N, mm and MPa throughout; axial
force ``Nu`` follows the code's sign (compression positive). No I/O, no pandas,
no loops over members. Each function cites the clause it implements.
"""

from __future__ import annotations

import numpy as np

EDITION = "ACI 318-19"

PHI_SHEAR = 0.75  # 21.2.1(b): shear and torsion
FYT_MAX_MPA = 420.0  # 20.2.2.4(a), Table 20.2.2.4(a): fyt of shear reinforcement
FC_MIN_MPA = 17.0  # 19.2.1.1, Table 19.2.1.1: minimum f'c, general use
SQRT_FC_MAX = 8.3  # 22.5.3.1: sqrt(f'c) used for Vc shall not exceed 8.3 MPa


def sqrt_fc(fc):
    """sqrt(f'c) limited to 8.3 MPa for shear (22.5.3.1)."""
    return np.minimum(np.sqrt(fc), SQRT_FC_MAX)


def size_effect_factor(d):
    """lambda_s = sqrt(2 / (1 + 0.004 d)) <= 1.0, d in mm (22.5.5.1.3)."""
    return np.minimum(np.sqrt(2.0 / (1.0 + 0.004 * np.asarray(d, dtype=float))), 1.0)


def axial_stress_term(Nu, Ag, fc):
    """Nu/(6 Ag), compression positive, not taken greater than 0.05 f'c (22.5.5.1.2)."""
    return np.minimum(Nu / (6.0 * Ag), 0.05 * fc)


def vc_cap(fc, bw, d, lam=1.0):
    """Upper limit on Vc: 0.42 lambda sqrt(f'c) bw d (22.5.5.1.1)."""
    return 0.42 * lam * sqrt_fc(fc) * bw * d


def _vc_limited(v, fc, bw, d, lam):
    # 22.5.5.1.1 cap; Vc is not taken less than zero (22.5.5.1, from memory).
    return np.clip(v * bw * d, 0.0, vc_cap(fc, bw, d, lam))


def vc_with_min_stirrups(fc, bw, d, Nu, Ag, lam=1.0, rho_w=None):
    """Vc where Av >= Av,min (Table 22.5.5.1): the larger of (a) and (b).

    (a) [0.17 lambda sqrt(f'c) + Nu/(6Ag)] bw d
    (b) [0.66 lambda rho_w^(1/3) sqrt(f'c) + Nu/(6Ag)] bw d, used where rho_w is known.
    """
    coef = 0.17 * lam * sqrt_fc(fc)
    if rho_w is not None:  # both add the same axial term, so the larger coefficient gives the larger Vc
        coef = np.where(np.isfinite(rho_w), np.maximum(coef, 0.66 * lam * np.cbrt(rho_w) * sqrt_fc(fc)), coef)
    return _vc_limited(coef + axial_stress_term(Nu, Ag, fc), fc, bw, d, lam)


def vc_without_min_stirrups(fc, bw, d, Nu, Ag, rho_w, lam=1.0):
    """Vc where Av < Av,min (Table 22.5.5.1 (c)), with the size-effect factor 22.5.5.1.3.

    (c) [0.66 lambda_s lambda rho_w^(1/3) sqrt(f'c) + Nu/(6Ag)] bw d
    """
    axial = axial_stress_term(Nu, Ag, fc)
    v = 0.66 * size_effect_factor(d) * lam * np.cbrt(rho_w) * sqrt_fc(fc) + axial
    return _vc_limited(v, fc, bw, d, lam)


def vs_max(fc, bw, d):
    """Largest Vs the section limit admits: 0.66 sqrt(f'c) bw d (22.5.1.2)."""
    return 0.66 * sqrt_fc(fc) * bw * d


def section_limit(Vc, fc, bw, d):
    """phi (Vc + 0.66 sqrt(f'c) bw d): Vu above this needs a larger section (22.5.1.2)."""
    return PHI_SHEAR * (Vc + vs_max(fc, bw, d))


def av_over_s_for_vs(Vs, fyt, d):
    """Av/s = Vs / (fyt d) for stirrups perpendicular to the axis (22.5.8.5.3), mm^2/mm."""
    return np.maximum(Vs, 0.0) / (fyt * d)


def vs_from_av_over_s(av_s, fyt, d):
    """Vs = Av fyt d / s (22.5.8.5.3)."""
    return av_s * fyt * d


def av_min_over_s(fc, bw, fyt):
    """Av,min/s, the greater of 0.062 sqrt(f'c) bw/fyt and 0.35 bw/fyt (Table 9.6.3.4 (a), (b)).

    The full sqrt(f'c): the 8.3 MPa limit of 22.5.3.1 is for Vc, and capping it here
    would lower the minimum for f'c above 69 MPa."""
    return np.maximum(0.062 * np.sqrt(fc) * bw / fyt, 0.35 * bw / fyt)


def av_min_threshold(fc, bw, d, lam=1.0):
    """Vu above which Av,min is required: phi 0.083 lambda sqrt(f'c) bw d (9.6.3.1)."""
    return PHI_SHEAR * 0.083 * lam * sqrt_fc(fc) * bw * d


def av_min_exempt(h, bw, hf=None):
    """Beam types of Table 9.6.3.1 where Av,min is needed only where Vu > phi Vc.

    Implemented rows: shallow depth, h <= 250 mm; integral with slab, h <= greater of
    2.5 hf and 0.5 bw, and h <= 600 mm (only where a flange thickness is given).
    Not implemented: steel-fibre concrete and one-way joist rows (no input for them).
    """
    h = np.asarray(h, dtype=float)
    exempt = h <= 250.0
    if hf is not None:
        hf = np.asarray(hf, dtype=float)
        integral = np.isfinite(hf) & (h <= np.maximum(2.5 * np.nan_to_num(hf), 0.5 * bw)) & (h <= 600.0)
        exempt = exempt | integral
    return exempt


def max_spacing(Vs, fc, bw, d):
    """Maximum stirrup spacing along and across the member (Table 9.7.6.2.2), mm.

    Vs <= 0.33 sqrt(f'c) bw d: along min(d/2, 600), across min(d, 600);
    otherwise: along min(d/4, 300), across min(d/2, 300).
    Returns (along, across).
    """
    heavy = Vs > 0.33 * sqrt_fc(fc) * bw * d
    along = np.where(heavy, np.minimum(d / 4.0, 300.0), np.minimum(d / 2.0, 600.0))
    across = np.where(heavy, np.minimum(d / 2.0, 300.0), np.minimum(d, 600.0))
    return along, across


def rho_w_lower_bound(fc, fy):
    """Lower bound on rho_w for a flexural member: As,min/(bw d) from 9.6.1.2.

    The greater of 0.25 sqrt(f'c)/fy and 1.4/fy. Used for Table 22.5.5.1 (c) where the
    tension steel is not given: every beam must carry at least As,min, so this is safe.
    """
    return np.maximum(0.25 * np.sqrt(fc) / fy, 1.4 / fy)


# --- torsion, solid sections, theta = 45 degrees --------------------------------

def torsion_threshold(fc, Acp, pcp, Nu, Ag, lam=1.0):
    """Threshold torsion Tth for a solid nonprestressed section with axial force (Table 22.7.4.1(a)).

    Tth = 0.083 lambda sqrt(f'c) (Acp^2/pcp) sqrt(1 + Nu/(0.33 Ag lambda sqrt(f'c))).
    Torsion may be neglected where Tu < phi Tth (9.5.4.1, 22.7.1.1).
    """
    sfc = sqrt_fc(fc)
    axial = np.sqrt(np.maximum(1.0 + Nu / (0.33 * Ag * lam * sfc), 0.0))
    return 0.083 * lam * sfc * Acp**2 / pcp * axial


def at_over_s(Tu, Aoh, fyt):
    """At/s for one leg: Tu / (phi 2 Ao fyt cot(theta)) with Ao = 0.85 Aoh, theta = 45 deg (22.7.6.1, 22.7.6.1.1)."""
    return np.abs(Tu) / (PHI_SHEAR * 2.0 * 0.85 * Aoh * fyt)


def torsion_section_ok(Vu, Tu, Vc, fc, bw, d, Aoh, ph):
    """Cross-sectional limit for solid sections (22.7.7.1(a)):

    sqrt((Vu/(bw d))^2 + (Tu ph/(1.7 Aoh^2))^2) <= phi (Vc/(bw d) + 0.66 sqrt(f'c)).
    Returns the ratio of the left side to the right side (<= 1 passes).
    """
    lhs = np.hypot(Vu / (bw * d), np.abs(Tu) * ph / (1.7 * Aoh**2))
    rhs = PHI_SHEAR * (Vc / (bw * d) + 0.66 * sqrt_fc(fc))
    return lhs / rhs


def al_required(At_s, ph, fyt, fy, fc, Acp, bw):
    """Longitudinal torsion steel Al, mm^2: the greater of (22.7.6.1(b), theta = 45 deg)
    (At/s) ph (fyt/fy) and the minimum of 9.6.4.3(a), 0.42 sqrt(f'c) Acp/fy - (At/s) ph (fyt/fy),
    with At/s there not less than 0.175 bw/fyt (9.6.4.3(b)). fy is limited to 420 MPa
    (20.2.2.4). Added to the flexural steel (9.5.4.3)."""
    fy = np.minimum(fy, FYT_MAX_MPA)
    al = At_s * ph * fyt / fy
    at_min = np.maximum(At_s, 0.175 * bw / fyt)
    al_min = 0.42 * np.sqrt(fc) * Acp / fy - at_min * ph * fyt / fy
    return np.maximum(al, al_min)


def combined_min_transverse(fc, bw, fyt):
    """(Av + 2At)/s minimum where torsion is considered: greater of 0.062 sqrt(f'c) bw/fyt and 0.35 bw/fyt (9.6.4.2)."""
    return av_min_over_s(fc, bw, fyt)


def torsion_max_spacing(ph):
    """Spacing of torsional transverse reinforcement: not more than min(ph/8, 300 mm) (9.7.6.3.3)."""
    return np.minimum(ph / 8.0, 300.0)


def is_deep_by_span(clear_span, h):
    """Deep beam by clear span: ln <= 4h (9.9.1.1(a))."""
    return clear_span <= 4.0 * h


# =====================================================================================
# Chapter 18, earthquake-resistant structures: frame beams, columns and joints, with the
# column shear provisions of Chapters 10, 22 and 25 that columns need.
# SI forms; each coefficient sits in the function of its clause or in a named constant.
# Clause text not read from a published copy is marked "from memory".
# =====================================================================================

PHI_JOINT = 0.85  # 21.2.4.4: joints of special moment frames (21.2.4.3 in the 2014 edition) (from memory)
EQ_AXIAL_FRACTION = 1.0 / 20.0  # 18.6.5.2(b), 18.7.6.2.1(b): Vc = 0 only while Pu < Ag f'c/20
FIRST_HOOP_MAX_MM = 50.0  # 18.6.4.4, 18.4.2.4: first hoop within 50 mm of the face of the support
FYT_CONFINEMENT_MAX_MPA = 690.0  # Table 20.2.2.4(a): fyt for concrete confinement (from memory)
OMEGA_O_MOMENT_FRAME = 3.0  # overstrength factor commonly tabulated by the general building code for RC moment frames (from memory)


def _grade_550(fy):
    # the Grade 550 rows apply to fy above 420 MPa (the stricter rule for any grade between)
    return np.asarray(fy, dtype=float) > 420.0


# --- capacity-design shear of frame members ----------------------------------------------

def sway_shears(m_top_i, m_bot_i, m_top_j, m_bot_j, ln):
    """Shear of a member from end moments of opposite sign at its two faces, for both sway directions.

    Used with Mpr for special frames (18.6.5.1, 18.7.6.1.1) and with Mn for intermediate
    frames (18.4.2.3(a), 18.4.3.1(a)). Sign: V = dM/dx along the member from end i, M
    positive with the bottom bars in tension. Sway 1: top in tension at i, bottom at j,
    V1 = +(M_top_i + M_bot_j)/ln; sway 2: V2 = -(M_bot_i + M_top_j)/ln. Returns (V1, V2).
    """
    return (np.asarray(m_top_i) + m_bot_j) / ln, -(np.asarray(m_bot_i) + m_top_j) / ln


def capacity_design_shear(v_gravity, v_sway_1, v_sway_2):
    """Ve = largest |Vg + V_sway| over both sway directions (18.6.5.1; Fig. R18.6.5).

    v_gravity: shear of the factored gravity (and vertical earthquake) load on the clear span
    at each station, same sign convention as ``sway_shears``. Returns (Ve, earthquake part of
    Ve), the earthquake part being |V_sway| of the governing direction (for 18.6.5.2(a)).
    """
    ve1, ve2 = np.abs(v_gravity + v_sway_1), np.abs(v_gravity + v_sway_2)
    first = ve1 >= ve2
    return np.where(first, ve1, ve2), np.where(first, np.abs(v_sway_1), np.abs(v_sway_2))


def vc_taken_as_zero(v_earthquake, ve_max, Pu, Ag, fc):
    """Vc = 0 where both hold (18.6.5.2 beams, over the lengths of 18.6.4.1; 18.7.6.2.1 columns, over lo):

    (a) the earthquake-induced shear is at least half the maximum required shear strength
    within those lengths; (b) the factored axial compression Pu (with earthquake effects)
    is less than Ag f'c/20.
    """
    return (np.asarray(v_earthquake) >= 0.5 * np.asarray(ve_max)) & (np.asarray(Pu) < EQ_AXIAL_FRACTION * Ag * fc)


def amplified_earthquake_shear(v_without_e, v_e, omega_o=OMEGA_O_MOMENT_FRAME):
    """Shear of an earthquake combination with Omega_o E in place of E (18.4.2.3(b), 18.4.3.1(b)).

    v_without_e: the combination's shear from its other loads; v_e: from E with its factor.
    Omega_o comes from the general building code (the 2014 edition used 2E here).
    """
    return np.abs(np.asarray(v_without_e) + omega_o * np.asarray(v_e))


def intermediate_frame_design_shear(v_from_mn, v_amplified):
    """phi Vn required of intermediate frame beams (18.4.2.3) and columns (18.4.3.1): the lesser of

    (a) the shear from Mn at both ends in reverse curvature plus the gravity shear
    (``capacity_design_shear`` with Mn), and (b) the largest earthquake-combination shear
    with Omega_o E (``amplified_earthquake_shear``, largest over combinations).
    """
    return np.minimum(np.abs(v_from_mn), np.abs(v_amplified))


# --- beams of special moment frames (18.6) ------------------------------------------------

SMF_BEAM_MIN_WIDTH_MM = 250.0  # 18.6.2.1(b)
SMF_BEAM_HX_MAX_MM = 350.0  # 18.6.4.2: spacing of transversely supported flexural bars


def smf_beam_dimensions_ok(ln, d, bw, h):
    """18.6.2.1: (a) clear span ln >= 4d; (b) bw at least the lesser of 0.3h and 250 mm (from
    memory: "the lesser", as in the earlier editions' "not less than the smaller of 0.3h and
    10 in."). (The projection limit of 18.6.2.1(c) needs the column width and is not checked.)"""
    return (ln >= 4.0 * d) & (bw >= np.minimum(0.3 * np.asarray(h, float), SMF_BEAM_MIN_WIDTH_MM))


def smf_beam_rho_max(fy):
    """18.6.3.1: rho = As/(bw d) at most 0.025 for Grade 420 and 0.02 for Grade 550 (from memory)."""
    return np.where(_grade_550(fy), 0.02, 0.025)


def smf_beam_longitudinal_ok(as_top, as_bot, n_top_continuous, n_bot_continuous, fc, fy, bw, d):
    """18.6.3.1: top and bottom steel each at least As,min of 9.6.1.2, rho = As/(bw d) at most
    0.025 (0.02 for Grade 550), and at least two continuous bars at both faces. Returns a
    boolean per section."""
    as_min = np.maximum(0.25 * np.sqrt(fc) / fy, 1.4 / fy) * bw * d  # 9.6.1.2 (a), (b)
    enough = (as_top >= as_min) & (as_bot >= as_min)
    not_too_much = (as_top <= smf_beam_rho_max(fy) * bw * d) & (as_bot <= smf_beam_rho_max(fy) * bw * d)
    continuous = (np.asarray(n_top_continuous) >= 2) & (np.asarray(n_bot_continuous) >= 2)
    return enough & not_too_much & continuous


def beam_moment_balance_ok(mn_pos_i, mn_neg_i, mn_pos_j, mn_neg_j, face_ratio=0.5, span_ratio=0.25):
    """Positive moment strength at each joint face at least face_ratio of the negative there, and
    no face strength below span_ratio of the largest at either face (checked at the faces only).

    Special frames 18.6.3.2: 1/2 and 1/4; intermediate frames 18.4.2.2: 1/3 and 1/5.
    """
    largest = np.maximum.reduce([mn_pos_i, mn_neg_i, mn_pos_j, mn_neg_j])
    faces = (mn_pos_i >= face_ratio * mn_neg_i) & (mn_pos_j >= face_ratio * mn_neg_j)
    floor = np.minimum.reduce([mn_pos_i, mn_neg_i, mn_pos_j, mn_neg_j]) >= span_ratio * largest
    return faces & floor


def smf_beam_hoop_zone_length(h):
    """Hoops over 2h from the face of each support (18.6.4.1(a))."""
    return 2.0 * np.asarray(h, dtype=float)


def smf_beam_hoop_spacing(d, db_long_min, fy=420.0):
    """Hoop spacing in the 2h zones (18.6.4.4): the least of d/4, 150 mm and 6 db of the smallest
    primary flexural bar (Grade 420; 5 db for Grade 550, from memory). First hoop within 50 mm."""
    multiple = np.where(_grade_550(fy), 5.0, 6.0)
    return np.minimum.reduce(np.broadcast_arrays(np.asarray(d, float) / 4.0, multiple * db_long_min, 150.0))


def seismic_hook_extension(db):
    """Extension of a seismic hook (Chapter 2, 25.3.4): a bend of at least 135 degrees (90 for
    circular hoops) with an extension of at least 6 db and 75 mm."""
    return np.maximum(6.0 * np.asarray(db, float), 75.0)


def smf_beam_stirrup_spacing_elsewhere(d):
    """Stirrups with seismic hooks at both ends at no more than d/2 outside the hoop zones (18.6.4.6)."""
    return np.asarray(d, dtype=float) / 2.0


# --- beams of intermediate and ordinary moment frames (18.4.2, 18.3) ----------------------

def imf_beam_hoop_spacing(d, db_long_min, db_hoop, fy=420.0):
    """Hoop spacing over 2h from each face (18.4.2.4): the least of d/4, 8 db of the smallest
    longitudinal bar enclosed (6 db for Grade 550, from memory), 24 db of the hoop bar and
    300 mm. First hoop within 50 mm."""
    multiple = np.where(_grade_550(fy), 6.0, 8.0)
    return np.minimum.reduce(np.broadcast_arrays(np.asarray(d, float) / 4.0, multiple * np.asarray(db_long_min, float),
                                                 24.0 * np.asarray(db_hoop, float), 300.0))


def imf_beam_stirrup_spacing_elsewhere(d):
    """Transverse reinforcement at no more than d/2 throughout the beam (18.4.2.5)."""
    return np.asarray(d, dtype=float) / 2.0


def ordinary_frame_beam_bars_ok(n_top_continuous, n_bot_continuous, as_bot_continuous=None, as_bot_max=None):
    """18.3.2: at least two continuous bars at both top and bottom faces; where the areas are
    given, the continuous bottom bars at least a quarter of the largest bottom steel of the span."""
    ok = (np.asarray(n_top_continuous) >= 2) & (np.asarray(n_bot_continuous) >= 2)
    if as_bot_continuous is not None and as_bot_max is not None:
        ok = ok & (np.asarray(as_bot_continuous) >= 0.25 * np.asarray(as_bot_max))
    return ok


# --- lateral support of longitudinal bars (25.7.2.3, 18.6.4.2, 18.7.5.2) -------------------

def legs_required(n_bars_face, bar_spacing, db_long, hx_max=None, every_bar=False):
    """Hoop legs or crossties needed across one face with n_bars_face bars (corners included)
    at centre spacing bar_spacing, supported bars spread evenly.

    25.7.2.3(a): every corner and alternate bar supported (at most one unsupported bar between
    two supported ones); (b): an unsupported bar at most 150 mm clear from a supported one,
    else every bar is supported. hx_max: largest spacing of supported bars (350 mm in
    special-frame beams, 18.6.4.2, and columns, 18.7.5.2(e); 200 mm with 18.7.5.2(f)).
    every_bar: 18.7.5.2(f), every perimeter bar supported. Returns the leg count (>= 2).
    """
    n = np.asarray(n_bars_face)
    spacing = np.asarray(bar_spacing, dtype=float)
    gaps = np.where(spacing - db_long > 150.0, 1, 2)  # bar intervals between supported bars
    if hx_max is not None:
        gaps = np.minimum(gaps, np.maximum(np.floor(hx_max / spacing), 1).astype(int))
    if every_bar:
        gaps = np.ones_like(gaps)
    return np.maximum(1 + np.ceil((n - 1) / gaps).astype(int), 2)


def supported_bar_spacing(n_bars_face, bar_spacing, legs):
    """hx: the largest centre spacing of supported bars with ``legs`` spread evenly over the bars (18.7.5.3)."""
    n = np.asarray(n_bars_face)
    return np.ceil((n - 1) / (np.asarray(legs) - 1)) * np.asarray(bar_spacing, dtype=float)


# --- columns of special moment frames (18.7) ----------------------------------------------

def smf_column_dimensions_ok(b, h):
    """18.7.2.1: least dimension at least 300 mm and its ratio to the other at least 0.4."""
    small, large = np.minimum(b, h), np.maximum(b, h)
    return (small >= 300.0) & (small / large >= 0.4)


def smf_column_steel_ratio_ok(ast, Ag):
    """18.7.4.1: Ast between 0.01 Ag and 0.06 Ag."""
    return (ast >= 0.01 * Ag) & (ast <= 0.06 * Ag)


def smf_column_lo(depth, clear_height):
    """lo, from each joint face (18.7.5.1): the greatest of the column depth at the joint face
    (give the larger section dimension where both directions matter), clear height/6 and 450 mm."""
    return np.maximum.reduce(np.broadcast_arrays(np.asarray(depth, float), np.asarray(clear_height, float) / 6.0, 450.0))


def smf_column_so(min_dimension, db_long_min, hx, fy=420.0):
    """Spacing of transverse reinforcement over lo (18.7.5.3): the least of a quarter of the least
    column dimension, 6 db of the smallest longitudinal bar (5 db for Grade 550, from memory)
    and so = 100 + (350 - hx)/3 (Eq. 18.7.5.3), so not more than 150 nor taken less than 100 mm."""
    so = np.clip(100.0 + (350.0 - np.asarray(hx, float)) / 3.0, 100.0, 150.0)
    multiple = np.where(_grade_550(fy), 5.0, 6.0)
    return np.minimum.reduce(np.broadcast_arrays(np.asarray(min_dimension, float) / 4.0, multiple * db_long_min, so))


def smf_column_spacing_beyond_lo(db_long_min, fy=420.0):
    """Beyond lo (18.7.5.5): hoops at no more than 6 db of the smallest longitudinal bar and 150 mm
    (5 db and 150 mm for Grade 550; from memory), unless shear asks for less."""
    return np.minimum(np.where(_grade_550(fy), 5.0, 6.0) * np.asarray(db_long_min, float), 150.0)


def confinement_kf(fc):
    """Concrete strength factor kf = f'c/175 + 0.6 >= 1.0 (Eq. 18.7.5.4a)."""
    return np.maximum(np.asarray(fc, float) / 175.0 + 0.6, 1.0)


def confinement_kn(nl):
    """Confinement effectiveness factor kn = nl/(nl - 2) (Eq. 18.7.5.4b), nl the perimeter bars
    laterally supported by a hoop corner or seismic hook."""
    nl = np.asarray(nl, dtype=float)
    return nl / (nl - 2.0)


def _high_axial_or_strength(Pu, Ag, fc):
    # Table 18.7.5.4: the third expression applies where Pu > 0.3 Ag f'c or f'c > 70 MPa
    return (np.asarray(Pu) > 0.3 * Ag * fc) | (np.asarray(fc) > 70.0)


def smf_column_ash_over_sbc(Ag, Ach, fc, fyt, Pu, nl):
    """Ash/(s bc) of rectilinear hoops over lo (Table 18.7.5.4): the greater of
    (a) 0.3 (Ag/Ach - 1) f'c/fyt and (b) 0.09 f'c/fyt, and where Pu > 0.3 Ag f'c or f'c > 70 MPa
    also (c) 0.2 kf kn Pu/(fyt Ach). fyt at most 690 MPa (Table 20.2.2.4(a), from memory)."""
    fyt = np.minimum(fyt, FYT_CONFINEMENT_MAX_MPA)
    a = 0.3 * (Ag / Ach - 1.0) * fc / fyt
    b = 0.09 * fc / fyt
    c = 0.2 * confinement_kf(fc) * confinement_kn(nl) * np.asarray(Pu, float) / (fyt * Ach)
    return np.maximum(np.maximum(a, b), np.where(_high_axial_or_strength(Pu, Ag, fc), c, 0.0))


def smf_column_rho_s(Ag, Ach, fc, fyt, Pu):
    """Volumetric ratio of spirals or circular hoops over lo (Table 18.7.5.4): the greater of
    (d) 0.45 (Ag/Ach - 1) f'c/fyt and (e) 0.12 f'c/fyt, and where Pu > 0.3 Ag f'c or
    f'c > 70 MPa also (f) 0.35 kf Pu/(fyt Ach)."""
    fyt = np.minimum(fyt, FYT_CONFINEMENT_MAX_MPA)
    d = 0.45 * (Ag / Ach - 1.0) * fc / fyt
    e = 0.12 * fc / fyt
    f = 0.35 * confinement_kf(fc) * np.asarray(Pu, float) / (fyt * Ach)
    return np.maximum(np.maximum(d, e), np.where(_high_axial_or_strength(Pu, Ag, fc), f, 0.0))


def spiral_rho_s(a_bar, core_diameter, s):
    """Provided rho_s of a spiral: 4 Asp/(Dc s), Dc to the outside of the spiral (common practice)."""
    return 4.0 * np.asarray(a_bar, float) / (np.asarray(core_diameter, float) * s)


def column_capacity_shear(m_top, m_bot, lu, vu_analysis, m_beams_top=np.nan, m_beams_bot=np.nan):
    """Ve of a special-frame column (18.7.6.1.1): (M_top + M_bot)/lu with the Mpr of each end
    for the range of Pu (sections.largest_over_axial), each end moment limited to what the
    beams framing into that joint can deliver to this column (their Mpr sum times this
    column's share, given by the caller; NaN where the joint is not known), and Ve not less
    than the analysis shear. Intermediate frames (18.4.3.1(a)): the same with Mn.
    """
    top = np.fmin(m_top, m_beams_top)
    bot = np.fmin(m_bot, m_beams_bot)
    return np.maximum((top + bot) / lu, np.abs(vu_analysis))


# --- columns of intermediate moment frames (18.4.3) ---------------------------------------

def imf_column_lo(depth_max, clear_height):
    """lo (18.4.3.3): the greatest of clear height/6, the largest section dimension and 450 mm."""
    return np.maximum.reduce(np.broadcast_arrays(np.asarray(clear_height, float) / 6.0, np.asarray(depth_max, float), 450.0))


def imf_column_so(min_dimension, db_long_min, fy=420.0):
    """Hoop spacing over lo (18.4.3.3), from memory: Grade 420, the lesser of 8 db of the smallest
    longitudinal bar enclosed and 200 mm; Grade 550, of 6 db and 150 mm; and half the least
    section dimension. The first hoop within so/2 of the joint face."""
    grade_550 = _grade_550(fy)
    bars = np.where(grade_550, np.minimum(6.0 * np.asarray(db_long_min, float), 150.0),
                    np.minimum(8.0 * np.asarray(db_long_min, float), 200.0))
    return np.minimum(bars, np.asarray(min_dimension, float) / 2.0)


# --- beam-column joints of special moment frames (18.8) -----------------------------------

def probable_bar_force(As, fy):
    """Force in beam bars at the joint face with the tensile stress 1.25 fy (18.8.2.1)."""
    return 1.25 * np.asarray(As, float) * fy


def column_shear_at_joint(mpr_beams_sum, storey_height, ve_beams_sum=0.0, column_depth=0.0):
    """Column shear that the beams' Mpr cause at a joint (common practice): the sum of the beams'
    Mpr at the joint (plus their Ve times half the column depth, moving the moments to the
    column axis) over the storey height, contraflexure taken at the columns' mid-heights."""
    return (np.asarray(mpr_beams_sum, float) + np.asarray(ve_beams_sum, float) * column_depth / 2.0) / storey_height


def joint_shear_demand(tension_force, compression_force, v_column):
    """Vu of a joint: the bar tension of the beam on one side (1.25 fy As_top) plus the compression
    of the beam on the other side (equal to 1.25 fy As_bot of its bars), less the column shear
    (18.8.2.1, Fig. R18.8.2). For an exterior joint give compression_force = 0."""
    return np.asarray(tension_force, float) + compression_force - v_column


def joint_effective_width(b_column, h_column, bw_beam, edge_distance=None):
    """Effective joint width (18.8.4.3 with 15.4.2.4, from memory): the column width, but where the
    beam is narrower not more than the lesser of bw + h and twice the smaller perpendicular distance
    from the beam axis to the column side (edge_distance; None for a beam centred on the column)."""
    width = np.minimum(b_column, np.asarray(bw_beam, float) + h_column)
    if edge_distance is not None:
        width = np.minimum(width, 2.0 * np.asarray(edge_distance, float))
    return width


def transverse_beams_confine(bw_transverse_1, bw_transverse_2, column_face_width):
    """Confinement of a joint by transverse beams (15.2.8, from memory): a beam on each of the two
    faces across the shear, each at least 3/4 of the column face it frames into (0 for none).
    15.2.8's other conditions (extension h beyond the joint, two continuous bars top and bottom,
    stirrups) are taken as met."""
    return (np.asarray(bw_transverse_1) >= 0.75 * column_face_width) & (np.asarray(bw_transverse_2) >= 0.75 * column_face_width)


def joint_strength_coefficient(column_continuous, beam_continuous, confined):
    """Coefficient of lambda sqrt(f'c) Aj in Vn (Table 18.8.4.3, from memory of the inch-pound
    20, 15, 12 and 8 sqrt(psi); SI 1.7, 1.2, 1.0 as the SI editions print them, and 8/12 = 0.67).

    Continuous column (15.2.6) with a continuous beam in the direction of Vu (15.2.7): 1.7
    where transverse beams confine the joint (15.2.8), else 1.2; with another beam: 1.2 / 1.0.
    Other column: continuous beam 1.2 / 1.0; other beam 1.0 / 0.67.
    """
    col, beam, conf = (np.asarray(v, dtype=bool) for v in (column_continuous, beam_continuous, confined))
    table = np.array([[[0.67, 1.0], [1.0, 1.2]],   # other column: [other beam, continuous beam] x [not confined, confined]
                      [[1.0, 1.2], [1.2, 1.7]]])   # continuous column
    return table[col.astype(int), beam.astype(int), conf.astype(int)]


def joint_design_strength(fc, effective_width, joint_depth, coefficient, lam=1.0):
    """phi Vn = 0.85 coefficient lambda sqrt(f'c) Aj, Aj = effective width x joint depth (the column
    depth along the shear) (18.8.4.3, Table 18.8.4.3; phi by 21.2.4.4). sqrt(f'c) is not capped
    here (no cap is recalled for joints)."""
    return PHI_JOINT * coefficient * lam * np.sqrt(fc) * effective_width * joint_depth


def joint_depth_ok(h_column, db_beam_max, fy=420.0, h_beam_max=0.0, lam=1.0):
    """18.8.2.3, from memory: the joint depth along the beam bars at least 20 db/lambda of the largest
    Grade 420 beam bar passing through (26 db for Grade 550) and half the depth of any framing beam."""
    multiple = np.where(_grade_550(fy), 26.0, 20.0 / lam)
    return (h_column >= multiple * db_beam_max) & (h_column >= 0.5 * np.asarray(h_beam_max, float))


# --- shear of columns (Chapters 10, 22 and 25) --------------------------------------------

def column_needs_av_min(Vu, Vc):
    """Av,min is required where Vu > 0.5 phi Vc (10.6.2.1)."""
    return np.abs(Vu) > 0.5 * PHI_SHEAR * np.asarray(Vc)


def column_av_min_over_s(fc, bw, fyt):
    """Av,min/s of columns: the greater of 0.062 sqrt(f'c) bw/fyt and 0.35 bw/fyt (10.6.2.2)."""
    return av_min_over_s(fc, bw, fyt)


def column_max_shear_spacing(Vs, fc, bw, d):
    """Shear reinforcement spacing in columns (10.7.6.5.2): d/2 and 600 mm; d/4 and 300 mm where
    Vs > 0.33 sqrt(f'c) bw d."""
    return max_spacing(Vs, fc, bw, d)[0]


def tie_max_spacing(db_long, db_tie, least_dimension):
    """Tie spacing (25.7.2.1(b)): the least of 16 db of the longitudinal bars, 48 db of the tie bar
    and the least dimension of the member."""
    return np.minimum.reduce(np.broadcast_arrays(16.0 * np.asarray(db_long, float), 48.0 * np.asarray(db_tie, float),
                                                 np.asarray(least_dimension, float)))


def tie_bar_ok(db_long, db_tie, bundled=False):
    """25.7.2.2 (from memory): ties at least No. 10 (9.5 mm) around No. 32 and smaller bars,
    at least No. 13 (12.7 mm) around No. 36 and larger or bundled bars."""
    large = (np.asarray(db_long, float) > 32.3) | np.asarray(bundled)
    return np.asarray(db_tie, float) >= np.where(large, 12.7, 9.5)


def circular_shear_section(diameter):
    """bw and d of a solid circular section for shear (22.5.2.2): bw = D, d = 0.8 D."""
    D = np.asarray(diameter, float)
    return D, 0.8 * D


def biaxial_shear_utilization(ratio_x, ratio_y):
    """Interaction of shear along two axes (22.5.1.10, 22.5.1.11; from memory): neglected where
    either vu/(phi vn) <= 0.5; otherwise vu,x/(phi vn,x) + vu,y/(phi vn,y) <= 1.5.

    Returns a utilization (<= 1 passes): the larger ratio, and where both exceed 0.5 also
    their sum over 1.5.
    """
    rx, ry = np.abs(ratio_x), np.abs(ratio_y)
    both = (rx > 0.5) & (ry > 0.5)
    return np.where(both, np.maximum(np.maximum(rx, ry), (rx + ry) / 1.5), np.maximum(rx, ry))


def biaxial_shear_utilization_elliptical(ratio_x, ratio_y):
    """sqrt((Vu,x/phi Vn,x)^2 + (Vu,y/phi Vn,y)^2) (common practice): never less than the code's
    rule of 22.5.1.11 above, so a layout that passes it also passes the code's."""
    return np.hypot(ratio_x, ratio_y)
