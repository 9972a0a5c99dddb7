"""Turn one column of cell texts into a typed pyarrow array, declared or inferred.

Per cell: surrounding whitespace is stripped, then a trailing run of footnote markers
(``TableRule.markers``; ``markers = ""`` in a recipe turns this off), then texts in
``TableRule.nulls`` become null. What is left is parsed as the column's type. A declared type
that does not parse raises :class:`~harvester.errors.ValueParseError`; an inferred type is one
that every non-null cell parses as (tried in :data:`INFER_ORDER`), else ``"text"``.

The parsers for each type are in ``parsers.py`` (re-exported here). Integer, decimal and percent
columns are first tried whole with pyarrow.compute (``bulk_numbers.py``), which hands back any
column it cannot prove it reads exactly as the parsers do. Arrays are built from buffers
(``arrays.py``), so typing a column never imports pandas.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from itertools import compress, repeat
from typing import Any

import pyarrow as pa

from harvester.errors import ValueParseError
from harvester.extract.arrays import from_values, spread, string_array
from harvester.extract.bulk_numbers import bulk_column
from harvester.extract.parsers import (
    ARROW_TYPES,
    DEFAULT_TRUE_VALUES,
    INFER_ORDER,
    MINUS_SIGNS,
    PARSERS,
    ParseContext,
    fits_int64,
    parse_boolean,
    parse_currency,
    parse_date,
    parse_decimal,
    parse_duration,
    parse_integer,
    parse_percent,
)
from harvester.extract.rules import ColumnRule, ColumnType, TableRule

__all__ = [
    "DEFAULT_TRUE_VALUES",
    "INFER_ORDER",
    "MINUS_SIGNS",
    "TypedColumn",
    "convert_column",
    "infer_type",
    "parse_boolean",
    "parse_currency",
    "parse_date",
    "parse_decimal",
    "parse_duration",
    "parse_integer",
    "parse_percent",
    "split_markers",
]


def split_markers(text: str, markers: str) -> tuple[str, str]:
    """Split a trailing run of footnote markers off a stripped text: ``("Lea Varn", "*")``."""
    text = text.strip()
    if not markers or not text or text[-1] not in markers:
        return text, ""
    end = len(text)
    # Whitespace may sit before or between the markers ("12 *†"); only trailing runs count,
    # so a leading "+" as in "+7" is never taken for a marker.
    while end and (text[end - 1] in markers or text[end - 1].isspace()):
        end -= 1
    return text[:end], "".join(text[end:].split())


@dataclass(frozen=True)
class TypedColumn:
    """One converted column: its values, the type used, and its markers when asked for."""

    name: str
    values: pa.Array
    type: ColumnType  # the type used (declared or inferred)
    markers: pa.Array | None  # string array when rule.markers_to was set, else None


def _prepare(texts: Sequence[str], markers: str) -> tuple[list[str], list[str | None] | None]:
    """Stripped cell texts with trailing markers removed, and the markers split off each cell.

    ``markers`` holds the marker characters (``TableRule.markers``). The second result is None
    when no cell ends in one.
    """
    cores = list(map(str.strip, texts))
    joined = "\0".join(cores) + "\0"
    # Parsers join a column with NUL, so a NUL inside a cell becomes U+FFFD REPLACEMENT CHARACTER.
    if joined.count("\0") != len(cores):
        cores = [c.replace("\0", "\ufffd") for c in cores]
        joined = "\0".join(cores) + "\0"
    # Whole-column checks in C first: most columns have no cell ending in a marker at all. A
    # one-character search is a memchr; the two-character one is slow where NULs are dense.
    if not any(marker + "\0" in joined for marker in markers if marker in joined):
        return cores, None
    hits = list(compress(range(len(cores)), map(str.endswith, cores, repeat(tuple(markers)))))
    markers_split_off: list[str | None] = [None] * len(cores)
    for i in hits:
        cores[i], markers_split_off[i] = split_markers(cores[i], markers)
    return cores, markers_split_off


def _infer(cells: list[str], decimal_mark: str) -> tuple[ColumnType, list[Any]]:
    if cells:
        ctx = ParseContext(decimal_mark, infer=True)
        for kind in INFER_ORDER:
            values, _ = PARSERS[kind](cells, ctx)
            if values is not None:
                # Integers past 64 bits are identifiers; a float would silently round them.
                # Durations are stored as int64 seconds, so one past 64 bits is no duration.
                if kind in _INT64_KINDS and not fits_int64(values):
                    break
                return kind, values
    return "text", cells


def infer_type(texts: Sequence[str], table: TableRule) -> ColumnType:
    """The first of :data:`INFER_ORDER` every non-null cell parses as, else ``"text"``."""
    cores, _ = _prepare(texts, table.markers)
    nulls = frozenset(table.nulls)
    return _infer([c for c in cores if c not in nulls], table.decimal_mark)[0]


def convert_column(
    name: str,
    texts: Sequence[str],
    rule: ColumnRule | None,
    table: TableRule,
    *,
    body_rows: Sequence[int] | None = None,
    grid_rows: Sequence[int] | None = None,
) -> TypedColumn:
    """Convert one column's cell texts to a typed array, by its rule or by inference.

    Raises ValueParseError when a cell does not parse as a declared type, naming the cell's row.
    ``body_rows`` numbers each cell's row of the table body from 1, counting every grid row that
    is not a header row, dropped ones too (repeated headers, group labels, empty rows): the
    first row under the header is row 1, as a reader counts on the page. The default 1, 2, 3, …
    fits cells that are the whole body. ``grid_rows``, when given, numbers each cell's row of
    the whole grid from 1, header rows included, and the message names that row too.
    """
    rows = _CellRows.checked(name, len(texts), body_rows, grid_rows)
    keep_markers = rule is not None and rule.markers_to is not None
    if rule is not None and rule.type == "boolean":
        return _boolean_column(name, texts, rule, table, rows)

    cores, markers_split_off = _prepare(texts, table.markers)
    markers_column = None
    if keep_markers:
        markers_column = _strings(markers_split_off or [None] * len(cores))
    positions = _non_null_positions(cores, table.nulls)
    cells = cores if positions is None else [cores[i] for i in positions]

    declared = rule.type if rule is not None else None
    inferred = declared is None and table.infer_types
    kind: ColumnType
    bulk = bulk_column(declared, cells, table.decimal_mark) if inferred or declared else None
    if bulk is not None:
        kind, dense = bulk
    elif inferred:
        kind, values = _infer(cells, table.decimal_mark)
        dense = _dense(kind, values)
    elif declared is None or declared == "text":
        kind, dense = "text", string_array(cells)
    else:
        kind = declared
        formats = rule.formats if rule is not None else ()
        parsed, bad, hint = _parse_declared(kind, cells, table.decimal_mark, formats)
        if parsed is None:
            at = positions[bad] if positions is not None else bad
            raise _fail(name, texts[at], kind, rows.describe(at), hint)
        dense = _dense(kind, parsed)
    values_column = dense if positions is None else spread(dense, positions, len(cores))
    return TypedColumn(name, values_column, kind, markers_column)


@dataclass(frozen=True)
class _CellRows:
    """Where a column's cells sit, for error messages: rows of the body and, if known, the grid."""

    body: Sequence[int]
    grid: Sequence[int] | None

    @classmethod
    def checked(
        cls, name: str, count: int, body: Sequence[int] | None, grid: Sequence[int] | None
    ) -> _CellRows:
        """The row numbers of ``count`` cells, the body rows 1, 2, 3, … unless given."""
        for numbers, what in ((body, "body row numbers"), (grid, "grid row numbers")):
            if numbers is not None and len(numbers) != count:
                raise ValueError(f"column {name!r}: {count} cells but {len(numbers)} {what}")
        return cls(body if body is not None else range(1, count + 1), grid)

    def describe(self, i: int) -> str:
        """Where cell ``i`` sits, e.g. ``row 3 of the table body (grid row 5)``."""
        where = f"row {self.body[i]} of the table body"
        return where if self.grid is None else f"{where} (grid row {self.grid[i]})"


