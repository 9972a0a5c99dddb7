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
from harvester.fetch.capture_source import CaptureChoice, CaptureSource
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.robots import RobotsTxt
from harvester.fetch.source import PageRequest, PageSource
from harvester.fetch.sync import SyncFetcher
from harvester.fetch.web_archive import OriginalRewrite, WebArchive
from harvester.recipe import PlannedPage, Recipe, RecipeTable, load_recipe
from harvester.run import Outcome, RunReport, find_captures, harvest, reparse
from harvester.store.archive import Archive, VersionInfo
from harvester.store.join_check import JoinCheck, join_check
from harvester.store.partition_diff import PartitionDiff, diff_partition
from harvester.store.writer import ArchiveWriter, CommitResult

__all__ = [
    "Archive",
    "ArchiveWriter",
    "Capture",
    "CaptureChoice",
    "CaptureSource",
    "ColumnRule",
    "CommitResult",
    "ExtractError",
    "ExtractedTable",
    "FetchError",
    "FetchLimits",
    "Fetcher",
    "HarvesterError",
    "Identity",
    "JoinCheck",
    "OriginalRewrite",
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
    "WebArchive",
    "__version__",
    "diff_partition",
    "extract_grid",
    "extract_table",
    "find_captures",
    "harvest",
    "join_check",
    "load_recipe",
    "read_page",
    "reparse",
]
