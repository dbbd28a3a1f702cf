"""Element chaining (adapters/elements.py): an element-force export, read unedited through
the [elements] section of --map, designs exactly as the member rows of the same frame.

The reference is an independent finite-element library, PyNite (PyNiteFEA on PyPI):
tests/fea_meshed.py analyses a two-bay frame with every member meshed unevenly into
several elements, a point load and a concentrated torque at interior nodes, and writes
its export one row per element end exactly as PyNite reports it (the local end-force
vector, forces acting on the element, N and N*mm, stations in mm from the element's own
node i). The hand-written member rows come from PyNite's own member diagrams.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest

from postproc import cli
from postproc.adapters.csv_tables import KNOWN_COLUMNS
from postproc.adapters.elements import ElementForcesReader, forces_source
from postproc.adapters.errors import InputError
from postproc.adapters.mapping import load_column_map
from postproc.store import Store
from tests import fea_meshed as fm

FORCES = """
[forces]
columns = { case = "lc", V_kN = "fy", N_kN = "fx", T_kNm = "mx", M_kNm = "mz" }
units = { V_kN = "N", N_kN = "N", T_kNm = "N*mm", M_kNm = "N*mm" }
"""
NODES = 'nodes = { file = "nodes.csv", columns = { node = "id", x = "gx", y = "gy", z = "gz" }, unit = "mm" }\n'
# PyNite keeps a horizontal element's local y vertical whatever its direction (Member3D.T),
# so on a reversed beam element V changes sign and M does not
MAPS = {
    # meshed(): the export's member column, node ids and the node table; distances in mm
    "member-column": FORCES.replace('columns = { case', 'columns = { member = "frame", case') + """
[elements]
element = "elem"
station = { column = "pos", unit = "mm" }
sign = "end-forces-xy"
node_i = "n_a"
node_j = "n_b"
members = "column"
""" + NODES,
    # meshed(): a chaining table, end flags, the node of each row and the node table
    "chain-flags": FORCES + """
[elements]
element = "elem"
station = { column = "end", i = "1", j = "2" }
sign = "end-forces-xy"
node = "at_node"
chain = "chain.csv"
""" + NODES,
    # separate(REVERSED): a chaining table and node ids, some elements drawn backwards
    "chain-reversed": FORCES + """
[elements]
element = "elem"
station = { column = "pos", unit = "mm" }
sign = "end-forces-xy"
node_i = "n_a"
node_j = "n_b"
chain = "chain.csv"
reversed_flip = ["V_kN"]
""",
    # separate(REVERSED): the collinear rule on the node table, members named by end nodes
    "collinear-reversed": FORCES + """
[elements]
element = "elem"
station = { column = "pos", unit = "mm" }
sign = "end-forces-xy"
node_i = "n_a"
node_j = "n_b"
members = "collinear"
reversed_flip = ["V_kN"]
""" + NODES,
}
REVERSED = ("B1e2", "B1e4", "B2e1", "B2e5", "B2e6")  # the first and last of B2 among them
RULE_NAMES = {"B1": "T1-T2", "B2": "T2-T3", "C1": "N1-T1", "C2": "N2-T2", "C3": "N3-T3"}
MEMBER_NUMBERS = ["vu_design_i_kN", "vu_design_j_kN", "phi_vc_kN", "phi_vn_limit_kN", "utilization",
                  "stirrups_total", "stirrup_mass_kg"]


@pytest.fixture(scope="module")
def models():
    meshed, separate = fm.meshed(), fm.separate(REVERSED)
    fm.sanity(meshed)
    fm.sanity(separate)
    return {"meshed": meshed, "separate": separate}


def run(folder, forces: pd.DataFrame, members: pd.DataFrame, map_text: str | None = None,
        files: dict[str, pd.DataFrame] | None = None, capsys=None):
    """`shearpost run` on the frame; the members, zones and station trace of the design."""
    folder.mkdir(parents=True, exist_ok=True)
    members.to_csv(folder / "members.csv", index=False)
    fm.cases_table().to_csv(folder / "cases.csv", index=False)
    forces.to_csv(folder / "forces.csv", index=False)
    for name, df in (files or {}).items():
        df.to_csv(folder / name, index=False)
    argv = ["run", "--members", str(folder / "members.csv"), "--forces", str(folder / "forces.csv"),
            "--cases", str(folder / "cases.csv"), "--store", str(folder / "store"), "--out", str(folder / "out"),
            "--json", "--no-report"]
    if map_text is not None:
        (folder / "map.toml").write_text(map_text)
        argv += ["--map", str(folder / "map.toml")]
    code = cli.main(argv)
    err = capsys.readouterr().err if capsys else ""
    assert code in (cli.EXIT_OK, cli.EXIT_UNDESIGNED), err  # the frame's columns carry no bars: invalid, exit 12
    run_ = Store(folder / "store").latest()
    return {"members": pd.read_csv(folder / "out" / "members.csv"), "zones": pd.read_csv(folder / "out" / "zones.csv"),
            "stations": pq.read_table(run_.design_path / "stations").to_pandas(),
            "warnings": run_.manifest()["warnings"]}


@pytest.fixture(scope="module")
def hand(models, tmp_path_factory):
    """The design from member rows written from PyNite's member diagrams."""
    return run(tmp_path_factory.mktemp("hand"), fm.member_rows(models["meshed"]), fm.members_table())


