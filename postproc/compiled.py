"""The numba kernels behind ``postproc.kernels`` (imported only through it: importing this
module imports numba). Each one is the twin of a numpy function named in its docstring and
gives the same bits: the same float64 operations in the same order (no fast-math, so no
fused multiply-add), and products by +1 or -1 (exact)."""

from __future__ import annotations

import numpy as np
from numba import njit


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
