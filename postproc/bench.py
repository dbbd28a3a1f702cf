"""`shearpost bench`: a synthetic frame designed end to end, timed against bare reads.

Everything is measured in one run on this machine, so the ratios compare like with
like; the absolute seconds depend on the machine and its load.
"""

from __future__ import annotations

import multiprocessing
import shutil
import tempfile
import threading
import time
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.csv as pcsv
import pyarrow.parquet as pq

from postproc.adapters import csv_tables
from postproc.adapters.mapping import ColumnMap
from postproc import engine, html_report, reference, report, synthetic, units
from postproc.settings import Settings
from postproc.store import Store


@dataclass
class Figures:
    members: int
    cases: int
    basic: bool  # basic load cases combined by Table 5.3.1 (else already factored combinations)
    combinations: int
    stations: int
    force_rows: int
    csv_mb: float
    generate_s: float
    csv_read_s: float
    ingest_s: float
    store_read_s: float
    design_s: float
    reference_members: int
    reference_s_per_member: float
    engine_s_per_member: float
    peak_rss_mb: float
    workers: int
    report_s: float = 0.0  # report.html of the designed run (compact above [report] detail_sections)
    report_members: int = 0  # members with a detail section in it
    stage_seconds: dict = None  # seconds by stage (postproc.stages.ORDER), design stages summed over processes

    @property
    def end_to_end_s(self) -> float:
        return self.ingest_s + self.design_s + self.report_s

    def shares(self) -> list[tuple[str, float, float]]:
        """(stage, seconds, share of all stages) in pipeline order. The design's stages are
        seconds spent in each step summed over the worker processes; ingest and report are
        this process's."""
        from postproc.stages import ORDER

        spent = {"ingest": self.ingest_s, **(self.stage_seconds or {}), "report": self.report_s}
        total = sum(spent.values()) or 1.0
        return [(k, spent[k], spent[k] / total) for k in ORDER if k in spent]

    def rows(self) -> list[tuple[str, str]]:
        return [
            ("model", f"{self.members:,} members x "
                      + (f"{self.cases} basic cases ({self.combinations} combinations of Table 5.3.1)" if self.basic
                         else f"{self.cases} combinations") + f" x {self.stations} stations "
                      f"= {self.force_rows:,} force rows ({self.csv_mb:,.0f} MB of CSV)"),
            ("ingest from CSV", f"{self.ingest_s:.2f} s = {self.ingest_s / self.csv_read_s:.1f} x the bare pyarrow "
                                f"CSV read ({self.csv_read_s:.2f} s)"),
            ("design from the store", f"{self.design_s:.2f} s = {self.design_s / self.store_read_s:.1f} x the bare "
                                      f"read of the force columns ({self.store_read_s:.2f} s)"),
            ("per-member reference", f"{self.reference_s_per_member * 1e3:.1f} ms/member on {self.reference_members} "
                                     f"members, identical results; the engine is "
                                     f"{self.reference_s_per_member / self.engine_s_per_member:,.0f} x faster"),
            ("report.html", f"{self.report_s:.2f} s, member sections for {self.report_members:,} of "
                            f"{self.members:,} members"),
            ("end to end (ingest + design + report)", f"{self.end_to_end_s:.2f} s with {self.workers} worker(s) = "
                                                      f"{self.end_to_end_s / self.csv_read_s:.1f} x the bare CSV read"),
            ("stage shares", "; ".join(f"{k} {s:.2f} s ({f:.0%})" for k, s, f in self.shares())),
            ("peak resident memory", f"{self.peak_rss_mb:,.0f} MB (ingest and design, largest process)"),
        ]


