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
from harvester.fetch.capture import Capture
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.robots import RobotsTxt
from harvester.fetch.source import PageRequest, PageSource
from harvester.fetch.sync import SyncFetcher
from harvester.recipe import PlannedPage, Recipe, RecipeTable, load_recipe
from harvester.run import Outcome, RunReport, harvest
from harvester.store.archive import Archive, VersionInfo
from harvester.store.partition_diff import PartitionDiff, diff_partition
from harvester.store.writer import ArchiveWriter, CommitResult

__all__ = [
    "Archive",
    "ArchiveWriter",
    "Capture",
    "ColumnRule",
    "CommitResult",
    "ExtractError",
    "ExtractedTable",
    "FetchError",
    "FetchLimits",
    "Fetcher",
    "HarvesterError",
    "Identity",
    "Outcome",
    "PageRequest",
    "PageSource",
    "PartitionDiff",
    "PlannedPage",
    "Recipe",
    "RecipeError",
    "RecipeTable",
    "RobotsTxt",
    "RowDrop",
    "RunReport",
    "StoreError",
    "SyncFetcher",
    "TableNotFoundError",
    "TableRule",
    "ValueParseError",
    "VersionInfo",
    "__version__",
    "diff_partition",
    "extract_grid",
    "extract_table",
    "harvest",
    "load_recipe",
    "read_page",
]
