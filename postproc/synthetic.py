"""Deterministic synthetic frames in the documented CSV schema, for benchmarks and scale tests.

Not a building: a seeded mix of spans, sections, supports, cantilevers and point loads
whose shear diagrams are exact for the loads drawn (uniform load plus point loads per
case, concurrent axial force and torsion), written as members.csv and forces.csv.
With ``basic``, the cases are basic load cases typed in a cases.csv (dead, live in
patterns, roof live, wind and earthquake in two directions), so that the combinations
of Table 5.3.1 are built with loads absent and patterns as alternatives; lateral cases
carry a shear of one sign along the member (sway) and no point loads.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.csv as pcsv


CHUNK = 2000  # members generated and written at a time: memory stays flat for any size
# the types of basic cases, in turn (the L cases sharing a pattern label are alternatives)
BASIC = (("D", ""), ("L", "p"), ("L", "p"), ("Lr", ""), ("W", ""), ("W", ""), ("E", ""), ("E", ""))


def case_types(cases: int) -> list[tuple[str, str, str]]:
    """(case, type, pattern) of ``cases`` basic cases: the types of BASIC in turn."""
    return [(f"C{k + 1}", *BASIC[k % len(BASIC)]) for k in range(cases)]


def generate(folder: Path, members: int, cases: int, stations: int, seed: int = 1,
             basic: bool = False) -> dict[str, Path]:
    """Write members.csv and forces.csv with ``members`` beams, ``cases`` factored
    combinations (with ``basic``: basic load cases, and a cases.csv typing them) and
    ``stations`` equally spaced stations per member (plus two rows at each point load).
    The same arguments always give the same files. Returns the paths."""
    folder.mkdir(parents=True, exist_ok=True)
    paths = {"members": folder / "members.csv", "forces": folder / "forces.csv"}
    lateral = np.zeros(cases, bool)
    if basic:
        typed = case_types(cases)
        paths["cases"] = folder / "cases.csv"
        pcsv.write_csv(pa.table({"case": [c for c, _, _ in typed], "type": [t for _, t, _ in typed],
                                 "pattern": [p for _, _, p in typed]}), paths["cases"])
        lateral = np.array([t in ("W", "E") for _, t, _ in typed])
    m_writer = f_writer = None
    try:
        for first in range(0, members, CHUNK):
            mtab, ftab = _chunk(first, min(CHUNK, members - first), cases, stations, np.random.default_rng([seed, first]),
                                lateral)
            if m_writer is None:
                m_writer = pcsv.CSVWriter(paths["members"], mtab.schema)
                f_writer = pcsv.CSVWriter(paths["forces"], ftab.schema)
            m_writer.write_table(mtab)
            f_writer.write_table(ftab)
    finally:
        for w in (m_writer, f_writer):
            if w is not None:
                w.close()
    return paths


def _chunk(first: int, n: int, cases: int, stations: int, rng, lateral: np.ndarray) -> tuple[pa.Table, pa.Table]:
    kind = rng.random(n)
    cantilever = kind < 0.05
    on_girder = (kind >= 0.05) & (kind < 0.25)
    L = np.where(cantilever, rng.uniform(1.5, 3.0, n), rng.uniform(4.0, 12.0, n)).round(3)
    h = np.where(cantilever, 500.0, rng.choice([500.0, 600.0, 700.0, 800.0, 900.0], n))
    h = np.maximum(h, np.ceil(L * 1000 / 12 / 50) * 50)  # span/depth about 12 or less
    b = rng.choice([300.0, 350.0, 400.0, 450.0, 500.0], n)
    face = rng.choice([200.0, 250.0, 300.0], n)
    names = np.char.add("SB", np.arange(first, first + n).astype(str))
    fc = rng.choice([28.0, 35.0, 40.0], n)
    given = rng.random(n) < 0.5  # (drawn in this order: the same frames as before for a seed)
    mtab = pa.table({
        "member": names, "length_m": L, "b_mm": b, "h_mm": h, "cover_mm": np.full(n, 60.0),
        "fc_mpa": fc, "fyt_mpa": np.full(n, 420.0),
        "support_i": np.where(on_girder, "girder", "column"), "support_j": np.where(cantilever, "free", "column"),
        "face_i_mm": np.where(on_girder, 150.0, face), "face_j_mm": np.where(cantilever, 0.0, face),
        # half the members without As: a blank cell ("not given"), never the text nan
        "as_tension_mm2": pa.array((rng.uniform(0.005, 0.015, n) * b * (h - 60)).round(0), mask=~given),
        "level": np.char.add("L", (np.arange(first, first + n) % 20 + 1).astype(str)),
    })

    # shear of every member x case at the equally spaced stations, with one point load in 30 % of members
    t = np.linspace(0.0, 1.0, stations)
    w = rng.uniform(10.0, 90.0, (n, cases)) * np.where(rng.random((n, 1)) < 0.5, 1.0, 0.6)
    has_p = (rng.random(n) < 0.3) & ~cantilever
    a = np.where(has_p, rng.choice(np.arange(1, stations - 1), n) / (stations - 1) + 0.5 / (stations - 1), 2.0)
    P = np.where(has_p[:, None], rng.uniform(50.0, 300.0, (n, cases)), 0.0)
    sway = rng.uniform(-120.0, 120.0, (n, cases))  # lateral cases: end moments over the span, one sign along
    w = np.where(lateral[None, :], 0.0, w)
    P = np.where(lateral[None, :], 0.0, P)
    x = L[:, None] * t[None, :]  # (n, s)
    Lx = L[:, None, None]
    xx = x[:, None, :]
    V_udl = np.where(cantilever[:, None, None], w[:, :, None] * (Lx - xx), w[:, :, None] * (Lx / 2 - xx))
    ax = (a * L)[:, None, None]
    V_pt = P[:, :, None] * ((Lx - ax) / Lx - (xx > ax))
    V = V_udl + V_pt + np.where(lateral[None, :, None] & ~cantilever[:, None, None], sway[:, :, None], 0.0)
    N = rng.uniform(-150.0, 150.0, (n, cases))
    T = np.where(rng.random((n, 1)) < 0.1, rng.uniform(0.0, 25.0, (n, cases)), 0.0)

    member = np.repeat(names, cases * stations)
    case = np.tile(np.repeat(np.char.add("C", np.arange(1, cases + 1).astype(str)), stations), n)
    cols = {"member": member, "case": case, "x_m": np.repeat(x[:, None, :], cases, axis=1).ravel().round(4),
            "V_kN": V.ravel().round(3), "N_kN": np.repeat(N, stations).round(3), "T_kNm": np.repeat(T, stations).round(3)}
    # two rows at each point load: left then right value
    pm = np.flatnonzero(has_p)
    jm = np.repeat(pm, cases)
    jc = np.tile(np.arange(cases), len(pm))
    xa = (a * L)[jm]
    left = (w[jm, jc] * (L[jm] / 2 - xa) + P[jm, jc] * (L[jm] - xa) / L[jm]) + np.where(lateral[jc], sway[jm, jc], 0.0)
    jump = {"member": np.repeat(names[jm], 2), "case": np.repeat(np.char.add("C", (jc + 1).astype(str)), 2),
            "x_m": np.repeat(xa, 2).round(4), "V_kN": np.column_stack([left, left - P[jm, jc]]).ravel().round(3),
            "N_kN": np.repeat(N[jm, jc], 2).round(3), "T_kNm": np.repeat(T[jm, jc], 2).round(3)}
    return mtab, pa.concat_tables([pa.table(cols), pa.table(jump)])
