"""``harvester requests``: every request the archive's runs sent to a host, with its gap."""

from __future__ import annotations

import json
from typing import Annotated

import typer

from harvester.cli.common import DEFAULT_ARCHIVE, ArchiveOption, TextFormat, fail, time_option
from harvester.errors import HarvesterError

__all__ = ["requests_command"]


def requests_command(
    host: Annotated[
        str | None,
        typer.Option(
            "--host",
            metavar="HOST",
            help="Only requests to this host: an origin (http://127.0.0.1:8650) or a host name.",
        ),
    ] = None,
    since: Annotated[
        str | None,
        typer.Option(
            "--since", metavar="TIME", help="Only requests sent at or after TIME (no offset: UTC)."
        ),
    ] = None,
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
) -> None:
    """List every request the archive's runs sent, per host, oldest first, with the gap before it.

    Text lines hold TIME, STATUS, GAP and URL, separated by tabs: GAP is the seconds since the
    previous request to the host ended (from the run reports) or started (from the snapshot
    index, for runs whose report lists no requests), - when not known. Each host ends with a
    line giving its smallest gap and the Crawl-delay in force, saying when a gap was below it.
    --format json prints {"requests": [...], "hosts": {...}}. TIME is RFC 3339 or ISO 8601.

    Example: harvester requests --host http://127.0.0.1:8650 --since 2026-12-01 --archive archive
    """
    from harvester.run.requests_record import request_history

    moment = time_option("--since", since)
    try:
        history = request_history(archive, host=host, since=moment)
    except HarvesterError as error:
        fail(error)
    if not history.requests:
        if history.runs == 0:
            typer.echo(f"no runs in {archive}: no requests to list", err=True)
        else:
            wanted = "".join(
                (f" to {host}" if host else "", f" since {since}" if since is not None else "")
            )
            runs = f"{history.runs} run{'' if history.runs == 1 else 's'}"
            typer.echo(f"no requests{wanted} in the {runs} of {archive}", err=True)
    if output_format is TextFormat.json:
        typer.echo(json.dumps(history.to_dict(), indent=2))
        return
    for line in history.text_lines():
        typer.echo(line)
