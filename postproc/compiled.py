"""The numba kernels behind ``postproc.kernels`` (imported only through it: importing this
module imports numba). Each one is the twin of a numpy function named in its docstring and
gives the same bits: the same float64 operations in the same order (no fast-math, so no
fused multiply-add), and products by +1 or -1 (exact)."""

from __future__ import annotations

import numpy as np
from numba import njit

from postproc.kernels import BY_PYTHON, NO_SET_OUT, NONE_NEEDED, SET_OUT, ZONES_MET  # set_out's outcomes


@njit(cache=True, inline="always")
def _removes(stack, signs, q, s, o, e):
    """Whether entry o drops entry e of station s in sign quadrant q (``combos._front``):
    with two coordinates, o ahead in the first (larger, or equal and before e) and at least
    as large in the second; with three or more, o at least as large in every coordinate and
    larger in one, or equal in all and before e."""
    m = stack.shape[2]
    if m == 2:
        if signs[q, 1] * stack[s, o, 1] < signs[q, 1] * stack[s, e, 1]:
            return False
        a_o, a_e = signs[q, 0] * stack[s, o, 0], signs[q, 0] * stack[s, e, 0]
        return a_o > a_e or (a_o == a_e and o < e)
    larger = o < e
    for j in range(m):
        c_o, c_e = signs[q, j] * stack[s, o, j], signs[q, j] * stack[s, e, j]
        if not c_o >= c_e:
            return False
        if c_o > c_e:
            larger = True
    return larger


@njit(cache=True)
def _station_front(stack, s, signs, valid, out, kept):
    """``combos._front`` of station s for every sign quadrant (``signs`` (Q, m)), OR-ed into
    ``out[s]``; ``stack`` (S, K, m), ``valid`` (S, K). The first quadrant's entries are taken
    in turn against the front so far: one that a kept entry drops is dropped, otherwise it
    drops the kept entries it removes and is kept. The relation is transitive and does not
    depend on the order the entries are taken in, so what is kept at the end is what no
    entry drops: ``combos._front``'s set. A later quadrant can only add the entries not kept
    yet; where they are few (three quarters of the entries or fewer, as with three or more
    coordinates, where most entries are on some front), each of them alone is taken against
    every entry instead: the same set. With one coordinate, the first largest."""
    K, m = stack.shape[1], stack.shape[2]
    for q in range(signs.shape[0]):
        if m == 1:
            best = -1
            for e in range(K):
                if valid[s, e] and (best < 0 or signs[q, 0] * stack[s, e, 0] > signs[q, 0] * stack[s, best, 0]):
                    best = e
            if best >= 0:
                out[s, best] = True
            continue
        left = 0  # valid entries not kept yet (the first quadrant has kept none)
        if q > 0:
            for e in range(K):
                if valid[s, e] and not out[s, e]:
                    left += 1
        if q > 0 and 4 * left <= 3 * K:
            for e in range(K):
                if out[s, e] or not valid[s, e]:
                    continue
                dropped = False
                for o in range(K):
                    if o != e and valid[s, o] and _removes(stack, signs, q, s, o, e):
                        dropped = True
                        break
                if not dropped:
                    out[s, e] = True
            continue
        n = 0
        for e in range(K):
            if not valid[s, e]:
                continue
            dropped = False
            for i in range(n):
                if _removes(stack, signs, q, s, kept[i], e):
                    dropped = True
                    break
            if dropped:
                continue
            j = 0
            for i in range(n):
                if not _removes(stack, signs, q, s, e, kept[i]):
                    kept[j] = kept[i]
                    j += 1
            kept[j] = e
            n = j + 1
        for i in range(n):
            out[s, kept[i]] = True


@njit(cache=True)
def front(stack, signs, valid, out):
    """``combos._front`` of every station (``stack`` (S, K, m)) and sign quadrant, OR-ed into ``out`` (S, K)."""
    kept = np.empty(stack.shape[1], np.int64)
    for s in range(stack.shape[0]):
        _station_front(stack, s, signs, valid, out, kept)


