"""Members table from an IFC model (IFC2X3 or IFC4), read with ifcopenshell.

Elements
    IfcBeam, IfcMember of predefined type BEAM and IfcColumn become members (columns
    with kind ``column``); IfcWall is read only as a support. A file that carries
    IfcStructuralCurveMember (a structural analysis view) is read from those instead:
    a curve member within 10 degrees of vertical is a column, any other a beam.

Geometry
    World coordinates through the IfcLocalPlacement chain, in the file's length unit,
    converted to metres and millimetres at the end. End nodes come from the 'Axis'
    representation, else from the body's IfcExtrudedAreaSolid (the profile centroid,
    extruded). The section is measured across the member axis, so the profile
    dimension that the placement turns vertical becomes h. Structural curve members
    take their ends from their edge topology (else their point connections) and their
    profile from the material profile set (IFC2X3: the associated profile properties);
    the profile's x and y lie along the member's local y and z, local z following the
    member's Axis attribute (else world Z).

Sections
    IfcRectangleProfileDef, IfcTShapeProfileDef, IfcLShapeProfileDef and
    IfcArbitraryClosedProfileDef (with voids; straight-edged outlines) become a polygon.
    From it: h is the vertical extent, b the narrowest horizontal width over the depth,
    and a flange is the widest part at the top (else at the bottom): bf its width, hf
    the depth over which it keeps that width. Steel shapes (I, C, U, Z, hollow) and
    steel materials make the member invalid; so does anything else not covered.

Design values (first source found wins)
    f'c: a property 'CompressiveStrength' on the element or its type (any property
    set), a 'StrengthClass' text there (e.g. Pset_ConcreteElementGeneral), a
    'CompressiveStrength' in the material's properties (IFC2X3 also
    IfcMechanicalConcreteMaterialProperties), the material-name rule
    (``fc_from_text``), else the settings, with a warning.
    A pressure measure is converted with its own unit, else the file's pressure unit,
    else Pa (SI); a bare number is taken in MPa.
    Cover and effective depth: property set ``ShearpostDesign`` on the element or its
    type, properties ``Cover`` (face to centroid of the tension steel) and
    ``EffectiveDepth`` (wins over Cover), in the file's length unit unless the property
    names its own unit; else the settings' cover, with a warning.
    Moment frames (Chapter 18): the same property set's ``Frame`` (none, ordinary,
    intermediate, special), ``AsTopI``, ``AsBotI``, ``AsTopJ``, ``AsBotJ`` (the steel at the
    face of each end: an area measure in the file's area unit, or its own unit; a bare
    number in mm^2) and ``DbLong`` (the smallest longitudinal bar, a length). A frame beam
    without them is invalid, with the reason.

Supports (each beam end, within the settings' tolerance)
    A column or wall whose plan footprint is within reach and whose height range meets
    the beam end's depth gives ``column`` / ``wall``, the face offset being where the
    beam axis, in plan, leaves the footprint; one that stands on the beam (its base at or
    above the beam's top) does not carry it. Another beam, not within 10 degrees of
    parallel, whose web footprint (axis widened by half the web width) is within reach
    gives ``girder``, the face offset being where the axis leaves that web. Priority:
    column, wall, girder; else ``free``. In an analysis view, a restrained point
    connection counts as a column of no width (face offset 0).
    Columns in the table carry ``column`` at both ends, their faces where the beams meet them;
    a circular profile gives ``diameter_mm``, and ShearpostDesign ``NLong``, ``AsLong``,
    ``TiesH``, ``TiesB`` (with ``Frame`` and ``DbLong``) their bars and tie legs.
"""

from __future__ import annotations

import contextlib
import json
import math
import re
import unicodedata
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

import ifcopenshell
import ifcopenshell.util.element as ifc_element
import ifcopenshell.util.placement as ifc_placement
import ifcopenshell.util.unit as ifc_unit
import numpy as np
import pyarrow as pa
import shapely
from shapely import affinity
from shapely.geometry import LineString, Point, Polygon
from shapely.strtree import STRtree

from postproc import units as unit_names
from postproc.adapters import digests
from postproc.adapters.csv_tables import BEAM_END_BARS, MEMBER_COLUMNS, InputErrors, ZERO_WIDTH, frame_bar_problems
from postproc.settings import FRAMES
from postproc.adapters.errors import InputError
from postproc.adapters.mapping import unit_factor
from postproc.codes import aci318_19 as aci
from postproc.terms import with_frame

DESIGN_PSET = "ShearpostDesign"
SCHEMAS = ("IFC2X3", "IFC4")
KEYS = {"globalid": "GlobalId", "name": "Name", "tag": "Tag"}
EXTRA_COLUMNS = ("invalid_reason", "source_id")  # the end coordinates x_i_m ... z_j_m are members.csv columns
# ShearpostDesign properties of a moment-frame beam (ACI 318-19 Chapter 18) -> members.csv columns
FRAME_PROPERTIES = {"Frame": "frame", "AsTopI": "as_top_i_mm2", "AsBotI": "as_bot_i_mm2", "AsTopJ": "as_top_j_mm2",
                    "AsBotJ": "as_bot_j_mm2", "DbLong": "db_long_mm"}
# ... and of a column's bars and ties (with Frame and DbLong above): counts and a total area
COLUMN_PROPERTIES = {"NLong": "n_long", "AsLong": "as_long_mm2", "TiesH": "ties_h", "TiesB": "ties_b"}
VERTICAL_COS = math.cos(math.radians(10.0))  # axis within 10 degrees of vertical: a column
PARALLEL_SIN = math.sin(math.radians(10.0))  # beams within 10 degrees of parallel continue, not support
PRIORITY = {"column": 0, "wall": 1, "girder": 2}
STEEL_PROFILES = {
    "IfcIShapeProfileDef": "I-shape", "IfcAsymmetricIShapeProfileDef": "asymmetric I-shape",
    "IfcCShapeProfileDef": "C-shape", "IfcUShapeProfileDef": "U-shape", "IfcZShapeProfileDef": "Z-shape",
    "IfcRectangleHollowProfileDef": "rectangular hollow", "IfcCircleHollowProfileDef": "circular hollow",
}
PRESSURE_MEASURES = ("IfcPressureMeasure", "IfcModulusOfElasticityMeasure")
# what a malformed entity raises when read; the element is then reported, not the run stopped
MALFORMED = (AttributeError, TypeError, ValueError, IndexError, RuntimeError, ZeroDivisionError,
             shapely.errors.ShapelyError)
NOT_STEP = {b"PK": "a zipped IFC (ifcZIP); unzip it and give the .ifc file",
            b"<": "an XML file; shearpost reads IFC STEP files (.ifc), not ifcXML"}
Z = np.array([0.0, 0.0, 1.0])


