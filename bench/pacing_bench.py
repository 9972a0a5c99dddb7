"""Pacing benchmark: four loopback hosts, each with Crawl-delay 0.2 s and 25 pages.

Runs the fetcher against four demo servers on 127.0.0.1 (four ports = four hosts, as RFC 9309
§2.3 keys hosts by scheme, host and port) and prints, in one run:
  - wall time / ideal per-host bound (aim <= 1.1). The bound: a host's robots.txt plus its 25
    pages are 26 request starts, at least 25 Crawl-delays apart, and hosts run side by side;
  - pacing violations counted by the servers themselves (must be 0);
  - a warm re-run with every cache entry fresh: requests made (aim 0) and the overhead per
    page (aim <= 2 ms);
  - two processes (``--processes``), each with its own cache folder, sharing one host through
    the shared pace: wall time / ideal (every request of both, one Crawl-delay apart; aim
    <= 1.2), and the server's violations and 429s (must be 0).

Usage: .venv/bin/python bench/pacing_bench.py [--hosts 4] [--pages 25] [--delay 0.2]
       [--processes 2]
"""

from __future__ import annotations

import argparse
import asyncio
import os
import subprocess
import sys
import tempfile
import time
from contextlib import ExitStack
from pathlib import Path

from harvester.demo.pages import site_paths
from harvester.demo.server import DemoServer
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity
from harvester.fetch.shared_pace import STATE_DIR_VARIABLE

IDENTITY = Identity.from_contact("mailto:analyst@example.org")

# One harvest process: wait for the common start, fetch every URL in turn, print nothing.
HARVEST = """
import sys, time
from harvester.fetch.identity import Identity
from harvester.fetch.sync import SyncFetcher
cache, go, *urls = sys.argv[1:]
time.sleep(max(0.0, float(go) - time.time()))
with SyncFetcher(Identity.from_contact("mailto:analyst@example.org"), cache_dir=cache) as fetcher:
    for url in urls:
        fetcher.fetch(url)
"""


async def fetch_all(urls: list[str], cache_dir: Path) -> float:
    """Fetch every URL concurrently (the pacer serialises per host); return the wall time."""
    async with Fetcher(IDENTITY, cache_dir=cache_dir, state_dir=cache_dir / "state") as fetcher:
        start = time.perf_counter()
        await asyncio.gather(*(fetcher.fetch(url) for url in urls))
        return time.perf_counter() - start


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--hosts", type=int, default=4)
    parser.add_argument("--pages", type=int, default=25)
    parser.add_argument("--delay", type=float, default=0.2)
    parser.add_argument("--processes", type=int, default=2)
    args = parser.parse_args()

    with ExitStack() as stack, tempfile.TemporaryDirectory() as folder:
        sites = [
            stack.enter_context(DemoServer(crawl_delay=args.delay, keep_seasons=None))
            for _ in range(args.hosts)
        ]
        paths = [p for p in site_paths(sites[0].league) if p.startswith("/players/")]
        urls = [site.url(path) for site in sites for path in paths[: args.pages]]
        cold = asyncio.run(fetch_all(urls, Path(folder)))
        requests = sum(len(site.log) for site in sites)
        violations = sum(len(site.violations()) for site in sites)
        ideal = args.pages * args.delay  # 26 starts per host, 25 gaps
        for site in sites:
            site.clear_log()
        warm = asyncio.run(fetch_all(urls, Path(folder)))
        warm_requests = sum(len(site.log) for site in sites)

    processes_run(args.processes, args.pages, args.delay)
    pages = len(urls)
    print(f"{args.hosts} hosts × {args.pages} pages, Crawl-delay {args.delay} s")
    print(f"cold run: {requests} requests in {cold:.2f} s; ideal per-host bound {ideal:.2f} s")
    print(f"wall / ideal = {cold / ideal:.3f}   (aim <= 1.1)")
    print(f"violations counted by the servers: {violations}   (must be 0)")
    print(f"warm run: {warm_requests} requests   (aim 0)")
    print(f"warm overhead per page: {warm / pages * 1000:.2f} ms   (aim <= 2 ms)")


def processes_run(processes: int, pages: int, delay: float) -> None:
    """Run ``processes`` harvests at once against one host and print how the pace held."""
    with (
        DemoServer(crawl_delay=delay, keep_seasons=None) as site,
        tempfile.TemporaryDirectory() as folder,
    ):
        paths = [p for p in site_paths(site.league) if p.startswith("/players/")][:pages]
        environment = {**os.environ, STATE_DIR_VARIABLE: str(Path(folder) / "state")}
        go = time.time() + 2.0  # both interpreters import first; the clock starts at ``go``
        harvests = [
            subprocess.Popen(
                [sys.executable, "-c", HARVEST, str(Path(folder) / f"cache-{number}"), str(go)]
                + [site.url(path) for path in paths],
                env=environment,
            )
            for number in range(processes)
        ]
        for harvest in harvests:
            harvest.wait()
        wall = time.time() - go
        requests = len(site.log)
        refused = sum(record.status == 429 for record in site.log)
        violations = len(site.violations())
    ideal = (requests - 1) * delay
    print(f"{processes} processes × {pages} pages on one host, Crawl-delay {delay} s")
    print(f"shared pace: {requests} requests in {wall:.2f} s; ideal {ideal:.2f} s")
    print(f"wall / ideal = {wall / ideal:.3f}   (aim <= 1.2)")
    print(f"violations counted by the server: {violations}, 429s: {refused}   (must be 0)")


if __name__ == "__main__":
    main()
