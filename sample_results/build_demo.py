"""Build the shearpost demo building in PyNite, analyse it, and write its input tables.

The building is a scenario of our own: five office storeys (3.6 m) over a car park
at ground level (3.0 m). The car-park floor is a slab on grade, so the framed levels
are L1..L5 and the roof R. Plan grid 1-5 along X (spans 7.2, 8.4, 8.4, 6.0 m) and
A-D along Y (6.6, 9.0, 6.6 m), girders on every grid line, one secondary beam per X bay
at mid-bay of the 9.0 m bay B-C, a 2.4 m balcony cantilever at column A3 on every office
level. Column B4 stops at L1 to clear the car-park aisle; a transfer girder on line B
carries it from column B3 to a car-park column 4a, 1.8 m past B4 (x = 25.8 m), so that
B4 stands within 2h of a bearing face: a D-region (ACI 318-19 9.9.1.1(b)); a girder runs
on from 4a to B5.

Loads: D is the self weight (beams below the slab only) plus slab and finishes, L the
office live load, Lr the roof live load; slabs act one way across the short side of each
panel onto its two long-side beams. Wx, Wy (wind) and Ex, Ey (seismic, inverted
triangle) are nodal loads shared equally by the grid nodes of each level. Column bases
are fixed. The model's axes are PyNite's: global Y is vertical, so plan Y is the model's Z.

forces.csv holds 21 equal stations per member plus, at every node along a beam where
another member frames in, a row just left and a row just right of it (one row where the
two agree after rounding). V and M are in the member's local x-y plane (for beams the
vertical plane; for columns the global X-vertical plane); Vb is the shear along the local z
axis (the other principal direction). Signs: see member_values().

The perimeter frames (grid lines A, D, 1 and 5, every level) are special moment frames of
the seismic system: their beams carry `frame = special` and longitudinal bars of our own
choosing from the flexural design in frame_beams(); their columns are special-frame columns
too, and every column's bars come from a P-M check of each combination in column_bars(). Every member carries its end
coordinates (x_i_m ... z_j_m, plan X and Y and height, metres), from which the joints of
the special frames are found.

Writes members.csv, forces.csv and cases.csv next to this script.
Run: python sample_results/build_demo.py
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
from Pynite import FEModel3D

OUT = Path(__file__).resolve().parent

X_LINES = {"1": 0.0, "2": 7.2, "3": 15.6, "4": 24.0, "5": 30.0}
Y_LINES = {"A": 0.0, "B": 6.6, "C": 15.6, "D": 22.2}
FLOORS = {"P1": 0.0, "L1": 3.0, "L2": 6.6, "L3": 10.2, "L4": 13.8, "L5": 17.4, "R": 21.0}
LEVELS = tuple(FLOORS)[1:]  # framed levels
OFFICE = LEVELS[:-1]
SECONDARY_Y = 11.1  # mid-bay of B-C
CUT_OFF = "B4"  # column carried by the transfer girder at L1
TRANSFER = ("L1", "B", "3", "4a")  # level, line, from, to
# The car-park column (800 mm square) under the transfer line that carries the transfer girder's far
# end: B4 stands 25.8 - 0.4 - 24.0 = 1.4 m from its face, within 2h = 2.4 m (a strut-and-tie end region).
TRANSFER_POST = ("4a", 25.8)
BALCONY = "A3"  # edge column with a cantilever on each office level, projecting to -Y
BALCONY_LENGTH = 2.4
BALCONY_WIDTH = 3.0  # slab width carried by the cantilever, m
# Posts of a rooftop plant screen standing on roof girders: (girder, x from node i in m, D kN, Lr kN).
# The first stands 0.45 m from the column face, within d: a deep-beam region (ACI 318-19 9.9.1.1(b)).
PLANT_POSTS = (("R-GX-B23", 0.70, 120.0, 15.0), ("R-GX-B34", 2.45, 120.0, 15.0))

# Sections b x h (m) per group, cover to the tension-steel centroid (mm), f'c (MPa).
SECTIONS = {"column": (0.5, 0.5), "girder-x": (0.4, 0.7), "girder-y": (0.4, 0.7),
            "secondary": (0.3, 0.6), "cantilever": (0.3, 0.5), "transfer": (0.8, 1.2), "post": (0.8, 0.8)}
COLUMN_GROUPS = ("column", "post")  # "post": the car-park column that carries the transfer girder
COVER_MM = {"transfer": 90.0}  # two layers of bars; 60 elsewhere
FC_MPA = {"beam": 35.0, "column": 40.0}
FY_MPA = 420.0
CRACKED = {"beam": 0.35, "column": 0.70}  # ACI 318-19 6.6.3.1.1 stiffness factors

# Loads (kN, m, kPa)
UNIT_WEIGHT = 24.0
SLAB = 0.150
SDL = 1.5  # offices and roof
LIVE = 2.4  # offices (case L)
ROOF_LIVE = 1.0  # case Lr
WIND_PRESSURE = 1.2  # windward plus leeward, on the projected face
PARAPET = 1.0  # height above the roof that catches wind
CS = 0.06  # seismic response coefficient: base shear = CS x seismic weight
CASES = {"D": "D", "L": "L", "Lr": "Lr", "Wx": "W", "Wy": "W", "Ex": "E", "Ey": "E"}

STATIONS = 21
EPS = 1e-6  # offset each side of a concentrated load, m


def grid_points():
    for y_name, z in Y_LINES.items():
        for x_name, x in X_LINES.items():
            yield y_name + x_name, x, z


class Building:
    """The PyNite model plus the members.csv rows and what the loads need."""

    def __init__(self):
        self.model = FEModel3D()
        self.rows: dict[str, dict] = {}
        self.lines: dict[tuple, list] = {}  # (level, axis, coord) -> [(member, start, end, b)]
        self.weight = dict.fromkeys(LEVELS, 0.0)  # dead load per level, kN (seismic weight)
        for kind, fc in FC_MPA.items():
            E = 4700 * math.sqrt(fc) * 1e3  # ACI 318-19 19.2.2.1(b), kPa
            self.model.add_material(kind, E, E / 2.4, 0.2, UNIT_WEIGHT)
        for group, (b, h) in SECTIONS.items():
            f = CRACKED["column" if group in COLUMN_GROUPS else "beam"]
            short, long = min(b, h), max(b, h)
            J = short**3 * long * (1 / 3 - 0.21 * short / long * (1 - short**4 / (12 * long**4)))
            self.model.add_section(group, b * h, f * h * b**3 / 12, f * b * h**3 / 12, f * J)

    def node(self, level: str, label: str, x: float, z: float) -> str:
        name = f"{level}-{label}"
        if name not in self.model.nodes:
            self.model.add_node(name, x, FLOORS[level], z)
        return name

    def add(self, name: str, i: str, j: str, group: str, level: str, ends) -> None:
        """Add a member and its members.csv row; ends = ((support, face_mm), (support, face_mm))."""
        kind = "column" if group in COLUMN_GROUPS else "beam"
        b, h = SECTIONS[group]
        self.model.add_member(name, i, j, kind, group)
        (si, fi), (sj, fj) = ends
        self.rows[name] = {
            "member": name, "kind": kind, "length_m": round(self.model.members[name].L(), 4),
            "b_mm": b * 1e3, "h_mm": h * 1e3, "cover_mm": COVER_MM.get(group, 60.0),
            "fc_mpa": FC_MPA[kind], "fyt_mpa": FY_MPA, "fy_mpa": FY_MPA, "lambda": 1.0,
            "support_i": si, "support_j": sj, "face_i_mm": fi, "face_j_mm": fj, "load_face": "top",
            "bf_mm": None, "hf_mm": None, "as_tension_mm2": None, "level": level, "group": group,
        }

    def column_below(self, level: str, grid: str) -> bool:
        below = tuple(FLOORS)[tuple(FLOORS).index(level) - 1]
        return f"{below}-C-{grid}" in self.rows

    def beam_end(self, level: str, axis: str, x: float, z: float, grid: str | None):
        """Support and node-to-face distance (mm) of a beam end at (x, z): a column below the
        node, else the girder running across the beam through that node."""
        if grid and self.column_below(level, grid):
            below = tuple(FLOORS)[tuple(FLOORS).index(level) - 1]
            return "column", self.rows[f"{below}-C-{grid}"]["b_mm"] / 2
        across, coord, pos = ("y", x, z) if axis == "x" else ("x", z, x)
        for _, start, end, b in self.lines.get((level, across, coord), []):
            if start < pos < end:
                return "girder", b * 500
        raise ValueError(f"beam end at {level} ({x}, {z}) has no support")

    def beam(self, name: str, level: str, group: str, axis: str, coord: float, end_i, end_j) -> None:
        """A beam along `axis` ('x' or 'y') on the line at `coord`, from end_i to end_j, each
        (node label, position along the axis, grid point or None)."""
        xz = (lambda p: (p, coord)) if axis == "x" else (lambda p: (coord, p))
        nodes, supports = [], []
        for label, pos, grid in (end_i, end_j):
            nodes.append(self.node(level, label, *xz(pos)))
            supports.append(self.beam_end(level, axis, *xz(pos), grid))
        self.add(name, *nodes, group, level, supports)
        self.lines.setdefault((level, axis, coord), []).append((name, end_i[1], end_j[1], SECTIONS[group][0]))


def build_frame(bld: Building) -> None:
    floors = tuple(FLOORS)
    for lo, hi in zip(floors, floors[1:]):
        for grid, x, z in grid_points():
            if lo == "P1" and grid == CUT_OFF:
                continue
            bld.add(f"{lo}-C-{grid}", bld.node(lo, grid, x, z), bld.node(hi, grid, x, z), "column", lo,
                    (("column", 0.0), ("column", 0.0)))
            if lo == "P1":
                bld.model.def_support(f"P1-{grid}", True, True, True, True, True, True)  # fixed base
    _transfer_post(bld)
    xs, ys = list(X_LINES.items()), list(Y_LINES.items())
    for level in LEVELS:
        for y_name, z in ys:  # X girders first: beams along Y may frame into them
            for (na, xa), (nb, xb) in _line_spans(level, y_name, xs):
                group, tag = ("transfer", "TG") if (level, y_name, na, nb) == TRANSFER else ("girder-x", "GX")
                gi, gj = y_name + na, y_name + nb
                bld.beam(f"{level}-{tag}-{y_name}{na}{nb}", level, group, "x", z, (gi, xa, gi), (gj, xb, gj))
        for x_name, x in xs:
            for (na, za), (nb, zb) in zip(ys, ys[1:]):
                gi, gj = na + x_name, nb + x_name
                bld.beam(f"{level}-GY-{x_name}{na}{nb}", level, "girder-y", "y", x, (gi, za, gi), (gj, zb, gj))
        for (na, xa), (nb, xb) in zip(xs, xs[1:]):
            bld.beam(f"{level}-SB-{na}{nb}", level, "secondary", "x", SECONDARY_Y,
                     (f"M{na}", xa, None), (f"M{nb}", xb, None))
        if level in OFFICE:
            x, z = X_LINES[BALCONY[1]], Y_LINES[BALCONY[0]]
            bld.add(f"{level}-CB-{BALCONY}", bld.node(level, BALCONY, x, z),
                    bld.node(level, "T" + BALCONY, x, z - BALCONY_LENGTH), "cantilever", level,
                    (("column", SECTIONS["column"][0] * 500), ("free", 0.0)))
    _flanges(bld)
    _transfer_releases(bld)


def _transfer_post(bld: Building) -> None:
    """The car-park column that carries the transfer girder's far end (fixed base)."""
    level, line = TRANSFER[0], TRANSFER[1]
    label, x = TRANSFER_POST
    grid = line + label
    below = tuple(FLOORS)[tuple(FLOORS).index(level) - 1]
    bld.add(f"{below}-C-{grid}", bld.node(below, grid, x, Y_LINES[line]), bld.node(level, grid, x, Y_LINES[line]),
            "post", below, (("column", 0.0), ("column", 0.0)))
    bld.model.def_support(f"{below}-{grid}", True, True, True, True, True, True)


