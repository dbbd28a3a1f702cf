"""PyNite reference for element chaining: a two-bay frame with every member meshed into
several elements, analysed in N and mm, and its element-end forces exported as PyNite
reports them.

Geometry (mm): columns at X = 0, 6000, 14000, fixed at the base (N1, N2, N3), 3500 high to
the top nodes T1, T2, T3, each meshed at mid-height (C1m, ...). Beam B1 (T1 to T2, 6000)
has nodes at 900, 2200, 3000, 4600 from T1; beam B2 (T2 to T3, 8000) at 1200, 2500, 4000,
5500, 6400 from T2: uneven meshes. The frame lies in PyNite's global XY plane (Y up); the
top nodes are held out of plane (DZ, RX, RY). Load cases:

    D   30 N/mm down on both beams, and a torque of 15 kN*m about the axis of B1 at its
        node 3000 mm from T1 (a concentrated torque at an interior node)
    L   120 kN down at the node of B2 2500 mm from T2 (a point load at an interior node)
    W   40 kN along +X at T1

``meshed()`` builds the frame with one physical member per beam and column, which PyNite
itself splits into elements at the nodes along it; ``separate(reversed_elements)`` builds
the same frame with every element its own member, those named drawn from their j node to
their i node. Both models have the same nodes, elements and loads.

Export (``element_rows``): one row per element end and load case, exactly as PyNite gives
it: the element's local end-force vector ``f()`` (forces and moments acting ON the element
at its nodes, in its local axes, N and N*mm), rows at the element's own stations 0 and L
(mm) from its node i. PyNite's local axes: x from node i to node j; for a horizontal
element y is global +Y whatever its direction (z = x cross y), for a vertical one y is
global -X going up and +X going down (so y turns with the element).

Member diagrams (``member_rows``): PyNite's physical-member diagrams of ``meshed()`` at
every node along the member, in our schema (kN, m), as tests/fea_reference.py reads them:
V = shear("Fy"), N = -axial, T = torque, M = -moment("Mz"). At a node where a load acts,
two rows: the limits at x -/+ 1e-6 mm (a slope of 30 N/mm moves V by 3e-8 kN there).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from Pynite import FEModel3D

XS = (0.0, 6000.0, 14000.0)
HEIGHT = 3500.0
BEAM_NODES = {"B1": (900.0, 2200.0, 3000.0, 4600.0), "B2": (1200.0, 2500.0, 4000.0, 5500.0, 6400.0)}
W_D = 30.0  # N/mm
TORQUE = 15e6  # N*mm on B1 at 3000 mm, case D
P_L = 120e3  # N on B2 at 2500 mm, case L
H_W = 40e3  # N at T1, case W
CASES = ("D", "L", "W")
BEAM = {"b_mm": 300.0, "h_mm": 600.0}
COLUMN = {"b_mm": 400.0, "h_mm": 400.0}
EPS = 1e-6  # mm


def _frame(model: FEModel3D) -> None:
    E = 4700 * math.sqrt(30.0)  # MPa
    model.add_material("concrete", E, E / 2.4, 0.2, 2.4e-5)
    for name, size in (("beam", BEAM), ("column", COLUMN)):
        b, h = size["b_mm"], size["h_mm"]
        J = b**3 * h * (1 / 3 - 0.21 * b / h * (1 - b**4 / (12 * h**4)))  # b <= h
        model.add_section(name, b * h, h * b**3 / 12, b * h**3 / 12, J)
    for k, x in enumerate(XS, start=1):
        model.add_node(f"N{k}", x, 0.0, 0.0)
        model.add_node(f"C{k}m", x, HEIGHT / 2, 0.0)
        model.add_node(f"T{k}", x, HEIGHT, 0.0)
        model.def_support(f"N{k}", True, True, True, True, True, True)
        model.def_support(f"T{k}", support_DZ=True, support_RX=True, support_RY=True)
        model.def_support(f"C{k}m", support_DZ=True, support_RX=True, support_RY=True)
    for beam, x0 in (("B1", XS[0]), ("B2", XS[1])):
        for k, x in enumerate(BEAM_NODES[beam], start=1):
            node = f"{beam}n{k}"
            model.add_node(node, x0 + x, HEIGHT, 0.0)
            model.def_support(node, support_DZ=True, support_RX=False, support_RY=True)


def _loads_at_nodes(model: FEModel3D) -> None:
    model.add_node_load("B1n3", "MX", TORQUE, case="D")  # B1 node at 3000 mm
    model.add_node_load("B2n2", "FY", -P_L, case="L")  # B2 node at 2500 mm
    model.add_node_load("T1", "FX", H_W, case="W")
    for case in CASES:
        model.add_load_combo(case, {case: 1.0})


def member_nodes() -> dict[str, list[str]]:
    """The nodes along each member, from node i."""
    out = {}
    for k in (1, 2, 3):
        out[f"C{k}"] = [f"N{k}", f"C{k}m", f"T{k}"]
    out["B1"] = ["T1", *[f"B1n{k}" for k in range(1, 5)], "T2"]
    out["B2"] = ["T2", *[f"B2n{k}" for k in range(1, 6)], "T3"]
    return out


def meshed() -> FEModel3D:
    """One physical member per beam and column; PyNite meshes them at the nodes along them."""
    model = FEModel3D()
    _frame(model)
    for name, nodes in member_nodes().items():
        model.add_member(name, nodes[0], nodes[-1], "concrete", "beam" if name[0] == "B" else "column")
    for beam in ("B1", "B2"):
        model.add_member_dist_load(beam, "FY", -W_D, -W_D, case="D")
    _loads_at_nodes(model)
    model.analyze_linear(check_statics=False)
    return model


def separate(reversed_elements: tuple[str, ...] = ()) -> FEModel3D:
    """Every element its own member, named '<member>e<k>' (k from 1 at member node i); those in
    ``reversed_elements`` are drawn from the far node to the near one."""
    model = FEModel3D()
    _frame(model)
    for name, nodes in member_nodes().items():
        for k in range(len(nodes) - 1):
            el = f"{name}e{k + 1}"
            a, b = nodes[k], nodes[k + 1]
            if el in reversed_elements:
                a, b = b, a
            model.add_member(el, a, b, "concrete", "beam" if name[0] == "B" else "column")
            if name[0] == "B":
                model.add_member_dist_load(el, "FY", -W_D, -W_D, case="D")
    _loads_at_nodes(model)
    model.analyze_linear(check_statics=False)
    return model


def elements_of(model: FEModel3D) -> list[tuple[str, str, object]]:
    """(element id, member id, PyNite element) for every element of a model: PyNite's own
    elements of a meshed member, or a member of one element (as ``separate()`` draws them)."""
    out = []
    for name, phys in model.members.items():
        for el_name, el in phys.sub_members.items():
            out.append((el_name if len(phys.sub_members) > 1 else name, name, el))
    return out


def element_rows(model: FEModel3D) -> pd.DataFrame:
    """One row per element end and case, as PyNite reports it (N, N*mm, mm)."""
    rows = []
    for el_name, member, el in elements_of(model):
        for case in CASES:
            f = el.f(case).ravel()
            for end, node, station, vec in (("1", el.i_node.name, 0.0, f[:6]), ("2", el.j_node.name, el.L(), f[6:])):
                rows.append({"elem": el_name, "frame": member, "n_a": el.i_node.name, "n_b": el.j_node.name,
                             "at_node": node, "end": end, "lc": case, "pos": station, "fx": vec[0], "fy": vec[1],
                             "fz": vec[2], "mx": vec[3], "my": vec[4], "mz": vec[5]})
    return pd.DataFrame(rows)


def node_rows(model: FEModel3D) -> pd.DataFrame:
    """The node table as PyNite holds it (mm)."""
    return pd.DataFrame([{"id": n.name, "gx": n.X, "gy": n.Y, "gz": n.Z} for n in model.nodes.values()])


def node_positions() -> dict[str, list[float]]:
    """Each member's nodes as distances from its node i (mm)."""
    out = {f"C{k}": [0.0, HEIGHT / 2, HEIGHT] for k in (1, 2, 3)}
    out["B1"] = [0.0, *BEAM_NODES["B1"], XS[1] - XS[0]]
    out["B2"] = [0.0, *BEAM_NODES["B2"], XS[2] - XS[1]]
    return out


