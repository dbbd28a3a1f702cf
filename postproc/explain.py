"""The whole calculation of one member as a readable trace, each step with its clause.

Values come from the stored run (inputs, station trace, zones); the concrete and steel
terms at each zone's governing station are evaluated again with the same code
functions so that every number shown can be followed by hand. Every number is in the
run's unit system, and the equations quoted are those of its edition of ACI 318-19.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from postproc import detailing, stations
from postproc.demand import beams as demand
from postproc.demand import frames as fr
from postproc.codes import aci318_19 as aci
from postproc.govern import design_table
from postproc.settings import Settings, Stations
from postproc.store import Run, StoreError
from postproc.units import UnitSystem, si_keyed


@dataclass
class Step:
    title: str
    clause: str
    lines: list[str] = field(default_factory=list)


def _g(v) -> str:
    """A number given as read, to four significant digits at most (an SI value converted to
    inches reads 21.26, not 21.2598), never in exponent form above 1."""
    v = float(v)
    if not np.isfinite(v) or v == 0:
        return f"{v:g}"
    decimals = max(0, 3 - int(np.floor(np.log10(abs(v)))))
    text = f"{v:.{decimals}f}"
    return text.rstrip("0").rstrip(".") if decimals else text


def _fmt(v, unit="", nd=1) -> str:
    return "-" if v is None or (isinstance(v, float) and np.isnan(v)) else f"{v:,.{nd}f}{(' ' + unit) if unit else ''}"


def explain(run: Run, member: str, settings: Settings) -> list[Step]:
    U = run.units
    u = aci.edition(U.name)
    mm, mpa, kN = U.length, U.stress, U.force
    res = _keyed(design_table(run, "members")).set_index("member")
    if member not in res.index:
        raise StoreError(f"member '{member}' is not in run '{run.name}'")
    r = res.loc[member]
    steps = [Step("Status", "", [f"{member}: {r.status}" + (f" - {r.message}" if r.message else "")])]
    inputs = _keyed(run.members().to_pandas()).set_index("member")
    if member not in inputs.index:
        return steps
    m = inputs.loc[member]
    if m.get("kind") == "column":
        raw = run.members().to_pandas()
        return steps + _column(run, member, r, raw[raw.member == member].reset_index(drop=True), settings)
    ln = m.length_m * U.per_span - m.face_i_mm - m.face_j_mm
    fyt = min(m.fyt_mpa, u.fyt_max)
    rho = m.as_tension_mm2 / (m.b_mm * m.d_mm) if np.isfinite(m.as_tension_mm2) else np.nan
    steps.append(Step("Inputs", "", [
        f"bw = {_g(m.b_mm)} {mm}, h = {_g(m.h_mm)} {mm}, d = {_g(m.d_mm)} {mm}" +
        (f", flange {_g(m.bf_mm)} x {_g(m.hf_mm)} {mm}" if np.isfinite(m.bf_mm) else ""),
        f"f'c = {_g(m.fc_mpa)} {mpa}, sqrt(f'c) used = {float(aci.sqrt_fc(m.fc_mpa, u)):.3f} {mpa} (22.5.3.1), "
        f"lambda = {_g(m['lambda'])}",
        f"fyt = {_g(m.fyt_mpa)} {mpa}" + (f", {_g(fyt)} {mpa} used for shear (20.2.2.4)" if fyt < m.fyt_mpa else ""),
        "rho_w = " + (f"{rho:.4f} from As = {_g(m.as_tension_mm2)} {U.area}" if np.isfinite(rho) else
                      f"not given: Table 22.5.5.1(c) takes {float(aci.rho_w_lower_bound(m.fc_mpa, m.fy_mpa, u)):.4f}, "
                      "the As,min of 9.6.1.2"),
        f"length {_g(m.length_m)} {U.span}, faces {_g(m.face_i_mm)} / {_g(m.face_j_mm)} {mm}, clear span ln = {ln:,.0f} {mm}",
        f"supports: i {m.support_i}, j {m.support_j}; loads at the {m.load_face}",
        *([] if U.name == "si" else [f"units: {U.title}; the equations of {u.title}"]),
    ]))
    if r.status in ("no-forces", "not-covered", "invalid"):
        return steps
    steps.append(_combinations(run))
    f = run.forces_of(member)
    cases = sorted(set(f.column("case").to_pylist()))
    samples = stations.Samples.build(
        np.zeros(f.num_rows, np.int64), np.array([cases.index(c) for c in f.column("case").to_pylist()], np.int64),
        f.column(U.col("x_m")).to_numpy() * U.per_span, {"V": f.column(U.col("V_kN")).to_numpy() * U.per_force,
                                                         "T": f.column(U.col("T_kNm")).to_numpy() * U.per_moment},
        settings.stations.tolerance)
    steps.append(_point_loads(samples, cases, m, settings.stations, U))
    steps.append(_critical_sections(samples, m, r, settings.stations, U))
    method = r.get("method") if isinstance(r.get("method"), str) else ""
    stm_member = method.startswith("strut-and-tie")
    steps.append(Step("Deep beam", "9.9.1.1", [
        f"ln = {ln:,.0f} {mm} {'<=' if ln <= 4 * m.h_mm else '>'} 4h = {4 * m.h_mm:,.0f} {mm}"
        + ("" if r.status != "deep-beam" else f"; {r.message}")]
        + ([f"designed by {method}: the strut-and-tie steps follow"] if stm_member else [])))
    st = _keyed(design_table(run, "stations", member=member)).sort_values(["x_mm", "side"], kind="stable")
    st = st.reset_index(drop=True)
    region = st["stm_region"].fillna(False).to_numpy(bool) if "stm_region" in st else np.zeros(len(st), bool)
    if stm_member:
        steps += strut_and_tie_steps(run, member, U)
    if (~region).any():
        ratio = np.where(region, -np.inf, st.vu_max_kN.to_numpy() / st.phi_vn_limit_kN.to_numpy())
        k = int(np.argmax(ratio))
        steps.append(Step("Section limit", "22.5.1.2", [
            f"largest Vu / phi(Vc + {_g(u.vs_max)} sqrt(f'c) bw d) = {ratio[k]:.3f} "
            f"at x = {st.x_mm[k]:,.0f} {mm} (Vu = {_fmt(st.vu_max_kN[k], kN)}, limit {_fmt(st.phi_vn_limit_kN[k], kN)})"
            + (" (outside the strut-and-tie regions)" if region.any() else "")]))
    if "frame" in m.index and m.frame in ("ordinary", "intermediate", "special"):
        steps.append(_frame_step(run.members().to_pandas().set_index("member").loc[[member]].reset_index(), m, r, st,
                                 ln, settings, U))
    steps.append(_governing(r, U))
    if st.torsion.any():
        steps.append(_torsion(st, r, m, settings, U))
    if r.status != "designed":
        return steps
    zones = design_table(run, "zones")
    zones = _keyed(zones[zones.member == member].sort_values("zone"))
    sec = demand.section_from_members(
        b=np.array([m.b_mm]), h=np.array([m.h_mm]), d=np.array([m.d_mm]), fc=np.array([m.fc_mpa]),
        fyt=np.array([m.fyt_mpa]), lam=np.array([m["lambda"]]), fy=np.array([m.fy_mpa]),
        As=np.array([m.as_tension_mm2]), bf=np.array([m.bf_mm]), hf=np.array([m.hf_mm]), u=u)
    for z in zones.itertuples():
        inside = region[(st.x_mm >= z.start_mm - 1e-6).to_numpy() & (st.x_mm <= z.end_mm + 1e-6).to_numpy()]
        if inside.any():
            steps.append(_region_zone_step(z, st[region], settings, U))
        else:
            steps.append(_zone_step(z, st, sec, m, settings, U))
    worst = int(np.nanargmax(st.utilization.to_numpy()))
    man = run.manifest()
    density = (f"steel {_g(detailing.STEEL_DENSITY * 1e9)} kg/m^3" if U.name == "si" else
               f"steel {_g(detailing.STEEL_DENSITY_US * 1728)} lb/ft^3")
    steps.append(Step("Self-check", "9.5.1.1, 9.6.3, 9.7.6.2.2" + (", 9.9.3.1, 9.9.4.3, 23.7.2" if region.any() else ""), [
        (f"{int(region.sum())} stations inside the strut-and-tie regions: Av/s provided >= what the model needs "
         "(0.0025 bw and every stirrup tie over its spread), gap <= min(d/5, 300 mm | 12 in); " if region.any() else "")
        + f"phi*Vn >= Vu at all {int((~region).sum())} {'other ' if region.any() else ''}stations for every "
        "combination; every gap between stirrups (and to a face or free end) within the spacing the demand allows "
        "there; s <= s_max; Av >= Av,min where required",
        f"highest utilization {st.utilization[worst]:.3f} at x = {st.x_mm[worst]:,.0f} {mm} ({st.governing_case[worst]})"]))
    steps.append(Step("Stirrups", "25.3.2, 25.3.3", [
        f"{r.stirrups_total} stirrup sets, {_g(r.stirrup_mass_kg)} {U.mass} ({density})",
        f"code edition {man.get('code_edition')}, shearpost {man.get('tool_version')}"]))
    return steps


def _keyed(df):
    """A table of the run under our (SI) keys, its values in the run's units: the steps
    read ``m.b_mm`` for bw in mm, or in inches in an inch-pound run, and say which."""
    return si_keyed(df)


def _combinations(run: Run) -> Step:
    """The rules the combinations were built by, and every combination with its factors."""
    table = design_table(run, "combinations")
    dman = run.design_manifest()
    rules = dman.get("combination_rules", [])
    lines = []
    if run.cases() is None:
        lines.append("cases taken as already factored combinations (no cases.csv): each one is tried alone")
    else:
        lines.append("built from the basic load cases by Table 5.3.1; each variable load may be absent (5.3.2), "
                     "cases sharing a pattern label are alternatives (6.4), W and E with either sign")
        lines += [f"rule {rule}" for rule in rules]
    cases = [c for c in table.columns if c != "combination"]
    lines.append(f"{len(table)} distinct combinations:")
    for row in table.itertuples(index=False):
        terms = " ".join(f"{v:+.2f} {c}" for c, v in zip(cases, row[1:]) if v)
        lines.append(f"  {row[0]}: {terms}")
    return Step("Combinations", "5.3.1, 5.3.2, 6.4", lines)


def _point_loads(samples, cases: list[str], m, settings: Stations, U: UnitSystem) -> Step:
    jm, jx = stations.jumps(samples, settings, 1)
    lines = []
    same = (samples.case[1:] == samples.case[:-1]) & (samples.x[1:] == samples.x[:-1])
    dv = np.abs(np.diff(samples.values["V"]))
    for x in np.unique(jx):
        here = same & (samples.x[1:] == x)
        size = dv[here].max() / U.per_force
        case = cases[samples.case[1:][here][np.argmax(dv[here])]]
        where = "at a support face" if x <= m.face_i_mm or x >= m.length_m * U.per_span - m.face_j_mm else "on the span"
        lines.append(f"x = {x / U.per_span:.3f} {U.span} ({where}): a jump of {size:,.1f} {U.force} in case {case}")
    if not lines:
        lines.append("none: no two rows at one station differ by more than the tolerance "
                     f"(max of {_g(settings.point_load / U.per_force)} {U.force} and {_g(settings.point_load_fraction)} "
                     "of the largest |V|)")
    lines.append(f"rows closer than {_g(settings.tolerance)} {U.length} are one station")
    return Step("Concentrated loads", "9.4.3.2(c), 9.9.1.1(b)", lines)


def _governing(r, U: UnitSystem) -> Step:
    if r.governing_case is None or (isinstance(r.governing_case, float) and np.isnan(r.governing_case)):
        return Step("Governing combination", "", ["none"])
    if not isinstance(r.vc_equation, str):  # a strut-and-tie check governs
        x = r.x_governing_mm
        where = f" at x = {_fmt(x, U.length, 0)}" if isinstance(x, (int, float)) and np.isfinite(x) else ""
        return Step("Governing combination", "", [
            f"{r.governing_case}{where}: utilization {r.utilization:.3f}, from the strut-and-tie checks or the "
            "stirrups of the region against the model (see above); Vu = "
            f"{_fmt(r.vu_kN, U.force)} at most in the model, limit phi 0.83 sqrt(f'c) bw d = "
            f"{_fmt(r.phi_vn_limit_kN, U.force)} (9.9.2.1)"])
    return Step("Governing combination", "", [
        f"{r.governing_case} at x = {_fmt(r.x_governing_mm, U.length, 0)}: Vu = {_fmt(r.vu_kN, U.force)}, "
        f"Nu = {_fmt(r.nu_kN, U.force)} (compression +), Tu = {_fmt(r.tu_kNm, U.moment, 2)}",
        f"phi*Vc = {_fmt(r.phi_vc_kN, U.force)} by {r.vc_equation}; utilization {r.utilization:.3f} "
        "(the larger of Vu/phi*Vn provided and Vu over the section limit; ties go to the larger Vu/phi*Vn)"])


def _torsion(st, r, m, settings: Settings, U: UnitSystem) -> Step:
    u = aci.edition(U.name)
    mm = U.length
    t = st[st.torsion]
    k = t.tu_kNm.idxmax()
    row = st.loc[k]
    lines = [f"torsion considered at {len(t)} of {len(st)} stations (Tu >= phi*Tth, 22.7.4.1; web rectangle "
             "Acp = bw h, equilibrium torsion, not reduced by 22.7.3.2)",
             f"largest Tu = {_fmt(row.tu_kNm, U.moment, 2)} at x = {row.x_mm:,.0f} {mm} ({row.governing_case})",
             f"At/s = Tu / (phi 2 (0.85 Aoh) fyt cot 45) = {row.at_s_req:.3f} {U.area}/{mm} per leg (22.7.6.1), Aoh "
             f"and ph of the chosen stirrup bar; closed stirrups (25.7.1.6); s <= min(ph/8, {_g(u.torsion_s_max)} {mm}) "
             "(9.7.6.3.3)",
             f"(Av + 2At)/s >= max({_g(u.av_min_sqrt)} sqrt(f'c), {_g(u.av_min_flat)}) bw/fyt (9.6.4.2), one combined "
             "minimum",
             "cross-sectional limit 22.7.7.1(a) checked with the chosen bar"]
    if isinstance(r.al_torsion_mm2, (int, float)) and np.isfinite(r.al_torsion_mm2):
        nd = 0 if U.name == "si" else 2
        lines.append(f"longitudinal torsion steel Al = {r.al_torsion_mm2:,.{nd}f} {U.area}, the larger of (At/s) ph "
                     "fyt/fy (22.7.6.1) and Al,min (9.6.4.3); add it to the flexural bars, around the perimeter at "
                     f"most {_g(u.torsion_s_max)} {mm} apart (9.7.5.1)")
    return Step("Torsion", "22.7", lines)


def _critical_sections(s, m, r, settings: Stations, U: UnitSystem) -> Step:
    _, jx = stations.jumps(s, settings, 1)
    lines = []
    for end, crit, support, vu in (("i", r.crit_i, m.support_i, r.vu_design_i_kN),
                                   ("j", r.crit_j, m.support_j, r.vu_design_j_kN)):
        if crit == "free":
            lines.append(f"end {end}: free end, no critical section")
            continue
        if end == "i":
            near = [x for x in jx if m.face_i_mm < x <= m.face_i_mm + m.d_mm]
        else:
            far = m.length_m * U.per_span - m.face_j_mm
            near = [x for x in jx if far - m.d_mm <= x < far]
        if crit == "face" and isinstance(r.get("method"), str) and r.method.startswith("strut-and-tie") \
                and (r.method == "strut-and-tie" or _region_at(r.message, end)):
            lines.append(f"end {end}: in a strut-and-tie region, whose truss takes the frame's shear at the face; "
                         f"Vu = {_fmt(vu, U.force)} (the largest over the combinations)")
            continue
        why = []
        if support not in stations.BEARING:
            why.append(f"(a) a {support} support does not put the end region in compression")
        if m.load_face != "top":
            why.append("(b) loads act at the bottom (hung)")
        if near:
            why.append(f"(c) concentrated load between the face and d, at x = {near[0] / U.per_span:.3f} {U.span}")
        rule = "at d from the face" if crit == "d" else "at the face"
        lines.append(f"end {end}: {rule}; Vu = {_fmt(vu, U.force)}" +
                     (f" - {'; '.join(why)}" if why else " - bearing support, top loading, no concentrated load within d"))
    return Step("Critical sections", "9.4.3.2", lines)


def _region_zone_step(z, st, settings: Settings, U: UnitSystem) -> Step:
    """A zone inside a strut-and-tie region: the model's Av/s against the stirrups provided."""
    mm, A = U.length, U.area
    sub = st[(st.x_mm >= z.start_mm - 1e-6) & (st.x_mm <= z.end_mm + 1e-6)]
    what = f"{z.count} x {z.bar} x {z.legs} legs" + (f" @ {_g(z.spacing_mm)} {mm}" if z.count > 1 else "")
    title = f"Zone {z.zone}: {z.start_mm:,.0f} to {z.end_mm:,.0f} {mm}, {what}, strut-and-tie region"
    k = sub.utilization.idxmax()
    row = st.loc[k]
    area = settings.detailing.bars[z.bar][1]
    return Step(title, "9.9.3.1, 9.9.4.3, 23.7.2", [
        f"Av/s needed {row.av_s_req:.4g} {A}/{mm}: the larger of 0.0025 bw = {row.av_min_s:.4g} (9.9.3.1(a)) and the "
        "stirrup ties of the truss over their spread (23.7.2)",
        f"provided {z.bar} ({_g(area)} {A}) x {z.legs} legs, {_g(row.spacing_mm)} {mm} apart at x = {row.x_mm:,.0f} {mm}: "
        f"Av/s = {row.av_s_prov:.4g} {A}/{mm}; s <= min(d/5, 300 mm | 12 in) = {_g(row.s_max_mm)} {mm} (9.9.4.3)",
        f"utilization {row.utilization:.3f} (Av/s needed over provided, highest in the zone)"])


