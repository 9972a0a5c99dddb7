"""Drift checks: how a new harvest of a table differs in schema and size from the last version.

Only data columns count (names not starting with "_"; the "_"-prefixed ones are provenance that
changes on every harvest). The report lists added, removed and retyped columns, pairs of a removed
and an added column that look like a rename, and row-count bounds that were broken.

Rename heuristic (common practice, no published source): a removed and an added column of the
same Arrow type look like one renamed column when (1) they hold equal values row for row (nulls
equal to nulls, at least one non-null value so that empty or all-null columns do not pair up by
accident), or failing that (2) their names are close, ``difflib.SequenceMatcher.ratio() >= 0.8``
(the ratio is defined in the Python docs for ``difflib.SequenceMatcher.ratio``). Value matches are
paired first, then name matches, each column in at most one pair.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass

import pyarrow as pa

from harvester.store.contract import data_columns

__all__ = ["RENAME_RATIO", "DriftReport", "detect_drift"]

RENAME_RATIO = 0.8
"""Names at least this similar (difflib ratio) and of the same type look like a rename."""


@dataclass(frozen=True)
class DriftReport:
    """What changed between the previous version of a partition and a new harvest."""

    added: tuple[str, ...] = ()
    removed: tuple[str, ...] = ()
    type_changed: tuple[tuple[str, str, str], ...] = ()  # (name, old type, new type)
    renamed: tuple[tuple[str, str], ...] = ()  # (old name, new name) that look like renames
    row_problems: tuple[str, ...] = ()  # e.g. "3 rows < min_rows 10"

    @property
    def changed(self) -> bool:
        """True when anything at all is reported."""
        return bool(
            self.added or self.removed or self.type_changed or self.renamed or self.row_problems
        )

    def summary(self) -> str:
        """Say what drifted in one line (``no drift`` when nothing is reported).

        E.g. ``drift: removed a; added b (looks renamed from a); 3 rows < min_rows 10``.
        """
        if not self.changed:
            return "no drift"
        parts: list[str] = []
        # A rename is shown as the removal plus the addition it explains, so a reader who only
        # sees the line still learns that the old name is gone.
        removed = [*self.removed, *(old for old, _ in self.renamed)]
        if removed:
            parts.append("removed " + ", ".join(removed))
        added = [*self.added, *(f"{new} (looks renamed from {old})" for old, new in self.renamed)]
        if added:
            parts.append("added " + ", ".join(added))
        for name, old_type, new_type in self.type_changed:
            parts.append(f"type of {name} changed from {old_type} to {new_type}")
        parts.extend(self.row_problems)
        return "drift: " + "; ".join(parts)


def _row_problems(rows: int, min_rows: int | None, max_rows: int | None) -> tuple[str, ...]:
    problems: list[str] = []
    if min_rows is not None and rows < min_rows:
        problems.append(f"{rows} rows < min_rows {min_rows}")
    if max_rows is not None and rows > max_rows:
        problems.append(f"{rows} rows > max_rows {max_rows}")
    return tuple(problems)


def _same_values(left: pa.ChunkedArray, right: pa.ChunkedArray) -> bool:
    if len(left) != len(right) or left.null_count == len(left):
        return False
    # ChunkedArray.equals ignores chunking and treats null slots as equal when both are null.
    return bool(left.equals(right))


def _pair_renames(
    old: pa.Table, new: pa.Table, removed: list[str], added: list[str]
) -> list[tuple[str, str]]:
    old_types = {name: old.schema.field(name).type for name in removed}
    new_types = {name: new.schema.field(name).type for name in added}
    pairs: list[tuple[str, str]] = []
    taken: set[str] = set()
    for gone in removed:  # pass 1: equal values
        for fresh in added:
            if fresh in taken or old_types[gone] != new_types[fresh]:
                continue
            if _same_values(old.column(gone), new.column(fresh)):
                pairs.append((gone, fresh))
                taken.add(fresh)
                break
    paired_old = {gone for gone, _ in pairs}
    for gone in removed:  # pass 2: close names, best ratio first (ties: first added column)
        if gone in paired_old:
            continue
        best: tuple[float, str] | None = None
        for fresh in added:
            if fresh in taken or old_types[gone] != new_types[fresh]:
                continue
            ratio = difflib.SequenceMatcher(None, gone, fresh).ratio()
            if ratio >= RENAME_RATIO and (best is None or ratio > best[0]):
                best = (ratio, fresh)
        if best is not None:
            pairs.append((gone, best[1]))
            taken.add(best[1])
    return pairs


def detect_drift(
    old: pa.Table | None, new: pa.Table, *, min_rows: int | None, max_rows: int | None
) -> DriftReport:
    """Report drift from ``old`` (the previous version, or None) to ``new``.

    With no previous version there is nothing to compare columns with, so only the row bounds
    are checked.
    """
    problems = _row_problems(new.num_rows, min_rows, max_rows)
    if old is None:
        return DriftReport(row_problems=problems)
    old_names = data_columns(old)
    new_names = data_columns(new)
    old_set, new_set = set(old_names), set(new_names)
    removed = [name for name in old_names if name not in new_set]
    added = [name for name in new_names if name not in old_set]
    retyped = tuple(
        (name, str(old.schema.field(name).type), str(new.schema.field(name).type))
        for name in old_names
        if name in new_set and old.schema.field(name).type != new.schema.field(name).type
    )
    renamed = _pair_renames(old, new, removed, added)
    gone = {pair[0] for pair in renamed}
    fresh = {pair[1] for pair in renamed}
    return DriftReport(
        added=tuple(name for name in added if name not in fresh),
        removed=tuple(name for name in removed if name not in gone),
        type_changed=retyped,
        renamed=tuple(renamed),
        row_problems=problems,
    )
