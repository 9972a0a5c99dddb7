"""Two harvests at once, in two processes with two cache folders, keep one pace per host.

Each process is a small script using ``SyncFetcher``, as a second recipe's harvest into another
archive would; they share only the state folder (``$HARVESTER_STATE_DIR``). The loopback demo
server enforces its Crawl-delay: anyone faster gets a 429, and its log counts every gap under
the delay on its own clock.
"""

from __future__ import annotations

import itertools
import os
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path

from harvester.demo.server import DemoServer
from harvester.fetch.shared_pace import STATE_DIR_VARIABLE

CRAWL_DELAY = 0.3
PAGES = [f"/seasons/2026/{name}.html" for name in ("players", "standings", "contracts")]

# Both processes start fetching at the same wall-clock moment, so they really overlap.
HARVEST = """
import sys, time
from harvester.fetch.identity import Identity
from harvester.fetch.sync import SyncFetcher

cache, go, *urls = sys.argv[1:]
time.sleep(max(0.0, float(go) - time.time()))
with SyncFetcher(Identity.from_contact("mailto:analyst@example.org"), cache_dir=cache,
                 mode="refresh", retries=0) as fetcher:
    for url in urls:
        print(fetcher.fetch(url).status, url, flush=True)
"""


def test_two_processes_share_the_hosts_pace(
    demo_site_factory: Callable[..., DemoServer], tmp_path: Path
) -> None:
    site = demo_site_factory(crawl_delay=CRAWL_DELAY, enforce=True)
    environment = {**os.environ, STATE_DIR_VARIABLE: str(tmp_path / "state")}
    go = time.time() + 2.0  # time enough for both interpreters to import harvester
    urls = [site.url(path) for path in PAGES]
    harvests = [
        subprocess.Popen(
            [sys.executable, "-c", HARVEST, str(tmp_path / archive), str(go), *urls],
            env=environment,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        for archive in ("first-archive", "second-archive")
    ]
    outputs = [harvest.communicate(timeout=120) for harvest in harvests]
    for harvest, (out, err) in zip(harvests, outputs, strict=True):
        assert harvest.returncode == 0, err
        assert out.splitlines() == [f"200 {url}" for url in urls]
    # Each process asked for robots.txt (its own cache) and three pages: eight requests.
    assert len(site.log) == 8
    assert [record.status for record in site.log if record.status == 429] == []
    assert site.violations() == []
    starts = [record.started for record in site.log]
    assert min(b - a for a, b in itertools.pairwise(starts)) >= CRAWL_DELAY
