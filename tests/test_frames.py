"""Beams and joints of moment frames (ACI 318-19 Chapter 18) through the command line: the
capacity-design shear, the Vc = 0 rule and the hoops of a special-frame beam against a hand
calculation, Mpr end to end against the independent section library (concreteproperties),
the lesser-of rule of intermediate frames, a joint shear by hand, bad and missing bars, the
warning without frames, the schedule's hoops, the demo with and without its special frames,
and a property test: every layout of a random special-frame beam carries Ve with Vc = 0 in
its hinge zones at every station (checked by brute force in plain Python here, not by the
engine's own functions).
"""

from __future__ import annotations

import json
import math
import shutil

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, event, given, settings, strategies as hs

from postproc import cli, schedule
from postproc.settings import Detailing
from postproc import store as store_mod
from postproc.store import Store
from tests import section_reference as ref
from tests.conftest import design, tree_snapshot, write_inputs

# The special-frame beam of the hand calculation (tests/test_chapter18.py uses the same numbers):
# b = 350, h = 650, d = 590, d' = cover = 60, f'c = 35 MPa (beta1 = 0.80), fy = fyt = 420 MPa,
# top 2500 mm^2 and bottom 1500 mm^2 at both faces, bars of 22 mm; node to node 6.6 m, column
# faces 300 mm from the nodes: clear span ln = 6000 mm. Loads: D = 25 kN/m, L = 10 kN/m on a
# simple span (V = w (3.3 - x)), E a constant 60 kN shear.
B, H, D, DP, AT, AB, FC, FY, DB = 350.0, 650.0, 590.0, 60.0, 2500.0, 1500.0, 35.0, 420.0, 22.0
L_M, FACE, LN = 6.6, 300.0, 6000.0
FRAME_BEAM = dict(kind="beam", length_m=L_M, b_mm=B, h_mm=H, d_mm=D, cover_mm=DP, fc_mpa=FC, fyt_mpa=FY, fy_mpa=FY,
                  support_i="column", support_j="column", face_i_mm=FACE, face_j_mm=FACE, load_face="top",
                  as_top_i_mm2=AT, as_bot_i_mm2=AB, as_top_j_mm2=AT, as_bot_j_mm2=AB, db_long_mm=DB)
CASES = [{"case": "D", "type": "D"}, {"case": "L", "type": "L"}, {"case": "E", "type": "E"}]


def beam_forces(member: str, e_kN: float = 60.0, wd: float = 25.0, wl: float = 10.0, n: int = 23) -> list[dict]:
    """Simple-span shears V = w (L/2 - x) (handbook formula) for D and L, a constant E shear."""
    xs = np.linspace(0.0, L_M, n)
    rows = [dict(member=member, case="D", x_m=x, V_kN=wd * (L_M / 2 - x)) for x in xs]
    rows += [dict(member=member, case="L", x_m=x, V_kN=wl * (L_M / 2 - x)) for x in xs]
    return rows + [dict(member=member, case="E", x_m=x, V_kN=e_kN) for x in xs]


def hand_mpr() -> tuple[float, float]:
    """Mpr of the faces by hand (strain compatibility, 22.2; bars at 1.25 fy = 525 MPa, phi = 1;
    Es = 200 000 MPa, eps_cu = 0.003: fs = 600 (c - depth)/c), the concrete a bar displaces in
    the block spread over its 22 mm diameter (as postproc.sections documents).

    Top bars in tension: the block a = 0.8 c reaches past the bottom bars (49 to 71 mm from the
    bottom face), which displace 0.85 f'c each:
      8330 c + 1500 (600 (c - 60)/c - 29.75) = 2500 x 525 -> c = 112.5 mm (a = 90 > 71)
      Mpr- = 8330 c (590 - a/2) + 1500 (fs' - 29.75)(590 - 60)
    Bottom bars in tension: the block ends inside the top bars (49 to 71 mm), which displace the
    fraction (a - 49)/22 of their 0.85 f'c; times c, equilibrium is a quadratic:
      (8330 - 2500 x 29.75 x 0.8/22) c^2 + (2500 x 600 + 2500 x 29.75 x 49/22 - 1500 x 525) c
      - 2500 x 600 x 60 = 0
      Mpr+ = 8330 c (590 - a/2) + 2500 (fs' - 29.75 (a - 49)/22)(590 - 60)
    """
    k, f85 = 0.85 * FC * B * 0.80, 0.85 * FC
    c = 112.5
    fs = 600 * (c - DP) / c
    assert k * c + AB * (fs - f85) == pytest.approx(AT * 525.0)
    assert 0.8 * c > DP + DB / 2 and fs < 525.0
    mpr_neg = k * c * (D - 0.8 * c / 2) + AB * (fs - f85) * (D - DP)
    qa = k - AT * f85 * 0.8 / DB
    qb = AT * 600 + AT * f85 * (DP - DB / 2) / DB - AB * 525.0
    qc = -AT * 600 * DP
    c = (-qb + math.sqrt(qb * qb - 4 * qa * qc)) / (2 * qa)
    a, fs = 0.8 * c, 600 * (c - DP) / c
    frac = (a - (DP - DB / 2)) / DB
    assert 0.0 < frac < 1.0 and abs(fs) < 525.0 and 0.003 * (D - c) / c > 525.0 / 200_000
    mpr_pos = k * c * (D - a / 2) + AT * (fs - f85 * frac) * (D - DP)
    return mpr_neg, mpr_pos


@pytest.fixture(scope="module")
def special(tmp_path_factory):
    """Two special-frame beams: B1 with 22 mm bars, B2 with 16 mm bars (the 6 db limit governs)."""
    members = [dict(member="B1", frame="special", **FRAME_BEAM),
               dict(member="B2", frame="special", **{**FRAME_BEAM, "db_long_mm": 16.0})]
    return design(tmp_path_factory.mktemp("special"), members, beam_forces("B1") + beam_forces("B2"), CASES)


