"""Inch-pound units end to end: the inch-pound edition of ACI 318-19, US bar sizes, either
spelling of every input column, inch-pound tables, and the SI and inch-pound designs of
one model side by side.

Sources: the inch-pound equations of ACI 318-19 (clauses named at each check), evaluated
by hand in the comments; ASTM A615/A615M Table 1 for the bars; the AISC Steel
Construction Manual, Table 3-23 (simple beam and cantilever, uniform load) for the
shear diagrams of the two worked beams.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from postproc import cli, detailing, units
from postproc.codes import aci318_19 as aci
from postproc.settings import BAR_CATALOGUE, BAR_CATALOGUE_US, Settings
from tests.conftest import design, equal_to_reference

PSI_PER_MPA = 1e6 / 6894.757293168361  # 1 psi = 6894.757 Pa (exact by the definitions of lbf and in)
IN = 25.4  # mm per inch, exact


def us_beam(member: str, length_ft: float, **kw) -> dict:
    row = dict(member=member, kind="beam", length_ft=length_ft, b_in=12.0, h_in=24.0, d_in=21.5, fc_psi=4000.0,
               fyt_psi=60000.0, support_i="column", support_j="column", face_i_in=9.0, face_j_in=9.0, load_face="top")
    row.update(kw)
    return row


def us_rows(member: str, length_ft: float, shear_kip, n: int = 5) -> list[dict]:
    """Stations along a member from V(x) (kip, x in ft): linear shear is exact between them."""
    return [dict(member=member, case="U", x_ft=x, V_kip=shear_kip(x)) for x in np.linspace(0.0, length_ft, n)]


def at(st: pd.DataFrame, member: str, x_in: float) -> pd.Series:
    s = st[(st.member == member) & np.isclose(st.x_in, x_in, atol=1e-3)]
    assert len(s), f"no station at {x_in} in"
    return s.iloc[-1]


# --- the bars and the edition table ------------------------------------------------------------

def test_inch_bar_sizes_are_astm_a615_table_1():
    # ASTM A615/A615M Table 1 (inch-pound designations): nominal diameter in, area in^2,
    # nominal weight lb/ft: #3 0.375, 0.11, 0.376; #4 0.500, 0.20, 0.668; #5 0.625, 0.31,
    # 1.043; #6 0.750, 0.44, 1.502
    table = {"#3": (0.375, 0.11, 0.376), "#4": (0.500, 0.20, 0.668), "#5": (0.625, 0.31, 1.043),
             "#6": (0.750, 0.44, 1.502)}
    assert set(BAR_CATALOGUE_US) == set(table)
    for bar, (db, area, weight) in table.items():
        assert BAR_CATALOGUE_US[bar] == (db, area)
        assert math.pi * db**2 / 4 == pytest.approx(area, rel=0.02)  # the area of the nominal diameter
        # the tool weighs bars at 490 lb/ft^3 (common practice): within 2 % of the table's weight
        assert area * 12 * detailing.steel_density(aci.US) == pytest.approx(weight, rel=0.02)


def test_metric_bars_are_the_same_bars_soft_converted():
    # ASTM A615M designations are the inch bars renamed: #10 = #3, #13 = #4, #16 = #5, #19 = #6
    for si, us in (("#10", "#3"), ("#13", "#4"), ("#16", "#5"), ("#19", "#6")):
        (db_mm, a_mm2), (db_in, a_in2) = BAR_CATALOGUE[si], BAR_CATALOGUE_US[us]
        assert db_mm == pytest.approx(db_in * IN, abs=0.06)
        assert a_mm2 == pytest.approx(a_in2 * IN**2, rel=0.01)


def test_inch_pound_equations_of_chapter_22():
    u = aci.US
    fc, bw, d = 4000.0, 12.0, 20.0  # psi, in, in
    # Table 22.5.5.1(a): Vc = 2 lambda sqrt(f'c) bw d = 2 x 63.246 x 12 x 20 = 30,358 lb
    assert aci.vc_with_min_stirrups(fc, bw, d, 0.0, bw * 24, u=u) == pytest.approx(2 * math.sqrt(4000) * 240)
    # 22.5.3.1: sqrt(f'c) <= 100 psi
    assert aci.sqrt_fc(12000.0, u) == 100.0
    # 22.5.5.1.3: lambda_s = sqrt(2/(1 + d/10)) <= 1: 1 at d = 10 in, sqrt(2/5) at d = 40 in
    assert aci.size_effect_factor(10.0, u) == pytest.approx(1.0)
    assert aci.size_effect_factor(40.0, u) == pytest.approx(math.sqrt(2 / 5))
    # Table 22.5.5.1(c): 8 lambda_s lambda rho_w^(1/3) sqrt(f'c) bw d
    assert aci.vc_without_min_stirrups(fc, bw, 40.0, 0.0, 12 * 44, 0.01, u=u) == pytest.approx(
        8 * math.sqrt(2 / 5) * 0.01 ** (1 / 3) * math.sqrt(4000) * 12 * 40)
    # 22.5.5.1.1: Vc <= 5 lambda sqrt(f'c) bw d (the axial term is at most 0.05 f'c, 22.5.5.1.2)
    assert aci.vc_with_min_stirrups(fc, bw, d, 1e9, bw * 24, u=u) == pytest.approx(5 * math.sqrt(4000) * 240)
    # 22.5.1.2: Vs <= 8 sqrt(f'c) bw d
    assert aci.vs_max(fc, bw, d, u) == pytest.approx(8 * math.sqrt(4000) * 240)
    # Table 9.6.3.4: Av,min/s = max(0.75 sqrt(f'c), 50) bw/fyt: 50 governs below 4444 psi
    assert aci.av_min_over_s(fc, bw, 60000.0, u) == pytest.approx(50 * 12 / 60000)
    assert aci.av_min_over_s(6000.0, bw, 60000.0, u) == pytest.approx(0.75 * math.sqrt(6000) * 12 / 60000)
    # 9.6.3.1: Av,min where Vu > phi lambda sqrt(f'c) bw d
    assert aci.av_min_threshold(fc, bw, d, u=u) == pytest.approx(0.75 * math.sqrt(4000) * 240)
    # Table 9.6.3.1: shallow beams h <= 10 in; integral with slab h <= 24 in
    assert aci.av_min_exempt(10.0, 12.0, u=u) and not aci.av_min_exempt(10.5, 12.0, u=u)
    assert aci.av_min_exempt(24.0, 60.0, 10.0, u=u) and not aci.av_min_exempt(25.0, 60.0, 10.0, u=u)
    # Table 9.7.6.2.2: d/2 and 24 in; d/4 and 12 in where Vs > 4 sqrt(f'c) bw d
    light = 4 * math.sqrt(4000) * 12 * 60.0
    assert aci.max_spacing(light * 0.99, fc, 12.0, 60.0, u)[0] == 24.0
    assert aci.max_spacing(light * 1.01, fc, 12.0, 60.0, u)[0] == 12.0
    # 9.6.1.2: As,min/(bw d) = max(3 sqrt(f'c), 200)/fy
    assert aci.rho_w_lower_bound(fc, 60000.0, u) == pytest.approx(200 / 60000)
    # Table 22.7.4.1(a): Tth = lambda sqrt(f'c) Acp^2/pcp (no axial force)
    assert aci.torsion_threshold(fc, 288.0, 72.0, 0.0, 288.0, u=u) == pytest.approx(math.sqrt(4000) * 288**2 / 72)
    # 22.7.7.1(a): phi (Vc/(bw d) + 8 sqrt(f'c)); 9.7.6.3.3: ph/8 and 12 in
    assert aci.torsion_section_ok(0.0, 0.0, 240.0, fc, 12.0, 20.0, 100.0, 40.0, u) == 0.0
    assert aci.torsion_max_spacing(200.0, u) == 12.0 and aci.torsion_max_spacing(80.0, u) == 10.0


def test_the_two_editions_are_one_rule_in_two_units():
    """Each pair of constants agrees within the rounding the editions give them: the inch-pound
    value converted to SI against the SI value (sqrt(psi) -> sqrt(MPa): x 0.08304)."""
    root = 1 / math.sqrt(PSI_PER_MPA)  # sqrt(f'c in psi) psi = (this) sqrt(f'c in MPa) MPa: 0.0830
    si, us = aci.SI, aci.US
    pairs = {"vc_a": (si.vc_a, us.vc_a * root, 0.024),  # 0.17 vs 2 sqrt(psi) = 0.1661 sqrt(MPa): 2.3 % apart
             "vc_b": (si.vc_b, us.vc_b * root, 0.007), "vc_max": (si.vc_max, us.vc_max * root, 0.012),
             "vs_max": (si.vs_max, us.vs_max * root, 0.007), "av_min_threshold": (si.av_min_threshold,
                                                                                  us.av_min_threshold * root, 0.001),
             "av_min_sqrt": (si.av_min_sqrt, us.av_min_sqrt * root, 0.005),
             "av_min_flat": (si.av_min_flat, us.av_min_flat / PSI_PER_MPA, 0.016),
             "heavy_vs": (si.heavy_vs, us.heavy_vs * root, 0.007), "tth": (si.tth, us.tth * root, 0.001),
             "sqrt_fc_max": (si.sqrt_fc_max, us.sqrt_fc_max / math.sqrt(PSI_PER_MPA), 0.001),
             "size_effect": (si.size_effect, us.size_effect / IN, 0.016),
             "s_max_light": (si.s_max_light, us.s_max_light * IN, 0.017),
             "fyt_max": (si.fyt_max, us.fyt_max / PSI_PER_MPA, 0.016)}
    for name, (a, b, rel) in pairs.items():
        assert a == pytest.approx(b, rel=rel), name


# --- two beams by hand in inch-pound units -----------------------------------------------------

@pytest.fixture(scope="module")
def worked(tmp_path_factory):
    """A simply supported beam and a cantilever with uniform factored loads, designed with --units us."""
    # simple beam, 24 ft between nodes, column faces 9 in from them; wu = 6 kip/ft (Table 3-23,
    # simple beam, uniform load: V(x) = w (l/2 - x))
    simple = us_beam("S", 24.0)
    # cantilever, 8 ft from the node, fixed at a column face 9 in from it, free at the tip; wu =
    # 5 kip/ft (Table 3-23, cantilever, uniform load: V(x) = w (l - x) from the fixed end)
    canti = us_beam("C", 8.0, h_in=20.0, d_in=17.5, support_j="free", face_j_in=0.0)
    forces = us_rows("S", 24.0, lambda x: 6.0 * (12.0 - x)) + us_rows("C", 8.0, lambda x: 5.0 * (8.0 - x))
    return design(tmp_path_factory.mktemp("worked"), [simple, canti], forces, extra=["--units", "us"])


def test_simple_beam_by_hand_with_the_inch_pound_equations(worked):
    assert worked.code == cli.EXIT_OK
    r = worked.members.set_index("member").loc["S"]
    assert r.status == "designed" and (r.crit_i, r.crit_j) == ("d", "d")
    # 9.4.3.2: the critical section at d = 21.5 in from the face, x = (9 + 21.5)/12 = 2.5417 ft:
    # Vu = 6 (12 - 2.5417) = 56.75 kip at both ends
    assert r.vu_design_i_kip == pytest.approx(56.75, abs=0.01)
    assert r.vu_design_j_kip == pytest.approx(56.75, abs=0.01)
    # Table 22.5.5.1(a): Vc = 2 sqrt(4000) x 12 x 21.5 = 32,634 lb; phi Vc = 24.48 kip (21.2.1)
    assert r.phi_vc_kip == pytest.approx(24.48, abs=0.01)
    # 22.5.1.2: phi (Vc + 8 sqrt(f'c) bw d) = 0.75 (32.63 + 130.54) = 122.38 kip
    assert r.phi_vn_limit_kip == pytest.approx(122.38, abs=0.01)
    # 22.5.8.5.3: Av/s = (Vu/phi - Vc)/(fyt d) = (75,667 - 32,634)/(60,000 x 21.5) = 0.03336 in^2/in
    st = at(worked.stations, "S", 21.5)
    assert st.av_s_req == pytest.approx((56750 / 0.75 - 2 * math.sqrt(4000) * 12 * 21.5) / (60000 * 21.5), rel=1e-4)
    assert st.av_s_req == pytest.approx(0.03336, abs=5e-5)
    # Table 9.6.3.4: Av,min/s = max(0.75 sqrt(4000), 50) x 12/60,000 = 0.0100 in^2/in
    assert st.av_min_s == pytest.approx(0.0100)
    # Table 9.7.6.2.2: Vs = 43.0 kip <= 4 sqrt(f'c) bw d = 65.3 kip, so s_max = min(d/2, 24) = 10.75 in
    assert st.s_max_in == pytest.approx(10.75)
    z = worked.zones[worked.zones.member == "S"].sort_values("zone")
    # a #3 stirrup with 2 legs, Av = 0.22 in^2: s = 0.22/0.03336 = 6.59 in, 6 in on the 1 in module;
    # the middle takes s_max on the module, 10 in; the first stirrup 2 in from the face
    assert set(z.bar) == {"#3"} and set(z.legs) == {2}
    assert z.spacing_in.iloc[0] == 6.0 and z.start_in.iloc[0] == 2.0
    assert z.spacing_in.max() == 10.0
    assert (z.spacing_in.dropna() == z.spacing_in.dropna().round()).all()  # whole inches
    assert list(worked.zones.columns) == ["member", "zone", "start_in", "end_in", "bar", "legs", "spacing_in", "count",
                                          "kind", "legs_vb"]


def test_cantilever_by_hand_with_the_inch_pound_equations(worked):
    r = worked.members.set_index("member").loc["C"]
    assert r.status == "designed" and (r.crit_i, r.crit_j) == ("d", "free")
    # critical section at d = 17.5 in from the column face: x = (9 + 17.5)/12 = 2.2083 ft,
    # Vu = 5 (8 - 2.2083) = 28.96 kip; none at the free end
    assert r.vu_design_i_kip == pytest.approx(28.96, abs=0.01)
    assert r.vu_design_j_kip == pytest.approx(0.0, abs=1e-6)
    # Vc = 2 sqrt(4000) x 12 x 17.5 = 26,563 lb, phi Vc = 19.92 kip
    assert r.phi_vc_kip == pytest.approx(19.92, abs=0.01)
    st = at(worked.stations, "C", 17.5)
    # Av/s = (28,958/0.75 - 26,563)/(60,000 x 17.5) = 0.01148 in^2/in, above Av,min/s = 0.0100
    vc = 2 * math.sqrt(4000) * 12 * 17.5
    assert st.av_s_req == pytest.approx((5000 * (8 - 26.5 / 12) / 0.75 - vc) / (60000 * 17.5), rel=1e-4)
    assert st.av_s_req == pytest.approx(0.01148, abs=5e-5)
    # #3 x 2 legs: s = 0.22/0.01148 = 19.2 in, so s_max = min(17.5/2, 24) = 8.75 in governs: 8 in
    z = worked.zones[worked.zones.member == "C"].sort_values("zone")
    assert z.spacing_in.iloc[0] == 8.0 and z.start_in.iloc[0] == 2.0  # from the fixed face


def test_stirrup_cut_length_and_weight_by_hand_in_inches():
    # Tables 25.3.2, 25.3.3 (inch-pound): a #3 closed stirrup with 135-degree hooks: D = 4 db =
    # 1.5 in, extension max(6 db, 3 in) = 3 in. 12 x 24 in with 1.5 in clear cover: A = 9, B = 21;
    # centreline a = 8.625, c = 20.625, r = D/2 + db/2 = 0.9375; cut = 2a + 2c - 8r + 3 pi r + 2 x 3
    (shape,) = detailing.stirrup_set(12.0, 24.0, 1.5, "#3", 2, closed=True, u=aci.US)
    r = 0.9375
    hand = 2 * 8.625 + 2 * 20.625 - 8 * r + 3 * math.pi * r + 6.0
    assert (shape.A, shape.B, shape.hook, shape.bend_diameter) == (9.0, 21.0, 3.0, 1.5)
    assert shape.cut_length == pytest.approx(hand)  # 65.84 in
    # weight: 65.84 in x 0.11 in^2 x 490/1728 lb/in^3 = 2.05 lb
    assert detailing.set_mass([shape], aci.US) == pytest.approx(hand * 0.11 * 490 / 1728)
    # a #6 hook at 90 degrees extends 12 db (Table 25.3.2, No. 6 to No. 8) and bends on 6 db
    assert detailing.hook_extension(0.75, 90, aci.US) == 9.0 and detailing.bend_diameter(0.75, aci.US) == 4.5


# --- one model in both systems -------------------------------------------------------------------

@pytest.fixture(scope="module")
def both(tmp_path_factory):
    """One beam in SI, and its copy converted by the tool to inch-pound names, each designed in its
    own system. fyt = 400 MPa (58,015 psi) stays under both editions' caps."""
    tmp = tmp_path_factory.mktemp("both")
    members = [dict(member="B", kind="beam", length_m=8.0, b_mm=300.0, h_mm=600.0, d_mm=540.0, fc_mpa=30.0,
                    fyt_mpa=400.0, support_i="column", support_j="column", face_i_mm=250.0, face_j_mm=250.0)]
    forces = [dict(member="B", case="U", x_m=x, V_kN=400.0 * (4.0 - x) / 4.0) for x in np.linspace(0, 8, 9)]
    si = design(tmp / "si", members, forces)
    folder = tmp / "si" / "in"
    units.convert_csv(folder / "members.csv", tmp / "us-in" / "members.csv", units.US)
    units.convert_csv(folder / "forces.csv", tmp / "us-in" / "forces.csv", "us")  # by name, as design(units="us")
    us_members = pd.read_csv(tmp / "us-in" / "members.csv").to_dict("records")
    us_forces = pd.read_csv(tmp / "us-in" / "forces.csv").to_dict("records")
    us = design(tmp / "us", us_members, us_forces, extra=["--units", "us"])
    return si, us, us_members


