"""Section mechanics (postproc.sections) against textbook worked examples, hand calculations
by the textbook method, and the independent section library concreteproperties."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from postproc import sections as s
from tests import section_reference as ref

IN, IN2, PSI, IN_KIP = 25.4, 645.16, 0.00689476, 112_984.8  # mm, mm^2, MPa, N mm


# --- code values --------------------------------------------------------------------------

def test_beta1_table_22_2_2_4_3():
    # Table 22.2.2.4.3: 0.85 for 17 <= f'c <= 28; 0.85 - 0.05 (f'c - 28)/7 between; 0.65 from 55 MPa
    assert s.beta1([20.0, 28.0, 35.0, 42.0, 55.0, 80.0]) == pytest.approx([0.85, 0.85, 0.80, 0.75, 0.65, 0.65])


def test_phi_table_21_2_2():
    # Table 21.2.2 with eps_ty = fy/Es = 420/200000 = 0.0021 (21.2.2.1)
    eps_ty = 0.0021
    assert s.phi_axial_flexure(eps_ty, 420.0) == pytest.approx(0.65)
    assert s.phi_axial_flexure(eps_ty, 420.0, spiral=True) == pytest.approx(0.75)
    assert s.phi_axial_flexure(eps_ty + 0.003, 420.0) == pytest.approx(0.90)
    assert s.phi_axial_flexure(eps_ty + 0.0015, 420.0) == pytest.approx(0.65 + 0.25 * 0.5)
    assert s.phi_axial_flexure(eps_ty + 0.0015, 420.0, spiral=True) == pytest.approx(0.75 + 0.15 * 0.5)
    assert s.phi_axial_flexure(-0.001, 420.0) == pytest.approx(0.65)


def test_squash_load_and_pn_max():
    # 22.4.2.2: Po = 0.85 f'c (Ag - Ast) + fy Ast; Table 22.4.2.1: Pn,max = 0.80 Po (ties), 0.85 Po (spirals)
    sec = s.rectangular_column_sections(400.0, 600.0, 8, 25.0, 60.0, 30.0, 420.0, bar_area=500.0)
    po = 0.85 * 30 * (400 * 600 - 4000) + 420 * 4000
    assert s.squash_load(sec) == pytest.approx(po)
    assert s.pn_max(sec) == pytest.approx(0.80 * po)
    spiral = s.circular_column_sections(500.0, 8, 25.0, 60.0, 30.0, 420.0, bar_area=500.0, spiral=True)
    assert s.pn_max(spiral) == pytest.approx(0.85 * (0.85 * 30 * (math.pi * 250**2 - 4000) + 420 * 4000))


# --- beams: worked examples and hand calculations ----------------------------------------

def test_singly_reinforced_beam_textbook_example():
    # Nilson, Darwin & Dolan, Design of Concrete Structures, Example 3.1 (from memory):
    # b = 12 in, d = 17.5 in, four No. 9 bars (As = 4.00 in^2), f'c = 4000 psi, fy = 60 000 psi:
    # a = 4.00 x 60 / (0.85 x 4 x 12) = 5.88 in, Mn = 4.00 x 60 x (17.5 - 5.88/2) = 3494 in-kips (291 ft-kips).
    r = s.beam_end_strengths(12 * IN, 20 * IN, 17.5 * IN, 0.0, 4.00 * IN2, 4000 * PSI, 60_000 * PSI)
    assert r.mn_pos[0] == pytest.approx(3494 * IN_KIP, rel=2e-3)


def test_singly_reinforced_beam_si_example():
    # Published SI worked example (a reinforced-concrete design book to NSCP 2015, public page):
    # b = 300, d = 450, 3-25 mm bars As = 1473 mm^2, f'c = 28, fy = 414:
    # a = 1473 x 414 / (0.85 x 28 x 300) = 85.3 mm, Mn = 1473 x 414 x (450 - 42.65) = 248 kN m.
    r = s.beam_end_strengths(300.0, 500.0, 450.0, 0.0, 1473.0, 28.0, 414.0)
    assert r.mn_pos[0] / 1e6 == pytest.approx(248.0, rel=3e-3)
    # tension-controlled: c = 85.3/0.85 = 100.4, eps_t = 0.003 (450 - 100.4)/100.4 = 0.0104 > 0.00207 + 0.003
    assert r.eps_t_pos[0] == pytest.approx(0.003 * (450 - 85.39 / 0.85) / (85.39 / 0.85), rel=2e-3)
    assert r.phi_pos[0] == 0.90
    # Mpr (Chapter 2 definition: 1.25 fy, phi = 1): a = 1.25 x 85.39 = 106.7, Mpr = 1.25 As fy (d - a/2)
    a_pr = 1.25 * 1473 * 414 / (0.85 * 28 * 300)
    assert r.mpr_pos[0] == pytest.approx(1.25 * 1473 * 414 * (450 - a_pr / 2), rel=1e-6)


def test_doubly_reinforced_beam_compression_steel_below_yield():
    # Hand calculation by the textbook method for compression steel that does not yield
    # (strain compatibility, 22.2.1.2; block 22.2.2.4; the displaced concrete 0.85 f'c As' deducted):
    # b = 300, h = 600, d = 540, d' = 60, As = 3000, As' = 1000, f'c = 30 (beta1 = 0.85 - 0.05 x 2/7), fy = 420.
    # 0.85 f'c b beta1 c + As' (600 (c - d')/c - 0.85 f'c) = As fy, i.e. a c^2 + b c + k = 0 with
    b_, d, dp, As, As_c, fc, fy = 300.0, 540.0, 60.0, 3000.0, 1000.0, 30.0, 420.0
    b1 = 0.85 - 0.05 * 2 / 7
    qa, qb, qk = 0.85 * fc * b_ * b1, As_c * (600 - 0.85 * fc) - As * fy, -As_c * 600 * dp
    c = (-qb + math.sqrt(qb**2 - 4 * qa * qk)) / (2 * qa)  # 145.8 mm
    fs_c = 600 * (c - dp) / c  # 353 MPa < fy: not yielding
    assert fs_c < fy
    a = b1 * c
    mn = 0.85 * fc * b_ * a * (d - a / 2) + As_c * (fs_c - 0.85 * fc) * (d - dp)
    r = s.beam_end_strengths(b_, 600.0, d, As_c, As, fc, fy, d_prime=dp)
    assert r.mn_pos[0] == pytest.approx(mn, rel=1e-6)


def test_t_beam_block_below_the_flange():
    # Hand calculation by the textbook T-beam method (22.2; the overhangs' force, then the web's):
    # bf = 1000, hf = 100, bw = 300, d = 640, As = 6000, f'c = 25 (beta1 = 0.85), fy = 420.
    # Cf = 0.85 x 25 x (1000 - 300) x 100 = 1 487 500 N; Cw = 6000 x 420 - Cf = 1 032 500 N
    # a = Cw / (0.85 x 25 x 300) = 162.0 mm > hf; Mn = Cf (d - hf/2) + Cw (d - a/2) = 1 626 kN m
    cf = 0.85 * 25 * 700 * 100
    cw = 6000 * 420 - cf
    a = cw / (0.85 * 25 * 300)
    mn = cf * (640 - 50) + cw * (640 - a / 2)
    r = s.beam_end_strengths(300.0, 700.0, 640.0, 0.0, 6000.0, 25.0, 420.0, bf=1000.0, hf=100.0)
    assert a > 100.0
    assert r.mn_pos[0] == pytest.approx(mn, rel=1e-6)
    # with the flange in tension (top bars in tension) the flange takes no part: here no top bars
    # at all, so the hogging strength is only what the bottom bars (near the compression face) give
    assert r.mn_neg[0] < 0.05 * r.mn_pos[0]


# --- against concreteproperties ------------------------------------------------------------

def _beam_bars(b, h, d, dp, as_top, as_bot, db):
    """Three or four bars per layer across the web (y up from the bottom face)."""
    bars = []
    for area, y in ((as_top, h - dp), (as_bot, h - d)):
        n = 4 if b >= 350 else 3
        bars += [(area / n, x, y, db) for x in np.linspace(dp, b - dp, n)]
    return bars


def random_beams(seed=11, count=6):
    rng = np.random.default_rng(seed)
    for k in range(count):
        b, h = rng.uniform(250, 450), rng.uniform(450, 800)
        cover = rng.uniform(55, 75)
        fc, fy, db = rng.choice([25.0, 30.0, 40.0, 50.0]), rng.choice([420.0, 520.0]), rng.choice([20.0, 25.0])
        as_top, as_bot = rng.uniform(0.005, 0.02) * b * h, rng.uniform(0.004, 0.015) * b * h
        flanged = k % 2 == 1
        bf, hf = (b + rng.uniform(400, 1200), rng.uniform(100, 180)) if flanged else (None, None)
        yield dict(b=b, h=h, d=h - cover, dp=cover, as_top=as_top, as_bot=as_bot, fc=fc, fy=fy, db=db, bf=bf, hf=hf)


def test_beams_mn_and_mpr_against_concreteproperties():
    # Independent library (concreteproperties, RectangularStressBlock + elastic-plastic bars):
    # Mn with fy, Mpr with 1.25 fy (Chapter 2 definition of Mpr), both signs, flanged and rectangular.
    beams = list(random_beams())
    arr = {k: np.array([bm[k] if bm[k] is not None else np.nan for bm in beams]) for k in beams[0]}
    ours = s.beam_end_strengths(arr["b"], arr["h"], arr["d"], arr["as_top"], arr["as_bot"], arr["fc"], arr["fy"],
                                d_prime=arr["dp"], bf=arr["bf"], hf=arr["hf"], db_top=arr["db"], db_bot=arr["db"])
    for i, bm in enumerate(beams):
        bars = _beam_bars(bm["b"], bm["h"], bm["d"], bm["dp"], bm["as_top"], bm["as_bot"], bm["db"])
        for factor, pos, neg in ((1.0, ours.mn_pos, ours.mn_neg), (1.25, ours.mpr_pos, ours.mpr_neg)):
            section = ref.rectangle(bm["b"], bm["h"], bm["fc"], factor * bm["fy"], bars, bm["bf"], bm["hf"])
            assert pos[i] == pytest.approx(ref.ultimate_moment(section, 0.0, True), rel=2e-3), (i, factor, "pos")
            assert neg[i] == pytest.approx(ref.ultimate_moment(section, 0.0, False), rel=2e-3), (i, factor, "neg")


def _rect_bars(b, h, n_long, db, edge):
    """The perimeter layout written out bar by bar: corners, then the split of perimeter_bar_split."""
    on_b, on_h = (int(v[0]) for v in s.perimeter_bar_split(np.array([b]), np.array([h]), np.array([n_long]), np.array([edge])))
    area = math.pi * db**2 / 4
    xs = np.linspace(edge, b - edge, on_b + 2)
    ys = np.linspace(edge, h - edge, on_h + 2)[1:-1]
    bars = [(area, x, y, db) for x in xs for y in (edge, h - edge)]
    bars += [(area, x, y, db) for y in ys for x in (edge, b - edge)]
    assert len(bars) == n_long
    return bars


def random_rect_columns(seed=5, count=3):
    rng = np.random.default_rng(seed)
    for _ in range(count):
        b, h = rng.uniform(350, 600), rng.uniform(400, 800)
        yield dict(b=b, h=h, n=int(rng.choice([4, 8, 10, 12, 16])), db=float(rng.choice([20.0, 25.0, 29.0])),
                   edge=rng.uniform(55, 70), fc=float(rng.choice([28.0, 35.0, 45.0])), fy=420.0)


def test_rectangular_columns_against_concreteproperties():
    # P-M by strain compatibility against the independent library, both principal directions,
    # from axial tension to high compression; Mpr (1.25 fy, phi = 1) at two of the loads.
    for col in random_rect_columns():
        bars = _rect_bars(col["b"], col["h"], col["n"], col["db"], col["edge"])
        for factor in (1.0, 1.25):
            section = ref.rectangle(col["b"], col["h"], col["fc"], factor * col["fy"], bars)
            for direction, theta in (("h", 0.0), ("b", math.pi / 2)):
                ours = s.rectangular_column_sections(col["b"], col["h"], col["n"], col["db"], col["edge"],
                                                     col["fc"], col["fy"], direction=direction)
                po = s.squash_load(ours)[0]
                loads = (-0.2 * col["fy"] * ours.steel_area[0], 0.0, 0.2 * po, 0.5 * po) if factor == 1.0 else (0.1 * po, 0.4 * po)
                strength = s.nominal_moment if factor == 1.0 else s.probable_moment
                mine = strength(ours.take(np.zeros(len(loads), int)), np.array(loads)).moment
                for P, m in zip(loads, mine):
                    theirs = abs(getattr(section.ultimate_bending_capacity(theta=theta, n=P), "m_x" if theta == 0 else "m_y"))
                    assert m == pytest.approx(theirs, rel=3e-3), (col, direction, factor, P)


def test_circular_columns_against_concreteproperties():
    # Circular sections with bars on a circle, against the independent library (outline of 96
    # points with the circle's area); Mpr at two loads.
    rng = np.random.default_rng(9)
    for _ in range(3):
        D, n, db, edge = rng.uniform(400, 900), int(rng.choice([6, 8, 10, 12])), float(rng.choice([20.0, 25.0])), rng.uniform(55, 70)
        fc = float(rng.choice([28.0, 40.0]))
        ours = s.circular_column_sections(D, n, db, edge, fc, 420.0)
        area, r_bars = math.pi * db**2 / 4, D / 2 - edge
        bars = [(area, r_bars * math.cos(math.pi / 2 + 2 * math.pi * k / n), r_bars * math.sin(math.pi / 2 + 2 * math.pi * k / n), db)
                for k in range(n)]
        po = s.squash_load(ours)[0]
        for factor, loads, strength in ((1.0, (-0.2 * 420.0 * ours.steel_area[0], 0.0, 0.25 * po, 0.5 * po), s.nominal_moment),
                                        (1.25, (0.1 * po, 0.35 * po), s.probable_moment)):
            section = ref.circle(D, fc, factor * 420.0, bars)
            mine = strength(ours.take(np.zeros(len(loads), int)), np.array(loads)).moment
            for P, m in zip(loads, mine):
                assert m == pytest.approx(ref.ultimate_moment(section, P), rel=4e-3), (D, n, P, factor)


def test_design_moment_is_phi_times_the_nominal_curve_point():
    # phi Mn at Pu: the point of the nominal curve with Pn = Pu/phi, phi by Table 21.2.2 from its eps_t.
    # Checked against concreteproperties' nominal moment at that Pn.
    col = next(random_rect_columns(seed=21, count=1))
    ours = s.rectangular_column_sections(col["b"], col["h"], col["n"], col["db"], col["edge"], col["fc"], col["fy"])
    section = ref.rectangle(col["b"], col["h"], col["fc"], col["fy"], _rect_bars(col["b"], col["h"], col["n"], col["db"], col["edge"]))
    po = s.squash_load(ours)[0]
    loads = np.array([0.0, 0.05 * po, 0.3 * po])
    design = s.design_moment(ours.take([0, 0, 0]), loads)
    for P, m, phi in zip(loads, design.moment, design.phi):
        assert 0.65 <= phi <= 0.90
        assert m == pytest.approx(phi * ref.ultimate_moment(section, P / phi), rel=3e-3)
    assert design.phi[2] == pytest.approx(0.65)  # compression-controlled at 0.3 Po


def test_design_moment_undefined_above_phi_pn_max():
    # 22.4.2.1 with Table 21.2.2: Pu above 0.65 x 0.80 Po has no design moment strength
    sec = s.rectangular_column_sections(400.0, 400.0, 8, 25.0, 60.0, 30.0, 420.0)
    cap = 0.65 * s.pn_max(sec)[0]
    design = s.design_moment(sec.take([0, 0]), np.array([0.99 * cap, 1.01 * cap]))
    assert np.isfinite(design.moment[0]) and np.isnan(design.moment[1])
    assert s.nominal_moment(sec, 0.85 * s.squash_load(sec)[0]).above_pn_max[0]


def test_axial_load_beyond_the_section_gives_nan():
    # No strain state balances a load beyond pure tension (-fy Ast) or the squash load Po (22.4.2.2)
    sec = s.rectangular_column_sections(400.0, 400.0, 8, 25.0, 60.0, 30.0, 420.0)
    po, pt = s.squash_load(sec)[0], -420.0 * sec.steel_area[0]
    m = s.nominal_moment(sec.take([0, 0, 0]), np.array([1.01 * po, 1.01 * pt, 0.0])).moment
    assert np.isnan(m[0]) and np.isnan(m[1]) and m[2] > 0


def test_largest_over_axial_is_the_largest_single_value():
    # 18.7.6.1.1: Mpr for the range of Pu; the reduction over combinations equals the largest single result
    sec = s.rectangular_column_sections([400.0, 500.0], [600.0, 500.0], [8, 12], 25.0, 60.0, 35.0, 420.0)
    loads = np.array([[0.0, 1.5e6, 4e6], [np.nan, 2e6, -3e5]])
    got = s.largest_over_axial(sec, loads)
    for i in range(2):
        single = [s.probable_moment(sec.take([i]), P).moment[0] for P in loads[i] if np.isfinite(P)]
        assert got[i] == pytest.approx(max(single))


def test_batch_results_do_not_depend_on_order():
    # vectorised over sections: the same section gives the same result wherever it sits in the batch
    sec = s.rectangular_column_sections([400.0, 500.0, 450.0], [600.0, 500.0, 700.0], [8, 12, 10], 25.0, 60.0, 35.0, 420.0)
    loads = np.array([1e6, -2e5, 3e6])
    forward = s.nominal_moment(sec, loads).moment
    backward = s.nominal_moment(sec.take([2, 1, 0]), loads[::-1]).moment
    assert forward == pytest.approx(backward[::-1], rel=1e-12)


def _random_sections(rng, kind: str, n: int, u=None) -> s.Sections:
    fc, fy = rng.uniform(20, 80, n), rng.uniform(280, 550, n)
    b, h = rng.uniform(200, 1200, n), rng.uniform(200, 1500, n)
    if kind == "column":
        return s.rectangular_column_sections(b, h, rng.integers(2, 12, n) * 2 + 4, rng.choice([16.0, 20, 25, 32], n),
                                             rng.uniform(40, 80, n), fc, fy)
    if kind == "t-beam":
        return s.beam_sections(b, h, h - rng.uniform(40, 90, n), rng.uniform(0, 6000, n), rng.uniform(300, 6000, n), fc,
                               fy, d_prime=rng.uniform(40, 90, n), bf=b + rng.uniform(0, 1500, n),
                               hf=rng.uniform(80, 200, n), db_top=20.0, db_bot=25.0)
    m = int(rng.integers(2, 12))
    z = np.sort(rng.uniform(0, 1, (n, m)), axis=1) * (h[:, None] - 80) + 40
    area = rng.uniform(0, 2000, (n, m))
    area[rng.random((n, m)) < 0.2] = 0.0  # padding layers
    return s.layered_sections(b, h, area, z, rng.choice([12.0, 20, 32], (n, m)), fc, fy)


@pytest.mark.parametrize("kind", ["column", "t-beam", "layers"])
def test_compiled_neutral_axis_search_is_the_numpy_search(monkeypatch, kind):
    """The neutral-axis bisection compiled (postproc.compiled.axial_bisection, for Mn and Mpr of
    sections without a circle) gives the numpy search's bits: moment, c and eps_t of every
    (section, P) pair, both faces in compression, P from past pure tension to past the squash
    load, NaN and infinite loads included. The numpy search is the one checked against
    concreteproperties above."""
    from postproc import kernels

    if not kernels.available():
        pytest.skip("numba is not installed (pip install 'shearpost[compiled]')")
    rng = np.random.default_rng({"column": 1, "t-beam": 2, "layers": 3}[kind])
    calls = []
    search = kernels.axial_bisection
    monkeypatch.setattr(kernels, "axial_bisection", lambda *a: (calls.append(1), search(*a))[1])
    for _ in range(12):
        n = int(rng.integers(1, 400))
        sec = _random_sections(rng, kind, n)
        P = rng.uniform(-0.4, 1.2, n) * s.squash_load(sec, s.MPR_STEEL_FACTOR)
        P[rng.random(n) < 0.1] = 0.0
        P[rng.random(n) < 0.03] = rng.choice([np.nan, np.inf, -np.inf], 1)
        got = {}
        for how in ("numpy", "compiled"):
            monkeypatch.setenv(kernels.ENV, how)
            got[how] = [getattr(r, f).tobytes() for sign in (1, -1)
                        for r in (s.probable_moment(sec, P, sign), s.nominal_moment(sec, P, sign))
                        for f in ("moment", "c", "eps_t")]
        assert got["compiled"] == got["numpy"]
    assert len(calls) == 12 * 4  # every Mpr and Mn of the compiled runs went through the kernel


def test_odd_bar_count_of_a_rectangular_column_is_refused():
    with pytest.raises(ValueError, match="even number of bars"):
        s.rectangular_column_sections(400.0, 400.0, 7, 25.0, 60.0, 30.0, 420.0)


def test_explicit_layers_against_concreteproperties():
    # A wall-like section with explicit layers (area, depth, bar diameter), at two axial loads
    b, h, fc, fy = 300.0, 900.0, 30.0, 420.0
    layers = np.array([[1000.0, 400.0, 400.0, 1500.0]])
    depths = np.array([[60.0, 330.0, 570.0, 840.0]])
    sec = s.layered_sections(b, h, layers, depths, 20.0, fc, fy)
    bars = []
    for area, z in zip(layers[0], depths[0]):
        n = int(round(area / 200.0)) if area > 500 else 2
        bars += [(area / n, x, h - z, 20.0) for x in np.linspace(60.0, b - 60.0, n)]
    section = ref.rectangle(b, h, fc, fy, bars)
    for P in (0.0, 1.5e6):
        for top, sign in ((True, 1), (False, -1)):
            assert s.nominal_moment(sec, P, sign).moment[0] == pytest.approx(ref.ultimate_moment(section, P, top), rel=3e-3)


@settings(max_examples=40, deadline=None)
@given(b=st.floats(250, 600), h=st.floats(400, 1000), ratio_top=st.floats(0.002, 0.02), ratio_bot=st.floats(0.002, 0.02),
       fc=st.floats(21, 80), fy=st.sampled_from([420.0, 520.0]), P_fraction=st.floats(-0.1, 0.6))
def test_equilibrium_and_ordering_properties(b, h, ratio_top, ratio_bot, fc, fy, P_fraction):
    # At the solved neutral axis the section's axial force equals P (22.2.1.1 equilibrium);
    # Mpr (1.25 fy) is never below Mn at P = 0; more tension steel never lowers Mn at P = 0.
    sec = s.layered_sections(b, h, [[ratio_top * b * h, ratio_bot * b * h]], [[0.1 * h, 0.9 * h]], 20.0, fc, fy)
    P = P_fraction * float(s.squash_load(sec)[0])
    result = s.nominal_moment(sec, P)
    if np.isfinite(result.moment[0]):
        axial, moment, _ = s.section_actions(sec, result.c, 1)
        assert axial[0] == pytest.approx(P, abs=1e-6 * s.squash_load(sec)[0])
        assert moment[0] == pytest.approx(result.moment[0])
    mn, mpr = s.nominal_moment(sec, 0.0).moment[0], s.probable_moment(sec, 0.0).moment[0]
    assert mpr >= mn * (1 - 1e-9)
    more = s.layered_sections(b, h, [[ratio_top * b * h, 1.2 * ratio_bot * b * h]], [[0.1 * h, 0.9 * h]], 20.0, fc, fy)
    assert s.nominal_moment(more, 0.0).moment[0] >= mn * (1 - 1e-9)