def test_a_vertical_earthquake_effect_raises_ve_and_the_e_rows(tmp_path):
    """[combinations] vertical_earthquake = 0.2 (Ev = 0.2 S_DS D with S_DS = 1.0, the general building
    code's): Ve's gravity load is (1.2 + 0.2)D + 1.0L, at the face 1.4 x 75 + 30 = 135 kN with the sway shear
    of Mpr by hand (18.6.5.1); Table 5.3.1 (e) is 1.4D + 1.0E + 1.0L (at the face 105 + 60 + 30 = 195 kN)
    and (g) 0.7D + 1.0E; the run no longer says Ev is left out."""
    cfg = tmp_path / "ev.toml"
    cfg.write_text("[combinations]\nvertical_earthquake = 0.2\n")
    res = design(tmp_path, [dict(member="B1", frame="special", **FRAME_BEAM)], beam_forces("B1"), CASES,
                 extra=["--config", str(cfg)])
    mpr_neg, mpr_pos = hand_mpr()
    st = _trace(res, "B1")
    assert st.ve_kN.iloc[0] == pytest.approx((mpr_neg + mpr_pos) / LN / 1e3 + 135.0, abs=0.02)
    run = Store(res.store).runs()[-1]
    names = set(pq.read_table(run.design_path / "combinations.parquet").column("combination").to_pylist())
    assert "5.3.1e 1.4D+1.0E+1.0L" in names and "5.3.1g 0.7D-1.0E" in names
    assert "vertical_earthquake" in res.members.set_index("member").message["B1"]
    warnings = json.loads((run.design_path / "manifest.json").read_text())["warnings"]
    assert not any("E is taken as its cases give it" in w for w in warnings)
    cfg.write_text("[combinations]\nvertical_earthquake = 1.0\n")  # S_DS given for 0.2 S_DS: refused
    assert cli.main(["run", "--members", str(tmp_path / "in" / "members.csv"), "--forces",
                     str(tmp_path / "in" / "forces.csv"), "--config", str(cfg), "--out", str(tmp_path / "o2"),
                     "--store", str(tmp_path / "s2")]) == cli.EXIT_INPUT


def _trace(res, member: str) -> pd.DataFrame:
    return res.stations[res.stations.member == member].sort_values(["x_mm", "side"]).reset_index(drop=True)


def test_special_frame_beam_ve_vc_zero_and_hoops_by_hand(special):
    assert special.code == 0
    mpr_neg, mpr_pos = hand_mpr()
    sway = (mpr_neg + mpr_pos) / LN  # 18.6.5.1: Mpr of opposite sign at the two faces, over ln
    assert sway / 1e3 == pytest.approx(192.0, abs=1.5)  # (709.7 + ~442) kN m / 6 m
    st = _trace(special, "B1")
    # Ve at face i: the sway shear plus 1.2D + 1.0L of the simple span, 1.2 x 75 + 30 = 120 kN (the analysis
    # shear here is already a simple beam's: its mean over ln is zero)
    assert st.ve_kN.iloc[0] == pytest.approx(sway / 1e3 + 120.0, abs=0.02)
    assert st.ve_kN.iloc[-1] == pytest.approx(sway / 1e3 + 120.0, abs=0.02)
    mid = st.iloc[(st.x_mm - LN / 2).abs().argmin()]
    assert mid.ve_kN == pytest.approx(sway / 1e3 + 40.0 * (LN / 2 - mid.x_mm) / 1e3, abs=0.02)
    # the design shear is the larger of Ve and the analysis envelope (1.2D + 1.0E + 1.0L = 180 kN at the face)
    assert st.vu_max_kN.iloc[0] == pytest.approx(st.ve_kN.iloc[0], abs=0.01)
    # 18.6.5.2: earthquake part sway >= Ve/2 at the faces and Pu = 0 < Ag f'c/20: Vc = 0 over 2h = 1300 mm
    assert sway >= 0.5 * (sway + 120e3)
    hinge = (st.x_mm <= 2 * H) | (st.x_mm >= LN - 2 * H)
    assert st.vc_zero[hinge].all() and not st.vc_zero[~hinge].any()
    assert (st.phi_vc_kN[hinge] == 0.0).all() and (st.phi_vc_kN[~hinge] > 0).all()
    assert (st.vc_equation[hinge] == "Vc = 0 (18.6.5.2)").all()
    row = special.members.set_index("member").loc["B1"]
    assert row.status == "designed" and "Ve = " in row.message and "Vc = 0 there at end i and j" in row.message
    # Hoops (18.6.4.4): s <= min(d/4 = 147.5, 6 db = 132, 150) = 132 mm. Strength with Vc = 0 at the face:
    # Av/s >= Ve/(phi fyt d) (22.5.8.5.3). Legs (18.6.4.2, 25.7.2.3): 2500/380 = 6.6 bars of 22 mm, but one layer
    # holds floor(229/47) + 1 = 5 (centre spacing 57 mm, clear 35 < 150): every corner and alternate bar, 3 legs.
    av_s = st.ve_kN.iloc[0] * 1e3 / (0.75 * 420.0 * D)
    s_strength = 3 * 71.0 / av_s
    expect = math.floor(min(132.0, s_strength) / 25.0) * 25.0  # the 25 mm module
    z = special.zones[special.zones.member == "B1"].sort_values("zone")
    hoops = z[z.kind == "hoop"]
    assert set(hoops.legs) == {3} and hoops.spacing_mm.iloc[0] == expect == 125.0
    first, last = hoops.iloc[0], hoops.iloc[-1]
    assert first.start_mm == 50.0 and LN - last.end_mm == 50.0  # first hoop within 50 mm of each face
    assert first.end_mm >= 2 * H and last.start_mm <= LN - 2 * H  # hoops span 2h from each face
    # elsewhere stirrups (with seismic hooks), at most d/2 = 295 mm (18.6.4.6)
    assert (z[z.kind == "stirrup"].spacing_mm.dropna() <= D / 2).all()
    # B2: 16 mm bars: 6 db = 96 mm governs the hoops -> 75 mm on the module
    z2 = special.zones[(special.zones.member == "B2") & (special.zones.kind == "hoop")]
    assert set(z2.spacing_mm.dropna()) == {75.0}


