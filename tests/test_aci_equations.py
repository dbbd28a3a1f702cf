"""The code's own equations evaluated at their published limits (ACI 318-19, SI)."""

import numpy as np
import pytest

from postproc.codes import aci318_19 as aci


def test_phi_for_shear_is_075():
    # ACI 318-19 Table 21.2.1(b): phi = 0.75 for shear and torsion (also common practice)
    assert aci.PHI_SHEAR == 0.75


def test_sqrt_fc_is_limited_to_8_3_mpa():
    # ACI 318-19 22.5.3.1: sqrt(f'c) used for Vc shall not exceed 8.3 MPa (about f'c = 69 MPa)
    assert aci.sqrt_fc(100.0) == pytest.approx(8.3)
    assert aci.sqrt_fc(49.0) == pytest.approx(7.0)


def test_size_effect_factor():
    # ACI 318-19 22.5.5.1.3: lambda_s = sqrt(2/(1 + 0.004 d)) <= 1; equals 1 at d = 250 mm
    assert aci.size_effect_factor(250.0) == pytest.approx(1.0)
    assert aci.size_effect_factor(100.0) == 1.0  # capped at 1 for shallow members
    assert aci.size_effect_factor(1000.0) == pytest.approx(np.sqrt(2 / 5))


def test_vc_equation_a_without_axial_force():
    # Table 22.5.5.1(a): Vc = 0.17 lambda sqrt(f'c) bw d; f'c = 25 MPa, bw = 300, d = 500
    assert aci.vc_with_min_stirrups(25.0, 300.0, 500.0, 0.0, 300 * 600) == pytest.approx(0.17 * 5 * 300 * 500)


def test_vc_equation_b_governs_with_heavy_tension_steel():
    # Table 22.5.5.1(b): 0.66 lambda rho_w^(1/3) sqrt(f'c) bw d; with rho_w = 0.02 it exceeds (a)
    vb = 0.66 * 0.02 ** (1 / 3) * 5 * 300 * 500
    assert vb > 0.17 * 5 * 300 * 500
    assert aci.vc_with_min_stirrups(25.0, 300.0, 500.0, 0.0, 300 * 600, rho_w=0.02) == pytest.approx(vb)


def test_vc_equation_c_with_size_effect():
    # Table 22.5.5.1(c) with 22.5.5.1.3: d = 1000 mm, rho_w = 0.01, f'c = 25 MPa
    expected = 0.66 * np.sqrt(2 / 5) * 0.01 ** (1 / 3) * 5 * 400 * 1000
    assert aci.vc_without_min_stirrups(25.0, 400.0, 1000.0, 0.0, 400 * 1100, 0.01) == pytest.approx(expected)


def test_axial_term_limited_and_vc_capped():
    # 22.5.5.1.2: Nu/(6Ag) <= 0.05 f'c; 22.5.5.1.1: Vc <= 0.42 lambda sqrt(f'c) bw d
    fc, bw, d, Ag = 36.0, 300.0, 500.0, 300.0 * 600.0
    assert aci.axial_stress_term(1e9, Ag, fc) == pytest.approx(0.05 * fc)
    assert aci.vc_with_min_stirrups(fc, bw, d, 1e9, Ag) == pytest.approx(0.42 * 6 * bw * d)


def test_axial_tension_reduces_vc_not_below_zero():
    # Table 22.5.5.1 with Nu negative for tension; Vc is not taken less than zero (from memory)
    fc, bw, d, Ag = 25.0, 300.0, 500.0, 300.0 * 600.0
    nu = -300e3
    assert aci.vc_with_min_stirrups(fc, bw, d, nu, Ag) == pytest.approx((0.85 + nu / (6 * Ag)) * bw * d)
    assert aci.vc_with_min_stirrups(fc, bw, d, -1e8, Ag) == 0.0


def test_av_over_s_and_vs_are_inverse():
    # 22.5.8.5.3: Vs = Av fyt d / s
    assert aci.av_over_s_for_vs(420e3, 420.0, 500.0) == pytest.approx(2.0)
    assert aci.vs_from_av_over_s(2.0, 420.0, 500.0) == pytest.approx(420e3)


