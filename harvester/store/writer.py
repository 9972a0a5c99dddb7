"""Commit harvested tables to the archive as new versions of their partitions, atomically.

Commit protocol (under the archive lock; see ``layout`` for the paths):
  1. n = 1 + the highest version whose ``part-0.parquet`` exists;
  2. make ``version=<n>/``, removing a leftover one first (it holds no ``part-0.parquet``, so it
     is debris of a crashed run);
  3. write ``version=<n>/.part-0.parquet.inprogress``, then fsync it;
  4. rename it to ``part-0.parquet`` (POSIX rename(): readers see no file or the whole file);
  5. fsync the folders, so the new name survives a power cut.
A version is visible iff its ``part-0.parquet`` exists, and then it is complete. fsync is done
only on the local disk (``LocalFileSystem``, or a ``SubTreeFileSystem`` over it); on object
stores the rename is a copy and atomicity is only as good as the store's.

A commit whose data columns and their types equal the latest version (same
``harvester.data_sha256``) writes nothing ("unchanged"). Otherwise the drift from the latest
version (and the row bounds) is checked against the drift policy before version n+1 is written.
"""

from __future__ import annotations

import hashlib
import os
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import TracebackType
from typing import Literal

import pyarrow as pa
import pyarrow.fs as pafs
import pyarrow.parquet as pq

from harvester.errors import ArchiveUnwritableError, StoreError
from harvester.store.contract import (
    COMMITTED_AT_KEY,
    DATA_SHA256_KEY,
    INPROGRESS_FILE,
    PART_FILE,
    PROVENANCE_COLUMNS,
    PROVENANCE_KEY,
    Partition,
    PartitionValue,
    damaged,
    data_columns,
    provenance_json,
)
from harvester.store.drift import DriftReport, detect_drift
from harvester.store.layout import (
    join,
    local_path,
    open_root,
    parse_version,
    partition_path,
    version_dir,
)
from harvester.store.lock import ArchiveLock
from harvester.timestamps import now_rfc3339

__all__ = ["ArchiveWriter", "CommitResult", "CommitStatus", "DriftPolicy", "data_sha256"]

DriftPolicy = Literal["refuse", "warn", "accept"]
CommitStatus = Literal["new", "unchanged", "refused"]

_POLICIES = ("refuse", "warn", "accept")


def data_sha256(table: pa.Table) -> str:
    """Hex SHA-256 of the Arrow IPC stream of the table's data columns (not "_"-prefixed)."""
    names = data_columns(table)
    data = table.select(names).replace_schema_metadata(None).combine_chunks()
    sink = pa.BufferOutputStream()
    with pa.ipc.new_stream(sink, data.schema) as stream:
        stream.write_table(data)
    return hashlib.sha256(sink.getvalue().to_pybytes()).hexdigest()


@dataclass(frozen=True)
class CommitResult:
    """What one commit did; ``message`` is its line in the run summary."""

    dataset: str
    table: str
    partition: Partition
    status: CommitStatus
    version: int  # the new version, or the latest one when unchanged/refused (0 if none)
    rows: int
    path: str | None  # the file written (None when unchanged/refused)
    drift: DriftReport | None  # None for the first version unless its row bounds failed
    message: str


