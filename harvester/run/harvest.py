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
import dataclasses
import signal
import uuid
from collections.abc import Callable, Sequence
from contextlib import AsyncExitStack
from datetime import UTC, datetime
from pathlib import Path

import httpx
from pyarrow import fs as pafs

from harvester.config import configured_contact
from harvester.errors import (
    ArchiveUnwritableError,
    HarvesterError,
    RunInterrupted,
    TableNotFoundError,
)
from harvester.extract.table import extract_table, read_page
from harvester.fetch.capture import Capture
from harvester.fetch.client import Fetcher, FetchMode
from harvester.fetch.exchange import AnswerListener
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.pacing import host_key
from harvester.fetch.past import past_source
from harvester.fetch.source import PageRequest, PageSource
from harvester.fetch.waits import WaitAnnouncer, log_wait
from harvester.recipe.model import PlannedPage, Recipe
from harvester.recipe.templates import expand_template
from harvester.run.provenance import RowSource, with_provenance
from harvester.run.report import Outcome, RunReport, Status, write_report
from harvester.snapshots.entry import SNAPSHOTS_DIR
from harvester.snapshots.recorder import SnapshotRecorder
from harvester.store.archive import Archive
from harvester.store.layout import join, open_root
from harvester.store.partition_diff import diff_partition
from harvester.store.writer import ArchiveWriter
from harvester.timestamps import rfc3339

__all__ = ["harvest", "live_source", "local_folder", "page_request"]

_LIVE = frozenset({"live", "cache"})  # origins of a live page (a cached copy is one too)


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
    they come, and kept in the report in plan order.

    The run report is written however the run ends. Ctrl-C (SIGINT) — and SIGTERM when
    ``stop_on_sigterm`` is set, which only the main thread can do — stops the run at the next
    wait for a page (a commit is never cut short), releases the lock and raises RunInterrupted
    carrying the report. An archive that cannot be written stops the run with
    ArchiveUnwritableError; every other failure is one table's ``failed`` outcome.
    """
    report = RunReport(uuid.uuid4().hex[:12], recipe.name, archive, datetime.now(UTC))
    info = {
        "recipe": recipe.name,
        "recipe-sha256": recipe.sha256,
        "run-id": report.run_id,
        "operator": _contact(recipe, contact) or "",
        "robots": "obey",  # WARC 1.1 §6.2's suggested warcinfo field: robots.txt is honoured
    }
    run = _Run(recipe, archive, report, on_outcome, info, record, snapshots, skip_stored)

    def live(on_answer: AnswerListener) -> Fetcher:
        return live_source(
            recipe,
            archive,
            contact=contact,
            mode=mode,
            transport=transport,
            max_wait=max_wait,
            on_wait=on_wait,
            on_answer=on_answer,
            use_cache=record is None,
        )

    try:
        with asyncio.Runner() as runner:
            runner.run(run.go(live if source is None else source, every_value, stop_on_sigterm))
    except KeyboardInterrupt:
        report.interrupted_by = "SIGINT"
    finally:
        report.finished_at = datetime.now(UTC)
        with contextlib.suppress(OSError):  # an unwritable archive already said why
            write_report(archive, report)
    if report.interrupted_by is not None:
        raise RunInterrupted(
            f"interrupted after {report.pages_done} of {report.pages_planned} pages"
            f" ({report.interrupted_by})",
            signal_name=report.interrupted_by,
            report=report,
            hint=f"run it again to go on; the report is in {archive}/runs/{report.run_id}.jsonl",
        )
    return report


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
        self.recipe = recipe
        self.archive = archive
        self.report = report
        self.on_outcome = on_outcome
        self.info = info
        self.cassette = cassette
        self.snapshots = snapshots

    async def go(
        self,
        source: PageSource | Callable[[AnswerListener], Fetcher],
        every_value: bool,
        stop_on_sigterm: bool,
    ) -> None:
        """Walk the plan; ``source`` is a page source, or how to build the live one."""
        pages = self.recipe.plan(every_value=every_value)
        self.report.pages_planned = len(pages)
        task = asyncio.current_task()
        loop = asyncio.get_running_loop()
        if stop_on_sigterm and task is not None:
            loop.add_signal_handler(signal.SIGTERM, self._stop, task)
        fetcher: Fetcher | None = None
        try:
            async with AsyncExitStack() as stack:
                # The lock first: an archive that cannot be written stops the run before the
                # fetcher makes its cache folder inside it.
                writer = stack.enter_context(ArchiveWriter(self.archive))
                recorder = stack.enter_context(self._recorder())
                if not isinstance(source, PageSource):
                    source = await stack.enter_async_context(source(recorder.keep))
                fetcher = source if isinstance(source, Fetcher) else None
                source = recorder.wrap(past_source(source, self.recipe.captures))
                await self._walk(pages, source, writer)
        except asyncio.CancelledError:
            if self.report.interrupted_by != "SIGTERM":
                raise  # Ctrl-C: asyncio.Runner turns it into KeyboardInterrupt for harvest()
        finally:
            if stop_on_sigterm:
                loop.remove_signal_handler(signal.SIGTERM)
            if fetcher is not None:  # an interrupted run keeps its counts too
                self.report.hosts, self.report.requests = fetcher.stats.to_report()

    async def _walk(
        self, pages: Sequence[PlannedPage], source: PageSource, writer: ArchiveWriter
    ) -> None:
        """Every page, by a few workers side by side: each host's pacer keeps its requests one
        at a time and spaced, so workers only overlap waits on different hosts."""
        order = {page.url: index for index, page in enumerate(pages)}
        queue = iter(pages)

        async def work() -> None:
            for page in queue:  # one iterator shared: each page is taken by one worker
                stored = _stored(self.recipe, page, writer) if self.skip_stored else None
                if stored is not None:
                    outcomes = stored
                else:
                    outcomes = await _harvest_page(self.recipe, page, source, writer, self.report)
                self.report.pages_done += 1
                for outcome in outcomes:
                    self._add(outcome)

        workers = [asyncio.create_task(work()) for _ in range(_workers(self.recipe, pages))]
        try:
            await asyncio.gather(*workers)
        finally:
            for worker in workers:
                worker.cancel()
            await asyncio.gather(*workers, return_exceptions=True)
            self.report.outcomes.sort(key=lambda outcome: order.get(outcome.url, len(order)))

    def _recorder(self) -> SnapshotRecorder:
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

    def _stop(self, task: asyncio.Task[None]) -> None:
        self.report.interrupted_by = "SIGTERM"
        task.cancel()

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
    )


def _contact(recipe: Recipe, contact: str | None) -> str | None:
    """The contact a run identifies itself with: given, else the recipe's, else configured."""
    return contact or recipe.contact or configured_contact()