def test_mpr_end_to_end_against_concreteproperties(special):
    """Ve at the faces through the command line, against Mpr of the independent section
    library (bars at 1.25 fy, cut out of the concrete as circles)."""
    bars = lambda top, bot: ([(top / 2, B / 3, H - DP, DB), (top / 2, 2 * B / 3, H - DP, DB),
                              (bot / 2, B / 3, H - D, DB), (bot / 2, 2 * B / 3, H - D, DB)])
    section = ref.rectangle(B, H, FC, 1.25 * FY, bars(AT, AB))
    mpr_neg = ref.ultimate_moment(section, 0.0, top_in_compression=False)
    mpr_pos = ref.ultimate_moment(section, 0.0, top_in_compression=True)
    st = _trace(special, "B1")
    assert st.ve_kN.iloc[0] * 1e3 - 120e3 == pytest.approx((mpr_neg + mpr_pos) / LN, rel=3e-3)


def test_intermediate_frame_lesser_of_rule(tmp_path):
    """18.4.2.3: phi Vn >= the lesser of (a) the shear from Mn at both ends plus gravity and (b) the largest
    earthquake-combination shear with E times Omega_o = 3. At x = 1500 mm from face i (1.8 m from node i,
    beyond d: no critical-section rule): 1.2D + 1.0L = 1.2 x 37.5 + 15 = 60 kN; (a) = (Mn- + Mn+)/ln + 60;
    (b) = 60 + 3 E (1.2D + 3E + 1.0L; the other E combinations give less)."""
    members = [dict(member="I1", frame="intermediate", **FRAME_BEAM), dict(member="I2", frame="intermediate", **FRAME_BEAM)]
    res = design(tmp_path, members, beam_forces("I1", e_kN=60.0) + beam_forces("I2", e_kN=20.0), CASES)
    assert res.code == 0
    bars = [(AT / 2, B / 3, H - DP, DB), (AT / 2, 2 * B / 3, H - DP, DB), (AB / 2, B / 3, H - D, DB),
            (AB / 2, 2 * B / 3, H - D, DB)]
    section = ref.rectangle(B, H, FC, FY, bars)  # Mn with fy (concreteproperties)
    mn = ref.ultimate_moment(section, 0.0, False) + ref.ultimate_moment(section, 0.0, True)
    v_a = mn / LN / 1e3 + 60.0
    for member, e, governs in (("I1", 60.0, "a"), ("I2", 20.0, "b")):
        st = _trace(res, member)
        k = (st.x_mm - 1500.0).abs().argmin()
        assert st.x_mm[k] == pytest.approx(1500.0)
        v_b = 60.0 + 3.0 * e
        assert st.ve_kN[k] == pytest.approx(min(v_a, v_b), rel=3e-3)
        assert (v_a < v_b) == (governs == "a")
        assert not st.vc_zero.any()  # Vc = 0 is a special-frame rule (18.6.5.2)
    # hoops over 2h at min(d/4, 8 db, 24 db hoop, 300) = min(147.5, 176, 228, 300) = 147.5 -> 125 (18.4.2.4)
    z = res.zones[(res.zones.member == "I1") & (res.zones.kind == "hoop")]
    assert len(z) and (z.spacing_mm.dropna() <= 147.5).all() and z.start_mm.min() == 50.0
    assert "intermediate moment frame (18.4.2)" in res.members.set_index("member").message["I1"]


# --- joints ---------------------------------------------------------------------------------------

def _joint_frame(one_side: bool = False):
    """An interior joint: 600 x 600 columns below (0 to 3.6 m) and above (3.6 to 7.2 m), the
    special-frame beams of the hand calculation along x on both sides (or one), transverse beams
    450 wide along y on both sides (not frame beams)."""
    col = dict(kind="column", length_m=3.6, b_mm=600.0, h_mm=600.0, cover_mm=60.0, fc_mpa=FC, fyt_mpa=FY,
               support_i="column", support_j="column")
    xyz = lambda a, b: dict(x_i_m=a[0], y_i_m=a[1], z_i_m=a[2], x_j_m=b[0], y_j_m=b[1], z_j_m=b[2])
    members = [dict(member="C1", **col, **xyz((0, 0, 0), (0, 0, 3.6))),
               dict(member="C2", **col, **xyz((0, 0, 3.6), (0, 0, 7.2))),
               dict(member="BL", frame="special", **FRAME_BEAM, **xyz((-L_M, 0, 3.6), (0, 0, 3.6))),
               dict(member="TY1", **{**FRAME_BEAM, "b_mm": 450.0}, **xyz((0, 0, 3.6), (0, L_M, 3.6))),
               dict(member="TY2", **{**FRAME_BEAM, "b_mm": 450.0}, **xyz((0, -L_M, 3.6), (0, 0, 3.6)))]
    if not one_side:
        members.append(dict(member="BR", frame="special", **FRAME_BEAM, **xyz((0, 0, 3.6), (L_M, 0, 3.6))))
    forces = [r for m in members if m["kind"] == "beam" for r in beam_forces(m["member"])]
    return members, forces


