"""ACI 318-19 one-way shear and torsion provisions for nonprestressed beams, in both of the
code's editions: SI (N, mm, MPa) and inch-pound (lb, in, psi).

Pure, vectorised functions: every argument may be a scalar or a numpy array and arrays
broadcast against each other. Every function takes ``u``, the edition whose equations
it evaluates (``SI`` by default, ``US`` for the inch-pound edition), and all its
arguments are in that edition's units: N, mm, MPa or lb, in, psi. The two editions are
not conversions of one another: each has its own coefficients, rounded in its own units
(0.17 sqrt(f'c) in MPa against 2 sqrt(f'c) in psi, 600 mm against 24 in), and the
``Edition`` table below keeps them side by side, clause by clause. Axial force ``Nu``
follows the code's sign (compression positive). No I/O, no pandas, no loops over
members. Each function cites the clause it implements.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

EDITION = "ACI 318-19"

PHI_SHEAR = 0.75  # 21.2.1(b): shear and torsion (both editions)


@dataclass(frozen=True)
class Edition:
    """The unit-dependent constants of ACI 318-19, one instance per edition (SI, US).

    Each field names its clause; the comment gives the SI and the inch-pound value.
    Coefficients of sqrt(f'c) are in sqrt(MPa) or sqrt(psi), lengths in mm or in,
    stresses in MPa or psi.
    """

    units: str  # "si" | "us" (postproc.units)
    title: str  # as the manifests and reports name it
    # --- materials (Ch. 19, 20) ---
    fc_min: float  # Table 19.2.1.1: least f'c, general use: 17 MPa | 2500 psi
    fyt_max: float  # Table 20.2.2.4(a): fyt of shear reinforcement: 420 MPa | 60,000 psi
    fy_default: float  # longitudinal bars where none is given, Grade 420 | Grade 60 (common practice)
    # --- one-way shear (22.5) ---
    sqrt_fc_max: float  # 22.5.3.1: sqrt(f'c) for Vc: 8.3 MPa | 100 psi
    vc_a: float  # Table 22.5.5.1(a): 0.17 | 2 lambda sqrt(f'c)
    vc_b: float  # Table 22.5.5.1(b), (c): 0.66 | 8 lambda rho_w^(1/3) sqrt(f'c)
    vc_max: float  # 22.5.5.1.1: Vc <= 0.42 | 5 lambda sqrt(f'c) bw d
    size_effect: float  # 22.5.5.1.3: lambda_s = sqrt(2/(1 + k d)), k = 0.004 /mm | 1/10 /in
    vs_max: float  # 22.5.1.2: Vs limit 0.66 | 8 sqrt(f'c) bw d
    # --- minimum shear reinforcement (9.6.3) and spacing (9.7.6.2.2) ---
    av_min_threshold: float  # 9.6.3.1: Av,min where Vu > phi 0.083 | 1 lambda sqrt(f'c) bw d
    shallow_h: float  # Table 9.6.3.1: shallow beams h <= 250 mm | 10 in
    slab_integral_h: float  # Table 9.6.3.1: integral with slab, h <= 600 mm | 24 in
    av_min_sqrt: float  # Table 9.6.3.4(a): 0.062 | 0.75 sqrt(f'c) bw/fyt
    av_min_flat: float  # Table 9.6.3.4(b): 0.35 | 50 bw/fyt
    heavy_vs: float  # Table 9.7.6.2.2: the tighter row where Vs > 0.33 | 4 sqrt(f'c) bw d
    s_max_light: float  # Table 9.7.6.2.2: 600 mm | 24 in
    s_max_heavy: float  # Table 9.7.6.2.2: 300 mm | 12 in
    # --- flexural minimum (9.6.1.2), used for rho_w ---
    as_min_sqrt: float  # 9.6.1.2(a): 0.25 | 3 sqrt(f'c)/fy
    as_min_flat: float  # 9.6.1.2(b): 1.4 | 200 /fy
    # --- torsion (22.7, 9.6.4, 9.7.6.3) ---
    tth: float  # Table 22.7.4.1(a): Tth = 0.083 | 1 lambda sqrt(f'c) Acp^2/pcp ...
    tth_axial: float  # ... sqrt(1 + Nu/(0.33 | 4 Ag lambda sqrt(f'c)))
    torsion_limit: float  # 22.7.7.1(a): phi (Vc/(bw d) + 0.66 | 8 sqrt(f'c))
    al_min: float  # 9.6.4.3(a): 0.42 | 5 sqrt(f'c) Acp/fy
    at_min: float  # 9.6.4.3(b): At/s >= 0.175 | 25 bw/fyt
    torsion_s_max: float  # 9.7.6.3.3: ph/8 and 300 mm | 12 in
    # --- stirrup hooks and bends (Tables 25.3.2, 25.3.3) ---
    hook_small_db_max: float  # No. 10 to No. 16 | No. 3 to No. 5: db <= 15.9 mm | 0.625 in
    hook_min_extension: float  # 6 db and at least 75 mm | 3 in
    # --- Chapter 18 and columns ---
    first_hoop_max: float  # 18.6.4.4, 18.4.2.4: first hoop within 50 mm | 2 in of the face
    fyt_confinement_max: float  # Table 20.2.2.4(a): fyt for confinement 690 MPa | 100,000 psi (from memory)
    grade_high_fy: float  # rows for Grade 550 | Grade 80 apply above fy = 420 MPa | 60,000 psi
    smf_beam_bw_min: float  # 18.6.2.1(b): bw >= the lesser of 0.3h and 250 mm | 10 in
    smf_beam_hoop_s: float  # 18.6.4.4: 150 mm | 6 in
    smf_beam_hx_max: float  # 18.6.4.2: transversely supported flexural bars at most 350 mm | 14 in apart
    imf_beam_hoop_s: float  # 18.4.2.4: 300 mm | 12 in
    unsupported_bar_clear: float  # 25.7.2.3(b): unsupported bar at most 150 mm | 6 in clear of a supported one
    bar_clear_spacing_min: float  # 25.2.1: clear spacing of bars in a layer at least 25 mm | 1 in (and db; from memory)
    smf_column_min_dim: float  # 18.7.2.1(a): 300 mm | 12 in
    smf_column_hx_high: float  # 18.7.5.2(f): hx <= 200 mm | 8 in where Pu > 0.3 Ag f'c or f'c > 70 MPa | 10,000 psi
    lo_min: float  # 18.7.5.1(c), 18.4.3.3: lo at least 450 mm | 18 in
    so_base: float  # Eq. 18.7.5.3: so = 100 + (350 - hx)/3 mm | 4 + (14 - hx)/3 in ...
    so_hx: float  # ... (the 350 mm | 14 in) ...
    so_max: float  # ... not more than 150 mm | 6 in, nor taken less than so_base
    smf_beyond_lo_max: float  # 18.7.5.5: 150 mm | 6 in
    kf_fc: float  # Eq. 18.7.5.4a: kf = f'c/175 + 0.6 | f'c/25,000 + 0.6
    high_fc: float  # Table 18.7.5.4: f'c > 70 MPa | 10,000 psi
    imf_column_so: tuple  # 18.4.3.3 (from memory): 200 mm, Grade 550 150 mm | 8 in, Grade 80 6 in
    joint_coefficients: tuple  # Table 18.8.4.3 (from memory): 1.7, 1.2, 1.0, 0.67 | 20, 15, 12, 8
    tie_large_long_db: float  # 25.7.2.2: longitudinal bars larger than No. 32 | No. 10 (32.3 mm | 1.27 in)
    tie_db: tuple  # 25.7.2.2: tie at least No. 10, No. 13 (9.5, 12.7 mm) | No. 3, No. 4 (0.375, 0.5 in)
    spiral_clear: tuple  # 25.7.3.1: clear spacing of a spiral's turns at least 25 mm | 1 in, at most 75 mm | 3 in
    # --- flexure (22.2, 20.2.2.2) ---
    es: float  # 20.2.2.2: Es = 200,000 MPa | 29,000,000 psi
    beta1_fc: tuple  # Table 22.2.2.4.3: 0.85 to 28 MPa | 4000 psi, 0.65 from 55 MPa | 8000 psi ...
    beta1_step: float  # ... 0.05 per 7 MPa | 1000 psi between
    # --- strut-and-tie (Ch. 23), deep beams (9.9), development (25.4): codes/aci318_19_stm.py ---
    distributed_s_max: float  # 23.5.2: distributed reinforcement at most 300 mm | 12 in apart (from memory)
    deep_s_max: float  # 9.9.4.3: spacing <= d/5 and 300 mm | 12 in
    deep_shear_limit: float  # 9.9.2.1: Vu <= phi 0.83 | 10 sqrt(f'c) bw d
    sqrt_fc_max_development: float  # 25.4.1.4: sqrt(f'c) for development <= 8.3 MPa | 100 psi
    ld_min: float  # 25.4.2.1(b): ld >= 300 mm | 12 in
    small_bar_max_db: float  # Table 25.4.2.3: "No. 19 | No. 6 and smaller", db 19.1 mm | 0.75 in
    ld_coefficients: tuple  # Table 25.4.2.3: ld = fy psi / (c lambda sqrt(f'c)) db, c = 2.1, 1.7, 1.4, 1.1 |
    #                         25, 20, 50/3, 40/3 (spacing met, small / large bar; other cases, small / large;
    #                         from memory)
    grade_factor_fy: tuple  # Table 25.4.2.5: psi_g 1.0 up to 420 MPa | 60,000 psi, 1.15 up to 550 | 80,000, then 1.3
    hook_psi_c: tuple  # Table 25.4.3.2: psi_c = f'c/105 + 0.6 below 42 MPa | f'c/15,000 + 0.6 below 6000 psi
    ldh_coefficient: float  # 25.4.3.1(a): ldh = fy psi / (23 | 55 lambda sqrt(f'c)) db^1.5
    ldh_min: float  # 25.4.3.1(c): ldh >= 150 mm | 6 in (and 8 db)
    hook_side_cover: float  # Table 25.4.3.2: psi_o = 1.0 inside a column core with side cover >= 65 mm | 2.5 in


SI = Edition(
    units="si", title="ACI 318-19", fc_min=17.0, fyt_max=420.0, fy_default=420.0,
    sqrt_fc_max=8.3, vc_a=0.17, vc_b=0.66, vc_max=0.42, size_effect=0.004, vs_max=0.66,
    av_min_threshold=0.083, shallow_h=250.0, slab_integral_h=600.0, av_min_sqrt=0.062, av_min_flat=0.35,
    heavy_vs=0.33, s_max_light=600.0, s_max_heavy=300.0, as_min_sqrt=0.25, as_min_flat=1.4,
    tth=0.083, tth_axial=0.33, torsion_limit=0.66, al_min=0.42, at_min=0.175, torsion_s_max=300.0,
    hook_small_db_max=16.0, hook_min_extension=75.0,
    first_hoop_max=50.0, fyt_confinement_max=690.0, grade_high_fy=420.0, smf_beam_bw_min=250.0,
    smf_beam_hoop_s=150.0, smf_beam_hx_max=350.0, imf_beam_hoop_s=300.0, unsupported_bar_clear=150.0,
    bar_clear_spacing_min=25.0,
    smf_column_min_dim=300.0, smf_column_hx_high=200.0,
    lo_min=450.0, so_base=100.0, so_hx=350.0, so_max=150.0, smf_beyond_lo_max=150.0, kf_fc=175.0, high_fc=70.0,
    imf_column_so=(200.0, 150.0), joint_coefficients=(1.7, 1.2, 1.0, 0.67), tie_large_long_db=32.3,
    tie_db=(9.5, 12.7), spiral_clear=(25.0, 75.0), es=200_000.0, beta1_fc=(28.0, 55.0), beta1_step=7.0,
    distributed_s_max=300.0, deep_s_max=300.0, deep_shear_limit=0.83, sqrt_fc_max_development=8.3, ld_min=300.0,
    small_bar_max_db=19.1, ld_coefficients=(2.1, 1.7, 1.4, 1.1), grade_factor_fy=(420.0, 550.0),
    hook_psi_c=(105.0, 42.0), ldh_coefficient=23.0, ldh_min=150.0, hook_side_cover=65.0)
US = Edition(
    units="us", title="ACI 318-19 (inch-pound)", fc_min=2500.0, fyt_max=60_000.0, fy_default=60_000.0,
    sqrt_fc_max=100.0, vc_a=2.0, vc_b=8.0, vc_max=5.0, size_effect=0.1, vs_max=8.0,
    av_min_threshold=1.0, shallow_h=10.0, slab_integral_h=24.0, av_min_sqrt=0.75, av_min_flat=50.0,
    heavy_vs=4.0, s_max_light=24.0, s_max_heavy=12.0, as_min_sqrt=3.0, as_min_flat=200.0,
    tth=1.0, tth_axial=4.0, torsion_limit=8.0, al_min=5.0, at_min=25.0, torsion_s_max=12.0,
    hook_small_db_max=0.625, hook_min_extension=3.0,
    first_hoop_max=2.0, fyt_confinement_max=100_000.0, grade_high_fy=60_000.0, smf_beam_bw_min=10.0,
    smf_beam_hoop_s=6.0, smf_beam_hx_max=14.0, imf_beam_hoop_s=12.0, unsupported_bar_clear=6.0,
    bar_clear_spacing_min=1.0, smf_column_min_dim=12.0, smf_column_hx_high=8.0,
    lo_min=18.0, so_base=4.0, so_hx=14.0, so_max=6.0, smf_beyond_lo_max=6.0, kf_fc=25_000.0, high_fc=10_000.0,
    imf_column_so=(8.0, 6.0), joint_coefficients=(20.0, 15.0, 12.0, 8.0), tie_large_long_db=1.27,
    tie_db=(0.375, 0.5), spiral_clear=(1.0, 3.0), es=29_000_000.0, beta1_fc=(4000.0, 8000.0), beta1_step=1000.0,
    distributed_s_max=12.0, deep_s_max=12.0, deep_shear_limit=10.0, sqrt_fc_max_development=100.0, ld_min=12.0,
    small_bar_max_db=0.75, ld_coefficients=(25.0, 20.0, 50.0 / 3.0, 40.0 / 3.0), grade_factor_fy=(60_000.0, 80_000.0),
    hook_psi_c=(15_000.0, 6000.0), ldh_coefficient=55.0, ldh_min=6.0, hook_side_cover=2.5)
EDITIONS = {"si": SI, "us": US}

# The SI values under their former names (callers that predate the two editions)
FYT_MAX_MPA = SI.fyt_max  # 20.2.2.4(a), Table 20.2.2.4(a): fyt of shear reinforcement
FC_MIN_MPA = SI.fc_min  # 19.2.1.1, Table 19.2.1.1: minimum f'c, general use
SQRT_FC_MAX = SI.sqrt_fc_max  # 22.5.3.1: sqrt(f'c) used for Vc shall not exceed 8.3 MPa


def edition(units: str | None) -> Edition:
    """The edition of a unit system: "si" (default) or "us" (inch-pound)."""
    try:
        return EDITIONS[(units or "si").lower()]
    except KeyError:
        raise ValueError(f"unknown edition {units!r}: \"si\" or \"us\" (inch-pound)") from None


def sqrt_fc(fc, u: Edition = SI):
    """sqrt(f'c) limited to 8.3 MPa | 100 psi for shear (22.5.3.1)."""
    return np.minimum(np.sqrt(fc), u.sqrt_fc_max)


def size_effect_factor(d, u: Edition = SI):
    """lambda_s = sqrt(2 / (1 + 0.004 d)) <= 1.0, d in mm | sqrt(2 / (1 + d/10)), d in in (22.5.5.1.3)."""
    return np.minimum(np.sqrt(2.0 / (1.0 + u.size_effect * np.asarray(d, dtype=float))), 1.0)


def axial_stress_term(Nu, Ag, fc):
    """Nu/(6 Ag), compression positive, not taken greater than 0.05 f'c (22.5.5.1.2; both editions)."""
    return np.minimum(Nu / (6.0 * Ag), 0.05 * fc)


def vc_cap(fc, bw, d, lam=1.0, u: Edition = SI):
    """Upper limit on Vc: 0.42 | 5 lambda sqrt(f'c) bw d (22.5.5.1.1)."""
    return _cap(sqrt_fc(fc, u), bw, d, lam, u)


def _cap(root_fc, bw, d, lam, u: Edition):  # vc_cap, sqrt(f'c) of 22.5.3.1 already taken (once per Vc)
    return u.vc_max * lam * root_fc * bw * d


def per_section(at):
    """``at``: the section's arrays are given once per section and Nu once per combination,
    the k-th at section ``at[k]``; the terms without Nu are evaluated once per section and
    gathered (the same operations on the same values, so the same results as evaluating
    them at every combination). None: every array is given per combination."""
    if at is None:
        return lambda x: x
    return lambda x: x[at] if np.ndim(x) else x


def _vc_with_axial(coef, Nu, root_fc, fc, bw, d, Ag, lam, u: Edition, at):
    # [coef + Nu/(6Ag)] bw d, with the 22.5.5.1.1 cap; Vc is not taken less than zero (22.5.5.1, from memory)
    g = per_section(at)
    return np.clip((g(coef) + axial_stress_term(Nu, g(Ag), g(fc))) * g(bw) * g(d), 0.0, g(_cap(root_fc, bw, d, lam, u)))


def vc_with_min_stirrups(fc, bw, d, Nu, Ag, lam=1.0, rho_w=None, u: Edition = SI, at=None):
    """Vc where Av >= Av,min (Table 22.5.5.1): the larger of (a) and (b).

    (a) [0.17 | 2 lambda sqrt(f'c) + Nu/(6Ag)] bw d
    (b) [0.66 | 8 lambda rho_w^(1/3) sqrt(f'c) + Nu/(6Ag)] bw d, used where rho_w is known.
    ``at``: as in ``per_section``.
    """
    root_fc = sqrt_fc(fc, u)
    return _vc_with_axial(vc_coefficient_with_min_stirrups(fc, lam, rho_w, u, root_fc), Nu, root_fc, fc, bw, d, Ag,
                          lam, u, at)


def vc_coefficient_with_min_stirrups(fc, lam=1.0, rho_w=None, u: Edition = SI, root_fc=None):
    """The coefficient of bw d before the axial term, Table 22.5.5.1 (a) and (b): 0.17 | 2 lambda
    sqrt(f'c), or the larger 0.66 | 8 lambda rho_w^(1/3) sqrt(f'c) where rho_w is known (both add
    the same axial term, so the larger coefficient gives the larger Vc)."""
    root_fc = sqrt_fc(fc, u) if root_fc is None else root_fc
    coef = u.vc_a * lam * root_fc
    if rho_w is not None:
        coef = np.where(np.isfinite(rho_w), np.maximum(coef, u.vc_b * lam * np.cbrt(rho_w) * root_fc), coef)
    return coef


def vc_without_min_stirrups(fc, bw, d, Nu, Ag, rho_w, lam=1.0, u: Edition = SI, at=None):
    """Vc where Av < Av,min (Table 22.5.5.1 (c)), with the size-effect factor 22.5.5.1.3.

    (c) [0.66 | 8 lambda_s lambda rho_w^(1/3) sqrt(f'c) + Nu/(6Ag)] bw d
    ``at``: as in ``per_section``.
    """
    root_fc = sqrt_fc(fc, u)
    return _vc_with_axial(vc_coefficient_without_min_stirrups(fc, d, rho_w, lam, u, root_fc), Nu, root_fc, fc, bw, d,
                          Ag, lam, u, at)


def vc_coefficient_without_min_stirrups(fc, d, rho_w, lam=1.0, u: Edition = SI, root_fc=None):
    """The coefficient of bw d before the axial term, Table 22.5.5.1 (c): 0.66 | 8 lambda_s lambda
    rho_w^(1/3) sqrt(f'c), lambda_s of 22.5.5.1.3."""
    root_fc = sqrt_fc(fc, u) if root_fc is None else root_fc
    return u.vc_b * size_effect_factor(d, u) * lam * np.cbrt(rho_w) * root_fc


def vs_max(fc, bw, d, u: Edition = SI):
    """Largest Vs the section limit admits: 0.66 | 8 sqrt(f'c) bw d (22.5.1.2)."""
    return u.vs_max * sqrt_fc(fc, u) * bw * d


def section_limit(Vc, fc, bw, d, u: Edition = SI, at=None):
    """phi (Vc + 0.66 | 8 sqrt(f'c) bw d): Vu above this needs a larger section (22.5.1.2).
    ``at``: as in ``per_section``, with Vc per combination."""
    return PHI_SHEAR * (Vc + per_section(at)(vs_max(fc, bw, d, u)))


def av_over_s_for_vs(Vs, fyt, d):
    """Av/s = Vs / (fyt d) for stirrups perpendicular to the axis (22.5.8.5.3), mm^2/mm | in^2/in."""
    return np.maximum(Vs, 0.0) / (fyt * d)


def vs_from_av_over_s(av_s, fyt, d):
    """Vs = Av fyt d / s (22.5.8.5.3)."""
    return av_s * fyt * d


def av_min_over_s(fc, bw, fyt, u: Edition = SI):
    """Av,min/s, the greater of 0.062 | 0.75 sqrt(f'c) bw/fyt and 0.35 | 50 bw/fyt (Table 9.6.3.4 (a), (b)).

    The full sqrt(f'c): the 8.3 MPa | 100 psi limit of 22.5.3.1 is for Vc, and capping it
    here would lower the minimum for f'c above 69 MPa | 10,000 psi."""
    return np.maximum(u.av_min_sqrt * np.sqrt(fc) * bw / fyt, u.av_min_flat * bw / fyt)


def av_min_threshold(fc, bw, d, lam=1.0, u: Edition = SI):
    """Vu above which Av,min is required: phi 0.083 | 1 lambda sqrt(f'c) bw d (9.6.3.1)."""
    return PHI_SHEAR * u.av_min_threshold * lam * sqrt_fc(fc, u) * bw * d


def av_min_exempt(h, bw, hf=None, u: Edition = SI):
    """Beam types of Table 9.6.3.1 where Av,min is needed only where Vu > phi Vc.

    Implemented rows: shallow depth, h <= 250 mm | 10 in; integral with slab, h <= greater
    of 2.5 hf and 0.5 bw, and h <= 600 mm | 24 in (only where a flange thickness is given).
    Not implemented: steel-fibre concrete and one-way joist rows (no input for them).
    """
    h = np.asarray(h, dtype=float)
    exempt = h <= u.shallow_h
    if hf is not None:
        hf = np.asarray(hf, dtype=float)
        integral = np.isfinite(hf) & (h <= np.maximum(2.5 * np.nan_to_num(hf), 0.5 * bw)) & (h <= u.slab_integral_h)
        exempt = exempt | integral
    return exempt


def max_spacing(Vs, fc, bw, d, u: Edition = SI):
    """Maximum stirrup spacing along and across the member (Table 9.7.6.2.2), mm | in.

    Vs <= 0.33 | 4 sqrt(f'c) bw d: along min(d/2, 600 mm | 24 in), across min(d, 600 mm | 24 in);
    otherwise: along min(d/4, 300 mm | 12 in), across min(d/2, 300 mm | 12 in).
    Returns (along, across).
    """
    heavy = Vs > u.heavy_vs * sqrt_fc(fc, u) * bw * d
    along = np.where(heavy, np.minimum(d / 4.0, u.s_max_heavy), np.minimum(d / 2.0, u.s_max_light))
    across = np.where(heavy, np.minimum(d / 2.0, u.s_max_heavy), np.minimum(d, u.s_max_light))
    return along, across


def rho_w_lower_bound(fc, fy, u: Edition = SI):
    """Lower bound on rho_w for a flexural member: As,min/(bw d) from 9.6.1.2.

    The greater of 0.25 | 3 sqrt(f'c)/fy and 1.4 | 200 /fy. Used for Table 22.5.5.1 (c)
    where the tension steel is not given: every beam must carry at least As,min, so this
    is safe.
    """
    return np.maximum(u.as_min_sqrt * np.sqrt(fc) / fy, u.as_min_flat / fy)


# --- torsion, solid sections, theta = 45 degrees --------------------------------

def torsion_threshold(fc, Acp, pcp, Nu, Ag, lam=1.0, u: Edition = SI, at=None):
    """Threshold torsion Tth for a solid nonprestressed section with axial force (Table 22.7.4.1(a)).

    Tth = 0.083 | 1 lambda sqrt(f'c) (Acp^2/pcp) sqrt(1 + Nu/(0.33 | 4 Ag lambda sqrt(f'c))).
    Torsion may be neglected where Tu < phi Tth (9.5.4.1, 22.7.1.1). ``at``: as in ``per_section``.
    """
    g, sfc = per_section(at), sqrt_fc(fc, u)
    axial = np.sqrt(np.maximum(1.0 + Nu / g(u.tth_axial * Ag * lam * sfc), 0.0))
    return g(u.tth * lam * sfc * Acp**2 / pcp) * axial


def at_over_s(Tu, Aoh, fyt):
    """At/s for one leg: Tu / (phi 2 Ao fyt cot(theta)) with Ao = 0.85 Aoh, theta = 45 deg (22.7.6.1, 22.7.6.1.1)."""
    return np.abs(Tu) / (PHI_SHEAR * 2.0 * 0.85 * Aoh * fyt)


def torsion_section_ok(Vu, Tu, Vc, fc, bw, d, Aoh, ph, u: Edition = SI):
    """Cross-sectional limit for solid sections (22.7.7.1(a)):

    sqrt((Vu/(bw d))^2 + (Tu ph/(1.7 Aoh^2))^2) <= phi (Vc/(bw d) + 0.66 | 8 sqrt(f'c)).
    Returns the ratio of the left side to the right side (<= 1 passes).
    """
    lhs = np.hypot(Vu / (bw * d), np.abs(Tu) * ph / (1.7 * Aoh**2))
    rhs = PHI_SHEAR * (Vc / (bw * d) + u.torsion_limit * sqrt_fc(fc, u))
    return lhs / rhs


def al_required(At_s, ph, fyt, fy, fc, Acp, bw, u: Edition = SI):
    """Longitudinal torsion steel Al, mm^2 | in^2: the greater of (22.7.6.1(b), theta = 45 deg)
    (At/s) ph (fyt/fy) and the minimum of 9.6.4.3(a), 0.42 | 5 sqrt(f'c) Acp/fy - (At/s) ph (fyt/fy),
    with At/s there not less than 0.175 | 25 bw/fyt (9.6.4.3(b)). fy is limited to 420 MPa |
    60,000 psi (20.2.2.4). Added to the flexural steel (9.5.4.3)."""
    fy = np.minimum(fy, u.fyt_max)
    al = At_s * ph * fyt / fy
    at_min = np.maximum(At_s, u.at_min * bw / fyt)
    al_min = u.al_min * np.sqrt(fc) * Acp / fy - at_min * ph * fyt / fy
    return np.maximum(al, al_min)


def combined_min_transverse(fc, bw, fyt, u: Edition = SI):
    """(Av + 2At)/s minimum where torsion is considered: greater of 0.062 | 0.75 sqrt(f'c) bw/fyt
    and 0.35 | 50 bw/fyt (9.6.4.2)."""
    return av_min_over_s(fc, bw, fyt, u)


def torsion_max_spacing(ph, u: Edition = SI):
    """Spacing of torsional transverse reinforcement: not more than min(ph/8, 300 mm | 12 in) (9.7.6.3.3)."""
    return np.minimum(ph / 8.0, u.torsion_s_max)


def is_deep_by_span(clear_span, h):
    """Deep beam by clear span: ln <= 4h (9.9.1.1(a))."""
    return clear_span <= 4.0 * h


# =====================================================================================
# Chapter 18, earthquake-resistant structures: frame beams, columns and joints, with the
# column shear provisions of Chapters 10, 22 and 25 that columns need.
# Both editions: each unit-dependent coefficient comes from the Edition table (``u``).
# Clause text not read from a published copy is marked "from memory".
# =====================================================================================

PHI_JOINT = 0.85  # 21.2.4.4: joints of special moment frames (21.2.4.3 in the 2014 edition) (from memory)
EQ_AXIAL_FRACTION = 1.0 / 20.0  # 18.6.5.2(b), 18.7.6.2.1(b): Vc = 0 only while Pu < Ag f'c/20
FIRST_HOOP_MAX_MM = SI.first_hoop_max  # 18.6.4.4, 18.4.2.4 (SI; the edition's first_hoop_max in general)
FYT_CONFINEMENT_MAX_MPA = SI.fyt_confinement_max  # Table 20.2.2.4(a) (SI; the edition's fyt_confinement_max)
OMEGA_O_MOMENT_FRAME = 3.0  # overstrength factor commonly tabulated by the general building code for RC moment frames (from memory)


GRADE_SOFT_CONVERSION = 1.02  # a grade given in the other system's unit is that grade: 420 MPa = 60,916 psi is
# Grade 60, 80,000 psi = 551.6 MPa is Grade 550 (the soft conversions differ by up to 1.5 %; common practice)


def grade_550(fy, u: Edition = SI):
    """Whether the Grade 550 | Grade 80 rows apply: fy above 420 MPa | 60,000 psi (the stricter
    rule for any grade between), a grade in the other system's unit taken as that grade."""
    return np.asarray(fy, dtype=float) > u.grade_high_fy * GRADE_SOFT_CONVERSION


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

SMF_BEAM_MIN_WIDTH_MM = SI.smf_beam_bw_min  # 18.6.2.1(b) (SI; the edition's smf_beam_bw_min in general)
SMF_BEAM_HX_MAX_MM = SI.smf_beam_hx_max  # 18.6.4.2 (SI; the edition's smf_beam_hx_max in general)


def smf_beam_dimensions_ok(ln, d, bw, h, u: Edition = SI):
    """18.6.2.1: (a) clear span ln >= 4d; (b) bw at least the lesser of 0.3h and 250 mm | 10 in
    (from memory: "the lesser", as in the earlier editions' "not less than the smaller of 0.3h
    and 10 in."). (The projection limit of 18.6.2.1(c) needs the column width and is not checked.)"""
    return (ln >= 4.0 * d) & (bw >= np.minimum(0.3 * np.asarray(h, float), u.smf_beam_bw_min))


def smf_beam_rho_max(fy, u: Edition = SI):
    """18.6.3.1: rho = As/(bw d) at most 0.025 for Grade 420 | 60 and 0.02 for Grade 550 | 80 (from memory)."""
    return np.where(grade_550(fy, u), 0.02, 0.025)


def smf_beam_longitudinal_ok(as_top, as_bot, n_top_continuous, n_bot_continuous, fc, fy, bw, d, u: Edition = SI):
    """18.6.3.1: top and bottom steel each at least As,min of 9.6.1.2, rho = As/(bw d) at most
    0.025 (0.02 for Grade 550 | 80), and at least two continuous bars at both faces. Returns a
    boolean per section."""
    as_min = rho_w_lower_bound(fc, fy, u) * bw * d  # 9.6.1.2 (a), (b)
    enough = (as_top >= as_min) & (as_bot >= as_min)
    not_too_much = (as_top <= smf_beam_rho_max(fy, u) * bw * d) & (as_bot <= smf_beam_rho_max(fy, u) * bw * d)
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


def smf_beam_hoop_spacing(d, db_long_min, fy=None, u: Edition = SI):
    """Hoop spacing in the 2h zones (18.6.4.4): the least of d/4, 150 mm | 6 in and 6 db of the
    smallest primary flexural bar (Grade 420 | 60; 5 db for Grade 550 | 80, from memory). First
    hoop within 50 mm | 2 in. fy defaults to Grade 420 | 60."""
    multiple = np.where(grade_550(u.fy_default if fy is None else fy, u), 5.0, 6.0)
    return np.minimum.reduce(np.broadcast_arrays(np.asarray(d, float) / 4.0, multiple * db_long_min,
                                                 u.smf_beam_hoop_s))


def seismic_hook_extension(db, u: Edition = SI):
    """Extension of a seismic hook (Chapter 2, 25.3.4): a bend of at least 135 degrees (90 for
    circular hoops) with an extension of at least 6 db and 75 mm | 3 in."""
    return np.maximum(6.0 * np.asarray(db, float), u.hook_min_extension)


def smf_beam_stirrup_spacing_elsewhere(d):
    """Stirrups with seismic hooks at both ends at no more than d/2 outside the hoop zones (18.6.4.6)."""
    return np.asarray(d, dtype=float) / 2.0


# --- beams of intermediate and ordinary moment frames (18.4.2, 18.3) ----------------------

def imf_beam_hoop_spacing(d, db_long_min, db_hoop, fy=None, u: Edition = SI):
    """Hoop spacing over 2h from each face (18.4.2.4): the least of d/4, 8 db of the smallest
    longitudinal bar enclosed (6 db for Grade 550 | 80, from memory), 24 db of the hoop bar and
    300 mm | 12 in. First hoop within 50 mm | 2 in."""
    multiple = np.where(grade_550(u.fy_default if fy is None else fy, u), 6.0, 8.0)
    return np.minimum.reduce(np.broadcast_arrays(np.asarray(d, float) / 4.0, multiple * np.asarray(db_long_min, float),
                                                 24.0 * np.asarray(db_hoop, float), u.imf_beam_hoop_s))


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

def legs_required(n_bars_face, bar_spacing, db_long, hx_max=None, every_bar=False, u: Edition = SI):
    """Hoop legs or crossties needed across one face with n_bars_face bars (corners included)
    at centre spacing bar_spacing, supported bars spread evenly.

    25.7.2.3(a): every corner and alternate bar supported (at most one unsupported bar between
    two supported ones); (b): an unsupported bar at most 150 mm | 6 in clear from a supported
    one, else every bar is supported. hx_max: largest spacing of supported bars (350 mm | 14 in
    in special-frame beams, 18.6.4.2, and columns, 18.7.5.2(e); 200 mm | 8 in with 18.7.5.2(f)).
    every_bar: 18.7.5.2(f), every perimeter bar supported. Returns the leg count (>= 2).
    """
    n = np.asarray(n_bars_face)
    spacing = np.asarray(bar_spacing, dtype=float)
    gaps = np.where(spacing - db_long > u.unsupported_bar_clear, 1, 2)  # bar intervals between supported bars
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

def smf_column_dimensions_ok(b, h, u: Edition = SI):
    """18.7.2.1: least dimension at least 300 mm | 12 in and its ratio to the other at least 0.4."""
    small, large = np.minimum(b, h), np.maximum(b, h)
    return (small >= u.smf_column_min_dim) & (small / large >= 0.4)


def smf_column_steel_ratio_ok(ast, Ag):
    """18.7.4.1: Ast between 0.01 Ag and 0.06 Ag."""
    return (ast >= 0.01 * Ag) & (ast <= 0.06 * Ag)


def smf_column_lo(depth, clear_height, u: Edition = SI):
    """lo, from each joint face (18.7.5.1): the greatest of the column depth at the joint face
    (give the larger section dimension where both directions matter), clear height/6 and
    450 mm | 18 in."""
    return np.maximum.reduce(np.broadcast_arrays(np.asarray(depth, float), np.asarray(clear_height, float) / 6.0,
                                                 u.lo_min))


def smf_column_so(min_dimension, db_long_min, hx, fy=None, u: Edition = SI):
    """Spacing of transverse reinforcement over lo (18.7.5.3): the least of a quarter of the least
    column dimension, 6 db of the smallest longitudinal bar (5 db for Grade 550 | 80, from memory)
    and so (Eq. 18.7.5.3): SI so = 100 + (350 - hx)/3, not more than 150 nor taken less than 100
    mm; inch-pound so = 4 + (14 - hx)/3, between 4 and 6 in."""
    so = np.clip(u.so_base + (u.so_hx - np.asarray(hx, float)) / 3.0, u.so_base, u.so_max)
    multiple = np.where(grade_550(u.fy_default if fy is None else fy, u), 5.0, 6.0)
    return np.minimum.reduce(np.broadcast_arrays(np.asarray(min_dimension, float) / 4.0, multiple * db_long_min, so))


def smf_column_spacing_beyond_lo(db_long_min, fy=None, u: Edition = SI):
    """Beyond lo (18.7.5.5): hoops at no more than 6 db of the smallest longitudinal bar and
    150 mm | 6 in (5 db for Grade 550 | 80; from memory), unless shear asks for less."""
    multiple = np.where(grade_550(u.fy_default if fy is None else fy, u), 5.0, 6.0)
    return np.minimum(multiple * np.asarray(db_long_min, float), u.smf_beyond_lo_max)


def confinement_kf(fc, u: Edition = SI):
    """Concrete strength factor kf = f'c/175 + 0.6 (MPa) | f'c/25,000 + 0.6 (psi), >= 1.0 (Eq. 18.7.5.4a)."""
    return np.maximum(np.asarray(fc, float) / u.kf_fc + 0.6, 1.0)


def confinement_kn(nl):
    """Confinement effectiveness factor kn = nl/(nl - 2) (Eq. 18.7.5.4b), nl the perimeter bars
    laterally supported by a hoop corner or seismic hook."""
    nl = np.asarray(nl, dtype=float)
    return nl / (nl - 2.0)


def _high_axial_or_strength(Pu, Ag, fc, u: Edition):
    # Table 18.7.5.4: the third expression applies where Pu > 0.3 Ag f'c or f'c > 70 MPa | 10,000 psi
    return (np.asarray(Pu) > 0.3 * Ag * fc) | (np.asarray(fc) > u.high_fc)


def smf_column_ash_over_sbc(Ag, Ach, fc, fyt, Pu, nl, u: Edition = SI):
    """Ash/(s bc) of rectilinear hoops over lo (Table 18.7.5.4): the greater of
    (a) 0.3 (Ag/Ach - 1) f'c/fyt and (b) 0.09 f'c/fyt, and where Pu > 0.3 Ag f'c or
    f'c > 70 MPa | 10,000 psi also (c) 0.2 kf kn Pu/(fyt Ach). fyt at most 690 MPa | 100,000 psi
    (Table 20.2.2.4(a), from memory)."""
    fyt = np.minimum(fyt, u.fyt_confinement_max)
    a = 0.3 * (Ag / Ach - 1.0) * fc / fyt
    b = 0.09 * fc / fyt
    c = 0.2 * confinement_kf(fc, u) * confinement_kn(nl) * np.asarray(Pu, float) / (fyt * Ach)
    return np.maximum(np.maximum(a, b), np.where(_high_axial_or_strength(Pu, Ag, fc, u), c, 0.0))


def smf_column_rho_s(Ag, Ach, fc, fyt, Pu, u: Edition = SI):
    """Volumetric ratio of spirals or circular hoops over lo (Table 18.7.5.4): the greater of
    (d) 0.45 (Ag/Ach - 1) f'c/fyt and (e) 0.12 f'c/fyt, and where Pu > 0.3 Ag f'c or
    f'c > 70 MPa | 10,000 psi also (f) 0.35 kf Pu/(fyt Ach)."""
    fyt = np.minimum(fyt, u.fyt_confinement_max)
    d = 0.45 * (Ag / Ach - 1.0) * fc / fyt
    e = 0.12 * fc / fyt
    f = 0.35 * confinement_kf(fc, u) * np.asarray(Pu, float) / (fyt * Ach)
    return np.maximum(np.maximum(d, e), np.where(_high_axial_or_strength(Pu, Ag, fc, u), f, 0.0))


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

def imf_column_lo(depth_max, clear_height, u: Edition = SI):
    """lo (18.4.3.3): the greatest of clear height/6, the largest section dimension and 450 mm | 18 in."""
    return np.maximum.reduce(np.broadcast_arrays(np.asarray(clear_height, float) / 6.0, np.asarray(depth_max, float),
                                                 u.lo_min))


def imf_column_so(min_dimension, db_long_min, fy=None, u: Edition = SI):
    """Hoop spacing over lo (18.4.3.3), from memory: Grade 420 | 60, the lesser of 8 db of the
    smallest longitudinal bar enclosed and 200 mm | 8 in; Grade 550 | 80, of 6 db and 150 mm |
    6 in; and half the least section dimension. The first hoop within so/2 of the joint face."""
    above_60 = grade_550(u.fy_default if fy is None else fy, u)
    normal, high = u.imf_column_so
    bars = np.where(above_60, np.minimum(6.0 * np.asarray(db_long_min, float), high),
                    np.minimum(8.0 * np.asarray(db_long_min, float), normal))
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


def joint_strength_coefficient(column_continuous, beam_continuous, confined, u: Edition = SI):
    """Coefficient of lambda sqrt(f'c) Aj in Vn (Table 18.8.4.3, from memory of the inch-pound
    20, 15, 12 and 8 sqrt(psi); SI 1.7, 1.2, 1.0 as the SI editions print them, and 8/12 = 0.67).

    Continuous column (15.2.6) with a continuous beam in the direction of Vu (15.2.7): 1.7 | 20
    where transverse beams confine the joint (15.2.8), else 1.2 | 15; with another beam: 1.2 |
    15 / 1.0 | 12. Other column: continuous beam 1.2 | 15 / 1.0 | 12; other beam 1.0 | 12 / 0.67 | 8.
    """
    col, beam, conf = (np.asarray(v, dtype=bool) for v in (column_continuous, beam_continuous, confined))
    top, high, mid, low = u.joint_coefficients
    table = np.array([[[low, mid], [mid, high]],   # other column: [other beam, continuous beam] x [not confined, confined]
                      [[mid, high], [high, top]]])  # continuous column
    return table[col.astype(int), beam.astype(int), conf.astype(int)]


def joint_design_strength(fc, effective_width, joint_depth, coefficient, lam=1.0):
    """phi Vn = 0.85 coefficient lambda sqrt(f'c) Aj, Aj = effective width x joint depth (the column
    depth along the shear) (18.8.4.3, Table 18.8.4.3; phi by 21.2.4.4). sqrt(f'c) is not capped
    here (no cap is recalled for joints)."""
    return PHI_JOINT * coefficient * lam * np.sqrt(fc) * effective_width * joint_depth


def joint_depth_ok(h_column, db_beam_max, fy=None, h_beam_max=0.0, lam=1.0, u: Edition = SI):
    """18.8.2.3, from memory: the joint depth along the beam bars at least 20 db/lambda of the largest
    Grade 420 | 60 beam bar passing through (26 db for Grade 550 | 80) and half the depth of any
    framing beam."""
    multiple = np.where(grade_550(u.fy_default if fy is None else fy, u), 26.0, 20.0 / lam)
    return (h_column >= multiple * db_beam_max) & (h_column >= 0.5 * np.asarray(h_beam_max, float))


# --- shear of columns (Chapters 10, 22 and 25) --------------------------------------------

def column_needs_av_min(Vu, Vc):
    """Av,min is required where Vu > 0.5 phi Vc (10.6.2.1)."""
    return np.abs(Vu) > 0.5 * PHI_SHEAR * np.asarray(Vc)


def column_av_min_over_s(fc, bw, fyt, u: Edition = SI):
    """Av,min/s of columns: the greater of 0.062 | 0.75 sqrt(f'c) bw/fyt and 0.35 | 50 bw/fyt (10.6.2.2)."""
    return av_min_over_s(fc, bw, fyt, u)


def column_max_shear_spacing(Vs, fc, bw, d, u: Edition = SI):
    """Shear reinforcement spacing in columns (10.7.6.5.2): d/2 and 600 mm | 24 in; d/4 and
    300 mm | 12 in where Vs > 0.33 | 4 sqrt(f'c) bw d."""
    return max_spacing(Vs, fc, bw, d, u)[0]


def tie_max_spacing(db_long, db_tie, least_dimension):
    """Tie spacing (25.7.2.1(b)): the least of 16 db of the longitudinal bars, 48 db of the tie bar
    and the least dimension of the member."""
    return np.minimum.reduce(np.broadcast_arrays(16.0 * np.asarray(db_long, float), 48.0 * np.asarray(db_tie, float),
                                                 np.asarray(least_dimension, float)))


def tie_bar_ok(db_long, db_tie, bundled=False, u: Edition = SI):
    """25.7.2.2 (from memory): ties at least No. 10 | No. 3 (9.5 mm | 0.375 in) around No. 32 |
    No. 10 and smaller bars, at least No. 13 | No. 4 (12.7 mm | 0.5 in) around No. 36 | No. 11
    and larger or bundled bars."""
    small_tie, large_tie = u.tie_db
    large = (np.asarray(db_long, float) > u.tie_large_long_db) | np.asarray(bundled)
    return np.asarray(db_tie, float) >= np.where(large, large_tie, small_tie)


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



# --- spirals and circular sections (25.7.3, 22.7.6.1) -------------------------------------

def spiral_pitch_limits(db_spiral, u: Edition = SI):
    """(least, greatest) centre-to-centre pitch of a spiral: clear spacing between 25 and 75 mm |
    1 and 3 in (25.7.3.1; the 4/3 dagg of 25.7.3.1 is not checked)."""
    db = np.asarray(db_spiral, float)
    return u.spiral_clear[0] + db, u.spiral_clear[1] + db


def spiral_min_rho_s(Ag, Ach, fc, fyt, u: Edition = SI):
    """Volumetric ratio of a spiral: rho_s >= 0.45 (Ag/Ach - 1) f'c/fyt (25.7.3.3), fyt at most
    690 MPa | 100,000 psi (Table 20.2.2.4(a), from memory)."""
    return 0.45 * (np.asarray(Ag, float) / Ach - 1.0) * fc / np.minimum(fyt, u.fyt_confinement_max)


def circular_torsion_geometry(diameter, clear_cover, db_tie):
    """Aoh and ph of a circular section: the area and perimeter enclosed by the centreline of the
    outermost circular hoop or spiral (R22.7.6.1, as for the rectangle of a closed stirrup)."""
    dc = np.maximum(np.asarray(diameter, float) - 2.0 * clear_cover - db_tie, 1e-6)
    return np.pi * dc**2 / 4.0, np.pi * dc


# --- short columns of ordinary moment frames (18.3.3) -------------------------------------

def ordinary_frame_short_column(clear_height, c1):
    """18.3.3 (from memory): columns of ordinary moment frames with a clear height at most five times
    c1 (the column dimension in the direction of the shear considered) are designed for shear by
    18.4.3.1."""
    return np.asarray(clear_height, float) <= 5.0 * np.asarray(c1, float)


BIAXIAL_RULES = ("code", "elliptical")


def biaxial_interaction(ratio_x, ratio_y, rule: str = "code"):
    """Utilization of shear along both principal axes: ``"code"`` is 22.5.1.10 and 22.5.1.11
    (``biaxial_shear_utilization``), ``"elliptical"`` the common-practice circle, which is never
    less than the code's rule (``biaxial_shear_utilization_elliptical``)."""
    if rule == "code":
        return biaxial_shear_utilization(ratio_x, ratio_y)
    if rule == "elliptical":
        return biaxial_shear_utilization_elliptical(ratio_x, ratio_y)
    raise ValueError(f"rule must be one of {', '.join(BIAXIAL_RULES)}")
