"""Find a table's header rows and collapse them into one flat, stable name per column.

Collapsing is common practice with no published source (REFERENCES §6.3): for each column, take
the texts of the header cells covering it, top to bottom; skip empty parts and a part equal to
the one above (a spanning group cell read twice); snake_case each part and join them. Names that
collide get ``_2``, ``_3``, … from left to right.
"""

from __future__ import annotations

import re
import unicodedata
from collections import Counter
from collections.abc import Sequence

from harvester.errors import ExtractError
from harvester.extract.grid_model import Grid

__all__ = [
    "collapse_headers",
    "deduplicate",
    "header_row_indices",
    "is_group_label_row",
    "rename_columns",
    "snake_case",
]

_NOT_WORD = re.compile(r"[^\w]+")


def header_row_indices(grid: Grid, header_rows: int | None = None) -> list[int]:
    """The grid rows that form the header.

    Given ``header_rows = N``, the first N rows. Otherwise the rows from ``thead``; if there is
    none, the leading rows made only of ``th`` cells, stopping at a full-width label row;
    when every row qualifies, only the first is the header.
    """
    if header_rows is not None:
        return list(range(min(header_rows, grid.height)))
    thead = [y for y, kind in enumerate(grid.row_groups) if kind == "thead"]
    if thead:
        return thead
    leading: list[int] = []
    for y in range(grid.height):
        flags = [grid.is_header(x, y) for x in range(grid.width) if grid.has_cell(x, y)]
        if not flags or not all(flags):
            break
        if leading and is_group_label_row(grid, y):
            break  # a full-width label such as a conference name starts the body
        leading.append(y)
    if leading and len(leading) == grid.height:
        return leading[:1]
    return leading


def snake_case(text: str) -> str:
    """A header text as a snake_case name: ``"Shot share %"`` → ``"shot_share_pct"``."""
    text = unicodedata.normalize("NFKC", text).replace("%", " pct ").replace("#", " num ")
    return _NOT_WORD.sub("_", text.casefold()).strip("_")


def collapse_headers(grid: Grid, rows: Sequence[int], separator: str = "_") -> list[str]:
    """One name per column from the header ``rows`` (before de-duplication)."""
    names: list[str] = []
    for x in range(grid.width):
        parts: list[str] = []
        above = None
        for y in rows:
            owner = grid.owner(x, y)
            if owner is None or owner == above:
                continue
            above = owner
            part = snake_case(grid.text_rows[y][x])
            if part and (not parts or parts[-1] != part):
                parts.append(part)
        names.append(separator.join(parts) or f"column_{x + 1}")
    return names


def deduplicate(names: Sequence[str]) -> list[str]:
    """Make names unique: the second ``pct`` becomes ``pct_2``, the third ``pct_3``."""
    taken = set(names)
    seen: set[str] = set()
    # The next number to try for each repeated name. Numbers given to a name only grow and
    # taken names stay taken, so the search resumes where it last stopped: every number is
    # tried once, and 100,000 copies of one name cost linear time, not quadratic.
    next_number: dict[str, int] = {}
    unique: list[str] = []
    for name in names:
        if name not in seen:
            seen.add(name)
            unique.append(name)
            continue
        number = next_number.get(name, 2)
        candidate = f"{name}_{number}"
        while candidate in taken:
            number += 1
            candidate = f"{name}_{number}"
        next_number[name] = number + 1
        taken.add(candidate)
        seen.add(candidate)
        unique.append(candidate)
    return unique


def rename_columns(
    names: Sequence[str], renames: Sequence[tuple[str, str]], where: str = "table"
) -> list[str]:
    """Apply a rename map; a name the table does not have is an error, not a silent no-op."""
    mapping = dict(renames)
    known = set(names)
    missing = [old for old in mapping if old not in known]
    if missing:
        raise ExtractError(
            f"{where}: rename names column(s) {', '.join(missing)} that the table does not have",
            hint=f"the columns are: {', '.join(names)}",
        )
    renamed = [mapping.get(name, name) for name in names]
    duplicates = sorted(name for name, count in Counter(renamed).items() if count > 1)
    if duplicates:
        raise ExtractError(
            f"{where}: rename gives two columns the name {', '.join(duplicates)}",
            hint="pick distinct new names",
        )
    return renamed


def is_group_label_row(grid: Grid, y: int) -> bool:
    """True if one non-empty cell spans the whole row (a label such as a conference name)."""
    if grid.width < 2 or not grid.text_rows[y][0]:
        return False
    first = grid.owners.get((0, y))  # only slots of spanning cells have an owner entry
    if first is None:
        return False
    return all(grid.owner(x, y) == first for x in range(1, grid.width))
