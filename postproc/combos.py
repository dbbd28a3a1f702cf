"""Load combinations (ACI 318-19 Table 5.3.1, 5.3.2, 6.4) and their exact envelope.

A combination is built from a *row* of Table 5.3.1: the dead-load cases with the row's
factor, always present, plus *terms*, each of which takes one of its *options*:

- a variable case of type L, Lr, S or R with no pattern label: present or absent
  (5.3.2: the effect of one or more loads not acting is investigated);
- the cases of one type that share a pattern label (live-load arrangements, 6.4): at
  most one of them acts, or none;
- the W cases (likewise the E cases): absent, or one of them with either sign; each W
  or E case is one direction, so two never act together.

"0.5(Lr or S or R)" is built as one row per roof type present; "(1.0L or 0.5W)" in
row (c) is two rows; row (c) is built even when the model has no roof case. Without
case types every case is an already factored combination: one row whose single term
takes exactly one case (no absent option).

Factoring is linear, so it is applied after the stations stage resamples each case
onto the station grid.

Exact envelope without enumeration (``candidates``). Every quantity the design takes
from a combination -- Av/s, At/s, whether Av,min or torsion is required, s_max, the
section limits, the utilization of a provided layout -- is nondecreasing in |Vu|, in
|Tu| and in the axial tension (-Nu): Vc and Tth grow with compression (Table 22.5.5.1,
22.7.4.1) and everything else grows with the forces. At one station, fix the signs
(sv, st) of V and T (a *quadrant*). An option of a term is dominated when another
option of the same term gives at least as much sv*V, st*T and tension; replacing
every option of a combination by one that dominates it raises each of sv*V, st*T and
tension of the sum, hence |V|, |T| and tension, hence the demand. So the largest
demand over all combinations of a row is reached among the products of the
non-dominated options, quadrant by quadrant. Where a batch has no axial force and no
torsion, each term has one non-dominated option per quadrant and each row gives two
candidates per station, however many patterns and directions there are.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from postproc import kernels
from postproc.settings import Combinations

VARIABLE = ("L", "Lr", "S", "R")
LATERAL = ("W", "E")
ROOF = ("Lr", "S", "R")
ENUMERATION_LIMIT = 200_000  # explicit listing of every combination only below this count
DENSE_LIMIT = 2_000  # up to this many combinations the front is taken over all of them at once
PAIRWISE_CELLS = 4_000_000  # entries compared pairwise at a time (3 or more coordinates)


@dataclass(frozen=True)
class Term:
    """One choice of a combination: ``options`` (n_options, n_cases) factors, the row's
    factor included; an all-zero option means the load is absent."""

    options: np.ndarray
    labels: tuple[str, ...]  # each option's part of the combination's name, '' when absent


@dataclass(frozen=True)
class Row:
    clause: str  # e.g. '5.3.1d'; '' for an already factored combination
    fixed: np.ndarray  # (n_cases,) factors of the cases always present (dead loads)
    fixed_label: str
    terms: tuple[Term, ...]

    def count(self) -> int:
        return int(np.prod([len(t.labels) for t in self.terms], dtype=float))

    def name(self, choice) -> str:
        """'5.3.1d 1.2D+1.0L+1.0Wx+0.5Lr' for the options chosen (one index per term)."""
        parts = [self.fixed_label] + [t.labels[c] for t, c in zip(self.terms, choice)]
        body = "".join(p if p.startswith(("+", "-")) else "+" + p for p in parts if p).lstrip("+")
        return f"{self.clause} {body}".strip() if self.clause else body

    def factors(self, choice) -> np.ndarray:
        out = self.fixed.copy()
        for t, c in zip(self.terms, choice):
            out = out + t.options[c]
        return out


@dataclass(frozen=True)
class ComboSet:
    cases: list[str]
    rows: list[Row]
    prefactored: bool
    patterns: dict[str, str] = field(default_factory=dict)  # case -> pattern label, where given
    types: dict[str, str] = field(default_factory=dict)  # case -> type (D, L, ..., E); empty when prefactored

    @property
    def count(self) -> int:
        """Combinations the rows describe (before duplicates across rows are removed)."""
        return sum(r.count() for r in self.rows)

    @cached_property
    def explicit(self) -> tuple[list[str], np.ndarray]:
        """Every distinct combination as (names, factors (n, n_cases)): for listing and
        for brute-force cross-checks. Refused above ENUMERATION_LIMIT."""
        if self.count > ENUMERATION_LIMIT:
            raise ValueError(f"{self.count:,} combinations are too many to list one by one")
        names, rows, keys, seen = [], [], [], set()
        width = max((len(r.terms) for r in self.rows), default=0)
        for r_index, row in enumerate(self.rows):
            for choice in itertools.product(*[range(len(t.labels)) for t in row.terms]):
                v = row.factors(choice)
                key = tuple(np.round(v, 12))
                if not v.any() or key in seen:
                    continue
                seen.add(key)
                names.append(row.name(choice))
                rows.append(v)
                keys.append((r_index, *choice, *(-1,) * (width - len(choice))))
        self.__dict__["_keys"] = np.array(keys, np.int64).reshape(len(keys), width + 1)  # (row, choice...) of each
        return names, np.array(rows).reshape(len(rows), len(self.cases))

    @property
    def distinct_count(self) -> int:
        """Distinct combinations where they can be listed, else the count the rows describe."""
        return len(self.explicit[0]) if self.count <= ENUMERATION_LIMIT else self.count

    @property
    def names(self) -> list[str]:
        return self.explicit[0]

    @property
    def factors(self) -> np.ndarray:
        return self.explicit[1]

    def describe(self) -> list[str]:
        """Each row as a rule: '5.3.1d 1.2D + 1.0(Wx|-Wx|Wy|-Wy|absent) + 1.0(L|absent)'."""
        out = []
        for r in self.rows:
            terms = [r.fixed_label] if r.fixed_label else []
            for t in r.terms:
                shown = [lab.lstrip("+") or "absent" for lab in t.labels]
                terms.append("(" + " | ".join(shown) + ")")
            out.append(f"{r.clause} " * bool(r.clause) + " + ".join(terms))
        return out


def prefactored(cases: list[str]) -> ComboSet:
    """Every case is an already factored combination: exactly one acts."""
    term = Term(np.eye(len(cases)), tuple(cases))
    return ComboSet(list(cases), [Row("", np.zeros(len(cases)), "", (term,))], True)


def _fmt(f: float, case: str) -> str:
    """'+1.2D': a factor to one decimal, or as many as it has (1.35 with a vertical earthquake)."""
    a = abs(f)
    text = f"{a:.1f}" if round(a, 1) == round(a, 9) else f"{a:g}"
    return f"{'-' if f < 0 else '+'}{text}{case}"


def aci_5_3_1(case_types: dict[str, str], cases: list[str], settings: Combinations,
              patterns: dict[str, str] | None = None) -> ComboSet:
    """Table 5.3.1 rows (a) to (g) from typed basic cases; 5.3.2 (loads absent), 6.4
    (cases of one type sharing a pattern label are alternatives), 5.3.3 (0.5L, optional)."""
    patterns = {c: p for c, p in (patterns or {}).items() if p}
    n = len(cases)
    index = {c: k for k, c in enumerate(cases)}
    by_type: dict[str, list[str]] = {}
    for c in cases:
        by_type.setdefault(case_types[c], []).append(c)

    def unit(c: str, f: float) -> np.ndarray:
        v = np.zeros(n)
        v[index[c]] = f
        return v

    def variable_terms(kind: str, f: float) -> list[Term]:
        """Unlabelled cases each present or absent; a pattern group: one case or none."""
        out, groups = [], {}
        for c in by_type.get(kind, []):
            if c in patterns:
                groups.setdefault(patterns[c], []).append(c)
            else:
                out.append(Term(np.array([np.zeros(n), unit(c, f)]), ("", _fmt(f, c))))
        for members in groups.values():
            out.append(Term(np.array([np.zeros(n)] + [unit(c, f) for c in members]),
                            ("",) + tuple(_fmt(f, c) for c in members)))
        return out

    def lateral_term(kind: str, f: float) -> list[Term]:
        members = by_type.get(kind, [])
        if not members:
            return []
        opts = [np.zeros(n)] + [unit(c, s * f) for c in members for s in (1.0, -1.0)]
        labels = ("",) + tuple(_fmt(s * f, c) for c in members for s in (1.0, -1.0))
        return [Term(np.array(opts), labels)]

    dead = by_type.get("D", [])

    def row(clause: str, fd: float, terms: list[Term]) -> Row:
        fixed = sum((unit(c, fd) for c in dead), np.zeros(n))
        label = "".join(_fmt(fd, c) for c in dead).lstrip("+")
        return Row(f"5.3.1{clause}", fixed, label, tuple(terms))

    lf = 0.5 if settings.reduced_live_factor else 1.0  # 5.3.3
    roofs = [t for t in ROOF if t in by_type] or [None]
    roof = lambda r, f: [] if r is None else variable_terms(r, f)
    rows = [row("a", 1.4, [])]
    rows += [row("b", 1.2, variable_terms("L", 1.6) + roof(r, 0.5)) for r in roofs]
    for r in roofs:  # (c) 1.2D + 1.6(Lr or S or R) + (1.0L or 0.5W), built even without a roof case
        rows.append(row("c", 1.2, roof(r, 1.6) + variable_terms("L", lf)))
        if by_type.get("W"):
            rows.append(row("c", 1.2, roof(r, 1.6) + lateral_term("W", 0.5)))
    if by_type.get("W"):
        rows += [row("d", 1.2, lateral_term("W", 1.0) + variable_terms("L", lf) + roof(r, 0.5)) for r in roofs]
    ev = settings.vertical_earthquake  # Ev = ev D with E: added to D in (e), taken from it in (g)
    if by_type.get("E"):
        rows.append(row("e", 1.2 + ev, lateral_term("E", 1.0) + variable_terms("L", lf) + variable_terms("S", 0.2)))
    if by_type.get("W"):
        rows.append(row("f", 0.9, lateral_term("W", 1.0)))
    if by_type.get("E"):
        rows.append(row("g", 0.9 - ev, lateral_term("E", 1.0)))
    return ComboSet(list(cases), rows, False, patterns, {c: case_types[c] for c in cases})


def seismic_gravity(cset: ComboSet, settings: Combinations) -> ComboSet:
    """The factored gravity load of the capacity-design shear, 1.2D + 1.0L + 0.2S (18.6.5.1,
    18.4.2.3(a); the gravity part of Table 5.3.1(e), 0.5L where the settings take 5.3.3, and
    (1.2 + c)D with the settings' vertical earthquake Ev = c D): one row named '18.6.5.1',
    each variable load present or absent (5.3.2), cases sharing a pattern label
    alternatives (6.4)."""
    n, index = len(cset.cases), {c: k for k, c in enumerate(cset.cases)}
    dead = [c for c in cset.cases if cset.types.get(c) == "D"]
    fd = 1.2 + settings.vertical_earthquake
    fixed = np.zeros(n)
    fixed[[index[c] for c in dead]] = fd
    terms = []
    for kind, f in (("L", 0.5 if settings.reduced_live_factor else 1.0), ("S", 0.2)):
        groups: dict[str, list[str]] = {}
        for c in (c for c in cset.cases if cset.types.get(c) == kind):
            groups.setdefault(cset.patterns.get(c) or f"\0{c}", []).append(c)  # unlabelled: a group of its own
        for members in groups.values():
            options = np.zeros((len(members) + 1, n))
            for k, c in enumerate(members, start=1):
                options[k, index[c]] = f
            terms.append(Term(options, ("",) + tuple(_fmt(f, c) for c in members)))
    label = "".join(_fmt(fd, c) for c in dead).lstrip("+")
    return ComboSet(list(cset.cases), [Row("18.6.5.1", fixed, label, tuple(terms))], False, cset.patterns, cset.types)


def amplified_earthquake(cset: ComboSet, omega: float) -> ComboSet:
    """The combinations of Table 5.3.1 that include E, with E taken as Omega_o E (18.4.2.3(b)):
    rows (e) and (g) with their E term scaled and E always present; none where the set has
    no E case."""
    rows = []
    for row in cset.rows:
        terms, scaled = [], False
        for t in row.terms:
            cols = np.flatnonzero(t.options.any(axis=0))
            if len(cols) and all(cset.types.get(cset.cases[c]) == "E" for c in cols):
                opts = t.options[t.options.any(axis=1)] * omega  # E present: the combinations that include E
                labels = tuple("" if not o.any() else _fmt(o[np.flatnonzero(o)[0]], cset.cases[np.flatnonzero(o)[0]])
                               for o in opts)
                t, scaled = Term(opts, labels), True
            terms.append(t)
        if scaled:
            rows.append(Row(f"18.4.2.3(b) {row.clause}", row.fixed, row.fixed_label, tuple(terms)))
    return ComboSet(list(cset.cases), rows, False, cset.patterns, cset.types)


def extremes(cset: ComboSet, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The least and the largest factored value over every combination, at each station.

    ``values`` (n_cases, S): one quantity of every case at every station. Exact: the terms of
    a row are chosen independently, so a row's extremes are its fixed part plus each term's
    least (largest) option; then the extremes over the rows (e.g. the range of the factored
    axial force for a column's Mpr, 18.7.6.1.1).
    """
    lo = np.full(values.shape[1], np.inf)
    hi = np.full(values.shape[1], -np.inf)
    for row in cset.rows:
        base = _combine(row.fixed[None, :], values)[0]
        per_term = [_combine(t.options, values) for t in row.terms]
        lo = np.minimum(lo, base + sum((v.min(axis=0) for v in per_term), np.zeros(values.shape[1])))
        hi = np.maximum(hi, base + sum((v.max(axis=0) for v in per_term), np.zeros(values.shape[1])))
    return lo, hi


# ----------------------------------------------------------------------------- envelope


@dataclass(frozen=True)
class Candidates:
    """The combinations that can govern each station: a flat list, grouped by station.

    Candidate k belongs to station ``station[k]``; those of station s are
    ``bounds[s]:bounds[s+1]``. ``values`` holds each candidate's factored V, N, T (signs
    kept). ``row`` and ``choices[choice_at[k]]`` (one option index per term, -1 beyond the
    row's terms) name it: the options are held once per combination of the table, not
    once per candidate.
    """

    station: np.ndarray
    row: np.ndarray
    choice_at: np.ndarray
    choices: np.ndarray
    values: dict[str, np.ndarray]
    bounds: np.ndarray

    def __len__(self) -> int:
        return len(self.station)

    @property
    def choice(self) -> np.ndarray:
        """The option of each term of every candidate, (candidates, terms)."""
        return self.choices[self.choice_at]

    def names(self, cset: ComboSet, which: np.ndarray) -> np.ndarray:
        """Names of the candidates ``which`` (built once per distinct combination)."""
        if not len(which):
            return np.array([], dtype=object)
        keys = np.column_stack([self.row[which], self.choices[self.choice_at[which]]])
        uniq, inv = _unique_rows(keys)
        text = np.array([cset.rows[k[0]].name(k[1:1 + len(cset.rows[k[0]].terms)]) for k in uniq], dtype=object)
        return text[inv]


def _unique_rows(keys: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The distinct rows of an integer array and the index of each row among them (as
    ``np.unique(keys, axis=0, return_inverse=True)``, through one integer per row: mixed radix
    over each column's range, row order kept)."""
    lo = keys.min(axis=0)
    radix = keys.max(axis=0) - lo + 1
    if np.sum(np.log2(radix.astype(float))) >= 62:  # too many distinct values to pack in an int64
        uniq, inv = np.unique(keys, axis=0, return_inverse=True)
        return uniq, inv.reshape(-1)
    weight = np.cumprod(np.r_[radix[1:], 1][::-1])[::-1]  # the first column most significant
    _, first, inv = np.unique((keys - lo) @ weight, return_index=True, return_inverse=True)
    return keys[first], inv.reshape(-1)


def _front(coords: list[np.ndarray], valid: np.ndarray, only: np.ndarray | None = None) -> np.ndarray:
    """(S, K) bool: the entries of each station (row) that no other valid entry of the same
    station dominates in the given coordinates (each (S, K); larger is worse for the
    design). Exact ties may keep more than one (a superset is always safe). ``only``: the
    entries whose place on the front is asked (the others come back False, but still drop
    entries); by default every valid one.

    Exactly, entry o drops entry e (o before e: o_first): with one coordinate, o larger or
    equal and first (the first largest is kept); with two, o ahead in the first (larger, or
    equal and first) and at least e in the second (the sort below); with three or more, o
    at least e in every coordinate, larger in one or equal in all and first. Each relation
    is transitive; the kept entries are the valid ones no valid entry drops.
    ``postproc.kernels.front`` is the compiled twin."""
    S, K = valid.shape
    asked = valid.copy() if only is None else valid & only
    if K <= 1:
        return asked
    if kernels.use_compiled(S * K * len(coords)):  # the same set, entry by entry against the front so far
        return kernels.front(np.stack(coords), np.ones((1, len(coords))), valid) & asked
    neg = -np.inf
    masked = (lambda c: c) if valid.all() else (lambda c: np.where(valid, c, neg))  # invalid: never on the front
    if len(coords) == 1:
        a = masked(coords[0])
        out = np.zeros((S, K), bool)
        out[np.arange(S), np.argmax(a, axis=1)] = True
        return out & asked
    if len(coords) == 2:
        a, b = (masked(c) for c in coords)
        order = np.argsort(-a, axis=1, kind="stable")  # a descending; ties keep their order
        bs = np.take_along_axis(b, order, axis=1)
        before = np.maximum.accumulate(np.hstack([np.full((S, 1), neg), bs[:, :-1]]), axis=1)
        out = np.zeros((S, K), bool)
        np.put_along_axis(out, order, bs > before, axis=1)
        return out & asked
    out = valid.copy()
    stack = np.stack([masked(c) for c in coords])  # (k, S, K)
    # first against a few strong entries of each station (the best in each coordinate and
    # in their sum): most entries fall to one of them; then pairwise, the entries asked
    # about against the rest (an entry something drops is dropped by one of these: the
    # relation is transitive)
    pivots = np.stack([np.argmax(c, axis=1) for c in stack] + [np.argmax(stack.sum(axis=0), axis=1)], axis=1)
    piv = np.take_along_axis(stack, np.broadcast_to(pivots, (len(coords),) + pivots.shape), axis=2)  # (k, S, M)
    ge = np.all(piv[:, :, :, None] >= stack[:, :, None, :], axis=0)  # [s, pivot, entry]
    gt = np.any(piv[:, :, :, None] > stack[:, :, None, :], axis=0)
    out &= ~(ge & gt).any(axis=1)

    asked &= out
    by_order = np.argsort(~out, axis=1, kind="stable")  # each station's droppers first, in order
    at_order = np.argsort(~asked, axis=1, kind="stable")  # and the entries asked about
    n_by, n_at = out.sum(axis=1), asked.sum(axis=1)
    cells = n_by * n_at
    stations = np.argsort(cells, kind="stable")[np.count_nonzero(cells == 0):]  # like sizes together: little padding
    keep = np.zeros((S, K), bool)
    s0 = 0
    while s0 < len(stations):  # pairwise, in slices of stations: memory stays bounded
        fits = np.arange(1, len(stations) - s0 + 1) * cells[stations[s0:]] <= PAIRWISE_CELLS
        idx = stations[s0:s0 + max(1, int(np.count_nonzero(fits)))]
        s0 += len(idx)
        by, at = by_order[idx, :n_by[idx].max()], at_order[idx, :n_at[idx].max()]
        by_ok = np.take_along_axis(out[idx], by, axis=1)
        at_ok = np.take_along_axis(asked[idx], at, axis=1)
        o2 = np.take_along_axis(stack[:, idx], np.broadcast_to(by, (len(coords),) + by.shape), axis=2)[:, :, :, None]
        o1 = np.take_along_axis(stack[:, idx], np.broadcast_to(at, (len(coords),) + at.shape), axis=2)[:, :, None, :]
        ge = o2[0] >= o1[0]  # [s, o2, o1]: o2 at least as bad in every coordinate ...
        gt = o2[0] > o1[0]  # ... and worse in one
        for j in range(1, len(coords)):
            ge &= o2[j] >= o1[j]
            gt |= o2[j] > o1[j]
        gt |= by[:, :, None] < at[:, None, :]  # or equal in all and earlier: breaks exact ties
        ge &= gt
        ge &= by_ok[:, :, None]
        rows = np.zeros((len(idx), K), bool)
        np.put_along_axis(rows, at, at_ok & ~ge.any(axis=1), axis=1)
        keep[idx] = rows
    return keep


def _compact(keep: np.ndarray, *arrays: np.ndarray) -> tuple[np.ndarray, ...]:
    """Move each station's kept entries to the front and drop the columns no station uses.
    Returns (valid, *arrays) with the same leading shape (S, K')."""
    order = np.argsort(~keep, axis=1, kind="stable")
    k_new = max(int(keep.sum(axis=1).max(initial=0)), 1)
    order = order[:, :k_new]
    out = [np.take_along_axis(keep, order, axis=1)]
    for arr in arrays:
        idx = order if arr.ndim == 2 else order[:, :, None]
        out.append(np.take_along_axis(arr, idx, axis=1))
    return tuple(out)


def _combine(factors: np.ndarray, values: np.ndarray, stations_first: bool = False) -> np.ndarray:
    """factors (k, n_cases) times values (n_cases, S), summed case by case in case order:
    the same bits whatever S is (a matrix product may round differently for other shapes,
    and the governing station must not depend on how members are batched). (k, S), or
    (S, k) with ``stations_first`` (the same numbers, laid out for per-station work)."""
    k, S = factors.shape[0], values.shape[1]
    out = np.zeros((S, k) if stations_first else (k, S))
    term = np.empty_like(out)
    for c in np.flatnonzero(factors.any(axis=0)):
        if stations_first:
            np.multiply(values[c][:, None], factors[:, c], out=term)
        else:
            np.multiply(factors[:, c:c + 1], values[c], out=term)
        out += term
    return out


def _combine_at(factors: np.ndarray, values: np.ndarray, which: np.ndarray, station: np.ndarray) -> np.ndarray:
    """``_combine(factors, values)[which, station]`` computed for those entries alone (the
    same sums, term by term in the same order: the same bits). A quantity zero in every case
    sums to +0 everywhere (0 + f x 0 is +0 whatever the signs)."""
    if not values.any():
        return np.zeros(len(which))
    cols = np.flatnonzero(factors.any(axis=0))
    if kernels.use_compiled(len(which) * len(cols)):
        return kernels.combine_at(factors, values, which, station)
    f, v = factors.T[cols][:, which], values[cols][:, station]  # (cases used, entries): gathered once
    out = np.zeros(len(which))
    for i in range(len(cols)):
        out += f[i] * v[i]
    return out


def candidates(cset: ComboSet, case_values: dict[str, np.ndarray], signed=("V", "T"),
               tension: str | None = "N") -> Candidates:
    """The combinations that can govern each station (see the module docstring).

    ``case_values``: per quantity, (n_cases, S) values of every case at every station
    (signs as in the input; ``tension`` names the quantity that is positive in tension).
    Stations are grouped by the quantities that are not zero there in any case. Up to
    DENSE_LIMIT combinations, each group's front is taken over every combination at once
    (one sort per sign quadrant); beyond, it is built term by term (each partial sum
    pruned before the next term is added) and then across the rows of the table, on
    arrays padded per station, so that its size follows the front, not the number of
    combinations.
    """
    s_count = next(iter(case_values.values())).shape[1]
    quantities = list(case_values)
    coord_q = [q for q in signed if q in case_values] + ([tension] if tension in case_values else [])
    nonzero = np.array([np.any(case_values[q] != 0, axis=0) for q in coord_q]).reshape(len(coord_q), s_count)
    nonzero[0] = True  # the first signed quantity (V) always counts
    key = (nonzero * (1 << np.arange(len(coord_q)))[:, None]).sum(axis=0)
    max_terms = max((len(r.terms) for r in cset.rows), default=0)
    parts = []
    for k in np.unique(key):
        at = np.flatnonzero(key == k)
        use = [q for j, q in enumerate(coord_q) if k >> j & 1]
        sub = {q: v[:, at] for q, v in case_values.items()}
        group = _dense_candidates if cset.count <= DENSE_LIMIT else _group_candidates
        st, row, choices, choice_at, vals = group(cset, sub, [q for q in use if q != tension], tension in use,
                                                  tension, max_terms)
        parts.append((at[st], row, choices, choice_at, vals))
    station = np.concatenate([p[0] for p in parts])
    order = np.argsort(station, kind="stable")
    station = station[order]
    before = np.cumsum([0] + [len(p[2]) for p in parts[:-1]])  # each part's options follow the previous part's
    return Candidates(
        station=station, row=np.concatenate([p[1] for p in parts])[order],
        choice_at=np.concatenate([p[3] + b for p, b in zip(parts, before)])[order],
        choices=np.concatenate([p[2] for p in parts]),
        values={q: np.concatenate([p[4][q] for p in parts])[order] for q in quantities},
        bounds=np.searchsorted(station, np.arange(s_count + 1)))


def _dense_candidates(cset: ComboSet, case_values, active: list[str], use_tension: bool, tension, max_terms):
    """``candidates`` for stations that share the same non-zero quantities, over every
    combination listed once (ComboSet.explicit): a combination is kept where it is on
    the front of some sign quadrant."""
    _, factors = cset.explicit
    keys = cset.__dict__["_keys"]
    used = active + ([tension] if use_tension else [])
    quadrants = list(itertools.product((1.0, -1.0), repeat=len(active)))
    s_count = case_values[active[0]].shape[1]
    vals = {}
    if kernels.use_compiled(s_count * len(factors) * len(used) * len(quadrants)):  # sums and quadrants in one pass
        signs = np.array([list(sg) + [1.0] * use_tension for sg in quadrants]).reshape(len(quadrants), len(used))
        keep = kernels.dense_front(factors, [case_values[q] for q in used], signs)
    else:
        vals = {q: _combine(factors, case_values[q], stations_first=True) for q in used}  # (S, n_combinations)
        valid = np.ones(vals[active[0]].shape, bool)
        flipped = {q: np.negative(vals[q]) for q in active}  # -1 times V (T): the other sign's quadrant
        keep = np.zeros(valid.shape, bool)
        for signs in quadrants:
            coords = [vals[q] if sg > 0 else flipped[q] for sg, q in zip(signs, active)] \
                + ([vals[tension]] if use_tension else [])
            keep |= _front(coords, valid, only=~keep)  # a later quadrant can only add what is not kept yet
    st_idx, c_idx = np.nonzero(keep)  # station-major
    choices = np.full((len(keys), max_terms), -1, np.int64)  # the options of each listed combination
    choices[:, :keys.shape[1] - 1] = keys[:, 1:]
    values = {q: vals[q][st_idx, c_idx] if q in vals else _combine_at(factors, v, c_idx, st_idx)
              for q, v in case_values.items()}  # what is not summed yet: at the kept entries alone
    return st_idx, keys[c_idx, 0], choices, c_idx, values


def _group_candidates(cset: ComboSet, case_values, active: list[str], use_tension: bool, tension, max_terms):
    """``candidates`` for stations that share the same non-zero quantities."""
    s_count = next(iter(case_values.values())).shape[1]
    quantities = list(case_values)
    per_row = [({q: _combine(r.fixed[None, :], case_values[q])[0] for q in quantities},
                [{q: _combine(t.options, case_values[q]) for q in quantities} for t in r.terms]) for r in cset.rows]

    def coords(vals, signs):
        out = [sg * vals[q] for sg, q in zip(signs, active)]
        if use_tension:
            out.append(vals[tension])
        return out

    parts = []
    for signs in itertools.product((1.0, -1.0), repeat=len(active)):
        rows_v, rows_r, rows_c, rows_ok = {q: [] for q in quantities}, [], [], []
        for r_index, (base, terms) in enumerate(per_row):
            if len(active) == 1 and not use_tension:  # one coordinate: the best option of each term
                score = lambda v: signs[0] * v[active[0]]
                pick = [np.argmax(score(t_vals), axis=0) for t_vals in terms]
                cols = np.arange(s_count)
                vals = {q: (base[q] + sum((t_vals[q][p, cols] for t_vals, p in zip(terms, pick)),
                                          np.zeros(s_count)))[:, None] for q in quantities}
                choice = np.array(pick, np.int64).T.reshape(s_count, 1, len(terms))
                valid = np.ones((s_count, 1), bool)
            else:
                vals, choice, valid = _row_front(base, terms, quantities, lambda v: coords(v, signs), s_count)
            for q in quantities:
                rows_v[q].append(vals[q])
            pad = np.full(choice.shape[:2] + (max_terms,), -1, np.int64)
            pad[:, :, :choice.shape[2]] = choice
            rows_c.append(pad)
            rows_r.append(np.full(valid.shape, r_index, np.int64))
            rows_ok.append(valid)
        vals = {q: np.hstack(rows_v[q]) for q in quantities}
        valid = np.hstack(rows_ok)
        keep = _front(coords(vals, signs), valid)  # across the rows of the table
        keep, *packed = _compact(keep, *(vals[q] for q in quantities), np.hstack(rows_r), np.concatenate(rows_c, axis=1))
        parts.append((keep, dict(zip(quantities, packed[:len(quantities)])), packed[-2], packed[-1]))
    keep = np.hstack([p[0] for p in parts])
    st_idx, k_idx = np.nonzero(keep)  # station-major
    flat = lambda arrays: np.hstack(arrays)[st_idx, k_idx]
    return (st_idx, flat([p[2] for p in parts]), np.concatenate([p[3] for p in parts], axis=1)[st_idx, k_idx],
            np.arange(len(st_idx)), {q: flat([p[1][q] for p in parts]) for q in quantities})


def _row_front(base, terms, quantities, coords, s_count):
    """The front of one row's combinations at every station, term by term."""
    vals = {q: base[q][:, None] for q in quantities}  # (S, K): the partial sums on the front
    choice = np.zeros((s_count, 1, 0), np.int64)
    valid = np.ones((s_count, 1), bool)
    for t_vals in terms:
        opt = {q: t_vals[q].T for q in quantities}  # (S, n_options)
        n_opt = opt[quantities[0]].shape[1]
        keep_opt = _front(coords(opt), np.ones((s_count, n_opt), bool))
        keep_opt, *o = _compact(keep_opt, *(opt[q] for q in quantities),
                                np.broadcast_to(np.arange(n_opt), (s_count, n_opt)))
        opt, opt_index = dict(zip(quantities, o[:-1])), o[-1]
        K, F = valid.shape[1], keep_opt.shape[1]
        vals = {q: (vals[q][:, :, None] + opt[q][:, None, :]).reshape(s_count, K * F) for q in quantities}
        choice = np.concatenate([np.repeat(choice, F, axis=1), np.tile(opt_index, (1, K))[:, :, None]], axis=2)
        valid = (valid[:, :, None] & keep_opt[:, None, :]).reshape(s_count, K * F)
        keep = _front(coords(vals), valid)
        keep, *packed = _compact(keep, *(vals[q] for q in quantities), choice)
        vals, choice, valid = dict(zip(quantities, packed[:-1])), packed[-1], keep
    return vals, choice, valid
