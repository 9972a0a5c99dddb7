"""``harvester harvest``, ``backfill`` and ``reparse``: recipes' tables into the archive.

``harvest`` fetches politely (or replays a cassette); ``backfill`` harvests every planned
partition the archive lacks; ``reparse`` reads the snapshot archive. ``harvest`` and
``backfill`` take several recipes, or folders of them, run side by side (one after another
from a cassette).
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any

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
    from harvester.cli.progress import RunProgress
    from harvester.fetch.waits import WaitNotice
    from harvester.recipe import Recipe
    from harvester.run.report import Outcome, RunReport

__all__ = ["backfill_command", "harvest_command", "reparse_command"]


RecipeArgument = Annotated[Path, typer.Argument(metavar="RECIPE", help="A recipe file (TOML).")]
RecipesArgument = Annotated[
    list[Path],
    typer.Argument(
        metavar="RECIPE...", help="Recipe files (TOML), or folders whose *.toml are recipes."
    ),
]
QuietOption = Annotated[bool, typer.Option("--quiet", "-q", help="Print failures only (for cron).")]
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
    recipes: RecipesArgument,
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    param_values: ParamOption = None,
    every_value: AllOption = False,
    contact: ContactOption = None,
    offline: OfflineOption = False,
    refresh: RefreshOption = False,
    max_wait: MaxWaitOption = None,
    record: RecordOption = None,
    replay: ReplayOption = None,
    quiet: QuietOption = False,
    output_format: LinesFormatOption = TextFormat.text,
) -> None:
    """Harvest recipes' tables politely into the archive, one line per table.

    Each table is fetched, read and stored as a new version of its partition, or left as it is
    when nothing changed. A table that fails is reported and touches nothing. Every exchange is
    kept in ARCHIVE/snapshots (WARC). --replay answers from a cassette instead of the network:
    a page missing from it is that table's failed line. --param season=2019..2021 (or
    2019,2021) plans those values. Several recipes, or a folder of them, run side by side.
    Exit status 1 when any table failed or was refused; 5 when the archive cannot be written;
    waits over five seconds are announced on stderr; 130 (Ctrl-C) or 143 (SIGTERM) when a
    signal stopped the run at a safe point, with the report kept.

    Example: harvester harvest recipes/league-players.toml --param site=http://127.0.0.1:8650
    """
    if offline and refresh:
        usage("--offline and --refresh contradict each other — pick one")
    _check_cassette_options(record, replay, offline or refresh)
    files = _recipe_files(recipes)
    if record is not None and len(files) > 1:
        usage("--record writes one cassette per run — give one recipe with it")
    _run_recipes(
        files,
        param_values,
        output_format,
        quiet,
        archive=archive,
        replay=replay,
        record=record,
        contact=contact,
        mode="offline" if offline else "refresh" if refresh else "normal",
        every_value=every_value,
        max_wait=max_wait,
    )


def backfill_command(
    recipes: RecipesArgument,
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    param_values: Annotated[
        list[str] | None,
        typer.Option(
            "--param",
            metavar="NAME=RANGE",
            help="Values to fill in: A..B (both included) or A,B,C; site=URL too. Default: "
            "every value the recipe names.",
        ),
    ] = None,
    force: Annotated[
        bool, typer.Option("--force", help="Fetch partitions the archive already holds too.")
    ] = False,
    contact: ContactOption = None,
    max_wait: MaxWaitOption = None,
    quiet: QuietOption = False,
    output_format: LinesFormatOption = TextFormat.text,
) -> None:
    """Fill the archive with every planned partition it lacks: past seasons, once.

    Plans every value of every parameter (or the --param ranges), skips without a request each
    page whose tables' partitions the archive already holds (its lines say "skipped"), and
    harvests the rest as harvest does — live, or from web-archive captures as the recipe's
    past says. Stopped at any moment (Ctrl-C, SIGTERM, SIGKILL) and run again, it fetches
    nothing it had stored. --force fetches every planned page again. Exit statuses as harvest.

    Example: harvester backfill recipes/league-players.toml --param season=2012..2023
    """
    _run_recipes(
        _recipe_files(recipes),
        param_values,
        output_format,
        quiet,
        archive=archive,
        contact=contact,
        every_value=True,
        skip_stored=not force,
        max_wait=max_wait,
    )


def _recipe_files(given: list[Path]) -> list[Path]:
    """The recipe files named: files as given, folders as their *.toml files in name order."""
    files: list[Path] = []
    for path in given:
        if path.is_dir():
            found = sorted(path.glob("*.toml"))
            if not found:
                usage(f"{path}: a folder with no recipe (*.toml) in it")
            files.extend(found)
        else:
            files.append(path)
    return files


def _run_recipes(
    files: list[Path],
    param_values: list[str] | None,
    output_format: TextFormat,
    quiet: bool,
    *,
    replay: Path | None = None,
    **options: Any,
) -> None:
    """Load every recipe first (a bad one stops all before anything is fetched), then run them:
    side by side when live, one after another from a cassette."""
    from harvester.cli.progress import RunProgress
    from harvester.recipe import load_recipe
    from harvester.run import harvest
    from harvester.run.harvest import harvest_all
    from harvester.snapshots.stored_source import StoredSource

    overrides = parse_assignments(param_values, "--param", "season=2024")
    show = output_format is TextFormat.text
    several = len(files) > 1
    try:
        loaded = [load_recipe(file, overrides, lenient=several) for file in files]
        if several:
            _check_known(overrides, loaded)
        every = bool(options.get("every_value"))
        pages = [page.url for recipe in loaded for page in recipe.plan(every_value=every)]
        reports: list[RunReport] = []
        bar = RunProgress(pages, stream=sys.stdout, quiet=quiet or not show, plain_every=None)
        hooks: dict[str, Any] = {
            "on_outcome": _printer(show, quiet, bar),
            "stop_on_sigterm": True,
            "on_wait": _long_wait(bar),
            "on_page": bar.page_done,
            "on_request": bar.host_used,
            "on_pace": lambda n: bar.waiting(n.host, n.seconds, n.reason),
        }
        with bar:
            if several and replay is None:  # live: every recipe's hosts side by side
                shared = {key: value for key, value in options.items() if key != "record"}
                reports = harvest_all(loaded, **hooks, **shared)  # --record takes one recipe
            for recipe in loaded if not reports else ():
                source = StoredSource.from_cassette(replay) if replay is not None else None
                # a replayed capture names its record already: no snapshot archive then
                reports.append(
                    harvest(recipe, source=source, snapshots=replay is None, **hooks, **options)
                )
    except HarvesterError as error:
        fail(error)
    for report in reports:
        _finish(report, show, quiet, fail_now=False)
    if any(report.failed for report in reports):
        raise typer.Exit(1)


def _long_wait(bar: RunProgress) -> Callable[[WaitNotice], None]:
    """Long waits on stderr — unless a live display shows every wait already."""

    def announce(notice: WaitNotice) -> None:
        if not bar.live:
            typer.echo(notice.line(), err=True)

    return announce


def _check_known(overrides: dict[str, str], recipes: list[Recipe]) -> None:
    """Each --param must name something at least one of several recipes has."""
    known = {"site"} | {p.name for recipe in recipes for p in recipe.parameters}
    for name in overrides:
        if name not in known:
            usage(f"--param {name}: none of the recipes has a parameter by that name")


def _printer(show: bool, quiet: bool, bar: RunProgress) -> Callable[[Outcome], None] | None:
    """Each table's line as it comes (failures only when quiet), above any live display."""
    if not show:
        return None

    def emit(outcome: Outcome) -> None:
        if not quiet or outcome.status in ("failed", "refused"):
            bar.line(outcome.line())

    return emit


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


def _finish(report: RunReport, show: bool, quiet: bool = False, *, fail_now: bool = True) -> None:
    if not (show and quiet):
        typer.echo(report.to_json_lines() if not show else report.summary_line(), nl=show)
    if report.failed and fail_now:
        raise typer.Exit(1)