def strut_and_tie_steps(run: Run, member: str, U: UnitSystem) -> list[Step]:
    """The strut-and-tie model of a member, walked through: extent and geometry, loads at
    the nodes, nodes, struts, ties, anchorage, the deep-beam limits and the web bars."""
    from postproc.pipeline.deep import stored
    mm, kN, A, MPa = U.length, U.force, U.area, U.stress
    fl, fa = (0, 0) if U.name == "si" else (1, 2)  # decimals of lengths and areas: mm and mm^2 whole
    tables = {}
    for name in ("models", "members", "nodes", "faces", "struts", "ties"):
        df = stored(run, name)
        tables[name] = df[df["member"] == member] if "member" in df else df
    if not len(tables["models"]):
        return [Step("Strut-and-tie model", "23", ["this run's design folder holds no strut-and-tie tables"])]
    models, summary, nodes, faces, struts, ties = (tables[k] for k in ("models", "members", "nodes", "faces",
                                                                       "struts", "ties"))
    steps = []
    if len(summary):
        steps.append(Step("Strut-and-tie model: what was assumed", "9.9.1.1, 23.2", [
            s for s in str(summary.assumptions.iloc[0]).split("; ")]))
    for mdl in models.itertuples():
        tag = "whole member" if mdl.model == "whole" else f"end region {mdl.model}"
        mine = lambda df: df[df.model == mdl.model]  # noqa: E731
        lines = [f"extent x = {mdl.extent_start_mm:,.0f} to {mdl.extent_end_mm:,.{fl}f} {mm} from face i; top strut depth "
                 f"a = {mdl.top_strut_depth_mm:,.{fl}f} {mm} (the least for the horizontal thrust at the top nodes, "
                 "not less than the tie's nodal height), lever arm z = d - a/2 = "
                 f"{mdl.lever_arm_mm:,.{fl}f} {mm}, tie height in the bearing node {mdl.tie_height_mm:,.{fl}f} {mm}",
                 f"governing: {mdl.governing} ({mdl.governing_clause}), utilization {mdl.utilization:.3f}"
                 + (f" in {mdl.governing_combination}" if mdl.governing_combination else "")]
        steps.append(Step(f"Strut-and-tie model, {tag}", "23.2, 23.4, 23.9", lines))
        nd = mine(nodes)
        steps.append(Step(f"Nodes, {tag}", "23.9.1, 23.9.2, Table 23.9.2", [
            f"{n.node} at x = {n.x_mm:,.{fl}f} {mm}, y = {n.y_mm:,.{fl}f} {mm}: {n.node_type}, beta_n = {_g(n.beta_n)}; governing "
            f"face {n.governing_face}" + (f" ({n.element})" if n.element else "") +
            f", utilization {n.utilization:.3f} ({n.combination})" for n in nd.itertuples()]
            + [f"each face: stress = force / (width x bw) against phi 0.85 beta_n f'c (phi = 0.75, 21.2.1); "
               f"{len(mine(faces))} faces checked"]))
        sr = mine(struts)
        steps.append(Step(f"Struts, {tag}", "23.4.1, 23.4.3, Table 23.4.3, 23.5", [
            f"{s.element}: {s.angle_deg:.1f} deg, {s.force_kN:,.1f} {kN} ({s.combination}); widths "
            f"{s.width_1_mm:,.0f} / {s.width_2_mm:,.{fl}f} {mm}; beta_s = {_g(s.beta_s)}, fce = 0.85 beta_s f'c = "
            f"{s.fce_MPa:.2f} {MPa}; phi Fns = {s.phi_fns_kN:,.1f} {kN}; utilization {s.utilization:.3f}"
            for s in sr.itertuples()]
            + ["angles between struts and ties are at least 25 degrees (23.2.7)"]))
        tr = mine(ties)
        lines = []
        for t in tr.itertuples():
            if t.kind == "vertical tie":
                lines.append(f"{t.element}: {t.force_kN:,.1f} {kN} ({t.combination}) over {t.spread_mm:,.{fl}f} {mm}: "
                             f"Av/s = F / (0.75 fyt spread) = {t.av_s_req:.4g} {A}/{mm} (23.7.2)")
            else:
                lines.append(f"{t.element}: {t.force_kN:,.1f} {kN} ({t.combination}): As = F / (0.75 fy) = "
                             f"{t.as_req_mm2:,.{fl}f} {mm}^2, provided {t.as_prov_mm2:,.{fl}f} {mm}^2; utilization "
                             f"{t.utilization:.3f} (23.7.2)")
        steps.append(Step(f"Ties, {tag}", "23.7.2, 23.3.1", lines))
        anch = []
        for end in ("i", "j"):
            how = getattr(mdl, f"anchorage_{end}")
            if how:
                anch.append(f"end {end}: {how}; available {getattr(mdl, f'anchorage_available_{end}_mm'):,.{fl}f} {mm} past "
                            f"the extended nodal zone against ld = {mdl.ld_mm:,.{fl}f} {mm} (Table 25.4.2.3) and ldh = "
                            f"{mdl.ldh_mm:,.{fl}f} {mm} (25.4.3.1)")
        steps.append(Step(f"Tie bars and anchorage, {tag}", "23.8.3, 25.4.2.3, 25.4.3.1", [
            f"{mdl.tie_bars} {mdl.tie_bar} = {mdl.tie_as_prov_mm2:,.{fl}f} {mm}^2 >= {mdl.tie_as_req_mm2:,.{fl}f} {mm}^2; the "
            "largest bar of the ladder whose anchorage fits at every bearing", *anch]))
        steps.append(Step(f"Deep-beam section, {tag}", "9.9.2.1", [
            f"Vu = {mdl.vu_kN:,.1f} {kN} <= phi 0.83 sqrt(f'c) bw d = {mdl.phi_vn_deep_kN:,.1f} {kN}: "
            f"{mdl.vu_kN / mdl.phi_vn_deep_kN:.3f}"]))
    if len(summary):
        s = summary.iloc[0]
        steps.append(Step("Distributed reinforcement", "9.9.3.1, 9.9.4.3, 23.5", [
            f"Av/s and Ah/s >= 0.0025 bw = {s.av_s_min:.4g} {A}/{mm} (9.9.3.1(a), (b)), spacing <= min(d/5, "
            f"300 mm | 12 in) = {_g(s.s_max_mm)} {mm} (9.9.4.3); with it interior struts take beta_s = {_g(s.beta_s_interior)} "
            "(Table 23.4.3, Table 23.5.1)",
            f"vertical: Av/s needed {s.av_s_req:.4g} {A}/{mm} (the minimum and the stirrup ties): the stirrup zones "
            "below",
            f"horizontal web bars: {s.web_text}",
            f"bottom tie: {s.tie_text}"]))
    return steps


