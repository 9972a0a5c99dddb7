"""Indexing WARC files that warcio wrote (foreign.py), resolving revisits, and reindexing.

Citations: WARC 1.1 (ISO 28500:2017, IIPC text) and RFC 7089; expected values are written out
by hand or computed with hashlib, never with the code under test.
"""

from __future__ import annotations

import gzip
import hashlib
import io
from datetime import UTC, datetime
from pathlib import Path

import pytest
from warcio.archiveiterator import ArchiveIterator

from harvester.errors import StoreError
from harvester.snapshots.index import SnapshotIndex, index_path, read_index_file
from harvester.snapshots.members import iter_members
from harvester.snapshots.scan import (
    index_missing,
    parse_warc_date,
    reindex,
    resolve,
    revisit_kind,
    scan_warc,
)
from tests.snapshots.foreign import (
    NOT_MODIFIED_1_1,
    NOT_MODIFIED_ANNEX_B,
    SAME_PAYLOAD_1_0,
    SAME_PAYLOAD_1_1,
    T0,
    sha1_digest,
    warc_file,
)

SITE = "http://127.0.0.1:8650"
BODY = b"<table><tr><td>1</td></tr></table>"


def offsets_by_warcio(path: Path) -> dict[str, tuple[int, int]]:
    """Record id → (offset, length) as warcio's own iterator reports them."""
    found = {}
    with path.open("rb") as stream:
        records = ArchiveIterator(stream)
        for record in records:
            record.content_stream().read()
            key = record.rec_headers.get_header("WARC-Record-ID")
            found[key] = (records.get_record_offset(), records.get_record_length())
    return found


