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
from harvester.cli_exits import fail, usage
from harvester.cli_store import diff_command, versions_command
from harvester.errors import HarvesterError
from harvester.extract.rules import TableRule
from harvester.extract.table import extract_grid, extract_table, read_page
from harvester.fetch.identity import AGENT_TOKEN
from harvester.fetch.robots import Verdict, robots_url
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


def _read_input(path: str) -> bytes:
    if path == "-":
        return sys.stdin.buffer.read()
    try:
        return Path(path).read_bytes()
    except OSError as exc:
        usage(f"{path}: cannot read the file ({exc.strerror}) — check the path")


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
    data = _read_input(file)
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


class PlanFormat(StrEnum):
    """How ``check`` prints the plan."""

    text = "text"
    json = "json"


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
        PlanFormat, typer.Option("--format", "-f", help="text or json.")
    ] = PlanFormat.text,
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
    if output_format is PlanFormat.json:
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


class ModeOption(StrEnum):
    """How ``harvest`` uses the HTTP cache."""

    normal = "normal"
    offline = "offline"
    refresh = "refresh"


@app.command()
def harvest(
    recipe: Annotated[Path, typer.Argument(metavar="RECIPE", help="A recipe file (TOML).")],
    archive: Annotated[
        str, typer.Option("--archive", metavar="ROOT", help="Archive root: a path or a URI.")
    ] = "archive",
    set_values: Annotated[
        list[str] | None,
        typer.Option("--set", metavar="NAME=VALUE", help="Override site or a parameter."),
    ] = None,
    every_value: Annotated[
        bool, typer.Option("--all", help="Every parameter value, not just the current one.")
    ] = False,
    contact: Annotated[
        str | None, typer.Option("--contact", help="Your e-mail or URL (overrides the recipe).")
    ] = None,
    offline: Annotated[
        bool, typer.Option("--offline", help="Use only the cache; fetch nothing.")
    ] = False,
    refresh: Annotated[
        bool, typer.Option("--refresh", help="Revalidate every cached page.")
    ] = False,
    output_format: Annotated[
        PlanFormat, typer.Option("--format", "-f", help="text or json (JSON lines).")
    ] = PlanFormat.text,
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
        show = output_format is PlanFormat.text
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
    if output_format is PlanFormat.json:
        typer.echo(report.to_json_lines(), nl=False)
    else:
        typer.echo(f"run {report.run_id}: {summary(report.outcomes)} (report in {archive}/runs/)")
    if report.failed:
        raise typer.Exit(1)


@app.command()
def demo(
    season: Annotated[
        int | None,
        typer.Option(
            "--season",
            help="Season to harvest (default: the current one; the live demo site keeps the "
            "latest three).",
        ),
    ] = None,
    archive: Annotated[
        str, typer.Option("--archive", metavar="ROOT", help="Archive root to harvest into.")
    ] = "archive",
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


@app.command()
def robots(
    urls: Annotated[list[str], typer.Argument(metavar="URL...", help="URLs (or paths) to test.")],
    robots_file: Annotated[
        Path | None,
        typer.Option("--robots-file", metavar="FILE", help="Judge by this robots.txt file."),
    ] = None,
    agent: Annotated[
        str, typer.Option("--agent", metavar="NAME", help="Product token to match groups by.")
    ] = AGENT_TOKEN,
    contact: Annotated[
        str | None,
        typer.Option(
            "--contact",
            help="Your e-mail or URL, sent when fetching (default: HARVESTER_CONTACT or the "
            "config file).",
        ),
    ] = None,
    explain: Annotated[
        bool, typer.Option("--explain", help="Add the deciding rule as a third column.")
    ] = False,
    output_format: Annotated[
        PlanFormat, typer.Option("--format", "-f", help="text or json.")
    ] = PlanFormat.text,
) -> None:
    """Say, per URL, whether robots.txt allows it: allowed<TAB>URL or disallowed<TAB>URL.

    With --robots-file the file decides and nothing is fetched. Without it, each site's
    robots.txt is fetched politely (with --contact) and the Crawl-delay in force is printed
    last as crawl-delay<TAB>SECONDS. robots.txt is a site's wish, not a permission.

    Example: harvester robots --robots-file robots.txt --agent harvester /seasons/2026/ /private/
    """
    from harvester.fetch.robots import RobotsTxt

    try:
        if robots_file is not None:
            rules = RobotsTxt.parse(_read_input(str(robots_file)))
            verdicts = [(url, rules.check(url, agent)) for url in urls]
            delays: dict[str, float | None] = {}
        else:
            verdicts, delays = _robots_live(urls, agent, contact)
    except HarvesterError as error:
        fail(error)
    if output_format is PlanFormat.json:
        import json

        records = [_verdict_record(url, verdict) for url, verdict in verdicts]
        typer.echo(json.dumps({"agent": agent, "urls": records, "crawl_delay": delays}))
        return
    for url, verdict in verdicts:
        _print_verdict(url, verdict, explain)
    for location, delay in delays.items():
        shown = "none" if delay is None else f"{delay:g}"
        suffix = f"\t{location}" if len(delays) > 1 else ""
        typer.echo(f"crawl-delay\t{shown}{suffix}")


def _why(verdict: Verdict) -> str:
    rule = verdict.rule
    if rule is None:
        return verdict.reason
    return f"line {rule.line}: {'Allow' if rule.allow else 'Disallow'}: {rule.pattern}"


def _verdict_record(url: str, verdict: Verdict) -> dict[str, object]:
    rule = verdict.rule
    return {
        "url": url,
        "allowed": verdict.allowed,
        "rule": None
        if rule is None
        else f"{'Allow' if rule.allow else 'Disallow'}: {rule.pattern}",
        "line": None if rule is None else rule.line,
        "reason": verdict.reason,
    }


def _print_verdict(url: str, verdict: Verdict, explain: bool) -> None:
    line = f"{'allowed' if verdict.allowed else 'disallowed'}\t{url}"
    if explain:
        line += f"\t{_why(verdict)}"
    typer.echo(line)


def _robots_live(
    urls: list[str], agent: str, contact: str | None
) -> tuple[list[tuple[str, Verdict]], dict[str, float | None]]:
    from harvester.config import configured_contact
    from harvester.fetch.identity import Identity
    from harvester.fetch.sync import SyncFetcher

    identity = Identity.from_contact(contact or configured_contact(), where="--contact")
    verdicts: list[tuple[str, Verdict]] = []
    delays: dict[str, float | None] = {}
    with SyncFetcher(identity) as fetcher:
        for url in urls:
            rules = fetcher.check_robots(url)
            verdicts.append((url, rules.check(url, agent)))
            delays[robots_url(url)] = rules.min_interval(agent)
    return verdicts, delays


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


app.command(name="versions")(versions_command)
app.command(name="diff")(diff_command)


def main() -> None:
    """Run the command line (the ``harvester`` console script)."""
    app()


if __name__ == "__main__":
    main()
