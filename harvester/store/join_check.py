"""Check how well two archived tables join on a key: exact matches, and near misses for the rest.

The latest version of each partition of both tables is read (``Archive.read``), optionally
narrowed by ``where``, and the key columns are compared exactly, as text: the key columns are
already normalized by the harvest, so any difference is a real one. A key without a match gets
its closest candidates among the *unmatched* keys of the other side, scored by rapidfuzz's
``fuzz.token_sort_ratio`` (0–100, best first, ties by key text). A key that matched exactly has
its partner already, so offering it again would only invite merging two people (a father and a
son, "smith john" and "smith john jr"). docs/joins.md explains each choice. The check's
arguments are parsed, and its alias files written, by ``join_options``.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from os import PathLike, fspath

import pyarrow as pa
import pyarrow.compute as pc
from rapidfuzz import fuzz, process

from harvester.errors import JoinInputError
from harvester.formats import tsv_field
from harvester.store.archive import Archive
from harvester.store.join_options import (
    SUGGEST_THRESHOLD,
    parse_on,
    parse_table,
    percent,
)

__all__ = [
    "CANDIDATE_LIMIT",
    "SCORER",
    "Candidate",
    "JoinCheck",
    "JoinSide",
    "UnmatchedKey",
    "join_check",
]

SCORER = "token_sort_ratio"  # the rapidfuzz.fuzz scorer; named in the JSON so a reader can redo it
CANDIDATE_LIMIT = 3


@dataclass(frozen=True)
class Candidate:
    """A key of the other side that an unmatched key may be, with its rapidfuzz score."""

    key: str
    score: float  # 0–100, fuzz.token_sort_ratio(unmatched key, this key)

    def to_dict(self) -> dict[str, object]:
        """The candidate as JSON: ``key`` and ``score``."""
        return {"key": self.key, "score": self.score}


@dataclass(frozen=True)
class UnmatchedKey:
    """A distinct key of one side that the other side lacks, with its closest candidates."""

    key: str
    rows: int  # how many rows of its side hold it
    candidates: tuple[Candidate, ...]  # best first, at most CANDIDATE_LIMIT

    def to_dict(self) -> dict[str, object]:
        """The entry as JSON: ``key``, ``rows`` and ``candidates`` (best first)."""
        return {
            "key": self.key,
            "rows": self.rows,
            "candidates": [candidate.to_dict() for candidate in self.candidates],
        }


@dataclass(frozen=True)
class JoinSide:
    """One side of the check: which table and column, and what it holds after ``where``."""

    table: str  # DATASET/TABLE
    column: str
    rows: int
    keys: int  # distinct non-null keys
    null: int  # rows whose key is null (left out of the check)


@dataclass(frozen=True)
class JoinCheck:
    """The result: the exact matches counted, and every unmatched key with its candidates.

    ``matched`` counts the distinct keys present on both sides; the match rate is ``matched``
    over the left side's distinct keys (the share of the left that finds a partner), None when
    the left has no keys.
    """

    left: JoinSide
    right: JoinSide
    matched: int
    left_unmatched: tuple[UnmatchedKey, ...]  # in key order
    right_unmatched: tuple[UnmatchedKey, ...]
    where: Mapping[str, str] = field(default_factory=dict)

    @property
    def match_rate(self) -> Fraction | None:
        """matched / left keys, exactly; None when the left side has no keys."""
        return Fraction(self.matched, self.left.keys) if self.left.keys else None

    def below(self, rate: Fraction) -> bool:
        """Whether the match rate is below ``rate`` (equal passes; no left keys never passes)."""
        found = self.match_rate
        return found is None or found < rate

    def to_dict(self) -> dict[str, object]:
        """The check as JSON: counts, then the unmatched keys of each side in key order."""
        rate = self.match_rate
        return {
            "left": self.left.table,
            "right": self.right.table,
            "on": {"left": self.left.column, "right": self.right.column},
            "where": dict(self.where),
            "matched": self.matched,
            "match_rate": None if rate is None else float(rate),
            "left_rows": self.left.rows,
            "right_rows": self.right.rows,
            "left_keys": self.left.keys,
            "right_keys": self.right.keys,
            "left_null": self.left.null,
            "right_null": self.right.null,
            "scorer": SCORER,
            "candidates_from": "unmatched keys of the other side",
            "left_unmatched": [entry.to_dict() for entry in self.left_unmatched],
            "right_unmatched": [entry.to_dict() for entry in self.right_unmatched],
        }

    def summary(self) -> str:
        """One line: matched keys, unmatched keys per side, and the match rate in per cent."""
        rate = self.match_rate
        shown = "n/a (the left side has no keys)" if rate is None else f"{percent(rate)} %"
        return (
            f"matched {self.matched} keys; {len(self.left_unmatched)} left without a match, "
            f"{len(self.right_unmatched)} right without a match; match rate {shown}"
        )

    def text_lines(self) -> list[str]:
        """The summary, then ``SIDE<TAB>KEY<TAB>CANDIDATE (SCORE), …`` per unmatched key."""
        lines = [self.summary()]
        for side, entries in (("left", self.left_unmatched), ("right", self.right_unmatched)):
            for entry in entries:
                shown = ", ".join(f"{c.key} ({c.score:.1f})" for c in entry.candidates)
                lines.append("\t".join((side, tsv_field(entry.key), tsv_field(shown))))
        return lines

    def suggestions(self, threshold: float = SUGGEST_THRESHOLD) -> list[tuple[str, str]]:
        """(alias, key) pairs: a left key and the right key it probably is, for a person to confirm.

        The right side is canonical (it is the table joined to). A pair is given when the best
        candidate scores at least ``threshold`` and no other candidate scores as well.
        """
        pairs = []
        for entry in self.left_unmatched:
            if not entry.candidates:
                continue
            best = entry.candidates[0]
            tied = len(entry.candidates) > 1 and entry.candidates[1].score == best.score
            if best.score >= threshold and not tied:
                pairs.append((entry.key, best.key))
        return pairs


def join_check(
    archive: Archive | str | PathLike[str],
    left: str | tuple[str, str],
    right: str | tuple[str, str],
    on: str | tuple[str, str],
    where: Mapping[str, str] | None = None,
) -> JoinCheck:
    """Compare the latest versions of two tables (``DATASET/TABLE`` or a pair) on a key column.

    ``on`` is one column for both sides, ``"LEFT=RIGHT"``, or a (left, right) pair. ``where``
    keeps the rows whose column (a partition key or data column) equals the value as text, on
    each side that has the column; a column neither side has is an error.
    """
    store = archive if isinstance(archive, Archive) else Archive(fspath(archive))
    left_column, right_column = parse_on(on) if isinstance(on, str) else on
    wanted = {str(name): str(value) for name, value in (where or {}).items()}
    sides = [parse_table(name) if isinstance(name, str) else name for name in (left, right)]
    left, right = (f"{dataset}/{table}" for dataset, table in sides)
    tables = [store.read(dataset, table) for dataset, table in sides]
    for name, table, column in zip((left, right), tables, (left_column, right_column), strict=True):
        if column not in table.column_names:
            raise JoinInputError(
                f"{name} has no column {column!r}", hint=f"its columns: {_listed(table)}"
            )
    for column in wanted:
        if all(column not in table.column_names for table in tables):
            raise JoinInputError(
                f"--where {column!r}: neither {left} nor {right} has that column",
                hint=f"{left}: {_listed(tables[0])}; {right}: {_listed(tables[1])}",
            )
    tables = [
        _narrowed(name, table, wanted) for name, table in zip((left, right), tables, strict=True)
    ]
    left_keys, left_null = _keys(left, tables[0], left_column)
    right_keys, right_null = _keys(right, tables[1], right_column)
    only_left = sorted(left_keys.keys() - right_keys.keys())
    only_right = sorted(right_keys.keys() - left_keys.keys())
    return JoinCheck(
        left=JoinSide(left, left_column, tables[0].num_rows, len(left_keys), left_null),
        right=JoinSide(right, right_column, tables[1].num_rows, len(right_keys), right_null),
        matched=len(left_keys.keys() & right_keys.keys()),
        left_unmatched=_unmatched(only_left, left_keys, only_right),
        right_unmatched=_unmatched(only_right, right_keys, only_left),
        where=wanted,
    )


def _listed(table: pa.Table) -> str:
    """The columns a user would name (provenance columns left out, they are never keys)."""
    return ", ".join(name for name in table.column_names if not name.startswith("_"))


def _as_text(name: str, table: pa.Table, column: str) -> pa.ChunkedArray:
    try:
        return pc.cast(table.column(column), pa.string())
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError) as exc:
        kind = table.schema.field(column).type
        raise JoinInputError(
            f"{name}: column {column!r} ({kind}) cannot be compared as text",
            hint="join on a text or number column",
        ) from exc


def _narrowed(name: str, table: pa.Table, where: Mapping[str, str]) -> pa.Table:
    """The rows whose columns equal ``where``'s values as text (a null never equals)."""
    for column, value in where.items():
        if column in table.column_names:
            table = table.filter(pc.equal(_as_text(name, table, column), value))
    return table


def _keys(name: str, table: pa.Table, column: str) -> tuple[Counter[str], int]:
    """Rows per distinct non-null key, and the number of null keys."""
    values = _as_text(name, table, column).to_pylist()
    counts = Counter(value for value in values if value is not None)
    return counts, len(values) - counts.total()


def _unmatched(
    keys: list[str], rows: Mapping[str, int], pool: list[str]
) -> tuple[UnmatchedKey, ...]:
    return tuple(UnmatchedKey(key, rows[key], _candidates(key, pool)) for key in keys)


def _candidates(key: str, pool: Iterable[str]) -> tuple[Candidate, ...]:
    """The pool's CANDIDATE_LIMIT best keys for ``key``: score descending, then key text."""
    # processor=None: the keys are already normalized, so the score is exactly
    # fuzz.token_sort_ratio(key, choice); limit=None so that ties are cut by key text, not by
    # the order rapidfuzz happened to keep.
    scored = process.extract(
        key, list(pool), scorer=fuzz.token_sort_ratio, processor=None, limit=None
    )
    ranked = sorted(((choice, score) for choice, score, _ in scored), key=lambda p: (-p[1], p[0]))
    return tuple(Candidate(choice, score) for choice, score in ranked[:CANDIDATE_LIMIT])
