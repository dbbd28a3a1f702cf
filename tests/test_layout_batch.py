"""The batched set-out steps (postproc.detailing: the level choice scored in one step, zones
and the spacing in force for a whole batch) against their plain per-member forms kept in
postproc.reference: on random inputs, and through whole designs of the demo building and of
a synthetic frame, which must come out identical when every batched step is replaced by a
loop over the members calling the plain form."""

from __future__ import annotations

import importlib.resources
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import postproc
from postproc import detailing, reference, synthetic
from postproc.govern import design_table
from postproc.store import Store

SPACINGS = [50.0, 75.0, 75.2, 100.0, 100.4, 125.0, 150.0, 150.3, 200.0]  # mm; gaps a hair apart too (same_gap)


def _plain_zones_batch(x, offsets, clear_span, hole_lo, hole_hi, same_gap=detailing.Detailing.same_gap):
    """zones_batch as a loop over the groups calling reference.zones_from_positions."""
    rows = []
    for g in range(len(offsets) - 1):
        holes = [(float(hole_lo[g]), float(hole_hi[g]))] if np.isfinite(hole_lo[g]) else []
        for z in reference.zones_from_positions(x[offsets[g]:offsets[g + 1]], float(clear_span[g]), holes, same_gap):
            rows.append((g, z.start, z.end, z.spacing, z.count))
    cols = list(zip(*rows)) if rows else [[]] * 5
    return detailing.Zones(np.array(cols[0], np.int64), np.array(cols[1], float), np.array(cols[2], float),
                           np.array(cols[3], float), np.array(cols[4], np.int64))


def _plain_provided_batch(x, offsets, clear_span, station_group, stations, side=None):
    """provided_spacing_batch as a loop over the groups calling reference.provided_spacing."""
    out = np.full(len(stations), np.inf)
    side = np.zeros(len(stations), np.int8) if side is None else side
    for g in range(len(offsets) - 1):
        at = np.flatnonzero(station_group == g)
        if len(at):
            out[at] = reference.provided_spacing(x[offsets[g]:offsets[g + 1]], stations[at], float(clear_span[g]),
                                                 side[at])
    return out


def _zones_equal(a: detailing.Zones, b: detailing.Zones) -> bool:
    return (np.array_equal(a.group, b.group) and np.array_equal(a.start, b.start) and np.array_equal(a.end, b.end)
            and np.array_equal(a.spacing, b.spacing, equal_nan=True) and np.array_equal(a.count, b.count))


def test_level_choice_scored_at_once_matches_one_by_one():
    rng = np.random.default_rng(7)
    for trial in range(1500):
        n = int(rng.integers(2, 30))
        u = np.sort(rng.uniform(0.0, 6000.0, n))
        s_env = rng.choice([50, 75, 100, 125, 150, 175, 200, 225, 250, 300, np.inf], n).astype(float)
        if trial % 2:
            s_env = np.minimum.accumulate(s_env[::-1])[::-1]  # as _end_runs gives it
        levels = int(rng.integers(1, 5))
        np.testing.assert_array_equal(detailing.choose_levels(u, s_env, levels),
                                      reference.choose_levels(u, s_env, levels))


def _random_groups(rng, with_holes=True):
    xs, spans, lo, hi = [], [], [], []
    for _ in range(int(rng.integers(1, 12))):
        n = int(rng.integers(0, 25))
        x = np.round(np.cumsum(rng.choice(SPACINGS, n)) + rng.uniform(0.0, 80.0), 1)
        span = (x[-1] if n else 0.0) + rng.uniform(1.0, 300.0)
        hole = (np.nan, np.nan)
        r = rng.random()
        if with_holes and n and r < 0.2:
            hole = (0.0, float(x[0]))  # a cantilever's tip left without stirrups, mirrored
        elif with_holes and n and r < 0.4:
            hole = (float(x[-1]), span)
        elif with_holes and n > 3 and r < 0.6:
            k = int(rng.integers(0, n - 1))
            hole = (float(x[k]), float(x[k + 1]))  # a middle needing none
        elif with_holes and not n and r < 0.8:
            hole = (0.0, span)
        xs.append(x)
        spans.append(span)
        lo.append(hole[0])
        hi.append(hole[1])
    offsets = np.r_[0, np.cumsum([len(x) for x in xs])]
    return np.concatenate(xs), offsets, np.array(spans), np.array(lo), np.array(hi)


@pytest.mark.parametrize("same_gap", [0.5, 30.0])
def test_zones_of_a_batch_match_member_by_member(same_gap):
    rng = np.random.default_rng(11)
    for _ in range(300):
        x, offsets, spans, lo, hi = _random_groups(rng)
        assert _zones_equal(detailing.zones_batch(x, offsets, spans, lo, hi, same_gap),
                            _plain_zones_batch(x, offsets, spans, lo, hi, same_gap))


