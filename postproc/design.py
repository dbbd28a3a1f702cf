"""Required transverse reinforcement at every station for every combination (ACI 318-19).

Arrays are (combinations, stations); every combination uses its own concurrent axial
force and torsion. The governing combination at a station is the one that needs
the most stirrup steel. ``check_layout`` re-derives phi*Vn from a provided layout
for every combination: the detailing self-check.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from postproc.codes import aci318_19 as aci


@dataclass(frozen=True)
class Section:
    """Per-member section and material arrays (N, mm, MPa)."""

    b: np.ndarray
    h: np.ndarray
    d: np.ndarray
    fc: np.ndarray
    fyt: np.ndarray  # already capped at 420 MPa (20.2.2.4)
    lam: np.ndarray
    Ag: np.ndarray
    rho_w: np.ndarray  # NaN where the tension steel is not given
    rho_w_min: np.ndarray  # 9.6.1.2 lower bound, for Table 22.5.5.1 (c) without As
    avmin_exempt: np.ndarray  # Table 9.6.3.1 rows
    Acp: np.ndarray
    pcp: np.ndarray
    Aoh: np.ndarray
    ph: np.ndarray

    def take(self, idx: np.ndarray) -> Section:
        return Section(**{k: getattr(self, k)[idx] for k in self.__dataclass_fields__})


def section_from_members(b, h, d, fc, fyt, lam, fy, As, bf, hf, cover_to_stirrup, stirrup_db) -> Section:
    """Derived section quantities: Ag with any flange, rho_w, torsion geometry of the web rectangle.

    Acp and pcp are taken for the web rectangle bw x h alone: ignoring the overhangs
    (which 9.2.4.4 would admit) lowers Tth, so torsion is considered more often (safe).
    """
    overhang = np.where(np.isfinite(bf), (np.nan_to_num(bf) - b) * np.nan_to_num(hf), 0.0)
    Ag = b * h + overhang
    rho_w = np.where(np.isfinite(As), As / (b * d), np.nan)
    x1 = b - 2 * cover_to_stirrup - stirrup_db
    y1 = h - 2 * cover_to_stirrup - stirrup_db
    return Section(
        b=b, h=h, d=d, fc=fc, fyt=np.minimum(fyt, aci.FYT_MAX_MPA), lam=lam, Ag=Ag, rho_w=rho_w,
        rho_w_min=aci.rho_w_lower_bound(fc, fy), avmin_exempt=aci.av_min_exempt(h, b, hf),
        Acp=b * h, pcp=2 * (b + h), Aoh=np.maximum(x1, 1.0) * np.maximum(y1, 1.0),
        ph=2 * (np.maximum(x1, 1.0) + np.maximum(y1, 1.0)),
    )


@dataclass(frozen=True)
class Demand:
    """Per-station envelope over combinations."""

    governing: np.ndarray  # combination index that needs the most steel
    vu: np.ndarray  # |Vu| of the governing combination, N
    vu_max: np.ndarray  # largest |Vu| of any combination, N
    av_s: np.ndarray  # Av/s for shear of the governing combination, mm^2/mm
    at_s: np.ndarray  # At/s (one leg) of the governing combination
    av_s_env: np.ndarray  # largest Av/s over combinations
    at_s_env: np.ndarray  # largest At/s over combinations (per leg: (Av/s)/legs + At/s is conservative)
    avmin_required: np.ndarray  # any combination needs Av,min (9.6.3.1 or torsion 9.6.4.1)
    av_min_s: np.ndarray
    s_max: np.ndarray  # along the member, smallest over combinations (9.7.6.2.2, 9.7.6.3.3)
    s_max_across: np.ndarray
    phi_vc: np.ndarray  # phi Vc (Av >= Av,min) of the governing combination
    phi_vc_plain: np.ndarray  # phi Vc (Av < Av,min), same combination
    phi_vn_limit: np.ndarray  # phi (Vc + 0.66 sqrt(f'c) bw d), same combination
    section_ratio: np.ndarray  # largest Vu / section limit, or torsion interaction ratio
    torsion: np.ndarray  # torsion must be considered in some combination
    vc: tuple[np.ndarray, np.ndarray]  # Vc (combinations, stations) with and without Av,min, for the self-check


def required(sec: Section, Vu: np.ndarray, Nu: np.ndarray, Tu: np.ndarray) -> Demand:
    """Steel needed at each station (columns of the arrays), each combination (rows).

    Vu, Tu are magnitudes (N, N*mm); Nu is compression positive (N).
    """
    fc, b, d, lam, fyt = sec.fc, sec.b, sec.d, sec.lam, sec.fyt
    phi = aci.PHI_SHEAR
    vc_hi = aci.vc_with_min_stirrups(fc, b, d, Nu, sec.Ag, lam, sec.rho_w)  # Table 22.5.5.1 (a)/(b)
    rho_c = np.where(np.isfinite(sec.rho_w), sec.rho_w, sec.rho_w_min)
    vc_lo = aci.vc_without_min_stirrups(fc, b, d, Nu, sec.Ag, rho_c, lam)  # Table 22.5.5.1 (c)
    av_min_s = aci.av_min_over_s(fc, b, fyt)
    has_torsion = bool(np.any(Tu > 0))
    if has_torsion:
        tth = aci.torsion_threshold(fc, sec.Acp, sec.pcp, Nu, sec.Ag, lam)
        torsion = (Tu > 0) & (Tu >= phi * tth)  # 22.7.1.1: below phi*Tth torsion may be neglected
    else:
        torsion = np.zeros(Vu.shape, bool)
    avmin_req = Vu > np.where(sec.avmin_exempt, np.inf, aci.av_min_threshold(fc, b, d, lam))
    if sec.avmin_exempt.any():  # Table 9.6.3.1 beams: Av,min only where Vu > phi Vc
        avmin_req |= sec.avmin_exempt & (Vu > phi * vc_lo)
    if has_torsion:
        avmin_req |= torsion

    vn_req = Vu / phi
    vs_hi = vn_req - vc_hi
    q_hi = np.maximum(aci.av_over_s_for_vs(vs_hi, fyt, d), av_min_s)
    q_lo = aci.av_over_s_for_vs(vn_req - vc_lo, fyt, d)
    av_s = np.where(avmin_req, q_hi, np.minimum(q_lo, q_hi))
    at_s = np.where(torsion, aci.at_over_s(Tu, sec.Aoh, fyt), 0.0) if has_torsion else np.zeros(Vu.shape)

    # Table 9.7.6.2.2 depends on the combination only through "Vs > 0.33 sqrt(f'c) bw d"
    heavy = (vs_hi > 0.33 * aci.sqrt_fc(fc) * b * d).any(axis=0)
    along, across = aci.max_spacing(np.where(heavy, np.inf, 0.0), fc, b, d)
    torsion_any = torsion.any(axis=0)
    along = np.where(torsion_any, np.minimum(along, aci.torsion_max_spacing(sec.ph)), along)
    limit = aci.section_limit(vc_hi, fc, b, d)
    ratio = Vu / limit
    if has_torsion:  # 22.7.7.1, evaluated only at the stations where some combination needs it
        tc = np.flatnonzero(torsion_any)
        st = sec.take(tc)
        sub = aci.torsion_section_ok(Vu[:, tc], Tu[:, tc], vc_hi[:, tc], st.fc, st.b, st.d, st.Aoh, st.ph)
        ratio[:, tc] = np.where(torsion[:, tc], sub, ratio[:, tc])

    demand = av_s + 2.0 * at_s
    cols = np.arange(demand.shape[1])
    gov = np.argmax(demand, axis=0)
    no_steel = demand[gov, cols] <= 0
    gov = np.where(no_steel, np.argmax(Vu, axis=0), gov)  # nothing needed: the largest Vu governs
    pick = lambda a: np.broadcast_to(a, demand.shape)[gov, cols]
    return Demand(
        governing=gov, vu=Vu[gov, cols], vu_max=Vu.max(axis=0), av_s=av_s[gov, cols], at_s=at_s[gov, cols],
        av_s_env=av_s.max(axis=0), at_s_env=at_s.max(axis=0),
        avmin_required=avmin_req.any(axis=0), av_min_s=np.broadcast_to(av_min_s, cols.shape).copy(),
        s_max=along, s_max_across=across,
        phi_vc=phi * pick(vc_hi), phi_vc_plain=phi * pick(vc_lo), phi_vn_limit=pick(limit),
        section_ratio=ratio.max(axis=0), torsion=torsion_any, vc=(vc_hi, vc_lo),
    )


@dataclass(frozen=True)
class Capacity:
    phi_vn: np.ndarray  # (combinations, stations): phi (Vc + Vs) of the provided layout, N
    utilization: np.ndarray  # per station, largest demand/capacity over combinations
    ok: np.ndarray  # per station, every check passes


def check_layout(sec: Section, Vu, Nu, Tu, bar_area, legs, spacing, demand: Demand, leg_spacing=None,
                 tol: float = 1e-9) -> Capacity:
    """Self-check of a provided layout at every station for every combination.

    phi*Vn = phi (Vc + Av fyt d / s) with Vc by Table 22.5.5.1 (a)/(b) where the provided
    Av >= Av,min, else (c); with torsion, each outer leg must carry its share of shear
    plus At/s (22.7.6.1); s <= s_max (9.7.6.2.2, 9.7.6.3.3); Av >= Av,min where required
    (9.6.3.1, 9.6.4.2); legs across the width at most s_max across apart where shear
    reinforcement is required (Table 9.7.6.2.2); the section limits (22.5.1.2, 22.7.7.1).
    ``spacing`` is inf where no stirrups are provided; ``leg_spacing`` is the distance
    between legs across the width.
    """
    fc, b, d, lam, fyt = sec.fc, sec.b, sec.d, sec.lam, sec.fyt
    phi = aci.PHI_SHEAR
    with np.errstate(divide="ignore"):
        av_s = np.where(np.isfinite(spacing), legs * bar_area / spacing, 0.0)
    has_min = av_s >= aci.av_min_over_s(fc, b, fyt) * (1 - tol)
    vc = np.where(has_min, *demand.vc)  # Table 22.5.5.1: (a)/(b) with Av >= Av,min provided, else (c)
    vs = np.minimum(aci.vs_from_av_over_s(av_s, fyt, d), aci.vs_max(fc, b, d))
    phi_vn = phi * (vc + vs)
    with np.errstate(divide="ignore", invalid="ignore"):
        util = np.where(Vu > 0, Vu / phi_vn, 0.0)
        if np.any(Tu > 0):
            torsion = (Tu > 0) & (Tu >= phi * aci.torsion_threshold(fc, sec.Acp, sec.pcp, Nu, sec.Ag, lam))
            leg_s = np.where(np.isfinite(spacing), bar_area / spacing, 0.0)  # one leg's area per length
            need = aci.av_over_s_for_vs(Vu / phi - vc, fyt, d) / np.maximum(legs, 1) + aci.at_over_s(Tu, sec.Aoh, fyt)
            util = np.maximum(util, np.where(torsion, np.where(leg_s > 0, need / leg_s, np.inf), 0.0))
    util = util.max(axis=0)
    ok = util <= 1.0 + tol
    ok &= np.where(np.isfinite(spacing), spacing <= demand.s_max * (1 + tol), ~demand.avmin_required)
    ok &= ~demand.avmin_required | has_min
    ok &= demand.section_ratio <= 1.0 + tol
    if leg_spacing is not None:
        needed = np.isfinite(spacing) & (demand.avmin_required | (demand.av_s_env > 0) | (demand.at_s_env > 0))
        ok &= ~needed | (leg_spacing <= demand.s_max_across * (1 + tol))
    return Capacity(phi_vn=phi_vn, utilization=util, ok=ok)