def inputs_for(variant: str, models) -> tuple[pd.DataFrame, dict[str, pd.DataFrame], pd.DataFrame]:
    model = models["meshed" if variant in ("member-column", "chain-flags") else "separate"]
    files = {"nodes.csv": fm.node_rows(model)}
    members = fm.members_table()
    if variant == "chain-flags":
        chain = [{"member": name, "element": el, "order": k} for name, phys in model.members.items()
                 for k, el in enumerate(phys.sub_members, start=1)]
        files["chain.csv"] = pd.DataFrame(chain).sample(frac=1.0, random_state=4)  # any row order
    if variant == "chain-reversed":
        files["chain.csv"] = fm.chain_table()
    if variant == "collinear-reversed":
        members["member"] = members["member"].map(RULE_NAMES)
    return fm.element_rows(model), files, members


def differences(a: dict, b: dict) -> float:
    """Largest difference between two designs of the same members: every number of
    members.csv and of the station trace; statuses, combinations and zones must agree."""
    ma, mb = a["members"].set_index("member").sort_index(), b["members"].set_index("member").sort_index()
    assert list(ma.index) == list(mb.index)
    assert (ma.status == mb.status).all() and (ma.crit_i.fillna("") == mb.crit_i.fillna("")).all()
    assert (ma.governing_case.fillna("") == mb.governing_case.fillna("")).all()
    pd.testing.assert_frame_equal(a["zones"].sort_values(["member", "zone"]).reset_index(drop=True),
                                  b["zones"].sort_values(["member", "zone"]).reset_index(drop=True))
    worst = float(np.nanmax(np.abs(ma[MEMBER_NUMBERS].to_numpy(float) - mb[MEMBER_NUMBERS].to_numpy(float))))
    key = ["member", "x_mm", "side"]
    sa, sb = a["stations"].sort_values(key).reset_index(drop=True), b["stations"].sort_values(key).reset_index(drop=True)
    assert len(sa) == len(sb)
    np.testing.assert_allclose(sa.x_mm, sb.x_mm, rtol=0, atol=1e-6)
    assert (sa.governing_case == sb.governing_case).all()
    numbers = [c for c in sa.columns if c not in key and sa[c].dtype.kind == "f"]
    return max(worst, float(np.nanmax(np.abs(sa[numbers].to_numpy() - sb[numbers].to_numpy()))))


@pytest.mark.parametrize("variant", list(MAPS))
def test_chained_design_equals_design_from_member_rows(variant, models, hand, tmp_path, capsys):
    forces, files, members = inputs_for(variant, models)
    chained = run(tmp_path, forces, members, MAPS[variant], files, capsys)
    if variant == "collinear-reversed":
        back = {v: k for k, v in RULE_NAMES.items()}
        for t in ("members", "zones", "stations"):
            chained[t]["member"] = chained[t]["member"].map(back)
    # the same frame from PyNite's member diagrams: the rows differ by float round-off and, at
    # the two loaded nodes, by the 1e-6 mm either side where the hand rows take the limits
    assert differences(chained, hand) < 1e-6
    assert any("forces chained from 17 elements into 5 members" in w for w in chained["warnings"])
    if variant == "collinear-reversed":  # B2: three of its six elements drawn backwards
        assert any(w.startswith("member 'T2-T3': as many of its elements run one way") for w in chained["warnings"])
    assert not any("turns sign" in w for w in chained["warnings"])  # the sign rule is right


def test_a_member_drawn_from_its_end_j_is_read_from_end_i_by_the_members_coordinates(hand, tmp_path, capsys):
    """PyNite's frame with every element of B2 drawn from T3 towards T2 (so most of them, all, run
    from the member's end j): read by node coordinates and the export's member column, B2 would
    run T3 to T2, mirrored against members.csv. With the members' end coordinates (T2 = (6, 3.5,
    0) m, T3 = (14, 3.5, 0) m in PyNite's axes, z up in ours) it is read from end i and designs as the
    member rows of PyNite's member diagrams; without them the run says how it chose."""
    model = fm.separate(tuple(f"B2e{k}" for k in range(1, 7)))
    forces = fm.element_rows(model)
    forces["frame"] = forces["elem"].str.split("e").str[0]  # the export's member column: B1, B2, C1, ...
    files = {"nodes.csv": fm.node_rows(model)}
    # PyNite's Y is up; the members table's z is (README): the node table read with its axes named so
    map_text = MAPS["member-column"].replace('y = "gy", z = "gz"', 'y = "gz", z = "gy"') + 'reversed_flip = ["V_kN"]\n'
    members = fm.members_table()
    x, top = np.array(fm.XS) / 1e3, fm.HEIGHT / 1e3  # m
    ends = {"B1": (x[0], top, x[1], top), "B2": (x[1], top, x[2], top),
            **{f"C{k}": (x[k - 1], 0.0, x[k - 1], top) for k in (1, 2, 3)}}
    for name, (xi, zi, xj, zj) in ends.items():
        members.loc[members.member == name, ["x_i_m", "y_i_m", "z_i_m", "x_j_m", "y_j_m", "z_j_m"]] = \
            [xi, 0.0, zi, xj, 0.0, zj]
    chained = run(tmp_path / "with", forces, members, map_text, files, capsys)
    assert differences(chained, hand) < 1e-6
    assert any("1 member(s) whose elements mostly run from the member's end j to its end i" in w and "(B2)" in w
               for w in chained["warnings"])
    assert not any("match neither" in w or "gives no end coordinates" in w for w in chained["warnings"])
    elsewhere = members.assign(x_i_m=members.x_i_m + 100.0, x_j_m=members.x_j_m + 100.0)  # another origin
    moved = run(tmp_path / "moved", forces, elsewhere, map_text, files, capsys)
    assert any("end coordinates match neither end of the line of 5 member(s)" in w for w in moved["warnings"])
    without = run(tmp_path / "without", forces, fm.members_table(), map_text, files, capsys)
    assert any("gives no end coordinates (x_i_m ... z_j_m) for 5 member(s)" in w for w in without["warnings"])
    b2 = lambda d: d["members"].set_index("member").loc["B2", ["vu_design_i_kN", "vu_design_j_kN"]].tolist()  # noqa
    assert b2(without) == b2(hand)[::-1]  # mirrored: what the warning is about


