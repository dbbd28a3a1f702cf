"""Load combinations: ACI 318-19 Table 5.3.1 with loads absent (5.3.2) and live-load
patterns as alternatives (6.4); the exact envelope against brute-force enumeration."""

import itertools
from types import SimpleNamespace

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as hs


from postproc.demand import beams as demand
from postproc import combos, kernels
from postproc.combos import aci_5_3_1, candidates, prefactored
from postproc.settings import Combinations

CASES = ["D", "L", "Lr", "Wx", "Ex"]
TYPES = {"D": "D", "L": "L", "Lr": "Lr", "Wx": "W", "Ex": "E"}


def factors(cs):
    return {tuple(float(v) for v in np.round(row, 6)) for row in cs.factors}


def table_5_3_1_by_hand(l_factor=1.0):
    """Every combination of Table 5.3.1 for the cases D, L, Lr, Wx, Ex, each variable load
    present or absent (5.3.2), W and E with either sign (columns D, L, Lr, Wx, Ex)."""
    out = set()
    on = (0, 1)
    sign = (0, 1, -1)
    out.add((1.4, 0, 0, 0, 0))  # (a) 1.4D
    for l, r in itertools.product(on, on):
        out.add((1.2, 1.6 * l, 0.5 * r, 0, 0))  # (b) 1.2D + 1.6L + 0.5Lr
    for r, l in itertools.product(on, on):
        out.add((1.2, l_factor * l, 1.6 * r, 0, 0))  # (c) 1.2D + 1.6Lr + 1.0L
    for r, w in itertools.product(on, sign):
        out.add((1.2, 0, 1.6 * r, 0.5 * w, 0))  # (c) 1.2D + 1.6Lr + 0.5W
    for w, l, r in itertools.product(sign, on, on):
        out.add((1.2, l_factor * l, 0.5 * r, 1.0 * w, 0))  # (d) 1.2D + 1.0W + 1.0L + 0.5Lr
    for e, l in itertools.product(sign, on):
        out.add((1.2, l_factor * l, 0, 0, 1.0 * e))  # (e) 1.2D + 1.0E + 1.0L + 0.2S (no S)
    for w in sign:
        out.add((0.9, 0, 0, 1.0 * w, 0))  # (f) 0.9D + 1.0W
    for e in sign:
        out.add((0.9, 0, 0, 0, 1.0 * e))  # (g) 0.9D + 1.0E
    return {tuple(float(round(v, 6)) + 0.0 for v in row) for row in out}


def test_table_5_3_1_with_loads_absent_and_both_signs_of_w_and_e():
    cs = aci_5_3_1(TYPES, CASES, Combinations())
    assert factors(cs) == table_5_3_1_by_hand()
    assert not cs.prefactored and len(cs.names) == len(table_5_3_1_by_hand())


def test_reduced_live_load_factor_5_3_3():
    cs = aci_5_3_1(TYPES, CASES, Combinations(reduced_live_factor=True))
    # ACI 318-19 5.3.3: L factor 0.5 in (c), (d), (e); (b) keeps 1.6
    assert factors(cs) == table_5_3_1_by_hand(l_factor=0.5)


def _design_shear(cs, v):
    """Largest |V| over the exact candidates at one station (v: shear of each case)."""
    vals = {"V": np.array(v, float)[:, None], "N": np.zeros((len(v), 1)), "T": np.zeros((len(v), 1))}
    return float(np.abs(candidates(cs, vals).values["V"]).max())


def test_a_load_not_acting_governs():
    # the defect's own numbers: D = +100, L = -30, W = +50 kN at one station. With every load
    # present the largest is 1.4D = 140 kN; ACI 318-19 5.3.2 (L not acting): 1.2D + 1.0W = 170 kN
    cs = aci_5_3_1({"D": "D", "L": "L", "W": "W"}, ["D", "L", "W"], Combinations())
    assert _design_shear(cs, [100.0, -30.0, 50.0]) == pytest.approx(1.2 * 100 + 1.0 * 50)


