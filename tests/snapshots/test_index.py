"""The Parquet index files and the in-memory lookups, read back by pyarrow, DuckDB and polars.

The schema is harvester's own design (entry.py); atomic replacement follows POSIX rename()
(REFERENCES §7.3). Expected rows are written out by hand below.
"""

from __future__ import annotations

from dataclasses import replace
from datetime import UTC, datetime, timedelta
from pathlib import Path

import duckdb
import polars
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from harvester.errors import StoreError
from harvester.snapshots.entry import IndexEntry
from harvester.snapshots.index import (
    SnapshotIndex,
    index_path,
    read_index_file,
    write_index_file,
)

T = datetime(2026, 3, 1, 12, 0, 0, 250000, tzinfo=UTC)
URL_A = "http://127.0.0.1:8650/a.html"
URL_B = "http://127.0.0.1:8650/b.html"


def entry(url: str, hours: float, record: str, **changes: object) -> IndexEntry:
    base = IndexEntry(
        url=url,
        date=T + timedelta(hours=hours),
        record_type="response",
        profile="",
        status=200,
        payload_digest=f"sha1:{record.upper()}",
        body_sha256=f"{record}" * 4,
        file="one.warc.gz",
        offset=100 * len(record),
        length=77,
        record_id=f"<urn:uuid:{record}>",
        payload_record_id=f"<urn:uuid:{record}>",
        origin="live",
    )
    return replace(base, **changes)  # type: ignore[arg-type]


ENTRIES = [
    entry(URL_B, 2, "b2"),
    entry(URL_A, 3, "a3", memento_datetime=T - timedelta(days=400), origin="web-archive"),
    entry(URL_A, 1, "a1"),
    entry(URL_A, 2, "a2", record_type="revisit", payload_record_id="<urn:uuid:a1>",
          profile="http://netpreserve.org/warc/1.1/revisit/identical-payload-digest",
          payload_digest="sha1:A1", body_sha256="a1a1a1a1"),
]  # fmt: skip


def test_an_index_file_round_trips_sorted_by_url_and_date(tmp_path: Path) -> None:
    path = index_path(tmp_path, "one.warc.gz")
    assert path == tmp_path / "index" / "one.warc.gz.parquet"
    write_index_file(ENTRIES, path)
    assert sorted(read_index_file(path), key=lambda e: e.record_id) == sorted(
        ENTRIES, key=lambda e: e.record_id
    )
    ids = pq.read_table(path).column("record_id").to_pylist()
    assert ids == ["<urn:uuid:a1>", "<urn:uuid:a2>", "<urn:uuid:a3>", "<urn:uuid:b2>"]
    assert [p.name for p in path.parent.iterdir()] == [path.name]  # no temporary file left


def test_the_schema_is_the_entry_fields_with_declared_types(tmp_path: Path) -> None:
    path = tmp_path / "x.parquet"
    write_index_file(ENTRIES, path)
    schema = pq.read_schema(path)
    assert schema.names == [
        "url", "date", "record_type", "profile", "status", "payload_digest", "body_sha256",
        "file", "offset", "length", "record_id", "payload_record_id", "origin",
        "memento_datetime",
    ]  # fmt: skip
    assert schema.field("date").type == pa.timestamp("us", tz="UTC")
    assert schema.field("memento_datetime").type == pa.timestamp("us", tz="UTC")
    assert schema.field("status").type == pa.int32()
    assert schema.field("offset").type == pa.int64() == schema.field("length").type
    assert schema.field("url").type == pa.string()
    assert schema.field("memento_datetime").nullable and not schema.field("url").nullable


def test_other_tools_read_the_index_folder_without_harvester(tmp_path: Path) -> None:
    write_index_file(ENTRIES[:2], index_path(tmp_path, "one.warc.gz"))
    write_index_file(ENTRIES[2:], index_path(tmp_path, "two.warc.gz"))
    pattern = str(tmp_path / "index" / "*.parquet")
    query = f"SELECT record_id, date, status, memento_datetime FROM read_parquet('{pattern}')"
    relation = duckdb.sql(query + " ORDER BY record_id")
    assert relation is not None
    by_duckdb = sorted(relation.fetchall())
    frame = polars.read_parquet(pattern).sort("record_id")
    by_polars = list(frame.select("record_id", "date", "status", "memento_datetime").iter_rows())
    assert [row[0] for row in by_duckdb] == ["<urn:uuid:a1>", "<urn:uuid:a2>",
                                            "<urn:uuid:a3>", "<urn:uuid:b2>"]  # fmt: skip
    assert len(by_duckdb) == len(by_polars) == 4
    for ours, theirs in zip(by_duckdb, by_polars, strict=True):
        assert ours[0] == theirs[0] and ours[2] == theirs[2] == 200
        assert ours[1].astimezone(UTC) == theirs[1].astimezone(UTC)  # the same instant
    a3 = next(row for row in by_polars if row[0] == "<urn:uuid:a3>")
    assert a3[3].astimezone(UTC) == T - timedelta(days=400)
    assert by_polars[0][1].astimezone(UTC) == T + timedelta(hours=1)  # microseconds kept


