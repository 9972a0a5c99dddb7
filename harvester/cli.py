"""The ``harvester`` command: a thin shell over the Python API.

Each command parses its options, makes one API call, renders the result, and turns a
HarvesterError into one line on stderr and a non-zero exit status (no traceback).
"""

from __future__ import annotations

import dataclasses
import sys
from enum import StrEnum
from pathlib import Path
from typing import Annotated

import typer

from harvester import __version__
from harvester.cli_common import (
    DEFAULT_ARCHIVE,
    ArchiveOption,
    ContactOption,
    TextFormat,
    fail,
    read_input,
    usage,
)
from harvester.cli_demo import demo_command
from harvester.cli_robots import robots_command
from harvester.cli_store import diff_command, versions_command
from harvester.errors import HarvesterError
from harvester.extract.rules import TableRule
from harvester.extract.table import extract_grid, extract_table, read_page
from harvester.render import (
    grid_to_csv,
    grid_to_json,
    table_rows,
    table_to_csv,
    table_to_json,
    table_to_rich,
    write_parquet,
)

__all__ = ["CAUTION", "app", "main"]

CAUTION = (
    "Harvesting can breach a site's terms of use, copyright or database rights, and privacy law. "
    "robots.txt is not permission: you defer to the site's terms and to your local law. "
    "harvester identifies itself honestly and never helps evade blocks."
)

EXIT_CODES = """Exit status: 0 success; 1 error, or (harvest) a table failed or was refused; 2 bad
usage or invalid recipe; 3 table not found or not readable as asked; 4 fetching refused or failed
(no contact, robots.txt, limits, HTTP); 5 archive error (locked, damaged)."""

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


class OutputFormat(StrEnum):
    """How ``extract`` prints its result."""

    table = "table"
    csv = "csv"
    json = "json"
    parquet = "parquet"


def _version(value: bool) -> None:
    if value:
        typer.echo(f"harvester {__version__}")
        raise typer.Exit(0)


@app.callback()
def _main(
    version: Annotated[
        bool,
        typer.Option("--version", callback=_version, is_eager=True, help="Print the version."),
    ] = False,
) -> None:
    """A polite, cached web-table harvester with a snapshot archive."""


def _rule_for(
    recipe: Path | None,
    table: str | None,
    select: str | None,
    index: int | None,
    header_rows: int | None,
    drop_hidden: bool,
) -> TableRule:
    if recipe is not None:
        from harvester.recipe import load_recipe

        loaded = load_recipe(recipe)
        if table is None:
            if len(loaded.tables) != 1:
                names = ", ".join(t.rule.name for t in loaded.tables)
                usage(f"{recipe}: the recipe has several tables ({names}) — add --table NAME")
            rule = loaded.tables[0].rule
        else:
            rule = loaded.table(table)
    elif table is not None:
        usage("--table needs --recipe — add --recipe RECIPE.toml")
    else:
        rule = TableRule()
    return dataclasses.replace(
        rule,
        select=rule.select if select is None else select,
        index=rule.index if index is None else index,
        header_rows=rule.header_rows if header_rows is None else header_rows,
        hidden="drop" if drop_hidden else rule.hidden,
    )


@app.command()
def extract(
    file: Annotated[
        str, typer.Argument(metavar="FILE", help="A saved HTML page, or - for standard input.")
    ],
    select: Annotated[
        str | None, typer.Option("--select", "-s", help="CSS selector naming the table.")
    ] = None,
    index: Annotated[
        int | None, typer.Option("--index", "-i", help="Which match of the selector (0 = first).")
    ] = None,
    grid: Annotated[
        bool, typer.Option("--grid", help="Print the span-expanded grid (no header line).")
    ] = False,
    header_rows: Annotated[
        int | None, typer.Option("--header-rows", help="Number of header rows (default: detect).")
    ] = None,
    output_format: Annotated[
        OutputFormat | None,
        typer.Option("--format", "-f", help="table (default on a terminal), csv, json or parquet."),
    ] = None,
    out: Annotated[
        Path | None, typer.Option("--out", "-o", help="File for --format parquet.")
    ] = None,
    recipe: Annotated[
        Path | None, typer.Option("--recipe", help="Apply a recipe's table rule to the page.")
    ] = None,
    table: Annotated[str | None, typer.Option("--table", help="Which table of the recipe.")] = None,
    drop_hidden: Annotated[
        bool, typer.Option("--drop-hidden", help="Leave out cells hidden with display:none.")
    ] = False,
    base_url: Annotated[
        str | None, typer.Option("--base-url", help="Resolve relative links against this URL.")
    ] = None,
) -> None:
    """Read one table from a saved HTML page.

    Example: harvester extract players.html --select "table#players" --header-rows 2 --format json
    """
    chosen = output_format or (OutputFormat.table if sys.stdout.isatty() else OutputFormat.csv)
    if chosen is OutputFormat.parquet and out is None:
        usage("--format parquet writes a file — add --out PATH")
    if grid and chosen is OutputFormat.parquet:
        usage("--grid prints text slots — use --format csv, json or table")
    data = read_input(file)
    source = "<stdin>" if file == "-" else file
    try:
        rule = _rule_for(recipe, table, select, index, header_rows, drop_hidden)
        page = read_page(data, source)
        if grid:
            slots = extract_grid(page, rule.select, rule.index, drop_hidden=rule.hidden == "drop")
            if chosen is OutputFormat.csv:
                grid_to_csv(slots, sys.stdout)
            elif chosen is OutputFormat.json:
                grid_to_json(slots, sys.stdout)
            else:
                table_to_rich(slots, None, sys.stdout)
            return
        result = extract_table(page, rule, base_url=base_url)
    except HarvesterError as error:
        fail(error)
    if chosen is OutputFormat.csv:
        table_to_csv(result.table, sys.stdout)
    elif chosen is OutputFormat.json:
        table_to_json(result.table, sys.stdout)
    elif chosen is OutputFormat.parquet:
        assert out is not None
        try:
            write_parquet(result.table, out)
        except OSError as exc:
            usage(f"{out}: cannot write the Parquet file ({exc}) — check the folder exists")
        typer.echo(f"wrote {result.table.num_rows} rows to {out}", err=True)
    else:
        rows = [list(row.values()) for row in table_rows(result.table)]
        table_to_rich(rows, result.table.column_names, sys.stdout, title=result.caption or "")


