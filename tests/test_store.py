"""The store: manifest with input hashes, Parquet tables, immutable runs, atomic writes."""

import hashlib
import json

import pyarrow.parquet as pq
import pytest

from postproc.store import Store, StoreError
from tests.conftest import beam, rows_from_function, tree_snapshot


def test_run_holds_manifest_with_sha256_and_tables(run_design, tmp_path):
    res = run_design([beam("B", 6.0)], rows_from_function("B", "U", 6.0, lambda x: 90 - 30 * x, n=5))
    (run,) = Store(res.store).runs()
    man = run.manifest()
    for role in ("members", "forces"):
        path = man["inputs"][role]["path"]
        # sha256 by the standard library, independently of the store's own hashing
        assert man["inputs"][role]["sha256"] == hashlib.sha256(open(path, "rb").read()).hexdigest()
    assert man["code_edition"] == "ACI 318-19" and man["tool"] == "shearpost"
    assert pq.read_table(run.path / "forces").num_rows == 5 and len(run.force_parts()) == 1
    assert run.has_design()
    for name in ("members", "zones", "combinations"):
        assert (run.design_path / f"{name}.parquet").exists()
    assert list((run.design_path / "stations").glob("part-*.parquet"))
    assert json.loads((run.design_path / "manifest.json").read_text())["code_edition"] == "ACI 318-19"
    assert not [p for p in res.store.rglob(".tmp-*")]  # no temporary folder left behind


def test_runs_are_never_overwritten(run_design):
    res = run_design([beam("B", 6.0)], rows_from_function("B", "U", 6.0, lambda x: 90 - 30 * x, n=5))
    store = Store(res.store)
    (run,) = store.runs()
    snap = tree_snapshot(res.store)
    with pytest.raises(StoreError, match="never overwritten"):
        store.ingest(run.name, run.members(), None, None, {}, [])
    with pytest.raises(StoreError, match="already has a design"):
        store.write_design(run, lambda folder: None)
    assert tree_snapshot(res.store) == snap


def test_new_names_count_up_and_bad_names_are_refused(tmp_path):
    store = Store(tmp_path)
    import datetime
    day = datetime.date(2026, 12, 1)
    assert store.new_name(day) == "20261201-001"
    (tmp_path / "20261201-001").mkdir()
    assert store.new_name(day) == "20261201-002"
    for bad in ("../escape", "a/b", ".hidden", "", "x" * 101):
        with pytest.raises(StoreError):
            store.check_new_name(bad)


def test_failed_write_leaves_nothing_visible(tmp_path):
    store = Store(tmp_path)

    def boom(tmp):
        (tmp / "half.parquet").write_text("partial")
        raise RuntimeError("disk full")

    with pytest.raises(RuntimeError):
        store._atomic(tmp_path / "r1", boom)
    assert list(tmp_path.iterdir()) == []


def test_a_design_written_after_the_ingest_is_sealed_in(tmp_path):
    """`shearpost bench` ingests a run, then designs it (to time the two apart): the design is
    added under the run's lock and the manifest sealed again, listing its files (issue 9)."""
    from postproc import cli

    keep = tmp_path / "bench"
    assert cli.main(["bench", "--members", "40", "--cases", "3", "--stations", "5", "--sample", "3", "--workers", "1",
                     "--keep", str(keep), "--json"]) == cli.EXIT_OK
    (run,) = Store(keep / "store").runs()
    assert "design/members.parquet" in run.files() and run.listed_under("design/stations")
    assert run.verify() == []


def test_spilled_and_in_memory_ingest_store_the_same_parts(tmp_path, monkeypatch):
    """Forces larger than the memory setting allows are spilled to disk (Arrow streams) in
    small blocks; the stored parts are the same as from an ingest held in memory."""
    from postproc import store as store_mod, synthetic
    from postproc.adapters import csv_tables
    from postproc.adapters.mapping import ColumnMap

    paths = synthetic.generate(tmp_path / "model", members=80, cases=4, stations=9, seed=3)
    members, _ = csv_tables.read_members(paths["members"], ColumnMap())
    monkeypatch.setattr(store_mod, "PART_BYTES", 30_000)  # several parts
    held = Store(tmp_path / "a").ingest("r", members, None, csv_tables.ForcesReader(paths["forces"], ColumnMap()),
                                        {}, [])
    reader = csv_tables.ForcesReader(paths["forces"], ColumnMap())
    monkeypatch.setattr(store_mod, "MEMORY_BYTES", 0)  # spill whatever the size
    monkeypatch.setattr(store_mod, "BLOCK_PER_MEMORY", 1e-9)  # the least block: 1 MB, several slices a part
    spilled = Store(tmp_path / "b").ingest("r", members, None, reader, {}, [], memory_mb=256)
    assert reader.BLOCK == 1 << 20
    assert len(held.force_parts()) > 2
    assert [p.name for p in held.force_parts()] == [p.name for p in spilled.force_parts()]
    for a, b in zip(held.force_parts(), spilled.force_parts()):
        assert pq.read_table(a).equals(pq.read_table(b))
