"""Shared helpers: write input CSVs, run the CLI, read a designed run back."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from postproc import cli
from postproc.store import Store

def pytest_configure(config):
    """Compile the numba kernels into their cache once, in a process of its own, before the
    test workers start: each worker, and each CLI subprocess a test starts, then loads them
    instead of compiling them itself (about 30 s on a cold cache, which a test with a timeout
    would otherwise spend). Nothing happens without numba or with SHEARPOST_KERNELS=numpy."""
    if hasattr(config, "workerinput"):  # an xdist worker: the controller has done it
        return
    import subprocess
    import sys

    subprocess.run([sys.executable, "-c", "from postproc import kernels; kernels.warm()"], check=False)


BEAM = dict(kind="beam", b_mm=300.0, h_mm=600.0, cover_mm=60.0, fc_mpa=30.0, fyt_mpa=420.0,
            support_i="column", support_j="column", face_i_mm=0.0, face_j_mm=0.0, load_face="top")


def beam(member: str, length_m: float, **kw) -> dict:
    return {"member": member, "length_m": length_m, **BEAM, **kw}


def rows_from_function(member: str, case: str, length: float, shear, n: int = 21, jumps=()) -> list[dict]:
    """Stations along a member from a shear function V(x) (kN); at each jump x, the left
    and right values (shear(x - 0) and shear(x + 0)) as two rows."""
    xs = sorted(set(np.linspace(0.0, length, n).round(6)) - set(jumps))
    out = [dict(member=member, case=case, x_m=x, V_kN=shear(x)) for x in xs]
    for xj in jumps:
        out.append(dict(member=member, case=case, x_m=xj, V_kN=shear(xj - 1e-9)))
        out.append(dict(member=member, case=case, x_m=xj, V_kN=shear(xj + 1e-9)))
    return sorted(out, key=lambda r: r["x_m"])  # stable: the left row stays first


@dataclass
class Designed:
    code: int
    members: pd.DataFrame
    zones: pd.DataFrame
    stations: pd.DataFrame | None
    out: Path
    store: Path


def write_inputs(tmp: Path, members: list[dict], forces: list[dict], cases: list[dict] | None = None) -> dict:
    tmp.mkdir(parents=True, exist_ok=True)
    paths = {"members": tmp / "members.csv", "forces": tmp / "forces.csv"}
    pd.DataFrame(members).to_csv(paths["members"], index=False)
    pd.DataFrame(forces).to_csv(paths["forces"], index=False)
    if cases is not None:
        paths["cases"] = tmp / "cases.csv"
        pd.DataFrame(cases).to_csv(paths["cases"], index=False)
    return paths


def design(tmp: Path, members: list[dict], forces: list[dict], cases: list[dict] | None = None,
           extra: list[str] = ()) -> Designed:
    """Run `shearpost run` on the given rows and read back tables and the station trace."""
    paths = write_inputs(tmp / "in", members, forces, cases)
    out, store = tmp / "out", tmp / "store"
    argv = ["run", "--members", str(paths["members"]), "--forces", str(paths["forces"]),
            "--store", str(store), "--out", str(out), "--json", *extra]
    if "cases" in paths:
        argv += ["--cases", str(paths["cases"])]
    code = cli.main(argv)
    runs = Store(store).runs()
    st = runs[-1].table("design/stations").to_pandas() if runs and runs[-1].has_design() else None
    zones = pd.read_csv(out / "zones.csv") if (out / "zones.csv").exists() else pd.DataFrame()
    members_out = pd.read_csv(out / "members.csv", keep_default_na=False, na_values=[""]) if (out / "members.csv").exists() else pd.DataFrame()
    return Designed(code, members_out, zones, st, out, store)


@pytest.fixture(scope="session")
def demo_designed(tmp_path_factory) -> Designed:
    """The demo building designed once for the whole session (`shearpost demo`, report
    included). Tests read it and must not write into its store."""
    tmp = tmp_path_factory.mktemp("demo-session")
    code = cli.main(["demo", "--store", str(tmp / "store"), "--out", str(tmp / "out"), "--json"])
    out = tmp / "out"
    st = Store(tmp / "store").latest().table("design/stations").to_pandas()  # parts of each family, all columns
    return Designed(code, pd.read_csv(out / "members.csv", keep_default_na=False, na_values=[""]),
                    pd.read_csv(out / "zones.csv"), st, out, tmp / "store")


@pytest.fixture
def run_design(tmp_path):
    counter = iter(range(1000))

    def _run(members, forces, cases=None, extra=()):
        return design(tmp_path / f"d{next(counter)}", members, forces, cases, extra)

    return _run


def tree_snapshot(root: Path) -> dict:
    """Every file under root with its size: to show that nothing changed on disk."""
    return {str(p.relative_to(root)): p.stat().st_size for p in root.rglob("*") if p.is_file()} if root.exists() else {}


# ---------------------------------------------------------------- crash safety and hostile environments

SMALL_MEMBERS = [beam("B1", 6.0), beam("B2", 5.0)]
SMALL_FORCES = rows_from_function("B1", "U", 6.0, lambda x: 100 - 30 * x, n=5) + \
    rows_from_function("B2", "U", 5.0, lambda x: 80 - 30 * x, n=5)


def run_argv(members: Path, forces: Path, store: Path, out: Path, *extra: str) -> list[str]:
    return ["run", "--members", str(members), "--forces", str(forces), "--store", str(store), "--out", str(out),
            "--json", *extra]


@pytest.fixture(scope="module")
def big_model(tmp_path_factory) -> dict[str, Path]:
    """Big enough to take several seconds and three stored parts (so that worker processes run)."""
    from postproc.synthetic import generate

    return generate(tmp_path_factory.mktemp("big") / "model", members=3000, cases=20, stations=21)


@pytest.fixture(scope="module")
def earlier_store(tmp_path_factory) -> Path:
    """A store with one earlier, designed run named 'earlier' (made once per module, copied per test)."""
    root = tmp_path_factory.mktemp("earlier")
    paths = write_inputs(root / "in", SMALL_MEMBERS, SMALL_FORCES)
    code = cli.main(run_argv(paths["members"], paths["forces"], root / "store", root / "out", "--run", "earlier",
                             "--no-report"))
    assert code == cli.EXIT_OK
    return root / "store"


def print_tally(request, lines: list[str]) -> None:
    """Print a corpus test's tally of outcomes below the test run (past pytest's capture)."""
    capman = request.config.pluginmanager.getplugin("capturemanager")
    tr = request.config.pluginmanager.get_plugin("terminalreporter")
    if capman is not None and tr is not None:
        with capman.global_and_fixture_disabled():
            tr.write_line("")
            for line in lines:
                tr.write_line(line)


def equal_to_reference(run, names, settings) -> None:
    """The stored design of each member ``names`` of ``run`` against the brute-force per-member
    design (postproc.reference: every combination listed one by one); raises on a difference."""
    import pyarrow.parquet as pq

    from postproc import bench, engine, reference

    members = run.members().to_pandas().set_index("member", drop=False)
    forces = pq.read_table(run.path / "forces", filters=[("member", "in", list(names))]).to_pandas()
    cset, _ = engine.combination_set(run, run.manifest()["cases"], settings)
    res = pq.read_table(run.design_path / "members.parquet").to_pandas().set_index("member")
    zones = pq.read_table(run.design_path / "zones.parquet").to_pandas()
    for m in names:
        row, z, winners = reference.design_member(members.loc[m], forces[forces.member == m], cset.names,
                                                  cset.factors, cset.cases, settings)
        bench.compare_with_reference(m, res.loc[m], row, z, winners, zones[zones.member == m])
