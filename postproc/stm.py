"""Strut-and-tie design of deep beams and end D-regions (ACI 318-19 Chapter 23 and 9.9).

A member is a deep beam by 9.9.1.1 when its clear span is at most 4h, or when a
concentrated load acts within 2h of a bearing face. This module builds a strut-and-tie
model for the members it can model, checks it for every load combination, and returns
per member a status (``designed``, ``resize`` or ``not-modelled`` with the reason), the
tie steel with its anchorage, the distributed web reinforcement, and every node, strut
and tie with its geometry, force, capacity, utilization and clause.

Scope (said per member in ``reason`` when a member falls outside it)
    Modelled: single-span beams on two bearing supports (column or wall) loaded on the
    top face by downward point loads and a uniform load: (a) deep by span, ln <= 4h,
    modelled whole; (b) otherwise slender, with point loads within 2h of a bearing face:
    the end region (D-region) from the bearing to its B-region boundary.
    Not modelled: a free end (cantilever), an indirect support (girder, hanger) at an end
    a model bears on (the far end of an end region does not matter), hung (bottom-face)
    loads, web openings, continuous deep beams, upward loads, a hogging moment at a
    modelled bearing (a restrained end is a beam-column joint region), a given face shear
    that reverses (the bearing pulling down), and a model whose struts would meet a tie at
    less than 25 degrees (23.2.7). Axial tension, where given, is added whole to the bottom
    tie, axial compression whole to the top chord and the thrust at the top nodes
    (conservative: the other chord is not relieved).

Model-building rules (all lengths in mm along the member from the inner face of the
bearing at end i, the clear-span coordinate; heights from the soffit)
    Bearing nodes sit at the centroid of each bearing length (the column or wall width
    along the member), at the tie height. The tie is at the centroid of the bottom steel,
    h - d above the soffit, and its nodal zone is wt = 2 (h - d) tall. The top chord is a
    boundary strut of depth a whose centroid is a/2 below the top; the lever arm is
    z = d - a/2. a is the least depth for which the largest horizontal thrust through a top
    node stays within phi 0.85 beta_n f'c a bw (beta_n of that node), but not less than wt
    (common practice: the top node as tall as the bottom one); it can be fixed per member.
    a, z and the geometry are iterated together (a few passes, vectorised).

    Point loads act at their positions on the top chord, each over the loaded width (a
    column's width, a setting). The uniform load acts on the clear span; between
    neighbouring point loads (or a load and a bearing or region boundary) it is cut into m
    equal segments, each replaced by its resultant at the segment's middle (a top node).
    Resultants are statically equivalent and give moments no smaller than the distributed
    load's anywhere in the span, so the chords are not underestimated. Where an interval's
    loaded length l is under 2 z cot 65 deg (a resultant there would make too steep a
    panel) its load goes half to each end instead, and both chords of that panel carry the
    extra w l^2/(8 z) of the load lumped away (an allowance of this module, conservative). Load falling on a bearing goes
    straight into it (it loads the bearing face, not the truss). m is the least number
    that keeps every panel at most z cot 25 deg long; intervals without distributed load
    get equally spaced unloaded nodes for the same purpose.

    Load paths (per combination, so the envelope covers patterns that move the point of
    zero shear): each top node between a bearing and the point of zero shear sends its
    load down a direct strut to that bearing ("fan") when the node is within z cot 25 deg
    of the bearing centroid; nodes farther away pass their shear through a Pratt truss:
    diagonal struts falling toward the bearing and vertical ties (stirrups spread over
    the node's tributary length, half of each neighbouring panel) lifting it to the next
    node, until it reaches the last node the fan reaches. The node of zero shear splits its
    load between the two sides. The bottom tie runs between the bearings; its force is
    the moment at the governing node over z. Member forces follow by statics and every
    node of every truss is checked for equilibrium (``truss_residuals``), a defect if not.

    An end region (9.9.1.1(b)) runs from its bearing to h beyond the last point load that
    lies within 2h of the face (or within h of a load already in the region: Saint-Venant).
    The region's truss starts from the shear entering at the face: the given face shear
    of the frame analysis (``DeepLoads.face_shear_*``) or, where not given, the simply
    supported reaction. A given face moment must leave no moment at the bearing centroid
    (M_face - V_face lb/2 within 5 % of V_face h): a restrained end is refused. Where the
    two end regions meet, the whole member is modelled; a deep member (ln <= 4h) is always
    modelled whole with the simply supported statics of its loads.

Checks (phi = 0.75, Table 21.2.1)
    Struts (23.4): phi 0.85 beta_c beta_s f'c at both ends; width = the strut's share of
    the node's length x sin(theta) + the node's height x cos(theta). A node's length is the
    bearing length, the loaded width (a point load's, or a load resultant's segment), or
    where a stirrup tie is anchored the tie's spread if longer; it is shared among the
    node's struts in proportion to their vertical components. Heights: a at top nodes,
    the tie height at bearings and at the foot of a diagonal. beta_s = 1.0
    for the top chord (boundary strut), 0.75 for fans and diagonals where the web grid
    meets Table 23.5.1 and 23.5.2, else 0.4; beta_c = 1.0 (no confinement credit).
    Nodes (23.9): every face (bearing, load, horizontal thrust over a, each strut end) at
    phi 0.85 beta_n f'c, beta_n by node type (Table 23.9.2). A tie anchored by bond loads no
    back face; its height in a bearing node is taken at most wt,max = Fnt / (fce bw) with
    fce of a CCT node (commentary to 23.8, from memory). Angles: 23.2.7.
    Ties (23.7): As = Fu / (phi fy); stirrup ties Av/s = Fu / (phi fyt spread).
    Anchorage (23.8.3): the bottom tie is developed from where its centroid leaves the
    extended nodal zone, (wt/2) cot(theta) inside the bearing's inner edge (theta of the
    steepest fan strut, conservative), to the bar end (member end less the end cover):
    straight bar by Table 25.4.2.3 (simplified, psi_t = 1 for bottom bars) or standard hook
    by 25.4.3.1 (psi_r = 1.6, psi_o = 1.25 unless set). The tie bar is the largest of a
    ladder (#25 down to #16) whose anchorage fits at every bearing of the member, unless
    the member names it.
    Deep beam: Vu <= phi 0.83 sqrt(f'c) bw d (9.9.2.1); Av/s and Ah/s >= 0.0025 bw at a
    spacing <= min(d/5, 300 mm) (9.9.3.1, 9.9.4.3), which also meets 23.5 for beta_s = 0.75.
    Over an end region the 9.9 reinforcement is given for that region; 9.9.1.1 names the
    whole member a deep beam, so the engineer confirms how far it runs.

Envelope: every check is made for every combination; an element's or face's result is
its largest utilization over the combinations, with that combination's name.

Not done here: the fit of the tie bars in the section (layers, spacing), the reduction of
ld for excess steel (25.4.10), headed or mechanical anchorage (25.4.4, 25.4.5), the
beta_c confinement credit, the flexural design of a B-region, hogging (continuous or
restrained) deep members, and the serviceability of deep beams.

Vectorised: model building (anchors, load lumping, node generation), statics, load
routing, element forces, widths and every check run as numpy arrays over all models
(members or end regions) and all combinations at once; ragged per-model lists are kept
as flat arrays with offsets. Only table assembly touches Python objects.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from postproc import units
from postproc.codes import aci318_19_stm as code
from postproc.codes.aci318_19 import SI, US, Edition
from postproc.settings import BAR_CATALOGUE, BAR_CATALOGUE_US, Detailing, DetailingUS, bar_catalogue

# ASTM A615/A615M Table 1: nominal diameter (mm) and area (mm^2) of deformed bars (from memory
# for #22 and larger; #10 to #19 as in the project's catalogue).
TIE_BARS = {**BAR_CATALOGUE, "#22": (22.2, 387.0), "#25": (25.4, 510.0), "#29": (28.7, 645.0),
            "#32": (32.3, 819.0), "#36": (35.8, 1006.0)}
# ... and the same bars in inches and in^2 under their inch-pound designations (from memory
# for #7 and larger; #3 to #6 as in the project's catalogue).
TIE_BARS_US = {**BAR_CATALOGUE_US, "#7": (0.875, 0.60), "#8": (1.000, 0.79), "#9": (1.128, 1.00),
               "#10": (1.270, 1.27), "#11": (1.410, 1.56)}
# 1 kN*m, the least face moment taken as a restrained end, in the edition's units (N*mm or lb*in)
MOMENT_TOLERANCE = {"si": 1e6, "us": 1e6 / (4.4482216152605 * 25.4)}


def tie_bars(u: Edition = SI) -> dict[str, tuple[float, float]]:
    return TIE_BARS if u.units == "si" else TIE_BARS_US

TAN25 = np.tan(np.radians(code.MIN_STRUT_TIE_ANGLE_DEG))
TAN65 = np.tan(np.radians(90.0 - code.MIN_STRUT_TIE_ANGLE_DEG))
BEARING = ("column", "wall")

# point kinds along a model
_A, _LOAD, _UDL, _SUB, _BOUNDARY, _B = 0, 1, 2, 3, 4, 5
# element kinds
_FAN_A, _FAN_B, _DIAG_L, _DIAG_R, _VERT, _TOP, _BOT = range(7)
KIND_NAMES = {_FAN_A: "fan strut", _FAN_B: "fan strut", _DIAG_L: "diagonal strut", _DIAG_R: "diagonal strut",
              _VERT: "vertical tie", _TOP: "top chord", _BOT: "bottom tie"}
STRUT_KINDS = (_FAN_A, _FAN_B, _DIAG_L, _DIAG_R, _TOP)


class StmSelfCheckError(AssertionError):
    """A truss built here is not in equilibrium: a defect of this module, never a result."""


@dataclass(frozen=True)
class DeepMembers:
    """Members to design, one entry per member (arrays of equal length, in the units of
    ``StmOptions.u``: mm, MPa, or in, psi).

    ``clear_span`` is face to face of the bearings; ``bearing_i``/``bearing_j`` the bearing
    lengths along the member (column or wall widths); ``d`` the depth of the tie centroid.
    Optional arrays default to: load on the top face, no opening, not continuous, member
    ending at the outer face of each bearing (``extension_* = bearing_*``), the loaded
    width of point loads from ``StmOptions``, lambda = 1, the tie bar chosen from
    ``StmOptions.tie_bar_ladder`` ('' = choose), and a top strut depth sized by the design
    (NaN).
    """

    member: np.ndarray
    clear_span: np.ndarray
    h: np.ndarray
    bw: np.ndarray
    d: np.ndarray
    fc: np.ndarray
    fy: np.ndarray
    fyt: np.ndarray
    bearing_i: np.ndarray
    bearing_j: np.ndarray
    support_i: np.ndarray
    support_j: np.ndarray
    load_face: np.ndarray | None = None
    opening: np.ndarray | None = None
    continuous: np.ndarray | None = None
    extension_i: np.ndarray | None = None
    extension_j: np.ndarray | None = None
    point_width: np.ndarray | None = None
    lam: np.ndarray | None = None
    tie_bar: np.ndarray | None = None
    top_strut_depth: np.ndarray | None = None


@dataclass(frozen=True)
class DeepLoads:
    """Factored loads per combination (K combinations; N and mm, or lb and in; downward positive).

    ``point_member`` indexes ``DeepMembers``; ``point_x`` is measured from the inner face of
    bearing i; ``point_load`` is (K, number of point loads); ``udl`` (K, members) in N/mm
    (lb/in) acts over the clear span. ``face_shear_*`` (shear entering the member at the bearing
    face, positive as the bearing's upward reaction) and ``face_moment_*`` (sagging
    positive), (K, members), are optional frame results for end regions; NaN = not given.
    ``axial_tension`` (K, members), N >= 0: axial tension the bottom tie carries on top of
    the truss forces; ``axial_compression`` (K, members), N >= 0: axial compression the top
    chord and the thrust at the top nodes carry on top of theirs (each the whole force, the
    other chord not relieved: conservative).
    """

    combinations: tuple[str, ...]
    point_member: np.ndarray
    point_x: np.ndarray
    point_load: np.ndarray
    udl: np.ndarray
    face_shear_i: np.ndarray | None = None
    face_moment_i: np.ndarray | None = None
    face_shear_j: np.ndarray | None = None
    face_moment_j: np.ndarray | None = None
    axial_tension: np.ndarray | None = None
    axial_compression: np.ndarray | None = None


@dataclass(frozen=True)
class StmOptions:
    """Settings of the strut-and-tie design; defaults are common practice. Lengths in the
    units of the edition ``u`` (mm, or in: ``StmOptions.for_units("us")`` has the inch-pound
    defaults and bars)."""

    point_width: float = 300.0  # loaded width of a point load along the member (column width)
    tie_bar_ladder: tuple[str, ...] = ("#25", "#22", "#19", "#16")  # the largest bar that anchors is taken
    end_cover: float = 50.0  # from the end of the member to the end of the tie bars
    straight_bar_spacing_ok: bool = False  # Table 25.4.2.3 first row (spacing, cover, stirrups) applies
    hook_psi_r: float = 1.6  # Table 25.4.3.2: 1.6 unless confining ties are shown
    hook_psi_o: float = 1.25  # Table 25.4.3.2: 1.25 unless inside a column core with 65 mm | 2.5 in side cover
    beta_c: float = 1.0  # 23.4.3, 23.9.3: confinement credit not taken
    region_beyond_load_h: float = 1.0  # D-region reaches this many h beyond its last point load
    stirrup_ladder: tuple[tuple[str, int], ...] = Detailing().ladder
    web_bar_ladder: tuple[tuple[str, int], ...] = (("#10", 2), ("#13", 2), ("#16", 2), ("#19", 2))
    spacing_module: float = Detailing().spacing_module
    min_spacing: float = Detailing().min_spacing
    u: Edition = SI  # the edition (and units) of the members, loads and tables

    @staticmethod
    def for_units(name: str) -> StmOptions:
        """The defaults of a unit system: SI above; inch-pound a 12 in loaded width, 2 in end
        cover, #8 to #5 tie bars, the inch-pound stirrup ladder, #3 to #6 web bars, a 1 in
        module and 3 in least spacing (common practice, as the SI values)."""
        if name == "si":
            return StmOptions()
        d = DetailingUS()
        return StmOptions(point_width=12.0, tie_bar_ladder=("#8", "#7", "#6", "#5"), end_cover=2.0,
                          stirrup_ladder=d.ladder, web_bar_ladder=(("#3", 2), ("#4", 2), ("#5", 2), ("#6", 2)),
                          spacing_module=d.spacing_module, min_spacing=d.min_spacing, u=US)


@dataclass
class Truss:
    """Every model's truss with per-combination member forces (internal, for checks and tests).

    Node slots: top node of point p is p, bottom node is N + p. Element forces ``force``
    (K, E) are tension-positive statics; ``design_force`` adds the chord allowance for
    distributed load lumped to panel ends."""

    model_member: np.ndarray
    model_end: np.ndarray
    model_mirrored: np.ndarray
    model_ln: np.ndarray
    point_model: np.ndarray
    point_s: np.ndarray
    point_kind: np.ndarray
    point_k: np.ndarray
    offsets: np.ndarray
    node_x: np.ndarray
    node_y: np.ndarray
    node_used: np.ndarray
    node_checked: np.ndarray
    top_load: np.ndarray
    reaction_a: np.ndarray
    reaction_b: np.ndarray
    el_kind: np.ndarray
    el_model: np.ndarray
    el_n1: np.ndarray
    el_n2: np.ndarray
    el_point: np.ndarray
    force: np.ndarray
    design_force: np.ndarray
    a: np.ndarray
    z: np.ndarray


@dataclass
class StmDesign:
    """Results: ``members`` one row per input member; ``models`` one per truss (whole member
    or end region); ``nodes``, ``faces``, ``struts``, ``ties`` one row per item, with
    coordinates in the member's clear-span frame (x from the inner face of bearing i, y
    from the soffit), for an explanation trace and a drawing of the truss."""

    members: pd.DataFrame
    models: pd.DataFrame
    nodes: pd.DataFrame
    faces: pd.DataFrame
    struts: pd.DataFrame
    ties: pd.DataFrame
    truss: Truss
    combinations: tuple[str, ...] = field(default_factory=tuple)


# --- input normalisation ---------------------------------------------------------------

def _arr(v, n, default, dtype=float):
    if v is None:
        return np.full(n, default, dtype=dtype)
    out = np.asarray(v, dtype=dtype)
    return np.broadcast_to(out, (n,)).copy() if out.ndim == 0 else out


def _members(m: DeepMembers, opts: StmOptions) -> dict:
    n = len(m.member)
    out = {k: np.asarray(getattr(m, k), dtype=float) for k in
           ("clear_span", "h", "bw", "d", "fc", "fy", "fyt", "bearing_i", "bearing_j")}
    for k, v in out.items():
        if v.shape != (n,):
            raise ValueError(f"DeepMembers.{k} has shape {v.shape}; expected ({n},)")
    out["member"] = np.asarray(m.member, dtype=object)
    out["support_i"] = np.asarray(m.support_i, dtype=object)
    out["support_j"] = np.asarray(m.support_j, dtype=object)
    out["load_face"] = _arr(m.load_face, n, "top", object)
    out["opening"] = _arr(m.opening, n, False, bool)
    out["continuous"] = _arr(m.continuous, n, False, bool)
    out["extension_i"] = _arr(m.extension_i, n, np.nan)
    out["extension_j"] = _arr(m.extension_j, n, np.nan)
    out["extension_i"] = np.where(np.isnan(out["extension_i"]), out["bearing_i"], out["extension_i"])
    out["extension_j"] = np.where(np.isnan(out["extension_j"]), out["bearing_j"], out["extension_j"])
    out["point_width"] = _arr(m.point_width, n, opts.point_width)
    out["lam"] = _arr(m.lam, n, 1.0)
    out["tie_bar"] = _arr(m.tie_bar, n, "", object)
    out["tie_bar"] = np.where(pd.isna(out["tie_bar"]), "", out["tie_bar"]).astype(object)
    out["top_strut_depth"] = _arr(m.top_strut_depth, n, np.nan)
    bad = ~((out["h"] > 0) & (out["bw"] > 0) & (out["d"] > out["h"] / 2) & (out["d"] < out["h"])
            & (out["fc"] > 0) & (out["fy"] > 0) & (out["fyt"] > 0) & (out["clear_span"] > 0)
            & (out["bearing_i"] >= 0) & (out["bearing_j"] >= 0))
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        raise ValueError(f"member {out['member'][k]!r}: needs h, bw, f'c, fy, fyt, clear span > 0, "
                         f"h/2 < d < h and bearing lengths >= 0")
    bars = tie_bars(opts.u)
    unknown = ~np.isin(out["tie_bar"], list(bars) + [""])
    if unknown.any():
        raise ValueError(f"member {out['member'][np.flatnonzero(unknown)[0]]!r}: unknown tie bar; "
                         f"known: {', '.join(bars)}")
    return out


def _loads(ld: DeepLoads, n: int) -> dict:
    K = len(ld.combinations)
    if K == 0:
        raise ValueError("DeepLoads needs at least one load combination")
    pm = np.asarray(ld.point_member, dtype=np.int64)
    px = np.asarray(ld.point_x, dtype=float)
    pP = np.asarray(ld.point_load, dtype=float).reshape(K, len(pm))
    w = np.asarray(ld.udl, dtype=float)
    if w.shape != (K, n):
        raise ValueError(f"DeepLoads.udl has shape {w.shape}; expected ({K}, {n})")
    if len(px) != len(pm) or (len(pm) and (pm.min() < 0 or pm.max() >= n)):
        raise ValueError("DeepLoads.point_member must index the members, one entry per point_x")
    if not (np.isfinite(px).all() and np.isfinite(pP).all() and np.isfinite(w).all()):
        raise ValueError("DeepLoads: positions and loads must be finite numbers")
    face = {}
    for k in ("face_shear_i", "face_moment_i", "face_shear_j", "face_moment_j"):
        v = getattr(ld, k)
        face[k] = np.full((K, n), np.nan) if v is None else np.asarray(v, dtype=float).reshape(K, n)
    axial = {}
    for key, name in (("nt", "axial_tension"), ("nc", "axial_compression")):
        v = getattr(ld, name)
        axial[key] = np.zeros((K, n)) if v is None else np.asarray(v, dtype=float).reshape(K, n)
        if not np.isfinite(axial[key]).all() or (axial[key] < 0).any():
            raise ValueError(f"DeepLoads.{name} must be finite and not negative (N)")
    return dict(K=K, pm=pm, px=px, pP=pP, w=w, **axial, **face)


# --- scope and models ------------------------------------------------------------------

def _scope_reasons(M: dict, L: dict) -> np.ndarray:
    """Why a member is outside this module's scope ('' where it is inside)."""
    n = len(M["member"])
    why = np.full(n, "", dtype=object)

    def note(mask, text):
        why[mask & (why == "")] = text

    note((M["support_i"] == "free") | (M["support_j"] == "free"),
         "cantilever (free end): not supported on the face opposite its loads; the bracket or cantilever "
         "truss is not built here")
    for end in ("i", "j"):
        s = M[f"support_{end}"]
        note(~np.isin(s, BEARING + ("free", "girder", "hanger")), f"unknown support kind at end {end}")
    note(M["load_face"] != "top", "hung loads (loads on the bottom face): the hanger ties that lift them to the top "
                                  "are not modelled here")
    note(M["opening"], "opening in the web: the strut-and-tie model around an opening is not built here")
    note(M["continuous"], "continuous deep beam: statically indeterminate with support moments; not modelled here")
    up = (L["w"] < 0).any(axis=0)
    if len(L["pm"]):
        up |= np.bincount(L["pm"], weights=(L["pP"] < 0).any(axis=0), minlength=n) > 0
    note(up, "upward load in a combination: the reversed load path (uplift) is not modelled here")
    return why


