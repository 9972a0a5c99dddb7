"""The snapshot index: one Parquet file per complete WARC file, and fast lookups over all of them.

``ARCHIVE/snapshots/index/<warc file name>.parquet`` holds that WARC file's ``IndexEntry`` rows,
one column per field, sorted by (url, date), so DuckDB, polars or pyarrow read the index without
harvester. The index is derived: ``reindex`` rebuilds it from the WARC files, which stay the
truth. ``SnapshotIndex`` loads every index file once and answers each lookup from dictionaries,
never from the WARC files.
"""

from __future__ import annotations

import bisect
import os
from collections.abc import Iterable, Iterator
from dataclasses import fields
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq

from harvester.errors import StoreError
from harvester.snapshots.entry import INDEX_DIR, IndexEntry

__all__ = [
    "INDEX_SCHEMA",
    "INDEX_SUFFIX",
    "SnapshotIndex",
    "index_path",
    "read_index_file",
    "sync_folder",
    "write_index_file",
]

INDEX_SUFFIX = ".parquet"
_FORMAT_KEY = b"harvester.snapshot_index"  # footer metadata: which layout a file follows
_FORMAT_VERSION = b"1"
_TIME = pa.timestamp("us", tz="UTC")
_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)
_TYPES: dict[str, pa.DataType] = {
    "date": _TIME,
    "memento_datetime": _TIME,
    "status": pa.int32(),
    "offset": pa.int64(),
    "length": pa.int64(),
}
_FIELDS = tuple(f.name for f in fields(IndexEntry))
INDEX_SCHEMA = pa.schema(
    [pa.field(name, _TYPES.get(name, pa.string()), nullable=name == "memento_datetime")
     for name in _FIELDS],
    metadata={_FORMAT_KEY: _FORMAT_VERSION},
)  # fmt: skip
_REBUILD = "rebuild the index with `harvester snapshots reindex` (the WARC files are the truth)"


def index_path(snapshots_dir: Path, warc_name: str) -> Path:
    """Where the index file of the WARC file named ``warc_name`` lives."""
    return snapshots_dir / INDEX_DIR / (warc_name + INDEX_SUFFIX)


def write_index_file(entries: Iterable[IndexEntry], path: Path) -> None:
    """Write ``entries`` to the index file ``path`` atomically, rows sorted by (url, date).

    The rows go to a hidden temporary file in the same folder, which is synced and then renamed
    over ``path`` (POSIX rename(): readers see the old file or the new one, never a part).
    """
    rows = sorted(entries, key=lambda entry: (entry.url, entry.date))
    columns = {name: [getattr(entry, name) for entry in rows] for name in _FIELDS}
    table = pa.table(columns, schema=INDEX_SCHEMA)
    path.parent.mkdir(parents=True, exist_ok=True)
    # A leading dot and a suffix other than .parquet keep globs and pyarrow from reading it.
    temporary = path.with_name(f".{path.name}.inprogress")
    try:
        with open(temporary, "wb") as out:
            pq.write_table(table, out)
            out.flush()
            os.fsync(out.fileno())
        os.replace(temporary, path)
        sync_folder(path.parent)
    except OSError as exc:
        temporary.unlink(missing_ok=True)
        raise StoreError(
            f"{path}: cannot write the index file ({exc.strerror or exc})",
            hint="check the archive folder's permissions and free space",
        ) from None


def read_index_file(path: Path) -> list[IndexEntry]:
    """The entries of one index file; StoreError naming the file when it is damaged."""
    return _entries_of(_read_table(path))