def _region_at(message, end: str) -> bool:
    return isinstance(message, str) and f"end region {end}" in message


def _zone_step(z, st, sec: demand.Section, m, settings: Settings, U: UnitSystem) -> Step:
    u = sec.u
    mm, kN, per = U.length, U.force, U.per_force
    sub = st[(st.x_mm >= z.start_mm - 1e-6) & (st.x_mm <= z.end_mm + 1e-6)]
    if not len(sub):  # a lone stirrup between stations: the stations next to it
        sub = st.iloc[[int(np.argmin(np.abs(st.x_mm.to_numpy() - z.start_mm)))]]
    hoops = getattr(z, "kind", "stirrup") == "hoop"
    what = f"{z.count} {'hoops' if hoops else 'x'} {z.bar} x {z.legs} legs" + (f" @ {_g(z.spacing_mm)} {mm}"
                                                                              if z.count > 1 else "")
    title = f"Zone {z.zone}: {z.start_mm:,.0f} to {z.end_mm:,.0f} {mm}, {what if z.count else 'no stirrups'}"
    if not z.count:
        return Step(title, "9.6.3.1", ["no stirrups: Vu <= the Av,min threshold and phi*Vc throughout"])
    k = sub.utilization.idxmax()
    row = st.loc[k]
    vu, nu, tu = row.vu_kN * per, row.nu_kN * per, row.tu_kNm * U.per_moment
    b, d, fc = sec.b[0], sec.d[0], sec.fc[0]
    area = settings.detailing.bars[z.bar][1]
    s = row.spacing_mm  # the actual gap between the stirrups around the station
    av_s_prov = z.legs * area / s
    has_min = av_s_prov >= float(aci.av_min_over_s(fc, b, sec.fyt[0], u))
    if bool(row.get("vc_zero", False)):  # the hinge zone of a special-frame beam (18.6.5.2)
        vc = 0.0
    elif has_min:
        vc = float(aci.vc_with_min_stirrups(fc, b, d, nu, sec.Ag[0], sec.lam[0], sec.rho_w[0], u))
    else:
        rho = sec.rho_w[0] if np.isfinite(sec.rho_w[0]) else sec.rho_w_min[0]
        vc = float(aci.vc_without_min_stirrups(fc, b, d, nu, sec.Ag[0], rho, sec.lam[0], u))
    eq = row.vc_equation + (", Av >= Av,min" if has_min else
                            f", Av < Av,min, lambda_s = {float(aci.size_effect_factor(d, u)):.3f}")
    vs_req = max(vu / aci.PHI_SHEAR - vc, 0.0)
    vs_steel, vs_cap = float(aci.vs_from_av_over_s(av_s_prov, sec.fyt[0], d)), float(aci.vs_max(fc, b, d, u))
    vs_prov = min(vs_steel, vs_cap)
    heavy = vs_req > u.heavy_vs * float(aci.sqrt_fc(fc, u)) * b * d
    lines = [
        f"governing station x = {row.x_mm:,.0f} {mm}, combination {row.governing_case}",
        f"Vu = {_fmt(vu / per, kN)}, Nu = {_fmt(nu / per, kN)} (compression +), "
        f"Tu = {_fmt(tu / U.per_moment, U.moment, 2)}",
        f"Vc = {_fmt(vc / per, kN)} by Table {eq}; phi*Vc = {_fmt(0.75 * vc / per, kN)} (21.2.1)",
        f"Vs required = Vu/phi - Vc = {_fmt(vs_req / per, kN)}; Av/s required = {row.av_s_req:.3f} {U.area}/{mm} "
        f"(22.5.8.5.3); Av,min/s = {row.av_min_s:.3f} required here by 9.6.3.1: "
        f"{'yes' if row.avmin_required else 'no'}",
        f"provided {z.bar} ({_g(area)} {U.area}) x {z.legs} legs, the stirrups around x {_g(s)} {mm} apart: "
        f"Av/s = {av_s_prov:.3f} {U.area}/{mm}, Vs = {_fmt(vs_prov / per, kN)}"
        + (f" (Av fyt d/s = {_fmt(vs_steel / per, kN)}, capped at {_g(u.vs_max)} sqrt(f'c) bw d, 22.5.1.2)"
           if vs_steel > vs_cap else ""),
        f"s_max = {_g(row.s_max_mm)} {mm} (Table 9.7.6.2.2: Vs {'>' if heavy else '<='} {_g(u.heavy_vs)} sqrt(f'c) bw d"
        + (", torsion 9.7.6.3.3" if row.torsion else "") + f"); allowed here {_g(row.s_allowed_mm)} {mm}",
        f"phi*Vn = {_fmt(0.75 * (vc + vs_prov) / per, kN)} >= Vu; utilization {row.utilization:.3f}",
    ]
    if row.torsion:
        lines.append(f"torsion considered (Tu >= phi*Tth, 22.7.4.1): At/s = {row.at_s_req:.3f} {U.area}/{mm} per leg "
                     "(22.7.6.1), closed stirrups (25.7.1.6)")
    if hoops:
        lines.append(f"hoops: closed, with seismic hooks (135 degrees, 6 db >= {_g(u.hook_min_extension)} {mm}; 25.3.4), "
                     "the hinge zone's spacing limit in s_max (18.6.4.4 or 18.4.2.4)")
    return Step(title, "22.5, 9.6.3, 9.7.6.2.2" + (", 18.6.4, 18.4.2.4" if hoops else ""), lines)


