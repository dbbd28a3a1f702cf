"""Beams of moment frames (ACI 318-19 Chapter 18): the steps the beam family adds.

``plan`` runs after the combination candidates and before the demand. For the beams of
special and intermediate frames it adds, at every station, one more candidate: the
capacity-design shear (Ve of 18.6.5.1 from Mpr; the lesser of 18.4.2.3(a) from Mn and (b)
with Omega_o E), with the least axial compression and the largest torsion of that
station's combinations. The demand of postproc.demand.beams then designs for the larger of
it and the analysis envelope, with Vc = 0 over the hinge zones where 18.6.5.2 says so; the
spacing limits of the hoop zones and elsewhere join s_max; stirrups run throughout. The
member checks of the longitudinal bars (18.6.2, 18.6.3, 18.4.2.1-2, 18.3.2) and the
missing case types give the members that are not designed, with the reason.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from postproc import combos, units
from postproc.codes import aci318_19 as aci
from postproc.combos import Candidates
from postproc.demand import frames as fr
from postproc.settings import Settings

HOOP, STIRRUP = "hoop", "stirrup"  # zones.csv `kind` of beams


@dataclass(frozen=True)
class FrameCandidates(Candidates):
    """Candidates with the capacity-design ones appended: rows from ``first_extra`` on are
    named by ``extra_names``."""

    first_extra: int = 0
    extra_names: tuple[str, ...] = ()

    def names(self, cset, which: np.ndarray) -> np.ndarray:
        which = np.asarray(which, dtype=np.int64)
        out = np.empty(len(which), dtype=object)
        mine = self.row[which] >= self.first_extra if len(which) else np.zeros(0, bool)
        out[~mine] = super().names(cset, which[~mine])
        out[mine] = np.array(self.extra_names, dtype=object)[self.row[which[mine]] - self.first_extra]
        return out


@dataclass(frozen=True)
class FrameStations:
    """Per station of a batch (zeros, inf or NaN outside frame beams)."""

    code: np.ndarray  # frame of the station's member (demand.frames.CODES)
    zone: np.ndarray  # 1 / 2: hinge zone (hoops) at face i / j; 0 elsewhere
    ve: np.ndarray  # the capacity-design candidate's shear, N | lb (NaN where none)
    ve_eq: np.ndarray  # its earthquake-induced part, N | lb
    vc_zero: np.ndarray  # Vc = 0 by 18.6.5.2
    limit: np.ndarray  # spacing limit of Chapter 18 that does not depend on the bar, mm | in
    hoop_multiple: np.ndarray  # the hoop bar diameter times this also limits the spacing (18.4.2.4(c))
    throughout: np.ndarray  # stirrups at every station (18.6.4.6, 18.4.2.5)

    def limit_for(self, db) -> np.ndarray:
        """The spacing limit with hoops of diameter ``db`` (per station or scalar)."""
        return np.minimum(self.limit, self.hoop_multiple * db)


@dataclass(frozen=True)
class FramePlan:
    stations: FrameStations
    candidates: Candidates
    reasons: dict[int, tuple[str, str]] = field(default_factory=dict)  # member -> (status, message)
    notes: dict[int, str] = field(default_factory=dict)  # member -> what Chapter 18 did, for its message
    warnings: list[str] = field(default_factory=list)

    def unless_refused(self, why_deep: np.ndarray) -> np.ndarray:
        """The deep-beam reasons of 9.9.1.1, cleared for the frame beams refused here: a special-
        frame beam shorter than 4d fails 18.6.2.1, which is the reason to give."""
        out = why_deep.copy()
        out[list(self.reasons)] = ""
        return out

    @property
    def first_hoop_members(self) -> np.ndarray:
        """Per station: the first hoop within 50 mm | 2 in of each face applies (18.6.4.4, 18.4.2.4)."""
        return self.stations.code >= fr.INTERMEDIATE


def _labels(omega: float) -> tuple[str, ...]:
    """Names of the capacity-design candidates (short: the governing column of a terminal
    table holds them whole); the gravity part, 1.2D + 1.0L + 0.2S, is in every one."""
    return ("18.6.5.1 Ve (Mpr- i, Mpr+ j)", "18.6.5.1 Ve (Mpr+ i, Mpr- j)", "18.4.2.3(a) (Mn- i, Mn+ j)",
            "18.4.2.3(a) (Mn+ i, Mn- j)", f"18.4.2.3(b) {omega:.1f}E")


def plan(mb, rs, cand: Candidates, cset: combos.ComboSet, settings: Settings) -> FramePlan:
    """The Chapter 18 part of a batch of beams (``mb``: postproc.pipeline.beams.Members)."""
    fb: fr.FrameBeams = mb.frames
    grid, n, S = rs.grid, len(mb.names), len(rs.grid.x)
    code = fb.code[grid.member]
    zeros = np.zeros(S)
    st = FrameStations(code, np.zeros(S, np.int8), np.full(S, np.nan), zeros, np.zeros(S, bool), np.full(S, np.inf),
                       np.full(S, np.inf), np.zeros(S, bool))
    if not (fb.code > fr.NONE).any():
        return FramePlan(st, cand)
    clear, sec = mb.geo.clear_span, mb.sec
    reasons, notes, warnings = {}, {}, []
    problems = fr.member_problems(fb, clear, sec.b, sec.h, sec.d, sec.fc)
    for m in np.flatnonzero(problems != ""):
        reasons[m] = ("resize", f"{fr.NAMES[int(fb.code[m])]} moment frame: {problems[m]}; change the bars or the "
                                "section (Mn and Mpr, hence the design shear, follow the bars)")
    for m in np.flatnonzero((fb.code == fr.ORDINARY) & (problems == "")):
        notes[m] = ("ordinary moment frame (18.3): Chapters 9 and 22; 18.3.2: " +
                    ("two bars of db_long at each face" if fb.bars_given[m] else "not checked (no bars given)"))
    capacity = fb.capacity & (problems == "")
    if cset.prefactored:
        for m in np.flatnonzero(capacity):
            reasons[m] = ("invalid", f"{fr.NAMES[int(fb.code[m])]} moment frame: the capacity-design shear takes the "
                                     "gravity shear of 1.2D + 1.0L + 0.2S from the basic load cases (ACI 318-19 18.6.5.1, "
                                     "18.4.2.3); give cases.csv with the case types")
        capacity[:] = False
    mem = grid.member
    zone = np.where(capacity[mem], fr.hinge_zones(rs.x_clear, clear[mem], sec.h[mem]), 0).astype(np.int8)
    limit, hoop_multiple = fr.hoop_spacing_limits(np.where(capacity[mem], code, fr.NONE), zone, sec.d[mem],
                                                  fb.db_long[mem], fb.fy[mem], fb.u)
    st = replace(st, zone=zone, limit=limit, hoop_multiple=hoop_multiple, throughout=capacity[mem])
    sel = np.flatnonzero(capacity[mem])
    if not len(sel):
        return FramePlan(st, cand, reasons, notes, warnings)

    # gravity on the clear span as a simple beam, at each station itself (no 9.4.3.2 rule: Ve at the faces)
    v_raw = rs.at_station["V"][:, sel]
    v_ss = fr.gravity_without_end_moments(v_raw, mem[sel], rs.x_clear[sel], n)
    gravity = combos.seismic_gravity(cset, settings.combinations)
    gc = combos.candidates(gravity, {"V": v_ss}, signed=("V",), tension=None)
    g_max = np.maximum.reduceat(gc.values["V"], gc.bounds[:-1])
    g_min = np.minimum.reduceat(gc.values["V"], gc.bounds[:-1])
    reversed_sign = _reversed(v_ss, mem[sel], cset, n, units.system(fb.u.units))
    for m in np.flatnonzero(reversed_sign):
        warnings.append(f"member {mb.names[m]}: V < 0 near node i and V > 0 near node j under dead load, against the "
                        "sign convention (V = dM/dx, README): the capacity-design shear is taken as the largest "
                        "|gravity shear| plus the larger sway shear at every station (never less)")
    special = fb.code == fr.SPECIAL
    v1p, v2p = fr.sway_shears(fb, clear, probable=True)
    v1n, v2n = fr.sway_shears(fb, clear, probable=False)
    v1, v2 = np.where(special, v1p, v1n), np.where(special, v2p, v2n)
    m_sel = mem[sel]
    ve, ve_eq, sway = fr.capacity_shear(g_max, g_min, v1[m_sel], v2[m_sel], reversed_sign[m_sel])
    label = np.where(special[m_sel], sway, 2 + sway).astype(np.int64)

    inter = ~special[m_sel]
    vb = np.full(len(sel), np.nan)
    amplified = combos.amplified_earthquake(cset, settings.frames.omega_o)
    if inter.any() and amplified.rows:  # 18.4.2.3(b): the largest |V| of the E combinations with Omega_o E
        ac = combos.candidates(amplified, {"V": rs.case_values["V"][:, sel]}, signed=("V",), tension=None)
        vb = np.maximum.reduceat(np.abs(ac.values["V"]), ac.bounds[:-1])
        use_b = inter & (vb < ve)
        ve = np.where(use_b, vb, ve)
        ve_eq = np.where(use_b, np.nan, ve_eq)
        label = np.where(use_b, 4, label)
    elif inter.any():
        for m in np.unique(m_sel[inter]):
            warnings.append(f"member {mb.names[m]}: intermediate moment frame without earthquake cases: 18.4.2.3(b) "
                            "cannot be evaluated; phi*Vn is held to (a), the shear from Mn at both ends")

    # Vc = 0 over the hinge zones of special frames (18.6.5.2): the least compression of each station
    tension = np.maximum.reduceat(cand.values["N"], cand.bounds[:-1]) if len(cand) else np.zeros(S)
    zero_zone = np.where(special[m_sel], zone[sel], 0)
    vc_zero = np.zeros(S, bool)
    vc_zero[sel] = fr.vc_zero_zones(zero_zone, m_sel, n, ve, np.nan_to_num(ve_eq), -tension[sel], sec.Ag, sec.fc)
    ve_all, eq_all = np.full(S, np.nan), np.zeros(S)
    ve_all[sel], eq_all[sel] = ve, np.nan_to_num(ve_eq)
    st = replace(st, ve=ve_all, ve_eq=eq_all, vc_zero=vc_zero)

    t_max = np.maximum.reduceat(np.abs(cand.values["T"]), cand.bounds[:-1]) if "T" in cand.values else np.zeros(S)
    extra = {"V": ve, "N": tension[sel], "T": t_max[sel]}
    merged = _append(cand, sel, extra, len(cset.rows) + label, len(cset.rows), _labels(settings.frames.omega_o))
    for m in np.unique(m_sel):
        notes[m] = _note(fb, m, mb, sel, m_sel, ve, label, zone, vc_zero, settings)
    return FramePlan(st, merged, reasons, notes, warnings)


def _reversed(v_ss, member, cset, n, U: units.UnitSystem) -> np.ndarray:
    """Per member: under dead load alone the simple-beam shear is negative at face i and
    positive at face j, the opposite of the sign convention (V = dM/dx)."""
    dead = [k for k, c in enumerate(cset.cases) if cset.types.get(c) == "D"]
    out = np.zeros(n, bool)
    if not dead:
        return out
    vd = v_ss[dead].sum(axis=0)
    first = np.r_[True, member[1:] != member[:-1]]
    last = np.r_[member[1:] != member[:-1], True]
    scale = np.zeros(n)
    np.maximum.at(scale, member, np.abs(vd))
    tol = 1e-3 * scale + 1e-3 * U.per_force  # 1 N | 1 lb
    bad_i = np.zeros(n, bool)
    bad_j = np.zeros(n, bool)
    bad_i[member[first]] = vd[first] < -tol[member[first]]
    bad_j[member[last]] = vd[last] > tol[member[last]]
    return bad_i & bad_j


def _append(cand: Candidates, stations: np.ndarray, values: dict, rows: np.ndarray, first_extra: int,
            names: tuple[str, ...]) -> FrameCandidates:
    """``cand`` with one more candidate at each of ``stations``, kept grouped by station."""
    station = np.concatenate([cand.station, stations])
    order = np.argsort(station, kind="stable")
    no_terms = np.full((1, cand.choices.shape[1]), -1, np.int64)  # the appended ones are named by extra_names
    choice_at = np.concatenate([cand.choice_at, np.full(len(stations), len(cand.choices))])
    vals = {q: np.concatenate([v, values.get(q, np.zeros(len(stations)))])[order] for q, v in cand.values.items()}
    return FrameCandidates(station=station[order], row=np.concatenate([cand.row, rows])[order],
                           choice_at=choice_at[order], choices=np.concatenate([cand.choices, no_terms]),
                           values=vals, bounds=np.searchsorted(station[order], np.arange(len(cand.bounds))),
                           first_extra=first_extra, extra_names=names)


IN_SPAN_HINGES = ("not applied here: hoops over 2h each side of a section of likely yielding away from the ends "
                  "(18.6.4.1(b))")


def _vertical(settings: Settings) -> str:
    """What the gravity load of Ve took of a vertical earthquake effect (Ev = c D)."""
    c = settings.combinations.vertical_earthquake
    return (f"the gravity load of Ve with Ev = {c:g}D ([combinations] vertical_earthquake)" if c > 0 else
            "vertical earthquake effects not in the gravity load of Ve (1.2D + 1.0L + 0.2S; [combinations] "
            "vertical_earthquake)")


def _note(fb: fr.FrameBeams, m: int, mb, sel, m_sel, ve, label, zone, vc_zero, settings: Settings) -> str:
    """What Chapter 18 did for member m, for its members.csv message."""
    U, u = units.system(fb.u.units), fb.u
    mm, first = U.length, f"{u.first_hoop_max:g} {U.length}"
    mine = sel[m_sel == m]
    v, rule = ve[m_sel == m] / U.per_force, label[m_sel == m]
    h2 = float(aci.smf_beam_hoop_zone_length(mb.sec.h[m]))
    kn = lambda a: f"{a / U.per_moment:,.0f}"  # noqa: E731
    if fb.code[m] == fr.SPECIAL:
        zero = [end for end, z in (("i", 1), ("j", 2)) if vc_zero[mine][zone[mine] == z].any()]
        return (f"special moment frame (18.6): Ve = {v[0]:,.1f} / {v[-1]:,.1f} {U.force} at faces i / j from Mpr- "
                f"{kn(fb.mpr_neg_i[m])} / {kn(fb.mpr_neg_j[m])} and Mpr+ {kn(fb.mpr_pos_i[m])} / {kn(fb.mpr_pos_j[m])} "
                f"{U.moment} (18.6.5.1); hoops over 2h = {h2:,.0f} {mm} from each face, the first within {first} "
                "(18.6.4)"
                + (f"; Vc = 0 there at end {' and '.join(zero)} (18.6.5.2)" if zero else
                   "; Vc kept: 18.6.5.2 (a) or (b) not met") + f"; {IN_SPAN_HINGES}; {_vertical(settings)}")
    which = lambda r: "(b)" if r == 4 else "(a)"
    return (f"intermediate moment frame (18.4.2): phi*Vn >= the lesser of (a) from Mn and (b) with Omega_o = "
            f"{settings.frames.omega_o:g}: {v[0]:,.1f} / {v[-1]:,.1f} {U.force} at faces i / j, {which(rule[0])} / "
            f"{which(rule[-1])} the lesser (18.4.2.3); hoops over 2h = {h2:,.0f} {mm} from each face, the first within "
            f"{first} (18.4.2.4); {_vertical(settings).replace('Ve', '(a)')}")
