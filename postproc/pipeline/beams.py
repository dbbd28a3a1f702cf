"""Beams (ACI 318-19 Chapters 9 and 22): the family steps of the batch pipeline.

geometry -> (shared resample, candidates) -> demand -> deep regions -> options -> layout ->
provided -> check -> records. The members 9.9.1.1 flags go to the strut-and-tie step
(postproc.pipeline.deep) after the demand; its regions join the layout and the checks.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd
import pyarrow as pa

from postproc import detailing, stations
from postproc.codes import aci318_19 as aci
from postproc.demand import beams as demand
from postproc.demand import lateral
from postproc.demand import frames as fr
from postproc.pipeline import (BatchOutput, MemberGeometry, Resampled, SelfCheckError, edition, frame_beams, governing,
                               row, unit_system)
from postproc.pipeline import deep as deep_step
from postproc.settings import Settings

KINDS = ("beam",)
USES_VB = True  # beams are designed for V (parallel to h); Vb, where given, is checked with those stirrups
SIGNED = ("V", "Vb", "T")  # quantities whose sign does not matter to the demand (|Vu|, |Vb|, |Tu|)


@dataclass(frozen=True)
class Members(MemberGeometry):
    """Step 1, geometry: per-member arrays."""

    sec: demand.Section
    free_i: np.ndarray
    free_j: np.ndarray
    frames: fr.FrameBeams  # moment frames of Chapter 18: Mn, Mpr of the faces (postproc.demand.frames)


@dataclass(frozen=True)
class Options:
    """The ladder's (bar, legs) choices, per member: legs, bar area, Aoh, ph."""

    bars: list[str]
    legs: np.ndarray  # (K, members)
    area: np.ndarray  # (K,)
    db: np.ndarray  # (K,)
    Aoh: np.ndarray  # (K, members)
    ph: np.ndarray  # (K, members)


@dataclass(frozen=True)
class Layouts:
    """Step 5: the chosen option and stirrup positions of each member that has one."""

    option: np.ndarray  # per member: ladder index, -1 where not laid out
    layouts: dict[int, detailing.Layout]
    reasons: dict[int, tuple[str, str]]  # member -> (status, message) where not designed
    stirrups_here: np.ndarray  # per station: stirrups are placed there (needed, or throughout)
    allowed: np.ndarray  # per station: the allowed spacing for the chosen option (inf: none needed)
    stirrups: detailing.Stirrups  # the positions of every laid-out member, one array


def _geometry(bm: pd.DataFrame, settings: Settings) -> Members:
    """Step 1: per-member arrays in the run's internal units, from the columns of its unit system."""
    U = unit_system(settings)
    c = lambda si_name: bm[U.col(si_name)]  # noqa: E731
    g = stations.Geometry(
        length=c("length_m").to_numpy() * U.per_span, face_i=c("face_i_mm").to_numpy(), face_j=c("face_j_mm").to_numpy(),
        d=c("d_mm").to_numpy(), h=c("h_mm").to_numpy(), support_i=bm["support_i"].to_numpy(object),
        support_j=bm["support_j"].to_numpy(object), load_top=(bm["load_face"] == "top").to_numpy())
    sec = demand.section_from_members(
        b=c("b_mm").to_numpy(float), h=g.h, d=g.d, fc=c("fc_mpa").to_numpy(), fyt=c("fyt_mpa").to_numpy(),
        lam=bm["lambda"].to_numpy(), fy=c("fy_mpa").to_numpy(), As=c("as_tension_mm2").to_numpy(float),
        bf=c("bf_mm").to_numpy(float), hf=c("hf_mm").to_numpy(float), u=edition(settings))
    return Members(bm["member"].to_numpy(object), g, sec, g.support_i == "free", g.support_j == "free",
                   fr.frame_beams(bm, U))


def _here(dem: demand.Demand, st, fp: frame_beams.FramePlan) -> np.ndarray:
    """Stations where stirrups are placed: where needed, where the settings put them throughout,
    and along frame beams (18.6.4.6, 18.4.2.5)."""
    return dem.stirrups_needed | st.stirrups_throughout | fp.stations.throughout


def _options(mb: Members, dem: demand.Demand, grid: stations.Grid, st, fp: frame_beams.FramePlan) -> Options:
    """Every ladder choice for every member: legs enough for the spacing across the width
    (Table 9.7.6.2.2) where stirrups are needed and for the bar support of special-frame
    hoops (18.6.4.2), and the torsion geometry of that bar."""
    here = _here(dem, st, fp)
    across = np.full(len(mb.names), np.inf)
    np.minimum.at(across, grid.member[here], dem.s_max_across[here])
    bars = [bar for bar, _ in st.ladder]
    db = np.array([st.bars[b][0] for b in bars])
    legs = np.array([[max(base, detailing.legs_for_width(b, st.clear_cover, dbk, a)) if np.isfinite(a) else base
                      for b, a in zip(mb.sec.b, across)] for (_, base), dbk in zip(st.ladder, db)], dtype=float)
    legs = np.maximum(legs, [fr.legs_for_bar_support(mb.frames, mb.sec.b, st.clear_cover, dbk, mb.sec.u) for dbk in db])
    geo = [demand.torsion_geometry(mb.sec.b, mb.sec.h, st.clear_cover, dbk) for dbk in db]
    return Options(bars, legs, np.array([st.bars[b][1] for b in bars]), db,
                   np.array([a for a, _ in geo]), np.array([p for _, p in geo]))