def test_joint_shear_by_hand(tmp_path):
    members, forces = _joint_frame()
    res = design(tmp_path, members, forces, CASES)
    assert res.code == cli.EXIT_UNDESIGNED  # the columns are given for the joint's geometry alone: no forces
    joints = pd.read_csv(res.out / "joints.csv")
    row = joints[(joints.joint == "C1:top") & (joints.direction == "x")].iloc[0]
    # 18.8.2.1: T = 1.25 fy As,top = 1312.5 kN on one side, C = 1.25 fy As,bot = 787.5 kN on the other;
    # column shear (common practice): (Mpr- + Mpr+) / H, H = (3600 + 3600)/2 = 3600 mm
    mpr_neg, mpr_pos = hand_mpr()
    vu = 1312.5e3 + 787.5e3 - (mpr_neg + mpr_pos) / 3600.0
    assert row.vu_kN == pytest.approx(vu / 1e3, abs=0.02)  # about 1780 kN
    # Table 18.8.4.3: column continues above (15.2.6), beam on both sides (15.2.7), transverse beams
    # 450 >= 0.75 x 600 on both faces (15.2.8): 1.7; Aj = 600 x 600 (bw + h = 950 > 600);
    # phi Vn = 0.85 x 1.7 x sqrt(35) x 360 000 = 3077.3 kN (21.2.4.4)
    assert row.coefficient == 1.7 and row.aj_mm2 == 360_000
    assert row.phi_vn_kN == pytest.approx(0.85 * 1.7 * math.sqrt(35.0) * 360_000 / 1e3, abs=0.01)
    assert row.utilization == pytest.approx(vu / (0.85 * 1.7 * math.sqrt(35.0) * 360_000), abs=1e-3)
    assert row.status == "ok" and set(row.members.split()) == {"BL", "BR"}
    assert not ((joints.joint == "C1:top") & (joints.direction == "y")).any()  # no frame beam along y
    # the joints are stored in the run as well
    run = Store(res.store).runs()[-1]
    assert pq.read_table(run.design_path / "joints.parquet").num_rows == len(joints)


def test_exterior_joint_by_hand(tmp_path):
    members, forces = _joint_frame(one_side=True)
    res = design(tmp_path, members, forces, CASES)
    row = pd.read_csv(res.out / "joints.csv").iloc[0]
    mpr_neg, mpr_pos = hand_mpr()
    # one beam: the larger of its top bars at 1.25 fy less Mpr-/H and its bottom bars less Mpr+/H
    vu = max(1312.5e3 - mpr_neg / 3600.0, 787.5e3 - mpr_pos / 3600.0)
    assert row.vu_kN == pytest.approx(vu / 1e3, abs=0.02)
    assert row.coefficient == 1.2  # continuous column, no beam beyond the joint, confined (Table 18.8.4.3)


def test_a_frame_beam_flush_with_the_column_face_narrows_the_joint(tmp_path):
    """The exterior joint with its frame beam (bw = 350) drawn flush with the column's outer face: its
    axis (600 - 350)/2 = 125 mm off the column's, 300 - 125 = 175 mm from the nearer column side.
    18.8.4.3: bj <= the lesser of bw + h = 950 and 2 x 175 = 350 mm (the column is wider), so Aj = 350 x
    600 = 210,000 mm^2 and phi Vn = 0.85 x 1.2 x sqrt(35) x 210,000 = 1,267.2 kN (Table 18.8.4.3, 21.2.4.4),
    not the 1,810.2 kN of the beam on the axis. Drawn on the axis, the run says the limit took no effect."""
    members, forces = _joint_frame(one_side=True)
    flush = (600.0 - B) / 2 / 1e3
    for m in members:
        if m["member"] == "BL":
            m["y_i_m"] = m["y_j_m"] = flush
    res = design(tmp_path / "flush", members, forces, CASES)
    row = pd.read_csv(res.out / "joints.csv").iloc[0]
    assert row.aj_mm2 == 210_000 and row.coefficient == 1.2
    assert row.phi_vn_kN == pytest.approx(0.85 * 1.2 * math.sqrt(35.0) * 210_000 / 1e3, abs=0.01)
    assert "bj = 350 mm" in row.message and "125 mm off the column's" in row.message and "18.8.4.3(b)" in row.message
    warnings = json.loads((Store(res.store).runs()[-1].design_path / "manifest.json").read_text())["warnings"]
    assert not any("took no effect" in w for w in warnings)
    # a 400 x 900 column with the beam's axis 300 mm off its own: only the 900 mm side across the beam holds it,
    # so that way alone counts (not the other, where the axis would lie outside the column): 2 x (450 - 300) =
    # 300 mm, Aj = 300 x 400, transverse beams 450 >= 0.75 x 400 confine: phi Vn = 0.85 x 1.2 sqrt(35) x 120,000
    members, forces = _joint_frame(one_side=True)
    for m in members:
        if m["kind"] == "column":
            m.update(b_mm=400.0, h_mm=900.0)
        if m["member"] == "BL":
            m["y_i_m"] = m["y_j_m"] = 0.3
    res = design(tmp_path / "narrow", members, forces, CASES)
    row = pd.read_csv(res.out / "joints.csv").iloc[0]
    assert row.aj_mm2 == 120_000 and "bj = 300 mm" in row.message
    assert row.phi_vn_kN == pytest.approx(0.85 * 1.2 * math.sqrt(35.0) * 120_000 / 1e3, abs=0.01)
    members, forces = _joint_frame(one_side=True)
    res = design(tmp_path / "on-axis", members, forces, CASES)
    row = pd.read_csv(res.out / "joints.csv").iloc[0]
    assert row.aj_mm2 == 360_000 and row.phi_vn_kN == pytest.approx(0.85 * 1.2 * math.sqrt(35.0) * 360_000 / 1e3, abs=0.01)
    warnings = json.loads((Store(res.store).runs()[-1].design_path / "manifest.json").read_text())["warnings"]
    assert any("18.8.4.3(b)" in w and "took no effect" in w for w in warnings)