def _transfer_releases(bld: Building) -> None:
    """The cut-off column's base and the girders framing into the transfer girder at it are
    pinned (bending released), so that the transfer girder carries no compatibility torsion
    (a common detailing choice for transfer girders)."""
    level = TRANSFER[0]
    node = f"{level}-{CUT_OFF}"
    for name, row in bld.rows.items():
        m = bld.model.members[name]
        if row["kind"] == "column" and m.i_node.name == node:
            bld.model.def_releases(name, Ryi=True, Rzi=True)
        elif row["kind"] == "beam" and row["group"] != "transfer" and node in (m.i_node.name, m.j_node.name):
            bld.model.def_releases(name, **{"Rzi" if m.i_node.name == node else "Rzj": True})


def _line_spans(level: str, y_name: str, xs: list) -> list:
    """The X spans of a grid line at a level: grid to grid, except on the transfer line, which
    passes over the cut-off column to the car-park column 4a and then runs on to the next grid."""
    points = list(xs)
    if (level, y_name) == TRANSFER[:2]:
        points = sorted([p for p in xs if y_name + p[0] != CUT_OFF] + [TRANSFER_POST], key=lambda p: p[1])
    return list(zip(points, points[1:]))


def column_faces(bld: Building) -> None:
    """Column ends: the beams hang below their nodes (the top of the slab at the node's level, as
    the IFC model draws them), so a column's clear height runs from the node at its foot (the top
    of the slab or footing) to the soffit of the deepest beam through the node at its head. Runs
    after the analysis, which splits every beam at the nodes along it."""
    depth: dict[str, float] = {}
    for name, row in bld.rows.items():
        if row["kind"] == "beam":
            for sub in bld.model.members[name].sub_members.values():
                for n in (sub.i_node.name, sub.j_node.name):
                    depth[n] = max(depth.get(n, 0.0), row["h_mm"])
    for name, row in bld.rows.items():
        if row["kind"] == "column":
            m = bld.model.members[name]
            row["face_i_mm"], row["face_j_mm"] = 0.0, depth.get(m.j_node.name, 0.0)