def _end_reasons(M: dict, L: dict, uses_i: np.ndarray, uses_j: np.ndarray) -> np.ndarray:
    """Why a bearing a model uses cannot be modelled ('' where it can): an indirect support,
    no bearing length, or a frame shear at the face of an end region that reverses."""
    n = len(M["member"])
    why = np.full(n, "", dtype=object)
    for end, uses in (("i", uses_i), ("j", uses_j)):
        s = M[f"support_{end}"]
        for kind in ("girder", "hanger"):
            why[uses & (s == kind) & (why == "")] = (
                f"indirect support at end {end} ({kind}): the reaction enters through a hanger tie and the "
                "supporting member's node, which are not modelled here")
        why[uses & (M[f"bearing_{end}"] <= 0) & (why == "")] = (
            f"no bearing length at end {end} (support width along the member): the bearing node cannot be checked")
        fs = L[f"face_shear_{end}"]
        scale = np.nanmax(np.abs(fs), axis=0, initial=0.0) if fs.size else np.zeros(n)
        reverses = (np.nan_to_num(fs, nan=0.0) < -(1e-6 * scale + 1.0)).any(axis=0)
        why[uses & reverses & (why == "")] = (
            f"the shear at the face of end {end} reverses in a combination (the bearing pulls down, e.g. frame action "
            "under lateral load): the truss is built for loads carried down to the bearing")
    return why


