"""Design on real analysis output: stations a hair apart, equal rows at a node, steep
slopes, cantilever tips, the governing combination, torsion, and the whole design against
a brute-force enumeration of every combination (postproc.reference).

Hand calculations follow ACI 318-19; each check names its clause."""

import json
import math

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, given, settings, strategies as hs

from postproc import cli, explain, reference
from postproc.settings import Settings, settings_from_dict
from postproc.store import Store
from tests.conftest import equal_to_reference, write_inputs

BEAM = dict(b_mm=300.0, h_mm=600.0, d_mm=540.0, fc_mpa=30.0, fyt_mpa=420.0, face_i_mm=0.0, face_j_mm=0.0)


def member(name, length_m, si, sj, **kw):
    return {"member": name, "length_m": length_m, "support_i": si, "support_j": sj, **BEAM, **kw}


def rows(name, case, pts, N=0.0, T=0.0):
    return [dict(member=name, case=case, x_m=x, V_kN=v, N_kN=N, T_kNm=T) for x, v in pts]


# --- stations -------------------------------------------------------------------------------


def test_a_point_load_exported_a_hair_apart_is_a_concentrated_load(run_design):
    # cantilever fixed at i (9.9.1.1 does not apply to it), 2.5 m, uniform 40 kN/m and a 150 kN
    # load 0.3 m from the fixed face, within d = 540 mm. The export gives the load as two rows
    # 0.1 mm apart (element sums); within the 1 mm station tolerance they are one station.
    L, w, P, a = 2.5, 40.0, 150.0, 0.3
    V = lambda x: w * (L - x) + (P if x < a else 0.0)  # shear from the free end (common statics)
    pts = [(x, V(x)) for x in (0.0, 0.1, 0.2)] + [(a, V(a - 1e-9)), (a + 0.0001, V(a + 1e-9))] + \
          [(x, V(x)) for x in (0.6, 1.0, 1.5, 2.0, 2.5)]
    res = run_design([member("K1", L, "column", "free")], rows("K1", "U1", pts))
    row = res.members.set_index("member").loc["K1"]
    # 9.4.3.2(c): a concentrated load between the face and d: the critical section is at the face
    assert (row.status, row.crit_i) == ("designed", "face")
    assert row.vu_design_i_kN == pytest.approx(V(0.0), abs=0.01)  # 100 + 150 = 250 kN, not V(d) = 78.4 kN


def test_equal_rows_at_a_node_are_a_zero_jump(run_design):
    # what chaining two elements gives at their common node: the same row twice
    pts = [(x, 100.0 - 40.0 * x) for x in (0.0, 1.0, 2.0, 3.0, 4.0, 5.0)]
    doubled = pts[:3] + [pts[2]] + pts[3:]
    a = run_design([member("B1", 5.0, "column", "column")], rows("B1", "U1", pts))
    b = run_design([member("B1", 5.0, "column", "column")], rows("B1", "U1", doubled))
    assert a.code == b.code == 0
    pd.testing.assert_frame_equal(a.members, b.members)
    pd.testing.assert_frame_equal(a.zones, b.zones)


def test_a_third_row_within_the_tolerance_is_refused(run_design, tmp_path):
    pts = [(0.0, 50.0), (2.0, 10.0), (2.0004, -10.0), (2.0008, -12.0), (4.0, -50.0)]
    res = run_design([member("B1", 4.0, "column", "column")], rows("B1", "U1", pts))
    assert res.code == 1


def test_a_steep_slope_is_warned_about_with_member_and_station(run_design):
    # a 200 kN drop over 5 mm (40,000 kN/m), beyond the 1 mm tolerance: a spread concentrated load
    pts = [(0.0, 120.0), (2.0, 100.0), (2.005, -100.0), (4.0, -120.0)]
    res = run_design([member("B1", 4.0, "column", "column")], rows("B1", "U1", pts), extra=["--no-report"])
    man = Store(res.store).runs()[0]
    warnings = (man.design_path / "manifest.json").read_text()
    assert "member B1, case U1: V changes by 200.0 kN" in warnings and "x = 2.0000 m" in warnings


