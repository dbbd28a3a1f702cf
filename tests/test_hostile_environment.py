"""Hostile environments (issue 9): processes killed, Ctrl-C, memory running out in a worker,
a full or read-only disk, a closed pipe, two processes on one store, inputs that change
while they are read, and files too damaged to be read whole.

Each fault must give one clear line on stderr and its own exit code (README, Exit codes),
never a traceback; nothing is lost (every earlier run byte-identical, no visible partial
run) and no process outlives the command. The processes are real: `python -m postproc.cli`
in its own session, killed with real signals; the disks are real tmpfs mounts (as root:
`mount -t tmpfs -o size=2m`), skipped with the reason where the test cannot mount.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import signal
import subprocess
import sys
import time
import tracemalloc
from pathlib import Path

import psutil
import pytest

from postproc import cli, faults, locks
from postproc.adapters import csv_tables, digests
from postproc.adapters.errors import InputError
from postproc.adapters.mapping import ColumnMap
from postproc.store import Store
from postproc.synthetic import generate
from tests.conftest import SMALL_FORCES, SMALL_MEMBERS, beam, run_argv, write_inputs
from tests.test_crash_safety import hashed_tree, temp_folders

POSIX = os.name == "posix"


def start(argv: list[str], cwd: Path, **kw) -> subprocess.Popen:
    """The command line in its own session (its own process group, as a terminal would start it)."""
    return subprocess.Popen([sys.executable, "-m", "postproc.cli", *argv], cwd=cwd, stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE, start_new_session=True, **kw)


def workers_of(proc: subprocess.Popen, n: int = 2, timeout: float = 60) -> tuple[list[psutil.Process], list]:
    """Wait until the run designs in ``n`` worker processes; (workers, every descendant)."""
    t0 = time.monotonic()
    while time.monotonic() - t0 < timeout:
        assert proc.poll() is None, f"the run ended first: {proc.stderr.read().decode()[-600:]}"
        kids = psutil.Process(proc.pid).children(recursive=True)
        servers = [k for k in kids if "forkserver" in " ".join(_cmdline(k))]
        workers = [k for k in kids if servers and _ppid(k) == servers[0].pid]
        if len(workers) >= n:
            return workers, kids
        time.sleep(0.02)
    raise AssertionError("the workers never started")


def _ppid(p: psutil.Process) -> int | None:
    """The parent's pid, None for a process that ended since it was listed (a short-lived child)."""
    try:
        return p.ppid()
    except psutil.NoSuchProcess:
        return None


def _cmdline(p: psutil.Process) -> list[str]:
    try:
        return p.cmdline()
    except psutil.Error:
        return []


def gone(processes: list[psutil.Process], timeout: float) -> list[psutil.Process]:
    """The processes still alive after ``timeout`` seconds (zombies count as gone)."""
    _, alive = psutil.wait_procs(processes, timeout=timeout)
    return [p for p in alive if p.is_running() and p.status() != psutil.STATUS_ZOMBIE]


def kill_all(processes) -> None:
    for p in processes:
        with contextlib.suppress(psutil.Error):
            p.kill()


def one_error_line(stderr: bytes, native: tuple[str, ...] = ()) -> str:
    """shearpost's one error line; ``native``: prefixes of lines a compiled library may write straight
    to a dying worker's stderr before it (not Python output, so not shearpost's to word)."""
    lines = [ln for ln in stderr.decode().strip().splitlines() if not ln.startswith(native or "\0")]
    assert len(lines) == 1 and lines[0].startswith("error: ") and "Traceback" not in stderr.decode(), stderr.decode()
    return lines[0]


def copy_store(earlier_store: Path, tmp_path: Path) -> tuple[Path, dict]:
    store = tmp_path / "store"
    shutil.copytree(earlier_store, store)
    return store, hashed_tree(store / "earlier")


# ---------------------------------------------------------------- processes


