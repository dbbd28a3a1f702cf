"""Each bad input gives a clear error naming file, line and column, and writes nothing."""

import json

import pandas as pd
import pytest

from postproc import cli
from tests.conftest import beam, rows_from_function, tree_snapshot, write_inputs

GOOD_MEMBERS = [beam("B1", 6.0), beam("B2", 5.0)]
GOOD_FORCES = rows_from_function("B1", "U", 6.0, lambda x: 100 - 30 * x, n=5) + \
    rows_from_function("B2", "U", 5.0, lambda x: 80 - 30 * x, n=5)


def run_cli(tmp_path, members_csv: str | None = None, forces_csv: str | None = None, cases_csv: str | None = None,
            capsys=None):
    paths = write_inputs(tmp_path / "in", GOOD_MEMBERS, GOOD_FORCES)
    if members_csv is not None:
        paths["members"].write_text(members_csv)
    if forces_csv is not None:
        paths["forces"].write_text(forces_csv)
    argv = ["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]),
            "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out")]
    if cases_csv is not None:
        (tmp_path / "in" / "cases.csv").write_text(cases_csv)
        argv += ["--cases", str(tmp_path / "in" / "cases.csv")]
    before = tree_snapshot(tmp_path / "in")
    code = cli.main(argv)
    assert tree_snapshot(tmp_path / "in") == before
    return code


def members_text(edit) -> str:
    df = pd.DataFrame(GOOD_MEMBERS)
    out = edit(df)
    return (df if out is None else out).to_csv(index=False)


def forces_text(edit) -> str:
    df = pd.DataFrame(GOOD_FORCES)
    df = edit(df) if edit else df
    return df.to_csv(index=False)


def _set(col, row, value):
    def edit(df):
        df[col] = df[col].astype(object) if col in df else None
        df.loc[row, col] = value
    return edit


CASES = [
    # (which file, text, expected line, expected column, words in the message)
    ("members", members_text(lambda df: df.drop(columns="b_mm")), 1, "b_mm", "required column is missing"),
    ("members", members_text(_set("h_mm", 1, "deep")), 3, "h_mm", "not a number"),
    ("members", members_text(_set("fc_mpa", 0, "nan")), 2, "fc_mpa", "missing or NaN"),
    ("members", members_text(_set("b_mm", 1, 0)), 3, "b_mm", "greater than zero"),
    ("members", members_text(_set("length_m", 0, -6)), 2, "length_m", "greater than zero"),
    ("members", members_text(_set("d_mm", 0, 650)), 2, "d_mm", "less than h_mm"),
    ("members", members_text(_set("fc_mpa", 1, 15)), 3, "fc_mpa", "19.2.1.1"),
    ("members", members_text(_set("support_j", 0, "pier")), 2, "support_j", "not one of"),
    ("members", members_text(lambda df: df.loc.__setitem__((1, "member"), "B1")), 3, "member", "listed twice"),
    ("forces", forces_text(lambda df: df.assign(x_m=df.x_m.where(df.index != 3, 6.5))), 5, "x_m", "beyond the member length"),
    ("forces", forces_text(lambda df: df.assign(x_m=df.x_m.where(df.index != 0, -0.1))), 2, "x_m", "x_m < 0"),
    ("forces", forces_text(lambda df: pd.concat([df, df.iloc[[2, 2]]]).reset_index(drop=True)), 13, "x_m", "a third row"),
    ("forces", forces_text(lambda df: df.drop(columns="V_kN")), 1, "V_kN", "required column is missing"),
    ("forces", forces_text(None) + "B1,U,2.5,10,99\n", 12, None, "expected 4 fields"),
    ("forces", forces_text(lambda df: df.assign(V_kN=df.V_kN.astype(object).where(df.index != 4, "twelve"))), 6, "V_kN", "not a number"),
    ("forces", forces_text(lambda df: df.assign(V_kN=df.V_kN.where(df.index != 7, float("nan")))), 9, "V_kN", "missing or NaN"),
    ("forces", "", 1, None, "empty"),
    ("forces", "member,case,x_m,V_kN\n", 1, None, "no data rows"),
]


@pytest.mark.parametrize("which,text,line,column,words", CASES, ids=[c[4] for c in CASES])
def test_bad_input_is_named_and_nothing_is_written(tmp_path, capsys, which, text, line, column, words):
    kw = {f"{which}_csv": text}
    code = run_cli(tmp_path, **kw)
    err = capsys.readouterr().err
    assert code == cli.EXIT_INPUT
    assert f"{which}.csv" in err and words in err
    if line is not None:
        assert f"line {line}" in err
    if column is not None:
        assert f"column '{column}'" in err
    assert not (tmp_path / "store").exists() and not (tmp_path / "out").exists()


def test_quoted_comma_is_located_by_line(tmp_path, capsys):
    text = forces_text(lambda df: df.assign(V_kN=df.V_kN.astype(object).where(df.index != 4, "12,5")))
    assert run_cli(tmp_path, forces_csv=text) == cli.EXIT_INPUT
    assert "line 6" in capsys.readouterr().err  # pandas quotes "12,5": a number-like text, not a number


