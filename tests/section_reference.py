"""The same sections built in the independent section library concreteproperties (PyPI).

Its ACI-like set-up: RectangularStressBlock(alpha = 0.85, gamma = beta1, eps_cu = 0.003)
(ACI 318-19 22.2.2.4.1, Table 22.2.2.4.3, 22.2.2.1) and elastic-plastic bars with
Es = 200 000 MPa (20.2.2.2). It meshes the concrete and cuts the bars out of it as
polygons, lumps each bar at its centroid, and finds the neutral axis by Brent's method:
a solver and a geometry wholly independent of postproc.sections.
"""

from __future__ import annotations

import math

from concreteproperties.concrete_section import ConcreteSection
from concreteproperties.material import Concrete, SteelBar
from concreteproperties.pre import add_bar
from concreteproperties.stress_strain_profile import (
    ConcreteLinear,
    RectangularStressBlock,
    SteelElasticPlastic,
)
from sectionproperties.pre.library.primitive_sections import circular_section_by_area, rectangular_section

from postproc.sections import beta1

BAR_POINTS = 16  # polygon points of each bar
CIRCLE_POINTS = 96  # polygon points of a circular column outline


def materials(fc: float, fy: float):
    concrete = Concrete(
        name="concrete", density=2.4e-6,
        stress_strain_profile=ConcreteLinear(elastic_modulus=4700 * math.sqrt(fc)),
        ultimate_stress_strain_profile=RectangularStressBlock(
            compressive_strength=fc, alpha=0.85, gamma=float(beta1(fc)), ultimate_strain=0.003),
        flexural_tensile_strength=0.62 * math.sqrt(fc), colour="lightgrey",
    )
    steel = SteelBar(
        name="steel", density=7.85e-6,
        stress_strain_profile=SteelElasticPlastic(yield_strength=fy, elastic_modulus=200_000.0, fracture_strain=0.05),
        colour="grey",
    )
    return concrete, steel


def with_bars(geometry, steel, bars):
    """bars: (area, x, y, diameter) in the section's coordinates."""
    for area, x, y, _ in bars:
        geometry = add_bar(geometry, area=area, material=steel, x=x, y=y, n=BAR_POINTS)
    return ConcreteSection(geometry)


def rectangle(b, h, fc, fy, bars, bf=None, hf=None):
    """Rectangle b x h (bottom left at the origin, y up) with an optional top flange bf x hf."""
    concrete, steel = materials(fc, fy)
    geometry = rectangular_section(d=h, b=b, material=concrete)
    if bf is not None and bf > b:
        web = rectangular_section(d=h - hf, b=b, material=concrete)
        flange = rectangular_section(d=hf, b=bf, material=concrete).shift_section(x_offset=-(bf - b) / 2, y_offset=h - hf)
        geometry = web + flange
    return with_bars(geometry, steel, bars)


def circle(D, fc, fy, bars):
    """Circle of diameter D centred at the origin, outline of the same area as the true circle."""
    concrete, steel = materials(fc, fy)
    geometry = circular_section_by_area(area=math.pi * D**2 / 4, n=CIRCLE_POINTS, material=concrete)
    return with_bars(geometry, steel, bars)


def ultimate_moment(section: ConcreteSection, P: float, top_in_compression: bool = True) -> float:
    """Moment (N mm) at axial load P (compression positive, as in the library) with the top
    (theta = 0) or the bottom (theta = pi) in compression."""
    result = section.ultimate_bending_capacity(theta=0.0 if top_in_compression else math.pi, n=P)
    return abs(result.m_x)
