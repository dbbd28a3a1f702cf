"""The engines give identical results: in-process, local worker processes, dask.distributed."""

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