def test_a_chain_listed_from_its_end_j_is_warned_about(tmp_path, capsys):
    """A chaining table that lists every element of a member from its end j (each element then
    runs against the table's order) is read end for end: the run says so, naming the member."""
    chain = fm.chain_table()
    b2 = chain.member == "B2"
    chain.loc[b2, "order"] = chain.loc[b2, "order"].max() + 1 - chain.loc[b2, "order"]  # listed from T3
    chained = run(tmp_path, fm.element_rows(fm.separate()), fm.members_table(), MAPS["chain-reversed"],
                  {"chain.csv": chain}, capsys)
    assert any("1 member(s) whose elements all run against the chaining table's order (B2)" in w
               for w in chained["warnings"])


def test_the_readme_example_as_written(models, hand, tmp_path, capsys):
    """The map file of README "Element-force exports", unchanged, on the export of the frame
    drawn with reversed elements; the run's manifest records the chaining table."""
    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    block = text[text.index("    [forces]                          # as above"):text.index("How elements make members")]
    map_text = "\n".join(line[4:] for line in block.splitlines())
    forces, files, members = inputs_for("chain-reversed", models)
    chained = run(tmp_path, forces, members, map_text, files, capsys)
    assert differences(chained, hand) < 1e-6
    manifest = Store(tmp_path / "store").latest().manifest()
    assert manifest["inputs"]["element_chain"]["path"].endswith("chain.csv")


def chained_rows(folder, forces, map_text, files, lengths=None, warnings=None, ends_m=None) -> pd.DataFrame:
    folder.mkdir(parents=True, exist_ok=True)
    forces.to_csv(folder / "forces.csv", index=False)
    for name, df in files.items():
        df.to_csv(folder / name, index=False)
    (folder / "map.toml").write_text(map_text)
    cmap = load_column_map(folder / "map.toml", KNOWN_COLUMNS)
    reader = forces_source(folder / "forces.csv", cmap, lengths, warnings=warnings, ends_m=ends_m)
    assert isinstance(reader, ElementForcesReader)
    return reader.read_all().to_pandas()


@pytest.mark.parametrize("variant", ["member-column", "chain-reversed"])
def test_chained_rows_equal_the_member_diagrams(variant, models, tmp_path):
    """Every chained row, V, N, T and M, against PyNite's physical-member diagrams of the
    meshed frame: the per-end sign rule, the stations and the order at the nodes."""
    forces, files, members = inputs_for(variant, models)
    lengths = dict(zip(members.member, members.length_m))
    got = chained_rows(tmp_path, forces, MAPS[variant], files, lengths)
    ref = fm.member_rows(models["meshed"])
    for (member, case), g in got.groupby(["member", "case"], sort=False):
        r = ref[(ref.member == member) & (ref.case == case)]
        # two rows at every node between elements (one at the ends), the left limit first
        nodes = np.array(fm.node_positions()[member]) / 1e3
        assert np.allclose(g.x_m.to_numpy(), np.r_[nodes[0], np.repeat(nodes[1:-1], 2), nodes[-1]], atol=1e-12)
        left = r.drop_duplicates(["x_m"], keep="first").set_index("x_m")
        right = r.drop_duplicates(["x_m"], keep="last").set_index("x_m")
        first = g.iloc[np.r_[True, np.diff(g.x_m.to_numpy()) != 0]].set_index("x_m")
        second = g.iloc[np.r_[np.diff(g.x_m.to_numpy()) != 0, True]].set_index("x_m")
        for q, scale in (("V_kN", 1.0), ("N_kN", 1.0), ("T_kNm", 1.0), ("M_kNm", 1.0)):
            # PyNite's diagrams: V, N, T to 1e-9 kN; the limits at x -/+ 1e-6 mm of a loaded node differ
            # from the node by slope x 1e-6 mm (30 N/mm: 3e-8 kN; M: V x 1e-9 m)
            np.testing.assert_allclose(first[q].to_numpy(), left.loc[first.index, q].to_numpy() * scale, atol=1e-6)
            np.testing.assert_allclose(second[q].to_numpy(), right.loc[second.index, q].to_numpy() * scale, atol=1e-6)