@njit(cache=True)
def dense_front(factors_t, cols, values, signs, out):
    """``combos._dense_candidates``' front without its (S, K) arrays: station by station,
    each combination's coordinates summed as ``combos._combine`` sums them (0, then
    factor x case value case by case over ``cols`` in order; all combinations at once, case
    by case, which the compiler vectorises), then ``_station_front``.
    ``factors_t`` (n_cases, K), ``values`` (S, m, n_cases), ``signs`` (Q, m), ``out`` (S, K)."""
    S, m = values.shape[0], values.shape[1]
    K = factors_t.shape[1]
    sums = np.empty((m, K))
    stack = np.empty((1, K, m))
    valid = np.ones((1, K), np.bool_)
    row = np.zeros((1, K), np.bool_)
    kept = np.empty(K, np.int64)
    for s in range(S):
        for j in range(m):
            acc = sums[j]
            acc[:] = 0.0
            for c in cols:
                v = values[s, j, c]
                f = factors_t[c]
                for k in range(K):
                    acc[k] += v * f[k]
        for k in range(K):
            for j in range(m):
                stack[0, k, j] = sums[j, k]
        row[0, :] = False
        _station_front(stack, 0, signs, valid, row, kept)
        out[s, :] = row[0, :]


@njit(cache=True)
def combine_at(factors, cols, values, which, station, out):
    """``combos._combine_at``: for each entry i, 0 plus factors[which[i], c] x values[c,
    station[i]] case by case over ``cols`` in order, into ``out``."""
    for i in range(len(which)):
        acc = 0.0
        for c in cols:
            acc += factors[which[i], c] * values[c, station[i]]
        out[i] = acc


@njit(cache=True, inline="always", error_model="numpy")
def _tie_ratio(t, area, at, fyt, legs, amin_tol, vc_hi, vc_lo, d, vs_max, vu, phi):
    """One direction of ``demand.columns._ShearTerms.strength`` for one case: Vu / phi Vn
    (``amin_tol`` is Av,min/s x (1 - TOL); np.maximum / np.minimum as numpy takes them, a NaN
    kept whichever side it is on)."""
    av_s = legs * area * t
    vc = vc_hi if av_s >= amin_tol else vc_lo
    x = av_s - 2.0 * at
    x = x if (x >= 0.0 or x != x) else 0.0
    y = x * fyt * d
    vs = y if (y <= vs_max or y != y) else vs_max
    phi_vn = phi * (vc + vs)
    return vu / phi_vn if vu > 0 else 0.0


@njit(cache=True, inline="always", error_model="numpy")
def _tie_passes(i, t, area, at, torsion, fyt, dirs, phi, limit):
    """``_ShearTerms.strength(area, t, "code").utilization <= limit`` of case i: the interaction
    of 22.5.1.10 / 22.5.1.11 (``aci318_19.biaxial_shear_utilization``) and each torsion leg's
    demand over its supply. ``dirs``: 14 rows, per direction legs, Av,min/s x (1 - TOL), Vc
    (a)/(b), Vc (c), d, Vs,max, Vu."""
    rx = abs(_tie_ratio(t, area, at[i], fyt[i], dirs[0][i], dirs[1][i], dirs[2][i], dirs[3][i], dirs[4][i],
                        dirs[5][i], dirs[6][i], phi))
    ry = abs(_tie_ratio(t, area, at[i], fyt[i], dirs[7][i], dirs[8][i], dirs[9][i], dirs[10][i], dirs[11][i],
                        dirs[12][i], dirs[13][i], phi))
    u = rx if (rx >= ry or rx != rx) else ry
    if rx > 0.5 and ry > 0.5:
        s = (rx + ry) / 1.5
        u = u if (u >= s or u != u) else s
    if torsion[i]:
        supply = area * t
        leg = at[i] / supply if supply > 0 else np.inf
    else:
        leg = 0.0
    u = u if (u >= leg or u != u) else leg
    if u != u:
        u = np.inf
    return u <= limit


