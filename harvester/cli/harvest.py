"""``harvester harvest`` and ``harvester reparse``: a recipe's tables into the archive.

``harvest`` fetches politely (or replays a cassette); ``reparse`` reads the snapshot archive.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Annotated

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

if TYPE_CHECKING:
    from harvester.run.report import RunReport

__all__ = ["harvest_command", "reparse_command"]


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
RecordOption = Annotated[
    Path | None,
    typer.Option(
        "--record",
        metavar="FILE.warc.gz",
        help="Also write every exchange of this run into one WARC file (a cassette); the HTTP"
        " cache is not read, so every page is asked for.",
    ),
]
ReplayOption = Annotated[
    Path | None,
    typer.Option(
        "--replay",
        metavar="FILE.warc.gz",
        help="Answer every request from a cassette, with no network at all.",
    ),
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
    record: RecordOption = None,
    replay: ReplayOption = None,
    output_format: LinesFormatOption = TextFormat.text,
) -> None:
    """Harvest a recipe's tables politely into the archive, one line per table.

    Each table is fetched, read and stored as a new version of its partition, or left as it is
    when nothing changed. A table that fails is reported and touches nothing. Every exchange is
    kept in ARCHIVE/snapshots (WARC). --replay answers from a cassette instead of the network:
    a page missing from it is that table's failed line. Exit status 1 when
    any table failed or was refused; 5 when the archive cannot be written; waits over five
    seconds are announced on stderr; 130 (Ctrl-C) or 143
    (SIGTERM) when a signal stopped the run at a safe point, with the report kept.

    Example: harvester harvest recipes/league-players.toml --param site=http://127.0.0.1:8650
    """
    from harvester.recipe import load_recipe
    from harvester.run import harvest
    from harvester.snapshots.stored_source import StoredSource

    if offline and refresh:
        usage("--offline and --refresh contradict each other — pick one")
    _check_cassette_options(record, replay, offline or refresh)
    overrides = parse_assignments(param_values, "--param", "season=2024")
    show = output_format is TextFormat.text
    try:
        source = StoredSource.from_cassette(replay) if replay is not None else None
        report = harvest(
            load_recipe(recipe, overrides),
            archive=archive,
            source=source,
            snapshots=replay is None,  # a replayed capture names its cassette record already
            record=record,
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
    _finish(report, show)


def reparse_command(
    recipe: RecipeArgument,
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    param_values: ParamOption = None,
    every_value: AllOption = False,
    output_format: LinesFormatOption = TextFormat.text,
) -> None:
    """Extract a recipe's tables again from the snapshot archive, with no network at all.

    Each planned page is read from its newest capture in ARCHIVE/snapshots; a table whose data
    changed (a fixed selector or column type) gets a new version, others stay as they are. Rows
    keep the captures' _body_sha256 and _warc_record_id, with origin snapshot-archive. A page
    with no capture is that table's failed line; nothing is fetched. Exit statuses as harvest.

    Example: harvester reparse recipes/league-players.toml --all --archive archive
    """
    from harvester.recipe import load_recipe
    from harvester.run.reparse import reparse

    overrides = parse_assignments(param_values, "--param", "season=2024")
    show = output_format is TextFormat.text
    try:
        report = reparse(
            load_recipe(recipe, overrides),
            archive=archive,
            every_value=every_value,
            on_outcome=(lambda outcome: typer.echo(outcome.line())) if show else None,
            stop_on_sigterm=True,
        )
    except HarvesterError as error:
        fail(error)
    _finish(report, show)


def _check_cassette_options(record: Path | None, replay: Path | None, cache_mode: bool) -> None:
    if record is not None and replay is not None:
        usage("--record and --replay contradict each other — pick one")
    for option, path in (("--record", record), ("--replay", replay)):
        if path is not None and not path.name.endswith(".warc.gz"):
            usage(f"{option} {path}: a cassette is a .warc.gz file — name it e.g. run.warc.gz")
    if cache_mode and (record or replay):
        usage("--offline and --refresh are about the HTTP cache, which cassettes do not use")


def _finish(report: RunReport, show: bool) -> None:
    typer.echo(report.to_json_lines() if not show else report.summary_line(), nl=show)
    if report.failed:
        raise typer.Exit(1)
