"""Pick two versions of one partition and diff them: what ``harvester diff`` does, as a library.

Rows are matched by the key columns the harvest recorded in the newer file's
``harvester.provenance`` footer entry; with none, whole rows are compared.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from harvester.errors import StoreError
from harvester.store.archive import Archive, VersionInfo
from harvester.store.diff import VersionDiff, diff_versions
from harvester.store.layout import NULL_SEGMENT, open_root

__all__ = ["PartitionDiff", "diff_partition", "show_partition"]

_PROVENANCE = b"harvester.provenance"
_DAMAGED = "the file is damaged or not harvester's; move its version folder out of the archive"

Partition = tuple[tuple[str, str | None], ...]


@dataclass(frozen=True)
class PartitionDiff:
    """The two versions compared and what changed between them."""

    older: VersionInfo
    newer: VersionInfo
    diff: VersionDiff


def diff_partition(
    archive: Archive,
    dataset: str,
    table: str,
    partition: Mapping[str, str | None],
    from_version: int | None = None,
    to_version: int | None = None,
) -> PartitionDiff:
    """Diff two versions of the one partition ``partition`` names (some keys may be left out).

    ``to_version`` defaults to the latest, ``from_version`` to the one before it. Raises
    StoreError naming what exists when the partition or a version is not there.
    """
    name = f"{dataset}/{table}"
    history = _pick_partition(archive.versions(dataset, table), dict(partition), name)
    where = name
    if history[0].partition:
        where += " " + show_partition(history[0].partition)
    older, newer = _pick_versions(history, from_version, to_version, where)
    old_schema, new_schema = _file_schema(archive, older), _file_schema(archive, newer)
    diff = diff_versions(
        _read_version(archive, older, old_schema),
        _read_version(archive, newer, new_schema),
        _recorded_key(newer, new_schema),
    )
    return PartitionDiff(older, newer, diff)


def show_partition(partition: Partition) -> str:
    """``season=2019/phase=final`` (decoded values; null as Hive's marker; "-" for none)."""
    if not partition:
        return "-"
    return "/".join(f"{key}={NULL_SEGMENT if value is None else value}" for key, value in partition)


def _pick_partition(
    infos: list[VersionInfo], wanted: dict[str, str | None], name: str
) -> list[VersionInfo]:
    """The versions, oldest first, of the one partition that ``wanted`` matches."""
    partitions: dict[Partition, list[VersionInfo]] = {}
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
        raise StoreError(
            f"{name} has no version before {newer.version} to compare it with (versions: {listed})",
            hint="pass --from N to choose the other version",
        )
    return earlier[-1], newer


def _file_schema(archive: Archive, info: VersionInfo) -> pa.Schema:
    filesystem, _ = open_root(archive.root)
    try:
        return pq.read_schema(info.path, filesystem=filesystem)
    except (OSError, pa.ArrowInvalid) as exc:
        raise StoreError(f"{info.path}: cannot read the footer: {exc}", hint=_DAMAGED) from exc


def _recorded_key(info: VersionInfo, schema: pa.Schema) -> tuple[str, ...]:
    """The key columns the harvest wrote in ``harvester.provenance`` (empty when none)."""
    raw = (schema.metadata or {}).get(_PROVENANCE)
    if raw is None:
        return ()
    try:
        provenance = json.loads(raw)
    except ValueError as exc:  # JSONDecodeError and UnicodeDecodeError are ValueErrors
        raise StoreError(
            f"{info.path}: harvester.provenance in the footer is not JSON ({exc})", hint=_DAMAGED
        ) from exc
    key = provenance.get("key", []) if isinstance(provenance, dict) else None
    if not isinstance(key, list) or not all(isinstance(name, str) for name in key):
        raise StoreError(
            f'{info.path}: harvester.provenance "key" is not a list of column names',
            hint=_DAMAGED,
        )
    return tuple(key)


def _read_version(archive: Archive, info: VersionInfo, schema: pa.Schema) -> pa.Table:
    """One version's rows with the file's own columns (read() adds partition columns)."""
    where = {key: value for key, value in info.partition if value is not None}
    table = archive.read(info.dataset, info.table, where=where, version=info.version)
    for key, value in info.partition:
        if value is None:  # `where` cannot ask for null, so keep the null partition's rows here
            table = table.filter(pc.is_null(table.column(key)))
    return table.select(schema.names)
