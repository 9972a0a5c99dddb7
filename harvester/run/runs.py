"""Runs in progress: each recipe's plan walked by a few workers, with one archive writer and one
snapshot recorder for all the runs of one event loop.

``execute`` runs them and writes every report however they end (Ctrl-C, SIGTERM, an archive
that cannot be written); ``Run.walk`` is one recipe's pages, taken by workers side by side so
that waits on different hosts overlap (each host's pacer keeps its own requests one at a time).
"""

from __future__ import annotations

import asyncio
import contextlib
import signal
import uuid
from collections.abc import Callable, Sequence
from contextlib import AsyncExitStack
from datetime import UTC, datetime
from pathlib import Path

from pyarrow import fs as pafs

from harvester.config import configured_contact
from harvester.errors import ArchiveUnwritableError, RunInterrupted
from harvester.fetch.client import Fetcher
from harvester.fetch.exchange import AnswerListener
from harvester.fetch.pacing import host_key
from harvester.fetch.past import past_source
from harvester.fetch.source import PageSource
from harvester.recipe.model import PlannedPage, Recipe
from harvester.run.pages import harvest_page, stored_outcomes
from harvester.run.report import Outcome, RunReport, write_report
from harvester.snapshots.entry import SNAPSHOTS_DIR
from harvester.snapshots.recorder import SnapshotRecorder
from harvester.store.layout import join, open_root
from harvester.store.writer import ArchiveWriter

__all__ = ["MAX_WORKERS", "Run", "Source", "contact_of", "execute", "local_folder"]

Source = PageSource | Callable[[AnswerListener], Fetcher]


def execute(
    runs: list[Run], sources: list[Source], every_value: bool, stop_on_sigterm: bool
) -> list[RunReport]:
    """Run ``runs`` together in one event loop; every report is written however they end."""
    reports = [run.report for run in runs]
    try:
        with asyncio.Runner() as runner:
            runner.run(_go(runs, sources, every_value, stop_on_sigterm))
    except KeyboardInterrupt:
        for report in reports:
            report.interrupted_by = report.interrupted_by or "SIGINT"
    finally:
        for report in reports:
            report.finished_at = datetime.now(UTC)
            with contextlib.suppress(OSError):  # an unwritable archive already said why
                write_report(report.archive, report)
    stopped = next((report for report in reports if report.interrupted_by is not None), None)
    if stopped is not None:
        raise RunInterrupted(
            f"interrupted after {stopped.pages_done} of {stopped.pages_planned} pages"
            f" ({stopped.interrupted_by})",
            signal_name=stopped.interrupted_by or "SIGINT",
            report=stopped,
            hint=f"run it again to go on; the report is in {stopped.archive}/runs/"
            f"{stopped.run_id}.jsonl",
        )
    return reports


async def _go(
    runs: list[Run], sources: list[Source], every_value: bool, stop_on_sigterm: bool
) -> None:
    """Walk every run's plan side by side, with one archive writer and one recorder."""
    plans = [run.recipe.plan(every_value=every_value) for run in runs]
    for run, pages in zip(runs, plans, strict=True):
        run.report.pages_planned = len(pages)
    task = asyncio.current_task()
    loop = asyncio.get_running_loop()

    def stop() -> None:
        for run in runs:
            run.report.interrupted_by = "SIGTERM"
        if task is not None:
            task.cancel()

    if stop_on_sigterm and task is not None:
        loop.add_signal_handler(signal.SIGTERM, stop)
    fetchers: list[Fetcher | None] = [None] * len(runs)
    try:
        async with AsyncExitStack() as stack:
            # The lock first: an archive that cannot be written stops the run before the
            # fetcher makes its cache folder inside it.
            writer = stack.enter_context(ArchiveWriter(runs[0].archive))
            recorder = stack.enter_context(runs[0].recorder())
            walks = []
            for index, (run, source, pages) in enumerate(zip(runs, sources, plans, strict=True)):
                if not isinstance(source, PageSource):
                    source = await stack.enter_async_context(source(recorder.keep))
                fetchers[index] = source if isinstance(source, Fetcher) else None
                wrapped = recorder.wrap(past_source(source, run.recipe.captures))
                walks.append(run.walk(pages, wrapped, writer))
            await asyncio.gather(*walks)
    except asyncio.CancelledError:
        if runs[0].report.interrupted_by != "SIGTERM":
            raise  # Ctrl-C: asyncio.Runner turns it into KeyboardInterrupt for harvest()
    finally:
        if stop_on_sigterm:
            loop.remove_signal_handler(signal.SIGTERM)
        for run, fetcher in zip(runs, fetchers, strict=True):
            if fetcher is not None:  # an interrupted run keeps its counts too
                run.report.hosts, run.report.requests = fetcher.stats.to_report()


