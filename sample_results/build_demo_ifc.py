"""Write the demo building's geometry as an IFC4 model: demo_building.ifc next to this script.

The frame is build_demo's (its nodes and members.csv rows; no analysis is run). Plan X is
the PyNite model's X, plan Y its Z, and IFC Z (up) its Y. Units: millimetres, MPa.

Every member is an IfcColumn or IfcBeam named by its member id, contained in the storey of
its members.csv level (a column in the storey at its base). A column is its b x h profile
extruded up from node i to node j. A beam's local x runs from node i to node j and its
'Axis' is that line; its body (rectangle, or T where the row has a flange) hangs below the
axis, so that the beam's top is at the floor level of the nodes. Concrete materials carry
f'c in Pset_MaterialConcrete.CompressiveStrength (35 MPa beams, 40 MPa columns); a shared
ShearpostDesign property set carries the cover (60 mm, 90 mm for the transfer girder). A
beam of a special moment frame has a ShearpostDesign set of its own, with the cover, its
frame and its bars (Frame, AsTopI, AsBotI, AsTopJ, AsBotJ, DbLong) as build_demo.py chose
them and wrote them to members.csv (run build_demo.py first); so has every column, with the
cover, its frame and its bars (Frame, DbLong, NLong: column_rows()).

The output is deterministic: GlobalIds are derived from fixed names (a member's from its
id) and the header carries a fixed time stamp.
Run: python sample_results/build_demo_ifc.py
"""

from __future__ import annotations

import csv
import uuid
from pathlib import Path

import ifcopenshell
import ifcopenshell.api.context
import ifcopenshell.api.unit
import ifcopenshell.guid

from build_demo import FC_MPA, FLOORS, Building, build_frame

OUT = Path(__file__).resolve().parent / "demo_building.ifc"
MEMBERS_CSV = Path(__file__).resolve().parent / "members.csv"
FRAME_PROPERTIES = {"AsTopI": "as_top_i_mm2", "AsBotI": "as_bot_i_mm2", "AsTopJ": "as_top_j_mm2",
                    "AsBotJ": "as_bot_j_mm2"}


def frame_rows() -> dict[str, dict]:
    """The frame beams of members.csv (build_demo.py's flexural design): member -> its row."""
    if not MEMBERS_CSV.exists():
        return {}
    with open(MEMBERS_CSV, newline="", encoding="utf-8") as fh:
        return {r["member"]: r for r in csv.DictReader(fh) if r.get("frame") not in (None, "", "none")
                and r.get("kind") != "column"}


def column_rows() -> dict[str, dict]:
    """The columns of members.csv with their bars (build_demo.py's P-M check): member -> its row."""
    if not MEMBERS_CSV.exists():
        return {}
    with open(MEMBERS_CSV, newline="", encoding="utf-8") as fh:
        return {r["member"]: r for r in csv.DictReader(fh) if r.get("kind") == "column" and r.get("db_long_mm")}
NAMESPACE = uuid.uuid5(uuid.NAMESPACE_URL, "shearpost:sample_results/demo_building.ifc")
TIME_STAMP = "2026-01-01T00:00:00"


def guid(key: str) -> str:
    """A GlobalId that depends only on ``key``."""
    return ifcopenshell.guid.compress(uuid.uuid5(NAMESPACE, key).hex)


def mm(value_m: float) -> float:
    return round(value_m * 1e3, 3)


