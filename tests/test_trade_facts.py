"""Facts of the trade, each stated as common practice (or its source), checked on real layouts."""

import numpy as np
import pytest

from postproc.codes import aci318_19 as aci
from postproc.settings import BAR_CATALOGUE
from tests.conftest import beam, rows_from_function


def test_phi_shear():
    # common practice (and ACI 318-19 21.2.1(b)): phi = 0.75 for shear
    assert aci.PHI_SHEAR == 0.75


def test_bar_10_area():
    # common practice (ASTM A615M Table 1): a #10 bar has 71 mm^2
    assert BAR_CATALOGUE["#10"][1] == 71.0


def first_stirrup(z):
    z1 = z.sort_values("zone").iloc[0]
    return z1.end_mm - (z1["count"] - 1) * z1.spacing_mm


def uniform_beam(w=120.0, L=8.0):
    return [beam("B", L, face_i_mm=250.0, face_j_mm=250.0)], rows_from_function("B", "U", L, lambda x: w * (L / 2 - x), n=3)


def test_first_stirrup_50_mm_or_half_spacing_from_the_face(run_design, tmp_path):
    # common practice: first stirrup 50 mm from the face of the support, or at s/2
    res = run_design(*uniform_beam())
    assert first_stirrup(res.zones) == pytest.approx(50.0)
    cfg = tmp_path / "half.toml"
    cfg.write_text('[detailing]\nfirst_stirrup = "half"\n')
    res = run_design(*uniform_beam(), extra=["--config", str(cfg)])
    z1 = res.zones.sort_values("zone").iloc[0]
    assert first_stirrup(res.zones) == pytest.approx(z1.spacing_mm / 2)


def test_spacing_rounded_down_to_a_practical_module(run_design):
    # common practice: spacings are rounded down to a 25 mm module
    res = run_design(*uniform_beam())
    assert np.allclose(res.zones.spacing_mm % 25, 0)
    # at d from the face: Vu = 120 (4 - 0.79) = 385.2 kN; Vs = Vu/0.75 - 0.17 sqrt(30) 300 540 -> Av/s = 1.60;
    # #10 x 2 legs (142 mm^2) gives 88.7 mm, rounded down to 75 mm
    assert res.zones.sort_values("zone").spacing_mm.iloc[0] == 75.0


@pytest.mark.parametrize("fraction,needs", [(0.45, False), (0.55, True)])
def test_no_stirrups_below_half_phi_vc(run_design, tmp_path, fraction, needs):
    # common practice (the older simplified method): no shear reinforcement where Vu <= 0.5 phi Vc,
    # Vc = 0.17 sqrt(f'c) bw d; ACI 318-19 9.6.3.1's threshold phi 0.083 sqrt(f'c) bw d is nearly the same
    phi_vc = 0.75 * 0.17 * np.sqrt(30) * 300 * 540 / 1e3
    L = 6.0
    v0 = fraction * phi_vc
    cfg = tmp_path / "omit.toml"
    cfg.write_text("[detailing]\nstirrups_throughout = false\n")
    # hung loads put the critical section at the face (9.4.3.2(b)), so the face value is the test value
    res = run_design([beam("B", L, load_face="bottom")], rows_from_function("B", "U", L, lambda x: v0 * (1 - 2 * x / L), n=3),
                     extra=["--config", str(cfg)])
    assert res.members.status.iloc[0] == "designed"
    assert (res.members.stirrups_total.iloc[0] > 0) == needs