def test_point_load_and_torque_at_interior_nodes_stay_jumps(models, tmp_path):
    forces, files, members = inputs_for("chain-reversed", models)
    got = chained_rows(tmp_path, forces, MAPS["chain-reversed"], files, dict(zip(members.member, members.length_m)))
    at = got[(got.member == "B2") & (got.case == "L") & np.isclose(got.x_m, 2.5)]
    assert len(at) == 2
    # left limit first; the jump is PyNite's 120 kN point load (fea_meshed.P_L), V falling by P
    assert at.V_kN.iloc[0] - at.V_kN.iloc[1] == pytest.approx(fm.P_L / 1e3, abs=1e-6)
    at = got[(got.member == "B1") & (got.case == "D") & np.isclose(got.x_m, 3.0)]
    # the 15 kN*m torque at B1's midspan (fea_meshed.TORQUE): T steps by -15 kN*m, and by symmetry
    # of the beam's torsional restraint each side carries half
    assert at.T_kNm.iloc[1] - at.T_kNm.iloc[0] == pytest.approx(fm.TORQUE / 1e6, abs=1e-6)
    assert at.T_kNm.iloc[0] == pytest.approx(-fm.TORQUE / 2e6, abs=1e-6)


def test_reversed_elements_without_a_rule_are_refused(models, tmp_path):
    forces, files, members = inputs_for("chain-reversed", models)
    text = MAPS["chain-reversed"].replace('reversed_flip = ["V_kN"]\n', "")
    with pytest.raises(InputError, match=r"element 'B1e2' runs against its member 'B1'.*reversed_flip"):
        chained_rows(tmp_path, forces, text, files)


def test_a_wrong_reversal_rule_is_warned_about(tmp_path):
    """A column element drawn downwards: PyNite turns a vertical element's local y with it
    (Member3D.T), so there M changes sign and V does not. With the beams' rule ["V_kN"], M
    turns sign exactly at the node next to it, which the reader reports."""
    model = fm.separate(("C1e2",))
    forces = fm.element_rows(model)
    warnings: list[str] = []
    text = MAPS["chain-reversed"]
    got = chained_rows(tmp_path, forces, text, {"chain.csv": fm.chain_table()}, warnings=warnings)
    # one node, three cases
    assert any(w.startswith("M_kNm turns sign exactly across a node between elements (3 times") and "members C1" in w
               for w in warnings)
    # and with the right rule for that element, the chained rows are PyNite's member diagrams
    ref = fm.member_rows(fm.meshed())
    warnings.clear()
    right = chained_rows(tmp_path / "right", forces, text.replace('["V_kN"]', '["M_kNm"]'),
                         {"chain.csv": fm.chain_table()}, warnings=warnings)
    c1 = right[(right.member == "C1") & (right.case == "W")].drop_duplicates("x_m")
    r1 = ref[(ref.member == "C1") & (ref.case == "W")]
    np.testing.assert_allclose(c1[["V_kN", "N_kN", "M_kNm"]].to_numpy(), r1[["V_kN", "N_kN", "M_kNm"]].to_numpy(),
                               atol=1e-6)
    assert not any("turns sign" in w for w in warnings)
    del got


def test_end_forces_read_as_section_forces_are_warned_about_by_v_alone(models, tmp_path):
    """PyNite's end forces (the forces acting on each element at its nodes) read with sign =
    "section" from an export of V alone: at every node between elements V then turns sign
    exactly (+F at one element's end j, -F at the next one's end i, for the same section), a
    concentrated load of twice the shear at each node. With no M column to show it, V does."""
    forces = fm.element_rows(models["meshed"]).drop(columns=["fx", "fz", "mx", "my", "mz"])  # V alone
    text = MAPS["member-column"].replace('V_kN = "fy", N_kN = "fx", T_kNm = "mx", M_kNm = "mz"', 'V_kN = "fy"') \
        .replace('units = { V_kN = "N", N_kN = "N", T_kNm = "N*mm", M_kNm = "N*mm" }', 'units = { V_kN = "N" }') \
        .replace('sign = "end-forces-xy"', 'sign = "section"')
    warnings: list[str] = []
    chained_rows(tmp_path, forces, text, {"nodes.csv": fm.node_rows(models["meshed"])}, warnings=warnings)
    assert any(w.startswith("V_kN turns sign exactly across a node between elements") and "B1" in w and "B2" in w
               for w in warnings)
    warnings.clear()  # the right rule: no such warning
    chained_rows(tmp_path / "right", forces, text.replace('sign = "section"', 'sign = "end-forces-xy"'),
                 {"nodes.csv": fm.node_rows(models["meshed"])}, warnings=warnings)
    assert not any("turns sign" in w for w in warnings)


# ---- small exports worked by hand ---------------------------------------------------

# A simply supported beam, 6 m, 10 kN/m down, 2 kN of tension: V(x) = 30 - 10x,
# M(x) = 30x - 5x^2 (sagging), N = 2 (statics of a simple beam). Three elements of 2.0, 1.5
# and 2.5 m; the export gives the forces on each element at its nodes, local y up:
# end i Fy = V, Fx = -N, Mz = -M; end j Fy = -V, Fx = N, Mz = M (the free body of each element).
SPAN = [("e1", 0.0, 2.0), ("e2", 2.0, 3.5), ("e3", 3.5, 6.0)]


