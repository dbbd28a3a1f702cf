"""ACI 318-19 strut-and-tie (Chapter 23), deep-beam (9.9) and development-length (25.4)
provisions used by the strut-and-tie design of deep beams, in both editions.

Pure, vectorised functions: every argument may be a scalar or a numpy array and arrays
broadcast. Units are those of the edition ``u`` (aci318_19.Edition, whose table holds the
unit-dependent constants of these clauses beside the others): N, mm, MPa (``SI``, the
default) or lb, in, psi (``US``). No I/O, no pandas, no loops over members. Each function
cites its clause; where the clause text was not at hand it says "from memory".
"""

from __future__ import annotations

import numpy as np

from postproc.codes.aci318_19 import GRADE_SOFT_CONVERSION, SI, Edition

PHI_STM = 0.75  # Table 21.2.1: struts, ties, nodal zones and bearing areas of Chapter 23 models
MIN_STRUT_TIE_ANGLE_DEG = 25.0  # 23.2.7: angle between a strut and a tie entering one node
BETA_S_BOUNDARY = 1.0  # Table 23.4.3: boundary strut (uniform compression zone of a member)
BETA_S_INTERIOR_REINFORCED = 0.75  # Table 23.4.3: interior strut with distributed reinforcement of 23.5
BETA_S_INTERIOR_OTHER = 0.4  # Table 23.4.3: interior strut, all other cases
BETA_S_TENSION_ZONE = 0.4  # Table 23.4.3: strut in a tension member or tension zone
BETA_N = {"CCC": 1.0, "CCT": 0.80, "CTT": 0.60, "TTT": 0.60}  # Table 23.9.2
DISTRIBUTED_RATIO_MIN = 0.0025  # Table 23.5.1: distributed reinforcement ratio, orthogonal grid (from memory)
DISTRIBUTED_SPACING_MAX = SI.distributed_s_max  # 23.5.2: spacing of the distributed reinforcement, mm (from memory)
DISTRIBUTED_ONE_WAY_ANGLE_MIN_DEG = 40.0  # 23.5.3: one layer crossing the strut at alpha >= 40 deg (from memory)
DEEP_RATIO_MIN = 0.0025  # 9.9.3.1(a), (b): distributed reinforcement both ways in a deep beam
DEEP_SPACING_MAX = SI.deep_s_max  # 9.9.4.3: spacing <= lesser of d/5 and 300 mm (SI; the edition's deep_s_max)
SQRT_FC_MAX_DEVELOPMENT = SI.sqrt_fc_max_development  # 25.4.1.4: sqrt(f'c) for development lengths <= 8.3 MPa
LD_MIN = SI.ld_min  # 25.4.2.1(b): straight development length not less than 300 mm
SMALL_BAR_MAX_DB = SI.small_bar_max_db  # Table 25.4.2.3: "No. 19 and smaller" (No. 19 = 19.1 mm)


# --- struts (23.4) and nodes (23.9) ------------------------------------------------

def strut_beta_s(boundary, distributed_ok, tension_zone=False):
    """Strut coefficient beta_s (Table 23.4.3).

    Boundary strut: 1.0, or 0.4 in a tension member or tension zone. Interior strut: 0.75
    where the distributed reinforcement of 23.5 (Table 23.5.1) crosses it, else 0.4; 0.4 in
    a tension zone. The rows for beam-column joints and for the shear check of 23.4.4 are
    not used here (from memory for the 0.4 rows, new in the 2019 edition).
    """
    boundary = np.asarray(boundary, bool)
    interior = np.where(distributed_ok, BETA_S_INTERIOR_REINFORCED, BETA_S_INTERIOR_OTHER)
    beta = np.where(boundary, BETA_S_BOUNDARY, interior)
    return np.where(tension_zone, BETA_S_TENSION_ZONE, beta)


def strut_effective_strength(fc, beta_s, beta_c=1.0):
    """fce = 0.85 beta_c beta_s f'c, MPa | psi (23.4.3); beta_c = 1.0 unless confinement is shown."""
    return 0.85 * beta_c * beta_s * fc


def node_beta_n(node_type):
    """beta_n by the node's type (Table 23.9.2): CCC 1.0, CCT 0.80, CTT or TTT 0.60."""
    return np.vectorize(BETA_N.__getitem__, otypes=[float])(np.asarray(node_type, dtype=object))


