"""``harvester demo``: the invented league harvested from its loopback site, then read back."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated

import typer

from harvester.cli_common import DEFAULT_ARCHIVE, ArchiveOption, fail, usage
from harvester.errors import HarvesterError
from harvester.render import table_rows, table_to_rich

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
        bool, typer.Option("--serve", help="Serve the demo site on 127.0.0.1 until Ctrl-C.")
    ] = False,
    port: Annotated[int, typer.Option("--port", help="Port for --serve.")] = 8650,
    crawl_delay: Annotated[
        float, typer.Option("--crawl-delay", help="Crawl-delay the served robots.txt asks for.")
    ] = 0.5,
) -> None:
    """Harvest the invented league from its loopback site into an archive, and read it back.

    Starts the demo site on 127.0.0.1, runs recipes/league-*.toml against it (robots.txt,
    pacing, cache, extraction, versioned Parquet), prints one line per table, then reads the
    archive back. Run it twice: the second run finds nothing changed.

    Example: harvester demo --archive /tmp/league-archive
    """
    from harvester.demo.tour import run_demo, write_demo_site

    if serve:
        _serve_demo(port, crawl_delay)
        return
    try:
        if write_site is not None:
            written = write_demo_site(write_site)
            typer.echo(f"wrote {len(written)} pages of the demo site under {write_site}")
            return
        typer.echo("harvesting the demo league from a loopback site (invented data) …")
        done = run_demo(archive, season)
    except HarvesterError as error:
        fail(error)
    typer.echo(f"demo site was {done.site}; archive: {archive}")
    for report in done.reports:
        for outcome in report.outcomes:
            typer.echo(outcome.line())
    _show_archive(archive, rows, season)
    if any(report.failed for report in done.reports):
        raise typer.Exit(1)


def _show_archive(archive: str, rows: int, season: int | None) -> None:
    import pyarrow.compute as pc

    from harvester.store.archive import Archive

    store = Archive(archive)
    for dataset in store.datasets():
        for name in store.tables(dataset):
            table = store.read(dataset, name)
            if season is not None and "season" in table.column_names:
                table = table.filter(pc.equal(table.column("season"), season))
            data = [n for n in table.column_names if not n.startswith("_")]
            shown = [list(row.values()) for row in table_rows(table.select(data).slice(0, rows))]
            title = f"{dataset}/{name} — {table.num_rows} rows (latest versions), first {rows}"
            table_to_rich(shown, data, sys.stdout, title=title)
    typer.echo(
        "read the latest versions without harvester (docs/archive.md), e.g.:\n"
        '  duckdb -c "SELECT * FROM read_parquet('
        f"'{archive}/tables/league-standings/standings/*/version=*/part-0.parquet', "
        "hive_partitioning=true, hive_types={'season': BIGINT, 'version': BIGINT}, "
        'union_by_name=true) QUALIFY version = max(version) OVER (PARTITION BY season)"'
    )


def _serve_demo(port: int, crawl_delay: float) -> None:
    import time

    from harvester.demo.server import DemoServer

    try:
        site = DemoServer(port=port, crawl_delay=crawl_delay).start()
    except (HarvesterError, OSError) as error:
        usage(f"cannot serve on 127.0.0.1:{port} ({error}) — pick another --port")
    typer.echo(
        f"demo site on {site.base_url} (robots.txt Crawl-delay {crawl_delay:g} s); Ctrl-C stops"
    )
    try:
        while True:
            time.sleep(3600)
    except KeyboardInterrupt:
        pass
    finally:
        site.stop()