def _region_bounds(M: dict, L: dict, opts: StmOptions):
    """Boundaries of the end regions of slender members (9.9.1.1(b)): from the face to
    region_beyond_load_h x h beyond the last point load within 2h of the face, grown over
    loads within that reach."""
    n = len(M["member"])
    ln, h = M["clear_span"], M["h"]
    pm, px = L["pm"], L["px"]
    active = (px > 0) & (px < ln[pm]) & (L["pP"] != 0).any(axis=0) if len(pm) else np.zeros(0, bool)
    reach = opts.region_beyond_load_h * h
    xb_i = np.full(n, -np.inf)
    xb_j = np.full(n, np.inf)
    near_i = active & (px <= 2 * h[pm])
    near_j = active & (px >= ln[pm] - 2 * h[pm])
    np.maximum.at(xb_i, pm[near_i], px[near_i] + reach[pm[near_i]])
    np.minimum.at(xb_j, pm[near_j], px[near_j] - reach[pm[near_j]])
    for _ in range(len(px) + 1):
        grow_i = active & (px < xb_i[pm])
        grow_j = active & (px > xb_j[pm])
        new_i, new_j = xb_i.copy(), xb_j.copy()
        np.maximum.at(new_i, pm[grow_i], px[grow_i] + reach[pm[grow_i]])
        np.minimum.at(new_j, pm[grow_j], px[grow_j] - reach[pm[grow_j]])
        if np.array_equal(new_i, xb_i) and np.array_equal(new_j, xb_j):
            break
        xb_i, xb_j = new_i, new_j
    return np.isfinite(xb_i), xb_i, np.isfinite(xb_j), xb_j


@dataclass
class _Models:
    member: np.ndarray
    name: np.ndarray  # the member's id
    end: np.ndarray
    mirrored: np.ndarray
    whole: np.ndarray
    ln: np.ndarray  # member clear span
    s_end: np.ndarray  # local position of the last point (bearing B centroid or region boundary)
    udl_end: np.ndarray  # the uniform load acts on [0, udl_end] (local)
    lbA: np.ndarray
    lbB: np.ndarray
    extA: np.ndarray
    extB: np.ndarray
    h: np.ndarray
    bw: np.ndarray
    d: np.ndarray
    fc: np.ndarray
    fy: np.ndarray
    fyt: np.ndarray
    lam: np.ndarray
    lp: np.ndarray
    a_fixed: np.ndarray
    w: np.ndarray  # (K, nm)
    ra_given: np.ndarray  # (K, nm), NaN for whole models (statics of the lumped loads)
    direct_a: np.ndarray  # (K, nm) load straight into bearing A
    direct_b: np.ndarray
    nt: np.ndarray  # (K, nm) axial tension added to the bottom tie
    nc: np.ndarray  # (K, nm) axial compression added to the top chord and the thrust at the top nodes
    pm: np.ndarray  # point loads in the model, local coordinates
    ps: np.ndarray
    pP: np.ndarray


def _build_models(M: dict, L: dict, reasons: np.ndarray, opts: StmOptions) -> tuple[_Models, np.ndarray, np.ndarray]:
    """One model per deep member, one per end region of a slender member; more reasons."""
    n = len(M["member"])
    K = L["K"]
    ln, h, lbi, lbj = M["clear_span"], M["h"], M["bearing_i"], M["bearing_j"]
    deep_span = ln <= 4.0 * h  # 9.9.1.1(a)
    has_i, xb_i, has_j, xb_j = _region_bounds(M, L, opts)
    whole = deep_span | (has_i & has_j & (xb_i >= xb_j)) | (has_i & (xb_i >= ln)) | (has_j & (xb_j <= 0))
    ok = reasons == ""
    why = reasons.copy()
    why[ok & ~whole & ~has_i & ~has_j] = ("not a deep beam by 9.9.1.1 (clear span > 4h and no concentrated load "
                                          "within 2h of a bearing face): design sectionally")
    # the bearing of an end region: its face shear enters the truss; the far end's support does not
    ends = _end_reasons(M, L, whole | has_i, whole | has_j)
    why[(why == "") & (ends != "")] = ends[(why == "") & (ends != "")]
    # face moments: a restrained (hogging) end is not a bearing node
    lb = {"i": lbi, "j": lbj}
    hog = {}
    for end in ("i", "j"):
        V, Mf = L[f"face_shear_{end}"], L[f"face_moment_{end}"]
        given = np.isfinite(V) & np.isfinite(Mf)
        m_centroid = np.where(given, Mf - np.nan_to_num(V) * lb[end][None] / 2, 0.0)
        tol = 0.05 * np.abs(np.nan_to_num(V)) * h[None] + MOMENT_TOLERANCE[opts.u.units]
        hog[end] = (np.abs(m_centroid) > tol).any(axis=0)
    ok = why == ""
    for end in ("i", "j"):
        bad = ok & hog[end] & (whole | (has_i if end == "i" else has_j))
        why[bad] = (f"moment at bearing {end} from the frame analysis: the truss is built for simple bearings only "
                    "(a restrained, hogging end is a beam-column joint region)")
    ok = why == ""
    pm, px, pP = L["pm"], L["px"], L["pP"]
    # simply supported truss reactions (loads on the bearings excluded) for end regions without face shear
    sA, sB = -lbi / 2, ln + lbj / 2
    span = sB - sA
    inside = (px > 0) & (px < ln[pm])
    ri = np.zeros((K, n))
    rj = np.zeros((K, n))
    if len(pm):
        np.add.at(ri.T, pm[inside], (pP[:, inside] * ((sB[pm] - px) / span[pm])[inside]).T)
        np.add.at(rj.T, pm[inside], (pP[:, inside] * ((px - sA[pm]) / span[pm])[inside]).T)
    ri += L["w"] * ln * (sB - ln / 2) / span
    rj += L["w"] * ln * (ln / 2 - sA) / span

    sel = {"whole": ok & whole, "i": ok & ~whole & has_i, "j": ok & ~whole & has_j}
    mm = np.concatenate([np.flatnonzero(v) for v in sel.values()]).astype(np.int64)
    end = np.concatenate([np.full(int(v.sum()), k, dtype=object) for k, v in sel.items()])
    order = np.lexsort((end == "j", mm))  # a member's models together, end i before end j
    mm, end = mm[order], end[order]
    mir = end == "j"
    wh = end == "whole"
    g = lambda a: a[mm]  # noqa: E731
    s_end = np.where(wh, g(ln) + g(lbj) / 2, np.where(mir, g(ln) - g(xb_j), g(xb_i)))
    udl_end = np.where(wh, g(ln), s_end)
    lbA = np.where(mir, g(lbj), g(lbi))
    lbB = np.where(wh, g(lbj), np.nan)
    extA = np.where(mir, g(M["extension_j"]), g(M["extension_i"]))
    extB = np.where(wh, g(M["extension_j"]), np.nan)
    ra = np.where(wh[None], np.nan, np.where(mir[None], rj[:, mm], ri[:, mm]))
    fs = np.where(mir[None], L["face_shear_j"][:, mm], L["face_shear_i"][:, mm])
    ra = np.where(~wh[None] & np.isfinite(fs), fs, ra)
    # point loads per model, in local coordinates
    # every (model, point load of its member) pair, without a loop: a member has 0, 1 or 2 models
    per_member = np.bincount(mm, minlength=n)
    first_model = np.concatenate([[0], np.cumsum(per_member)])[:-1]
    idx, j = _segments(per_member[pm]) if len(pm) else (np.zeros(0, np.int64), np.zeros(0, np.int64))
    pair_model = first_model[pm[idx]] + j - 1 if len(pm) else np.zeros(0, np.int64)
    xl = np.where(mir[pair_model], ln[pm[idx]] - px[idx], px[idx])
    upper = np.where(wh[pair_model], ln[pm[idx]], s_end[pair_model])
    in_model = (xl > 0) & (xl < upper)
    on_a = xl <= 0
    on_b = wh[pair_model] & (xl >= ln[pm[idx]])
    direct_a = np.zeros((K, len(mm)))
    direct_b = np.zeros((K, len(mm)))
    np.add.at(direct_a.T, pair_model[on_a], pP[:, idx[on_a]].T)
    np.add.at(direct_b.T, pair_model[on_b], pP[:, idx[on_b]].T)
    models = _Models(
        member=mm, name=M["member"][mm], end=end, mirrored=mir, whole=wh, ln=g(ln), s_end=s_end, udl_end=udl_end,
        lbA=lbA, lbB=lbB, extA=extA, extB=extB, h=g(h), bw=g(M["bw"]), d=g(M["d"]), fc=g(M["fc"]),
        fy=g(M["fy"]), fyt=g(M["fyt"]), lam=g(M["lam"]), lp=g(M["point_width"]), a_fixed=g(M["top_strut_depth"]),
        w=L["w"][:, mm], ra_given=ra, direct_a=direct_a, direct_b=direct_b, nt=L["nt"][:, mm], nc=L["nc"][:, mm],
        pm=pair_model[in_model], ps=xl[in_model], pP=pP[:, idx[in_model]])
    region = np.full(n, "", dtype=object)
    region[ok & whole] = "whole member (9.9.1.1(a))"
    region[ok & whole & ~deep_span] = "whole member (end regions meet)"
    region[ok & ~whole & has_i & has_j] = "end regions i and j (9.9.1.1(b))"
    region[ok & ~whole & has_i & ~has_j] = "end region i (9.9.1.1(b))"
    region[ok & ~whole & ~has_i & has_j] = "end region j (9.9.1.1(b))"
    return models, why, region


# --- geometry: panel points ---------------------------------------------------------------

@dataclass
class _Points:
    model: np.ndarray
    s: np.ndarray
    kind: np.ndarray
    k: np.ndarray
    Q: np.ndarray  # (K, N) top load
    lw: np.ndarray  # loaded width
    bulge: np.ndarray  # (N,) w l^2/8 coefficient for the panel to the right (tributary lumping)
    offsets: np.ndarray
    direct_a: np.ndarray
    direct_b: np.ndarray

    @property
    def top(self):
        return (self.kind != _A) & (self.kind != _B)


def _segments(counts: np.ndarray):
    """For ragged groups of the given sizes: group index and 1-based position of each item."""
    grp = np.repeat(np.arange(len(counts)), counts)
    pos = np.arange(len(grp)) - np.repeat(np.cumsum(counts) - counts, counts) + 1
    return grp, pos


