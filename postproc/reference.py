"""A straightforward per-member implementation of the same design, for the benchmark.

One member at a time, one station at a time, one combination at a time, in plain
Python over pandas rows; the code provisions are the same functions as the engine's
(called on scalars) and the zone layout is the same per-member routine. Its only
purposes are to check the vectorised engine on a sample of members and to measure
what vectorisation buys.
"""

from __future__ import annotations

import bisect
import math

import numpy as np
import pandas as pd

from postproc import detailing
from postproc.codes import aci318_19 as aci
from postproc.settings import BAR_CATALOGUE, Settings
from postproc.stations import BEARING

PHI = aci.PHI_SHEAR


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


def design_member(m: pd.Series, forces: pd.DataFrame, combo_names: list[str], factors: np.ndarray,
                  cases: list[str], settings: Settings) -> tuple[dict, list[dict]]:
    """The members.csv row and zones.csv rows of one beam supported at both or one end."""
    st, dt = settings.stations, settings.detailing
    L = m.length_m * 1000.0
    a, b = m.face_i_mm, L - m.face_j_mm
    d, h, bw, fc, lam = m.d_mm, m.h_mm, m.b_mm, m.fc_mpa, m["lambda"]
    fyt = min(m.fyt_mpa, aci.FYT_MAX_MPA)
    series = {}
    vmax = 0.0
    jumps = []
    for case in cases:
        rows = forces[forces.case == case].sort_values("x_m", kind="stable")
        xs = [x * 1000.0 for x in rows.x_m]
        series[case] = (xs, [v * 1e3 for v in rows.V_kN], [v * 1e3 for v in rows.N_kN], [v * 1e6 for v in rows.T_kNm])
        vmax = max([vmax] + [abs(v) for v in series[case][1]])
    for case in cases:
        xs, vs = series[case][0], series[case][1]
        for k in range(1, len(xs)):
            if xs[k] == xs[k - 1] and abs(vs[k] - vs[k - 1]) > max(st.point_load_kN * 1e3, st.point_load_fraction * vmax):
                jumps.append(xs[k])

    step = min(st.max_step_mm, d / st.steps_per_d)
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

    def forces_at(x: float, right: bool) -> list[tuple[float, float, float]]:
        per_case = [[_value(s[0], s[q], x, right) if s[0] else 0.0 for q in (1, 2, 3)] for s in
                    (series[c] for c in cases)]
        out = []
        for row in factors:
            V = sum(f * p[0] for f, p in zip(row, per_case))
            N = sum(f * p[1] for f, p in zip(row, per_case))
            T = sum(f * p[2] for f, p in zip(row, per_case))
            out.append((abs(V), -N, abs(T)))
        return out

    rho = m.as_tension_mm2 / (bw * d) if np.isfinite(m.as_tension_mm2) else float("nan")
    rho_c = rho if np.isfinite(rho) else float(aci.rho_w_lower_bound(fc, m.fy_mpa))
    Ag = bw * h + ((m.bf_mm - bw) * m.hf_mm if np.isfinite(m.bf_mm) else 0.0)
    exempt = bool(aci.av_min_exempt(h, bw, m.hf_mm if np.isfinite(m.hf_mm) else None))
    av_min = float(aci.av_min_over_s(fc, bw, fyt))
    sfc = float(aci.sqrt_fc(fc))
    x1 = max(bw - 2 * dt.clear_cover_mm - max(BAR_CATALOGUE[bb][0] for bb, _ in dt.ladder), 1.0)
    y1 = max(h - 2 * dt.clear_cover_mm - max(BAR_CATALOGUE[bb][0] for bb, _ in dt.ladder), 1.0)
    Aoh, ph = x1 * y1, 2 * (x1 + y1)

    xc, av_env, at_env, s_max, across, avmin_any, ratio_max, vu_env = [], [], [], [], [], [], 0.0, []
    for x, side in grid:
        src = x
        if use_i and x < a + d:
            src = a + d
        if use_j and x > b - d:
            src = b - d
        combos = forces_at(src, side == 1 or src != x)
        best_av, best_at, heavy, need_min, tors = 0.0, 0.0, False, False, False
        for Vu, Nu, Tu in combos:
            vc_hi = float(aci.vc_with_min_stirrups(fc, bw, d, Nu, Ag, lam, rho))
            vc_lo = float(aci.vc_without_min_stirrups(fc, bw, d, Nu, Ag, rho_c, lam))
            t_on = Tu > 0 and Tu >= PHI * float(aci.torsion_threshold(fc, bw * h, 2 * (bw + h), Nu, Ag, lam))
            req = (Vu > PHI * vc_lo) if exempt else (Vu > float(aci.av_min_threshold(fc, bw, d, lam)))
            req = req or t_on
            q_hi = max(max(Vu / PHI - vc_hi, 0.0) / (fyt * d), av_min)
            q_lo = max(Vu / PHI - vc_lo, 0.0) / (fyt * d)
            av = q_hi if req else min(q_lo, q_hi)
            at = float(aci.at_over_s(Tu, Aoh, fyt)) if t_on else 0.0
            best_av, best_at = max(best_av, av), max(best_at, at)
            heavy = heavy or (Vu / PHI - vc_hi) > 0.33 * sfc * bw * d
            need_min, tors = need_min or req, tors or t_on
            limit = PHI * (vc_hi + 0.66 * sfc * bw * d)
            r = float(aci.torsion_section_ok(Vu, Tu, vc_hi, fc, bw, d, Aoh, ph)) if t_on else Vu / limit
            ratio_max = max(ratio_max, r)
        along = min(d / 4, 300.0) if heavy else min(d / 2, 600.0)
        if tors:
            along = min(along, ph / 8, 300.0)
        xc.append(x - a)
        av_env.append(best_av)
        at_env.append(best_at)
        s_max.append(along)
        across.append(min(d / 2, 300.0) if heavy else min(d, 600.0))
        avmin_any.append(need_min)
        vu_env.append(max(c[0] for c in combos))

    row = {"member": m.member, "crit_i": crit_i, "crit_j": crit_j,
           "vu_design_i_kN": round(vu_env[0] / 1e3, 2), "vu_design_j_kN": round(vu_env[-1] / 1e3, 2)}
    ln = b - a
    cantilever = free_i or free_j
    if (ln <= 4 * h and not cantilever) or (cantilever and ln < d):
        return {**row, "status": "deep-beam"}, []
    deep_b = any(a < x <= a + 2 * h for x in jumps) and m.support_i in BEARING and top
    deep_b = deep_b or (any(b - 2 * h <= x < b for x in jumps) and m.support_j in BEARING and top)
    if deep_b and not cantilever:
        return {**row, "status": "deep-beam"}, []
    if ratio_max > 1.0:
        return {**row, "status": "resize"}, []
    here = np.array(avmin_any) | (np.array(av_env) > 0) | (np.array(at_env) > 0) | dt.stirrups_throughout
    s_across = float(np.array(across)[here].min()) if here.any() else np.inf
    lay = detailing.layout_member(np.array(xc), ln, np.array(av_env), np.array(at_env), np.array(s_max), s_across,
                                  here, float(bw), free_i, free_j, dt)
    if isinstance(lay, str):
        return {**row, "status": "resize"}, []
    zones = [{"member": m.member, "zone": k, "start_mm": round(z.start, 1), "end_mm": round(z.end, 1),
              "bar": lay.bar if z.count else "", "legs": lay.legs if z.count else 0,
              "spacing_mm": z.spacing if np.isfinite(z.spacing) else None, "count": z.count}
             for k, z in enumerate(lay.zones, start=1)]
    return {**row, "status": "designed", "stirrups_total": lay.count}, zones