def test_spacing_in_force_of_a_batch_matches_member_by_member():
    rng = np.random.default_rng(13)
    for _ in range(300):
        x, offsets, spans, _, _ = _random_groups(rng, with_holes=False)
        groups = len(spans)
        stations, owner = [], []
        for g in range(groups):
            mine = x[offsets[g]:offsets[g + 1]]
            on_stirrups = rng.choice(mine, min(len(mine), 3)) if len(mine) else np.zeros(0)
            st = np.sort(np.concatenate([rng.uniform(0.0, spans[g], 8), on_stirrups]))
            stations.append(st)
            owner.append(np.full(len(st), g if rng.random() < 0.9 else -1))
        stations, owner = np.concatenate(stations), np.concatenate(owner)
        side = rng.integers(-1, 2, len(stations)).astype(np.int8)
        np.testing.assert_array_equal(detailing.provided_spacing_batch(x, offsets, spans, owner, stations, side),
                                      _plain_provided_batch(x, offsets, spans, owner, stations, side))


def _tables(run) -> dict[str, pd.DataFrame]:
    return {name: design_table(run, name) for name in ("members", "zones", "stations", "stirrups")}


def _plain_design(monkeypatch, members, forces, cases):
    """The design with every batched set-out step replaced by its member-by-member form."""
    with monkeypatch.context() as mp:
        mp.setattr(detailing, "choose_levels", reference.choose_levels)
        mp.setattr(detailing, "zones_batch", _plain_zones_batch)
        mp.setattr(detailing, "provided_spacing_batch", _plain_provided_batch)
        return postproc.design(members, forces, cases)


def _assert_identical(batched, plain):
    for name in batched:
        pd.testing.assert_frame_equal(batched[name], plain[name], check_exact=True, obj=name)


def test_demo_designed_batched_equals_member_by_member(monkeypatch, demo_designed):
    """The demo building (beams, frame beams with hoop zones, cantilevers, columns, a transfer girder),
    designed once for the session, against its design member by member."""
    demo = Path(str(importlib.resources.files("postproc.sample_results")))
    batched = _tables(Store(demo_designed.store).latest())
    plain = _plain_design(monkeypatch, demo / "members.csv", demo / "forces.csv", demo / "cases.csv")
    assert (batched["members"]["status"] == "designed").sum() > 20
    assert set(batched["zones"]["kind"]) >= {"stirrup", "hoop", "tie"}
    _assert_identical(batched, _tables(plain.run))


def test_synthetic_frame_designed_batched_equals_member_by_member(monkeypatch, tmp_path):
    paths = synthetic.generate(tmp_path, 120, 8, 21, seed=5, basic=True)
    batched = postproc.design(paths["members"], paths["forces"], paths.get("cases"))
    plain = _plain_design(monkeypatch, paths["members"], paths["forces"], paths.get("cases"))
    assert (batched.members["status"] == "designed").sum() > 60
    _assert_identical(_tables(batched.run), _tables(plain.run))


def _random_members(rng, st, n_members):
    """Stations and allowed spacings of random members as the beams' layout step gives them:
    spacings on the module, at or above the minimum, inf where none is needed (a middle, a
    tip, a whole member), tight ends, long runs of one spacing, a jump's two stations at one
    x; cantilevers at either end; spans from a few spacings to many."""
    module, smin = st.spacing_module, st.min_spacing
    choices = smin + module * np.arange(0, 16)
    us, envs, spans = [], [], []
    for _ in range(n_members):
        span = float(rng.uniform(2.0, 60.0) * smin * rng.choice([1.0, 4.0]))
        n = int(rng.integers(2, 40))
        u = np.sort(np.concatenate([[0.0, span], rng.uniform(0.0, span, n - 2)]))
        if n > 4 and rng.random() < 0.3:
            k = int(rng.integers(1, n - 1))
            u = np.insert(u, k, u[k])  # a jump: two stations at one x
        shape = rng.random()
        if shape < 0.4:  # tight at the ends, loose in the middle (a beam under gravity load)
            dist = np.minimum(u, span - u) / span
            s = rng.choice(choices[:4]) + np.floor(dist * rng.uniform(5, 40)) * module
        else:
            s = rng.choice(choices, len(u))
        s = np.asarray(s, float)
        none = rng.random()
        if none < 0.15:
            s[(u > 0.3 * span) & (u < 0.7 * span)] = np.inf
        elif none < 0.2:
            s[:] = np.inf
        elif none < 0.3:
            s[u > 0.6 * span] = np.inf
        us.append(u)
        envs.append(s)
        spans.append(span)
    offsets = np.r_[0, np.cumsum([len(u) for u in us])]
    r = rng.random(n_members)
    free_i, free_j = r < 0.1, (r >= 0.1) & (r < 0.2)
    return np.concatenate(us), np.concatenate(envs), offsets, np.array(spans), free_i, free_j