@njit(cache=True, error_model="numpy")
def tie_bisection(lo, hi, area, at, torsion, fyt, dirs, phi, limit, steps, out):
    """``demand.columns.required_t``'s search, case by case (rule "code"): t = lo where lo
    passes; else, where hi passes, ``steps`` halvings of [lo, hi] (mid = 0.5 (a + b); b = mid
    where mid passes, else a = mid), t = b; else inf. The halvings run step by step over the
    cases that need them, their terms gathered first (a loop the compiler vectorises).
    ``dirs``: a tuple of the 14 per-case rows of ``_tie_passes``."""
    n = len(lo)
    todo = np.empty(n, np.int64)
    m = 0
    for i in range(n):
        if _tie_passes(i, lo[i], area, at, torsion, fyt, dirs, phi, limit):
            out[i] = lo[i]
        elif _tie_passes(i, hi[i], area, at, torsion, fyt, dirs, phi, limit):
            todo[m] = i
            m += 1
        else:
            out[i] = np.inf
    idx = todo[:m]
    at_t, torsion_t, fyt_t = at[idx], torsion[idx], fyt[idx]
    dirs_t = np.empty((14, m))
    for j in range(14):
        dirs_t[j] = dirs[j][idx]
    a, b = lo[idx], hi[idx]
    for _ in range(steps):
        for i in range(m):
            mid = 0.5 * (a[i] + b[i])
            good = _tie_passes(i, mid, area, at_t, torsion_t, fyt_t, dirs_t, phi, limit)
            b[i] = mid if good else b[i]
            a[i] = a[i] if good else mid
    out[idx] = b


# ----------------------------------------------------------------------------- stirrup set-out



@njit(cache=True)
def _pairwise_block(a, lo, n):
    """numpy's pairwise sum of a[lo:lo + n] for n <= 128: a plain sum below 8, else eight
    running sums added in pairs, then the rest."""
    if n < 8:
        res = 0.0
        for i in range(lo, lo + n):
            res += a[i]
        return res
    r = a[lo:lo + 8].copy()
    i = 8
    while i < n - n % 8:
        for j in range(8):
            r[j] += a[lo + i + j]
        i += 8
    res = ((r[0] + r[1]) + (r[2] + r[3])) + ((r[4] + r[5]) + (r[6] + r[7]))
    while i < n:
        res += a[lo + i]
        i += 1
    return res


@njit(cache=True, inline="always")
def _half(n):
    """Where numpy's pairwise sum splits n items: half of them, down to a multiple of 8."""
    h = n // 2
    return h - h % 8


@njit(cache=True)
def _pairwise_sum(a, lo, n):
    """numpy's sum of a[lo:lo + n] along a contiguous axis, plus the 0.0 that np.sum starts
    from: blocks of up to 128 (``_pairwise_block``), larger runs split in halves (a multiple
    of 8 first) and their sums added. The halving is numpy's recursion unrolled onto a stack
    (a recursive function's cached machine code does not load back)."""
    if n <= 128:
        return 0.0 + _pairwise_block(a, lo, n)
    start, count, state, left = np.empty(64, np.int64), np.empty(64, np.int64), np.zeros(64, np.int64), np.empty(64)
    top, start[0], count[0] = 0, lo, n
    while True:
        if count[top] > 128:  # its left half first
            state[top] = 1
            top += 1
            start[top], count[top], state[top] = start[top - 1], _half(count[top - 1]), 0
            continue
        ret = _pairwise_block(a, start[top], count[top])
        top -= 1
        while top >= 0:
            if state[top] == 1:  # its left half is done: its right half next
                left[top], state[top] = ret, 2
                h = _half(count[top])
                top += 1
                start[top], count[top], state[top] = start[top - 1] + h, count[top - 1] - h, 0
                break
            ret = left[top] + ret
            top -= 1
        if top < 0:
            return 0.0 + ret


@njit(cache=True)
def _choose_levels(u, s_env, max_levels):
    """``detailing.choose_levels``: every choice of levels in the order of
    itertools.combinations, its cost summed as np.sum sums a row, the first least wins."""
    values = np.unique(s_env)
    nv = len(values)
    if nv <= max_levels:
        return s_env.copy()
    n = len(u)
    pos = np.searchsorted(values, s_env)
    lengths = np.zeros(nv)
    for i in range(n):
        lengths[pos[i]] += (u[i + 1] - u[i]) if i + 1 < n else (u[i] - u[i])
    r = max_levels - 1
    idx = np.arange(1, r + 1)  # the chosen levels besides the least, ascending
    best = idx.copy()
    best_cost = np.inf
    terms = np.empty(nv)
    first = True
    while True:
        c, level = 0, 0
        for v in range(nv):
            while c < r and idx[c] <= v:
                level = idx[c]
                c += 1
            den = values[level]
            terms[v] = lengths[v] / (den if np.isfinite(den) else 1e12)
        cost = _pairwise_sum(terms, 0, nv)
        if first or cost < best_cost:
            best_cost, first = cost, False
            best[:] = idx
        i = r - 1
        while i >= 0 and idx[i] == nv - r + i:
            i -= 1
        if i < 0:
            break
        idx[i] += 1
        for j in range(i + 1, r):
            idx[j] = idx[j - 1] + 1
    use = np.zeros(nv, np.int64)
    c, level = 0, 0
    for v in range(nv):
        while c < r and best[c] <= v:
            level = best[c]
            c += 1
        use[v] = level
    out = np.empty(n)
    for i in range(n):
        out[i] = values[use[pos[i]]]
    return out


