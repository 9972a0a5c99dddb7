"""``harvester harvest``: a recipe's tables fetched politely into the archive."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from harvester.cli.common import (
    DEFAULT_ARCHIVE,
    ArchiveOption,
    ContactOption,
    ParamOption,
    TextFormat,
    fail,
    parse_assignments,
    usage,
)
from harvester.errors import HarvesterError
from harvester.fetch.limits import MAX_WAIT_LIMIT

__all__ = ["harvest_command"]


RecipeArgument = Annotated[Path, typer.Argument(metavar="RECIPE", help="A recipe file (TOML).")]
AllOption = Annotated[
    bool, typer.Option("--all", help="Every parameter value, not just the current one.")
]
OfflineOption = Annotated[
    bool, typer.Option("--offline", help="Use only the cache; fetch nothing.")
]
RefreshOption = Annotated[bool, typer.Option("--refresh", help="Revalidate every cached page.")]
MaxWaitOption = Annotated[
    float | None,
    typer.Option(
        "--max-wait",
        metavar="SECONDS",
        min=0.001,
        max=MAX_WAIT_LIMIT,
        help="Longest single wait (Crawl-delay, Retry-After, back-off); else the recipe's"
        " [fetch] max_wait, 600 by default. A site asking for more is skipped for the run.",
    ),
]
LinesFormatOption = Annotated[
    TextFormat, typer.Option("--format", "-f", help="text or json (JSON lines).")
]


def harvest_command(
    recipe: RecipeArgument,
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    param_values: ParamOption = None,
    every_value: AllOption = False,
    contact: ContactOption = None,
    offline: OfflineOption = False,
    refresh: RefreshOption = False,
    max_wait: MaxWaitOption = None,
    output_format: LinesFormatOption = TextFormat.text,
) -> None:
    """Harvest a recipe's tables politely into the archive, one line per table.

    Each table is fetched, read and stored as a new version of its partition, or left as it is
    when nothing changed. A table that fails is reported and touches nothing. Exit status 1 when
    any table failed or was refused; 5 when the archive cannot be written; waits over five
    seconds are announced on stderr; 130 (Ctrl-C) or 143
    (SIGTERM) when a signal stopped the run at a safe point, with the report kept.

    Example: harvester harvest recipes/league-players.toml --param site=http://127.0.0.1:8650
    """
    from harvester.recipe import load_recipe
    from harvester.run import harvest

    if offline and refresh:
        usage("--offline and --refresh contradict each other — pick one")
    overrides = parse_assignments(param_values, "--param", "season=2024")
    show = output_format is TextFormat.text
    try:
        report = harvest(
            load_recipe(recipe, overrides),
            archive=archive,
            contact=contact,
            mode="offline" if offline else "refresh" if refresh else "normal",
            every_value=every_value,
            on_outcome=(lambda outcome: typer.echo(outcome.line())) if show else None,
            stop_on_sigterm=True,
            max_wait=max_wait,
            on_wait=lambda notice: typer.echo(notice.line(), err=True),
        )
    except HarvesterError as error:
        fail(error)
    typer.echo(report.to_json_lines() if not show else report.summary_line(), nl=show)
    if report.failed:
        raise typer.Exit(1)