class PeakMemory:
    """Largest resident set of this process and of any of its worker processes, sampled
    every 20 ms while the block runs (psutil: the same on Linux, macOS and Windows). On
    Windows the process's own peak working set is exact; elsewhere a peak shorter than a
    sample may be missed."""

    def __init__(self, every_s: float = 0.02):
        self.every_s, self.peak_bytes = every_s, 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._watch, daemon=True)

    def _sample(self) -> None:
        import psutil  # here, not at import: its Linux backend itself needs the POSIX-only `resource`

        me = psutil.Process()
        sizes = [getattr(me.memory_info(), "peak_wset", 0), me.memory_info().rss]
        for child in me.children(recursive=True):
            try:
                sizes.append(child.memory_info().rss)
            except psutil.Error:  # a worker that ended between the listing and the reading
                pass
        self.peak_bytes = max(self.peak_bytes, *sizes)

    def _watch(self) -> None:
        while not self._stop.wait(self.every_s):
            self._sample()

    def __enter__(self) -> PeakMemory:
        self._sample()
        self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self._stop.set()
        self._thread.join()
        self._sample()

    @property
    def mb(self) -> float:
        return self.peak_bytes / 2**20


def run(members: int, cases: int, stations: int, seed: int, sample: int, map_parts, workers: int,
        folder: Path | None = None, progress=None, basic: bool = False) -> Figures:
    """Generate the synthetic frame (``basic``: typed basic load cases combined by Table
    5.3.1, else already factored combinations), ingest and design it, time it against the
    bare reads and check a sample of members against the per-member reference."""
    tmp = Path(folder) if folder else Path(tempfile.mkdtemp(prefix="shearpost-bench-"))
    try:
        t = time.perf_counter()
        # in a process of its own, so that the memory the generator took is not counted below as the tool's
        with ProcessPoolExecutor(1, mp_context=multiprocessing.get_context("spawn")) as pool:
            paths = pool.submit(synthetic.generate, tmp / "model", members, cases, stations, seed, basic).result()
        generate_s = time.perf_counter() - t

        with PeakMemory() as memory:  # of ingest and design, before the bare reads below
            t = time.perf_counter()
            table, warnings = csv_tables.read_members(paths["members"], ColumnMap())
            lengths = dict(zip(table.column("member").to_pylist(), table.column("length_m").to_pylist()))
            cases_table = csv_tables.read_cases(paths["cases"], ColumnMap()) if basic else None
            source = csv_tables.ForcesReader(paths["forces"], ColumnMap(), lengths, cases_table, paths.get("cases"))
            store = Store(tmp / "store")
            run_ = store.ingest("bench", table, cases_table, source, dict(paths), warnings, progress=progress,
                                memory_mb=Settings().run.memory_mb)
            ingest_s = time.perf_counter() - t

            settings = Settings()
            holder = {}

            def write(folder: Path) -> None:
                holder["r"] = result = engine.design_into(run_, settings, folder, map_parts, timed=True)
                (folder / "manifest.json").write_text(report.dump_json(engine.design_manifest(result, settings)),
                                                      encoding="utf-8")

            t = time.perf_counter()
            store.write_design(run_, write)
            design_s = time.perf_counter() - t
            result = holder["r"]

            t = time.perf_counter()
            designed = store.run(run_.name)
            html_report.write_html_report(designed, tmp / "report.html")
            report_s = time.perf_counter() - t

        # the bare reads, streamed as the tool streams (whole-file reads would need the model in memory),
        # each the median of 5 (the machine may be shared)
        def csv_read() -> int:
            pcsv.read_csv(paths["members"])
            return sum(b.num_rows for b in pcsv.open_csv(paths["forces"]))

        def store_read() -> None:
            for part in run_.force_parts():
                pq.read_table(part, columns=["member", "case", "x_m", "V_kN", "N_kN", "T_kNm"])

        n_rows = csv_read()
        csv_read_s = _median_s(csv_read)
        store_read_s = _median_s(store_read)

        ref_s, n_ref = _reference_check(run_, result, settings, sample, seed)
        return Figures(members, cases, basic, result.combos.distinct_count, stations, n_rows,
                       paths["forces"].stat().st_size / 1e6, generate_s, csv_read_s, ingest_s, store_read_s, design_s,
                       n_ref, ref_s / max(n_ref, 1), design_s / members, memory.mb, workers, report_s,
                       min(members, settings.report.detail_sections), result.stage_seconds)
    finally:
        if folder is None:
            shutil.rmtree(tmp, ignore_errors=True)


