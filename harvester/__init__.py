"""harvester: a polite, cached web-table harvester with a snapshot archive."""

from __future__ import annotations

from harvester._version import __version__
from harvester.errors import (
    ExtractError,
    FetchError,
    HarvesterError,
    RecipeError,
    StoreError,
    TableNotFoundError,
    ValueParseError,
)
from harvester.extract.rules import ColumnRule, RowDrop, TableRule
from harvester.extract.table import ExtractedTable, extract_grid, extract_table, read_page
from harvester.recipe import PlannedPage, Recipe, RecipeTable, load_recipe

__all__ = [
    "ColumnRule",
    "ExtractError",
    "ExtractedTable",
    "FetchError",
    "HarvesterError",
    "PlannedPage",
    "Recipe",
    "RecipeError",
    "RecipeTable",
    "RowDrop",
    "StoreError",
    "TableNotFoundError",
    "TableRule",
    "ValueParseError",
    "__version__",
    "extract_grid",
    "extract_table",
    "load_recipe",
    "read_page",
]
