"""The ``harvester`` command: a thin shell over the Python API.

Each command parses its options, makes one library call, renders the result, and turns a
HarvesterError into one line on stderr and a non-zero exit status (no traceback). The commands
live one group per module beside this one; this module builds the app and registers them.
"""

from __future__ import annotations

from typing import Annotated

import typer

from harvester._version import __version__
from harvester.cli.captures import captures_command
from harvester.cli.demo import demo_command
from harvester.cli.extract import extract_command
from harvester.cli.harvest import backfill_command, harvest_command, reparse_command
from harvester.cli.join import join_check_command
from harvester.cli.recipes import check_command
from harvester.cli.requests import requests_command
from harvester.cli.robots import robots_command
from harvester.cli.snapshots import snapshots_app
from harvester.cli.store import diff_command, versions_command

__all__ = ["CAUTION", "app", "main"]

CAUTION = (
    "Harvesting can breach a site's terms of use, copyright or database rights, and privacy law. "
    "robots.txt is not permission: you defer to the site's terms and to your local law. "
    "harvester identifies itself honestly and never helps evade blocks. Web archives are shared "
    "public services with terms of use of their own: be gentle with them."
)

EXIT_CODES = """Exit status: 0 success; 1 error, or (harvest) a table failed or was refused; 2 bad
usage or invalid recipe; 3 table not found or not readable as asked; 4 fetching refused or failed
(no contact, robots.txt, limits, HTTP); 5 archive error (locked, damaged, not writable, no such
snapshot record); 130 or
143 stopped by Ctrl-C or SIGTERM at a safe point, the run report kept."""

app = typer.Typer(
    name="harvester",
    help=(
        f"A polite, cached web-table harvester with a snapshot archive.\n\n{CAUTION}\n\n"
        f"{EXIT_CODES}"
    ),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
    context_settings={"terminal_width": 100, "max_content_width": 100},
)


def _version(value: bool) -> None:
    if value:
        from harvester.extract.fastpath import path_status

        typer.echo(f"harvester {__version__}\ntable extraction: {path_status()}")
        raise typer.Exit(0)


@app.callback()
def _main(
    version: Annotated[
        bool,
        typer.Option(
            "--version",
            callback=_version,
            is_eager=True,
            help="Print the version and the table-extraction path in use.",
        ),
    ] = False,
) -> None:
    """A polite, cached web-table harvester with a snapshot archive."""


app.command(name="extract")(extract_command)
app.command(name="check")(check_command)
app.command(name="harvest")(harvest_command)
app.command(name="backfill")(backfill_command)
app.command(name="reparse")(reparse_command)
app.command(name="demo")(demo_command)
app.command(name="robots")(robots_command)
app.command(name="requests")(requests_command)
app.command(name="captures")(captures_command)
app.command(name="versions")(versions_command)
app.command(name="diff")(diff_command)
app.command(name="join-check")(join_check_command)
app.add_typer(snapshots_app, name="snapshots")


def main() -> None:
    """Run the command line (the ``harvester`` console script)."""
    app()
