"""``harvester requests``: demo recipes harvested, then listed, judged by the server's own log.

The demo server logs every request it handles and flags every start that came sooner than its
Crawl-delay after the previous one (``DemoServer.log``, ``violations``); what the command prints
must equal that log, path for path and status for status, each request once.
"""

from __future__ import annotations

import asyncio
import dataclasses
import json
import re
from pathlib import Path
from urllib.parse import urlsplit

import httpx
from typer.testing import CliRunner, Result

from harvester.cli import app
from harvester.demo.server import DemoServer
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity
from harvester.recipe.load import load_recipe
from harvester.recipe.model import Recipe
from harvester.run.harvest import harvest
from harvester.run.report import write_report

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
SUMMARY = re.compile(
    r"^(?P<host>\S+): (?P<count>\d+) requests?, smallest gap (?P<gap>[\d.]+|-)(?: s)?, "
    r"Crawl-delay in force (?P<pace>.+)$"
)


def recipe(name: str, site: DemoServer) -> Recipe:
    loaded = load_recipe(RECIPES / f"{name}.toml", {"site": site.base_url})
    # No recipe delay, so the demo robots.txt's Crawl-delay alone sets the pace (and tests stay
    # quick); the run still has to keep it.
    return dataclasses.replace(loaded, fetch=dataclasses.replace(loaded.fetch, delay=None))


def origin(site: DemoServer) -> str:
    return site.base_url.rstrip("/")


def listing(*args: str) -> Result:
    return CliRunner().invoke(app, ["requests", *args])


def request_lines(output: str) -> tuple[list[list[str]], str]:
    """The TIME, STATUS, GAP, URL fields of each request line, and the host's summary line."""
    *lines, summary = output.splitlines()
    return [line.split("\t") for line in lines], summary


def test_requests_lists_every_request_the_server_saw_once(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    for name in ("league-players", "league-standings", "league-contracts"):
        report = harvest(recipe(name, demo_site), archive=str(tmp_path))
        assert not report.failed
    result = listing("--archive", str(tmp_path), "--host", origin(demo_site))
    assert result.exit_code == 0, result.stderr
    fields, summary = request_lines(result.stdout)
    log = demo_site.log
    # Path for path, status for status, in the order the server handled them, robots.txt too.
    printed = [(urlsplit(url).path, int(status)) for _, status, _, url in fields]
    assert printed == [(record.bare_path, record.status) for record in log]
    assert "/robots.txt" in [path for path, _ in printed]
    parts = SUMMARY.match(summary)
    assert parts is not None, summary
    assert parts["host"] == origin(demo_site)
    assert int(parts["count"]) == len(log)
    gaps = [gap for _, _, gap, _ in fields if gap != "-"]
    assert len(gaps) == len(log) - 1  # only the very first request has nothing before it
    assert parts["gap"] == min(gaps, key=float)
    # The Crawl-delay the demo robots.txt names (common practice, no published source): the
    # server enforced it on its own clock and flagged no request.
    assert float(parts["gap"]) >= demo_site.routes.crawl_delay
    assert "below" not in summary
    assert demo_site.violations() == []


def test_a_wired_run_report_is_preferred_and_no_request_counts_twice(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    identity = Identity.from_contact("mailto:analyst@example.org")
    # harvest() runs its own event loop and this fetcher outlives it: with no keep-alive, no
    # connection is left bound to that loop when the fetcher is closed in another.
    transport = httpx.AsyncHTTPTransport(limits=httpx.Limits(max_keepalive_connections=0))
    fetcher = Fetcher(identity, cache_dir=tmp_path / "cache", transport=transport)
    try:
        # The page's capture is kept in the snapshot archive too: the listing must see it once.
        first = harvest(recipe("league-players", demo_site), archive=str(tmp_path), source=fetcher)
    finally:
        asyncio.run(fetcher.aclose())
    first.hosts, first.requests = fetcher.stats.to_report()  # the one line harvest.py gains
    write_report(str(tmp_path), first)
    in_report = len(demo_site.log)
    harvest(recipe("league-standings", demo_site), archive=str(tmp_path))  # a report without
    result = listing("--archive", str(tmp_path), "--format", "json", "--host", "127.0.0.1")
    assert result.exit_code == 0, result.stderr
    shown = json.loads(result.stdout)
    log = demo_site.log
    printed = [(urlsplit(item["url"]).path, item["status"]) for item in shown["requests"]]
    assert printed == [(record.bare_path, record.status) for record in log]
    sources = [item["source"] for item in shown["requests"]]
    # Both runs' reports hold their requests now (harvest() wires the counts itself).
    assert sources == ["run-report"] * len(log)
    assert {item["run_id"] for item in shown["requests"][:in_report]} == {first.run_id}
    summary = shown["hosts"][origin(demo_site)]
    assert summary["requests"] == len(log)
    # The first run kept the interval its pacer used: the Crawl-delay of the demo robots.txt.
    assert summary["interval_seconds"] == demo_site.routes.crawl_delay
    assert summary["below"] == 0
    assert demo_site.violations() == []


def test_since_and_host_select_and_a_selected_request_keeps_its_gap(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    harvest(recipe("league-players", demo_site), archive=str(tmp_path))
    harvest(recipe("league-standings", demo_site), archive=str(tmp_path))
    everything, _ = request_lines(listing("--archive", str(tmp_path)).stdout)
    assert len(everything) == len(demo_site.log)
    later = listing("--archive", str(tmp_path), "--since", everything[1][0], "--host", "127.0.0.1")
    assert later.exit_code == 0, later.stderr
    selected, summary = request_lines(later.stdout)
    assert selected == everything[1:]  # its gap still counts from the request before --since
    assert summary.startswith(f"{origin(demo_site)}: {len(everything) - 1} requests")
    elsewhere = listing("--archive", str(tmp_path), "--host", "http://127.0.0.1:1")
    assert elsewhere.exit_code == 0
    assert elsewhere.stdout == ""
    assert "no requests to http://127.0.0.1:1" in elsewhere.stderr


def test_an_archive_with_no_runs_prints_nothing_and_says_so(tmp_path: Path) -> None:
    result = listing("--archive", str(tmp_path))
    assert result.exit_code == 0
    assert result.stdout == ""
    assert result.stderr == f"no runs in {tmp_path}: no requests to list\n"


def test_a_bad_since_is_a_one_line_usage_error(tmp_path: Path) -> None:
    result = listing("--archive", str(tmp_path), "--since", "last tuesday")
    assert result.exit_code == 2
    assert result.stdout == ""
    assert result.stderr.count("\n") == 1
    assert "--since 'last tuesday'" in result.stderr
