"""Walking a ``.warc.gz`` file gzip member by gzip member, checking each holds one whole record.

WARC 1.1 Annex D asks for one gzip member (RFC 1952 §2.2) per record, so a record's offset is a
member's start. warcio's reader is lenient on purpose: it reads a truncated member as a short
record and skips a gzip-looking tail without a word. The archive's integrity checks need the
opposite, so the member boundaries and completeness are decided here, with zlib alone, and
warcio then parses each member's bytes.
"""

from __future__ import annotations

import re
import zlib
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import BinaryIO

__all__ = ["GZIP_MAGIC", "DamagedMember", "Member", "iter_members", "read_member", "whole_record"]

GZIP_MAGIC = b"\x1f\x8b"  # RFC 1952 §2.3.1: ID1 ID2
_CHUNK = 1 << 20
_GZIP_WBITS = 16 + zlib.MAX_WBITS  # zlib reads the gzip wrapper (RFC 1952), not raw deflate
_HEADER_END = b"\r\n\r\n"
_VERSION = re.compile(rb"WARC/1\.[01]\r\n")
_CONTENT_LENGTH = re.compile(rb"\r\ncontent-length:[ \t]*([0-9]+)[ \t]*\r\n", re.IGNORECASE)


class DamagedMember(ValueError):
    """The bytes at ``offset`` are not one complete gzip member holding one whole WARC record."""

    def __init__(self, offset: int, reason: str) -> None:
        reason = " ".join(reason.split())  # library messages may span lines; ours are one
        super().__init__(f"offset {offset}: {reason}")
        self.offset = offset
        self.reason = reason


@dataclass(frozen=True)
class Member:
    """One gzip member of a file: where it starts, its compressed length, what it holds."""

    offset: int
    length: int
    data: bytes = field(repr=False)


def iter_members(stream: BinaryIO, *, start: int = 0) -> Iterator[Member]:
    """The gzip members of ``stream`` from ``start`` to its end; DamagedMember where one breaks.

    Each member is decompressed in full (a record is held in memory once, never a whole file).
    """
    stream.seek(start)
    offset = start
    pending = b""
    while True:
        if len(pending) < len(GZIP_MAGIC):
            pending += stream.read(_CHUNK)
            if not pending:
                return
        member = _one_member(stream, offset, pending)
        yield member[0]
        offset += member[0].length
        pending = member[1]


def read_member(stream: BinaryIO, offset: int) -> Member:
    """The gzip member starting at ``offset``; DamagedMember if none starts there or it breaks."""
    stream.seek(offset)
    pending = stream.read(_CHUNK)
    if not pending:
        raise DamagedMember(offset, "the offset is at or past the end of the file")
    return _one_member(stream, offset, pending)[0]


def _one_member(stream: BinaryIO, offset: int, pending: bytes) -> tuple[Member, bytes]:
    """Decompress the member starting with ``pending``; return it and the bytes read past it."""
    if not pending.startswith(GZIP_MAGIC):
        raise DamagedMember(offset, "no gzip member starts here (not record-at-a-time gzip)")
    inflater = zlib.decompressobj(_GZIP_WBITS)
    parts: list[bytes] = []
    consumed = 0
    while True:
        try:
            parts.append(inflater.decompress(pending))
        except zlib.error as exc:
            raise DamagedMember(offset, f"the gzip data is corrupt ({exc})") from None
        if inflater.eof:
            consumed += len(pending) - len(inflater.unused_data)
            rest = inflater.unused_data
            break
        consumed += len(pending)
        pending = stream.read(_CHUNK)
        if not pending:
            raise DamagedMember(offset, "the gzip member is cut off (the file ends inside it)")
    parts.append(inflater.flush())
    return Member(offset, consumed, b"".join(parts)), rest


def whole_record(data: bytes) -> str:
    """Why ``data`` is not exactly one whole WARC record, or "" when it is (WARC 1.1 §4).

    ``warc-record = header CRLF block CRLF CRLF``: a version line, fields, an empty line, then
    exactly Content-Length octets of block and the two closing CRLFs.
    """
    if not _VERSION.match(data):
        return "it does not begin with a WARC/1.0 or WARC/1.1 version line"
    header_end = data.find(_HEADER_END)
    if header_end < 0:
        return "its WARC header never ends"
    found = _CONTENT_LENGTH.search(data, 0, header_end + 2)
    if found is None:
        return "its WARC header has no Content-Length"
    block_end = header_end + len(_HEADER_END) + int(found.group(1))
    if len(data) < block_end + len(_HEADER_END):
        return "its block is shorter than its Content-Length"
    if data[block_end : block_end + len(_HEADER_END)] != _HEADER_END:
        return "its block does not end with CRLF CRLF where Content-Length says"
    if len(data) > block_end + len(_HEADER_END):
        return "the gzip member holds more than one record (not record-at-a-time gzip)"
    return ""