def _points(md: _Models, z: np.ndarray) -> _Points:
    """Panel points of every model for lever arm z: bearings, point loads, resultants of the
    uniform load and unloaded nodes. Panels are kept within [z cot 65, z cot 25] where the
    loads allow, with 3 % margin each way so that the final z (a little different) keeps them."""
    nm = len(md.member)
    K = md.w.shape[0]
    p_max = 0.97 * z / TAN25
    p_min = 1.03 * z / TAN65
    ids = np.arange(nm)
    a_model = np.concatenate([ids, md.pm, ids])
    a_s = np.concatenate([-md.lbA / 2, md.ps, md.s_end])
    a_kind = np.concatenate([np.full(nm, _A), np.full(len(md.pm), _LOAD), np.where(md.whole, _B, _BOUNDARY)])
    a_P = np.concatenate([np.zeros((K, nm)), md.pP, np.zeros((K, nm))], axis=1)
    a_lw = np.concatenate([np.zeros(nm), md.lp[md.pm], np.zeros(nm)])
    order = np.lexsort((a_kind, a_s, a_model))
    a_model, a_s, a_kind, a_P, a_lw = a_model[order], a_s[order], a_kind[order], a_P[:, order], a_lw[order]
    new = np.ones(len(a_s), bool)
    new[1:] = (a_model[1:] != a_model[:-1]) | (a_s[1:] - a_s[:-1] > 0.5)  # loads at one position merge
    start = np.flatnonzero(new)
    a_model, a_s, a_lw = a_model[start], a_s[start], np.maximum.reduceat(a_lw, start)
    a_kind = np.maximum.reduceat(a_kind, start)
    a_P = np.add.reduceat(a_P, start, axis=1)
    direct_a = md.direct_a.copy()
    direct_b = md.direct_b.copy()

    # intervals between consecutive anchors of one model
    i0 = np.flatnonzero(a_model[1:] == a_model[:-1])
    mdl = a_model[i0]
    u, v = a_s[i0], a_s[i0 + 1]
    lo = np.maximum(u, 0.0)
    hi = np.minimum(v, md.udl_end[mdl])
    lu = np.clip(hi - lo, 0.0, None)
    has_w = (md.w > 0).any(axis=0)[mdl]
    pmx, pmn = p_max[mdl], p_min[mdl]
    udl = has_w & (lu > 0) & (lu >= 2 * pmn)
    trib = has_w & (lu > 0) & ~udl
    off_u, off_v = lo - u, v - hi
    with np.errstate(divide="ignore", invalid="ignore"):
        m_need = np.maximum.reduce([
            np.ones_like(lu), np.ceil(lu / pmx),
            np.where(pmx > off_u, np.ceil(lu / (2 * (pmx - off_u))), 1.0),
            np.where(pmx > off_v, np.ceil(lu / (2 * (pmx - off_v))), 1.0)])
    m_udl = np.where(udl, np.minimum(m_need, 10_000), 0).astype(np.int64)
    m_sub = np.where(~udl & ~trib, np.maximum(np.ceil((v - u) / pmx) - 1, 0), 0).astype(np.int64)
    count = m_udl + m_sub
    grp, j = _segments(count)
    g_udl = udl[grp]
    mg = np.maximum(m_udl[grp], 1)
    n_s = np.where(g_udl, lo[grp] + (2 * j - 1) * lu[grp] / (2 * mg),
                   u[grp] + j * (v[grp] - u[grp]) / (m_sub[grp] + 1))
    n_model = mdl[grp]
    n_P = np.where(g_udl[None], md.w[:, n_model] * (lu[grp] / mg)[None], 0.0)
    n_lw = np.where(g_udl, lu[grp] / mg, 0.0)
    n_kind = np.where(g_udl, _UDL, _SUB)
    # short loaded intervals: half the load to each end; the chords get the lumped-away moment
    t = np.flatnonzero(trib)
    half = md.w[:, mdl[t]] * (lu[t] / 2)[None]
    for anchor in (i0[t], i0[t] + 1):
        kind = a_kind[anchor]
        on_a, on_b = kind == _A, kind == _B
        np.add.at(direct_a.T, a_model[anchor][on_a], half[:, on_a].T)
        np.add.at(direct_b.T, a_model[anchor][on_b], half[:, on_b].T)
        top = ~(on_a | on_b)
        np.add.at(a_P.T, anchor[top], half[:, top].T)
    a_bulge = np.zeros(len(a_s))
    a_bulge[i0[t]] = lu[t] ** 2 / 8.0

    p_model = np.concatenate([a_model, n_model])
    p_s = np.concatenate([a_s, n_s])
    p_kind = np.concatenate([a_kind, n_kind])
    order = np.lexsort((p_kind == _B, p_s, p_model))
    p_model, p_s, p_kind = p_model[order], p_s[order], p_kind[order]
    Q = np.concatenate([a_P, n_P], axis=1)[:, order]
    lw = np.concatenate([a_lw, n_lw])[order]
    bulge = np.concatenate([a_bulge, np.zeros(len(n_s))])[order]
    counts = np.bincount(p_model, minlength=nm)
    offsets = np.concatenate([[0], np.cumsum(counts)])
    k = np.arange(len(p_s)) - offsets[p_model]
    Q = np.where(((p_kind == _A) | (p_kind == _B))[None], 0.0, Q)
    return _Points(p_model, p_s, p_kind, k, Q, lw, bulge, offsets, direct_a, direct_b)


# --- statics and load paths ---------------------------------------------------------------

def _cumsum_in(a: np.ndarray, first: np.ndarray) -> np.ndarray:
    """Inclusive cumulative sum along the last axis restarting at each group's first item."""
    cs = np.cumsum(a, axis=-1)
    return cs - (cs[..., first] - a[..., first])


@dataclass
class _Flow:
    V: np.ndarray  # (K, N) shear in the panel right of each point
    Mo: np.ndarray  # (K, N) moment at each point
    ra: np.ndarray  # (K, nm) truss reaction at A
    rb: np.ndarray
    kstar: np.ndarray  # (K, nm)
    KA: np.ndarray  # (nm,) last top point a fan from A reaches
    KB: np.ndarray
    ka: np.ndarray  # (K, nm)
    kb: np.ndarray
    fanA: np.ndarray  # (K, N) vertical component of the fan strut from A to each top point
    fanB: np.ndarray
    diagL: np.ndarray  # (K, N) vertical component of the left-falling diagonal in the panel right of each point
    diagR: np.ndarray
    vert: np.ndarray  # (K, N) vertical tie force at each top point
    top_num: np.ndarray  # (K, N) top chord force x z in the panel right of each point
    bot_num: np.ndarray  # (K, N) bottom tie force x z in the panel right of each point
    thrust_num: np.ndarray  # (K, N) horizontal thrust through each top node x z
    tt: np.ndarray  # (N,) panel right of the point joins two top points
    panel: np.ndarray  # (N,) the point has a panel to its right
    p: np.ndarray  # (N,) panel length
    scale: np.ndarray  # (nm,) force scale for tolerances


def _flow(md: _Models, pt: _Points, z: np.ndarray) -> _Flow:
    """Statics and load paths of every model for every combination: shear and moment at
    the panel points, the node of zero shear, the fans' reach and every member force
    (chord forces as moment numerators, to be divided by z)."""
    N = len(pt.s)
    model, s, k, off = pt.model, pt.s, pt.k, pt.offsets
    first = off[model]
    last = off[1:] - 1
    top = pt.top
    sA = pt.s[off[:-1]]
    sB = pt.s[last]
    panel = np.zeros(N, bool)
    panel[:-1] = model[1:] == model[:-1]
    p = np.zeros(N)
    p[:-1] = np.where(panel[:-1], s[1:] - s[:-1], 0.0)
    tt = np.zeros(N, bool)
    tt[:-1] = panel[:-1] & top[:-1] & top[1:]
    ra_whole = np.add.reduceat(pt.Q * (sB[model] - s)[None], off[:-1], axis=1) / (sB - sA)[None]
    # an end region starts from the shear at the face: take off the uniform load lumped straight
    # into the bearing (point loads on the bearing were never in that shear)
    ra = np.where(md.whole[None], ra_whole, md.ra_given - (pt.direct_a - md.direct_a))
    V = ra[:, model] - _cumsum_in(pt.Q, first)
    prod = V * p[None]
    Mo = _cumsum_in(prod, first) - prod
    rb = np.where(md.whole[None], np.add.reduceat(pt.Q, off[:-1], axis=1) - ra, 0.0)
    scale = np.add.reduceat(np.abs(pt.Q).max(axis=0), off[:-1]) + np.abs(ra).max(axis=0) + 1.0
    tolV = 1e-9 * scale[model]
    BIG = 1 << 40
    n_top = np.add.reduceat(top.astype(np.int64), off[:-1])
    kstar = np.minimum.reduceat(np.where(top[None] & (V <= tolV[None]), k[None], BIG), off[:-1], axis=1)
    kstar = np.where(kstar >= BIG, n_top[None] + 1, kstar)
    reach = z / TAN25
    KA = np.maximum.reduceat(np.where(top & (s - sA[model] <= reach[model] + 1e-6), k, 0), off[:-1])
    KA = np.where(n_top > 0, np.maximum(KA, 1), 0)
    KB = np.minimum.reduceat(np.where(top & (sB[model] - s <= reach[model] + 1e-6), k, BIG), off[:-1])
    KB = np.where(md.whole, np.minimum(np.where(KB >= BIG, n_top, KB), np.maximum(n_top, 1)), n_top + 1)
    ka = np.minimum(kstar, KA[None])
    kb = np.maximum(kstar, KB[None])
    KAp, KBp = ka[:, model], kb[:, model]
    ksp = kstar[:, model]
    Vleft = np.zeros_like(V)
    Vleft[:, 1:] = np.where((k[1:] >= 1)[None], V[:, :-1], 0.0)
    kk = k[None]
    fanA = np.where(top & (k <= KA[model]), np.where(kk < KAp, pt.Q, np.where(kk == KAp, Vleft, 0.0)), 0.0)
    fanB = np.where(top & (k >= KB[model]) & md.whole[model],
                    np.where(kk > KBp, pt.Q, np.where(kk == KBp, -V, 0.0)), 0.0)
    diagL = np.where(tt & (kk >= KAp) & (kk < ksp), V, 0.0)
    diagR = np.where(tt & (kk >= ksp) & (kk + 1 <= KBp), -V, 0.0)
    vert = np.where(top & (kk >= KAp) & (kk < ksp), V, 0.0)
    tt_left = np.zeros(N, bool)
    tt_left[1:] = tt[:-1]
    right_flow = np.zeros_like(V)
    right_flow[:, 1:] = np.where(tt_left[1:] & (kk[:, 1:] - 1 >= ksp[:, 1:]) & (kk[:, 1:] <= KBp[:, 1:]),
                                 -V[:, :-1], 0.0)
    vert = vert + right_flow
    Mnext = np.zeros_like(Mo)
    Mnext[:, :-1] = Mo[:, 1:]
    sA_p, sB_p = sA[model], sB[model]
    s_next = np.zeros(N)
    s_next[:-1] = s[1:]
    pos = V > tolV[None]
    fanL_panel = kk + 1 <= KAp
    fanR_panel = kk >= KBp
    top_num = np.where(fanL_panel, Mo - V * (s - sA_p),
                       np.where(fanR_panel, Mnext + V * (sB_p - s_next), np.where(pos, Mo, Mnext)))
    top_num = np.where(tt[None], top_num, 0.0)
    M_at_ka = np.take_along_axis(Mo, off[:-1][None] + ka.clip(0, None), axis=1)[:, model] if N else Mo
    M_at_kb = np.take_along_axis(Mo, np.minimum(off[:-1][None] + kb, last[None]), axis=1)[:, model] if N else Mo
    bot_num = np.where(fanL_panel, M_at_ka, np.where(fanR_panel, M_at_kb, np.where(pos, Mnext, Mo)))
    bot_num = np.where(panel[None], bot_num, 0.0)
    # horizontal thrust through each top node: everything pushing it from the left
    top_left = np.zeros_like(top_num)
    top_left[:, 1:] = top_num[:, :-1]
    diagL_left = np.zeros_like(diagL)
    diagL_left[:, 1:] = diagL[:, :-1] * p[None, :-1]
    thrust = np.where(top[None], top_left + fanA * (s - sA_p)[None] + diagL_left, 0.0)
    return _Flow(V, Mo, ra, rb, kstar, KA, KB, ka, kb, fanA, fanB, diagL, diagR, vert, top_num, bot_num,
                 thrust, tt, panel, p, scale)


def _bulge_moment(md: _Models, pt: _Points) -> np.ndarray:
    """(K, N): w l^2/8 of the panel right of each point (load lumped to the panel's ends)."""
    return md.w[:, pt.model] * pt.bulge[None]


def _node_types(md: _Models, pt: _Points, fl: _Flow):
    """beta_n per top node (CCT where a stirrup tie is anchored, else CCC) from the envelope."""
    vert_env = fl.vert.max(axis=0) if fl.vert.size else np.zeros(len(pt.s))
    tol = 1e-9 * fl.scale[pt.model] + 1e-6
    has_vert = vert_env > tol
    return np.where(has_vert, code.BETA_N["CCT"], code.BETA_N["CCC"]), has_vert


