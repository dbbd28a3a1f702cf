"""Flexural strength of reinforced-concrete sections with axial load, ACI 318-19, in either
edition's units (SI: N, mm, MPa; inch-pound: lb, in, psi; the ``u`` of every constructor).

Strain compatibility with the equivalent rectangular stress block of 22.2: plane sections
(22.2.1.2), concrete strain 0.003 at the extreme compression fibre (22.2.2.1), a uniform
stress 0.85 f'c over a depth a = beta1 c (22.2.2.4.1, Table 22.2.2.4.3), no concrete
tension (22.2.2.5), and elastic-perfectly plastic bars (20.2.2.1, Es by 20.2.2.2). The
concrete displaced by a bar inside the block is taken out of the block (the bar's force is
As (fs - 0.85 f'c) there), spread over the bar's diameter so that equilibrium stays a
continuous function of the neutral-axis depth.

Every section is one row of a struct of arrays (``Sections``) that bends in one direction:
depths z run from the "top" face, which is the compression face for ``sign = +1``; with
``sign = -1`` the bottom face is in compression. The neutral-axis depth c of every
(section, P) pair is found at once by bisection on the axial equilibrium, which is monotonic
in c. Axial force P is compression positive (the code's sign). Moments are about the
centroid of the gross concrete section (irrelevant at P = 0; for the symmetric column
sections built here it is also the plastic centroid).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from postproc import kernels
from postproc.codes.aci318_19 import SI, Edition

ALPHA1 = 0.85  # 22.2.2.4.1: stress 0.85 f'c over the equivalent block
EPS_CU = 0.003  # 22.2.2.1: maximum usable strain at the extreme concrete compression fibre
ES_MPA = SI.es  # 20.2.2.2: modulus of elasticity of nonprestressed bars (SI; the edition's es in general)
MPR_STEEL_FACTOR = 1.25  # Chapter 2, definition of Mpr (used by 18.6.5.1, 18.7.6.1.1, 18.8.2.1)
PN_MAX_TIED = 0.80  # Table 22.4.2.1: Pn,max = 0.80 Po, ties conforming to 22.4.2.4
PN_MAX_SPIRAL = 0.85  # Table 22.4.2.1: Pn,max = 0.85 Po, spirals conforming to 22.4.2.5
PHI_TENSION_CONTROLLED = 0.90  # Table 21.2.2
PHI_COMPRESSION_TIED = 0.65  # Table 21.2.2, other transverse reinforcement
PHI_COMPRESSION_SPIRAL = 0.75  # Table 21.2.2, spirals conforming to 25.7.3
TRANSITION_STRAIN = 0.003  # Table 21.2.2: tension-controlled where eps_t >= eps_ty + 0.003

_BISECTION_STEPS = 48  # the bracket [0, 1000 h] shrinks to about 4e-12 h
_C_MAX_OVER_H = 1000.0  # at c = 1000 h every fibre is practically at eps_cu


def beta1(fc, u: Edition = SI):
    """Stress-block depth factor (Table 22.2.2.4.3): 0.85 up to 28 MPa | 4000 psi,
    0.85 - 0.05 (f'c - 28)/7 | 0.85 - 0.05 (f'c - 4000)/1000 between, 0.65 from 55 MPa | 8000 psi."""
    fc = np.asarray(fc, dtype=float)
    low, high = u.beta1_fc
    return np.where(fc >= high, 0.65, np.clip(0.85 - 0.05 * (fc - low) / u.beta1_step, 0.65, 0.85))


def phi_axial_flexure(eps_t, fy, spiral=False, u: Edition = SI):
    """phi for moment, axial force or both (Table 21.2.2), from the net tensile strain eps_t.

    eps_ty = fy/Es (21.2.2.1). Compression-controlled (eps_t <= eps_ty): 0.65, or 0.75 with
    spirals; tension-controlled (eps_t >= eps_ty + 0.003): 0.90; linear between.
    """
    eps_ty = np.asarray(fy, dtype=float) / u.es
    low = np.where(spiral, PHI_COMPRESSION_SPIRAL, PHI_COMPRESSION_TIED)
    t = np.clip((np.asarray(eps_t, dtype=float) - eps_ty) / TRANSITION_STRAIN, 0.0, 1.0)
    return low + (PHI_TENSION_CONTROLLED - low) * t


@dataclass(frozen=True)
class Sections:
    """n sections bending in one direction, as arrays (struct of arrays).

    h: overall depth in the bending direction; z is measured from the top face.
    piece_width, piece_top, piece_bottom (n, k): concrete rectangles (width 0 = none).
    diameter (n,): a circular concrete section of that diameter (0 = none).
    bar_area, bar_z, bar_db (n, m): steel layers (area 0 = padding), bar_db the diameter
    of one bar of the layer (the width over which it displaces the block).
    fc, fy (n,); spiral (n,): spiral or circular-hoop confinement (22.4.2.1, Table 21.2.2).
    u: the edition whose units the arrays are in (beta1, Es).
    """

    h: np.ndarray
    piece_width: np.ndarray
    piece_top: np.ndarray
    piece_bottom: np.ndarray
    diameter: np.ndarray
    bar_area: np.ndarray
    bar_z: np.ndarray
    bar_db: np.ndarray
    fc: np.ndarray
    fy: np.ndarray
    spiral: np.ndarray
    u: Edition = SI

    def take(self, index) -> Sections:
        """The sections at these indices (repeat a section to pair it with several axial loads)."""
        return Sections(**{f.name: getattr(self, f.name)[index] for f in fields(self) if f.name != "u"}, u=self.u)

    @property
    def gross_area(self):
        """Ag of the concrete outline (bars not deducted)."""
        pieces = (self.piece_width * (self.piece_bottom - self.piece_top)).sum(axis=1)
        return pieces + np.pi * self.diameter**2 / 4.0

    @property
    def steel_area(self):
        """Ast, the total longitudinal steel."""
        return self.bar_area.sum(axis=1)

    @property
    def centroid_z(self):
        """Depth of the centroid of the gross concrete section from the top face."""
        piece_area = self.piece_width * (self.piece_bottom - self.piece_top)
        first = (piece_area * (self.piece_top + self.piece_bottom) / 2.0).sum(axis=1)
        circle = np.pi * self.diameter**2 / 4.0
        return (first + circle * self.diameter / 2.0) / (piece_area.sum(axis=1) + circle)


def _column(values, n):
    return np.broadcast_to(np.asarray(values, dtype=float), (n,)).astype(float)


def _sections(h, widths, tops, bottoms, diameter, bar_area, bar_z, bar_db, fc, fy, spiral, u: Edition):
    n = bar_area.shape[0]
    return Sections(
        h=_column(h, n), piece_width=np.asarray(widths, float), piece_top=np.asarray(tops, float),
        piece_bottom=np.asarray(bottoms, float), diameter=_column(diameter, n),
        bar_area=np.asarray(bar_area, float), bar_z=np.asarray(bar_z, float),
        bar_db=np.broadcast_to(np.asarray(bar_db, float), bar_area.shape).astype(float),
        fc=_column(fc, n), fy=_column(fy, n), spiral=np.broadcast_to(np.asarray(spiral, bool), (n,)).copy(), u=u,
    )


def beam_sections(b, h, d, as_top, as_bot, fc, fy, d_prime=None, bf=None, hf=None,
                  db_top=0.0, db_bot=0.0, u: Edition = SI) -> Sections:
    """Beams with one layer of top bars and one of bottom bars, and an optional top flange.

    d: top face to the centroid of the bottom bars; d_prime: top face to the centroid of the
    top bars (default h - d: the same cover at both faces, so that d is the effective depth
    for both signs). bf, hf: flange width and thickness (T or L beam, flange at the top; NaN
    or bf <= b for none). The flange is in compression for sign +1 (bottom bars in tension).
    """
    b, h, d = (np.atleast_1d(np.asarray(v, dtype=float)) for v in (b, h, d))
    n = np.broadcast_shapes(b.shape, h.shape, d.shape, np.shape(as_top), np.shape(as_bot), np.shape(fc))[0]
    b, h, d = _column(b, n), _column(h, n), _column(d, n)
    d_prime = h - d if d_prime is None else _column(d_prime, n)
    overhang = np.zeros(n) if bf is None else np.nan_to_num(_column(bf, n) - b, nan=0.0).clip(min=0.0)
    flange = np.zeros(n) if hf is None else np.nan_to_num(_column(hf, n), nan=0.0)
    overhang = np.where(flange > 0.0, overhang, 0.0)
    widths = np.stack([b, overhang], axis=1)
    tops = np.zeros((n, 2))
    bottoms = np.stack([h, np.minimum(flange, h)], axis=1)
    bar_area = np.stack([_column(as_top, n), _column(as_bot, n)], axis=1)
    bar_z = np.stack([d_prime, d], axis=1)
    bar_db = np.stack([_column(db_top, n), _column(db_bot, n)], axis=1)
    return _sections(h, widths, tops, bottoms, 0.0, bar_area, bar_z, bar_db, fc, fy, False, u)


def perimeter_bar_split(b, h, n_long, edge):
    """Bars between the corners on each face of a rectangular column: (on each b face, on each h face).

    n_long bars (even, at least 4) with one in each corner; the other (n_long - 4)/2 pairs go
    to the faces in proportion to the distances between corner bars (common practice), a
    pair that splits evenly going to the b faces. Raises ValueError for an odd or short count.
    """
    n_long = np.asarray(n_long)
    bad = (n_long < 4) | (n_long % 2 != 0)
    if np.any(bad):
        raise ValueError(f"rectangular columns need an even number of bars, at least 4; got {np.unique(n_long[bad]).tolist()}")
    pairs = (n_long - 4) // 2
    along_b, along_h = np.asarray(b, float) - 2 * np.asarray(edge, float), np.asarray(h, float) - 2 * np.asarray(edge, float)
    on_b = np.floor(pairs * along_b / (along_b + along_h) + 0.5).astype(int)
    return on_b, pairs - on_b


def rectangular_column_sections(b, h, n_long, db_long, edge, fc, fy, direction="h", bar_area=None,
                                spiral=False, u: Edition = SI) -> Sections:
    """Rectangular columns with n_long bars around the perimeter (perimeter_bar_split).

    edge: face to bar centre. direction "h": bending with h as the depth (shear parallel to
    h, the b faces in compression and tension); "b": the other principal axis. bar_area:
    area of one bar (default pi db^2/4).
    """
    b, h, n_long, db_long, edge = np.broadcast_arrays(*(np.atleast_1d(np.asarray(v)) for v in (b, h, n_long, db_long, edge)))
    b, h, db_long, edge = (v.astype(float) for v in (b, h, db_long, edge))
    one_bar = np.pi * db_long**2 / 4.0 if bar_area is None else np.broadcast_to(np.asarray(bar_area, float), b.shape)
    on_b, on_h = perimeter_bar_split(b, h, n_long, edge)
    if direction == "h":
        depth, width, face_bars, side_bars = h, b, on_b, on_h
    elif direction == "b":
        depth, width, face_bars, side_bars = b, h, on_h, on_b
    else:
        raise ValueError(f"direction must be 'h' or 'b', not {direction!r}")
    rows = side_bars + 2
    j = np.arange(rows.max())[None, :]
    end_row = (j == 0) | (j == rows[:, None] - 1)
    area = np.where(j < rows[:, None], one_bar[:, None] * np.where(end_row, face_bars[:, None] + 2, 2), 0.0)
    z = edge[:, None] + j * (depth - 2 * edge)[:, None] / (rows - 1)[:, None]
    n = b.shape[0]
    return _sections(depth, width[:, None], np.zeros((n, 1)), depth[:, None], 0.0, area, z, db_long[:, None], fc, fy,
                     spiral, u)


def circular_column_sections(diameter, n_long, db_long, edge, fc, fy, theta0=np.pi / 2, bar_area=None,
                             spiral=True, u: Edition = SI) -> Sections:
    """Circular columns with n_long bars equally spaced on a circle edge from the face.

    The first bar sits at angle theta0 from the horizontal axis (pi/2: at the top, the
    extreme compression fibre). spiral: confinement by a spiral or circular hoops
    (Table 21.2.2 and Table 22.4.2.1 rows for spirals).
    """
    D, n_long, db_long, edge = np.broadcast_arrays(*(np.atleast_1d(np.asarray(v)) for v in (diameter, n_long, db_long, edge)))
    D, db_long, edge = D.astype(float), db_long.astype(float), edge.astype(float)
    one_bar = np.pi * db_long**2 / 4.0 if bar_area is None else np.broadcast_to(np.asarray(bar_area, float), D.shape)
    k = np.arange(n_long.max())[None, :]
    angle = theta0 + 2.0 * np.pi * k / n_long[:, None]
    z = D[:, None] / 2.0 - (D / 2.0 - edge)[:, None] * np.sin(angle)
    area = np.where(k < n_long[:, None], one_bar[:, None], 0.0)
    n = D.shape[0]
    return _sections(D, np.zeros((n, 1)), np.zeros((n, 1)), np.zeros((n, 1)), D, area, z, db_long[:, None], fc, fy,
                     spiral, u)


def layered_sections(b, h, bar_area, bar_z, bar_db, fc, fy, spiral=False, u: Edition = SI) -> Sections:
    """Rectangular sections with explicit steel layers (n, m): area, depth from the top face, bar diameter."""
    bar_area = np.atleast_2d(np.asarray(bar_area, float))
    n = bar_area.shape[0]
    b, h = _column(b, n), _column(h, n)
    return _sections(h, b[:, None], np.zeros((n, 1)), h[:, None], 0.0, bar_area,
                     np.atleast_2d(np.asarray(bar_z, float)), bar_db, fc, fy, spiral, u)


@dataclass(frozen=True)
class _Oriented:
    """A batch of sections seen from its compression face (sign applied), fixed during a solve."""

    sec: Sections
    piece_top: np.ndarray  # depths from the compression face
    piece_bottom: np.ndarray
    bar_u: np.ndarray
    half_db: np.ndarray
    centroid_u: np.ndarray
    extreme_tension_u: np.ndarray
    has_circle: bool

    @classmethod
    def of(cls, sec: Sections, sign) -> _Oriented:
        flip = np.broadcast_to(np.asarray(sign), sec.h.shape) < 0
        h = sec.h[:, None]
        bar_u = np.where(flip[:, None], h - sec.bar_z, sec.bar_z)
        return cls(
            sec=sec,
            piece_top=np.where(flip[:, None], h - sec.piece_bottom, sec.piece_top),
            piece_bottom=np.where(flip[:, None], h - sec.piece_top, sec.piece_bottom),
            bar_u=bar_u,
            half_db=np.maximum(sec.bar_db / 2.0, 1e-6 * h),
            centroid_u=np.where(flip, sec.h - sec.centroid_z, sec.centroid_z),
            extreme_tension_u=np.where(sec.bar_area > 0.0, bar_u, -np.inf).max(axis=1),
            has_circle=bool(np.any(sec.diameter > 0.0)),
        )

    def block(self, a):
        """Area of concrete within depth a of the compression face, and its first moment about that face."""
        sec = self.sec
        overlap = np.clip(np.minimum(a[:, None], self.piece_bottom) - self.piece_top, 0.0, None)
        area = (sec.piece_width * overlap).sum(axis=1)
        first = (sec.piece_width * overlap * (self.piece_top + overlap / 2.0)).sum(axis=1)
        if not self.has_circle:
            return area, first
        # circular segment of depth a, half-angle t: area r^2 (t - sin t cos t),
        # centroid 2 r sin^3 t / (3 (t - sin t cos t)) from the centre
        r = sec.diameter / 2.0
        with np.errstate(invalid="ignore", divide="ignore"):
            t = np.arccos(np.clip(1.0 - np.minimum(a, sec.diameter) / r, -1.0, 1.0))
            seg = np.nan_to_num(r**2 * (t - np.sin(t) * np.cos(t)))
            from_centre = np.where(seg > 0.0, 2.0 * r**3 * np.sin(t) ** 3 / (3.0 * seg), 0.0)
        return area + seg, first + seg * np.nan_to_num(r - from_centre)

    def actions(self, c, steel_factor):
        sec = self.sec
        fc, fy = sec.fc, sec.fy * steel_factor
        a = beta1(fc, sec.u) * c
        block_area, block_first = self.block(a)
        concrete = ALPHA1 * fc * block_area
        depth_c = block_first / np.where(block_area > 0.0, block_area, 1.0)
        u = self.bar_u
        stress = np.clip(sec.u.es * EPS_CU * (c[:, None] - u) / c[:, None], -fy[:, None], fy[:, None])
        displaced = np.clip((a[:, None] - (u - self.half_db)) / (2.0 * self.half_db), 0.0, 1.0)
        bar_force = sec.bar_area * (stress - ALPHA1 * fc[:, None] * displaced)
        axial = concrete + bar_force.sum(axis=1)
        moment = concrete * (self.centroid_u - depth_c) + (bar_force * (self.centroid_u[:, None] - u)).sum(axis=1)
        eps_t = EPS_CU * (self.extreme_tension_u - c) / c
        return axial, moment, eps_t


def section_actions(sec: Sections, c, sign, steel_factor=1.0):
    """Axial force P (compression positive), moment M about the gross centroid (positive when
    the face of ``sign`` is in compression) and net tensile strain eps_t at neutral-axis depth c.

    steel_factor scales fy (1.25 for Mpr). eps_t is at the extreme tension layer (21.2.2).
    """
    return _Oriented.of(sec, sign).actions(_column(c, sec.h.shape[0]), steel_factor)


@dataclass(frozen=True)
class MomentAtAxial:
    """Moment strength of each (section, P) pair.

    moment (N mm | lb in): phi * M for ``design_moment``, M otherwise; NaN where no strain state
    balances P (beyond pure tension or the squash load) or, for design, where Pu exceeds
    phi Pn,max. c: neutral-axis depth; eps_t: net tensile strain; phi: Table 21.2.2 (1.0
    for nominal and probable strengths). above_pn_max: P > Pn,max of 22.4.2.1.
    """

    moment: np.ndarray
    c: np.ndarray
    eps_t: np.ndarray
    phi: np.ndarray
    above_pn_max: np.ndarray


def squash_load(sec: Sections, steel_factor=1.0):
    """Po = 0.85 f'c (Ag - Ast) + fy Ast (22.4.2.2)."""
    ast = sec.steel_area
    return ALPHA1 * sec.fc * (sec.gross_area - ast) + steel_factor * sec.fy * ast


