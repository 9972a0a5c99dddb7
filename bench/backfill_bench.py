"""Backfill benchmark: two hosts side by side — the live site and its web archive.

A backfill of ten seasons of one demo recipe: the live demo site serves the latest three and
answers 404 for the seven before them, which come from the demo web archive's captures. Each
host has its own Crawl-delay. Prints, in one run:
  - each host's own bound: (its requests - 1) × its Crawl-delay, the least time its requests
    can take one at a time at its pace (requests counted by the servers' own logs);
  - wall time / the slower host's bound (issue 11 holds it to ≤ 1.25, plus 1.5 s), and what
    one host after the other would have cost (the sum of the bounds);
  - pacing violations counted by each server (must be 0).

Usage: .venv/bin/python bench/backfill_bench.py [--site-delay 0.2] [--archive-delay 0.3]
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import tempfile
import time
from pathlib import Path

from harvester.demo.server import DemoServer
from harvester.demo.tour import demo_recipe_dir, with_demo_archive
from harvester.demo.web_archive import DemoWebArchive
from harvester.recipe import load_recipe
from harvester.run import harvest


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--site-delay", type=float, default=0.2)
    parser.add_argument("--archive-delay", type=float, default=0.3)
    parser.add_argument("--recipe", default="league-standings.toml")
    options = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        os.environ["HARVESTER_STATE_DIR"] = str(Path(folder) / "state")
        # gone_after=20: every retired season answers 404 (none 410), as the held-out case has.
        with (
            DemoServer(crawl_delay=options.site_delay, gone_after=20) as site,
            DemoWebArchive(site=site.base_url, crawl_delay=options.archive_delay) as web,
        ):
            recipe = load_recipe(
                demo_recipe_dir() / options.recipe,
                {"site": site.base_url, "season": "2017..2026"},
            )
            recipe = with_demo_archive(recipe, web.base_url)
            recipe = dataclasses.replace(
                recipe, fetch=dataclasses.replace(recipe.fetch, delay=None)
            )
            start = time.perf_counter()
            report = harvest(recipe, archive=str(Path(folder) / "archive"), skip_stored=True)
            wall = time.perf_counter() - start
            hosts = {
                "live site": (len(site.log), options.site_delay, len(site.violations())),
                "web archive": (len(web.log), options.archive_delay, len(web.violations())),
            }
    origins = [outcome.origin for outcome in report.outcomes]
    print(f"seasons: {len(report.outcomes)} ({origins.count('live')} live,"
          f" {origins.count('web-archive')} from captures); failed: {report.failed}")  # fmt: skip
    bounds = {}
    for name, (requests, delay, violations) in hosts.items():
        bounds[name] = (requests - 1) * delay
        print(f"{name}: {requests} requests at {delay:g} s: own bound {bounds[name]:.2f} s;"
              f" violations {violations}")  # fmt: skip
    slower = max(bounds.values())
    print(f"wall {wall:.2f} s; wall / slower host's bound = {wall / slower:.3f}"
          f" (held to <= 1.25 + 1.5 s: {wall <= 1.25 * slower + 1.5});"
          f" hosts one after the other would take >= {sum(bounds.values()):.2f} s")  # fmt: skip


if __name__ == "__main__":
    main()
