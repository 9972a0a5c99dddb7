"""``harvester check``: validate a recipe and print its plan, fetching nothing."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated

import typer

from harvester.cli.common import ParamOption, TextFormat, fail, parse_assignments
from harvester.errors import HarvesterError
from harvester.formats import tsv_field

__all__ = ["check_command"]


def check_command(
    recipe: Annotated[Path, typer.Argument(metavar="RECIPE", help="A recipe file (TOML).")],
    every_value: Annotated[
        bool, typer.Option("--all", help="Plan every parameter value, not just the current one.")
    ] = False,
    param_values: ParamOption = None,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
) -> None:
    """Validate a recipe and print the pages and tables it would fetch, fetching nothing.

    Example: harvester check recipes/league-players.toml --all
    """
    from harvester.recipe import load_recipe

    overrides = parse_assignments(param_values, "--param", "season=2024")
    try:
        loaded = load_recipe(recipe, overrides)
        plan = loaded.plan(every_value=every_value)
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        typer.echo(json.dumps(loaded.plan_record(plan)))
        return
    tables = sum(len(page.tables) for page in plan)
    typer.echo(
        f"{recipe}: recipe {loaded.name!r} is valid — {len(plan)} page(s), {tables} table(s)"
    )
    for page in plan:
        typer.echo(f"{tsv_field(page.url)}\t{tsv_field(', '.join(page.tables))}")
