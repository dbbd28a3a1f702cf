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
