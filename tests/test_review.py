"""Ranking, run comparison, marks, bar schedule and the explain trace on designed stores."""

import json
import math

import pandas as pd
import pytest

from postproc import cli, detailing, govern, schedule
from postproc.settings import Detailing
from postproc.store import Store
from tests.conftest import beam, rows_from_function, write_inputs

L = 7.0


def frame(load=None, sections=None, drop=()):
    """Five beams on columns under uniform loads; load/sections override per member."""
    load = {"B1": 120.0, "B2": 150.0, "B3": 170.0, "B4": 90.0, "B5": 120.0, **(load or {})}
    sections = sections or {}
    members, forces = [], []
    for k, name in enumerate(["B1", "B2", "B3", "B4", "B5"]):
        if name in drop:
            continue
        members.append(beam(name, L, face_i_mm=250.0, face_j_mm=250.0, level=f"L{1 + k % 2}", group="girder",
                            **sections.get(name, {})))
        w = load[name]
        forces += rows_from_function(name, "U", L, lambda x, w=w: w * (L / 2 - x), n=5)
    return members, forces


def run_frame(tmp_path, store, name, **kw):
    paths = write_inputs(tmp_path / name, *frame(**kw))
    code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]), "--store", str(store),
                     "--out", str(tmp_path / f"out-{name}"), "--run", name, "--json"])
    assert code in (0, 3)
    return Store(store).run(name)


@pytest.fixture
def store(tmp_path):
    return tmp_path / "store"