def test_converted_inputs_carry_inch_pound_names(both):
    _, _, m = both
    assert {"length_ft", "b_in", "h_in", "d_in", "fc_psi", "fyt_psi", "face_i_in"} <= set(m[0])
    assert m[0]["b_in"] == pytest.approx(300 / IN) and m[0]["fc_psi"] == pytest.approx(30 * PSI_PER_MPA)


def test_si_and_inch_pound_agree_in_av_s_within_the_editions_constants(both):
    """Required Av/s where strength governs: (Vu/phi - Vc)/(fyt d). The physical Vu, fyt and d are
    the same in both runs, so the two differ exactly by the difference of the two editions' Vc of
    Table 22.5.5.1(a): 0.17 sqrt(f'c [MPa]) against 2 sqrt(f'c [psi]) = 0.1661 sqrt(f'c [MPa]), the
    inch-pound Vc 2.3 % lower (not the 0.4 % one might guess), so the inch-pound Av/s is higher by
    (0.17 - 0.16607) sqrt(30) x 300 x 540/(400 x 540) = 0.0161 mm^2/mm (about 1.2 % of the Av/s here)."""
    si, us, _ = both
    assert si.code == us.code == cli.EXIT_OK
    a = si.stations[si.stations.member == "B"].assign(at=lambda t: t.x_mm.round(1))
    b = us.stations[us.stations.member == "B"].assign(at=lambda t: (t.x_in * IN).round(1))
    common = a.merge(b, on=["at", "side"], suffixes=("_si", "_us"))  # the input stations and the sections at d
    common = common[(common.av_s_req_si > common.av_min_s_si) & (common.av_s_req_us * IN > common.av_min_s_us * IN)]
    assert len(common) >= 4
    vc_si = 0.17 * math.sqrt(30.0) * 300 * 540  # N
    vc_us = 2 * math.sqrt(30.0 * PSI_PER_MPA) * (300 / IN) * (540 / IN) * 4.4482216152605  # lb -> N
    expected = (vc_si - vc_us) / (400.0 * 540.0)
    assert expected == pytest.approx(0.0161, abs=1e-4)
    np.testing.assert_allclose(common.av_s_req_us * IN - common.av_s_req_si, expected, rtol=1e-6, atol=1e-9)
    # the design shears are the same forces, in kip and kN
    r_si, r_us = si.members.iloc[0], us.members.iloc[0]
    assert r_us.vu_design_i_kip * 4.4482216152605 == pytest.approx(r_si.vu_design_i_kN, abs=0.025)  # to 0.01 kip


