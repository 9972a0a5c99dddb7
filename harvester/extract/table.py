"""Read one table from a page into a typed Arrow table, as a table rule says.

The steps, each in its own module: locate (selector, comments) → grid (WHATWG table model) →
headers (detect, collapse, rename) → row drops (repeated headers, group labels, empty rows, the
rule's patterns) → values (typed columns, markers, links).

:func:`extract_table` and :func:`extract_grid` each pause the cyclic garbage collector for the
whole extraction, once, through the thread-aware guard in ``collector.py`` (nested and
concurrent extractions share it, and the collector comes back on after the last one, raising
or not): collection passes over the extraction's own live objects cost a fifth of its time on
the benchmark page (BENCHMARKS.md).
"""

from __future__ import annotations

import codecs
import re
from bisect import bisect_right
from collections.abc import Sequence
from dataclasses import dataclass
from urllib.parse import urljoin

import pyarrow as pa

from harvester.errors import ExtractError
from harvester.extract.arrays import from_values
from harvester.extract.collector import EXTRACTION_PAUSE
from harvester.extract.decode import decode_html, sniff_encoding
from harvester.extract.grid import MAX_GRID_SLOTS, build_grid
from harvester.extract.grid_model import Grid
from harvester.extract.headers import (
    collapse_headers,
    deduplicate,
    header_row_indices,
    is_group_label_row,
    rename_columns,
)
from harvester.extract.keys import code_names, key_column, name_column, person_keys
from harvester.extract.locate import LocatedTable, Page, locate_table
from harvester.extract.plain_grid import parsed_page, plain_grid
from harvester.extract.rules import ColumnRule, TableRule
from harvester.extract.values import convert_column

__all__ = ["ExtractedTable", "extract_grid", "extract_table", "read_page"]


@dataclass(frozen=True)
class ExtractedTable:
    """A table read from a page: typed columns plus where each row came from."""

    name: str
    table: pa.Table
    source_rows: tuple[int, ...]  # 0-based grid row of each output row
    selector: str
    index: int  # which of the selector's matches
    in_comment: bool
    caption: str | None
    overlaps: int  # slots two cells claimed (HTML §4.9.12.1 table model errors)
    notes: tuple[str, ...] = ()  # what a reader of the run should know (unknown codes)


@dataclass
class _Body:
    source_rows: list[int]  # 0-based grid row (y) of each body row
    texts: list[tuple[str, ...]]
    groups: list[str | None]


def read_page(html: str | bytes, source: str = "<page>", encoding: str | None = None) -> Page:
    """Parse a page given as text or bytes (bytes decoded as a browser would).

    UTF-8 bytes go to the parser as they are (less a BOM): lexbor decodes UTF-8 itself, with
    U+FFFD for invalid sequences as decode_html would, and no decoded copy is kept.
    """
    if isinstance(html, str):
        return parsed_page(html, source)
    chosen, has_bom = sniff_encoding(html, encoding)
    if chosen == "utf-8":
        return parsed_page(html[len(codecs.BOM_UTF8) :] if has_bom else html, source)
    return parsed_page(decode_html(html, encoding), source)


def _as_page(page: Page | str | bytes, source: str) -> Page:
    return page if isinstance(page, Page) else read_page(page, source)


def extract_grid(
    page: Page | str | bytes,
    select: str = "table",
    index: int | None = None,
    *,
    drop_hidden: bool = False,
    source: str = "<page>",
    max_grid_slots: int = MAX_GRID_SLOTS,
) -> list[list[str]]:
    """The span-expanded grid of the table ``select`` names: every slot's text, row by row.

    A grid that would pass ``max_grid_slots`` slots (columns × rows) is an ExtractError.
    """
    with EXTRACTION_PAUSE:
        page = _as_page(page, source)
        located = locate_table(page, select, index)
        where = f"{page.source}: table ({select})"
        return _grid(page, located, drop_hidden, max_grid_slots, where).texts()