class ArchiveWriter:
    """The one writer of an archive: takes ``<root>/.lock`` on enter and commits versions.

    ``root`` is a local folder, a ``file://`` URI or any URI pyarrow.fs opens; with
    ``filesystem`` it is a path inside that filesystem (e.g. a ``SubTreeFileSystem``).
    """

    def __init__(self, root: str, *, filesystem: pafs.FileSystem | None = None) -> None:
        self.root = root
        self.filesystem, self._base = open_root(root, filesystem)
        self._lock = ArchiveLock(self.filesystem, self._base, root)
        self._held = False
        self.took_over: str | None = None
        """Set on enter when a stale lock was taken over: says whose."""

    def __enter__(self) -> ArchiveWriter:
        try:
            self.took_over = self._lock.acquire()
        except OSError as exc:  # a read-only disk, a plain file in the way, a .lock folder
            raise ArchiveUnwritableError(
                f"archive {self.root}: cannot take its lock ({_why(exc)})",
                hint="give an archive folder you can write to (--archive); remove anything in the"
                " way",
            ) from exc
        self._held = True
        return self

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self._held = False
        self._lock.release()

    def stored_version(
        self, dataset: str, table: str, partition: Sequence[tuple[str, PartitionValue]]
    ) -> int:
        """The partition's latest complete version, 0 when the archive holds none."""
        folder = join(self._base, partition_path(dataset, table, tuple(partition)))
        return self._latest_version(folder)

    def commit(
        self,
        dataset: str,
        table: str,
        partition: Sequence[tuple[str, PartitionValue]],
        data: pa.Table,
        *,
        provenance: Mapping[str, object],
        key: Sequence[str] = (),
        drift_policy: DriftPolicy = "refuse",
        min_rows: int | None = None,
        max_rows: int | None = None,
    ) -> CommitResult:
        """Write ``data`` as the next version of the partition, unless unchanged or refused."""
        self._check_can_commit(drift_policy)
        part: Partition = tuple(partition)
        folder = join(self._base, partition_path(dataset, table, part))
        where = _where(dataset, table, part)
        arranged = _arrange(data, part, key, where)
        sha = data_sha256(arranged)

        def result(
            status: CommitStatus,
            version: int,
            message: str,
            path: str | None = None,
            drift: DriftReport | None = None,
        ) -> CommitResult:
            rows = arranged.num_rows
            return CommitResult(dataset, table, part, status, version, rows, path, drift, message)

        latest = self._latest_version(folder)
        previous = self._previous(folder, latest, sha) if latest else None
        if latest and previous is None:
            return result(
                "unchanged", latest, f"{where}: unchanged, checked against version {latest}"
            )
        report = detect_drift(previous, arranged, min_rows=min_rows, max_rows=max_rows)
        drifted = report.changed or bool(report.row_problems)
        shown = report if previous is not None or drifted else None
        if drifted and drift_policy == "refuse":
            kept = f"version {latest} kept" if latest else "nothing written"
            message = f"{where}: refused, {report.summary()}; {kept} (drift policy refuse)"
            return result("refused", latest, message, drift=shown)
        version = latest + 1
        meta = self._footer(provenance, arranged, dataset, table, part, version, key, where, sha)
        path = self._publish_or_say_why(
            folder, version, arranged.replace_schema_metadata(meta), latest
        )
        message = f"{where}: version {version} written, {arranged.num_rows} rows"
        if drifted and drift_policy == "warn":
            message += f"; {report.summary()} (drift policy warn)"
        elif report.row_problems:
            # Under accept, column changes pass quietly, but a row bound the recipe set is
            # never passed over in silence.
            message += f"; {'; '.join(report.row_problems)} (drift policy accept)"
        return result("new", version, message, path=path, drift=shown)

    def _footer(
        self,
        provenance: Mapping[str, object],
        arranged: pa.Table,
        dataset: str,
        table: str,
        part: Partition,
        version: int,
        key: Sequence[str],
        where: str,
        sha: str,
    ) -> dict[str, str]:
        """The key-value metadata of a new version's file (the contract's footer keys)."""
        committed_at = now_rfc3339()
        body = provenance_json(
            provenance, arranged, dataset, table, part, version, committed_at, key, where
        )
        return {DATA_SHA256_KEY: sha, COMMITTED_AT_KEY: committed_at, PROVENANCE_KEY: body}

    def _publish_or_say_why(self, folder: str, version: int, table: pa.Table, latest: int) -> str:
        """Publish the version, or stop the run: a write that fails here fails for every table."""
        try:
            return self._publish(folder, version, table, fresh=not latest)
        except OSError as exc:  # no space, no permission: nothing was published
            raise ArchiveUnwritableError(
                f"{folder}: cannot write version {version} ({_why(exc)}); nothing was published",
                hint="free disk space or fix the folder's permissions, then run again",
            ) from exc

    def _check_can_commit(self, drift_policy: str) -> None:
        if not self._held:
            raise StoreError(
                f"archive {self.root}: commit outside the writer's lock",
                hint="use `with ArchiveWriter(root) as writer:` and commit inside the block",
            )
        if drift_policy not in _POLICIES:
            raise StoreError(
                f"drift policy {drift_policy!r} is not one of {', '.join(_POLICIES)}",
                hint="set [store] drift to refuse, warn or accept",
            )

    def _previous(self, folder: str, latest: int, sha: str) -> pa.Table | None:
        """The latest version's table, or None when its data equals ``sha`` (nothing to write)."""
        path = join(folder, version_dir(latest), PART_FILE)
        try:
            with self.filesystem.open_input_file(path) as handle:
                stored = (pq.read_schema(handle).metadata or {}).get(DATA_SHA256_KEY.encode())
                if stored == sha.encode():
                    return None
                return pq.read_table(handle)
        except (OSError, pa.ArrowInvalid) as exc:
            raise damaged(path, f"cannot read the latest version: {exc}") from exc

    def _latest_version(self, folder: str) -> int:
        """The highest version of the partition whose part-0.parquet exists (0 if none)."""
        listing = self.filesystem.get_file_info(pafs.FileSelector(folder, allow_not_found=True))
        found = sorted(
            n
            for info in listing
            if info.type == pafs.FileType.Directory and (n := parse_version(info.base_name))
        )
        parts = self.filesystem.get_file_info(
            [join(folder, version_dir(n), PART_FILE) for n in found]
        )
        visible = [
            n for n, info in zip(found, parts, strict=True) if info.type == pafs.FileType.File
        ]
        return max(visible, default=0)

    def _publish(self, folder: str, version: int, table: pa.Table, *, fresh: bool) -> str:
        """Steps 2-5 of the commit protocol; returns the path of the published file."""
        fs = self.filesystem
        vdir = join(folder, version_dir(version))
        if fs.get_file_info(vdir).type != pafs.FileType.NotFound:
            fs.delete_dir(vdir)  # no part-0.parquet in it (n is past the highest visible)
        fs.create_dir(vdir, recursive=True)
        staging, final = join(vdir, INPROGRESS_FILE), join(vdir, PART_FILE)
        with fs.open_output_stream(staging, compression=None) as out:
            pq.write_table(table, out)
        local = local_path(fs, staging)
        if local is not None:
            _fsync(local)
        fs.move(staging, final)
        # The new name lives in version=<n>/, that folder's name in the partition folder; a first
        # version also made the folders above it, up to the archive root.
        folders = [vdir]
        here = folder
        while True:
            folders.append(here)
            if not fresh or here == self._base or "/" not in here:
                break
            here = here.rsplit("/", 1)[0]
        for each in folders:
            on_disk = local_path(fs, each)
            if on_disk is not None:
                _fsync(on_disk)
        return final