def test_member_table_is_the_same_contract_with_inch_pound_suffixes(both):
    from postproc import engine

    si, us, _ = both
    assert list(si.members.columns) == engine.MEMBER_COLUMNS
    assert list(us.members.columns) == [units.US.col(c) for c in engine.MEMBER_COLUMNS]
    assert "stirrup_weight_lb" in us.members.columns and "vu_design_i_kip" in us.members.columns
    assert set(us.zones.bar) <= set(BAR_CATALOGUE_US)


# --- reading either spelling ------------------------------------------------------------------------

def test_either_spelling_of_each_column_is_read_and_converted(run_design):
    """The same beam given in SI names, in inch-pound names with f'c in ksi, and mixed, designs the
    same in an inch-pound run (the station grid aside, the tables agree to their rounding)."""
    L = 24.0
    shear = lambda x: 6.0 * (12.0 - x)  # noqa: E731
    us = us_beam("S", L)
    ksi = {**{k: v for k, v in us.items() if k != "fc_psi"}, "fc_ksi": 4.0}
    si = dict(member="S", kind="beam", length_m=L * 0.3048, b_mm=12 * IN, h_mm=24 * IN, d_mm=21.5 * IN,
              fc_mpa=4000 / PSI_PER_MPA, fyt_mpa=60000 / PSI_PER_MPA, support_i="column", support_j="column",
              face_i_mm=9 * IN, face_j_mm=9 * IN, load_face="top")
    si_forces = [dict(member="S", case="U", x_m=r["x_ft"] * 0.3048, V_kN=r["V_kip"] * 4.4482216152605)
                 for r in us_rows("S", L, shear)]
    runs = [run_design([us], us_rows("S", L, shear), extra=["--units", "us"]),
            run_design([ksi], us_rows("S", L, shear), extra=["--units", "us"]),
            run_design([si], si_forces, extra=["--units", "us"])]
    for d in runs:
        assert d.code == cli.EXIT_OK
        r = d.members.iloc[0]
        assert r.vu_design_i_kip == pytest.approx(56.75, abs=0.01) and r.phi_vc_kip == pytest.approx(24.48, abs=0.01)
    assert runs[0].zones.equals(runs[1].zones) and runs[0].zones.equals(runs[2].zones)


