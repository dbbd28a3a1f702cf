"""Required ties of columns in both shear directions at every station (ACI 318-19 Chapters 10,
22, 25 and 18).

Directions. ``V`` (forces.csv ``V_kN``) acts parallel to the section's h side and is carried by
the tie legs parallel to h (``legs_v``: bw = b, d = h - edge); ``Vb`` acts parallel to b and is
carried by the legs parallel to b (``legs_vb``: bw = h, d = b - edge). A circular section has
bw = D and d = 0.8 D in both (22.5.2.2) and two effective legs of its hoop or spiral
(R22.5.8.5.3). Every leg of a set is one bar size and all sets share one spacing s.

Demand cases. Each station has its candidate combinations (``combos.candidates`` with V, Vb
and T signed), each with its own concurrent Nu and Tu, and, in frames of Chapter 18, the
capacity-design shear of each direction (one direction at a time). A case asks for the least
t = 1/s at which it passes; the kernel finds it by bisection, which is exact to rounding
because every check is nonincreasing in t (more steel: more Vs, and Vc by Table 22.5.5.1
(a)/(b) once Av >= Av,min). The self-check evaluates the same ``utilization`` at the spacing
actually provided. Any NaN fails.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, fields

import numpy as np

from postproc import kernels, sections
from postproc.codes import aci318_19 as aci
from postproc.codes.aci318_19 import SI, Edition
from postproc.combos import Candidates
from postproc.demand.beams import torsion_geometry

PHI = aci.PHI_SHEAR
TOL = 1e-9
BISECTION_STEPS = 64  # halvings of [t_low, t_high]: below 1e-18 of t_high, far under the 1e-9 tolerances
CELLS_PER_CASE = 16  # the work of one case of required_t, counted as kernels.use_compiled counts it

COMBINATION, CAPACITY_V, CAPACITY_VB = 0, 1, 2  # Cases.kind


@dataclass(frozen=True)
class ColumnSection:
    """Per-member (or per-station, per-case after ``take``) section arrays, in the units of the
    edition ``u`` (N, mm, MPa or lb, in, psi)."""

    circular: np.ndarray
    b: np.ndarray  # side parallel to Vb (D for a circle)
    h: np.ndarray  # side parallel to V (D for a circle)
    edge: np.ndarray  # face to the centre of the longitudinal bars
    fc: np.ndarray
    fyt: np.ndarray  # capped at 420 MPa for shear (20.2.2.4)
    fyt_conf: np.ndarray  # capped at 690 MPa for confinement (Table 20.2.2.4(a), from memory)
    fy: np.ndarray
    lam: np.ndarray
    Ag: np.ndarray
    bw_v: np.ndarray
    d_v: np.ndarray
    bw_vb: np.ndarray
    d_vb: np.ndarray
    rho_v: np.ndarray  # bars of the tension face over bw d, for Table 22.5.5.1 (b), (c)
    rho_vb: np.ndarray
    least: np.ndarray  # least dimension (25.7.2.1, 18.7.5.3)
    db_long: np.ndarray
    n_long: np.ndarray
    bar_area: np.ndarray  # one longitudinal bar
    on_b: np.ndarray  # bars between the corners on each b face (rectangles)
    on_h: np.ndarray  # ... on each h face
    Acp: np.ndarray
    pcp: np.ndarray
    u: Edition = SI  # the edition of ACI 318-19 (and its units) the arrays are in

    def take(self, idx: np.ndarray) -> ColumnSection:
        return ColumnSection(**{f.name: getattr(self, f.name)[idx] for f in fields(self) if f.name != "u"}, u=self.u)

    def gathered(self, idx: np.ndarray) -> GatheredSection:
        """``take(idx)`` whose arrays are gathered as they are first read (a section per demand
        case, millions of them, most of whose arrays are never read)."""
        return GatheredSection(self, idx)

    @property
    def ast(self) -> np.ndarray:
        return self.n_long * self.bar_area

    # terms of each member that the demand reads at every case (a GatheredSection gathers them
    # as computed once per member: elementwise, so the same numbers as computed per case;
    # DERIVED_PER_MEMBER names them)
    @functools.cached_property
    def vs_max_v(self) -> np.ndarray:
        """0.66 | 8 sqrt(f'c) bw d of the V direction (22.5.1.2)."""
        return aci.vs_max(self.fc, self.bw_v, self.d_v, u=self.u)

    @functools.cached_property
    def vs_max_vb(self) -> np.ndarray:
        return aci.vs_max(self.fc, self.bw_vb, self.d_vb, u=self.u)

    @functools.cached_property
    def av_min_v(self) -> np.ndarray:
        """Av,min/s of the V direction (10.6.2.2)."""
        return aci.column_av_min_over_s(self.fc, self.bw_v, self.fyt, u=self.u)

    @functools.cached_property
    def av_min_vb(self) -> np.ndarray:
        return aci.column_av_min_over_s(self.fc, self.bw_vb, self.fyt, u=self.u)


DERIVED_PER_MEMBER = frozenset({"vs_max_v", "vs_max_vb", "av_min_v", "av_min_vb"})  # ColumnSection's cached terms


class GatheredSection:
    """A ColumnSection taken at ``idx``, each array gathered when first read (ColumnSection.gathered)."""

    def __init__(self, base: ColumnSection, idx: np.ndarray):
        self._base, self._idx = base, idx

    def __getattr__(self, name: str):
        if name.startswith("_"):  # not set yet (a copy being made): no field of a section
            raise AttributeError(name)
        value = getattr(self._base, name)  # a field, or a property of the whole section (ast)
        if callable(value):  # a method would act on the base's members, not on these cases
            raise AttributeError(f"{name} of a gathered section: take() it from the ColumnSection")
        if isinstance(value, np.ndarray):
            value = value[self._idx]
        if name not in DERIVED_PER_MEMBER:  # those are gathered at each read: kept, they would hold a case-sized
            self.__dict__[name] = value  # array each for the whole task (about 100 MB on 3 M cases)
        return value

    def take(self, idx: np.ndarray) -> GatheredSection:
        return GatheredSection(self._base, self._idx[idx])


def column_sections(b, h, diameter, edge, fc, fyt, fy, lam, db_long, n_long, as_long, u: Edition = SI) -> ColumnSection:
    """Derived section arrays of columns; ``diameter`` finite marks a circular section (b, h ignored).

    rho_w for Table 22.5.5.1: a rectangle's tension face holds its corner bars and the bars between
    them on that face (sections.perimeter_bar_split); a circle's tension half holds n/2 bars,
    rounded down (common practice; d = 0.8 D is the depth of their centroid, R22.5.2.2).
    """
    circular = np.isfinite(diameter)
    D = np.where(circular, diameter, np.nan)
    b = np.where(circular, D, b)
    h = np.where(circular, D, h)
    n_long = np.asarray(n_long, float)
    bar = np.where(np.isfinite(as_long), as_long / n_long, np.pi * db_long**2 / 4.0)
    rect_n = np.where(circular, 4, n_long).astype(int)  # circles: placeholders, not used
    on_b, on_h = sections.perimeter_bar_split(np.where(circular, 1.0, b), np.where(circular, 1.0, h), rect_n,
                                              np.where(circular, 0.0, edge))
    on_b, on_h = np.where(circular, 0, on_b), np.where(circular, 0, on_h)
    bw_c, d_c = aci.circular_shear_section(D)
    d_v = np.where(circular, d_c, h - edge)
    d_vb = np.where(circular, d_c, b - edge)
    bw_v = np.where(circular, bw_c, b)
    bw_vb = np.where(circular, bw_c, h)
    half = np.floor(n_long / 2.0)
    rho_v = np.where(circular, half, on_b + 2) * bar / (bw_v * d_v)
    rho_vb = np.where(circular, half, on_h + 2) * bar / (bw_vb * d_vb)
    Ag = np.where(circular, np.pi * D**2 / 4.0, b * h)
    return ColumnSection(
        circular=circular, b=b, h=h, edge=np.asarray(edge, float), fc=np.asarray(fc, float),
        fyt=np.minimum(fyt, u.fyt_max), fyt_conf=np.minimum(fyt, u.fyt_confinement_max),
        fy=np.asarray(fy, float), lam=np.asarray(lam, float), Ag=Ag, bw_v=bw_v, d_v=d_v, bw_vb=bw_vb, d_vb=d_vb,
        rho_v=rho_v, rho_vb=rho_vb, least=np.minimum(b, h), db_long=np.asarray(db_long, float), n_long=n_long,
        bar_area=bar, on_b=on_b.astype(float), on_h=on_h.astype(float), Acp=Ag,
        pcp=np.where(circular, np.pi * D, 2.0 * (b + h)), u=u)


@dataclass(frozen=True)
class Ties:
    """One transverse-reinforcement choice for every member (arrays over members)."""

    bar: str
    area: float  # one leg
    db: float
    legs_v: np.ndarray  # legs parallel to h (carry V)
    legs_vb: np.ndarray  # legs parallel to b (carry Vb)
    clear: np.ndarray  # face to the outside of the tie
    bc_b: np.ndarray  # core dimension along b, to the outside of the tie (Dc for a circle)
    bc_h: np.ndarray
    Ach: np.ndarray
    Aoh: np.ndarray
    ph: np.ndarray
    s_support: np.ndarray  # 25.7.2.1(b): 16 db long, 48 db tie, least dimension
    hx: np.ndarray  # largest spacing of laterally supported bars around the perimeter (18.7.5.3; a circle: its bars')
    nl: np.ndarray  # bars laterally supported by a hoop corner or crosstie hook (18.7.5.4, kn)

    def take(self, idx: np.ndarray, names: tuple[str, ...] | None = None) -> dict[str, np.ndarray]:
        """Per-station (or per-case) arrays of the member-wise fields (``names``: those alone)."""
        return {f.name: getattr(self, f.name)[idx] for f in fields(self)
                if (names is None or f.name in names) and isinstance(getattr(self, f.name), np.ndarray)}


def face_bars(sec: ColumnSection) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Bars on each b face and each h face (corners included) and their centre spacings."""
    n_b, n_h = sec.on_b + 2, sec.on_h + 2
    return n_b, (sec.b - 2 * sec.edge) / (n_b - 1), n_h, (sec.h - 2 * sec.edge) / (n_h - 1)


def legs_needed(sec: ColumnSection, hx_max: np.ndarray | None, every_bar: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Least legs parallel to h and to b of a rectangular column: every corner and alternate bar
    supported, none more than 150 mm clear from a supported one (25.7.2.3); in special frames
    supported bars at most hx_max apart, every bar where ``every_bar`` (18.7.5.2(e), (f)).
    Circles: 2 and 2 (a circular hoop supports every bar, 25.7.2.4)."""
    n_b, s_b, n_h, s_h = face_bars(sec)
    args = {} if hx_max is None else {"hx_max": hx_max}
    lv = np.where(every_bar, n_b, aci.legs_required(n_b, s_b, sec.db_long, u=sec.u, **args))
    lvb = np.where(every_bar, n_h, aci.legs_required(n_h, s_h, sec.db_long, u=sec.u, **args))
    return np.where(sec.circular, 2, lv).astype(float), np.where(sec.circular, 2, lvb).astype(float)


def ties(sec: ColumnSection, bar: str, area: float, db: float, legs_v, legs_vb) -> Ties:
    """The geometry of a tie set of bar ``db`` with the given legs (circles: one hoop or spiral)."""
    clear = np.maximum(sec.edge - sec.db_long / 2.0 - db, 0.0)
    bc_b, bc_h = sec.b - 2 * clear, sec.h - 2 * clear
    Ach = np.where(sec.circular, np.pi * bc_b**2 / 4.0, bc_b * bc_h)
    Aoh_r, ph_r = torsion_geometry(sec.b, sec.h, clear, db)
    Aoh_c, ph_c = aci.circular_torsion_geometry(sec.b, clear, db)
    n_b, s_b, n_h, s_h = face_bars(sec)
    hx = np.maximum(aci.supported_bar_spacing(n_b, s_b, np.maximum(legs_v, 2)),
                    aci.supported_bar_spacing(n_h, s_h, np.maximum(legs_vb, 2)))
    return Ties(bar, area, db, np.asarray(legs_v, float), np.asarray(legs_vb, float), clear, bc_b, bc_h, Ach,
                np.where(sec.circular, Aoh_c, Aoh_r), np.where(sec.circular, ph_c, ph_r),
                aci.tie_max_spacing(sec.db_long, db, sec.least),
                np.where(sec.circular, np.pi * (sec.b - 2 * sec.edge) / sec.n_long, hx),
                np.where(sec.circular, sec.n_long, 2 * legs_v + 2 * legs_vb - 4))


@dataclass(frozen=True)
class Cases:
    """The demand cases of every station, flat and grouped by station (``bounds``)."""

    station: np.ndarray
    kind: np.ndarray  # COMBINATION, CAPACITY_V, CAPACITY_VB
    cand: np.ndarray  # index of the candidate combination (-1 for a capacity-design case)
    vu_v: np.ndarray  # |V|, N
    vu_vb: np.ndarray
    nu: np.ndarray  # compression positive, N
    tu: np.ndarray  # |T|, N mm
    vc_v_hi: np.ndarray  # Vc with Av >= Av,min (Table 22.5.5.1 (a), (b)); 0 where 18.7.6.2.1 says so
    vc_v_lo: np.ndarray  # Vc with Av < Av,min (Table 22.5.5.1 (c))
    vc_vb_hi: np.ndarray
    vc_vb_lo: np.ndarray
    minimum_v: np.ndarray  # Av,min required: Vu > 0.5 phi Vc (10.6.2.1), or torsion (9.6.4.1 by 10.5.4)
    minimum_vb: np.ndarray
    torsion: np.ndarray  # Tu >= phi Tth (22.7.4.1): torsion considered
    ata: np.ndarray  # At/s x Aoh per leg (22.7.6.1, theta = 45 deg): divide by the tie's Aoh
    bounds: np.ndarray

    def take(self, idx: np.ndarray, n_stations: int) -> Cases:
        out = {f.name: getattr(self, f.name)[idx] for f in fields(self) if f.name != "bounds"}
        return Cases(**out, bounds=np.searchsorted(out["station"], np.arange(n_stations + 1)))


def _vc_pair(sec: ColumnSection, nu: np.ndarray, direction: str, at: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    bw, d, rho = (getattr(sec, f"{k}_{direction}") for k in ("bw", "d", "rho"))
    hi = aci.vc_with_min_stirrups(sec.fc, bw, d, nu, sec.Ag, sec.lam, rho, u=sec.u, at=at)
    lo = aci.vc_without_min_stirrups(sec.fc, bw, d, nu, sec.Ag, rho, sec.lam, u=sec.u, at=at)
    return hi, lo


def combination_cases(sec_st: ColumnSection, cand: Candidates) -> dict[str, np.ndarray]:
    """The candidate combinations as demand cases. ``sec_st`` per station."""
    nu = -cand.values["N"]  # ACI sign: compression positive
    vu_v, vu_vb = np.abs(cand.values["V"]), np.abs(cand.values.get("Vb", np.zeros(len(nu))))
    tu = np.abs(cand.values.get("T", np.zeros(len(nu))))
    return _cases(sec_st, cand.station, np.full(len(nu), COMBINATION), np.arange(len(nu)), vu_v, vu_vb, nu, tu,
                  np.zeros(len(nu), bool), np.zeros(len(nu), bool))


def capacity_cases(sec_st: ColumnSection, ve_v: np.ndarray, ve_vb: np.ndarray, nu_least: np.ndarray,
                   vc_zero_v: np.ndarray, vc_zero_vb: np.ndarray) -> dict[str, np.ndarray]:
    """The capacity-design shear of each direction, one direction at a time (a sway along one
    principal axis; common practice), at every station where it is given (finite, > 0), with the
    least axial compression of any combination at that station (the smallest Vc, conservative)
    or Vc = 0 where 18.7.6.2.1 says so."""
    on_v = np.flatnonzero(np.isfinite(ve_v) & (ve_v > 0))
    on_vb = np.flatnonzero(np.isfinite(ve_vb) & (ve_vb > 0))
    st = np.concatenate([on_v, on_vb])
    n = len(st)
    vu_v = np.concatenate([ve_v[on_v], np.zeros(len(on_vb))])
    vu_vb = np.concatenate([np.zeros(len(on_v)), ve_vb[on_vb]])
    kind = np.concatenate([np.full(len(on_v), CAPACITY_V), np.full(len(on_vb), CAPACITY_VB)])
    zero_v = np.concatenate([vc_zero_v[on_v], np.zeros(len(on_vb), bool)])
    zero_vb = np.concatenate([np.zeros(len(on_v), bool), vc_zero_vb[on_vb]])
    return _cases(sec_st, st, kind, np.full(n, -1), vu_v, vu_vb, nu_least[st], np.zeros(n), zero_v, zero_vb)


def _cases(s: ColumnSection, station, kind, cand, vu_v, vu_vb, nu, tu, zero_v, zero_vb) -> dict[str, np.ndarray]:
    """The demand cases at ``station`` (``s`` per station: the terms without Nu are taken once
    per station and gathered)."""
    vc_v_hi, vc_v_lo = _vc_pair(s, nu, "v", station)
    vc_vb_hi, vc_vb_lo = _vc_pair(s, nu, "vb", station)
    vc_v_hi, vc_v_lo = np.where(zero_v, 0.0, vc_v_hi), np.where(zero_v, 0.0, vc_v_lo)
    vc_vb_hi, vc_vb_lo = np.where(zero_vb, 0.0, vc_vb_hi), np.where(zero_vb, 0.0, vc_vb_lo)
    torsion = (tu > 0) & (tu >= PHI * aci.torsion_threshold(s.fc, s.Acp, s.pcp, nu, s.Ag, s.lam, u=s.u, at=station))
    ata = np.where(torsion, aci.at_over_s(tu, 1.0, s.fyt[station]), 0.0)
    # 10.6.2.1 with Vc of Table 22.5.5.1(c), the Vc of a column without Av,min (conservative)
    minimum_v = aci.column_needs_av_min(vu_v, vc_v_lo) | torsion
    minimum_vb = aci.column_needs_av_min(vu_vb, vc_vb_lo) | torsion
    return dict(station=station, kind=kind, cand=cand, vu_v=vu_v, vu_vb=vu_vb, nu=nu, tu=tu, vc_v_hi=vc_v_hi,
                vc_v_lo=vc_v_lo, vc_vb_hi=vc_vb_hi, vc_vb_lo=vc_vb_lo, minimum_v=minimum_v, minimum_vb=minimum_vb,
                torsion=torsion, ata=ata)


def merge(parts: list[dict[str, np.ndarray]], n_stations: int) -> Cases:
    """Demand cases of several sources as one list grouped by station (stable: combinations first)."""
    keys = parts[0].keys()
    flat = {k: np.concatenate([p[k] for p in parts]) for k in keys}
    order = np.argsort(flat["station"], kind="stable")
    flat = {k: v[order] for k, v in flat.items()}
    return Cases(**flat, bounds=np.searchsorted(flat["station"], np.arange(n_stations + 1)))


@dataclass(frozen=True)
class Strength:
    """Per case, at a given t = 1/s: each direction's ratio Vu / phi Vn and the utilization."""

    r_v: np.ndarray
    r_vb: np.ndarray
    phi_vn_v: np.ndarray
    phi_vn_vb: np.ndarray
    has_min_v: np.ndarray
    has_min_vb: np.ndarray
    utilization: np.ndarray  # the biaxial interaction, and each torsion leg's demand over its supply


def strength(c: Cases, s: ColumnSection, tie: dict[str, np.ndarray], area: float, t: np.ndarray,
             av_min_v: np.ndarray, av_min_vb: np.ndarray, rule: str) -> Strength:
    """phi Vn of each direction with legs x area at spacing 1/t (22.5.1.1, 22.5.8.5.3; Vs not above
    0.66 sqrt(f'c) bw d, 22.5.1.2), Vc by Table 22.5.5.1 (a)/(b) where the legs give Av,min, else
    (c); with torsion the two outer legs of each direction give At/s first (22.7.6.1). The
    interaction of the two directions by ``rule`` (22.5.1.10, 22.5.1.11 or elliptical). ``s``,
    ``tie``, ``av_min_*`` per case."""
    return _ShearTerms.of(c, s, tie, av_min_v, av_min_vb).strength(area, t, rule)


@dataclass(frozen=True)
class _ShearTerms:
    """What ``strength`` takes from the cases, the section and the tie, none of it a function of
    t: taken once for the many t of ``required_t``'s bisection."""

    at: np.ndarray  # At/s of one leg
    torsion: np.ndarray
    fyt: np.ndarray
    direction: tuple  # per direction: (legs, Av,min/s, Vc (a)/(b), Vc (c), d, Vs,max, Vu)

    @classmethod
    def of(cls, c: Cases, s: ColumnSection, tie: dict[str, np.ndarray], av_min_v, av_min_vb) -> _ShearTerms:
        at = np.where(c.torsion, c.ata / tie["Aoh"], 0.0)
        return cls(at, c.torsion, s.fyt, tuple(
            (tie[f"legs_{k}"], amin, getattr(c, f"vc_{k}_hi"), getattr(c, f"vc_{k}_lo"), getattr(s, f"d_{k}"),
             getattr(s, f"vs_max_{k}"), getattr(c, f"vu_{k}"))
            for k, amin in (("v", av_min_v), ("vb", av_min_vb))))

    def strength(self, area: float, t: np.ndarray, rule: str) -> Strength:
        at = self.at
        out = []
        for legs, amin, vc_hi, vc_lo, d, vs_max, vu in self.direction:
            av_s = legs * area * t
            has_min = av_s >= amin * (1 - TOL)
            vc = np.where(has_min, vc_hi, vc_lo)
            vs = np.minimum(np.maximum(av_s - 2.0 * at, 0.0) * self.fyt * d, vs_max)
            phi_vn = PHI * (vc + vs)
            with np.errstate(divide="ignore", invalid="ignore"):
                out.append((np.where(vu > 0, vu / phi_vn, 0.0), phi_vn, has_min))
        (r_v, pv, hm_v), (r_vb, pvb, hm_vb) = out
        u = aci.biaxial_interaction(r_v, r_vb, rule)
        with np.errstate(divide="ignore", invalid="ignore"):
            leg = np.where(self.torsion, np.where(area * t > 0, at / (area * t), np.inf), 0.0)
        u = np.maximum(u, leg)
        u = np.where(np.isnan(u), np.inf, u)
        return Strength(r_v, r_vb, pv, pvb, hm_v, hm_vb, u)

    def take(self, idx: np.ndarray) -> _ShearTerms:
        return _ShearTerms(self.at[idx], self.torsion[idx], self.fyt[idx],
                           tuple(tuple(a[idx] for a in terms) for terms in self.direction))


def av_min(s: ColumnSection) -> tuple[np.ndarray, np.ndarray]:
    """Av,min/s of each direction (10.6.2.2; with torsion the same value bounds (Av + 2At)/s, 9.6.4.2)."""
    return s.av_min_v, s.av_min_vb


def required_t(c: Cases, s: ColumnSection, tie: dict[str, np.ndarray], area: float, rule: str) -> np.ndarray:
    """Per case, the least t = 1/s (1/mm) of the tie that passes ``strength`` and gives Av,min
    where required and At/s per leg where torsion is considered; inf where none does (the
    section limit or the interaction cannot be met). ``s``, ``tie`` per case. For the code's
    rule the search runs compiled where numba is installed (kernels.tie_bisection: the same bits)."""
    need_any = (c.vu_v > 0) | (c.vu_vb > 0) | c.minimum_v | c.minimum_vb | c.torsion
    terms = _ShearTerms.of(c, s, tie, *av_min(s))  # At/s of a leg, Av,min/s and Vs,max of each direction: once
    at = terms.at
    (legs_v, amin_v, *_, d_v, vs_max_v, _), (legs_vb, amin_vb, *_, d_vb, vs_max_vb, _) = terms.direction
    lo = np.maximum.reduce([np.where(c.minimum_v, amin_v / (legs_v * area), 0.0),
                            np.where(c.minimum_vb, amin_vb / (legs_vb * area), 0.0), at / area])
    cap = [(vs_max_v / (s.fyt * d_v) + 2 * at) / (legs_v * area),
           (vs_max_vb / (s.fyt * d_vb) + 2 * at) / (legs_vb * area),
           amin_v / (legs_v * area), amin_vb / (legs_vb * area), lo]
    hi = np.maximum.reduce(cap) * (1.0 + 1e-6) + 1e-12
    if rule == "code" and kernels.use_compiled(len(lo) * CELLS_PER_CASE):
        directions = [(legs, amin * (1 - TOL), vc_hi, vc_lo, d, vs_max, vu)
                      for legs, amin, vc_hi, vc_lo, d, vs_max, vu in terms.direction]
        t = kernels.tie_bisection(lo, hi, area, terms.at, terms.torsion, terms.fyt, directions, PHI, 1.0 + TOL,
                                  BISECTION_STEPS)
        return np.where(need_any, t, 0.0)
    ok = lambda tm, t: tm.strength(area, t, rule).utilization <= 1.0 + TOL
    done = ok(terms, lo)
    feasible = done.copy()  # where lo passes, t is lo: hi is tried only where it does not
    rest = np.flatnonzero(~done)
    feasible[rest] = ok(terms.take(rest), hi[rest])
    b = hi.copy()
    todo = rest[feasible[rest]]  # bisected alone: each case's steps are its own
    if len(todo):
        terms, a_t, b_t = terms.take(todo), lo[todo], hi[todo]
        for _ in range(BISECTION_STEPS):
            mid = 0.5 * (a_t + b_t)
            good = ok(terms, mid)
            b_t = np.where(good, mid, b_t)
            a_t = np.where(good, a_t, mid)
        b[todo] = b_t
    t = np.where(done, lo, np.where(feasible, b, np.inf))
    return np.where(need_any, t, 0.0)


def shear_ratios(c: Cases, s: ColumnSection) -> tuple[np.ndarray, np.ndarray]:
    """Vu over the section limit phi (Vc + 0.66 sqrt(f'c) bw d) of each direction (22.5.1.2)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        r_v = c.vu_v / aci.section_limit(c.vc_v_hi, s.fc, s.bw_v, s.d_v, u=s.u)
        r_vb = c.vu_vb / aci.section_limit(c.vc_vb_hi, s.fc, s.bw_vb, s.d_vb, u=s.u)
    return np.nan_to_num(r_v, nan=np.inf, posinf=np.inf), np.nan_to_num(r_vb, nan=np.inf, posinf=np.inf)


def torsion_ratios(c: Cases, s: ColumnSection, tie: dict[str, np.ndarray]) -> np.ndarray:
    """The larger ratio of the cross-sectional limit 22.7.7.1(a) of the two directions, where torsion
    is considered (0 elsewhere). For a circle bw d = 0.8 D^2 (22.5.2.2)."""
    out = np.zeros(len(c.station))
    t = np.flatnonzero(c.torsion)  # the cases with torsion alone (elementwise: the same numbers)
    if not len(t):
        return out
    at = lambda a: a[t] if np.ndim(a) else a
    aoh, ph, fc, tu = at(tie["Aoh"]), at(tie["ph"]), at(s.fc), at(c.tu)
    rv = aci.torsion_section_ok(at(c.vu_v), tu, at(c.vc_v_hi), fc, at(s.bw_v), at(s.d_v), aoh, ph, u=s.u)
    rvb = aci.torsion_section_ok(at(c.vu_vb), tu, at(c.vc_vb_hi), fc, at(s.bw_vb), at(s.d_vb), aoh, ph, u=s.u)
    out[t] = np.maximum(rv, rvb)
    return out


def heavy(c: Cases, s: ColumnSection) -> tuple[np.ndarray, np.ndarray]:
    """Vs required above 0.33 | 4 sqrt(f'c) bw d in each direction (10.7.6.5.2)."""
    out = []
    for k in ("v", "vb"):
        bw, d = getattr(s, f"bw_{k}"), getattr(s, f"d_{k}")
        vs = getattr(c, f"vu_{k}") / PHI - getattr(c, f"vc_{k}_hi")
        out.append(vs > s.u.heavy_vs * aci.sqrt_fc(s.fc, s.u) * bw * d)
    return out[0], out[1]


def segment_max(values: np.ndarray, bounds: np.ndarray, empty: float = 0.0) -> np.ndarray:
    """Largest value of each station's cases (``empty`` for a station without cases)."""
    out = np.full(len(bounds) - 1, empty, dtype=float)
    has = np.diff(bounds) > 0
    if len(values):
        out[has] = np.maximum.reduceat(values, bounds[:-1][has])
    return out


def segment_any(values: np.ndarray, bounds: np.ndarray) -> np.ndarray:
    return segment_max(values.astype(float), bounds) > 0
