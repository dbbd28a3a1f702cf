"""Required transverse reinforcement of beams at every station (ACI 318-19 Ch. 9, 22).

The candidate combinations of each station (``combos.candidates``) are evaluated with
their own concurrent axial force and torsion; per station the envelope is what the
layout needs. ``check_layout`` re-derives phi*Vn of a provided layout for every
candidate of every station: the detailing self-check. Any NaN fails a check.

Units are the run's (N, mm, MPa or lb, in, psi); the section carries the edition of ACI
318-19 they belong to (``Section.u``), and every provision is evaluated with it.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from postproc import kernels
from postproc.codes import aci318_19 as aci
from postproc.codes.aci318_19 import SI, Edition
from postproc.combos import Candidates


CELLS_PER_CANDIDATE = 8  # the work of one candidate of ``pair_demand``, counted as kernels.use_compiled counts it


@dataclass(frozen=True)
class Section:
    """Per-member (or per-station, after ``take``) section and material arrays (N, mm, MPa or
    lb, in, psi: the units of the edition ``u``)."""

    b: np.ndarray
    h: np.ndarray
    d: np.ndarray
    fc: np.ndarray
    fyt: np.ndarray  # already capped at 420 MPa | 60,000 psi (20.2.2.4)
    fy: np.ndarray
    lam: np.ndarray
    Ag: np.ndarray
    rho_w: np.ndarray  # NaN where the tension steel is not given
    rho_w_min: np.ndarray  # 9.6.1.2 lower bound, for Table 22.5.5.1 (c) without As
    avmin_exempt: np.ndarray  # Table 9.6.3.1 rows
    Acp: np.ndarray
    pcp: np.ndarray
    u: Edition = SI  # the edition of ACI 318-19 (and its units) the arrays are in

    def take(self, idx: np.ndarray) -> Section:
        """The section at ``idx`` (per station, per candidate): each array gathered when first read."""
        return _Taken(self, np.asarray(idx))

    def origin(self) -> tuple[Section, np.ndarray | None]:
        """The section whose arrays these are and the index gathering them (None: these)."""
        return self, None


class _Taken:
    """``Section.take``: the same attributes, each gathered from the whole section on first
    use (a kernel reads a few of them over every candidate; gathering all would cost more
    than the kernel)."""

    def __init__(self, whole: Section, idx: np.ndarray):
        self._whole, self._idx, self.u = whole, idx, whole.u

    def __getattr__(self, name: str):
        if name not in Section.__dataclass_fields__:
            raise AttributeError(name)
        value = getattr(self._whole, name)[self._idx]
        self.__dict__[name] = value
        return value

    def take(self, idx: np.ndarray) -> _Taken:
        return _Taken(self._whole, self._idx[idx])

    def origin(self) -> tuple[Section, np.ndarray]:
        return self._whole, self._idx


def section_from_members(b, h, d, fc, fyt, lam, fy, As, bf, hf, u: Edition = SI) -> Section:
    """Derived section quantities: Ag with any flange, rho_w, torsion geometry of the web rectangle.

    Acp and pcp are taken for the web rectangle bw x h alone: ignoring the overhangs
    (which 9.2.4.4 would admit) lowers Tth, so torsion is considered more often (safe).
    """
    overhang = np.where(np.isfinite(bf), (np.nan_to_num(bf) - b) * np.nan_to_num(hf), 0.0)
    return Section(
        b=b, h=h, d=d, fc=fc, fyt=np.minimum(fyt, u.fyt_max), fy=fy, lam=lam, Ag=b * h + overhang,
        rho_w=np.where(np.isfinite(As), As / (b * d), np.nan), rho_w_min=aci.rho_w_lower_bound(fc, fy, u),
        avmin_exempt=aci.av_min_exempt(h, b, hf, u), Acp=b * h, pcp=2 * (b + h), u=u)


def torsion_geometry(b, h, cover_to_stirrup, stirrup_db):
    """Aoh and ph: area and perimeter enclosed by the centreline of the outermost closed
    stirrup of the bar actually used (R22.7.6.1)."""
    x1 = np.maximum(b - 2 * cover_to_stirrup - stirrup_db, 1.0)
    y1 = np.maximum(h - 2 * cover_to_stirrup - stirrup_db, 1.0)
    return x1 * y1, 2 * (x1 + y1)


@dataclass(frozen=True)
class PairDemand:
    """Per candidate combination of a station (flat, as ``Candidates``)."""

    vu: np.ndarray  # |Vu|, N | lb
    nu: np.ndarray  # Nu, compression positive, N | lb
    tu: np.ndarray  # |Tu|, N*mm | lb*in
    vc_hi: np.ndarray  # Vc with Av >= Av,min (Table 22.5.5.1 (a)/(b))
    vc_lo: np.ndarray  # Vc with Av < Av,min (Table 22.5.5.1 (c))
    av: np.ndarray  # Av/s for strength, Vs/(fyt d) (22.5.8.5.3): no minimum, mm^2/mm | in^2/in
    ata: np.ndarray  # At/s x Aoh (22.7.6.1 with theta = 45 deg, Ao = 0.85 Aoh): divide by Aoh of the bar
    torsion: np.ndarray  # torsion considered, Tu >= phi Tth (22.7.4.1)
    minimum: np.ndarray  # Av,min (9.6.3.1) or the combined minimum (9.6.4.2) applies
    shear_ratio: np.ndarray  # Vu / phi (Vc + 0.66 sqrt(f'c) bw d) (22.5.1.2)

    def take(self, idx: np.ndarray) -> PairDemand:
        """The candidates ``idx``, every array gathered."""
        return PairDemand(**{f.name: getattr(self, f.name)[idx] for f in fields(self)})


@dataclass(frozen=True)
class Demand:
    """Per-station envelope over the candidate combinations."""

    pairs: PairDemand
    vu_max: np.ndarray  # largest |Vu| of any combination, N | lb
    av_env: np.ndarray  # largest strength Av/s
    ata_env: np.ndarray  # largest At/s x Aoh where torsion is considered
    minimum: np.ndarray  # the minimum of 9.6.3.1 / 9.6.4.2 applies in some combination
    torsion: np.ndarray  # torsion considered in some combination
    av_min_s: np.ndarray  # Av,min/s = (Av + 2At)min/s (Table 9.6.3.4, 9.6.4.2)
    heavy: np.ndarray  # Vs > 0.33 sqrt(f'c) bw d in some combination (Table 9.7.6.2.2)
    s_max: np.ndarray  # along the member, Table 9.7.6.2.2 (torsion's ph/8 depends on the bar)
    s_max_across: np.ndarray
    shear_ratio: np.ndarray  # largest Vu / phi (Vc + 0.66 | 8 sqrt(f'c) bw d)
    u: Edition = SI  # the edition it was evaluated with (that of the section)

    @property
    def stirrups_needed(self) -> np.ndarray:
        return self.minimum | (self.av_env > 0) | (self.ata_env > 0)


def _segment_max(values: np.ndarray, bounds: np.ndarray) -> np.ndarray:
    return np.maximum.reduceat(values, bounds[:-1])


def _segment_any(values: np.ndarray, bounds: np.ndarray) -> np.ndarray:
    return np.logical_or.reduceat(values, bounds[:-1])


def pair_demand(sec: Section, cand: Candidates, vc_zero: np.ndarray | None = None) -> PairDemand:
    """Every candidate combination's own requirement. ``sec`` is per station; ``vc_zero`` per
    station, where Vc is taken as zero (18.6.5.2, the hinge zones of special-frame beams)."""
    s = sec.take(cand.station)
    w, at = s.origin()  # the terms without Nu are taken once per member (w), gathered by ``at``
    u = sec.u
    vu = np.abs(cand.values["V"])
    nu = -cand.values["N"]  # ACI sign: compression positive
    tu = np.abs(cand.values["T"])
    phi = aci.PHI_SHEAR
    torsion = np.zeros(len(vu), bool)
    ata = np.zeros(len(vu))
    if np.any(tu > 0):
        torsion = (tu > 0) & (tu >= phi * aci.torsion_threshold(w.fc, w.Acp, w.pcp, nu, w.Ag, w.lam, u, at=at))
        ata = np.where(torsion, aci.at_over_s(tu, 1.0, s.fyt), 0.0)
    rho_c = np.where(np.isfinite(w.rho_w), w.rho_w, w.rho_w_min)
    threshold = np.where(w.avmin_exempt, np.inf, aci.av_min_threshold(w.fc, w.b, w.d, w.lam, u))
    if at is not None and kernels.use_compiled(len(vu) * CELLS_PER_CANDIDATE):
        n = len(w.b)
        terms = {k: np.broadcast_to(v, n) for k, v in dict(  # a scalar (lambda) for every member
            coef_hi=aci.vc_coefficient_with_min_stirrups(w.fc, w.lam, w.rho_w, u),
            coef_lo=aci.vc_coefficient_without_min_stirrups(w.fc, w.d, rho_c, w.lam, u), ag=w.Ag, fc=w.fc, b=w.b,
            d=w.d, cap=aci.vc_cap(w.fc, w.b, w.d, w.lam, u), threshold=threshold, exempt=w.avmin_exempt, fyt=w.fyt,
            av_min=aci.av_min_over_s(w.fc, w.b, w.fyt, u), vs_max=aci.vs_max(w.fc, w.b, w.d, u)).items()}
        zero = vc_zero[cand.station] if vc_zero is not None else np.zeros(len(vu), bool)
        vc_hi, vc_lo, minimum, av, ratio = kernels.beam_pair_demand(at, vu, nu, torsion, zero, terms, phi)
        return PairDemand(vu=vu, nu=nu, tu=tu, vc_hi=vc_hi, vc_lo=vc_lo, av=av, ata=ata, torsion=torsion,
                          minimum=minimum, shear_ratio=ratio)
    vc_hi = aci.vc_with_min_stirrups(w.fc, w.b, w.d, nu, w.Ag, w.lam, w.rho_w, u, at=at)
    vc_lo = aci.vc_without_min_stirrups(w.fc, w.b, w.d, nu, w.Ag, rho_c, w.lam, u, at=at)
    if vc_zero is not None:
        vc_hi, vc_lo = np.where(vc_zero[cand.station], 0.0, vc_hi), np.where(vc_zero[cand.station], 0.0, vc_lo)
    minimum = vu > threshold[at]
    minimum |= s.avmin_exempt & (vu > phi * vc_lo)  # Table 9.6.3.1 beams: only where Vu > phi Vc
    minimum |= torsion  # 9.6.4.1
    # strength: Av/s = (Vu/phi - Vc)/(fyt d); where the minimum is not required, the smaller
    # of the steel with Vc by (c) and with Vc by (a)/(b) topped up to Av,min suffices
    q_hi = aci.av_over_s_for_vs(vu / phi - vc_hi, s.fyt, s.d)
    q_lo = aci.av_over_s_for_vs(vu / phi - vc_lo, s.fyt, s.d)
    av_min = aci.av_min_over_s(w.fc, w.b, w.fyt, u)[at]
    av = np.where(minimum, q_hi, np.minimum(q_lo, np.maximum(q_hi, av_min)))
    return PairDemand(vu=vu, nu=nu, tu=tu, vc_hi=vc_hi, vc_lo=vc_lo, av=av, ata=ata, torsion=torsion,
                      minimum=minimum, shear_ratio=vu / aci.section_limit(vc_hi, w.fc, w.b, w.d, u, at=at))


def required(sec: Section, cand: Candidates, vc_zero: np.ndarray | None = None) -> Demand:
    """Steel needed at each station over all candidate combinations. ``sec`` is per station;
    ``vc_zero`` as in pair_demand."""
    p = pair_demand(sec, cand, vc_zero)
    bounds = cand.bounds
    w, at = sec.take(cand.station).origin()  # the limit once per member, gathered
    u = sec.u
    heavy_pair = p.vu / aci.PHI_SHEAR - p.vc_hi > (u.heavy_vs * aci.sqrt_fc(w.fc, u) * w.b * w.d)[at]  # Table 9.7.6.2.2
    heavy = _segment_any(heavy_pair, bounds)
    along, across = aci.max_spacing(np.where(heavy, np.inf, 0.0), sec.fc, sec.b, sec.d, u)
    return Demand(
        pairs=p, vu_max=_segment_max(p.vu, bounds), av_env=_segment_max(p.av, bounds),
        ata_env=_segment_max(p.ata, bounds), minimum=_segment_any(p.minimum, bounds),
        torsion=_segment_any(p.torsion, bounds), av_min_s=aci.av_min_over_s(sec.fc, sec.b, sec.fyt, u),
        heavy=heavy, s_max=along, s_max_across=across, shear_ratio=_segment_max(p.shear_ratio, bounds), u=u)


def torsion_limit_ratio(sec: Section, cand: Candidates, dem: Demand, Aoh, ph) -> np.ndarray:
    """Per station, the largest ratio of 22.7.7.1(a) over the candidates where torsion is
    considered (0 elsewhere); ``Aoh``, ``ph`` per station for the bar in question, or one row
    per bar (bars, stations): then one row of ratios per bar, the candidates gathered once."""
    p = dem.pairs
    Aoh, ph = np.asarray(Aoh), np.asarray(ph)
    t = np.flatnonzero(p.torsion)  # the candidates where torsion is considered: the rest give 0
    if not len(t):
        return np.zeros(Aoh.shape[:-1] + dem.vu_max.shape)
    st = cand.station[t]  # ascending: the candidates are grouped by station
    s = sec.take(st)
    r = aci.torsion_section_ok(p.vu[t], p.tu[t], p.vc_hi[t], s.fc, s.b, s.d, Aoh[..., st], ph[..., st], sec.u)
    out = np.zeros(Aoh.shape[:-1] + dem.vu_max.shape)
    at, largest = _grouped_max(r, st)
    out[..., at] = largest  # the ratios are >= 0: the zeros of the other candidates never govern
    return out


def _grouped_max(values: np.ndarray, station: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The stations in ``station`` (ascending, as candidates are grouped) and the largest of
    ``values`` (last axis) over each one's entries."""
    head = np.flatnonzero(np.r_[True, station[1:] != station[:-1]])
    return station[head], np.maximum.reduceat(values, head, axis=-1)


