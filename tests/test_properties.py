"""Property-based checks over random members and loads (hypothesis).

Every designed layout must pass the engine's self-check (phi*Vn >= Vu at every station
for every combination, every gap between stirrups within what the demand allows, s <=
s_max, Av >= Av,min where required; a failure raises SelfCheckError and fails the
test), every input member must appear in members.csv, and zones.csv must describe the
stored stirrups exactly: each zone's count, spacing and extent are the stirrups there,
on the spacing module, never closer than the minimum spacing.
"""

import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

import pyarrow.parquet as pq

from postproc.store import Store
from tests.conftest import design

SUPPORTS = ["column", "wall", "girder", "hanger"]


@st.composite
def frames(draw):
    n = draw(st.integers(1, 5))
    members, forces = [], []
    for k in range(n):
        L = draw(st.floats(2.0, 12.0))
        h = draw(st.sampled_from([300.0, 450.0, 600.0, 750.0, 900.0, 1200.0]))
        b = draw(st.sampled_from([200.0, 300.0, 400.0, 600.0, 900.0]))
        free = draw(st.sampled_from(["none", "none", "i", "j"]))
        si = "free" if free == "i" else draw(st.sampled_from(SUPPORTS))
        sj = "free" if free == "j" else draw(st.sampled_from(SUPPORTS))
        fi = 0.0 if si == "free" else draw(st.sampled_from([0.0, 150.0, 300.0]))
        fj = 0.0 if sj == "free" else draw(st.sampled_from([0.0, 150.0, 300.0]))
        m = dict(member=f"M{k}", length_m=L, b_mm=b, h_mm=h, cover_mm=draw(st.sampled_from([40.0, 60.0, 75.0])),
                 fc_mpa=draw(st.floats(20.0, 70.0)), fyt_mpa=draw(st.sampled_from([280.0, 420.0, 520.0])),
                 support_i=si, support_j=sj, face_i_mm=fi, face_j_mm=fj,
                 load_face=draw(st.sampled_from(["top", "bottom"])))
        if draw(st.booleans()):
            m["as_tension_mm2"] = draw(st.floats(0.003, 0.03)) * b * (h - 60)
        members.append(m)
        for case in ("C1", "C2")[: draw(st.integers(1, 2))]:
            w = draw(st.floats(0.0, 120.0))
            loads = [(draw(st.floats(0.05, 0.95)) * L, draw(st.sampled_from([-1.0, 1.0])) * draw(st.floats(5.0, 300.0)))
                     for _ in range(draw(st.integers(0, 2)))]
            loads = list({round(a, 6): (a, P) for a, P in loads}.values())  # one load per point
            N = draw(st.floats(-400.0, 400.0))
            T = draw(st.sampled_from([0.0, 0.0, draw(st.floats(0.0, 60.0))]))
            xs = np.linspace(0.0, L, 11)
            if free == "j":  # cantilever fixed at i
                V = lambda x: w * (L - x) + sum(P for a, P in loads if a > x)
            elif free == "i":
                V = lambda x: -w * x - sum(P for a, P in loads if a < x)
            else:
                V = lambda x: w * (L / 2 - x) + sum(P * (L - a) / L - (P if x > a else 0.0) for a, P in loads)
            # export stations and loads at least the station tolerance (1 mm) apart
            pts = sorted(x for x in set(np.round(xs, 6)) if all(abs(x - a) > 0.002 for a, _ in loads))
            rows = [(x, V(x)) for x in pts]
            for a, _ in loads:
                rows += [(round(a, 6), V(a - 1e-9)), (round(a, 6), V(a + 1e-9))]
            for x, v in sorted(rows, key=lambda r: r[0]):
                forces.append(dict(member=f"M{k}", case=case, x_m=x, V_kN=v, N_kN=N, T_kNm=T))
    return members, forces


