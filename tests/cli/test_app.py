"""The ``harvester`` app itself: the cautions in --help, and the console script as a process."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from typer.testing import CliRunner

from harvester.cli import app

PAGE = """<table id="t"><tr><th rowspan="2">Player</th><th colspan="2">Shooting</th></tr>
<tr><th>Goals</th><th>Pct</th></tr><tr><td>Ada Vorne</td><td>12</td><td>50%</td></tr></table>"""


def test_help_states_the_cautions() -> None:
    result = CliRunner().invoke(app, ["--help"])
    assert result.exit_code == 0
    assert "robots.txt is not permission" in result.stdout
    assert "terms" in result.stdout and "local law" in result.stdout


def test_console_script_runs_as_a_real_process(tmp_path: Path) -> None:
    page = tmp_path / "page.html"
    page.write_text(PAGE, encoding="utf-8")
    script = Path(sys.executable).with_name("harvester")
    done = subprocess.run(
        [str(script), "extract", str(page), "--select", "#t", "--grid", "--format", "csv"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    # HTML §4.9.12.1: "Player" spans two rows, "Shooting" two columns; every slot holds its text.
    assert done.stdout.splitlines() == [
        "Player,Shooting,Shooting",
        "Player,Goals,Pct",
        "Ada Vorne,12,50%",
    ]


def test_python_dash_m_runs_the_same_app() -> None:
    done = subprocess.run(
        [sys.executable, "-m", "harvester.cli", "--version"], capture_output=True, text=True
    )
    assert done.returncode == 0 and done.stdout.startswith("harvester ")