class Run:
    """One harvest in progress: the plan walked page by page, outcomes reported as they come."""

    def __init__(
        self,
        recipe: Recipe,
        archive: str,
        on_outcome: Callable[[Outcome], None] | None,
        contact: str | None,
        cassette: Path | None,
        snapshots: bool,
        skip_stored: bool = False,
    ) -> None:
        self.recipe = recipe
        self.archive = archive
        self.report = RunReport(uuid.uuid4().hex[:12], recipe.name, archive, datetime.now(UTC))
        self.on_outcome = on_outcome
        self.info = {  # the warcinfo fields of the run's WARC files
            "recipe": recipe.name,
            "recipe-sha256": recipe.sha256,
            "run-id": self.report.run_id,
            "operator": contact_of(recipe, contact) or "",
            "robots": "obey",  # WARC 1.1 §6.2's suggested warcinfo field: robots.txt is honoured
        }
        self.cassette = cassette
        self.snapshots = snapshots
        self.skip_stored = skip_stored
        self.on_page: Callable[[str], None] | None = None

    async def walk(
        self, pages: Sequence[PlannedPage], source: PageSource, writer: ArchiveWriter
    ) -> None:
        """Every page, by a few workers side by side: each host's pacer keeps its requests one
        at a time and spaced, so workers only overlap waits on different hosts."""
        order = {page.url: index for index, page in enumerate(pages)}
        queue = iter(pages)

        async def work() -> None:
            for page in queue:  # one iterator shared: each page is taken by one worker
                stored = stored_outcomes(self.recipe, page, writer) if self.skip_stored else None
                if stored is not None:
                    outcomes = stored
                else:
                    outcomes = await harvest_page(self.recipe, page, source, writer, self.report)
                self.report.pages_done += 1
                for outcome in outcomes:
                    self._add(outcome)
                if self.on_page is not None:
                    self.on_page(page.url)

        workers = [asyncio.create_task(work()) for _ in range(_workers(self.recipe, pages))]
        try:
            await asyncio.gather(*workers)
        finally:
            for worker in workers:
                worker.cancel()
            await asyncio.gather(*workers, return_exceptions=True)
            self.report.outcomes.sort(key=lambda outcome: order.get(outcome.url, len(order)))

    def recorder(self) -> SnapshotRecorder:
        """The run's snapshot recorder (and cassette), opened now."""
        snapshots = local_folder(self.archive, SNAPSHOTS_DIR) if self.snapshots else None
        try:
            return SnapshotRecorder(
                Path(snapshots) if snapshots else None, info=self.info, cassette=self.cassette
            )
        except OSError as exc:
            raise ArchiveUnwritableError(
                f"the snapshot archive cannot be opened: {exc}",
                hint="check the archive folder's permissions and free space",
            ) from None

    def _add(self, outcome: Outcome) -> None:
        self.report.outcomes.append(outcome)
        if self.on_outcome is not None:
            self.on_outcome(outcome)


def contact_of(recipe: Recipe, contact: str | None) -> str | None:
    """The contact a run identifies itself with: given, else the recipe's, else configured."""
    return contact or recipe.contact or configured_contact()


MAX_WORKERS = 16  # pages in progress at once: enough to keep every host of a plan busy


def _workers(recipe: Recipe, pages: Sequence[PlannedPage]) -> int:
    """Two workers per host the plan may ask (its pages', its archive's), at least one."""
    hosts = {host_key(page.url) for page in pages}
    if recipe.captures is not None and recipe.fetch.past != "live":
        hosts |= {host_key(origin) for origin in recipe.captures.hosts}
    return max(1, min(len(pages), 2 * len(hosts), MAX_WORKERS))


def local_folder(archive: str, name: str) -> str | None:
    """A folder inside a local archive root (the HTTP cache, the snapshot archive), or None."""
    filesystem, root = open_root(archive)
    if not isinstance(filesystem, pafs.LocalFileSystem):
        return None  # an object-store archive: no on-disk HTTP cache, no snapshot archive
    return join(root, name)