@pytest.mark.skipif(not POSIX, reason="signals to a process group are POSIX")
def test_killing_the_main_process_alone_ends_its_workers(tmp_path, big_model, earlier_store):
    """The out-of-memory killer takes the main process alone. Before issue 9 its workers stayed,
    orphaned, holding their memory for over 17 minutes. Now each worker's watchdog sees the main
    process gone and ends within a second or two; the next run removes the dead run's temporary
    folder and no earlier run changes."""
    store, before = copy_store(earlier_store, tmp_path)
    proc = start(run_argv(big_model["members"], big_model["forces"], store, tmp_path / "out"), tmp_path)
    try:
        workers, family = workers_of(proc)
        os.kill(proc.pid, signal.SIGKILL)  # the main process only, not its group
        assert proc.wait(timeout=10) == -signal.SIGKILL
        alive = gone(family, timeout=15)
        assert not alive, f"outlived the main process: {[(p.pid, _cmdline(p)[:3]) for p in alive]}"
    finally:
        kill_all(psutil.Process(proc.pid).children(recursive=True) if proc.poll() is None else [])
        if proc.poll() is None:
            proc.kill()
        proc.stderr.close()
    assert hashed_tree(store / "earlier") == before
    left = temp_folders(store)
    assert left, "the killed run should have left its temporary folder"
    paths = write_inputs(tmp_path / "small", SMALL_MEMBERS, SMALL_FORCES)
    assert cli.main(run_argv(paths["members"], paths["forces"], store, tmp_path / "out2", "--no-report")) == cli.EXIT_OK
    assert not [p for p in left if p.exists()], "the dead run's temporary folder was not removed"
    assert hashed_tree(store / "earlier") == before
    assert cli.main(["verify", "--store", str(store)]) == cli.EXIT_OK


@pytest.mark.skipif(not POSIX, reason="signals are POSIX")
def test_a_killed_worker_gives_one_line_and_its_exit_code(tmp_path, big_model, earlier_store):
    """A worker killed mid-design (what the system does when memory runs out): before issue 9 a
    BrokenProcessPool traceback. Now: exit 9 and one line, the other worker stopped, nothing
    stored, the earlier run intact."""
    store, before = copy_store(earlier_store, tmp_path)
    proc = start(run_argv(big_model["members"], big_model["forces"], store, tmp_path / "out"), tmp_path)
    try:
        workers, family = workers_of(proc)
        workers[0].kill()
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == cli.EXIT_WORKER, err.decode()
    line = one_error_line(err)
    assert "worker process died" in line and "nothing was stored" in line
    assert not gone(family, timeout=10)
    assert [r.name for r in Store(store).runs()] == ["earlier"] and hashed_tree(store / "earlier") == before
    assert not temp_folders(store) and not (tmp_path / "out").exists()


@pytest.mark.skipif(not POSIX, reason="signals are POSIX")
def test_ctrl_c_stops_the_run_with_one_line(tmp_path, big_model, earlier_store):
    """Ctrl-C reaches the whole process group (as from a terminal). Before issue 9: tracebacks
    from the main process and from every worker. Now: exit 130, one line, the workers stopped,
    nothing stored."""
    store, before = copy_store(earlier_store, tmp_path)
    proc = start(run_argv(big_model["members"], big_model["forces"], store, tmp_path / "out"), tmp_path)
    try:
        workers, family = workers_of(proc)
        time.sleep(0.2)
        os.killpg(proc.pid, signal.SIGINT)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
    assert proc.returncode == cli.EXIT_INTERRUPTED, err.decode()
    assert "interrupted" in one_error_line(err)
    assert not gone(family, timeout=10)
    assert [r.name for r in Store(store).runs()] == ["earlier"] and hashed_tree(store / "earlier") == before
    assert not temp_folders(store)


