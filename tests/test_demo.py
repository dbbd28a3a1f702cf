"""The demo building: every member accounted for, and one member checked by hand."""

import math

import pandas as pd
import pytest

from postproc import cli

SAMPLE = cli.sample_folder()


@pytest.fixture(scope="module")
def demo(demo_designed):
    d = demo_designed
    return d.code, pd.read_csv(d.out / "members.csv").set_index("member"), pd.read_csv(d.out / "zones.csv")


def test_every_member_appears_with_a_status(demo):
    code, out, _ = demo
    given = pd.read_csv(SAMPLE / "members.csv")
    assert code == 0
    assert sorted(out.index) == sorted(given.member)
    kinds = given.set_index("member").kind
    assert (out.status[kinds == "column"] == "designed").all()  # every column of the demo
    assert (out.status[kinds == "beam"].isin(["designed", "deep-beam"])).all()
    assert not (out.status == "not-covered").any()
    # plant post 0.45 m from the column face, and the cut-off column 1.75 m from the face of the transfer
    # girder's bearing: within 2h (9.9.1.1(b)), end regions by strut-and-tie, the rest sectionally
    for name in ("R-GX-B23", "L1-TG-B34a"):
        assert (out.status[name], out.method[name]) == ("designed", "strut-and-tie+sectional")
        assert out.tie_as_req_mm2[name] > 0 and "each face" in out.web_bars[name]


def test_secondary_beam_by_hand(demo):
    _, out, zones = demo
    f = pd.read_csv(SAMPLE / "forces.csv")
    f = f[f.member == "L2-SB-23"]
    # hand calculation, ACI 318-19, from the two end values of each case (uniform load: linear V)
    L, face, b, d, fc = 8.4, 0.2, 300.0, 540.0, 35.0
    end = lambda case, x: f[(f.case == case) & (f.x_m == x)].V_kN.iloc[0]
    w = {c: (end(c, 0.0) - end(c, L)) / L for c in ("D", "L")}
    v_face = {c: end(c, L) + w[c] * face for c in ("D", "L")}  # at the face of end j
    vu = abs(1.2 * v_face["D"] + 1.6 * v_face["L"])  # Table 5.3.1(b); girder ends: face governs (9.4.3.2(a))
    row = out.loc["L2-SB-23"]
    assert (row.crit_i, row.crit_j) == ("face", "face")
    assert row.vu_design_j_kN == pytest.approx(vu, abs=0.5)
    vc = 0.17 * math.sqrt(fc) * b * d / 1e3  # Table 22.5.5.1(a), axial force negligible here
    assert row.phi_vc_kN == pytest.approx(0.75 * vc, abs=0.5)
    av_s = (vu / 0.75 - vc) * 1e3 / (420 * d)  # 22.5.8.5.3
    s_strength = 2 * 71 / av_s  # #10, two legs
    s_max = min(d / 2, 600)  # Table 9.7.6.2.2, Vs below 0.33 sqrt(f'c) bw d
    s = math.floor(min(s_strength, s_max) / 25) * 25  # common practice: 25 mm module
    z = zones[zones.member == "L2-SB-23"]
    assert len(z) == 1 and z.spacing_mm.iloc[0] == s == 250
    # set-out (common practice): first stirrup 50 mm from face i, then every s; the last one leaves at most s
    # (and at least 50 mm) to face j
    n = math.floor((8000 - 2 * 50) / s) + 1
    assert 50 <= 8000 - (50 + (n - 1) * s) <= s
    assert (z["count"].iloc[0], z.start_mm.iloc[0], z.end_mm.iloc[0]) == (n, 50, 50 + (n - 1) * s)


