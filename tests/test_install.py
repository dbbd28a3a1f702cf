"""A regular (not editable) install works anywhere: the wheel carries the demo's data and
the report's templates, and `shearpost demo` runs from it."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import sysconfig
import venv
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SOURCES = ["pyproject.toml", "README.md", "LICENSE", "postproc", "adapters", "sample_results"]


@pytest.mark.install
def test_wheel_installs_in_a_fresh_venv_and_runs_the_demo(tmp_path):
    src = tmp_path / "src"  # a clean copy: the build leaves nothing in the working tree
    src.mkdir()
    for name in SOURCES:
        (shutil.copytree if (ROOT / name).is_dir() else shutil.copy)(
            ROOT / name, src / name, **({"ignore": shutil.ignore_patterns("__pycache__")} if (ROOT / name).is_dir() else {}))
    build = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "--no-index",
                            "-w", str(tmp_path / "dist"), str(src)], capture_output=True, text=True, timeout=300)
    if build.returncode != 0 and "setuptools" in build.stderr + build.stdout:
        pytest.skip(f"setuptools>=77 is needed to build the wheel offline: {build.stderr[-400:]}")
    assert build.returncode == 0, build.stderr[-3000:]
    wheel = next((tmp_path / "dist").glob("shearpost-*.whl"))

    env_dir = tmp_path / "venv"
    venv.create(env_dir, with_pip=False)
    python = env_dir / ("Scripts/python.exe" if os.name == "nt" else "bin/python")
    site = subprocess.run([str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                          capture_output=True, text=True, check=True).stdout.strip()
    # the dependencies come from this environment (offline, fast); shearpost only from the wheel
    deps = {sysconfig.get_paths()["purelib"], sysconfig.get_paths()["platlib"]}
    Path(site, "dependencies.pth").write_text("\n".join(sorted(deps)) + "\n")
    subprocess.run([sys.executable, "-m", "pip", "--python", str(python), "install", "--no-deps", "--no-index",
                    "--quiet", str(wheel)], check=True, capture_output=True, timeout=300)

    work = tmp_path / "elsewhere"
    work.mkdir()
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "SHEARPOST_STORE")}
    where = subprocess.run([str(python), "-c", "import postproc, postproc.adapters; print(postproc.__file__)"],
                           cwd=work, env=env, capture_output=True, text=True, check=True).stdout.strip()
    assert Path(where).is_relative_to(env_dir), f"postproc imported from {where}, not from the wheel"
    script = env_dir / ("Scripts/shearpost.exe" if os.name == "nt" else "bin/shearpost")
    demo = subprocess.run([str(script), "demo", "--json"], cwd=work, env=env, capture_output=True, text=True,
                          timeout=300)
    assert demo.returncode == 0, demo.stderr[-3000:]
    for name in ("members.csv", "zones.csv", "report.html"):
        assert (work / "shearpost-demo" / name).stat().st_size > 1000, name
    assert "Needs action" in (work / "shearpost-demo" / "report.html").read_text(encoding="utf-8")


def test_every_subpackage_is_installed():
    """A package folder missing from pyproject.toml's list installs nothing: the wheel then
    fails at import (as postproc.demand once did)."""
    import tomllib

    root = Path(__file__).resolve().parent.parent
    listed = set(tomllib.loads((root / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    found = {"postproc." + ".".join(p.parent.relative_to(root / "postproc").parts) if p.parent != root / "postproc"
             else "postproc" for p in (root / "postproc").rglob("__init__.py")}
    assert found <= listed, sorted(found - listed)