def V(x):
    return 30.0 - 10.0 * x


def M(x):
    return 30.0 * x - 5.0 * x * x


def hand_export(reversed_=(), transverse_turns=False) -> pd.DataFrame:
    """The beam's export; an element in ``reversed_`` runs from the far node back. Its section
    forces in its own axes: N the same, V negated where its transverse axis is kept (M the
    same), M negated where the axis turns with it (V the same)."""
    rows = []
    for name, x0, x1 in SPAN:
        L = x1 - x0
        if name in reversed_:
            sv, sm = (1.0, -1.0) if transverse_turns else (-1.0, 1.0)
            ends = [(0.0, sv * V(x1), sm * M(x1)), (L, sv * V(x0), sm * M(x0))]
        else:
            ends = [(0.0, V(x0), M(x0)), (L, V(x1), M(x1))]
        for k, (pos, v, m) in enumerate(ends):
            s = 1.0 if k == 0 else -1.0  # end i: F = +V, -N, -M; end j: -V, +N, +M
            rows.append({"el": name, "lc": "D", "d": pos, "end": "ij"[k], "Fy": s * v, "Fx": -s * 2.0,
                         "Mz": -s * m})
    return pd.DataFrame(rows)


def hand_map(extra: str = "", station: str = '{ column = "d", unit = "m" }', sign: str = '"end-forces-xy"') -> str:
    return f"""
[forces]
columns = {{ case = "lc", V_kN = "Fy", N_kN = "Fx", M_kNm = "Mz" }}
[elements]
element = "el"
station = {station}
sign = {sign}
chain = "chain.csv"
{extra}"""


def hand_chain(reversed_=(), lengths=False) -> pd.DataFrame:
    rows = [{"member": "G", "element": n, "order": 10 * (k + 1), "reversed": "yes" if n in reversed_ else ""}
            | ({"length_m": x1 - x0} if lengths else {}) for k, (n, x0, x1) in enumerate(SPAN)]
    return pd.DataFrame(rows)


def expected_rows() -> pd.DataFrame:
    xs = [0.0, 2.0, 2.0, 3.5, 3.5, 6.0]
    return pd.DataFrame({"x_m": xs, "V_kN": [V(x) for x in xs], "N_kN": 2.0, "M_kNm": [M(x) for x in xs]})


@pytest.mark.parametrize("turns", [False, True], ids=["axis-kept", "axis-turns"])
def test_reversed_element_by_hand(turns, tmp_path):
    rule = '["M_kNm"]' if turns else '["V_kN"]'
    got = chained_rows(tmp_path, hand_export(("e2",), turns), hand_map(f"reversed_flip = {rule}"),
                       {"chain.csv": hand_chain(("e2",))}, {"G": 6.0})
    exp = expected_rows()
    np.testing.assert_allclose(got[["x_m", "V_kN", "N_kN", "M_kNm"]].to_numpy(), exp.to_numpy(), atol=1e-12)
    assert (got.T_kNm == 0).all()  # no torsion column: zero


def test_end_flags_with_lengths_from_the_chain_table(tmp_path):
    got = chained_rows(tmp_path, hand_export(), hand_map(station='{ column = "end", i = "i", j = "j" }'),
                       {"chain.csv": hand_chain(lengths=True)}, {"G": 6.0})
    np.testing.assert_allclose(got[["x_m", "V_kN", "N_kN", "M_kNm"]].to_numpy(), expected_rows().to_numpy(), atol=1e-12)


def test_section_forces_with_stations_inside_elements_and_lengths_snapped(tmp_path):
    """An export already in section forces, with a station inside each element, in mm; e2's
    last station 0.4 mm long (within the 1 mm tolerance): its rows are still its ends, and
    the member's nodes are scaled onto members.csv's length, both rows at a node at one x."""
    rows = []
    for name, x0, x1 in SPAN:
        for xl in (0.0, (x1 - x0) / 3, x1 - x0):
            mm = round(xl * 1e3) + (0.4 if name == "e2" and xl == x1 - x0 else 0.0)
            rows.append({"el": name, "lc": "D", "d": mm, "Fy": V(x0 + xl), "Fx": 2.0, "Mz": M(x0 + xl)})
    text = hand_map(station='{ column = "d", unit = "mm" }', sign='"section"')
    got = chained_rows(tmp_path, pd.DataFrame(rows), text, {"chain.csv": hand_chain()}, {"G": 6.0})
    scale = 6.0 / 6.0004
    x = got.x_m.to_numpy()
    assert x[0] == 0.0 and x[-1] == 6.0 and x[2] == x[3] and x[5] == x[6]  # exactly one x at a node
    np.testing.assert_allclose(x, np.array([0.0, 0.667, 2.0, 2.0, 2.5, 3.5004, 3.5004, 4.3334, 6.0004]) * scale,
                               atol=1e-9)
    np.testing.assert_allclose(got.V_kN, [V(x0 + xl) for _, x0, x1 in SPAN for xl in (0.0, (x1 - x0) / 3, x1 - x0)])


