"""PyNite reference for tests: a two-bay portal frame and its force tables.

    frame = two_span_frame()
    frame.members, frame.forces, frame.cases   # tables in the members/forces/cases.csv schema
    frame.shear("B2", "L", 3.7)                # PyNite's shear at any x, kN

Geometry (m): columns C1, C2, C3 at X = 0, 6, 14, fixed at the base, 3.5 m high; beams
B1 (C1 to C2, 6.0 m) and B2 (C2 to C3, 8.0 m) join the column tops. The frame lies in
PyNite's global XY plane (Y up); the top nodes are held out of plane (DZ, RX, RY).
Case D: 30 kN/m down on both beams. Case L: 120 kN down on B2 at 2.5 m from its node i.
Every member runs from node i at its lower-X or lower end.

The numbers come from FEModel3D.analyze_linear() with one load combination per case,
named as the case, read from the physical members (model.members[name]):

    V_kN  =  shear("Fy", x, case)
    N_kN  = -axial(x, case)          PyNite takes compression positive; the table tension
    T_kNm =  torque(x, case)
    M_kNm = -moment("Mz", x, case)   sagging positive, so that dM/dx = V

PyNite's Fy shear at x is the sum of the local-y forces on the member between node i
and x (the end force at node i plus the loads up to x). Local y is global +Y (up) for
the beams, so under gravity V is positive at node i, falls along the span and steps by
-P at a point load P; for the columns (node i at the base) local y is global -X.

Stations: 11 equal ones per member, plus two rows at x = 2.5 on B2 in every case, the
first taken at x - 1e-6 m and the second at x + 1e-6 m (the limits left and right of
the point load). The values are not rounded.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
from Pynite import FEModel3D

W_D = 30.0  # kN/m on both beams, case D
P_L = 120.0  # kN on B2, case L ...
X_P = 2.5  # ... at this distance from node i, m
STATIONS = 11
EPS = 1e-6

BEAM = {"b_mm": 300.0, "h_mm": 600.0}
COLUMN = {"b_mm": 400.0, "h_mm": 400.0}


@dataclass
class Frame:
    members: pd.DataFrame
    forces: pd.DataFrame
    cases: pd.DataFrame
    model: FEModel3D

    def shear(self, member: str, case: str, x_m: float) -> float:
        """PyNite's shear at x_m (kN), the sign of forces.V_kN; at the point load itself the
        value just right of it."""
        return float(self.model.members[member].shear("Fy", x_m, case))


def _member_row(name: str, kind: str, length: float, size: dict, faces: tuple[float, float]) -> dict:
    return {"member": name, "kind": kind, "length_m": length, **size, "cover_mm": 60.0, "fc_mpa": 30.0,
            "fyt_mpa": 420.0, "fy_mpa": 420.0, "lambda": 1.0, "support_i": "column", "support_j": "column",
            "face_i_mm": faces[0], "face_j_mm": faces[1], "load_face": "top", "bf_mm": np.nan,
            "hf_mm": np.nan, "as_tension_mm2": np.nan, "level": "L1" if kind == "beam" else "S1",
            "group": "girder-x" if kind == "beam" else "column",
            "db_long_mm": np.nan if kind == "beam" else 25.0, "n_long": np.nan if kind == "beam" else 8}


def _build() -> tuple[FEModel3D, list[dict]]:
    model = FEModel3D()
    E = 4700 * math.sqrt(30.0) * 1e3  # kPa
    model.add_material("concrete", E, E / 2.4, 0.2, 24.0)
    rows = []
    for name, size in (("beam", BEAM), ("column", COLUMN)):
        b, h = size["b_mm"] / 1e3, size["h_mm"] / 1e3
        J = b**3 * h * (1 / 3 - 0.21 * b / h * (1 - b**4 / (12 * h**4)))  # b <= h
        model.add_section(name, b * h, h * b**3 / 12, b * h**3 / 12, J)
    xs = (0.0, 6.0, 14.0)
    for k, x in enumerate(xs, start=1):
        model.add_node(f"N{k}", x, 0.0, 0.0)
        model.add_node(f"T{k}", x, 3.5, 0.0)
        model.def_support(f"N{k}", True, True, True, True, True, True)
        model.def_support(f"T{k}", support_DZ=True, support_RX=True, support_RY=True)
        model.add_member(f"C{k}", f"N{k}", f"T{k}", "concrete", "column")
        rows.append(_member_row(f"C{k}", "column", 3.5, COLUMN, (0.0, BEAM["h_mm"] / 2)))
    for k in (1, 2):
        name = f"B{k}"
        model.add_member(name, f"T{k}", f"T{k + 1}", "concrete", "beam")
        model.add_member_dist_load(name, "FY", -W_D, -W_D, case="D")
        rows.append(_member_row(name, "beam", xs[k] - xs[k - 1], BEAM, (COLUMN["b_mm"] / 2,) * 2))
    model.add_member_pt_load("B2", "FY", -P_L, X_P, case="L")
    for case in ("D", "L"):
        model.add_load_combo(case, {case: 1.0})
    model.analyze_linear(check_statics=False)
    return model, rows


def _forces(model: FEModel3D, rows: list[dict]) -> pd.DataFrame:
    out = []
    for row in rows:
        name, length = row["member"], row["length_m"]
        jumps = [X_P] if name == "B2" else []
        st = [(x, x) for x in np.linspace(0.0, length, STATIONS) if not any(np.isclose(x, jumps))]
        st += [pair for p in jumps for pair in ((p, p - EPS), (p, p + EPS))]
        st.sort(key=lambda s: s[0])  # stable: left limit first
        m = model.members[name]
        for case in ("D", "L"):
            for x, xq in st:
                out.append({"member": name, "case": case, "x_m": float(x), "V_kN": m.shear("Fy", xq, case),
                            "N_kN": -m.axial(xq, case), "T_kNm": m.torque(xq, case),
                            "M_kNm": -m.moment("Mz", xq, case)})
    return pd.DataFrame(out).astype({c: float for c in ("x_m", "V_kN", "N_kN", "T_kNm", "M_kNm")})


def two_span_frame() -> Frame:
    """Build and analyse the two-bay frame; see the module docstring."""
    model, rows = _build()
    return Frame(members=pd.DataFrame(rows), forces=_forces(model, rows),
                 cases=pd.DataFrame({"case": ["D", "L"], "type": ["D", "L"]}), model=model)