def test_row_c_is_built_without_a_roof_case():
    # Table 5.3.1(c) 1.2D + 1.6(Lr or S or R) + (1.0L or 0.5W): with no roof case, 1.2D + 0.5W is still tried
    cs = aci_5_3_1({"D": "D", "W": "W"}, ["D", "W"], Combinations())
    assert (1.2, 0.5) in factors(cs) and (1.2, -0.5) in factors(cs)
    assert any(name.startswith("5.3.1c") for name in cs.names)


def test_live_load_patterns_are_alternatives():
    # two arrangements of one live load (span 1 loaded, span 2 loaded): at most one acts (6.4).
    # Shears at a mid-span station: +690 kN from one pattern, -690 kN from the other; summed they
    # cancel to 0 kN, as alternatives the design shear is 1.6 x 690 kN (common practice for patterns)
    cs = aci_5_3_1({"D": "D", "L1": "L", "L2": "L"}, ["D", "L1", "L2"], Combinations(), {"L1": "p", "L2": "p"})
    assert not any(row[1] and row[2] for row in cs.factors)  # never both
    assert _design_shear(cs, [0.0, 690.0, -690.0]) == pytest.approx(1.6 * 690.0)
    unlabelled = aci_5_3_1({"D": "D", "L1": "L", "L2": "L"}, ["D", "L1", "L2"], Combinations())
    assert any(row[1] and row[2] for row in unlabelled.factors)  # without a pattern label they may act together


def test_two_wind_directions_are_alternatives_and_dead_cases_add():
    cases = ["D1", "D2", "Wx", "Wy"]
    cs = aci_5_3_1({"D1": "D", "D2": "D", "Wx": "W", "Wy": "W"}, cases, Combinations())
    f = factors(cs)
    assert (1.4, 1.4, 0, 0) in f  # both dead cases in (a)
    assert (0.9, 0.9, 1.0, 0) in f and (0.9, 0.9, 0, -1.0) in f
    assert not any(r[2] and r[3] for r in f)  # never Wx and Wy together
    assert all(r[0] == r[1] and r[0] > 0 for r in f)  # the dead loads always act


def test_prefactored_is_one_case_at_a_time():
    cs = prefactored(["ULS1", "ULS2"])
    assert cs.prefactored and np.array_equal(cs.factors, np.eye(2)) and cs.names == ["ULS1", "ULS2"]


# --- the exact envelope: property test against brute-force enumeration ------------------------

TYPE_POOL = ["D", "L", "L", "Lr", "S", "R", "W", "W", "E"]


@hs.composite
def models(draw):
    n = draw(hs.integers(2, 7))
    types = ["D"] + [draw(hs.sampled_from(TYPE_POOL)) for _ in range(n - 1)]
    cases = [f"c{k}" for k in range(n)]
    patterns = {}
    for c, t in zip(cases, types):
        if t in ("L", "Lr", "S", "R") and draw(hs.booleans()):
            patterns[c] = draw(hs.sampled_from(["p", "q"]))
    stations = draw(hs.integers(1, 6))
    scale = hs.floats(-400e3, 400e3, allow_nan=False, allow_infinity=False)
    grid = lambda: np.array([[draw(scale) for _ in range(stations)] for _ in range(n)])
    v = grid()
    nn = grid() * draw(hs.sampled_from([0.0, 0.5, 3.0]))
    t = grid() * draw(hs.sampled_from([0.0, 200.0]))
    return dict(zip(cases, types)), cases, patterns, {"V": v, "N": nn, "T": t}


def _section(stations: int) -> demand.Section:
    one = lambda v: np.full(stations, float(v))
    return demand.section_from_members(b=one(300), h=one(600), d=one(540), fc=one(30), fyt=one(420), lam=one(1.0),
                                       fy=one(420), As=one(np.nan), bf=one(np.nan), hf=one(np.nan))


KERNEL_PATHS = ["numpy", pytest.param("compiled", marks=pytest.mark.skipif(
    not kernels.available(), reason="numba is not installed (pip install 'shearpost[compiled]')"))]


