"""A harvest: a recipe's plan fetched politely, its tables extracted and stored, a report kept.

One table failing (robots.txt, an HTTP error, a selector that matches nothing, a value that
does not parse, drift the recipe refuses) is reported and never stops the other tables or
touches the archive: the store writes a version only for a table that was read completely.
"""

from __future__ import annotations

import json
import uuid
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, field
from datetime import UTC, datetime
from typing import Literal

import httpx
from pyarrow import fs as pafs

from harvester.config import configured_contact
from harvester.errors import FetchError, HarvesterError
from harvester.extract.table import extract_table, read_page
from harvester.fetch.capture import Capture
from harvester.fetch.client import FetchMode
from harvester.fetch.identity import Identity
from harvester.fetch.sync import SyncFetcher
from harvester.provenance import RowSource, rfc3339, with_provenance
from harvester.recipe import PlannedPage, Recipe
from harvester.store.layout import open_root
from harvester.store.writer import ArchiveWriter

__all__ = ["Outcome", "RunReport", "harvest", "summary"]

Status = Literal["new", "unchanged", "refused", "failed"]


@dataclass(frozen=True)
class Outcome:
    """What happened to one table of one page."""

    dataset: str
    table: str
    url: str
    partition: dict[str, str | int | None]
    status: Status
    rows: int = 0
    version: int = 0
    message: str = ""

    def line(self) -> str:
        """One human line for the run summary."""
        where = ",".join(f"{k}={v}" for k, v in self.partition.items()) or "-"
        detail = f"{self.rows} rows, version {self.version}" if self.status != "failed" else ""
        # The store's message repeats table and partition; it is worth a column only when it
        # says why (a failure, a refusal) or warns (drift).
        worth = self.status in ("failed", "refused") or "drift" in self.message
        parts = [self.status, f"{self.dataset}/{self.table}", where, detail, self.url]
        parts.append(self.message if worth else "")
        return "\t".join(part for part in parts if part)


@dataclass
class RunReport:
    """A whole run: its id, times and every table's outcome."""

    run_id: str
    recipe: str
    archive: str
    started_at: datetime
    finished_at: datetime | None = None
    outcomes: list[Outcome] = field(default_factory=list)

    @property
    def failed(self) -> bool:
        """True if any table failed or was refused."""
        return any(outcome.status in ("failed", "refused") for outcome in self.outcomes)

    def to_json_lines(self) -> str:
        """The report as JSON lines: a header object, then one object per outcome."""
        header = {
            "run_id": self.run_id,
            "recipe": self.recipe,
            "archive": self.archive,
            "started_at": rfc3339(self.started_at),
            "finished_at": rfc3339(self.finished_at) if self.finished_at else None,
            "failed": self.failed,
        }
        lines = [json.dumps(header)]
        lines += [json.dumps(asdict(outcome), ensure_ascii=False) for outcome in self.outcomes]
        return "\n".join(lines) + "\n"


def _immutable(recipe: Recipe, page: PlannedPage) -> bool:
    """Whether a page is a past one the recipe says never changes (``immutable_before``)."""
    limit = recipe.fetch.immutable_before
    if limit is None:
        return False
    numbers = [value for value in page.parameters.values() if isinstance(value, int)]
    return bool(numbers) and all(value < limit for value in numbers)


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
    )


def harvest(
    recipe: Recipe,
    *,
    archive: str = "archive",
    contact: str | None = None,
    mode: FetchMode = "normal",
    every_value: bool = False,
    transport: httpx.AsyncBaseTransport | None = None,
    on_outcome: Callable[[Outcome], None] | None = None,
) -> RunReport:
    """Run ``recipe`` for its current parameter values (or every value) into ``archive``.

    ``on_outcome`` is called with each table's outcome as soon as it is known (a long run
    shows its progress line by line).
    """
    identity = Identity.from_contact(
        contact or recipe.contact or configured_contact(), where=str(recipe.path)
    )
    report = RunReport(uuid.uuid4().hex[:12], recipe.name, archive, datetime.now(UTC))
    cache_dir = _local_cache_dir(archive)
    with (
        ArchiveWriter(archive) as writer,
        SyncFetcher(
            identity,
            cache_dir=cache_dir,
            mode=mode,
            min_interval=recipe.fetch.delay,
            transport=transport,
        ) as fetcher,
    ):
        for page in recipe.plan(every_value=every_value):
            for outcome in _harvest_page(recipe, page, fetcher, writer, report.run_id):
                report.outcomes.append(outcome)
                if on_outcome is not None:
                    on_outcome(outcome)
    report.finished_at = datetime.now(UTC)
    _write_report(archive, report)
    return report


def _harvest_page(
    recipe: Recipe, page: PlannedPage, fetcher: SyncFetcher, writer: ArchiveWriter, run_id: str
) -> list[Outcome]:
    partition = [(name, page.parameters.get(name)) for name in recipe.store.partition_by]
    where = dict(partition)

    def outcome(
        table: str, status: Status, message: str, rows: int = 0, version: int = 0
    ) -> Outcome:
        return Outcome(recipe.name, table, page.url, where, status, rows, version, message)

    try:
        capture = fetcher.fetch(page.url, immutable=_immutable(recipe, page))
    except FetchError as error:
        return [outcome(table, "failed", str(error)) for table in page.tables]
    parsed = read_page(capture.body, capture.final_url, capture.charset)
    outcomes = []
    for name in page.tables:
        rule = recipe.table(name)
        try:
            extracted = extract_table(parsed, rule, base_url=capture.final_url)
            data = with_provenance(
                extracted.table,
                _row_source(recipe, capture, rule.select),
                list(extracted.source_rows),
            )
            result = writer.commit(
                recipe.name,
                name,
                partition,
                data,
                provenance={
                    "run_id": run_id,
                    "recipe": recipe.name,
                    "recipe_sha256": recipe.sha256,
                    "source_urls": [capture.url],
                    "captured_at": rfc3339(capture.fetched_at),
                    "capture_origin": capture.origin,
                    "key": list(rule.key),
                },
                key=rule.key,
                drift_policy=recipe.store.drift,
                min_rows=recipe.store.min_rows,
                max_rows=recipe.store.max_rows,
            )
        except HarvesterError as error:
            outcomes.append(outcome(name, "failed", str(error)))
            continue
        outcomes.append(outcome(name, result.status, result.message, result.rows, result.version))
    return outcomes


def _local_cache_dir(archive: str) -> str | None:
    """The HTTP cache folder inside a local archive root (diskcache needs a local folder)."""
    filesystem, root = open_root(archive)
    if not isinstance(filesystem, pafs.LocalFileSystem):
        return None  # an object-store archive: no on-disk HTTP cache
    return f"{root.rstrip('/')}/cache"


def _write_report(archive: str, report: RunReport) -> None:
    filesystem, root = open_root(archive)
    folder = f"{root.rstrip('/')}/runs"
    filesystem.create_dir(folder, recursive=True)
    with filesystem.open_output_stream(f"{folder}/{report.run_id}.jsonl") as out:
        out.write(report.to_json_lines().encode("utf-8"))


def summary(outcomes: Sequence[Outcome]) -> str:
    """Counts by status, e.g. ``3 new, 1 unchanged, 1 failed``."""
    counts: dict[str, int] = {}
    for item in outcomes:
        counts[item.status] = counts.get(item.status, 0) + 1
    return ", ".join(f"{count} {status}" for status, count in counts.items()) or "nothing to do"