JUMPS = {("B1", 3000.0), ("B2", 2500.0)}  # nodes where a load acts (two rows)


def member_rows(model: FEModel3D) -> pd.DataFrame:
    """Member rows in our schema (kN, m) from PyNite's physical-member diagrams."""
    rows = []
    for name, xs in node_positions().items():
        m = model.members[name]
        for case in CASES:
            for x in xs:
                at = [x - EPS, x + EPS] if (name, x) in JUMPS else [min(max(x, 0.0), m.L())]
                for xq in at:
                    rows.append({"member": name, "case": case, "x_m": x / 1e3, "V_kN": m.shear("Fy", xq, case) / 1e3,
                                 "N_kN": -m.axial(xq, case) / 1e3, "T_kNm": m.torque(xq, case) / 1e6,
                                 "M_kNm": -m.moment("Mz", xq, case) / 1e6})
    return pd.DataFrame(rows)


def members_table() -> pd.DataFrame:
    """members.csv of the frame: beams between column faces, columns (not designed)."""
    rows = []
    for name, xs in node_positions().items():
        beam = name[0] == "B"
        size = BEAM if beam else COLUMN
        rows.append({"member": name, "kind": "beam" if beam else "column", "length_m": xs[-1] / 1e3, **size,
                     "cover_mm": 60.0, "fc_mpa": 30.0, "fyt_mpa": 420.0, "support_i": "column",
                     "support_j": "column", "face_i_mm": COLUMN["b_mm"] / 2 if beam else 0.0,
                     "face_j_mm": COLUMN["b_mm"] / 2 if beam else BEAM["h_mm"] / 2})
    return pd.DataFrame(rows)


def cases_table() -> pd.DataFrame:
    return pd.DataFrame({"case": list(CASES), "type": list(CASES)})


def chain_table() -> pd.DataFrame:
    """member, element, order for ``separate()``: elements in order from member node i."""
    rows = []
    for name, nodes in member_nodes().items():
        for k in range(len(nodes) - 1):
            rows.append({"member": name, "element": f"{name}e{k + 1}", "order": k + 1})
    return pd.DataFrame(rows)


def sanity(model: FEModel3D) -> None:
    """Statics of the meshed frame (each case): the support reactions balance the loads."""
    for case in CASES:
        fy = sum(model.nodes[n].RxnFY[case] for n in ("N1", "N2", "N3", "T1", "T2", "T3"))
        total = W_D * (XS[2] - XS[0]) if case == "D" else (P_L if case == "L" else 0.0)
        assert np.isclose(fy, total, rtol=1e-9, atol=1e-6), (case, fy, total)