def per_leg_need(cand: Candidates, dem: Demand, legs, Aoh) -> np.ndarray:
    """Per station, the largest area per unit length one outer leg must give: its share of
    the shear steel plus At/s (22.5.8.5.3, 22.7.6.1), over the candidates. ``legs`` and
    ``Aoh`` per station for the bar and legs in question."""
    need = dem.av_env / legs
    if dem.torsion.any():  # at the stations with torsion, over their candidates alone
        p = dem.pairs
        c = np.flatnonzero(dem.torsion[cand.station])
        st = cand.station[c]
        at, largest = _grouped_max(p.av[c] / legs[st] + p.ata[c] / Aoh[st], st)
        need[at] = largest
    return need


def allowed_spacing(cand: Candidates, dem: Demand, legs, bar_area, Aoh, ph, here) -> np.ndarray:
    """Per station, the largest spacing of stirrups of ``legs`` legs of ``bar_area`` each
    that meets every candidate combination (inf where none are needed): each outer leg
    its share of the strength steel plus At/s (22.5.8.5.3, 22.7.6.1); Av >= Av,min or the
    combined minimum (Table 9.6.3.4, 9.6.4.2) where required; s_max along (Table
    9.7.6.2.2; ph/8 and 300 mm | 12 in with torsion, 9.7.6.3.3) where stirrups are placed
    (``here``). ``legs``, ``Aoh``, ``ph`` per station."""
    need = per_leg_need(cand, dem, legs, Aoh)
    with np.errstate(divide="ignore"):
        s = np.where(need > 0, bar_area / need, np.inf)
        s = np.where(dem.minimum, np.minimum(s, legs * bar_area / dem.av_min_s), s)
    s_max = np.where(dem.torsion, np.minimum(dem.s_max, aci.torsion_max_spacing(ph, dem.u)), dem.s_max)
    return np.where(here | (need > 0) | dem.minimum, np.minimum(s, s_max), np.inf)


