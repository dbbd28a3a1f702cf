"""Load combinations of ACI 318-19 Table 5.3.1 from typed basic cases."""

import numpy as np

from postproc.combos import aci_5_3_1, prefactored
from postproc.settings import Combinations

CASES = ["D", "L", "Lr", "Wx", "Ex"]
TYPES = {"D": "D", "L": "L", "Lr": "Lr", "Wx": "W", "Ex": "E"}


def factors(cs):
    return {tuple(np.round(row, 6)) for row in cs.factors}


def test_table_5_3_1_combinations_with_both_signs_of_w_and_e():
    cs = aci_5_3_1(TYPES, CASES, Combinations())
    f = factors(cs)
    # columns: D, L, Lr, Wx, Ex -- ACI 318-19 Table 5.3.1
    expected = {
        (1.4, 0, 0, 0, 0),  # (a) 1.4D
        (1.2, 1.6, 0.5, 0, 0),  # (b) 1.2D + 1.6L + 0.5Lr
        (1.2, 1.0, 1.6, 0, 0),  # (c) 1.2D + 1.6Lr + 1.0L
        (1.2, 0, 1.6, 0.5, 0), (1.2, 0, 1.6, -0.5, 0),  # (c) 1.2D + 1.6Lr + 0.5W
        (1.2, 1.0, 0.5, 1.0, 0), (1.2, 1.0, 0.5, -1.0, 0),  # (d) 1.2D + 1.0W + 1.0L + 0.5Lr
        (1.2, 1.0, 0, 0, 1.0), (1.2, 1.0, 0, 0, -1.0),  # (e) 1.2D + 1.0E + 1.0L + 0.2S (no S)
        (0.9, 0, 0, 1.0, 0), (0.9, 0, 0, -1.0, 0),  # (f) 0.9D + 1.0W
        (0.9, 0, 0, 0, 1.0), (0.9, 0, 0, 0, -1.0),  # (g) 0.9D + 1.0E
    }
    assert f == expected
    assert len(cs.names) == len(expected) and not cs.prefactored


def test_reduced_live_load_factor_5_3_3():
    cs = aci_5_3_1(TYPES, CASES, Combinations(reduced_live_factor=True))
    f = factors(cs)
    # ACI 318-19 5.3.3: L factor 0.5 in (c), (d), (e); (b) keeps 1.6
    assert (1.2, 0.5, 1.6, 0, 0) in f and (1.2, 0.5, 0.5, 1.0, 0) in f and (1.2, 0.5, 0, 0, -1.0) in f
    assert (1.2, 1.6, 0.5, 0, 0) in f


def test_two_wind_directions_are_alternatives_and_dead_cases_add():
    cases = ["D1", "D2", "Wx", "Wy"]
    cs = aci_5_3_1({"D1": "D", "D2": "D", "Wx": "W", "Wy": "W"}, cases, Combinations())
    f = factors(cs)
    assert (1.4, 1.4, 0, 0) in f  # both dead cases in (a)
    assert (0.9, 0.9, 1.0, 0) in f and (0.9, 0.9, 0, -1.0) in f
    assert not any(r[2] and r[3] for r in f)  # never Wx and Wy together


def test_prefactored_is_identity():
    cs = prefactored(["ULS1", "ULS2"])
    assert cs.prefactored and np.array_equal(cs.factors, np.eye(2))
