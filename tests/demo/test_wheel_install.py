"""The demo runs from a built wheel installed into a fresh virtual environment elsewhere.

The wheel is built from this checkout and installed with no dependencies into a new venv in a
temporary folder; the new venv sees the test venv's site-packages for the dependencies only
(a path line in a .pth file: the folder is put on sys.path, its own .pth files — the editable
install of this checkout among them — are not run, per the ``site`` module docs). The demo is
then run from a folder outside the checkout, so only the wheel's own files can serve it.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import sysconfig
import venv
from pathlib import Path

import pyarrow.parquet as pq

ROOT = Path(__file__).resolve().parents[2]
_NOT_SOURCE = (".git", ".venv", "build", "dist", "*.egg-info", "archive", ".*_cache", ".hypothesis")


def _run(args: list[str], cwd: Path, env: dict[str, str]) -> str:
    done = subprocess.run(args, cwd=cwd, env=env, capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, f"{args} failed:\n{done.stdout}\n{done.stderr}"
    return done.stdout


def test_the_wheel_carries_the_demo_recipes_and_runs_the_demo(tmp_path: Path) -> None:
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "HARVESTER_CONTACT")}
    env["HARVESTER_CONFIG"] = str(tmp_path / "no-config.toml")
    # Built from a copy, so setuptools' build/ folder neither lands in the checkout nor brings
    # stale files from an earlier build into this wheel.
    source = tmp_path / "source"
    shutil.copytree(ROOT, source, symlinks=True, ignore=shutil.ignore_patterns(*_NOT_SOURCE))
    wheels = tmp_path / "wheels"
    pip = [sys.executable, "-m", "pip", "--disable-pip-version-check"]
    _run([*pip, "wheel", "--quiet", "--no-deps", "-w", str(wheels), str(source)], tmp_path, env)
    (wheel,) = wheels.glob("harvester-*.whl")

    fresh = tmp_path / "fresh-venv"
    venv.EnvBuilder(with_pip=True).create(fresh)
    python = fresh / "bin" / "python"
    site = Path(
        _run([str(python), "-c", "import sysconfig; print(sysconfig.get_path('purelib'))"],
             tmp_path, env).strip()
    )  # fmt: skip
    (site / "test-dependencies.pth").write_text(sysconfig.get_path("purelib") + "\n")
    _run([str(python), "-m", "pip", "install", "--quiet", "--no-deps", str(wheel)], tmp_path, env)

    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    where = _run([str(python), "-c", "import harvester; print(harvester.__file__)"], elsewhere, env)
    assert Path(where.strip()).is_relative_to(fresh), where  # not this checkout
    archive = tmp_path / "somewhere" / "archive"
    out = _run(
        [str(fresh / "bin" / "harvester"), "demo", "--archive", str(archive)], elsewhere, env
    )
    assert "demo recipes not found" not in out
    for dataset, table in [
        ("league-players", "players"),
        ("league-contracts", "contracts"),
        ("league-standings", "standings"),
    ]:
        part = archive / "tables" / dataset / table / "season=2026" / "version=1" / "part-0.parquet"
        assert pq.read_table(part).num_rows > 0, part