class Writer:
    """The IFC file being written, with the entities that members share."""

    def __init__(self):
        f = self.f = ifcopenshell.file(schema="IFC4")
        self.project = f.create_entity("IfcProject", GlobalId=guid("project"), Name="shearpost demo building")
        ifcopenshell.api.unit.assign_unit(f, units=[
            ifcopenshell.api.unit.add_si_unit(f, unit_type="LENGTHUNIT", prefix="MILLI"),
            ifcopenshell.api.unit.add_si_unit(f, unit_type="PRESSUREUNIT", prefix="MEGA")])
        model = ifcopenshell.api.context.add_context(f, context_type="Model")
        self.body = ifcopenshell.api.context.add_context(f, context_type="Model", context_identifier="Body",
                                                         target_view="MODEL_VIEW", parent=model)
        self.axis = ifcopenshell.api.context.add_context(f, context_type="Model", context_identifier="Axis",
                                                         target_view="GRAPH_VIEW", parent=model)
        self.origin = f.createIfcCartesianPoint((0.0, 0.0, 0.0))
        self.up = f.createIfcDirection((0.0, 0.0, 1.0))
        self.along_x = f.createIfcDirection((1.0, 0.0, 0.0))
        self.along_y = f.createIfcDirection((0.0, 1.0, 0.0))
        self.profiles: dict[tuple, ifcopenshell.entity_instance] = {}
        self.rel_count = 0

    def placement(self, relative_to, location, x_dir=None):
        """A local placement at ``location`` (mm), local x along ``x_dir`` (default: as relative_to)."""
        ref = None if x_dir is None else self.f.createIfcDirection(x_dir)
        axes = self.f.createIfcAxis2Placement3D(self.f.createIfcCartesianPoint(location),
                                                self.up if ref is not None else None, ref)
        return self.f.createIfcLocalPlacement(relative_to, axes)

    def profile(self, row: dict, hanging: bool):
        """The row's section (rectangle or T), centred across; top at profile y = 0 if ``hanging``."""
        b, h, bf, hf = row["b_mm"], row["h_mm"], row["bf_mm"], row["hf_mm"]
        key = (b, h, bf, hf, hanging)
        if key not in self.profiles:
            centre = self.f.createIfcCartesianPoint((0.0, -h / 2 if hanging else 0.0))
            position = self.f.createIfcAxis2Placement2D(centre)
            if bf is None:
                self.profiles[key] = self.f.createIfcRectangleProfileDef(
                    "AREA", f"{b:g}x{h:g}", position, b, h)
            else:
                self.profiles[key] = self.f.create_entity(
                    "IfcTShapeProfileDef", ProfileType="AREA", ProfileName=f"T {b:g}x{h:g}/{bf:g}x{hf:g}",
                    Position=position, Depth=h, FlangeWidth=bf, WebThickness=b, FlangeThickness=hf)
        return self.profiles[key]

    def shape(self, solid, axis_length: float | None):
        """Product shape: the 'Body' solid, and an 'Axis' line of ``axis_length`` along local x."""
        reps = [self.f.createIfcShapeRepresentation(self.body, "Body", "SweptSolid", [solid])]
        if axis_length is not None:
            line = self.f.createIfcPolyline([self.origin, self.f.createIfcCartesianPoint((axis_length, 0.0, 0.0))])
            reps.insert(0, self.f.createIfcShapeRepresentation(self.axis, "Axis", "Curve3D", [line]))
        return self.f.createIfcProductDefinitionShape(None, None, reps)

    def rel(self, cls: str, **attributes):
        """A relationship with the next fixed GlobalId."""
        self.rel_count += 1
        return self.f.create_entity(cls, GlobalId=guid(f"rel-{self.rel_count}"), **attributes)

    def material(self, name: str, fc_mpa: float, members: list):
        material = self.f.createIfcMaterial(name, None, "Concrete")
        strength = self.f.createIfcPropertySingleValue("CompressiveStrength", None,
                                                       self.f.createIfcPressureMeasure(fc_mpa), None)
        self.f.createIfcMaterialProperties("Pset_MaterialConcrete", None, [strength], material)
        self.rel("IfcRelAssociatesMaterial", RelatedObjects=members, RelatingMaterial=material)

    def frame_pset(self, name: str, cover_mm: float, bars: dict, element) -> None:
        """A frame beam's own ShearpostDesign set: the cover, the frame and the bars at its faces
        (areas with their unit, mm^2; the bar diameter in the file's mm)."""
        mm2 = self.f.createIfcSIUnit(None, "AREAUNIT", "MILLI", "SQUARE_METRE")
        props = [self.f.createIfcPropertySingleValue("Cover", None, self.f.createIfcPositiveLengthMeasure(cover_mm), None),
                 self.f.createIfcPropertySingleValue("Frame", None, self.f.createIfcLabel(bars["frame"]), None),
                 self.f.createIfcPropertySingleValue("DbLong", None,
                                                     self.f.createIfcPositiveLengthMeasure(float(bars["db_long_mm"])), None)]
        props += [self.f.createIfcPropertySingleValue(prop, None, self.f.createIfcAreaMeasure(float(bars[column])), mm2)
                  for prop, column in FRAME_PROPERTIES.items()]
        pset = self.f.create_entity("IfcPropertySet", GlobalId=guid(f"ShearpostDesign-{name}"), Name="ShearpostDesign",
                                    HasProperties=props)
        self.rel("IfcRelDefinesByProperties", RelatedObjects=[element], RelatingPropertyDefinition=pset)

    def column_pset(self, name: str, cover_mm: float, row: dict, element) -> None:
        """A column's own ShearpostDesign set: the cover, its frame and its bars (diameter in the
        file's mm, a count)."""
        props = [self.f.createIfcPropertySingleValue("Cover", None, self.f.createIfcPositiveLengthMeasure(cover_mm), None),
                 self.f.createIfcPropertySingleValue("Frame", None, self.f.createIfcLabel(row.get("frame") or "none"),
                                                     None),
                 self.f.createIfcPropertySingleValue("DbLong", None,
                                                     self.f.createIfcPositiveLengthMeasure(float(row["db_long_mm"])), None),
                 self.f.createIfcPropertySingleValue("NLong", None, self.f.createIfcCountMeasure(int(float(row["n_long"]))),
                                                     None)]
        pset = self.f.create_entity("IfcPropertySet", GlobalId=guid(f"ShearpostDesign-{name}"), Name="ShearpostDesign",
                                    HasProperties=props)
        self.rel("IfcRelDefinesByProperties", RelatedObjects=[element], RelatingPropertyDefinition=pset)

    def design_pset(self, cover_mm: float, members: list):
        cover = self.f.createIfcPropertySingleValue("Cover", "face to centroid of the tension steel",
                                                    self.f.createIfcPositiveLengthMeasure(cover_mm), None)
        pset = self.f.create_entity("IfcPropertySet", GlobalId=guid(f"ShearpostDesign-{cover_mm:g}"),
                                    Name="ShearpostDesign", HasProperties=[cover])
        self.rel("IfcRelDefinesByProperties", RelatedObjects=members, RelatingPropertyDefinition=pset)