def test_joints_need_coordinates(tmp_path):
    members, forces = _joint_frame()
    for m in members:
        for c in ("x_i_m", "y_i_m", "z_i_m", "x_j_m", "y_j_m", "z_j_m"):
            m.pop(c)
    res = design(tmp_path, members, forces, CASES)
    assert res.code == cli.EXIT_UNDESIGNED and not (res.out / "joints.csv").exists()  # columns without forces
    warnings = json.loads((Store(res.store).runs()[-1].design_path / "manifest.json").read_text())["warnings"]
    assert any("no end coordinates" in w and "18.8" in w and "not checked" in w for w in warnings)


# --- input ---------------------------------------------------------------------------------------

def _refused(tmp_path, members, capsys, forces=None, extra=()):
    paths = write_inputs(tmp_path / "in", members, forces or beam_forces("B1"), CASES)
    before = tree_snapshot(tmp_path / "in")
    code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]), "--cases",
                     str(paths["cases"]), "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out"), *extra])
    assert tree_snapshot(tmp_path / "in") == before and not (tmp_path / "out").exists()
    return code, capsys.readouterr().err


def test_a_special_frame_beam_without_its_bars_is_refused(tmp_path, capsys):
    m = dict(member="B1", frame="special", **FRAME_BEAM)
    m.pop("as_bot_j_mm2")
    code, err = _refused(tmp_path, [m], capsys)
    assert code == 1 and "members.csv" in err and "line 2" in err and "as_bot_j_mm2" in err
    assert "special moment frame" in err and "18.6.5.1" in err


def test_missing_db_long_and_a_free_end_are_refused(tmp_path, capsys):
    m = dict(member="B1", frame="intermediate", **{**FRAME_BEAM, "support_j": "free"})
    m.pop("db_long_mm")
    code, err = _refused(tmp_path, [m], capsys)
    assert code == 1 and "db_long_mm" in err and "support_j" in err and "free end" in err


def test_bad_bar_values_are_refused(tmp_path, capsys):
    for bad, column, words in ((dict(as_top_i_mm2=-5.0), "as_top_i_mm2", "greater than zero"),
                               (dict(as_top_i_mm2=3e5), "as_top_i_mm2", "gross section"),
                               (dict(db_long_mm=0.875), "db_long_mm", "plausible"),
                               (dict(frame="speical"), "frame", "not one of")):
        m = dict(member="B1", **{"frame": "special", **FRAME_BEAM, **bad})
        code, err = _refused(tmp_path / column / words.replace(" ", "-"), [m], capsys)
        assert code == 1 and column in err and words in err, (bad, err)


def test_ordinary_frame_bars_are_all_or_none(tmp_path, capsys):
    m = dict(member="B1", kind="beam", length_m=L_M, b_mm=B, h_mm=H, d_mm=D, fc_mpa=FC, fyt_mpa=FY,
             support_i="column", support_j="column", frame="ordinary", as_top_i_mm2=AT)
    code, err = _refused(tmp_path, [m], capsys)
    assert code == 1 and "ordinary-frame beam with bars" in err


def test_frame_by_group_from_the_settings(tmp_path, capsys):
    """[frames] by_group sets the frame of a group's members whose `frame` is empty; a group
    member without bars is then refused, naming the group."""
    cfg = tmp_path / "settings.toml"
    cfg.write_text('[frames]\nby_group = { perimeter = "special" }\n')
    plain = {k: v for k, v in FRAME_BEAM.items() if not k.startswith(("as_", "db_"))}
    code, err = _refused(tmp_path / "a", [dict(member="B1", group="perimeter", **plain)], capsys,
                         extra=["--config", str(cfg)])
    assert code == 1 and "as_top_i_mm2" in err and "[frames].by_group of group 'perimeter'" in err
    # with bars: designed as a special-frame beam; an explicit frame in members.csv wins
    res = design(tmp_path / "b", [dict(member="B1", group="perimeter", **FRAME_BEAM),
                                  dict(member="B2", group="perimeter", frame="none", **FRAME_BEAM)],
                 beam_forces("B1") + beam_forces("B2"), CASES, extra=["--config", str(cfg)])
    msg = res.members.set_index("member").message
    assert "special moment frame (18.6)" in msg["B1"] and "moment frame" not in str(msg["B2"])
    # what Chapter 18 asks and the tool does not do is said: per frame beam, and per run 21.2.4.1 for B2
    assert "not applied here: hoops over 2h each side of a section of likely yielding" in msg["B1"]
    assert "(18.6.4.1(b)); vertical earthquake effects not in the gravity load of Ve" in msg["B1"]
    warnings = json.loads((Store(res.store).runs()[-1].design_path / "manifest.json").read_text())["warnings"]
    assert any("phi = 0.60 for shear of 21.2.4.1" in w and "NOT applied" in w for w in warnings)
    cfg.write_text('[frames]\nby_group = { perimeter = "spcial" }\n')
    code, err = _refused(tmp_path / "c", [dict(member="B1", **FRAME_BEAM)], capsys, extra=["--config", str(cfg)])
    assert code == 1 and "frame must be one of" in err


def test_frame_beam_without_case_types_says_why(tmp_path):
    res = design(tmp_path, [dict(member="B1", frame="special", **FRAME_BEAM),
                            dict(member="B2", **FRAME_BEAM)], beam_forces("B1") + beam_forces("B2"))
    rows = res.members.set_index("member")
    assert rows.status["B1"] == "invalid" and "cases.csv" in rows.message["B1"] and "18.6.5.1" in rows.message["B1"]
    assert rows.status["B2"] == "designed"


