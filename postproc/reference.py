"""A straightforward per-member implementation of the same design, for the benchmark and
the tests.

One member at a time, one station at a time, and every combination listed one by one
(``ComboSet.explicit``: the brute-force enumeration of loads absent and patterns that
the engine avoids), in plain Python over pandas rows; the code provisions are the same
functions as the engine's (called on scalars) and the stirrup set-out is the same
per-member routine. Its purposes are to check the vectorised engine -- its exact
envelope of combinations above all -- on a sample of members, and to measure what
vectorisation buys. It works in the run's unit system (``settings.units``) with that
edition's provisions, as the engine does. It designs sectionally only: a member it flags
by 9.9.1.1 comes back ``deep-beam``; the engine designs those by strut-and-tie
(postproc.pipeline.deep), and ``bench.compare_with_reference`` then checks only that the
engine flagged the same member (tests/test_deep_beams.py checks the strut-and-tie design
by hand).
"""

from __future__ import annotations

import bisect
import itertools
import math

import numpy as np
import pandas as pd

from postproc import detailing, units
from postproc.demand import beams as demand
from postproc.codes import aci318_19 as aci
from postproc.settings import Detailing, Settings
from postproc.stations import BEARING

PHI = aci.PHI_SHEAR


def covers(m: pd.Series) -> bool:
    """Whether this reference designs the member: beams outside moment frames. Frame beams
    (Chapter 18: capacity-design shear, hinge zones, member checks) are not covered; their
    independent check is tests/test_frames.py."""
    frame = m.get("frame", "none")
    return not isinstance(frame, str) or frame in ("", "none")


def _value(xs: list[float], vs: list[float], x: float, right: bool) -> float:
    """Piecewise-linear value at x; at a station given twice, the left or right row."""
    if x <= xs[0]:
        return vs[0] if not (right and x == xs[0]) else vs[bisect.bisect_right(xs, x) - 1]
    if x >= xs[-1]:
        return vs[-1] if (right or x > xs[-1]) else vs[bisect.bisect_left(xs, x)]
    if right:
        hi = bisect.bisect_right(xs, x)
        if xs[hi - 1] == x:
            return vs[hi - 1]
    else:
        hi = bisect.bisect_left(xs, x)
        if xs[hi] == x:
            return vs[hi]
    lo = hi - 1
    t = (x - xs[lo]) / (xs[hi] - xs[lo])
    return vs[lo] * (1.0 - t) + vs[hi] * t


def _snap(xs: list[float], tol: float) -> list[float]:
    """Rows closer than the station tolerance are one station, at the first row's x."""
    out = []
    for k, x in enumerate(xs):
        out.append(out[-1] if k and x - xs[k - 1] < tol else x)
    return out


def _combo_values(V, N, T, names, factors, Vb=None):
    """Every combination's (|V|, Nu compression positive, |T|, |Vb|)."""
    out = []
    for name, row in zip(names, factors):
        v = sum(f * p for f, p in zip(row, V))
        n = sum(f * p for f, p in zip(row, N))
        t = sum(f * p for f, p in zip(row, T))
        vb = sum(f * p for f, p in zip(row, Vb)) if Vb is not None else 0.0
        out.append((name, abs(v), -n, abs(t), abs(vb)))
    return out


