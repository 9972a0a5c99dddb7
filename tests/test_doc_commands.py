"""Every `harvester ...` command shown in the README and docs/ still parses.

Each command line from a ```sh block (or a bare ``` block) is handed to the real CLI with
--help appended: an unknown command or option fails the parse (exit 2) before help is shown.
"""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import pytest
from typer.testing import CliRunner

from harvester.cli import app

ROOT = Path(__file__).resolve().parent.parent
DOCS = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
BLOCK = re.compile(r"```(?:sh|console|bash)?\n(.*?)```", re.S)


def shown_commands() -> list[tuple[str, str]]:
    found = []
    for path in DOCS:
        if path.name == "cli.md":  # generated from --help itself
            continue
        for block in BLOCK.findall(path.read_text(encoding="utf-8")):
            for line in block.splitlines():
                line = line.split("  #", 1)[0].strip().rstrip("&").strip()
                if line.startswith("harvester "):
                    found.append((path.name, line))
    return found


COMMANDS = shown_commands()


def test_the_docs_show_commands() -> None:
    assert len(COMMANDS) >= 10


@pytest.mark.parametrize(("doc", "line"), COMMANDS, ids=[f"{d}:{line}" for d, line in COMMANDS])
def test_command_parses(doc: str, line: str) -> None:
    args = shlex.split(line)[1:]
    result = CliRunner().invoke(app, [*args, "--help"])
    assert result.exit_code == 0, f"{doc}: `{line}` does not parse: {result.output}"