def node_type_from_ties(n_ties):
    """Node type by the number of ties anchored in it: 0 -> CCC, 1 -> CCT, 2 or more -> CTT (23.9.2)."""
    n = np.asarray(n_ties)
    return np.where(n <= 0, "CCC", np.where(n == 1, "CCT", "CTT")).astype(object)


def node_effective_strength(fc, beta_n, beta_c=1.0):
    """fce = 0.85 beta_c beta_n f'c, MPa | psi, on every face of a nodal zone (23.9.2)."""
    return 0.85 * beta_c * beta_n * fc


def design_compressive_strength(fce, width, bw):
    """phi Fn = phi fce A for a strut end (23.4.1, Fns = fce Acs) or a nodal face
    (23.9.1, Fnn = fce Anz), with A = width x bw; phi by Table 21.2.1. N | lb."""
    return PHI_STM * fce * width * bw


def strut_tie_angle_ok(angle_deg):
    """23.2.7: a strut and a tie entering the same node meet at no less than 25 degrees."""
    return np.asarray(angle_deg) >= MIN_STRUT_TIE_ANGLE_DEG - 1e-9


# --- ties (23.7, 23.8) ---------------------------------------------------------------

def tie_area_required(Fu, fy):
    """Ats = Fut / (phi fy), mm^2 | in^2: phi Fnt >= Fut (23.3.1) with Fnt = Ats fy (23.7.2)."""
    return np.maximum(Fu, 0.0) / (PHI_STM * fy)


def distributed_tie_area_per_length(Fu, fyt, spread):
    """Av/s of stirrups acting as a vertical tie spread over a length (mm^2/mm | in^2/in):
    Fut / (phi fyt spread) (23.3.1, 23.7.2)."""
    return np.maximum(Fu, 0.0) / (PHI_STM * fyt * spread)


def tie_exit_length(wt, theta_deg):
    """Distance from the inner edge of the bearing to where the tie centroid leaves the
    extended nodal zone of a CCT bearing node: (wt/2) cot(theta), where theta is the angle
    of the strut whose edge bounds the zone (geometry of 23.8.3: the tie force is developed
    where the centroid of the tie reinforcement leaves the extended nodal zone)."""
    return 0.5 * wt / np.tan(np.radians(theta_deg))


# --- distributed reinforcement for beta_s = 0.75 (23.5) -------------------------------

def distributed_reinforcement_ok(rho_vertical, rho_horizontal, s_vertical, s_horizontal, u: Edition = SI):
    """An orthogonal grid that lets interior struts use beta_s = 0.75: a ratio of at least
    0.0025 in each direction (Table 23.5.1, strut not restrained laterally) and a spacing of
    at most 300 mm | 12 in (23.5.2). From memory: the 2014 edition's sum(rho_i sin(alpha_i))
    >= 0.003 was replaced by this table in 2019."""
    return ((np.asarray(rho_vertical) >= DISTRIBUTED_RATIO_MIN - 1e-12)
            & (np.asarray(rho_horizontal) >= DISTRIBUTED_RATIO_MIN - 1e-12)
            & (np.asarray(s_vertical) <= u.distributed_s_max + 1e-9)
            & (np.asarray(s_horizontal) <= u.distributed_s_max + 1e-9))


def one_way_distributed_reinforcement_ok(rho, alpha_deg, spacing, u: Edition = SI):
    """One layer of bars crossing the strut at alpha: rho >= 0.0025 / sin^2(alpha)
    (Table 23.5.1), alpha >= 40 degrees (23.5.3) and spacing <= 300 mm | 12 in (23.5.2), from memory."""
    alpha = np.radians(alpha_deg)
    return ((np.asarray(rho) >= DISTRIBUTED_RATIO_MIN / np.sin(alpha) ** 2 - 1e-12)
            & (np.asarray(alpha_deg) >= DISTRIBUTED_ONE_WAY_ANGLE_MIN_DEG - 1e-9)
            & (np.asarray(spacing) <= u.distributed_s_max + 1e-9))


# --- deep beams (9.9) ----------------------------------------------------------------

def deep_beam_shear_limit(fc, bw, d, u: Edition = SI):
    """phi 0.83 | 10 sqrt(f'c) bw d: the deep-beam dimensions must give Vu at most this (9.9.2.1).
    The 8.3 MPa | 100 psi cap of 22.5.3.1 is for Vc and is not applied to this dimensional limit."""
    return PHI_STM * u.deep_shear_limit * np.sqrt(fc) * bw * d