def _allowed_spacing(k: int, opt: Options, dem: demand.Demand, cand, grid: stations.Grid, here, module,
                     fp: frame_beams.FramePlan) -> np.ndarray:
    """Per station, the largest spacing on the module that option k admits (inf: none needed),
    within the hoop and stirrup limits of frame beams (18.6.4.4, 18.6.4.6, 18.4.2.4, 18.4.2.5)."""
    mem = grid.member
    s = demand.allowed_spacing(cand, dem, opt.legs[k][mem], opt.area[k], opt.Aoh[k][mem], opt.ph[k][mem], here)
    s = np.minimum(s, fp.stations.limit_for(opt.db[k]))
    return detailing.floor_to_module(s, module)


def _layout(mb: Members, rs: Resampled, cand, dem: demand.Demand, opt: Options, deep: np.ndarray,
            settings: Settings, fp: frame_beams.FramePlan, reg: deep_step.Regions) -> Layouts:
    """Step 5: the first ladder option that fits the minimum spacing and the torsion section
    limit (22.7.7.1, with that bar's Aoh and ph), then the stirrup positions of each member
    (frame beams: the first hoop within 50 mm | 2 in of each face, 18.6.4.4, 18.4.2.4). Inside a
    strut-and-tie region the model's spacing replaces the sectional one."""
    st, grid, n = settings.detailing, rs.grid, len(mb.names)
    U, u = unit_system(settings), mb.sec.u
    here = _here(dem, st, fp) | reg.station
    shear_bad = np.zeros(n, bool)
    np.logical_or.at(shear_bad, grid.member, (dem.shear_ratio > 1.0) & ~reg.station)
    starts = grid.offsets[:-1]
    allowed = np.full((len(opt.bars), len(grid.x)), np.inf)
    fits = np.zeros((len(opt.bars), n), bool)
    # the largest ratio of 22.7.7.1 per option, regions included; in a region torsion is refused
    # by the deep step, so it does not rule an option out
    ratios = demand.torsion_limit_ratio(mb.sec.take(grid.member), cand, dem, opt.Aoh[:, grid.member],
                                        opt.ph[:, grid.member])
    torsion_worst = np.maximum.reduceat(ratios, starts, axis=1)
    torsion_ok = np.maximum.reduceat(np.where(reg.station, 0.0, ratios), starts, axis=1) <= 1.0
    for k in range(len(opt.bars)):
        allowed[k] = _allowed_spacing(k, opt, dem, cand, grid, here, st.spacing_module, fp)
        if reg.station.any():
            allowed[k] = np.where(reg.station, deep_step.allowed_spacing(reg, opt.legs[k][grid.member], opt.area[k],
                                                                         st.spacing_module), allowed[k])
        fits[k] = np.minimum.reduceat(allowed[k], starts) >= st.min_spacing
    usable = fits & torsion_ok
    option = np.where(usable.any(axis=0), np.argmax(usable, axis=0), -1)
    layouts, reasons = {}, {}
    chosen = np.full(len(grid.x), np.inf)
    hoops = np.zeros(n, bool)
    hoops[grid.member[fp.first_hoop_members]] = True
    first_at = U.col("first_stirrup_mm")  # the settings' own field: first_stirrup_mm | first_stirrup_in
    st_hoops = replace(st, first_stirrup="fixed", **{first_at: min(
        st.first_stirrup_at if st.first_stirrup == "fixed" else u.first_hoop_max, u.first_hoop_max)})
    for m in range(n):
        if deep[m] or shear_bad[m] or m in fp.reasons:
            option[m] = -1
        elif option[m] < 0:
            sl = slice(grid.offsets[m], grid.offsets[m + 1])
            if not torsion_ok[:, m].any():
                reasons[m] = ("resize", _torsion_message(opt, torsion_worst, m))
            else:
                tight = [f"{opt.bars[j]} x{int(opt.legs[j][m])} legs at {allowed[j][sl].min():g} {U.length}"
                         for j in range(len(opt.bars)) if torsion_ok[j, m]]
                reasons[m] = ("resize", f"no (bar, legs) of the ladder works at the {st.min_spacing:g} {U.length} "
                                        f"minimum spacing: {'; '.join(tight)}")
    todo = np.flatnonzero(option >= 0)
    laid_out = option[grid.member] >= 0  # per station
    chosen[laid_out] = allowed[option[grid.member[laid_out]], np.flatnonzero(laid_out)]
    got = detailing.layout_positions_batch(rs.x_clear, chosen, grid.offsets, todo, mb.geo.clear_span, mb.free_i,
                                           mb.free_j, st, hoops, st_hoops)
    for m in todo:
        if isinstance(got[m], str):
            option[m] = -1
            reasons[m] = ("resize", got[m])
            chosen[grid.offsets[m]:grid.offsets[m + 1]] = np.inf
            continue
        positions, empty, note = got[m]
        layouts[m] = detailing.Layout(opt.bars[option[m]], int(opt.legs[option[m]][m]), positions, empty, note)
    reasons = dict(sorted(reasons.items()))  # member by member, as the records read them
    return Layouts(option, layouts, reasons, here, chosen, detailing.Stirrups.gather(layouts, n))