@pytest.mark.skipif(not POSIX, reason="the fork server is POSIX")
def test_a_worker_ignores_ctrl_c_from_its_first_instruction():
    """A Ctrl-C that lands while a worker is still starting (before its initializer has run) gave
    a traceback from that worker. Workers forked by the fork server with engines.PRELOAD start
    with SIGINT ignored; checked in a fresh interpreter (a fork server is one per process),
    in a pool without any initializer."""
    code = ("import multiprocessing as mp, signal\n"
            "from concurrent.futures import ProcessPoolExecutor\n"
            "from postproc import engines\n"
            "ctx = mp.get_context('forkserver')\n"
            "ctx.set_forkserver_preload(engines.PRELOAD)\n"
            "with ProcessPoolExecutor(1, mp_context=ctx) as pool:\n"
            "    seen = pool.submit(signal.getsignal, signal.SIGINT).result()\n"
            "print(seen == signal.SIG_IGN, signal.getsignal(signal.SIGINT) is signal.default_int_handler)\n")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert done.stdout.split() == ["True", "True"]  # the worker ignores it; the main process still acts on it


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="sets a worker's memory limit with prlimit (Linux)")
def test_a_worker_out_of_memory_gives_one_line_and_its_exit_code(tmp_path, big_model, earlier_store):
    """A worker whose memory runs out mid-design (its address space limited to what it holds
    now plus a little): exit 8 (the MemoryError travels back from the worker), or exit 9 where
    the allocation failure ends the worker outright; one line either way, nothing stored."""
    store, before = copy_store(earlier_store, tmp_path)
    proc = start(run_argv(big_model["members"], big_model["forces"], store, tmp_path / "out"), tmp_path)
    try:
        workers, family = workers_of(proc)
        t0 = time.monotonic()  # past their start, which imports the command line module again: designing
        while not all(started(w) for w in workers):
            assert proc.poll() is None and time.monotonic() - t0 < 60
            time.sleep(0.02)
        import resource  # (POSIX only)

        for w in workers:
            with contextlib.suppress(psutil.NoSuchProcess, ProcessLookupError):
                limit = w.memory_info().vms + (8 << 20)
                resource.prlimit(w.pid, resource.RLIMIT_AS, (limit, limit))
        _, err = proc.communicate(timeout=120)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
    assert proc.returncode in (cli.EXIT_MEMORY, cli.EXIT_WORKER), err.decode()
    line = one_error_line(err, native=("OpenBLAS error: Memory allocation",))  # OpenBLAS's own, on its failure
    assert ("out of memory" in line or "worker process died" in line) and "nothing was stored" in line
    assert not gone(family, timeout=10)
    assert [r.name for r in Store(store).runs()] == ["earlier"] and hashed_tree(store / "earlier") == before


def started(worker: psutil.Process) -> bool:
    """A worker at work (its start, which imports the command line module, takes well under this)."""
    try:
        return worker.cpu_times().user > 0.5
    except psutil.NoSuchProcess:
        return True


def test_fault_kinds_and_their_codes():
    """Every kind postproc.faults gives has its exit code in the one table, and the codes are distinct."""
    codes = sorted(cli.EXIT_CODES)
    assert codes[:4] == [0, 1, 2, 3] and set(cli.FAULT_EXIT.values()) <= set(codes)
    assert len(set(cli.FAULT_EXIT.values())) == len(cli.FAULT_EXIT)  # one code per kind
    samples = [KeyboardInterrupt(), BrokenPipeError(), MemoryError(), OSError(28, "No space left on device"),
               OSError(30, "Read-only file system"), PermissionError(13, "Permission denied"), OSError(5, "EIO"),
               locks.Busy("x"), faults.BrokenProcessPool(), faults.SelfCheckError("x"),
               faults.DamagedRun("r", "f", "why")]
    kinds = [faults.describe(e)[0] for e in samples]
    assert kinds == ["interrupted", "broken-pipe", "memory", "disk-full", "read-only", "read-only", "io", "busy",
                     "worker", "internal", "damaged"]
    assert all(kind in cli.FAULT_EXIT for kind in kinds)
    assert faults.describe(ValueError("a defect")) is None  # not a fault of the environment: a traceback


@pytest.mark.skipif(not POSIX, reason="a pipe closed under a POSIX process")
def test_a_closed_pipe_gives_one_line_and_code_141(tmp_path, earlier_store):
    """`shearpost govern ... | head -0`: the reader is gone before the first write. Before issue 9
    a BrokenPipeError traceback (and Python's 'Exception ignored' at exit). Now: exit 141, one line."""
    proc = subprocess.Popen([sys.executable, "-m", "postproc.cli", "govern", "--store", str(earlier_store),
                             "--format", "csv"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=tmp_path)
    proc.stdout.close()
    err = proc.stderr.read()
    proc.wait(timeout=60)
    assert proc.returncode == cli.EXIT_BROKEN_PIPE, err.decode()
    assert "broken pipe" in one_error_line(err)


# ---------------------------------------------------------------- disks


@contextlib.contextmanager
def tmpfs(where: Path, size: str = "2m"):
    """A small tmpfs mounted at ``where`` (root only), unmounted after."""
    if not POSIX or os.geteuid() != 0:
        pytest.skip("mounting a tmpfs needs root (the test runs as an ordinary user)")
    where.mkdir(parents=True, exist_ok=True)
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(where)], capture_output=True)
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {done.stderr.decode().strip()}")
    try:
        yield where
    finally:
        subprocess.run(["umount", "-l", str(where)], capture_output=True)