# the hand beam with an export member column, node ids and a node table (no chaining table)
BY_NODES = """
[forces]
columns = { member = "beam", case = "lc", V_kN = "Fy", N_kN = "Fx", M_kNm = "Mz" }
[elements]
element = "el"
station = { column = "d", unit = "m" }
sign = "end-forces-xy"
node_i = "na"
node_j = "nb"
nodes = "nodes.csv"
members = "column"
reversed_flip = ["V_kN"]
"""


def test_a_member_of_one_element_drawn_from_its_end_j_is_oriented_by_the_members_coordinates(tmp_path):
    """A 6 m member as one element 'g' drawn from node D (x = 16 m) back to node A (x = 10 m), local y up
    (so V is negated in its own axes, M is not), carrying V(x) = 40 - 10x, M(x) = 40x - 5x^2 from end A
    (not symmetric: read end for end it would be V = 20 - 10x). With the members table's ends (A, then
    D) it reads V(0) = 40 and V(6) = -20 kN from end i. A lone element has no neighbour to tell its
    direction from the shared node: the line's orientation gives it."""
    v_of, m_of = (lambda x: 40.0 - 10.0 * x), (lambda x: 40.0 * x - 5.0 * x * x)
    rows = []
    for k, (pos, v, m) in enumerate([(0.0, -v_of(6.0), m_of(6.0)), (6.0, -v_of(0.0), m_of(0.0))]):
        s = 1.0 if k == 0 else -1.0
        rows.append({"el": "g", "beam": "G", "na": "D", "nb": "A", "lc": "D", "d": pos, "Fy": s * v,
                     "Fx": -s * 2.0, "Mz": -s * m})
    nodes = pd.DataFrame({"node": ["A", "D"], "x": [10.0, 16.0], "y": 3.0, "z": 0.0})
    warnings: list[str] = []
    got = chained_rows(tmp_path, pd.DataFrame(rows), BY_NODES, {"nodes.csv": nodes}, {"G": 6.0}, warnings,
                       ends_m={"G": np.array([10.0, 3.0, 0.0, 16.0, 3.0, 0.0])})
    np.testing.assert_allclose(got[["x_m", "V_kN", "N_kN", "M_kNm"]].to_numpy(),
                               [[0.0, 40.0, 2.0, 0.0], [6.0, -20.0, 2.0, 60.0]], atol=1e-12)
    assert any("1 member(s) whose elements mostly run from the member's end j" in w for w in warnings)


def test_the_node_table_finds_direction_and_order_by_geometry(tmp_path):
    """Elements in no particular order with a member column: the node coordinates order them;
    the member runs the way most of its elements do."""
    ex = hand_export(("e2",))
    ex["beam"] = "G"
    ex["na"] = ex.el.map({"e1": "A", "e2": "C", "e3": "C"})
    ex["nb"] = ex.el.map({"e1": "B", "e2": "B", "e3": "D"})
    nodes = pd.DataFrame({"node": list("ABCD"), "x": [10.0, 12.0, 13.5, 16.0], "y": 3.0, "z": 0.0})
    got = chained_rows(tmp_path, ex.iloc[::-1], BY_NODES, {"nodes.csv": nodes}, {"G": 6.0})
    np.testing.assert_allclose(got[["x_m", "V_kN", "N_kN", "M_kNm"]].to_numpy(), expected_rows().to_numpy(), atol=1e-12)


def test_a_tie_of_directions_starts_at_the_least_coordinates(tmp_path):
    ex = hand_export(("e2",))[lambda d: d.el != "e3"]
    ex["na"], ex["nb"] = ex.el.map({"e1": "A", "e2": "C"}), ex.el.map({"e1": "B", "e2": "B"})
    nodes = pd.DataFrame({"node": list("ABC"), "x": [10.0, 12.0, 13.5], "y": 3.0})
    text = hand_map('node_i = "na"\nnode_j = "nb"\nnodes = "nodes.csv"\nreversed_flip = ["V_kN"]\n') \
        .replace('chain = "chain.csv"', 'members = "collinear"')
    warnings: list[str] = []
    got = chained_rows(tmp_path, ex, text, {"nodes.csv": nodes}, {"A-C": 3.5}, warnings)
    assert set(got.member) == {"A-C"}
    assert any("member 'A-C': as many of its elements run one way as the other" in w for w in warnings)
    np.testing.assert_allclose(got.V_kN, [V(x) for x in (0.0, 2.0, 2.0, 3.5)], atol=1e-12)


# ---- errors: file, line and column ----------------------------------------------------

def error_of(tmp_path, export, text, files, lengths=None) -> InputError:
    with pytest.raises(InputError) as info:
        chained_rows(tmp_path, export, text, files, lengths)
    return info.value


def test_broken_chain_names_the_chain_line(tmp_path):
    ex = hand_export()
    ex["na"], ex["nb"] = ex.el.map({"e1": "A", "e2": "B", "e3": "C"}), ex.el.map({"e1": "B", "e2": "C", "e3": "D"})
    chain = hand_chain()
    chain.loc[1, "order"], chain.loc[2, "order"] = 30, 20  # e3 before e2: e1 and e3 share no node
    err = error_of(tmp_path, ex, hand_map('node_i = "na"\nnode_j = "nb"\n'), {"chain.csv": chain})
    assert "broken chain: element 'e1' (nodes 'A', 'B') and the next element 'e3'" in str(err)
    assert err.file.endswith("chain.csv") and err.line == 4 and err.column == "element"


