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

from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import httpx

from harvester.fetch.client import Fetcher, FetchMode
from harvester.fetch.exchange import AnswerListener
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.source import PageSource
from harvester.fetch.transfer import Answer
from harvester.fetch.waits import WaitAnnouncer, log_wait
from harvester.recipe.model import Recipe
from harvester.run.report import Outcome, RunReport
from harvester.run.runs import Run, contact_of, execute, local_folder

__all__ = ["harvest", "harvest_all", "live_source"]


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
    (report,) = _harvest_runs(
        [recipe],
        archive=archive,
        source=source,
        record=record,
        snapshots=snapshots,
        every_value=every_value,
        stop_on_sigterm=stop_on_sigterm,
        on_outcome=on_outcome,
        on_page=on_page,
        skip_stored=skip_stored,
        live={
            "contact": contact,
            "mode": mode,
            "transport": transport,
            "max_wait": max_wait,
            "on_wait": on_wait,
            "on_request": on_request,
            "on_pace": on_pace,
        },
    )
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
    return _harvest_runs(
        recipes,
        archive=archive,
        every_value=every_value,
        stop_on_sigterm=stop_on_sigterm,
        on_outcome=on_outcome,
        on_page=on_page,
        skip_stored=skip_stored,
        live={
            "contact": contact,
            "mode": mode,
            "transport": transport,
            "max_wait": max_wait,
            "on_wait": on_wait,
            "on_request": on_request,
            "on_pace": on_pace,
        },
    )


def _harvest_runs(
    recipes: Sequence[Recipe],
    *,
    archive: str,
    every_value: bool,
    stop_on_sigterm: bool,
    on_outcome: Callable[[Outcome], None] | None,
    on_page: Callable[[str], None] | None,
    skip_stored: bool,
    live: dict[str, Any],
    source: PageSource | None = None,
    record: Path | None = None,
    snapshots: bool = True,
) -> list[RunReport]:
    """``harvest`` and ``harvest_all``: a run per recipe, all in one event loop. ``live`` holds
    ``live_source``'s settings (and ``on_request``); ``source`` replaces the live fetcher."""
    if not recipes:
        return []
    runs, sources = [], []
    for recipe in recipes:
        run = Run(recipe, archive, on_outcome, live["contact"], record, snapshots, skip_stored)
        run.on_page = on_page
        runs.append(run)
        factory = _live_factory(recipe, archive, use_cache=record is None, **live)
        sources.append(factory if source is None else source)
    if len(runs) > 1:  # one snapshot recorder for all: its warcinfo names every recipe and run
        runs[0].info = {**runs[0].info, "recipe": ", ".join(run.recipe.name for run in runs),
                        "run-id": ", ".join(run.report.run_id for run in runs)}  # fmt: skip
    return execute(runs, sources, every_value, stop_on_sigterm)


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
    identity = Identity.from_contact(contact_of(recipe, contact), where=str(recipe.path))
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
