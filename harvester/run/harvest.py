"""A harvest: a recipe's plan captured from a page source, its tables extracted and stored.

One table failing (robots.txt, an HTTP error, a selector that matches nothing, a value that
does not parse, drift the recipe refuses) is reported and never stops the other tables or
touches the archive: the store writes a version only for a table that was read completely.

Pages come from a ``PageSource`` (``harvester.fetch.source``); by default the polite live
fetcher, with its HTTP cache inside the archive. The run never asks what kind of source it is.
Every exchange is kept in the archive's snapshot archive (``ARCHIVE/snapshots``) and, when asked,
in a cassette; each row's ``_warc_record_id`` names the record its page's body is in.
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
from typing import Any

import httpx
from pyarrow import fs as pafs

from harvester.config import configured_contact
from harvester.errors import (
    ArchiveUnwritableError,
    RunInterrupted,
)
from harvester.fetch.client import Fetcher, FetchMode
from harvester.fetch.exchange import AnswerListener
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.pacing import host_key
from harvester.fetch.past import past_source
from harvester.fetch.source import PageSource
from harvester.fetch.transfer import Answer
from harvester.fetch.waits import WaitAnnouncer, log_wait
from harvester.recipe.model import PlannedPage, Recipe
from harvester.run.pages import harvest_page, stored_outcomes
from harvester.run.report import Outcome, RunReport, write_report
from harvester.snapshots.entry import SNAPSHOTS_DIR
from harvester.snapshots.recorder import SnapshotRecorder
from harvester.store.layout import join, open_root
from harvester.store.writer import ArchiveWriter

__all__ = ["harvest", "harvest_all", "live_source", "local_folder"]


def harvest(
    recipe: Recipe,
    *,
    archive: str = "archive",
    source: PageSource | None = None,
    contact: str | None = None,
    mode: FetchMode = "normal",
    every_value: bool = False,
    transport: httpx.AsyncBaseTransport | None = None,
    on_outcome: Callable[[Outcome], None] | None = None,
    stop_on_sigterm: bool = False,
    max_wait: float | None = None,
    on_wait: WaitAnnouncer = log_wait,
    record: Path | None = None,
    snapshots: bool = True,
    skip_stored: bool = False,
    on_page: Callable[[str], None] | None = None,
    on_request: Callable[[str], None] | None = None,
    on_pace: WaitAnnouncer | None = None,
) -> RunReport:
    """Run ``recipe`` for its current parameter values (or every value) into ``archive``.

    Pages come from ``source``; without one, from the polite live fetcher that ``live_source``
    builds (``contact``, ``mode``, ``transport``, ``max_wait`` and ``on_wait`` are its
    settings). ``on_outcome`` is called with each table's outcome as soon as it is known (a long
    run shows progress line by line). ``record`` names a cassette: one WARC file that also gets
    every exchange of the run; the live fetcher then reads no HTTP cache, so the cassette holds
    each page's exchanges themselves (redirects included) and replays without the cache.
    ``snapshots=False`` keeps no snapshot archive: rows have the ``_warc_record_id`` their
    source gives (a cassette's, the snapshot archive's), else none. ``skip_stored`` (a backfill)
    asks nothing for a page whose every table's partition the archive already holds: those
    tables are ``skipped``.

    Pages on different hosts proceed side by side (the live site and its web archive, or
    several sites), one request in flight per host at its own pace; outcomes are reported as
    they come, and kept in the report in plan order. For a progress display: ``on_page`` gets
    each planned page's URL once it is done, ``on_request`` the URL of every answer the live
    fetcher reads, ``on_pace`` every wait before a request (short ones too).

    The run report is written however the run ends. Ctrl-C (SIGINT) — and SIGTERM when
    ``stop_on_sigterm`` is set, which only the main thread can do — stops the run at the next
    wait for a page (a commit is never cut short), releases the lock and raises RunInterrupted
    carrying the report. An archive that cannot be written stops the run with
    ArchiveUnwritableError; every other failure is one table's ``failed`` outcome.
    """
    live = _live_factory(
        recipe,
        archive,
        contact=contact,
        mode=mode,
        transport=transport,
        max_wait=max_wait,
        on_wait=on_wait,
        on_request=on_request,
        on_pace=on_pace,
        use_cache=record is None,
    )
    run = _Run(recipe, archive, _new_report(recipe, archive), on_outcome,
               _info(recipe, contact), record, snapshots, skip_stored)  # fmt: skip
    run.on_page = on_page
    (report,) = _execute([run], [live if source is None else source], every_value, stop_on_sigterm)
    return report


def harvest_all(
    recipes: Sequence[Recipe],
    *,
    archive: str = "archive",
    contact: str | None = None,
    mode: FetchMode = "normal",
    every_value: bool = False,
    transport: httpx.AsyncBaseTransport | None = None,
    on_outcome: Callable[[Outcome], None] | None = None,
    stop_on_sigterm: bool = False,
    max_wait: float | None = None,
    on_wait: WaitAnnouncer = log_wait,
    skip_stored: bool = False,
    on_page: Callable[[str], None] | None = None,
    on_request: Callable[[str], None] | None = None,
    on_pace: WaitAnnouncer | None = None,
) -> list[RunReport]:
    """Run several recipes at once into one ``archive``, live: one report each.

    Each recipe has its fetcher (its contact, delay and limits); the archive's lock, the
    snapshot archive and the machine-wide pace per host are shared, so recipes on different
    sites proceed side by side and recipes on one site take turns at its pace. The settings
    and the interruption are as ``harvest``'s; RunInterrupted carries the first report.
    """
    if not recipes:
        return []
    runs: list[_Run] = []
    lives: list[_Source] = []
    for recipe in recipes:
        run = _Run(recipe, archive, _new_report(recipe, archive), on_outcome,
                   _info(recipe, contact), None, True, skip_stored)  # fmt: skip
        run.on_page = on_page
        runs.append(run)
        lives.append(
            _live_factory(
                recipe,
                archive,
                contact=contact,
                mode=mode,
                transport=transport,
                max_wait=max_wait,
                on_wait=on_wait,
                on_request=on_request,
                on_pace=on_pace,
                use_cache=True,
            )
        )
    if runs:
        names = [run.recipe.name for run in runs]
        runs[0].info = {**runs[0].info, "recipe": ", ".join(names),
                        "run-id": ", ".join(run.report.run_id for run in runs)}  # fmt: skip
    return _execute(runs, lives, every_value, stop_on_sigterm)


_Source = PageSource | Callable[[AnswerListener], Fetcher]


def _new_report(recipe: Recipe, archive: str) -> RunReport:
    return RunReport(uuid.uuid4().hex[:12], recipe.name, archive, datetime.now(UTC))


def _info(recipe: Recipe, contact: str | None) -> dict[str, str]:
    """The warcinfo fields of a run (the report's run id is added by ``_Run``)."""
    return {
        "recipe": recipe.name,
        "recipe-sha256": recipe.sha256,
        "operator": _contact(recipe, contact) or "",
        "robots": "obey",  # WARC 1.1 §6.2's suggested warcinfo field: robots.txt is honoured
    }


def _live_factory(
    recipe: Recipe,
    archive: str,
    *,
    on_request: Callable[[str], None] | None,
    **settings: Any,
) -> Callable[[AnswerListener], Fetcher]:
    """How to build the recipe's live fetcher once the recorder's listener is known."""

    def live(keep: AnswerListener) -> Fetcher:
        def on_answer(answer: Answer) -> None:
            keep(answer)
            if on_request is not None:
                on_request(answer.url)

        return live_source(recipe, archive, on_answer=on_answer, **settings)

    return live


def _execute(
    runs: list[_Run], sources: list[_Source], every_value: bool, stop_on_sigterm: bool
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
    runs: list[_Run], sources: list[_Source], every_value: bool, stop_on_sigterm: bool
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


class _Run:
    """One harvest in progress: the plan walked page by page, outcomes reported as they come."""

    def __init__(
        self,
        recipe: Recipe,
        archive: str,
        report: RunReport,
        on_outcome: Callable[[Outcome], None] | None,
        info: dict[str, str],
        cassette: Path | None,
        snapshots: bool,
        skip_stored: bool = False,
    ) -> None:
        self.skip_stored = skip_stored
        self.on_page: Callable[[str], None] | None = None
        self.recipe = recipe
        self.archive = archive
        self.report = report
        self.on_outcome = on_outcome
        self.info = {**info, "run-id": report.run_id}
        self.cassette = cassette
        self.snapshots = snapshots

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


def live_source(
    recipe: Recipe,
    archive: str,
    *,
    contact: str | None = None,
    mode: FetchMode = "normal",
    transport: httpx.AsyncBaseTransport | None = None,
    max_wait: float | None = None,
    on_wait: WaitAnnouncer = log_wait,
    on_answer: AnswerListener | None = None,
    use_cache: bool = True,
    on_pace: WaitAnnouncer | None = None,
) -> Fetcher:
    """The polite live fetcher for ``recipe``, caching inside a local ``archive``.

    The contact is ``contact``, else the recipe's, else the user's configured one; without any,
    FetchError (harvester does not fetch from live sites anonymously). The longest single wait
    is ``max_wait``, else the recipe's ``[fetch] max_wait``; waits over five seconds go to
    ``on_wait`` (by default a warning on the ``harvester.fetch`` logger). Every answer read in
    full goes to ``on_answer`` (the snapshot recorder); ``use_cache=False`` reads no HTTP cache.
    """
    identity = Identity.from_contact(_contact(recipe, contact), where=str(recipe.path))
    return Fetcher(
        identity,
        cache_dir=local_folder(archive, "cache") if use_cache else None,
        mode=mode,
        min_interval=recipe.fetch.delay or 0.0,  # no delay: the site's Crawl-delay governs
        transport=transport,
        limits=FetchLimits(max_wait=recipe.fetch.max_wait if max_wait is None else max_wait),
        on_wait=on_wait,
        on_answer=on_answer,
        on_pace=on_pace,
    )


def _contact(recipe: Recipe, contact: str | None) -> str | None:
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