def deep_beam_min_distributed(bw):
    """Av/s and Avh/s at least 0.0025 bw, mm^2/mm | in^2/in, both ways (9.9.3.1(a), (b))."""
    return DEEP_RATIO_MIN * np.asarray(bw, dtype=float)


def deep_beam_max_spacing(d, u: Edition = SI):
    """Spacing of the 9.9.3.1 reinforcement: at most the lesser of d/5 and 300 mm | 12 in (9.9.4.3)."""
    return np.minimum(np.asarray(d, dtype=float) / 5.0, u.deep_s_max)


# --- development of the tie (25.4.2, 25.4.3) ------------------------------------------

def _sqrt_fc_development(fc, u: Edition):
    return np.minimum(np.sqrt(fc), u.sqrt_fc_max_development)  # 25.4.1.4


def grade_factor(fy, u: Edition = SI):
    """psi_g (Table 25.4.2.5): 1.0 for Grade 280 and 420 | 40 and 60, 1.15 for Grade 550 | 80,
    1.3 for Grade 690 | 100 (a grade given in the other system's unit is that grade,
    ``GRADE_SOFT_CONVERSION``)."""
    fy = np.asarray(fy, dtype=float)
    normal, high = (g * GRADE_SOFT_CONVERSION for g in u.grade_factor_fy)
    return np.where(fy <= normal, 1.0, np.where(fy <= high, 1.15, 1.3))


def straight_development_length(fy, fc, db, lam=1.0, psi_t=1.0, psi_e=1.0, spacing_ok=False, u: Edition = SI):
    """ld of a deformed bar in tension, simplified form of Table 25.4.2.3, mm | in.

    Where the clear spacing is at least db, the clear cover at least db and stirrups along ld
    are at least the code minimum (or the clear spacing is at least 2 db and the clear cover
    at least db), ``spacing_ok``: ld = fy psi_t psi_e psi_g / (2.1 | 25 lambda sqrt f'c) db
    for No. 19 | No. 6 and smaller, / (1.7 | 20 ...) for No. 22 | No. 7 and larger; other
    cases / (1.4 | 50/3 ...) and / (1.1 | 40/3 ...). psi_t psi_e <= 1.7 (25.4.2.5); ld >= 300
    mm | 12 in (25.4.2.1); sqrt(f'c) <= 8.3 MPa | 100 psi (25.4.1.4). Coefficients from
    memory of both editions. psi_t = 1.0 for bottom bars.
    """
    db = np.asarray(db, dtype=float)
    small = db <= u.small_bar_max_db + 1e-9
    ok_small, ok_large, other_small, other_large = u.ld_coefficients
    coef = np.where(spacing_ok, np.where(small, ok_small, ok_large), np.where(small, other_small, other_large))
    psi = np.minimum(np.asarray(psi_t) * np.asarray(psi_e), 1.7) * grade_factor(fy, u)
    ld = fy * psi / (coef * lam * _sqrt_fc_development(fc, u)) * db
    return np.maximum(ld, u.ld_min)


def hook_concrete_factor(fc, u: Edition = SI):
    """psi_c (Table 25.4.3.2): f'c/105 + 0.6 for f'c < 42 MPa | f'c/15,000 + 0.6 for f'c < 6000 psi,
    else 1.0."""
    fc = np.asarray(fc, dtype=float)
    divisor, below = u.hook_psi_c
    return np.where(fc < below, fc / divisor + 0.6, 1.0)


def hooked_development_length(fy, fc, db, lam=1.0, psi_e=1.0, psi_r=1.6, psi_o=1.25, u: Edition = SI):
    """ldh of a standard hook in tension (25.4.3.1), mm | in: the greatest of
    (fy psi_e psi_r psi_o psi_c / (23 | 55 lambda sqrt f'c)) db^1.5, 8 db and 150 mm | 6 in.

    The defaults psi_r = 1.6 (no confining ties counted, Table 25.4.3.2) and psi_o = 1.25
    (hook not inside a column core with 65 mm | 2.5 in side cover) are the conservative rows.
    """
    db = np.asarray(db, dtype=float)
    ldh = fy * psi_e * psi_r * psi_o * hook_concrete_factor(fc, u) / (u.ldh_coefficient * lam
                                                                       * _sqrt_fc_development(fc, u)) * db**1.5
    return np.maximum.reduce([ldh, 8.0 * db, np.full_like(ldh, u.ldh_min)])