def test_rank_failures_first_then_utilization_with_filters(tmp_path, store, capsys):
    run = run_frame(tmp_path, store, "a", load={"B4": 700.0})
    capsys.readouterr()
    ranked = govern.rank(run)
    assert ranked.member.iloc[0] == "B4" and ranked.status.iloc[0] == "resize"
    rest = ranked.iloc[1:]
    assert list(rest.utilization) == sorted(rest.utilization, reverse=True)
    assert set(govern.rank(run, levels=["L1"]).member) == {"B1", "B3", "B5"}
    assert list(govern.rank(run, statuses=["resize"]).member) == ["B4"]
    assert len(govern.rank(run, top=2)) == 2
    assert cli.main(["govern", "--store", str(store), "--format", "json", "--top", "3"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert [d["rank"] for d in doc] == [1, 2, 3]


def test_compare_reports_exactly_the_known_changes(tmp_path, store, capsys):
    a = run_frame(tmp_path, store, "a")
    b = run_frame(tmp_path, store, "b", load={"B2": 190.0}, sections={"B3": {"b_mm": 450.0}}, drop=("B4",))
    diff = govern.compare(a, b, threshold=0.02)
    assert diff.removed == ["B4"] and diff.added == []
    # the layout absorbs a load change, so utilization may stay near 1: the demand and the layout show it
    assert set(diff.utilization_changes.member) <= {"B2", "B3"}
    assert set(diff.demand_changes.member) == {"B2"}
    assert set(diff.layout_changes.member) == {"B2", "B3"}
    b2 = diff.layout_changes.set_index("member").loc["B2"]
    assert b2.layout_a != b2.layout_b and b2.stirrup_mass_change_kg > 0
    assert diff.status_changes.empty and diff.newly_resize == []
    removed_mass = a.path / "design" / "members.parquet"
    assert diff.stirrup_mass_b != diff.stirrup_mass_a and removed_mass.exists()
    capsys.readouterr()
    assert cli.main(["compare", "a", "b", "--store", str(store), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["removed"] == ["B4"]


def test_compare_totals_pair_the_members_designed_in_both_runs(tmp_path, store, capsys):
    """B4 designed in A and sent to resize in B (700 kN): it has no stirrups in B, which is not a
    saving. The totals sum the members designed in both runs (B4 left out, and named); the
    members' own masses give them back exactly."""
    a = run_frame(tmp_path, store, "a")
    b = run_frame(tmp_path, store, "b", load={"B4": 700.0})
    diff = govern.compare(a, b)
    assert diff.newly_resize == ["B4"] and diff.mass_left_out == ["B4"]
    ma = govern.design_table(a, "members").set_index("member")
    mb = govern.design_table(b, "members").set_index("member")
    both = [m for m in ma.index if m != "B4"]
    assert diff.stirrup_mass_a == pytest.approx(ma.loc[both, "stirrup_mass_kg"].sum())
    assert diff.stirrup_mass_b == pytest.approx(mb.loc[both, "stirrup_mass_kg"].sum())
    capsys.readouterr()
    assert cli.main(["compare", "a", "b", "--store", str(store)]) == 0
    out = " ".join(capsys.readouterr().out.split())
    assert "of the members designed in both runs" in out and "left out, designed in one run only: B4" in out


def test_compare_can_fail_on_a_new_resize(tmp_path, store, capsys):
    run_frame(tmp_path, store, "a")
    run_frame(tmp_path, store, "b", load={"B5": 800.0})
    capsys.readouterr()
    assert cli.main(["compare", "a", "b", "--store", str(store)]) == 0
    assert cli.main(["compare", "a", "b", "--store", str(store), "--fail-on-new-resize"]) == cli.EXIT_RESIZE
    assert "B5" in capsys.readouterr().out


def test_identical_members_share_a_mark_and_a_change_splits_it(tmp_path, store):
    a = run_frame(tmp_path, store, "a")  # B1 and B5: same section, load and so layout
    sa = schedule.for_run(Store(store), a, Detailing(), envelope=False)
    mark = sa.members.set_index("member").mark
    assert mark["B1"] == mark["B5"]
    assert len(set(mark)) == 4  # B1/B5, B2, B3, B4
    b = run_frame(tmp_path, store, "b", load={"B5": 125.0}, sections={"B5": {"b_mm": 350.0}})
    sb = schedule.for_run(Store(store), b, Detailing(), envelope=False)
    mark_b = sb.members.set_index("member").mark
    assert mark_b["B1"] != mark_b["B5"]
    # numbering is stable where the grouping did not change
    for m in ("B1", "B2", "B3", "B4"):
        assert mark_b[m] == mark[m]


def test_envelope_gives_a_group_the_most_demanding_layout(tmp_path, store):
    a = run_frame(tmp_path, store, "a", load={"B1": 100.0, "B5": 130.0})
    plain = schedule.build(a, Detailing(), envelope=False).members.set_index("member")
    env = schedule.build(a, Detailing(), envelope=True).members.set_index("member")
    assert plain.mark["B1"] != plain.mark["B5"]
    # all five share the group label and section; B3 (the heaviest load) satisfies all of them
    assert env.layout_from.nunique() == 1 and env.layout_from.iloc[0] == "B3"
    assert env.mark.nunique() == 1


def test_closed_stirrup_cut_length_by_hand():
    # ACI 318-19 Table 25.3.2: 135-degree stirrup hook extension max(6 db, 75 mm) for #10 to #25;
    # Table 25.3.3: inside bend diameter 4 db for #10 to #16. Hand calculation, 300 x 600 beam,
    # 40 mm clear cover, #10 (db = 9.5 mm): out-to-out 220 x 520; centreline 210.5 x 510.5;
    # bend radius on the centreline r = 4 db / 2 + db / 2 = 23.75 mm.
    a, c, r, e = 210.5, 510.5, 23.75, 75.0
    straight = 2 * a + 2 * c - 8 * r  # four sides, less the arcs at each end
    arcs = math.pi * r * (3 * 90 + 2 * 135) / 180  # three 90-degree corners, two 135-degree hooks
    hand = straight + arcs + 2 * e
    assert hand == pytest.approx(1625.8, abs=0.1)
    (shape,) = detailing.stirrup_set(300.0, 600.0, 40.0, "#10", 2, closed=True)
    assert shape.name == "closed-135" and (shape.A, shape.B) == (220.0, 520.0)
    assert shape.cut_length == pytest.approx(hand)


def test_schedule_files_and_explain(tmp_path, store, capsys):
    run_frame(tmp_path, store, "a")
    capsys.readouterr()
    assert cli.main(["schedule", "--store", str(store), "--out", str(tmp_path / "sched")]) == 0
    bars = pd.read_csv(tmp_path / "sched" / "schedule_bars.csv")
    res = pd.read_csv(tmp_path / "out-a" / "members.csv").set_index("member")
    per_member = bars.groupby("member").mass_kg.sum()
    for m in per_member.index:  # the schedule and members.csv agree on every member's stirrup mass
        assert per_member[m] == pytest.approx(res.stirrup_mass_kg[m], abs=0.05)
    assert (tmp_path / "sched" / "schedule_marks.parquet").exists()
    capsys.readouterr()
    assert cli.main(["explain", "B3", "--store", str(store), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    titles = [s["title"] for s in doc["steps"]]
    assert titles[:3] == ["Status", "Inputs", "Combinations"] and "Self-check" in titles
    assert any(s["clause"] == "9.4.3.2" for s in doc["steps"])
    zone_text = " ".join(" ".join(s["lines"]) for s in doc["steps"] if s["title"].startswith("Zone"))
    assert "Table 22.5.5.1" in zone_text and "Table 9.7.6.2.2" in zone_text


def test_govern_refuses_a_filter_that_matches_no_member(tmp_path, store, capsys):
    """--level L9 where the run has L1 and L2: an empty table with exit 0 would read as 'nothing
    to review'; refused (exit 2), naming the levels the run has."""
    run_frame(tmp_path, store, "a")
    capsys.readouterr()
    assert cli.main(["govern", "--store", str(store), "--level", "L9"]) == 2
    err = " ".join(capsys.readouterr().err.split())
    assert "--level L9" in err and "the levels: L1, L2" in err
    # a status is a word of the tool's: a typo is refused (argparse's choices; in Python, UnknownFilter), a
    # status no member has is an empty ranking
    with pytest.raises(govern.UnknownFilter, match="resise: not a status; the statuses: designed, resize,"):
        govern.rank(Store(store).latest(), statuses=["resise"])
    run = Store(store).latest()  # one level given as a string is that level, not its letters
    assert len(govern.rank(run, levels="L1")) == len(govern.rank(run, levels=["L1"])) > 0
    assert cli.main(["govern", "--store", str(store), "--status", "no-geometry", "--format", "csv"]) == 0
    assert capsys.readouterr().out.strip().count("\n") == 0  # the header alone