def page_request(recipe: Recipe, page: PlannedPage) -> PageRequest:
    """The request a source is asked for one planned page of ``recipe``."""
    near = None
    if recipe.fetch.capture_near is not None:
        near = datetime.fromisoformat(expand_template(recipe.fetch.capture_near, page.parameters))
        near = near.replace(tzinfo=UTC) if near.utcoffset() is None else near.astimezone(UTC)
    return PageRequest(
        page.url,
        page.parameters,
        immutable=_immutable(recipe, page),
        capture_near=near,
        past=recipe.fetch.past,
    )


def _immutable(recipe: Recipe, page: PlannedPage) -> bool:
    """Whether a page is a past one the recipe says never changes (``immutable_before``)."""
    limit = recipe.fetch.immutable_before
    if limit is None:
        return False
    numbers = [value for value in page.parameters.values() if isinstance(value, int)]
    return bool(numbers) and all(value < limit for value in numbers)


MAX_WORKERS = 16  # pages in progress at once: enough to keep every host of a plan busy


def _workers(recipe: Recipe, pages: Sequence[PlannedPage]) -> int:
    """Two workers per host the plan may ask (its pages', its archive's), at least one."""
    hosts = {host_key(page.url) for page in pages}
    if recipe.captures is not None and recipe.fetch.past != "live":
        hosts |= {host_key(origin) for origin in recipe.captures.hosts}
    return max(1, min(len(pages), 2 * len(hosts), MAX_WORKERS))


def _stored(recipe: Recipe, page: PlannedPage, writer: ArchiveWriter) -> list[Outcome] | None:
    """The ``skipped`` outcomes of a page whose every table the archive already holds."""
    partition = [(name, page.parameters.get(name)) for name in recipe.store.partition_by]
    versions = {name: writer.stored_version(recipe.name, name, partition) for name in page.tables}
    if not all(versions.values()):
        return None
    return [
        Outcome(
            recipe.name,
            name,
            page.url,
            dict(partition),
            "skipped",
            version=version,
            message=f"already in the archive (version {version}); nothing fetched",
        )
        for name, version in versions.items()
    ]


def _row_source(recipe: Recipe, capture: Capture, selector: str) -> RowSource:
    return RowSource(
        source_url=capture.url,
        final_url=capture.final_url,
        captured_at=capture.fetched_at,
        capture_origin=capture.origin,
        http_status=capture.status,
        body_sha256=capture.sha256,
        recipe=recipe.name,
        recipe_sha256=recipe.sha256,
        table_selector=selector,
        memento_datetime=capture.memento_datetime,
        warc_record_id=capture.record_id,
    )


async def _harvest_page(
    recipe: Recipe, page: PlannedPage, source: PageSource, writer: ArchiveWriter, report: RunReport
) -> list[Outcome]:
    """The outcome of each table of one page; only an unwritable archive escapes as an error.

    Under ``past = "live-then-capture"`` a live page that lacks a table is asked for again
    from the web archive, for the tables it lacks.
    """
    request = page_request(recipe, page)
    outcomes: dict[str, Outcome] = {}
    missing = await _harvest_capture(recipe, page, request, source, writer, report, outcomes)
    if missing and request.past == "live-then-capture":
        fallback = dataclasses.replace(request, past="capture")
        await _harvest_capture(
            recipe, page, fallback, source, writer, report, outcomes, tables=missing
        )
        for name in missing:
            said = outcomes[name]
            notes = ("the live page lacks the table", *said.notes)
            outcomes[name] = dataclasses.replace(said, notes=notes)
    return [outcomes[name] for name in page.tables]