def _torsion_message(opt: Options, torsion_worst: np.ndarray, m: int) -> str:
    best = int(np.argmax(opt.Aoh[:, m]))
    ratio = torsion_worst[best, m]
    return (f"Vu and Tu exceed the cross-sectional limit of 22.7.7.1(a) (ratio {ratio:.2f} with {opt.bars[best]} "
            "stirrups): enlarge the section (the limit grows with bw*d and with Aoh^2/ph) or raise f'c; "
            "more stirrups do not help")


@dataclass(frozen=True)
class Provided:
    """Per station, what the layout provides (designed members only; elsewhere inf / 0)."""

    on: np.ndarray  # the station belongs to a designed member
    spacing: np.ndarray
    legs: np.ndarray
    area: np.ndarray
    Aoh: np.ndarray
    ph: np.ndarray
    leg_gap: np.ndarray


def _provided(mb: Members, rs: Resampled, opt: Options, lay: Layouts, st) -> Provided:
    grid = rs.grid
    on = lay.option[grid.member] >= 0
    k = np.maximum(lay.option, 0)[grid.member]
    cols = grid.member
    sp = lay.stirrups  # members not laid out have none: inf there
    spacing = detailing.provided_spacing_batch(sp.x, sp.offsets, mb.geo.clear_span, grid.member, rs.x_clear,
                                               detailing.jump_sides(grid.member, grid.x, grid.side))
    legs = np.where(on, opt.legs[k, cols], 0.0)
    leg_gap = detailing.leg_spacing(mb.sec.b[cols], st.clear_cover, opt.db[k], np.maximum(legs, 1))
    return Provided(on, spacing, legs, np.where(on, opt.area[k], 0.0), opt.Aoh[k, cols], opt.ph[k, cols], leg_gap)


def _check(mb: Members, rs: Resampled, cand, dem: demand.Demand, prov: Provided, lay: Layouts,
           settings: Settings, opt: Options, fp: frame_beams.FramePlan, reg: deep_step.Regions) -> demand.Capacity:
    """Step 6, the self-check: every station of every designed member, every candidate
    combination (the capacity-design one of frame beams with it, Vc = 0 where 18.6.5.2
    says so), the spacing limits of frame beams with the chosen hoop bar, the first hoop
    within 50 mm | 2 in of each face, and every gap between stirrups against the practical minimum.
    Stations inside a strut-and-tie region are checked against the model (deep_step.check)."""
    sec = mb.sec.take(rs.grid.member)
    dem = replace(dem, s_max=np.minimum(dem.s_max, fp.stations.limit_for(opt.db[np.maximum(lay.option, 0)][rs.grid.member])))
    cap = demand.check_layout(sec, cand, dem, prov.area, prov.legs, prov.spacing, prov.Aoh, prov.ph, prov.leg_gap,
                              lay.stirrups_here)
    per_option = np.array([fr.legs_for_bar_support(mb.frames, mb.sec.b, settings.detailing.clear_cover, dbk, mb.sec.u)
                           for dbk in opt.db])  # (K, members): 18.6.4.2
    support_legs = per_option[np.maximum(lay.option, 0), np.arange(len(mb.names))]
    short = prov.on & (prov.legs < support_legs[rs.grid.member])
    if short.any():
        m = rs.grid.member[np.flatnonzero(short)[0]]
        raise SelfCheckError(f"hoops of member {mb.names[m]} have fewer legs than 18.6.4.2 asks "
                             f"({int(support_legs[m])})")
    bad = prov.on & ~cap.ok & ~reg.station
    mm, slack = unit_system(settings).length, settings.detailing.gap_slack
    if bad.any():
        k = np.flatnonzero(bad)[0]
        m = rs.grid.member[k]
        raise SelfCheckError(f"layout of member {mb.names[m]} fails its self-check at x = {rs.x_clear[k]:.0f} {mm} "
                             f"(utilization {cap.utilization[k]:.3f}, s = {prov.spacing[k]:g} {mm}, "
                             f"s_max = {dem.s_max[k]:g} {mm})")
    smin = settings.detailing.min_spacing
    hoop_max = mb.sec.u.first_hoop_max
    sp, span = lay.stirrups, mb.geo.clear_span
    has = sp.counts > 0
    first_x, last_x, least_gap = sp.extents()
    one_zone = np.array(["one zone throughout" in lay.layouts[m].message if m in lay.layouts else False
                         for m in range(len(span))], bool)
    first = hoop_max + slack
    hoops = fp.first_hoop_members[rs.grid.offsets[:-1]] if len(rs.grid.x) else np.zeros(len(span), bool)
    with np.errstate(invalid="ignore"):
        outside = has & ((first_x <= 0) | (last_x >= span))
        far = has & hoops & ((first_x > first) | (span - last_x > first))
        close = (least_gap < smin - slack) & ~one_zone
    for m in np.flatnonzero(outside | far | close)[:1]:  # the first failing member, as the member loop finds it
        x = sp.x[sp.offsets[m]:sp.offsets[m + 1]]
        if outside[m]:
            raise SelfCheckError(f"stirrups of member {mb.names[m]} run outside its clear span "
                                 f"({x[0]:g} to {x[-1]:g} {mm} of {span[m]:g} {mm})")
        if far[m]:
            raise SelfCheckError(f"hoops of member {mb.names[m]} start {x[0]:g} {mm} and "
                                 f"{span[m] - x[-1]:g} {mm} from the faces, more than {hoop_max:g} {mm} "
                                 "(18.6.4.4, 18.4.2.4)")
        raise SelfCheckError(f"stirrups of member {mb.names[m]} are {least_gap[m]:g} "
                             f"{mm} apart, under the {smin:g} {mm} minimum")
    return cap