def test_frame_checks_of_the_bars(tmp_path):
    """18.6.3.2: Mn+ at a face at least Mn-/2; a beam whose bottom bars give less is not designed."""
    weak = dict(member="W1", frame="special", **{**FRAME_BEAM, "as_bot_i_mm2": 800.0})
    res = design(tmp_path, [weak], beam_forces("W1"), CASES)
    row = res.members.set_index("member").loc["W1"]
    assert row.status == "resize" and "18.6.3.2" in row.message


def test_one_warning_when_earthquake_cases_meet_no_frame(tmp_path):
    plain = {k: v for k, v in FRAME_BEAM.items() if not k.startswith(("as_", "db_"))}
    res = design(tmp_path / "a", [dict(member="B1", **plain)], beam_forces("B1"), CASES, extra=["--json"])
    run = Store(res.store).runs()[-1]
    warnings = json.loads((run.design_path / "manifest.json").read_text())["warnings"]
    assert sum("Chapter 18" in w and "NOT applied" in w for w in warnings) == 1
    res = design(tmp_path / "b", [dict(member="B1", frame="special", **FRAME_BEAM)], beam_forces("B1"), CASES)
    warnings = json.loads((Store(res.store).runs()[-1].design_path / "manifest.json").read_text())["warnings"]
    assert not any("NOT applied" in w for w in warnings)
    # with earthquake cases, E is taken as given: the vertical effect of the general building code is said not added
    assert any(w.startswith("E is taken as its cases give it (E)") and "0.2 S_DS D) is NOT added" in w for w in warnings)


def test_schedule_lists_hoops_with_seismic_hooks(special):
    run = Store(special.store).runs()[-1]
    sched = schedule.build(run, Detailing())
    bars = sched.bars[sched.bars.member == "B1"]
    z = special.zones[special.zones.member == "B1"]
    hoops = bars[bars["shape"] == "hoop-135"]
    assert int(hoops["count"].sum()) == int(z[z.kind == "hoop"]["count"].sum())
    assert int(bars[bars["shape"] == "closed-135"]["count"].sum()) == int(z[z.kind == "stirrup"]["count"].sum())
    # a seismic hook: 135 degrees with 6 db, at least 75 mm (25.3.4): #10 -> max(57, 75) = 75 mm
    assert set(hoops.hook_mm) == {75.0}
    assert "hoops" in sched.members.set_index("member").layout["B1"]


# --- property: every layout carries Ve with Vc = 0 in the hinge zones -------------------------------

@hs.composite
def special_beams(draw):
    b = draw(hs.sampled_from([300.0, 350.0, 400.0, 450.0]))
    h = draw(hs.sampled_from([500.0, 600.0, 700.0]))
    span = draw(hs.sampled_from([5.0, 6.5, 8.0]))
    db = draw(hs.sampled_from([16.0, 19.1, 22.2]))
    d = h - 60.0
    as_min = max(max(0.25 * math.sqrt(FC), 1.4) / FY * b * d, 2 * math.pi * db**2 / 4)  # 9.6.1.2; two bars (18.6.3.1)
    top = draw(hs.floats(as_min, 0.015 * b * d))
    bottom = draw(hs.floats(max(as_min, 0.6 * top), top))
    member = dict(member="P1", kind="beam", length_m=span, b_mm=b, h_mm=h, cover_mm=60.0, fc_mpa=FC, fyt_mpa=FY,
                  fy_mpa=FY, support_i="column", support_j="column", face_i_mm=250.0, face_j_mm=250.0,
                  frame="special", as_top_i_mm2=top, as_bot_i_mm2=bottom, as_top_j_mm2=top, as_bot_j_mm2=bottom,
                  db_long_mm=db)
    wd, wl = draw(hs.floats(10.0, 60.0)), draw(hs.floats(0.0, 30.0))
    e = draw(hs.floats(0.0, 200.0))
    n_ax = draw(hs.sampled_from([0.0, 0.0, -300.0, 400.0]))  # tension positive: a compression of 300 kN, or 400 kN tension
    xs = np.linspace(0.0, span, 15)
    rows = [dict(member="P1", case="D", x_m=x, V_kN=wd * (span / 2 - x) + 0.1 * wd, N_kN=n_ax) for x in xs]
    rows += [dict(member="P1", case="L", x_m=x, V_kN=wl * (span / 2 - x), N_kN=0.0) for x in xs]
    rows += [dict(member="P1", case="E", x_m=x, V_kN=e, N_kN=0.0) for x in xs]
    return member, rows


