"""Our stationing against an independent finite-element library (PyNiteFEA, from PyPI).

The frame and its export are in tests/fea_reference.py: PyNite analyses a two-bay portal
frame; its member shear at arbitrary points is the reference.
"""

import numpy as np
import pytest

from postproc import stations
from tests.conftest import design
from tests.fea_reference import two_span_frame


@pytest.fixture(scope="module")
def frame():
    return two_span_frame()


def test_stationing_reproduces_fe_shear_at_arbitrary_points(frame):
    f = frame.forces
    names = sorted(f.member.unique())
    cases = ["D", "L"]
    s = stations.Samples.build(f.member.map(names.index).to_numpy(np.int64), f.case.map(cases.index).to_numpy(np.int64),
                               f.x_m.to_numpy() * 1e3, {"V": f.V_kN.to_numpy() * 1e3})
    rng = np.random.default_rng(3)
    for m, name in enumerate(names):
        L = float(frame.members.set_index("member").length_m[name])
        xq = np.sort(rng.uniform(0.0, L, 25))
        xq = xq[np.abs(xq - 2.5) > 1e-3]  # off the point load itself
        vals, missing = stations.interpolate(s, 2, np.full(len(xq), m), xq * 1e3, np.ones(len(xq), np.int8), 1e6)
        assert not missing.any()
        for c, case in enumerate(cases):
            ref = [frame.shear(name, case, x) for x in xq]  # PyNite's member shear
            # exact but for the jump rows, taken 1e-6 m either side of 2.5 m: w x 1e-6 m = 3e-5 kN nearby
            np.testing.assert_allclose(vals["V"][c] / 1e3, ref, atol=1e-4)


def test_point_load_jump_matches_fe(frame):
    m = frame.model.members["B2"]
    left, right = m.shear("Fy", 2.5 - 1e-6, "L"), m.shear("Fy", 2.5 + 1e-6, "L")
    assert left - right == pytest.approx(120.0, abs=1e-3)  # the 120 kN point load of case L


def test_design_envelope_equals_factored_fe_shear(frame, tmp_path):
    res = design(tmp_path, frame.members.to_dict("records"), frame.forces.to_dict("records"),
                 frame.cases.to_dict("records"))
    assert res.code == 0
    assert set(res.members[res.members.member.str.startswith("C")].status) == {"designed"}
    st = res.stations
    for name in ("C1", "C2", "C3"):  # columns: stations from the base (node i) up to the beam soffit (face j)
        s = st[(st.member == name) & (st.side == 1)]
        xs = s.x_mm.to_numpy() / 1e3  # face i at the base: 0
        vd = np.array([frame.shear(name, "D", x) for x in xs])
        vl = np.array([frame.shear(name, "L", x) for x in xs])
        ref = np.maximum(np.abs(1.4 * vd), np.abs(1.2 * vd + 1.6 * vl))  # Table 5.3.1 (a), (b)
        np.testing.assert_allclose(s.vu_max_kN.to_numpy(), ref, atol=1e-3)
    face = 200.0
    d = 540.0
    for name in ("B1", "B2"):
        row = res.members.set_index("member").loc[name]
        assert row.status in ("designed", "resize", "deep-beam")
        s = st[(st.member == name) & (st.side == 1)]
        L = float(frame.members.set_index("member").length_m[name])
        ln = L * 1e3 - 2 * face
        inner = s[(s.x_mm > d + 1) & (s.x_mm < ln - d - 1) & (np.abs(s.x_mm + face - 2500) > 1)]
        xs = (inner.x_mm.to_numpy() + face) / 1e3
        vd = np.array([frame.shear(name, "D", x) for x in xs])
        vl = np.array([frame.shear(name, "L", x) for x in xs])
        # ACI 318-19 Table 5.3.1 (a) 1.4D and (b) 1.2D + 1.6L; the envelope is the larger magnitude
        ref = np.maximum(np.abs(1.4 * vd), np.abs(1.2 * vd + 1.6 * vl))
        # the export takes the jump rows 1e-6 m either side of 2.5 m: slope x 1e-6 m of difference nearby
        np.testing.assert_allclose(inner.vu_max_kN.to_numpy(), ref, atol=1e-4)
