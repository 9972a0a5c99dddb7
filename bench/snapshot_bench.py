"""Snapshot archive benchmark: a harvest's cost per page with the snapshot archive and without.

Runs ``harvester.run.harvest`` with ``every_value=True`` for each recipe (by default the three
bundled ones, 15 seasons each, so 45 pages a run; league-players pages are ~40 KB of HTML)
against one loopback demo site (``DemoServer``, all seasons live), once with
``snapshots=True`` and once with ``snapshots=False``, and prints, in one run:
  - median seconds per page of each variant, and with / without (aim <= 1.1);
  - the spread of the with / without ratio over the repeats (each repeat runs both variants);
  - WARC bytes written per page (and as a multiple of the HTML body bytes the site sent), and
    the snapshot index's bytes per page;
  - the time spent inside ``SnapshotRecorder`` (opening it: salvage check and index load;
    ``keep``, ``record_of``; ``close``: fsync, rename, index file) per page, and its share of
    the with-snapshots run; the same methods are wrapped in both variants. The recorder's own
    time over the without run's time is a second, steadier estimate of the cost: it leaves out
    the run-to-run noise of the rest of the harvest (and any cost outside the recorder).
``--profile`` adds a cProfile of one more with-snapshots harvest, its top functions inside
the snapshot path (harvester/snapshots, warcio) by cumulative time.

How pacing waits are excluded: the site's robots.txt says ``Crawl-delay: 0`` and each recipe is
run from a temporary copy whose ``[fetch] delay`` is 0, so the pacer's interval is 0; each run
gets its own ``HARVESTER_STATE_DIR`` (the shared pace file), so no run waits on the previous
run's last request. What sleeping is left is measured — the sleeps of ``HostPacer`` and
``SharedPace`` are wrapped in this script — printed, and subtracted from each run's time.
Each run harvests into a fresh archive folder, so every page comes from the site, not the
cache. The two variants take turns, the first of each repeat alternating, after one
untimed warm-up run of each.

Usage: .venv/bin/python bench/snapshot_bench.py [--repeats 7]
       [--recipes league-players league-standings league-contracts] [--profile]
"""

from __future__ import annotations

import argparse
import cProfile
import functools
import io
import os
import pstats
import re
import shutil
import statistics
import tempfile
import time
from collections import defaultdict
from collections.abc import Awaitable, Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from harvester.demo.server import DemoServer
from harvester.fetch.pacing import HostPacer
from harvester.fetch.shared_pace import STATE_DIR_VARIABLE, SharedPace
from harvester.recipe.load import load_recipe
from harvester.recipe.model import Recipe
from harvester.run import harvest
from harvester.snapshots.recorder import SnapshotRecorder

RECIPES_DIR = Path(__file__).resolve().parent.parent / "recipes"
RECORDER_METHODS = ("__init__", "keep", "record_of", "close")
DELAY_LINE = re.compile(r"(?m)^delay\s*=\s*[0-9.]+")


class Meter:
    """Seconds spent in the recorder's methods and in pacing sleeps, since the last ``reset``."""

    def __init__(self) -> None:
        self.recorder: dict[str, float] = defaultdict(float)
        self.sleeping = 0.0

    def reset(self) -> None:
        self.recorder.clear()
        self.sleeping = 0.0

    def install(self) -> None:
        """Wrap the recorder's methods and the pacers' sleeps (this script's process only)."""
        for name in RECORDER_METHODS:
            setattr(SnapshotRecorder, name, self._timed(name, getattr(SnapshotRecorder, name)))
        for kind in (HostPacer, SharedPace):
            setattr(kind, "__init__", self._sleep_timed(kind.__init__))  # noqa: B010

    def _timed(self, name: str, method: Callable[..., Any]) -> Callable[..., Any]:
        @functools.wraps(method)
        def timed(*args: Any, **kwargs: Any) -> Any:
            start = time.perf_counter()
            try:
                return method(*args, **kwargs)
            finally:
                self.recorder[name] += time.perf_counter() - start

        return timed

    def _sleep_timed(self, init: Callable[..., None]) -> Callable[..., None]:
        meter = self

        @functools.wraps(init)
        def patched(self: HostPacer | SharedPace, *args: Any, **kwargs: Any) -> None:
            init(self, *args, **kwargs)
            sleep: Callable[[float], Awaitable[None]] = self._sleep

            async def timed_sleep(seconds: float) -> None:
                start = time.perf_counter()
                try:
                    await sleep(seconds)
                finally:
                    meter.sleeping += time.perf_counter() - start

            self._sleep = timed_sleep

        return patched