def _why(exc: OSError) -> str:
    """An OSError in a few words, with the path it names when it names one."""
    reason = exc.strerror or str(exc)
    return f"{reason}: {exc.filename}" if exc.filename else reason


def _fsync(path: str) -> None:
    """fsync a local file or folder (a folder's fsync makes its new entries durable)."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _where(dataset: str, table: str, partition: Partition) -> str:
    shown = ", ".join(f"{k}={'null' if v is None else v}" for k, v in partition)
    return f"{dataset}/{table}" + (f" [{shown}]" if shown else "")


def _arrange(data: pa.Table, partition: Partition, key: Sequence[str], where: str) -> pa.Table:
    """Check the columns and put them in archive order: data columns, then provenance."""
    if not isinstance(data, pa.Table):
        raise StoreError(f"{where}: data is a {type(data).__name__}, not a pyarrow.Table")
    names = data.column_names
    repeated = sorted(n for n, count in Counter(names).items() if count > 1)
    if repeated:
        raise StoreError(f"{where}: column(s) {', '.join(repeated)} appear more than once")
    unknown = [n for n in names if n.startswith("_") and n not in PROVENANCE_COLUMNS]
    if unknown:
        raise StoreError(
            f"{where}: unknown provenance column(s) {', '.join(unknown)}",
            hint="data column names may not start with '_'; rename them in the recipe",
        )
    missing = [n for n in PROVENANCE_COLUMNS if n not in names]
    if missing:
        raise StoreError(
            f"{where}: data lacks provenance column(s) {', '.join(missing)}",
            hint="the harvest run adds all 13 provenance columns before committing",
        )
    for name, wanted in PROVENANCE_COLUMNS.items():
        if data.schema.field(name).type != wanted:
            raise StoreError(
                f"{where}: provenance column {name} is {data.schema.field(name).type},"
                f" expected {wanted}",
                hint="build the provenance columns with the archive's types",
            )
    columns = data_columns(data)
    clash = [n for n in columns if n == "version" or n in {k for k, _ in partition}]
    if clash:
        raise StoreError(
            f"{where}: data column(s) {', '.join(clash)} share a name with a partition key or"
            " the version column a reader adds",
            hint="rename the column in the recipe",
        )
    absent = [k for k in key if k not in columns]
    if absent:
        raise StoreError(
            f"{where}: key column(s) {', '.join(absent)} are not data columns",
            hint="name data columns of the table as its key",
        )
    return data.select([*columns, *PROVENANCE_COLUMNS])