@given(frame=frames(), throughout=st.booleans(), half=st.booleans())
@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
def test_random_frames_pass_self_check_and_keep_every_member(frame, throughout, half):
    members, forces = frame
    with tempfile.TemporaryDirectory() as tmp:
        cfg = Path(tmp) / "cfg.toml"
        cfg.write_text(f"[detailing]\nstirrups_throughout = {str(throughout).lower()}\n"
                       f"first_stirrup = \"{'half' if half else 'fixed'}\"\n")
        res = design(Path(tmp), members, forces, extra=["--config", str(cfg)])
        runs = Store(res.store).runs()
        pos = pq.read_table(runs[0].design_path / "stirrups.parquet").to_pandas()
    assert res.code in (0, 3, 12) and len(runs) == 1  # 12: a member left to model by hand (deep-beam)
    assert sorted(res.members.member) == sorted(m["member"] for m in members)
    lengths = {m["member"]: m["length_m"] * 1000 - m["face_i_mm"] - m["face_j_mm"] for m in members}
    designed = res.members[res.members.status == "designed"]
    assert (designed.utilization <= 1.0 + 1e-9).all()
    for name, row in designed.set_index("member").iterrows():
        x = np.sort(pos.x_mm[pos.member == name].to_numpy())  # every stirrup, as stored
        z = res.zones[res.zones.member == name].sort_values("zone")
        assert len(x) == row.stirrups_total == z["count"].sum()
        if not len(x):
            continue
        assert x[0] > 0 and x[-1] < lengths[name]
        gaps = np.diff(x)
        assert (gaps >= 75 - 0.05).all()  # the practical minimum spacing (common practice: 75 mm)
        # each zone says exactly where its stirrups are: count of them from start to end at spacing
        for zone in z.itertuples():
            inside = x[(x >= zone.start_mm - 0.05) & (x <= zone.end_mm + 0.05)]
            if zone.count == 0:  # no stirrups between the stirrups (or the face) that bound it
                assert set(inside) <= {zone.start_mm, zone.end_mm}
                continue
            assert len(inside) == zone.count and inside[0] == zone.start_mm and inside[-1] == zone.end_mm
            if zone.count > 1:
                np.testing.assert_allclose(np.diff(inside), zone.spacing_mm, atol=0.11)
            if zone.count > 2:
                assert zone.spacing_mm >= 75 and zone.spacing_mm % 25 == 0  # on the module
        assert np.all(z.start_mm.to_numpy()[1:] >= z.end_mm.to_numpy()[:-1])  # in order along the member


@given(frame=frames(), seed=st.integers(0, 2**31 - 1))
@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
def test_design_does_not_depend_on_row_order(frame, seed):
    members, forces = frame
    rng = np.random.default_rng(seed)
    # shuffle the rows; the two rows of a jump keep their order (that order is their meaning)
    order = rng.permutation(len(forces))
    key = lambda r: (r["member"], r["case"], r["x_m"])
    seen: dict = {}
    for k in order:
        seen.setdefault(key(forces[k]), []).append(k)
    shuffled, used = [], set()
    for k in order:
        group = seen[key(forces[k])]
        if group[0] in used:
            continue
        used.update(group)
        shuffled += [forces[j] for j in sorted(group)]
    members_b = list(members)
    rng.shuffle(members_b)
    with tempfile.TemporaryDirectory() as tmp:
        a = design(Path(tmp) / "a", members, forces)
        b = design(Path(tmp) / "b", members_b, shuffled)
    key_cols = ["member"]
    pd_a = a.members.sort_values(key_cols).reset_index(drop=True)
    pd_b = b.members.sort_values(key_cols).reset_index(drop=True)
    assert pd_a.equals(pd_b)
    assert a.zones.sort_values(["member", "zone"]).reset_index(drop=True).equals(
        b.zones.sort_values(["member", "zone"]).reset_index(drop=True))


def _inexact_zones(zones, spacing, start, end, tol):
    """Zones of two stirrups or more whose count - 1 spacings do not span start to end."""
    z = zones[zones["count"] > 1]
    return z[((z["count"] - 1) * z[spacing] - (z[end] - z[start])).abs() > tol]