@dataclass(frozen=True)
class Capacity:
    phi_vn: np.ndarray  # per candidate: phi (Vc + Vs) of the provided layout, N | lb
    pair_utilization: np.ndarray  # per candidate: the largest demand/capacity ratio
    utilization: np.ndarray  # per station: the largest over its candidates
    ok: np.ndarray  # per station: every check passes


def check_layout(sec: Section, cand: Candidates, dem: Demand, bar_area, legs, spacing, Aoh, ph,
                 leg_spacing, here, tol: float = 1e-9) -> Capacity:
    """Self-check of a provided layout at every station for every candidate combination.

    ``spacing`` per station is the actual gap between the stirrups around it (inf where
    there are none). phi*Vn = phi (Vc + Av fyt d / s) with Vc by Table 22.5.5.1 (a)/(b)
    where the provided Av >= Av,min, else (c); Vs not above 0.66 | 8 sqrt(f'c) bw d (22.5.1.2);
    with torsion, each outer leg carries its share of the shear plus At/s (22.7.6.1);
    s <= s_max (9.7.6.2.2, and ph/8, 300 mm | 12 in with torsion, 9.7.6.3.3); Av >= Av,min, or
    Av + 2At >= the combined minimum, where required (9.6.3.1, 9.6.4.2); legs across at
    most s_max across apart where stirrups are needed; the section limits (22.5.1.2,
    22.7.7.1). ``here``: stations where stirrups are placed (s_max holds there). NaN
    anywhere fails.
    """
    p = dem.pairs
    st = cand.station
    s = sec.take(st)
    u = sec.u
    phi = aci.PHI_SHEAR
    with np.errstate(divide="ignore", invalid="ignore"):
        av_s = np.where(np.isfinite(spacing), legs * bar_area / spacing, 0.0)
    has_min = av_s >= dem.av_min_s * (1 - tol)
    vc = np.where(has_min[st], p.vc_hi, p.vc_lo)
    vs = np.minimum(aci.vs_from_av_over_s(av_s[st], s.fyt, s.d), aci.vs_max(s.fc, s.b, s.d, u))
    phi_vn = phi * (vc + vs)
    with np.errstate(divide="ignore", invalid="ignore"):
        util = np.where(p.vu > 0, p.vu / phi_vn, 0.0)
        t = np.flatnonzero(p.torsion)  # candidates where torsion is considered (elsewhere util >= 0 stands)
        if len(t):
            stt, s_t = st[t], s.take(t)
            leg = np.where(np.isfinite(spacing), bar_area / spacing, 0.0)[stt]
            need = aci.av_over_s_for_vs(p.vu[t] / phi - vc[t], s_t.fyt, s_t.d) / np.maximum(legs[stt], 1) \
                + p.ata[t] / Aoh[stt]
            ut = np.maximum(util[t], np.where(leg > 0, need / leg, np.inf))
            tl = aci.torsion_section_ok(p.vu[t], p.tu[t], p.vc_hi[t], s_t.fc, s_t.b, s_t.d, Aoh[stt], ph[stt], u)
            util[t] = np.maximum(ut, tl)
    finite = np.isfinite(p.vu) & np.isfinite(p.tu) & np.isfinite(phi_vn)  # (a NaN Vu would read as Vu = 0)
    util = np.where(np.isnan(util) | ~finite, np.inf, util)  # NaN fails
    station_util = _segment_max(util, cand.bounds)
    s_max = np.where(dem.torsion, np.minimum(dem.s_max, aci.torsion_max_spacing(ph, u)), dem.s_max)
    ok = station_util <= 1.0 + tol
    ok &= np.where(here, spacing <= s_max * (1 + tol), True) & ~np.isnan(spacing)
    ok &= ~dem.minimum | has_min
    ok &= dem.shear_ratio <= 1.0 + tol
    needed = np.isfinite(spacing) & dem.stirrups_needed
    ok &= ~needed | (leg_spacing <= dem.s_max_across * (1 + tol))
    return Capacity(phi_vn=phi_vn, pair_utilization=util, utilization=station_util, ok=ok)