def _frame_step(row: pd.DataFrame, m, r, st, ln: float, settings: Settings, U: UnitSystem) -> Step:
    """The Chapter 18 part of a frame beam (``row``: its input row as a table, in the run's
    column names; ``m`` as a Series under the SI keys): face strengths, capacity-design
    shear, hinge zones."""
    u = aci.edition(U.name)
    mm, kN, area, mpa = U.length, U.force, U.area, U.stress
    frame = m.frame
    fb = fr.frame_beams(row, U)
    if frame == "ordinary":
        return Step("Moment frame: ordinary", "18.3", [
            "beams of ordinary moment frames: Chapters 9 and 22 (the design above)",
            "18.3.2, at least two continuous bars top and bottom: " +
            ("two bars of db_long fit in the steel at each face (their continuity is for the engineer to confirm)"
             if fb.bars_given[0] else "not checked: no bars given")])
    kn = lambda v: f"{v / U.per_moment:,.1f}"  # noqa: E731
    nd = 0 if U.name == "si" else 2
    lines = [f"bars at the faces: top i {m.as_top_i_mm2:,.{nd}f}, bottom i {m.as_bot_i_mm2:,.{nd}f}, top j "
             f"{m.as_top_j_mm2:,.{nd}f}, bottom j {m.as_bot_j_mm2:,.{nd}f} {area}; smallest bar db = {_g(m.db_long_mm)} "
             f"{mm}; fy = {_g(m.fy_mpa)} {mpa}",
             f"Mn- / Mn+ (22.2, strain compatibility): i {kn(fb.mn_neg_i[0])} / {kn(fb.mn_pos_i[0])}, j "
             f"{kn(fb.mn_neg_j[0])} / {kn(fb.mn_pos_j[0])} {U.moment}"]
    special = frame == "special"
    if special:
        v1, v2 = fr.sway_shears(fb, np.array([ln]), probable=True)
        lines += [f"Mpr- / Mpr+ (1.25 fy, phi = 1): i {kn(fb.mpr_neg_i[0])} / {kn(fb.mpr_pos_i[0])}, j "
                  f"{kn(fb.mpr_neg_j[0])} / {kn(fb.mpr_pos_j[0])} {U.moment}",
                  f"sway shears (Mpr- at one face + Mpr+ at the other) / ln: {v1[0] / U.per_force:,.1f} and "
                  f"{-v2[0] / U.per_force:,.1f} {kN} (18.6.5.1)"]
    else:
        v1, v2 = fr.sway_shears(fb, np.array([ln]), probable=False)
        lines.append(f"sway shears from Mn at both ends / ln: {v1[0] / U.per_force:,.1f} and "
                     f"{-v2[0] / U.per_force:,.1f} {kN} (18.4.2.3(a))")
    ev = settings.combinations.vertical_earthquake
    dead = f"(1.2 + {_g(ev)})D, Ev = {_g(ev)}D with E," if ev > 0 else "1.2D"
    lines.append(f"gravity {dead} + 1.0L + 0.2S (each variable load present or absent) on the clear span as a simple "
                 "beam: the analysis shear less its end-moment part, the mean of V over ln (Fig. R18.6.5)")
    ve = st.ve_kN.to_numpy(float) if "ve_kN" in st else np.full(len(st), np.nan)
    if np.isfinite(ve).any():
        what = "Ve" if special else "the lesser of (a) and (b) with Omega_o = " + f"{_g(settings.frames.omega_o)}"
        lines.append(f"{what}: {ve[0]:,.1f} {kN} at face i, {ve[-1]:,.1f} {kN} at face j; the design shear at each "
                     "station is the larger of it and the analysis envelope (a further candidate combination)")
    h2 = float(aci.smf_beam_hoop_zone_length(m.h_mm))
    lines.append(f"hoops over 2h = {h2:,.0f} {mm} from each face, the first within {_g(u.first_hoop_max)} {mm} "
                 + ("(18.6.4.1, 18.6.4.4)" if special else "(18.4.2.4)"))
    high = bool(aci.grade_550(m.fy_mpa, u))
    if special:
        s_hoop = float(aci.smf_beam_hoop_spacing(m.d_mm, m.db_long_mm, m.fy_mpa, u))
        lines.append(f"hoop spacing at most min(d/4, {'5' if high else '6'} db, {_g(u.smf_beam_hoop_s)} {mm}) = "
                     f"{_g(s_hoop)} {mm} (18.6.4.4); stirrups with seismic hooks at most d/2 = {_g(m.d_mm / 2)} {mm} "
                     "elsewhere (18.6.4.6); legs to support the bars nearest each face, supported bars at most "
                     f"{_g(u.smf_beam_hx_max)} {mm} apart (18.6.4.2)")
        threshold = m.b_mm * m.h_mm * m.fc_mpa / 20.0  # Ag f'c / 20 of the web; the design takes Ag with any flange
        for end, z in (("i", 1), ("j", 2)):
            part = st[st.hinge_zone == z] if "hinge_zone" in st else st.iloc[0:0]
            if not len(part):
                continue
            k = part.ve_kN.idxmax()
            zero = bool(part.vc_zero.any())
            lines.append(f"end {end}: Vc = 0 (18.6.5.2) {'yes' if zero else 'no'}: (a) earthquake part "
                         f"{part.ve_eq_kN[k]:,.1f} {kN} {'>=' if part.ve_eq_kN[k] >= 0.5 * part.ve_kN[k] else '<'} "
                         f"Ve/2 = {part.ve_kN[k] / 2:,.1f} {kN}; (b) the least axial compression of the zone's "
                         f"combinations under Ag f'c/20 (about {threshold / U.per_force:,.0f} {kN})")
    else:
        s_hoop = float(aci.imf_beam_hoop_spacing(m.d_mm, m.db_long_mm, np.inf, m.fy_mpa, u))
        lines.append(f"hoop spacing at most min(d/4, {'6' if high else '8'} db, {_g(u.imf_beam_hoop_s)} {mm}) = "
                     f"{_g(s_hoop)} {mm} and 24 diameters of the hoop bar (18.4.2.4); d/2 = {_g(m.d_mm / 2)} {mm} "
                     "elsewhere (18.4.2.5)")
    return Step(f"Moment frame: {frame}", "18.6" if special else "18.4.2", lines)