def _brute_force_check(member: dict, forces: list[dict], res) -> None:
    """Plain Python, station by station: Ve from Mpr (the sections library, itself checked against
    concreteproperties) and the gravity shear of every combination 1.2D + {0, 1}L enumerated, the
    Vc = 0 rule of 18.6.5.2 applied by hand, and the provided stirrups (their stored positions):
    phi Av fyt d / s (+ phi Vc where Vc is kept) >= Ve at every station, hoops within their limits."""
    from postproc import sections

    ln = member["length_m"] * 1e3 - member["face_i_mm"] - member["face_j_mm"]
    d = member["h_mm"] - member["cover_mm"]
    r = sections.beam_end_strengths(member["b_mm"], member["h_mm"], d, member["as_top_i_mm2"],
                                    member["as_bot_i_mm2"], FC, FY, d_prime=member["cover_mm"],
                                    db_top=member["db_long_mm"], db_bot=member["db_long_mm"])
    sway = float(r.mpr_neg[0] + r.mpr_pos[0]) / ln  # equal ends: the same both ways
    fr = pd.DataFrame(forces)

    def gravity(case, x_clear):  # the simple-beam shear: V less its mean over the clear span
        rows = fr[fr.case == case]
        xs, vs = rows.x_m.to_numpy() * 1e3 - member["face_i_mm"], rows.V_kN.to_numpy() * 1e3
        grid = np.linspace(0.0, ln, 2001)
        v = np.interp(grid, xs, vs)
        mean = float(np.sum((v[1:] + v[:-1]) / 2 * np.diff(grid))) / ln
        return float(np.interp(x_clear, xs, vs)) - mean

    st = res.stations[res.stations.member == "P1"].sort_values(["x_mm", "side"])
    pos = np.sort(pq.read_table(Store(res.store).runs()[-1].design_path / "stirrups.parquet").to_pandas().x_mm.to_numpy())
    z = res.zones[res.zones.member == "P1"]
    legs, area = int(z.legs.max()), {"#10": 71.0, "#13": 129.0, "#16": 199.0}[z.bar.iloc[0]]
    hinge_len = 2 * member["h_mm"]
    b = member["b_mm"]

    def gap_at(x):  # the stirrup spacing in force at x: the gap around it, the larger one on a stirrup or past the ends
        on = np.abs(pos - x) < 1e-6
        if on.any():
            k = int(np.flatnonzero(on)[0])
            around = [pos[k] - (pos[k - 1] if k else 0.0), (pos[k + 1] if k + 1 < len(pos) else ln) - pos[k]]
            return max(around)
        k = int(np.searchsorted(pos, x))
        if k == 0:
            return max(pos[0], pos[1] - pos[0])
        if k == len(pos):
            return max(ln - pos[-1], pos[-1] - pos[-2])
        return pos[k] - pos[k - 1]

    def vc_by_hand(nu, av_s):  # Table 22.5.5.1 (a) with Av >= Av,min, else (c) at the As,min of 9.6.1.2
        root = min(math.sqrt(FC), 8.3)
        axial = min(nu / (6 * b * member["h_mm"]), 0.05 * FC)
        if av_s >= max(0.062 * math.sqrt(FC), 0.35) * b / FY:
            v = 0.17 * root + axial
        else:
            rho = max(0.25 * math.sqrt(FC) / FY, 1.4 / FY)
            v = 0.66 * min(math.sqrt(2 / (1 + 0.004 * d)), 1.0) * rho ** (1 / 3) * root + axial
        return min(max(v, 0.0), 0.42 * root) * b * d
    ve = []
    for x in st.x_mm:
        g = [1.2 * gravity("D", x) + f * gravity("L", x) for f in (0.0, 1.0)]
        ve.append(max(abs(gi + s) for gi in g for s in (sway, -sway)))
    ve = np.array(ve)
    assert np.allclose(st.ve_kN.to_numpy() * 1e3, ve, rtol=1e-6, atol=1.0)
    n_comp = -fr[fr.case == "D"].N_kN.iloc[0] * 1e3  # compression positive; D with 0.9, 1.2 or 1.4 (Table 5.3.1)
    least = min(f * n_comp for f in (0.9, 1.2, 1.4))
    ag = member["b_mm"] * member["h_mm"]
    for end, inside in (("i", st.x_mm <= hinge_len), ("j", st.x_mm >= ln - hinge_len)):
        k = int(np.argmax(np.where(inside, ve, -np.inf)))
        zero = sway >= 0.5 * ve[k] and least < ag * FC / 20  # 18.6.5.2 (a) and (b)
        assert (st.vc_zero[inside] == zero).all(), end
    for x, v, vc_kept in zip(st.x_mm, ve, ~st.vc_zero):
        gap = gap_at(x)
        vs = min(legs * area * FY * d / gap, 0.66 * math.sqrt(FC) * b * d)  # 22.5.8.5.3, 22.5.1.2
        capacity = 0.75 * (vs + (vc_by_hand(least, legs * area / gap) if vc_kept else 0.0))
        assert capacity >= v * (1 - 1e-6), (x, v, capacity)
        if x <= hinge_len or x >= ln - hinge_len:
            assert gap <= min(d / 4, 6 * member["db_long_mm"], 150.0) + 1e-6, (x, gap)
    assert pos[0] <= 50.0 + 1e-6 and ln - pos[-1] <= 50.0 + 1e-6