def _size_top_strut(md: _Models, pt: _Points, fl: _Flow, beta_c: float):
    """Least top strut depth a for the horizontal thrust at every top node (23.9.2, 23.4.3):
    with the thrust H z (a moment) and the axial compression Nc added whole, H z / z + Nc <=
    c a, c = phi 0.85 beta f'c bw, z = d - a/2, i.e. (d - a/2)(c a - Nc) >= H z, solved for the
    least a in every combination; the boundary of an end region is a strut end (beta_s = 1.0).
    Returns a per model (inf where no depth suffices)."""
    beta_n, _ = _node_types(md, pt, fl)
    beta = np.where(pt.kind == _BOUNDARY, code.BETA_S_BOUNDARY, beta_n)
    bulge = _bulge_moment(md, pt)
    bulge_left = np.zeros_like(bulge)
    bulge_left[:, 1:] = bulge[:, :-1]
    Hz = np.where(pt.top[None], fl.thrust_num + np.maximum(bulge, bulge_left), 0.0)  # (K, N)
    m = pt.model
    c = (code.PHI_STM * 0.85 * beta_c * beta * md.fc[m] * md.bw[m])[None]
    d = md.d[m][None]
    nc = md.nc[:, m]
    # a^2 - (2d + Nc/c) a + 2 (d Nc + H z)/c = 0, the smaller root (Nc = 0: a = d - sqrt(d^2 - 2 H z / c))
    p = 2 * d + nc / c
    disc = p**2 - 8 * (d * nc + Hz) / c
    a_k = np.where(disc >= 0, (p - np.sqrt(np.clip(disc, 0, None))) / 2, np.inf)
    a_node = np.where(pt.top, a_k.max(axis=0) if len(a_k) else 0.0, 0.0)
    a_req = np.maximum.reduceat(a_node, pt.offsets[:-1])
    return a_req


def _solve_geometry(md: _Models, beta_c: float, iterations: int = 8):
    """Iterate top strut depth a, lever arm z and the panel geometry to a fixed point."""
    wt = 2 * (md.h - md.d)
    a_max = 2 * md.d - md.h - 1e-6  # top node and tie node must not overlap
    a_min = np.minimum(wt, a_max)
    fixed = np.isfinite(md.a_fixed)
    a = np.where(fixed, md.a_fixed, a_min)
    z = md.d - a / 2
    for _ in range(iterations):
        pt = _points(md, z)
        fl = _flow(md, pt, z)
        a_req = _size_top_strut(md, pt, fl, beta_c)
        a_new = np.where(fixed, md.a_fixed, np.clip(np.maximum(a_req, a_min), None, a_max))
        z_new = md.d - a_new / 2
        done = np.abs(z_new - z) < 0.5
        z, a = z_new, a_new
        if done.all():
            break
    pt = _points(md, z)
    fl = _flow(md, pt, z)
    a_req = _size_top_strut(md, pt, fl, beta_c)
    feasible = fixed | (a_req <= a_max)
    a = np.where(fixed, md.a_fixed, np.clip(np.maximum(a_req, a_min), None, a_max))
    z = md.d - a / 2
    fl = _flow(md, pt, z)
    return pt, fl, a, z, feasible


# --- elements ------------------------------------------------------------------------------

def _elements(md: _Models, pt: _Points, fl: _Flow, a: np.ndarray, z: np.ndarray) -> Truss:
    """The candidate members of every truss (fans, diagonals both ways, verticals, chords)
    with their per-combination forces; a candidate unused in a combination carries zero."""
    N = len(pt.s)
    model, s = pt.model, pt.s
    off = pt.offsets
    top = pt.top
    idx = np.arange(N)
    a_slot = N + off[:-1][model]  # bottom node of bearing A
    b_slot = N + (off[1:] - 1)[model]
    y_top = (md.h - a / 2)[model]
    y_bot = (md.h - md.d)[model]
    node_x = np.concatenate([s, s])
    node_y = np.concatenate([y_top, y_bot])
    nxt = np.minimum(idx + 1, N - 1)
    zp = z[model]
    bulge = _bulge_moment(md, pt)

    def sin_to(ds):
        return zp / np.hypot(zp, ds)

    parts = []  # (kind, mask, n1, n2, force (K, N) tension positive, design force)
    fa_sel = top & (pt.k <= fl.KA[model])
    fanA_force = -fl.fanA / sin_to(s - s[off[:-1][model]])[None]
    parts.append((_FAN_A, fa_sel, a_slot, idx, fanA_force, fanA_force))
    fb_sel = top & (pt.k >= fl.KB[model]) & md.whole[model]
    fanB_force = -fl.fanB / sin_to(s[(off[1:] - 1)[model]] - s)[None]
    parts.append((_FAN_B, fb_sel, b_slot, idx, fanB_force, fanB_force))
    dsin = sin_to(fl.p)
    parts.append((_DIAG_L, fl.tt, nxt, N + idx, -fl.diagL / dsin[None], -fl.diagL / dsin[None]))
    parts.append((_DIAG_R, fl.tt, idx, N + nxt, -fl.diagR / dsin[None], -fl.diagR / dsin[None]))
    parts.append((_VERT, top.copy(), idx, N + idx, fl.vert, fl.vert))
    top_f = -fl.top_num / zp[None]
    top_extra = np.where(fl.tt[None], bulge / zp[None] + md.nc[:, model], 0.0)  # lumped-away moment, compression
    parts.append((_TOP, fl.tt, idx, nxt, top_f, top_f - top_extra))
    bot_f = fl.bot_num / zp[None]
    bot_extra = np.where(fl.panel[None], bulge / zp[None] + md.nt[:, model], 0.0)  # lumped-away moment, axial tension
    parts.append((_BOT, fl.panel, N + idx, N + nxt, bot_f, bot_f + bot_extra))
    kinds, models, n1s, n2s, pts, forces, dforces = [], [], [], [], [], [], []
    for kind, sel, n1, n2, f, df in parts:
        e = np.flatnonzero(sel)
        kinds.append(np.full(len(e), kind))
        models.append(model[e])
        n1s.append(np.asarray(n1)[e])
        n2s.append(np.asarray(n2)[e])
        pts.append(e)
        forces.append(f[:, e])
        dforces.append(df[:, e])
    used = np.zeros(2 * N, bool)
    n1 = np.concatenate(n1s)
    n2 = np.concatenate(n2s)
    used[n1] = True
    used[n2] = True
    boundary = pt.kind == _BOUNDARY
    checked = used & ~np.concatenate([boundary, boundary])
    return Truss(
        model_member=md.member, model_end=md.end, model_mirrored=md.mirrored, model_ln=md.ln,
        point_model=model, point_s=s, point_kind=pt.kind, point_k=pt.k, offsets=off,
        node_x=node_x, node_y=node_y, node_used=used, node_checked=checked, top_load=pt.Q,
        reaction_a=fl.ra, reaction_b=fl.rb, el_kind=np.concatenate(kinds), el_model=np.concatenate(models),
        el_n1=n1, el_n2=n2, el_point=np.concatenate(pts), force=np.concatenate(forces, axis=1),
        design_force=np.concatenate(dforces, axis=1), a=a, z=z)


def truss_residuals(t: Truss) -> np.ndarray:
    """(K, 2, nodes) out-of-balance force at every node slot (x, y), N: element forces plus
    top loads plus bearing reactions. Zero at every checked node of a correct truss."""
    K = t.force.shape[0]
    N = len(t.point_s)
    dx = t.node_x[t.el_n2] - t.node_x[t.el_n1]
    dy = t.node_y[t.el_n2] - t.node_y[t.el_n1]
    length = np.hypot(dx, dy)
    ux, uy = dx / length, dy / length
    res = np.zeros((K, 2, 2 * N))
    for comp, u in ((0, ux), (1, uy)):
        f = t.force * u[None]
        np.add.at(res[:, comp].T, t.el_n1, f.T)  # tension pulls node 1 toward node 2
        np.add.at(res[:, comp].T, t.el_n2, -f.T)
    res[:, 1, :N] -= t.top_load
    first = t.offsets[:-1]
    last = t.offsets[1:] - 1
    res[:, 1, N + first] += t.reaction_a
    whole = t.model_end == "whole"
    res[:, 1, N + last[whole]] += t.reaction_b[:, whole]
    return res


def _self_check(t: Truss) -> None:
    res = truss_residuals(t)
    scale = np.abs(t.force).max() if t.force.size else 0.0
    scale = max(scale, np.abs(t.top_load).max() if t.top_load.size else 0.0, 1.0)
    bad = (np.abs(res) > 1e-7 * scale + 1e-3).any(axis=(0, 1)) & t.node_checked
    if bad.any():
        n = int(np.flatnonzero(bad)[0])
        N = len(t.point_s)
        m = t.point_model[n % N]
        raise StmSelfCheckError(f"truss of member index {t.model_member[m]} ({t.model_end[m]}) is out of balance "
                                f"at node slot {n}: {res[:, :, n].tolist()}")


# --- reinforcement choices -------------------------------------------------------------------

def _choose_spacing(req: np.ndarray, s_max: np.ndarray, ladder, module: float, s_min: float, u: Edition = SI):
    """First (bar, legs) of the ladder whose spacing for Av/s >= req, on the module and at most
    s_max, is at least s_min. Returns bar, legs, spacing, provided A/s and whether it fits."""
    BAR_CATALOGUE = bar_catalogue(u.units)  # noqa: N806 - the unit system's bars
    n = len(req)
    bar = np.full(n, ladder[-1][0], dtype=object)
    legs = np.full(n, ladder[-1][1])
    spacing = np.full(n, s_min)
    found = np.zeros(n, bool)
    for b, lg in ladder:
        area = lg * BAR_CATALOGUE[b][1]
        with np.errstate(divide="ignore"):
            s = np.floor(np.minimum(area / np.maximum(req, 1e-12), s_max) / module) * module
        take = ~found & (s >= s_min - 1e-9)
        bar[take], legs[take], spacing[take] = b, lg, s[take]
        found |= take
    area = legs * np.array([BAR_CATALOGUE[b][1] for b in bar]) if n else np.zeros(0)
    return bar, legs, spacing, area / spacing, found


# --- design ---------------------------------------------------------------------------------

def design(members: DeepMembers, loads: DeepLoads, options: StmOptions | None = None) -> StmDesign:
    """Strut-and-tie design of the given members for every load combination (ACI 318-19
    Chapter 23, 9.9). Every input member appears in ``members`` with a status and reason."""
    opts = options or StmOptions()
    M = _members(members, opts)
    L = _loads(loads, len(M["member"]))
    reasons = _scope_reasons(M, L)
    md, reasons, method = _build_models(M, L, reasons, opts)
    pt, fl, a, z, feasible = _solve_geometry(md, opts.beta_c)
    truss = _elements(md, pt, fl, a, z)
    _self_check(truss)
    return _assemble(M, md, pt, fl, truss, feasible, reasons, method, opts, tuple(loads.combinations))


@dataclass
class _Web:
    """Distributed web reinforcement per model (9.9.3.1, 9.9.4.3, 23.5) and the stirrup ties."""

    spread: np.ndarray  # (N,) length over which a vertical tie's stirrups are counted
    av_tie: np.ndarray  # (E,) Av/s a vertical tie needs
    av_min: np.ndarray
    av_req: np.ndarray
    ah_req: np.ndarray
    s_max: np.ndarray
    sv_bar: np.ndarray
    sv_legs: np.ndarray
    sv: np.ndarray
    av_prov: np.ndarray
    sv_fits: np.ndarray
    sh_bar: np.ndarray
    sh_n: np.ndarray
    sh: np.ndarray
    ah_prov: np.ndarray
    grid_ok: np.ndarray
    beta_s_interior: np.ndarray


