"""Resampling against numpy.interp (a general-purpose reference), jumps, and the grid rules."""

import numpy as np

from postproc import stations
from postproc.settings import Stations


def samples(rng, n_members, n_cases, same_stations):
    member, case, x, V = [], [], [], []
    for m in range(n_members):
        base = np.sort(rng.uniform(0, 6000, 6))
        for c in range(n_cases):
            xs = base if same_stations else np.sort(rng.uniform(0, 6000, rng.integers(2, 8)))
            member += [m] * len(xs)
            case += [c] * len(xs)
            x += list(xs)
            V += list(rng.normal(0, 100, len(xs)))
    arr = lambda a, t=float: np.array(a, dtype=t)
    return stations.Samples.build(arr(member, np.int64), arr(case, np.int64), arr(x), {"V": arr(V)})


def test_interpolation_matches_numpy_interp_on_both_paths():
    rng = np.random.default_rng(7)
    for same in (True, False):  # the shared-stations fast path and the general path
        s = samples(rng, 5, 3, same)
        qm = np.repeat(np.arange(5), 40)
        qx = np.tile(np.linspace(-100, 6100, 40), 5)
        vals, missing = stations.interpolate(s, 3, qm, qx, np.ones_like(qm, dtype=np.int8), span=20000.0)
        assert not missing.any()
        for m in range(5):
            for c in range(3):
                sel = (s.member == m) & (s.case == c)
                ref = np.interp(qx[qm == m], s.x[sel], s.values["V"][sel])  # numpy holds end values too
                np.testing.assert_allclose(vals["V"][c, qm == m], ref, rtol=1e-12, atol=1e-9)


def test_jump_gives_left_and_right_limits_and_missing_case_is_flagged():
    # one member, case 0 with a jump at x = 2000 (rows in file order: left value, then right value)
    s = stations.Samples.build(np.zeros(4, np.int64), np.zeros(4, np.int64), np.array([0.0, 2000.0, 2000.0, 5000.0]),
                               {"V": np.array([100.0, 80.0, -120.0, -150.0])})
    vals, missing = stations.interpolate(s, 2, np.zeros(3, np.int64), np.array([2000.0, 2000.0, 1000.0]),
                                         np.array([0, 1, 1], np.int8), span=20000.0)
    assert vals["V"][0].tolist() == [80.0, -120.0, 90.0]
    assert missing[1].all() and not missing[0].any()  # case 1 has no rows for this member


def test_grid_spacing_jump_stations_and_critical_sections():
    g = stations.Geometry(length=np.array([6000.0]), face_i=np.array([200.0]), face_j=np.array([300.0]),
                          d=np.array([540.0]), h=np.array([600.0]), support_i=np.array(["column"], object),
                          support_j=np.array(["girder"], object), load_top=np.array([True]))
    s = stations.Samples.build(np.zeros(4, np.int64), np.zeros(4, np.int64), np.array([0.0, 3000.0, 3000.0, 6000.0]),
                               {"V": np.array([100e3, 50e3, -50e3, -100e3])})
    grid = stations.build_grid(g, s, Stations())
    assert grid.x.min() == 200.0 and grid.x.max() == 5700.0  # the clear span only
    assert np.diff(grid.x).max() <= 50.0 + 1e-9  # at most 50 mm and d/8 = 67.5 mm apart
    at_jump = grid.x == 3000.0
    assert at_jump.sum() == 2 and set(grid.side[at_jump]) == {0, 1}
    assert (grid.x == 740.0).any() and (grid.x == 5160.0).any()  # face + d and face - d exist exactly
    rules = stations.end_rules(g, grid, s, Stations())
    assert rules.crit_i[0] == "d" and rules.crit_j[0] == "face"  # 9.4.3.2(a): a girder end uses the face