# ----------------------------------------------------------------------------- columns


def _column(run: Run, member: str, r, df, settings: Settings) -> list[Step]:
    """A column's calculation: section and bars, both shear directions with the concurrent axial
    force, the tie rules, and in moment frames the end zones and the capacity-design shear. ``df``:
    the member's row of the members table in the run's names."""
    from postproc.pipeline import columns as family

    U = run.units
    mm, mpa, kN = U.length, U.stress, U.force
    mb = family.geometry(df, settings)
    s = mb.sec
    u = s.u
    m = _keyed(df).iloc[0]
    circular = bool(s.circular[0])
    frame = str(m.get("frame") or "none")
    clear = float(mb.geo.clear_span[0])
    fyt = float(s.fyt[0])
    size = (f"D = {s.b[0]:.4g} {mm}: bw = D, d = 0.8 D = {s.d_v[0]:.4g} {mm} in both directions (22.5.2.2)" if circular
            else f"b x h = {s.b[0]:.4g} x {s.h[0]:.4g} {mm}; V (parallel to h): bw = {s.bw_v[0]:.4g}, d = {s.d_v[0]:.4g} {mm}; "
                 f"Vb (parallel to b): bw = {s.bw_vb[0]:.4g}, d = {s.d_vb[0]:.4g} {mm}")
    steps = [Step("Inputs", "", [
        size, f"Ag = {s.Ag[0]:,.{0 if U.name == 'si' else 1}f} {U.area}; bars: {int(s.n_long[0])} of "
              f"{s.db_long[0]:.4g} {mm} ({s.bar_area[0]:,.{0 if U.name == 'si' else 2}f} {U.area} each, "
              f"{100 * s.ast[0] / s.Ag[0]:.2f} % of Ag), {s.edge[0]:.4g} {mm} from the faces",
        f"rho_w for Table 22.5.5.1: {s.rho_v[0]:.4f} (V) and {s.rho_vb[0]:.4f} (Vb), the bars of the tension "
        + ("half (n/2)" if circular else "face"),
        f"f'c = {_g(s.fc[0])} {mpa} (sqrt used {float(aci.sqrt_fc(s.fc[0], u)):.3f}, 22.5.3.1), fyt = {_g(m.fyt_mpa)} "
        f"{mpa}" + (f", {_g(fyt)} for shear (20.2.2.4)" if fyt < m.fyt_mpa else "") + f", lambda = {_g(s.lam[0])}",
        f"length {_g(m.length_m)} {U.span} from the bottom node; faces {m.face_i_mm:.4g} / {m.face_j_mm:.4g} {mm}; clear "
        f"height {clear:,.0f} {mm}; frame: {frame}",
        *([] if U.name == "si" else [f"units: {U.title}; the equations of {u.title}"])])]
    if r.status in ("no-forces", "invalid"):
        return steps
    steps.append(_combinations(run))
    steps.append(Step("Critical sections", "", [
        "at the faces of both joints: no shear is taken at d from a joint face (common practice: a beam's reaction "
        "does not put the column's end region in the compression 9.4.3.2 asks for)",
        f"Vu at the bottom face {_fmt(r.vu_design_i_kN, kN)} (V), {_fmt(r.vb_design_i_kN, kN)} (Vb); at the top "
        f"face {_fmt(r.vu_design_j_kN, kN)} (V), {_fmt(r.vb_design_j_kN, kN)} (Vb)"]))
    if frame != "none" and isinstance(r.message, str):
        notes = [t for t in r.message.split("; ") if any(w in t for w in ("frame", "Ve", "lo", "Vc = 0", "checked"))]
        steps.append(Step("Moment frame", "18.7 special, 18.4.3 intermediate, 18.3.3 ordinary", notes or [
            "ordinary frame, clear height above 5 c1 in both directions: Chapter 10 alone (18.3.3)"]))
    st = _keyed(design_table(run, "stations", member=member)).sort_values(["x_mm", "side"], kind="stable") \
        .reset_index(drop=True)
    if len(st):
        kv = int(np.argmax(st.vu_max_kN / st.phi_vn_limit_kN))
        kb = int(np.argmax(st.vb_max_kN / st.phi_vn_limit_vb_kN))
        steps.append(Step("Section limits", "22.5.1.2", [
            f"V: largest Vu / phi (Vc + {_g(u.vs_max)} sqrt(f'c) bw d) = {st.vu_max_kN[kv] / st.phi_vn_limit_kN[kv]:.3f} at "
            f"x = {st.x_mm[kv]:,.0f} {mm}", f"Vb: {st.vb_max_kN[kb] / st.phi_vn_limit_vb_kN[kb]:.3f} at "
                                          f"x = {st.x_mm[kb]:,.0f} {mm}"]))
    steps.append(_governing(r, U))
    if isinstance(r.utilization_v, float) and np.isfinite(r.utilization_v):
        steps.append(Step("Both directions", "22.5.1.10, 22.5.1.11", [
            f"largest Vu/phi Vn alone: {r.utilization_v:.3f} (V), {r.utilization_vb:.3f} (Vb)",
            ("interaction by the code's rule: neglected where either ratio is 0.5 or less, else their sum at most 1.5"
             if settings.columns.biaxial_shear == "code" else
             "interaction by the elliptical rule: sqrt(ratio_V^2 + ratio_Vb^2) <= 1 (common practice; never less "
             "than the code's rule of 22.5.1.11)"),
            "a capacity-design shear Ve acts along one principal axis at a time (common practice)"]))
    if r.status != "designed":
        return steps
    zones = _keyed(design_table(run, "zones"))
    zones = zones[zones.member == member].sort_values("zone")
    for z in zones.itertuples():
        steps.append(_column_zone(z, st, mb, frame, settings, U))
    steps.append(Step("Self-check", "10.6.2, 10.7.6.5.2, 25.7.2, 22.5.1.2", [
        f"phi Vn of each direction and their interaction hold every combination at all {len(st)} stations with the "
        "widest gap among each station and its neighbours; Av >= Av,min where Vu > 0.5 phi Vc; every spacing rule; "
        "the end ties within half the allowed spacing of the faces",
        f"highest utilization {r.utilization:.3f}"]))
    steps.append(Step("Ties", "25.3.2, 25.3.3, 25.3.4, 25.3.5, 25.7.2", [
        f"{r.stirrups_total} sets, {_g(r.stirrup_mass_kg)} {U.mass} (perimeter hoop or tie with 135-degree hooks, crossties "
        "with a 135-degree and a 90-degree hook alternated end for end)"]))
    return steps