def _records(mb: Members, rs: Resampled, cset, cand, dem: demand.Demand, opt: Options, lay: Layouts,
             prov: Provided, cap: demand.Capacity | None, why_deep: np.ndarray, settings: Settings,
             fp: frame_beams.FramePlan, reg: deep_step.Regions, region_util: np.ndarray):
    """Step 7: members.csv rows, zones.csv rows, stirrup positions and the station trace.
    The sectional utilization leaves out the stations of strut-and-tie regions."""
    st, grid, n = settings.detailing, rs.grid, len(mb.names)
    U, u = unit_system(settings), mb.sec.u
    fs = fp.stations
    p = dem.pairs
    cs = cand.station
    k_ref = np.where(lay.option >= 0, lay.option, int(np.argmax(opt.Aoh.mean(axis=1))))  # bar for undesigned
    # per candidate: the utilization it produces (provided layout, else the section limits)
    if cap is not None:
        pair_u = np.where(prov.on[cs], np.maximum(cap.pair_utilization, p.shear_ratio), p.shear_ratio)
        with np.errstate(divide="ignore", invalid="ignore"):
            tie = np.where(prov.on[cs], np.where(cap.phi_vn > 0, p.vu / cap.phi_vn, 0.0), p.vu)
    else:
        pair_u, tie = p.shear_ratio, p.vu
    if p.torsion.any():  # the section limit with torsion (22.7.7.1), where no layout is provided
        t_ = np.flatnonzero(p.torsion & ~prov.on[cs])
        mt = grid.member[cs[t_]]
        s_ = mb.sec.take(mt)
        tr = aci.torsion_section_ok(p.vu[t_], p.tu[t_], p.vc_hi[t_], s_.fc, s_.b, s_.d, opt.Aoh[k_ref[mt], mt],
                                    opt.ph[k_ref[mt], mt], u)
        pair_u = pair_u.copy()
        pair_u[t_] = np.maximum(pair_u[t_], tr)
    pair_u = np.where(reg.station[cs], 0.0, pair_u)
    gov_station = governing(pair_u, tie, cand.bounds)  # per station: its governing candidate
    station_util = pair_u[gov_station]
    member_bounds = cand.bounds[grid.offsets]
    gov_member = gov_station[governing(station_util, tie[gov_station], grid.offsets)]  # per member: its stations'
    # winners
    names_gov = cand.names(cset, np.concatenate([gov_station, gov_member]))
    name_station, name_member = names_gov[:len(gov_station)], names_gov[len(gov_station):]

    has_min = np.zeros(len(cs), bool)
    if cap is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            av_prov = np.where(prov.on & np.isfinite(prov.spacing), prov.legs * prov.area / prov.spacing, 0.0)
        has_min = (av_prov >= dem.av_min_s * (1 - 1e-9))[cs] & prov.on[cs]
    vc_used = np.where(has_min, p.vc_hi, np.where(prov.on[cs], p.vc_lo, p.vc_hi))
    # what is reported of a candidate, for the governing ones alone (of each station, then of each member)
    shown = np.concatenate([gov_station, gov_member])
    sec_p = mb.sec.take(grid.member[cs[shown]])
    p_shown = p.take(shown)
    limit = aci.section_limit(p_shown.vc_hi, sec_p.fc, sec_p.b, sec_p.d, u)
    eq = _vc_equation(sec_p, p_shown, (has_min | ~prov.on[cs])[shown], fs.vc_zero[cs[shown]])
    limit_station, limit_member = limit[:len(gov_station)], limit[len(gov_station):]
    eq_station, eq_member = eq[:len(gov_station)], eq[len(gov_station):]
    al = np.zeros(len(cs))  # Al where torsion is considered (22.7.6.1, 9.6.4.3)
    t_ = np.flatnonzero(p.torsion)
    mt = grid.member[cs[t_]]
    s_ = mb.sec.take(mt)
    al[t_] = aci.al_required(p.ata[t_] / opt.Aoh[k_ref[mt], mt], opt.ph[k_ref[mt], mt], s_.fyt, s_.fy, s_.fc, s_.Acp,
                             s_.b, u)
    al_member = np.maximum.reduceat(al, member_bounds[:-1]) if len(al) else np.zeros(n)

    rows = []
    first_st, last_st = grid.offsets[:-1], grid.offsets[1:] - 1
    per_force, per_moment, nd = U.per_force, U.per_moment, st.position_decimals  # table units; decimals of mm (in)
    area_nd = 0 if U.name == "si" else 2  # mm^2 whole, in^2 to 0.01
    j = gov_member
    member_values = dict(  # members.csv values of every member (numpy rounding where the values are numpy's)
        crit_i=list(rs.rules.crit_i), crit_j=list(rs.rules.crit_j),
        vu_design_i_kN=list(np.round(dem.vu_max[first_st] / per_force, 2)),
        vu_design_j_kN=list(np.round(dem.vu_max[last_st] / per_force, 2)),
        governing_case=list(name_member), phi_vc_kN=list(np.round(aci.PHI_SHEAR * vc_used[j] / per_force, 2)),
        phi_vn_limit_kN=list(np.round(limit_member / per_force, 2)),
        utilization=[round(v, 3) for v in pair_u[j].tolist()],
        x_governing_mm=[round(v, nd) for v in rs.x_clear[cs[j]].tolist()], vu_kN=list(np.round(p.vu[j] / per_force, 2)),
        nu_kN=list(np.round(p.nu[j] / per_force, 2)), tu_kNm=list(np.round(p.tu[j] / per_moment, 3)),
        vc_equation=list(eq_member),
        al_torsion_mm2=[round(v, area_nd) if v > 0 else None for v in al_member.tolist()])
    keys = list(member_values)
    needs_closed = (np.logical_or.reduceat(dem.torsion | fs.throughout, first_st) if n else np.zeros(0, bool))
    set_masses: dict[tuple, float] = {}  # one stirrup set's mass per (b, h, bar, legs, closed)
    designed = np.zeros(n, bool)
    for m, values in enumerate(zip(*member_values.values())):
        common = dict(zip(keys, values))
        name = mb.names[m]
        if why_deep[m]:
            rows.append(row(name, "deep-beam", why_deep[m], **common))
            continue
        if lay.option[m] < 0:
            sl = slice(grid.offsets[m], grid.offsets[m + 1])
            ratio = float(np.where(reg.station[sl], 0.0, dem.shear_ratio[sl]).max())
            status = "resize"
            if m in fp.reasons:
                status, msg = fp.reasons[m]
            elif ratio > 1.0:
                bd = float(mb.sec.b[m] * mb.sec.d[m]) * ratio
                msg = (f"Vu exceeds the section limit of 22.5.1.2 (ratio {ratio:.2f}"
                       + (", Vc = 0 by 18.6.5.2" if fs.vc_zero[sl].any() else "")
                       + f"); needs bw*d of about {bd:,.0f} {U.area}")
            else:
                msg = lay.reasons[m][1]
            rows.append(row(name, status, msg, **common))
            continue
        designed[m] = True
        layout = lay.layouts[m]
        # closed where torsion acts (25.7.1.6) and in frame beams (hoops; stirrups with seismic hooks, 18.6.4.6)
        closed = st.stirrup_shape == "closed" or bool(needs_closed[m])
        key = (float(mb.sec.b[m]), float(mb.geo.h[m]), layout.bar, layout.legs, closed)
        if key not in set_masses:
            set_masses[key] = detailing.set_mass(detailing.stirrup_set(
                float(mb.sec.b[m]), mb.geo.h[m], st.clear_cover, layout.bar, layout.legs, closed, st.open_hook_deg, u),
                u)
        mass = layout.count * set_masses[key]
        message = "; ".join(filter(None, [layout.message, fp.notes.get(m, "")]))
        if al_member[m] > 0:
            message = "; ".join(filter(None, [message, f"torsion: add Al = {al_member[m]:,.{area_nd}f} {U.area} of "
                                                      "longitudinal bars around the perimeter (22.7.6.1, 9.6.4.3, "
                                                      "9.7.5)"]))
        rows.append(row(name, "designed", message, stirrups_total=layout.count, stirrup_mass_kg=round(mass, 2),
                         **common))
    hinged = np.logical_or.reduceat(fs.zone > 0, first_st) if n else np.zeros(0, bool)
    zones, stirrups = _zone_rows(mb, lay, designed, hinged, st.same_gap, nd)

    g = gov_station
    k_st = k_ref[grid.member]
    Aoh_st, ph_st = opt.Aoh[k_st, grid.member], opt.ph[k_st, grid.member]
    largest_v = governing(p.vu, None, cand.bounds)
    on = prov.on
    with np.errstate(divide="ignore", invalid="ignore"):
        av_prov = np.where(on & np.isfinite(prov.spacing), prov.legs * prov.area / prov.spacing,
                           np.where(on, 0.0, np.nan))
    sec_st = mb.sec.take(grid.member)
    take = lambda values, idx: pa.array(list(values), pa.string()).take(pa.array(idx))  # strings built in Arrow
    columns = {
        "member": take(mb.names, grid.member), "x_mm": np.round(rs.x_clear, nd + 1), "side": grid.side,
        "governing_case": pa.array(list(name_station), pa.string()), "vu_kN": p.vu[g] / per_force,
        "vu_max_kN": dem.vu_max / per_force, "nu_kN": p.nu[g] / per_force, "tu_kNm": p.tu[g] / per_moment,
        "phi_vc_kN": aci.PHI_SHEAR * vc_used[g] / per_force,
        # phi*Vn of the combination with the largest Vu, so that it compares with vu_max
        "phi_vn_kN": np.where(on, cap.phi_vn[largest_v] if cap is not None else np.nan, np.nan) / per_force,
        "phi_vn_limit_kN": limit_station / per_force,
        "avmin_threshold_kN": np.where(sec_st.avmin_exempt, aci.PHI_SHEAR * p.vc_lo[g],
                                       aci.av_min_threshold(sec_st.fc, sec_st.b, sec_st.d, sec_st.lam, u)) / per_force,
        "vc_equation": pa.array(list(eq_station), pa.string()),
        "av_s_req": p.av[g], "at_s_req": p.ata[g] / Aoh_st, "av_s_env": dem.av_env, "at_s_env": dem.ata_env / Aoh_st,
        "av_min_s": dem.av_min_s, "avmin_required": dem.minimum, "torsion": dem.torsion,
        "s_max_mm": np.minimum(np.where(dem.torsion, np.minimum(dem.s_max, aci.torsion_max_spacing(ph_st, u)), dem.s_max),
                               fs.limit_for(opt.db[k_st])),
        "s_allowed_mm": np.where(on, lay.allowed, np.nan),
        "spacing_mm": np.where(on, prov.spacing, np.nan), "av_s_prov": av_prov,
        "utilization": station_util,
        # Chapter 18 (postproc.pipeline.frame_beams): frame, capacity-design shear, hinge zone, Vc = 0
        "frame": take([fr.NAMES[c] for c in range(len(fr.NAMES))], fs.code.astype(np.int64)),
        "ve_kN": fs.ve / per_force, "ve_eq_kN": fs.ve_eq / per_force, "hinge_zone": fs.zone, "vc_zero": fs.vc_zero,
    }
    trace = pa.table(deep_step.station_columns(reg, columns, region_util, sec_st.b, per_force))
    return rows, zones, trace, stirrups


