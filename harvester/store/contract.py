"""The archive's contract, in one place: names, file names, footer keys, provenance columns.

Everything another program may rely on when it reads an archive without harvester is fixed
here and documented in docs/archive.md; the writer, the reader and the diffs all use these
definitions, so they cannot drift apart.

- **Names**: a dataset is a recipe name (``[a-z0-9][a-z0-9_-]*``), a table ``[a-z0-9_]+``, a
  partition key a recipe parameter name (``[a-z][a-z0-9_]*``, never ``version``; a leading ``_``
  or ``.`` would also hide the folder from pyarrow).
- **Files**: ``tables/<dataset>/<table>/<key>=<value>/…/version=<n>/part-0.parquet``, staged as
  a dot-prefixed ``.inprogress`` file; ``.lock`` at the root.
- **Footer keys** (Parquet key-value metadata): ``harvester.data_sha256``,
  ``harvester.committed_at`` (RFC 3339 UTC) and ``harvester.provenance`` (a JSON object).
- **Provenance columns**: ``PROVENANCE_FIELDS``, after the data columns, in this order.
- **Damaged files**: any file that breaks the above is reported with ``damaged``, naming the file
  and saying how to get it out of the way; nothing is repaired silently.
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping, Sequence
from datetime import date, datetime
from typing import Any

import pyarrow as pa

from harvester.errors import StoreError
from harvester.timestamps import rfc3339

__all__ = [
    "COMMITTED_AT_KEY",
    "DAMAGED_HINT",
    "DATASET_NAME",
    "DATA_SHA256_KEY",
    "INPROGRESS_FILE",
    "LOCK_FILE",
    "NULL_SEGMENT",
    "PARTITION_KEY",
    "PART_FILE",
    "PROVENANCE_COLUMNS",
    "PROVENANCE_FIELDS",
    "PROVENANCE_KEY",
    "TABLES_DIR",
    "TABLE_NAME",
    "Partition",
    "PartitionValue",
    "StoredPartition",
    "check_dataset_name",
    "check_partition_key",
    "check_table_name",
    "damaged",
    "data_columns",
    "provenance_json",
    "read_provenance",
    "recorded_key",
]

PartitionValue = str | int | None
Partition = tuple[tuple[str, PartitionValue], ...]
"""(key, value) pairs in folder order, as the writer is given them."""
StoredPartition = tuple[tuple[str, str | None], ...]
"""A partition as read back from its folders: every value is text, or None for the null marker."""

DATASET_NAME = re.compile(r"[a-z0-9][a-z0-9_-]*")
TABLE_NAME = re.compile(r"[a-z0-9_]+")
PARTITION_KEY = re.compile(r"[a-z][a-z0-9_]*")

TABLES_DIR = "tables"
LOCK_FILE = ".lock"
PART_FILE = "part-0.parquet"
# Dot prefix: pyarrow's discovery skips it (ignore_prefixes); suffix: `**/*.parquet` misses it.
INPROGRESS_FILE = ".part-0.parquet.inprogress"
NULL_SEGMENT = "__HIVE_DEFAULT_PARTITION__"  # pyarrow's HivePartitioning null_fallback

DATA_SHA256_KEY = "harvester.data_sha256"
COMMITTED_AT_KEY = "harvester.committed_at"
PROVENANCE_KEY = "harvester.provenance"

_UTC_MICROS = pa.timestamp("us", tz="UTC")
PROVENANCE_FIELDS: tuple[pa.Field, ...] = (
    pa.field("_source_url", pa.string()),
    pa.field("_final_url", pa.string()),
    pa.field("_captured_at", _UTC_MICROS),
    pa.field("_capture_origin", pa.string()),
    pa.field("_memento_datetime", _UTC_MICROS),
    pa.field("_http_status", pa.int32()),
    pa.field("_body_sha256", pa.string()),
    pa.field("_recipe", pa.string()),
    pa.field("_recipe_sha256", pa.string()),
    pa.field("_harvester_version", pa.string()),
    pa.field("_table_selector", pa.string()),
    pa.field("_source_row", pa.int32()),
    pa.field("_warc_record_id", pa.string()),
)
PROVENANCE_COLUMNS: dict[str, pa.DataType] = {field.name: field.type for field in PROVENANCE_FIELDS}
"""The provenance columns every file carries after its data columns, by name, in order."""

DAMAGED_HINT = "the file is damaged or not harvester's; move its version folder out of the archive"


def data_columns(table: pa.Table | pa.Schema) -> list[str]:
    """The data column names of a table or schema, in order: those not starting with "_"."""
    names = table.names if isinstance(table, pa.Schema) else table.column_names
    return [name for name in names if not name.startswith("_")]


def damaged(shown_path: str, problem: str) -> StoreError:
    """The error for a file in the archive that breaks the contract."""
    return StoreError(f"{shown_path}: {problem}", hint=DAMAGED_HINT)


def check_dataset_name(name: str) -> None:
    """Refuse a dataset name the layout cannot hold."""
    if not DATASET_NAME.fullmatch(name):
        raise StoreError(
            f"dataset name {name!r} is not valid",
            hint="use the recipe name: lowercase letters, digits, '_' and '-', not starting with"
            " '_' or '-'",
        )


def check_table_name(name: str) -> None:
    """Refuse a table name the layout cannot hold."""
    if not TABLE_NAME.fullmatch(name):
        raise StoreError(
            f"table name {name!r} is not valid", hint="use lowercase letters, digits and '_'"
        )


def check_partition_key(key: str) -> None:
    """Refuse a partition key the layout cannot hold (``version`` is the reader's column)."""
    if not PARTITION_KEY.fullmatch(key) or key == "version":
        raise StoreError(
            f"partition key {key!r} is not valid",
            hint="use a recipe parameter name (lowercase, digits, '_', starting with a letter),"
            " other than 'version'",
        )


def read_provenance(metadata: Mapping[bytes, bytes] | None, shown_path: str) -> dict[str, Any]:
    """The ``harvester.provenance`` object of a footer ({} when absent); damaged if not JSON."""
    raw = (metadata or {}).get(PROVENANCE_KEY.encode())
    if raw is None:
        return {}
    try:
        provenance = json.loads(raw)
    except ValueError as exc:  # JSONDecodeError and UnicodeDecodeError are ValueErrors
        raise damaged(shown_path, f"{PROVENANCE_KEY} in the footer is not JSON ({exc})") from exc
    if not isinstance(provenance, dict):
        raise damaged(shown_path, f"{PROVENANCE_KEY} in the footer is not a JSON object")
    return provenance


def recorded_key(metadata: Mapping[bytes, bytes] | None, shown_path: str) -> tuple[str, ...]:
    """The key columns the harvest recorded in ``harvester.provenance`` (empty when none)."""
    key = read_provenance(metadata, shown_path).get("key", [])
    if not isinstance(key, list) or not all(isinstance(name, str) for name in key):
        raise damaged(shown_path, f'{PROVENANCE_KEY} "key" is not a list of column names')
    return tuple(key)


def _json_default(value: object) -> object:
    if isinstance(value, datetime) and value.utcoffset() is not None:
        return rfc3339(value)
    if isinstance(value, datetime):
        return value.isoformat()
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, set | frozenset):
        return sorted(value, key=str)
    raise TypeError(f"{type(value).__name__} is not JSON")