def fill_up(folder: Path) -> None:
    """Fill a file system until it has no space left."""
    with open(folder / "filler", "wb") as fh:
        with contextlib.suppress(OSError):
            while True:
                fh.write(b"\0" * 65536)
                fh.flush()


def medium_model(tmp_path: Path) -> dict[str, Path]:
    return generate(tmp_path / "medium", members=300, cases=10, stations=21)  # a store of several MB


def test_disk_full_while_storing_gives_one_line_and_keeps_earlier_runs(tmp_path, earlier_store, capsys):
    """The store on a 2 MB disk that the run does not fit on. Before issue 9: tracebacks (3 of 3
    writes). Now: exit 7, one line, no run, no temporary folder; the earlier run intact."""
    with tmpfs(tmp_path / "disk") as disk:
        store = disk / "store"
        shutil.copytree(earlier_store, store)
        before = hashed_tree(store / "earlier")
        model = medium_model(tmp_path)
        capsys.readouterr()
        code = cli.main(run_argv(model["members"], model["forces"], store, tmp_path / "out", "--no-report"))
        err = capsys.readouterr().err
        assert code == cli.EXIT_DISK_FULL, err
        assert err.count("\n") == 1 and "disk is full" in err and "nothing was stored" in err
        assert [r.name for r in Store(store).runs()] == ["earlier"] and hashed_tree(store / "earlier") == before
        assert not temp_folders(store) and not (tmp_path / "out").exists()
        assert cli.main(["verify", "--store", str(store)]) == cli.EXIT_OK


def test_disk_full_while_writing_the_tables_keeps_the_run_and_export_writes_them(tmp_path, capsys):
    """--out on a full disk. Before issue 9 the run was committed, its tables missing, and the
    name could not be used again. Now: exit 7 naming the stored run and the command that writes
    its tables; the out folder holds no half-written table; `export` writes them elsewhere,
    byte-identical to a run's own."""
    paths = write_inputs(tmp_path / "in", SMALL_MEMBERS, SMALL_FORCES)
    store = tmp_path / "store"
    with tmpfs(tmp_path / "disk") as disk:
        fill_up(disk)
        capsys.readouterr()
        code = cli.main(run_argv(paths["members"], paths["forces"], store, disk / "out", "--run", "kept"))
        err = capsys.readouterr().err
        assert code == cli.EXIT_DISK_FULL, err
        assert err.count("\n") == 1 and "run kept is stored" in err and "shearpost export --run kept" in err
        assert not [p for p in (disk / "out").glob("*") if p.name != ".shearpost-writing"] if (disk / "out").exists() \
            else True
        assert not (disk / "out" / ".shearpost-writing").exists()
    assert cli.main(["export", "--run", "kept", "--store", str(store), "--out", str(tmp_path / "again")]) == cli.EXIT_OK
    assert cli.main(run_argv(paths["members"], paths["forces"], store, tmp_path / "fresh")) == cli.EXIT_OK
    for name in ("members.csv", "zones.csv"):
        assert (tmp_path / "again" / name).read_bytes() == (tmp_path / "fresh" / name).read_bytes()


def test_a_read_only_store_still_reads_and_refuses_writes_with_one_line(tmp_path, earlier_store, capsys):
    """A store on a read-only file system (an archive): `runs`, `govern`, `verify`, `export` work;
    `run` and a new `schedule` stop with exit 6 and one line. Before issue 9: a traceback."""
    with tmpfs(tmp_path / "disk", "8m") as disk:
        store = disk / "store"
        shutil.copytree(earlier_store, store)
        subprocess.run(["mount", "-o", "remount,ro", str(disk)], check=True)
        for argv in (["runs"], ["govern"], ["verify"], ["export", "--out", str(tmp_path / "ex")]):
            assert cli.main([*argv, "--store", str(store)]) == cli.EXIT_OK, argv
        paths = write_inputs(tmp_path / "in", SMALL_MEMBERS, SMALL_FORCES)
        for argv in (run_argv(paths["members"], paths["forces"], store, tmp_path / "out"),
                     ["schedule", "--store", str(store), "--out", str(tmp_path / "sched")]):
            capsys.readouterr()
            code = cli.main(argv)
            err = capsys.readouterr().err
            assert code == cli.EXIT_READ_ONLY, err
            assert err.count("\n") == 1 and "read-only" in err
        assert not (tmp_path / "out").exists()