@pytest.mark.parametrize("edition", ["si", "us", "half", "one-zone", "many-zones"])
def test_compiled_set_out_is_the_python_set_out(monkeypatch, edition):
    """detailing.layout_positions_batch through the compiled set-out (postproc.compiled.set_out)
    returns what layout_positions returns member by member, to the bit: positions, the span
    left without stirrups, the note, and the reason where no set-out exists; hoop members with
    their own first stirrup and a stirrup at each face."""
    from dataclasses import replace

    from postproc import kernels
    from postproc.settings import Detailing, DetailingUS

    if not kernels.available():
        pytest.skip("numba is not installed (pip install 'shearpost[compiled]')")
    st = {"si": Detailing(), "us": DetailingUS(), "half": Detailing(first_stirrup="half"),
          "one-zone": Detailing(max_zones_per_end=1), "many-zones": DetailingUS(max_zones_per_end=5)}[edition]
    st_faces = replace(st, first_stirrup="fixed", **{
        ("first_stirrup_in" if edition in ("us", "many-zones") else "first_stirrup_mm"): st.first_stirrup_at * 0.9})
    rng = np.random.default_rng(sum(map(ord, edition)))
    outcomes = dict.fromkeys([kernels.SET_OUT, kernels.ZONES_MET, kernels.NONE_NEEDED, kernels.NO_SET_OUT,
                              kernels.BY_PYTHON, "cantilever set out"], 0)
    seen = {"set out": 0, "met": 0, "none": 0, "no set-out": 0, "hole": 0, "cantilever": 0}
    for _ in range(12):
        u, s_env, offsets, spans, free_i, free_j = _random_members(rng, st, 150)
        at_faces = rng.random(len(spans)) < 0.3
        todo = np.flatnonzero(rng.random(len(spans)) < 0.9)
        monkeypatch.setenv(kernels.ENV, "compiled")
        got = detailing.layout_positions_batch(u, s_env, offsets, todo, spans, free_i, free_j, st, at_faces, st_faces)
        assert sorted(got) == list(todo)
        # the kernel's own outcomes (every member it leaves to Python would pass the comparison below)
        what = kernels.set_out(u, s_env, offsets, todo, spans, free_i, free_j, st, at_faces, st_faces)[0][todo]
        for code in (kernels.SET_OUT, kernels.ZONES_MET, kernels.NONE_NEEDED, kernels.NO_SET_OUT, kernels.BY_PYTHON):
            outcomes[code] += int(np.sum(what == code))
        outcomes["cantilever set out"] += int(np.sum((what == kernels.SET_OUT) & (free_i | free_j)[todo]))
        for m in todo:
            sl = slice(offsets[m], offsets[m + 1])
            expected = detailing.layout_positions(u[sl], s_env[sl], float(spans[m]), bool(free_i[m]), bool(free_j[m]),
                                                  st_faces if at_faces[m] else st, close_at_faces=bool(at_faces[m]))
            if isinstance(expected, str):
                assert got[m] == expected
                seen["no set-out"] += 1
                continue
            pos, empty, note = got[m]
            assert pos.tobytes() == expected[0].tobytes(), m
            assert [tuple(map(float, e)) for e in empty] == [tuple(map(float, e)) for e in expected[1]]
            assert note == expected[2]
            seen["met"] += note == detailing.ZONES_MET
            seen["none"] += note == detailing.NONE_NEEDED
            seen["set out"] += note == ""
            seen["hole"] += bool(empty)
            seen["cantilever"] += bool(free_i[m] or free_j[m])
    if edition == "one-zone":  # one spacing from each face: no end runs to meet
        assert seen.pop("met") == 0 and outcomes.pop(kernels.ZONES_MET) == 0
    assert min(seen.values()) > 5, seen
    left = outcomes.pop(kernels.BY_PYTHON)
    assert min(outcomes.values()) > 5 and left < 0.03 * sum(outcomes.values()), (outcomes, left)