# --- forces that are not what they seem: each member's message says so ---------------------------


def _manifest_warnings(res) -> str:
    return (Store(res.store).runs()[0].design_path / "manifest.json").read_text()


def test_a_member_without_rows_of_a_case_says_so_and_takes_it_as_zero(run_design):
    # B2 has no rows of L: 1.2D + 1.6L becomes 1.2D, so 1.4D governs (Table 5.3.1 (a)). At the
    # critical section d = 540 mm from the face (9.4.3.2): V_D = 80 (1 - 0.54/3) = 65.6 kN,
    # V_L = 32.8 kN; B2: Vu = 1.4 x 65.6 = 91.84 kN; B1: 1.2 x 65.6 + 1.6 x 32.8 = 131.2 kN
    members = [member("B1", 6.0, "column", "column"), member("B2", 6.0, "column", "column")]
    forces = (rows("B1", "D", [(0.0, 80.0), (3.0, 0.0), (6.0, -80.0)]) + rows("B1", "L", [(0.0, 40.0), (3.0, 0.0), (6.0, -40.0)])
              + rows("B2", "D", [(0.0, 80.0), (3.0, 0.0), (6.0, -80.0)]))
    res = run_design(members, forces, [dict(case="D", type="D"), dict(case="L", type="L")], extra=["--no-report"])
    m = res.members.set_index("member")
    assert m.status["B2"] == "designed" and "no rows for case(s) L; taken as zero" in m.message["B2"]
    assert m.vu_design_i_kN["B2"] == pytest.approx(1.4 * 65.6, abs=0.01)
    assert m.vu_design_i_kN["B1"] == pytest.approx(1.2 * 65.6 + 1.6 * 32.8, abs=0.01)
    assert "no rows" not in str(m.message["B1"])
    assert "member B2: no rows for case(s) L; taken as zero" in _manifest_warnings(res)


def test_a_table_given_twice_with_other_values_is_not_taken_silently(run_design):
    # B1's rows given twice, the second time 1.5 times larger (two exports joined): read as a jump at
    # every station, which no load gives; B2 has one real concentrated load and no such note
    first = [(0.0, 100.0), (1.5, 50.0), (3.0, 0.0), (4.5, -50.0), (6.0, -100.0)]
    again = [(x, 1.5 * v) for x, v in first]
    point = [(0.0, 90.0), (3.0, 60.0), (3.0, -60.0), (6.0, -90.0)]
    res = run_design([member("B1", 6.0, "column", "column"), member("B2", 6.0, "column", "column")],
                     rows("B1", "U1", first) + rows("B1", "U1", again) + rows("B2", "U1", point), extra=["--no-report"])
    m = res.members.set_index("member")
    assert "two rows at every station in case(s) U1" in m.message["B1"]
    assert "two rows" not in str(m.message["B2"])
    assert "member B1: two rows at every station" in _manifest_warnings(res)


def test_forces_that_stop_short_of_the_clear_span_are_not_designed(run_design):
    """Rows of a member that end at 4 m of its 6 m: past them the shear is not known (holding the
    last value would put the midspan shear at the support). Not designed: invalid, saying so, no
    zones; the run needs action (exit 12)."""
    res = run_design([member("B1", 6.0, "column", "column"), member("B2", 6.0, "column", "column")],
                     rows("B1", "U1", [(0.0, 100.0), (2.0, 50.0), (4.0, 0.0)])
                     + rows("B2", "U1", [(0.0, 100.0), (3.0, 0.0), (6.0, -100.0)]), extra=["--no-report"])
    m = res.members.set_index("member")
    assert res.code == 12
    assert m.status["B1"] == "invalid" and m.status["B2"] == "designed"
    assert "forces cover only part of the clear span x = 0.000 to 6.000 m (case(s) U1: x = 0.000 to 4.000 m)" \
        in m.message["B1"]
    assert set(res.zones.member) == {"B2"}


