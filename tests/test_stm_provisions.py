"""ACI 318-19 strut-and-tie, deep-beam and development-length provisions (SI), checked
against hand calculations and against the inch-pound form of the same equations.

Inch-pound forms used as the outside reference (SI = inch-pound converted with
1 psi = 0.006895 MPa, 1 in = 25.4 mm, so sqrt(f'c) in psi = 12.04 sqrt(f'c) in MPa):
- 25.4.3.1 standard hook: ldh = fy psi_e psi_r psi_o psi_c / (55 lambda sqrt f'c) db^1.5,
  psi_c = f'c/15000 + 0.6 below 6000 psi (as printed on thestructuraltoolbox.com/concrete/
  aci_development, ACI 318-19 hooked development length).
- Table 25.4.2.3: ld/db = fy psi / (25 lambda sqrt f'c) (No. 6 and smaller) and / (20 ...)
  (No. 7 and larger) with spacing and cover conditions met; 3 fy psi / (50 ...) and
  3 fy psi / (40 ...) otherwise (from memory).
- 9.9.2.1: Vu <= phi 10 sqrt(f'c) bw d (psi), published as phi Vn = 512.3 kip for the
  transfer girder of tests/test_stm.py (f'c = 4000 psi, bw = 20 in, d = 54 in).
"""

import numpy as np
import pytest

from postproc.codes import aci318_19_stm as code

PSI = 0.00689476  # MPa
SQRT_PSI_PER_MPA = 1 / np.sqrt(PSI)  # sqrt(f'c psi) / sqrt(f'c MPa) = 12.04


def test_phi_and_angle_limit():
    # Table 21.2.1: phi = 0.75 for struts, ties, nodal zones and bearing areas of Chapter 23
    assert code.PHI_STM == 0.75
    # 23.2.7: 25 degrees between a strut and a tie at one node
    assert code.strut_tie_angle_ok(25.0) and not code.strut_tie_angle_ok(24.9)


def test_beta_s_table_23_4_3():
    # Table 23.4.3: boundary 1.0; interior with 23.5 reinforcement 0.75; interior otherwise 0.4;
    # tension zone 0.4 (the 0.4 rows from memory of the 2019 edition)
    assert code.strut_beta_s(True, False) == 1.0
    assert code.strut_beta_s(False, True) == 0.75
    assert code.strut_beta_s(False, False) == 0.4
    assert code.strut_beta_s(True, True, tension_zone=True) == 0.4


def test_beta_n_table_23_9_2():
    # Table 23.9.2: CCC 1.0, CCT 0.80, CTT 0.60
    assert list(code.node_beta_n(["CCC", "CCT", "CTT", "TTT"])) == [1.0, 0.8, 0.6, 0.6]
    assert list(code.node_type_from_ties([0, 1, 2, 3])) == ["CCC", "CCT", "CTT", "CTT"]


def test_effective_strengths():
    # 23.4.3: fce = 0.85 beta_c beta_s f'c; published 2550 psi for beta_s = 0.75, f'c = 4000 psi
    assert code.strut_effective_strength(4000 * PSI, 0.75) == pytest.approx(2550 * PSI)
    # 23.9.2: CCT node, f'c = 30 MPa: 0.85 x 0.8 x 30 = 20.4 MPa
    assert code.node_effective_strength(30.0, 0.8) == pytest.approx(20.4)
    # 23.4.1 / 23.9.1 with phi: 0.75 x 20.4 MPa x 300 mm x 400 mm = 1836 kN
    assert code.design_compressive_strength(20.4, 300.0, 400.0) == pytest.approx(1.836e6)


def test_tie_area_and_stirrup_tie():
    # 23.7.2 with 23.3.1: As = Fu/(phi fy): 510.4 kip / (0.75 x 60 ksi) = 11.34 in^2 (hand calculation)
    assert code.tie_area_required(510.4 * 4448.22, 60000 * PSI) == pytest.approx(11.342 * 645.16, rel=1e-3)
    # stirrups as a tie: 100 kN over 500 mm with fyt = 420: 100e3 / (0.75 x 420 x 500) = 0.635 mm^2/mm
    assert code.distributed_tie_area_per_length(100e3, 420.0, 500.0) == pytest.approx(0.63492, rel=1e-4)


def test_tie_exit_length_geometry():
    # 23.8.3: the tie leaves the extended nodal zone (wt/2) cot(theta) inside the bearing edge;
    # wt = 10 in, tan(theta) = 50/80: 5 in x 1.6 = 8 in
    theta = np.degrees(np.arctan(50 / 80))
    assert code.tie_exit_length(254.0, theta) == pytest.approx(127.0 * 1.6)


def test_distributed_reinforcement_table_23_5_1():
    # Table 23.5.1 orthogonal grid 0.0025 each way; 23.5.2 spacing <= 300 mm (from memory)
    assert code.distributed_reinforcement_ok(0.0025, 0.0025, 300.0, 300.0)
    assert not code.distributed_reinforcement_ok(0.0024, 0.0030, 200.0, 200.0)
    assert not code.distributed_reinforcement_ok(0.0030, 0.0030, 310.0, 200.0)
    # one layer at alpha: rho >= 0.0025 / sin^2(alpha), alpha >= 40 deg (23.5.3, from memory)
    need = 0.0025 / np.sin(np.radians(40.0)) ** 2  # 0.00605
    assert code.one_way_distributed_reinforcement_ok(need + 1e-6, 40.0, 250.0)
    assert not code.one_way_distributed_reinforcement_ok(need - 1e-5, 40.0, 250.0)
    assert not code.one_way_distributed_reinforcement_ok(0.05, 35.0, 250.0)