@njit(cache=True, inline="always")
def _first(s, fixed, first_at):
    """The first stirrup's distance from a face for a run at spacing s: fixed, or s/2."""
    return first_at if fixed else s / 2.0


@njit(cache=True)
def _end_runs(u, s_env, fixed, first_at, max_zones, span, sp, flat, stops):
    """``detailing._end_runs``: the runs go to ``sp`` (spacing), ``flat`` (positions, run after
    run) and ``stops`` (where each run's positions end in ``flat``). Returns (whether the runs
    stay clear of the far end, the middle's spacing)."""
    n = len(s_env)
    suffix = s_env.copy()
    for i in range(n - 2, -1, -1):
        suffix[i] = min(suffix[i + 1], s_env[i])
    levels = _choose_levels(u, suffix, max_zones)
    starts = [0]
    for i in range(1, n):
        if levels[i] != levels[i - 1]:
            starts.append(i)
    has_last, last = False, 0.0
    for k in range(len(starts) - 1):
        s = levels[starts[k]]
        boundary = u[starts[k + 1]]
        f = _first(s, fixed, first_at)
        limit = span - f
        x = f if not has_last else last + s
        begin = len(flat)
        flat.append(x)
        while flat[-1] < boundary - 1e-9 or (not has_last and len(flat) - begin < 2):
            flat.append(flat[-1] + s)
        if flat[-1] > limit + 1e-9:
            while len(flat) > begin and flat[-1] > limit + 1e-9:
                flat.pop()
            if len(flat) == begin or span - flat[-1] > s + 1e-9:
                return False, 0.0
        sp.append(s)
        stops.append(len(flat))
        has_last, last = True, flat[-1]
    return True, levels[starts[-1]]


@njit(cache=True)
def _drop_run(sp, flat, stops):
    """Remove the last run of one face (its spacing, its positions, its stop)."""
    sp.pop()
    stops.pop()
    keep = stops[-1] if len(stops) else 0
    while len(flat) > keep:
        flat.pop()


@njit(cache=True)
def _floor_div(a, b):
    """Python's float a // b (CPython's float_divmod)."""
    mod = np.fmod(a, b)
    div = (a - mod) / b
    if mod != 0.0:
        if (b < 0.0) != (mod < 0.0):
            div -= 1.0
    if div != 0.0:
        q = np.floor(div)
        if div - q > 0.5:
            q += 1.0
        return q
    return np.copysign(0.0, a / b)


@njit(cache=True)
def _continued(a, b, s, smin, fixed_a, has_face, face_b, close, out):
    """``detailing._continued`` appending to ``out``; False where it gives None."""
    if not has_face:
        k = int(np.floor((b - smin - a) / s + 1e-9))
        if k < 0 or b - (a + k * s) > s + 1e-9:
            return False
        if fixed_a:
            out.append(a)
        for j in range(1, k + 1):
            out.append(a + j * s)
        return True
    k = int(np.floor((b - a) / s + 1e-9))
    if k < 0:
        return False
    last = a + k * s
    extra = False
    if abs(b - last) <= 1e-9 or (face_b - last <= s + 1e-9 and not close):
        pass
    elif smin - 1e-9 <= b - last and b - last <= s + 1e-9:
        extra = True
    else:
        return False
    if fixed_a:
        out.append(a)
    for j in range(1, k + 1):
        out.append(a + j * s)
    if extra:
        out.append(b)
    return True