def _flanges(bld: Building) -> None:
    """Interior girders as T-beams: each overhang min(8 hf, sw/2, ln/8) (ACI 318-19 6.3.2.1)."""
    hf = SLAB
    for (level, axis, coord), members in bld.lines.items():
        edges = X_LINES.values() if axis == "y" else Y_LINES.values()
        parallel = sorted(c for (lv, ax, c) in bld.lines if lv == level and ax == axis)
        for name, start, end, b in members:
            row = bld.rows[name]
            if row["group"] == "secondary" or coord in (min(edges), max(edges)):
                continue
            ln = end - start - (row["face_i_mm"] + row["face_j_mm"]) / 1e3
            mid = (start + end) / 2
            k = parallel.index(coord)
            overhang = 0.0
            for other in (parallel[k - 1], parallel[k + 1]):
                b_other = next(bo for _, s, e, bo in bld.lines[(level, axis, other)] if s <= mid <= e)
                sw = abs(other - coord) - b / 2 - b_other / 2
                overhang += min(8 * hf, sw / 2, ln / 8)
            row["bf_mm"], row["hf_mm"] = round((b + overhang) * 1e3), hf * 1e3


def apply_loads(bld: Building) -> None:
    m = bld.model
    for name, row in bld.rows.items():  # self weight; beams below the slab only
        b, h = row["b_mm"] / 1e3, row["h_mm"] / 1e3
        w = UNIT_WEIGHT * b * (h if row["kind"] == "column" else h - SLAB)
        m.add_member_dist_load(name, "FY", -w, -w, case="D")
        L = row["length_m"]
        if row["kind"] == "beam":
            bld.weight[row["level"]] += w * L
        else:
            top = tuple(FLOORS)[tuple(FLOORS).index(row["level"]) + 1]
            bld.weight[top] += w * L / 2
            if row["level"] != "P1":
                bld.weight[row["level"]] += w * L / 2
    dead = UNIT_WEIGHT * SLAB + SDL
    xs = sorted(X_LINES.values())
    ys = sorted([*Y_LINES.values(), SECONDARY_Y])
    for level in LEVELS:
        live_case, live = ("Lr", ROOF_LIVE) if level == "R" else ("L", LIVE)
        for x0, x1 in zip(xs, xs[1:]):
            for z0, z1 in zip(ys, ys[1:]):
                if z1 - z0 <= x1 - x0:  # spans along Y onto the X-direction beams at z0 and z1
                    axis, lines, a0, a1, half = "x", (z0, z1), x0, x1, (z1 - z0) / 2
                else:  # spans along X onto the Y-direction beams at x0 and x1
                    axis, lines, a0, a1, half = "y", (x0, x1), z0, z1, (x1 - x0) / 2
                for coord in lines:
                    _line_load(bld, level, axis, coord, a0, a1, dead * half, "D")
                    _line_load(bld, level, axis, coord, a0, a1, live * half, live_case)
        if level in OFFICE:
            name = f"{level}-CB-{BALCONY}"
            m.add_member_dist_load(name, "FY", -dead * BALCONY_WIDTH, -dead * BALCONY_WIDTH, case="D")
            m.add_member_dist_load(name, "FY", -LIVE * BALCONY_WIDTH, -LIVE * BALCONY_WIDTH, case="L")
            bld.weight[level] += dead * BALCONY_WIDTH * BALCONY_LENGTH
    for name, x, dead_kN, roof_kN in PLANT_POSTS:
        m.add_member_pt_load(name, "FY", -dead_kN, x, case="D")
        m.add_member_pt_load(name, "FY", -roof_kN, x, case="Lr")
        bld.weight["R"] += dead_kN
    _lateral(bld)


