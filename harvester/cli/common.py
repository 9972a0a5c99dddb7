"""What every command shares: options, one-line error exits, input files, KEY=VALUE pairs."""

from __future__ import annotations

import sys
from datetime import UTC, datetime
from enum import StrEnum
from pathlib import Path
from typing import Annotated, NoReturn

import typer

from harvester.errors import HarvesterError

__all__ = [
    "DEFAULT_ARCHIVE",
    "ArchiveOption",
    "ContactOption",
    "ParamOption",
    "TextFormat",
    "fail",
    "parse_assignments",
    "read_input",
    "time_option",
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
ParamOption = Annotated[
    list[str] | None,
    typer.Option(
        "--param", metavar="NAME=VALUE", help="Set a parameter's value, or site, for this run."
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


def time_option(option: str, text: str | None) -> datetime | None:
    """A time option as an aware UTC time: RFC 3339 or an ISO 8601 date or time (RFC 3339 §5.6
    allows a lower-case t and z); one without an offset is UTC, a date is its midnight."""
    if text is None:
        return None
    try:
        moment = datetime.fromisoformat(text.strip().upper())
    except ValueError:
        usage(f"{option} {text!r}: not a date or time — write e.g. 2026-03-01 or 2026-03-01T12:00Z")
    return moment.replace(tzinfo=UTC) if moment.utcoffset() is None else moment.astimezone(UTC)


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


def parse_assignments(
    pairs: list[str] | None, option: str, example: str, *, metavar: str = "NAME=VALUE"
) -> dict[str, str]:
    """``NAME=VALUE`` option values as a dict; blanks around a name or value are ignored.

    A pair with no ``=`` or no name, or a name given twice, is a usage error naming the option
    and showing ``example`` (e.g. ``season=2024``).
    """
    found: dict[str, str] = {}
    for pair in pairs or []:
        name, equals, value = pair.partition("=")
        name = name.strip()
        if not equals or not name:
            usage(f"{option} {pair!r} is not {metavar} — write e.g. {option} {example}")
        if name in found:
            usage(f"{option} names {name!r} twice — give each name once")
        found[name] = value.strip()
    return found
