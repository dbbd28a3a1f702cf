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


def combined_min_transverse(fc, bw, fyt):
    """(Av + 2At)/s minimum where torsion is considered: greater of 0.062 sqrt(f'c) bw/fyt and 0.35 bw/fyt (9.6.4.2)."""
    return av_min_over_s(fc, bw, fyt)


def torsion_max_spacing(ph):
    """Spacing of torsional transverse reinforcement: not more than min(ph/8, 300 mm) (9.7.6.3.3)."""
    return np.minimum(ph / 8.0, 300.0)


def is_deep_by_span(clear_span, h):
    """Deep beam by clear span: ln <= 4h (9.9.1.1(a))."""
    return clear_span <= 4.0 * h