def test_an_si_run_of_an_inch_pound_table_converts_it_and_says_so(run_design):
    from postproc.store import Store

    d = run_design([us_beam("S", 24.0)], us_rows("S", 24.0, lambda x: 6.0 * (12.0 - x)))
    assert d.code == cli.EXIT_OK and "vu_design_i_kN" in d.members  # an SI run: SI tables
    assert d.members.iloc[0].vu_design_i_kN == pytest.approx(56.75 * 4.4482216152605, abs=0.01)
    warnings = Store(d.store).latest().manifest()["warnings"]
    assert any("inch-pound units (length_ft, b_in, h_in, fc_psi)" in w and "--units us" in w for w in warnings)
    assert any(w.startswith("forces.csv is in inch-pound units (x_ft, V_kip)") for w in warnings)  # the forces too


def test_both_spellings_of_one_quantity_is_an_error_naming_the_column(run_design, capsys):
    row = {**us_beam("S", 24.0), "b_mm": 300.0}
    d = run_design([row], us_rows("S", 24.0, lambda x: 6.0 * (12.0 - x)), extra=["--units", "us"])
    err = capsys.readouterr().err
    assert d.code == cli.EXIT_INPUT
    assert "members.csv" in err and "line 1" in err and "b_in" in err and "b_mm" in err and "one unit" in err


def test_inch_pound_limits_in_validation(run_design, capsys):
    # Table 19.2.1.1 of the inch-pound edition: f'c at least 2500 psi
    d = run_design([us_beam("S", 24.0, fc_psi=2400.0)], us_rows("S", 24.0, lambda x: 1.0), extra=["--units", "us"])
    assert d.code == cli.EXIT_INPUT and "2,500 psi" in capsys.readouterr().err