def _median_s(fn, times: int = 5) -> float:
    spent = []
    for _ in range(times):
        t = time.perf_counter()
        fn()
        spent.append(time.perf_counter() - t)
    return float(np.median(spent))


def _reference_check(run_, result, settings: Settings, sample: int, seed: int) -> tuple[float, int]:
    """Design a random sample of members with the per-member reference; results must be identical."""
    members = run_.members().to_pandas().set_index("member", drop=False)
    rng = np.random.default_rng(seed)
    frame = members["frame"].fillna("none") if "frame" in members else pd.Series("none", index=members.index)
    pool = members.index[frame.isin(("", "none"))].to_numpy()  # reference.covers: not frame beams
    names = sorted(rng.choice(pool, size=min(sample, len(pool)), replace=False))
    forces = run_.forces(filters=[("member", "in", names)]).to_pandas()
    cset = result.combos
    out = result.members.set_index("member")
    zones = result.zones
    t = time.perf_counter()
    refs = [reference.design_member(members.loc[m], forces[forces.member == m], cset.names, cset.factors, cset.cases,
                                    settings) for m in names]
    elapsed = time.perf_counter() - t
    for m, (row, ref_zones, winners) in zip(names, refs):
        compare_with_reference(m, out.loc[m], row, ref_zones, winners, zones[zones.member == m])
    return elapsed, len(names)


def compare_with_reference(m: str, got: pd.Series, row: dict, ref_zones: list[dict], winners: set[str],
                           mine: pd.DataFrame) -> None:
    """The engine's members.csv row and zones of one member against the reference's; the
    governing combination may be any of those that tie for the utilization. The reference
    designs sectionally only: a member it flags by 9.9.1.1 must be one the engine flagged
    too (designed by strut-and-tie, or not designed with its reason); the strut-and-tie
    design itself is checked against hand calculations in tests/test_deep_beams.py."""
    if row.get("status") == "deep-beam":
        method = got.get("method")
        stm = isinstance(method, str) and method.startswith("strut-and-tie")
        if not (stm or got["status"] == "deep-beam"):
            raise AssertionError(f"reference and engine differ for {m}: the reference flags it by 9.9.1.1, the engine "
                                 f"designed it by {method!r} ({got['status']})")
        if got["status"] == "deep-beam" and "9.9.1.1" not in str(got["message"]):
            raise AssertionError(f"engine's deep-beam row of {m} does not say why: {got['message']!r}")
        return
    if isinstance(got.get("method"), str) and got["method"] != "sectional":
        raise AssertionError(f"reference and engine differ for {m}: the engine used {got['method']!r}, the reference "
                             "designs it sectionally")
    got, mine = got.rename(units.si_name), units.si_keyed(mine)
    for key, value in row.items():
        if key == "member":
            continue
        ok = np.isclose(float(got[key]), float(value), rtol=1e-9, atol=1e-9) if isinstance(value, float) \
            else got[key] == value
        if not ok:
            raise AssertionError(f"reference and engine differ for {m}, {key}: {value!r} against {got[key]!r}")
    if winners and got["governing_case"] not in winners:
        raise AssertionError(f"reference and engine differ for {m}: governing combination {got['governing_case']!r} "
                             f"is not one of {sorted(winners)}")
    mine = mine.reset_index(drop=True)
    theirs = pd.DataFrame(ref_zones, columns=list(mine.columns))
    for frame in (mine, theirs):  # a beam's legs_vb is empty: None or NaN as the table's other rows make it
        if "legs_vb" in frame:
            frame["legs_vb"] = pd.to_numeric(frame["legs_vb"])
    if len(mine) or len(theirs):
        pd.testing.assert_frame_equal(mine.astype(theirs.dtypes.to_dict()) if len(theirs) else mine, theirs,
                                      check_dtype=False, obj=f"zones of {m}")