def test_one_case_that_stops_short_is_enough_to_leave_the_member_undesigned(run_design):
    """Case L of B1 given over half the member, D over all of it: the L shear near end j would
    be the midspan value held, less than the real one. Not designed, naming the case."""
    d = rows("B1", "D", [(0.0, 60.0), (3.0, 0.0), (6.0, -60.0)])
    live = rows("B1", "L", [(0.0, 40.0), (3.0, 0.0)])
    res = run_design([member("B1", 6.0, "column", "column")], d + live, cases=[dict(case="D", type="D"), dict(case="L", type="L")],
                     extra=["--no-report"])
    m = res.members.set_index("member")
    assert m.status["B1"] == "invalid" and "case(s) L: x = 0.000 to 3.000 m" in m.message["B1"]
    assert "D" not in m.message["B1"].split("(")[1].split(":")[0]


def test_a_face_offset_beyond_a_quarter_of_a_beams_length_is_warned_about(run_design):
    # 5000 mm for 500 mm (a typo) on an 8.4 m beam: the clear span falls to 3.4 m; said, not refused
    res = run_design([member("B1", 8.4, "column", "column", face_i_mm=5000.0), member("B2", 8.4, "column", "column",
                                                                                      face_i_mm=500.0)],
                     rows("B1", "U1", [(0.0, 100.0), (8.4, -100.0)]) + rows("B2", "U1", [(0.0, 100.0), (8.4, -100.0)]),
                     extra=["--no-report"])
    warnings = _manifest_warnings(res)
    assert res.code == 0 and "member B1: face_i_mm = 5,000 mm is more than a quarter of its length" in warnings
    assert "member B2: face_i_mm" not in warnings


@pytest.mark.parametrize("header, suggestion", [("T_kNM", "T_kNm"), ("Vb_kn", "Vb_kN"), ("V_b_kN", "Vb_kN"),
                                                ("Tu_kNm", "T_kNm"), ("T_kNmm", "T_kNm"), ("N", "N_kN")])
def test_a_misspelt_force_column_is_refused_not_read_as_absent(tmp_path, capsys, header, suggestion):
    # read as absent, a torsion, Vb or N column would count as none (unconservative): refused, naming file,
    # line and column, and the column meant (in another unit: map its unit)
    forces = pd.DataFrame(rows("B1", "U1", [(0.0, 100.0), (6.0, -100.0)], T=20.0))
    forces = forces.drop(columns=[suggestion], errors="ignore").assign(**{header: 5.0})
    paths = write_inputs(tmp_path / "in", [member("B1", 6.0, "column", "column")], [dict(x=1)])
    forces.to_csv(paths["forces"], index=False)
    out, store = tmp_path / "out", tmp_path / "store"
    code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]),
                     "--store", str(store), "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 1 and not out.exists()
    assert "forces.csv, line 1, column" in err and f"'{header}'" in err and f"column '{suggestion}'" in err
    assert ("another unit" in err) == (header in ("T_kNmm", "N"))


def test_other_quantities_and_columns_whose_absence_is_safe_are_warned_about_not_refused(run_design):
    # My_kNm, Mz_kNm: moments about other axes (M is not used), not a misspelt M_kNm; Group (a capital G) looks
    # like group, whose absence only leaves the frame to each row: the run goes on, the warnings say what each
    # looks like (face_i for face_i_mm is refused: tests/test_bad_input.py)
    res = run_design([member("B1", 6.0, "column", "column", Group="G1")],
                     [dict(r, My_kNm=1.0, Mz_kNm=2.0) for r in rows("B1", "U1", [(0.0, 100.0), (6.0, -100.0)])],
                     extra=["--no-report"])
    warnings = _manifest_warnings(res)
    assert res.code == 0
    assert "column(s) not used: 'My_kNm', 'Mz_kNm'" in warnings and "did you mean" not in warnings.split("forces.csv")[-1]
    assert "column 'Group' is not used" in warnings and "'group'" in warnings


def test_a_column_shearpost_does_not_read_is_named_in_a_warning(run_design):
    res = run_design([member("B1", 6.0, "column", "column", comment="check")],
                     [dict(r, element=7) for r in rows("B1", "U1", [(0.0, 100.0), (6.0, -100.0)])], extra=["--no-report"])
    warnings = _manifest_warnings(res)
    assert res.code == 0
    assert "column(s) not used: 'comment'" in warnings and "column(s) not used: 'element'" in warnings