def test_not_utf8_names_the_line(tmp_path, capsys):
    # UTF-8 text (an 'é' on line 2) with a stray byte that no UTF-8 text has on line 4: not a
    # Windows-1252 file either (that guess is only made where no UTF-8 sequence is seen)
    raw = forces_text(None).encode()
    lines = raw.split(b"\n")
    lines[1] = lines[1] + ",\xc3\xa9".encode("latin-1")
    lines[0] = lines[0] + b",note"
    lines[2:] = [line + b"," if line else line for line in lines[2:]]
    lines[3] = lines[3].replace(b"U", b"\xff\xfe")
    (tmp_path / "bad.csv").write_bytes(b"\n".join(lines))
    paths = write_inputs(tmp_path / "in", GOOD_MEMBERS, GOOD_FORCES)
    code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(tmp_path / "bad.csv"),
                     "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == cli.EXIT_INPUT and "line 4" in err and "UTF-8" in err
    assert not (tmp_path / "store").exists()


def test_case_without_type_is_an_error(tmp_path, capsys):
    assert run_cli(tmp_path, cases_csv="case,type\nX,D\n") == cli.EXIT_INPUT
    err = capsys.readouterr().err
    assert "cases.csv" in err and "'U'" in err


def test_unknown_case_type(tmp_path, capsys):
    assert run_cli(tmp_path, cases_csv="case,type\nU,Q\n") == cli.EXIT_INPUT
    err = capsys.readouterr().err
    assert "cases.csv, line 2, column 'type'" in err


def test_fyt_above_420_is_capped_with_a_warning(tmp_path, capsys):
    text = members_text(_set("fyt_mpa", 0, 520))
    paths = write_inputs(tmp_path / "in", GOOD_MEMBERS, GOOD_FORCES)
    paths["members"].write_text(text)
    code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]),
                     "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out"), "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 0
    assert any("B1" in w and "20.2.2.4" in w for w in doc["warnings"])


def test_fyt_a_soft_conversion_above_the_cap_is_capped_without_a_warning(tmp_path, capsys):
    """413.7 MPa (60,002 psi: Grade 60 given in MPa) in an inch-pound run is capped at 60,000 psi
    for shear as any fyt above it is (20.2.2.4), but it is no stronger steel to warn about; 430 MPa
    (62,366 psi, 3.9 % above) is."""
    rows = [dict(m, fyt_mpa=f) for m, f in zip(GOOD_MEMBERS, (413.7, 430.0))] + GOOD_MEMBERS[2:]
    paths = write_inputs(tmp_path / "in", rows, GOOD_FORCES)
    code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]), "--units", "us",
                     "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out"), "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 0
    (said,) = [w for w in doc["warnings"] if "20.2.2.4" in w]
    assert said.startswith("fyt of 1 member(s) capped at 60,000 psi") and GOOD_MEMBERS[1]["member"] in said


def test_several_problems_are_reported_together(tmp_path, capsys):
    def edit(df):
        df.loc[0, "b_mm"] = -1
        df.loc[1, "fc_mpa"] = 10
    assert run_cli(tmp_path, members_csv=members_text(edit)) == cli.EXIT_INPUT
    err = capsys.readouterr().err
    assert "line 2, column 'b_mm'" in err and "line 3, column 'fc_mpa'" in err


def test_existing_run_name_is_refused(tmp_path, capsys):
    paths = write_inputs(tmp_path / "in", GOOD_MEMBERS, GOOD_FORCES)
    argv = ["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]),
            "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out"), "--run", "first", "--json"]
    assert cli.main(argv) == 0
    snap = tree_snapshot(tmp_path / "store")
    assert cli.main(argv) == cli.EXIT_USAGE
    assert "already exists" in capsys.readouterr().err
    assert tree_snapshot(tmp_path / "store") == snap


def _last_station_at(x_last: float):
    """B1's last row (x = 6 m, its length) moved to ``x_last``."""
    def edit(df):
        last = df.index[(df.member == "B1") & (df.x_m == 6.0)]
        df.loc[last, "x_m"] = x_last
        return df
    return edit


def test_station_a_hair_past_the_length_is_read_with_a_notice(tmp_path, capsys):
    """A last station 0.9 mm past the member's length, within the station tolerance (1 mm,
    [stations] tolerance_mm: rows closer than it are one station), is rounding of the length
    or of the station (common practice: exports round both), not a station beyond the
    member: it is read where it is, with one notice naming the member; the stirrups are those
    of the station at the length itself."""
    code = run_cli(tmp_path, forces_csv=forces_text(_last_station_at(6.0009)))
    assert code == 0
    said = " ".join("".join(capsys.readouterr()).split())  # the warnings, wrapped to the terminal
    assert "0.9 mm before node i or past the member's length" in said and "B1" in said
    moved = pd.read_csv(tmp_path / "out" / "zones.csv")
    run_cli(tmp_path / "exact")
    exact = pd.read_csv(tmp_path / "exact" / "out" / "zones.csv")
    pd.testing.assert_frame_equal(moved, exact)  # zones, bars, legs, spacings and counts


