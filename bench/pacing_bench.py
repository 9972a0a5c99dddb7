"""Pacing benchmark: four loopback hosts, each with Crawl-delay 0.2 s and 25 pages.

Runs the fetcher against four demo servers on 127.0.0.1 (four ports = four hosts, as RFC 9309
§2.3 keys hosts by scheme, host and port) and prints, in one run:
  - wall time / ideal per-host bound (aim <= 1.1). The bound: a host's robots.txt plus its 25
    pages are 26 request starts, at least 25 Crawl-delays apart, and hosts run side by side;
  - pacing violations counted by the servers themselves (must be 0);
  - a warm re-run with every cache entry fresh: requests made (aim 0) and the overhead per
    page (aim <= 2 ms).

Usage: .venv/bin/python bench/pacing_bench.py [--hosts 4] [--pages 25] [--delay 0.2]
"""

from __future__ import annotations

import argparse
import asyncio
import tempfile
import time
from contextlib import ExitStack
from pathlib import Path

from harvester.demo.pages import site_paths
from harvester.demo.server import DemoServer
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity

IDENTITY = Identity.from_contact("mailto:analyst@example.org")


async def fetch_all(urls: list[str], cache_dir: Path) -> float:
    """Fetch every URL concurrently (the pacer serialises per host); return the wall time."""
    async with Fetcher(IDENTITY, cache_dir=cache_dir) as fetcher:
        start = time.perf_counter()
        await asyncio.gather(*(fetcher.fetch(url) for url in urls))
        return time.perf_counter() - start


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--hosts", type=int, default=4)
    parser.add_argument("--pages", type=int, default=25)
    parser.add_argument("--delay", type=float, default=0.2)
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

    pages = len(urls)
    print(f"{args.hosts} hosts × {args.pages} pages, Crawl-delay {args.delay} s")
    print(f"cold run: {requests} requests in {cold:.2f} s; ideal per-host bound {ideal:.2f} s")
    print(f"wall / ideal = {cold / ideal:.3f}   (aim <= 1.1)")
    print(f"violations counted by the servers: {violations}   (must be 0)")
    print(f"warm run: {warm_requests} requests   (aim 0)")
    print(f"warm overhead per page: {warm / pages * 1000:.2f} ms   (aim <= 2 ms)")


if __name__ == "__main__":
    main()
