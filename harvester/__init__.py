"""harvester: a polite, cached web-table harvester with a snapshot archive.

The public API is loaded on first use (PEP 562 ``__getattr__``): ``import harvester``, and so
the ``harvester`` command, does not import pyarrow, httpx or selectolax until a name that needs
them is asked for. ``_EXPORTS`` says which module defines each name.
"""

from __future__ import annotations

import importlib
import typing

from harvester._version import __version__

if typing.TYPE_CHECKING:  # what type checkers see; _EXPORTS is the same at run time
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

_EXPORTS: dict[str, str] = {
    "Archive": "harvester.store.archive",
    "ArchiveWriter": "harvester.store.writer",
    "Capture": "harvester.fetch.capture",
    "CaptureChoice": "harvester.fetch.capture_source",
    "CaptureSource": "harvester.fetch.capture_source",
    "ColumnRule": "harvester.extract.rules",
    "CommitResult": "harvester.store.writer",
    "ExtractError": "harvester.errors",
    "ExtractedTable": "harvester.extract.table",
    "FetchError": "harvester.errors",
    "FetchLimits": "harvester.fetch.limits",
    "Fetcher": "harvester.fetch.client",
    "HarvesterError": "harvester.errors",
    "Identity": "harvester.fetch.identity",
    "JoinCheck": "harvester.store.join_check",
    "OriginalRewrite": "harvester.fetch.web_archive",
    "Outcome": "harvester.run",
    "PageRequest": "harvester.fetch.source",
    "PageSource": "harvester.fetch.source",
    "PartitionDiff": "harvester.store.partition_diff",
    "PlannedPage": "harvester.recipe",
    "Recipe": "harvester.recipe",
    "RecipeError": "harvester.errors",
    "RecipeTable": "harvester.recipe",
    "RobotsTxt": "harvester.fetch.robots",
    "RowDrop": "harvester.extract.rules",
    "RunReport": "harvester.run",
    "StoreError": "harvester.errors",
    "SyncFetcher": "harvester.fetch.sync",
    "TableNotFoundError": "harvester.errors",
    "TableRule": "harvester.extract.rules",
    "ValueParseError": "harvester.errors",
    "VersionInfo": "harvester.store.archive",
    "WebArchive": "harvester.fetch.web_archive",
    "diff_partition": "harvester.store.partition_diff",
    "extract_grid": "harvester.extract.table",
    "extract_table": "harvester.extract.table",
    "find_captures": "harvester.run",
    "harvest": "harvester.run",
    "join_check": "harvester.store.join_check",
    "load_recipe": "harvester.recipe",
    "read_page": "harvester.extract.table",
    "reparse": "harvester.run",
}

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


if not typing.TYPE_CHECKING:  # type checkers read the imports above, and so catch a typo

    def __getattr__(name: str) -> object:
        """A public name, imported from its module on first use and kept here from then on."""
        if name not in _EXPORTS:
            raise AttributeError(f"module 'harvester' has no attribute {name!r}")
        value = getattr(importlib.import_module(_EXPORTS[name]), name)
        globals()[name] = value
        return value


def __dir__() -> list[str]:
    """Every public name, loaded yet or not."""
    return sorted({*globals(), *_EXPORTS})
