"""Every member leaves with a status; members without input set exit code 12, resizing 3 (and names a
section that passes)."""

import math


from postproc import cli
from tests.conftest import beam, rows_from_function


def test_statuses_for_members_missing_on_either_side(run_design):
    members = [beam("OK", 6.0), beam("NOFORCE", 6.0), {**beam("COL", 3.0), "kind": "column"}]
    forces = (rows_from_function("OK", "U", 6.0, lambda x: 100 - 33 * x, n=5)
              + rows_from_function("COL", "U", 3.0, lambda x: 20.0, n=3)
              + rows_from_function("GHOST", "U", 4.0, lambda x: 50 - 25 * x, n=3))
    res = run_design(members, forces)
    status = res.members.set_index("member").status.to_dict()
    assert status == {"OK": "designed", "NOFORCE": "no-forces", "COL": "invalid", "GHOST": "no-geometry"}
    col = res.members.set_index("member").loc["COL"]
    assert "db_long_mm" in col.message and "25.7.2.1" in col.message  # a column without its bars: said why
    assert list(res.members.member[:3]) == ["OK", "NOFORCE", "COL"]  # input order first
    assert res.code == cli.EXIT_UNDESIGNED  # members left without input: not a success


def test_exit_code_12_for_members_without_input_comes_before_3(run_design):
    ok = rows_from_function("OK", "U", 6.0, lambda x: 100 - 33 * x, n=5)
    huge = rows_from_function("SMALL", "U", 6.0, lambda x: 900.0 * (1 - x / 3), n=3)  # over 22.5.1.2
    small = beam("SMALL", 6.0, b_mm=250.0, h_mm=500.0)
    assert run_design([beam("OK", 6.0)], ok).code == cli.EXIT_OK
    assert run_design([beam("OK", 6.0), small], ok + huge).code == cli.EXIT_RESIZE
    assert run_design([beam("OK", 6.0), small, beam("NOFORCE", 6.0)], ok + huge).code == cli.EXIT_UNDESIGNED
    assert run_design([beam("OK", 6.0)], ok + rows_from_function("GHOST", "U", 4.0, lambda x: 50.0, n=3)).code \
        == cli.EXIT_UNDESIGNED
    column = {**beam("COL", 3.0), "kind": "column"}  # without its bars (db_long_mm): invalid, not designed
    assert run_design([beam("OK", 6.0), column], ok + rows_from_function("COL", "U", 3.0, lambda x: 20.0, n=3)).code \
        == cli.EXIT_UNDESIGNED


def test_resize_gives_exit_code_3_and_a_bw_d_that_passes(run_design):
    L, V0 = 6.0, 900.0  # far above the 22.5.1.2 limit of a 250 x 500 section
    res = run_design([beam("SMALL", L, b_mm=250.0, h_mm=500.0)],
                     rows_from_function("SMALL", "U", L, lambda x: V0 * (1 - 2 * x / L), n=3))
    assert res.code == cli.EXIT_RESIZE
    row = res.members.iloc[0]
    assert row.status == "resize" and "22.5.1.2" in row.message
    bd = float(row.message.split("bw*d of about ")[1].split(" mm^2")[0].replace(",", ""))
    # the named bw*d, as a wider web of the same depth, must pass 22.5.1.2 at the critical section
    b_new = math.ceil(bd / 440.0 / 10) * 10
    again = run_design([beam("SMALL", L, b_mm=b_new, h_mm=500.0)],
                       rows_from_function("SMALL", "U", L, lambda x: V0 * (1 - 2 * x / L), n=3))
    assert again.members.iloc[0].status == "designed"


def test_ladder_exhausted_is_a_resize_with_the_reason(run_design, tmp_path):
    cfg = tmp_path / "one.toml"
    cfg.write_text('[detailing]\nladder = [["#10", 2]]\n')
    L, V0 = 6.0, 600.0  # Vu at d = 492 kN: Av/s = 2.23 mm^2/mm, #10 x 2 legs at 64 mm < 75 mm
    res = run_design([beam("B", L)], rows_from_function("B", "U", L, lambda x: V0 * (1 - 2 * x / L), n=3),
                     extra=["--config", str(cfg)])
    row = res.members.iloc[0]
    assert row.status == "resize" and "minimum spacing" in row.message and res.code == cli.EXIT_RESIZE