@dataclass(frozen=True)
class RunResult:
    """One timed run of every recipe: seconds with waits taken out, and what it wrote."""

    seconds: float
    waits: float
    pages: int
    warc_bytes: int
    index_bytes: int
    recorder: dict[str, float]


def fast_copy(name: str, folder: Path) -> Path:
    """A copy of a bundled recipe whose ``[fetch] delay`` is 0 (the site's Crawl-delay is 0)."""
    text, count = DELAY_LINE.subn("delay = 0", (RECIPES_DIR / f"{name}.toml").read_text())
    assert count == 1, f"{name}: expected one [fetch] delay line, found {count}"
    path = folder / f"{name}.toml"
    path.write_text(text)
    return path


def folder_bytes(folder: Path, pattern: str) -> int:
    return sum(path.stat().st_size for path in folder.glob(pattern))


@contextmanager
def fresh_state(folder: Path) -> Iterator[None]:
    """A shared pace file of this run's own, in ``folder`` (removed afterwards)."""
    before = os.environ.get(STATE_DIR_VARIABLE)
    os.environ[STATE_DIR_VARIABLE] = str(folder)
    try:
        yield
    finally:
        if before is None:
            del os.environ[STATE_DIR_VARIABLE]
        else:
            os.environ[STATE_DIR_VARIABLE] = before
        shutil.rmtree(folder, ignore_errors=True)


def run_once(recipes: list[Recipe], work: Path, snapshots: bool, meter: Meter) -> RunResult:
    """Harvest every recipe's every season into a fresh archive; time it, waits taken out."""
    archive = Path(tempfile.mkdtemp(prefix="archive-", dir=work))
    meter.reset()
    pages = 0
    with fresh_state(Path(tempfile.mkdtemp(prefix="state-", dir=work))):
        start = time.perf_counter()
        for recipe in recipes:
            report = harvest(recipe, archive=str(archive), every_value=True, snapshots=snapshots)
            pages += report.pages_done
            statuses = {outcome.status for outcome in report.outcomes}
            assert statuses == {"new"}, f"{recipe.name}: {statuses}"
        seconds = time.perf_counter() - start
    warc = folder_bytes(archive, "snapshots/warc/*.warc.gz")
    index = folder_bytes(archive, "snapshots/index/*.parquet")
    assert (warc > 0) == snapshots, f"snapshots={snapshots} but {warc} WARC bytes"
    shutil.rmtree(archive)
    waits = meter.sleeping
    return RunResult(seconds - waits, waits, pages, warc, index, dict(meter.recorder))


def profile_once(recipes: list[Recipe], work: Path, top: int) -> str:
    """cProfile of one with-snapshots run: the top functions of the snapshot path."""
    profiler = cProfile.Profile()
    archive = Path(tempfile.mkdtemp(prefix="archive-", dir=work))
    with fresh_state(Path(tempfile.mkdtemp(prefix="state-", dir=work))):
        profiler.enable()
        for recipe in recipes:
            harvest(recipe, archive=str(archive), every_value=True, snapshots=True)
        profiler.disable()
    shutil.rmtree(archive)
    out = io.StringIO()
    stats = pstats.Stats(profiler, stream=out).sort_stats("cumulative")
    stats.print_stats(r"harvester/snapshots|warcio|zlib", top)
    return out.getvalue()


