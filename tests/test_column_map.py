"""A column-mapping file reads an export laid out differently from our schema, as it is."""

import pandas as pd
import pytest

from postproc.adapters.errors import InputError
from postproc.adapters.mapping import load_column_map, unit_factor
from postproc.adapters.csv_tables import KNOWN_COLUMNS
from postproc import cli
from tests.conftest import beam, rows_from_function, write_inputs

MAP = """
[members]
columns = { member = "Label", length_m = "Span", b_mm = "Width", h_mm = "Depth" }
units = { length_m = "mm", b_mm = "m", h_mm = "m" }

[forces]
columns = { member = "elem_id", case = "load_id", x_m = "pos", V_kN = "shear_z", N_kN = "axial", T_kNm = "torsion" }
units = { x_m = "mm", V_kN = "N", N_kN = "N", T_kNm = "N-mm" }
flip = ["V_kN", "N_kN"]
"""


KIP_N, FT_M, IN_M, PSI_PA = 4448.2216152605, 0.3048, 0.0254, 6894.757293168  # exact SI definitions (NIST SP 811)


def test_unit_factors():
    assert unit_factor("x_m", "mm") == pytest.approx(1e-3)
    assert unit_factor("V_kN", "N") == pytest.approx(1e-3)
    assert unit_factor("V_kN", "kip") == pytest.approx(KIP_N / 1e3)
    assert unit_factor("T_kNm", "N*mm") == pytest.approx(1e-6)
    assert unit_factor("T_kNm", "kip*ft") == pytest.approx(KIP_N * FT_M / 1e3)
    assert unit_factor("fc_mpa", "psi") == pytest.approx(PSI_PA / 1e6)
    assert unit_factor("as_tension_mm2", "in2") == pytest.approx((IN_M * 1e3) ** 2)


@pytest.mark.parametrize("spelling, column, factor", [
    # the spellings of one unit that export tables use, each to its value in our column's unit
    ("kN-m", "T_kNm", 1.0), ("kN*m", "T_kNm", 1.0), ("kNm", "T_kNm", 1.0), ("kN.m", "T_kNm", 1.0),
    ("kN m", "T_kNm", 1.0), ("kN·m", "T_kNm", 1.0), ("N-mm", "T_kNm", 1e-6), ("Nmm", "T_kNm", 1e-6),
    ("kip-ft", "T_kNm", KIP_N * FT_M / 1e3), ("kip-in", "T_kNm", KIP_N * IN_M / 1e3),
    ("N/mm2", "fc_mpa", 1.0), ("N/mm^2", "fc_mpa", 1.0), ("N/mm²", "fc_mpa", 1.0), ("ksi", "fc_mpa", PSI_PA / 1e3),
    ("cm2", "as_tension_mm2", 100.0), ("mm²", "as_tension_mm2", 1.0), ("ft", "length_m", FT_M),
])
def test_unit_spellings(spelling, column, factor):
    assert unit_factor(column, spelling) == pytest.approx(factor)


@pytest.mark.parametrize("unit", ["kN", "furlong-ish", "lb-in", "kN*", "2", ""])
def test_units_of_another_quantity_or_unknown_are_refused(unit):
    with pytest.raises(KeyError, match="unit"):
        unit_factor("T_kNm", unit)  # lb-in: lb is a mass, the moment unit is lbf-in


def test_export_with_other_names_units_and_signs_designs_identically(tmp_path, capsys):
    L = 7.0
    members = [beam("G1", L, face_i_mm=200.0, face_j_mm=200.0), beam("G2", 5.0)]
    ours = (rows_from_function("G1", "C1", L, lambda x: 150 - 40 * x, n=8)
            + rows_from_function("G2", "C1", 5.0, lambda x: 90 - 36 * x, n=8))
    for r in ours:
        r["N_kN"], r["T_kNm"] = 50.0, 2.0  # 50 kN tension and a little torsion
    ref = write_inputs(tmp_path / "ours", members, ours)

    exp_m = pd.DataFrame(members).rename(columns={"member": "Label", "length_m": "Span", "b_mm": "Width", "h_mm": "Depth"})
    exp_m["Span"] *= 1000.0
    exp_m["Width"] /= 1000.0
    exp_m["Depth"] /= 1000.0
    exp_f = pd.DataFrame(ours)
    exp_f = pd.DataFrame({"elem_id": exp_f.member, "load_id": exp_f.case, "pos": exp_f.x_m * 1000.0,
                          "shear_z": -exp_f.V_kN * 1000.0, "axial": -exp_f.N_kN * 1000.0,
                          "torsion": exp_f.T_kNm * 1e6, "remark": "exported"})
    (tmp_path / "exp").mkdir()
    exp_m.to_csv(tmp_path / "exp" / "beams.csv", index=False)
    exp_f.to_csv(tmp_path / "exp" / "frames.csv", index=False)
    (tmp_path / "exp" / "map.toml").write_text(MAP)

    def run(members_csv, forces_csv, out, extra=()):
        code = cli.main(["run", "--members", str(members_csv), "--forces", str(forces_csv), "--store",
                         str(tmp_path / "store"), "--out", str(out), "--json", *extra])
        assert code == 0, capsys.readouterr().err
        return pd.read_csv(out / "members.csv"), pd.read_csv(out / "zones.csv")

    m1, z1 = run(ref["members"], ref["forces"], tmp_path / "o1")
    m2, z2 = run(tmp_path / "exp" / "beams.csv", tmp_path / "exp" / "frames.csv", tmp_path / "o2",
                 ["--map", str(tmp_path / "exp" / "map.toml")])
    pd.testing.assert_frame_equal(m1, m2)
    pd.testing.assert_frame_equal(z1, z2)
    assert (m1.status == "designed").all()


def test_mapping_errors_name_the_file(tmp_path):
    bad = tmp_path / "map.toml"
    bad.write_text('[forces]\nunits = { V_kN = "furlong" }\n')
    with pytest.raises(InputError, match="map.toml.*furlong"):
        load_column_map(bad, KNOWN_COLUMNS)
    bad.write_text('[forces]\ncolumns = { shear = "shear_z" }\n')
    with pytest.raises(InputError, match="'shear', which is not a column"):
        load_column_map(bad, KNOWN_COLUMNS)
    bad.write_text("[forces\n")
    with pytest.raises(InputError, match="not a valid TOML"):
        load_column_map(bad, KNOWN_COLUMNS)