def test_settings_take_either_spelling_and_refuse_both(tmp_path):
    from postproc.adapters.errors import InputError
    from postproc.settings import load_settings

    good = tmp_path / "good.toml"
    good.write_text('units = "us"\n[detailing]\nmin_spacing_mm = 76.2\nladder = [["#4", 2]]\n')
    s = load_settings(good)
    assert s.units == "us" and s.detailing.min_spacing_in == pytest.approx(3.0) and s.detailing.min_spacing == 3.0
    with pytest.raises(InputError, match="#10, #13, #16, #19"):  # --units si overrides the file: #4 is not an SI bar
        load_settings(good, "si")
    bad = tmp_path / "bad.toml"
    bad.write_text('units = "us"\n[detailing]\nmin_spacing_mm = 75\nmin_spacing_in = 3\n')
    with pytest.raises(InputError, match="min_spacing_mm.*min_spacing_in"):
        load_settings(bad)
    metric = tmp_path / "metric-bars.toml"
    metric.write_text('units = "us"\n[detailing]\nladder = [["#10", 2]]\n')
    with pytest.raises(InputError, match="#3, #4, #5, #6"):
        load_settings(metric)
    assert Settings.defaults("us").detailing.ladder[0] == ("#3", 2)


def test_input_fill_in_either_spelling_is_converted_to_the_runs_unit(run_design, tmp_path):
    """[input] fill names a column in either spelling; its value is in the unit that name
    carries and fills the run's unit: 4.4482216152605 kN (1 kip) of N filled in an
    inch-pound run designs as N = 1 kip written out, and 1 kip filled in an SI run as
    4.4482216152605 kN written out."""
    from postproc.settings import validated_settings

    s = validated_settings({"units": "us", "input": {"fill": {"N_kN": 4.4482216152605}}}, tmp_path / "s.toml")
    assert s.input.fill == {"N_kip": 1.0}
    with pytest.raises(Exception, match="both 'N_kN' and 'N_kip'"):
        validated_settings({"input": {"fill": {"N_kN": 1.0, "N_kip": 1.0}}}, tmp_path / "s.toml")
    shear = lambda x: 6.0 * (12.0 - x)  # noqa: E731
    given = [{**r, "N_kip": 1.0} for r in us_rows("S", 24.0, shear)]
    blank = [{**r, "N_kip": (None if k == 2 else 1.0)} for k, r in enumerate(us_rows("S", 24.0, shear))]
    cfg = tmp_path / "fill-si-name.toml"
    cfg.write_text('[input]\nfill = { N_kN = 4.4482216152605 }\n')
    a = run_design([us_beam("S", 24.0)], given, extra=["--units", "us"])
    b = run_design([us_beam("S", 24.0)], blank, extra=["--units", "us", "--config", str(cfg)])
    assert a.code == b.code == cli.EXIT_OK
    assert a.members.equals(b.members) and a.zones.equals(b.zones)
    kn = 4.4482216152605
    si_rows = [dict(member="S", case="U", x_m=r["x_ft"] * 0.3048, V_kN=r["V_kip"] * kn) for r in us_rows("S", 24.0, shear)]
    si_given = [{**r, "N_kN": kn} for r in si_rows]
    si_blank = [{**r, "N_kN": (None if k == 2 else kn)} for k, r in enumerate(si_rows)]
    cfg_us = tmp_path / "fill-us-name.toml"
    cfg_us.write_text('[input]\nfill = { N_kip = 1.0 }\n')
    si_beam = dict(member="S", kind="beam", length_m=24 * 0.3048, b_mm=300.0, h_mm=600.0, d_mm=540.0, fc_mpa=28.0,
                   fyt_mpa=420.0, support_i="column", support_j="column", face_i_mm=230.0, face_j_mm=230.0)
    c = run_design([si_beam], si_given)
    d = run_design([si_beam], si_blank, extra=["--config", str(cfg_us)])
    assert c.code == d.code == cli.EXIT_OK
    assert c.members.equals(d.members) and c.zones.equals(d.zones)


# --- the demo in both systems ----------------------------------------------------------------------

@pytest.fixture(scope="module")
def demo_us(tmp_path_factory):
    """`shearpost demo --units us`: the demo tables converted by the tool, designed in inch-pound."""
    from postproc.store import Store

    tmp = tmp_path_factory.mktemp("demo-us")
    code = cli.main(["demo", "--units", "us", "--store", str(tmp / "store"), "--out", str(tmp / "out"), "--json"])
    members = pd.read_csv(tmp / "out" / "members.csv", keep_default_na=False, na_values=[""])
    return code, members, pd.read_csv(tmp / "out" / "zones.csv"), tmp, Store(tmp / "store").latest()


def test_every_demo_member_designs_in_both_systems(demo_designed, demo_us):
    code, us, zones, tmp, _ = demo_us
    si = demo_designed.members
    assert code == demo_designed.code == cli.EXIT_OK
    both = si.set_index("member").status.to_frame("si").join(us.set_index("member").status.rename("us"))
    assert len(both) == len(si) == len(us)
    assert (both.si == both.us).all(), both[both.si != both.us]  # the same status member by member
    assert (both.us == "designed").sum() > 200
    # the tables a detailer gets: inch columns, #3 to #5 bars, spacings in whole inches, the first
    # stirrup 2 in from the face (common practice)
    from postproc import engine

    assert list(us.columns) == engine.member_columns(units.US)
    assert list(zones.columns) == engine.zone_columns(units.US)
    assert set(zones.bar.dropna()) - {""} <= {"#3", "#4", "#5"}
    spacing = zones.spacing_in.dropna()
    assert (spacing == spacing.round()).all() and spacing.min() >= 3.0
    # (beams; a column's first tie is at half its spacing from the face below, 25.7.2.4.1)
    beams = pd.read_csv(cli.sample_folder() / "members.csv").query("kind == 'beam'").member
    assert (zones[zones.member.isin(beams)].groupby("member").start_in.min() == 2.0).mean() > 0.9


def test_demo_inputs_were_converted_by_the_tool(demo_us):
    _, _, _, tmp, run = demo_us
    folder = tmp / "out" / "inputs-us"
    m = pd.read_csv(folder / "members.csv")
    f = pd.read_csv(folder / "forces.csv", nrows=5)
    assert {"length_ft", "b_in", "h_in", "fc_psi", "fyt_psi", "face_i_in"} <= set(m.columns)
    assert {"x_ft", "V_kip", "N_kip", "T_kipft", "M_kipft"} <= set(f.columns)
    assert set(m.fyt_psi) == {60000.0}  # Grade 420 bars are Grade 60 (ASTM A615/A615M)
    sample = pd.read_csv(cli.sample_folder() / "members.csv")
    assert m.b_in.to_numpy() == pytest.approx(sample.b_mm.to_numpy() / IN)
    man = run.manifest()
    assert man["unit_system"] == "us" and man["code_edition"] == "ACI 318-19 (inch-pound)"
    assert man["inputs"]["members"]["path"].endswith("members.csv") and "inputs-us" in man["inputs"]["members"]["path"]


