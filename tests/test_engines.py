"""The engines give identical results: in-process, local worker processes, dask.distributed."""

from dataclasses import replace

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest

from postproc.adapters import csv_tables
from postproc.adapters.mapping import ColumnMap
from postproc import engine, engines, store as store_mod, synthetic
from postproc.settings import Settings
from postproc.store import Store


@pytest.fixture(scope="module")
def staged(tmp_path_factory):
    """A synthetic model stored in several parts (small parts on purpose)."""
    tmp = tmp_path_factory.mktemp("engines")
    paths = synthetic.generate(tmp / "model", members=120, cases=6, stations=11, seed=5)
    members, _ = csv_tables.read_members(paths["members"], ColumnMap())
    source = csv_tables.ForcesReader(paths["forces"], ColumnMap())
    old = store_mod.PART_BYTES
    store_mod.PART_BYTES = 40_000
    try:
        run = Store(tmp / "store").ingest("r", members, None, source, {}, [])
    finally:
        store_mod.PART_BYTES = old
    assert len(run.force_parts()) > 3
    return tmp, run


def design(tmp, run, name, map_parts):
    folder = tmp / name
    folder.mkdir()
    res = engine.design_into(run, Settings(), folder, map_parts)
    return res.members, res.zones, pq.read_table(folder / "stations").to_pandas()


def test_local_processes_and_dask_match_in_process(staged):
    tmp, run = staged
    ref = design(tmp, run, "inline", map)
    for name, mp in (("processes", engines.local(2)), ("dask", engines.dask(None, 2))):
        got = design(tmp, run, name, mp)
        for a, b in zip(ref, got):
            pd.testing.assert_frame_equal(a, b)


def test_batch_size_does_not_change_the_design(staged, monkeypatch):
    tmp, run = staged
    ref = design(tmp, run, "big-batches", map)
    monkeypatch.setattr(engine, "BATCH_CELLS", 2_000)
    small = design(tmp, run, "small-batches", map)
    for a, b in zip(ref, small):
        pd.testing.assert_frame_equal(a.sort_values(list(a.columns[:2])).reset_index(drop=True),
                                      b.sort_values(list(b.columns[:2])).reset_index(drop=True))


@pytest.fixture(scope="module")
def one_part(tmp_path_factory):
    """A synthetic model stored in one part, designed as one task (the reference)."""
    tmp = tmp_path_factory.mktemp("tasks")
    paths = synthetic.generate(tmp / "model", members=150, cases=6, stations=11, seed=7)
    members, _ = csv_tables.read_members(paths["members"], ColumnMap())
    run = Store(tmp / "store").ingest("r", members, None, csv_tables.ForcesReader(paths["forces"], ColumnMap()), {},
                                      [])
    assert len(run.force_parts()) == 1
    return tmp, run


def _inline(workers: int):
    """This process, posing as an engine of ``workers`` workers (the tasks are cut for them)."""
    def run(fn, parts):
        return map(fn, parts)

    run.workers = workers
    return run


def _stored(folder):
    return {name: pq.read_table(folder / name).to_pandas() for name in ("members.parquet", "zones.parquet",
                                                                         "stirrups.parquet", "stations")}


@pytest.mark.parametrize("workers, memory_mb", [(2, 1536), (3, 1536), (1, 330), (2, 330)])
def test_tasks_cut_parts_at_batch_starts_and_change_nothing(one_part, workers, memory_mb, monkeypatch):
    """A part cut into tasks (a multiple of the workers, or smaller to fit [run] memory_mb) gives
    the tables of the uncut part to the last bit, rows in the same order."""
    tmp, run = one_part
    monkeypatch.setattr(engine, "BATCH_CELLS", 40_000)  # batches of a few members: room to cut
    settings = Settings()
    designable = run.members().to_pandas().sort_values("member").reset_index(drop=True)
    cset, _ = engine.combination_set(run, run.manifest()["cases"], settings)
    ref_folder = tmp / "uncut"
    if not ref_folder.exists():
        ref_folder.mkdir()
        engine.design_into(run, settings, ref_folder, _inline(1))
    small = Settings(run=replace(settings.run, memory_mb=memory_mb))
    tasks, strays, rows_of_part = engine.design_tasks([str(p) for p in run.force_parts()], designable, cset, small,
                                                      workers)
    assert strays == set()  # every member with forces is in the table
    assert sorted(np.concatenate(list(rows_of_part.values()))) == list(range(len(designable)))
    forces = run.forces(["member"]).to_pandas()
    for part, rows in rows_of_part.items():  # each task travels with the members of its part, in their order
        here = set(pq.read_table(part, columns=["member"]).column("member").to_pylist())
        assert designable["member"].iloc[rows].tolist() == designable["member"][designable["member"].isin(here)].tolist()
    if memory_mb == 1536:  # the pieces number a multiple of the workers (one family here: one task a piece)
        assert len(tasks) % workers == 0
    else:  # each task within the memory: rows of its members at most what the setting allows
        cap = (memory_mb - engine.PROCESS_BASE_MB) * 2**20 / engine.TASK_BYTES_PER_ROW
        counts = forces["member"].value_counts()
        for t in tasks:
            rows = counts[(counts.index >= t.first) & (counts.index <= t.last)].sum()
            assert rows <= cap  # (a batch, never cut, is smaller than that here)
        assert len(tasks) > 1
    starts = set(designable["member"].iloc[engine.batch_starts(designable, cset, settings, engine.FAMILIES[0])])
    assert all(t.first in starts for t in tasks if t.first is not None) and len(starts) > 3
    folder = tmp / f"cut-{workers}-{memory_mb}"
    folder.mkdir()
    engine.design_into(run, small, folder, _inline(workers))
    assert len(list((folder / "stations").iterdir())) == len(tasks)
    ref, got = _stored(ref_folder), _stored(folder)
    for name in ref:
        pd.testing.assert_frame_equal(ref[name], got[name], check_exact=True, obj=name)


