"""The run report: what happened to every table of a run, for people and for programs.

People get one line per table (``Outcome.line``) and a count (``summary``); programs get JSON
lines, kept under ``<archive>/runs/<run-id>.jsonl``: a header object (the run, and ``hosts``:
per host origin, the fetcher's counts), then one object per table with ``"kind": "table"``,
then one per request sent with ``"kind": "request"`` (``harvester.fetch.host_stats``).
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import asdict, dataclass, field
from datetime import datetime
from typing import Literal

from pyarrow import fs as pafs

from harvester.formats import tsv_field
from harvester.store.layout import join, open_root
from harvester.timestamps import rfc3339

__all__ = [
    "REPORT_SUFFIX",
    "REQUEST_KIND",
    "RUNS_DIR",
    "TABLE_KIND",
    "Outcome",
    "RunReport",
    "Status",
    "read_reports",
    "summary",
    "write_report",
]

Status = Literal["new", "unchanged", "refused", "failed", "skipped"]
"""What happened to a table: a new version, none needed, refused, failed, or skipped (a backfill
found its partition already in the archive and asked for nothing)."""
RUNS_DIR = "runs"
REPORT_SUFFIX = ".jsonl"
TABLE_KIND = "table"  # the "kind" of an outcome's line
REQUEST_KIND = "request"  # the "kind" of a request's line


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
    origin: str = ""  # where the page came from: live, cache, web-archive, …
    memento_datetime: str | None = None  # a web-archive capture's date (RFC 3339)
    notes: tuple[str, ...] = ()  # what the source said of the page (captures skipped, …)
    row_changes: dict[str, int] | None = None  # a new version's rows added/removed/changed

    @property
    def source_text(self) -> str:
        """``live``, ``cache``, or ``capture of 2019-06-28T10:00:00Z`` for a web-archive one."""
        if self.origin == "web-archive" and self.memento_datetime:
            return f"capture of {self.memento_datetime}"
        return self.origin

    def line(self) -> str:
        """One human line for the run summary."""
        where = ",".join(f"{k}={v}" for k, v in self.partition.items()) or "-"
        detail = f"{self.rows} rows, version {self.version}"
        if self.row_changes is not None:
            counts = self.row_changes
            detail += (
                f" ({counts['added']} added, {counts['removed']} removed,"
                f" {counts['changed']} changed)"
            )
        if self.status in ("failed", "skipped"):
            detail = f"version {self.version}" if self.version else ""
        # The store's message repeats table and partition; it is worth a column only when it
        # says why (a failure, a refusal) or warns (drift).
        worth = self.status in ("failed", "refused", "skipped") or "drift" in self.message
        parts = [self.status, f"{self.dataset}/{self.table}", where, detail, self.source_text]
        parts.append(self.url)
        said = [self.message] if worth else []
        parts.append("; ".join([*said, *self.notes]))
        return "\t".join(tsv_field(part) for part in parts if part)


@dataclass
class RunReport:
    """A whole run: its id, times, every table's outcome, and what each host saw of it.

    ``hosts`` and ``requests`` are ``HostStats.to_report()``'s two values: the counts per host
    origin, and one object per request sent (started_at, host, url, status, gap_seconds).
    """

    run_id: str
    recipe: str
    archive: str
    started_at: datetime
    finished_at: datetime | None = None
    outcomes: list[Outcome] = field(default_factory=list)
    pages_planned: int = 0
    pages_done: int = 0
    interrupted_by: str | None = None  # "SIGINT" or "SIGTERM" when a signal stopped the run
    hosts: dict[str, dict[str, object]] = field(default_factory=dict)
    requests: list[dict[str, object]] = field(default_factory=list)

    @property
    def failed(self) -> bool:
        """True if any table failed or was refused."""
        return any(outcome.status in ("failed", "refused") for outcome in self.outcomes)

    def to_json_lines(self) -> str:
        """The report as JSON lines: a header object, then one per outcome, one per request.

        Outcome lines carry ``"kind": "table"`` and request lines ``"kind": "request"``, so a
        reader tells them apart without guessing from their keys; the header has no kind.
        """
        header = {
            "run_id": self.run_id,
            "recipe": self.recipe,
            "archive": self.archive,
            "started_at": rfc3339(self.started_at),
            "finished_at": rfc3339(self.finished_at) if self.finished_at else None,
            "failed": self.failed,
            "pages_planned": self.pages_planned,
            "pages_done": self.pages_done,
            "interrupted_by": self.interrupted_by,
            "hosts": self.hosts,
        }
        lines = [json.dumps(header)]
        lines += [
            json.dumps({"kind": TABLE_KIND, **asdict(outcome)}, ensure_ascii=False)
            for outcome in self.outcomes
        ]
        lines += [
            json.dumps({"kind": REQUEST_KIND, **request}, ensure_ascii=False)
            for request in self.requests
        ]
        return "\n".join(lines) + "\n"

    def summary_line(self) -> str:
        """``run <id>: 3 new, 1 failed (report in <archive>/runs/)``."""
        return f"run {self.run_id}: {summary(self.outcomes)} (report in {self.archive}/{RUNS_DIR}/)"


def summary(outcomes: Sequence[Outcome]) -> str:
    """Counts by status, e.g. ``3 new, 1 unchanged, 1 failed``."""
    counts: dict[str, int] = {}
    for item in outcomes:
        counts[item.status] = counts.get(item.status, 0) + 1
    return ", ".join(f"{count} {status}" for status, count in counts.items()) or "nothing to do"


def write_report(archive: str, report: RunReport) -> None:
    """Keep the report as ``<archive>/runs/<run-id>.jsonl``."""
    filesystem, root = open_root(archive)
    folder = join(root, RUNS_DIR)
    filesystem.create_dir(folder, recursive=True)
    with filesystem.open_output_stream(join(folder, report.run_id + REPORT_SUFFIX)) as out:
        out.write(report.to_json_lines().encode("utf-8"))


def read_reports(archive: str) -> list[tuple[str, list[str]]]:
    """Every run report under ``<archive>/runs/``, in file-name order: its path and its lines
    (undecoded bytes replaced: a report cut short by a crash is still read)."""
    filesystem, root = open_root(archive)
    selector = pafs.FileSelector(join(root, RUNS_DIR), allow_not_found=True)
    files = sorted(
        info.path
        for info in filesystem.get_file_info(selector)
        if info.is_file and info.base_name.endswith(REPORT_SUFFIX)
    )
    reports = []
    for path in files:
        with filesystem.open_input_stream(path) as stream:
            reports.append((path, stream.read().decode("utf-8", errors="replace").splitlines()))
    return reports