def test_demo_outputs_speak_inch_pound(demo_us, capsys):
    _, _, _, tmp, run = demo_us
    html = (tmp / "out" / "report.html").read_text(encoding="utf-8")
    assert "shear (kip)" in html and "stirrup weight lb" in html and "(in)" in html
    for si_word in (" kN", " kg", " mm", "MPa", "shear (kN)"):
        assert si_word not in html
    assert cli.main(["explain", "L2-SB-23", "--store", str(tmp / "store")]) == cli.EXIT_OK
    text = capsys.readouterr().out
    assert "psi" in text and "kip" in text and "8 sqrt(f'c)" in text and "MPa" not in text and " mm" not in text
    # the SI inputs converted read as a US engineer writes them: d = 540 mm / 25.4 = 21.26 in, not 21.2598 in
    assert "d = 21.26 in" in text and "21.2598" not in text
    assert cli.main(["govern", "--top", "3", "--format", "csv", "--store", str(tmp / "store")]) == cli.EXIT_OK
    header = capsys.readouterr().out.splitlines()[0].split(",")
    assert "vu_design_i_kip" in header and "stirrup_weight_lb" in header
    assert cli.main(["runs", "--json", "--store", str(tmp / "store")]) == cli.EXIT_OK
    assert '"unit_system": "us"' in capsys.readouterr().out
    out = tmp / "sched"
    assert cli.main(["schedule", "--out", str(out), "--store", str(tmp / "store"), "--json"]) == cli.EXIT_OK
    capsys.readouterr()
    bars = pd.read_csv(out / "schedule_bars.csv")
    assert {"A_in", "B_in", "hook_in", "cut_length_in", "unit_weight_lb", "weight_lb"} <= set(bars.columns)
    transverse = bars[~bars["shape"].str.contains("tie, end region|web bars")]  # not the straight STM bars
    assert transverse.hook_in.min() == 3.0  # Table 25.3.2: 6 db and at least 3 in for #3 to #5
    marks = pd.read_csv(out / "schedule_marks.csv", dtype=str)  # the demo's SI sections converted: 500 mm = 19.685 in
    assert marks.b_in.str.fullmatch(r"\d+(\.\d{1,3})?").all() and marks.fc_psi.str.fullmatch(r"\d+(\.\d{1,3})?").all()


def test_inch_pound_engine_equals_the_brute_force_design(demo_us):
    """A sample of demo beams, designed one by one in inch-pound units by the per-member reference
    (every combination listed), against the engine's inch-pound design."""
    from postproc import reference
    from postproc.settings import settings_from_dict

    _, _, _, _, run = demo_us
    settings = settings_from_dict(run.manifest()["settings"])
    assert settings.units == "us"
    names = ["L2-SB-23", "L1-GX-B4a5", "L2-GY-4BC", "L3-GX-B34", "L5-GY-4BC", "R-GX-B23"]  # outside the moment frames
    members = run.members().to_pandas().set_index("member", drop=False)
    assert all(reference.covers(members.loc[m]) for m in names)
    equal_to_reference(run, names, settings)


def test_compare_between_systems_compares_in_one(tmp_path, capsys):
    """An SI run and an inch-pound run of one beam in one store: compare converts run A into run B's
    system and says so; each layout is shown in its own units."""
    from postproc import govern
    from postproc.store import Store

    members = [dict(member="B", kind="beam", length_m=8.0, b_mm=300.0, h_mm=600.0, d_mm=540.0, fc_mpa=30.0,
                    fyt_mpa=400.0, support_i="column", support_j="column", face_i_mm=250.0, face_j_mm=250.0)]
    forces = [dict(member="B", case="U", x_m=x, V_kN=400.0 * (4.0 - x) / 4.0) for x in np.linspace(0, 8, 9)]
    metric = design(tmp_path, members, forces, extra=["--run", "metric"])
    store = metric.store  # the same SI tables, read into an inch-pound run of the same store
    code = cli.main(["run", "--members", str(tmp_path / "in" / "members.csv"), "--forces",
                     str(tmp_path / "in" / "forces.csv"), "--units", "us", "--store", str(store),
                     "--run", "imperial", "--out", str(tmp_path / "o2"), "--json"])
    capsys.readouterr()
    assert code == metric.code == cli.EXIT_OK
    s = Store(store)
    diff = govern.compare(s.run("metric"), s.run("imperial"))
    assert diff.units == units.US and "run metric is in SI" in diff.note
    assert "run metric is in SI" in cli_compare(store, capsys)
    doc = diff.as_dict()
    assert doc["units"] == "us" and "stirrup_weight_change_lb" in doc
    # the totals are in the comparison's units: run B's lb, and run A's kg converted (1 kg = 2.20462 lb)
    us_members = pd.read_csv(tmp_path / "o2" / "members.csv")
    assert diff.units.mass == "lb" and diff.stirrup_mass_b == pytest.approx(us_members.stirrup_weight_lb.sum())
    assert diff.stirrup_mass_a == pytest.approx(metric.members.stirrup_mass_kg.sum() / 0.45359237, rel=1e-3)
    assert not diff.status_changes.size and not diff.demand_changes.size  # the same Vu, in kip
    (lay,) = diff.layout_changes.to_dict("records")
    assert lay["layout_a"].endswith("(spacings in mm)") and lay["layout_b"].endswith("(spacings in in)")
    assert "#10x2" in lay["layout_a"] and "#3x2" in lay["layout_b"]
    assert "stirrup_weight_change_lb" in diff.layout_changes.columns


def cli_compare(store, capsys) -> str:
    assert cli.main(["compare", "metric", "imperial", "--store", str(store)]) == cli.EXIT_OK
    return capsys.readouterr().out


# --- flexure, Chapter 18 and strut-and-tie in inch-pound units ------------------------------------