# --- cantilever tip --------------------------------------------------------------------------


def test_the_gap_to_a_free_end_is_held_to_the_spacing_allowed_there(run_design):
    # cantilever 2.9 m, a 60 kN load at the tip: Vu = 60 kN up to the tip, above the Av,min
    # threshold phi 0.083 sqrt(30) 300 x 540 = 55.2 kN (9.6.3.1), so stirrups are required at the
    # tip and s <= d/2 = 270 mm (Table 9.7.6.2.2) there, the gap to the free end included
    L = 2.9
    pts = [(x, 60.0) for x in np.linspace(0.0, L, 11)]
    res = run_design([member("K1", L, "column", "free")], rows("K1", "U1", pts))
    pos = pq.read_table(Store(res.store).runs()[0].design_path / "stirrups.parquet").to_pandas()
    x = np.sort(pos.x_mm.to_numpy())
    assert 0.6 * 0.75 * 0.083 * math.sqrt(30) * 300 * 540 / 1e3 < 60.0 / 0.75  # threshold below Vu, as said
    assert L * 1000 - x[-1] <= 270.0 and np.diff(x).max() <= 270.0
    st = res.stations[res.stations.member == "K1"]
    tip = st[st.x_mm >= x[-1]]
    # the trace tells the gap in force at the tip stations: the larger of the gap to the tip and the last gap
    assert (tip.spacing_mm == max(L * 1000 - x[-1], np.diff(x)[-1])).all()


# --- governing combination ---------------------------------------------------------------------


def test_the_reported_combination_is_the_one_behind_the_utilization(run_design):
    # 6 m beam on columns; D and L small, E large: Vu at d from the face stays under phi*Vc
    # everywhere but over the Av,min threshold, so Av,min governs the steel in every combination
    # (they all tie on the steel). The utilization Vu/phi*Vn of the layout is largest for
    # 1.2D + 1.0E + 1.0L (Table 5.3.1(e)), which must be the one reported, with its Vu.
    L = 6.0
    shear = lambda v0: [(x, v0 * (1 - 2 * x / L)) for x in np.linspace(0, L, 13)]
    forces = rows("B1", "D", shear(30.0)) + rows("B1", "L", shear(10.0)) + rows("B1", "E", shear(45.0))
    cases = [{"case": "D", "type": "D"}, {"case": "L", "type": "L"}, {"case": "E", "type": "E"}]
    res = run_design([member("B1", L, "column", "column")], forces, cases)
    row = res.members.set_index("member").loc["B1"]
    assert row.status == "designed" and row.governing_case == "5.3.1e 1.2D+1.0E+1.0L"
    x = row.x_governing_mm
    vu = (1.2 * 30 + 1.0 * 10 + 45.0) * abs(1 - 2 * max(x, 540.0) / (L * 1000))  # at d from the face (9.4.3.2)
    assert row.vu_kN == pytest.approx(vu, abs=0.05)
    st = res.stations[(res.stations.member == "B1")]
    worst = st.loc[st.utilization.idxmax()]
    assert worst.governing_case == row.governing_case and row.utilization == pytest.approx(worst.utilization, abs=1e-3)
    assert row.vc_equation == "22.5.5.1(a)"  # Av >= Av,min provided, no tension steel given


# --- torsion -------------------------------------------------------------------------------