def _web(md: _Models, pt: _Points, fl: _Flow, t: Truss, env, active, inside_el, opts: StmOptions) -> _Web:
    N = len(pt.s)
    nm = len(md.member)
    p_left = np.zeros(N)
    p_left[1:] = np.where(pt.model[1:] == pt.model[:-1], pt.s[1:] - pt.s[:-1], 0.0)
    spread = np.where(pt.kind == _BOUNDARY, p_left, 0.5 * (p_left + fl.p))
    em, ep = t.el_model, t.el_point
    v_sel = (t.el_kind == _VERT) & inside_el & active
    av_tie = np.zeros(len(t.el_kind))
    av_tie[v_sel] = code.distributed_tie_area_per_length(env[v_sel], md.fyt[em[v_sel]], spread[ep[v_sel]])
    av_demand = np.zeros(nm)
    np.maximum.at(av_demand, em[v_sel], av_tie[v_sel])
    av_min = code.deep_beam_min_distributed(md.bw)
    s_max = code.deep_beam_max_spacing(md.d, opts.u)
    av_req = np.maximum(av_min, av_demand)
    ah_req = av_min.copy()
    sv_bar, sv_legs, sv, av_prov, sv_fits = _choose_spacing(av_req, s_max, opts.stirrup_ladder,
                                                            opts.spacing_module, opts.min_spacing, opts.u)
    sh_bar, sh_n, sh, ah_prov, _ = _choose_spacing(ah_req, s_max, opts.web_bar_ladder,
                                                   opts.spacing_module, opts.min_spacing, opts.u)
    grid_ok = code.distributed_reinforcement_ok(av_prov / md.bw, ah_prov / md.bw, sv, sh, opts.u)
    return _Web(spread, av_tie, av_min, av_req, ah_req, s_max, sv_bar, sv_legs, sv, av_prov, sv_fits,
                sh_bar, sh_n, sh, ah_prov, grid_ok, code.strut_beta_s(False, grid_ok))


@dataclass
class _Tie:
    """The bottom tie per model: steel, bars (one choice per member) and anchorage."""

    as_req_el: np.ndarray  # (E,)
    as_req: np.ndarray  # per model
    bar: np.ndarray
    db: np.ndarray
    area: np.ndarray
    n_bars: np.ndarray
    wt_eff: np.ndarray
    anch: dict


def _tie(M: dict, md: _Models, pt: _Points, t: Truss, theta, env, tolF, opts: StmOptions) -> _Tie:
    """As = Fu/(phi fy) (23.7.2); the bar is the largest of the ladder whose anchorage fits
    at every bearing of the member (23.8.3), unless the member names its bar."""
    nm = len(md.member)
    TIE_BARS = tie_bars(opts.u)  # noqa: N806 - the unit system's bars
    em = t.el_model
    bot = t.el_kind == _BOT
    as_req_el = np.where(bot, code.tie_area_required(np.clip(t.design_force, 0, None).max(axis=0), md.fy[em]), 0.0)
    as_req = np.zeros(nm)
    np.maximum.at(as_req, em, as_req_el)
    member_req = np.zeros(len(M["member"]))
    np.maximum.at(member_req, md.member, as_req)
    as_member = member_req[md.member]
    given = M["tie_bar"][md.member]
    wt = 2 * (md.h - md.d)
    fce_cct = code.node_effective_strength(md.fc, code.BETA_N["CCT"], opts.beta_c)
    chosen = np.full(nm, "", dtype=object)
    ladder = list(opts.tie_bar_ladder) + sorted(set(given) - set(opts.tie_bar_ladder) - {""})
    for bar in ladder:
        db = np.full(nm, TIE_BARS[bar][0])
        area = TIE_BARS[bar][1]
        n_bars = np.maximum(np.ceil(as_member / area - 1e-9), 2)
        # effective tie height in the bearing node: at most Fnt / (fce bw), fce of a CCT node
        # (commentary to 23.8: wt,max = Fnt / (fce bs), from memory)
        wt_eff = np.minimum(wt, n_bars * area * md.fy / (fce_cct * md.bw))
        anch = _anchorage(md, pt, t, theta, env, tolF, db, wt_eff, opts)
        fits_model = (anch["A"]["util"] <= 1.0 + 1e-9) & (anch["B"]["util"] <= 1.0 + 1e-9)
        fits_member = np.ones(len(M["member"]), bool)
        np.logical_and.at(fits_member, md.member, fits_model)
        allowed = np.where(given == "", np.isin(bar, opts.tie_bar_ladder), given == bar)
        take = (chosen == "") & allowed & fits_member[md.member]
        chosen[take] = bar
    last = opts.tie_bar_ladder[-1]
    chosen = np.where(chosen == "", np.where(given == "", last, given), chosen)
    db = np.array([TIE_BARS[b][0] for b in chosen]) if nm else np.zeros(0)
    area = np.array([TIE_BARS[b][1] for b in chosen]) if nm else np.zeros(0)
    n_bars = np.maximum(np.ceil(as_member / area - 1e-9), 2).astype(int) if nm else np.zeros(0, int)
    wt_eff = np.minimum(wt, n_bars * area * md.fy / (fce_cct * md.bw))
    anch = _anchorage(md, pt, t, theta, env, tolF, db, wt_eff, opts)
    return _Tie(as_req_el, as_req, chosen, db, area, n_bars, wt_eff, anch)


def _assemble(M, md: _Models, pt: _Points, fl: _Flow, t: Truss, feasible, reasons, method, opts: StmOptions,
              combos) -> StmDesign:
    K = t.force.shape[0]
    combos = np.asarray(combos, dtype=object)
    ek, em, ep = t.el_kind, t.el_model, t.el_point
    tolF = 1e-9 * fl.scale + 1e-6  # per model
    env = np.abs(t.design_force).max(axis=0) if K else np.zeros(len(ek))
    active = env > tolF[em]
    inside_el = ~((ek == _VERT) & (pt.kind[ep] == _BOUNDARY))  # a region's boundary stirrups are the B-region's
    x1, y1 = t.node_x[t.el_n1], t.node_y[t.el_n1]
    x2, y2 = t.node_x[t.el_n2], t.node_y[t.el_n2]
    theta = np.degrees(np.arctan2(np.abs(y2 - y1), np.abs(x2 - x1)))
    web = _web(md, pt, fl, t, env, active, inside_el, opts)
    tie = _tie(M, md, pt, t, theta, env, tolF, opts)
    comp = -t.design_force  # (K, E) compression positive
    width1, width2 = _strut_widths(md, pt, fl, t, theta, comp, web.spread, tie.wt_eff)
    beta_s = np.where(ek == _TOP, code.BETA_S_BOUNDARY, web.beta_s_interior[em])
    fce_s = code.strut_effective_strength(md.fc[em], beta_s, opts.beta_c)
    with np.errstate(divide="ignore", invalid="ignore"):
        cap1 = code.design_compressive_strength(fce_s[None], width1, md.bw[em][None])
        cap2 = code.design_compressive_strength(fce_s[None], width2, md.bw[em][None])
        u_strut = np.maximum(np.where(comp > 0, comp / cap1, 0.0), np.where(comp > 0, comp / cap2, 0.0))
    node_type, node_beta = _node_table_types(pt, t, tolF)
    faces = _faces(md, pt, fl, t, combos, comp, width1, width2, node_type, node_beta, opts, tolF)
    inside_panel = fl.panel & (pt.kind != _BOUNDARY)
    vu_k = np.zeros((K, len(md.member)))  # largest shear in each model, per combination
    np.maximum.at(vu_k.T, pt.model[inside_panel], np.abs(fl.V[:, inside_panel]).T)
    vu = vu_k.max(axis=0, initial=0.0)
    vu_combo = combos[vu_k.argmax(axis=0)] if len(md.member) else np.zeros(0, object)
    phi_vn = code.deep_beam_shear_limit(md.fc, md.bw, md.d, opts.u)
    angle_why = _angle_violations(md, t, theta, env, tolF, inside_el)
    struts = _strut_table(md, t, combos, comp, theta, width1, width2, beta_s, fce_s, cap1, cap2, u_strut,
                          inside_el, tolF)
    ties = _tie_table(md, t, combos, web, tie, inside_el, tolF)
    nodes = _node_rows(faces)
    models = _model_rows(md, t, feasible, vu, vu_combo, phi_vn, web, tie, angle_why, struts, ties, faces)
    members = _member_rows(M, md, models, reasons, method, web)
    U = units.system(opts.u.units)  # the tables' columns carry the edition's units (force_kip, x_in, ...)
    named = lambda df: df.rename(columns=U.rename(df.columns))  # noqa: E731
    return StmDesign(named(members), named(models), named(nodes), named(faces), named(struts), named(ties), t,
                     tuple(combos))


