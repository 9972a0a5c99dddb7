"""Row provenance: where and when every row came from, one value per row.

The columns' names and types are the archive's contract (``harvester.store.contract``). They are
filled in by the run, which knows the capture, the recipe and the extraction; the store only
checks them.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime

import pyarrow as pa

from harvester._version import __version__
from harvester.store.contract import PROVENANCE_FIELDS

__all__ = ["RowSource", "with_provenance"]


@dataclass(frozen=True)
class RowSource:
    """Everything the provenance columns say, for the rows of one extracted table."""

    source_url: str
    final_url: str
    captured_at: datetime
    capture_origin: str
    http_status: int
    body_sha256: str
    recipe: str
    recipe_sha256: str
    table_selector: str
    memento_datetime: datetime | None = None
    warc_record_id: str | None = None  # the snapshot archive's record of the body, if kept


def with_provenance(data: pa.Table, source: RowSource, source_rows: list[int]) -> pa.Table:
    """``data`` with the provenance columns appended, in the archive's order and types."""
    rows = data.num_rows
    if len(source_rows) != rows:
        raise ValueError(f"{rows} rows but {len(source_rows)} source row numbers")
    values = {
        "_source_url": source.source_url,
        "_final_url": source.final_url,
        "_captured_at": source.captured_at.astimezone(UTC),
        "_capture_origin": source.capture_origin,
        "_memento_datetime": (
            source.memento_datetime.astimezone(UTC) if source.memento_datetime else None
        ),
        "_http_status": source.http_status,
        "_body_sha256": source.body_sha256,
        "_recipe": source.recipe,
        "_recipe_sha256": source.recipe_sha256,
        "_harvester_version": __version__,
        "_table_selector": source.table_selector,
        "_warc_record_id": source.warc_record_id,
    }
    table = data
    for field in PROVENANCE_FIELDS:
        if field.name == "_source_row":
            column = pa.array(source_rows, type=field.type)
        else:
            column = pa.array([values[field.name]] * rows, type=field.type)
        table = table.append_column(field, column)
    return table