def _line_load(bld: Building, level, axis, coord, a0, a1, w, case) -> None:
    """Uniform load w over [a0, a1] of the beam line at coord (on the beams that hold it)."""
    for name, start, end, _ in bld.lines[(level, axis, coord)]:
        lo, hi = max(a0, start), min(a1, end)
        if hi > lo + 1e-9:
            bld.model.add_member_dist_load(name, "FY", -w, -w, lo - start, hi - start, case)
            if case == "D":
                bld.weight[level] += w * (hi - lo)


def _lateral(bld: Building) -> None:
    """Wind on the projected face by tributary height; seismic as an inverted triangle
    (F_k proportional to w_k h_k) of CS times the seismic weight. Equal shares to the
    grid nodes of a level."""
    floors = tuple(FLOORS)
    width_x = max(X_LINES.values()) - min(X_LINES.values())
    width_y = max(Y_LINES.values()) - min(Y_LINES.values())
    base_shear = CS * sum(bld.weight.values())
    wh = {lv: bld.weight[lv] * FLOORS[lv] for lv in LEVELS}
    grids = [g for g, _, _ in grid_points()]
    for level in LEVELS:
        k = floors.index(level)
        below = FLOORS[level] - FLOORS[floors[k - 1]]
        above = PARAPET if level == "R" else (FLOORS[floors[k + 1]] - FLOORS[level]) / 2
        trib = below / 2 + above  # height of facade that loads this level
        seismic = base_shear * wh[level] / sum(wh.values())
        for case, direction, force in (("Wx", "FX", WIND_PRESSURE * width_y * trib),
                                       ("Wy", "FZ", WIND_PRESSURE * width_x * trib),
                                       ("Ex", "FX", seismic), ("Ey", "FZ", seismic)):
            for g in grids:
                bld.model.add_node_load(f"{level}-{g}", direction, force / len(grids), case)