def pn_max(sec: Sections):
    """Pn,max: 0.80 Po with ties, 0.85 Po with spirals (Table 22.4.2.1)."""
    return np.where(sec.spiral, PN_MAX_SPIRAL, PN_MAX_TIED) * squash_load(sec)


def _solve(sec: Sections, target, sign, steel_factor, with_phi):
    n = sec.h.shape[0]
    target = _column(target, n)
    oriented = _Oriented.of(sec, sign)

    def axial(c):
        p, m, eps_t = oriented.actions(c, steel_factor)
        phi = phi_axial_flexure(eps_t, sec.fy, sec.spiral, sec.u) if with_phi else np.ones(n)
        return phi * p, m, eps_t, phi

    lo, hi = np.zeros(n), _C_MAX_OVER_H * sec.h
    p_lo, p_hi = axial(1e-9 * sec.h)[0], axial(hi)[0]
    reachable = (target >= p_lo) & (target <= p_hi)
    if not with_phi and not oriented.has_circle \
            and kernels.use_compiled(n * (sec.piece_top.shape[1] + sec.bar_area.shape[1])):  # entries x coordinates
        c = kernels.axial_bisection(beta1(sec.fc, sec.u), oriented.piece_top, oriented.piece_bottom, sec.piece_width,
                                    oriented.bar_u, oriented.half_db, sec.bar_area, ALPHA1 * sec.fc,
                                    sec.fy * steel_factor, sec.u.es * EPS_CU, target, hi, _BISECTION_STEPS)
    else:
        for _ in range(_BISECTION_STEPS):
            mid = 0.5 * (lo + hi)
            below = axial(mid)[0] < target
            lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
        c = 0.5 * (lo + hi)
    _, moment, eps_t, phi = axial(c)
    return c, phi * moment, eps_t, phi, reachable