def test_beam_flexural_strength_by_hand_in_inches():
    from postproc import sections

    # 12 x 24 in, d = 21.5 in, As = 3.0 in^2, f'c = 4000 psi, fy = 60 ksi (22.2): a = As fy/(0.85 f'c b)
    # = 4.412 in; c = a/0.85 = 5.19 in (beta1 = 0.85 at 4000 psi, Table 22.2.2.4.3); steel strain
    # 0.003 (21.5 - 5.19)/5.19 = 0.0094 > fy/Es = 0.00207 (Es = 29,000 ksi): yields;
    # Mn = As fy (d - a/2) = 3 x 60 x (21.5 - 2.206) = 3473 kip*in
    s = sections.beam_end_strengths(12.0, 24.0, 21.5, 0.0, 3.0, 4000.0, 60000.0, db_bot=1.0, u=aci.US)
    a = 3.0 * 60000 / (0.85 * 4000 * 12)
    assert float(s.mn_pos[0]) == pytest.approx(3.0 * 60000 * (21.5 - a / 2), rel=1e-6)
    assert float(s.phi_pos[0]) == pytest.approx(0.90)  # tension-controlled (Table 21.2.2)
    assert sections.beta1(4000.0, aci.US) == 0.85 and sections.beta1(5000.0, aci.US) == pytest.approx(0.80)
    assert sections.beta1(8000.0, aci.US) == 0.65


def test_chapter_18_inch_pound_forms():
    u = aci.US
    # Eq. 18.7.5.3: so = 4 + (14 - hx)/3 in, between 4 and 6 in
    assert aci.smf_column_so(30.0, 1.0, 8.0, u=u) == pytest.approx(6.0)
    assert aci.smf_column_so(30.0, 1.0, 11.0, u=u) == pytest.approx(5.0)
    assert aci.smf_column_so(30.0, 1.0, 14.0, u=u) == pytest.approx(4.0)
    # Eq. 18.7.5.4a: kf = f'c/25,000 + 0.6 >= 1.0
    assert aci.confinement_kf(5000.0, u) == 1.0 and aci.confinement_kf(15000.0, u) == pytest.approx(1.2)
    # 18.6.4.4: d/4, 6 in and 6 db; 18.6.2.1: bw >= 10 in; 18.7.5.1: lo >= 18 in
    assert aci.smf_beam_hoop_spacing(30.0, 1.128, u=u) == pytest.approx(6.0)
    # 18.6.2.1(b): bw at least the lesser of 0.3h and 10 in (h = 40 in: 10 in governs)
    assert aci.smf_beam_dimensions_ok(200.0, 20.0, 10.0, 40.0, u) and not aci.smf_beam_dimensions_ok(200.0, 20.0, 9.9,
                                                                                                       40.0, u)
    assert aci.smf_column_lo(16.0, 60.0, u) == 18.0
    # Table 18.8.4.3 (inch-pound, from memory): 20, 15, 12, 8 lambda sqrt(f'c) Aj
    assert aci.joint_strength_coefficient(True, True, True, u) == 20.0
    assert aci.joint_strength_coefficient(False, False, False, u) == 8.0
    # 25.7.2.2: #4 ties around #11 bars (1.41 in), #3 around #10 (1.27 in)
    assert not aci.tie_bar_ok(1.41, 0.375, u=u) and aci.tie_bar_ok(1.27, 0.375, u=u)


def test_published_transfer_girder_in_its_own_inch_pound_units():
    """The deep transfer girder of tests/test_stm.py (PCA Notes on ACI 318; 20 x 60 in, 176 in on
    16 in columns, f'c = 4000 psi, fy = 60 ksi), designed here in inches and pounds with the
    inch-pound edition: the published strut 603 kip, tie 512 kip, strut length 94.3 in, tie 160 in,
    fce = 2550 psi and phi Vn = 512.3 kip (9.9.2.1: 0.75 x 10 sqrt(4000) x 20 x 54)."""
    from postproc import stm

    ln = 176.0 - 2 * 16
    m = stm.DeepMembers(member=np.array(["TG"], object), clear_span=np.array([ln]), h=np.array([60.0]),
                        bw=np.array([20.0]), d=np.array([55.0]), fc=np.array([4000.0]), fy=np.array([60000.0]),
                        fyt=np.array([60000.0]), bearing_i=np.array([16.0]), bearing_j=np.array([16.0]),
                        support_i=np.array(["column"], object), support_j=np.array(["column"], object),
                        top_strut_depth=np.array([10.0]), point_width=np.array([16.0]), tie_bar=np.array(["#8"], object))
    self_weight = 150 * 60 * 176 * 20 / 1728 / 1000  # kip
    pu = (1.2 * (self_weight + 180) + 1.6 * 250) * 1000  # lb, lumped at midspan as published
    loads = stm.DeepLoads(combinations=("U",), point_member=np.array([0]), point_x=np.array([ln / 2]),
                          point_load=np.array([[pu]]), udl=np.zeros((1, 1)))
    r = stm.design(m, loads, stm.StmOptions.for_units("us"))
    s = r.struts[r.struts.element == "fan strut R_i-T1"].iloc[0]
    assert math.hypot(s.x2_in - s.x1_in, s.y2_in - s.y1_in) == pytest.approx(94.3, rel=1e-3)
    assert s.force_kip == pytest.approx(603.0, rel=0.01) and s.fce_psi == pytest.approx(2550.0)
    tie = r.ties[r.ties.element == "bottom tie R_i-B1"].iloc[0]
    assert tie.force_kip == pytest.approx(512.0, rel=0.01)
    nodes = r.nodes.set_index("node")
    assert nodes.x_in["R_j"] - nodes.x_in["R_i"] == pytest.approx(160.0)
    from postproc.codes import aci318_19_stm as code

    assert float(code.deep_beam_shear_limit(4000.0, 20.0, 54.0, aci.US)) / 1000 == pytest.approx(512.3, abs=0.05)
    # Table 25.4.3.2 and 25.4.3.1 (inch-pound): ldh of a #8 hook, f'c = 4000 psi:
    # 60,000 x 1.6 x 1.25 x (4000/15,000 + 0.6)/(55 x 63.25) x 1.0^1.5 = 29.9 in
    assert float(code.hooked_development_length(60000.0, 4000.0, 1.0, u=aci.US)) == pytest.approx(
        60000 * 1.6 * 1.25 * (4000 / 15000 + 0.6) / (55 * math.sqrt(4000)))


