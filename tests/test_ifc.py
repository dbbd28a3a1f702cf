"""IFC reader: models authored here with ifcopenshell's API, read back into the members table.

Unless a comment names another source, every expected value is geometry authored in the
test itself (dimensions, positions, supports of the frame built below).
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pytest
from shapely.geometry import Polygon, box

import ifcopenshell
import ifcopenshell.api.aggregate
import ifcopenshell.api.context
import ifcopenshell.api.geometry
import ifcopenshell.api.material
import ifcopenshell.api.owner
import ifcopenshell.api.pset
import ifcopenshell.api.root
import ifcopenshell.api.spatial
import ifcopenshell.api.structural
import ifcopenshell.api.unit
from postproc.adapters.csv_tables import read_members
from postproc.adapters.errors import InputError
from postproc.adapters.ifc import EXTRA_COLUMNS, IfcDefaults, fc_from_text, measure, read_ifc_members
from postproc.adapters.mapping import ColumnMap

api = ifcopenshell.api
SITE = np.array([100.0, 50.0, 0.0])  # world position of the site origin (authored)
UP = np.array([0.0, 0.0, 1.0])


def matrix(origin, z=(0.0, 0.0, 1.0), x=(1.0, 0.0, 0.0)) -> np.ndarray:
    z, x = np.asarray(z, float), np.asarray(x, float)
    m = np.eye(4)
    m[:3, 0], m[:3, 1], m[:3, 2], m[:3, 3] = x, np.cross(z, x), z, origin
    return m


class Model:
    """A small IFC model in ``schema`` with length unit ``unit`` ('m' or 'mm'); sizes given in metres."""

    def __init__(self, schema: str, unit: str, pressure_prefix: str | None = None):
        f = self.f = ifcopenshell.file(schema=schema)
        self.k = 1000.0 if unit == "mm" else 1.0  # file units per metre
        if schema == "IFC2X3":  # IFC2X3 requires an owner history on every rooted entity
            person, org = api.owner.add_person(f), api.owner.add_organisation(f)
            api.owner.add_person_and_organisation(f, person=person, organisation=org)
            api.owner.add_application(f)
        project = api.root.create_entity(f, ifc_class="IfcProject", name="frame")
        units = [api.unit.add_si_unit(f, unit_type="LENGTHUNIT", prefix="MILLI" if unit == "mm" else None)]
        if pressure_prefix:
            units.append(api.unit.add_si_unit(f, unit_type="PRESSUREUNIT", prefix=pressure_prefix))
        api.unit.assign_unit(f, units=units)
        model = api.context.add_context(f, context_type="Model")
        self.body = api.context.add_context(f, context_type="Model", context_identifier="Body",
                                            target_view="MODEL_VIEW", parent=model)
        self.axis = api.context.add_context(f, context_type="Model", context_identifier="Axis",
                                            target_view="GRAPH_VIEW", parent=model)
        self.reference = api.context.add_context(f, context_type="Model", context_identifier="Reference",
                                                 target_view="GRAPH_VIEW", parent=model)
        site = api.root.create_entity(f, ifc_class="IfcSite", name="site")
        building = api.root.create_entity(f, ifc_class="IfcBuilding", name="building")
        self.ground = api.root.create_entity(f, ifc_class="IfcBuildingStorey", name="Ground")
        self.level1 = api.root.create_entity(f, ifc_class="IfcBuildingStorey", name="Level 1")
        api.aggregate.assign_object(f, products=[site], relating_object=project)
        api.aggregate.assign_object(f, products=[building], relating_object=site)
        api.aggregate.assign_object(f, products=[self.ground, self.level1], relating_object=building)
        # a placement chain: site -> building -> storey (Level 1 at 3.5 m) -> element
        api.geometry.edit_object_placement(f, product=site, matrix=matrix(SITE))
        api.geometry.edit_object_placement(f, product=building, matrix=matrix(SITE))
        api.geometry.edit_object_placement(f, product=self.ground, matrix=matrix(SITE))
        api.geometry.edit_object_placement(f, product=self.level1, matrix=matrix(SITE + [0, 0, 3.5]))

    def point2(self, x, y):
        return self.f.createIfcAxis2Placement2D(self.f.createIfcCartesianPoint((float(x), float(y))))

    def rect(self, xdim, ydim):
        return self.f.create_entity("IfcRectangleProfileDef", ProfileType="AREA", Position=self.point2(0, 0),
                                    XDim=xdim * self.k, YDim=ydim * self.k)

    def tee(self, depth, flange, web, flange_t):
        return self.f.create_entity("IfcTShapeProfileDef", ProfileType="AREA", Position=self.point2(0, 0),
                                    Depth=depth * self.k, FlangeWidth=flange * self.k, WebThickness=web * self.k,
                                    FlangeThickness=flange_t * self.k)

    def outline(self, points):
        pts = [self.f.createIfcCartesianPoint((x * self.k, y * self.k)) for x, y in points + points[:1]]
        return self.f.create_entity("IfcArbitraryClosedProfileDef", ProfileType="AREA",
                                    OuterCurve=self.f.createIfcPolyline(pts))

    def ishape(self, depth, width, web, flange_t):
        return self.f.create_entity("IfcIShapeProfileDef", ProfileType="AREA", Position=self.point2(0, 0),
                                    OverallWidth=width * self.k, OverallDepth=depth * self.k,
                                    WebThickness=web * self.k, FlangeThickness=flange_t * self.k)

    def element(self, cls, name, container, world, profile=None, depth=None, zx=(None, None), axis=None,
                predefined_type=None):
        """An element placed by ``world`` (SI matrix), extruding ``profile`` by ``depth`` metres."""
        e = api.root.create_entity(self.f, ifc_class=cls, name=name, predefined_type=predefined_type)
        e.Tag = f"T-{name}"
        api.spatial.assign_container(self.f, products=[e], relating_structure=container)
        api.geometry.edit_object_placement(self.f, product=e, matrix=world)
        if profile is not None:
            rep = api.geometry.add_profile_representation(self.f, context=self.body, profile=profile, depth=depth,
                                                          placement_zx_axes=zx)
            api.geometry.assign_representation(self.f, product=e, representation=rep)
        if axis is not None:
            rep = api.geometry.add_axis_representation(self.f, context=self.axis, axis=axis)
            api.geometry.assign_representation(self.f, product=e, representation=rep)
        return e

    def column(self, name, x, y, size=0.4, height=3.5, cls="IfcColumn"):
        return self.element(cls, name, self.ground, matrix(SITE + [x, y, 0.0]), self.rect(size, size), height,
                            axis=[(0.0, 0.0, 0.0), (0.0, 0.0, height)])

    def beam(self, name, p0, p1, profile, style="x", cls="IfcBeam", predefined_type=None):
        """A beam with axis p0 -> p1 (site coordinates, m).

        style 'x': local x along the beam, profile extruded along local x, with an Axis line;
        'z': local z along the beam, body only (nodes from the extrusion);
        'rotated': as 'x' but the profile's x is turned vertical (give the profile as (h, b)).
        """
        p0, p1 = np.asarray(p0, float), np.asarray(p1, float)
        d = (p1 - p0) / np.linalg.norm(p1 - p0)
        length = float(np.linalg.norm(p1 - p0))
        horiz = np.cross(UP, d)
        if style == "z":
            world, zx, axis = matrix(SITE + p0, z=d, x=horiz), (None, None), None
        else:
            zx = ((1.0, 0.0, 0.0), (0.0, 0.0, 1.0) if style == "rotated" else (0.0, 1.0, 0.0))
            world, axis = matrix(SITE + p0, z=UP, x=d), [(0.0, 0.0, 0.0), (length, 0.0, 0.0)]
        return self.element(cls, name, self.level1, world, profile, length, zx, axis, predefined_type)

    def wall(self, name, x, y0, y1, thickness, height=3.5, cls="IfcWall"):
        world = matrix(SITE + [x, y0, 0.0], x=(0.0, 1.0, 0.0))
        profile = self.f.create_entity("IfcRectangleProfileDef", ProfileType="AREA",
                                       Position=self.point2((y1 - y0) / 2 * self.k, 0.0),
                                       XDim=(y1 - y0) * self.k, YDim=thickness * self.k)
        return self.element(cls, name, self.ground, world, profile, height)

    def material(self, name, elements):
        m = api.material.add_material(self.f, name=name)
        api.material.assign_material(self.f, products=elements, type="IfcMaterial", material=m)
        return m

    def pset(self, product, name, properties):
        api.pset.edit_pset(self.f, pset=api.pset.add_pset(self.f, product=product, name=name), properties=properties)

    def write(self, path):
        self.f.write(str(path))
        return path


def frame(schema: str, unit: str, pressure_prefix: str | None = None) -> Model:
    """4 columns 400x400 on a 6 m x 8 m bay, 3.5 m high; girders on the 8 m sides, beams on the 6 m
    sides, a secondary beam between the girders at mid-length, a 2 m cantilever beyond column C3,
    and a beam from C1 onto a 250 mm wall. Beam tops are flush with the column tops."""
    m = Model(schema, unit, pressure_prefix)
    for n, x, y in (("C1", 0, 0), ("C2", 6, 0), ("C3", 6, 8), ("C4", 0, 8)):
        m.column(n, x, y, cls="IfcColumnStandardCase" if n == "C4" and schema == "IFC4" else "IfcColumn")
    top = 3.5

    def at(x, y, h):
        return (x, y, top - h / 2)

    m.g1 = m.beam("G1", at(0, 0, 0.6), at(0, 8, 0.6), m.rect(0.3, 0.6))
    m.g2 = m.beam("G2", at(6, 0, 0.6), at(6, 8, 0.6), m.rect(0.3, 0.6), style="z")
    m.b1 = m.beam("B1", at(0, 0, 0.5), at(6, 0, 0.5), m.rect(0.5, 0.3), style="rotated")
    m.b2 = m.beam("B2", at(6, 8, 0.5), at(0, 8, 0.5), m.rect(0.3, 0.5))
    if schema == "IFC4":
        m.s1 = m.beam("S1", at(0, 4, 0.45), at(6, 4, 0.45), m.rect(0.25, 0.45), cls="IfcMember",
                      predefined_type="BEAM")
        m.k1 = m.beam("K1", at(6, 8, 0.5), at(6, 10, 0.5), m.rect(0.3, 0.5), cls="IfcBeamStandardCase")
    else:
        m.s1 = m.beam("S1", at(0, 4, 0.45), at(6, 4, 0.45), m.rect(0.25, 0.45))
        m.k1 = m.beam("K1", at(6, 8, 0.5), at(6, 10, 0.5), m.rect(0.3, 0.5))
    m.wall("W1", -5.0, -2.0, 2.0, 0.25, cls="IfcWallStandardCase")
    m.e1 = m.beam("E1", at(0, 0, 0.5), at(-5, 0, 0.5), m.rect(0.3, 0.5))
    m.beam("X1", (1, 1, 1), (2, 2, 2), m.rect(0.1, 0.1), cls="IfcMember",
                     predefined_type="BRACE" if schema == "IFC4" else None)
    return m


# Expected members of the frame: (length m, b, h, support_i, face_i, support_j, face_j), authored above.
# Faces: a 400 mm column with the beam axis through its centre -> 200 mm; the secondary beam
# on the girders' axes -> half the 300 mm girder web = 150 mm; the wall 250 mm thick -> 125 mm.
FRAME = {
    "G1": (8.0, 300, 600, "column", 200, "column", 200),
    "G2": (8.0, 300, 600, "column", 200, "column", 200),
    "B1": (6.0, 300, 500, "column", 200, "column", 200),
    "B2": (6.0, 300, 500, "column", 200, "column", 200),
    "S1": (6.0, 250, 450, "girder", 150, "girder", 150),
    "K1": (2.0, 300, 500, "column", 200, "free", 0),
    "E1": (5.0, 300, 500, "column", 200, "wall", 125),
}


def rows_by(table: pa.Table, column: str = "member") -> dict[str, dict]:
    return {r[column]: r for r in table.to_pylist()}


@pytest.fixture(scope="module")
def frames(tmp_path_factory):
    """The frame in IFC2X3 with millimetres (pressure in MPa) and in IFC4 with metres (pressure in Pa)."""
    out = {}
    for schema, unit, prefix in (("IFC2X3", "mm", "MEGA"), ("IFC4", "m", None)):
        m = frame(schema, unit, prefix)
        concrete = m.material("Concrete", [m.g1, m.g2])
        if schema == "IFC4":
            m.pset(concrete, "Pset_MaterialConcrete", {"CompressiveStrength": 40e6})  # Pa: the file has no pressure unit
            m.pset(m.g1, "ShearpostDesign", {"EffectiveDepth": 0.54})  # metres, the file's length unit
        else:
            m.f.create_entity("IfcMechanicalConcreteMaterialProperties", Material=concrete, CompressiveStrength=30.0)
            m.pset(m.g1, "ShearpostDesign", {"Cover": 55.0})  # millimetres, the file's length unit
        m.material("C30/37", [m.b1, m.b2, m.s1, m.e1])
        m.material("Concrete, site mixed", [m.k1])
        m.pset(m.e1, "Pset_ConcreteElementGeneral", {"StrengthClass": "C40/50"})
        path = m.write(tmp_path_factory.mktemp(schema) / "frame.ifc")
        out[schema] = (path, *read_ifc_members(path, key="name"))
    return out


@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4"])
def test_frame_geometry_and_supports(frames, schema):
    _, table, _ = frames[schema]
    rows = rows_by(table)
    assert set(rows) == set(FRAME) | {"C1", "C2", "C3", "C4"}  # the brace (IfcMember BRACE) and the wall are not members
    for name, (length, b, h, si, fi, sj, fj) in FRAME.items():
        r = rows[name]
        assert r["kind"] == "beam" and r["invalid_reason"] is None, (name, r["invalid_reason"])
        assert r["length_m"] == pytest.approx(length, abs=1e-9)
        assert (r["b_mm"], r["h_mm"]) == (pytest.approx(b), pytest.approx(h))
        assert (r["support_i"], r["support_j"]) == (si, sj), name
        assert r["face_i_mm"] == pytest.approx(fi, abs=1e-6) and r["face_j_mm"] == pytest.approx(fj, abs=1e-6), name
        assert r["bf_mm"] is None and r["hf_mm"] is None
        assert r["level"] == "Level 1"
    for name in ("C1", "C2", "C3", "C4"):
        r = rows[name]
        assert r["kind"] == "column" and r["length_m"] == pytest.approx(3.5)
        assert (r["b_mm"], r["h_mm"]) == (pytest.approx(400), pytest.approx(400))
    # world coordinates through the site -> building -> storey chain; beam axes at mid-depth, 3.5 - 0.3
    g1 = rows["G1"]
    assert (g1["x_i_m"], g1["y_i_m"], g1["z_i_m"]) == pytest.approx((100.0, 50.0, 3.2))
    assert (g1["x_j_m"], g1["y_j_m"], g1["z_j_m"]) == pytest.approx((100.0, 58.0, 3.2))
    g2 = rows["G2"]  # nodes from the extruded body (no Axis representation)
    assert (g2["x_i_m"], g2["y_i_m"], g2["z_i_m"], g2["y_j_m"]) == pytest.approx((106.0, 50.0, 3.2, 58.0))
    assert rows["C3"]["z_i_m"] == pytest.approx(0.0) and rows["C3"]["z_j_m"] == pytest.approx(3.5)


@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4"])
def test_frame_table_has_the_read_members_schema(frames, schema, tmp_path):
    _, table, _ = frames[schema]
    csv = tmp_path / "m.csv"
    csv.write_text("member,length_m,b_mm,h_mm,cover_mm,fc_mpa,fyt_mpa,support_i,support_j\n"
                   "B1,6,300,500,60,35,420,column,free\n")
    reference, _ = read_members(csv, ColumnMap())
    n = reference.num_columns
    assert table.schema.names[:n] == reference.schema.names
    assert [f.type for f in table.schema][:n] == [f.type for f in reference.schema]
    assert table.schema.names[n:] == list(EXTRA_COLUMNS)
    r = rows_by(table)["B1"]
    assert len(r["source_id"]) == 22  # an IFC GlobalId: 22 characters (ISO 16739, IfcGloballyUniqueId)
    assert (r["d_mm"], r["cover_mm"], r["fyt_mpa"], r["fy_mpa"], r["lambda"], r["load_face"]) == (440, 60, 420, 420, 1.0, "top")


def test_material_strength_and_depth_sources(frames):
    # IFC4: 40e6 Pa in Pset_MaterialConcrete (no pressure unit: SI); IFC2X3: 30 in the file's MPa unit
    for schema, fc_girder, d_g1 in (("IFC4", 40.0, 540.0), ("IFC2X3", 30.0, 545.0)):
        _, table, warnings = frames[schema]
        rows = rows_by(table)
        assert rows["G1"]["fc_mpa"] == pytest.approx(fc_girder) and rows["G2"]["fc_mpa"] == pytest.approx(fc_girder)
        assert rows["G1"]["d_mm"] == pytest.approx(d_g1)  # ShearpostDesign EffectiveDepth 0.54 m / Cover 55 mm
        assert rows["B1"]["fc_mpa"] == 30.0  # material name C30/37
        assert rows["E1"]["fc_mpa"] == 40.0  # Pset_ConcreteElementGeneral.StrengthClass C40/50 wins over the material
        assert rows["K1"]["fc_mpa"] == 35.0  # nothing in the model: the default
        fc_warnings = [w for w in warnings if "f'c" in w]
        assert fc_warnings == ["member K1: f'c not in the model; 35 MPa taken from the settings"]
        assert "member B1: cover not in the model; 60 mm taken from the settings" in warnings
        assert not any(w.startswith("member G1") for w in warnings)


def test_defaults_are_said_in_the_runs_units():
    """An inch-pound run reads an IFC model in SI, with the settings' defaults converted to SI;
    the warning gives them as the settings do: 5,000 psi, not 34.47 MPa (1 psi = 6894.757 Pa)."""
    from postproc.adapters.ifc import IfcDefaults

    us = IfcDefaults(fc_mpa=5000 * 6894.757e-6, cover_mm=2.5 * 25.4, units="us")
    assert (us.shown("fc_mpa"), us.shown("cover_mm")) == ("5,000 psi", "2.5 in")
    assert (IfcDefaults().shown("fc_mpa"), IfcDefaults().shown("cover_mm")) == ("35 MPa", "60 mm")


def test_keys_choose_the_member_id(frames):
    path = frames["IFC4"][0]
    by_tag, _ = read_ifc_members(path, key="tag")
    assert "T-G1" in by_tag.column("member").to_pylist()
    by_id, _ = read_ifc_members(path)
    ids = by_id.column("member").to_pylist()
    assert ids == by_id.column("source_id").to_pylist() and len(ids) == 11


def test_duplicate_names_are_an_input_error(tmp_path):
    m = Model("IFC4", "m")
    m.beam("B", (0, 0, 0), (5, 0, 0), m.rect(0.3, 0.5))
    m.beam("B", (0, 2, 0), (5, 2, 0), m.rect(0.3, 0.5))
    path = m.write(tmp_path / "dup.ifc")
    with pytest.raises(InputError, match="Name is not unique"):
        read_ifc_members(path, key="name")
    assert read_ifc_members(path)[0].num_rows == 2


@pytest.mark.parametrize("schema,unit", [("IFC2X3", "mm"), ("IFC4", "m")])
def test_flanged_profiles(schema, unit, tmp_path):
    m = Model(schema, unit)
    # T: 600 deep, flange 1200 x 150, web 300 (authored)
    m.beam("T", (0, 0, 0), (6, 0, 0), m.tee(0.6, 1.2, 0.3, 0.15))
    # the same T as a polyline outline, drawn off-centre (outline origin at the web's bottom-left corner)
    t_outline = [(0, 0), (0.3, 0), (0.3, 0.45), (0.75, 0.45), (0.75, 0.6), (-0.45, 0.6), (-0.45, 0.45), (0, 0.45)]
    m.beam("A", (0, 3, 0), (6, 3, 0), m.outline(t_outline), style="z")
    # L 600 deep, 800 wide, 200 thick, turned 180 degrees in its plane so the leg is on top
    ell = m.f.create_entity("IfcLShapeProfileDef", ProfileType="AREA", Depth=0.6 * m.k, Width=0.8 * m.k,
                            Thickness=0.2 * m.k, Position=m.f.createIfcAxis2Placement2D(
                                m.f.createIfcCartesianPoint((0.0, 0.0)), m.f.createIfcDirection((-1.0, 0.0))))
    m.beam("L", (0, 6, 0), (6, 6, 0), ell)
    if schema == "IFC4":  # the T once more, as an indexed poly curve (IFC4 only)
        coords = m.f.createIfcCartesianPointList2D([(x * m.k, y * m.k) for x, y in t_outline])
        segments = [m.f.createIfcLineIndex((k + 1, (k + 1) % len(t_outline) + 1)) for k in range(len(t_outline))]
        curve = m.f.createIfcIndexedPolyCurve(coords, segments, False)
        m.beam("P", (0, 9, 0), (6, 9, 0), m.f.create_entity("IfcArbitraryClosedProfileDef", ProfileType="AREA",
                                                            OuterCurve=curve))
    for y in (0, 3, 6, 9):  # a column under each beam's end i: a beam needs a support (else it is invalid)
        m.column(f"C{y}", 0, y)
    rows = rows_by(read_ifc_members(m.write(tmp_path / "t.ifc"), key="name")[0])
    expected = [("T", 300, 1200, 150), ("A", 300, 1200, 150), ("L", 200, 800, 200)]
    for name, b, bf, hf in expected + ([("P", 300, 1200, 150)] if schema == "IFC4" else []):
        r = rows[name]
        assert r["invalid_reason"] is None
        assert (r["b_mm"], r["h_mm"], r["bf_mm"], r["hf_mm"]) == pytest.approx((b, 600, bf, hf)), name
    # no Axis line: the node lies on the outline's centroid, not on its origin (web 0.3 x 0.45 centred at
    # (0.15, 0.225), flange 1.2 x 0.15 centred at (0.15, 0.525); profile x is world +Y, profile y is up)
    z_c = (0.3 * 0.45 * 0.225 + 1.2 * 0.15 * 0.525) / (0.3 * 0.45 + 1.2 * 0.15)
    assert (rows["A"]["y_i_m"], rows["A"]["z_i_m"]) == pytest.approx((53.15, z_c), abs=1e-6)  # to a micrometre


def test_clipped_body_and_mapped_column(tmp_path):
    m = Model("IFC4", "m")
    f = m.f
    # a column whose body is a mapped item: the map's target moves it 1 m along x, to (1, 0)
    col = api.root.create_entity(f, ifc_class="IfcColumn", name="MC")
    api.spatial.assign_container(f, products=[col], relating_structure=m.ground)
    api.geometry.edit_object_placement(f, product=col, matrix=matrix(SITE))
    shape = api.geometry.add_profile_representation(f, context=m.body, profile=m.rect(0.4, 0.4), depth=3.5)
    origin = f.createIfcAxis2Placement3D(f.createIfcCartesianPoint((0.0, 0.0, 0.0)))
    target = f.createIfcCartesianTransformationOperator3D(LocalOrigin=f.createIfcCartesianPoint((1.0, 0.0, 0.0)))
    item = f.createIfcMappedItem(f.createIfcRepresentationMap(origin, shape), target)
    api.geometry.assign_representation(f, product=col, representation=f.createIfcShapeRepresentation(
        m.body, "Body", "MappedRepresentation", [item]))
    # a beam from the mapped column's centre, its body clipped at the far end by a half space
    beam = m.beam("CL", (1, 0, 3.25), (6, 0, 3.25), m.rect(0.3, 0.5), style="z")
    body = beam.Representation.Representations[0]
    plane = f.createIfcPlane(f.createIfcAxis2Placement3D(f.createIfcCartesianPoint((0.0, 0.0, 4.5))))
    body.Items = [f.createIfcBooleanClippingResult("DIFFERENCE", body.Items[0],
                                                   f.createIfcHalfSpaceSolid(plane, False))]
    rows = rows_by(read_ifc_members(m.write(tmp_path / "mapped.ifc"), key="name")[0])
    cl = rows["CL"]
    # the beam's nodes come from its (unclipped) extrusion: 5 m; the column's face 200 mm from its centre
    assert cl["invalid_reason"] is None and cl["length_m"] == pytest.approx(5.0)
    assert (cl["support_i"], cl["face_i_mm"], cl["support_j"]) == ("column", pytest.approx(200), "free")
    assert rows["MC"]["x_i_m"] == pytest.approx(101.0)


def test_measure_of_sections():
    # a 300 x 600 rectangle, authored
    assert measure(box(0, 0, 300, 600)) == pytest.approx((300, 600, None, None))
    # an inverted T (flange at the bottom): 1000 x 200 flange, 250 web, 700 overall, authored
    inv = Polygon([(0, 0), (1000, 0), (1000, 200), (625, 200), (625, 700), (375, 700), (375, 200), (0, 200)])
    assert measure(inv) == pytest.approx((250, 700, 1000, 200))
    # a web tapering from 300 at the top to 200 at the bottom: narrowest width over the depth
    taper = Polygon([(50, 0), (250, 0), (300, 500), (0, 500)])
    assert measure(taper)[0] == pytest.approx(200)


@pytest.mark.parametrize("text,fc", [
    ("C35/45", 35.0),  # EN 206 class: characteristic cylinder / cube strength in MPa (EN 206, from memory)
    ("Concrete C30/37 XC1", 30.0),
    ("Concrete 40 MPa", 40.0),
    ("f'c 28N/mm2", 28.0),
    ("4000 psi concrete", 4000 * 6.894757293168e-3),  # 1 psi = 6.894757 kPa (NIST SP 811, Appendix B.8)
    ("LC30/33", None),  # lightweight: not matched, lambda unknown
    ("Concrete", None),
])
def test_fc_from_text(text, fc):
    assert fc_from_text(text) == (pytest.approx(fc) if fc is not None else None)


@pytest.mark.parametrize("schema,unit", [("IFC2X3", "mm"), ("IFC4", "m")])
def test_steel_and_missing_geometry_become_invalid(schema, unit, tmp_path):
    m = Model(schema, unit)
    steel = m.beam("SG", (0, 0, 0.0), (0, 6, 0.0), m.ishape(0.3, 0.15, 0.01, 0.015))
    m.beam("CB", (0, 3, 0.0), (5, 3, 0.0), m.rect(0.25, 0.3))
    plate = m.beam("SP", (0, 8, 0.0), (5, 8, 0.0), m.rect(0.2, 0.3))
    m.material("Steel S355", [steel, plate])
    bare = api.root.create_entity(m.f, ifc_class="IfcBeam", name="NR")
    api.spatial.assign_container(m.f, products=[bare], relating_structure=m.level1)
    table, _ = read_ifc_members(m.write(tmp_path / "s.ifc"), key="name")
    rows = rows_by(table)
    assert rows["SG"]["invalid_reason"] == "steel I-shape profile: not a reinforced-concrete section"
    assert rows["SP"]["invalid_reason"] == "material 'Steel S355' is steel: not a reinforced-concrete section"
    assert rows["NR"]["invalid_reason"].startswith("no geometry")
    cb = rows["CB"]  # frames into the steel girder's 10 mm web: face at half of it
    assert cb["invalid_reason"] is None and cb["support_i"] == "girder" and cb["face_i_mm"] == pytest.approx(5.0)
    assert cb["support_j"] == "free"


def test_values_read_members_would_refuse_make_the_member_invalid(tmp_path):
    m = Model("IFC4", "m")
    m.beam("OK", (0, 0, 0), (5, 0, 0), m.rect(0.3, 0.5))
    m.beam("SHALLOW", (0, 2, 0), (5, 2, 0), m.rect(0.3, 0.05))  # cover 60 mm > h 50 mm
    m.column("C0", 0, 0), m.column("C2", 0, 2)
    rows = rows_by(read_ifc_members(m.write(tmp_path / "c.ifc"), key="name")[0])
    assert rows["OK"]["invalid_reason"] is None
    assert rows["SHALLOW"]["invalid_reason"].startswith("effective depth")


def test_tolerance_decides_what_frames_in(tmp_path):
    m = Model("IFC4", "m")
    m.column("C", 0, 0)
    m.beam("NEAR", (0.23, 0, 3.25), (5, 0, 3.25), m.rect(0.3, 0.5))  # node 30 mm off the column face
    m.beam("FAR", (0, 0.3, 3.25), (0, 5, 3.25), m.rect(0.3, 0.5))  # node 100 mm off the face
    m.beam("HIGH", (0, 0, 5.0), (-5, 0, 5.0), m.rect(0.3, 0.5))  # 1.25 m above the column top
    path = m.write(tmp_path / "tol.ifc")
    rows = rows_by(read_ifc_members(path, key="name")[0])
    assert (rows["NEAR"]["support_i"], rows["NEAR"]["face_i_mm"]) == ("column", 0.0)
    assert rows["FAR"]["support_i"] == "free" and rows["HIGH"]["support_i"] == "free"
    # issue 9: FAR and HIGH rest on nothing at either end; they were designed free-free, which
    # members.csv refuses
    for name in ("FAR", "HIGH"):
        assert rows[name]["invalid_reason"].startswith("no support found at either end within 50 mm")
    assert rows["NEAR"]["invalid_reason"] is None
    wide = rows_by(read_ifc_members(path, key="name", defaults=IfcDefaults(tolerance_mm=150))[0])
    assert wide["FAR"]["support_i"] == "column" and wide["FAR"]["invalid_reason"] is None


def structural(schema: str, tmp_path):
    """Analysis view: two 400x400 columns 6 m apart, a 300x600 beam on their tops, and a beam from C2's
    top to a restrained node 5 m away (given by its point connections, not by an edge)."""
    m = Model(schema, "mm")
    f = m.f

    def node(xyz, restrained=False):
        c = api.root.create_entity(f, ifc_class="IfcStructuralPointConnection")
        api.geometry.edit_object_placement(f, product=c, matrix=matrix(SITE))
        vertex = f.createIfcVertexPoint(f.createIfcCartesianPoint(tuple(float(v) * m.k for v in xyz)))
        api.geometry.assign_representation(f, product=c, representation=api.geometry.add_topology_representation(
            f, context=m.reference, item=vertex))
        if restrained:
            c.AppliedCondition = f.create_entity("IfcBoundaryNodeCondition", Name="pinned")
        return c, vertex

    def member(name, a, b, profile, axis=(0.0, 0.0, 1.0), edge=True):
        e = api.root.create_entity(f, ifc_class="IfcStructuralCurveMember", name=name,
                                   predefined_type="RIGID_JOINED_MEMBER")
        if schema == "IFC4":
            e.Axis = f.createIfcDirection(axis)
        api.geometry.edit_object_placement(f, product=e, matrix=matrix(SITE))
        (ca, va), (cb, vb) = node(a), node(b, restrained=not edge)
        if edge:
            rep = api.geometry.add_topology_representation(f, context=m.reference, item=f.createIfcEdge(va, vb))
            api.geometry.assign_representation(f, product=e, representation=rep)
        for c in (ca, cb):
            api.structural.add_structural_member_connection(f, relating_structural_member=e,
                                                            related_structural_connection=c)
        if schema == "IFC4":
            pset = api.material.add_material_set(f, name=name, set_type="IfcMaterialProfileSet")
            api.material.add_profile(f, profile_set=pset, material=api.material.add_material(f, name="C30/37"),
                                     profile=profile)
            api.material.assign_material(f, products=[e], type="IfcMaterialProfileSet", material=pset)
        else:  # IFC2X3 has no material profile sets: the profile travels in profile properties
            props = f.create_entity("IfcGeneralProfileProperties", ProfileName=name, ProfileDefinition=profile)
            f.create_entity("IfcRelAssociatesProfileProperties", GlobalId=ifcopenshell.guid.new(),
                            OwnerHistory=e.OwnerHistory, RelatedObjects=[e], RelatingProfileProperties=props)
            m.material("C30/37", [e])
        return e

    member("SC1", (0, 0, 0), (0, 0, 3.5), m.rect(0.4, 0.4), axis=(1.0, 0.0, 0.0))
    member("SC2", (6, 0, 0), (6, 0, 3.5), m.rect(0.4, 0.4), axis=(1.0, 0.0, 0.0))
    member("SB1", (0, 0, 3.5), (6, 0, 3.5), m.rect(0.3, 0.6))
    member("SB2", (6, 0, 3.5), (6, 5, 3.5), m.rect(0.3, 0.5), edge=False)
    m.column("PHYS", 20, 20)  # a physical element too: the analysis view is read instead
    m.beam("PB", (20, 20, 3.25), (25, 20, 3.25), m.rect(0.3, 0.5))
    return m.write(tmp_path / f"structural_{schema}.ifc")


@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4"])
def test_structural_analysis_view(schema, tmp_path):
    table, warnings = read_ifc_members(structural(schema, tmp_path), key="name")
    rows = rows_by(table)
    assert set(rows) == {"SC1", "SC2", "SB1", "SB2"}
    assert any("structural analysis view" in w for w in warnings)
    assert rows["SC1"]["kind"] == "column" and rows["SC2"]["kind"] == "column"
    b1 = rows["SB1"]
    assert b1["kind"] == "beam" and b1["invalid_reason"] is None
    assert (b1["length_m"], b1["b_mm"], b1["h_mm"]) == pytest.approx((6.0, 300, 600))
    assert (b1["support_i"], b1["face_i_mm"], b1["support_j"], b1["face_j_mm"]) == ("column", pytest.approx(200), "column", pytest.approx(200))
    assert (b1["x_i_m"], b1["z_j_m"]) == pytest.approx((100.0, 3.5))
    b2 = rows["SB2"]  # ends from its point connections; j at a restrained node: a bearing, face 0
    assert (b2["length_m"], b2["b_mm"], b2["h_mm"]) == pytest.approx((5.0, 300, 500))
    assert (b2["support_i"], b2["face_i_mm"], b2["support_j"], b2["face_j_mm"]) == ("column", pytest.approx(200), "column", 0)


def test_not_ifc_and_truncated_files_are_input_errors(tmp_path, frames):
    text = tmp_path / "notes.ifc"
    text.write_text("member,length_m\nB1,6\n")
    with pytest.raises(InputError, match="notes.ifc: not an IFC file"):
        read_ifc_members(text)
    whole = frames["IFC4"][0].read_bytes()
    cut = tmp_path / "cut.ifc"
    cut.write_bytes(whole[: len(whole) // 2])
    with pytest.raises(InputError, match="cut.ifc: the IFC file is truncated"):
        read_ifc_members(cut)
    bad_header = tmp_path / "header.ifc"
    bad_header.write_text("ISO-10303-21;\nHEADER;\nthis is not a header\nEND-ISO-10303-21;\n")
    with pytest.raises(InputError, match="header.ifc.*could not be read as IFC"):
        read_ifc_members(bad_header)
    with pytest.raises(InputError, match="file not found"):
        read_ifc_members(tmp_path / "missing.ifc")


def test_a_model_without_beams_is_an_input_error(tmp_path):
    m = Model("IFC4", "m")
    m.column("C", 0, 0)
    with pytest.raises(InputError, match="no beams"):
        read_ifc_members(m.write(tmp_path / "cols.ifc"))
