"""What changed: the partitions of a table that got new versions, in a run or between two dates.

``changed_partitions`` lists, for one table, each partition whose versions moved — in the
latest run that wrote a version of the table (read from ``ARCHIVE/runs/``), or between two
times (by the versions' commit times) — with the row diff of the move: rows added, removed and
changed, matched by the recorded key. A partition that got its first version is listed with
its rows and no diff.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from datetime import datetime

from harvester.errors import StoreError
from harvester.run.report import RUNS_DIR, read_reports
from harvester.store.archive import Archive, VersionInfo
from harvester.store.layout import show_partition
from harvester.store.partition_diff import PartitionDiff, diff_partition

__all__ = ["PartitionChange", "changed_partitions", "latest_run_partitions"]


@dataclass(frozen=True)
class PartitionChange:
    """One partition's move: from ``before`` (None: it had no version) to ``after``."""

    before: VersionInfo | None
    after: VersionInfo
    diff: PartitionDiff | None  # None for a first version

    def line(self) -> str:
        """``season=2026: version 1 → 2; rows: 0 added, 0 removed, 3 changed, …``."""
        where = show_partition(self.after.partition)
        if self.diff is None or self.before is None:
            return f"{where}: new, version {self.after.version} ({self.after.rows} rows)"
        return f"{where}: version {self.before.version} → {self.after.version}; " + (
            self.diff.diff.summary()
        )

    def to_dict(self) -> dict[str, object]:
        """The change as JSON values: the partition, both versions and the row counts."""
        return {
            "partition": self.after.to_dict()["partition"],
            "from_version": self.before.version if self.before else None,
            "to_version": self.after.version,
            "counts": self.diff.diff.counts if self.diff else {"added": self.after.rows},
        }


def latest_run_partitions(archive: str, dataset: str, table: str) -> dict[str, int] | None:
    """The partitions (as ``season=2026`` text) and versions the latest run that wrote a version
    of ``dataset/table`` committed, or None when no run report names one."""
    best: tuple[str, dict[str, int]] | None = None
    for _, lines in read_reports(archive):
        try:
            header = json.loads(lines[0]) if lines else {}
            outcomes = [json.loads(line) for line in lines[1:]]
        except json.JSONDecodeError:
            continue  # a report cut short by a crash says nothing reliable
        wrote = {
            "/".join(f"{k}={v}" for k, v in outcome.get("partition", {}).items()) or "-": int(
                outcome.get("version", 0)
            )
            for outcome in outcomes
            if outcome.get("dataset") == dataset
            and outcome.get("table") == table
            and outcome.get("status") == "new"
        }
        started = str(header.get("started_at", ""))
        if wrote and (best is None or started > best[0]):  # RFC 3339 UTC: text order is time
            best = (started, wrote)
    return best[1] if best else None


def changed_partitions(
    archive: str,
    dataset: str,
    table: str,
    *,
    since: datetime | None = None,
    until: datetime | None = None,
) -> list[PartitionChange]:
    """The partitions of ``dataset/table`` that changed: in the latest run that wrote one (no
    dates), or whose versions were committed at or after ``since`` and before ``until``."""
    store = Archive(archive)
    history: dict[tuple[tuple[str, str | None], ...], list[VersionInfo]] = {}
    for info in store.versions(dataset, table):
        history.setdefault(info.partition, []).append(info)
    chosen: list[tuple[VersionInfo | None, VersionInfo]] = []
    if since is None and until is None:
        latest = latest_run_partitions(archive, dataset, table)
        if latest is None:
            raise StoreError(
                f"no run report under {archive}/{RUNS_DIR} wrote a version of {dataset}/{table}",
                hint="give --since (and --until) to pick versions by their commit time",
            )
        for versions in history.values():
            versions.sort(key=lambda info: info.version)
            wanted = latest.get(show_partition(versions[0].partition))
            after = next((info for info in versions if info.version == wanted), None)
            if after is not None:
                before = next((i for i in reversed(versions) if i.version < after.version), None)
                chosen.append((before, after))
    else:
        for versions in history.values():
            versions.sort(key=lambda info: info.version)
            inside = [info for info in versions if _within(info.committed_at, since, until)]
            if inside:
                earlier = [info for info in versions if info.version < inside[0].version]
                chosen.append((earlier[-1] if earlier else None, inside[-1]))
    changes = []
    for before, after in sorted(chosen, key=lambda pair: show_partition(pair[1].partition)):
        diff = None
        if before is not None:
            diff = diff_partition(
                store, dataset, table, dict(after.partition), before.version, after.version
            )
        changes.append(PartitionChange(before, after, diff))
    return changes


def _within(moment: datetime, since: datetime | None, until: datetime | None) -> bool:
    return (since is None or moment >= since) and (until is None or moment < until)
