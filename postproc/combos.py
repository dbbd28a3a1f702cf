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


def _term(factor: float, label: str) -> str:
    return f"{factor:g}{label}"


def aci_5_3_1(case_types: dict[str, str], cases: list[str], settings: Combinations) -> ComboSet:
    """Table 5.3.1 combinations from typed basic cases (5.3.3 reduced live factor optional)."""
    index = {c: k for k, c in enumerate(cases)}
    by_type: dict[str, list[str]] = {}
    for c in cases:
        by_type.setdefault(case_types[c], []).append(c)
    n = len(cases)

    def vec(parts: list[tuple[float, str | list[str]]]) -> np.ndarray:
        v = np.zeros(n)
        for f, what in parts:
            for c in (by_type.get(what, []) if isinstance(what, str) and what in ("D", "L", "Lr", "S", "R")
                      else [what] if isinstance(what, str) else what):
                v[index[c]] += f
        return v

    l_factor = 0.5 if settings.reduced_live_factor else 1.0  # 5.3.3
    roofs = [t for t in ("Lr", "S", "R") if t in by_type] or [None]
    laterals = {t: [(s, c) for c in by_type.get(t, []) for s in (1.0, -1.0)] for t in ("W", "E")}
    out: list[tuple[str, np.ndarray]] = []

    def add(name: str, parts):
        out.append((name, vec(parts)))

    add("5.3.1a 1.4D", [(1.4, "D")])
    for r in roofs:
        rp = [] if r is None else [(0.5, r)]
        rn = "" if r is None else f"+0.5{r}"
        add(f"5.3.1b 1.2D+1.6L{rn}", [(1.2, "D"), (1.6, "L"), *rp])
    for r in roofs:
        if r is None:
            continue
        add(f"5.3.1c 1.2D+1.6{r}+{l_factor:g}L", [(1.2, "D"), (1.6, r), (l_factor, "L")])
        for s, w in laterals["W"]:
            add(f"5.3.1c 1.2D+1.6{r}{'+' if s > 0 else '-'}0.5({w})", [(1.2, "D"), (1.6, r), (0.5 * s, w)])
    for s, w in laterals["W"]:
        sign = "+" if s > 0 else "-"
        for r in roofs:
            rp = [] if r is None else [(0.5, r)]
            rn = "" if r is None else f"+0.5{r}"
            add(f"5.3.1d 1.2D{sign}1.0({w})+{l_factor:g}L{rn}", [(1.2, "D"), (s, w), (l_factor, "L"), *rp])
        add(f"5.3.1f 0.9D{sign}1.0({w})", [(0.9, "D"), (s, w)])
    for s, e in laterals["E"]:
        sign = "+" if s > 0 else "-"
        add(f"5.3.1e 1.2D{sign}1.0({e})+{l_factor:g}L+0.2S", [(1.2, "D"), (s, e), (l_factor, "L"), (0.2, "S")])
        add(f"5.3.1g 0.9D{sign}1.0({e})", [(0.9, "D"), (s, e)])

    names, rows, seen = [], [], set()
    for name, v in out:
        key = tuple(np.round(v, 12))
        if not v.any() or key in seen:
            continue
        seen.add(key)
        names.append(name)
        rows.append(v)
    return ComboSet(names, np.array(rows).reshape(len(rows), n), list(cases), False)