_HINT = 'declare type = "text" or add the text to nulls'
_BOOLEAN_HINT = "add it to true_values, " + _HINT
_DATE_HINT = "add its format to formats, " + _HINT
# Columns stored as int64: integers, and durations (seconds; float seconds are checked alike
# so that no column silently rounds a value that would not fit).
_INT64_KINDS = frozenset({"integer", "duration"})
_PAST_64_BITS_HINTS = {
    "integer": 'it is past 64 bits; declare type = "decimal" or "text"',
    "duration": 'its seconds are past 64 bits; declare type = "text" or add the text to nulls',
}


def _boolean_column(
    name: str, texts: Sequence[str], rule: ColumnRule, table: TableRule, rows: _CellRows
) -> TypedColumn:
    """A declared boolean column: true values, empty cells (false) and nulls; markers if asked."""
    true_values = frozenset(rule.true_values or DEFAULT_TRUE_VALUES)
    nulls = frozenset(table.nulls)
    values: list[bool | None] = []
    markers_split_off: list[str | None] = []
    for i, raw in enumerate(texts):
        text = raw.strip()
        # Checked before marker stripping: "*" is both a default marker and a default true.
        if text in true_values or not text:
            values.append(bool(text))
            markers_split_off.append(None)
            continue
        core, split_off = split_markers(text, table.markers)
        if core in true_values or core in nulls:
            values.append(True if core in true_values else None)
            markers_split_off.append(split_off or None)
            continue
        raise _fail(name, raw, "boolean", rows.describe(i), _BOOLEAN_HINT)
    markers_column = _strings(markers_split_off) if rule.markers_to is not None else None
    return TypedColumn(name, from_values(values, pa.bool_()), "boolean", markers_column)