def test_responses_and_revisits_get_entries_with_warcio_offsets(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.warcinfo()
        warc.request(f"{SITE}/t.html")
        first = warc.response(f"{SITE}/t.html", BODY)
        missing = warc.response(f"{SITE}/gone.html", b"no", status="404 Not Found")
        again = warc.revisit(f"{SITE}/t.html", BODY, refers_to=first)
    entries = scan_warc(path)
    assert [e.record_id for e in entries] == [first, missing, again]  # no request, warcinfo
    warcio_says = offsets_by_warcio(path)
    for found in entries:
        assert (found.offset, found.length) == warcio_says[found.record_id]
        assert found.file == "a.warc.gz" and found.origin == "live"
        assert found.date == T0 and found.memento_datetime is None  # WARC 1.1 §5.4
    response, gone, revisit = entries
    assert (response.url, response.status, response.record_type) == (
        f"{SITE}/t.html", 200, "response"
    )  # fmt: skip
    assert response.body_sha256 == hashlib.sha256(BODY).hexdigest()
    assert response.payload_digest == sha1_digest(BODY)  # WARC 1.1 §5.9
    assert response.payload_record_id == first and response.profile == ""
    assert gone.status == 404 and gone.body_sha256 == hashlib.sha256(b"no").hexdigest()
    # Before resolving, a revisit knows its original by WARC-Refers-To only (WARC 1.1 §5.11).
    assert revisit.record_type == "revisit" and revisit.profile == SAME_PAYLOAD_1_1
    assert revisit.payload_record_id == first and revisit.body_sha256 == ""
    (resolved,) = [e for e in resolve(entries, SnapshotIndex(entries)) if e.record_id == again]
    assert resolved.body_sha256 == hashlib.sha256(BODY).hexdigest()
    assert scan_warc(path, name="other.warc.gz")[0].file == "other.warc.gz"


@pytest.mark.parametrize(
    ("profile", "kind", "status"),
    [
        (SAME_PAYLOAD_1_1, "identical-payload-digest", "200 OK"),  # WARC 1.1 §6.7.2
        (SAME_PAYLOAD_1_0, "identical-payload-digest", "200 OK"),  # WARC 1.0 spelling
        (NOT_MODIFIED_1_1, "server-not-modified", "304 Not Modified"),  # WARC 1.1 §6.7.3
        (NOT_MODIFIED_ANNEX_B, "server-not-modified", "304 Not Modified"),  # Annex B.6
    ],
)
def test_both_revisit_profiles_in_every_spelling(
    tmp_path: Path, profile: str, kind: str, status: str
) -> None:
    assert revisit_kind(profile) == kind  # REFERENCES §5.6: readers accept all spellings
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        first = warc.response(f"{SITE}/t.html", BODY)
        again = warc.revisit(f"{SITE}/t.html", BODY, profile=profile, refers_to=first,
                             status=status)  # fmt: skip
    entries = scan_warc(path)
    revisit = resolve(entries, SnapshotIndex(entries))[1]
    assert revisit.record_id == again and revisit.profile == profile
    assert revisit.status == int(status[:3])
    assert revisit.payload_record_id == first
    assert revisit.body_sha256 == hashlib.sha256(BODY).hexdigest()


def test_a_revisit_profile_not_recognised_is_not_interpreted(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/t.html", BODY)
        warc.revisit(f"{SITE}/t.html", BODY, profile="http://example.org/my-own-profile")
    assert [e.record_type for e in scan_warc(path)] == ["response"]  # WARC 1.1 §6.7.1


def test_revisits_without_refers_to(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        first = warc.response(f"{SITE}/t.html", BODY)
        same = warc.revisit(f"{SITE}/other.html", BODY)  # §6.7.2: URIs may differ
        not_modified = warc.revisit(f"{SITE}/t.html", BODY, profile=NOT_MODIFIED_1_1,
                                    status="304 Not Modified")  # fmt: skip
        orphan = warc.revisit(f"{SITE}/t.html", b"never stored")
    entries = scan_warc(path)
    found = {e.record_id: e for e in resolve(entries, SnapshotIndex(entries))}
    # Identical payload digest: the first response with that WARC-Payload-Digest.
    assert found[same].payload_record_id == first
    assert found[same].body_sha256 == hashlib.sha256(BODY).hexdigest()
    # A 304 without WARC-Refers-To names no original: unknown stays "" (entry.py).
    assert (found[not_modified].payload_record_id, found[not_modified].body_sha256) == ("", "")
    assert (found[orphan].payload_record_id, found[orphan].body_sha256) == ("", "")


def test_a_revisit_resolves_across_files_and_through_a_revisit(tmp_path: Path) -> None:
    with warc_file(tmp_path / "1.warc.gz") as warc:
        first = warc.response(f"{SITE}/t.html", BODY)
    with warc_file(tmp_path / "2.warc.gz") as warc:
        middle = warc.revisit(f"{SITE}/t.html", BODY, refers_to=first)
        last = warc.revisit(f"{SITE}/t.html", BODY, refers_to=middle)
    one, two = scan_warc(tmp_path / "1.warc.gz"), scan_warc(tmp_path / "2.warc.gz")
    assert resolve(two, SnapshotIndex(two))[0].body_sha256 == ""  # the original is elsewhere
    resolved = resolve(two, SnapshotIndex([*one, *two]))
    assert [e.payload_record_id for e in resolved] == [first, first]
    assert resolved[1].record_id == last


def test_a_warc_1_0_file_with_angle_brackets_around_the_target_uri(tmp_path: Path) -> None:
    path = tmp_path / "old.warc.gz"
    with warc_file(path, version="1.0") as warc:
        # WARC 1.0's uri rule had <>; readers strip them (common practice). warcio's record
        # loader does it for us; this test fails if that ever stops.
        warc.response(f"<{SITE}/t.html>", BODY)
    (found,) = scan_warc(path)
    assert found.url == f"{SITE}/t.html"
    with path.open("rb") as stream:
        assert next(iter(ArchiveIterator(stream))).rec_headers.protocol == "WARC/1.0"


def test_a_memento_is_marked_web_archive(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/web/2019/t.html", BODY,
                      headers=[("Memento-Datetime", "Sun, 03 Mar 2019 10:20:30 GMT")])  # fmt: skip
    (found,) = scan_warc(path)
    assert found.origin == "web-archive"  # RFC 7089 §2.1.1
    assert found.memento_datetime == datetime(2019, 3, 3, 10, 20, 30, tzinfo=UTC)


def test_warc_dates_with_any_fraction() -> None:
    # WARC 1.1 §5.4: W3CDTF, UTC "Z", a fraction of 1 to 9 digits.
    assert parse_warc_date("2026-01-02T03:04:05Z") == datetime(2026, 1, 2, 3, 4, 5, tzinfo=UTC)
    assert parse_warc_date("2026-01-02T03:04:05.5Z") == datetime(
        2026, 1, 2, 3, 4, 5, 500000, tzinfo=UTC
    )  # fmt: skip
    assert parse_warc_date("2026-01-02T03:04:05.123456789Z") == datetime(
        2026, 1, 2, 3, 4, 5, 123456, tzinfo=UTC
    )  # fmt: skip
    assert parse_warc_date("2026-01-02T03:04:05+01:00") is None  # not UTC
    assert parse_warc_date("2026-02-30T03:04:05Z") is None


def damage_member(path: Path, index: int) -> int:
    """Flip one payload byte of member ``index`` and re-gzip it: gzip fine, digests broken."""
    with path.open("rb") as stream:
        members = list(iter_members(stream))
    target = members[index]
    plain = bytearray(target.data)
    plain[-10] ^= 0x20
    data = path.read_bytes()
    end = target.offset + target.length
    path.write_bytes(data[: target.offset] + gzip.compress(bytes(plain)) + data[end:])
    return target.offset


def test_a_record_failing_its_digest_is_damaged_naming_file_and_offset(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/1.html", BODY)
        warc.response(f"{SITE}/2.html", BODY + b"2")
    offset = damage_member(path, 1)
    with pytest.raises(StoreError) as caught:
        scan_warc(path)
    message = caught.value.message
    assert str(path) in message and f"offset {offset}" in message and "digest" in message
    assert caught.value.hint and "\n" not in str(caught.value)


@pytest.mark.parametrize(
    ("tail", "says"),
    [(b"garbage tail", "no gzip member"), (b"\x1f\x8b\x08\x00\x00", "cut off")],
)
def test_a_garbage_tail_is_damage(tmp_path: Path, tail: bytes, says: str) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/1.html", BODY)
    size = path.stat().st_size
    path.write_bytes(path.read_bytes() + tail)
    with pytest.raises(StoreError, match=f"offset {size}: .*{says}"):
        scan_warc(path)


def test_a_truncated_file_and_a_whole_file_gzip_are_damage(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/1.html", BODY)
        warc.response(f"{SITE}/2.html", BODY)
    plain = b"".join(m.data for m in iter_members(io.BytesIO(path.read_bytes())))
    path.write_bytes(path.read_bytes()[:-7])
    with pytest.raises(StoreError, match="cut off"):
        scan_warc(path)
    path.write_bytes(gzip.compress(plain))  # WARC 1.1 Annex D: not record-at-a-time
    with pytest.raises(StoreError, match="more than one record"):
        scan_warc(path)
    with pytest.raises(StoreError, match="cannot read"):
        scan_warc(tmp_path / "missing.warc.gz")


def archive_with_two_files(root: Path) -> tuple[str, str]:
    with warc_file(root / "warc" / "1.warc.gz") as warc:
        first = warc.response(f"{SITE}/t.html", BODY)
    with warc_file(root / "warc" / "2.warc.gz") as warc:
        again = warc.revisit(f"{SITE}/t.html", BODY, refers_to=first)
    return first, again


def test_reindex_rebuilds_resolves_and_reports(tmp_path: Path) -> None:
    first, again = archive_with_two_files(tmp_path)
    with warc_file(tmp_path / "warc" / "3.warc.gz") as warc:
        warc.response(f"{SITE}/3.html", BODY)
    damage_member(tmp_path / "warc" / "3.warc.gz", 0)
    with warc_file(tmp_path / "warc" / "4.warc.gz.open") as warc:  # a crashed writer's file
        warc.warcinfo()
        warc.response(f"{SITE}/4.html", BODY + b"4")
    stale = index_path(tmp_path, "gone.warc.gz")
    stale.parent.mkdir(parents=True)
    stale.write_bytes(b"whatever")
    report = reindex(tmp_path)
    assert report.salvaged == ("4.warc.gz",)
    assert report.indexed == ("1.warc.gz", "2.warc.gz", "4.warc.gz")
    assert report.entries == 3 and report.removed_index_files == ("gone.warc.gz.parquet",)
    ((name, why),) = report.damaged  # one damaged file does not stop the others
    assert name == "3.warc.gz" and "digest" in why
    assert not stale.exists() and not index_path(tmp_path, "3.warc.gz").exists()
    (revisit,) = read_index_file(index_path(tmp_path, "2.warc.gz"))
    assert revisit.record_id == again and revisit.payload_record_id == first
    assert revisit.body_sha256 == hashlib.sha256(BODY).hexdigest()  # resolved across files
    assert SnapshotIndex.load(tmp_path).latest(f"{SITE}/4.html") is not None


def test_index_missing_indexes_only_files_without_an_index(tmp_path: Path) -> None:
    first, _ = archive_with_two_files(tmp_path)
    assert reindex(tmp_path).indexed == ("1.warc.gz", "2.warc.gz")
    index_path(tmp_path, "2.warc.gz").unlink()
    kept = index_path(tmp_path, "1.warc.gz")
    before = kept.stat().st_mtime_ns, kept.read_bytes()
    report = index_missing(tmp_path)
    assert report.indexed == ("2.warc.gz",) and report.entries == 1
    assert (kept.stat().st_mtime_ns, kept.read_bytes()) == before
    (revisit,) = read_index_file(index_path(tmp_path, "2.warc.gz"))
    assert revisit.payload_record_id == first  # resolved through the loaded index
    assert index_missing(tmp_path).indexed == ()
    assert index_missing(tmp_path / "nowhere").indexed == ()
