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

from postproc.settings import Combinations

VARIABLE = ("L", "Lr", "S", "R")
LATERAL = ("W", "E")
ROOF = ("Lr", "S", "R")
ENUMERATION_LIMIT = 200_000  # explicit listing of every combination only below this count
PAIRWISE_LIMIT = 24  # options of one term compared pairwise for dominance in 3 or more coordinates


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
        names, rows, seen = [], [], set()
        for row in self.rows:
            for choice in itertools.product(*[range(len(t.labels)) for t in row.terms]):
                v = row.factors(choice)
                key = tuple(np.round(v, 12))
                if not v.any() or key in seen:
                    continue
                seen.add(key)
                names.append(row.name(choice))
                rows.append(v)
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
    return f"{'-' if f < 0 else '+'}{abs(f):.1f}{case}"


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
    if by_type.get("E"):
        rows.append(row("e", 1.2, lateral_term("E", 1.0) + variable_terms("L", lf) + variable_terms("S", 0.2)))
    if by_type.get("W"):
        rows.append(row("f", 0.9, lateral_term("W", 1.0)))
    if by_type.get("E"):
        rows.append(row("g", 0.9, lateral_term("E", 1.0)))
    return ComboSet(list(cases), rows, False, patterns)


# ----------------------------------------------------------------------------- envelope


@dataclass(frozen=True)
class Candidates:
    """The combinations that can govern each station: a flat list, grouped by station.

    Candidate k belongs to station ``station[k]``; those of station s are
    ``bounds[s]:bounds[s+1]``. ``values`` holds each candidate's factored V, N, T (signs
    kept). ``row`` and ``choice`` (one option index per term, -1 beyond the row's
    terms) name it.
    """

    station: np.ndarray
    row: np.ndarray
    choice: np.ndarray
    values: dict[str, np.ndarray]
    bounds: np.ndarray

    def __len__(self) -> int:
        return len(self.station)

    def names(self, cset: ComboSet, which: np.ndarray) -> np.ndarray:
        """Names of the candidates ``which`` (built once per distinct combination)."""
        keys = np.column_stack([self.row[which], self.choice[which]]) if len(which) else np.zeros((0, 1), int)
        uniq, inv = np.unique(keys, axis=0, return_inverse=True)
        text = np.array([cset.rows[k[0]].name(k[1:1 + len(cset.rows[k[0]].terms)]) for k in uniq], dtype=object)
        return text[inv.reshape(-1)] if len(which) else np.array([], dtype=object)


def _non_dominated(coords: list[np.ndarray]) -> np.ndarray:
    """(n_options, S) bool: options not dominated at each station in the given
    coordinates (larger is worse for the design). A superset is always safe."""
    n, s = coords[0].shape
    if n == 1:
        return np.ones((1, s), bool)
    if len(coords) == 1:
        out = np.zeros((n, s), bool)
        out[np.argmax(coords[0], axis=0), np.arange(s)] = True
        return out
    if len(coords) == 2:
        a, b = coords
        order = np.lexsort((-b, -a), axis=0)  # by a, then b, both descending
        bs = np.take_along_axis(b, order, axis=0)
        best_before = np.maximum.accumulate(np.vstack([np.full((1, s), -np.inf), bs[:-1]]), axis=0)
        out = np.zeros((n, s), bool)
        np.put_along_axis(out, order, bs > best_before, axis=0)
        return out
    if n > PAIRWISE_LIMIT:
        return np.ones((n, s), bool)
    stack = np.stack(coords)  # (k, n, S)
    ge = np.all(stack[:, :, None, :] >= stack[:, None, :, :], axis=0)  # [o2, o1]: o2 at least as bad in all
    gt = np.any(stack[:, :, None, :] > stack[:, None, :, :], axis=0)
    earlier = np.tri(n, k=-1, dtype=bool).T[:, :, None]  # o2 < o1: breaks exact ties
    dominated = (ge & (gt | earlier)).any(axis=0)
    return ~dominated


def _ragged_product(n_stations: int, fronts: list[tuple[np.ndarray, np.ndarray]]) -> tuple[np.ndarray, np.ndarray]:
    """For each station, every combination of one front option per term.

    ``fronts[t]`` = (station, option) of term t's non-dominated options, grouped by
    station. Returns (station of each product, option chosen per term (P, n_terms))."""
    station = np.arange(n_stations)
    choice = np.zeros((n_stations, 0), np.int64)
    for st, opt in fronts:
        counts = np.bincount(st, minlength=n_stations)
        start = np.concatenate([[0], np.cumsum(counts)[:-1]])
        reps = counts[station]
        first = np.repeat(start[station], reps)
        k = np.arange(reps.sum()) - np.repeat(np.cumsum(reps) - reps, reps)
        choice = np.column_stack([np.repeat(choice, reps, axis=0), opt[first + k]])
        station = np.repeat(station, reps)
    return station, choice


def _combine(factors: np.ndarray, values: np.ndarray) -> np.ndarray:
    """factors (k, n_cases) times values (n_cases, S), summed case by case in case order:
    the same bits whatever S is (a matrix product may round differently for other shapes,
    and the governing station must not depend on how members are batched)."""
    out = np.zeros((factors.shape[0], values.shape[1]))
    for c in np.flatnonzero(factors.any(axis=0)):
        out += factors[:, c:c + 1] * values[c]
    return out


def candidates(cset: ComboSet, case_values: dict[str, np.ndarray], signed=("V", "T"),
               tension: str | None = "N") -> Candidates:
    """The combinations that can govern each station (see the module docstring).

    ``case_values``: per quantity, (n_cases, S) values of every case at every station
    (signs as in the input; ``tension`` names the quantity that is positive in tension).
    """
    s_count = next(iter(case_values.values())).shape[1]
    active = [q for q in signed if q in case_values and np.any(case_values[q])]
    use_tension = tension is not None and tension in case_values and bool(np.any(case_values[tension]))
    if not active:
        active = [signed[0]]
    quadrants = list(itertools.product((1.0, -1.0), repeat=len(active)))
    max_terms = max((len(r.terms) for r in cset.rows), default=0)
    parts = []
    for r_index, row in enumerate(cset.rows):
        base = {q: _combine(row.fixed[None, :], v)[0] for q, v in case_values.items()}
        per_term = [{q: _combine(t.options, v) for q, v in case_values.items()} for t in row.terms]
        for signs in quadrants:
            fronts = []
            for vals in per_term:
                coords = [sg * vals[q] for sg, q in zip(signs, active)]
                if use_tension:
                    coords.append(vals[tension])
                nd = _non_dominated(coords)
                opt, st = np.nonzero(nd)
                order = np.argsort(st, kind="stable")
                fronts.append((st[order], opt[order]))
            st, choice = _ragged_product(s_count, fronts)
            values = {q: base[q][st] + sum((vals[q][choice[:, t], st] for t, vals in enumerate(per_term)),
                                           np.zeros(len(st))) for q in case_values}
            pad = np.full((len(st), max_terms), -1, np.int64)
            pad[:, :choice.shape[1]] = choice
            parts.append((st, np.full(len(st), r_index, np.int64), pad, values))
    station = np.concatenate([p[0] for p in parts])
    order = np.argsort(station, kind="stable")
    return Candidates(
        station=station[order],
        row=np.concatenate([p[1] for p in parts])[order],
        choice=np.concatenate([p[2] for p in parts])[order],
        values={q: np.concatenate([p[3][q] for p in parts])[order] for q in case_values},
        bounds=np.searchsorted(station[order], np.arange(s_count + 1)),
    )