# ---------------------------------------------------------------- two processes, one store


def test_two_runs_without_a_name_both_succeed(tmp_path, earlier_store):
    """Before issue 9 both picked the same name; the second did all the work and was then refused.
    Now each claims its name before any work: two runs, two names, both intact."""
    store, before = copy_store(earlier_store, tmp_path)
    model = medium_model(tmp_path)
    procs = [start(["run", "--members", str(model["members"]), "--forces", str(model["forces"]), "--store", str(store),
                    "--out", str(tmp_path / f"out{k}"), "--json", "--no-report"], tmp_path) for k in range(2)]
    errs = [p.communicate(timeout=180)[1].decode() for p in procs]
    # the synthetic frame leaves some members to model by hand (deep-beam): 12, as any finished run of it
    assert all(p.returncode in (cli.EXIT_OK, cli.EXIT_RESIZE, cli.EXIT_UNDESIGNED) for p in procs), errs
    names = sorted(r.name for r in Store(store).runs())
    assert len(names) == 3 and "earlier" in names, names
    assert cli.main(["verify", "--store", str(store)]) == cli.EXIT_OK
    assert hashed_tree(store / "earlier") == before and not (store / ".claims").exists()


def test_two_schedules_of_one_run_take_turns(tmp_path, earlier_store):
    """`schedule` writes into a run: under the run's lock, one builds and seals the schedule, the
    other waits and reads it; the run stays intact."""
    store, _ = copy_store(earlier_store, tmp_path)
    procs = [start(["schedule", "--store", str(store), "--out", str(tmp_path / f"s{k}")], tmp_path) for k in range(2)]
    errs = [p.communicate(timeout=120)[1].decode() for p in procs]
    assert [p.returncode for p in procs] == [0, 0], errs
    assert (tmp_path / "s0" / "schedule_marks.csv").read_bytes() == (tmp_path / "s1" / "schedule_marks.csv").read_bytes()
    assert cli.main(["verify", "--store", str(store)]) == cli.EXIT_OK


HOLD = "import sys, time; from pathlib import Path; from postproc import locks; " \
       "assert locks.claim(Path(sys.argv[1])); print('held', flush=True); time.sleep(float(sys.argv[2]))"


def hold(path: Path, seconds: float) -> subprocess.Popen:
    proc = subprocess.Popen([sys.executable, "-c", HOLD, str(path), str(seconds)], stdout=subprocess.PIPE)
    assert proc.stdout.readline().strip() == b"held"
    return proc


def test_a_lock_held_by_a_live_process_is_waited_for_then_busy(tmp_path, earlier_store, capsys, monkeypatch):
    """A lock is a file created exclusively with its owner; another process waits for it (exit 5,
    busy, after locks.WAIT_S) and takes it over once its owner is gone."""
    store, _ = copy_store(earlier_store, tmp_path)
    out = tmp_path / "out"
    out.mkdir()
    holder = hold(out / ".shearpost-writing", 30)
    try:
        monkeypatch.setattr(locks, "WAIT_S", 0.5)
        capsys.readouterr()
        assert cli.main(["export", "--store", str(store), "--out", str(out)]) == cli.EXIT_BUSY
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and f"process {holder.pid}" in err
    finally:
        holder.kill()
        holder.wait()
    # the owner is gone: its lock is stale and taken over
    assert (out / ".shearpost-writing").exists() and locks.stale(out / ".shearpost-writing")
    assert cli.main(["export", "--store", str(store), "--out", str(out)]) == cli.EXIT_OK
    assert not (out / ".shearpost-writing").exists()


