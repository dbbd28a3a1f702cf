"""Compiled kernels (numba), each the twin of a numpy function that stays the reference.

``SHEARPOST_KERNELS`` chooses the path: ``numpy`` (the numpy functions alone), ``compiled``
(the kernels here wherever they exist; an error where numba cannot be imported), or
``auto`` (the default: the kernels for work of at least ``AUTO_CELLS`` cells where numba
imports, numpy otherwise, so that small runs do not pay for importing and loading the
compiled code; once a process has loaded them, for work of at least ``LOADED_CELLS``).
Both paths give the same bits: the kernels do the same comparisons of the same float64
numbers and the same arithmetic in the same order as their numpy twins (no fast-math);
tests check them against each other and against brute force.

The kernels themselves are in ``postproc.compiled`` (imported only when used, since it
imports numba). Their machine code is cached beside it (or in numba's user cache where
that is not writable), so that each worker process loads it instead of compiling it.
"""

from __future__ import annotations

import functools
import os

import numpy as np

ENV = "SHEARPOST_KERNELS"
CHOICES = ("auto", "numpy", "compiled")
AUTO_CELLS = 2_000_000  # entries x coordinates of one call from which "auto" takes the compiled kernel
LOADED_CELLS = 10_000  # the same, once the kernels are loaded in this process (a call costs microseconds)

_compiled = None  # the jitted functions, once loaded


# What the kernels take: contiguous and writable arrays. A read-only array (a broadcast view,
# an Arrow buffer) or a strided one is another type to numba, with machine code of its own
# loaded on its first call in each worker (about 0.3 s a kernel) instead of the code the fork
# server loaded (``warm``); per-member terms are short, so their copies cost nothing.
_f64 = functools.partial(np.require, dtype=np.float64, requirements=("C", "W"))
_i64 = functools.partial(np.require, dtype=np.int64, requirements=("C", "W"))
_bool = functools.partial(np.require, dtype=np.bool_, requirements=("C", "W"))


def choice() -> str:
    value = os.environ.get(ENV, "auto").strip().lower() or "auto"
    if value not in CHOICES:
        raise ValueError(f"{ENV}={value!r}: one of {', '.join(CHOICES)}")
    return value


def available() -> bool:
    """Whether numba can be imported (the extra ``compiled``)."""
    return _load(required=False) is not None


def use_compiled(cells: int) -> bool:
    """Whether a call of ``cells`` entries x coordinates takes the compiled kernel."""
    how = choice()
    if how == "numpy" or (how == "auto" and cells < (LOADED_CELLS if _compiled else AUTO_CELLS)):
        return False
    return _load(required=how == "compiled") is not None


def _load(required: bool):
    global _compiled
    if _compiled is None:
        try:  # numba missing, or its shared library not loadable (e.g. no memory left to map it)
            import numba  # noqa: F401

            from postproc import compiled
        except (ImportError, OSError, MemoryError):
            if required:
                raise
            _compiled = False  # the numpy twins give the same results
        else:
            _compiled = compiled
    return _compiled or None


def warm() -> None:
    """Import numba and load every kernel's machine code from its cache, where the kernels
    may be used (run by the fork server: each worker forked from it starts with them loaded
    instead of loading them itself, about 0.6 s a worker)."""
    if choice() == "numpy" or _load(required=False) is None:
        return
    f, v = np.zeros((2, 1)), np.zeros((1, 2))
    front(np.zeros((1, 1, 2)), np.ones((1, 1)), np.ones((1, 2), bool))
    dense_front(f, [v], np.ones((1, 1)))
    combine_at(f, v, np.zeros(1, np.int64), np.zeros(1, np.int64))
    one = np.ones(1)
    tie_bisection(one, one, 1.0, one, np.zeros(1, bool), one, [(one,) * 7] * 2, 0.75, 1.0, 1)
    zero = np.zeros(1, np.int64)
    lateral_check(zero, one, one, one, one, dict.fromkeys(LATERAL_TERMS, one), 0.75, 1e-9)
    no_one = np.zeros(1, bool)
    beam_pair_demand(zero, one, one, no_one, no_one, {k: no_one if k == "exempt" else one for k in BEAM_DEMAND_TERMS},
                     0.75)
    square = np.ones((1, 1))
    axial_bisection(one, square * 0, square, square, square, square, square, one, one, 1.0, one, one, 1)
    from postproc.settings import Detailing

    no = np.zeros(1, bool)
    set_out(np.array([0.0, 1.0]), np.array([0.5, 0.5]), np.array([0, 2]), np.zeros(1, np.int64), one, no, no,
            Detailing(), no, Detailing())