@dataclass(frozen=True)
class IfcDefaults:
    """Values taken where the model gives none."""

    fc_mpa: float = 35.0
    fyt_mpa: float = 420.0
    cover_mm: float = 60.0  # face to centroid of the tension steel
    tolerance_mm: float = 50.0  # how far a beam end may be from what it frames into
    fy_mpa: float = 420.0  # Grade 420 longitudinal bars (common practice), as read_members
    lam: float = 1.0  # lightweight factor lambda: normalweight concrete
    units: str = "si"  # the run's unit system, in which the messages give these values

    def shown(self, si_column: str) -> str:
        """The default of ``si_column`` (fc_mpa, cover_mm) as the run's settings give it."""
        ours = unit_names.system(self.units).col(si_column)
        value = getattr(self, si_column) * unit_names.factor(si_column, ours)
        return f"{value:,.4g} {unit_names.unit_label(ours)}"


class _Unsupported(Exception):
    """Something in the model this reader does not cover; the message says what."""


def fc_from_text(text: str) -> float | None:
    """f'c in MPa named in a text, else None.

    Rule: an EN 206 class 'C<cyl>/<cube>' gives the cylinder strength (C35/45 -> 35);
    else a number followed by 'MPa' or 'N/mm2' gives that number ('Concrete 40 MPa');
    else a number followed by 'psi' or 'ksi' is converted. Lightweight classes (LC..)
    are not matched.
    """
    if m := re.search(r"(?<![A-Za-z])C\s?(\d+(?:\.\d+)?)\s*/\s*\d+", text):
        return float(m.group(1))
    if m := re.search(r"(\d+(?:\.\d+)?)\s*(?:MPa|N/mm2|N/mm²)", text, re.IGNORECASE):
        return float(m.group(1))
    if m := re.search(r"(\d+(?:\.\d+)?)\s*(psi|ksi)\b", text, re.IGNORECASE):
        return float(m.group(1)) * unit_factor("fc_mpa", m.group(2).lower())
    return None


# ---------------------------------------------------------------- profiles


def _profile_polygon(profile) -> Polygon:
    """The profile as a polygon in its own x/y plane (file units); _Unsupported if not covered."""
    cls = profile.is_a()
    if profile.is_a("IfcArbitraryClosedProfileDef"):
        inner = getattr(profile, "InnerCurves", None) or []
        poly = Polygon(_outline(profile.OuterCurve), [_outline(c) for c in inner])
        if not poly.is_valid or poly.area <= 0:
            raise _Unsupported("profile outline is not a simple closed polygon")
        return poly
    if cls in ("IfcRectangleProfileDef", "IfcRoundedRectangleProfileDef"):
        x, y = profile.XDim / 2, profile.YDim / 2
        pts = [(-x, -y), (x, -y), (x, y), (-x, y)]
    elif cls == "IfcCircleProfileDef":
        return _place2d(Point(0.0, 0.0).buffer(profile.Radius, quad_segs=16), profile.Position)
    elif cls == "IfcTShapeProfileDef":
        if profile.FlangeSlope or profile.WebSlope:
            raise _Unsupported("T-shape profile with sloped flange or web is not supported; "
                               "give it as an arbitrary closed profile")
        d, bf, tw, tf = profile.Depth / 2, profile.FlangeWidth / 2, profile.WebThickness / 2, profile.FlangeThickness
        pts = [(-tw, -d), (tw, -d), (tw, d - tf), (bf, d - tf), (bf, d), (-bf, d), (-bf, d - tf), (-tw, d - tf)]
    elif cls == "IfcLShapeProfileDef":
        if getattr(profile, "LegSlope", None):
            raise _Unsupported("L-shape profile with sloped legs is not supported; give it as an arbitrary closed profile")
        d = profile.Depth / 2
        w = (profile.Width if profile.Width is not None else profile.Depth) / 2
        t = profile.Thickness
        pts = [(-w, -d), (w, -d), (w, -d + t), (-w + t, -d + t), (-w + t, d), (-w, d)]
    elif cls == "IfcIShapeProfileDef":
        d, b, tw, tf = profile.OverallDepth / 2, profile.OverallWidth / 2, profile.WebThickness / 2, profile.FlangeThickness
        pts = [(-b, -d), (b, -d), (b, -d + tf), (tw, -d + tf), (tw, d - tf), (b, d - tf), (b, d), (-b, d),
               (-b, d - tf), (-tw, d - tf), (-tw, -d + tf), (-b, -d + tf)]
    else:
        raise _Unsupported(_profile_problem(profile, "column") or f"profile {cls} is not supported")
    return _place2d(Polygon(pts), profile.Position)


def _place2d(poly, position):
    if position is None:
        return poly
    m = ifc_placement.get_axis2placement(position)
    return affinity.affine_transform(poly, [m[0, 0], m[0, 1], m[1, 0], m[1, 1], m[0, 3], m[1, 3]])


def _outline(curve) -> list[tuple[float, float]]:
    """Vertices of a straight-edged closed curve (IfcPolyline, IfcIndexedPolyCurve)."""
    if curve.is_a("IfcPolyline"):
        return [tuple(p.Coordinates[:2]) for p in curve.Points]
    if curve.is_a("IfcIndexedPolyCurve"):
        coords = curve.Points.CoordList
        if not curve.Segments:
            return [tuple(c[:2]) for c in coords]
        if any(not s.is_a("IfcLineIndex") for s in curve.Segments):
            raise _Unsupported("profile outline with arc segments is not supported")
        order = [i for s in curve.Segments for i in s.wrappedValue]
        order = [i for k, i in enumerate(order) if k == 0 or i != order[k - 1]]
        return [tuple(coords[i - 1][:2]) for i in order]
    raise _Unsupported(f"profile outline {curve.is_a()} is not supported")


def _profile_problem(profile, role: str) -> str | None:
    """Why a profile is not a reinforced-concrete section of this member's kind, or None."""
    cls = profile.is_a()
    if cls in STEEL_PROFILES:
        return f"steel {STEEL_PROFILES[cls]} profile: not a reinforced-concrete section"
    if cls == "IfcCircleProfileDef" and role == "beam":
        return "circular beam section: not covered"
    return None


@dataclass(frozen=True)
class Section:
    """A section measured across the member axis: mm, and the vertical range in m."""

    b_mm: float
    h_mm: float
    bf_mm: float | None
    hf_mm: float | None
    v_lo_m: float  # bottom, relative to the centroid line
    v_hi_m: float  # top, relative to the centroid line
    diameter_mm: float | None = None  # a circular column


def measure(poly: Polygon) -> tuple[float, float, float | None, float | None]:
    """b (narrowest width), h (vertical extent), bf and hf (top flange, else bottom) of a section in mm.

    Widths along horizontal lines vary linearly between vertex levels, so each band
    between levels is sampled just inside its two ends.
    """
    levels = np.unique(np.round(shapely.get_coordinates(poly)[:, 1], 6))
    h = float(levels[-1] - levels[0])
    eps = 1e-6 * h
    u0, _, u1, _ = poly.bounds

    def width(v: float) -> float:
        return poly.intersection(LineString([(u0 - 1.0, v), (u1 + 1.0, v)])).length

    bands = [(float(hi - lo), width(lo + eps), width(hi - eps)) for lo, hi in zip(levels[:-1], levels[1:])
             if hi - lo > 2 * eps]
    b = min(min(w0, w1) for _, w0, w1 in bands)
    top = [(t, w1, w0) for t, w0, w1 in reversed(bands)]  # outer face first
    for ordered in (top, bands):
        outer = ordered[0][1]
        if outer > b + 1.0:
            same = max(0.5, 1e-3 * outer)
            thickness = 0.0
            for t, w_out, w_in in ordered:
                if abs(w_out - outer) > same or abs(w_in - outer) > same:
                    break
                thickness += t
            return b, h, outer, thickness
    return b, h, None, None


