"""Handbook beam formulas for shear, through the stationing engine and the critical-section rule.

Source of the formulas: the beam diagrams and formulas of the AISC Steel Construction
Manual, Table 3-23 "Shears, Moments and Deflections" (simple beam, uniform load;
simple beam, concentrated load at any point; cantilever, uniform load; beam fixed at
one end and supported at the other, uniform load; continuous beam of two equal
spans, uniform load). Critical sections: ACI 318-19 9.4.3.2.
"""

import numpy as np
import pytest

from tests.conftest import beam, rows_from_function

W = 50.0  # kN/m, already factored (no cases.csv)


def at(stations, member, x_mm, side=None):
    s = stations[(stations.member == member) & np.isclose(stations.x_mm, x_mm, atol=0.01)]
    if side is not None:
        s = s[s.side == side]
    assert len(s), f"no station at {x_mm} mm"
    return s.vu_max_kN.to_numpy()


def test_simple_span_uniform_load_with_critical_section_at_d(run_design):
    L, face = 8.0, 0.25
    d = 540.0  # h - cover
    V = lambda x: W * (L / 2 - x)  # Table 3-23, simple beam, uniform load: Vx = w(l/2 - x)
    res = run_design([beam("B", L, face_i_mm=250.0, face_j_mm=250.0)], rows_from_function("B", "U", L, V, n=3))
    row = res.members.iloc[0]
    assert (row.crit_i, row.crit_j) == ("d", "d")
    vd = V(face + d / 1000)
    assert row.vu_design_i_kN == pytest.approx(vd, abs=0.01)
    assert row.vu_design_j_kN == pytest.approx(vd, abs=0.01)
    st = res.stations[res.stations.member == "B"]
    x = st.x_mm.to_numpy()
    expected = np.where(x < d, vd, np.where(x > 7500 - d, vd, np.abs(V(face + x / 1000))))
    # linear between input stations: the interpolation is exact everywhere
    np.testing.assert_allclose(st.vu_max_kN, expected, atol=1e-6)
    assert np.diff(x).max() <= min(50.0, d / 8) + 1e-9  # grid: at most 50 mm and d/8 apart


def test_point_load_kept_as_jump_and_beyond_2h_stays_sectional(run_design):
    L, a, P = 9.0, 4.0, 400.0
    b = L - a
    # Table 3-23, simple beam, concentrated load at any point: R1 = Pb/l, R2 = Pa/l
    V = lambda x: P * b / L - (P if x > a else 0.0)
    res = run_design([beam("P", L)], rows_from_function("P", "U", L, V, n=5, jumps=[a]))
    row = res.members.iloc[0]
    assert row.status == "designed" and (row.crit_i, row.crit_j) == ("d", "d")
    left, right = at(res.stations, "P", a * 1000, side=0), at(res.stations, "P", a * 1000, side=1)
    assert left == pytest.approx(P * b / L) and right == pytest.approx(P * a / L)


def test_point_load_within_d_forces_face_section_and_deep_beam_status(run_design):
    L, a, P = 6.0, 0.3, 300.0
    V = lambda x: P * (L - a) / L - (P if x > a else 0.0)
    res = run_design([beam("Q", L)], rows_from_function("Q", "U", L, V, n=5, jumps=[a]))
    row = res.members.iloc[0]
    assert row.crit_i == "face"  # 9.4.3.2(c): concentrated load between the face and d
    assert row.crit_j == "d"
    assert row.vu_design_i_kN == pytest.approx(P * (L - a) / L)
    assert row.status == "deep-beam" and "9.9.1.1(b)" in row.message  # load within 2h of the face


def test_cantilever_uniform_load(run_design):
    L, face, d = 2.5, 0.25, 440.0
    V = lambda x: W * (L - x)  # Table 3-23, cantilever, uniform load: Vx = w x from the free end
    res = run_design([beam("C", L, h_mm=500.0, support_j="free", face_i_mm=250.0)],
                     rows_from_function("C", "U", L, V, n=3))
    row = res.members.iloc[0]
    assert (row.crit_i, row.crit_j) == ("d", "free")
    assert row.vu_design_i_kN == pytest.approx(V(face + d / 1000), abs=0.01)
    assert row.vu_design_j_kN == pytest.approx(0.0, abs=1e-6)
    assert row.status == "designed"


def test_propped_cantilever_uniform_load_girder_end_uses_face(run_design):
    L = 7.0
    # Table 3-23, beam fixed at one end, supported at other, uniform load: R1 = 3wl/8, R2 = 5wl/8
    V = lambda x: 3 * W * L / 8 - W * x
    res = run_design([beam("G", L, support_i="girder", face_i_mm=150.0, face_j_mm=250.0)],
                     rows_from_function("G", "U", L, V, n=3))
    row = res.members.iloc[0]
    assert (row.crit_i, row.crit_j) == ("face", "d")  # 9.4.3.2(a): a girder support is not in compression
    assert row.vu_design_i_kN == pytest.approx(V(0.15), abs=0.01)
    assert row.vu_design_j_kN == pytest.approx(abs(V(L - 0.25 - 0.54)), abs=0.01)
    assert abs(V(L)) == pytest.approx(5 * W * L / 8)


def test_two_equal_spans_uniform_load_and_hung_load(run_design):
    L = 6.0
    # Table 3-23, continuous beam, two equal spans, uniform load: R_A = 3wl/8, V_B = 5wl/8
    V = lambda x: 3 * W * L / 8 - W * x
    members = [beam("S1", L, face_i_mm=200.0, face_j_mm=200.0),
               beam("S2", L, face_i_mm=200.0, face_j_mm=200.0, load_face="bottom")]
    forces = rows_from_function("S1", "U", L, V, n=3) + rows_from_function("S2", "U", L, V, n=3)
    res = run_design(members, forces)
    s1 = res.members.set_index("member").loc["S1"]
    s2 = res.members.set_index("member").loc["S2"]
    assert s1.vu_design_j_kN == pytest.approx(abs(V(L - 0.2 - 0.54)), abs=0.01)
    assert (s2.crit_i, s2.crit_j) == ("face", "face")  # 9.4.3.2(b): loads not at the top
    assert s2.vu_design_j_kN == pytest.approx(abs(V(L - 0.2)), abs=0.01)
    assert s2.vu_design_j_kN == pytest.approx(5 * W * L / 8 - W * 0.2, abs=0.01)