def design_member(m: pd.Series, forces: pd.DataFrame, combo_names: list[str], factors: np.ndarray,
                  cases: list[str], settings: Settings) -> tuple[dict, list[dict], set[str]]:
    """The members.csv row and zones.csv rows of one beam supported at both or one end,
    and the names of every combination that ties for its utilization. Beams of moment frames
    are refused (``covers``). ``m`` and ``forces`` are named in the run's unit system; the row
    and zones come under the SI names, in its units."""
    if not covers(m):
        raise ValueError(f"member {m.member}: beams of moment frames are not covered by the per-member reference")
    st, dt = settings.stations, settings.detailing
    U, ed = units.system(settings.units), aci.edition(settings.units)
    m = m.rename(units.si_name)
    forces = units.si_keyed(forces)
    L = m.length_m * U.per_span
    a, b = m.face_i_mm, L - m.face_j_mm
    d, h, bw, fc, lam = m.d_mm, m.h_mm, m.b_mm, m.fc_mpa, m["lambda"]
    fyt = min(m.fyt_mpa, ed.fyt_max)
    series = {}
    vmax = 0.0
    jumps = []
    for case in cases:
        rows = forces[forces.case == case].sort_values("x_m", kind="stable")
        xs = _snap([x * U.per_span for x in rows.x_m], st.tolerance)
        vbs = [v * U.per_force for v in rows.Vb_kN] if "Vb_kN" in rows else [0.0] * len(xs)
        series[case] = (xs, [v * U.per_force for v in rows.V_kN], [v * U.per_force for v in rows.N_kN],
                        [v * U.per_moment for v in rows.T_kNm], vbs)
        vmax = max([vmax] + [abs(v) for v in series[case][1]])
    for case in cases:
        xs, vs = series[case][0], series[case][1]
        for k in range(1, len(xs)):
            if xs[k] == xs[k - 1] and abs(vs[k] - vs[k - 1]) > max(st.point_load, st.point_load_fraction * vmax):
                jumps.append(xs[k])

    step = min(st.max_step, d / st.steps_per_d)
    n = math.ceil((b - a) / step) + 1
    points = {(a + (b - a) * k / (n - 1), 1) for k in range(n)}
    for case in cases:
        points |= {(x, 1) for x in series[case][0] if a < x < b}
    points |= {(x, 0) for x in jumps if a < x < b}
    points |= {(x, 1) for x in (a + d, b - d) if a < x < b}
    grid = sorted({(x, 0 if abs(x - b) <= 1e-9 else s) for x, s in points}, key=lambda p: (p[0], p[1]))

    free_i, free_j = m.support_i == "free", m.support_j == "free"
    near_i = any(a < x <= a + d for x in jumps)
    near_j = any(b - d <= x < b for x in jumps)
    fits = b - a > 2 * d
    top = m.load_face == "top"
    use_i = m.support_i in BEARING and top and not near_i and fits
    use_j = m.support_j in BEARING and top and not near_j and fits
    crit_i = "free" if free_i else ("d" if use_i else "face")
    crit_j = "free" if free_j else ("d" if use_j else "face")

    rho = m.as_tension_mm2 / (bw * d) if np.isfinite(m.as_tension_mm2) else float("nan")
    rho_c = rho if np.isfinite(rho) else float(aci.rho_w_lower_bound(fc, m.fy_mpa, ed))
    Ag = bw * h + ((m.bf_mm - bw) * m.hf_mm if np.isfinite(m.bf_mm) else 0.0)
    exempt = bool(aci.av_min_exempt(h, bw, m.hf_mm if np.isfinite(m.hf_mm) else None, ed))
    av_min = float(aci.av_min_over_s(fc, bw, fyt, ed))
    sfc = float(aci.sqrt_fc(fc, ed))
    Acp, pcp = bw * h, 2 * (bw + h)

    # every station, every combination
    stations = []  # (x from face i, side, [per combination: dict])
    for x, side in grid:
        src = x
        if use_i and x < a + d:
            src = a + d
        if use_j and x > b - d:
            src = b - d
        right = side == 1 or src != x
        per_case = [[_value(s[0], s[q], src, right) if s[0] else 0.0 for s in (series[c] for c in cases)]
                    for q in (1, 2, 3, 4)]
        combos = []
        for name, Vu, Nu, Tu, Vb in _combo_values(*per_case[:3], combo_names, factors, per_case[3]):
            vc_hi = float(aci.vc_with_min_stirrups(fc, bw, d, Nu, Ag, lam, rho, ed))
            vc_lo = float(aci.vc_without_min_stirrups(fc, bw, d, Nu, Ag, rho_c, lam, ed))
            t_on = Tu > 0 and Tu >= PHI * float(aci.torsion_threshold(fc, Acp, pcp, Nu, Ag, lam, ed))
            req = (Vu > PHI * vc_lo) if exempt else (Vu > float(aci.av_min_threshold(fc, bw, d, lam, ed)))
            req = req or t_on
            q_hi = max(Vu / PHI - vc_hi, 0.0) / (fyt * d)
            q_lo = max(Vu / PHI - vc_lo, 0.0) / (fyt * d)
            av = q_hi if req else min(q_lo, max(q_hi, av_min))
            combos.append(dict(name=name, vu=Vu, vb=Vb, nu=Nu, tu=Tu, vc_hi=vc_hi, vc_lo=vc_lo, torsion=t_on, minimum=req,
                               av=av, ata=float(aci.at_over_s(Tu, 1.0, fyt)) if t_on else 0.0,
                               heavy=(Vu / PHI - vc_hi) > ed.heavy_vs * sfc * bw * d,
                               ratio=Vu / (PHI * (vc_hi + ed.vs_max * sfc * bw * d))))
        stations.append((x - a, side, combos))

    vu_env = [max(c["vu"] for c in cs) for _, _, cs in stations]
    row = {"member": m.member, "crit_i": crit_i, "crit_j": crit_j,
           "vu_design_i_kN": round(vu_env[0] / U.per_force, 2), "vu_design_j_kN": round(vu_env[-1] / U.per_force, 2)}
    ln = b - a
    cantilever = free_i or free_j
    deep = (ln <= 4 * h and not cantilever) or (cantilever and ln < d)
    deep_b = any(a < x <= a + 2 * h for x in jumps) and m.support_i in BEARING and top
    deep_b = deep_b or (any(b - 2 * h <= x < b for x in jumps) and m.support_j in BEARING and top)
    if deep or (deep_b and not cantilever):
        return {**row, "status": "deep-beam"}, [], set()
    if max(c["ratio"] for _, _, cs in stations for c in cs) > 1.0:
        return {**row, "status": "resize"}, [], set()

    torsion = [any(c["torsion"] for c in cs) for _, _, cs in stations]
    minimum = [any(c["minimum"] for c in cs) for _, _, cs in stations]
    heavy = [any(c["heavy"] for c in cs) for _, _, cs in stations]
    needed = [mn or any(c["av"] > 0 or c["ata"] > 0 for c in cs) for mn, (_, _, cs) in zip(minimum, stations)]
    here = [nd or dt.stirrups_throughout for nd in needed]
    s_max = [min(d / 4, ed.s_max_heavy) if hv else min(d / 2, ed.s_max_light) for hv in heavy]
    across = [min(d / 2, ed.s_max_heavy) if hv else min(d, ed.s_max_light) for hv in heavy]
    s_across = min([a_ for a_, hr in zip(across, here) if hr], default=math.inf)
    x_clear = np.array([x for x, _, _ in stations])

    chosen = None
    for bar, base_legs in dt.ladder:
        db, area = dt.bars[bar]
        legs = max(base_legs, detailing.legs_for_width(bw, dt.clear_cover, db, s_across)) \
            if math.isfinite(s_across) else base_legs
        Aoh, ph = (float(v) for v in demand.torsion_geometry(bw, h, dt.clear_cover, db))
        allowed = []
        for k, (_, _, cs) in enumerate(stations):
            need = max(c["av"] / legs + c["ata"] / Aoh for c in cs)
            s = area / need if need > 0 else math.inf
            if minimum[k]:
                s = min(s, legs * area / av_min)
            smax = min(s_max[k], ph / 8, ed.torsion_s_max) if torsion[k] else s_max[k]
            s = min(s, smax) if (here[k] or need > 0) else math.inf
            allowed.append(math.floor(s / dt.spacing_module + 1e-9) * dt.spacing_module
                           if math.isfinite(s) else s)
        t_ok = all(float(aci.torsion_section_ok(c["vu"], c["tu"], c["vc_hi"], fc, bw, d, Aoh, ph, ed)) <= 1.0
                   for _, _, cs in stations for c in cs if c["torsion"])
        if min(allowed) >= dt.min_spacing and t_ok:
            chosen = (bar, legs, area, Aoh, ph, allowed)
            break
    if chosen is None:
        return {**row, "status": "resize"}, [], set()
    bar, legs, area, Aoh, ph, allowed = chosen
    got = detailing.layout_positions(x_clear, np.array(allowed), ln, free_i, free_j, dt)
    if isinstance(got, str):
        return {**row, "status": "resize"}, [], set()
    positions, empty, _ = got

    # the self-check at every station against every combination, and the governing one
    best, winners = (-1.0, -1.0), set()
    closed = dt.stirrup_shape == "closed" or any(torsion)
    for k, (x, side, cs) in enumerate(stations):
        partner = k > 0 and stations[k - 1][0] == x and stations[k - 1][1] == 0 and side == 1
        rule = -1 if side == 0 else (1 if partner else 0)
        s = float(provided_spacing(positions, np.array([x]), ln, np.array([rule], np.int8))[0])
        av_s = legs * area / s if math.isfinite(s) else 0.0
        has_min = av_s >= av_min * (1 - 1e-9)
        for c in cs:
            vc = c["vc_hi"] if has_min else c["vc_lo"]
            phi_vn = PHI * (vc + min(av_s * fyt * d, ed.vs_max * sfc * bw * d))
            u = c["vu"] / phi_vn if c["vu"] > 0 else 0.0
            if c["torsion"]:
                leg = area / s if math.isfinite(s) else 0.0
                need = max(c["vu"] / PHI - vc, 0.0) / (fyt * d) / legs + c["ata"] / Aoh
                u = max(u, need / leg if leg > 0 else math.inf,
                        float(aci.torsion_section_ok(c["vu"], c["tu"], c["vc_hi"], fc, bw, d, Aoh, ph, ed)))
            total = max(u, c["ratio"])
            if c["vb"] > 0:  # Vb, checked about the other axis with the horizontal legs (postproc.demand.lateral)
                total = max(total, _lateral(c, b_w=bw, h=h, d=d, fc=fc, fyt=fyt, lam=lam, Ag=Ag, s=s, area=area,
                                            legs=legs, closed=closed, ratio_v=c["vu"] / phi_vn,
                                            rule=settings.columns.biaxial_shear, ed=ed))
                if total > 1 + 1e-9:
                    return {**row, "status": "resize"}, [], set()
            # ties to 1e-9, as the engine's (postproc.pipeline.governing): a shear of a few micro-newtons is a tie
            key = (round(total, 9), round(c["vu"] / phi_vn if phi_vn > 0 else 0.0, 9))
            if key > best:
                best, winners = key, {c["name"]}
            elif key == best:
                winners.add(c["name"])
    nd = dt.position_decimals
    zones = [{"member": m.member, "zone": k, "start_mm": round(z.start, nd), "end_mm": round(z.end, nd),
              "bar": bar if z.count else "", "legs": legs if z.count else 0,
              "spacing_mm": round(z.spacing, nd) if np.isfinite(z.spacing) else None, "count": z.count,
              "kind": "stirrup"}
             for k, z in enumerate(zones_from_positions(positions, ln, empty, dt.same_gap), start=1)]
    return ({**row, "status": "designed", "stirrups_total": len(positions), "utilization": round(best[0], 3)},
            zones, winners)