def extract_table(
    page: Page | str | bytes,
    rule: TableRule | None = None,
    *,
    base_url: str | None = None,
    source: str = "<page>",
    max_grid_slots: int = MAX_GRID_SLOTS,
) -> ExtractedTable:
    """Read the table ``rule`` names on ``page`` into typed columns.

    ``base_url`` resolves relative link targets kept by ``link_of`` columns. A grid that
    would pass ``max_grid_slots`` slots (columns × rows) is an ExtractError, raised before
    the slots are made.
    """
    with EXTRACTION_PAUSE:
        page = _as_page(page, source)
        return _extract_table(page, rule or TableRule(), base_url, max_grid_slots)


def _extract_table(
    page: Page, rule: TableRule, base_url: str | None, max_grid_slots: int = MAX_GRID_SLOTS
) -> ExtractedTable:
    """:func:`extract_table` without the collector pause (the benchmark times both)."""
    located = locate_table(page, rule.select, rule.index)
    where = f"{page.source}: table {rule.name!r} ({rule.select})"
    grid = _grid(page, located, rule.hidden == "drop", max_grid_slots, where)
    header_indices = header_row_indices(grid, rule.header_rows)
    names = deduplicate(collapse_headers(grid, header_indices, rule.header_separator))
    names = rename_columns(names, rule.rename, where)
    _check_column_rules(rule, names, where)

    body = _read_body(grid, header_indices, rule)
    body = _apply_row_drops(body, names, rule, where)
    notes: list[str] = []
    columns, column_names = _columns(grid, header_indices, body, names, rule, base_url, notes)
    missing_keys = [key for key in rule.key if key not in column_names]
    if missing_keys:
        raise ExtractError(
            f"{where}: key column(s) {', '.join(missing_keys)} not in the table",
            hint=f"the columns are: {', '.join(column_names)}",
        )
    return ExtractedTable(
        name=rule.name,
        table=pa.Table.from_arrays(columns, names=column_names),
        source_rows=tuple(body.source_rows),
        selector=rule.select,
        index=located.index,
        in_comment=located.in_comment,
        caption=grid.caption,
        overlaps=len(grid.overlaps),
        notes=tuple(notes),
    )


def _grid(page: Page, located: LocatedTable, drop_hidden: bool, max_slots: int, where: str) -> Grid:
    """The located table's grid: the compiled reader's where it can read the table exactly
    (plain_grid.py), else the DOM path's, the reference (the two never differ in results)."""
    fast = plain_grid(page, located, drop_hidden=drop_hidden, max_slots=max_slots)
    if fast is not None:
        return fast
    node = page.with_content(located).node  # the full page's table, if this one was hollowed
    return build_grid(node, drop_hidden=drop_hidden, max_slots=max_slots, where=where)


def _columns(
    grid: Grid,
    header_indices: Sequence[int],
    body: _Body,
    names: Sequence[str],
    rule: TableRule,
    base_url: str | None,
    notes: list[str],
) -> tuple[list[pa.Array], list[str]]:
    """The output columns and their names: group labels, typed columns, markers, keys, code
    names and links; ``notes`` gets what a reader of the run should know (unknown codes)."""
    columns: list[pa.Array] = []
    column_names: list[str] = []
    if rule.group_rows == "column" and any(group is not None for group in body.groups):
        columns.append(from_values(body.groups, pa.string()))
        column_names.append(rule.group_column)
    body_rows, grid_rows = _row_numbers(body.source_rows, header_indices)
    # The body's columns, transposed at once (zip runs in C; a comprehension per column did not).
    by_column = list(zip(*body.texts, strict=True)) if body.texts else [() for _ in names]
    for x, name in enumerate(names):
        texts = by_column[x]
        column_rule = rule.column(name)
        typed = convert_column(
            name, texts, column_rule, rule, body_rows=body_rows, grid_rows=grid_rows
        )
        columns.append(typed.values)
        column_names.append(name)
        if typed.markers is not None and column_rule is not None and column_rule.markers_to:
            columns.append(typed.markers)
            column_names.append(column_rule.markers_to)
        if column_rule is not None and column_rule.person_key:
            keys = person_keys(
                typed.values, name, where=f"table {rule.name!r}", aliases=rule.aliases
            )
            columns.append(keys)
            column_names.append(key_column(name))
        if column_rule is not None and column_rule.codes is not None:
            named, unknown = code_names(typed.values, column_rule)
            columns.append(named)
            column_names.append(name_column(name))
            if unknown:
                notes.append(unknown)
        for derived in rule.columns:
            if derived.link_of == name:
                columns.append(_links(grid, body.source_rows, x, derived, base_url))
                column_names.append(derived.name)
    return columns, column_names