# ---------------------------------------------------------------- geometry


@dataclass
class _Sweep:
    """A profile swept straight: its polygon in profile x/y, world matrix and extrusion vector."""

    profile: ifcopenshell.entity_instance
    polygon: Polygon
    frame: np.ndarray  # 4x4, world from profile plane
    extrusion: np.ndarray  # world vector

    def centroid_line(self) -> tuple[np.ndarray, np.ndarray]:
        c = self.polygon.centroid
        start = (self.frame @ np.array([c.x, c.y, 0.0, 1.0]))[:3]
        return start, start + self.extrusion

    def vertices(self) -> np.ndarray:
        xy = shapely.get_coordinates(self.polygon.exterior)
        pts = np.column_stack([xy, np.zeros(len(xy)), np.ones(len(xy))]) @ self.frame.T
        return pts[:, :3]

    def footprint(self) -> Polygon:
        """Plan outline of the swept solid: both end outlines and every edge's sweep."""
        v = self.vertices()[:, :2]
        e = self.extrusion[:2]
        pieces = [Polygon(v).buffer(0), Polygon(v + e).buffer(0)]
        if np.hypot(*e) > 1e-9 * max(1.0, float(np.ptp(v))):
            pieces += [Polygon([a, b, b + e, a + e]).buffer(0) for a, b in zip(v[:-1], v[1:])]
        return shapely.union_all([p for p in pieces if not p.is_empty])

    def z_range(self) -> tuple[float, float]:
        z = self.vertices()[:, 2]
        ends = np.concatenate([z, z + self.extrusion[2]])
        return float(ends.min()), float(ends.max())

    def section(self, axis: np.ndarray, to_mm: float) -> Polygon:
        """The profile seen across ``axis``: u horizontal, v up (for a vertical member: profile x, y)."""
        ex, ey = self.frame[:3, 0], self.frame[:3, 1]
        horiz = np.cross(Z, axis)
        if np.linalg.norm(horiz) < 1e-9:  # vertical member: profile x and y as they are
            m = [np.linalg.norm(ex), 0.0, 0.0, np.linalg.norm(ey)]
        else:
            horiz /= np.linalg.norm(horiz)
            up = np.cross(axis, horiz)
            m = [ex @ horiz, ey @ horiz, ex @ up, ey @ up]
        return affinity.affine_transform(self.polygon, [k * to_mm for k in m] + [0.0, 0.0])


def _solids(items, matrix):
    """Extruded solids among representation items, with their matrix (booleans and mapped items opened)."""
    for item in items:
        if item.is_a("IfcExtrudedAreaSolid"):
            yield item, matrix
        elif item.is_a("IfcBooleanResult"):
            yield from _solids([item.FirstOperand], matrix)
        elif item.is_a("IfcMappedItem"):
            mapped = ifc_placement.get_mappeditem_transformation(item)
            if mapped is not None:
                yield from _solids(item.MappingSource.MappedRepresentation.Items, matrix @ mapped)


def _representations(entity, identifier: str | None = None) -> list:
    reps = list(entity.Representation.Representations) if entity.Representation else []
    return [r for r in reps if identifier is None or r.RepresentationIdentifier == identifier]


def _body_sweep(entity, placement: np.ndarray) -> _Sweep | None:
    """The deepest extruded solid of the element's body (any representation if none is 'Body')."""
    reps = _representations(entity, "Body") or _representations(entity)
    found = [(s, m) for r in reps for s, m in _solids(r.Items, np.eye(4))]
    if not found:
        return None
    solid, item_matrix = max(found, key=lambda sm: sm[0].Depth)
    position = ifc_placement.get_axis2placement(solid.Position) if solid.Position else np.eye(4)
    frame = placement @ item_matrix @ position
    direction = np.array(solid.ExtrudedDirection.DirectionRatios, float)
    direction = direction / np.linalg.norm(direction) * solid.Depth
    return _Sweep(solid.SweptArea, _profile_polygon(solid.SweptArea), frame, frame[:3, :3] @ direction)


def _curve_ends(curve) -> tuple[tuple, tuple] | None:
    """First and last point of an axis curve in its own coordinates, None if not covered."""
    if curve.is_a("IfcPolyline"):
        pts = [p.Coordinates for p in curve.Points]
    elif curve.is_a("IfcIndexedPolyCurve"):
        pts = curve.Points.CoordList
    else:
        return None
    return tuple(pts[0]), tuple(pts[-1])


def _to_world(matrix: np.ndarray, point) -> np.ndarray:
    """A 2D or 3D point through a 4x4 matrix."""
    p = np.zeros(4)
    p[: len(point)] = point
    p[3] = 1.0
    return (matrix @ p)[:3]


def _axis_nodes(entity, placement: np.ndarray):
    """World end points of the 'Axis' representation (file units), None without one."""
    for rep in _representations(entity, "Axis"):
        for item in rep.Items:
            if ends := _curve_ends(item):
                return _to_world(placement, ends[0]), _to_world(placement, ends[1])
    return None


# ---------------------------------------------------------------- properties


@dataclass(frozen=True)
class _Units:
    """The file's units, and property values converted with them."""

    length_m: float  # metres per file length unit
    pressure_pa: float  # pascals per file pressure unit (1 when the file names none)
    area_m2: float = 1.0  # square metres per file area unit (1 when the file names none)

    def mpa(self, value, unit) -> float | None:
        """A pressure property value in MPa (text through the name rule)."""
        raw = getattr(value, "wrappedValue", value)
        if isinstance(raw, str):
            return fc_from_text(raw)
        if not isinstance(raw, (int, float)):
            return None
        if unit is not None:
            return raw * ifc_unit.get_unit_scale(unit) / 1e6
        measure = value.is_a() if isinstance(value, ifcopenshell.entity_instance) else "IfcPressureMeasure"
        return raw * self.pressure_pa / 1e6 if measure in PRESSURE_MEASURES else float(raw)

    def mm(self, value, unit) -> float | None:
        """A length property value in mm (its own unit, else the file's length unit)."""
        raw = getattr(value, "wrappedValue", value)
        if not isinstance(raw, (int, float)):
            return None
        return raw * (ifc_unit.get_unit_scale(unit) if unit is not None else self.length_m) * 1e3

    def mm2(self, value, unit) -> float | None:
        """An area property value in mm^2: its own unit, else the file's area unit for an area
        measure; a bare number is taken in mm^2."""
        raw = getattr(value, "wrappedValue", value)
        if not isinstance(raw, (int, float)):
            return None
        if unit is not None:
            return raw * ifc_unit.get_unit_scale(unit) * 1e6
        measure = value.is_a() if isinstance(value, ifcopenshell.entity_instance) else "IfcAreaMeasure"
        return raw * self.area_m2 * 1e6 if measure == "IfcAreaMeasure" else float(raw)