@njit(cache=True)
def _centred(a, b, s, smin, fixed_a, fixed_b, step, out):
    """``detailing._centred`` appending to ``out``: 1 done, 0 None, -1 the one case left to
    Python (two stirrups to place closer than the minimum: one between, rounded as Python rounds)."""
    d = b - a
    if d < -1e-9:
        return 0
    if d <= s + 1e-9:
        if d >= smin - 1e-9:
            if fixed_a:
                out.append(a)
            if fixed_b:
                out.append(b)
            return 1
        if fixed_a and fixed_b:
            return -1
        return 0
    n = int(np.ceil(d / s - 1e-9)) - 1
    g = d - (n - 1) * s
    if g < 2 * smin - 1e-9:
        return 0
    g_a = np.floor(g / 2 / step) * step
    if fixed_a:
        out.append(a)
    for k in range(n):
        out.append(a + g_a + k * s)
    if fixed_b:
        out.append(b)
    return 1


@njit(cache=True)
def _fit_between(l_sp, r_sp, has_left, has_right, a, b, s, smin, module, step, fixed_a, has_face, face_b, close,
                 out):
    """``detailing._fit_between`` appending to ``out`` (``l_sp``, ``r_sp``: the spacing of the
    last run of each side): 1 done, 0 None, -1 left to Python."""
    n_try = int(_floor_div(s - smin, module)) + 1
    for t in range(n_try):
        s_try = s - t * module
        for extra in range(4):
            for i in range(extra + 1):
                j = extra - i
                if (i and not has_left) or (j and not has_right):
                    continue
                a2 = a + i * l_sp if i else a
                b2 = b - j * r_sp if j else b
                begin = len(out)
                for k in range(1, i + 1):
                    out.append(a + k * l_sp)
                got = 0
                if not j and _continued(a2, b2, s_try, smin, fixed_a, has_face, face_b, close, out):
                    got = 1
                if got == 0:
                    got = _centred(a2, b2, s_try, smin, fixed_a, has_face, step, out)
                if got == -1:
                    return -1
                if got == 1:
                    for k in range(j, 0, -1):
                        out.append(b - k * r_sp)
                    return 1
                while len(out) > begin:
                    out.pop()
    return 0


@njit(cache=True)
def _new_runs():
    """Empty (spacings, positions, stops) of the runs from one face."""
    sp, flat, stops = [0.0], [0.0], [0]
    sp.pop()
    flat.pop()
    stops.pop()
    return sp, flat, stops


@njit(cache=True)
def _cantilever(v, env, span, fixed, first_at, max_zones, smin, module, step, hole):
    """``detailing._cantilever``: (what it did, the positions from the fixed face)."""
    sp, out, stops = _new_runs()
    ok, s_tip = _end_runs(v, env, fixed, first_at, max_zones, span, sp, out, stops)
    if not ok:
        sp, out, stops = _new_runs()
        s_tip = env.min()
    if not np.isfinite(s_tip):
        hole[0] = out[-1] if len(out) else 0.0
        hole[1] = span
        return SET_OUT, out
    tip = span - _first(s_tip, fixed, first_at)
    while len(sp) and out[-1] > tip - smin + 1e-9:
        _drop_run(sp, out, stops)
        s_tip = env.min()
    has_runs = len(sp) > 0
    a = out[-1] if has_runs else _first(s_tip, fixed, first_at)
    got = _fit_between(sp[-1] if has_runs else 0.0, 0.0, has_runs, False, a, tip, s_tip, smin, module, step,
                       not has_runs, True, span, False, out)
    return (SET_OUT if got == 1 else NO_SET_OUT if got == 0 else BY_PYTHON), out


