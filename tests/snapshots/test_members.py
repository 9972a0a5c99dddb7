"""Gzip member walking, checked against warcio's own reader and hand-broken files.

WARC 1.1 Annex D: one gzip member (RFC 1952 §2.2) per record, so member starts are record offsets.
"""

from __future__ import annotations

import gzip
import io
from pathlib import Path

import pytest
from warcio.archiveiterator import ArchiveIterator

from harvester.snapshots.members import DamagedMember, iter_members, read_member, whole_record
from tests.snapshots.foreign import warc_file


def three_records(path: Path) -> None:
    with warc_file(path) as warc:
        warc.warcinfo()
        warc.response("http://127.0.0.1:8650/a", b"<p>a</p>" * 50)
        warc.response("http://127.0.0.1:8650/b", b"<p>b</p>")


def test_member_boundaries_are_the_offsets_warcio_reports(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    three_records(path)
    expected = []
    with path.open("rb") as stream:
        records = ArchiveIterator(stream)
        for record in records:
            record.content_stream().read()
            expected.append((records.get_record_offset(), records.get_record_length()))
    with path.open("rb") as stream:
        found = [(m.offset, m.length) for m in iter_members(stream)]
    assert found == expected and len(found) == 3
    assert sum(length for _, length in found) == path.stat().st_size
    with path.open("rb") as stream:
        for member in iter_members(stream):
            assert whole_record(member.data) == ""  # WARC 1.1 §4: header CRLF block CRLF CRLF


def test_a_cut_off_member_is_damaged_where_it_starts(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    three_records(path)
    with path.open("rb") as stream:
        last = list(iter_members(stream))[-1].offset
    data = path.read_bytes()[:-10]  # the crash case: the last member's end never written
    with pytest.raises(DamagedMember) as caught:
        list(iter_members(io.BytesIO(data)))
    assert caught.value.offset == last and "cut off" in caught.value.reason


def test_garbage_after_the_records_is_not_a_member(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    three_records(path)
    size = path.stat().st_size
    stream = io.BytesIO(path.read_bytes() + b"not gzip at all")
    with pytest.raises(DamagedMember) as caught:
        list(iter_members(stream))
    assert caught.value.offset == size and "no gzip member" in caught.value.reason
    # A gzip-looking tail (magic, then junk): warcio skips it silently, we must not.
    stream = io.BytesIO(path.read_bytes() + b"\x1f\x8b\x08\x00junk")
    with pytest.raises(DamagedMember):
        list(iter_members(stream))


def test_read_member_refuses_an_offset_inside_a_member(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    three_records(path)
    with path.open("rb") as stream:
        with pytest.raises(DamagedMember, match="no gzip member starts here"):
            read_member(stream, 5)
        with pytest.raises(DamagedMember, match="past the end"):
            read_member(stream, path.stat().st_size)


def test_whole_record_names_what_is_wrong() -> None:
    good = b"WARC/1.1\r\nWARC-Type: metadata\r\nContent-Length: 3\r\n\r\nabc\r\n\r\n"
    assert whole_record(good) == ""
    assert "version line" in whole_record(b"HTTP/1.1 200 OK\r\n\r\n")
    assert "never ends" in whole_record(b"WARC/1.1\r\nContent-Length: 3\r\n")
    assert "no Content-Length" in whole_record(b"WARC/1.1\r\nWARC-Type: x\r\n\r\n\r\n\r\n")
    assert "shorter" in whole_record(good[:-6])
    assert "CRLF CRLF" in whole_record(good.replace(b"abc\r\n", b"abcd\n"))
    assert "more than one record" in whole_record(good + good)


def test_a_file_gzipped_whole_is_one_member_holding_several_records(tmp_path: Path) -> None:
    # WARC 1.1 Annex D: a file compressed as a whole is not seekable by record.
    path = tmp_path / "x.warc.gz"
    three_records(path)
    with path.open("rb") as stream:
        plain = b"".join(m.data for m in iter_members(stream))
    (member,) = iter_members(io.BytesIO(gzip.compress(plain)))
    assert "more than one record" in whole_record(member.data)
