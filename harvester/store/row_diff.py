"""Row diffs: the rows added, removed and changed between two versions of one partition.

Rows are matched by key columns: a key present only in the new version is an added row, only in
the old one a removed row, and in both a changed row when any other shared data column differs.
Only data columns take part (names not starting with "_"; provenance differs on every harvest).

Values are compared as the Python objects pyarrow gives (``to_pylist``), with no tolerance:
null equals null, floats are compared exactly by IEEE 754 equality, so 0.1 and
0.1000000000000001 differ while 0.0 equals -0.0 (IEEE 754-2019 §5.11, from memory), except that
NaN is taken to equal NaN so that a NaN cell does not show as changed in every diff.

With no key, whole rows are compared: the key is every data column the two versions share, so an
edited row shows as one removed and one added row, and repeated identical rows are counted as a
multiset (two copies before and three after is one added row) rather than refused.
"""

from __future__ import annotations

import json
import math
from collections import Counter
from collections.abc import Hashable, Mapping, Sequence
from dataclasses import dataclass

import pyarrow as pa

from harvester.errors import StoreError
from harvester.formats import json_value
from harvester.store.contract import data_columns

__all__ = ["CellChange", "RowChange", "VersionDiff", "diff_versions"]

Row = Mapping[str, object]


@dataclass(frozen=True)
class CellChange:
    """One column of a changed row: its old and its new value."""

    column: str
    old: object
    new: object


@dataclass(frozen=True)
class RowChange:
    """A row present in both versions (same key) whose other columns differ."""

    key: tuple[tuple[str, object], ...]  # (key column, value) pairs
    changes: tuple[CellChange, ...]


@dataclass(frozen=True)
class VersionDiff:
    """Rows added, removed and changed between two versions, matched by key columns."""

    key: tuple[str, ...]  # the columns rows were matched by
    key_given: bool  # False when no key was given and whole rows were compared
    added: tuple[Row, ...]  # full data rows of the new version, in its order
    removed: tuple[Row, ...]  # full data rows of the old version, in its order
    changed: tuple[RowChange, ...]  # in the new version's order
    unchanged: int
    columns_added: tuple[str, ...] = ()  # data columns only in the new version
    columns_removed: tuple[str, ...] = ()  # data columns only in the old version

    @property
    def counts(self) -> dict[str, int]:
        """Numbers of added, removed, changed and unchanged rows."""
        return {
            "added": len(self.added),
            "removed": len(self.removed),
            "changed": len(self.changed),
            "unchanged": self.unchanged,
        }

    @property
    def identical(self) -> bool:
        """True when no row and no column was added, removed or changed."""
        return not (
            self.added or self.removed or self.changed or self.columns_added or self.columns_removed
        )

    def summary(self) -> str:
        """Say in one line what changed.

        E.g. ``rows: 2 added, 0 removed, 1 changed, 7 unchanged (key player)``.
        """
        matched = f"key {', '.join(self.key)}" if self.key_given else "no key: whole rows compared"
        line = (
            f"rows: {len(self.added)} added, {len(self.removed)} removed, "
            f"{len(self.changed)} changed, {self.unchanged} unchanged ({matched})"
        )
        if self.columns_added:
            line += f"; columns added: {', '.join(self.columns_added)}"
        if self.columns_removed:
            line += f"; columns removed: {', '.join(self.columns_removed)}"
        return line

    def to_dict(self) -> dict[str, object]:
        """The diff as plain JSON-ready values (cells as ``harvester.formats`` writes them)."""
        return {
            "key": list(self.key),
            "key_given": self.key_given,
            "counts": self.counts,
            "columns_added": list(self.columns_added),
            "columns_removed": list(self.columns_removed),
            "added": [_json_row(row) for row in self.added],
            "removed": [_json_row(row) for row in self.removed],
            "changed": [
                {
                    "key": {name: json_value(value) for name, value in change.key},
                    "changes": {
                        cell.column: {"old": json_value(cell.old), "new": json_value(cell.new)}
                        for cell in change.changes
                    },
                }
                for change in self.changed
            ],
            "summary": self.summary(),
        }

    def text_lines(self) -> list[str]:
        """The rows as text, each line led by a word: added, removed, changed (values as JSON)."""

        def shown(value: object) -> str:
            return json.dumps(json_value(value), ensure_ascii=False)

        def cells(row: Row) -> str:
            return ", ".join(f"{name}={shown(value)}" for name, value in row.items())

        lines = [f"added {cells(row)}" for row in self.added]
        lines += [f"removed {cells(row)}" for row in self.removed]
        for change in self.changed:
            key = ", ".join(f"{name}={shown(value)}" for name, value in change.key)
            edits = "; ".join(
                f"{cell.column} {shown(cell.old)} → {shown(cell.new)}" for cell in change.changes
            )
            lines.append(f"changed {key}: {edits}")
        return lines


