"""The compiled reader is optional: the package builds without a C compiler and says so.

The wheel is built offline with the setuptools the test extras install (no build isolation, so
no package index is asked); CC=false stands for a machine without a working compiler.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


PIP_WHEEL = [sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "--no-build-isolation"]
PIP_WHEEL += ["--no-index"]
LEFT_OUT = (".venv", ".git", "build", "dist", "*.so", "*.egg-info", "__pycache__", "archive")


def build_wheel(tmp_path: Path, compiler: str | None) -> list[str]:
    # From a copy of the sources: the checkout holds the extension the editable install built.
    source = tmp_path / "source"
    shutil.copytree(ROOT, source, ignore=shutil.ignore_patterns(*LEFT_OUT))
    env = dict(os.environ)
    if compiler is not None:
        env["CC"] = compiler
    done = subprocess.run(
        [*PIP_WHEEL, "-w", str(tmp_path), str(source)],
        capture_output=True,
        text=True,
        env=env,
        timeout=300,
    )
    assert done.returncode == 0, done.stderr[-2000:]
    (wheel,) = tmp_path.glob("harvester-*.whl")
    return zipfile.ZipFile(wheel).namelist()


def test_without_a_compiler_the_package_still_builds_without_the_extension(
    tmp_path: Path,
) -> None:
    names = build_wheel(tmp_path, compiler="false")
    assert "harvester/extract/table.py" in names
    assert not [name for name in names if name.endswith((".so", ".pyd"))]


def test_with_a_compiler_the_wheel_holds_the_extension(tmp_path: Path) -> None:
    names = build_wheel(tmp_path, compiler=None)
    assert [name for name in names if name.startswith("harvester/extract/_plaintable.")]


# A process in which the extension cannot be imported, as on a machine where it was not built.
WITHOUT_EXTENSION = """
import sys
class NoExtension:
    def find_spec(self, name, path=None, target=None):
        if name == "harvester.extract._plaintable":
            raise ImportError("no compiled module here")
        return None
sys.meta_path.insert(0, NoExtension())
from harvester.extract.fastpath import path_status
from harvester.extract.table import extract_table
print(path_status())
print(extract_table("<table><tr><th>A<tr><td>1</table>").table.to_pylist())
"""


def test_without_the_extension_harvester_says_so_and_reads_through_the_dom_path() -> None:
    env = {name: value for name, value in os.environ.items() if name != "HARVESTER_EXTRACT_PATH"}
    done = subprocess.run(
        [sys.executable, "-c", WITHOUT_EXTENSION],
        capture_output=True,
        text=True,
        timeout=60,
        env=env,
    )
    assert done.returncode == 0, done.stderr
    status, rows = done.stdout.splitlines()
    assert status.startswith("DOM path only: the extension was not built")
    assert rows == "[{'a': 1}]"