def _single_values(definition):
    """Single-value properties of a property set or of material properties (either schema)."""
    for attr in ("HasProperties", "Properties", "ExtendedProperties"):
        for prop in getattr(definition, attr, None) or []:
            if prop.is_a("IfcPropertySingleValue") and prop.NominalValue is not None:
                yield prop


def _element_properties(entity):
    """(property set name, IfcPropertySingleValue) of the occurrence, then of its type.

    The property sets are found by ifcopenshell.util.element.get_psets; the property
    entities themselves are kept (their NominalValue type and Unit convert the value)."""
    sources = [entity, ifc_element.get_type(entity)]
    for source in filter(None, sources):
        for pset_name, props in ifc_element.get_psets(source, psets_only=True, should_inherit=False,
                                                       verbose=True).items():
            for prop in props.values():
                if isinstance(prop, dict) and prop.get("class") == "IfcPropertySingleValue" \
                        and prop.get("value") is not None:
                    yield pset_name, source.file.by_id(prop["id"])


def _materials(entity) -> list:
    """The IfcMaterial(s) of an element, through any material set or its type."""
    material = ifc_element.get_material(entity, should_skip_usage=True)
    if material is None:
        return []
    if material.is_a("IfcMaterial"):
        return [material]
    if material.is_a("IfcMaterialList"):
        return list(material.Materials)
    for items in ("MaterialLayers", "MaterialProfiles", "MaterialConstituents"):
        if hasattr(material, items):
            return [i.Material for i in getattr(material, items) or [] if i.Material is not None]
    return []


def _steel_material(materials) -> str | None:
    """Name of a material whose name or category says steel (and not concrete), else None."""
    for m in materials:
        words = f"{m.Name or ''} {getattr(m, 'Category', None) or ''}"
        if re.search(r"\bsteel\b", words, re.IGNORECASE) and not re.search(r"concrete", words, re.IGNORECASE):
            return m.Name or "steel"
    return None


@dataclass
class _Model:
    """The opened file with what every element needs: units and property indexes."""

    file: ifcopenshell.file
    units: _Units
    material_props: dict[int, list] = field(default_factory=dict)
    profile_props: dict[int, object] = field(default_factory=dict)  # IFC2X3 structural profiles
    placements: dict[int, np.ndarray] = field(default_factory=dict)

    @classmethod
    def build(cls, model: ifcopenshell.file) -> _Model:
        units = _Units(ifc_unit.calculate_unit_scale(model, "LENGTHUNIT"),
                       ifc_unit.calculate_unit_scale(model, "PRESSUREUNIT"),
                       ifc_unit.calculate_unit_scale(model, "AREAUNIT"))
        out = cls(model, units)
        for mp in model.by_type("IfcMaterialProperties"):
            if mp.Material is not None:
                out.material_props.setdefault(mp.Material.id(), []).append(mp)
        if model.schema == "IFC2X3":
            for rel in model.by_type("IfcRelAssociatesProfileProperties"):
                for obj in rel.RelatedObjects:
                    out.profile_props[obj.id()] = rel.RelatingProfileProperties.ProfileDefinition
        return out

    def placement(self, placement) -> np.ndarray:
        """World matrix of an IfcLocalPlacement chain (file units), each link computed once."""
        if placement is None:
            return np.eye(4)
        if placement.id() not in self.placements:
            if not placement.is_a("IfcLocalPlacement"):
                raise _Unsupported(f"{placement.is_a()} is not supported (only IfcLocalPlacement)")
            self.placements[placement.id()] = (self.placement(placement.PlacementRelTo)
                                               @ ifc_placement.get_axis2placement(placement.RelativePlacement))
        return self.placements[placement.id()]

    def fc_mpa(self, entity, materials) -> float | None:
        """f'c in MPa from the model (sources in the module docstring), else None."""
        for _, prop in _element_properties(entity):
            if prop.Name == "CompressiveStrength" or prop.Name == "StrengthClass":
                if (fc := self.units.mpa(prop.NominalValue, prop.Unit)) is not None:
                    return fc
        for m in materials:
            for mp in self.material_props.get(m.id(), []):
                if mp.is_a("IfcMechanicalConcreteMaterialProperties") and mp.CompressiveStrength is not None:
                    return self.units.mpa(mp.CompressiveStrength, None)
                for prop in _single_values(mp):
                    if prop.Name == "CompressiveStrength":
                        if (fc := self.units.mpa(prop.NominalValue, prop.Unit)) is not None:
                            return fc
        for m in materials:
            if m.Name and (fc := fc_from_text(m.Name)) is not None:
                return fc
        return None

    def depth_values(self, entity) -> tuple[float | None, float | None]:
        """(cover, effective depth) in mm from the ShearpostDesign property set."""
        found: dict[str, float | None] = {}
        for pset, prop in _element_properties(entity):
            if pset == DESIGN_PSET and prop.Name in ("Cover", "EffectiveDepth") and prop.Name not in found:
                found[prop.Name] = self.units.mm(prop.NominalValue, prop.Unit)
        return found.get("Cover"), found.get("EffectiveDepth")

    def frame_values(self, entity) -> dict:
        """The members.csv frame columns given by the ShearpostDesign property set (FRAME_PROPERTIES)."""
        found: dict = {}
        for pset, prop in _element_properties(entity):
            column = FRAME_PROPERTIES.get(prop.Name) if pset == DESIGN_PSET else None
            if column is None or column in found:
                continue
            if column == "frame":
                raw = getattr(prop.NominalValue, "wrappedValue", prop.NominalValue)
                found[column] = str(raw).strip().lower()
            elif column == "db_long_mm":
                found[column] = self.units.mm(prop.NominalValue, prop.Unit)
            else:
                found[column] = self.units.mm2(prop.NominalValue, prop.Unit)
        return found

    def column_values(self, entity) -> dict:
        """A column's bar count, total steel and tie legs from the ShearpostDesign property set
        (COLUMN_PROPERTIES; its frame and bar diameter come with frame_values)."""
        found: dict = {}
        for pset, prop in _element_properties(entity):
            column = COLUMN_PROPERTIES.get(prop.Name) if pset == DESIGN_PSET else None
            if column is None or column in found:
                continue
            if column == "as_long_mm2":
                found[column] = self.units.mm2(prop.NominalValue, prop.Unit)
            else:
                raw = getattr(prop.NominalValue, "wrappedValue", prop.NominalValue)
                found[column] = float(raw) if isinstance(raw, (int, float)) else None
        return found


# ---------------------------------------------------------------- elements