def test_perimeter_columns_get_confinement_zones(demo):
    # the columns on grid lines A, D, 1 and 5 are special-frame columns (18.7): hoops throughout, at most so over
    # lo from each joint face (18.7.5.1, 18.7.5.3) and at most min(6 db, 150 mm) beyond (18.7.5.5)
    _, out, zones = demo
    given = pd.read_csv(SAMPLE / "members.csv").set_index("member")
    cols = given[given.kind == "column"]
    special = cols[cols.frame == "special"]
    assert len(special) and all(g[0] in "AD" or g[1:] in ("1", "5") for g in special.index.str.split("-").str[-1])
    for name, m in special.iterrows():
        row = out.loc[name]
        clear = m.length_m * 1e3 - m.face_i_mm - m.face_j_mm
        lo = max(m.b_mm, m.h_mm, clear / 6, 450.0)  # 18.7.5.1
        assert row.lo_mm == pytest.approx(lo, abs=0.5)
        z = zones[zones.member == name].sort_values("zone")
        assert set(z.kind) == {"hoop"}
        assert z.end_mm.iloc[0] >= min(lo, clear / 2) - 1e-6 and z.start_mm.iloc[-1] <= max(clear - lo, clear / 2)
        assert z.spacing_mm.dropna().max() <= min(6 * m.db_long_mm, 150.0) + 1e-6
        assert row.ve_v_kN > 0 and row.ve_vb_kN > 0 and "18.7.6.1.1" in row.message
    interior = cols[cols.frame == "none"].index
    assert set(zones[zones.member.isin(interior)].kind) == {"tie"}
    assert out.loc[interior, "ve_v_kN"].isna().all()


def test_zones_csv_gives_legs_as_whole_numbers(demo_designed):
    """A detailer reads "3 legs", not "3.0": legs_vb (a column's legs parallel to b) is written
    as a whole number, and left empty in a beam's zones (it has none)."""
    text = pd.read_csv(demo_designed.out / "zones.csv", dtype=str, keep_default_na=False)
    given = pd.read_csv(SAMPLE / "members.csv").set_index("member").kind
    kind = given.reindex(text.member).to_numpy()
    assert text.legs_vb[kind == "column"].str.fullmatch(r"[0-9]+").all()
    assert (text.legs_vb[kind == "beam"] == "").all()
    assert text.legs.str.fullmatch(r"[0-9]+").all()


def test_a_frame_columns_trace_draws_vc_zero_over_lo_in_both_directions(demo_designed):
    # P1-C-A1 (special frame, Vc = 0 over lo for both directions, 18.7.6.2.1): each diagram's phi*Vc is that of
    # its own direction's largest Vu, zero within lo; before, Vb's was taken from V's governing Ve case
    st = demo_designed.stations
    c = st[st.member == "P1-C-A1"]
    message = pd.read_csv(demo_designed.out / "members.csv").set_index("member").message["P1-C-A1"]
    assert "Vc = 0 over lo (18.7.6.2.1)" in message
    zero = c[c.vc_zero]
    assert len(zero) > 10 and (zero.phi_vc_kN == 0).all() and (zero.phi_vc_vb_kN == 0).all()
    assert (c[~c.vc_zero].phi_vc_vb_kN > 0).all()


def test_a_designed_column_names_its_method_and_a_frame_columns_design_shear_is_ve(demo):
    """The demo's columns are designed sectionally (Chapters 10 and 22): members.csv says so, as
    for beams. A special-frame column's design shear is Ve (18.7.6.1): vu_design_* is Ve there,
    not the smaller shear of the combinations."""
    _, out, _ = demo
    given = pd.read_csv(SAMPLE / "members.csv").set_index("member")
    columns = out[given.kind.reindex(out.index) == "column"]
    assert (columns.method == "sectional").all()
    special = columns[given.frame.reindex(columns.index) == "special"]
    assert len(special) and (special.vu_design_i_kN >= special.ve_v_kN - 0.01).all()
    assert (special.vb_design_i_kN >= special.ve_vb_kN - 0.01).all()


def test_explain_says_where_vs_is_capped_by_the_section_limit(demo_designed, capsys):
    """P1-C-A1's hoops give Av fyt d/s above 0.66 sqrt(f'c) bw d: explain shows both and the cap
    (22.5.1.2), not the capped Vs alone."""
    capsys.readouterr()
    assert cli.main(["explain", "P1-C-A1", "--store", str(demo_designed.store)]) == 0
    said = " ".join(capsys.readouterr().out.split())
    assert "capped at 0.66 sqrt(f'c) bw d" in said and "(22.5.1.2)" in said