@njit(cache=True)
def _set_out_one(u, s_env, span, free_i, free_j, fixed, first_at, close, max_zones, smin, module, step, hole):
    """``detailing.layout_positions`` of one member before rounding: (what it did, positions);
    the span left without stirrups in ``hole`` (NaN where none)."""
    hole[0] = hole[1] = np.nan
    if np.all(np.isinf(s_env)):
        hole[0], hole[1] = 0.0, span
        return NONE_NEEDED, np.empty(0)
    if free_i or free_j:  # a cantilever, set out from its fixed end
        v = u if free_j else (span - u)[::-1].copy()
        env = s_env if free_j else s_env[::-1].copy()
        what, pos = _cantilever(v, env, span, fixed, first_at, max_zones, smin, module, step, hole)
        if what != SET_OUT:
            return what, np.empty(0)
        got = np.array(pos) if len(pos) else np.empty(0)
        if not free_j:
            got = span - got[::-1]
            lo, hi = hole[0], hole[1]
            hole[0], hole[1] = span - hi, span - lo
        return SET_OUT, got
    n = len(u)
    mx = -np.inf
    for i in range(n):
        f = s_env[i] if np.isfinite(s_env[i]) else 1e12
        mx = max(mx, f)
    m, near = -1, np.inf
    for i in range(n):
        f = s_env[i] if np.isfinite(s_env[i]) else 1e12
        if f == mx:
            dist = abs(u[i] - span / 2)
            if m < 0 or dist < near:
                m, near = i, dist
    l_sp, left, l_stops = _new_runs()
    r_sp, right, r_stops = _new_runs()
    ok_l, s_l = _end_runs(u[:m + 1], s_env[:m + 1], fixed, first_at, max_zones, span, l_sp, left, l_stops)
    ok_r = False
    s_r = 0.0
    if ok_l:
        ok_r, s_r = _end_runs((span - u[m:])[::-1].copy(), s_env[m:][::-1].copy(), fixed, first_at, max_zones,
                              span, r_sp, right, r_stops)
    met = False
    if not (ok_l and ok_r):  # a tight run reaching the far end: the tightest spacing throughout
        l_sp, left, l_stops = _new_runs()
        r_sp, right, r_stops = _new_runs()
        s_mid = s_env.min()
        met = True
    else:
        for i in range(len(right)):
            right[i] = span - right[i]  # from face j, descending
        s_mid = s_r if s_r < s_l else s_l
        while len(l_sp) and l_sp[-1] >= s_mid:
            _drop_run(l_sp, left, l_stops)
        while len(r_sp) and r_sp[-1] >= s_mid:
            _drop_run(r_sp, right, r_stops)
    has_a, has_b = len(left) > 0, len(right) > 0
    a = left[-1] if has_a else 0.0
    b = right[-1] if has_b else 0.0
    if has_a and has_b and b - a < smin - 1e-9:
        l_sp, left, l_stops = _new_runs()
        r_sp, right, r_stops = _new_runs()
        s_mid = s_env.min()
        met = True
        has_a = has_b = False
    if not np.isfinite(s_mid):  # nothing needed in the middle
        lo = a if has_a else 0.0
        hi = b if has_b else span
        if hi - lo > smin:
            hole[0], hole[1] = lo, hi
        return SET_OUT, np.sort(_joined(left, [0.0][:0], right))
    fixed_a, has_face = not has_a, not has_b
    a = _first(s_mid, fixed, first_at) if not has_a else a
    b = span - _first(s_mid, fixed, first_at) if not has_b else b
    mid = [0.0]
    mid.pop()
    got = _fit_between(l_sp[-1] if len(l_sp) else 0.0, r_sp[-1] if len(r_sp) else 0.0, len(l_sp) > 0,
                       len(r_sp) > 0, a, b, s_mid, smin, module, step, fixed_a, has_face, span, close, mid)
    if got != 1:
        return (NO_SET_OUT if got == 0 else BY_PYTHON), np.empty(0)
    return (ZONES_MET if met else SET_OUT), np.sort(_joined(left, mid, right))


@njit(cache=True)
def _joined(left, mid, right):
    """The three lists of positions as one array."""
    out = np.empty(len(left) + len(mid) + len(right))
    k = 0
    for part in (left, mid, right):
        for x in part:
            out[k] = x
            k += 1
    return out


