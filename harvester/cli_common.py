"""What every command shares: one-line error exits, reading an input file, text-or-JSON output."""

from __future__ import annotations

import sys
from enum import StrEnum
from pathlib import Path
from typing import Annotated, NoReturn

import typer

from harvester.errors import HarvesterError

__all__ = [
    "DEFAULT_ARCHIVE",
    "ArchiveOption",
    "ContactOption",
    "TextFormat",
    "fail",
    "read_input",
    "usage",
]

DEFAULT_ARCHIVE = "archive"  # the default output root (DESIGN §2)
ArchiveOption = Annotated[
    str, typer.Option("--archive", metavar="ROOT", help="Archive root: a folder or a URI.")
]
ContactOption = Annotated[
    str | None,
    typer.Option(
        "--contact",
        help="Your e-mail or URL, sent with every request (else the recipe's, "
        "HARVESTER_CONTACT or the config file).",
    ),
]


class TextFormat(StrEnum):
    """Output for people (text) or for programs (json)."""

    text = "text"
    json = "json"


def fail(error: HarvesterError) -> NoReturn:
    """Print a HarvesterError as one line and exit with its status (no traceback)."""
    typer.echo(f"error: {error}", err=True)
    raise typer.Exit(error.exit_code)


def usage(message: str) -> NoReturn:
    """Print a usage problem as one line and exit with status 2."""
    typer.echo(f"error: {message}", err=True)
    raise typer.Exit(2)


def read_input(path: str) -> bytes:
    """The bytes of a file named on the command line, or of standard input for ``-``."""
    if path == "-":
        return sys.stdin.buffer.read()
    try:
        return Path(path).read_bytes()
    except OSError as exc:
        usage(f"{path}: cannot read the file ({exc.strerror}) — check the path")