@pytest.mark.parametrize(
    ("content", "says"),
    [(b"not parquet at all", "damaged or unreadable"), (b"PAR1" + b"\0" * 20, "damaged")],
)
def test_a_damaged_index_file_is_one_clear_error(tmp_path: Path, content: bytes, says: str) -> None:
    path = tmp_path / "index" / "x.warc.gz.parquet"
    path.parent.mkdir()
    path.write_bytes(content)
    with pytest.raises(StoreError) as caught:
        read_index_file(path)
    assert str(path) in caught.value.message and says in caught.value.message
    assert "reindex" in caught.value.hint and "\n" not in str(caught.value)
    with pytest.raises(StoreError):
        SnapshotIndex.load(tmp_path)


def test_a_truncated_index_file_and_a_missing_column_are_refused(tmp_path: Path) -> None:
    good = tmp_path / "good.parquet"
    write_index_file(ENTRIES, good)
    cut = tmp_path / "cut.parquet"
    cut.write_bytes(good.read_bytes()[:-40])
    with pytest.raises(StoreError, match=r"cut\.parquet"):
        read_index_file(cut)
    narrow = tmp_path / "narrow.parquet"
    pq.write_table(pq.read_table(good).drop_columns(["offset"]), narrow)
    with pytest.raises(StoreError, match=r"lacks columns \['offset'\]"):
        read_index_file(narrow)


def test_a_missing_index_folder_is_an_empty_index(tmp_path: Path) -> None:
    index = SnapshotIndex.load(tmp_path)
    assert len(index) == 0 and index.latest(URL_A) is None and index.entries() == []


def test_load_reads_every_index_file(tmp_path: Path) -> None:
    write_index_file(ENTRIES[:2], index_path(tmp_path, "one.warc.gz"))
    write_index_file(ENTRIES[2:], index_path(tmp_path, "two.warc.gz"))
    (tmp_path / "index" / ".half.parquet.inprogress").write_bytes(b"junk")  # never read
    index = SnapshotIndex.load(tmp_path)
    assert len(index) == 4
    assert [e.record_id for e in index.entries()] == [
        "<urn:uuid:a1>", "<urn:uuid:a2>", "<urn:uuid:b2>", "<urn:uuid:a3>"
    ]  # fmt: skip


def test_lookups_by_url_and_date() -> None:
    index = SnapshotIndex(ENTRIES)
    assert [e.record_id for e in index.for_url(URL_A)] == [
        "<urn:uuid:a1>", "<urn:uuid:a2>", "<urn:uuid:a3>"
    ]  # fmt: skip
    assert index.latest(URL_A) == ENTRIES[1] and index.latest("http://x/") is None
    assert index.nearest(URL_A, T) == ENTRIES[2]  # before the first
    assert index.nearest(URL_A, T + timedelta(hours=9)) == ENTRIES[1]  # after the last
    assert index.nearest(URL_A, T + timedelta(hours=2.4)) == ENTRIES[3]
    assert index.nearest(URL_A, T + timedelta(hours=2.6)) == ENTRIES[1]
    # Half-way between two entries: the earlier one (RFC 7089 leaves ties open; our choice).
    assert index.nearest(URL_A, T + timedelta(hours=1.5)) == ENTRIES[2]
    assert index.nearest(URL_A, T + timedelta(hours=2)) == ENTRIES[3]  # exact
    assert index.nearest("http://x/", T) is None
    assert index.urls() == [URL_A, URL_B]


def test_nearest_among_equal_dates_takes_the_first_added() -> None:
    twin = entry(URL_A, 1, "a1bis")
    index = SnapshotIndex([ENTRIES[2], twin, ENTRIES[1]])
    assert index.nearest(URL_A, T + timedelta(hours=1.1)) == ENTRIES[2]
    assert index.latest(URL_A) == ENTRIES[1]


def test_lookups_by_record_and_payload() -> None:
    index = SnapshotIndex(ENTRIES)
    assert index.record("<urn:uuid:a2>") == ENTRIES[3] and index.record("<nope>") is None
    assert index.by_sha256("a1a1a1a1") == ENTRIES[2]  # the response, not the revisit
    assert index.by_payload_digest("sha1:A1") == ENTRIES[2]
    assert index.by_sha256("") is None and index.by_payload_digest("") is None
    later = entry(URL_B, 5, "a1", record_id="<urn:uuid:later>")
    index.add(later)
    assert index.by_sha256("a1a1a1a1") == ENTRIES[2]  # the first stays the first
    earlier = entry(URL_B, -5, "a1", record_id="<urn:uuid:earlier>")
    index.add(earlier)
    assert index.by_payload_digest("sha1:A1") == earlier
    assert index.entries()[0] == earlier  # added last, ordered by date all the same


def test_select_for_listings() -> None:
    index = SnapshotIndex(ENTRIES)
    assert index.select() == index.entries()
    assert [e.record_id for e in index.select(url_contains="b.html")] == ["<urn:uuid:b2>"]
    window = index.select(since=T + timedelta(hours=2), until=T + timedelta(hours=3))
    assert [e.record_id for e in window] == ["<urn:uuid:a2>", "<urn:uuid:b2>"]  # until excluded
    assert index.select(url_contains="a.html", since=T + timedelta(hours=2.5)) == [ENTRIES[1]]
