"""How every command ends on an error: one line on stderr and the error's exit status."""

from __future__ import annotations

from typing import NoReturn

import typer

from harvester.errors import HarvesterError

__all__ = ["fail", "usage"]


def fail(error: HarvesterError) -> NoReturn:
    """Print a HarvesterError as one line and exit with its status (no traceback)."""
    typer.echo(f"error: {error}", err=True)
    raise typer.Exit(error.exit_code)


def usage(message: str) -> NoReturn:
    """Print a usage problem as one line and exit with status 2."""
    typer.echo(f"error: {message}", err=True)
    raise typer.Exit(2)