def test_an_element_in_two_members(tmp_path):
    chain = pd.concat([hand_chain(), pd.DataFrame([{"member": "H", "element": "e2", "order": 1}])])
    err = error_of(tmp_path, hand_export(), hand_map(), {"chain.csv": chain})
    assert "element 'e2' is in two members: 'G' and 'H'" in str(err) and err.line == 5


def test_an_element_under_two_member_ids_in_the_export(tmp_path):
    ex = hand_export()
    ex["beam"], ex["na"], ex["nb"] = "G", ex.el.map({"e1": "A", "e2": "B", "e3": "C"}), ex.el.map(
        {"e1": "B", "e2": "C", "e3": "D"})
    ex.loc[3, "beam"] = "H"  # line 5: e2's end j
    nodes = pd.DataFrame({"node": list("ABCD"), "x": [0.0, 2.0, 3.5, 6.0], "y": 0.0})
    text = hand_map('node_i = "na"\nnode_j = "nb"\nnodes = "nodes.csv"\nmembers = "column"\n') \
        .replace('chain = "chain.csv"\n', "").replace('columns = { case', 'columns = { member = "beam", case')
    err = error_of(tmp_path, ex, text, {"nodes.csv": nodes})
    assert "element 'e2' appears in two members: 'G' and 'H'" in str(err)
    assert err.line == 4 and err.column == "beam"  # its first row


def test_a_missing_element_is_a_gap(tmp_path):
    ex = hand_export()[lambda d: d.el != "e2"]
    chain = hand_chain()[lambda d: d.element != "e2"]
    err = error_of(tmp_path, ex, hand_map(), {"chain.csv": chain}, {"G": 6.0})
    assert "member 'G': its elements add up to 4.5000 m, the members table gives length_m 6 m" in str(err)
    # with node ids the gap is a broken chain
    ex["na"], ex["nb"] = ex.el.map({"e1": "A", "e3": "C"}), ex.el.map({"e1": "B", "e3": "D"})
    err = error_of(tmp_path / "b", ex, hand_map('node_i = "na"\nnode_j = "nb"\n'), {"chain.csv": chain})
    assert "broken chain" in str(err) and err.line == 3  # e3's row of the chaining table


def test_an_element_not_in_the_chain_and_a_chained_element_not_exported(tmp_path):
    err = error_of(tmp_path, hand_export(), hand_map(), {"chain.csv": hand_chain()[lambda d: d.element != "e3"]})
    assert "element 'e3' is not in the chaining table chain.csv" in str(err)
    assert err.file.endswith("forces.csv") and err.line == 6 and err.column == "el"
    err = error_of(tmp_path / "b", hand_export()[lambda d: d.el != "e3"], hand_map(), {"chain.csv": hand_chain()})
    assert "element 'e3' of member 'G' has no rows in the export" in str(err) and err.line == 4


def two_cases() -> pd.DataFrame:
    """The hand export with a second case W, the same forces halved."""
    ex = hand_export()
    w = ex.assign(lc="W", Fy=ex.Fy / 2, Fx=ex.Fx / 2, Mz=ex.Mz / 2)
    return pd.concat([ex, w], ignore_index=True)


def test_missing_and_repeated_element_ends(tmp_path):
    ex = two_cases()
    err = error_of(tmp_path, ex.drop(index=9), hand_map(), {"chain.csv": hand_chain()})  # e2's end j in W
    assert "member 'G', case 'W': element 'e2' has no row at its end j" in str(err)
    assert err.file.endswith("forces.csv") and err.line == 8 and err.column == "el"  # the member's first W row
    err = error_of(tmp_path / "b", pd.concat([ex, ex.iloc[[2]]]), hand_map(), {"chain.csv": hand_chain()})
    assert "element 'e2', case 'D': a second row at this end of the element" in str(err) and err.line == 14
    # one case only: the element's length, from its stations, is then too short
    err = error_of(tmp_path / "c", hand_export().drop(index=3), hand_map(), {"chain.csv": hand_chain(lengths=True)})
    assert "element 'e2': its last station is 0 m, its length 1.5 m (is the row at its end j missing?)" in str(err)


def test_stations_outside_the_element_or_inside_with_a_per_end_rule(tmp_path):
    ex = hand_export()
    ex.loc[5, "d"] = 2.6  # e3 is 2.5 m long
    chain = hand_chain(lengths=True)
    err = error_of(tmp_path, ex, hand_map(), {"chain.csv": chain})
    assert "element 'e3': its last station is 2.6 m, its length 2.5 m" in str(err)
    assert err.line == 6 and err.column == "d"  # e3's first row
    ex.loc[5, "d"] = -0.1
    err = error_of(tmp_path / "b", ex, hand_map(), {"chain.csv": hand_chain()})
    assert "element 'e3': a station -0.1 m before its end i" in str(err)
    ex = pd.concat([hand_export(), hand_export().iloc[[4]].assign(d=1.0)])
    err = error_of(tmp_path / "c", ex, hand_map(), {"chain.csv": chain})
    assert "a row inside the element, where the per-end sign rule 'end-forces-xy' says nothing" in str(err)
    assert err.line == 8