@pytest.mark.parametrize("path", KERNEL_PATHS)  # postproc.kernels: the numpy reference or the compiled twin
@pytest.mark.parametrize("dense_limit", [combos.DENSE_LIMIT, 0])  # over the listed combinations; term by term
@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(model=models())
def test_exact_envelope_equals_brute_force_enumeration(model, dense_limit, path, monkeypatch):
    """Every quantity the design takes from the combinations, over the candidates, equals
    the same over every combination listed one by one (brute force)."""
    monkeypatch.setattr(combos, "DENSE_LIMIT", dense_limit)
    monkeypatch.setenv(kernels.ENV, path)
    types, cases, patterns, vals = model
    cs = aci_5_3_1(types, cases, Combinations(), patterns)
    s_count = vals["V"].shape[1]
    sec = _section(s_count)
    cand = candidates(cs, vals)
    exact = demand.required(sec, cand)
    _, C = cs.explicit
    brute_vals = {q: (C @ v).reshape(-1) for q, v in vals.items()}

    station = np.tile(np.arange(s_count), len(C))  # every combination at every station, as candidates
    order = np.argsort(station, kind="stable")
    All = SimpleNamespace(station=station[order], values={q: v[order] for q, v in brute_vals.items()},
                          bounds=np.searchsorted(station[order], np.arange(s_count + 1)))

    brute = demand.required(sec, All)
    for field in ("vu_max", "ata_env", "shear_ratio", "s_max", "s_max_across"):
        np.testing.assert_allclose(getattr(exact, field), getattr(brute, field), rtol=1e-12, atol=1e-9, err_msg=field)
    for field in ("minimum", "torsion", "heavy"):
        assert np.array_equal(getattr(exact, field), getattr(brute, field)), field
    # what the set-out takes from the demand: the spacing each stirrup option allows (its
    # parts, such as the strength Av/s alone, need not be monotone: a combination past the
    # Av,min threshold trades Vc (c) for the minimum)
    one = lambda v: np.full(s_count, float(v))
    for legs, area, Aoh, ph in ((2, 71.0, 1.2e5, 1400.0), (4, 129.0, 0.9e5, 1300.0)):
        for here in (np.zeros(s_count, bool), np.ones(s_count, bool)):
            np.testing.assert_allclose(
                demand.allowed_spacing(cand, exact, one(legs), area, one(Aoh), one(ph), here),
                demand.allowed_spacing(All, brute, one(legs), area, one(Aoh), one(ph), here), rtol=1e-12)


# --- the compiled front (postproc.kernels) against the numpy one: the same set, bit for bit ------------


def _both_paths(monkeypatch, fn):
    monkeypatch.setenv(kernels.ENV, "numpy")
    reference = fn()
    monkeypatch.setenv(kernels.ENV, "compiled")
    return reference, fn()


@pytest.mark.skipif(not kernels.available(), reason="numba is not installed")
@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=hs.data())
def test_compiled_front_keeps_the_same_entries_as_numpy(data, monkeypatch):
    """Small integers make ties in one, two or all coordinates common (the front keeps the
    first of equal entries; with two coordinates, the first-coordinate ties as the sort
    does); some entries are invalid."""
    S, K, m = data.draw(hs.integers(1, 8)), data.draw(hs.integers(1, 24)), data.draw(hs.integers(1, 4))
    ints = hs.integers(-3, 3)
    coords = [np.array([[data.draw(ints) for _ in range(K)] for _ in range(S)], float) * data.draw(hs.sampled_from([1.0, -1.0, 0.5]))
              for _ in range(m)]
    valid = np.array([[data.draw(hs.booleans()) or data.draw(hs.booleans()) for _ in range(K)] for _ in range(S)])
    numpy_front, compiled_front = _both_paths(monkeypatch, lambda: combos._front(coords, valid))
    assert np.array_equal(numpy_front, compiled_front)
    # and exactly what no other valid entry drops (the definition in _front's docstring, pair by pair)
    for s_ in range(S):
        for e in range(K):
            at = lambda k: np.array([c[s_, k] for c in coords])  # noqa: E731
            dropped = any(valid[s_, o] and o != e and _drops(at(o), at(e), o < e) for o in range(K))
            assert numpy_front[s_, e] == (valid[s_, e] and not dropped)


