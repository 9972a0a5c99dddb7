"""Provenance columns: names, order and types fixed by the archive contract (docs/archive.md)."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta, timezone

import pyarrow as pa
import pytest

from harvester import __version__
from harvester.run.provenance import RowSource, with_provenance
from harvester.timestamps import rfc3339

SOURCE = RowSource(
    source_url="http://127.0.0.1:8650/seasons/2026/players.html",
    final_url="http://127.0.0.1:8650/seasons/2026/players.html",
    captured_at=datetime(2026, 12, 1, 23, 0, 0, 123456, tzinfo=timezone(timedelta(hours=1))),
    capture_origin="live",
    http_status=200,
    body_sha256="ab" * 32,
    recipe="league-players",
    recipe_sha256="cd" * 32,
    table_selector="table#players",
)


def test_columns_are_appended_in_order_with_their_types() -> None:
    data = pa.table({"player": ["Lea Varn", "Osk Belund"], "goals": [12, 7]})
    table = with_provenance(data, SOURCE, [3, 5])
    assert table.column_names == [
        "player",
        "goals",
        "_source_url",
        "_final_url",
        "_captured_at",
        "_capture_origin",
        "_memento_datetime",
        "_http_status",
        "_body_sha256",
        "_recipe",
        "_recipe_sha256",
        "_harvester_version",
        "_table_selector",
        "_source_row",
        "_warc_record_id",
    ]
    assert table.schema.field("_captured_at").type == pa.timestamp("us", tz="UTC")
    # 23:00:00.123456 at UTC+1 is 22:00:00.123456 UTC.
    assert table.column("_captured_at")[0].as_py() == datetime(2026, 12, 1, 22, 0, 0, 123456, UTC)
    assert table.column("_memento_datetime").null_count == 2
    assert table.column("_source_row").to_pylist() == [3, 5]
    assert table.column("_warc_record_id").null_count == 2  # no snapshot archive kept the body
    assert set(table.column("_harvester_version").to_pylist()) == {__version__}


def test_row_numbers_must_match_the_rows() -> None:
    with pytest.raises(ValueError, match="2 rows but 1"):
        with_provenance(pa.table({"a": [1, 2]}), SOURCE, [0])


def test_rfc3339_is_utc_with_z_and_microseconds() -> None:
    # RFC 3339 §5.6: time-offset "Z"; REFERENCES §8.1 practice: always UTC, microseconds.
    moment = datetime(2026, 12, 1, 21, 48, 23, 915511, tzinfo=timezone(timedelta(hours=-5)))
    assert rfc3339(moment) == "2026-12-02T02:48:23.915511Z"
