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
