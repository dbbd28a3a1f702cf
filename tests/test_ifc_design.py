"""Designing from an IFC model gives the same tables as designing from the equivalent members.csv.

(a) A small frame authored here with ifcopenshell, in IFC4 (metres, pascals) and IFC2X3
(millimetres, MPa), beside a members.csv written by hand from the authored values;
(b) the demo building, sample_results/demo_building.ifc against sample_results/members.csv.
Unless a comment names another source, expected values are geometry authored here.
"""

from __future__ import annotations

import pandas as pd
import pytest
from pandas.testing import assert_frame_equal

from postproc import cli
from tests.conftest import rows_from_function
from tests.test_ifc import SITE, Model, matrix

SAMPLE = cli.sample_folder()
TOP = 3.5  # beam tops flush with the column tops (Model's Level 1)
FC_MPA = 30.0
COVER_M = 0.06
# (member, plan start, plan end, b, h, flange (bf, hf) or None), metres
BEAMS = (("B1", (0, 0), (6, 0), 0.3, 0.6, (1.2, 0.15)),  # between columns C1 and C2, a T-beam
         ("S1", (3, 0), (3, 5), 0.25, 0.5, None),  # from B1's mid-span to column C3
         ("K1", (6, 0), (6, -2), 0.3, 0.5, None))  # cantilever beyond C2
COLUMNS = (("C1", 0, 0), ("C2", 6, 0), ("C3", 3, 5))  # 400 x 400, 3.5 m high (Model.column)
PLANTED = ("C4", 3, 0)  # a column standing on B1 where S1 frames in: it carries neither beam
COMMON = dict(cover_mm=60.0, fc_mpa=FC_MPA, fyt_mpa=420.0, fy_mpa=420.0, load_face="top")
# members.csv by hand. Faces: half the 400 mm column = 200 mm; S1 on B1's 300 mm web = 150 mm. A column's head
# is at the soffit of the deepest beam meeting it (beam tops flush with the column tops): C1 under B1 (600 mm),
# C2 under B1 and K1 (600 mm), C3 under S1 (500 mm); C4 stands on B1 and S1, nothing at its head. Columns:
# 8 bars of 20 mm (ShearpostDesign DbLong and NLong in the IFC model).
MEMBERS = [
    dict(member="B1", kind="beam", length_m=6.0, b_mm=300.0, h_mm=600.0, support_i="column", face_i_mm=200.0,
         support_j="column", face_j_mm=200.0, bf_mm=1200.0, hf_mm=150.0, level="Level 1", **COMMON),
    dict(member="S1", kind="beam", length_m=5.0, b_mm=250.0, h_mm=500.0, support_i="girder", face_i_mm=150.0,
         support_j="column", face_j_mm=200.0, level="Level 1", **COMMON),
    dict(member="K1", kind="beam", length_m=2.0, b_mm=300.0, h_mm=500.0, support_i="column", face_i_mm=200.0,
         support_j="free", face_j_mm=0.0, level="Level 1", **COMMON),
] + [dict(member=n, kind="column", length_m=3.5, b_mm=400.0, h_mm=400.0, support_i="column", face_i_mm=0.0,
          support_j="column", face_j_mm=head, level=level, db_long_mm=20.0, n_long=8, **COMMON)
      for n, level, head in (("C1", "Ground", 600.0), ("C2", "Ground", 600.0), ("C3", "Ground", 500.0),
                             ("C4", "Level 1", 0.0))]
# uniform loads (kN/m) per case; S1's end reactions w L / 2 act on B1 at mid-span
W = {"D": {"B1": 20.0, "S1": 15.0, "K1": 12.0}, "L": {"B1": 10.0, "S1": 10.0, "K1": 8.0}}


def forces() -> list[dict]:
    """Handbook shears (beam diagram formulas, e.g. AISC Manual Table 3-23, from memory): simple beam,
    uniform load V = w (L/2 - x) plus a centre load P: +-P/2 (B1, S1); cantilever V = w (L - x) (K1)."""
    rows = []
    for case, w in W.items():
        p = w["S1"] * 5.0 / 2
        rows += rows_from_function("B1", case, 6.0, lambda x: w["B1"] * (3.0 - x) + (p / 2 if x < 3.0 else -p / 2),
                                   jumps=(3.0,))
        rows += rows_from_function("S1", case, 5.0, lambda x: w["S1"] * (2.5 - x))
        rows += rows_from_function("K1", case, 2.0, lambda x: w["K1"] * (2.0 - x))
        for n in ("C1", "C2", "C3", "C4"):  # columns: a constant shear, invented
            rows += rows_from_function(n, case, 3.5, lambda x: 0.2 * w["B1"], n=3)
    return rows