def stations(member, n: int) -> list[tuple[float, float]]:
    """(x_m, x queried) pairs: n equal stations, and both sides of every intermediate node and
    point load (left first); an equal station that falls on such a point is dropped."""
    nodes = np.cumsum([s.L() for s in member.sub_members.values()])[:-1]
    posts = [p for name, p, _, _ in PLANT_POSTS if name == member.name]
    inner = sorted({round(float(p), 6) for p in (*nodes, *posts)})
    at_node = {round(float(p), 4) for p in inner}
    out = [(float(x), float(x)) for x in np.linspace(0.0, member.L(), n) if round(float(x), 4) not in at_node]
    out += [pair for p in inner for pair in ((float(p), p - EPS), (float(p), p + EPS))]
    return sorted(out, key=lambda s: s[0])  # stable: the left side stays first


def member_values(member, case: str, xq) -> np.ndarray:
    """Rows of (V, N, T, M, Vb) at the queried x: V = PyNite Fy shear, N = -axial (PyNite takes
    compression positive), T = torque, M = -Mz (sagging positive, so dM/dx = V), Vb = Fz shear."""
    return np.array([(member.shear("Fy", x, case), -member.axial(x, case), member.torque(x, case),
                      -member.moment("Mz", x, case), member.shear("Fz", x, case)) for x in xq])


def extract(bld: Building) -> tuple[pd.DataFrame, dict[str, dict[str, np.ndarray]]]:
    """forces.csv rows, and the unrounded values per member and case."""
    rows, raw = [], {}
    for name in bld.rows:
        member = bld.model.members[name]
        st = stations(member, STATIONS)
        x = np.round([s[0] for s in st], 4) + 0.0
        raw[name] = {}
        for case in CASES:
            v = member_values(member, case, [s[1] for s in st])
            raw[name][case] = v
            r = np.round(v, 3) + 0.0  # + 0.0 turns -0.0 into 0.0
            # a pair with no jump after rounding would be one row written twice: keep one
            keep = np.ones(len(x), bool)
            keep[1:] = ~((x[1:] == x[:-1]) & np.all(r[1:] == r[:-1], axis=1))
            rows.append(pd.DataFrame({"member": name, "case": case, "x_m": x[keep], "V_kN": r[keep, 0],
                                      "N_kN": r[keep, 1], "T_kNm": r[keep, 2], "M_kNm": r[keep, 3],
                                      "Vb_kN": r[keep, 4]}))
    return pd.concat(rows, ignore_index=True), raw


def tension_steel(bld: Building, raw) -> None:
    """A plausible As for the girders: the largest gravity moment 1.2D + 1.6(L + Lr) (a level
    carries L or Lr, not both) over phi fy 0.9 d, not less than ACI 318-19 9.6.1.2, in bars."""
    for name, row in bld.rows.items():
        if row["group"] not in ("girder-x", "girder-y", "transfer"):
            continue
        mu = np.max(np.abs(1.2 * raw[name]["D"][:, 3] + 1.6 * (raw[name]["L"][:, 3] + raw[name]["Lr"][:, 3])))
        b, d, fc = row["b_mm"], row["h_mm"] - row["cover_mm"], row["fc_mpa"]
        need = max(mu * 1e6 / (0.9 * FY_MPA * 0.9 * d), max(0.25 * math.sqrt(fc), 1.4) / FY_MPA * b * d)
        bar = 804.0 if row["group"] == "transfer" else 491.0  # 32 mm or 25 mm bars
        row["as_tension_mm2"] = math.ceil(need / bar) * bar