@settings(max_examples=10, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(case=special_beams())
def test_random_special_frame_beams_carry_ve(case, tmp_path_factory):
    member, forces = case
    res = design(tmp_path_factory.mktemp("prop"), [member], forces, CASES)
    row = res.members.iloc[0]
    event(f"status {row.status}, Vc = 0 {'somewhere' if res.stations.vc_zero.any() else 'nowhere'}")
    if row.status != "designed":  # the section limit with Vc = 0, or no ladder option: said, with the clause
        assert row.status == "resize" and ("22.5.1.2" in row.message or "ladder" in row.message), row.message
        return
    _brute_force_check(member, forces, res)


# --- the demo, with and without its special frames ---------------------------------------------------

@pytest.fixture(scope="module")
def demo_pair(demo_designed, tmp_path_factory):
    """The session's demo design (its special frames) copied into a store of our own, and the demo
    again without its frames beside it."""
    tmp = tmp_path_factory.mktemp("demo-frames")
    store = tmp / "store"
    run = Store(demo_designed.store).latest()
    shutil.copytree(run.path, store / "frames")
    doc = json.loads((run.path / "manifest.json").read_text(encoding="utf-8"))
    store_mod.seal_folder(store / "frames", {**doc, "run": "frames"}, skip=store_mod.SEALED_FOLDERS)  # renamed: sealed anew
    b = cli.main(["demo", "--without-frames", "--store", str(store), "--out", str(tmp / "plain"), "--run", "plain",
                  "--json", "--no-report"])
    return demo_designed.out, tmp / "plain", store, demo_designed.code, b


def test_demo_frames_and_compare(demo_pair, capsys):
    framed, plain, store, a, b = demo_pair
    assert a == b == 0
    capsys.readouterr()
    frames = pd.read_csv(framed / "members.csv").set_index("member")
    zones = pd.read_csv(framed / "zones.csv")
    perimeter = [m for m in frames.index if m.split("-")[1] in ("GX", "GY") and m.split("-")[2][0] in "AD15"]
    assert len(perimeter) == 84
    assert frames.loc[perimeter, "message"].str.contains("special moment frame").all()
    assert set(zones[zones.member.isin(perimeter)].kind) == {"hoop", "stirrup"}
    # the columns of the perimeter frames are special too (18.7: hoops throughout), the others tied
    columns = [m for m in frames.index if m.split("-")[1] == "C"]
    framed_columns = [m for m in columns if frames.message[m].startswith("special moment frame")
                      or "special moment frame (18.7)" in frames.message[m]]
    assert len(framed_columns) == 84
    assert set(zones[zones.member.isin(framed_columns)].kind) == {"hoop"}
    assert set(zones[zones.member.isin(set(columns) - set(framed_columns))].kind) == {"tie"}
    assert set(zones[~zones.member.isin(perimeter + columns)].kind) <= {"stirrup"}
    assert (framed / "joints.csv").exists() and not (plain / "joints.csv").exists()
    # compare: every perimeter girder and column changes (hoops), nothing else does
    assert cli.main(["compare", "plain", "frames", "--store", str(store), "--json"]) == 0
    diff = json.loads(capsys.readouterr().out)
    changed = {r["member"] for r in diff["layout_changes"]}
    assert changed == set(perimeter) | set(framed_columns)
    assert diff["stirrup_mass_change_kg"] > 0
    assert any(r["member"] in perimeter for r in diff["demand_changes"])  # Ve above the analysis shear somewhere


def test_frame_properties_from_ifc(tmp_path):
    """The ShearpostDesign property set carries the frame and the bars of a beam (IFC4, metres):
    read into the members table; a frame beam without its smallest bar is invalid, saying why."""
    from postproc.adapters import ifc
    from tests.test_ifc import Model

    m = Model("IFC4", "m")
    elements = [m.column("C1", 0, 0), m.column("C2", 6, 0)]
    for name, props in (("B1", {"Frame": "special", "AsTopI": 2500.0, "AsBotI": 1500.0, "AsTopJ": 2400.0,
                                "AsBotJ": 1400.0, "DbLong": 0.022}),
                        ("B2", {"Frame": "special", "AsTopI": 2500.0, "AsBotI": 1500.0, "AsTopJ": 2500.0,
                                "AsBotJ": 1500.0})):
        beam = m.beam(name, (0, 0, 3.5 - 0.3), (6, 0, 3.5 - 0.3), m.rect(0.35, 0.6))
        m.pset(beam, "ShearpostDesign", {"Cover": 0.06, **props})
        elements.append(beam)
    path = m.write(tmp_path / "frame.ifc")
    table, _ = ifc.read_ifc_members(path, key="name")
    rows = table.to_pandas().set_index("member")
    b1 = rows.loc["B1"]
    assert b1.frame == "special" and pd.isna(b1.invalid_reason)
    assert (b1.as_top_i_mm2, b1.as_bot_i_mm2, b1.as_top_j_mm2, b1.as_bot_j_mm2) == (2500.0, 1500.0, 2400.0, 1400.0)
    assert b1.db_long_mm == pytest.approx(22.0)  # a length in the file's unit (m)
    assert (b1.x_i_m, b1.z_i_m) == pytest.approx((100.0, 3.2))  # coordinates for the joints (SITE at 100, 50)
    assert "db_long_mm" in rows.loc["B2"].invalid_reason and "DbLong" in rows.loc["B2"].invalid_reason


def test_a_short_special_frame_beam_fails_18_6_2_1_not_9_9(tmp_path):
    """ln = 2300 mm < 4d = 2360 mm, and <= 4h = 2600 mm (a deep beam by 9.9.1.1(a)): the special
    frame's own rule (18.6.2.1(a), ln >= 4d) is the reason given."""
    short = dict(member="S1", frame="special", **{**FRAME_BEAM, "length_m": 2.9})  # ln = 2900 - 600 = 2300 mm
    forces = [dict(member="S1", case=c, x_m=x, V_kN=v) for c, v in (("D", 50.0), ("L", 20.0), ("E", 40.0))
              for x in (0.0, 1.45, 2.9)]
    row = design(tmp_path, [short], forces, CASES).members.set_index("member").loc["S1"]
    assert row.status == "resize" and "18.6.2.1" in row.message and "9.9.1.1" not in row.message


def test_explain_walks_through_chapter_18(special):
    from postproc import explain
    from postproc.settings import settings_from_dict

    run = Store(special.store).runs()[-1]
    steps = explain.explain(run, "B1", settings_from_dict(run.manifest()["settings"]))
    text = "\n".join(line for s in steps for line in [s.title, s.clause, *s.lines])
    mpr_neg, mpr_pos = hand_mpr()
    assert "Moment frame: special" in text and f"Mpr- / Mpr+ (1.25 fy, phi = 1): i {mpr_neg / 1e6:,.1f}" in text
    assert "end i: Vc = 0 (18.6.5.2) yes" in text and "end j: Vc = 0 (18.6.5.2) yes" in text
    assert "hoops #10 x 3 legs @ 125 mm" in text and "seismic hooks" in text
    assert "Vc = 0.0 kN by Table Vc = 0 (18.6.5.2)" in text  # the hinge zone's zone step takes Vc = 0
