"""Paths of the archive: partition segments, version folders and the archive root.

Layout (Hive-style, one Parquet file per version)::

    <root>/tables/<dataset>/<table>/<key1>=<v1>/<key2>=<v2>/version=<n>/part-0.parquet
    <root>/.lock

Partition values are encoded with ``urllib.parse.quote(str(value), safe="")`` and None becomes
``__HIVE_DEFAULT_PARTITION__``: exactly pyarrow's ``HivePartitioning(segment_encoding="uri")``, so
pyarrow decodes the folders on read. "/" is always encoded, so no value can leave its folder.

The text value ``"__HIVE_DEFAULT_PARTITION__"`` itself is refused (StoreError): written as-is it
would share the None folder, and written as ``%5F_HIVE…`` pyarrow would still read it as null
(it decodes first, then compares with the null marker) while DuckDB reads the text. A value whose
folder name would exceed 255 bytes (the usual file-name limit) is refused too.

Archive paths are pyarrow filesystem paths joined with "/": the root may be a local path, a
``file://`` URI or any URI ``pyarrow.fs.FileSystem.from_uri`` accepts. On object stores a rename is
a copy, so a commit there is only as atomic as the store makes it.
"""

from __future__ import annotations

import os
import re
from collections.abc import Sequence
from urllib.parse import quote, unquote

import pyarrow.fs as pafs

from harvester.errors import StoreError
from harvester.store.contract import (
    NULL_SEGMENT,
    TABLES_DIR,
    PartitionValue,
    StoredPartition,
    check_dataset_name,
    check_partition_key,
    check_table_name,
)

__all__ = [
    "decode_value",
    "encode_value",
    "join",
    "local_path",
    "open_root",
    "parse_version",
    "partition_path",
    "show_partition",
    "version_dir",
]

_VERSION = re.compile(r"version=([1-9][0-9]*)")
_NAME_MAX = 255  # bytes in one file name on ext4, xfs, btrfs, APFS (common practice)


def encode_value(value: PartitionValue) -> str:
    """The folder text of one partition value: percent-encoded, or the null marker for None."""
    if value is None:
        return NULL_SEGMENT
    if isinstance(value, bool) or not isinstance(value, str | int):
        raise StoreError(
            f"partition value {value!r} is a {type(value).__name__}",
            hint="partition values must be text, integers or None",
        )
    if value == NULL_SEGMENT:
        raise StoreError(
            f"partition value {value!r} is reserved for missing values",
            hint="pass None for a missing partition value, or use another value",
        )
    return quote(str(value), safe="")


def decode_value(segment: str) -> str | None:
    """The partition value of a folder's text after ``key=`` (None for the null marker).

    Like pyarrow, the text is percent-decoded first and then compared with the null marker.
    """
    try:
        value = unquote(segment, errors="strict")
    except UnicodeDecodeError:
        raise StoreError(
            f"partition folder value {segment!r} is not percent-encoded UTF-8",
            hint="rename or remove that folder; harvester never writes one like it",
        ) from None
    return None if value == NULL_SEGMENT else value


def _segment(key: str, value: PartitionValue) -> str:
    check_partition_key(key)
    segment = f"{key}={encode_value(value)}"
    if len(segment.encode()) > _NAME_MAX:
        raise StoreError(
            f"partition value for {key!r} is too long for a folder name"
            f" ({len(segment.encode())} bytes encoded, at most {_NAME_MAX})",
            hint="partition by a shorter parameter",
        )
    return segment


def partition_path(
    dataset: str, table: str, partition: Sequence[tuple[str, PartitionValue]]
) -> str:
    """The partition's folder relative to the archive root: ``tables/<dataset>/<table>/k=v/…``."""
    check_dataset_name(dataset)
    check_table_name(table)
    keys = [key for key, _ in partition]
    if len(set(keys)) != len(keys):
        raise StoreError(f"partition keys {keys} repeat a key", hint="list each partition key once")
    return join(TABLES_DIR, dataset, table, *(_segment(k, v) for k, v in partition))


def show_partition(partition: StoredPartition) -> str:
    """``season=2019/phase=final`` (decoded values; null as Hive's marker; "-" for none)."""
    if not partition:
        return "-"
    return "/".join(f"{key}={NULL_SEGMENT if value is None else value}" for key, value in partition)


def version_dir(version: int) -> str:
    """The folder name of one version, ``version=<n>``."""
    return f"version={version}"


def parse_version(name: str) -> int | None:
    """The n of a ``version=<n>`` folder name, or None for any other name."""
    found = _VERSION.fullmatch(name)
    return int(found.group(1)) if found else None


def join(*parts: str) -> str:
    """Join archive path parts with "/" (empty parts, e.g. an empty root, are left out)."""
    return "/".join(part.rstrip("/") if i == 0 else part for i, part in enumerate(parts) if part)


def open_root(root: str, filesystem: pafs.FileSystem | None = None) -> tuple[pafs.FileSystem, str]:
    """The filesystem and base path of an archive root.

    ``root`` is a path inside ``filesystem`` when one is given; otherwise a URI that
    ``FileSystem.from_uri`` accepts, or a local path (a relative one is made absolute here, once).
    """
    if filesystem is not None:
        return filesystem, root
    if "://" in root:
        try:
            fs, path = pafs.FileSystem.from_uri(root)
        except (ValueError, OSError) as err:  # ArrowInvalid is a ValueError
            raise StoreError(
                f"archive root {root!r} is not a usable URI: {err}",
                hint="give a local folder or a URI that pyarrow.fs can open",
            ) from None
        return fs, path
    # The one place a local path is made absolute; everything after goes through pyarrow.fs.
    return pafs.LocalFileSystem(), os.path.abspath(root).replace(os.sep, "/")


def local_path(filesystem: pafs.FileSystem, path: str) -> str | None:
    """The local file path behind ``path``, or None when the filesystem is not the local disk.

    A ``SubTreeFileSystem`` over the local disk counts as local.
    """
    if isinstance(filesystem, pafs.LocalFileSystem):
        return path
    if isinstance(filesystem, pafs.SubTreeFileSystem):
        inner = local_path(filesystem.base_fs, filesystem.base_path.rstrip("/"))
        if inner is not None:
            return join(inner, path) if path else inner
    return None
