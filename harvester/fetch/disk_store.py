"""Opening the fetcher's diskcache stores, which are disposable: damage means starting afresh.

The HTTP cache and the robots store only save requests; nothing in them is the user's data. So
a store whose database is damaged is moved aside (kept for a look, never read again) and an
empty one takes its place, with one warning, instead of failing this run and every later one.
"""

from __future__ import annotations

import logging
import sqlite3
import time
from pathlib import Path
from typing import Any

import diskcache

__all__ = ["open_store"]

_log = logging.getLogger("harvester.fetch")


def open_store(directory: Path, what: str) -> Any:
    """Open (or create) the diskcache at ``directory``; a damaged one is moved aside first.

    ``what`` names the store in the warning ("HTTP cache", "robots store"). Errors that are
    not damage (a locked or unreadable database, a missing permission) are raised as they are.
    """
    try:
        return diskcache.Cache(str(directory))
    except sqlite3.DatabaseError as exc:
        # OperationalError is "locked", "unable to open": the file may be fine, so keep it.
        if isinstance(exc, sqlite3.OperationalError):
            raise
        stamp = time.strftime("%Y%m%dT%H%M%S")
        aside = directory.with_name(f"{directory.name}.damaged-{stamp}")
        number = 1
        while aside.exists():  # damaged twice within a second: keep both
            number += 1
            aside = directory.with_name(f"{directory.name}.damaged-{stamp}-{number}")
        directory.rename(aside)
        _log.warning(
            "the %s at %s was damaged (%s); moved it to %s and started an empty one",
            what,
            directory,
            exc,
            aside,
        )
        return diskcache.Cache(str(directory))
