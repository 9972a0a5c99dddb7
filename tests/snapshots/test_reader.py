"""Reading one record by offset from files warcio wrote, and refusing bad offsets and damage.

Citations: WARC 1.1 §4 (record model), §5.9 (payload digest), §6.3 (response); RFC 9112 §7.1
(chunked transfer coding).
"""

from __future__ import annotations

import gzip
import io
from pathlib import Path

import pytest

from harvester.errors import StoreError
from harvester.snapshots.members import iter_members
from harvester.snapshots.reader import read_record
from tests.snapshots.foreign import NOT_MODIFIED_1_1, warc_file

SITE = "http://127.0.0.1:8650"
BODY = b"<table><tr><td>1</td></tr></table>"


def offsets(path: Path) -> list[int]:
    with path.open("rb") as stream:
        return [member.offset for member in iter_members(stream)]


def test_a_response_reads_back_whole(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.warcinfo()
        headers = [("Content-Type", "text/html"), ("X-A", "1")]
        record_id = warc.response(f"{SITE}/t.html", BODY, status="201 Created", headers=headers)
    content = read_record(path, offsets(path)[1])
    assert content.record_type == "response"  # WARC 1.1 §6.3
    assert content.warc_header("warc-record-id") == record_id  # names are case-insensitive
    assert content.warc_header("WARC-Target-URI") == f"{SITE}/t.html"
    assert ("WARC-Type", "response") in content.warc_headers
    assert content.status == 201 and content.payload == BODY
    assert content.http_headers[:2] == (("Content-Type", "text/html"), ("X-A", "1"))
    assert content.http_header("content-length") == str(len(BODY))
    info = read_record(path, 0)
    assert info.record_type == "warcinfo" and info.status == 0 and info.http_headers == ()


def test_a_chunked_body_is_served_de_chunked(tmp_path: Path) -> None:
    # RFC 9112 §7.1: the payload a client sees has the chunked framing removed.
    raw = b"5\r\nhello\r\n6\r\n world\r\n0\r\n\r\n"
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/c.html", raw, headers=[("Transfer-Encoding", "chunked")])
    assert read_record(path, 0).payload == b"hello world"


def test_an_empty_revisit_has_no_status(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.revisit(f"{SITE}/t.html", BODY, profile=NOT_MODIFIED_1_1, status=None)
    content = read_record(path, 0)
    assert content.record_type == "revisit" and content.status == 0 and content.payload == b""


def test_a_bad_offset_is_one_clear_error(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/t.html", BODY)
    for offset, says in ((7, "no gzip member starts here"), (10_000, "past the end")):
        with pytest.raises(StoreError) as caught:
            read_record(path, offset)
        assert str(path) in caught.value.message and f"offset {offset}" in caught.value.message
        assert says in caught.value.message and caught.value.hint
    with pytest.raises(StoreError, match="cannot read the WARC file"):
        read_record(tmp_path / "missing.warc.gz", 0)


def test_a_damaged_member_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "a.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/t.html", BODY)
    whole = path.read_bytes()
    path.write_bytes(whole[:-9])
    with pytest.raises(StoreError, match="offset 0: the gzip member is cut off"):
        read_record(path, 0)
    (member,) = iter_members(io.BytesIO(whole))
    altered = member.data.replace(b"<td>1</td>", b"<td>7</td>")  # same length, new bytes
    path.write_bytes(gzip.compress(altered))
    with pytest.raises(StoreError, match="fails its digest check"):  # WARC 1.1 §5.9
        read_record(path, 0)
