"""Factored load combinations as a factor matrix C (combinations x cases).

With basic load cases typed D, L, Lr, S, R, W, E the combinations of ACI 318-19
Table 5.3.1 (a) to (g) are built; W and E enter with both signs, each W or E case
on its own (they are alternative directions), while cases of the other types are
added within their type. Without case types every case is taken as an already
factored combination (C is the identity).

Factoring is linear, so it is applied after the stations stage resamples each case
onto the station grid: Vu = C @ V_case.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from postproc.settings import Combinations


@dataclass(frozen=True)
class ComboSet:
    names: list[str]
    factors: np.ndarray  # (n_combos, n_cases)
    cases: list[str]
    prefactored: bool


def prefactored(cases: list[str]) -> ComboSet:
    return ComboSet(list(cases), np.eye(len(cases)), list(cases), True)


def aci_5_3_1(case_types: dict[str, str], cases: list[str], settings: Combinations) -> ComboSet:
    """Table 5.3.1 combinations from typed basic cases (5.3.3 reduced live factor optional)."""
    index = {c: k for k, c in enumerate(cases)}
    by_type: dict[str, list[str]] = {}
    for c in cases:
        by_type.setdefault(case_types[c], []).append(c)
    n = len(cases)

    def members_of(what: str) -> list[str]:
        return by_type.get(what, []) if what in ("D", "L", "Lr", "S", "R") else [what]

    out: list[tuple[str, np.ndarray]] = []

    def add(clause: str, parts: list[tuple[float, str]]) -> None:
        """One combination; its name lists only the terms present, e.g. '5.3.1d 1.2D-1.0Wx+1.0L'."""
        v = np.zeros(n)
        terms = []
        for f, what in parts:
            cs = members_of(what)
            if not cs:
                continue
            for c in cs:
                v[index[c]] += f
            terms.append(f"{'-' if f < 0 else '+'}{abs(f):.1f}{what}")
        out.append((f"5.3.1{clause} " + "".join(terms).lstrip("+"), v))

    l_factor = 0.5 if settings.reduced_live_factor else 1.0  # 5.3.3
    roofs = [t for t in ("Lr", "S", "R") if t in by_type] or [None]
    laterals = {t: [(s, c) for c in by_type.get(t, []) for s in (1.0, -1.0)] for t in ("W", "E")}
    roof = lambda r, f: [] if r is None else [(f, r)]

    add("a", [(1.4, "D")])
    for r in roofs:
        add("b", [(1.2, "D"), (1.6, "L"), *roof(r, 0.5)])
    for r in roofs:
        if r is None:
            continue
        add("c", [(1.2, "D"), (1.6, r), (l_factor, "L")])
        for s, w in laterals["W"]:
            add("c", [(1.2, "D"), (1.6, r), (0.5 * s, w)])
    for s, w in laterals["W"]:
        for r in roofs:
            add("d", [(1.2, "D"), (s, w), (l_factor, "L"), *roof(r, 0.5)])
        add("f", [(0.9, "D"), (s, w)])
    for s, e in laterals["E"]:
        add("e", [(1.2, "D"), (s, e), (l_factor, "L"), (0.2, "S")])
        add("g", [(0.9, "D"), (s, e)])

    names, rows, seen = [], [], set()
    for name, v in sorted(out, key=lambda item: item[0][5]):  # in the order of the table's rows
        key = tuple(np.round(v, 12))
        if not v.any() or key in seen:
            continue
        seen.add(key)
        names.append(name)
        rows.append(v)
    return ComboSet(names, np.array(rows).reshape(len(rows), n), list(cases), False)