def test_a_zone_spans_its_count_of_spacings_exactly(tmp_path):
    """zones.csv says "count stirrups from start to end at spacing" (README): (count - 1) x
    spacing = end - start to the rounding of two positions. A cantilever whose clear span is
    off the 0.1 mm grid closes at its tip with one gap 0.4 mm short of the spacing (found by
    the random frames above); that gap is not merged into the 125 mm zone."""
    span = 2.849609375
    members = [dict(member="C1", length_m=span, b_mm=200.0, h_mm=300.0, cover_mm=40.0, fc_mpa=20.0, fyt_mpa=280.0,
                    support_i="free", support_j="column", face_i_mm=0.0, face_j_mm=0.0, load_face="top")]
    forces = [dict(member="C1", case="C1", x_m=float(x), V_kN=-0.0, N_kN=0.0, T_kNm=0.0)
              for x in np.round(np.linspace(0, span, 11), 6)]
    cfg = tmp_path / "cfg.toml"
    cfg.write_text('[detailing]\nstirrups_throughout = true\nfirst_stirrup = "fixed"\n')
    res = design(tmp_path, members, forces, extra=["--config", str(cfg)])
    x = np.sort(pq.read_table(Store(res.store).runs()[0].design_path / "stirrups.parquet").to_pandas().x_mm)
    assert np.diff(x)[0] == pytest.approx(124.6)  # the closing gap at the free end
    assert len(res.zones) > 1 and _inexact_zones(res.zones, "spacing_mm", "start_mm", "end_mm", 0.11).empty


def test_the_inch_pound_demo_zones_span_their_spacings_exactly(tmp_path):
    """The same of every zone of the inch-pound demo (its columns' hoop zones took the
    transition gap between two spacings: "10 at 3.0 in from 85.5 to 112.673")."""
    from postproc import cli

    assert cli.main(["demo", "--units", "us", "--store", str(tmp_path / "s"), "--out", str(tmp_path / "o"),
                     "--no-report"]) in (0, 3)
    zones = pd.read_csv(tmp_path / "o" / "zones.csv")
    assert len(zones) > 600 and _inexact_zones(zones, "spacing_in", "start_in", "end_in", 0.002).empty


@settings(max_examples=300, deadline=None)
@given(st.lists(st.lists(st.tuples(st.sampled_from([0.0, 0.5, 0.5 + 1e-12, 1.0, -1.0]),
                                   st.sampled_from([0.0, 1.0, 2.0, 2.0 + 1e-12])), min_size=1, max_size=4),
                min_size=1, max_size=6),
       st.data())
def test_the_governing_candidate_of_a_member_is_the_best_of_its_stations_winners(stations, data):
    """The members' governing combination is picked among the stations' governing ones:
    the order (largest value to 1e-9, then largest tie, then first) is lexicographic, so
    the two-step pick equals the direct pick over every candidate of the member. The
    reference is the rule itself, written as a plain Python max."""
    from postproc.pipeline import governing
    values = np.array([v for s in stations for v, _ in s])
    tie = np.array([t for s in stations for _, t in s])
    bounds = np.r_[0, np.cumsum([len(s) for s in stations])]
    cuts = sorted(set(data.draw(st.lists(st.integers(1, len(stations) - 1), max_size=3)) if len(stations) > 1 else []))
    groups = np.array([0, *cuts, len(stations)])  # members: runs of stations
    winners = governing(values, tie, bounds)
    got = winners[governing(values[winners], tie[winners], groups)]
    for g, (a, b) in enumerate(zip(bounds[groups[:-1]], bounds[groups[1:]])):
        key = [(np.round(values, 9)[i], np.round(tie, 9)[i], -i) for i in range(a, b)]
        assert got[g] == a + key.index(max(key))
    assert governing(values, np.zeros(len(values)), bounds).tolist() == governing(values, None, bounds).tolist()
