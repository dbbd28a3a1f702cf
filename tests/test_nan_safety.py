"""No missing value reaches a kernel, and none passes one (issue 9, item 1).

Before issue 9 a NaN that got past the readers passed the self-check (every comparison with
NaN is false, so "utilization > 1" never fired) and the member lost a third of its torsion
stirrups, exit 0. Now the readers refuse it (tests/test_hostile_inputs.py, group "missing"),
and the kernels fail it should one come from anywhere else: `check_layout` reports a station
with a non-finite force as failing, and the engine stops the run as a failed self-check
(exit 11, nothing stored).
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pytest

from postproc import combos, engine
from postproc.demand import beams as demand
from postproc.adapters import csv_tables
from postproc.adapters.mapping import ColumnMap
from postproc.settings import Settings
from postproc.store import Store
from tests.conftest import beam, rows_from_function, write_inputs


def check(V, N, T, spacing):
    """The self-check of #10 x 2 legs at ``spacing`` along three stations of a 300 x 600 beam
    (d = 540 mm, f'c 30 MPa, fyt 420 MPa; invented test values), one combination each:
    V, N (tension +), T per station in N and N*mm."""
    sec = demand.section_from_members(b=np.array([300.0]), h=np.array([600.0]), d=np.array([540.0]),
                                      fc=np.array([30.0]), fyt=np.array([420.0]), lam=np.array([1.0]),
                                      fy=np.array([420.0]), As=np.array([np.nan]), bf=np.array([np.nan]),
                                      hf=np.array([np.nan])).take(np.zeros(3, np.int64))
    cand = combos.Candidates(station=np.arange(3), row=np.zeros(3, np.int64), choice_at=np.zeros(3, np.int64),
                             choices=np.zeros((1, 0), np.int64),
                             values={"V": np.asarray(V, float), "N": np.asarray(N, float),
                                     "T": np.asarray(T, float)}, bounds=np.arange(4))
    dem = demand.required(sec, cand)
    Aoh, ph = demand.torsion_geometry(np.full(3, 300.0), np.full(3, 600.0), 40.0, 9.5)
    return demand.check_layout(sec, cand, dem, np.full(3, 71.0), np.full(3, 2.0), np.asarray(spacing, float), Aoh, ph,
                               np.full(3, 200.0), np.ones(3, bool))


@pytest.mark.parametrize("which", ["V", "N", "T"])
def test_a_nan_force_fails_the_self_check(which):
    forces = {"V": [100e3, 150e3, 80e3], "N": [0.0, 0.0, 0.0], "T": [0.0, 0.0, 0.0]}
    # #10 x 2 legs at 200 mm carry these: Vs = 2 * 71 * 420 * 540 / 200 = 161 kN (22.5.8.5.3)
    assert check(**forces, spacing=[200.0] * 3).ok.all()
    forces[which] = list(forces[which])
    forces[which][1] = np.nan
    cap = check(**forces, spacing=[200.0] * 3)
    assert list(cap.ok) == [True, False, True], cap.utilization


def test_a_nan_spacing_fails_the_self_check():
    cap = check([100e3] * 3, [0.0] * 3, [0.0] * 3, spacing=[200.0, np.nan, 200.0])
    assert list(cap.ok) == [True, False, True]


class NanSource:
    """Validated forces with a NaN torque slipped in after validation (as a defect elsewhere could)."""

    def __init__(self, reader: csv_tables.ForcesReader):
        self.reader = reader
        self.rows, self.case_names = 0, set()

    def size(self):
        return self.reader.size()

    def batches(self):
        for t in self.reader.batches():
            T = t.column("T_kNm").to_numpy().copy()
            T[2] = np.nan
            t = t.set_column(t.schema.get_field_index("T_kNm"), "T_kNm", pa.array(T))
            self.rows, self.case_names = self.reader.rows, self.reader.case_names
            yield t

    def check_part(self, t):
        self.reader.check_part(t)


def test_a_nan_that_reaches_the_engine_stops_the_run(tmp_path):
    paths = write_inputs(tmp_path / "in", [beam("B1", 6.0)],
                         rows_from_function("B1", "U", 6.0, lambda x: 120 - 40 * x, n=7))
    members, _ = csv_tables.read_members(paths["members"], ColumnMap())
    source = NanSource(csv_tables.ForcesReader(paths["forces"], ColumnMap()))
    store = Store(tmp_path / "store")

    def design_it(staged):
        folder = staged.design_path
        folder.mkdir()
        engine.design_into(staged, Settings(), folder)

    with pytest.raises(engine.SelfCheckError, match="member B1: a design force is not finite"):
        store.ingest("r", members, None, source, {}, [], then=design_it)
    assert store.runs() == []  # the run never appears