# what ``set_out`` did per member (0: not asked): set out, set out with the end zones met, no
# stirrups needed, no set-out possible, left to detailing.layout_positions
SET_OUT, ZONES_MET, NONE_NEEDED, NO_SET_OUT, BY_PYTHON = 1, 2, 3, 4, 5


def set_out(u: np.ndarray, s_env: np.ndarray, offsets: np.ndarray, todo: np.ndarray, clear_span: np.ndarray,
            free_i: np.ndarray, free_j: np.ndarray, st, at_faces: np.ndarray, st_faces):
    """``detailing.layout_positions`` of the members ``todo`` compiled, before rounding: per
    member of the batch its outcome (0 where not asked), the positions ``x[starts[m]:starts[m +
    1]]`` and the span left without stirrups ``hole[m]`` (NaN where none). Members marked
    ``at_faces`` take ``st_faces``' first stirrup and keep one at each face (its other fields
    must be ``st``'s: detailing.layout_positions_batch sends such members here only then)."""
    fixed = np.where(at_faces, st_faces.first_stirrup == "fixed", st.first_stirrup == "fixed")
    first_at = np.where(at_faces, st_faces.first_stirrup_at, st.first_stirrup_at).astype(np.float64)
    n = len(offsets) - 1
    return _load(required=True).set_out(
        _f64(u), _f64(s_env), _i64(offsets), _i64(todo),
        _f64(clear_span), np.broadcast_to(np.asarray(free_i, np.bool_), n).copy(),
        np.broadcast_to(np.asarray(free_j, np.bool_), n).copy(), np.broadcast_to(fixed, n).copy(),
        np.broadcast_to(first_at, n).copy(), np.broadcast_to(np.asarray(at_faces, np.bool_), n).copy(),
        int(st.max_zones_per_end), float(st.min_spacing), float(st.spacing_module), float(st.setout_step))


def front(stack: np.ndarray, signs: np.ndarray, valid: np.ndarray) -> np.ndarray:
    """``combos._front`` of several sign quadrants at once, OR-ed: (S, K) bool.

    ``stack`` (m, S, K): the coordinates; ``signs`` (Q, m): each quadrant's factor (+1 or
    -1) of each coordinate (a product by -1 only flips the sign: the same numbers as the
    numpy path's negated arrays); ``valid`` (S, K)."""
    out = np.zeros(valid.shape, bool)
    by_entry = _f64(np.moveaxis(np.asarray(stack, np.float64), 0, -1))  # (S, K, m)
    _load(required=True).front(by_entry, _f64(signs), _bool(valid), out)
    return out


def dense_front(factors: np.ndarray, case_values: list[np.ndarray], signs: np.ndarray) -> np.ndarray:
    """``front`` of every combination (``factors`` (K, n_cases)) at every station, their
    coordinates summed inside the kernel as ``combos._combine`` sums them (``case_values``:
    per coordinate (n_cases, S)): (S, K) bool."""
    cols = np.flatnonzero(np.asarray(factors).any(axis=0)).astype(np.int64)
    by_station = _f64(np.moveaxis(np.stack(case_values).astype(np.float64), 2, 0))  # (S, m, n_cases)
    out = np.zeros((by_station.shape[0], len(factors)), bool)
    _load(required=True).dense_front(_f64(np.asarray(factors, np.float64).T), cols, by_station,
                                     _f64(signs), out)
    return out


