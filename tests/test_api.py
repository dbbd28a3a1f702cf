"""The Python API: the same tables as the command line, from DataFrames or paths, and a store
opened for runs, comparisons and schedules."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pyarrow.parquet as pq
import pytest

import postproc
from postproc import cli, govern
from postproc.api import NothingDesigned
from postproc.engine import MEMBER_COLUMNS, ZONE_COLUMNS
from tests.conftest import beam, rows_from_function

SAMPLE = cli.sample_folder()


@pytest.fixture(scope="module")
def both(tmp_path_factory):
    """The demo designed by `shearpost demo` and by postproc.design on DataFrames."""
    tmp = tmp_path_factory.mktemp("api")
    assert cli.main(["demo", "--store", str(tmp / "store"), "--out", str(tmp / "cli"), "--json", "--no-report"]) == 0
    frames = {n: pd.read_csv(SAMPLE / f"{n}.csv") for n in ("members", "forces", "cases")}
    result = postproc.design(frames["members"], frames["forces"], cases=frames["cases"])
    return tmp, result


def test_api_on_the_demo_gives_the_cli_tables(both):
    tmp, result = both
    assert list(result.members.columns) == MEMBER_COLUMNS and list(result.zones.columns) == ZONE_COLUMNS
    written = result.write(tmp / "api")
    for path in written:  # byte for byte what the command line wrote
        assert path.read_bytes() == (tmp / "cli" / path.name).read_bytes(), path.name
    cli_members = pd.read_csv(tmp / "cli" / "members.csv")
    pd.testing.assert_frame_equal(pd.read_csv(tmp / "api" / "members.csv"), cli_members)
    assert len(result.members) == len(pd.read_csv(SAMPLE / "members.csv"))  # every member, with a status


def test_stations_and_store_views(both):
    tmp, result = both
    st = result.stations
    assert {"member", "x_mm", "vu_kN", "phi_vn_kN", "utilization"} <= set(st.columns)
    assert set(st.member) == set(result.members.member[result.members.status.isin(["designed", "deep-beam"])])
    store = postproc.open_store(tmp / "store")
    runs = store.runs()
    assert len(runs) == 1 and bool(runs.designed.iloc[0])
    stored = store.run()
    pd.testing.assert_frame_equal(stored.members.reset_index(drop=True), result.members.reset_index(drop=True))
    ranked = store.governing(top=3)
    assert ranked.status.iloc[0] in ("designed", "resize")  # nothing needs action in the demo: by utilization
    assert list(ranked.utilization) == sorted(ranked.utilization, reverse=True)
    with pytest.raises(govern.UnknownFilter, match="L99: no member has that level; the levels: .*L2"):
        store.governing(levels=["L99"])  # a typo selects nothing: refused, not an empty ranking
    diff = store.compare(runs.run.iloc[0], runs.run.iloc[0])
    assert diff.layout_changes.empty and diff.status_changes.empty
    sched = store.schedule()
    assert len(sched.marks) > 0 and sched.bars["count"].sum() > 0
    steps = store.explain("L2-SB-23")
    assert any(s.clause == "9.4.3.2" for s in steps)


def test_paths_a_named_store_and_a_settings_dict(tmp_path):
    result = postproc.design(SAMPLE / "members.csv", SAMPLE / "forces.csv", SAMPLE / "cases.csv",
                             config={"detailing": {"first_stirrup_mm": 75}}, store=tmp_path / "s", run="api-1")
    assert result.name == "api-1" and (tmp_path / "s" / "api-1" / "design").is_dir()
    pos = pq.read_table(result.run.design_path / "stirrups.parquet").to_pandas()
    assert pos[pos.member == "L2-SB-23"].x_mm.min() == pytest.approx(75)  # the settings reached the design
    assert postproc.open_store(tmp_path / "s").run("api-1").zones.equals(result.zones)


def test_no_member_designed_raises_with_the_ids_of_both_sides():
    members = pd.DataFrame([beam("B1", 6.0), beam("B2", 6.0)])
    forces = pd.DataFrame(rows_from_function("Frame 1", "U", 6.0, lambda x: 100 - 30 * x, n=5))
    with pytest.raises(NothingDesigned) as info:
        postproc.design(members, forces)
    text = str(info.value)
    assert "no member was designed" in text and "'B1'" in text and "'Frame 1'" in text
    assert set(info.value.design.members.status) == {"no-forces", "no-geometry"}


def test_bad_input_types_are_named():
    with pytest.raises(TypeError, match="members: expected a pandas DataFrame or a path"):
        postproc.design([1, 2], pd.DataFrame())


def test_import_changes_no_process_setting_and_loads_no_numpy():
    code = ("import os, sys; before = dict(os.environ); import postproc; "
            "assert dict(os.environ) == before, 'environment changed'; "
            "assert 'numpy' not in sys.modules, 'numpy loaded by import postproc'; print('ok')")
    env = {k: v for k, v in os.environ.items() if not k.endswith("_NUM_THREADS")}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=60)
    assert out.returncode == 0 and out.stdout.strip() == "ok", out.stderr


def test_the_readme_example_runs(tmp_path):
    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    code = re.search(r"```python\n(.*?)```", readme, re.S).group(1)
    out = subprocess.run([sys.executable, "-c", code], cwd=tmp_path, capture_output=True, text=True, timeout=300,
                         env={**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[1])})
    assert out.returncode == 0, out.stderr[-3000:]
    assert "designed" in out.stdout and "#10" in out.stdout
    assert (tmp_path / "results" / "report.html").exists() and (tmp_path / "results" / "members.csv").exists()


def test_a_settings_dict_is_checked_as_a_file_is():
    from postproc.adapters.errors import InputError

    with pytest.raises(InputError, match="first_stirup_mm"):
        postproc.design(SAMPLE / "members.csv", SAMPLE / "forces.csv", config={"detailing": {"first_stirup_mm": 75}})