def _column_zone(z, st, mb, frame: str, settings: Settings, U: UnitSystem) -> Step:
    s = mb.sec
    u, mm, kN = s.u, U.length, U.force
    sub = st[(st.x_mm >= z.start_mm - 1e-6) & (st.x_mm <= z.end_mm + 1e-6)]
    if not len(sub):
        sub = st.iloc[[int(np.argmin(np.abs(st.x_mm.to_numpy() - z.start_mm)))]]
    what = f"{z.count} x {z.bar} {z.kind}s" + (f" @ {_g(z.spacing_mm)} {mm}" if z.count > 1 else "")
    title = f"Zone {z.zone}: {z.start_mm:,.{0 if U.name == 'si' else 1}f} to {z.end_mm:,.{0 if U.name == 'si' else 1}f} " \
            f"{mm}, {what}"
    if not z.count:
        return Step(title, "", ["no ties"])
    own = sub[np.isclose(sub.spacing_mm, z.spacing_mm)] if z.count > 1 else sub
    row = (own if len(own) else sub).sort_values("utilization", ascending=False, kind="stable").iloc[0]
    conf = sub.s_confinement_mm[np.isfinite(sub.s_confinement_mm)]
    db_tie, area = settings.detailing.bars[z.bar]
    legs_v, legs_vb = int(z.legs), int(z.legs_vb)
    gap = row.spacing_mm
    nu = row.nu_kN * U.per_force
    lines = [f"governing station x = {row.x_mm:,.0f} {mm}, {row.governing_case}: Vu = {_fmt(row.vu_kN, kN)} (V), "
             f"{_fmt(row.vb_kN, kN)} (Vb), Nu = {_fmt(row.nu_kN, kN)} (compression +)"]
    for label, legs, bw, d, phi_vc in (("V", legs_v, s.bw_v[0], s.d_v[0], row.phi_vc_kN),
                                       ("Vb", legs_vb, s.bw_vb[0], s.d_vb[0], row.phi_vc_vb_kN)):
        av_s = legs * area / gap
        av_min = float(aci.column_av_min_over_s(s.fc[0], bw, s.fyt[0], u))
        has_min = av_s >= av_min * (1 - 1e-9)
        vc = phi_vc * U.per_force / aci.PHI_SHEAR  # the governing combination's own, as designed
        how = ("0: 18.7.6.2.1 over lo" if bool(row.vc_zero) and vc == 0 else
               "Table 22.5.5.1" + ("(a)/(b)" if has_min else "(c)") + f" with Nu = {_fmt(nu / U.per_force, kN)}")
        vs_steel, vs_cap = av_s * s.fyt[0] * d, float(aci.vs_max(s.fc[0], bw, d, u))
        vs = min(vs_steel, vs_cap)
        capped = (f"Av fyt d/s = {_fmt(vs_steel / U.per_force, kN)} (22.5.8.5.3), capped at {_g(u.vs_max)} sqrt(f'c) bw d = "
                  f"{_fmt(vs_cap / U.per_force, kN)} (22.5.1.2)" if vs_steel > vs_cap else "22.5.8.5.3")
        lines.append(f"{label}: {legs} legs x {_g(area)} {U.area} at {gap:.4g} {mm}: Av/s = {av_s:.4g} {U.area}/{mm} "
                     f"({'>=' if has_min else '<'} Av,min/s {av_min:.4g}, 10.6.2.2); Vc = {_fmt(vc / U.per_force, kN)} "
                     f"({how}); Vs = {_fmt(vs / U.per_force, kN)} ({capped}; bw = {bw:.4g}, d = {d:.4g} {mm}); "
                     f"phi Vn = {_fmt(0.75 * (vc + vs) / U.per_force, kN)}")
    s16, s48, least = 16 * s.db_long[0], 48 * db_tie, s.least[0]
    rules = [f"25.7.2.1(b): min(16 db = {s16:.4g}, 48 db tie = {s48:.4g}, least side {least:.4g}) = "
             f"{min(s16, s48, least):.4g} {mm}"]
    rules.append(f"10.7.6.5.2 where shear reinforcement is required: d/2 (d/4 where Vs > {_g(u.heavy_vs)} sqrt(f'c) bw d) "
                 f"of that direction; s_max here {row.s_max_mm:.4g} {mm}")
    if frame == "special":
        rules.append(f"18.7.5.3 over lo: min(least side / 4, 6 db, so = {_g(u.so_base)} + ({_g(u.so_hx)} - hx)/3 within "
                     f"{_g(u.so_base)}..{_g(u.so_max)} {mm}); 18.7.5.5 beyond lo: min(6 db, {_g(u.smf_beyond_lo_max)} {mm}); "
                     "Ash by Table 18.7.5.4" +
                     (f" asks for s <= {conf.min():.4g} {mm} in this zone" if len(conf) else
                      " sets no spacing in this zone"))
    elif frame == "intermediate":
        rules.append(f"18.4.3.3 over lo: min(8 db, {_g(u.imf_column_so[0])} {mm}, least side / 2), the first hoop within "
                     "so/2 of the face")
    rules.append(f"allowed here {_g(row.s_allowed_mm)} {mm}; provided {gap:.4g} {mm}; utilization {row.utilization:.3f}")
    return Step(title, "22.5, 10.6.2, 10.7.6.5.2, 25.7.2", lines + rules)