def _read_table(path: Path) -> pa.Table:
    """One index file as a table of exactly INDEX_SCHEMA; StoreError when it is damaged."""
    try:
        table = pq.read_table(path)
    except (OSError, pa.ArrowException) as exc:
        raise StoreError(
            f"{path}: the index file is damaged or unreadable ({_one_line(exc)})", hint=_REBUILD
        ) from None
    missing = [name for name in _FIELDS if name not in table.column_names]
    if missing:
        raise StoreError(f"{path}: the index file lacks columns {missing}", hint=_REBUILD)
    try:
        table = table.select(list(_FIELDS)).cast(INDEX_SCHEMA)
    except (pa.ArrowException, ValueError) as exc:
        raise StoreError(
            f"{path}: the index file has wrong column types ({_one_line(exc)})", hint=_REBUILD
        ) from None
    for column in INDEX_SCHEMA:
        if not column.nullable and table.column(column.name).null_count:
            raise StoreError(
                f"{path}: the index file has empty {column.name} values", hint=_REBUILD
            )
    return table


def _one_line(exc: Exception) -> str:
    return " ".join(str(exc).split())


def _entries_of(table: pa.Table) -> list[IndexEntry]:
    """Rows as entries, converted column by column (much faster than row by row)."""
    columns: list[list[Any]] = []
    for name in _FIELDS:
        column = table.column(name)
        if _TYPES.get(name) == _TIME:
            # Microseconds since the epoch, made datetimes here: exact, carrying datetime.UTC
            # (pyarrow would give zoneinfo's UTC), and twice as fast as pyarrow's conversion.
            micros = column.cast(pa.int64()).to_pylist()
            columns.append([None if v is None else _EPOCH + timedelta(microseconds=v)
                            for v in micros])  # fmt: skip
        else:
            columns.append(column.to_pylist())
    return [IndexEntry(*row) for row in zip(*columns, strict=True)]


def sync_folder(folder: Path) -> None:
    """Make a rename in ``folder`` durable (fsync of the directory, POSIX)."""
    try:
        descriptor = os.open(folder, os.O_RDONLY)
    except OSError:  # pragma: no cover - a platform that cannot open folders
        return
    try:
        os.fsync(descriptor)
    except OSError:  # pragma: no cover - some filesystems refuse fsync on a folder
        pass
    finally:
        os.close(descriptor)


def _date(entry: IndexEntry) -> datetime:
    return entry.date


def _listing_order(entry: IndexEntry) -> tuple[datetime, str, str]:
    return entry.date, entry.url, entry.record_id  # ties in a fixed order, whatever the load


