"""Columns against hand calculations written out beside each check (ACI 318-19, SI), through the
whole pipeline (`shearpost run`): Vc with the concurrent axial force in both directions, each
rule of the tie spacing, circular sections and the biaxial interaction, the confinement and
capacity design of special-frame columns (Mpr against the independent section library
concreteproperties), and intermediate frames.

Each case is given as an already factored combination (no cases.csv), constant along the
column, so that the governing combination is that case and the hand calculation is one
section. Forces: V_kN parallel to h, Vb_kN parallel to b, N_kN tension positive.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from postproc.demand import columns as demand
from tests import section_reference as ref
from tests.conftest import design

PHI = 0.75  # 21.2.1(b)
BAR = {"#10": (9.5, 71.0), "#13": (12.7, 129.0)}  # ASTM A615M (settings.BAR_CATALOGUE)


def column(member, b=400.0, h=600.0, length=3.6, **kw):
    row = dict(member=member, kind="column", length_m=length, b_mm=b, h_mm=h, cover_mm=60.0, fc_mpa=30.0,
               fyt_mpa=420.0, fy_mpa=420.0, support_i="column", support_j="column", face_i_mm=0.0, face_j_mm=0.0,
               db_long_mm=25.0, n_long=8)
    row.update(kw)
    return row


def constant(member, length, V=0.0, Vb=0.0, N=0.0, T=0.0, case="U"):
    return [dict(member=member, case=case, x_m=x, V_kN=V, Vb_kN=Vb, N_kN=N, T_kNm=T) for x in (0.0, length)]


def sqrt_fc(fc):
    return min(math.sqrt(fc), 8.3)  # 22.5.3.1


def vc_a(fc, bw, d, Nu, Ag):
    """Table 22.5.5.1(a): [0.17 sqrt(f'c) + Nu/(6 Ag)] bw d, Nu/(6Ag) <= 0.05 f'c (22.5.5.1.2), Vc >= 0 (N, MPa)."""
    return max((0.17 * sqrt_fc(fc) + min(Nu / (6 * Ag), 0.05 * fc)) * bw * d, 0.0)


def floor25(s):
    return math.floor(s / 25.0 + 1e-9) * 25.0  # the spacing module (common practice)


@pytest.fixture(scope="module")
def rect(tmp_path_factory):
    """400 x 600 columns, 8 No. 25 (db 25 mm) bars 60 mm from the faces, f'c 30, clear height 3600 mm.

    Bars (sections.perimeter_bar_split): 3 on each b face at 140 mm, 3 on each h face at 240 mm.
    Legs (25.7.2.3): b faces, clear spacing 115 <= 150 mm: corners and alternate bar -> 2 legs
    parallel to h; h faces, clear 215 > 150 mm: every bar -> 3 legs parallel to b.
    V: bw = b = 400, d = 600 - 60 = 540; Vb: bw = h = 600, d = 400 - 60 = 340 (Ag = 240 000)."""
    members = [column("COMP"), column("TENS"), column("TENS0"), column("VB"), column("S16", b=400.0, h=400.0,
                                                                                      db_long_mm=16.0),
               column("S48", b=600.0, h=600.0, db_long_mm=32.0), column("SLEAST", b=300.0, h=300.0, n_long=4),
               column("SD2"), column("SAVMIN", fc_mpa=80.0, fyt_mpa=280.0), column("SSTRENGTH")]
    forces = (constant("COMP", 3.6, V=150.0, Vb=60.0, N=-1200.0) + constant("TENS", 3.6, V=150.0, Vb=60.0, N=300.0)
              + constant("TENS0", 3.6, V=50.0, Vb=20.0, N=1500.0) + constant("VB", 3.6, V=20.0, Vb=250.0, N=-1200.0)
              + constant("S16", 3.6, V=10.0, N=-500.0) + constant("S48", 3.6, V=10.0, N=-500.0)
              + constant("SLEAST", 3.6, V=5.0, N=-300.0) + constant("SD2", 3.6, V=150.0, N=-1200.0)
              + constant("SAVMIN", 3.6, V=200.0, N=-1200.0) + constant("SSTRENGTH", 3.6, V=450.0, N=-1200.0))
    d = design(tmp_path_factory.mktemp("rect"), members, forces)
    assert d.code == 0
    return d


def spacing_of(d, member):
    z = d.zones[d.zones.member == member]
    return float(z.spacing_mm.dropna().min())


def test_vc_with_compression_and_tension_in_both_directions(rect):
    m = rect.members.set_index("member")
    Ag = 400 * 600
    # COMP: Nu = 1200 kN compression: Vc = (0.17 sqrt(30) + 1.2e6/(6 x 240000)) bw d (Table 22.5.5.1(a); the ties
    # give Av >= Av,min); V: bw d = 400 x 540; Vb: bw d = 600 x 340
    assert m.phi_vc_kN["COMP"] == pytest.approx(PHI * vc_a(30, 400, 540, 1.2e6, Ag) / 1e3, abs=0.01)
    assert m.phi_vc_vb_kN["COMP"] == pytest.approx(PHI * vc_a(30, 600, 340, 1.2e6, Ag) / 1e3, abs=0.01)
    assert m.phi_vc_kN["COMP"] == pytest.approx(PHI * 1.7644 * 216000 / 1e3, abs=0.1)  # 285.8 kN
    assert m.vc_equation["COMP"] == "22.5.5.1(a)"
    # Table 22.5.5.1(b) is smaller here: rho_w = 3 x 490.9 / (400 x 540) = 0.00682, 0.66 rho^(1/3) sqrt(30) = 0.685 < 0.931
    assert 0.66 * (3 * math.pi * 25**2 / 4 / 216000) ** (1 / 3) * math.sqrt(30) < 0.17 * math.sqrt(30)
    # TENS: Nu = -300 kN: the axial term -0.208 MPa lowers Vc (22.5.5.1.2 with tension)
    assert m.phi_vc_kN["TENS"] == pytest.approx(PHI * vc_a(30, 400, 540, -0.3e6, Ag) / 1e3, abs=0.01)
    assert m.phi_vc_vb_kN["TENS"] == pytest.approx(PHI * vc_a(30, 600, 340, -0.3e6, Ag) / 1e3, abs=0.01)
    assert m.phi_vc_kN["TENS"] < m.phi_vc_kN["COMP"]
    # TENS0: Nu = -1500 kN: 0.931 - 1.042 < 0, Vc = 0 (22.5.5.1)
    assert m.phi_vc_kN["TENS0"] == 0.0 and m.phi_vc_vb_kN["TENS0"] == 0.0
    assert m.vc_equation["TENS0"] == "Vc = 0 (axial tension)"
    # the section limits of each direction (22.5.1.2): phi (Vc + 0.66 sqrt(f'c) bw d)
    assert m.phi_vn_limit_kN["COMP"] == pytest.approx(
        PHI * (vc_a(30, 400, 540, 1.2e6, Ag) + 0.66 * math.sqrt(30) * 400 * 540) / 1e3, abs=0.01)
    assert m.phi_vn_limit_vb_kN["COMP"] == pytest.approx(
        PHI * (vc_a(30, 600, 340, 1.2e6, Ag) + 0.66 * math.sqrt(30) * 600 * 340) / 1e3, abs=0.01)
    # design shears at the faces (critical section at the face, common practice for columns)
    assert (m.vu_design_i_kN["COMP"], m.vb_design_j_kN["COMP"]) == (150.0, 60.0)
    assert (m.crit_i["COMP"], m.crit_j["COMP"]) == ("face", "face")


def test_shear_parallel_to_b_is_carried_by_the_legs_parallel_to_b(rect):
    # VB: Vb = 250 kN with Nu = 1200 kN: Vc = 1.7644 x 600 x 340 = 359.9 kN; Vs = 250/0.75 - 359.9 < 0, so the
    # strength needs no steel, but Vb > 0.5 phi Vc (10.6.2.1) asks for Av,min across b: 0.35 x 600/420 = 0.5 mm^2/mm
    # (10.6.2.2; 0.062 sqrt(30) = 0.340 < 0.35) with 3 legs of No. 10: s <= 213/0.5 = 426 mm; 10.7.6.5.2 with d of
    # Vb: d/2 = 170 mm -> 150 mm on the module. The V direction (20 kN) needs nothing; 25.7.2.1: 16 x 25 = 400 mm.
    m = rect.members.set_index("member")
    assert spacing_of(rect, "VB") == floor25(min(3 * 71 / 0.5, 340 / 2, 400)) == 150.0
    z = rect.zones[rect.zones.member == "VB"]
    assert set(z.legs[z["count"] > 0]) == {2} and set(z.legs_vb[z["count"] > 0]) == {3}
    assert set(z.kind) == {"tie"}
    assert m.utilization_vb["VB"] > m.utilization_v["VB"]
    # Vb / phi Vn of the ties at 150 mm: Vs = 3 x 71 x 420 x 340 / 150 (22.5.8.5.3)
    vn = vc_a(30, 600, 340, 1.2e6, 240000) + 3 * 71 * 420 * 340 / 150
    assert m.utilization_vb["VB"] == pytest.approx(250e3 / (PHI * vn), abs=1e-3)


def test_the_review_tables_show_a_columns_larger_direction(rect, capsys, monkeypatch):
    """VB (V = 20 kN, Vb = 250 kN, at both faces: a column takes the shears at the faces) is governed by Vb:
    `govern` shows Vu 250.0 kN at each end, not the 20.0 of V, and keeps both in its csv."""
    from postproc import cli

    monkeypatch.setenv("COLUMNS", "160")
    assert cli.main(["govern", "--store", str(rect.store)]) == 0
    out = capsys.readouterr().out
    line = next(x for x in out.splitlines() if " VB " in x)
    assert line.split().count("250.0") == 2 and "20.0" not in line.split()
    assert "Vu: the larger of V and Vb at the end" in out
    assert cli.main(["govern", "--store", str(rect.store), "--format", "csv"]) == 0
    header, *rows = capsys.readouterr().out.splitlines()
    assert header.endswith(",kind,vb_design_i_kN,vb_design_j_kN")
    assert next(r for r in rows if r.split(",")[1] == "VB").endswith(",column,250.0,250.0")


def test_tie_spacing_governed_by_each_of_its_rules(rect):
    # 25.7.2.1(b), the least of 16 db of the bars, 48 db of the tie and the least dimension; shear does not ask
    # for steel (Vu <= 0.5 phi Vc, 10.6.2.1), so 10.7.6.5.2 does not apply:
    assert spacing_of(rect, "S16") == floor25(min(16 * 16, 48 * 9.5, 400)) == 250.0  # 16 x 16 = 256
    assert spacing_of(rect, "S48") == floor25(min(16 * 32, 48 * 9.5, 600)) == 450.0  # 48 x 9.5 = 456
    assert spacing_of(rect, "SLEAST") == floor25(min(16 * 25, 48 * 9.5, 300)) == 300.0  # least side 300
    # SD2: Vu = 150 kN > 0.5 phi Vc(c) asks for Av,min; Vs = 0; 10.7.6.5.2: d/2 = 270 (Vs <= 0.33 sqrt(f'c) bw d)
    # governs Av,min (2 x 71 / (0.35 x 400/420) = 426) and 16 db = 400
    assert spacing_of(rect, "SD2") == floor25(min(540 / 2, 2 * 71 / (0.35 * 400 / 420), 400)) == 250.0
    # SAVMIN: f'c = 80, fyt = 280: Av,min/s = 0.062 sqrt(80) x 400/280 = 0.7922 (10.6.2.2, full sqrt(f'c));
    # 2 x 71 / 0.7922 = 179 mm < d/2 = 270
    av_min = max(0.062 * math.sqrt(80), 0.35) * 400 / 280
    assert spacing_of(rect, "SAVMIN") == floor25(min(2 * 71 / av_min, 270, 400)) == 175.0
    # SSTRENGTH: Vs = 450/0.75 - 381.1 = 218.9 kN (22.5.1.1), Av/s = Vs/(fyt d) = 0.9652 (22.5.8.5.3): 2 x 71 / 0.9652
    # = 147 mm; Vs < 0.33 sqrt(f'c) bw d = 390 kN: d/2 still
    vs = 450e3 / PHI - vc_a(30, 400, 540, 1.2e6, 240000)
    assert spacing_of(rect, "SSTRENGTH") == floor25(2 * 71 / (vs / (420 * 540))) == 125.0


def test_tie_spacing_governed_by_heavy_shear(tmp_path):
    # Vs > 0.33 sqrt(f'c) bw d halves the spacing limit: d/4 = 135 mm (10.7.6.5.2). With No. 13 ties only:
    # V = 600 kN, Nu = 1200 kN: Vs = 800 - 381.1 = 418.9 kN > 390.4 kN; Av/s = 1.847, 2 x 129 / 1.847 = 139.7 > 135
    cfg = tmp_path / "ties.toml"
    cfg.write_text('[detailing]\nladder = [["#13", 2]]\n')
    d = design(tmp_path, [column("HEAVY")], constant("HEAVY", 3.6, V=600.0, N=-1200.0), extra=["--config", str(cfg)])
    vs = 600e3 / PHI - vc_a(30, 400, 540, 1.2e6, 240000)
    assert vs > 0.33 * math.sqrt(30) * 400 * 540
    assert 2 * 129 / (vs / (420 * 540)) > 135
    assert spacing_of(d, "HEAVY") == floor25(540 / 4) == 125.0


def test_ties_start_half_a_spacing_from_each_face(rect):
    # 10.7.6.1.2 / 10.7.6.1.3: the first tie within s/2 of the slab or footing, the last within s/2 of the beams
    z = rect.zones[rect.zones.member == "S16"].sort_values("zone")
    s = spacing_of(rect, "S16")
    assert z.start_mm.iloc[0] <= s / 2 and 3600 - z.end_mm.iloc[-1] <= s / 2


@pytest.fixture(scope="module")
def circular(tmp_path_factory):
    """D = 500, 8 bars of 20 mm at 70 mm from the face, f'c 35, circular hoops of No. 10.

    22.5.2.2: bw = D = 500, d = 0.8 D = 400; R22.5.8.5.3: Av = 2 x 71 (two legs of the hoop)
    in both directions. Nu = 800 kN: Nu/(6 Ag) = 0.800e6/(6 x 196 350) = 0.679 MPa;
    Vc = (0.17 sqrt(35) + 0.679) x 500 x 400 = 336.96 kN (Table 22.5.5.1(a))."""
    common = dict(b_mm=None, h_mm=None, diameter_mm=500.0, cover_mm=70.0, fc_mpa=35.0, db_long_mm=20.0, n_long=8)
    members = [column("CIRC", **common), column("CIRC1", **common)]
    forces = constant("CIRC", 3.6, V=280.0, Vb=280.0, N=-800.0) + constant("CIRC1", 3.6, V=120.0, Vb=0.0, N=-800.0)
    out = {}
    for rule in ("code", "elliptical"):
        tmp = tmp_path_factory.mktemp(rule)
        cfg = tmp / "c.toml"
        cfg.write_text(f'[columns]\nbiaxial_shear = "{rule}"\n')
        out[rule] = design(tmp, members, forces, extra=["--config", str(cfg)])
        assert out[rule].code == 0
    return out


def test_circular_column_by_hand(circular):
    d = circular["code"]
    m = d.members.set_index("member")
    Ag = math.pi * 250**2
    vc = vc_a(35, 500, 400, 0.8e6, Ag)
    assert vc / 1e3 == pytest.approx(336.96, abs=0.05)
    assert m.phi_vc_kN["CIRC"] == pytest.approx(PHI * vc / 1e3, abs=0.01)
    assert m.phi_vc_vb_kN["CIRC"] == pytest.approx(PHI * vc / 1e3, abs=0.01)
    # CIRC1: V = 120 kN > 0.5 phi Vc(c) = 98.3 kN: Av,min = 0.062 sqrt(35) x 500/420 = 0.4367 -> 325 mm;
    # 10.7.6.5.2 d/2 = 200 mm governs, 25.7.2.1: 16 x 20 = 320 mm
    assert spacing_of(d, "CIRC1") == floor25(min(2 * 71 / (0.062 * math.sqrt(35) * 500 / 420), 400 / 2, 320)) == 200
    z = d.zones[d.zones.member == "CIRC1"]
    assert set(z.kind) == {"tie"} and set(z.legs[z["count"] > 0]) == {2}


def test_biaxial_interaction_of_a_circular_column(circular):
    # CIRC: V = Vb = 280 kN with Nu = 800 kN. Code rule (22.5.1.10, 22.5.1.11): both ratios above 0.5, so their
    # sum <= 1.5: each <= 0.75, phi Vn >= 280/0.75 -> Vs >= 373.3/0.75 - 336.96 = 160.8 kN, Av/s = 0.957,
    # s <= 142/0.957 = 148.3 -> 125 mm. Elliptical (common practice): each <= 1/sqrt(2): Vs >= 191.0 kN,
    # s <= 124.9 -> 100 mm.
    vc = vc_a(35, 500, 400, 0.8e6, math.pi * 250**2)
    s_code = 2 * 71 / ((280e3 / 0.75 / PHI - vc) / (420 * 400))
    s_ellipse = 2 * 71 / ((280e3 * math.sqrt(2) / PHI - vc) / (420 * 400))
    assert spacing_of(circular["code"], "CIRC") == floor25(s_code) == 125.0
    assert spacing_of(circular["elliptical"], "CIRC") == floor25(s_ellipse) == 100.0
    m = circular["code"].members.set_index("member")
    r = 280e3 / (PHI * (vc + 2 * 71 * 420 * 400 / 125))
    assert m.utilization_v["CIRC"] == pytest.approx(r, abs=1e-3)
    assert m.utilization["CIRC"] == pytest.approx(2 * r / 1.5, abs=1e-3)


def test_interaction_needs_both_ratios_above_half():
    # 22.5.1.10: where either ratio is at most 0.5 the interaction is neglected
    c = demand
    assert c is not None
    from postproc.codes import aci318_19 as aci
    assert aci.biaxial_interaction(0.5, 0.99) == pytest.approx(0.99)
    assert aci.biaxial_interaction(0.51, 0.99) == pytest.approx(1.5 / 1.5)
    assert aci.biaxial_interaction(0.6, 0.8, "elliptical") == pytest.approx(1.0)


# --- special moment frames (18.7) -----------------------------------------------------------


def special(member, **kw):
    """600 x 600, 12 bars of 28.7 mm, 40 mm clear to No. 13 hoops: bar centres 40 + 12.7 + 14.35 = 67.05 mm
    from the faces; 4 bars per face at (600 - 2 x 67.05)/3 = 155.3 mm; clear height 3000 mm."""
    return column(member, **{**dict(b=600.0, h=600.0, length=3.0, cover_mm=67.05, fc_mpa=35.0, db_long_mm=28.7,
                                    n_long=12, frame="special"), **kw})


@pytest.fixture(scope="module")
def smf(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("smf")
    cfg = tmp / "hoops.toml"
    cfg.write_text('[detailing]\nladder = [["#13", 2]]\n')  # No. 13 hoops, as in the hand calculation
    members = [special("ASH"), special("SO", fc_mpa=28.0, fyt_mpa=520.0)]
    forces = constant("ASH", 3.0, V=50.0, Vb=20.0, N=-4000.0) + constant("SO", 3.0, V=50.0, Vb=20.0, N=-2000.0)
    d = design(tmp, members, forces, extra=["--config", str(cfg)])
    assert d.code == 0
    return d


def test_special_column_ash_by_hand(smf):
    # ASH: Pu = 4000 kN > 0.3 Ag f'c = 3780 kN: every perimeter bar supported and hx <= 200 (18.7.5.2(f)):
    # 4 legs each way, hx = 155.3 mm; nl = 12 supported bars, kn = 12/10 = 1.2, kf = max(35/175 + 0.6, 1) = 1.0.
    # bc = 600 - 2 x 40 = 520, Ach = 520^2 = 270 400. Table 18.7.5.4: (a) 0.3 (360000/270400 - 1) 35/420 = 0.008284,
    # (b) 0.09 x 35/420 = 0.0075, (c) 0.2 x 1.0 x 1.2 x 4e6/(420 x 270400) = 0.008453 governs.
    # Ash = 4 x 129 = 516 mm^2 >= 0.008453 s 520 -> s <= 117.4 -> 100 mm; so (18.7.5.3) = min(600/4, 6 x 28.7,
    # 100 + (350 - 155.3)/3 = 164.9 -> 150) = 150.
    ash = max(0.3 * (360000 / 270400 - 1) * 35 / 420, 0.09 * 35 / 420, 0.2 * 1.0 * 1.2 * 4e6 / (420 * 270400))
    assert ash == pytest.approx(0.008453, abs=1e-6)
    m = smf.members.set_index("member")
    assert m.lo_mm["ASH"] == 600.0  # 18.7.5.1: max(600, 3000/6 = 500, 450)
    z = smf.zones[smf.zones.member == "ASH"].sort_values("zone")
    assert set(z.kind) == {"hoop"} and set(z.legs[z["count"] > 0]) == {4} and set(z.legs_vb[z["count"] > 0]) == {4}
    s_lo = floor25(min(4 * 129 / (ash * 520), 150.0))
    assert s_lo == 100.0
    first, last = z.iloc[0], z.iloc[-1]
    assert first.spacing_mm == s_lo and last.spacing_mm == s_lo
    assert first.end_mm >= 600.0 and last.start_mm <= 3000.0 - 600.0  # lo covered from each joint face
    # beyond lo (18.7.5.5): min(6 x 28.7 = 172.2, 150) = 150 mm, unless shear asks for less
    middle = z[(z.start_mm > 600.0) & (z.end_mm < 2400.0) & (z["count"] > 1)]
    assert (middle.spacing_mm <= 150.0).all()
    # Ve from Mpr (18.7.6.1.1) with Vc of Table 22.5.5.1(a) at Nu/(6Ag) <= 0.05 f'c: the hoops at 100 mm carry it
    vc = vc_a(35, 600, 600 - 67.05, 4e6, 360000)
    assert vc > 0 and 4e6 > 360000 * 35 / 20  # Pu >= Ag f'c/20: Vc kept (18.7.6.2.1(b))
    ve = m.ve_v_kN["ASH"] * 1e3
    assert ve / (PHI * (vc + 4 * 129 * 420 * (600 - 67.05) / 100)) <= 1.0


def test_special_column_so_by_hand(smf):
    # SO: Pu = 2000 kN <= 0.3 x 360000 x 28 = 3024 kN: corners and alternate bars, hx <= 350 (18.7.5.2(e)):
    # 3 legs each way, hx = 2 x 155.3 = 310.6 mm; so = 100 + (350 - 310.6)/3 = 113.1 mm (18.7.5.3(c)) governs
    # 600/4 = 150 and 6 x 28.7 = 172.2; Ash with fyt = 520: (a) 0.3 (1.3314 - 1) 28/520 = 0.005354 ->
    # s <= 3 x 129 / (0.005354 x 520) = 139 mm.
    spacing = (600 - 2 * 67.05) / 3
    so = 100 + (350 - 2 * spacing) / 3
    ash = max(0.3 * (360000 / 270400 - 1) * 28 / 520, 0.09 * 28 / 520)
    assert so == pytest.approx(113.1, abs=0.05) and 3 * 129 / (ash * 520) > so
    z = smf.zones[smf.zones.member == "SO"].sort_values("zone")
    assert set(z.legs[z["count"] > 0]) == {3}
    assert z.spacing_mm.iloc[0] == floor25(so) == 100.0


def test_special_column_ve_from_mpr_against_concreteproperties(tmp_path):
    # 18.7.6.1.1: Ve = (Mpr,top + Mpr,bot)/lu, Mpr at 1.25 fy (phi = 1) for the factored axial force: one
    # combination here, Pu = 1500 kN; 600 (b) x 400 (h) so that the two directions differ. Checked against
    # concreteproperties (independent mesh and solver), through the whole pipeline.
    b, h, edge, db, n_long, fc, fy, lu = 600.0, 400.0, 65.0, 25.0, 10, 35.0, 420.0, 3000.0
    d = design(tmp_path, [column("MPR", b=b, h=h, length=3.4, face_j_mm=400.0, cover_mm=edge, fc_mpa=fc,
                                 db_long_mm=db, n_long=n_long, frame="special")],
               constant("MPR", 3.4, V=30.0, Vb=30.0, N=-1500.0))
    row = d.members.set_index("member").loc["MPR"]
    area = math.pi * db**2 / 4
    # bars (sections.perimeter_bar_split): 10 bars, 3 pairs between corners: (470/(470 + 270)) x 3 -> 2 pairs on the
    # b faces (4 bars each), 1 pair on the h faces (3 bars each)
    xs = np.linspace(edge, b - edge, 4)
    ys = np.linspace(edge, h - edge, 3)
    bars = [(area, x, y, db) for x in xs for y in (edge, h - edge)] + [(area, x, ys[1], db) for x in (edge, b - edge)]
    assert len(bars) == n_long
    section = ref.rectangle(b, h, fc, 1.25 * fy, bars)  # b along x, h along y: bending with depth h gives V
    m_v = ref.ultimate_moment(section, 1.5e6)
    assert row.ve_v_kN == pytest.approx(2 * m_v / lu / 1e3, rel=3e-3)
    turned = ref.rectangle(h, b, fc, 1.25 * fy, [(a, y, x, dd) for a, x, y, dd in bars])  # depth b gives Vb
    m_vb = ref.ultimate_moment(turned, 1.5e6)
    assert row.ve_vb_kN == pytest.approx(2 * m_vb / lu / 1e3, rel=3e-3)
    assert "Ve not limited by the beams' Mpr" in row.message


def test_intermediate_column_hoops_and_shear(tmp_path):
    # 18.4.3.3: lo = max(lu/6 = 3000/6 = 500, largest side 600, 450) = 600; so = min(8 x 28.7 = 229.6, 200,
    # 600/2 = 300) = 200 mm; hoops over lo, ties beyond (10.7.6.5.2, 25.7.2.1: 16 x 28.7 = 459, 48 x 12.7 = 609.6,
    # 600). 18.4.3.1: Ve = lesser of (a) 2 Mn/lu and (b) the E combinations with Omega_o E; with cases D and E:
    # 1.2D + 1.0E (5.3.1e) with 3.0 E: |1.2 x 10 + 3 x 40| = 132 kN; 0.9D - 3E: |9 - 120| = 111 kN.
    cfg = tmp_path / "hoops.toml"
    cfg.write_text('[detailing]\nladder = [["#13", 2]]\n')
    member = special("IMF")
    member["frame"] = "intermediate"
    forces = constant("IMF", 3.0, V=10.0, N=-800.0, case="D") + constant("IMF", 3.0, V=40.0, N=-50.0, case="E")
    d = design(tmp_path, [member], forces, cases=[dict(case="D", type="D"), dict(case="E", type="E")],
               extra=["--config", str(cfg)])
    row = d.members.set_index("member").loc["IMF"]
    assert row.lo_mm == 600.0
    assert row.ve_v_kN == pytest.approx(132.0, abs=0.01)  # (b) governs the lesser of
    z = d.zones[d.zones.member == "IMF"].sort_values("zone")
    assert z.kind.iloc[0] == "hoop" and z.kind.iloc[-1] == "hoop"
    assert z.spacing_mm.iloc[0] <= 200.0 and z.start_mm.iloc[0] <= 100.0  # first hoop within so/2
    assert "tie" in set(z.kind)


def test_intermediate_column_ties_beyond_lo_keep_d_over_2_without_shear_demand(tmp_path):
    # 18.4.3.5: outside lo the spacing satisfies 10.7.6.5.2 whether or not 10.6.2.1 asks for shear reinforcement.
    # V_D = 10, V_E = 5 kN: Vu <= 1.2 x 10 + 3 x 5 = 27 kN (18.4.3.1(b)) < 0.5 phi Vc = 0.375 x 0.17 sqrt(35) x 600
    # x 532.95 = 120.6 kN even without axial force, so none is asked for; still d/2 = 532.95/2 = 266.5 -> 250 mm on
    # the 25 mm module, not 25.7.2.1's min(16 x 28.7, 48 x 12.7, 600) = 459 -> 450 mm. An ordinary column of the
    # same forces keeps 450 mm (10.7.6.5.2 applies only where shear reinforcement is required).
    cfg = tmp_path / "hoops.toml"
    cfg.write_text('[detailing]\nladder = [["#13", 2]]\n')
    members = [dict(special("IMF"), frame="intermediate"), dict(special("OMF"), frame="none")]
    forces = [r for m in ("IMF", "OMF") for r in constant(m, 3.0, V=10.0, N=-800.0, case="D")
              + constant(m, 3.0, V=5.0, N=-50.0, case="E")]
    d = design(tmp_path, members, forces, cases=[dict(case="D", type="D"), dict(case="E", type="E")],
               extra=["--config", str(cfg)])
    ties = d.zones[(d.zones.kind == "tie") & (d.zones["count"] > 0)]
    assert ties[ties.member == "IMF"].spacing_mm.max() == 250.0
    assert ties[ties.member == "OMF"].spacing_mm.max() == 450.0


# --- beams: Vb checked about the other axis ---------------------------------------------------


def test_beam_vb_is_checked_with_the_stirrups_about_the_other_axis(tmp_path):
    # 300 x 600 beam, d = 540 (cover 60), f'c 30; V = 50 kN < phi 0.083 sqrt(30) bw d = 55.2 kN (9.6.3.1): No. 10
    # closed stirrups at d/2 = 270 -> 250 mm (Table 9.7.6.2.2). About the other axis: bw = h = 600, d = 300 - 60 = 240;
    # the two horizontal legs: Av/s = 2 x 71/250 = 0.568 >= Av,min/s = 0.35 x 600/420 = 0.5 (Table 9.6.3.4), so
    # Vc = 0.17 sqrt(30) x 600 x 240 = 134.1 kN (Table 22.5.5.1(a)); Vs = 0.568 x 420 x 240 = 57.3 kN (22.5.8.5.3).
    beam = dict(kind="beam", length_m=6.0, b_mm=300.0, h_mm=600.0, cover_mm=60.0, fc_mpa=30.0, fyt_mpa=420.0,
                support_i="column", support_j="column")
    members = [dict(member="LOW", **beam), dict(member="HIGH", **beam)]
    # HUGE: V = 2,000 kN exceeds the section limit phi (Vc + 0.66 sqrt(f'c) bw d) = 0.75 (147.3 + 572.1) = 539.6 kN
    # (22.5.1.2): no stirrups are laid out, so Vb has nothing to be checked with: its ratio is not given (it is
    # neither infinite nor the largest float)
    members.append(dict(member="HUGE", **beam))
    forces = constant("LOW", 6.0, V=50.0, Vb=40.0) + constant("HIGH", 6.0, V=50.0, Vb=150.0) \
        + constant("HUGE", 6.0, V=2000.0, Vb=1.0)
    d = design(tmp_path, members, forces)
    m = d.members.set_index("member")
    assert m.status["HUGE"] == "resize" and np.isnan(m.utilization_vb["HUGE"])
    vn_b = 0.17 * math.sqrt(30) * 600 * 240 + 2 * 71 / 250 * 420 * 240
    assert spacing_of(d, "LOW") == 250.0
    assert m.status["LOW"] == "designed"
    assert m.utilization_vb["LOW"] == pytest.approx(40e3 / (PHI * vn_b), abs=1e-3)  # 0.279
    assert (m.vb_design_i_kN["LOW"], m.vb_design_j_kN["LOW"]) == (40.0, 40.0)
    # HIGH: 150 kN / (0.75 x 191.4 kN) = 1.045 > 1 with the same stirrups: reported, the layout is not changed for Vb
    assert 150e3 / (PHI * vn_b) > 1.0
    assert m.status["HIGH"] == "resize" and "Vb" in m.message["HIGH"] and "22.5.1.11" in m.message["HIGH"]


def test_vb_check_with_sections_once_per_member_is_the_check_per_candidate():
    """lateral.check with ``at`` (the section, legs and bar area once per member, as the beams'
    pipeline gives them) returns the same bits and the same reasons as with every array gathered
    to each candidate; the random beams and forces reach every reason (REASONS)."""
    from postproc.demand import lateral

    rng = np.random.default_rng(5)
    n, k = 40, 4000
    sec = dict(b=rng.choice([250.0, 300.0, 400.0], n), h=rng.choice([450.0, 600.0, 750.0], n), fc=rng.choice([25.0, 30.0, 40.0], n),
               fyt=np.full(n, 420.0), lam=rng.choice([1.0, 0.75], n))  # lightweight: 9.6.3.1 below Av,min's bound
    sec["d"] = sec["h"] - 60.0
    sec["Ag"] = sec["b"] * sec["h"]
    legs_b, bar_area = rng.choice([1, 2, 4], n), rng.choice([71.0, 129.0], n)
    at = np.sort(rng.integers(0, n, k))
    vb, nu = rng.uniform(0.0, 4e5, k) * rng.choice([0.1, 1.0], k), rng.uniform(-5e5, 2e6, k)
    ratio_v, spacing = rng.uniform(0.0, 1.2, k), rng.choice([100.0, 150.0, 200.0, 300.0, np.inf], k)
    once = lateral.check(*(sec[f] for f in ("b", "h", "d", "fc", "fyt", "lam", "Ag")), vb, nu, ratio_v, legs_b, bar_area,
                         spacing, "code", at=at)
    each = lateral.check(*(sec[f][at] for f in ("b", "h", "d", "fc", "fyt", "lam", "Ag")), vb, nu, ratio_v, legs_b[at],
                         bar_area[at], spacing, "code")
    for field in ("ratio", "interaction", "fails", "reason"):
        assert getattr(once, field).tobytes() == getattr(each, field).tobytes(), field
    assert set(np.unique(once.reason)) == {0, 1, 2, 3}


def test_compiled_vb_check_is_the_numpy_check(monkeypatch):
    """lateral.check compiled (postproc.compiled.lateral_check: the code's interaction, sections
    once per member) returns the numpy check's bits: ratio, interaction, fails and reason of
    every candidate, on random beams reaching every reason, and on inputs poisoned with NaN,
    +-inf, +-0 and negatives in every term (numpy's NaN and signed-zero rules of np.maximum,
    np.minimum, np.clip and np.nan_to_num must come out the same). The numpy check is the one
    checked by hand above (Vb / phi Vn of 22.5.1.10 / 22.5.1.11)."""
    from postproc import kernels
    from postproc.demand import lateral

    if not kernels.available():
        pytest.skip("numba is not installed (pip install 'shearpost[compiled]')")
    calls = []
    check = kernels.lateral_check
    monkeypatch.setattr(kernels, "lateral_check", lambda *a: (calls.append(1), check(*a))[1])
    for seed in range(4):
        rng = np.random.default_rng(40 + seed)
        n, k = 300, 60000
        sec = dict(b=rng.uniform(200.0, 600.0, n), h=rng.uniform(300.0, 900.0, n), fc=rng.uniform(20.0, 80.0, n),
                   fyt=rng.uniform(280.0, 420.0, n), lam=rng.choice([1.0, 0.75], n))
        sec["d"] = sec["h"] - rng.uniform(40.0, 90.0, n)
        sec["Ag"] = sec["b"] * sec["h"]
        legs_b, bar_area = rng.choice([1.0, 2.0, 4.0], n), rng.choice([71.0, 129.0, 199.0], n)
        at = np.sort(rng.integers(0, n, k))
        vb, nu = rng.uniform(0.0, 4e5, k) * rng.choice([0.0, 0.1, 1.0], k), rng.uniform(-5e5, 2e6, k)
        ratio_v, spacing = rng.uniform(0.0, 1.2, k), rng.choice([75.0, 100.0, 150.0, 200.0, 300.0, np.inf], k)
        if seed:  # poisoned: every per-member and per-candidate term
            for arr in [*sec.values(), legs_b, bar_area, vb, nu, ratio_v, spacing]:
                hit = rng.random(len(arr)) < 0.02
                arr[hit] = rng.choice([np.nan, np.inf, -np.inf, 0.0, -0.0, -1.0], hit.sum())
        got = {}
        for how in ("numpy", "compiled"):
            monkeypatch.setenv(kernels.ENV, how)
            with np.errstate(all="ignore"):
                r = lateral.check(*(sec[f] for f in ("b", "h", "d", "fc", "fyt", "lam", "Ag")), vb, nu, ratio_v, legs_b,
                                  bar_area, spacing, "code", at=at)
            got[how] = [getattr(r, f).tobytes() for f in ("ratio", "interaction", "fails", "reason")]
            if not seed and how == "numpy":
                assert set(np.unique(r.reason)) == {0, 1, 2, 3}
        assert got["compiled"] == got["numpy"], seed
    assert len(calls) == 4


def _tie_cases(rng, n):
    """Random demand cases of columns for required_t: shear in one, both or neither direction,
    torsion in some, Vc (c) below (a)/(b), and sections from small to large (some of whose ties
    cannot carry the shear: t = inf)."""
    from types import SimpleNamespace

    from postproc.codes import aci318_19 as aci
    from postproc.codes.aci318_19 import SI

    u = lambda lo, hi: rng.uniform(lo, hi, n)
    vc_v_hi, vc_vb_hi = u(0.0, 5e5), u(0.0, 5e5)
    c = SimpleNamespace(vu_v=u(0.0, 2e6) * rng.choice([0.0, 0.05, 1.0], n), vu_vb=u(0.0, 2e6) * rng.choice([0.0, 0.05, 1.0], n),
                        minimum_v=rng.random(n) < 0.5, minimum_vb=rng.random(n) < 0.5, torsion=rng.random(n) < 0.3,
                        ata=u(0.0, 2.0), vc_v_hi=vc_v_hi, vc_v_lo=vc_v_hi * u(0.3, 1.0), vc_vb_hi=vc_vb_hi,
                        vc_vb_lo=vc_vb_hi * u(0.3, 1.0))
    s = SimpleNamespace(fc=u(20.0, 60.0), bw_v=u(200.0, 900.0), d_v=u(150.0, 850.0), bw_vb=u(200.0, 900.0),
                        d_vb=u(150.0, 850.0), fyt=u(280.0, 420.0), u=SI)
    for k in ("v", "vb"):  # what a ColumnSection derives per member: 22.5.1.2 and 10.6.2.2
        bw, d = getattr(s, f"bw_{k}"), getattr(s, f"d_{k}")
        setattr(s, f"vs_max_{k}", aci.vs_max(s.fc, bw, d, u=SI))
        setattr(s, f"av_min_{k}", aci.column_av_min_over_s(s.fc, bw, s.fyt, u=SI))
    tie = {"Aoh": u(3e4, 6e5), "legs_v": rng.integers(2, 6, n).astype(float),
           "legs_vb": rng.integers(2, 6, n).astype(float)}
    return c, s, tie


def test_compiled_tie_search_is_the_numpy_search(monkeypatch):
    """required_t's search for t = 1/s compiled (postproc.compiled.tie_bisection) returns the
    numpy search's bits case by case; both give the least t that passes: strength at t passes
    the interaction of 22.5.1.10 / 22.5.1.11 and at t less a part in a million it does not
    (where t is above the lower bound of Av,min and At/s)."""
    from postproc import kernels

    if not kernels.available():
        pytest.skip("numba is not installed (pip install 'shearpost[compiled]')")
    rng = np.random.default_rng(17)
    c, s, tie = _tie_cases(rng, 30000)
    monkeypatch.setenv(kernels.ENV, "numpy")
    reference = demand.required_t(c, s, tie, 113.0, "code")
    monkeypatch.setenv(kernels.ENV, "compiled")
    compiled = demand.required_t(c, s, tie, 113.0, "code")
    assert compiled.tobytes() == reference.tobytes()
    searched = np.isfinite(reference) & (reference > 0)
    assert np.isinf(reference).sum() > 1000 and searched.sum() > 10000 and (reference == 0).any()

    amin_v, amin_vb = demand.av_min(s)
    passes = lambda t: demand.strength(c, s, tie, 113.0, t, amin_v, amin_vb, "code").utilization <= 1.0 + demand.TOL
    assert passes(np.where(searched, reference, 1.0))[searched].all()
    # inputs poisoned with NaN, +-inf and +-0 in every term: numpy's NaN rules (np.maximum keeps a NaN)
    # and division by zero must come out the same
    for seed in range(3):
        bad = np.random.default_rng(100 + seed)
        pc, ps, pt = _tie_cases(bad, 20000)
        for holder in (pc.__dict__, ps.__dict__, pt):
            for key, arr in holder.items():
                if isinstance(arr, np.ndarray) and arr.dtype == float:
                    hit = bad.random(len(arr)) < 0.02
                    arr[hit] = bad.choice([np.nan, np.inf, -np.inf, 0.0, -0.0, -1.0], hit.sum())
        monkeypatch.setenv(kernels.ENV, "numpy")
        with np.errstate(all="ignore"):
            expected = demand.required_t(pc, ps, pt, 113.0, "code")
            monkeypatch.setenv(kernels.ENV, "compiled")
            assert demand.required_t(pc, ps, pt, 113.0, "code").tobytes() == expected.tobytes()
    at = np.where(c.torsion, c.ata / tie["Aoh"], 0.0)
    lower = np.maximum.reduce([np.where(c.minimum_v, amin_v / (tie["legs_v"] * 113.0), 0.0),
                               np.where(c.minimum_vb, amin_vb / (tie["legs_vb"] * 113.0), 0.0), at / 113.0])
    bisected = searched & (reference > lower * (1 + 1e-6))
    assert bisected.sum() > 1000
    assert not passes(reference * (1 - 1e-6))[bisected].any()


def test_column_in_inch_pound_units(tmp_path):
    # The inch-pound edition's own equations (ACI 318-19, in., psi): 16 x 24 in column, bars 2.5 in from the
    # faces, f'c = 4000 psi, 8 No. 8 bars (1.0 in), Nu = 270 kip. V (parallel to h = 24 in): bw = 16, d = 21.5 in;
    # Table 22.5.5.1(a): Vc = (2 sqrt(4000) + 270,000/(6 x 384)) x 16 x 21.5 = (126.5 + 117.2) x 344 lb = 83.8 kip.
    # V = 5 kip needs no steel (Vu <= 0.5 phi Vc, 10.6.2.1): 25.7.2.1 governs, min(16 x 1.0, 48 x 0.375, 16) = 16 in.
    member = dict(member="US1", kind="column", length_ft=12.0, b_in=16.0, h_in=24.0, cover_in=2.5, fc_psi=4000.0,
                  fyt_psi=60_000.0, support_i="column", support_j="column", db_long_in=1.0, n_long=8)
    forces = [dict(member="US1", case="U", x_ft=x, V_kip=5.0, Vb_kip=0.0, N_kip=-270.0) for x in (0.0, 12.0)]
    d = design(tmp_path, [member], forces, extra=["--units", "us"])
    assert d.code == 0
    row = d.members.set_index("member").loc["US1"]
    vc = (2 * math.sqrt(4000) + 270_000 / (6 * 16 * 24)) * 16 * 21.5
    assert row.phi_vc_kip == pytest.approx(PHI * vc / 1e3, abs=0.01)
    z = d.zones[d.zones.member == "US1"]
    assert z.spacing_in.dropna().min() == min(16 * 1.0, 48 * 0.375, 16.0) == 16.0
    assert set(z.kind) == {"tie"}


def test_explain_govern_and_schedule_of_columns(circular, smf):
    """A column reads through every view: `explain` walks both directions and the tie rules (a special
    frame's confinement too), `govern` says it is a column and gives its legs each way, and the
    schedule's marks are columns with ties, hoops (seismic hooks) and crossties."""
    from postproc import explain, govern, schedule
    from postproc.settings import settings_from_dict
    from postproc.store import Store

    def text(d, member):
        run = Store(d.store).runs()[-1]
        steps = explain.explain(run, member, settings_from_dict(run.manifest()["settings"]))
        return run, "\n".join(line for s in steps for line in [s.title, s.clause, *s.lines])

    run, t = text(circular["code"], "CIRC")
    assert "D = 500 mm: bw = D, d = 0.8 D = 400 mm in both directions (22.5.2.2)" in t
    assert "22.5.1.10" in t and "neglected where either ratio is 0.5 or less" in t
    assert "Table 22.5.5.1(a)/(b) with Nu = 800.0 kN" in t and "Self-check" in t
    ranked = govern.rank(run)
    assert set(ranked.kind) == {"column"}
    marks = schedule.build(run, settings_from_dict(run.manifest()["settings"]).detailing).marks
    assert marks.layout.str.contains(" ties 2x2 @").all(), marks.layout

    run, t = text(smf, "ASH")
    assert "18.7.5.3 over lo" in t and "Ash by Table 18.7.5.4 asks for s <=" in t and "sets no spacing" in t and "Vc = 0 over lo" not in t
    sched = schedule.build(run, settings_from_dict(run.manifest()["settings"]).detailing)
    assert set(sched.marks.kind) == {"column"}
    shapes = set(sched.bars["shape"])
    assert {"hoop-135", "crosstie-135-90"} <= shapes, shapes


def test_a_column_without_vb_says_it_is_designed_for_v_alone():
    """forces.csv without Vb_kN (a plane frame, or an element export): the column's ties are
    designed for V alone; its message and one warning of the run say so, naming it. A column
    whose forces give Vb is not named."""
    import pandas as pd

    import postproc

    rows = constant("NOVB", 3.6, V=150.0, N=-1200.0) + constant("WITHVB", 3.6, V=150.0, Vb=60.0, N=-1200.0)
    forces = pd.DataFrame(rows)
    flat = postproc.design(pd.DataFrame([column("NOVB")]), forces[forces.member == "NOVB"].drop(columns="Vb_kN"))
    both = postproc.design(pd.DataFrame([column("NOVB"), column("WITHVB")]), forces)
    for d in (flat, both):
        m = d.members.set_index("member")
        assert m.status["NOVB"] == "designed"
        assert "Vb_kN is zero at both faces in every combination" in m.message["NOVB"]
        named = [w for w in d.warnings if "column(s) with Vb_kN zero" in w]
        assert len(named) == 1 and "1 column(s)" in named[0] and "NOVB" in named[0] and "WITHVB" not in named[0]
    assert "Vb_kN is zero" not in both.members.set_index("member").message["WITHVB"]