def test_a_run_name_claimed_by_a_dead_process_is_free_again(tmp_path):
    """A claim left by a run that was killed (its process gone) does not block the name."""
    store = tmp_path / "store"
    holder = hold(store / ".claims" / "taken", 30)
    paths = write_inputs(tmp_path / "in", SMALL_MEMBERS, SMALL_FORCES)
    assert cli.main(run_argv(paths["members"], paths["forces"], store, tmp_path / "o1", "--run", "taken",
                             "--no-report")) == cli.EXIT_USAGE
    holder.kill()
    holder.wait()
    assert cli.main(run_argv(paths["members"], paths["forces"], store, tmp_path / "o2", "--run", "taken",
                             "--no-report")) == cli.EXIT_OK


def test_only_the_temporary_folders_of_dead_processes_are_removed(tmp_path, earlier_store):
    """`.tmp-*` folders carry their owner (process, start time, host) in their name: the next run
    removes those of processes that are gone, never one of a live process or of another host."""
    store, _ = copy_store(earlier_store, tmp_path)
    sleeper = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        live = psutil.Process(sleeper.pid)
        names = {
            "dead": f".tmp-r1-{2 ** 22 + 17}-{int(time.time() * 1000)}-{locks.host_tag()}-0123456789ab",
            "live": f".tmp-r2-{live.pid}-{int(live.create_time() * 1000)}-{locks.host_tag()}-0123456789ab",
            "reused": f".tmp-r3-{live.pid}-{int((live.create_time() - 3600) * 1000)}-{locks.host_tag()}-0123456789ab",
            "other host": f".tmp-r4-{2 ** 22 + 17}-1-{locks.host_tag('elsewhere')}-0123456789ab",
            "old style": ".tmp-r5-0123456789abcdef0123456789abcdef",
        }
        for name in names.values():
            (store / name).mkdir()
            (store / name / "part.parquet").write_bytes(b"x")
        paths = write_inputs(tmp_path / "in", SMALL_MEMBERS, SMALL_FORCES)
        assert cli.main(run_argv(paths["members"], paths["forces"], store, tmp_path / "o", "--no-report")) == 0
        left = {k for k, name in names.items() if (store / name).exists()}
        assert left == {"live", "other host", "old style"}  # the dead one and the one whose pid was reused: gone
    finally:
        sleeper.kill()
        sleeper.wait()


# ---------------------------------------------------------------- inputs that change, files too damaged to read whole