def test_av_min_two_expressions_cross_near_32_mpa():
    # Table 9.6.3.4: max(0.062 sqrt(f'c) bw/fyt, 0.35 bw/fyt); equal where sqrt(f'c) = 0.35/0.062
    fc_cross = (0.35 / 0.062) ** 2
    assert aci.av_min_over_s(25.0, 300.0, 420.0) == pytest.approx(0.35 * 300 / 420)
    assert aci.av_min_over_s(49.0, 300.0, 420.0) == pytest.approx(0.062 * 7 * 300 / 420)
    assert aci.av_min_over_s(fc_cross, 300.0, 420.0) == pytest.approx(0.35 * 300 / 420)


def test_av_min_uses_the_full_sqrt_fc():
    # Table 9.6.3.4 uses sqrt(f'c) itself; the 8.3 MPa limit of 22.5.3.1 is for Vc only
    assert aci.av_min_over_s(100.0, 300.0, 420.0) == pytest.approx(0.062 * 10.0 * 300 / 420)


def test_av_min_threshold():
    # 9.6.3.1: Av,min required where Vu > phi 0.083 lambda sqrt(f'c) bw d (1 sqrt(psi) in US units)
    assert aci.av_min_threshold(25.0, 300.0, 500.0) == pytest.approx(0.75 * 0.083 * 5 * 300 * 500)


def test_max_spacing_table_9_7_6_2_2():
    # Table 9.7.6.2.2: Vs <= 0.33 sqrt(f'c) bw d: along min(d/2, 600), across min(d, 600); else halved, 300 cap
    fc, bw = 25.0, 300.0
    along, across = aci.max_spacing(0.0, fc, bw, 500.0)
    assert (along, across) == (250.0, 500.0)
    along, across = aci.max_spacing(0.0, fc, bw, 1400.0)
    assert (along, across) == (600.0, 600.0)
    heavy = 0.34 * 5 * bw * 500.0
    along, across = aci.max_spacing(heavy, fc, bw, 500.0)
    assert (along, across) == (125.0, 250.0)
    along, across = aci.max_spacing(0.34 * 5 * bw * 1400.0, fc, bw, 1400.0)
    assert (along, across) == (300.0, 300.0)


def test_section_limit():
    # 22.5.1.2: Vu <= phi (Vc + 0.66 sqrt(f'c) bw d)
    vc = 0.17 * 5 * 300 * 500
    assert aci.section_limit(vc, 25.0, 300.0, 500.0) == pytest.approx(0.75 * (vc + 0.66 * 5 * 300 * 500))


def test_av_min_exemptions_table_9_6_3_1():
    # Table 9.6.3.1: shallow depth h <= 250 mm; integral with slab h <= max(2.5 hf, 0.5 bw) and h <= 600 mm
    assert aci.av_min_exempt(250.0, 300.0)
    assert not aci.av_min_exempt(260.0, 300.0)
    assert aci.av_min_exempt(400.0, 300.0, hf=200.0)  # 2.5 * 200 = 500 >= 400
    assert not aci.av_min_exempt(650.0, 1400.0, hf=300.0)  # over 600 mm


def test_torsion_threshold_and_at_over_s():
    # Table 22.7.4.1(a) with Nu = 0: Tth = 0.083 lambda sqrt(f'c) Acp^2/pcp
    acp, pcp = 300.0 * 600.0, 2 * (300.0 + 600.0)
    assert aci.torsion_threshold(25.0, acp, pcp, 0.0, acp) == pytest.approx(0.083 * 5 * acp**2 / pcp)
    # 22.7.6.1 with theta = 45 deg and Ao = 0.85 Aoh (22.7.6.1.1)
    assert aci.at_over_s(10e6, 1e5, 420.0) == pytest.approx(10e6 / (0.75 * 2 * 0.85e5 * 420))


def test_deep_beam_by_clear_span():
    # 9.9.1.1(a): clear span <= 4h
    assert aci.is_deep_by_span(2400.0, 600.0)
    assert not aci.is_deep_by_span(2401.0, 600.0)
