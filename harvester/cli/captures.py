"""``harvester captures``: a page's captures in a web archive, and the one the rule picks."""

from __future__ import annotations

import json
from typing import Annotated

import typer

from harvester.cli.common import ContactOption, TextFormat, fail, time_option
from harvester.errors import HarvesterError
from harvester.formats import tsv_field

__all__ = ["captures_command"]


def captures_command(
    url: Annotated[str, typer.Argument(metavar="URL", help="The page's own (original) URL.")],
    timemap: Annotated[
        str | None,
        typer.Option(
            "--timemap", metavar="TEMPLATE", help="TimeMap URL with {url} for the page's URL."
        ),
    ] = None,
    timegate: Annotated[
        str | None,
        typer.Option(
            "--timegate", metavar="TEMPLATE", help="TimeGate URL with {url}, if no TimeMap."
        ),
    ] = None,
    near: Annotated[
        str | None,
        typer.Option("--near", metavar="DATE", help="Target date or time (ISO 8601; UTC)."),
    ] = None,
    rule: Annotated[
        str | None, typer.Option("--rule", metavar="RULE", help="closest (default) or before.")
    ] = None,
    within: Annotated[
        str | None,
        typer.Option("--within", metavar="WINDOW", help='Only captures this near, e.g. "120d".'),
    ] = None,
    contact: ContactOption = None,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
) -> None:
    """List a page's captures in a web archive (RFC 7089), in the archive's order.

    Reads the archive's TimeMap (or asks its TimeGate) politely and fetches nothing else. The
    capture the rule picks for --near is marked: in text, lines DATETIME<TAB>URI with a third
    column "chosen"; in JSON, a list of objects with datetime, uri and chosen. Without
    --timemap or --timegate the archive is the user config's [captures]. Web archives are
    shared public services with terms of use of their own: be gentle with them.

    Example: harvester captures http://127.0.0.1:8650/seasons/2019/players.html
    --timemap "http://127.0.0.1:8651/timemap/{url}" --near 2019-06-30 --format json
    """
    from harvester.recipe.captures import archive_from_options
    from harvester.run.captures import capture_rows, find_captures

    target = time_option("--near", near)
    try:
        archive = archive_from_options(timemap, timegate, rule, within)
        choice = find_captures(url, archive, target, contact=contact)
    except HarvesterError as error:
        fail(error)
    rows = capture_rows(choice)
    if output_format is TextFormat.json:
        typer.echo(json.dumps(rows))
        return
    for row in rows:
        fields = [str(row["datetime"]), str(row["uri"])] + (["chosen"] if row["chosen"] else [])
        typer.echo("\t".join(tsv_field(field) for field in fields))
    if not rows:
        typer.echo("no captures listed", err=True)
    elif choice.chosen is None:
        typer.echo("no capture satisfies the rule and window", err=True)