def report(args: argparse.Namespace, body: float, runs: dict[bool, list[RunResult]]) -> None:
    """Print per-page medians, the ratio, bytes written and the recorder's share."""
    pages = runs[True][0].pages

    def per_page(variant: bool) -> float:
        return statistics.median(run.seconds / run.pages for run in runs[variant])

    with_, without = per_page(True), per_page(False)
    ratios = sorted(a.seconds / b.seconds for a, b in zip(runs[True], runs[False], strict=True))
    waits = sum(run.waits for variant in runs.values() for run in variant)
    warc = statistics.median(run.warc_bytes / run.pages for run in runs[True])
    index = statistics.median(run.index_bytes / run.pages for run in runs[True])
    print(f"{', '.join(args.recipes)}: {pages} pages a run, {body / 1000:.1f} KB of HTML a page")
    print(f"median of {args.repeats} repeats after a warm-up, the variants turn about")
    print(f"pacing sleeps, all timed runs together: {waits * 1000:.1f} ms (taken out)")
    print(f"without snapshots   {without * 1000:8.2f} ms/page")
    print(f"with snapshots      {with_ * 1000:8.2f} ms/page")
    print(f"with / without = {with_ / without:.3f}   (aim <= 1.1)")
    spread = f"{ratios[0]:.3f} .. {ratios[-1]:.3f}, median {statistics.median(ratios):.3f}"
    print(f"  per repeat: {spread}")
    print(f"WARC bytes per page: {warc:,.0f} ({warc / body:.2f} × the HTML body)")
    print(f"index bytes per page: {index:,.0f}")
    recorders = {
        variant: statistics.median(sum(run.recorder.values()) / run.pages for run in runs[variant])
        for variant in runs
    }
    for variant in (True, False):
        label = "with" if variant else "without"
        done = runs[variant]
        methods = {
            name: statistics.median(run.recorder.get(name, 0.0) / run.pages for run in done)
            for name in RECORDER_METHODS
        }
        total = recorders[variant]
        share = total / (with_ if variant else without)
        parts = "  ".join(f"{name} {ms * 1000:.2f}" for name, ms in methods.items())
        print(f"recorder, {label:<7}: {total * 1000:.2f} ms/page ({share:.1%}); {parts}")
    own = (recorders[True] - recorders[False]) / without
    print(f"without + the recorder's own time = {1 + own:.3f} × without")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=7)
    parser.add_argument(
        "--recipes", nargs="+", default=["league-players", "league-standings", "league-contracts"]
    )
    parser.add_argument("--profile", action="store_true")
    parser.add_argument("--top", type=int, default=25)
    args = parser.parse_args()
    meter = Meter()
    meter.install()
    work = Path(tempfile.mkdtemp(prefix="snapshot-bench-"))
    try:
        with DemoServer(crawl_delay=0.0, keep_seasons=None) as site:
            site_url = {"site": site.url("")}
            recipes = [load_recipe(fast_copy(name, work), site_url) for name in args.recipes]
            runs: dict[bool, list[RunResult]] = {True: [], False: []}
            for variant in (True, False):  # warm-up, untimed
                run_once(recipes, work, variant, meter)
            site.clear_log()
            for i in range(args.repeats):
                for variant in (True, False) if i % 2 == 0 else (False, True):
                    runs[variant].append(run_once(recipes, work, variant, meter))
            pages = [record for record in site.log if record.path != "/robots.txt"]
            assert all(record.status == 200 for record in pages), "the site refused a request"
            assert not site.violations()
            body = statistics.mean(record.sent_bytes for record in pages)
            profile = profile_once(recipes, work, args.top) if args.profile else ""
    finally:
        shutil.rmtree(work, ignore_errors=True)
    report(args, body, runs)
    if profile:
        print(profile)


if __name__ == "__main__":
    main()