def authored_frame(schema: str, unit: str, pressure_prefix: str | None, path):
    """The frame of MEMBERS as an IFC file: f'c and cover in the file's own units."""
    m = Model(schema, unit, pressure_prefix)
    elements = [m.column(n, x, y) for n, x, y in COLUMNS]
    name, x, y = PLANTED
    elements.append(m.element("IfcColumn", name, m.level1, matrix(SITE + [x, y, TOP]), m.rect(0.4, 0.4), 3.5))
    for column in elements:
        m.pset(column, "ShearpostDesign", {"Cover": COVER_M * m.k, "DbLong": 0.02 * m.k, "NLong": 8})
    for name, (x0, y0), (x1, y1), b, h, flange in BEAMS:
        profile = m.rect(b, h) if flange is None else m.tee(h, flange[0], b, flange[1])
        beam = m.beam(name, (x0, y0, TOP - h / 2), (x1, y1, TOP - h / 2), profile)
        m.pset(beam, "ShearpostDesign", {"Cover": COVER_M * m.k})
        elements.append(beam)
    concrete = m.material("Concrete", elements)
    if schema == "IFC4":  # no pressure unit in the file: pascals
        m.pset(concrete, "Pset_MaterialConcrete", {"CompressiveStrength": FC_MPA * 1e6})
    else:  # the file's pressure unit is MPa
        m.f.create_entity("IfcMechanicalConcreteMaterialProperties", Material=concrete, CompressiveStrength=FC_MPA)
    return m.write(path)


def design(members, forces_csv, cases_csv, tmp) -> tuple[int, pd.DataFrame, pd.DataFrame]:
    """`shearpost run`; the output tables in member order (an IFC model lists its beams first)."""
    out = tmp / "out"
    code = cli.main(["run", "--members", str(members), "--forces", str(forces_csv), "--cases", str(cases_csv),
                     "--store", str(tmp / "store"), "--out", str(out), "--json"])
    read = lambda name, keys: (pd.read_csv(out / name, keep_default_na=False, na_values=[""])
                               .sort_values(keys).reset_index(drop=True))
    return code, read("members.csv", ["member"]), read("zones.csv", ["member", "zone"])


@pytest.fixture(scope="module")
def frame_inputs(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("frame")
    paths = {"members": tmp / "members.csv", "forces": tmp / "forces.csv", "cases": tmp / "cases.csv"}
    pd.DataFrame(MEMBERS).to_csv(paths["members"], index=False)
    pd.DataFrame(forces()).to_csv(paths["forces"], index=False)
    pd.DataFrame({"case": ["D", "L"], "type": ["D", "L"]}).to_csv(paths["cases"], index=False)
    return paths, design(paths["members"], paths["forces"], paths["cases"], tmp / "csv")


@pytest.mark.parametrize("schema,unit,prefix", [("IFC4", "m", None), ("IFC2X3", "mm", "MEGA")])
def test_small_frame_ifc_design_equals_csv_design(frame_inputs, tmp_path, schema, unit, prefix):
    paths, (csv_code, csv_members, csv_zones) = frame_inputs
    ifc = authored_frame(schema, unit, prefix, tmp_path / "frame.ifc")
    code, members, zones = design(ifc, paths["forces"], paths["cases"], tmp_path)
    assert code == csv_code == 0
    assert_frame_equal(members, csv_members)
    assert_frame_equal(zones, csv_zones)
    # the design is not empty: rules of ACI 318-19 9.4.3.2 (d from a column face, the face at a girder)
    rows = members.set_index("member")
    assert dict(rows.status) == {"B1": "designed", "S1": "designed", "K1": "designed", "C1": "designed",
                                 "C2": "designed", "C3": "designed", "C4": "designed"}
    assert [tuple(rows.loc[b, ["crit_i", "crit_j"]]) for b in ("B1", "S1", "K1")] == [
        ("d", "d"), ("face", "d"), ("d", "free")]
    # S1 at the girder face, x = 0.15 m: 1.2D + 1.6L (ACI 318-19 Table 5.3.1(b)) of w (L/2 - x)
    assert rows.loc["S1", "vu_design_i_kN"] == pytest.approx((1.2 * 15.0 + 1.6 * 10.0) * (2.5 - 0.15), abs=0.01)
    # the stirrups fill the clear span between the faces (5600, 4650 and 1800 mm): the first 50 mm
    # from face i, the last between 50 mm and its zone's spacing from face j or the free end
    for member, clear in {"B1": 5600.0, "S1": 4650.0, "K1": 1800.0}.items():
        z = zones[zones.member == member].sort_values("zone")
        assert z.start_mm.iloc[0] == 50.0
        assert 50.0 <= clear - z.end_mm.iloc[-1] <= z.spacing_mm.max()


def test_demo_ifc_design_equals_csv_design(tmp_path):
    forces_csv, cases_csv = SAMPLE / "forces.csv", SAMPLE / "cases.csv"
    from_ifc = design(SAMPLE / "demo_building.ifc", forces_csv, cases_csv, tmp_path / "ifc")
    from_csv = design(SAMPLE / "members.csv", forces_csv, cases_csv, tmp_path / "csv")
    assert from_ifc[0] == from_csv[0] == 0
    assert_frame_equal(from_ifc[1], from_csv[1])
    assert_frame_equal(from_ifc[2], from_csv[2])
    assert len(from_ifc[1]) == len(pd.read_csv(SAMPLE / "members.csv"))  # every member of the demo