def _non_null_positions(cores: list[str], nulls: Sequence[str]) -> list[int] | None:
    """Where the cells that are not null texts sit, or None if no cell is a null text."""
    null_texts = frozenset(nulls)
    if null_texts.isdisjoint(cores):
        return None  # the usual column: no list of positions to build or to map back through
    return [i for i, core in enumerate(cores) if core not in null_texts]


def _parse_declared(
    kind: ColumnType, cells: list[str], decimal_mark: str, formats: tuple[str, ...]
) -> tuple[list[Any] | None, int, str]:
    """The cells parsed as the declared ``kind``; or None, the first bad cell and a hint."""
    parsed, bad = PARSERS[kind](cells, ParseContext(decimal_mark, infer=False, formats=formats))
    if parsed is not None and kind in _INT64_KINDS and not fits_int64(parsed):
        bad = next(i for i, value in enumerate(parsed) if not fits_int64([value]))
        return None, bad, _PAST_64_BITS_HINTS[kind]
    if parsed is None:
        return None, bad, _DATE_HINT if kind == "date" else _HINT
    return parsed, bad, ""


def _dense(kind: ColumnType, values: list[Any]) -> pa.Array:
    """The Arrow array of one column's parsed non-null values."""
    arrow_type = ARROW_TYPES[kind]
    if kind == "duration" and any(type(value) is float for value in values):
        # One cell with fractional seconds makes the whole column float seconds.
        arrow_type = pa.float64()
        values = [float(value) for value in values]
    return from_values(values, arrow_type)


def _strings(values: list[str | None]) -> pa.Array:
    return from_values(values, pa.string())


def _fail(name: str, text: str, kind: str, where: str, hint: str) -> ValueParseError:
    return ValueParseError(
        f"column {name!r}, {where}: cannot read {text!r} as declared type {kind!r}", hint=hint
    )