def test_compiled_set_out_leaves_odd_members_to_python(monkeypatch):
    """The members the compiled set-out does not take come out as layout_positions gives them:
    a member so short that its two first stirrups (50 mm from each face) stand 60 mm apart,
    below the 75 mm minimum, where one stirrup goes between them at a position rounded as
    Python rounds; beside it an ordinary member, set out by the kernel. A member with NaN or
    a zero among its allowed spacings (the layout step never sends one: it needs every
    spacing at or above the minimum) is not given to the kernel at all."""
    from postproc import compiled, kernels
    from postproc.settings import Detailing

    if not kernels.available():
        pytest.skip("numba is not installed (pip install 'shearpost[compiled]')")
    st = Detailing()
    members = [(np.array([0.0, 80.0, 160.0]), np.array([100.0, 100.0, 100.0]), 160.0),
               (np.array([0.0, 1500.0, 3000.0]), np.array([100.0, 300.0, 125.0]), 3000.0)]
    u = np.concatenate([m[0] for m in members])
    s_env = np.concatenate([m[1] for m in members])
    offsets = np.r_[0, np.cumsum([len(m[0]) for m in members])]
    spans = np.array([m[2] for m in members])
    no = np.zeros(len(members), bool)
    monkeypatch.setenv(kernels.ENV, "compiled")
    what, _, _, _ = kernels.set_out(u, s_env, offsets, np.array([0, 1]), spans, no, no, st, no, st)
    assert what[0] == compiled.BY_PYTHON and what[1] in (compiled.SET_OUT, compiled.ZONES_MET)
    got = detailing.layout_positions_batch(u, s_env, offsets, np.arange(2), spans, no, no, st, no, st)
    for m, (x, s, span) in enumerate(members):
        expected = detailing.layout_positions(x, s, span, False, False, st)
        assert got[m][0].tobytes() == expected[0].tobytes() and got[m][1:] == expected[1:]
    assert got[0][0].tolist() == [80.0]

    given, by_python = [], []
    real = kernels.set_out
    monkeypatch.setattr(kernels, "set_out", lambda *a: given.append(a[3].tolist()) or real(*a))
    monkeypatch.setattr(detailing, "layout_positions", lambda u, s, *a, **k: by_python.append(s.tolist()) or "plain")
    for poison in (np.nan, 0.0):
        bad = s_env.copy()
        bad[4] = poison
        got = detailing.layout_positions_batch(u, bad, offsets, np.arange(2), spans, no, no, st, no, st)
        assert given.pop() == [0] and got[1] == "plain"
        np.testing.assert_array_equal(by_python.pop(), bad[offsets[1]:])


def test_pairwise_sum_is_numpy_sum():
    """The compiled level choice sums a row of costs as np.sum does (numpy's pairwise summation:
    the same bits, so the same first least cost), rows of every length up to 1000."""
    from postproc import kernels

    if not kernels.available():
        pytest.skip("numba is not installed (pip install 'shearpost[compiled]')")
    from postproc import compiled

    rng = np.random.default_rng(5)
    for n in list(range(0, 300)) + [511, 512, 513, 1000]:
        row = rng.random(n) * 10.0 ** rng.uniform(-3, 3, n)
        assert compiled._pairwise_sum(row, 0, n) == np.sum(row[None, :], axis=1)[0], n


def test_compiled_set_out_of_members_in_any_order_and_settings(monkeypatch):
    """The batch in any order of its members (each keeps its own positions), hoop members whose
    settings differ from the others' beyond the first stirrup (left to layout_positions, which
    reads every field), and a member without a finite length (layout_positions' own error)."""
    from dataclasses import replace

    from postproc import kernels
    from postproc.settings import Detailing

    if not kernels.available():
        pytest.skip("numba is not installed (pip install 'shearpost[compiled]')")
    st = Detailing()
    x = np.linspace(0.0, 3000.0, 7)
    spacing = np.array([75.0, 100.0, 150.0, 300.0, 150.0, 100.0, 75.0])
    u, s_env = np.concatenate([x, x * 2]), np.concatenate([spacing, spacing * 2])
    offsets, spans, no = np.array([0, 7, 14]), np.array([3000.0, 6000.0]), np.zeros(2, bool)
    monkeypatch.setenv(kernels.ENV, "compiled")
    plain = [detailing.layout_positions(u[a:b], s_env[a:b], span, False, False, st)
             for a, b, span in zip(offsets[:-1], offsets[1:], spans)]
    got = detailing.layout_positions_batch(u, s_env, offsets, np.array([1, 0]), spans, no, no, st, no, st)
    for m in (0, 1):
        assert got[m][0].tobytes() == plain[m][0].tobytes()
    one_zone = replace(st, max_zones_per_end=1)  # the kernel would set out with st's three zones
    got = detailing.layout_positions_batch(u, s_env, offsets, np.arange(2), spans, no, no, st, ~no, one_zone)
    assert got[0] == detailing.layout_positions(x, spacing, 3000.0, False, False, one_zone, close_at_faces=True)
    assert isinstance(got[0], str)  # three levels of spacing cannot be set out in one zone here
    with pytest.raises((ValueError, OverflowError)):
        detailing.layout_positions_batch(u, s_env, offsets, np.arange(2), np.array([np.nan, 6000.0]), no, no, st,
                                         no, st)
