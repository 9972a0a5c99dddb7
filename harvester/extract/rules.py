"""The rules that say how one table is read: the ``[tables.NAME]`` part of a recipe, as data.

Recipes (harvester/recipe.py) build these; the extractor only reads them. Every field has a
default, so ``TableRule()`` reads "the only table on the page, headers detected, types inferred".
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

__all__ = [
    "COLUMN_TYPES",
    "DEFAULT_MARKERS",
    "DEFAULT_NULLS",
    "ColumnRule",
    "ColumnType",
    "GroupRows",
    "RowDrop",
    "TableRule",
]

ColumnType = Literal[
    "text", "integer", "decimal", "currency", "percent", "date", "duration", "boolean"
]
COLUMN_TYPES: tuple[str, ...] = (
    "text",
    "integer",
    "decimal",
    "currency",
    "percent",
    "date",
    "duration",
    "boolean",
)

GroupRows = Literal["drop", "column", "keep"]

# Footnote markers sites append to names and numbers (common practice, no published source).
DEFAULT_MARKERS = "*†‡+#§¶‖"
# Cell texts that mean "no value" (common practice, no published source).
DEFAULT_NULLS: tuple[str, ...] = ("", "—", "–", "-", "N/A", "n/a")


@dataclass(frozen=True)
class ColumnRule:
    """How one output column is typed, and what extra columns it yields.

    ``name`` is the column's final name (after header collapsing and renames). A rule with
    ``link_of`` set describes a *derived* column: the link target (href) of the cell in column
    ``link_of``, optionally narrowed by ``pattern`` (its first group, or the whole match).
    """

    name: str
    type: ColumnType | None = None  # None: inferred from the cells
    formats: tuple[str, ...] = ()  # strptime formats for type "date"
    markers_to: str | None = None  # keep stripped footnote markers in this new column
    link_of: str | None = None  # derived column: href of the cell in this column
    pattern: str | None = None  # regex applied to the href (first group, else whole match)
    true_values: tuple[str, ...] = ()  # for type "boolean": texts meaning true
    person_key: bool = False  # adds <name>_key, a person key (harvester.extract.keys)
    codes: str | None = None  # a CSV of code,name beside the recipe: adds <name>_name
    code_names: tuple[tuple[str, str], ...] = ()  # that file's (code, name) pairs, as loaded


@dataclass(frozen=True)
class RowDrop:
    """Drop body rows whose cell in ``column`` fully matches the regex ``matches``."""

    column: str
    matches: str


@dataclass(frozen=True)
class TableRule:
    """Where a table is on the page and how its grid becomes typed columns."""

    name: str = "table"
    select: str = "table"
    index: int | None = None  # which match of ``select``; None: exactly one must match
    header_rows: int | None = None  # None: thead rows, else leading all-th rows
    header_separator: str = "_"
    rename: tuple[tuple[str, str], ...] = ()  # (collapsed name, new name) pairs
    drop_repeated_headers: bool = True
    group_rows: GroupRows = "drop"
    group_column: str = "group"
    drop_rows: tuple[RowDrop, ...] = ()
    drop_empty_rows: bool = True
    hidden: Literal["keep", "drop"] = "keep"  # cells/rows with inline display:none
    markers: str = DEFAULT_MARKERS
    nulls: tuple[str, ...] = DEFAULT_NULLS
    decimal_mark: Literal[".", ","] = "."
    infer_types: bool = True
    columns: tuple[ColumnRule, ...] = field(default=())
    key: tuple[str, ...] = ()
    aliases: tuple[tuple[str, str], ...] = ()  # person-key variant → canonical key (aliases.csv)

    def column(self, name: str) -> ColumnRule | None:
        """The rule for the column called ``name``, if the recipe gives one."""
        for rule in self.columns:
            if rule.name == name and rule.link_of is None:
                return rule
        return None