def test_deep_beam_limits_9_9():
    # 9.9.2.1: phi 0.83 sqrt(f'c) bw d against the published phi 10 sqrt(f'c) bw d = 512.3 kip
    # (f'c = 4000 psi, bw = 20 in, d = 0.9 x 60 = 54 in)
    v = code.deep_beam_shear_limit(4000 * PSI, 20 * 25.4, 54 * 25.4)
    assert v / 4448.22 == pytest.approx(512.3, rel=2e-3)
    # 9.9.3.1: 0.0025 bw both ways; 9.9.4.3: s <= min(d/5, 300)
    assert code.deep_beam_min_distributed(400.0) == pytest.approx(1.0)
    assert code.deep_beam_max_spacing(1100.0) == pytest.approx(220.0)
    assert code.deep_beam_max_spacing(1800.0) == pytest.approx(300.0)


@pytest.mark.parametrize("db, fc, fy, ok, c_ip", [
    (15.9, 30.0, 420.0, True, 25.0),     # No. 16 (No. 5), first row: 1/25 in inch-pound
    (25.4, 30.0, 420.0, True, 20.0),     # No. 25 (No. 8), first row: 1/20
    (15.9, 35.0, 420.0, False, 50 / 3),  # other cases: 3/50
    (25.4, 35.0, 420.0, False, 40 / 3),  # other cases: 3/40
])
def test_straight_development_matches_inch_pound_form(db, fc, fy, ok, c_ip):
    # Table 25.4.2.3 in SI against the inch-pound form converted (the SI constants 2.1, 1.7, 1.4
    # and 1.1 are 25, 20, 16.7 and 13.3 divided by 12.04, rounded): within the 3 % of that rounding
    ld = code.straight_development_length(fy, fc, db, spacing_ok=ok)
    ld_ip = (fy / PSI) / (c_ip * np.sqrt(fc / PSI)) * db  # mm, same ratio ld/db
    assert ld == pytest.approx(ld_ip, rel=0.03)


def test_straight_development_hand_values_and_limits():
    # hand calculation: No. 16, f'c = 30, fy = 420, other cases: 420 / (1.4 sqrt 30) x 15.9 = 870.9 mm
    assert code.straight_development_length(420.0, 30.0, 15.9) == pytest.approx(870.88, rel=1e-4)
    # 25.4.2.1: not less than 300 mm; 25.4.1.4: sqrt(f'c) <= 8.3 MPa
    assert code.straight_development_length(420.0, 100.0, 9.5, spacing_ok=True) == 300.0
    assert code.straight_development_length(420.0, 100.0, 25.4) == code.straight_development_length(420.0, 69.0, 25.4)
    # Table 25.4.2.5: psi_g = 1.15 for Grade 550
    r = code.straight_development_length(550.0, 30.0, 25.4) / code.straight_development_length(420.0, 30.0, 25.4)
    assert r == pytest.approx(550 / 420 * 1.15)


@pytest.mark.parametrize("db, fc, psi_r, psi_o", [(15.9, 30.0, 1.6, 1.25), (25.4, 25.0, 1.0, 1.0),
                                                   (19.1, 35.0, 1.6, 1.0)])
def test_hook_development_matches_inch_pound_form(db, fc, psi_r, psi_o):
    # 25.4.3.1: SI constant 23 against the inch-pound 55 with psi_c = f'c/15000 + 0.6 (psi)
    ldh = code.hooked_development_length(420.0, fc, db, psi_r=psi_r, psi_o=psi_o)
    fc_psi, fy_psi, db_in = fc / PSI, 420.0 / PSI, db / 25.4
    psi_c = fc_psi / 15000 + 0.6
    ldh_in = fy_psi * psi_r * psi_o * psi_c / (55 * np.sqrt(fc_psi)) * db_in ** 1.5
    assert ldh == pytest.approx(max(ldh_in * 25.4, 8 * db, 150.0), rel=0.01)


def test_hook_hand_values_and_floors():
    # hand calculation: No. 16, f'c = 30: 420 x 1.6 x 1.25 x 0.8857 / (23 sqrt 30) x 15.9^1.5 = 374.4 mm
    assert code.hooked_development_length(420.0, 30.0, 15.9) == pytest.approx(374.44, rel=1e-3)
    # Table 25.4.3.2: psi_c = 1.0 from 42 MPa; floors 8 db and 150 mm
    assert code.hook_concrete_factor(42.0) == 1.0
    assert code.hook_concrete_factor(21.0) == pytest.approx(0.8)
    assert code.hooked_development_length(420.0, 60.0, 9.5, psi_r=1.0, psi_o=1.0) == 150.0


def test_capacities_grow_with_fc_and_width():
    # monotonic in f'c and bw (23.4.1, 23.9.1, 9.9.2.1)
    fc = np.array([20.0, 30.0, 40.0, 60.0])
    assert np.all(np.diff(code.design_compressive_strength(code.strut_effective_strength(fc, 0.75), 300, 400)) > 0)
    assert np.all(np.diff(code.deep_beam_shear_limit(fc, 400.0, 1000.0)) > 0)
    bw = np.array([200.0, 300.0, 500.0])
    assert np.all(np.diff(code.deep_beam_shear_limit(30.0, bw, 1000.0)) > 0)