def _check_column_rules(rule: TableRule, names: Sequence[str], where: str) -> None:
    known = set(names)
    for column in rule.columns:
        source = column.link_of or column.name
        if source not in known:
            what = f"link_of = {source!r}" if column.link_of else "a rule"
            raise ExtractError(
                f"{where}: column {column.name!r} has {what} "
                f"but the table has no column {source!r}",
                hint=f"the columns are: {', '.join(names)}",
            )
        added = [column.name] if column.link_of else []
        if column.markers_to:
            added.append(column.markers_to)
        if column.person_key:
            added.append(key_column(column.name))
        if column.codes is not None:
            added.append(name_column(column.name))
        for new_name in added:
            if new_name in known:
                raise ExtractError(
                    f"{where}: new column {new_name!r} clashes with an existing column",
                    hint="choose another name",
                )
            known.add(new_name)
    if rule.group_rows == "column" and rule.group_column in known:
        raise ExtractError(
            f"{where}: group_column {rule.group_column!r} clashes with an existing column",
            hint="set group_column to another name",
        )


def _read_body(grid: Grid, header_indices: Sequence[int], rule: TableRule) -> _Body:
    header_set = set(header_indices)
    repeated = rule.drop_repeated_headers
    header_texts = {grid.row_texts(y) for y in header_indices} if repeated else set()
    body = _Body([], [], [])
    group: str | None = None
    for y in range(grid.height):
        if y in header_set:
            continue
        texts = grid.row_texts(y)
        if texts in header_texts:
            continue
        if rule.group_rows != "keep" and is_group_label_row(grid, y):
            group = texts[0]
            continue
        if rule.drop_empty_rows and not any(texts):
            continue
        body.source_rows.append(y)
        body.texts.append(texts)
        body.groups.append(group)
    return body


def _row_numbers(
    source_rows: Sequence[int], header_indices: Sequence[int]
) -> tuple[list[int], list[int]]:
    """Each of the grid rows ``source_rows`` numbered from 1 in the table body, and in the grid.

    The body count runs over every grid row that is not a header row, rows dropped later
    included, so the first row under the header is row 1 of the body whatever is dropped.
    Grid rows follow the table model's order, which puts every ``tfoot`` last.
    """
    headers = sorted(header_indices)
    body_rows = [y + 1 - bisect_right(headers, y) for y in source_rows]
    return body_rows, [y + 1 for y in source_rows]


def _apply_row_drops(body: _Body, names: Sequence[str], rule: TableRule, where: str) -> _Body:
    if not rule.drop_rows:
        return body
    tests: list[tuple[int, re.Pattern[str]]] = []
    for drop in rule.drop_rows:
        if drop.column not in names:
            raise ExtractError(
                f"{where}: drop_rows names column {drop.column!r} that the table does not have",
                hint=f"the columns are: {', '.join(names)}",
            )
        tests.append((names.index(drop.column), re.compile(drop.matches)))
    kept = _Body([], [], [])
    for y, texts, group in zip(body.source_rows, body.texts, body.groups, strict=True):
        if any(pattern.fullmatch(texts[x]) for x, pattern in tests):
            continue
        kept.source_rows.append(y)
        kept.texts.append(texts)
        kept.groups.append(group)
    return kept


def _links(
    grid: Grid, source_rows: Sequence[int], x: int, link_rule: ColumnRule, base_url: str | None
) -> pa.Array:
    """The ``link_of`` column ``link_rule`` derives from column ``x``: one link per body row."""
    pattern = re.compile(link_rule.pattern) if link_rule.pattern else None
    values: list[str | None] = []
    for y in source_rows:
        href = grid.link(x, y)
        if href is not None and base_url:
            href = urljoin(base_url, href)
        if href is not None and pattern is not None:
            match = pattern.search(href)
            href = (match.group(1) if match.groups() else match.group(0)) if match else None
        values.append(href)
    return from_values(values, pa.string())