async def _harvest_capture(
    recipe: Recipe,
    page: PlannedPage,
    request: PageRequest,
    source: PageSource,
    writer: ArchiveWriter,
    report: RunReport,
    outcomes: dict[str, Outcome],
    *,
    tables: Sequence[str] | None = None,
) -> list[str]:
    """Capture ``request``'s page and store ``tables`` (by default all the page's) from it;
    each table's outcome goes into ``outcomes``. The tables a live page lacks are returned."""
    partition = [(name, page.parameters.get(name)) for name in recipe.store.partition_by]
    where = dict(partition)
    names = list(page.tables if tables is None else tables)
    capture: Capture | None = None

    def outcome(
        table: str, status: Status, message: str, rows: int = 0, version: int = 0
    ) -> Outcome:
        said = capture
        return Outcome(
            recipe.name,
            table,
            page.url,
            where,
            status,
            rows,
            version,
            message,
            origin=said.origin if said else "",
            memento_datetime=rfc3339(said.memento_datetime, timespec="seconds")
            if said and said.memento_datetime
            else None,
            notes=said.notes if said else (),
        )

    try:
        capture = await source.capture(request)
        parsed = read_page(capture.body, capture.page_url, capture.charset)
    except ArchiveUnwritableError:
        raise  # the snapshot archive cannot keep what is fetched: every page would fail alike
    except HarvesterError as error:
        outcomes.update((name, outcome(name, "failed", str(error))) for name in names)
        return []
    except Exception as error:
        outcomes.update((name, outcome(name, "failed", _unexpected(error))) for name in names)
        return []
    lacking = []
    for name in names:
        rule = recipe.table_rule(name)
        try:
            extracted = extract_table(parsed, rule, base_url=capture.page_url)
            rows = list(extracted.source_rows)
            data = with_provenance(extracted.table, _row_source(recipe, capture, rule.select), rows)
            result = writer.commit(
                recipe.name,
                name,
                partition,
                data,
                provenance=_footer_provenance(recipe, capture, report.run_id, rule.key),
                key=rule.key,
                drift_policy=recipe.store.drift,
                min_rows=recipe.store.min_rows,
                max_rows=recipe.store.max_rows,
            )
        except ArchiveUnwritableError:
            raise  # every later table would fail the same way
        except TableNotFoundError as error:
            if capture.origin in _LIVE:
                lacking.append(name)
            outcomes[name] = outcome(name, "failed", str(error))
            continue
        except HarvesterError as error:
            outcomes[name] = outcome(name, "failed", str(error))
            continue
        except Exception as error:
            outcomes[name] = outcome(name, "failed", _unexpected(error))
            continue
        done = outcome(name, result.status, result.message, result.rows, result.version)
        if result.status == "new" and result.version > 1:
            done = dataclasses.replace(done, row_changes=_row_changes(report, recipe, name, where))
        outcomes[name] = done
    return lacking


def _row_changes(
    report: RunReport, recipe: Recipe, table: str, partition: dict[str, int | str | None]
) -> dict[str, int] | None:
    """Rows added, removed and changed (by the recorded key) from the previous version."""
    wanted = {key: None if value is None else str(value) for key, value in partition.items()}
    try:
        found = diff_partition(Archive(report.archive), recipe.name, table, wanted)
    except HarvesterError:
        return None  # the new version is published; a diff that cannot be read is no failure
    counts = found.diff.counts
    return {key: counts[key] for key in ("added", "removed", "changed")}


def _unexpected(error: Exception) -> str:
    """One line for a failure no check foresaw (a bug of ours, reported rather than fatal)."""
    text = " ".join(str(error).split())[:300]
    return (
        f"unexpected {type(error).__name__}: {text} — this is a harvester bug; please report it"
        " with the page"
    )


def _footer_provenance(
    recipe: Recipe, capture: Capture, run_id: str, key: tuple[str, ...]
) -> dict[str, object]:
    """What the run adds to a version's ``harvester.provenance`` footer entry."""
    return {
        "run_id": run_id,
        "recipe": recipe.name,
        "recipe_sha256": recipe.sha256,
        "source_urls": [capture.url],
        "captured_at": rfc3339(capture.fetched_at),
        "capture_origin": capture.origin,
        "memento_datetime": rfc3339(capture.memento_datetime) if capture.memento_datetime else None,
        "memento_uri": capture.memento_uri,
        "key": list(key),
    }


def local_folder(archive: str, name: str) -> str | None:
    """A folder inside a local archive root (the HTTP cache, the snapshot archive), or None."""
    filesystem, root = open_root(archive)
    if not isinstance(filesystem, pafs.LocalFileSystem):
        return None  # an object-store archive: no on-disk HTTP cache, no snapshot archive
    return join(root, name)
