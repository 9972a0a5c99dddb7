"""One planned page of a harvest: captured, its tables extracted, checked and committed.

``harvest_page`` is the run's work for a page: the capture from the source, each table read
and stored (a table failing is its own ``failed`` outcome), and under ``live-then-capture`` the
tables a live page lacks asked for again from the web archive. ``stored_outcomes`` is the
backfill's check that a page's partitions are already in the archive.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from datetime import UTC, datetime

from harvester.errors import ArchiveUnwritableError, HarvesterError, TableNotFoundError
from harvester.extract.table import extract_table, read_page
from harvester.fetch.capture import Capture
from harvester.fetch.source import PageRequest, PageSource
from harvester.recipe.model import PlannedPage, Recipe
from harvester.recipe.templates import expand_template
from harvester.run.provenance import RowSource, with_provenance
from harvester.run.report import Outcome, RunReport, Status
from harvester.store.archive import Archive
from harvester.store.partition_diff import diff_partition
from harvester.store.writer import ArchiveWriter
from harvester.timestamps import rfc3339

__all__ = ["harvest_page", "page_request", "stored_outcomes"]

_LIVE = frozenset({"live", "cache"})  # origins of a live page (a cached copy is one too)


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


def stored_outcomes(
    recipe: Recipe, page: PlannedPage, writer: ArchiveWriter
) -> list[Outcome] | None:
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


async def harvest_page(
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
        if extracted.notes:  # unknown codes: said in the table's line, never silently null
            done = dataclasses.replace(done, notes=(*done.notes, *extracted.notes))
        outcomes[name] = done
    return lacking


def _row_changes(
    report: RunReport, recipe: Recipe, table: str, partition: dict[str, int | str | None]
) -> dict[str, int] | None:
    """Rows added, removed and changed (by the recorded key) from the previous version."""
    try:
        found = diff_partition(Archive(report.archive), recipe.name, table, partition)
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
