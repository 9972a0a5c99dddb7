"""Provenance columns: where and when every row came from, one value per row.

The names and types are the archive's contract (docs/archive.md). They are added by the run
layer, which knows the capture, the recipe and the extraction; the store only checks them.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime

import pyarrow as pa

from harvester._version import __version__

__all__ = ["PROVENANCE_FIELDS", "RowSource", "rfc3339", "with_provenance"]

_UTC_MICROS = pa.timestamp("us", tz="UTC")
PROVENANCE_FIELDS: tuple[pa.Field, ...] = (
    pa.field("_source_url", pa.string()),
    pa.field("_final_url", pa.string()),
    pa.field("_captured_at", _UTC_MICROS),
    pa.field("_capture_origin", pa.string()),
    pa.field("_memento_datetime", _UTC_MICROS),
    pa.field("_http_status", pa.int32()),
    pa.field("_body_sha256", pa.string()),
    pa.field("_recipe", pa.string()),
    pa.field("_recipe_sha256", pa.string()),
    pa.field("_harvester_version", pa.string()),
    pa.field("_table_selector", pa.string()),
    pa.field("_source_row", pa.int32()),
)


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


def rfc3339(moment: datetime) -> str:
    """An aware datetime as RFC 3339 UTC with a ``Z`` and microseconds (RFC 3339 §5.6)."""
    text = moment.astimezone(UTC).isoformat(timespec="microseconds")
    return text.replace("+00:00", "Z")


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
    }
    table = data
    for field in PROVENANCE_FIELDS:
        if field.name == "_source_row":
            column = pa.array(source_rows, type=field.type)
        else:
            column = pa.array([values[field.name]] * rows, type=field.type)
        table = table.append_column(field, column)
    return table
