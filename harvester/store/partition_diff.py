"""Diff one partition: pick two of its versions from the listing and diff their rows.

What ``harvester diff`` does, as a library.

Rows are matched by the key columns the harvest recorded in the newer file's
``harvester.provenance`` footer entry; with none, whole rows are compared.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from harvester.errors import HarvesterError, StoreError
from harvester.store.archive import Archive, VersionInfo
from harvester.store.contract import StoredPartition, damaged, recorded_key
from harvester.store.layout import open_root, show_partition
from harvester.store.row_diff import VersionDiff, diff_versions

__all__ = ["PartitionDiff", "diff_partition"]


@dataclass(frozen=True)
class PartitionDiff:
    """The two versions compared and what changed between them."""

    older: VersionInfo
    newer: VersionInfo
    diff: VersionDiff

    @property
    def where(self) -> str:
        """``dataset/table`` and the partition, as the text output names them."""
        where = f"{self.newer.dataset}/{self.newer.table}"
        return f"{where} {show_partition(self.newer.partition)}" if self.newer.partition else where

    def to_dict(self) -> dict[str, object]:
        """The diff as plain JSON values, with the table, partition and the two versions."""
        return {
            "dataset": self.newer.dataset,
            "table": self.newer.table,
            "partition": dict(self.newer.partition),
            "from_version": self.older.version,
            "to_version": self.newer.version,
            **self.diff.to_dict(),
        }

    def text_lines(self) -> list[str]:
        """The text output: a header line, the summary line, then one line per row."""
        header = f"{self.where}: version {self.older.version} → {self.newer.version}"
        return [header, self.diff.summary(), *self.diff.text_lines()]


def diff_partition(
    archive: Archive,
    dataset: str,
    table: str,
    partition: Mapping[str, str | int | None],
    from_version: int | None = None,
    to_version: int | None = None,
) -> PartitionDiff:
    """Diff two versions of the one partition ``partition`` names (some keys may be left out;
    values compare as the folder's text, so a run's ``{"season": 2026}`` names one too).

    ``to_version`` defaults to the latest, ``from_version`` to the one before it. Raises
    StoreError naming what exists when the partition or a version is not there.
    """
    name = f"{dataset}/{table}"
    wanted = {key: None if value is None else str(value) for key, value in partition.items()}
    history = _pick_partition(archive.versions(dataset, table), wanted, name)
    where = name
    if history[0].partition:
        where += " " + show_partition(history[0].partition)
    older, newer = _pick_versions(history, from_version, to_version, where)
    old_schema, new_schema = _file_schema(archive, older), _file_schema(archive, newer)
    diff = diff_versions(
        _read_version(archive, older, old_schema),
        _read_version(archive, newer, new_schema),
        recorded_key(new_schema.metadata, newer.path),
    )
    return PartitionDiff(older, newer, diff)


def _pick_partition(
    infos: list[VersionInfo], wanted: dict[str, str | None], name: str
) -> list[VersionInfo]:
    """The versions, oldest first, of the one partition that ``wanted`` matches."""
    partitions: dict[StoredPartition, list[VersionInfo]] = {}
    for info in infos:
        partitions.setdefault(info.partition, []).append(info)
    keys = list(dict.fromkeys(key for partition in partitions for key, _ in partition))
    for key in wanted:
        if key not in keys:
            raise StoreError(
                f"{name} has no partition key {key!r} (keys: {', '.join(keys) or 'none'})",
                hint="give --partition KEY=VALUE with one of those keys",
            )
    matches = [
        partition
        for partition in partitions
        if all(
            key in dict(partition) and dict(partition)[key] == value
            for key, value in wanted.items()
        )
    ]
    if not matches:
        shown = ", ".join(show_partition(partition) for partition in partitions)
        raise StoreError(
            f"{name} has no partition {show_partition(tuple(wanted.items()))} "
            f"(partitions: {shown})",
            hint="name one of those with --partition KEY=VALUE",
        )
    if len(matches) > 1:
        shown = ", ".join(show_partition(partition) for partition in matches)
        raise StoreError(
            f"{name}: {len(matches)} partitions match ({shown})",
            hint="add --partition KEY=VALUE for every partition key to name one",
        )
    return sorted(partitions[matches[0]], key=lambda info: info.version)


def _pick_versions(
    history: list[VersionInfo], old: int | None, new: int | None, name: str
) -> tuple[VersionInfo, VersionInfo]:
    """The (from, to) versions: --to defaults to the latest, --from to the one before --to."""
    by_number = {info.version: info for info in history}
    listed = ", ".join(str(number) for number in by_number)
    for asked in (old, new):
        if asked is not None and asked not in by_number:
            raise StoreError(
                f"{name} has no version {asked} (versions: {listed})",
                hint="pick --from and --to among those",
            )
    newer = history[-1] if new is None else by_number[new]
    if old is not None:
        return by_number[old], newer
    earlier = [info for info in history if info.version < newer.version]
    if not earlier:
        # Not an archive fault: the archive is fine, there is simply nothing older yet.
        raise HarvesterError(
            f"{name} has no version before {newer.version} to compare it with (versions: {listed})",
            hint="a diff needs two versions; pass --from N to choose another one",
        )
    return earlier[-1], newer


def _file_schema(archive: Archive, info: VersionInfo) -> pa.Schema:
    filesystem, _ = open_root(archive.root)
    try:
        return pq.read_schema(info.path, filesystem=filesystem)
    except (OSError, pa.ArrowInvalid) as exc:
        raise damaged(info.path, f"cannot read the footer: {exc}") from exc


def _read_version(archive: Archive, info: VersionInfo, schema: pa.Schema) -> pa.Table:
    """One version's rows with the file's own columns (read() adds partition columns)."""
    where = {key: value for key, value in info.partition if value is not None}
    table = archive.read(info.dataset, info.table, where=where, version=info.version)
    for key, value in info.partition:
        if value is None:  # `where` cannot ask for null, so keep the null partition's rows here
            table = table.filter(pc.is_null(table.column(key)))
    return table.select(schema.names)