def test_torsion_combined_minimum_and_al_by_hand(run_design):
    # 300 x 600 beam, d = 540, f'c = 30 MPa, fyt = fy = 420 MPa, 40 mm clear cover to #10 closed
    # stirrups; factored torque Tu = 30 kN*m along the span, no shear.
    Tu = 30e6
    Acp, pcp = 300 * 600, 2 * (300 + 600)
    tth = 0.083 * math.sqrt(30) * Acp**2 / pcp  # Table 22.7.4.1(a), Nu = 0
    assert Tu > 0.75 * tth  # torsion considered (22.7.1.1)
    x1, y1 = 300 - 80 - 9.5, 600 - 80 - 9.5  # centreline of the #10 stirrup (R22.7.6.1)
    Aoh, ph = x1 * y1, 2 * (x1 + y1)
    at_s = Tu / (0.75 * 2 * 0.85 * Aoh * 420)  # 22.7.6.1(a), Ao = 0.85 Aoh, theta = 45 deg
    combined_min = max(0.062 * math.sqrt(30), 0.35) * 300 / 420  # 9.6.4.2
    assert 2 * at_s > combined_min  # strength governs: Av + 2At = 2 At/s here
    s = math.floor(min(71 / at_s, ph / 8, 300, 540 / 2) / 25) * 25  # per leg; 9.7.6.3.3; Table 9.7.6.2.2
    assert s == 125  # (the old rule, max(Av, Av,min) + 2At, gave 100)
    al = at_s * ph * 420 / 420  # 22.7.6.1(b)
    al_min = 0.42 * math.sqrt(30) * Acp / 420 - max(at_s, 0.175 * 300 / 420) * ph * 420 / 420  # 9.6.4.3
    pts = [(x, 0.0) for x in np.linspace(0.0, 6.0, 13)]
    res = run_design([member("T1", 6.0, "column", "column")], rows("T1", "U1", pts, T=30.0))
    row = res.members.set_index("member").loc["T1"]
    z = res.zones[res.zones.member == "T1"]
    assert row.status == "designed" and set(z.bar) == {"#10"} and z.spacing_mm.max() == s
    assert row.al_torsion_mm2 == pytest.approx(max(al, al_min), abs=1.0)
    assert "Al" in row.message and "22.7.6.1" in row.message
    out = res.out.parent / "schedule"
    assert cli.main(["schedule", "--store", str(res.store), "--out", str(out)]) == 0
    sched = pd.read_csv(out / "schedule_members.csv").set_index("member")
    assert sched.al_torsion_mm2["T1"] == pytest.approx(max(al, al_min), abs=1.0)  # the schedule carries Al too


def test_a_torsion_failure_cites_22_7_7_1_and_its_remedy(run_design):
    pts = [(x, 0.0) for x in np.linspace(0.0, 6.0, 13)]
    res = run_design([member("T1", 6.0, "column", "column")], rows("T1", "U1", pts, T=150.0))
    row = res.members.set_index("member").loc["T1"]
    assert row.status == "resize" and "22.7.7.1" in row.message and "22.5.1.2" not in row.message
    assert "enlarge the section" in row.message


# --- the demo -----------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def demo(demo_designed):
    assert demo_designed.code == 0
    return Store(demo_designed.store).latest()


def test_zones_describe_the_stored_stirrups_on_every_demo_member(demo):
    zones = pq.read_table(demo.design_path / "zones.parquet").to_pandas()
    pos = pq.read_table(demo.design_path / "stirrups.parquet").to_pandas()
    res = pq.read_table(demo.design_path / "members.parquet").to_pandas().set_index("member")
    designed = res.index[res.status == "designed"]
    assert len(designed) > 200
    for name in designed:
        x = np.sort(pos.x_mm[pos.member == name].to_numpy())
        z = zones[zones.member == name].sort_values("zone")
        assert len(x) == z["count"].sum() == res.stirrups_total[name]
        assert (np.diff(x) >= 75 - 0.05).all()  # never under the practical minimum (common practice: 75 mm)
        for zone in z[z["count"] > 0].itertuples():
            inside = x[(x >= zone.start_mm - 0.05) & (x <= zone.end_mm + 0.05)]
            assert len(inside) == zone.count and inside[0] == zone.start_mm and inside[-1] == zone.end_mm
            if zone.count > 1:
                assert np.allclose(np.diff(inside), zone.spacing_mm, atol=0.11)  # fits: count-1 spacings


def test_explain_names_the_combinations_loads_and_vc_equation(demo):
    settings = settings_from_dict(demo.manifest()["settings"])
    text = "\n".join(line for s in explain.explain(demo, "L1-TG-B34a", settings) for line in [s.title, *s.lines])
    assert "each variable load may be absent (5.3.2)" in text and "5.3.1e 1.2D+1.0Ex+1.0L" in text
    assert "Concentrated loads" in text and "a jump of" in text  # the transfer girder's cut-off column
    assert "22.5.5.1(" in text and "Governing combination" in text