def test_station_past_the_length_beyond_the_tolerance_is_an_error(tmp_path, capsys):
    """1.1 mm past: more than the station tolerance, so the force table and the geometry
    disagree; refused, naming the line and the column."""
    assert run_cli(tmp_path, forces_csv=forces_text(_last_station_at(6.0011))) == cli.EXIT_INPUT
    err = capsys.readouterr().err
    assert "line 6, column 'x_m'" in err and "beyond the member length" in err
    assert not (tmp_path / "store").exists()


@pytest.mark.parametrize("ours,header", [("T_kNm", "Torsion"), ("T_kNm", "Mx_kNm"), ("T_kNm", "Torsion [kNm]"),
                                         ("N_kN", "P"), ("N_kN", "Axial_kN"), ("N_kN", "Fx_kN"),
                                         ("Vb_kN", "Vy_kN"), ("Vb_kN", "V3_kN")])
def test_a_force_under_an_export_name_is_refused_not_taken_as_zero(tmp_path, capsys, ours, header):
    """Torsion, axial force and the other shear under the names exports give them (common
    practice: local x along the member, 2/3 or y/z the shear directions), where the table
    does not give our column: read as absent, the quantity would count as zero (less steel);
    refused on line 1 naming the header and the column meant."""
    text = forces_text(lambda df: df.assign(**{header: 10.0}))
    assert run_cli(tmp_path, forces_csv=text) == cli.EXIT_INPUT
    err = " ".join(capsys.readouterr().err.split())
    assert f"line 1, column '{header}'" in err and f"column '{ours}'" in err
    assert not (tmp_path / "store").exists()


def test_an_export_name_beside_our_column_is_only_not_read(tmp_path, capsys):
    """The same names where the table gives our column too: another quantity, named among the
    warnings as not used (the design reads T_kNm)."""
    text = forces_text(lambda df: df.assign(T_kNm=0.0, Torsion=10.0))
    assert run_cli(tmp_path, forces_csv=text) == 0
    assert "Torsion" in " ".join("".join(capsys.readouterr()).split())


def test_a_misspelt_face_offset_is_refused(tmp_path, capsys):
    """face_i for face_i_mm: a face at the node lengthens the clear span and lowers a frame
    beam's Ve (18.6.5.1): refused, naming the column meant."""
    text = members_text(lambda df: df.drop(columns="face_i_mm").assign(face_i=300.0))
    assert run_cli(tmp_path, members_csv=text) == cli.EXIT_INPUT
    err = " ".join(capsys.readouterr().err.split())
    assert "column 'face_i'" in err and "face_i_mm" in err


def test_a_station_a_hair_before_node_i_is_read_as_given(tmp_path, capsys):
    """x = -1.1e-15 m (floating-point noise of an export) is within the station tolerance of node
    i: read as given, not refused; -1.1 mm is refused as before."""
    def first_at(x):
        def edit(df):
            df.loc[(df.member == "B1") & (df.x_m == 0.0), "x_m"] = x
            return df
        return edit
    assert run_cli(tmp_path, forces_csv=forces_text(first_at(-1.1e-15))) == 0
    capsys.readouterr()
    assert run_cli(tmp_path / "far", forces_csv=forces_text(first_at(-0.0011))) == cli.EXIT_INPUT
    assert "station before node i" in capsys.readouterr().err


def test_a_look_alike_of_cover_is_named_where_neither_d_nor_cover_is_given(tmp_path, capsys):
    """Cover_mm for cover_mm and no d_mm: every row lacks both; the message names the header that
    looks like cover_mm, and the count of rows beyond those listed is given."""
    rows = [beam(f"B{k}", 6.0) for k in range(1, 26)]
    text = pd.DataFrame(rows).rename(columns={"cover_mm": "Cover_mm"}).to_csv(index=False)
    assert run_cli(tmp_path, members_csv=text) == cli.EXIT_INPUT
    err = capsys.readouterr().err
    assert "give d_mm or cover_mm; the header has 'Cover_mm' (names are exact)" in err
    assert "... and 5 more problems" in err


def test_an_implausible_value_names_the_unit_of_its_limit(tmp_path, capsys):
    """f'c = 4000 under fc_mpa (psi typed in an MPa column): refused in an SI run at 200 MPa, and in an
    inch-pound run, where the column is read converted, at 200 MPa = 29,007.5 psi: the unit is said."""
    paths = write_inputs(tmp_path / "in", [dict(m, fc_mpa=4000.0) for m in GOOD_MEMBERS], GOOD_FORCES)
    for extra, limit in (([], "beyond 200 MPa, not plausible"), (["--units", "us"], "beyond 29007.5 psi, not plausible")):
        code = cli.main(["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]), *extra,
                         "--store", str(tmp_path / "store"), "--out", str(tmp_path / "out")])
        assert code == cli.EXIT_INPUT and f"column 'fc_mpa': {limit}" in capsys.readouterr().err
