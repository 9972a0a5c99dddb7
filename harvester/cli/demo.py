"""``harvester demo``: the invented league harvested from its loopback site, then read back."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from harvester.cli.common import DEFAULT_ARCHIVE, ArchiveOption, fail, usage
from harvester.errors import HarvesterError
from harvester.formats import json_value

if TYPE_CHECKING:
    from harvester.run.report import Outcome

__all__ = ["demo_command"]


def demo_command(
    season: Annotated[
        int | None,
        typer.Option(
            "--season",
            help="Season to harvest (default: the current one; the live demo site keeps the "
            "latest three).",
        ),
    ] = None,
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    rows: Annotated[int, typer.Option("--rows", help="Rows to show per table.")] = 5,
    write_site: Annotated[
        Path | None,
        typer.Option("--write-site", metavar="DIR", help="Write the demo pages to DIR and stop."),
    ] = None,
    serve: Annotated[
        bool,
        typer.Option(
            "--serve", help="Serve the demo site and its web archive on 127.0.0.1 until Ctrl-C."
        ),
    ] = False,
    port: Annotated[
        int, typer.Option("--port", help="Port for --serve (the web archive takes the next).")
    ] = 8650,
    crawl_delay: Annotated[
        float, typer.Option("--crawl-delay", help="Crawl-delay the served robots.txt asks for.")
    ] = 0.5,
    advance: Annotated[
        bool,
        typer.Option(
            "--advance",
            help="Move the demo's clock on first: the latest season's numbers change, so the"
            " run writes new versions and shows their diff.",
        ),
    ] = False,
) -> None:
    """Harvest the invented league from its loopback site into an archive, and read it back.

    Starts the demo site and its web archive on 127.0.0.1, runs recipes/league-*.toml against
    them (robots.txt, pacing, cache, extraction, versioned Parquet): the current season from
    the live site, then a backfill of 2019-2025 — two seasons live, five the site no longer
    serves from web-archive captures. Prints one line per table, then reads the archive back.
    Run it twice: the second run finds nothing changed (the backfill skips what is stored).
    --advance moves the demo's clock (kept in the archive folder) so a run shows new versions
    and their diff.

    Example: harvester demo --archive /tmp/league-archive
    """
    from harvester.cli.render import table_to_rich
    from harvester.demo.tour import DEMO_BACKFILL, preview_archive, run_demo, write_demo_site
    from harvester.run.report import summary

    if serve:
        _serve_demo(port, crawl_delay)
        return
    try:
        if write_site is not None:
            written = write_demo_site(write_site)
            typer.echo(f"wrote {len(written)} pages of the demo site under {write_site}")
            return
        typer.echo("harvesting the demo league from a loopback site (invented data) …")
        backfill = DEMO_BACKFILL if season is None else None
        done = run_demo(archive, season, backfill=backfill, advance=advance)
        previews = preview_archive(archive, rows, season)
    except HarvesterError as error:
        fail(error)
    typer.echo(f"demo site was {done.site}, its web archive {done.web_archive}; archive: {archive}")
    for report in done.reports:
        for outcome in report.outcomes:
            typer.echo(outcome.line())
    _show_changes(archive, [o for report in done.reports for o in report.outcomes])
    typer.echo(f"summary: {summary([o for report in done.reports for o in report.outcomes])}")
    for preview in previews:
        shown = [[json_value(value) for value in row] for row in preview.rows]
        table_to_rich(shown, preview.columns, sys.stdout, title=preview.title)
    _show_duckdb_query(archive)
    _show_join_check(archive, season)
    if any(report.failed for report in done.reports):
        raise typer.Exit(1)


def _show_changes(archive: str, outcomes: list[Outcome], shown_rows: int = 3) -> None:
    """The diff of every new version that replaced an older one, a few rows each."""
    from harvester.store.archive import Archive
    from harvester.store.partition_diff import diff_partition

    for outcome in outcomes:
        if outcome.row_changes is None:
            continue
        try:
            found = diff_partition(
                Archive(archive), outcome.dataset, outcome.table, outcome.partition
            )
        except HarvesterError:
            continue
        lines = found.text_lines()
        typer.echo("\n".join(lines[: 2 + shown_rows]))
        if len(lines) > 2 + shown_rows:
            where = " ".join(f"--partition {k}={v}" for k, v in outcome.partition.items())
            typer.echo(
                f"  … {len(lines) - 2 - shown_rows} more: harvester diff"
                f" {outcome.dataset}/{outcome.table} {where} --archive {archive}"
            )


def _show_join_check(archive: str, season: int | None, shown: int = 5) -> None:
    """Players and contracts joined on their person keys: what would not match."""
    from harvester.demo.league import build_league
    from harvester.store.join_check import join_check

    year = str(season if season is not None else build_league().latest)
    try:
        found = join_check(
            archive, "league-players/players", "league-contracts/contracts", "player_key",
            {"season": year},
        )  # fmt: skip
    except HarvesterError as error:
        typer.echo(f"join check skipped: {error}")
        return
    lines = found.text_lines()
    typer.echo(f"players and contracts of {year} joined on player_key (docs/joins.md):")
    typer.echo("\n".join(f"  {line}" for line in lines[: 1 + shown]))
    typer.echo(
        "  harvester join-check league-players/players league-contracts/contracts --on player_key"
        f" --where season={year} --archive {archive}"
    )


def _show_duckdb_query(archive: str) -> None:
    typer.echo(
        "read the latest versions without harvester (docs/archive.md), e.g.:\n"
        '  duckdb -c "SELECT * FROM read_parquet('
        f"'{archive}/tables/league-standings/standings/*/version=*/part-0.parquet', "
        "hive_partitioning=true, hive_types={'season': BIGINT, 'version': BIGINT}, "
        'union_by_name=true) QUALIFY version = max(version) OVER (PARTITION BY season)"'
    )
    # pandas and pyarrow came with harvester: a query that needs nothing else installed.
    folder = f"{archive}/tables/league-standings/standings"
    typer.echo(
        "or with the pandas and pyarrow harvester installed:\n"
        f'  {sys.executable} -c "import pyarrow.dataset as ds; '
        f"t = ds.dataset('{folder}', partitioning='hive').to_table().to_pandas(); "
        "print(t[t.version == t.groupby('season').version.transform('max')])\""
    )


def _serve_demo(port: int, crawl_delay: float) -> None:
    import time

    from harvester.demo.server import DemoServer
    from harvester.demo.tour import DEMO_ARCHIVE_PORT
    from harvester.demo.web_archive import DemoWebArchive

    # The archive takes the port after the site's (8651 beside 8650, as the demo recipes
    # name it); with --port 0 both take free ports.
    archive_port = DEMO_ARCHIVE_PORT if port == 8650 else (port + 1 if port else 0)
    try:
        site = DemoServer(port=port, crawl_delay=crawl_delay).start()
    except HarvesterError as error:  # an option the server refuses: its message names it
        fail(error)
    except OSError as error:
        usage(f"cannot serve on 127.0.0.1:{port} ({error.strerror}) — pick another --port")
    try:
        web = DemoWebArchive(site=site.base_url, port=archive_port, crawl_delay=crawl_delay)
        web.start()
    except OSError as error:
        site.stop()
        usage(f"cannot serve on 127.0.0.1:{archive_port} ({error.strerror}) — pick another --port")
    typer.echo(
        f"demo site on {site.base_url} (robots.txt Crawl-delay {crawl_delay:g} s), its web"
        f" archive on {web.base_url}; Ctrl-C stops"
    )
    try:
        while True:
            time.sleep(3600)
    except KeyboardInterrupt:
        pass
    finally:
        web.stop()
        site.stop()