def test_a_forces_file_that_changes_between_two_reads_is_refused(tmp_path, capsys, monkeypatch):
    """With members from IFC the forces are read twice (their ids, then the rows). A file that
    changes in between would give a manifest describing bytes never designed; it is refused."""
    from tests.test_hostile_inputs import IFC, ifc_forces

    (tmp_path / "frame.ifc").write_bytes(IFC)
    forces = tmp_path / "forces.csv"
    forces.write_bytes(ifc_forces())
    from postproc import api

    original = api.read_ifc

    def read_then_append(*args, **kw):
        out = original(*args, **kw)
        with open(forces, "ab") as fh:  # the exporting program writes more rows meanwhile
            fh.write(b"G1,D,8.0,-80.0\n")
        return out

    monkeypatch.setattr(api, "read_ifc", read_then_append)
    capsys.readouterr()
    code = cli.main(["run", "--members", str(tmp_path / "frame.ifc"), "--forces", str(forces), "--store",
                     str(tmp_path / "store"), "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == cli.EXIT_INPUT and "changed while it was being read" in err, err
    assert not (tmp_path / "store").exists()


def test_the_manifest_hash_is_of_the_bytes_parsed(tmp_path):
    """Each reader records the sha256 of the bytes it parsed; the store writes that, not a hash
    taken later of whatever the file holds by then."""
    paths = write_inputs(tmp_path / "in", SMALL_MEMBERS, SMALL_FORCES)
    with digests.session():
        reader = csv_tables.ForcesReader(paths["forces"], ColumnMap())
        list(reader.batches())
        parsed = digests.recorded(paths["forces"])
        with open(paths["forces"], "ab") as fh:
            fh.write(b"B1,U,6.0,1.0\n")
        assert parsed == __import__("hashlib").sha256(paths["forces"].read_bytes()[:-13]).hexdigest()
        with pytest.raises(InputError, match="changed while it was being read"):
            list(csv_tables.ForcesReader(paths["forces"], ColumnMap()).batches())


def big_forces(path: Path, megabytes: int, last_line: bytes) -> int:
    """A forces file of about ``megabytes`` MB (many members), ``last_line`` at its end; its lines."""
    header = b"member,case,x_m,V_kN,N_kN\n"
    block = b"".join(b"M%06d,C1,%d.0,%d.5,-1.0\n" % (k, k % 7, k % 100) for k in range(20000))
    n = megabytes * (1 << 20) // len(block)
    with open(path, "wb") as fh:
        fh.write(header)
        for _ in range(n):
            fh.write(block)
        fh.write(last_line)
    return 1 + n * 20000 + last_line.count(b"\n")


DIAGNOSE = """
import resource, sys  # (POSIX only: the test runs on Linux)
from pathlib import Path
from postproc.adapters import csv_tables
from postproc.adapters.mapping import ColumnMap
spec = csv_tables.prepare(Path(sys.argv[1]), "forces", csv_tables.FORCE_COLUMNS, ColumnMap())
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
error = spec.diagnose(ValueError("conversion"))
after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print((after - before) * 1024, error.line, error.column, error.detail)
"""


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="ru_maxrss in KiB is Linux's")
def test_diagnosing_a_typo_on_the_last_line_of_a_big_file_streams_it(tmp_path):
    """A 2.2 GB forces file with a typo on its last line made the old diagnosis read it whole
    (14 GB peak: the bytes, their text, and a text buffer of it: six times the file). It streams
    the file now: on 24 MB here, the diagnosis adds under 16 MB to the process's peak memory."""
    path = tmp_path / "forces.csv"
    lines = big_forces(path, 24, b"M999999,C1,1.0,12,5O\n")  # 5O: letter O for a zero
    done = subprocess.run([sys.executable, "-c", DIAGNOSE, str(path)], capture_output=True, text=True, timeout=120)
    grown, line, column, detail = done.stdout.split(" ", 3)
    assert (int(line), column) == (lines, "N_kN") and "'5O' is not a number" in detail, done.stdout + done.stderr
    assert int(grown) < 16 << 20, f"{int(grown) / 1e6:.1f} MB more for a {path.stat().st_size / 1e6:.0f} MB file"


def test_a_nul_filled_tail_gives_a_clean_error_in_bounded_memory(tmp_path, capsys, monkeypatch):
    """A file whose end a failed copy filled with zeros. Before issue 9: MemoryError. Now: exit 1
    naming the line where the zeros start; the Python memory taken follows the parser's block
    (lowered here to 4 MB), not the file (48 MB here)."""
    monkeypatch.setattr(csv_tables.ForcesReader, "BLOCK", 4 << 20)
    path = tmp_path / "forces.csv"
    lines = big_forces(path, 8, b"")
    with open(path, "ab") as fh:
        fh.write(b"\0" * (40 << 20))
    members = write_inputs(tmp_path / "in", [beam("M000001", 6.0)], [])["members"]
    capsys.readouterr()
    tracemalloc.start()
    try:
        code = cli.main(["run", "--members", str(members), "--forces", str(path), "--store", str(tmp_path / "s"),
                         "--out", str(tmp_path / "o")])
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    err = capsys.readouterr().err
    assert code == cli.EXIT_INPUT and f"forces.csv, line {lines + 1}, column 'member': a NUL byte" in err, err
    assert peak < 16 << 20, f"{peak / 1e6:.1f} MB traced for a {path.stat().st_size / 1e6:.0f} MB file"


def test_a_line_too_long_to_be_a_record_is_named(tmp_path, capsys, monkeypatch):
    """A file with no line ends where there should be some (damaged): its line is named, never
    read into memory whole (the limit, digests.LONG_LINE, is 32 MB; lowered here to 1 MB)."""
    monkeypatch.setattr(digests, "LONG_LINE", 1 << 20)
    path = tmp_path / "forces.csv"
    lines = big_forces(path, 2, b"M1,C1,1.0,2.0" + b"x" * (3 << 20) + b",0\n")
    members = write_inputs(tmp_path / "in", [beam("M000001", 6.0)], [])["members"]
    capsys.readouterr()
    code = cli.main(["run", "--members", str(members), "--forces", str(path), "--store", str(tmp_path / "s"),
                     "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert code == cli.EXIT_INPUT and f"line {lines}: a line longer than 1 MB" in err, err