def _strut_widths(md, pt, fl, t: Truss, theta, comp, spread, wt_eff):
    """(K, E) widths of each strut at its node 1 and node 2 end: share x sin(theta) + height x
    cos(theta), the node's length shared among its struts in proportion to their vertical
    components; a at top nodes and along the top chord, wt at bearings and stirrup nodes."""
    K = comp.shape[0]
    N = len(pt.s)
    ek, em, ep = t.el_kind, t.el_model, t.el_point
    sin_t, cos_t = np.sin(np.radians(theta)), np.cos(np.radians(theta))
    vcomp = np.clip(comp, 0, None) * sin_t[None]
    _, has_vert = _node_types(md, pt, fl)
    node_len = np.maximum(pt.lw, np.where(has_vert, spread, 0.0))
    top_end1 = np.isin(ek, (_DIAG_L, _DIAG_R))  # node 1 of a diagonal is its top node
    top_end2 = np.isin(ek, (_FAN_A, _FAN_B))  # node 2 of a fan strut is its top node, node 1 the bearing
    tnode = np.where(top_end1, t.el_n1, np.where(top_end2, t.el_n2, 0))
    sel = top_end1 | top_end2
    S_top = np.zeros((K, N))
    np.add.at(S_top.T, tnode[sel], vcomp[:, sel].T)
    S_bear = np.zeros((K, 2 * N))
    np.add.at(S_bear.T, t.el_n1[top_end2], vcomp[:, top_end2].T)
    lb_node = np.where(ek == _FAN_A, md.lbA[em], np.where(ek == _FAN_B, md.lbB[em], 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        share_top = np.nan_to_num(np.where(sel[None], node_len[tnode][None] * vcomp / S_top[:, tnode], 0.0))
        share_bear = np.nan_to_num(np.where(top_end2[None], lb_node[None] * vcomp / S_bear[:, t.el_n1], 0.0))
    a_e, wt_e = t.a[em], wt_eff[em]
    width_top = share_top * sin_t[None] + (a_e * cos_t)[None]
    width_bear = share_bear * sin_t[None] + (wt_e * cos_t)[None]
    bottom_pt = np.where(ek == _DIAG_L, ep, np.minimum(ep + 1, N - 1))  # smeared node of a diagonal's foot
    width_foot = np.broadcast_to(spread[bottom_pt] * sin_t + wt_e * cos_t, (K, len(ek)))
    width1 = np.where(top_end1[None], width_top, np.where(top_end2[None], width_bear, a_e[None]))
    width2 = np.where(top_end2[None], width_top, np.where(top_end1[None], width_foot, a_e[None]))
    return width1, width2


def _node_table_types(pt: _Points, t: Truss, tolF):
    """Node type and beta_n per node slot from the ties anchored in it (Table 23.9.2); a
    bottom tie running through a node counts once."""
    N = len(pt.s)
    tension = np.clip(t.design_force, 0, None).max(axis=0) > tolF[t.el_model]
    vert = (t.el_kind == _VERT) & tension
    bot = (t.el_kind == _BOT) & tension
    n_ties = np.zeros(2 * N, np.int64)
    np.add.at(n_ties, t.el_n1[vert], 1)
    np.add.at(n_ties, t.el_n2[vert], 1)
    has_bot = np.zeros(2 * N, bool)
    has_bot[t.el_n1[bot]] = True
    has_bot[t.el_n2[bot]] = True
    ntype = code.node_type_from_ties(n_ties + has_bot)
    return ntype, code.node_beta_n(ntype)


def _faces(md, pt, fl, t, combos, comp, width1, width2, node_type, node_beta, opts, tolF) -> pd.DataFrame:
    """Every face of every checked node: force, width, stress and phi fce (23.9). A tie
    anchored by bond puts no stress on a node's back face; it sets the node's height."""
    K = len(combos)
    N = len(pt.s)
    model, off = pt.model, pt.offsets
    first, last = off[:-1], off[1:] - 1
    nodes, labels, els, forces, widths = [], [], [], [], []

    def add(node, face, el, force, width):
        nodes.append(np.asarray(node, dtype=np.int64))
        labels.append(np.full(len(nodes[-1]), face, dtype=object))
        els.append(np.broadcast_to(np.asarray(el, dtype=np.int64), nodes[-1].shape))
        forces.append(np.asarray(force, dtype=float).reshape(K, -1))
        widths.append(np.broadcast_to(np.asarray(width, dtype=float), (K, len(nodes[-1]))))

    wh = np.flatnonzero(md.whole)
    add(N + first, "bearing", -1, fl.ra + pt.direct_a, md.lbA)
    add(N + last[wh], "bearing", -1, (fl.rb + pt.direct_b)[:, wh], md.lbB[wh])
    tp = np.flatnonzero(pt.top & (pt.kind != _BOUNDARY))
    loaded = tp[pt.lw[tp] > 0]
    add(loaded, "load", -1, pt.Q[:, loaded], pt.lw[loaded])
    bulge = _bulge_moment(md, pt)
    bulge_left = np.zeros_like(bulge)
    bulge_left[:, 1:] = bulge[:, :-1]
    thrust = (fl.thrust_num + np.maximum(bulge, bulge_left)) / t.z[model][None] + md.nc[:, model]
    add(tp, "horizontal thrust", -1, thrust[:, tp], t.a[model[tp]])
    struts = np.flatnonzero(np.isin(t.el_kind, (_FAN_A, _FAN_B, _DIAG_L, _DIAG_R)))
    add(t.el_n1[struts], "strut end", struts, np.clip(comp[:, struts], 0, None), width1[:, struts])
    add(t.el_n2[struts], "strut end", struts, np.clip(comp[:, struts], 0, None), width2[:, struts])
    node = np.concatenate(nodes)
    face = np.concatenate(labels)
    el = np.concatenate(els)
    force = np.concatenate(forces, axis=1)
    width = np.concatenate(widths, axis=1)
    m = model[node % N]
    keep = t.node_checked[node] & (force.max(axis=0, initial=0.0) > tolF[m])
    node, face, el, force, width, m = node[keep], face[keep], el[keep], force[:, keep], width[:, keep], m[keep]
    beta = node_beta[node]
    fce = code.node_effective_strength(md.fc[m], beta, opts.beta_c)
    with np.errstate(divide="ignore", invalid="ignore"):
        cap = code.design_compressive_strength(fce[None], width, md.bw[m][None])
        util = np.where(force > 0, force / cap, 0.0)
    g = util.argmax(axis=0) if K and len(node) else np.zeros(len(node), np.int64)
    cols = np.arange(len(node))
    return pd.DataFrame({
        "member": md.name[m], "model": md.end[m], "model_index": m, "node": _node_labels(md, t, node),
        "node_slot": node, "x_mm": _member_x(md, m, t.node_x[node]), "y_mm": t.node_y[node], "face": face,
        "element": np.where(el >= 0, _element_labels(md, t, np.clip(el, 0, None)), ""),
        "node_type": node_type[node], "beta_n": beta,
        "force_kN": force[g, cols] / 1e3, "width_mm": width[g, cols],
        "stress_MPa": force[g, cols] / (width[g, cols] * md.bw[m]),
        "limit_MPa": code.PHI_STM * fce, "utilization": util[g, cols],
        "combination": combos[g] if len(node) else np.zeros(0, object),
        "clause": "23.9.1, 23.9.2, Table 23.9.2",
    })


def _member_x(md, m, x_local):
    """Local model coordinate to the member's clear-span coordinate (end j regions are mirrored)."""
    return np.where(md.mirrored[m], md.ln[m] - x_local, x_local)


def _node_labels(md, t: Truss, slots) -> np.ndarray:
    """Names of node slots in the member's frame: R_i/R_j bearings, T<n>/B<n> top and bottom
    nodes numbered from end i within each model (prefixed by the end of an end region)."""
    slots = np.atleast_1d(np.asarray(slots, dtype=np.int64))
    N = len(t.point_s)
    p = slots % N
    m = t.point_model[p]
    kind = t.point_kind[p]
    mir = md.mirrored[m]
    n_top = t.offsets[m + 1] - t.offsets[m] - np.where(md.whole[m], 2, 1)
    number = np.where(mir, n_top + 1 - t.point_k[p], t.point_k[p]).astype(np.int64).astype(str).astype(object)
    prefix = np.where(md.whole[m], "", md.end[m].astype(str) + ":").astype(object)
    inner = prefix + np.where(slots < N, "T", "B").astype(object) + number
    bearing = np.where((kind == _B) | mir, "R_j", "R_i").astype(object)
    return np.where((kind == _A) | (kind == _B), bearing, inner)


def _element_labels(md, t: Truss, e) -> np.ndarray:
    e = np.asarray(e, dtype=np.int64)
    names = np.array([KIND_NAMES[k] for k in range(7)], dtype=object)
    return names[t.el_kind[e]] + " " + _node_labels(md, t, t.el_n1[e]) + "-" + _node_labels(md, t, t.el_n2[e])


def _anchorage(md, pt, t: Truss, theta, env, tolF, db, wt, opts: StmOptions) -> dict:
    """Anchorage of the bottom tie at each bearing of each model (23.8.3): available length
    from where the tie centroid leaves the extended nodal zone to the bar end, against the
    straight development length (Table 25.4.2.3) and the standard hook (25.4.3.1)."""
    nm = len(md.member)
    N = len(pt.s)
    off = pt.offsets
    out = {}
    ld = code.straight_development_length(md.fy, md.fc, db, md.lam, spacing_ok=opts.straight_bar_spacing_ok, u=opts.u)
    ldh = code.hooked_development_length(md.fy, md.fc, db, md.lam, psi_r=opts.hook_psi_r, psi_o=opts.hook_psi_o,
                                         u=opts.u)
    bots = np.flatnonzero(t.el_kind == _BOT)
    for side, kind, slot_of, ext, node_end in (("A", _FAN_A, N + off[:-1], md.extA, t.el_n1),
                                               ("B", _FAN_B, N + off[1:] - 1, md.extB, t.el_n2)):
        fans = (t.el_kind == kind) & (env > tolF[t.el_model])
        steep = np.full(nm, np.nan)  # the steepest fan strut bounds the extended nodal zone (conservative)
        np.fmax.at(steep, t.el_model[fans], theta[fans])
        at = bots[np.isin(node_end[bots], slot_of)]
        force = np.zeros(nm)
        if len(at):
            force[t.el_model[at]] = np.clip(t.design_force[:, at], 0, None).max(axis=0)
        with np.errstate(invalid="ignore"):
            avail = ext - opts.end_cover + code.tie_exit_length(wt, steep)
        present = np.isfinite(avail) & (force > tolF) & (md.whole | (side == "A"))
        how = np.where(~present, "", np.where(avail >= ld, "straight",
                                              np.where(avail >= ldh, "standard hook", "insufficient")))
        with np.errstate(divide="ignore", invalid="ignore"):
            util = np.where(present, np.minimum(ld, ldh) / np.where(avail > 0, avail, 1e-9), 0.0)
        out[side] = dict(force=force, available=np.where(present, avail, np.nan), how=how.astype(object), util=util)
    out["ld"] = ld
    out["ldh"] = ldh
    return out


def _angle_violations(md, t: Truss, theta, env, tolF, inside_el) -> np.ndarray:
    """23.2.7: per model, a strut and a tie carrying force that meet at a node at less than 25 degrees."""
    why = np.full(len(md.member), "", dtype=object)
    act = (env > tolF[t.el_model]) & inside_el
    tension = np.clip(t.design_force, 0, None).max(axis=0) > tolF[t.el_model]
    s_idx = np.flatnonzero(np.isin(t.el_kind, STRUT_KINDS) & act & ~tension)
    t_idx = np.flatnonzero(np.isin(t.el_kind, (_VERT, _BOT)) & act & tension)
    if not len(s_idx) or not len(t_idx):
        return why
    s_nodes = np.concatenate([t.el_n1[s_idx], t.el_n2[s_idx]])
    s_of = np.concatenate([s_idx, s_idx])
    t_nodes = np.concatenate([t.el_n1[t_idx], t.el_n2[t_idx]])
    t_of = np.concatenate([t_idx, t_idx])
    order = np.argsort(t_nodes, kind="stable")
    t_nodes, t_of = t_nodes[order], t_of[order]
    lo = np.searchsorted(t_nodes, s_nodes, "left")
    cnt = np.searchsorted(t_nodes, s_nodes, "right") - lo
    grp, j = _segments(cnt)
    rep_s, rep_node = s_of[grp], s_nodes[grp]
    rep_t = t_of[lo[grp] + j - 1]
    vertical_tie = t.el_kind[rep_t] == _VERT
    top_chord = t.el_kind[rep_s] == _TOP
    angle = np.where(vertical_tie, np.where(top_chord, 90.0, 90.0 - theta[rep_s]), theta[rep_s])
    bad = np.flatnonzero(~code.strut_tie_angle_ok(angle) & t.node_checked[rep_node])
    for i in bad[::-1]:  # messages only, for the few models that fail
        why[t.el_model[rep_s[i]]] = (
            f"{_element_labels(md, t, rep_s[i])[0]} meets {_element_labels(md, t, rep_t[i])[0]} at {angle[i]:.1f} deg "
            "< 25 deg (23.2.7): loads too close to each other or to a bearing for the automatic truss; "
            "model by hand")
    return why


def _xy(md, t: Truss, e):
    m = t.el_model[e]
    return (_member_x(md, m, t.node_x[t.el_n1[e]]), t.node_y[t.el_n1[e]],
            _member_x(md, m, t.node_x[t.el_n2[e]]), t.node_y[t.el_n2[e]])


def _strut_table(md, t, combos, comp, theta, width1, width2, beta_s, fce_s, cap1, cap2, u, inside, tolF):
    e = np.flatnonzero(np.isin(t.el_kind, STRUT_KINDS) & inside & (comp.max(axis=0, initial=0) > tolF[t.el_model]))
    g = u[:, e].argmax(axis=0) if len(e) else np.zeros(0, np.int64)
    x1, y1, x2, y2 = _xy(md, t, e)
    m = t.el_model[e]
    return pd.DataFrame({
        "member": md.name[m], "model": md.end[m], "model_index": m,
        "element": _element_labels(md, t, e), "kind": [KIND_NAMES[k] for k in t.el_kind[e]],
        "el_index": e, "x1_mm": x1, "y1_mm": y1, "x2_mm": x2, "y2_mm": y2, "angle_deg": theta[e],
        "force_kN": comp[g, e] / 1e3, "combination": combos[g] if len(e) else np.zeros(0, object),
        "width_1_mm": width1[g, e], "width_2_mm": width2[g, e], "beta_s": beta_s[e], "fce_MPa": fce_s[e],
        "phi_fns_kN": np.minimum(cap1[g, e], cap2[g, e]) / 1e3, "utilization": u[g, e],
        "clause": np.where(t.el_kind[e] == _TOP, "23.4.1, 23.4.3 (boundary strut)",
                           "23.4.1, 23.4.3 (interior strut), 23.5"),
    })


def _tie_table(md, t, combos, web: _Web, tie: _Tie, inside, tolF):
    tension = np.clip(t.design_force, 0, None)
    e = np.flatnonzero(np.isin(t.el_kind, (_VERT, _BOT)) & inside
                       & (tension.max(axis=0, initial=0) > tolF[t.el_model]))
    g = tension[:, e].argmax(axis=0) if len(e) else np.zeros(0, np.int64)
    x1, y1, x2, y2 = _xy(md, t, e)
    m = t.el_model[e]
    vert = t.el_kind[e] == _VERT
    sp = web.spread[t.el_point[e]]
    as_prov = tie.n_bars[m] * tie.area[m]
    return pd.DataFrame({
        "member": md.name[m], "model": md.end[m], "model_index": m,
        "element": _element_labels(md, t, e), "kind": [KIND_NAMES[k] for k in t.el_kind[e]],
        "el_index": e, "x1_mm": x1, "y1_mm": y1, "x2_mm": x2, "y2_mm": y2,
        "force_kN": tension[g, e] / 1e3, "combination": combos[g] if len(e) else np.zeros(0, object),
        "as_req_mm2": np.where(vert, np.nan, tie.as_req_el[e]),
        "as_prov_mm2": np.where(vert, np.nan, as_prov),
        "av_s_req": np.where(vert, web.av_tie[e], np.nan), "av_s_prov": np.where(vert, web.av_prov[m], np.nan),
        "spread_mm": np.where(vert, sp, np.nan),
        "zone_start_mm": np.where(vert, x1 - sp / 2, np.nan), "zone_end_mm": np.where(vert, x1 + sp / 2, np.nan),
        "utilization": np.where(vert, web.av_tie[e] / web.av_prov[m], tie.as_req_el[e] / as_prov),
        "clause": np.where(vert, "23.7.2 (stirrups as a tie, 23.3.1)", "23.7.2, 23.3.1"),
    })


def _first_per_group(group: np.ndarray, key: np.ndarray, n: int) -> np.ndarray:
    """Per group 0..n-1, the row with the smallest ``key`` (NaN after every number), the first
    row among equal keys (what a stable pandas sort, a groupby idxmax, max or min keeps);
    -1 where the group has no row."""
    order = np.lexsort((key, group))  # stable: equal keys stay in row order
    g = group[order]
    head = np.ones(len(g), bool)
    head[1:] = g[1:] != g[:-1]
    out = np.full(n, -1, np.int64)
    out[g[head]] = order[head]
    return out


def _picked(values, rows: np.ndarray, fill) -> np.ndarray:
    """``values`` at ``rows``, ``fill`` where a row is -1 (a group without rows)."""
    values = np.asarray(values)
    if not len(values):
        return np.full(len(rows), fill, dtype=object if isinstance(fill, str) else float)
    return np.where(rows >= 0, values[np.maximum(rows, 0)], fill)


def _node_rows(faces: pd.DataFrame) -> pd.DataFrame:
    """One row per checked node: its most used face (the first of equals), by model and position."""
    cols = ["member", "model", "model_index", "node", "x_mm", "y_mm", "node_type", "beta_n", "utilization",
            "governing_face", "element", "combination"]
    mi, slot = faces["model_index"].to_numpy(), faces["node_slot"].to_numpy()
    by_use = np.lexsort((np.arange(len(faces)), -faces["utilization"].to_numpy()))  # most used first, NaN last
    pair = mi[by_use] * (int(slot.max(initial=0)) + 1) + slot[by_use]
    _, first = np.unique(pair, return_index=True)
    kept = by_use[np.sort(first)]  # each node's most used face, in the order above
    order = kept[np.lexsort((np.arange(len(kept)), faces["y_mm"].to_numpy()[kept], faces["x_mm"].to_numpy()[kept],
                             mi[kept]))]
    return faces.iloc[order].rename(columns={"face": "governing_face"})[cols].reset_index(drop=True)


def _model_rows(md, t, feasible, vu, vu_combo, phi_vn, web: _Web, tie: _Tie, angle_why, struts, ties,
                faces) -> pd.DataFrame:
    """One row per model: status, the governing check over every element, face and rule
    (the largest utilization; the first listed of equals)."""
    nm = len(md.member)
    ids = np.arange(nm)
    anch = tie.anch
    bearing_label = {"A": np.where(md.mirrored, "R_j", "R_i"), "B": np.full(nm, "R_j")}
    vt = (ties["kind"] == "vertical tie").to_numpy()
    anchored = {s: anch[s]["how"] != "" for s in ("A", "B")}
    checks = [  # (model, utilization, governing, clause, combination) of each kind of check
        (struts["model_index"], struts["utilization"], struts["element"], struts["clause"], struts["combination"]),
        (faces["model_index"], faces["utilization"], "", faces["clause"], faces["combination"]),  # named below
        (ties["model_index"][vt], ties["utilization"][vt], ties["element"][vt], ties["clause"][vt],
         ties["combination"][vt]),
        (ids, vu / phi_vn, "deep-beam section: Vu against phi 0.83 sqrt(f'c) bw d", "9.9.2.1", vu_combo),
        *[(ids[a], anch[s]["util"][a], np.array(["tie anchorage at " + b for b in bearing_label[s][a]], dtype=object),
           "23.8.3, 25.4.2.3, 25.4.3.1", "") for s, a in anchored.items()],
        (ids[~feasible], np.inf, "top strut depth: the section is too shallow for the thrust", "23.4.3, 23.9.2", ""),
        (ids[~web.sv_fits], web.av_req[~web.sv_fits] / web.av_prov[~web.sv_fits],
         "stirrups: no ladder entry fits above the minimum spacing", "9.9.3.1, 23.7.2", ""),
    ]
    sizes = [len(c[0]) for c in checks]

    def column(k: int, dtype=object) -> np.ndarray:
        return np.concatenate([np.broadcast_to(np.asarray(c[k], dtype=dtype), (n,)) for c, n in zip(checks, sizes)])

    model, util = column(0, np.int64), column(1, float)
    valid = np.flatnonzero(~np.isnan(util))
    at = _first_per_group(model[valid], -util[valid], nm)
    row = np.full(nm, -1, np.int64)  # the governing check of each model, -1 if none
    row[at >= 0] = valid[at[at >= 0]]
    face_first = sizes[0]
    in_faces = (row >= face_first) & (row < face_first + sizes[1])
    f = row[in_faces] - face_first  # a node face, spelled out where it governs
    element = faces["element"].to_numpy()[f]
    named = (("node " + faces["node"].to_numpy()[f] + " " + faces["face"].to_numpy()[f]).astype(object)
             + np.where(element != "", " (" + element.astype(object) + ")", ""))
    gov_text = _picked(column(2), row, "")
    gov_text[in_faces] = named
    gov_clause, gov_combination = _picked(column(3), row, ""), _picked(column(4), row, "")
    util = _picked(util, row, 0.0).astype(float)
    status = np.where(angle_why != "", "not-modelled", np.where(util > 1.0 + 1e-9, "resize", "designed"))
    x0 = np.where(md.whole | ~md.mirrored, 0.0, md.ln - md.s_end)
    x1 = np.where(md.whole, md.ln, np.where(md.mirrored, md.ln, md.s_end))
    side_i = np.where(md.mirrored, "B", "A")  # which model end is the member's end i

    def at_end(key, end_is_a):
        a_val, b_val = anch["A"][key], anch["B"][key]
        return np.where(end_is_a, a_val, b_val)

    has_i = md.whole | ~md.mirrored
    has_j = md.whole | md.mirrored
    return pd.DataFrame({
        "member": md.name, "model": md.end, "model_index": ids, "status": status,
        "reason": np.where(status == "resize", gov_text + " (" + gov_clause + ")", angle_why),
        "extent_start_mm": x0, "extent_end_mm": x1, "top_strut_depth_mm": t.a, "lever_arm_mm": t.z,
        "tie_height_mm": tie.wt_eff, "utilization": util, "governing": gov_text,
        "governing_clause": gov_clause,
        "governing_combination": gov_combination,
        "vu_kN": vu / 1e3, "phi_vn_deep_kN": phi_vn / 1e3,
        "tie_as_req_mm2": tie.as_req, "tie_bar": tie.bar, "tie_bars": tie.n_bars, "tie_as_prov_mm2": tie.n_bars * tie.area,
        "ld_mm": anch["ld"], "ldh_mm": anch["ldh"],
        "anchorage_i": np.where(has_i, at_end("how", side_i == "A"), ""),
        "anchorage_available_i_mm": np.where(has_i, at_end("available", side_i == "A"), np.nan),
        "anchorage_j": np.where(has_j, at_end("how", side_i == "B"), ""),
        "anchorage_available_j_mm": np.where(has_j, at_end("available", side_i == "B"), np.nan),
        "av_s_req": web.av_req, "stirrup_bar": web.sv_bar, "stirrup_legs": web.sv_legs,
        "stirrup_spacing_mm": web.sv, "av_s_prov": web.av_prov,
        "beta_s_interior": web.beta_s_interior,
    })


def _member_rows(M, md, models: pd.DataFrame, reasons, method, web: _Web) -> pd.DataFrame:
    """One row per input member: the worst of its models decides (not-modelled, resize, designed;
    then the larger utilization; the first model of equals)."""
    n = len(M["member"])
    group = np.asarray(md.member, dtype=np.int64)
    col = {c: models[c].to_numpy() for c in models.columns}
    rank = np.where(col["status"] == "resize", 1, np.where(col["status"] == "not-modelled", 2, 0))
    key = rank * 1e6 + np.minimum(col["utilization"], 1e5)
    worst = _first_per_group(group, -key, n)
    most = _first_per_group(group, -col["av_s_req"], n)  # the stirrups of the model needing most
    # the largest tie of a member's models; a zero tie prints as 0, never -0 (+ 0.0)
    largest = lambda c, fill: _picked(col[c], _first_per_group(group, -col[c], n), fill) + 0.0  # noqa: E731
    beta_s = _picked(col["beta_s_interior"], _first_per_group(group, col["beta_s_interior"], n), np.nan)
    has = worst >= 0
    first = np.full(n, -1)
    first[md.member[::-1]] = np.arange(len(md.member))[::-1]
    f = np.clip(first, 0, None)
    take = lambda arr, fill: np.where(has, arr[f] if len(arr) else fill, fill)  # noqa: E731
    of_worst = lambda c, fill: _picked(col[c], worst, fill)  # noqa: E731
    worst_status = of_worst("status", "")
    status = np.where(has, worst_status, "not-modelled")
    not_modelled = worst_status == "not-modelled"
    has = has & (status != "not-modelled")  # a member not modelled shows no utilization or steel
    reason = np.where(not_modelled, of_worst("model", "") + ": " + of_worst("reason", ""),
                      np.where(has, of_worst("reason", ""), reasons))
    return pd.DataFrame({
        "member": M["member"], "status": status, "reason": reason, "method": method,
        "utilization": np.where(has, of_worst("utilization", np.nan), np.nan),
        "governing": np.where(has, of_worst("governing", ""), ""),
        "governing_clause": np.where(has, of_worst("governing_clause", ""), ""),
        "governing_combination": np.where(has, of_worst("governing_combination", ""), ""),
        "tie_as_req_mm2": np.where(has, largest("tie_as_req_mm2", np.nan), np.nan),
        "tie_bar": np.where(has, of_worst("tie_bar", ""), ""),
        "tie_bars": np.where(has, largest("tie_bars", 0), 0).astype(int),
        "av_s_min": take(web.av_min, np.nan), "av_s_req": np.where(has, _picked(col["av_s_req"], most, np.nan), np.nan),
        "stirrup_bar": np.where(has, _picked(col["stirrup_bar"], most, ""), ""),
        "stirrup_legs": np.where(has, _picked(col["stirrup_legs"], most, 0), 0).astype(int),
        "stirrup_spacing_mm": np.where(has, _picked(col["stirrup_spacing_mm"], most, np.nan), np.nan),
        "av_s_prov": np.where(has, _picked(col["av_s_prov"], most, np.nan), np.nan),
        "ah_s_req": take(web.ah_req, np.nan), "web_bar": take(web.sh_bar, ""),
        "web_bars_per_layer": take(web.sh_n, 0).astype(int), "web_bar_spacing_mm": take(web.sh, np.nan),
        "ah_s_prov": take(web.ah_prov, np.nan), "s_max_mm": take(web.s_max, np.nan),
        "beta_s_interior": np.where(has, beta_s, np.nan),
    })