def test_demo_members_equal_the_brute_force_design(demo):
    """A sample of demo beams (interior girders with torsion, the transfer girder, beams with
    earthquake combinations) designed one by one over all 50 combinations listed one by one
    (loads absent, both signs of W and E): identical statuses, layouts, utilization and a
    governing combination among those that tie. (All 130 beams outside the special moment
    frames agree; the bench checks more. The frame beams have their own brute-force check in
    tests/test_frames.py.)"""
    settings = settings_from_dict(demo.manifest()["settings"])
    names = ["L1-TG-B34a", "L2-GY-2BC", "L2-GY-4BC", "L3-GX-B34", "L2-SB-23", "R-GX-B23", "L5-GY-4BC", "L1-GX-B12"]
    members = demo.members().to_pandas().set_index("member", drop=False)
    assert all(reference.covers(members.loc[m]) for m in names)
    assert not reference.covers(members.loc["L2-GY-1BC"])  # a perimeter girder: a special-frame beam, not covered
    equal_to_reference(demo, names, settings)


# --- random frames with basic load cases, patterns and both signs of lateral loads ---------------------

CASE_POOL = [("D", "D", ""), ("L1", "L", "p"), ("L2", "L", "p"), ("Lb", "L", ""), ("W", "W", ""), ("E", "E", ""),
             ("Lr", "Lr", "")]


@hs.composite
def typed_frames(draw):
    n = draw(hs.integers(1, 3))
    used = [CASE_POOL[0]] + [c for c in CASE_POOL[1:] if draw(hs.booleans())]
    members, forces = [], []
    for k in range(n):
        L = draw(hs.sampled_from([3.0, 5.0, 7.5]))
        free = draw(hs.sampled_from(["none", "none", "j"]))
        members.append(member(f"M{k}", L, "column", "free" if free == "j" else draw(hs.sampled_from(["column", "girder"])),
                              face_i_mm=draw(hs.sampled_from([0.0, 200.0])), face_j_mm=0.0))
        for case, _, _ in used:
            v0 = draw(hs.floats(-250.0, 250.0))
            slope = draw(hs.floats(-80.0, 80.0))
            N = draw(hs.sampled_from([0.0, 0.0, draw(hs.floats(-300.0, 300.0))]))
            T = draw(hs.sampled_from([0.0, 0.0, draw(hs.floats(-25.0, 25.0))]))
            forces += rows(f"M{k}", case, [(x, v0 + slope * x) for x in np.linspace(0, L, 6)], N, T)
    cases = [{"case": c, "type": t, "pattern": p} for c, t, p in used]
    return members, forces, cases


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(frame=typed_frames())
def test_random_frames_equal_the_brute_force_design(frame, tmp_path_factory):
    members, forces, cases = frame
    from tests.conftest import design

    res = design(tmp_path_factory.mktemp("f"), members, forces, cases, extra=["--no-report"])
    assert res.code in (0, 3)
    run = Store(res.store).latest()
    equal_to_reference(run, [m["member"] for m in members], Settings())


def _girder(swap_at_3: bool, upward: bool = False):
    """A 6 m girder: 20 kN/m and a 120 kN load at 3 m (upward: a hanger pulling up), rows every
    metre, the two rows at 3 m left then right, or swapped. V = 120 ... statics by hand."""
    p = -120.0 if upward else 120.0
    r = 60.0 + p / 2  # each reaction: half the distributed load and half the point load
    pts = [(x, r - 20.0 * x) for x in (0.0, 1.0, 2.0)] + [(3.0, r - 60.0), (3.0, r - 60.0 - p)] \
        + [(x, r - 20.0 * x - p) for x in (4.0, 5.0, 6.0)]
    if swap_at_3:
        pts[3], pts[4] = pts[4], pts[3]
    return pts