@dataclass
class _Part:
    """One element as the topology and the table need it (world metres, section mm)."""

    entity: ifcopenshell.entity_instance
    role: str  # beam, column, wall, or point (a restrained structural node)
    nodes: tuple[np.ndarray, np.ndarray] | None = None
    line: tuple[np.ndarray, np.ndarray] | None = None  # centroid line
    section: Section | None = None
    footprint: object = None
    z_range: tuple[float, float] | None = None
    problem: str | None = None

    @property
    def axis(self) -> np.ndarray:
        d = self.nodes[1] - self.nodes[0]
        return d / np.linalg.norm(d)

    def z_range_at(self, xy: np.ndarray) -> tuple[float, float]:
        """Vertical range of a beam's section at the plan point nearest ``xy``."""
        a, b = self.line
        plan = b[:2] - a[:2]
        s = float(np.clip((xy - a[:2]) @ plan / (plan @ plan), 0.0, 1.0)) if plan @ plan > 0 else 0.0
        z = a[2] + s * (b[2] - a[2])
        return z + self.section.v_lo_m, z + self.section.v_hi_m


def _physical(m: _Model, entity, role: str) -> _Part:
    part = _Part(entity, role)
    scale = m.units.length_m
    placement = m.placement(entity.ObjectPlacement)
    sweep = _body_sweep(entity, placement)
    if sweep is not None:
        sweep.frame = np.diag([scale, scale, scale, 1.0]) @ sweep.frame
        sweep.extrusion = sweep.extrusion * scale
    if role == "wall":
        if sweep is None:
            part.problem = "no swept-solid body"
        else:
            part.footprint, part.z_range = sweep.footprint(), sweep.z_range()
        return part
    axis = _axis_nodes(entity, placement)
    if axis is not None:
        part.nodes = (axis[0] * scale, axis[1] * scale)
    elif sweep is not None:
        part.nodes = sweep.centroid_line()
    else:
        part.problem = "no geometry: neither an 'Axis' nor a swept-solid 'Body' representation"
        return part
    if np.linalg.norm(part.nodes[1] - part.nodes[0]) <= 0:
        part.problem = "the member axis has zero length"
        return part
    if sweep is None:
        part.problem = "no section: the body is not a swept solid with a profile"
        return part
    _finish(part, sweep)
    return part


def _finish(part: _Part, sweep: _Sweep) -> None:
    """Section, centroid line, and for a column footprint and height range, from the sweep (world m)."""
    if abs(sweep.extrusion @ part.axis) < VERTICAL_COS * np.linalg.norm(sweep.extrusion):
        raise _Unsupported("the body is not extruded along the member axis")
    poly = sweep.section(part.axis, 1e3)
    u0, v0, u1, v1 = poly.bounds
    c = poly.centroid.y
    diameter = None
    if part.role == "column":  # b and h as the profile's x and y extents
        b, h, bf, hf = u1 - u0, v1 - v0, None, None
        part.footprint, part.z_range = sweep.footprint(), sweep.z_range()
        if sweep.profile.is_a("IfcCircleProfileDef"):
            diameter = b  # the outline's extent: the circle's vertices include its four extreme points
    else:
        b, h, bf, hf = measure(poly)
    part.section = Section(b, h, bf, hf, (v0 - c) / 1e3, (v1 - c) / 1e3, diameter)
    part.line = sweep.centroid_line()
    part.problem = _profile_problem(sweep.profile, part.role)


def _structural(m: _Model, entity) -> _Part:
    part = _Part(entity, "beam")
    scale = m.units.length_m
    placement = m.placement(entity.ObjectPlacement)
    ends = _edge_nodes(entity, placement) or _connection_nodes(m, entity)
    if ends is None:
        part.problem = "no geometry: no edge topology and not two point connections"
        return part
    part.nodes = (ends[0] * scale, ends[1] * scale)
    length = np.linalg.norm(part.nodes[1] - part.nodes[0])
    if length <= 0:
        part.problem = "the member axis has zero length"
        return part
    axis = part.axis
    part.role = "column" if abs(axis[2]) >= VERTICAL_COS else "beam"
    profile = _structural_profile(m, entity)
    if profile is None:
        part.problem = "no section: no profile in its material profile set"
        return part
    hint = getattr(entity, "Axis", None)
    z_hint = placement[:3, :3] @ np.array(hint.DirectionRatios, float) if hint is not None else Z
    z_local = z_hint - (z_hint @ axis) * axis
    if np.linalg.norm(z_local) < 1e-9:
        z_local = np.array([1.0, 0.0, 0.0]) - axis[0] * axis
    z_local /= np.linalg.norm(z_local)
    frame = np.eye(4)
    frame[:3, 0], frame[:3, 1], frame[:3, 2] = np.cross(z_local, axis) * scale, z_local * scale, axis
    frame[:3, 3] = part.nodes[0]
    _finish(part, _Sweep(profile, _profile_polygon(profile), frame, part.nodes[1] - part.nodes[0]))
    return part


def _vertex(vertex) -> tuple | None:
    geometry = getattr(vertex, "VertexGeometry", None)
    return tuple(geometry.Coordinates) if geometry is not None and geometry.is_a("IfcCartesianPoint") else None


def _edge_nodes(entity, placement):
    reps = list(entity.Representation.Representations) if entity.Representation else []
    for rep in reps:
        for item in rep.Items:
            edge = item.EdgeElement if item.is_a("IfcOrientedEdge") else item
            if edge.is_a("IfcEdge"):
                a, b = _vertex(edge.EdgeStart), _vertex(edge.EdgeEnd)
                if a is not None and b is not None:
                    return _to_world(placement, a), _to_world(placement, b)
    return None


def _point_node(m: _Model, connection) -> np.ndarray | None:
    placement = m.placement(connection.ObjectPlacement)
    for rep in (connection.Representation.Representations if connection.Representation else []):
        for item in rep.Items:
            if (p := _vertex(item)) is not None:
                return _to_world(placement, p)
    return None


def _connection_nodes(m: _Model, entity):
    rels = sorted(entity.ConnectedBy or [], key=lambda r: r.id())  # file order gives i, then j
    points = [_point_node(m, r.RelatedStructuralConnection) for r in rels
              if r.RelatedStructuralConnection.is_a("IfcStructuralPointConnection")]
    points = [p for p in points if p is not None]
    return (points[0], points[-1]) if len(points) >= 2 else None


def _structural_profile(m: _Model, entity):
    if m.file.schema == "IFC2X3":
        return m.profile_props.get(entity.id())
    material = ifc_element.get_material(entity, should_skip_usage=True)
    if material is not None and material.is_a("IfcMaterialProfileSet") and material.MaterialProfiles:
        return material.MaterialProfiles[0].Profile
    return None


def _restraints(m: _Model, warnings: list[str]) -> list[_Part]:
    """Restrained structural point connections, as point supports."""
    out = []
    for connection in m.file.by_type("IfcStructuralPointConnection"):
        if connection.AppliedCondition is None:
            continue
        try:
            p = _point_node(m, connection)
        except (_Unsupported, *MALFORMED) as exc:
            warnings.append(f"point connection {connection.GlobalId}: {exc}; not used as a support")
            continue
        if p is not None:
            p = p * m.units.length_m
            out.append(_Part(connection, "point", footprint=Point(p[:2]), z_range=(p[2], p[2])))
    return out