class SnapshotIndex:
    """Lookups over index entries, by URL, record id, body SHA-256 and payload digest.

    Entries of one URL are kept sorted by date (ties keep the order they were added in), so
    ``latest`` and ``nearest`` are a bisect; the other lookups are dictionaries.
    """

    def __init__(self, entries: Iterable[IndexEntry] = ()) -> None:
        self._by_url: dict[str, list[IndexEntry]] = {}
        self._by_record: dict[str, IndexEntry] = {}
        self._by_sha256: dict[str, IndexEntry] = {}
        self._by_digest: dict[str, IndexEntry] = {}
        self._all: list[IndexEntry] = []
        self._sorted = True
        for entry in entries:
            self.add(entry)

    @classmethod
    def load(cls, snapshots_dir: Path) -> SnapshotIndex:
        """The index of every ``index/*.parquet`` file under ``snapshots_dir`` (none: empty)."""
        folder = snapshots_dir / INDEX_DIR
        index = cls()
        if not folder.is_dir():
            return index
        tables = [_read_table(path) for path in sorted(folder.glob("*" + INDEX_SUFFIX))]
        if tables:
            # One conversion for all files, in date order (Arrow's sort is stable), so every
            # entry lands at the end of its URL's list and the first of a payload stays first.
            table = pa.concat_tables(tables).sort_by([("date", "ascending")])
            index._extend_in_date_order(_entries_of(table))
        return index

    def __len__(self) -> int:
        return len(self._all)

    def add(self, entry: IndexEntry) -> None:
        """Add one entry (the writer adds those of the file it is writing)."""
        same_url = self._by_url.setdefault(entry.url, [])
        bisect.insort_right(same_url, entry, key=_date)
        self._by_record[entry.record_id] = entry
        if entry.record_type == "response":
            _keep_first(self._by_sha256, entry.body_sha256, entry)
            _keep_first(self._by_digest, entry.payload_digest, entry)
        if self._all and _listing_order(entry) < _listing_order(self._all[-1]):
            self._sorted = False
        self._all.append(entry)

    def _extend_in_date_order(self, entries: list[IndexEntry]) -> None:
        """``add`` for many entries already sorted by date, without a bisect each."""
        if self._all:  # pragma: no cover - load() calls this on an empty index only
            for entry in entries:
                self.add(entry)
            return
        by_url, by_record = self._by_url, self._by_record
        by_sha256, by_digest = self._by_sha256, self._by_digest
        for entry in entries:
            by_url.setdefault(entry.url, []).append(entry)
            by_record[entry.record_id] = entry
            if entry.record_type == "response":
                if entry.body_sha256:
                    by_sha256.setdefault(entry.body_sha256, entry)
                if entry.payload_digest:
                    by_digest.setdefault(entry.payload_digest, entry)
        self._all = list(entries)
        self._sorted = False  # by date only: the listing order also breaks ties

    def entries(self) -> list[IndexEntry]:
        """Every entry, ordered by date (then URL and record id)."""
        if not self._sorted:
            self._all.sort(key=_listing_order)
            self._sorted = True
        return list(self._all)

    def urls(self) -> list[str]:
        """Every URL that has an entry, sorted."""
        return sorted(self._by_url)

    def for_url(self, url: str) -> list[IndexEntry]:
        """Every entry of ``url``, ordered by date."""
        return list(self._by_url.get(url, ()))

    def latest(self, url: str) -> IndexEntry | None:
        """The most recent entry of ``url`` (the last added among equal dates)."""
        same_url = self._by_url.get(url)
        return same_url[-1] if same_url else None

    def nearest(self, url: str, when: datetime) -> IndexEntry | None:
        """The entry of ``url`` whose date is closest to ``when``; on a tie, the earlier one."""
        same_url = self._by_url.get(url)
        if not same_url:
            return None
        place = bisect.bisect_left(same_url, when, key=_date)
        after = same_url[place] if place < len(same_url) else None
        # The last entry before ``when`` (the first of its date, so a tie keeps the earliest).
        before = same_url[place - 1] if place > 0 else None
        if before is not None:
            before = same_url[bisect.bisect_left(same_url, before.date, key=_date)]
        if after is None:
            return before
        if before is None or after.date - when < when - before.date:
            return after
        return before

    def record(self, record_id: str) -> IndexEntry | None:
        """The entry of the record with this WARC-Record-ID (angle brackets included)."""
        return self._by_record.get(record_id)

    def by_sha256(self, body_sha256: str) -> IndexEntry | None:
        """The first (earliest) response entry whose payload has this hex SHA-256."""
        return self._by_sha256.get(body_sha256) if body_sha256 else None

    def by_payload_digest(self, digest: str) -> IndexEntry | None:
        """The first (earliest) response entry with this WARC-Payload-Digest, as written."""
        return self._by_digest.get(digest) if digest else None

    def select(
        self,
        url_contains: str | None = None,
        since: datetime | None = None,
        until: datetime | None = None,
    ) -> list[IndexEntry]:
        """Entries for a listing, by date: ``since`` <= date < ``until``, URL holding a text."""
        return list(_selected(self.entries(), url_contains, since, until))


def _keep_first(table: dict[str, IndexEntry], key: str, entry: IndexEntry) -> None:
    """Keep ``entry`` under ``key`` unless an entry at least as early is already there."""
    if not key:
        return
    known = table.get(key)
    if known is None or entry.date < known.date:
        table[key] = entry


def _selected(
    entries: list[IndexEntry],
    url_contains: str | None,
    since: datetime | None,
    until: datetime | None,
) -> Iterator[IndexEntry]:
    start = 0 if since is None else bisect.bisect_left(entries, since, key=_date)
    for entry in entries[start:]:
        if until is not None and entry.date >= until:
            return
        if url_contains is None or url_contains in entry.url:
            yield entry