def _overrides(pairs: list[str] | None) -> dict[str, str]:
    overrides: dict[str, str] = {}
    for pair in pairs or []:
        name, equals, value = pair.partition("=")
        if not equals or not name.strip():
            usage(f"--set {pair!r} is not NAME=VALUE — write e.g. --set season=2024")
        overrides[name.strip()] = value.strip()
    return overrides


@app.command()
def check(
    recipe: Annotated[Path, typer.Argument(metavar="RECIPE", help="A recipe file (TOML).")],
    every_value: Annotated[
        bool, typer.Option("--all", help="Plan every parameter value, not just the current one.")
    ] = False,
    set_values: Annotated[
        list[str] | None,
        typer.Option("--set", metavar="NAME=VALUE", help="Override site or a parameter."),
    ] = None,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
) -> None:
    """Validate a recipe and print the pages and tables it would fetch, fetching nothing.

    Example: harvester check recipes/league-players.toml --all
    """
    from harvester.recipe import load_recipe

    try:
        loaded = load_recipe(recipe, _overrides(set_values))
        plan = loaded.plan(every_value=every_value)
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        import json

        pages = [
            {"url": page.url, "parameters": dict(page.parameters), "tables": list(page.tables)}
            for page in plan
        ]
        typer.echo(json.dumps({"recipe": loaded.name, "sha256": loaded.sha256, "pages": pages}))
        return
    tables = sum(len(page.tables) for page in plan)
    typer.echo(
        f"{recipe}: recipe {loaded.name!r} is valid — {len(plan)} page(s), {tables} table(s)"
    )
    for page in plan:
        typer.echo(f"{page.url}\t{', '.join(page.tables)}")


@app.command()
def harvest(
    recipe: Annotated[Path, typer.Argument(metavar="RECIPE", help="A recipe file (TOML).")],
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    set_values: Annotated[
        list[str] | None,
        typer.Option("--set", metavar="NAME=VALUE", help="Override site or a parameter."),
    ] = None,
    every_value: Annotated[
        bool, typer.Option("--all", help="Every parameter value, not just the current one.")
    ] = False,
    contact: ContactOption = None,
    offline: Annotated[
        bool, typer.Option("--offline", help="Use only the cache; fetch nothing.")
    ] = False,
    refresh: Annotated[
        bool, typer.Option("--refresh", help="Revalidate every cached page.")
    ] = False,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json (JSON lines).")
    ] = TextFormat.text,
) -> None:
    """Harvest a recipe's tables politely into the archive, one line per table.

    Each table is fetched, read and stored as a new version of its partition, or left as it is
    when nothing changed. A table that fails is reported and touches nothing. Exit status 1 when
    any table failed or was refused.

    Example: harvester harvest recipes/league-players.toml --set site=http://127.0.0.1:8650
    """
    from harvester.fetch.client import FetchMode
    from harvester.recipe import load_recipe
    from harvester.run import harvest as run_harvest
    from harvester.run import summary

    if offline and refresh:
        usage("--offline and --refresh contradict each other — pick one")
    mode: FetchMode = "offline" if offline else "refresh" if refresh else "normal"
    try:
        loaded = load_recipe(recipe, _overrides(set_values))
        show = output_format is TextFormat.text
        report = run_harvest(
            loaded,
            archive=archive,
            contact=contact,
            mode=mode,
            every_value=every_value,
            on_outcome=(lambda outcome: typer.echo(outcome.line())) if show else None,
        )
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        typer.echo(report.to_json_lines(), nl=False)
    else:
        typer.echo(f"run {report.run_id}: {summary(report.outcomes)} (report in {archive}/runs/)")
    if report.failed:
        raise typer.Exit(1)


app.command(name="demo")(demo_command)
app.command(name="robots")(robots_command)
app.command(name="versions")(versions_command)
app.command(name="diff")(diff_command)


def main() -> None:
    """Run the command line (the ``harvester`` console script)."""
    app()


if __name__ == "__main__":
    main()
