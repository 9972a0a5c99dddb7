"""``harvester extract``: read one table from a saved HTML page, with no network at all."""

from __future__ import annotations

import sys
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from harvester.cli.common import fail, read_input, usage
from harvester.errors import HarvesterError

if TYPE_CHECKING:
    from harvester.extract.table import ExtractedTable

__all__ = ["OutputFormat", "extract_command"]


class OutputFormat(StrEnum):
    """How ``extract`` prints its result."""

    table = "table"
    csv = "csv"
    json = "json"
    parquet = "parquet"


FileArgument = Annotated[
    str, typer.Argument(metavar="FILE", help="A saved HTML page, or - for standard input.")
]
SelectOption = Annotated[
    str | None, typer.Option("--select", "-s", help="CSS selector naming the table.")
]
IndexOption = Annotated[
    int | None, typer.Option("--index", "-i", help="Which match of the selector (0 = first).")
]
GridOption = Annotated[
    bool, typer.Option("--grid", help="Print the span-expanded grid (no header line).")
]
HeaderRowsOption = Annotated[
    int | None, typer.Option("--header-rows", help="Number of header rows (default: detect).")
]
FormatOption = Annotated[
    OutputFormat | None,
    typer.Option("--format", "-f", help="table (default on a terminal), csv, json or parquet."),
]
OutOption = Annotated[Path | None, typer.Option("--out", "-o", help="File for --format parquet.")]
RecipeOption = Annotated[
    Path | None, typer.Option("--recipe", help="Apply a recipe's table rule to the page.")
]
TableOption = Annotated[str | None, typer.Option("--table", help="Which table of the recipe.")]
DropHiddenOption = Annotated[
    bool, typer.Option("--drop-hidden", help="Leave out cells hidden with display:none.")
]
BaseUrlOption = Annotated[
    str | None, typer.Option("--base-url", help="Resolve relative links against this URL.")
]


def extract_command(
    file: FileArgument,
    select: SelectOption = None,
    index: IndexOption = None,
    grid: GridOption = False,
    header_rows: HeaderRowsOption = None,
    output_format: FormatOption = None,
    out: OutOption = None,
    recipe: RecipeOption = None,
    table: TableOption = None,
    drop_hidden: DropHiddenOption = False,
    base_url: BaseUrlOption = None,
) -> None:
    """Read one table from a saved HTML page.

    Example: harvester extract players.html --select "table#players" --header-rows 2 --format json
    """
    from harvester.extract.table import extract_grid, extract_table, read_page
    from harvester.recipe import choose_table_rule, load_recipe

    chosen = output_format or (OutputFormat.table if sys.stdout.isatty() else OutputFormat.csv)
    if chosen is OutputFormat.parquet and out is None:
        usage("--format parquet writes a file — add --out PATH")
    if grid and chosen is OutputFormat.parquet:
        usage("--grid prints text slots — use --format csv, json or table")
    if table is not None and recipe is None:
        usage("--table needs --recipe — add --recipe RECIPE.toml")
    data = read_input(file)
    try:
        loaded = load_recipe(recipe) if recipe is not None else None
        rule = choose_table_rule(
            loaded,
            table,
            select=select,
            index=index,
            header_rows=header_rows,
            drop_hidden=drop_hidden,
        )
        page = read_page(data, "<stdin>" if file == "-" else file)
        if grid:
            slots = extract_grid(page, rule.select, rule.index, drop_hidden=rule.hidden == "drop")
            _print_grid(slots, chosen)
            return
        result = extract_table(page, rule, base_url=base_url)
    except HarvesterError as error:
        fail(error)
    _print_table(result, chosen, out)


def _print_grid(slots: list[list[str]], chosen: OutputFormat) -> None:
    from harvester.cli.render import grid_to_csv, grid_to_json, table_to_rich

    if chosen is OutputFormat.csv:
        grid_to_csv(slots, sys.stdout)
    elif chosen is OutputFormat.json:
        grid_to_json(slots, sys.stdout)
    else:
        table_to_rich(slots, None, sys.stdout)


def _print_table(result: ExtractedTable, chosen: OutputFormat, out: Path | None) -> None:
    from harvester.cli.render import (
        table_rows,
        table_to_csv,
        table_to_json,
        table_to_rich,
        write_parquet,
    )

    if chosen is OutputFormat.csv:
        table_to_csv(result.table, sys.stdout)
    elif chosen is OutputFormat.json:
        table_to_json(result.table, sys.stdout)
    elif chosen is OutputFormat.parquet:
        assert out is not None  # checked before anything was read
        try:
            write_parquet(result.table, out)
        except OSError as exc:
            usage(f"{out}: cannot write the Parquet file ({exc}) — check the folder exists")
        typer.echo(f"wrote {result.table.num_rows} rows to {out}", err=True)
    else:
        rows = [list(row.values()) for row in table_rows(result.table)]
        table_to_rich(rows, result.table.column_names, sys.stdout, title=result.caption or "")