def provenance_json(
    given: Mapping[str, object],
    table: pa.Table,
    dataset: str,
    name: str,
    partition: Partition,
    version: int,
    committed_at: str,
    key: Sequence[str],
    where: str,
) -> str:
    """The ``harvester.provenance`` JSON a version's footer holds (``read_provenance`` reads it).

    The caller's fields, the writer's own (which win on a clash), and defaults from the columns.
    """
    if "run_id" not in given:
        raise StoreError(f"{where}: provenance has no run_id", hint="pass the harvest run's id")

    def distinct(column: str) -> list[object]:
        return [v for v in table.column(column).unique().to_pylist() if v is not None]

    body: dict[str, object] = {
        "recipe": next(iter(distinct("_recipe")), None),
        "recipe_sha256": next(iter(distinct("_recipe_sha256")), None),
        "harvester_version": next(iter(distinct("_harvester_version")), None),
        "source_urls": distinct("_source_url"),
        **given,
        # The writer's own fields win over anything the caller passed under the same name.
        "dataset": dataset,
        "table": name,
        "partition": {k: v for k, v in partition},
        "version": version,
        "committed_at": committed_at,
        "key": list(key),
        "rows": table.num_rows,
    }
    try:
        return json.dumps(body, ensure_ascii=False, sort_keys=True, default=_json_default)
    except (TypeError, ValueError) as err:
        raise StoreError(
            f"{where}: provenance cannot be written as JSON: {err}",
            hint="pass provenance values that are text, numbers, lists, dicts or datetimes",
        ) from None