def _zone_rows(mb: Members, lay: Layouts, designed: np.ndarray, hinged: np.ndarray, same_gap: float,
               nd: int) -> tuple[list[dict], pd.DataFrame]:
    """zones.csv rows and the stirrup positions of the designed members, for the whole batch at
    once. In frame beams (``hinged``) the stirrups of the hinge zones at each end are hoops (up
    to and including the first at or beyond 2h from the face, so that the hoops span 2h,
    18.6.4.1, 18.4.2.4), the rest stirrups; zones are derived from the positions of each part
    on its own (hoops throughout where the hoop zones meet)."""
    sp = lay.stirrups
    span, counts = mb.geo.clear_span, sp.counts
    mine = designed[sp.member]
    x, member = sp.x[mine], sp.member[mine]
    if not designed.any():
        return [], pd.DataFrame(columns=["member", "x_mm"])
    stirrups = pd.DataFrame({"member": mb.names[member], "x_mm": x})
    # each designed member's parts: (first stirrup, last + 1, kind, whether its hole applies)
    hinge = 2.0 * mb.geo.h
    n_lt = np.bincount(member[x < (hinge - 1e-6)[member]], minlength=len(span))  # searchsorted(x, 2h - 1e-6)
    n_le = np.bincount(member[x <= (span - hinge + 1e-6)[member]], minlength=len(span))
    last_i = np.minimum(n_lt, counts - 1)  # the first hoop at or beyond 2h from face i
    first_j = np.maximum(n_le - 1, 0)
    split = hinged & (counts > 0)
    three = split & (first_j > last_i + 1)
    lo0 = sp.offsets[:-1]
    parts = []  # (member, start, stop, kind code, order)
    plain = designed & ~split
    hoops_all = designed & split & ~three
    for sel, start, stop, kind, order in (
            (plain, lo0, sp.offsets[1:], 0, 0), (hoops_all, lo0, sp.offsets[1:], 1, 0),
            (three & designed, lo0, lo0 + last_i + 1, 1, 0), (three & designed, lo0 + last_i + 1, lo0 + first_j, 0, 1),
            (three & designed, lo0 + first_j, sp.offsets[1:], 1, 2)):
        m = np.flatnonzero(sel)
        parts.append((m, start[m], stop[m], np.full(len(m), kind), np.full(len(m), order)))
    pm, p0, p1, pk, po = (np.concatenate([p[c] for p in parts]) for c in range(5))
    order = np.lexsort((po, pm))
    pm, p0, p1, pk = pm[order], p0[order], p1[order], pk[order]
    own_hole = (pk == 0) & plain[pm]
    # the parts of each member follow each other and cover its stirrups: together, x
    zb = detailing.zones_batch(x, np.r_[0, np.cumsum(p1 - p0)], span[pm],
                               np.where(own_hole, sp.hole_lo[pm], np.nan), np.where(own_hole, sp.hole_hi[pm], np.nan),
                               same_gap)
    zm = pm[zb.group]
    first_of = np.r_[True, zm[1:] != zm[:-1]]
    number = np.arange(len(zm)) - np.maximum.accumulate(np.where(first_of, np.arange(len(zm)), 0)) + 1
    kinds = np.array(["stirrup", "hoop"], dtype=object)[pk[zb.group]]
    bars = {m: (lay.layouts[m].bar, lay.layouts[m].legs) for m in np.unique(zm).tolist()}
    names = mb.names
    zones = []
    for m, z, a, b, s, c, kind in zip(zm.tolist(), number.tolist(), zb.start.tolist(), zb.end.tolist(),
                                      zb.spacing.tolist(), zb.count.tolist(), kinds):
        bar, legs = bars[m]
        zones.append(dict(member=names[m], zone=z, start_mm=round(a, nd), end_mm=round(b, nd), bar=bar if c else "",
                          legs=legs if c else 0, spacing_mm=round(s, nd) if math.isfinite(s) else None, count=c,
                          kind=kind))
    return zones, stirrups


