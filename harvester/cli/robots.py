"""``harvester robots``: what robots.txt says of each URL, from a file or fetched politely."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated

import typer

from harvester.cli.common import ContactOption, TextFormat, fail, read_input
from harvester.errors import HarvesterError
from harvester.fetch.identity import AGENT_TOKEN

__all__ = ["robots_command"]


def robots_command(
    urls: Annotated[list[str], typer.Argument(metavar="URL...", help="URLs (or paths) to test.")],
    robots_file: Annotated[
        Path | None,
        typer.Option("--robots-file", metavar="FILE", help="Judge by this robots.txt file."),
    ] = None,
    agent: Annotated[
        str, typer.Option("--agent", metavar="NAME", help="Product token to match groups by.")
    ] = AGENT_TOKEN,
    contact: ContactOption = None,
    explain: Annotated[
        bool, typer.Option("--explain", help="Add the deciding rule as a third column.")
    ] = False,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
) -> None:
    """Say, per URL, whether robots.txt allows it: allowed<TAB>URL or disallowed<TAB>URL.

    With --robots-file the file decides and nothing is fetched. Without it, each site's
    robots.txt is fetched politely (with --contact) and the Crawl-delay in force is printed
    last as crawl-delay<TAB>SECONDS. robots.txt is a site's wish, not a permission.

    Example: harvester robots --robots-file robots.txt --agent harvester /seasons/2026/ /private/
    """
    from harvester.config import configured_contact
    from harvester.fetch.identity import Identity
    from harvester.fetch.robots_check import judge_by_file, judge_live

    try:
        if robots_file is not None:
            report = judge_by_file(
                read_input(str(robots_file)), urls, agent, location=str(robots_file)
            )
        else:
            identity = Identity.from_contact(contact or configured_contact(), where="--contact")
            report = judge_live(urls, agent, identity)
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        typer.echo(json.dumps(report.to_dict()))
        return
    for line in report.text_lines(explain=explain):
        typer.echo(line)