PERIMETER = ({"A", "D"}, {"1", "5"})  # special moment frames: X girders on lines A, D; Y girders on lines 1, 5
FRAME_BAR = (22.2, 387.0)  # #22 (ASTM A615M): diameter mm, area mm^2; 20 db = 444 mm fits the 500 mm columns (18.8.2.3)
PHI_FLEXURE = 0.90  # ACI 318-19 Table 21.2.2, tension-controlled
# Table 5.3.1 combinations for the flexural design of the frame beams' faces (loads absent where they help)
FLEXURE_COMBOS = ([{"D": 1.4}, {"D": 1.2, "L": 1.6, "Lr": 0.5}, {"D": 1.2, "Lr": 1.6, "L": 1.0}]
                  + [{"D": 1.2, w: s * 1.0, "L": 1.0, "Lr": 0.5} for w in ("Wx", "Wy") for s in (1, -1)]
                  + [{"D": 1.2, e: s * 1.0, "L": 1.0} for e in ("Ex", "Ey") for s in (1, -1)]
                  + [{"D": 0.9, q: s * 1.0} for q in ("Wx", "Wy", "Ex", "Ey") for s in (1, -1)])


def frame_beams(bld: Building, raw) -> list[str]:
    """The perimeter girders become beams of special moment frames, with bars from a flexural
    design of each face: Mu of the combinations above at the face (hogging and sagging), As
    from the rectangular stress block with phi = 0.9 (22.2, 21.2.2), at least As,min
    (9.6.1.2), the bottom steel at least half the top (so that Mn+ >= Mn-/2, 18.6.3.2), in
    whole #22 bars, at least two (18.6.3.1). Beams only; returns a line per level for the
    summary."""
    count: dict[str, int] = {}
    for name, row in bld.rows.items():
        if row["kind"] != "beam" or row["group"] not in ("girder-x", "girder-y"):
            continue
        line = name.split("-")[2][0]  # L2-GX-A12: line A; L2-GY-1BC: line 1
        if line not in PERIMETER[0 if row["group"] == "girder-x" else 1]:
            continue
        member = bld.model.members[name]
        xq = np.array([q for _, q in stations(member, STATIONS)])
        faces = (row["face_i_mm"] / 1e3, row["length_m"] - row["face_j_mm"] / 1e3)
        b, h, cover, fc = row["b_mm"], row["h_mm"], row["cover_mm"], row["fc_mpa"]
        d = h - cover
        as_min = max(0.25 * math.sqrt(fc), 1.4) / FY_MPA * b * d  # 9.6.1.2
        bars = {}
        for end, x in zip("ij", faces):
            moments = [sum(f * np.interp(x, xq, raw[name][c][:, 3]) for c, f in combo.items())
                       for combo in FLEXURE_COMBOS]
            top = max(_as_for(max(0.0, -min(moments)), b, d, fc), as_min)
            bottom = max(_as_for(max(0.0, max(moments)), b, d, fc), as_min, top / 2)
            bars[f"as_top_{end}_mm2"] = max(2, math.ceil(top / FRAME_BAR[1] - 1e-9)) * FRAME_BAR[1]
            bars[f"as_bot_{end}_mm2"] = max(2, math.ceil(bottom / FRAME_BAR[1] - 1e-9)) * FRAME_BAR[1]
        row.update(frame="special", db_long_mm=FRAME_BAR[0], **bars)
        count[row["level"]] = count.get(row["level"], 0) + 1
    return [f"special moment frame beams: {sum(count.values())} ({', '.join(f'{k} {v}' for k, v in count.items())}), "
            f"#22 bars"]


def _as_for(mu_kNm: float, b: float, d: float, fc: float) -> float:
    """Tension steel for Mu by the rectangular stress block (22.2.2.4), singly reinforced:
    Mu/phi = As fy (d - a/2), a = As fy / (0.85 f'c b)."""
    mn = mu_kNm * 1e6 / PHI_FLEXURE
    k = 0.85 * fc * b
    return k * (d - math.sqrt(d * d - 2.0 * mn / k)) / FY_MPA


COLUMN_BARS = ((8, 20.0), (8, 25.0), (12, 20.0), (12, 25.0), (16, 25.0), (12, 32.0), (16, 32.0))  # lightest first