@njit(cache=True)
def set_out(u, s_env, offsets, todo, span, free_i, free_j, fixed, first_at, close, max_zones, smin, module, step):
    """``detailing.layout_positions`` of the members ``todo`` before rounding: per member of
    the batch what it did (``what``, 0 where not asked), its positions ``x[starts[m]:starts[m +
    1]]`` and the span left without stirrups (NaN where none)."""
    n = len(offsets) - 1
    what = np.zeros(n, np.int8)
    hole = np.full((n, 2), np.nan)
    parts = [np.empty(0) for _ in range(len(todo))]
    counts = np.zeros(n, np.int64)
    for k, m in enumerate(todo):
        sl = slice(offsets[m], offsets[m + 1])
        w, pos = _set_out_one(u[sl], s_env[sl], span[m], free_i[m], free_j[m], fixed[m], first_at[m], close[m],
                              max_zones, smin, module, step, hole[m])
        what[m] = w
        if w == SET_OUT or w == ZONES_MET:
            counts[m] = len(pos)
            parts[k] = pos
    starts = np.zeros(n + 1, np.int64)
    starts[1:] = np.cumsum(counts)
    x = np.empty(starts[-1])
    for k, m in enumerate(todo):  # in member order, whatever the order of ``todo``
        if counts[m]:
            x[starts[m]:starts[m + 1]] = parts[k]
    return what, x, starts, hole


@njit(cache=True)
def axial_bisection(b1, piece_top, piece_bottom, piece_width, bar_u, half_db, bar_area, alpha_fc, fy, es_eps, target,
                    hi0, steps, out):
    """``sections._solve``'s bisection without phi, for sections without a circle: per
    section, ``steps`` halvings of [0, hi0] (mid = 0.5 (lo + hi); lo = mid where the axial
    force at mid is below the target, else hi = mid), c = 0.5 (lo + hi) into ``out``. The
    axial force is ``sections._Oriented.actions``' own, operation by operation: the block
    (a = beta1 c; each piece's width x its overlap, summed as numpy sums a row) times
    alpha f'c, plus each layer's As (fs - alpha f'c x displaced), summed the same way
    (``alpha_fc`` = 0.85 f'c, ``fy`` already times the steel factor, ``es_eps`` = Es eps_cu)."""
    n, k, m = len(target), piece_top.shape[1], bar_u.shape[1]
    wo, bf = np.empty(k), np.empty(m)
    for i in range(n):
        lo, hi = 0.0, hi0[i]
        for _ in range(steps):
            mid = 0.5 * (lo + hi)
            a = b1[i] * mid
            for j in range(k):
                top = piece_bottom[i, j]
                o = (top if top < a else a) - piece_top[i, j]  # np.minimum (a NaN depth kept)
                wo[j] = piece_width[i, j] * (0.0 if o < 0.0 else o)  # np.clip(o, 0, None)
            axial = alpha_fc[i] * _pairwise_sum(wo, 0, k)
            for j in range(m):
                u, hd = bar_u[i, j], half_db[i, j]
                fs = es_eps * (mid - u) / mid
                fs = -fy[i] if fs < -fy[i] else (fy[i] if fs > fy[i] else fs)
                dsp = (a - (u - hd)) / (2.0 * hd)
                dsp = 0.0 if dsp < 0.0 else (1.0 if dsp > 1.0 else dsp)
                bf[j] = bar_area[i, j] * (fs - alpha_fc[i] * dsp)
            axial = axial + _pairwise_sum(bf, 0, m)
            if axial < target[i]:
                lo = mid
            else:
                hi = mid
        out[i] = 0.5 * (lo + hi)


@njit(cache=True, inline="always")
def _np_max(a, b):
    """np.maximum of two floats: a NaN kept, b where they are equal (numpy's choice between -0 and +0)."""
    return a if (a > b or a != a) else b


@njit(cache=True, inline="always")
def _np_min(a, b):
    """np.minimum of two floats, as ``_np_max``."""
    return a if (a < b or a != a) else b


@njit(cache=True, inline="always")
def _inf_for_nan(x):
    """np.nan_to_num(x, nan=inf, posinf=inf): -inf becomes the most negative float."""
    if x != x or x == np.inf:
        return np.inf
    return -1.7976931348623157e308 if x == -np.inf else x


@njit(cache=True, inline="always")
def _axial_term(nu, ag, fc):
    """``aci318_19.axial_stress_term``: min(Nu / (6 Ag), 0.05 f'c) (22.5.5.1.2)."""
    return _np_min(nu / (6.0 * ag), 0.05 * fc)


@njit(cache=True, inline="always")
def _vc_with_axial(coef, axial, bw, d, cap):
    """``aci318_19._vc_with_axial`` of one case: (coef + axial) bw d, clipped to [0, cap] as
    np.clip clips with an array bound (22.5.5.1, 22.5.5.1.1)."""
    return _np_min(_np_max((coef + axial) * bw * d, 0.0), cap)