def _read(m: _Model, entity, role: str) -> _Part:
    """One element, never raising on what the model holds: a problem becomes its reason."""
    try:
        return _structural(m, entity) if role == "structural" else _physical(m, entity, role)
    except _Unsupported as why:
        return _Part(entity, "beam" if role == "structural" else role, problem=str(why))
    except MALFORMED as exc:
        return _Part(entity, "beam" if role == "structural" else role,
                     problem=f"could not read its geometry ({type(exc).__name__}: {exc})")


# ---------------------------------------------------------------- topology


def _face_offset(footprint, node: np.ndarray, other: np.ndarray, tol: float) -> float:
    """Distance along the member from ``node`` to where its plan axis leaves ``footprint``."""
    plan = LineString([node[:2], other[:2]])
    if plan.length <= 0:
        return 0.0
    inside = footprint.intersection(plan)
    exit_at = 0.0
    for piece in getattr(inside, "geoms", [inside]):
        if piece.geom_type == "LineString" and not piece.is_empty:
            s = [plan.project(Point(c)) for c in piece.coords]
            if min(s) <= tol:
                exit_at = max(exit_at, max(s))
    return exit_at * float(np.linalg.norm(other - node)) / plan.length


def _overlaps(a: tuple[float, float], b: tuple[float, float], tol: float) -> bool:
    return a[0] <= b[1] + tol and b[0] <= a[1] + tol


def _carries(carrier: _Part, end: tuple[float, float], tol: float) -> bool:
    """Whether a column, wall or point support meets a beam end's depth range without merely
    standing on the beam (its base at or above the beam's top, within ``tol``)."""
    stands_on = carrier.role != "point" and carrier.z_range[0] >= end[1] - tol
    return _overlaps(end, carrier.z_range, tol) and not stands_on


def _column_faces(parts: list[_Part], tol: float) -> dict[int, tuple[float, float]]:
    """Node-to-face distances (m) at the foot and the head of every column with nodes: the beams
    whose plan lines reach its footprint (within ``tol``) and whose depth at that point spans the
    node's height; the clear height runs from the top of the highest such beam at the foot to the
    soffit of the lowest at the head (0 where none: a footing, a free end)."""
    beams = [p for p in parts if p.role == "beam" and p.section is not None and p.line is not None]
    tree = STRtree([LineString([p.line[0][:2], p.line[1][:2]]) for p in beams]) if beams else None
    out: dict[int, tuple[float, float]] = {}
    for c in parts:
        if c.role != "column" or c.nodes is None or tree is None:
            continue
        foot, head = sorted(c.nodes, key=lambda n: n[2])
        where = c.footprint if c.footprint is not None and not c.footprint.is_empty else Point(foot[:2])
        faces = [0.0, 0.0]
        for k in tree.query(where, predicate="dwithin", distance=tol):
            for end, node in enumerate((foot, head)):
                lo, hi = beams[k].z_range_at(node[:2])
                if lo - tol <= node[2] <= hi + tol:
                    faces[end] = max(faces[end], hi - node[2] if end == 0 else node[2] - lo)
        out[c.entity.id()] = (faces[0], faces[1]) if c.nodes[0][2] <= c.nodes[1][2] else (faces[1], faces[0])
    return out


def _supports(parts: list[_Part], tol: float, warnings: list[str], ids: dict[int, str]):
    """(support, face offset in m) at both ends of every beam with nodes."""
    carriers: list[tuple[str, object, _Part]] = []
    for p in parts:
        if p.role in ("column", "wall") and p.footprint is not None and not p.footprint.is_empty:
            carriers.append((p.role, p.footprint, p))
        elif p.role == "point":
            carriers.append(("column", p.footprint, p))
        elif p.role == "beam" and p.section is not None and p.line is not None:
            plan = LineString([p.line[0][:2], p.line[1][:2]])
            if plan.length > tol:
                carriers.append(("girder", plan.buffer(p.section.b_mm / 2e3, cap_style="flat"), p))
    tree = STRtree([g for _, g, _ in carriers])
    out: dict[int, list[tuple[str, float]]] = {}
    for p in parts:
        if p.role != "beam" or p.nodes is None or p.section is None:
            continue
        ends = []
        for end, (node, other) in zip("ij", (p.nodes, p.nodes[::-1])):
            here = p.z_range_at(node[:2])
            best, continued = None, False
            for k in tree.query(Point(node[:2]), predicate="dwithin", distance=tol):
                kind, geometry, q = carriers[k]
                if q is p:
                    continue
                if kind == "girder":
                    if not _overlaps(here, q.z_range_at(node[:2]), tol):
                        continue
                    if np.linalg.norm(np.cross(p.axis, q.axis)) < PARALLEL_SIN:
                        continued = True
                        continue
                elif not _carries(q, here, tol):
                    continue
                candidate = (PRIORITY[kind], -_face_offset(geometry, node, other, tol), kind)
                best = candidate if best is None or candidate < best else best
            if best is None:
                ends.append(("free", 0.0))
                if continued:
                    warnings.append(f"member {ids[p.entity.id()]}: end {end} only continues into a collinear beam; "
                                    f"taken as free")
            else:
                ends.append((best[2], -best[1]))
        out[p.entity.id()] = ends
    return out


# ---------------------------------------------------------------- the table


def _open(path: Path) -> ifcopenshell.file:
    """The model, parsed from the bytes that are hashed for the run's manifest. A UTF-8
    byte-order mark and CRLF line ends are read as in any other file; a statement the
    parser cannot read and a reference to an instance the file does not hold (a line cut
    or lost) refuse the file, naming the line."""
    if not path.exists():
        raise InputError(path, "file not found")
    if path.is_dir():
        raise InputError(path, "is a folder, not an IFC file")
    data = digests.read_bytes(path)
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    head, tail = data[:64].lstrip(), data[-512:].rstrip()
    if not head.startswith(b"ISO-10303-21;"):
        what = next((why for magic, why in NOT_STEP.items() if head.startswith(magic)),
                    "not an IFC file (an IFC STEP file starts with 'ISO-10303-21;')")
        raise InputError(path, what)
    if not tail.endswith(b"END-ISO-10303-21;"):
        raise InputError(path, "the IFC file is truncated (it does not end with 'END-ISO-10303-21;')")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        text = data.decode("latin-1")  # STEP text is 8-bit; non-ASCII should be escaped, but may not be
    del data
    _check_statements(path, text)
    wrapper = ifcopenshell.ifcopenshell_wrapper
    wrapper.set_log_format_json()
    wrapper.get_log()  # (earlier messages)
    try:
        model = ifcopenshell.file.from_string(text)
    except (ifcopenshell.Error, OSError, RuntimeError) as exc:
        raise InputError(path, f"could not be read as IFC ({exc})") from None
    finally:
        log = wrapper.get_log()
        wrapper.set_log_format_text()
    errors = []
    for line in log.splitlines():
        with contextlib.suppress(ValueError):
            entry = json.loads(line)
            if entry.get("level") == "error":
                errors.append(entry.get("message", ""))
    if errors:
        raise _parse_errors(path, text, errors)
    if model.schema not in SCHEMAS:
        raise InputError(path, f"schema {model.schema} is not supported; shearpost reads {' and '.join(SCHEMAS)}")
    return model


