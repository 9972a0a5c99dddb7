"""Back-off benchmark: 20 pages at Crawl-delay 0.3 s, the first three page requests 503s.

Runs the fetcher, one page after another, against the demo server on 127.0.0.1; the first
page's first three requests get ``503`` with ``Retry-After: 1``. Prints, in one run, counted on
the server's own clock:
  - requests made inside a Retry-After window (must be 0; RFC 9110 §10.2.3), and the shortest
    gap after a 503 (aim >= 1 s);
  - pacing violations, starts closer than the Crawl-delay (must be 0), and the shortest gap;
  - wall time / (1.5 × (20 × 0.3 s + 3 × 1 s)) — what the site asked for, with 50 % slack
    (aim <= 1).

Usage: .venv/bin/python bench/backoff_bench.py [--pages 20] [--delay 0.3] [--failures 3]
"""

from __future__ import annotations

import argparse
import asyncio
import itertools
import tempfile
import time
from pathlib import Path

from harvester.demo.pages import site_paths
from harvester.demo.requestlog import RequestRecord
from harvester.demo.server import DemoServer
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity

IDENTITY = Identity.from_contact("mailto:analyst@example.org")
RETRY_AFTER = 1


async def fetch_in_turn(urls: list[str], cache_dir: Path) -> float:
    """Fetch the URLs one after another; return the wall time."""
    async with Fetcher(IDENTITY, cache_dir=cache_dir) as fetcher:
        start = time.perf_counter()
        for url in urls:
            await fetcher.fetch(url)
        return time.perf_counter() - start


def gaps_after_503(log: list[RequestRecord]) -> list[float]:
    """Seconds from each 503's start to the next request's start, on the server's clock."""
    return [b.started - a.started for a, b in itertools.pairwise(log) if a.status == 503]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pages", type=int, default=20)
    parser.add_argument("--delay", type=float, default=0.3)
    parser.add_argument("--failures", type=int, default=3)
    args = parser.parse_args()

    probe = DemoServer(keep_seasons=None)
    paths = [p for p in site_paths(probe.league) if p.startswith("/players/")][: args.pages]
    forced = {paths[0]: [503] * args.failures}
    site = DemoServer(
        crawl_delay=args.delay, keep_seasons=None, forced=forced, forced_retry_after=RETRY_AFTER
    )
    with site, tempfile.TemporaryDirectory() as folder:
        wall = asyncio.run(fetch_in_turn([site.url(path) for path in paths], Path(folder)))
        log = site.log
        violations = len(site.violations())

    after = gaps_after_503(log)
    starts = [record.started for record in log]
    gaps = [later - earlier for earlier, later in itertools.pairwise(starts)]
    inside = sum(gap < RETRY_AFTER for gap in after)
    reference = 1.5 * (args.pages * args.delay + args.failures * RETRY_AFTER)
    print(f"{args.pages} pages, Crawl-delay {args.delay} s, first {args.failures} requests 503")
    print(f"requests: {len(log)} ({sum(r.status == 503 for r in log)} answered 503)")
    print(f"inside a Retry-After window: {inside}   (must be 0)")
    print(f"shortest gap after a 503: {min(after, default=0):.3f} s   (aim >= {RETRY_AFTER} s)")
    print(f"violations counted by the server: {violations}   (must be 0)")
    print(f"shortest gap between starts: {min(gaps):.3f} s   (aim >= {args.delay} s)")
    print(f"wall: {wall:.2f} s; reference 1.5 × asked = {reference:.2f} s")
    print(f"wall / reference = {wall / reference:.3f}   (aim <= 1)")


if __name__ == "__main__":
    main()