def nominal_moment(sec: Sections, P, sign=1) -> MomentAtAxial:
    """Mn at axial load P (22.2, 22.4): strain compatibility with fy, phi = 1."""
    return _moment(sec, P, sign, 1.0, False)


def probable_moment(sec: Sections, P, sign=1) -> MomentAtAxial:
    """Mpr at axial load P: bars at 1.25 fy (elastic-plastic, in tension and compression), phi = 1 (Chapter 2, Mpr)."""
    return _moment(sec, P, sign, MPR_STEEL_FACTOR, False)


def design_moment(sec: Sections, Pu, sign=1) -> MomentAtAxial:
    """phi Mn at factored axial load Pu: the point of the design interaction curve where
    phi Pn = Pu, phi by Table 21.2.2 from that point's eps_t; NaN above phi Pn,max (22.4.2.1)."""
    result = _moment(sec, Pu, sign, 1.0, True)
    over = _column(Pu, sec.h.shape[0]) > result.phi * pn_max(sec)
    return MomentAtAxial(np.where(over, np.nan, result.moment), result.c, result.eps_t, result.phi, result.above_pn_max)


def _moment(sec, P, sign, steel_factor, with_phi):
    c, moment, eps_t, phi, reachable = _solve(sec, P, sign, steel_factor, with_phi)
    P = _column(P, sec.h.shape[0])
    return MomentAtAxial(np.where(reachable, moment, np.nan), c, eps_t, phi, P > pn_max(sec))