def test_element_export_chained_into_an_inch_pound_run(tmp_path, capsys, monkeypatch):
    """The element-force export of tests/test_elements.py (PyNite, N and N*mm, elements drawn both
    ways) read through --map into an inch-pound run, with the map's columns spelt in SI and in
    inch-pound names, designs as the member rows of the same frame do in an inch-pound run."""
    from tests import fea_meshed as fm
    from tests.test_elements import MAPS, REVERSED, run

    separate, meshed = fm.separate(REVERSED), fm.meshed()
    forces, members = fm.element_rows(separate), fm.members_table()
    us_map = MAPS["chain-reversed"].replace(
        'columns = { case = "lc", V_kN = "fy", N_kN = "fx", T_kNm = "mx", M_kNm = "mz" }',
        'columns = { case = "lc", V_kip = "fy", N_kip = "fx", T_kipft = "mx", M_kipft = "mz" }').replace(
        'units = { V_kN = "N", N_kN = "N", T_kNm = "N*mm", M_kNm = "N*mm" }',
        'units = { V_kip = "N", N_kip = "N", T_kipft = "N*mm", M_kipft = "N*mm" }').replace(
        'reversed_flip = ["V_kN"]', 'reversed_flip = ["V_kip"]')
    assert "V_kip" in us_map and "V_kN" not in us_map
    original = cli.main
    monkeypatch.setattr(cli, "main", lambda argv: original([*argv, "--units", "us"]))  # test_elements.run's argv
    results = []
    for k, map_text in enumerate((MAPS["chain-reversed"], us_map, None)):
        rows = fm.member_rows(meshed) if map_text is None else forces
        files = {} if map_text is None else {"chain.csv": fm.chain_table()}
        results.append(run(tmp_path / f"r{k}", rows, members, map_text, files, capsys))
    for other in results[1:]:
        a, b = results[0], other
        pd.testing.assert_frame_equal(a["zones"], b["zones"])
        assert (a["members"].status == b["members"].status).all()
        np.testing.assert_allclose(a["members"].vu_design_i_kip, b["members"].vu_design_i_kip, atol=0.011)
    assert "vu_design_i_kip" in results[0]["members"] and (results[0]["members"].status == "designed").any()


def test_a_mapping_file_names_our_columns_in_inch_pound_spelling(tmp_path, capsys):
    """An export in lbf and inches read through --map under inch-pound names (units by pint)."""
    folder = tmp_path / "in"
    folder.mkdir()
    pd.DataFrame([us_beam("S", 24.0)]).to_csv(folder / "members.csv", index=False)
    rows = us_rows("S", 24.0, lambda x: 6.0 * (12.0 - x))
    pd.DataFrame({"elem": [r["member"] for r in rows], "lc": "U", "pos": [r["x_ft"] * 12 for r in rows],
                  "shear": [r["V_kip"] * 1000 for r in rows]}).to_csv(folder / "export.csv", index=False)
    (folder / "map.toml").write_text('[forces]\ncolumns = { member = "elem", case = "lc", x_ft = "pos", V_kip = "shear" }\n'
                                     'units = { x_ft = "in", V_kip = "lbf" }\n')
    code = cli.main(["run", "--units", "us", "--members", str(folder / "members.csv"), "--forces",
                     str(folder / "export.csv"), "--map", str(folder / "map.toml"), "--store", str(tmp_path / "s"),
                     "--out", str(tmp_path / "out"), "--json", "--no-report"])
    capsys.readouterr()
    assert code == cli.EXIT_OK
    r = pd.read_csv(tmp_path / "out" / "members.csv").iloc[0]
    assert r.vu_design_i_kip == pytest.approx(56.75, abs=0.01)  # as in the worked simple beam above


def test_demo_frame_beams_and_joints_in_inch_pound(demo_us, capsys):
    """The demo's special moment frames designed with the inch-pound edition: hoops within 2 in of
    each face (18.6.4.4) at no more than 6 in (18.6.4.4: d/4, 6 db, 6 in), joints with the
    inch-pound coefficients of Table 18.8.4.3 (20, 15, 12 or 8, from memory), and the
    Chapter 18 step of explain in inch-pound units."""
    _, members, zones, tmp, run = demo_us
    hoops = zones[zones.kind == "hoop"]
    assert len(hoops) and hoops.spacing_in.max() <= 6.0
    frame = pd.read_csv(cli.sample_folder() / "members.csv").query("frame == 'special' and kind == 'beam'").member
    firsts = zones[zones.member.isin(frame)].groupby("member").start_in.min()
    assert (firsts <= 2.0).all()
    joints = pd.read_csv(tmp / "out" / "joints.csv")
    assert {"vu_kip", "phi_vn_kip", "aj_in2"} <= set(joints.columns) and set(joints.coefficient) <= {20.0, 15.0, 12.0, 8.0}
    assert cli.main(["explain", frame.iloc[0], "--store", str(tmp / "store")]) == cli.EXIT_OK
    text = capsys.readouterr().out
    assert "Moment frame: special" in text and "kip*ft" in text and "6 in" in text and " mm" not in text


def test_a_grade_given_in_the_other_systems_unit_is_that_grade():
    """The grade rows of Chapter 18 (18.6.3.1: rho at most 0.025 for Grade 420 | 60, 0.02 above) and
    psi_g of Table 25.4.2.5 (1.0 to Grade 420 | 60, 1.15 for Grade 550 | 80, 1.3 for Grade 690 | 100)
    take a soft-converted grade as that grade: 420 MPa x 145.04 = 60,916 psi is Grade 60 (an SI
    members.csv run in inch-pound units had its Grade 420 bars under the Grade 80 rows), 80,000 psi =
    551.6 MPa is Grade 550, 100,000 psi = 689.5 MPa is Grade 690."""
    from postproc.codes import aci318_19_stm as stm_code

    psi = units.factor("fy_mpa", "fy_psi")
    assert float(aci.smf_beam_rho_max(420.0 * psi, aci.US)) == 0.025
    assert float(aci.smf_beam_rho_max(550.0 * psi, aci.US)) == 0.02
    assert float(aci.smf_beam_rho_max(60_000.0 / psi, aci.SI)) == 0.025
    assert float(aci.smf_beam_rho_max(80_000.0 / psi, aci.SI)) == 0.02
    assert [float(stm_code.grade_factor(f * psi, aci.US)) for f in (280.0, 420.0, 550.0, 690.0)] == [1.0, 1.0, 1.15, 1.3]
    assert [float(stm_code.grade_factor(f / psi, aci.SI)) for f in (40e3, 60e3, 80e3, 100e3)] == [1.0, 1.0, 1.15, 1.3]
