"""Chapter 18 provisions (and the column shear rules of Chapters 10, 22, 25) against hand
calculations written out beside each check, with the clause. Flexural strengths come from
postproc.sections, itself checked against concreteproperties (tests/test_sections.py); the
Mpr of a column at its axial loads is checked against concreteproperties here too."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, strategies as st

from postproc import sections as s
from postproc.codes import aci318_19 as aci
from tests import section_reference as ref

# A special-frame beam used by several checks: b = 350, h = 650, d = 590, d' = 60,
# top 2500 mm^2 and bottom 1500 mm^2 at both faces, f'c = 35 MPa (beta1 = 0.80), fy = 420,
# clear span 6000 mm, factored gravity load 1.2D + 1.0L + 0.2S = 40 kN/m.
B, H, D, DP, AS_TOP, AS_BOT, FC, FY, LN, WU = 350.0, 650.0, 590.0, 60.0, 2500.0, 1500.0, 35.0, 420.0, 6000.0, 40.0


def hand_mpr():
    """Mpr by hand (strain compatibility, 22.2; 1.25 fy = 525 MPa, phi = 1: Chapter 2, Mpr).

    Top in tension: 0.85(35)(350)(0.8)c + 1500 (600 (c - 60)/c - 0.85(35)) = 2500 (525)
      -> c = 112.5 mm, fs' = 600 (52.5)/112.5 = 280 MPa, a = 90 mm (bars inside the block)
      -> Mpr- = 0.85(35)(350)(90)(590 - 45) + 1500 (280 - 29.75)(530) = 709.68 kN m
    Bottom in tension: a < d' (bars below the block, nothing displaced):
      8330 c^2 + (2500 (600) - 1500 (525)) c - 2500 (600)(60) = 0 -> c = 69.6 mm, a = 55.7 mm
    """
    k = 0.85 * FC * B * 0.80
    c_neg = 112.5
    mpr_neg = k * c_neg * (D - 0.8 * c_neg / 2) + AS_BOT * (600 * (c_neg - DP) / c_neg - 0.85 * FC) * (D - DP)
    qb, qk = AS_TOP * 600 - AS_BOT * 525, -AS_TOP * 600 * DP
    c_pos = (-qb + math.sqrt(qb**2 - 4 * k * qk)) / (2 * k)
    assert 0.8 * c_pos < DP
    mpr_pos = k * c_pos * (D - 0.8 * c_pos / 2) + AS_TOP * 600 * (c_pos - DP) / c_pos * (D - DP)
    assert k * c_neg + AS_BOT * (600 * (c_neg - DP) / c_neg - 0.85 * FC) == pytest.approx(AS_TOP * 525)
    return mpr_neg, mpr_pos


def test_beam_mpr_matches_the_hand_calculation():
    mpr_neg, mpr_pos = hand_mpr()
    r = s.beam_end_strengths(B, H, D, AS_TOP, AS_BOT, FC, FY, d_prime=DP)
    assert r.mpr_neg[0] == pytest.approx(mpr_neg, rel=1e-9)
    assert r.mpr_pos[0] == pytest.approx(mpr_pos, rel=1e-9)


def test_special_frame_beam_ve_vc_zero_and_hoops():
    # 18.6.5.1: Ve = (Mpr- at one face + Mpr+ at the other)/ln + wu ln/2 (both sway directions)
    #   = (709.68 + 436.1) kN m / 6 m + 40 x 6/2 = 190.96 + 120 = 310.96 kN at each face
    mpr_neg, mpr_pos = hand_mpr()
    x = np.array([0.0, LN / 2, LN])  # face i, midspan, face j
    v_gravity = WU * (LN / 2 - x)  # N: +120 kN at i, 0 at midspan, -120 kN at j (V = dM/dx)
    r = s.beam_end_strengths(B, H, D, AS_TOP, AS_BOT, FC, FY, d_prime=DP)
    v1, v2 = aci.sway_shears(r.mpr_neg, r.mpr_pos, r.mpr_neg, r.mpr_pos, LN)
    ve, v_eq = aci.capacity_design_shear(v_gravity, v1, v2)
    v_sway = (mpr_neg + mpr_pos) / LN
    assert v_sway / 1e3 == pytest.approx(190.96, abs=0.01)
    assert ve == pytest.approx([v_sway + 120e3, v_sway, v_sway + 120e3])
    assert v_eq == pytest.approx([v_sway] * 3)
    # 18.6.5.2: earthquake part 190.96 >= 0.5 x 310.96 and Pu = 0 < Ag f'c/20 -> Vc = 0 in the 2h zones
    ag = B * H
    assert aci.vc_taken_as_zero(v_eq[0], ve[0], 0.0, ag, FC)
    # ... but not with Pu = 400 kN >= 350 x 650 x 35/20 = 398 kN, nor where gravity dominates
    assert not aci.vc_taken_as_zero(v_eq[0], ve[0], 400e3, ag, FC)
    assert not aci.vc_taken_as_zero(100e3, 250e3, 0.0, ag, FC)
    # With Vc = 0: Av/s = Ve/(phi fyt d) = 310.96e3 / (0.75 x 420 x 590) = 1.673 mm^2/mm (22.5.8.5.3)
    assert aci.av_over_s_for_vs(ve[0] / aci.PHI_SHEAR, 420.0, D) == pytest.approx(310.96e3 / (0.75 * 420 * 590), rel=1e-4)
    # 18.6.4.1: hoops over 2h = 1300 mm; 18.6.4.4: s <= min(d/4 = 147.5, 6 db = 6 x 22 = 132, 150) = 132
    assert aci.smf_beam_hoop_zone_length(H) == 1300.0
    assert aci.smf_beam_hoop_spacing(D, 22.0) == pytest.approx(132.0)
    assert aci.smf_beam_hoop_spacing(D, 29.0) == pytest.approx(147.5)  # d/4 governs (6 x 29 = 174)
    assert aci.smf_beam_hoop_spacing(700.0, 29.0) == pytest.approx(150.0)  # 150 governs (d/4 = 175)
    assert aci.smf_beam_hoop_spacing(D, 22.0, fy=550.0) == pytest.approx(110.0)  # 5 db for Grade 550 (from memory)
    # 18.6.4.6: elsewhere stirrups with seismic hooks at d/2 = 295
    assert aci.smf_beam_stirrup_spacing_elsewhere(D) == 295.0
    assert aci.FIRST_HOOP_MAX_MM == 50.0  # 18.6.4.4: first hoop within 50 mm of the face


def test_special_frame_beam_member_checks():
    # 18.6.2.1: ln >= 4d (6000 >= 2360), bw >= the lesser of 0.3h = 195 and 250 mm (from memory)
    assert aci.smf_beam_dimensions_ok(LN, D, B, H)
    assert aci.smf_beam_dimensions_ok(LN, D, 240.0, H)  # 240 >= 195
    assert not aci.smf_beam_dimensions_ok(LN, D, 190.0, H)
    assert not aci.smf_beam_dimensions_ok(LN, 900.0, 240.0, 1000.0)  # the lesser of 300 and 250: 250
    assert not aci.smf_beam_dimensions_ok(2000.0, D, B, H)
    # 18.6.3.1 with 9.6.1.2: As,min = max(0.25 sqrt(35)/420, 1.4/420) x 350 x 590 = 0.003521 x 206500 = 727 mm^2;
    # rho <= 0.025 -> As <= 5162 mm^2; two continuous bars top and bottom
    assert aci.smf_beam_longitudinal_ok(AS_TOP, AS_BOT, 2, 2, FC, FY, B, D)
    assert not aci.smf_beam_longitudinal_ok(AS_TOP, 700.0, 2, 2, FC, FY, B, D)
    assert not aci.smf_beam_longitudinal_ok(5200.0, AS_BOT, 2, 2, FC, FY, B, D)
    assert not aci.smf_beam_longitudinal_ok(AS_TOP, AS_BOT, 2, 1, FC, FY, B, D)
    # 18.6.3.2: Mn+ >= Mn-/2 at each face; every face strength >= 1/4 of the largest
    assert aci.beam_moment_balance_ok(300.0, 500.0, 300.0, 500.0)
    assert not aci.beam_moment_balance_ok(240.0, 500.0, 300.0, 500.0)
    # 18.4.2.2 (intermediate frames): 1/3 and 1/5
    assert aci.beam_moment_balance_ok(170.0, 500.0, 170.0, 500.0, face_ratio=1 / 3, span_ratio=1 / 5)


def test_intermediate_frame_beam_lesser_of_rule():
    # 18.4.2.3: phi Vn >= the lesser of (a) Mn at both ends in reverse curvature plus gravity shear and
    # (b) the largest earthquake-combination shear with Omega_o E.
    r = s.beam_end_strengths(B, H, D, AS_TOP, AS_BOT, FC, FY, d_prime=DP)
    v1, v2 = aci.sway_shears(r.mn_neg, r.mn_pos, r.mn_neg, r.mn_pos, LN)
    v_a, _ = aci.capacity_design_shear(120e3, v1, v2)  # at face i
    # by hand: (Mn- + Mn+)/ln + 120 kN, the Mn from the same section mechanics with fy
    assert v_a[0] == pytest.approx((r.mn_neg[0] + r.mn_pos[0]) / LN + 120e3)
    # (b) with a large E: gravity part 120 kN + 3 x 60 kN = 300 kN > (a): (a) governs
    v_b = aci.amplified_earthquake_shear(120e3, 60e3, omega_o=3.0)
    assert v_b == pytest.approx(300e3)
    assert v_a[0] < v_b
    assert aci.intermediate_frame_design_shear(v_a, v_b)[0] == pytest.approx(v_a[0])
    # with a small E: 120 + 3 x 20 = 180 kN < (a): (b) governs
    v_b_small = aci.amplified_earthquake_shear(120e3, 20e3, omega_o=3.0)
    assert aci.intermediate_frame_design_shear(v_a, v_b_small)[0] == pytest.approx(180e3)
    # the E of the opposite sign: |120 - 3 x 60| = 60 kN
    assert aci.amplified_earthquake_shear(120e3, -60e3, 3.0) == pytest.approx(60e3)


def test_intermediate_frame_beam_hoops():
    # 18.4.2.4: min(d/4, 8 db, 24 db hoop, 300): d = 590, db = 22, hoop 10 mm -> min(147.5, 176, 240, 300) = 147.5
    assert aci.imf_beam_hoop_spacing(590.0, 22.0, 10.0) == pytest.approx(147.5)
    # d = 900: min(225, 176, 240, 300) = 176 (8 db governs); db = 32, hoop 9.5: min(225, 256, 228, 300) = 225
    assert aci.imf_beam_hoop_spacing(900.0, 22.0, 10.0) == pytest.approx(176.0)
    assert aci.imf_beam_hoop_spacing(900.0, 32.0, 9.5) == pytest.approx(225.0)
    assert aci.imf_beam_hoop_spacing(1400.0, 40.0, 16.0) == pytest.approx(300.0)
    assert aci.imf_beam_hoop_spacing(900.0, 22.0, 10.0, fy=550.0) == pytest.approx(132.0)  # 6 db for Grade 550 (from memory)
    # 18.4.2.5: d/2 elsewhere
    assert aci.imf_beam_stirrup_spacing_elsewhere(590.0) == 295.0


def test_ordinary_frame_beam_bars():
    # 18.3.2: two continuous bars top and bottom; continuous bottom bars >= 1/4 of the largest bottom steel
    assert aci.ordinary_frame_beam_bars_ok(2, 2)
    assert not aci.ordinary_frame_beam_bars_ok(1, 3)
    assert not aci.ordinary_frame_beam_bars_ok(2, 2, as_bot_continuous=400.0, as_bot_max=2000.0)
    assert aci.ordinary_frame_beam_bars_ok(2, 2, as_bot_continuous=500.0, as_bot_max=2000.0)


def test_joint_shear_hand_calculation():
    # Interior joint of a special frame: the beam above on each side (As_top 2500, As_bot 1500, fy 420).
    # 18.8.2.1: T = 1.25 x 420 x 2500 = 1 312.5 kN; C = 1.25 x 420 x 1500 = 787.5 kN
    t, c = aci.probable_bar_force(AS_TOP, FY), aci.probable_bar_force(AS_BOT, FY)
    assert (t, c) == (pytest.approx(1312.5e3), pytest.approx(787.5e3))
    # Column shear (common practice): (Mpr- + Mpr+) / storey height = 1145.8 kN m / 3.6 m = 318.3 kN
    mpr_neg, mpr_pos = hand_mpr()
    v_col = aci.column_shear_at_joint(mpr_neg + mpr_pos, 3600.0)
    assert v_col / 1e3 == pytest.approx((mpr_neg + mpr_pos) / 3.6e6, rel=1e-9)
    vu = aci.joint_shear_demand(t, c, v_col)
    assert vu / 1e3 == pytest.approx(1312.5 + 787.5 - 318.3, abs=0.1)  # 1781.7 kN
    # 600 x 600 column, beams 350 wide centred: width = min(600, 350 + 600) = 600; Aj = 600 x 600
    width = aci.joint_effective_width(600.0, 600.0, 350.0)
    assert width == 600.0
    assert aci.joint_effective_width(800.0, 400.0, 300.0) == 700.0  # bw + h governs
    assert aci.joint_effective_width(800.0, 600.0, 300.0, edge_distance=250.0) == 500.0  # beam off-centre: 2 x 250
    # Transverse beams 450 >= 0.75 x 600 = 450 on both faces: confined (15.2.8); 350 would not be
    confined = aci.transverse_beams_confine(450.0, 450.0, 600.0)
    assert confined and not aci.transverse_beams_confine(350.0, 450.0, 600.0)
    # Table 18.8.4.3, continuous column and beam, confined: 1.7 (20 sqrt(psi)/12)
    coef = aci.joint_strength_coefficient(True, True, confined)
    assert coef == 1.7
    # phi Vn = 0.85 x 1.7 x sqrt(35) x 360 000 = 3 077 kN (phi = 0.85, 21.2.4.4); utilization 0.579
    phi_vn = aci.joint_design_strength(FC, width, 600.0, coef)
    assert phi_vn / 1e3 == pytest.approx(0.85 * 1.7 * math.sqrt(35) * 360_000 / 1e3, rel=1e-9)
    assert phi_vn / 1e3 == pytest.approx(3077.3, abs=0.5)
    assert vu / phi_vn == pytest.approx(0.579, abs=0.001)


def test_joint_classes_of_table_18_8_4_3():
    # Table 18.8.4.3 (from memory, SI): continuous column: 1.7 / 1.2 (continuous beam), 1.2 / 1.0 (other beam);
    # other column: 1.2 / 1.0, 1.0 / 0.67 (confined / not confined)
    got = aci.joint_strength_coefficient([1, 1, 1, 1, 0, 0, 0, 0], [1, 1, 0, 0, 1, 1, 0, 0], [1, 0, 1, 0, 1, 0, 1, 0])
    assert got.tolist() == [1.7, 1.2, 1.2, 1.0, 1.2, 1.0, 1.0, 0.67]


def test_joint_depth_rule():
    # 18.8.2.3 (from memory): h >= 20 db of the largest Grade 420 beam bar: 20 x 25 = 500 mm; 26 db for Grade 550
    assert aci.joint_depth_ok(500.0, 25.0)
    assert not aci.joint_depth_ok(480.0, 25.0)
    assert not aci.joint_depth_ok(600.0, 25.0, fy=550.0)  # 26 x 25 = 650
    assert not aci.joint_depth_ok(500.0, 20.0, h_beam_max=1100.0)  # h/2 of a 1100 mm beam


# --- special-frame column: 600 x 600, 12 No. 29 bars (28.7 mm), f'c = 35, fy = fyt = 420,
# 40 mm clear cover to No. 13 hoops (12.7 mm): bc = 600 - 2 x 40 = 520, Ach = 520^2 = 270 400 mm^2.

def test_special_frame_column_ash_hand_calculation():
    ag, ach, fc, fyt = 600.0 * 600.0, 520.0**2, 35.0, 420.0
    # Table 18.7.5.4 (a) 0.3 (Ag/Ach - 1) f'c/fyt = 0.3 (360000/270400 - 1)(35/420) = 0.008284
    #                (b) 0.09 f'c/fyt = 0.0075
    a = 0.3 * (ag / ach - 1) * fc / fyt
    assert a == pytest.approx(0.008284, abs=1e-6)
    # Pu = 3000 kN <= 0.3 Ag f'c = 3780 kN and f'c <= 70: (a) and (b) only
    assert aci.smf_column_ash_over_sbc(ag, ach, fc, fyt, 3000e3, 12) == pytest.approx(a)
    # Pu = 4000 kN > 3780 kN: (c) 0.2 kf kn Pu/(fyt Ach), kf = max(35/175 + 0.6, 1) = 1.0, kn = 12/10 = 1.2
    #   = 0.2 x 1.0 x 1.2 x 4e6 / (420 x 270400) = 0.008452 governs
    assert aci.confinement_kf(fc) == 1.0 and aci.confinement_kn(12) == pytest.approx(1.2)
    assert aci.smf_column_ash_over_sbc(ag, ach, fc, fyt, 4000e3, 12) == pytest.approx(0.2 * 1.2 * 4e6 / (420 * 270400))
    # Ash for s = 100 mm: 0.008452 x 100 x 520 = 439.5 mm^2 -> 4 legs of No. 13 (4 x 129 = 516) suffice
    assert 0.2 * 1.2 * 4e6 / (420 * 270400) * 100 * 520 == pytest.approx(439.5, abs=0.1)
    # f'c = 80 MPa (> 70): (c) applies at any Pu; kf = 80/175 + 0.6 = 1.057
    assert aci.confinement_kf(80.0) == pytest.approx(80 / 175 + 0.6)
    high = aci.smf_column_ash_over_sbc(ag, ach, 80.0, fyt, 3000e3, 12)
    assert high == pytest.approx(max(0.3 * (ag / ach - 1) * 80 / fyt, 0.09 * 80 / fyt, 0.2 * (80 / 175 + 0.6) * 1.2 * 3e6 / (fyt * ach)))
    # fyt above 690 MPa is taken as 690 (Table 20.2.2.4(a), from memory)
    assert aci.smf_column_ash_over_sbc(ag, ach, fc, 830.0, 0.0, 12) == pytest.approx(0.3 * (ag / ach - 1) * fc / 690)


def test_special_frame_column_spirals():
    # Table 18.7.5.4 (d) 0.45 (Ag/Ach - 1) f'c/fyt, (e) 0.12 f'c/fyt, (f) 0.35 kf Pu/(fyt Ach)
    # D = 600, Dc = 520: Ag/Ach = (600/520)^2 = 1.3314; (d) = 0.45 x 0.3314 x 35/420 = 0.012426; (e) = 0.01
    ag, ach = math.pi * 300**2, math.pi * 260**2
    assert aci.smf_column_rho_s(ag, ach, 35.0, 420.0, 1000e3) == pytest.approx(0.45 * ((600 / 520) ** 2 - 1) * 35 / 420)
    # Pu = 3500 kN > 0.3 Ag f'c = 2969 kN: (f) = 0.35 x 1.0 x 3.5e6 / (420 x 212372) = 0.013733 governs
    assert aci.smf_column_rho_s(ag, ach, 35.0, 420.0, 3500e3) == pytest.approx(0.35 * 3.5e6 / (420 * ach))
    # a No. 13 spiral (129 mm^2) at 75 mm on Dc = 520: rho_s = 4 x 129 / (520 x 75) = 0.01323
    assert aci.spiral_rho_s(129.0, 520.0, 75.0) == pytest.approx(0.013231, abs=1e-6)


def test_special_frame_column_so_lo_and_legs():
    # bars 4 per face, centre spacing (600 - 2 (40 + 12.7 + 14.35))/3 = 155.3 mm
    spacing = (600 - 2 * (40 + 12.7 + 28.7 / 2)) / 3
    # 25.7.2.3: clear spacing 126.6 <= 150 -> alternate bars: 1 + ceil(3/2) = 3 legs; 18.7.5.2(e) hx <= 350 keeps 3
    assert aci.legs_required(4, spacing, 28.7, hx_max=350.0) == 3
    # 18.7.5.2(f) (Pu > 0.3 Ag f'c): every bar supported and hx <= 200 -> 4 legs
    assert aci.legs_required(4, spacing, 28.7, hx_max=200.0, every_bar=True) == 4
    # with 3 legs hx = 2 x 155.3 = 310.6; with 4 legs hx = 155.3
    hx3, hx4 = aci.supported_bar_spacing(4, spacing, 3), aci.supported_bar_spacing(4, spacing, 4)
    assert hx3 == pytest.approx(2 * spacing) and hx4 == pytest.approx(spacing)
    # 18.7.5.3: so = min(600/4 = 150, 6 x 28.7 = 172.2, 100 + (350 - hx)/3 within [100, 150])
    #   hx = 310.6: 100 + 39.4/3 = 113.1 governs; hx = 155.3: 164.9 -> 150 cap -> 150
    assert aci.smf_column_so(600.0, 28.7, hx3) == pytest.approx(100 + (350 - 2 * spacing) / 3)
    assert aci.smf_column_so(600.0, 28.7, hx4) == pytest.approx(150.0)
    assert aci.smf_column_so(600.0, 15.9, hx4) == pytest.approx(6 * 15.9)  # 6 db governs: 95.4
    assert aci.smf_column_so(600.0, 28.7, 400.0) == pytest.approx(100.0)  # so not taken below 100
    # 18.7.5.1: lo = max(600, 3000/6 = 500, 450) = 600; a tall storey: 4200/6 = 700
    assert aci.smf_column_lo(600.0, 3000.0) == 600.0
    assert aci.smf_column_lo(600.0, 4200.0) == pytest.approx(700.0)
    assert aci.smf_column_lo(400.0, 2400.0) == 450.0
    # 18.7.5.5: beyond lo min(6 db, 150) = min(172.2, 150) = 150
    assert aci.smf_column_spacing_beyond_lo(28.7) == 150.0
    # 18.7.2.1 and 18.7.4.1
    assert aci.smf_column_dimensions_ok(600.0, 600.0) and not aci.smf_column_dimensions_ok(250.0, 600.0)
    assert not aci.smf_column_dimensions_ok(300.0, 800.0)  # 300/800 = 0.375 < 0.4
    assert aci.smf_column_steel_ratio_ok(12 * 645.0, 360_000.0)  # 2.15 %
    assert not aci.smf_column_steel_ratio_ok(3000.0, 360_000.0)  # 0.83 %


def test_special_frame_column_ve_from_mpr_against_concreteproperties():
    # 18.7.6.1.1: Ve = (Mpr,top + Mpr,bot)/lu with Mpr the largest for the range of Pu (1500 to 4000 kN),
    # Mpr (1.25 fy, phi = 1) checked against the independent library at each load.
    n_bars, db, edge = 12, 28.7, 40 + 12.7 + 28.7 / 2
    sec = s.rectangular_column_sections(600.0, 600.0, n_bars, db, edge, 35.0, 420.0)
    loads = np.array([[1500e3, 2500e3, 4000e3]])
    mpr = s.largest_over_axial(sec, loads)[0]
    on_b, on_h = (int(v[0]) for v in s.perimeter_bar_split(np.array([600.0]), np.array([600.0]), np.array([12]), np.array([edge])))
    area = math.pi * db**2 / 4
    bars = [(area, x, y, db) for x in np.linspace(edge, 600 - edge, on_b + 2) for y in (edge, 600 - edge)]
    bars += [(area, x, y, db) for y in np.linspace(edge, 600 - edge, on_h + 2)[1:-1] for x in (edge, 600 - edge)]
    section = ref.rectangle(600.0, 600.0, 35.0, 1.25 * 420.0, bars)
    theirs = max(ref.ultimate_moment(section, P) for P in loads[0])
    assert mpr == pytest.approx(theirs, rel=3e-3)
    lu = 3000.0
    ve = aci.column_capacity_shear(mpr, mpr, lu, 150e3)
    assert ve == pytest.approx(2 * mpr / lu)
    # Not less than the analysis shear
    assert aci.column_capacity_shear(mpr, mpr, lu, 2 * ve) == pytest.approx(2 * ve)
    # Limited by the beams: the joint's beams deliver (709.68 + 436.1)/2 = 572.9 kN m to each column end
    mpr_neg, mpr_pos = hand_mpr()
    share = (mpr_neg + mpr_pos) / 2
    assert share < mpr
    assert aci.column_capacity_shear(mpr, mpr, lu, 150e3, share, share) == pytest.approx(2 * share / lu)
    # A joint without beam data (NaN) keeps the column's Mpr at that end
    assert aci.column_capacity_shear(mpr, mpr, lu, 150e3, share, np.nan) == pytest.approx((share + mpr) / lu)


def test_special_frame_column_vc_zero_rule():
    # 18.7.6.2.1: Vc = 0 over lo where the earthquake shear >= Ve/2 and Pu < Ag f'c/20 = 360000 x 35/20 = 630 kN
    assert aci.vc_taken_as_zero(300e3, 500e3, 600e3, 360_000.0, 35.0)
    assert not aci.vc_taken_as_zero(300e3, 500e3, 640e3, 360_000.0, 35.0)
    assert not aci.vc_taken_as_zero(200e3, 500e3, 0.0, 360_000.0, 35.0)


def test_intermediate_frame_column():
    # 18.4.3.3 (from memory): so = min(8 db, 200 mm, half the least dimension) for Grade 420
    assert aci.imf_column_so(400.0, 20.0) == pytest.approx(160.0)  # 8 x 20 governs
    assert aci.imf_column_so(600.0, 29.0) == pytest.approx(200.0)  # 200 mm governs (8 x 29 = 232)
    assert aci.imf_column_so(300.0, 25.0) == pytest.approx(150.0)  # 300/2 governs
    assert aci.imf_column_so(600.0, 22.0, fy=550.0) == pytest.approx(132.0)  # Grade 550: 6 db = 132 < 150
    # lo = max(lu/6, largest dimension, 450): 3600/6 = 600, 500, 450 -> 600
    assert aci.imf_column_lo(500.0, 3600.0) == pytest.approx(600.0)
    # 18.4.3.1: lesser of shear from Mn (largest for the range of Pu, nominal) and the Omega_o combination
    sec = s.rectangular_column_sections(500.0, 500.0, 8, 25.0, 65.0, 30.0, 420.0)
    mn = s.largest_over_axial(sec, np.array([[500e3, 1500e3]]), kind="nominal")[0]
    assert mn == pytest.approx(max(s.nominal_moment(sec, 500e3).moment[0], s.nominal_moment(sec, 1500e3).moment[0]))
    v_a = aci.column_capacity_shear(mn, mn, 3000.0, 0.0)
    v_b = aci.amplified_earthquake_shear(10e3, 40e3, 3.0)  # 130 kN
    assert aci.intermediate_frame_design_shear(v_a, v_b) == pytest.approx(min(v_a, 130e3))


# --- column shear of Chapters 10, 22, 25 --------------------------------------------------

def test_column_av_min_trigger_and_amount():
    # 10.6.2.1: Av,min where Vu > 0.5 phi Vc; Vc = 200 kN -> threshold 75 kN
    assert not aci.column_needs_av_min(75e3, 200e3)
    assert aci.column_needs_av_min(-76e3, 200e3)
    # 10.6.2.2: max(0.062 sqrt(f'c), 0.35) bw/fyt: f'c = 49, bw = 400, fyt = 420 -> 0.434 x 400/420 = 0.4133
    assert aci.column_av_min_over_s(49.0, 400.0, 420.0) == pytest.approx(0.434 * 400 / 420)


def test_column_shear_spacing():
    # 10.7.6.5.2: d/2 (<= 600) where Vs <= 0.33 sqrt(f'c) bw d, else d/4 (<= 300).
    # f'c = 36, bw = 400, d = 540: 0.33 x 6 x 400 x 540 = 427.7 kN
    assert aci.column_max_shear_spacing(400e3, 36.0, 400.0, 540.0) == pytest.approx(270.0)
    assert aci.column_max_shear_spacing(450e3, 36.0, 400.0, 540.0) == pytest.approx(135.0)


def test_tie_spacing_each_rule_governs():
    # 25.7.2.1(b): min(16 db long, 48 db tie, least dimension)
    assert aci.tie_max_spacing(16.0, 9.5, 400.0) == pytest.approx(256.0)  # 16 x 16
    assert aci.tie_max_spacing(32.0, 9.5, 600.0) == pytest.approx(456.0)  # 48 x 9.5 (16 x 32 = 512)
    assert aci.tie_max_spacing(25.0, 9.5, 300.0) == pytest.approx(300.0)  # least dimension
    # 25.7.2.2 (from memory): No. 10 ties for bars up to No. 32, No. 13 for No. 36 and larger or bundles
    assert aci.tie_bar_ok(32.3, 9.5) and not aci.tie_bar_ok(35.8, 9.5) and aci.tie_bar_ok(35.8, 12.7)
    assert not aci.tie_bar_ok(25.0, 9.5, bundled=True)


def test_legs_required_by_25_7_2_3():
    # (a) every corner and alternate bar: 5 bars at 100 mm -> supported 1, 3, 5 -> 3 legs
    assert aci.legs_required(5, 100.0, 20.0) == 3
    # (b) clear spacing 180 - 20 = 160 > 150: every bar supported -> 5 legs
    assert aci.legs_required(5, 180.0, 20.0) == 5
    # two bars (corners only): 2 legs; beams of special frames (18.6.4.2): hx <= 350 with bars at 120:
    # supported every 2 bars (240 <= 350) -> 7 bars need 4 legs
    assert aci.legs_required(2, 400.0, 25.0) == 2
    assert aci.legs_required(7, 120.0, 25.0, hx_max=350.0) == 4
    # hx <= 200 with bars at 120: every bar -> 7 legs
    assert aci.legs_required(7, 120.0, 25.0, hx_max=200.0) == 7


def test_circular_section_for_shear():
    # 22.5.2.2: bw = D, d = 0.8 D
    bw, d = aci.circular_shear_section(600.0)
    assert bw == 600.0 and d == pytest.approx(480.0)


def test_biaxial_shear_code_rule():
    # 22.5.1.10 (from memory): interaction neglected where either ratio <= 0.5
    assert aci.biaxial_shear_utilization(0.4, 0.95) == pytest.approx(0.95)
    # 22.5.1.11: both > 0.5: sum <= 1.5 -> 0.7 + 0.9 = 1.6 -> utilization 1.6/1.5 = 1.067 (fails)
    assert aci.biaxial_shear_utilization(0.7, 0.9) == pytest.approx(1.6 / 1.5)
    assert aci.biaxial_shear_utilization(0.6, 0.6) == pytest.approx(0.8)
    # elliptical (common practice): sqrt(0.6^2 + 0.8^2) = 1.0
    assert aci.biaxial_shear_utilization_elliptical(0.6, 0.8) == pytest.approx(1.0)


@given(st.floats(0.0, 2.0), st.floats(0.0, 2.0))
def test_elliptical_interaction_is_never_less_than_the_code_rule(rx, ry):
    # sqrt(rx^2 + ry^2) >= max(rx, ry) and >= (rx + ry)/sqrt(2) > (rx + ry)/1.5: a layout passing
    # the elliptical rule also passes 22.5.1.11
    assert aci.biaxial_shear_utilization_elliptical(rx, ry) >= aci.biaxial_shear_utilization(rx, ry) - 1e-12


def test_functions_broadcast_over_arrays():
    # vectorised: arrays of members in, arrays out (no loop per member)
    d = np.array([400.0, 590.0, 900.0])
    assert aci.smf_beam_hoop_spacing(d, np.array([20.0, 22.0, 29.0])).shape == (3,)
    assert aci.smf_column_so(np.array([400.0, 600.0]), 25.0, np.array([300.0, 150.0])).shape == (2,)
    assert aci.legs_required(np.array([3, 5, 7]), np.array([150.0, 100.0, 120.0]), 25.0, hx_max=350.0).shape == (3,)
    ve, eq = aci.capacity_design_shear(np.zeros((2, 4)), np.ones((2, 1)), -np.ones((2, 1)))
    assert ve.shape == (2, 4) and eq.shape == (2, 4)