# what gave Vc, by code: Table 22.5.5.1 rows (a), (b), (c); the 22.5.5.1.1 cap; zero under axial
# tension (22.5.5.1); zero by 18.6.5.2 in the hinge zones of special-frame beams
_VC_ROWS = np.array(["22.5.5.1(a)", "22.5.5.1(b)", "22.5.5.1(c)", "22.5.5.1.1 cap", "Vc = 0 (axial tension)",
                     "Vc = 0 (18.6.5.2)"], dtype=object)


def _vc_equation(sec: demand.Section, p: demand.PairDemand, with_min: np.ndarray,
                 vc_zero: np.ndarray | None = None) -> np.ndarray:
    """Which row of Table 22.5.5.1 gave Vc (or its 22.5.5.1.1 cap, zero under tension, or
    zero by 18.6.5.2 in the hinge zones of special-frame beams)."""
    a = aci.vc_with_min_stirrups(sec.fc, sec.b, sec.d, p.nu, sec.Ag, sec.lam, u=sec.u)
    cap = aci.vc_cap(sec.fc, sec.b, sec.d, sec.lam, sec.u)
    vc = np.where(with_min, p.vc_hi, p.vc_lo)
    row = np.where(with_min, np.where(np.isclose(p.vc_hi, a, rtol=1e-9, atol=1e-6), 0, 1), 2).astype(np.int8)
    row[np.isclose(vc, cap, rtol=1e-9) & (vc > 0)] = 3
    row[vc <= 0] = 4
    if vc_zero is not None:
        row[np.asarray(vc_zero, bool)] = 5
    return _VC_ROWS[row]  # the text of each row once, gathered (object array of str)



