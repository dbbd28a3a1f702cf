"""The shear parallel to b of a beam (forces.csv ``Vb_kN``), checked with the stirrups laid out
for V (ACI 318-19 22.5, 9.6.3, 9.7.6.2.2): the same provisions about the other axis.

About that axis the section has bw = h and d = b less the cover of the V direction (h - d),
the flanges left out (conservative), and the legs parallel to b are the horizontal legs of the
stirrup set: two of each closed stirrup, one of an open one. The side bars are not known, so
Vc is Table 22.5.5.1(a) where those legs give Av,min and zero where they do not (conservative).
The two directions act together by the interaction of 22.5.1.10 and 22.5.1.11 (or the ellipse,
a setting). The layout is not changed for Vb: where it does not suffice, the beam is reported
with the reason.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from postproc import kernels
from postproc.codes import aci318_19 as aci
from postproc.codes.aci318_19 import SI, Edition

PHI = aci.PHI_SHEAR
CELLS_PER_CANDIDATE = 8  # the work of one candidate of ``check``, counted as kernels.use_compiled counts it


@dataclass(frozen=True)
class Lateral:
    ratio: np.ndarray  # per candidate: Vb / phi Vn about the other axis (and over its section limit)
    interaction: np.ndarray  # per candidate: both directions together
    fails: np.ndarray  # per candidate: a check about the other axis fails
    reason: np.ndarray  # per candidate: which, an index into REASONS (0 where none)


# what fails about the other axis, the first that applies
REASONS = ("", "Vu and Vb together exceed phi Vn (22.5.1.10, 22.5.1.11)", "Vb needs Av,min across b (9.6.3.1)",
           "the stirrups are wider apart than d/2 about the other axis (9.7.6.2.2)")


def horizontal_legs(legs: np.ndarray, closed: np.ndarray) -> np.ndarray:
    """Legs parallel to b of a stirrup set of ``legs`` vertical legs (detailing.stirrup_set): the outer
    stirrup's top and bottom (its bottom alone where open) and two of each inner closed stirrup."""
    inner = np.maximum(legs // 2 - 1, 0)
    return np.where(closed, 2, 1) + 2 * inner


def check(b, h, d, fc, fyt, lam, Ag, vb, nu, ratio_v, legs_b, bar_area, spacing, rule: str, u: Edition = SI,
          tol: float = 1e-9, at=None) -> Lateral:
    """Per candidate (``vb``, ``nu``, ``ratio_v``, ``spacing`` aligned: ``spacing`` the gap in force
    at its station, ``ratio_v`` its Vu / phi Vn about the main axis): the ratio about the other axis
    and the interaction; and the checks 9.6.3.1 (Av,min where Vb > phi 0.083 lambda sqrt(f'c) bw d),
    22.5.1.2 and 9.7.6.2.2 (d/2). ``at``: the member of each candidate, the section, ``legs_b`` and
    ``bar_area`` then given once per member (aci318_19.per_section); None: every array per candidate."""
    g = aci.per_section(at)
    bw, dd = h, b - (h - d)
    if rule == "code" and at is not None and kernels.use_compiled(len(vb) * CELLS_PER_CANDIDATE):
        terms = dict(lb_area=legs_b * bar_area, amin_tol=aci.av_min_over_s(fc, bw, fyt, u) * (1 - tol),
                     coef=aci.vc_coefficient_with_min_stirrups(fc, lam, None, u), ag=Ag, fc=fc, bw=bw, dd=dd,
                     cap=aci.vc_cap(fc, bw, dd, lam, u), fyt=fyt, vs_max=aci.vs_max(fc, bw, dd, u),
                     threshold=aci.av_min_threshold(fc, bw, dd, lam, u), half_d=dd / 2 * (1 + tol))
        n = len(h)
        terms = {k: np.broadcast_to(v, n) for k, v in terms.items()}  # a scalar (lambda) for every member
        r, both, reason = kernels.lateral_check(at, spacing, vb, nu, ratio_v, terms, PHI, tol)
        return Lateral(r, both, reason > 0, reason)
    with np.errstate(divide="ignore", invalid="ignore"):
        av_s = np.where(np.isfinite(spacing), g(legs_b * bar_area) / spacing, 0.0)
    has_min = av_s >= g(aci.av_min_over_s(fc, bw, fyt, u) * (1 - tol))
    vc_a = aci.vc_with_min_stirrups(fc, bw, dd, nu, Ag, lam, u=u, at=at)
    vc = np.where(has_min, vc_a, 0.0)
    vs = np.minimum(av_s * g(fyt) * g(dd), g(aci.vs_max(fc, bw, dd, u)))
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(vb > 0, vb / (PHI * (vc + vs)), 0.0)
        limit = vb / aci.section_limit(vc_a, fc, bw, dd, u, at=at)
    r = np.nan_to_num(np.maximum(r, limit), nan=np.inf, posinf=np.inf)  # inf stays inf (not the largest float)
    both = aci.biaxial_interaction(np.nan_to_num(ratio_v, nan=np.inf, posinf=np.inf), r, rule)
    need_min = vb > g(aci.av_min_threshold(fc, bw, dd, lam, u))
    reason = np.select([both > 1 + tol, need_min & ~has_min, need_min & (spacing > g(dd / 2 * (1 + tol)))], [1, 2, 3], 0)
    return Lateral(r, both, reason > 0, reason)