def test_already_sorted_forces_skip_the_sort():
    """sort_part puts rows in member, case, station, file-row order; rows already in that order
    come back as they are, without a sort."""
    import numpy as np
    import pyarrow as pa

    rng = np.random.default_rng(3)
    n = 400
    t = pa.table({"member": [f"M{k}" for k in rng.integers(0, 9, n)], "case": [f"C{k}" for k in rng.integers(0, 3, n)],
                  "x_m": rng.integers(0, 5, n).astype(float), "_row": np.arange(n)})
    ordered = csv_tables.sort_part(t)
    df = ordered.to_pandas()
    assert df.equals(df.sort_values(["member", "case", "x_m", "_row"]).reset_index(drop=True))
    assert csv_tables.sort_part(ordered) is ordered  # nothing moved, nothing copied
    assert csv_tables.sort_part(t) is not t


def test_part_records_join_as_if_built_at_once():
    """Each task sends its members.csv and zones.csv records as a table; joined, every column
    has the type and values it has when all records are built into one table at once (a
    column empty in one task, numbers in another, text with gaps), whatever the split, and
    the rows come in the input order of their members."""
    import numpy as np

    rng = np.random.default_rng(3)
    for trial in range(60):
        n = int(rng.integers(1, 40))
        columns = ["member", "a", "b", "c", "d"]
        kinds = {"a": [None, 1.5, 2, 0.0], "b": [None, "x", "y"], "c": [None], "d": [3, 4]}
        records = [{"member": f"M{k}", **{c: kinds[c][rng.integers(len(kinds[c]))] for c in "abcd"}}
                   for k in range(n)]
        if trial % 3 == 0:  # one task holds every number of a column, the others none
            for r in records[n // 2:]:
                r["a"] = None
        whole = pd.DataFrame(records, columns=columns)
        cuts = sorted(set(rng.integers(0, n + 1, size=int(rng.integers(0, 4))).tolist()))
        pieces = [records[a:b] for a, b in zip([0, *cuts], [*cuts, n])]
        parts = [pd.DataFrame(p, columns=columns) for p in pieces]
        joined = engine._joined(parts, columns, pd.Index([r["member"] for r in records]))
        pd.testing.assert_frame_equal(joined, whole)
        assert parts == []  # taken out of the parts as joined


def test_part_records_join_in_input_order():
    """The joined records follow the members' input order whatever order the tasks sent them
    in; a member the input lacks (forces without geometry) comes last, by id; the rows of one
    member (its zones) are ordered by the given column, ties kept in the order they came."""
    columns = ["member", "zone", "tag"]
    parts = [pd.DataFrame({"member": ["B", "ZZ", "A", "B"], "zone": [2, 1, 1, 1], "tag": ["b2", "zz", "a1", "b1"]}),
             pd.DataFrame({"member": ["C", "Y", "B"], "zone": [1, 1, 1], "tag": ["c1", "y", "b1'"]})]
    joined = engine._joined(parts, columns, pd.Index(["C", "B", "A"]), within="zone")
    assert joined["tag"].tolist() == ["c1", "b1", "b1'", "b2", "a1", "y", "zz"]
    assert joined.index.equals(pd.RangeIndex(7))


def test_table_spill_writes_the_pieces_as_one_table(tmp_path):
    """The strut-and-tie tables arrive task by task and are written piece by piece: the file
    holds what one table of all the pieces would hold (a column empty in one piece and text
    or numbers in another takes the text or numbers), in order; nothing is left beside it."""
    pieces = [pd.DataFrame({"member": ["A", "B"], "combination": [None, None], "force_kN": [1, 2],
                            "clause": ["23.4.1", "23.7.2"]}),
              pd.DataFrame({"member": [], "combination": [], "force_kN": [], "clause": []}),
              pd.DataFrame({"member": ["C"], "combination": ["1.2D + 1.6L"], "force_kN": [2.5], "clause": [None]}),
              pd.DataFrame({"force_kN": [4.0], "member": ["D"]})]  # columns missing and in another order
    spill = engine.TableSpill(tmp_path / "pieces", {"struts": tmp_path / "struts.parquet",
                                                    "nodes": tmp_path / "nodes.parquet"})
    for df in pieces:
        spill.add("struts", df)
    spill.write()
    got = pq.read_table(tmp_path / "struts.parquet").to_pandas()
    whole = pd.concat(pieces, ignore_index=True)
    assert list(got.columns) == list(whole.columns) == ["member", "combination", "force_kN", "clause"]
    assert got["member"].tolist() == ["A", "B", "C", "D"]
    assert got["force_kN"].tolist() == [1.0, 2.0, 2.5, 4.0]
    assert got["combination"].isna().tolist() == whole["combination"].isna().tolist() == [True, True, False, True]
    assert got["combination"].iloc[2] == "1.2D + 1.6L"
    assert got["clause"].tolist()[:2] == ["23.4.1", "23.7.2"] and got["clause"].iloc[2:].isna().all()
    assert pq.read_table(tmp_path / "nodes.parquet").num_rows == 0  # never arrived: written empty
    assert sorted(p.name for p in tmp_path.iterdir()) == ["nodes.parquet", "struts.parquet"]