def deep_beam_reasons(clear_span, h, d, cantilever, point_near_bearing) -> np.ndarray:
    """Why a member is not designed by the sectional method ('' where it is).

    Supported at both ends: clear span <= 4h (9.9.1.1(a)) or a concentrated load within
    2h of a bearing face (9.9.1.1(b)). A cantilever is not supported on the face opposite
    its load, so 9.9.1.1 does not apply; one shorter than d has bracket proportions
    (a_v/d < 1, 16.5.1.1) and is not designed here either.
    """
    span_rule = aci.is_deep_by_span(clear_span, h) & ~cantilever
    load_rule = point_near_bearing & ~cantilever & ~span_rule
    bracket = cantilever & (clear_span < d)
    out = np.full(len(clear_span), "", dtype=object)
    out[span_rule] = "clear span <= 4h (ACI 318-19 9.9.1.1(a)): design by strut-and-tie (Ch. 23), not sectionally"
    out[load_rule] = ("concentrated load within 2h of a bearing face (ACI 318-19 9.9.1.1(b)): "
                      "design by strut-and-tie (Ch. 23), not sectionally")
    out[bracket] = "cantilever shorter than d: bracket or corbel (ACI 318-19 16.5), not designed sectionally"
    return out




def design(mb: Members, rs: Resampled, cand, cset, settings: Settings) -> BatchOutput:
    """Demand, layout, self-check and records of a batch of beams."""
    sec_st = mb.sec.take(rs.grid.member)
    fp = frame_beams.plan(mb, rs, cand, cset, settings)  # Chapter 18: capacity-design candidates, hinge zones
    cand = fp.candidates
    dem = demand.required(sec_st, cand, vc_zero=fp.stations.vc_zero)
    dem = replace(dem, s_max=np.minimum(dem.s_max, fp.stations.limit))
    cantilever = mb.free_i | mb.free_j
    why_deep = deep_beam_reasons(mb.geo.clear_span, mb.geo.h, mb.geo.d, cantilever, rs.rules.point_load_near_bearing)
    why_deep = fp.unless_refused(why_deep)  # a frame beam failing Chapter 18 (18.6.2.1: ln >= 4d) says that first
    reg = deep_step.regions(mb, rs, cset, dem, why_deep, settings)
    not_here = np.where(reg.flagged, np.where(reg.skip(), reg.message, ""), why_deep)  # no layout: say why
    opt = _options(mb, dem, rs.grid, settings.detailing, fp)
    lay = _layout(mb, rs, cand, dem, opt, not_here != "", settings, fp, reg)
    prov = _provided(mb, rs, opt, lay, settings.detailing)
    cap = _check(mb, rs, cand, dem, prov, lay, settings, opt, fp, reg)
    cap, vb = _check_vb(mb, rs, cand, dem, opt, lay, prov, cap, settings, reg)
    region_util = deep_step.check(reg, prov, mb.names, rs, settings)
    rows, zones, trace, positions = _records(mb, rs, cset, cand, dem, opt, lay, prov, cap, not_here, settings, fp,
                                             reg, region_util)
    for r in rows:  # the shear parallel to b, where given
        r.update(vb.get(r["member"], {}))
    rows = deep_step.records(reg, rows, lay, region_util, rs, settings)
    return BatchOutput(rows, zones, trace, rs.warnings + fp.warnings, positions, reg.tables)