STATEMENT = re.compile(r"\s*#(\d+)\s*=\s*[A-Za-z][A-Za-z0-9_]*\s*\((?:(?!#\d+\s*=).)*\)\s*", re.S)
STEP_TOKEN = re.compile(r"'(?:[^'\r\n]|'')*'|/\*.*?\*/|;", re.S)  # (a string holds no line break)


def _check_statements(path: Path, text: str) -> None:
    """Every statement of the DATA section is one whole instance, ``#id = NAME(...);``, and
    no id is given twice: a line cut short, lost or joined to the next is found here even
    where the parser would pass over it (it skips text it cannot read, takes a missing ';',
    and lets a second #id silently replace the first)."""
    start = text.find("\nDATA;")
    end = text.find("\nENDSEC;", start)
    if start < 0 or end < 0:
        raise InputError(path, "could not be read as IFC: no DATA section")
    ids: set[str] = set()
    line = text.count("\n", 0, start + 1) + 1  # the line of DATA;
    pos, piece = start + len("\nDATA;"), []
    for token in STEP_TOKEN.finditer(text, pos, end + 1):
        if token.group() != ";":
            piece.append(text[pos:token.start()] + "''")  # a string or comment: its text does not matter
            pos = token.end()
            continue
        statement = "".join(piece) + text[pos:token.start()]
        first = line + statement[: len(statement) - len(statement.lstrip())].count("\n")
        m = STATEMENT.fullmatch(statement)
        if m is None:
            raise InputError(path, "could not be read as IFC: not one whole instance (#id = NAME(...);): "
                                   f"{statement.strip()[:60]!r}; a line cut, lost or joined to the next?", first)
        if m.group(1) in ids:
            raise InputError(path, f"could not be read as IFC: instance #{m.group(1)} is given twice", first)
        ids.add(m.group(1))
        line += statement.count("\n")
        pos, piece = token.end(), []
    rest = "".join(piece) + text[pos:end]
    if rest.strip():
        raise InputError(path, "could not be read as IFC: the DATA section ends inside an instance",
                         line + rest[: len(rest) - len(rest.lstrip())].count("\n"))


def _parse_errors(path: Path, text: str, messages: list[str]) -> InputError:
    """The parser's errors, each on its line (the parser gives byte offsets)."""
    encoded = text.encode("utf-8")
    found = []
    for message in messages:
        m = re.search(r"\s*at offset (\d+)$", message)
        line = encoded[: int(m.group(1))].count(b"\n") + 1 if m else None
        what = message[: m.start()] if m else message
        what = re.sub(r"^Instance reference (#\d+) used by instance (#\d+)(?: at attribute index (\d+))? not found",
                      lambda r: f"instance {r[2]} refers to {r[1]}, which the file does not hold (a line lost or cut?)",
                      what)
        found.append(InputError(path, f"could not be read as IFC: {what}", line))
    found.sort(key=lambda e: e.line or 0)
    shown = found[:20]
    return InputErrors(shown, len(found) - len(shown))


def _elements(model: ifcopenshell.file, warnings: list[str]) -> list[tuple[object, str]]:
    """(entity, role) in file order: beams first, then columns, then walls."""
    structural = model.by_type("IfcStructuralCurveMember")
    physical = list(model.by_type("IfcBeam")) + [
        e for e in model.by_type("IfcMember") if ifc_element.get_predefined_type(e) == "BEAM"]
    columns = model.by_type("IfcColumn")
    if structural:
        if physical or columns:
            warnings.append(f"the file carries a structural analysis view; its {len(structural)} curve members "
                            f"are read and the {len(physical) + len(columns)} physical beams and columns are not")
        return [(e, "structural") for e in sorted(structural, key=lambda e: e.id())]
    return ([(e, "beam") for e in sorted(physical, key=lambda e: e.id())]
            + [(e, "column") for e in sorted(columns, key=lambda e: e.id())]
            + [(e, "wall") for e in sorted(model.by_type("IfcWall"), key=lambda e: e.id())])


def _member_ids(path: Path, parts: list[_Part], key: str) -> dict[int, str]:
    attr = KEYS[key]
    ids = {p.entity.id(): unicodedata.normalize("NFC", re.sub(ZERO_WIDTH, "", (getattr(p.entity, attr, None) or "")))
           .strip() for p in parts}  # compared as the CSV readers compare ids
    missing = [p.entity.GlobalId for p in parts if not ids[p.entity.id()]]
    if missing:
        raise InputError(path, f"{len(missing)} member(s) have no {attr} to use as the member id "
                               f"(e.g. GlobalId {', '.join(missing[:3])}); choose another key such as 'globalid'")
    dup = sorted(v for v, n in Counter(ids.values()).items() if n > 1)
    if dup:
        raise InputError(path, f"{attr} is not unique, so it cannot be the member id: "
                               f"{', '.join(repr(v) for v in dup[:5])}; choose another key such as 'globalid'")
    return ids


def _level(entity) -> str:
    container = ifc_element.get_container(entity)
    return (container.Name or "") if container is not None and container.is_a("IfcBuildingStorey") else ""


def _value_problem(row: dict) -> str | None:
    """The first value that read_members would refuse, as a reason."""
    L, b, h, d = row["length_m"], row["b_mm"], row["h_mm"], row["d_mm"]
    if row.get("diameter_mm") is not None:
        b = h = row["diameter_mm"]
    if not (b > 0 and h > 0):
        return "section has no width or depth"
    if not 0 < d < h:
        return f"effective depth {d:g} mm must lie between 0 and h = {h:g} mm"
    if row["fc_mpa"] < aci.FC_MIN_MPA:
        return f"f'c {row['fc_mpa']:g} MPa below {aci.FC_MIN_MPA:g} MPa, the least ACI 318-19 19.2.1.1 admits"
    if row["fc_mpa"] > 200.0:
        return f"f'c {row['fc_mpa']:g} MPa is not plausible; check the pressure unit of the model"
    if row["face_i_mm"] + row["face_j_mm"] >= L * 1e3:
        return "support faces leave no clear span"
    return None


def _frame_problem(row: dict, role: str) -> str | None:
    """Why a member's frame properties are not usable (the rules of members.csv), or None."""
    frame = row.get("frame") or "none"
    if frame not in FRAMES:
        return f"{DESIGN_PSET}.Frame is '{frame}', not one of {', '.join(FRAMES)}"
    for column in BEAM_END_BARS:
        v = row.get(column)
        if v is not None and not (0 < v < 1e7):
            name = next(k for k, c in FRAME_PROPERTIES.items() if c == column)
            return f"{DESIGN_PSET}.{name} must be a positive number (got {v:g})"
    bars = {c: np.array([np.nan if row.get(c) is None else float(row[c])]) for c in BEAM_END_BARS}
    for rows, column, message in frame_bar_problems(np.array([frame], object), np.array([role], object), bars,
                                                    np.array([row["support_i"]]), np.array([row["support_j"]])):
        if rows[0]:
            name = next((k for k, c in FRAME_PROPERTIES.items() if c == column), column)
            return with_frame(message, frame) + f" ({DESIGN_PSET}.{name})"
    return None


