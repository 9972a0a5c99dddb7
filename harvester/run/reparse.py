"""Re-extraction from the snapshot archive: a recipe's tables read again, with no network at all.

``reparse`` is a harvest whose pages all come from the newest capture of each planned page in the
archive's own snapshot archive (``StoredSource``, origin ``snapshot-archive``): no robots.txt,
no HTTP cache, no request. Rows keep the captures' ``_body_sha256`` and ``_warc_record_id``; a
table whose data did not change stays the version it was. A planned page with no capture is that
table's ``failed`` line naming the URL, never fetched.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from harvester.errors import StoreError
from harvester.recipe.model import Recipe
from harvester.run.harvest import harvest
from harvester.run.report import Outcome, RunReport
from harvester.run.runs import local_folder
from harvester.snapshots.entry import SNAPSHOTS_DIR
from harvester.snapshots.scan import index_missing
from harvester.snapshots.stored_source import StoredSource

__all__ = ["reparse"]


def reparse(
    recipe: Recipe,
    *,
    archive: str = "archive",
    every_value: bool = False,
    on_outcome: Callable[[Outcome], None] | None = None,
    stop_on_sigterm: bool = False,
) -> RunReport:
    """Extract ``recipe``'s tables again from the snapshot archive of ``archive``."""
    folder = local_folder(archive, SNAPSHOTS_DIR)
    if folder is None:
        raise StoreError(
            f"{archive}: an archive on an object store keeps no snapshot archive to reparse",
            hint="reparse a local archive (the snapshot archive lives in ARCHIVE/snapshots)",
        )
    index_missing(Path(folder))  # what a crashed harvest left becomes readable first
    return harvest(
        recipe,
        archive=archive,
        source=StoredSource.from_archive(Path(folder)),
        snapshots=False,  # every capture already names its record: nothing to keep or look up
        every_value=every_value,
        on_outcome=on_outcome,
        stop_on_sigterm=stop_on_sigterm,
    )