def column_bars(bld: Building, raw) -> list[str]:
    """Frames and longitudinal bars of the columns: the perimeter columns belong to the special
    moment frames; each column takes the first arrangement of COLUMN_BARS with at least 1 % of Ag
    (ACI 318-19 10.6.1.1, 18.7.4.1) whose design strength holds every combination of Table 5.3.1
    at both ends: Mu,x/phi Mn,x + Mu,y/phi Mn,y <= 1 at the combination's Pu (a straight-line
    interaction, conservative: common practice), phi Mn from postproc.sections (strain compatibility,
    Table 21.2.2) about each axis; Mu,y is PyNite's My. Where none does (the columns of the transfer
    bay carry more moment than a 500 mm column can), the heaviest is taken and the column named in
    the returned notes: the demo's sections are kept so that its analysis stays as it is."""
    from postproc import combos, sections
    from postproc.settings import Combinations

    cases = list(CASES)
    names, factors = combos.aci_5_3_1(CASES, cases, Combinations()).explicit
    notes = []
    for name, row in bld.rows.items():
        if row["kind"] != "column":
            continue
        member = bld.model.members[name]
        ends = (0.0, member.L())
        n = np.array([[raw[name][c][0 if x == 0.0 else -1, 1] for c in cases] for x in ends])  # tension +
        mz = np.array([[raw[name][c][0 if x == 0.0 else -1, 3] for c in cases] for x in ends])
        my = np.array([[member.moment("My", x, c) for c in cases] for x in ends])
        pu = -(n @ factors.T).ravel() * 1e3  # N, compression positive; (end, combination)
        mux, muy = np.abs(mz @ factors.T).ravel() * 1e6, np.abs(my @ factors.T).ravel() * 1e6
        grid = name.split("-")[-1]  # e.g. A1: the columns of the perimeter frames are special (PERIMETER)
        row["frame"] = "special" if grid[0] in PERIMETER[0] or grid[1:] in PERIMETER[1] else "none"
        b, h, edge = row["b_mm"], row["h_mm"], row["cover_mm"]
        for count, db in COLUMN_BARS:
            if count * math.pi * db**2 / 4 < 0.01 * b * h:
                continue
            phi_mn = [sections.design_moment(sections.rectangular_column_sections(
                b, h, count, db, edge, row["fc_mpa"], FY_MPA, direction=d).take(np.zeros(len(pu), int)), pu).moment
                for d in ("h", "b")]
            if np.all(mux / phi_mn[0] + muy / phi_mn[1] <= 1.0):  # NaN (Pu above phi Pn,max) fails
                row["db_long_mm"], row["n_long"] = db, count
                break
        else:
            count, db = _within_shear_limit(row, pu, member.L() * 1e3 - row["face_i_mm"] - row["face_j_mm"])
            row["n_long"], row["db_long_mm"] = count, db
            notes.append(f"{name}: no arrangement passes the P-M check (largest Mu {max(mux.max(), muy.max()) / 1e6:,.0f}"
                         f" kN*m at Pu up to {pu.max() / 1e3:,.0f} kN): {count} bars of {db:g} mm taken")
    return notes


def _within_shear_limit(row: dict, pu: np.ndarray, clear_mm: float) -> tuple[int, float]:
    """For a column no arrangement of COLUMN_BARS suits in flexure: the heaviest one (at least 1 % of
    Ag) whose shear from Mpr at both ends (ACI 318-19 18.7.6.1.1, over the combinations' Pu) stays
    within the section limit 22.5.1.2 with Vc = 0, phi 0.66 sqrt(f'c) bw d, so that a special-frame
    column of the demo can still have its ties designed."""
    from postproc import sections

    b, h, edge = row["b_mm"], row["h_mm"], row["cover_mm"]
    limit = 0.75 * 0.66 * math.sqrt(row["fc_mpa"]) * b * (h - edge)
    for count, db in reversed(COLUMN_BARS):
        sec = sections.rectangular_column_sections(b, h, count, db, edge, row["fc_mpa"], FY_MPA)
        mpr = sections.largest_over_axial(sec, pu[None, :])[0]
        if row["frame"] != "special" or 2 * mpr / clear_mm <= limit:
            return count, db
    return COLUMN_BARS[0]


def coordinates(bld: Building) -> None:
    """Every member's end coordinates in members.csv (m): plan X, plan Y (the model's Z) and
    height (the model's Y), node i then node j."""
    for name, row in bld.rows.items():
        member = bld.model.members[name]
        for end, node in (("i", member.i_node), ("j", member.j_node)):
            row.update({f"x_{end}_m": round(node.X, 6), f"y_{end}_m": round(node.Z, 6), f"z_{end}_m": round(node.Y, 6)})