def _check_vb(mb: Members, rs: Resampled, cand, dem: demand.Demand, opt: Options, lay: Layouts, prov: Provided,
              cap: demand.Capacity, settings: Settings, reg: deep_step.Regions):
    """Vb (forces.csv Vb_kN, parallel to b), where given, checked with the stirrups laid out for V
    (postproc.demand.lateral): the interaction of both directions joins each candidate's utilization;
    inside a strut-and-tie region V is carried by the model (checked there), so Vb is checked alone;
    a beam whose stirrups do not suffice about the other axis is not designed, with the reason.
    Returns the capacity and, per member, its members.csv values for Vb."""
    vb = np.abs(cand.values.get("Vb", np.zeros(len(cand))))
    if not vb.any():
        return cap, {}
    U = unit_system(settings)
    grid, cs = rs.grid, cand.station
    mem = grid.member[cs]
    sec = mb.sec
    k = np.maximum(lay.option, 0)
    closed = np.full(len(mb.names), settings.detailing.stirrup_shape == "closed")
    np.logical_or.at(closed, grid.member, dem.torsion)  # 25.7.1.6
    legs_b = lateral.horizontal_legs(opt.legs[k, np.arange(len(k))].astype(int), closed)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio_v = np.where(prov.on[cs] & ~reg.station[cs], np.where(dem.pairs.vu > 0, dem.pairs.vu / cap.phi_vn, 0.0),
                           0.0)
    got = lateral.check(sec.b, sec.h, sec.d, sec.fc, sec.fyt, sec.lam, sec.Ag, vb, -cand.values["N"], ratio_v,
                        legs_b, opt.area[k], prov.spacing[cs], settings.columns.biaxial_shear, mb.sec.u, at=mem)
    on = prov.on[cs]
    bounds = cand.bounds[grid.offsets]
    out = {}
    for m in range(len(mb.names)):
        sl = slice(bounds[m], bounds[m + 1])
        if not vb[sl].any():
            continue
        first, last = grid.offsets[m], grid.offsets[m + 1] - 1
        at = lambda s: vb[cand.bounds[s]:cand.bounds[s + 1]].max(initial=0.0) / U.per_force  # noqa: E731
        laid_out = lay.option[m] >= 0  # a member without stirrups (not designed for V) has no Vb ratio to give
        out[mb.names[m]] = dict(vb_design_i_kN=round(at(first), 2), vb_design_j_kN=round(at(last), 2),
                                utilization_vb=round(float(got.ratio[sl].max()), 3) if laid_out else np.nan)
        bad = np.flatnonzero(got.fails[sl] & on[sl])
        if lay.option[m] >= 0 and len(bad):
            j = sl.start + bad[0]
            lay.option[m] = -1
            lay.reasons[m] = ("resize", f"{lateral.REASONS[got.reason[j]]} at x = {rs.x_clear[cs[j]]:,.0f} {U.length} "
                                        f"({vb[j] / U.per_force:,.1f} {U.force}): the stirrups are designed for V and "
                                        "checked for Vb, not designed for it")
    return replace(cap, pair_utilization=np.where(on, np.maximum(cap.pair_utilization, got.interaction),
                                                  cap.pair_utilization)), out


geometry = _geometry
signed = SIGNED
