"""Start-up: ``harvester --help`` and every ``harvester COMMAND --help`` import none of the
package's heavy dependencies; each command imports what it uses when it runs.

Each check runs the CLI's ``main`` in a fresh interpreter through a small probe that writes
``sorted(sys.modules)`` to a file once ``main`` is done. No timings here: bench/startup_bench.py
measures the start-up itself (BENCHMARKS.md).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
import typer

from harvester.cli import app

# Every runtime dependency in pyproject.toml but typer, by import name. Costs of a bare import
# measured with ``python -X importtime`` on this machine (BENCHMARKS.md): pandas ~490 ms,
# duckdb ~190 ms (a test dependency), pyarrow.compute ~130 ms, numpy ~80 ms, httpx ~70 ms,
# filelock ~60 ms, platformdirs ~40 ms, warcio ~40 ms, tenacity ~30 ms, rich.console ~30 ms,
# diskcache ~20 ms, rapidfuzz ~15 ms, anyascii ~15 ms, selectolax.lexbor ~10 ms.
NOT_AT_START_UP = (
    "anyascii",
    "diskcache",
    "duckdb",
    "filelock",
    "httpx",
    "numpy",
    "pandas",
    "platformdirs",
    "pyarrow",
    "pyarrow.compute",
    "rapidfuzz",
    "rich",
    "selectolax",
    "tenacity",
    "warcio",
)

# Runs the CLI as the console script does (argv[1] is the file for the module list, the rest
# the command line) and then writes every module imported by then.
PROBE = """
import json, sys
from harvester.cli import main
modules_file, sys.argv = sys.argv[1], ["harvester", *sys.argv[2:]]
try:
    main()
    code = 0
except SystemExit as stop:
    code = stop.code
with open(modules_file, "w", encoding="utf-8") as out:
    json.dump(sorted(sys.modules), out)
sys.exit(code)
"""


def _run_cli(tmp_path: Path, *args: str) -> tuple[subprocess.CompletedProcess[str], set[str]]:
    """Run ``harvester ARGS`` in a fresh interpreter: its result and the modules it imported."""
    modules_file = tmp_path / "modules.json"
    done = subprocess.run(
        [sys.executable, "-c", PROBE, str(modules_file), *args],
        capture_output=True,
        text=True,
        cwd=tmp_path,
        timeout=120,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    return done, set(json.loads(modules_file.read_text(encoding="utf-8")))


def _command_lines() -> list[list[str]]:
    """Every command and subcommand of the app, as the words before ``--help``."""
    lines: list[list[str]] = [[]]
    commands = typer.main.get_command(app).commands  # type: ignore[attr-defined]
    for name in sorted(commands):
        lines.append([name])
        lines += [[name, sub] for sub in sorted(getattr(commands[name], "commands", {}))]
    return lines


@pytest.mark.parametrize("words", _command_lines(), ids=lambda words: " ".join(words) or "-")
def test_help_imports_no_heavy_dependency(tmp_path: Path, words: list[str]) -> None:
    done, modules = _run_cli(tmp_path, *words, "--help")
    assert done.stdout.startswith("Usage: harvester"), done.stdout  # the help was printed
    assert sorted(modules & set(NOT_AT_START_UP)) == []


def test_the_command_list_covers_the_commands_people_run() -> None:
    # The parametrized test above would pass vacuously over an empty list.
    lines = {" ".join(words) for words in _command_lines()}
    assert {"", "extract", "harvest", "join-check", "snapshots show", "diff"} <= lines


def test_version_imports_no_heavy_dependency(tmp_path: Path) -> None:
    done, modules = _run_cli(tmp_path, "--version")
    assert done.stdout.startswith("harvester ")
    assert sorted(modules & set(NOT_AT_START_UP)) == []


def test_importing_the_package_imports_no_heavy_dependency(tmp_path: Path) -> None:
    # The public API loads on first use (harvester/__init__.py), so a library user pays for
    # what they use too; asking for one name loads its module.
    code = (
        "import json, sys, harvester; before = sorted(sys.modules); harvester.extract_table;"
        " print(json.dumps([before, sorted(sys.modules)]))"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=False
    )
    assert done.returncode == 0, done.stderr
    before, after = (set(modules) for modules in json.loads(done.stdout))
    assert sorted(before & set(NOT_AT_START_UP)) == []
    assert {"harvester.extract.table", "pyarrow", "selectolax"} <= after


def test_the_probe_sees_what_a_command_imports_when_it_runs(tmp_path: Path) -> None:
    # The probe is not blind: running extract imports the parser and pyarrow, which --help
    # does not. (HTML §4.9.1: a table with one header row and one data row.)
    page = tmp_path / "page.html"
    page.write_text("<table><tr><th>n</th></tr><tr><td>1</td></tr></table>", encoding="utf-8")
    done, modules = _run_cli(tmp_path, "extract", str(page), "--format", "csv")
    assert done.stdout == "n\n1\n"
    assert {"pyarrow", "selectolax"} <= modules
