"""`harvester backfill` in a real pseudo-terminal: a live display per host, result lines whole.

The child's standard output is the slave side of a pty (``os.openpty``), so it is a terminal as
far as the command can tell; the master side is read until the child exits. The same run with
standard output on a pipe prints the result lines and no control character at all.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import termios
from pathlib import Path

from harvester.demo.server import DemoServer
from harvester.demo.tour import DEMO_ARCHIVE
from harvester.demo.web_archive import DemoWebArchive

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
ESCAPES = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")


def recipe(tmp_path: Path, web: DemoWebArchive) -> Path:
    text = (RECIPES / "league-standings.toml").read_text(encoding="utf-8")
    path = tmp_path / "league-standings.toml"
    path.write_text(
        text.replace("delay = 0.5", "delay = 0.3").replace(DEMO_ARCHIVE, web.base_url), "utf-8"
    )
    return path


def command(tmp_path: Path, site: DemoServer, web: DemoWebArchive, archive: str) -> list[str]:
    return [
        sys.executable, "-m", "harvester.cli", "backfill", str(recipe(tmp_path, web)),
        "--archive", str(tmp_path / archive), "--param", f"site={site.base_url}",
        "--param", "season=2022..2026",
    ]  # fmt: skip


def test_a_backfill_on_a_terminal_shows_each_host_and_keeps_the_lines_whole(
    tmp_path: Path, demo_site: DemoServer, demo_archive: DemoWebArchive
) -> None:
    master, slave = os.openpty()
    termios.tcsetwinsize(slave, (30, 160))
    env = {**os.environ, "TERM": "xterm-256color", "COLUMNS": "160"}
    with subprocess.Popen(
        command(tmp_path, demo_site, demo_archive, "tty"), stdout=slave, stderr=slave, env=env
    ) as child:
        os.close(slave)
        chunks = []
        while True:
            try:
                chunk = os.read(master, 65536)
            except OSError:  # EIO: the child closed its side
                break
            if not chunk:
                break
            chunks.append(chunk)
        child.wait(timeout=60)
    os.close(master)
    assert child.returncode == 0
    shown = b"".join(chunks).decode("utf-8", errors="replace")
    assert "\x1b[" in shown  # a live display was drawn
    plain = ESCAPES.sub("", shown).replace("\r", "\n")
    # One row per host: the live site with its five planned pages, the web archive by requests.
    assert demo_site.base_url in plain and demo_archive.base_url in plain
    assert "/5 pages" in plain
    assert re.search(r"next request in [0-9.]+ s", plain)
    # Every table's line arrived whole, on a line of its own (rich shows a tab as the spaces a
    # terminal would move by).
    for season in range(2022, 2027):
        found = rf"(?m)^new\s+league-standings/standings\s+season={season}\s+10 rows, version 1"
        assert re.search(found, plain), season


def test_the_same_run_on_a_pipe_prints_plain_lines_only(
    tmp_path: Path, demo_site: DemoServer, demo_archive: DemoWebArchive
) -> None:
    done = subprocess.run(
        command(tmp_path, demo_site, demo_archive, "pipe"),
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    assert "\x1b" not in done.stdout and "\x1b" not in done.stderr
    lines = done.stdout.splitlines()
    assert len([line for line in lines if line.startswith("new\t")]) == 5
    assert lines[-1].startswith("run ")  # the summary, and nothing else
