"""``harvester robots``: what robots.txt says of each URL, from a file or fetched politely."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated

import typer

from harvester.cli_common import ContactOption, TextFormat, fail, read_input
from harvester.errors import HarvesterError
from harvester.fetch.identity import AGENT_TOKEN
from harvester.fetch.robots import Verdict, robots_url

__all__ = ["robots_command"]


def robots_command(
    urls: Annotated[list[str], typer.Argument(metavar="URL...", help="URLs (or paths) to test.")],
    robots_file: Annotated[
        Path | None,
        typer.Option("--robots-file", metavar="FILE", help="Judge by this robots.txt file."),
    ] = None,
    agent: Annotated[
        str, typer.Option("--agent", metavar="NAME", help="Product token to match groups by.")
    ] = AGENT_TOKEN,
    contact: ContactOption = None,
    explain: Annotated[
        bool, typer.Option("--explain", help="Add the deciding rule as a third column.")
    ] = False,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
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
            rules = RobotsTxt.parse(read_input(str(robots_file)))
            verdicts = [(url, rules.check(url, agent)) for url in urls]
            delays: dict[str, float | None] = {}
        else:
            verdicts, delays = _robots_live(urls, agent, contact)
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
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