def _json_row(row: Row) -> dict[str, object]:
    return {name: json_value(value) for name, value in row.items()}


class _NaN:
    """Stands for every float NaN, so NaN equals NaN and can be a dict key."""

    def __repr__(self) -> str:
        return "nan"


_NAN = _NaN()


def _comparable(value: object) -> Hashable:
    """A hashable stand-in for a cell: NaN → one marker, lists and dicts → tuples."""
    if isinstance(value, float) and math.isnan(value):
        return _NAN
    if isinstance(value, list | tuple):
        return tuple(_comparable(item) for item in value)
    if isinstance(value, dict):
        return tuple((str(k), _comparable(v)) for k, v in value.items())
    if isinstance(value, Hashable):
        return value
    return repr(value)


def _rows(table: pa.Table, columns: Sequence[str]) -> list[dict[str, object]]:
    return list(table.select(list(columns)).to_pylist())


def _key_of(row: Row, key: Sequence[str]) -> tuple[Hashable, ...]:
    return tuple(_comparable(row[name]) for name in key)


def _check_key(table: pa.Table, key: Sequence[str], side: str) -> None:
    present = data_columns(table)
    for name in key:
        if name not in present:
            raise StoreError(
                f"key column {name!r} is not in the {side} version "
                f"(data columns: {', '.join(present) or 'none'})",
                hint="name key columns that both versions have",
            )


def _index(rows: list[dict[str, object]], key: Sequence[str], side: str) -> dict[Hashable, int]:
    index: dict[Hashable, int] = {}
    for position, row in enumerate(rows):
        identity = _key_of(row, key)
        if identity in index:
            shown = ", ".join(f"{name}={row[name]!r}" for name in key)
            raise StoreError(
                f"key ({', '.join(key)}) is not unique in the {side} version: {shown} "
                f"is on rows {index[identity]} and {position}",
                hint="diff by key columns that identify one row, or by none to compare whole rows",
            )
        index[identity] = position
    return index


def diff_versions(old: pa.Table, new: pa.Table, key: Sequence[str]) -> VersionDiff:
    """Diff two versions of one partition by ``key`` (empty: compare whole data rows)."""
    old_names, new_names = data_columns(old), data_columns(new)
    shared = [name for name in new_names if name in old_names]
    columns_added = tuple(name for name in new_names if name not in old_names)
    columns_removed = tuple(name for name in old_names if name not in new_names)
    old_rows, new_rows = _rows(old, old_names), _rows(new, new_names)
    if not key:
        return _diff_whole_rows(old_rows, new_rows, shared, columns_added, columns_removed)
    _check_key(old, key, "old")
    _check_key(new, key, "new")
    old_index = _index(old_rows, key, "old")
    new_index = _index(new_rows, key, "new")
    compared = [name for name in shared if name not in key]
    added: list[Row] = []
    changed: list[RowChange] = []
    unchanged = 0
    for row in new_rows:
        position = old_index.get(_key_of(row, key))
        if position is None:
            added.append(row)
            continue
        before = old_rows[position]
        cells = tuple(
            CellChange(name, before[name], row[name])
            for name in compared
            if _comparable(before[name]) != _comparable(row[name])
        )
        if cells:
            changed.append(RowChange(tuple((name, row[name]) for name in key), cells))
        else:
            unchanged += 1
    removed = tuple(row for row in old_rows if _key_of(row, key) not in new_index)
    return VersionDiff(
        key=tuple(key),
        key_given=True,
        added=tuple(added),
        removed=removed,
        changed=tuple(changed),
        unchanged=unchanged,
        columns_added=columns_added,
        columns_removed=columns_removed,
    )


def _diff_whole_rows(
    old_rows: list[dict[str, object]],
    new_rows: list[dict[str, object]],
    shared: list[str],
    columns_added: tuple[str, ...],
    columns_removed: tuple[str, ...],
) -> VersionDiff:
    # Multiset difference: each old copy of a row cancels one new copy of it.
    spare_old = Counter(_key_of(row, shared) for row in old_rows)
    added: list[Row] = []
    unchanged = 0
    for row in new_rows:
        identity = _key_of(row, shared)
        if spare_old[identity] > 0:
            spare_old[identity] -= 1
            unchanged += 1
        else:
            added.append(row)
    removed: list[Row] = []
    # spare_old now counts the old copies no new row matched; report that many of each.
    for row in old_rows:
        identity = _key_of(row, shared)
        if spare_old[identity] > 0:
            spare_old[identity] -= 1
            removed.append(row)
    return VersionDiff(
        key=tuple(shared),
        key_given=False,
        added=tuple(added),
        removed=tuple(removed),
        changed=(),
        unchanged=unchanged,
        columns_added=columns_added,
        columns_removed=columns_removed,
    )