def write(bld: Building, path: Path = OUT) -> Path:
    """The frame of ``bld`` as an IFC4 file at ``path``."""
    w = Writer()
    f = w.f
    site = f.create_entity("IfcSite", GlobalId=guid("site"), Name="site", ObjectPlacement=w.placement(None, (0.0, 0.0, 0.0)))
    building = f.create_entity("IfcBuilding", GlobalId=guid("building"), Name="demo building",
                               ObjectPlacement=w.placement(site.ObjectPlacement, (0.0, 0.0, 0.0)))
    storeys = {level: f.create_entity("IfcBuildingStorey", GlobalId=guid(f"storey-{level}"), Name=level,
                                      ObjectPlacement=w.placement(building.ObjectPlacement, (0.0, 0.0, mm(z))),
                                      Elevation=mm(z))
               for level, z in FLOORS.items()}
    w.rel("IfcRelAggregates", RelatingObject=w.project, RelatedObjects=[site])
    w.rel("IfcRelAggregates", RelatingObject=site, RelatedObjects=[building])
    w.rel("IfcRelAggregates", RelatingObject=building, RelatedObjects=list(storeys.values()))

    contained = {level: [] for level in storeys}
    by_kind: dict[str, list] = {"beam": [], "column": []}
    by_cover: dict[float, list] = {}
    frames, columns = frame_rows(), column_rows()
    for name, row in bld.rows.items():
        member = bld.model.members[name]
        i, j = member.i_node, member.j_node
        level = row["level"]
        start = (mm(i.X), mm(i.Z), mm(i.Y - FLOORS[level]))  # in the storey: plan X, plan Y, height
        if row["kind"] == "column":
            solid = f.createIfcExtrudedAreaSolid(w.profile(row, hanging=False), None, w.up, mm(j.Y - i.Y))
            element = f.create_entity("IfcColumn", GlobalId=guid(f"member-{name}"), Name=name,
                                      ObjectPlacement=w.placement(storeys[level].ObjectPlacement, start),
                                      Representation=w.shape(solid, None), PredefinedType="COLUMN")
        else:
            length = mm(member.L())
            direction = ((j.X - i.X) * 1e3 / length, (j.Z - i.Z) * 1e3 / length, 0.0)
            # the profile across the beam (profile x along local y, profile y up), swept along local x
            position = f.createIfcAxis2Placement3D(w.origin, w.along_x, w.along_y)
            solid = f.createIfcExtrudedAreaSolid(w.profile(row, hanging=True), position, w.up, length)
            element = f.create_entity("IfcBeam", GlobalId=guid(f"member-{name}"), Name=name,
                                      ObjectPlacement=w.placement(storeys[level].ObjectPlacement, start, direction),
                                      Representation=w.shape(solid, length), PredefinedType="BEAM")
        contained[level].append(element)
        by_kind[row["kind"]].append(element)
        if name in frames:
            w.frame_pset(name, row["cover_mm"], frames[name], element)
        elif name in columns:
            w.column_pset(name, row["cover_mm"], columns[name], element)
        else:
            by_cover.setdefault(row["cover_mm"], []).append(element)

    for level, elements in contained.items():
        w.rel("IfcRelContainedInSpatialStructure", RelatedElements=elements, RelatingStructure=storeys[level])
    for kind, elements in by_kind.items():
        w.material(f"Concrete, {kind}s", FC_MPA[kind], elements)
    for cover, elements in sorted(by_cover.items()):
        w.design_pset(cover, elements)
    f.header.file_name.name = path.name
    f.header.file_name.time_stamp = TIME_STAMP
    f.write(str(path))
    return path


def main() -> None:
    bld = Building()
    build_frame(bld)
    path = write(bld)
    print(f"{path.name}: {len(bld.rows)} members, {path.stat().st_size:,} bytes")


if __name__ == "__main__":
    main()