def largest_over_axial(sec: Sections, P, sign=1, kind="probable"):
    """The largest moment of each section over a range of axial loads (18.7.6.1.1, 18.4.3.1(a)).

    P (n, k): the axial loads of each section's combinations (NaN for none). kind:
    "probable" (Mpr) or "nominal" (Mn). Returns (n,) moments, NaN where none is reachable.
    """
    P = np.atleast_2d(np.asarray(P, dtype=float))
    n, k = P.shape
    pairs = sec.take(np.repeat(np.arange(n), k))
    strength = probable_moment if kind == "probable" else nominal_moment
    loads = P.reshape(-1)
    m = strength(pairs, np.nan_to_num(loads), sign).moment
    m = np.where(np.isnan(loads), -np.inf, np.nan_to_num(m, nan=-np.inf)).reshape(n, k).max(axis=1)
    return np.where(np.isfinite(m), m, np.nan)


@dataclass(frozen=True)
class BeamEndStrengths:
    """Mn and Mpr (N mm | lb in) of beam end sections for both signs: ``pos`` with the bottom bars in
    tension (sagging, the flange in compression), ``neg`` with the top bars in tension.
    eps_t_* the net tensile strain at Mn, phi_* by Table 21.2.2."""

    mn_pos: np.ndarray
    mn_neg: np.ndarray
    mpr_pos: np.ndarray
    mpr_neg: np.ndarray
    eps_t_pos: np.ndarray
    eps_t_neg: np.ndarray
    phi_pos: np.ndarray
    phi_neg: np.ndarray


def beam_end_strengths(b, h, d, as_top, as_bot, fc, fy, d_prime=None, bf=None, hf=None,
                       db_top=0.0, db_bot=0.0, u: Edition = SI) -> BeamEndStrengths:
    """Mn (22.2) and Mpr (1.25 fy, phi = 1; 18.6.5.1) of beam sections at P = 0, both signs.

    Arguments as ``beam_sections``; every one may be an array over many beam ends.
    """
    sec = beam_sections(b, h, d, as_top, as_bot, fc, fy, d_prime, bf, hf, db_top, db_bot, u)
    pos, neg = nominal_moment(sec, 0.0, +1), nominal_moment(sec, 0.0, -1)
    return BeamEndStrengths(
        mn_pos=pos.moment, mn_neg=neg.moment,
        mpr_pos=probable_moment(sec, 0.0, +1).moment, mpr_neg=probable_moment(sec, 0.0, -1).moment,
        eps_t_pos=pos.eps_t, eps_t_neg=neg.eps_t,
        phi_pos=phi_axial_flexure(pos.eps_t, sec.fy, u=u), phi_neg=phi_axial_flexure(neg.eps_t, sec.fy, u=u),
    )