def _lateral(c: dict, b_w, h, d, fc, fyt, lam, Ag, s, area, legs, closed, ratio_v, rule, ed) -> float:
    """A beam's Vb about the other axis (bw = h, d = b - (h - d)): Vc by Table 22.5.5.1(a) where the
    horizontal legs (two of each closed stirrup, one of an open one) give Av,min, else 0; the
    interaction with V (22.5.1.10, 22.5.1.11 or elliptical); the section limit 22.5.1.2."""
    bw, dd = h, b_w - (h - d)
    legs_b = (2 if closed else 1) + 2 * max(legs // 2 - 1, 0)
    av_s = legs_b * area / s if math.isfinite(s) else 0.0
    r8 = min(math.sqrt(fc), ed.sqrt_fc_max)
    vc_a = _vc(fc, bw, dd, c["nu"], Ag, lam, 0.0, True, ed)
    has_min = av_s >= max(ed.av_min_sqrt * math.sqrt(fc), ed.av_min_flat) * bw / fyt * (1 - 1e-9)
    vc = vc_a if has_min else 0.0
    r = c["vb"] / (PHI * (vc + min(av_s * fyt * dd, ed.vs_max * r8 * bw * dd)))
    r = max(r, c["vb"] / (PHI * (vc_a + ed.vs_max * r8 * bw * dd)))
    if c["vb"] > PHI * ed.av_min_threshold * lam * r8 * bw * dd and (not has_min or s > dd / 2 * (1 + 1e-9)):
        return math.inf  # Av,min (9.6.3.1) and d/2 (9.7.6.2.2) about the other axis
    return max(math.hypot(ratio_v, r) if rule == "elliptical" else
               (max(ratio_v, r, (ratio_v + r) / 1.5) if ratio_v > 0.5 and r > 0.5 else max(ratio_v, r)), 0.0)


def _vc(fc: float, bw: float, d: float, Nu: float, Ag: float, lam: float, rho: float, with_min: bool,
        ed: aci.Edition = aci.SI) -> float:
    """Table 22.5.5.1 written out: (a)/(b) with Av >= Av,min, (c) without; Nu/(6Ag) <= 0.05 f'c
    (22.5.5.1.2), sqrt(f'c) <= 8.3 MPa | 100 psi (22.5.3.1), 0 <= Vc <= 0.42 | 5 lambda sqrt(f'c) bw d
    (22.5.5.1.1); the coefficients of the edition ``ed``."""
    r = min(math.sqrt(fc), ed.sqrt_fc_max)
    axial = min(Nu / (6.0 * Ag), 0.05 * fc)
    if with_min:
        coef = max(ed.vc_a * lam * r, ed.vc_b * lam * rho ** (1 / 3) * r)
    else:
        coef = ed.vc_b * min(math.sqrt(2.0 / (1.0 + ed.size_effect * d)), 1.0) * lam * rho ** (1 / 3) * r
    return min(max((coef + axial) * bw * d, 0.0), ed.vc_max * lam * r * bw * d)


def _gap_at(positions: list[float], x: float, clear: float) -> float:
    """The gap between the ties on either side of x (beyond the end ties: the larger of the gap to
    the face and the gap next to it); at a tie, the larger of its two gaps."""
    pts = [0.0] + list(positions) + [clear]
    gaps = [b - a for a, b in zip(pts[:-1], pts[1:])]
    if len(gaps) >= 3:
        gaps[0], gaps[-1] = max(gaps[0], gaps[1]), max(gaps[-1], gaps[-2])
    k = bisect.bisect_left(pts, x)
    if k < len(pts) and pts[k] == x and 0 < k < len(pts) - 1:
        return max(gaps[k - 1], gaps[k])
    return gaps[max(min(k - 1, len(gaps) - 1), 0)]


def check_column(m: pd.Series, forces: pd.DataFrame, combo_names: list[str], factors: np.ndarray, cases: list[str],
                 bar: str, legs_v: int, legs_vb: int, positions: np.ndarray, settings: Settings,
                 step: float | None = None, stations=None) -> dict:
    """A plain re-check of a column's ties (Chapter 10 columns without torsion): at stations every
    ``step`` (default 10 mm | 0.4 in) and at every input station, for every combination listed one by one, each
    direction's phi Vn with the tie gap in force there (22.5.1.1, 22.5.8.5.3, 22.5.2.2, Vs <= 0.66
    sqrt(f'c) bw d), the interaction (22.5.1.10, 22.5.1.11, or elliptical), Av,min where Vu > 0.5 phi
    Vc (10.6.2.1, 10.6.2.2), 10.7.6.5.2 and 25.7.2.1(b). Returns the largest utilization, the
    problems found, and the least spacing the demand allows anywhere. ``m`` and ``forces`` are
    named in the run's unit system; lengths in its internal units. ``stations`` (from the face at
    the bottom, as the station trace's x) checks at those points only, instead."""
    U, ed = units.system(settings.units), aci.edition(settings.units)
    m = m.rename(units.si_name)
    forces = units.si_keyed(forces)
    step = settings.detailing.spacing_module / 2.5 if step is None else step
    circular = np.isfinite(m.get("diameter_mm", np.nan))
    fc, lam = float(m.fc_mpa), float(m["lambda"])
    fyt = min(float(m.fyt_mpa), ed.fyt_max)
    D = float(m.diameter_mm) if circular else None
    b, h = (D, D) if circular else (float(m.b_mm), float(m.h_mm))
    edge = float(m.cover_mm) if np.isfinite(m.cover_mm) else h - float(m.d_mm)
    n, db = int(m.n_long), float(m.db_long_mm)
    one = float(m.as_long_mm2) / n if np.isfinite(m.get("as_long_mm2", np.nan)) else math.pi * db**2 / 4
    Ag = math.pi * D**2 / 4 if circular else b * h
    if circular:
        dirs = {"v": (D, 0.8 * D, n // 2 * one / (D * 0.8 * D)), "vb": (D, 0.8 * D, n // 2 * one / (D * 0.8 * D))}
    else:
        pairs = (n - 4) // 2
        on_b = math.floor(pairs * (b - 2 * edge) / (b + h - 4 * edge) + 0.5)
        on_h = pairs - on_b
        dirs = {"v": (b, h - edge, (on_b + 2) * one / (b * (h - edge))),
                "vb": (h, b - edge, (on_h + 2) * one / (h * (b - edge)))}
    legs = {"v": legs_v, "vb": legs_vb}
    db_tie, area = settings.detailing.bars[bar]
    L = float(m.length_m) * U.per_span
    a, clear = float(m.face_i_mm), L - float(m.face_i_mm) - float(m.face_j_mm)
    rule = settings.columns.biaxial_shear
    series = {}
    for case in cases:
        rows = forces[forces.case == case].sort_values("x_m", kind="stable")
        xs = [x * U.per_span for x in rows.x_m]
        series[case] = (xs, [v * U.per_force for v in rows.V_kN], [v * U.per_force for v in rows.Vb_kN],
                        [v * U.per_force for v in rows.N_kN])
    if stations is None:
        pts = {a + k * step for k in range(int(clear // step) + 1)} | {a + clear}
        pts |= {x for s in series.values() for x in s[0] if a <= x <= a + clear}
    else:
        pts = {a + float(x) for x in stations}
    s_tie = min(16 * db, 48 * db_tie, min(b, h))  # 25.7.2.1(b)
    worst, problems, least = 0.0, [], math.inf
    pos = sorted(float(p) for p in positions)
    for x in sorted(pts):
        per_case = {c: [(_value(s[0], s[k], x, True) if s[0] else 0.0) for k in (1, 2, 3)] for c, s in series.items()}
        s_gap = _gap_at(pos, x - a, clear)
        needed = {"v": False, "vb": False}
        heavy = {"v": False, "vb": False}
        for name, row in zip(combo_names, factors):
            V = abs(sum(f * per_case[c][0] for f, c in zip(row, cases)))
            Vb = abs(sum(f * per_case[c][1] for f, c in zip(row, cases)))
            Nu = -sum(f * per_case[c][2] for f, c in zip(row, cases))
            vu = {"v": V, "vb": Vb}
            ratio, t_need = {}, {}
            for k, (bw, d, rho) in dirs.items():
                av_min = max(ed.av_min_sqrt * math.sqrt(fc), ed.av_min_flat) * bw / fyt  # 10.6.2.2
                av_s = legs[k] * area / s_gap
                has_min = av_s >= av_min * (1 - 1e-9)
                vc = _vc(fc, bw, d, Nu, Ag, lam, rho, has_min, ed)
                vc_lo = _vc(fc, bw, d, Nu, Ag, lam, rho, False, ed)
                vc_hi = _vc(fc, bw, d, Nu, Ag, lam, rho, True, ed)
                vs = min(av_s * fyt * d, ed.vs_max * min(math.sqrt(fc), ed.sqrt_fc_max) * bw * d)
                ratio[k] = vu[k] / (PHI * (vc + vs)) if vu[k] > 0 else 0.0
                if vu[k] > PHI * (vc_hi + ed.vs_max * min(math.sqrt(fc), ed.sqrt_fc_max) * bw * d) * (1 + 1e-9):
                    problems.append(f"x = {x - a:.0f}: {name}: {k} over the section limit (22.5.1.2)")
                if vu[k] > 0.5 * PHI * vc_lo:  # 10.6.2.1
                    needed[k] = True
                    if not has_min:
                        problems.append(f"x = {x - a:.0f}: {name}: Av < Av,min in direction {k} (10.6.2.1)")
                    t_need[k] = av_min / (legs[k] * area)
                heavy[k] |= vu[k] / PHI - vc_hi > ed.heavy_vs * min(math.sqrt(fc), ed.sqrt_fc_max) * bw * d
            rx, ry = ratio["v"], ratio["vb"]
            u = math.hypot(rx, ry) if rule == "elliptical" else (
                max(rx, ry, (rx + ry) / 1.5) if rx > 0.5 and ry > 0.5 else max(rx, ry))
            worst = max(worst, u)
            if u > 1 + 1e-9:
                problems.append(f"x = {x - a:.0f}: {name}: utilization {u:.4f}")
            least = min(least, 1.0 / _least_t(vu, Nu, dirs, legs, area, fc, fyt, lam, Ag, rule, t_need, ed))
        s_max = s_tie
        for k, (bw, d, _) in dirs.items():
            if needed[k]:
                s_max = min(s_max, min(d / 4, ed.s_max_heavy) if heavy[k] else min(d / 2, ed.s_max_light))  # 10.7.6.5.2
        least = min(least, s_max)
        if s_gap > s_max * (1 + 1e-9):
            problems.append(f"x = {x - a:.0f}: gap {s_gap:g} mm over s_max {s_max:g} mm")
    return {"utilization": worst, "problems": problems, "least_spacing": least}


def _least_t(vu, Nu, dirs, legs, area, fc, fyt, lam, Ag, rule, t_need, ed) -> float:
    """The least 1/s at which one combination passes, within each stretch where the Vc of each
    direction is fixed (Table 22.5.5.1 switches to (a)/(b) at Av = Av,min): each direction alone in
    closed form, the interaction by a scalar root search."""
    r8 = min(math.sqrt(fc), ed.sqrt_fc_max)
    k_of = {k: legs[k] * area * fyt * d for k, (bw, d, _) in dirs.items()}  # Vs per unit 1/s
    t_min = {k: max(ed.av_min_sqrt * math.sqrt(fc), ed.av_min_flat) * bw / fyt / (legs[k] * area)
             for k, (bw, d, _) in dirs.items()}
    breaks = sorted({0.0, *t_min.values()})
    lower = max([0.0, *t_need.values()])
    for lo, hi in zip(breaks, breaks[1:] + [math.inf]):
        if hi <= lower:
            continue
        lo = max(lo, lower)
        c = {k: _vc(fc, bw, d, Nu, Ag, lam, rho, lo >= t_min[k] * (1 - 1e-12), ed) for k, (bw, d, rho) in dirs.items()}
        cap = {k: ed.vs_max * r8 * bw * d for k, (bw, d, _) in dirs.items()}

        def ratio(k, t):
            return vu[k] / (PHI * (c[k] + min(k_of[k] * t, cap[k]))) if vu[k] > 0 else 0.0

        def ok(t):
            rx, ry = ratio("v", t), ratio("vb", t)
            u = math.hypot(rx, ry) if rule == "elliptical" else (
                max(rx, ry, (rx + ry) / 1.5) if rx > 0.5 and ry > 0.5 else max(rx, ry))
            return u <= 1 + 1e-9

        # each direction alone: Vs = Vu/(phi r) - Vc for the target ratio r; the interaction sets r
        def t_for(k, r):
            return max(vu[k] / (PHI * r) - c[k], 0.0) / k_of[k] if vu[k] > 0 else 0.0

        options = [max(lo, t_for("v", 1.0), t_for("vb", 1.0))]
        if rule == "elliptical":
            options.append(_root(lambda t: math.hypot(ratio("v", t), ratio("vb", t)) - 1.0, lo))
        else:
            options.append(max(lo, min(t_for("v", 0.5), t_for("vb", 0.5)) * (1 + 1e-12)))  # one ratio <= 0.5
            options.append(_root(lambda t: ratio("v", t) + ratio("vb", t) - 1.5, lo))  # the sum <= 1.5
        good = [t for t in options if t < hi and ok(t)]
        if good:
            return max(min(good), 1e-300)
    return math.inf


def _root(f, lo: float) -> float:
    """The least t >= lo with f(t) <= 0 for a nonincreasing f: doubling, then 200 halvings."""
    if f(lo) <= 0:
        return lo
    hi = max(lo, 1e-6) * 2
    while f(hi) > 0:
        hi *= 2
        if hi > 1e6:
            return math.inf
    for _ in range(200):
        mid = (lo + hi) / 2
        lo, hi = (lo, mid) if f(mid) <= 0 else (mid, hi)
    return hi


# ----------------------------------------------------------------------------- the set-out, one member at a time
# The plain forms of the batched set-out steps of postproc.detailing, kept to check them
# (tests/test_layout_batch.py) and used by this module's own design.


def choose_levels(u: np.ndarray, s_env: np.ndarray, max_levels: int) -> np.ndarray:
    """The plain per-member level choice (what detailing.choose_levels computes in one step):
    spacings per station from one face, nondecreasing toward the middle, at most ``max_levels``
    distinct values, each <= the allowed spacing, using the fewest stirrups."""
    values = np.unique(s_env)
    if len(values) <= max_levels:
        return s_env
    widths = np.diff(np.concatenate([u, [u[-1]]]))
    pos = np.searchsorted(values, s_env)
    lengths = np.bincount(pos, weights=widths, minlength=len(values))
    best, best_cost = None, np.inf
    for rest in itertools.combinations(range(1, len(values)), max_levels - 1):
        chosen = np.array((0, *rest))
        use = chosen[np.searchsorted(chosen, np.arange(len(values)), side="right") - 1]
        cost = np.sum(lengths / np.where(np.isfinite(values[use]), values[use], 1e12))
        if cost < best_cost:
            best, best_cost = use, cost
    return values[best][pos]


def zones_from_positions(x: np.ndarray, clear_span: float, empty: list[tuple[float, float]],
                         same_gap: float = Detailing.same_gap) -> list[detailing.Zone]:
    """The plain per-member zones (what detailing.zones_batch derives for a whole batch):
    zones as a detailer sets them out, derived from the stirrup positions.

    Runs of equal gaps are zones; where two runs meet, the stirrup between them belongs
    to the tighter one; a lone gap between two runs (a transition) belongs to neither,
    so each zone is "count stirrups from start to end at spacing". Spans left without
    stirrups on purpose are zones of count 0. Gaps closer than ``same_gap`` (0.15 mm, or
    the inch-pound settings' 0.005 in: the rounding of two positions) are equal."""
    n = len(x)
    if not n:
        return [detailing.Zone(0.0, clear_span, np.nan, 0)]
    holes = [(a, b) for a, b in empty if b > a]
    gaps = np.diff(x)
    hole_gap = np.array([any(a <= x[k] + 1e-6 and b >= x[k + 1] - 1e-6 for a, b in holes) for k in range(n - 1)],
                        bool)
    runs = []  # (first gap, last gap) of each run of equal gaps, holes excluded
    k = 0
    while k < n - 1:
        j = k
        while j + 1 < n - 1 and not hole_gap[k] and not hole_gap[j + 1] and abs(gaps[j + 1] - gaps[k]) < same_gap:
            j += 1
        if not hole_gap[k]:
            runs.append((k, j))
        k = j + 1
    owner = np.full(n, -1)
    multi = sorted((r for r in range(len(runs)) if runs[r][1] > runs[r][0]), key=lambda r: gaps[runs[r][0]])
    for r in multi:  # tighter runs first
        p, q = runs[r]
        free = owner[p:q + 2] < 0
        owner[p:q + 2][free] = r
    for r, (p, q) in enumerate(runs):
        if q == p and owner[p] < 0 and owner[p + 1] < 0:  # a lone gap between two lone stirrups
            owner[p:p + 2] = r
    zones: list[detailing.Zone] = []
    if holes and holes[0][0] <= 0.0 < x[0]:
        zones.append(detailing.Zone(0.0, float(x[0]), np.nan, 0))
    i = 0
    while i < n:
        j = i
        while j + 1 < n and owner[i] >= 0 and owner[j + 1] == owner[i]:
            j += 1
        count = j - i + 1
        # a run's gaps agree within same_gap; its spacing is the one most of them have
        zones.append(detailing.Zone(float(x[i]), float(x[j]), float(np.median(gaps[i:j])) if count > 1 else np.nan, count))
        if j < n - 1 and hole_gap[j]:
            zones.append(detailing.Zone(float(x[j]), float(x[j + 1]), np.nan, 0))
        i = j + 1
    if holes and holes[-1][1] >= clear_span and x[-1] < clear_span:
        zones.append(detailing.Zone(float(x[-1]), clear_span, np.nan, 0))
    return zones


def provided_spacing(x: np.ndarray, stations: np.ndarray, clear_span: float, side: np.ndarray | None = None) -> np.ndarray:
    """The plain per-member spacing in force (what detailing.provided_spacing_batch computes
    for a whole batch) at each station: the gap between the stirrups on either side;
    beyond the first or last stirrup, the larger of the gap to the face or free end and
    the gap next to it; inf where there are none. At a station on a stirrup, ``side``
    says which gap it stands for: -1 the one before it (the left limit of a jump), +1 the
    one after it (the right limit), 0 the larger of the two (shear continuous there)."""
    n = len(x)
    if n == 0:
        return np.full(len(stations), np.inf)
    gaps = np.diff(x)
    edge_lo = max(x[0], gaps[0] if n > 1 else 0.0)
    edge_hi = max(clear_span - x[-1], gaps[-1] if n > 1 else 0.0)
    ext = np.concatenate([[edge_lo], gaps, [edge_hi]])  # ext[k]: the gap before stirrup k
    k = np.searchsorted(x, stations, side="left")  # stirrups before each station
    on = (k < n) & (x[np.minimum(k, n - 1)] == stations)
    before, after = ext[k], ext[np.minimum(k + 1, n)]
    side = np.zeros(len(stations), np.int8) if side is None else side
    at_stirrup = np.where(side < 0, before, np.where(side > 0, after, np.maximum(before, after)))
    return np.where(on, at_stirrup, before)
