"""Generate docs/cli.md from the commands' own ``--help`` text (a repository tool, not package).

Run ``python tools/docgen.py`` after changing a command; tests/test_docs.py fails when the
committed reference differs from what this prints.
"""

from __future__ import annotations

import sys
from pathlib import Path

import typer
from typer.testing import CliRunner

from harvester.cli import app

__all__ = ["cli_reference", "main"]

_INTRO = """# Command reference

Generated from `--help` by `python tools/docgen.py`; do not edit by hand.
"""


def _help(*args: str) -> str:
    result = CliRunner().invoke(app, [*args, "--help"], prog_name="harvester")
    if result.exit_code != 0:
        raise RuntimeError(f"harvester {' '.join(args)} --help failed: {result.output}")
    return result.output.rstrip() + "\n"


def cli_reference() -> str:
    """The command reference as Markdown: the top help, then every command's and subcommand's."""
    commands = typer.main.get_command(app).commands  # type: ignore[attr-defined]
    sections = [_INTRO, "## harvester\n", f"```\n{_help()}```\n"]
    for name in sorted(commands):
        sections += [f"## harvester {name}\n", f"```\n{_help(name)}```\n"]
        for sub in sorted(getattr(commands[name], "commands", {})):  # a group's own commands
            sections += [f"## harvester {name} {sub}\n", f"```\n{_help(name, sub)}```\n"]
    return "\n".join(sections)


def main() -> None:
    """Write docs/cli.md (or print it with ``--stdout``)."""
    text = cli_reference()
    if "--stdout" in sys.argv:
        sys.stdout.write(text)
        return
    target = Path(__file__).resolve().parent.parent / "docs" / "cli.md"
    target.write_text(text, encoding="utf-8")
    print(f"wrote {target}")


if __name__ == "__main__":
    main()
