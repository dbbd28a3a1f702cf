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
import math

import numpy as np
import pandas as pd

from postproc import detailing, units
from postproc.demand import beams as demand
from postproc.codes import aci318_19 as aci
from postproc.settings import Settings
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


def _combo_values(V, N, T, names, factors):
    """Every combination's (|V|, Nu compression positive, |T|)."""
    out = []
    for name, row in zip(names, factors):
        v = sum(f * p for f, p in zip(row, V))
        n = sum(f * p for f, p in zip(row, N))
        t = sum(f * p for f, p in zip(row, T))
        out.append((name, abs(v), -n, abs(t)))
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
        series[case] = (xs, [v * U.per_force for v in rows.V_kN], [v * U.per_force for v in rows.N_kN],
                        [v * U.per_moment for v in rows.T_kNm])
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
                    for q in (1, 2, 3)]
        combos = []
        for name, Vu, Nu, Tu in _combo_values(*per_case, combo_names, factors):
            vc_hi = float(aci.vc_with_min_stirrups(fc, bw, d, Nu, Ag, lam, rho, ed))
            vc_lo = float(aci.vc_without_min_stirrups(fc, bw, d, Nu, Ag, rho_c, lam, ed))
            t_on = Tu > 0 and Tu >= PHI * float(aci.torsion_threshold(fc, Acp, pcp, Nu, Ag, lam, ed))
            req = (Vu > PHI * vc_lo) if exempt else (Vu > float(aci.av_min_threshold(fc, bw, d, lam, ed)))
            req = req or t_on
            q_hi = max(Vu / PHI - vc_hi, 0.0) / (fyt * d)
            q_lo = max(Vu / PHI - vc_lo, 0.0) / (fyt * d)
            av = q_hi if req else min(q_lo, max(q_hi, av_min))
            combos.append(dict(name=name, vu=Vu, nu=Nu, tu=Tu, vc_hi=vc_hi, vc_lo=vc_lo, torsion=t_on, minimum=req,
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
    for k, (x, side, cs) in enumerate(stations):
        partner = k > 0 and stations[k - 1][0] == x and stations[k - 1][1] == 0 and side == 1
        rule = -1 if side == 0 else (1 if partner else 0)
        s = float(detailing.provided_spacing(positions, np.array([x]), ln, np.array([rule], np.int8))[0])
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
            key = (round(total, 12), round(c["vu"] / phi_vn if phi_vn > 0 else 0.0, 12))
            if key > best:
                best, winners = key, {c["name"]}
            elif key == best:
                winners.add(c["name"])
    nd = dt.position_decimals
    zones = [{"member": m.member, "zone": k, "start_mm": round(z.start, nd), "end_mm": round(z.end, nd),
              "bar": bar if z.count else "", "legs": legs if z.count else 0,
              "spacing_mm": round(z.spacing, nd) if np.isfinite(z.spacing) else None, "count": z.count,
              "kind": "stirrup"}
             for k, z in enumerate(detailing.zones_from_positions(positions, ln, empty, dt.same_gap), start=1)]
    return ({**row, "status": "designed", "stirrups_total": len(positions), "utilization": round(best[0], 3)},
            zones, winners)
