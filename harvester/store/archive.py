"""Read the versioned Parquet archive: list versions; read the latest or an earlier one.

The layout and the file contents are fixed by the archive contract (docs/archive.md):
``<root>/tables/<dataset>/<table>/<key>=<value>/…/version=<n>/part-0.parquet``. This module only
reads; it knows nothing of how versions are written, except that a version is visible exactly when
its ``part-0.parquet`` exists (the writer renames that name into place last).

Every path operation goes through a ``pyarrow.fs`` filesystem, so the root may be a local folder or
any URI ``pyarrow.fs.FileSystem.from_uri`` understands (``s3://bucket/prefix``, ``file:///…``).
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from datetime import datetime
from typing import TYPE_CHECKING

import pyarrow as pa
import pyarrow.fs as pafs
import pyarrow.parquet as pq

from harvester.errors import StoreError
from harvester.store.assemble import VersionRead, combine, key_type, partition_record, unify
from harvester.store.contract import (
    COMMITTED_AT_KEY,
    DATA_SHA256_KEY,
    DATASET_NAME,
    PART_FILE,
    PARTITION_KEY,
    TABLE_NAME,
    TABLES_DIR,
    StoredPartition,
    check_dataset_name,
    check_table_name,
    damaged,
)
from harvester.store.layout import decode_value, open_root, parse_version
from harvester.timestamps import parse_rfc3339, rfc3339

if TYPE_CHECKING:
    import pandas

__all__ = ["Archive", "VersionInfo"]

_INTEGER = re.compile(r"-?[0-9]+")


@dataclass(frozen=True)
class VersionInfo:
    """One published version of one partition of a table, as its Parquet footer describes it."""

    dataset: str
    table: str
    partition: StoredPartition  # (key, decoded value) pairs in folder order; None for null
    version: int
    path: str  # in the archive's filesystem: a local path, or "bucket/key…" for s3:// and the like
    rows: int
    committed_at: datetime  # aware, UTC
    data_sha256: str
    recorded_partition: Mapping[str, object] = field(default_factory=dict, compare=False)
    """The partition as the harvest recorded it in the footer (integers stay integers)."""

    def to_dict(self) -> dict[str, object]:
        """The version as plain JSON values (``committed_at`` as RFC 3339 UTC).

        Partition values are written as the harvest recorded them — ``2026``, not ``"2026"``, as
        in the run reports — when the footer's record agrees with the folder, else as text.
        """
        partition: dict[str, object] = {}
        for key, value in self.partition:
            recorded = self.recorded_partition.get(key)
            same = recorded is not None and not isinstance(recorded, bool)
            partition[key] = recorded if same and str(recorded) == value else value
        return {
            "dataset": self.dataset,
            "table": self.table,
            "partition": partition,
            "version": self.version,
            "rows": self.rows,
            "committed_at": rfc3339(self.committed_at),
            "data_sha256": self.data_sha256,
            "path": self.path,
        }


@dataclass(frozen=True)
class _Found:
    """A visible ``part-0.parquet`` found by listing, before its footer is read."""

    table: str
    partition: StoredPartition
    version: int
    fs_path: str  # the path as the filesystem knows it (VersionInfo.path)
    shown: str  # the path as messages give it: under the user's URI for a URI root


class Archive:
    """The read side of an archive rooted at a local path or a ``pyarrow.fs`` URI."""

    def __init__(self, root: str) -> None:
        self.root = root
        self._fs, base = open_root(root)  # the same reading of a root as the writer's
        self._local = isinstance(self._fs, pafs.LocalFileSystem)
        self._base = base.rstrip("/")
        # Paths shown to users keep the user's URI (host included) rather than the bare path.
        self._shown_base = self._base if self._local else root.split("?", 1)[0].rstrip("/")
        self._tables = f"{self._base}/{TABLES_DIR}"

    def datasets(self) -> list[str]:
        """The datasets that hold at least one visible version, sorted."""
        return sorted({dataset for dataset, _ in self._scan_tables()})

    def tables(self, dataset: str) -> list[str]:
        """The tables of ``dataset`` that hold at least one visible version, sorted."""
        check_dataset_name(dataset)
        names = sorted({found.table for found in self._scan(dataset)})
        if not names:
            raise self._unknown_dataset(dataset)
        return names

    def versions(self, dataset: str, table: str | None = None) -> list[VersionInfo]:
        """Every visible version of ``dataset`` (or one table): sorted by table, partition, version.

        Only footers are read (rows, ``harvester.committed_at``, ``harvester.data_sha256``).
        """
        found = self._found(dataset, table)
        return [self._info(dataset, item) for item in found]

    def read(
        self,
        dataset: str,
        table: str,
        *,
        as_of: datetime | None = None,
        where: Mapping[str, str | int] | None = None,
        version: int | None = None,
    ) -> pa.Table:
        """One version of each matching partition as one table, plus partition columns and version.

        By default the latest version of each partition; with ``as_of`` (an aware datetime) the
        latest one committed at or before it (partitions with none are left out); with ``version``
        that version of each partition that has it. ``where`` keeps partitions whose value equals
        the given one, compared as text. Schemas that differ between files are unified by column
        name; a column a file lacks reads as null.
        """
        if as_of is not None and version is not None:
            raise StoreError(
                f"read {dataset}/{table}: both as_of and version were given",
                hint="give one of them: as_of picks per partition, version names one version",
            )
        if as_of is not None and as_of.utcoffset() is None:
            raise StoreError(
                f"read {dataset}/{table}: as_of {as_of.isoformat()} has no time zone",
                hint="pass an aware datetime, e.g. datetime(2026, 3, 1, tzinfo=timezone.utc)",
            )
        found = self._found(dataset, table)
        keys = _keys(found)
        for key in where or {}:
            if key not in keys:
                listed = ", ".join(keys) if keys else "none: the table is not partitioned"
                raise StoreError(
                    f"read {dataset}/{table}: {key!r} is not a partition key",
                    hint=f"its partition keys: {listed}",
                )
        wanted = {key: str(value) for key, value in (where or {}).items()}
        matching = [
            item
            for item in found
            if all(dict(item.partition).get(k) == v for k, v in wanted.items())
        ]
        if version is not None:
            chosen = [item for item in matching if item.version == version]
        elif as_of is not None:
            chosen = _latest(
                item for item in matching if self._info(dataset, item).committed_at <= as_of
            )
        else:
            chosen = _latest(matching)
        if not chosen:
            # Same columns as a normal read, so callers need no special case for "nothing yet".
            return self._empty(f"{dataset}/{table}", _latest(matching) or _latest(found), keys)
        parts = [self._read_file(item) for item in chosen]
        return combine(f"{dataset}/{table}", parts, keys)

    def read_pandas(
        self,
        dataset: str,
        table: str,
        *,
        as_of: datetime | None = None,
        where: Mapping[str, str | int] | None = None,
        version: int | None = None,
    ) -> pandas.DataFrame:
        """``read`` as a pandas DataFrame (Arrow's own conversion: timestamps stay tz-aware)."""
        return self.read(dataset, table, as_of=as_of, where=where, version=version).to_pandas()

    def _scan_tables(self) -> set[tuple[str, str]]:
        """(dataset, table) pairs that hold a visible version, from one recursive listing."""
        parsed = (_parse(rel, fs_path, fs_path) for rel, fs_path in self._list_parts(self._tables))
        return {(found[0], found[1].table) for found in parsed if found is not None}

    def _scan(self, dataset: str, table: str | None = None) -> list[_Found]:
        found: list[_Found] = []
        under = f"{dataset}/{table}" if table else dataset  # list only what is asked for
        for rel, fs_path in self._list_parts(f"{self._tables}/{under}"):
            parsed = _parse(f"{under}/{rel}", fs_path, self._shown(fs_path))
            if parsed is not None:
                found.append(parsed[1])
        found.sort(key=lambda item: (item.table, _partition_order(item.partition), item.version))
        return found

    def _list_parts(self, prefix: str) -> Iterable[tuple[str, str]]:
        """(path relative to ``prefix``, full path) of every ``part-0.parquet`` below ``prefix``."""
        selector = pafs.FileSelector(prefix, recursive=True, allow_not_found=True)
        try:
            infos = self._fs.get_file_info(selector)
        except (OSError, pa.ArrowInvalid) as exc:
            raise StoreError(
                f"archive {self.root}: cannot list {prefix}: {exc}",
                hint="check the root path and your access to it",
            ) from exc
        for info in infos:
            # Staged files are dot-prefixed and end in .inprogress, so only finished files match.
            is_part = info.type == pafs.FileType.File and info.base_name == PART_FILE
            if is_part and info.path.startswith(prefix + "/"):
                yield info.path[len(prefix) + 1 :], info.path

    def _found(self, dataset: str, table: str | None) -> list[_Found]:
        check_dataset_name(dataset)
        if table is not None:
            check_table_name(table)
        found = self._scan(dataset, table)
        if not found:
            listed = ", ".join(self.tables(dataset))  # raises if the dataset is unknown
            raise StoreError(
                f"archive {self.root}: dataset {dataset!r} has no table {table!r}",
                hint=f"its tables: {listed}",
            )
        return found

    def _unknown_dataset(self, dataset: str) -> StoreError:
        names = self.datasets()
        hint = (
            f"datasets in the archive: {', '.join(names)}"
            if names
            else f"no published version under {self._shown_base}/{TABLES_DIR} yet"
        )
        return StoreError(f"archive {self.root}: no dataset {dataset!r}", hint=hint)

    def _shown(self, fs_path: str) -> str:
        return fs_path if self._local else self._shown_base + fs_path[len(self._base) :]

    def _footer(self, item: _Found) -> pq.FileMetaData:
        try:
            return pq.read_metadata(item.fs_path, filesystem=self._fs)
        except (OSError, pa.ArrowInvalid) as exc:
            raise damaged(item.shown, f"cannot read the footer: {exc}") from exc

    def _info(self, dataset: str, item: _Found) -> VersionInfo:
        meta = self._footer(item)
        kv: dict[bytes, bytes] = meta.metadata or {}
        for key in (COMMITTED_AT_KEY, DATA_SHA256_KEY):
            if key.encode() not in kv:
                raise damaged(item.shown, f"no {key} in the footer")
        try:
            committed_at = parse_rfc3339(kv[COMMITTED_AT_KEY.encode()].decode())
        except (UnicodeDecodeError, ValueError) as exc:
            problem = f"{COMMITTED_AT_KEY} is not an RFC 3339 time: {exc}"
            raise damaged(item.shown, problem) from exc
        return VersionInfo(
            dataset=dataset,
            table=item.table,
            partition=item.partition,
            version=item.version,
            path=item.fs_path,
            rows=meta.num_rows,
            committed_at=committed_at,
            data_sha256=kv[DATA_SHA256_KEY.encode()].decode(),
            recorded_partition=partition_record(kv, item.shown),
        )

    def _read_file(self, item: _Found) -> VersionRead:
        """The file's table (no partition columns) and the "partition" object of its provenance."""
        try:
            with self._fs.open_input_file(item.fs_path) as handle:
                data = pq.ParquetFile(handle).read()
        except (OSError, pa.ArrowInvalid) as exc:
            raise damaged(item.shown, f"cannot read: {exc}") from exc
        record = partition_record(data.schema.metadata, item.shown)
        return VersionRead(item.partition, item.version, item.shown, data, record)

    def _empty(self, name: str, latest: list[_Found], keys: list[str]) -> pa.Table:
        """An empty table with the columns the latest versions would give."""
        schemas = [self._footer(item).schema.to_arrow_schema() for item in latest]
        provenance = [
            partition_record(schema.metadata, item.shown)
            for schema, item in zip(schemas, latest, strict=True)
        ]
        fields = list(unify(name, schemas, keys))
        fields += [pa.field(key, key_type(key, provenance)) for key in keys]
        fields.append(pa.field("version", pa.int32()))
        return pa.schema(fields).empty_table()


def _parse(rel: str, fs_path: str, shown: str) -> tuple[str, _Found] | None:
    """``<dataset>/<table>/<k>=<v>/…/version=<n>/part-0.parquet`` → its parts; None if not one."""
    segments = rel.split("/")
    if len(segments) < 4 or segments[-1] != PART_FILE:
        return None
    dataset, table, *middle, version_segment, _ = segments
    version = parse_version(version_segment)
    if version is None or not DATASET_NAME.fullmatch(dataset) or not TABLE_NAME.fullmatch(table):
        return None
    partition: list[tuple[str, str | None]] = []
    for segment in middle:
        key, sep, raw = segment.partition("=")
        if not sep or not PARTITION_KEY.fullmatch(key):
            return None  # not part of the layout (a hand-made or staging folder): not a version
        partition.append((key, decode_value(raw)))
    return dataset, _Found(table, tuple(partition), version, fs_path, shown)


def _partition_order(partition: StoredPartition) -> tuple[tuple[str, int, int, str], ...]:
    """Sort key: integers numerically, then text, then null (so 9 sorts before 10)."""
    order = []
    for key, value in partition:
        if value is None:
            order.append((key, 2, 0, ""))
        elif _INTEGER.fullmatch(value):
            order.append((key, 0, int(value), ""))
        else:
            order.append((key, 1, 0, value))
    return tuple(order)


def _latest(items: Iterable[_Found]) -> list[_Found]:
    """The highest version of each (table, partition) among ``items``, in listing order."""
    best: dict[tuple[str, StoredPartition], _Found] = {}
    for item in items:
        slot = (item.table, item.partition)
        if slot not in best or item.version > best[slot].version:
            best[slot] = item
    return sorted(best.values(), key=lambda item: (item.table, _partition_order(item.partition)))


def _keys(found: list[_Found]) -> list[str]:
    keys: list[str] = []
    for item in found:
        keys += [key for key, _ in item.partition if key not in keys]
    return keys