@pytest.mark.skipif(not kernels.available(), reason="numba is not installed")
@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=hs.data())
def test_compiled_front_of_several_quadrants_is_the_union_of_the_numpy_fronts(data, monkeypatch):
    """The compiled front of every sign quadrant at once (as the dense candidates take it: a
    later quadrant takes only the entries not kept yet, each against every entry, where they
    are few) keeps what the numpy front of each quadrant keeps, OR-ed. Small integers make
    ties common and, with three or four coordinates, most entries lie on some front."""
    S, K, m = data.draw(hs.integers(1, 6)), data.draw(hs.integers(1, 24)), data.draw(hs.integers(2, 4))
    ints = hs.integers(-3, 3)
    coords = [np.array([[data.draw(ints) for _ in range(K)] for _ in range(S)], float) for _ in range(m)]
    valid = np.array([[data.draw(hs.booleans()) or data.draw(hs.booleans()) for _ in range(K)] for _ in range(S)])
    quadrants = [list(q) + [1.0] for q in itertools.product((1.0, -1.0), repeat=m - 1)]  # the last: tension
    monkeypatch.setenv(kernels.ENV, "numpy")
    expected = np.zeros((S, K), bool)
    for q in quadrants:
        expected |= combos._front([sg * c for sg, c in zip(q, coords)], valid)
    assert np.array_equal(kernels.front(np.stack(coords), np.array(quadrants), valid), expected)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=hs.data())
def test_front_asked_about_some_entries_is_the_whole_front_there(data, monkeypatch):
    """``_front(..., only=mask)``, the numpy path a later sign quadrant takes (the entries not
    kept yet asked about, every valid entry still dropping), is the whole front within the mask."""
    monkeypatch.setenv(kernels.ENV, "numpy")
    S, K, m = data.draw(hs.integers(1, 6)), data.draw(hs.integers(1, 24)), data.draw(hs.integers(1, 4))
    ints = hs.integers(-3, 3)
    coords = [np.array([[data.draw(ints) for _ in range(K)] for _ in range(S)], float) for _ in range(m)]
    valid = np.array([[data.draw(hs.booleans()) or data.draw(hs.booleans()) for _ in range(K)] for _ in range(S)])
    only = np.array([[data.draw(hs.booleans()) for _ in range(K)] for _ in range(S)])
    assert np.array_equal(combos._front(coords, valid, only=only), combos._front(coords, valid) & only)


def _drops(o, e, o_first):
    """o drops e: one coordinate, o larger or equal and first; two, o ahead in the first
    (larger, or equal and first) and at least e in the second; three or more, o at least e
    in all, larger in one or equal in all and first."""
    if len(o) == 1:
        return o[0] > e[0] or (o[0] == e[0] and o_first)
    if len(o) == 2:
        return (o[0] > e[0] or (o[0] == e[0] and o_first)) and o[1] >= e[1]
    return bool(np.all(o >= e) and (np.any(o > e) or o_first))


@pytest.mark.skipif(not kernels.available(), reason="numba is not installed")
@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(model=models())
def test_compiled_candidates_are_the_numpy_candidates_bit_for_bit(model, monkeypatch):
    types, cases, patterns, vals = model
    cs = aci_5_3_1(types, cases, Combinations(), patterns)
    a, b = _both_paths(monkeypatch, lambda: candidates(cs, vals))
    for name in ("station", "row", "choice", "bounds"):
        assert np.array_equal(getattr(a, name), getattr(b, name)), name
    for q in a.values:
        assert a.values[q].tobytes() == b.values[q].tobytes(), q


def test_kernel_choice_is_checked(monkeypatch):
    monkeypatch.setenv(kernels.ENV, "fastest")
    with pytest.raises(ValueError, match="SHEARPOST_KERNELS"):
        kernels.choice()
    monkeypatch.setenv(kernels.ENV, "numpy")
    assert not kernels.use_compiled(10**9)  # the numpy path whatever the size
    monkeypatch.setenv(kernels.ENV, "auto")
    monkeypatch.setattr(kernels, "_compiled", None)  # a process that has not loaded the kernels yet
    assert not kernels.use_compiled(kernels.AUTO_CELLS - 1)  # small work: numba is not even imported
    assert kernels._compiled is None
    if kernels.available():  # once loaded, smaller work takes them too (the same bits, fewer numpy passes)
        assert kernels.use_compiled(kernels.LOADED_CELLS)
        assert not kernels.use_compiled(kernels.LOADED_CELLS - 1)