def checks(bld: Building, raw) -> list[str]:
    """Equilibrium checks printed with the summary."""
    m = bld.model
    out = []
    applied = sum(-ld[1] * (ld[4] - ld[3]) for mem in m.members.values() for ld in mem.DistLoads if ld[5] == "D")
    applied += sum(-ld[1] for mem in m.members.values() for ld in mem.PtLoads if ld[3] == "D")
    react = sum(n.RxnFY["D"] for n in m.nodes.values())
    out.append(f"D: applied {applied:.1f} kN, base reactions {react:.1f} kN")
    for case, comp in (("Wx", "RxnFX"), ("Ex", "RxnFX"), ("Wy", "RxnFZ"), ("Ey", "RxnFZ")):
        lateral = sum(p for n in m.nodes.values() for d, p, c in n.NodeLoads if c == case)
        shear = -sum(getattr(n, comp)[case] for n in m.nodes.values())
        out.append(f"{case}: applied {lateral:.1f} kN, base shear {shear:.1f} kN")
    sb = "L2-SB-23"
    w = sum(-ld[1] * (ld[4] - ld[3]) for ld in m.members[sb].DistLoads if ld[5] == "D")
    v = raw[sb]["D"][:, 0]
    out.append(f"{sb} D: wL = {w:.1f} kN (wL/2 = {w / 2:.1f}), V(0) = {v[0]:.1f}, V(L) = {v[-1]:.1f}, "
               f"V(0) - V(L) = {v[0] - v[-1]:.1f} kN")
    level, line, a, b = TRANSFER
    tg, col, node = f"{level}-TG-{line}{a}{b}", f"{level}-C-{CUT_OFF}", f"{level}-{CUT_OFF}"
    x = [s[0] for s in stations(m.members[tg], STATIONS)]
    k = next(i for i in range(1, len(x)) if x[i] == x[i - 1])
    jump = raw[tg]["D"][k, 0] - raw[tg]["D"][k - 1, 0]
    n_col = raw[col]["D"][0, 1]
    # each beam ending at the node pushes it up by V(L) at its end j, down by V(0) at its end i
    framing = sum(raw[n]["D"][-1, 0] if m.members[n].j_node.name == node else -raw[n]["D"][0, 0]
                  for n, r in bld.rows.items() if r["kind"] == "beam" and n != tg
                  and node in (m.members[n].i_node.name, m.members[n].j_node.name))
    out.append(f"{tg} D: jump at x = {x[k]:.2f} m is {jump:.1f} kN; column {col} N = {n_col:.1f} kN, with the "
               f"beams framing in: {n_col + framing:.1f} kN")
    cb = f"L2-CB-{BALCONY}"
    w = sum(-ld[1] * (ld[4] - ld[3]) for ld in m.members[cb].DistLoads if ld[5] == "D")
    out.append(f"{cb} D: wL = {w:.1f} kN, V(0) = {raw[cb]['D'][0, 0]:.1f}, M(0) = {raw[cb]['D'][0, 3]:.1f} kNm "
               f"(-wL^2/2 = {-w * BALCONY_LENGTH / 2:.1f}), V(L) = {raw[cb]['D'][-1, 0]:.1f}")
    return out


def main() -> None:
    bld = Building()
    build_frame(bld)
    apply_loads(bld)
    for case in CASES:
        bld.model.add_load_combo(case, {case: 1.0})
    bld.model.analyze_linear(check_statics=False)
    column_faces(bld)
    forces, raw = extract(bld)
    tension_steel(bld, raw)
    frames = frame_beams(bld, raw)
    notes = column_bars(bld, raw)
    coordinates(bld)
    members = pd.DataFrame(list(bld.rows.values()))
    members.to_csv(OUT / "members.csv", index=False)
    forces.to_csv(OUT / "forces.csv", index=False)
    pd.DataFrame({"case": list(CASES), "type": list(CASES.values())}).to_csv(OUT / "cases.csv", index=False)
    counts = members["group"].value_counts().to_dict()
    print(f"members: {len(members)} ({', '.join(f'{g} {n}' for g, n in counts.items())})")
    print(f"forces: {len(forces)} rows, {forces['case'].nunique()} cases; cases.csv: {len(CASES)} rows")
    for line in checks(bld, raw):
        print("check  " + line)
    for line in frames:
        print("frames " + line)
    for line in notes:
        print("column " + line)


if __name__ == "__main__":
    main()