def read_ifc_members(path, *, key: str = "globalid",
                     defaults: IfcDefaults = IfcDefaults()) -> tuple[pa.Table, list[str]]:
    """IFC model -> members table (the read_members columns, then EXTRA_COLUMNS) and warnings.

    ``key`` picks the attribute that becomes the member id (GlobalId, Name or Tag), so that
    it matches the force table; it must be present and unique on every member.
    """
    if key not in KEYS:
        raise ValueError(f"key must be one of {', '.join(KEYS)}")
    path = Path(path)
    model = _open(path)
    m = _Model.build(model)
    warnings: list[str] = []
    parts = [_read(m, e, role) for e, role in _elements(model, warnings)]
    members = [p for p in parts if p.role in ("beam", "column")]
    if not any(p.role == "beam" for p in members):
        raise InputError(path, "no beams in the model (IfcBeam, IfcMember of type BEAM, or IfcStructuralCurveMember)")
    for p in parts:
        if p.role in ("column", "wall") and p.footprint is None:
            name = getattr(p.entity, "Name", None) or p.entity.GlobalId
            warnings.append(f"{p.role} {name}: {p.problem or 'no footprint'}; not used as a support")
    parts += _restraints(m, warnings)
    ids = _member_ids(path, members, key)
    supports = _supports(parts, defaults.tolerance_mm / 1e3, warnings, ids)
    for entity_id, (foot, head) in _column_faces(parts, defaults.tolerance_mm / 1e3).items():
        supports[entity_id] = [("column", foot), ("column", head)]
    rows = [_row(m, p, ids[p.entity.id()], supports.get(p.entity.id()), defaults, warnings) for p in members]
    if defaults.fyt_mpa > aci.FYT_MAX_MPA:
        warnings.append(f"fyt {defaults.fyt_mpa:g} MPa from the settings is capped at {aci.FYT_MAX_MPA:g} MPa "
                        f"for shear (ACI 318-19 20.2.2.4)")
    return _table(rows), warnings


def _row(m: _Model, p: _Part, member: str, ends, defaults: IfcDefaults, warnings: list[str]) -> dict:
    entity = p.entity
    materials = _materials(entity)
    row = {c.name: None for c in MEMBER_COLUMNS}
    row.update(member=member, kind=p.role, fyt_mpa=defaults.fyt_mpa, fy_mpa=defaults.fy_mpa,
               **{"lambda": defaults.lam}, load_face="top", frame="none", level=_level(entity), group="",
               source_id=entity.GlobalId, invalid_reason=p.problem)
    # geometry rounded to a micrometre: below any drawing's precision, above float noise
    if p.nodes is not None:
        (xi, yi, zi), (xj, yj, zj) = np.round(p.nodes, 6).tolist()
        row.update(x_i_m=xi, y_i_m=yi, z_i_m=zi, x_j_m=xj, y_j_m=yj, z_j_m=zj,
                   length_m=round(float(np.linalg.norm(p.nodes[1] - p.nodes[0])), 6))
    if p.role == "column":  # faces where the beams meet it (_column_faces)
        ends = ends or [("column", 0.0)] * 2
    (si, fi), (sj, fj) = ends or [("free", 0.0)] * 2
    row.update(support_i=si, support_j=sj, face_i_mm=round(fi * 1e3, 3), face_j_mm=round(fj * 1e3, 3))
    fc = m.fc_mpa(entity, materials)
    cover, d = m.depth_values(entity)
    row["fc_mpa"] = fc if fc is not None else defaults.fc_mpa
    defaulted = []
    if fc is None:
        defaulted.append(f"f'c not in the model; {defaults.shown('fc_mpa')} taken from the settings")
    if p.section is not None and p.section.diameter_mm is not None:  # a circular column: d = 0.8 D (22.5.2.2)
        D = round(p.section.diameter_mm, 3)
        if cover is None:
            cover = defaults.cover_mm
            defaulted.append(f"cover not in the model; {defaults.shown('cover_mm')} taken from the settings")
        row.update(diameter_mm=D, d_mm=0.8 * D, cover_mm=cover)
    elif p.section is not None:
        s = p.section
        row.update({k: None if v is None else round(v, 3) for k, v in
                    (("b_mm", s.b_mm), ("h_mm", s.h_mm), ("bf_mm", s.bf_mm), ("hf_mm", s.hf_mm))})
        if d is None and cover is None:
            cover = defaults.cover_mm
            defaulted.append(f"cover not in the model; {defaults.shown('cover_mm')} taken from the settings")
        row["d_mm"] = d if d is not None else row["h_mm"] - cover
        row["cover_mm"] = row["h_mm"] - row["d_mm"]
    if row["invalid_reason"] is None and (steel := _steel_material(materials)):
        row["invalid_reason"] = f"material '{steel}' is steel: not a reinforced-concrete section"
    row.update(m.frame_values(entity))
    if p.role == "column":
        row.update(m.column_values(entity))
    if row["invalid_reason"] is None:
        row["invalid_reason"] = _value_problem(row) or _frame_problem(row, p.role)
    if row["invalid_reason"] is None and p.role == "beam" and (si, sj) == ("free", "free"):
        # as members.csv refuses both ends free: a member that rests on nothing is not designed
        row["invalid_reason"] = (f"no support found at either end within {defaults.tolerance_mm:g} mm "
                                 "([ifc] tolerance_mm): a member needs at least one support; check the model")
    if row["invalid_reason"] is None and (p.role == "beam" or row.get("db_long_mm") is not None):
        warnings.extend(f"member {member}: {what}" for what in defaulted)  # columns: where they are designed
    return row


def _table(rows: list[dict]) -> pa.Table:
    fields = [pa.field(c.name, pa.float64() if c.numeric else pa.string()) for c in MEMBER_COLUMNS]
    fields += [pa.field(n, pa.string() if n in ("invalid_reason", "source_id") else pa.float64())
               for n in EXTRA_COLUMNS]
    schema = pa.schema(fields)
    return pa.table({f.name: pa.array([r.get(f.name) for r in rows], f.type) for f in schema}, schema=schema)


def length_mismatches(lengths_m: dict[str, float], forces: pa.Table, tolerance_mm: float) -> list[str]:
    """Members whose IFC length and the force table's last station differ by more than the tolerance."""
    grouped = forces.group_by("member").aggregate([("x_m", "max")])
    out = []
    for m, x_last in zip(grouped.column("member").to_pylist(), grouped.column("x_m_max").to_pylist()):
        L = lengths_m.get(m)
        if L is not None and abs(L - x_last) * 1000.0 > tolerance_mm:
            out.append(f"member {m}: IFC length {L:.3f} m, but the forces table runs to x = {x_last:.3f} m")
    return out