def test_a_bent_member_and_an_unknown_node(tmp_path):
    ex = hand_export()
    ex["na"], ex["nb"] = ex.el.map({"e1": "A", "e2": "B", "e3": "C"}), ex.el.map({"e1": "B", "e2": "C", "e3": "D"})
    nodes = pd.DataFrame({"node": list("ABCD"), "x": [0.0, 2.0, 3.5, 5.99], "y": [0.0, 0.0, 0.0, 0.3]})
    text = hand_map('node_i = "na"\nnode_j = "nb"\nnodes = "nodes.csv"\n')
    err = error_of(tmp_path, ex, text, {"chain.csv": hand_chain(), "nodes.csv": nodes})
    assert "element 'e3' lies 3" in str(err) and "off the line of 'e2'" in str(err)
    err = error_of(tmp_path / "b", ex, text, {"chain.csv": hand_chain(), "nodes.csv": nodes[nodes.node != "C"]})
    assert "node 'C' of element 'e3' is not in the node table nodes.csv" in str(err) and err.column == "na"


@pytest.mark.parametrize("extra, message", [
    ("colour = 1\n", "unknown keys ['colour']"),
    ('reversed_flip = ["N_kN"]\n', "N and T read the same from either end"),
    ("tolerance_mm = 0\n", "more than 0"),
    ('nodes = "nodes.csv"\n', "a node table needs the elements' node ids"),
])
def test_map_file_mistakes(extra, message, tmp_path):
    err = error_of(tmp_path, hand_export(), hand_map(extra), {"chain.csv": hand_chain()})
    assert message in str(err) and err.file.endswith("map.toml")


def test_a_sign_rule_is_required(tmp_path):
    err = error_of(tmp_path, hand_export(), hand_map().replace('sign = "end-forces-xy"\n', ""), {"chain.csv": hand_chain()})
    assert "[elements].sign: required" in str(err)
    err = error_of(tmp_path / "b", hand_export(), hand_map(sign="{ V_kN = [1, 2] }"), {"chain.csv": hand_chain()})
    assert "V_kN must be [factor at end i, factor at end j], each 1 or -1" in str(err)


def test_bad_export_on_the_command_line_writes_nothing(tmp_path, capsys):
    folder = tmp_path / "in"
    folder.mkdir()
    two_cases().drop(index=9).to_csv(folder / "forces.csv", index=False)
    hand_chain().to_csv(folder / "chain.csv", index=False)
    (folder / "map.toml").write_text(hand_map())
    pd.DataFrame([{"member": "G", "length_m": 6.0, "b_mm": 300, "h_mm": 600, "cover_mm": 60, "fc_mpa": 30,
                   "fyt_mpa": 420, "support_i": "column", "support_j": "column"}]).to_csv(folder / "members.csv",
                                                                                           index=False)
    code = cli.main(["run", "--members", str(folder / "members.csv"), "--forces", str(folder / "forces.csv"), "--map",
                     str(folder / "map.toml"), "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == 1 and "element 'e2' has no row at its end j" in err and "nothing was written" in err
    assert not (tmp_path / "out").exists() and not Store(tmp_path / "store").runs()


def test_equal_rows_at_unloaded_nodes_design_as_one_row(tmp_path, capsys):
    """The hand beam's chained rows are exactly equal at its two unloaded nodes (a zero jump);
    the design is the one from member rows with one row at each node."""
    members = pd.DataFrame([{"member": "G", "length_m": 6.0, "b_mm": 300, "h_mm": 600, "cover_mm": 60,
                             "fc_mpa": 30, "fyt_mpa": 420, "support_i": "column", "support_j": "column"}])
    rows = expected_rows().drop_duplicates("x_m").assign(member="G", case="D", T_kNm=0.0)
    cases = pd.DataFrame({"case": ["D"], "type": ["D"]})
    designs = []
    for name, forces, text, files in (("rows", rows, None, {}),
                                      ("chained", hand_export(("e2",)), hand_map('reversed_flip = ["V_kN"]\n'),
                                       {"chain.csv": hand_chain()})):
        folder = tmp_path / name
        folder.mkdir()
        members.to_csv(folder / "members.csv", index=False)
        cases.to_csv(folder / "cases.csv", index=False)
        forces.to_csv(folder / "forces.csv", index=False)
        for f, df in files.items():
            df.to_csv(folder / f, index=False)
        argv = ["run", "--members", str(folder / "members.csv"), "--forces", str(folder / "forces.csv"), "--cases",
                str(folder / "cases.csv"), "--store", str(folder / "store"), "--out", str(folder / "out"), "--json",
                "--no-report"]
        if text:
            (folder / "map.toml").write_text(text)
            argv += ["--map", str(folder / "map.toml")]
        assert cli.main(argv) == 0, capsys.readouterr().err
        designs.append(pd.read_csv(folder / "out" / "members.csv"))
    pd.testing.assert_frame_equal(designs[0], designs[1])
    assert designs[1].status.iloc[0] == "designed"
