"""Reading one stored record by its offset: WARC headers, HTTP status and headers, payload.

The record's gzip member is decompressed whole and checked to hold exactly one WARC record
before warcio parses it with its digests checked, so a cut-off or altered record is reported
as damaged rather than read short.
"""

from __future__ import annotations

import io
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from warcio.archiveiterator import ArchiveIterator
from warcio.exceptions import ArchiveLoadFailed

from harvester.errors import StoreError
from harvester.snapshots.members import DamagedMember, Member, read_member, whole_record

__all__ = ["RecordContent", "http_status", "parse_member", "read_record"]

_DAMAGED = "rebuild the index with `harvester snapshots reindex`, which lists damaged records"


@dataclass(frozen=True)
class RecordContent:
    """What one stored record holds, as read back from its WARC file.

    ``payload`` is the HTTP entity body with any transfer and content coding undone (the bytes
    a capture's body and ``body_sha256`` mean); ``status`` is 0 and ``http_headers`` empty for a
    record that keeps no HTTP headers (an empty revisit, a warcinfo).
    """

    record_type: str  # WARC-Type
    warc_headers: tuple[tuple[str, str], ...]
    status: int
    http_headers: tuple[tuple[str, str], ...]
    payload: bytes = field(repr=False)

    def warc_header(self, name: str) -> str | None:
        """The first value of a WARC header field (names compare case-insensitively)."""
        return _first(self.warc_headers, name)

    def http_header(self, name: str) -> str | None:
        """The first value of an HTTP header field (names compare case-insensitively)."""
        return _first(self.http_headers, name)


def read_record(path: Path, offset: int) -> RecordContent:
    """The record whose gzip member starts at ``offset`` in the WARC file ``path``.

    Raises StoreError naming the file and offset when no whole record starts there, or when it
    is damaged (cut off, corrupt, failing its digests).
    """
    try:
        with open(path, "rb") as stream:
            record, payload = parse_member(read_member(stream, offset))
    except DamagedMember as exc:
        raise StoreError(f"{path}: no whole record at {exc}", hint=_DAMAGED) from None
    except OSError as exc:
        raise StoreError(
            f"{path}: cannot read the WARC file ({exc.strerror or exc})",
            hint="check that the file exists and can be read; the index may be stale",
        ) from None
    http = record.http_headers
    return RecordContent(
        record_type=record.rec_type,
        warc_headers=tuple(record.rec_headers.headers),
        status=http_status(http),
        http_headers=tuple(http.headers) if http is not None else (),
        payload=payload,
    )


def parse_member(member: Member) -> tuple[Any, bytes]:
    """warcio's record in ``member`` and its payload (decoded); DamagedMember when it is not."""
    problem = whole_record(member.data)
    if problem:
        raise DamagedMember(member.offset, problem)
    try:
        records = ArchiveIterator(io.BytesIO(member.data), check_digests=True)
        record = next(iter(records))
        payload = record.content_stream().read()
    except (ArchiveLoadFailed, StopIteration, ValueError, OSError) as exc:
        raise DamagedMember(member.offset, f"warcio cannot parse the record ({exc})") from None
    if record.digest_checker.passed is False:  # WARC 1.1 §5.8, §5.9
        problems = "; ".join(record.digest_checker.problems)
        raise DamagedMember(member.offset, f"the record fails its digest check ({problems})")
    return record, payload


def http_status(http: Any) -> int:
    """The HTTP status code, 0 when the record keeps no HTTP headers (an empty revisit)."""
    if http is None:
        return 0
    try:
        return int(http.get_statuscode())
    except (TypeError, ValueError):
        return 0


def _first(pairs: tuple[tuple[str, str], ...], name: str) -> str | None:
    wanted = name.lower()
    for key, value in pairs:
        if key.lower() == wanted:
            return value
    return None