@njit(cache=True, error_model="numpy")
def lateral_check(at, spacing, vb, nu, ratio_v, lb_area, amin_tol, coef, ag, fc, bw, dd, cap, fyt, vs_max, threshold,
                  half_d, phi, tol, ratio, both, reason):
    """``demand.lateral.check`` with the code's interaction (22.5.1.10, 22.5.1.11), candidate by
    candidate (member ``at[i]``), the same float operations in the same order: Av/s of the
    horizontal legs, Av,min, Vc of Table 22.5.5.1(a) clipped to 22.5.5.1.1's cap, Vs under its
    22.5.1.2 limit, Vb / phi Vn and over the section limit, the interaction with Vu / phi Vn,
    and the first reason that applies (9.6.3.1, 9.7.6.2.2). Per-member terms come computed:
    ``lb_area`` legs x bar area, ``amin_tol`` Av,min/s x (1 - tol), ``coef`` the coefficient of
    (a), ``cap`` of 22.5.5.1.1, ``vs_max``, ``threshold`` of 9.6.3.1, ``half_d`` d/2 x (1 + tol)."""
    for i in range(len(at)):
        m = at[i]
        sp = spacing[i]
        av_s = lb_area[m] / sp if np.isfinite(sp) else 0.0
        has_min = av_s >= amin_tol[m]
        vc_a = _vc_with_axial(coef[m], _axial_term(nu[i], ag[m], fc[m]), bw[m], dd[m], cap[m])
        vc = vc_a if has_min else 0.0
        vs = _np_min(av_s * fyt[m] * dd[m], vs_max[m])
        v = vb[i]
        r = v / (phi * (vc + vs)) if v > 0 else 0.0
        limit = v / (phi * (vc_a + vs_max[m]))
        rr = _inf_for_nan(_np_max(r, limit))
        rx, ry = abs(_inf_for_nan(ratio_v[i])), abs(rr)
        larger = _np_max(rx, ry)
        u = _np_max(larger, (rx + ry) / 1.5) if (rx > 0.5 and ry > 0.5) else larger
        ratio[i], both[i] = rr, u
        need_min = v > threshold[m]
        if u > 1 + tol:
            reason[i] = 1
        elif need_min and not has_min:
            reason[i] = 2
        elif need_min and sp > half_d[m]:
            reason[i] = 3
        else:
            reason[i] = 0


@njit(cache=True, error_model="numpy")
def beam_pair_demand(at, vu, nu, torsion, zero, coef_hi, coef_lo, ag, fc, b, d, cap, threshold, exempt, fyt, av_min,
                     vs_max, phi, vc_hi, vc_lo, minimum, av, ratio):
    """``demand.beams.pair_demand`` past torsion, candidate by candidate (member ``at[i]``), the
    same float operations in the same order: Vc of Table 22.5.5.1 (a)/(b) and (c) with the axial
    term of 22.5.5.1.2 under the cap of 22.5.5.1.1 (zero where ``zero``: 18.6.5.2), whether
    Av,min applies (9.6.3.1, Table 9.6.3.1, 9.6.4.1), Av/s for strength (22.5.8.5.3) and Vu over
    the section limit (22.5.1.2). Per-member terms come computed (the coefficients of bw d,
    ``threshold`` inf where Table 9.6.3.1 exempts the beam)."""
    for i in range(len(at)):
        m = at[i]
        axial = _axial_term(nu[i], ag[m], fc[m])
        hi = _vc_with_axial(coef_hi[m], axial, b[m], d[m], cap[m])
        lo = _vc_with_axial(coef_lo[m], axial, b[m], d[m], cap[m])
        if zero[i]:
            hi, lo = 0.0, 0.0
        v = vu[i]
        need = v > threshold[m] or (exempt[m] and v > phi * lo) or torsion[i]
        q_hi = _np_max(v / phi - hi, 0.0) / (fyt[m] * d[m])
        q_lo = _np_max(v / phi - lo, 0.0) / (fyt[m] * d[m])
        vc_hi[i], vc_lo[i], minimum[i] = hi, lo, need
        av[i] = q_hi if need else _np_min(q_lo, _np_max(q_hi, av_min[m]))
        ratio[i] = v / (phi * (hi + vs_max[m]))