def combine_at(factors: np.ndarray, values: np.ndarray, which: np.ndarray, station: np.ndarray) -> np.ndarray:
    """``combos._combine_at`` compiled: the same sums, one entry at a time."""
    cols = np.flatnonzero(np.asarray(factors).any(axis=0)).astype(np.int64)
    out = np.empty(len(which))
    _load(required=True).combine_at(_f64(factors), cols, _f64(values), _i64(which), _i64(station), out)
    return out


def axial_bisection(b1, piece_top, piece_bottom, piece_width, bar_u, half_db, bar_area, alpha_fc, fy,
                    es_eps: float, target, hi, steps: int) -> np.ndarray:
    """``sections._solve``'s neutral-axis depth without phi, compiled (sections without a
    circle): the same halvings of [0, hi], the same axial force at each."""
    out = np.empty(len(target))
    _load(required=True).axial_bisection(_f64(b1), _f64(piece_top), _f64(piece_bottom), _f64(piece_width), _f64(bar_u),
                                         _f64(half_db), _f64(bar_area), _f64(alpha_fc), _f64(fy), float(es_eps),
                                         _f64(target), _f64(hi), int(steps), out)
    return out


BEAM_DEMAND_TERMS = ("coef_hi", "coef_lo", "ag", "fc", "b", "d", "cap", "threshold", "exempt", "fyt", "av_min",
                     "vs_max")


def beam_pair_demand(at, vu, nu, torsion, zero, member_terms: dict[str, np.ndarray], phi: float):
    """``demand.beams.pair_demand`` past torsion, compiled: (Vc (a)/(b), Vc (c), Av,min applies,
    Av/s, Vu over the section limit) per candidate; ``member_terms`` as BEAM_DEMAND_TERMS names them."""
    n = len(at)
    out = np.empty(n), np.empty(n), np.empty(n, np.bool_), np.empty(n), np.empty(n)
    t = {k: _bool(v) if k == "exempt" else _f64(v) for k, v in member_terms.items()}
    _load(required=True).beam_pair_demand(_i64(at), _f64(vu), _f64(nu), _bool(torsion), _bool(zero),
                                          *(t[k] for k in BEAM_DEMAND_TERMS), float(phi), *out)
    return out


LATERAL_TERMS = ("lb_area", "amin_tol", "coef", "ag", "fc", "bw", "dd", "cap", "fyt", "vs_max", "threshold", "half_d")


def lateral_check(at, spacing, vb, nu, ratio_v, member_terms: dict[str, np.ndarray], phi: float, tol: float):
    """``demand.lateral.check`` with the code's interaction, compiled: (ratio, interaction,
    reason) per candidate; ``member_terms`` the per-member arrays ``compiled.lateral_check`` names."""
    n = len(at)
    ratio, both, reason = np.empty(n), np.empty(n), np.empty(n, np.int64)
    t = {k: _f64(v) for k, v in member_terms.items()}
    _load(required=True).lateral_check(
        _i64(at), _f64(spacing), _f64(vb), _f64(nu), _f64(ratio_v), t["lb_area"],
        t["amin_tol"],
        t["coef"], t["ag"], t["fc"], t["bw"], t["dd"], t["cap"], t["fyt"], t["vs_max"], t["threshold"], t["half_d"],
        float(phi), float(tol), ratio, both, reason)
    return ratio, both, reason


def tie_bisection(lo: np.ndarray, hi: np.ndarray, area: float, at: np.ndarray, torsion: np.ndarray,
                  fyt: np.ndarray, directions, phi: float, limit: float, steps: int) -> np.ndarray:
    """``demand.columns.required_t``'s search for t = 1/s, compiled (rule "code"): per case,
    lo where it passes, else ``steps`` halvings of [lo, hi] where hi passes, else inf.
    ``directions``: per direction (legs, Av,min/s x (1 - TOL), Vc (a)/(b), Vc (c), d, Vs,max, Vu)."""
    dirs = tuple(_f64(np.broadcast_to(np.asarray(a, np.float64), lo.shape))
                 for terms in directions for a in terms)
    out = np.empty(len(lo))
    _load(required=True).tie_bisection(_f64(lo), _f64(hi), float(area), _f64(at), _bool(torsion), _f64(fyt),
                                       dirs, float(phi), float(limit), int(steps), out)
    return out
