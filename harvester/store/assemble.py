"""Assembling versions read from several files into one table, as ``Archive.read`` returns it.

Data columns are unified by name across files (a column a file lacks reads as null), then come
the partition columns, typed int64 when every file's provenance recorded an integer for the key
(else string), then ``version``.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import pyarrow as pa

from harvester.errors import StoreError
from harvester.store.contract import StoredPartition, damaged, read_provenance

__all__ = ["VersionRead", "combine", "key_type", "partition_record", "unify"]

_INTEGER = re.compile(r"-?[0-9]+")


@dataclass(frozen=True)
class VersionRead:
    """One version's file as read: where it is, its rows, and its provenance's partition object."""

    partition: StoredPartition
    version: int
    shown: str  # the file's path as messages give it
    data: pa.Table
    partition_record: dict[str, Any]


def partition_record(metadata: Mapping[bytes, bytes] | None, shown: str) -> dict[str, Any]:
    """The ``partition`` object of ``harvester.provenance``, or {} when it has none."""
    partition = read_provenance(metadata, shown).get("partition")
    return partition if isinstance(partition, dict) else {}


def key_type(key: str, provenance: list[dict[str, Any]]) -> pa.DataType:
    """int64 when every file's provenance gives an int for ``key`` (docs/archive.md), else text."""

    def is_int(value: object) -> bool:
        return isinstance(value, int) and not isinstance(value, bool)  # JSON true is not a number

    if provenance and all(is_int(one.get(key)) for one in provenance):
        return pa.int64()
    return pa.string()


def unify(name: str, schemas: list[pa.Schema], keys: list[str]) -> pa.Schema:
    """Union of the files' columns by name: data columns first, then ``_`` provenance columns."""
    try:
        unified = pa.unify_schemas(
            [schema.remove_metadata() for schema in schemas], promote_options="permissive"
        )
    except (pa.ArrowInvalid, pa.ArrowTypeError) as exc:
        raise StoreError(
            f"{name}: the versions read have incompatible column types: {exc}",
            hint="read the partitions separately (where=...) or pick one version",
        ) from exc
    clash = sorted(set(unified.names) & {*keys, "version"})
    if clash:
        raise StoreError(
            f"{name}: data column {clash[0]!r} has the name of a column the reader adds"
            " (a partition key or version)",
            hint="rename that column in the recipe and harvest again",
        )
    data = [field for field in unified if not field.name.startswith("_")]
    provenance = [field for field in unified if field.name.startswith("_")]
    return pa.schema(data + provenance)


def combine(name: str, parts: list[VersionRead], keys: list[str]) -> pa.Table:
    """The versions read as one table: unified data columns, typed partition columns, version."""
    schema = unify(name, [part.data.schema for part in parts], keys)
    types = {key: key_type(key, [part.partition_record for part in parts]) for key in keys}
    pieces = []
    for part in parts:
        data, rows = part.data, part.data.num_rows
        columns = [
            data.column(field.name).cast(field.type)
            if field.name in data.column_names
            else pa.nulls(rows, field.type)
            for field in schema
        ]
        values = dict(part.partition)
        for key in keys:
            value = values.get(key)
            if value is not None and types[key] == pa.int64():
                if not _INTEGER.fullmatch(value):
                    problem = f"folder value {key}={value!r} is not the integer its footer gives"
                    raise damaged(part.shown, problem)
                columns.append(pa.array([int(value)] * rows, pa.int64()))
            else:
                columns.append(pa.array([value] * rows, types[key]))
        columns.append(pa.array([part.version] * rows, pa.int32()))
        names = [*schema.names, *keys, "version"]
        pieces.append(pa.Table.from_arrays(columns, names=names))
    return pa.concat_tables(pieces)