def test_the_rows_of_a_jump_given_in_the_wrong_order_are_warned_about_by_line(run_design):
    """The rows of a concentrated load's station in the file's order give V left, then right;
    a file sorted by value or shuffled swaps them, and the load is read the other way (an
    upward load, here). Said among the warnings, naming the two lines, the member, the case
    and the station; a load given in the right order, down or up, is not."""
    swapped = run_design([member("B1", 6.0, "column", "column"), member("B2", 6.0, "column", "column")],
                         rows("B1", "U1", _girder(False)) + rows("B2", "U1", _girder(True)), extra=["--no-report"])
    said = " ".join(_manifest_warnings(swapped).split())
    assert "the two rows of a jump look swapped at 1 station(s)" in said
    assert "lines 13 and 14 (member B2, case U1, x = 3.000 m)" in said  # B1 on lines 2 to 9
    right = run_design([member("B1", 6.0, "column", "column"), member("B2", 6.0, "column", "column")],
                       rows("B1", "U1", _girder(False)) + rows("B2", "U1", _girder(False, upward=True)),
                       extra=["--no-report"])
    assert "look swapped" not in _manifest_warnings(right)


def test_basic_load_cases_without_cases_csv_are_warned_about(run_design):
    """Cases named D and L (what analysis programs call dead and live load) with no cases.csv
    are designed as already factored combinations, one at a time and unfactored: warned about,
    naming them; combinations named as combinations are not."""
    pts = [(0.0, 100.0), (3.0, 0.0), (6.0, -100.0)]
    basic = run_design([member("B1", 6.0, "column", "column")], rows("B1", "D", pts) + rows("B1", "L", pts),
                       extra=["--no-report"])
    said = " ".join(_manifest_warnings(basic).split())
    assert "2 of them are named as basic load cases (D, L)" in said and "cases.csv (--cases)" in said
    combos = run_design([member("B1", 6.0, "column", "column")], rows("B1", "1.4D", pts) + rows("B1", "1.2D+1.6L", pts),
                        extra=["--no-report"])
    assert "named as basic load cases" not in _manifest_warnings(combos)


def test_forces_in_newtons_under_a_kn_header_are_named_as_the_likely_cause(run_design, tmp_path):
    """Six 6 m beams, 300 x 600 (d = 540 mm), f'c = 30 MPa, with a uniform load's shear of 80 kN at the
    supports, given in N (80,000) under V_kN. At the critical section d from the face (9.4.3.2):
    Vu = 80,000 x (1 - 0.54/3) = 65,600 kN; the section limit phi (Vc + 0.66 sqrt(f'c) bw d) (22.5.1.2) with
    Vc = 0.17 sqrt(f'c) bw d (Table 22.5.5.1 (a), no axial force) is 0.75 x 0.83 x sqrt(30) x 300 x 540 /
    1e3 = 552.3 kN: every beam resize at 118.8 times it. One warning, first, names the likely cause
    and the --map units that convert it; given in kN the same beams draw no such warning."""
    names = [f"B{k}" for k in range(6)]
    members = [member(n, 6.0, "column", "column") for n in names]
    in_n = [r for n in names for r in rows(n, "D", [(0.0, 80_000.0), (3.0, 0.0), (6.0, -80_000.0)])]
    res = run_design(members, in_n, extra=["--no-report"])
    m = res.members.set_index("member")
    limit = 0.75 * 0.83 * math.sqrt(30) * 300 * 540 / 1e3
    assert (m.status == "resize").all()
    assert m.utilization.median() == pytest.approx(65_600 / limit, rel=1e-4)  # no cases.csv: D alone, factor 1
    warnings = json.loads(_manifest_warnings(res))["warnings"]
    assert warnings[0].startswith("100% of the 6 members designed need resizing, the median one at 118.8 times")
    assert 'in N under a kN header' in warnings[0] and 'units = { V_kN = "N", ... }' in warnings[0]
    in_kn = [dict(r, V_kN=r["V_kN"] / 1e3) for r in in_n]
    res = run_design(members, in_kn, extra=["--no-report"])
    assert (res.members.status == "designed").all()
    assert "need resizing" not in _manifest_warnings(res)
