"""Writing the snapshot archive's WARC files: request, response and revisit records, warcinfo.

Every record is its own gzip member (WARC 1.1 Annex D.2, "record-at-time compression"), so a
reader can seek to any record's offset. warcio writes the records and sets ``WARC-Block-Digest``
and ``WARC-Payload-Digest``; the request and the response of one exchange point at each other
with ``WARC-Concurrent-To`` (WARC 1.1 §5.7). A response whose payload this writer already stored
becomes a ``revisit`` record with the identical-payload-digest profile (WARC 1.1 §6.7.2) that
refers to the original.

The payload kept is the body harvester read — after Content-Encoding, the bytes ``_body_sha256``
hashes — so ``Content-Encoding``, ``Transfer-Encoding`` and ``Content-Length`` are not copied from
the answer: the kept HTTP headers describe the kept payload.

A file is written as ``<name>.warc.gz.open`` and renamed to ``<name>.warc.gz`` when it is closed
(POSIX rename()); a crashed run leaves only ``.open`` files, which readers do not take as
complete. Names start with the UTC time the file was opened, so they sort by time. A file is
closed and a new one begun before it would grow past ``max_file_bytes``.
"""

from __future__ import annotations

import io
import os
import uuid
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from http import HTTPStatus
from pathlib import Path
from typing import IO, Any

from warcio.statusandheaders import StatusAndHeaders
from warcio.warcwriter import WARCWriter

from harvester._version import __version__
from harvester.fetch.capture import Capture

__all__ = ["OPEN_SUFFIX", "WARC_SUFFIX", "StoredRecord", "WarcSnapshotWriter"]

WARC_SUFFIX = ".warc.gz"
OPEN_SUFFIX = ".open"  # a file still being written, or left by a crash: not complete
_NOT_KEPT = frozenset({"content-encoding", "transfer-encoding", "content-length"})


@dataclass(frozen=True)
class StoredRecord:
    """Where one response (or revisit) record was written, for the index and the rows."""

    record_id: str  # this record's WARC-Record-ID
    payload_record_id: str  # the record holding the payload: itself, or a revisit's original
    file: str  # the file's final name (without .open)
    offset: int  # where the record's gzip member starts
    length: int  # the member's length in bytes
    payload_digest: str  # WARC-Payload-Digest as written (sha1:BASE32)
    revisit: bool


def _warc_date(moment: datetime) -> str:
    """WARC-Date in W3C profile of ISO 8601 with microseconds (WARC 1.1 §5.4 allows a fraction)."""
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def _record_id() -> str:
    return f"<urn:uuid:{uuid.uuid4()}>"  # WARC 1.1 §5.2: a URI in angle brackets


class WarcSnapshotWriter:
    """Appends exchanges to rotating WARC files in ``folder``; use it as a context manager."""

    def __init__(
        self, folder: Path, *, info: Mapping[str, str], max_file_bytes: int = 1_000_000_000
    ) -> None:
        self.folder = folder
        self.info = dict(info)  # what wrote the files: recipe, run id, contact …
        self.max_file_bytes = max_file_bytes
        self._out: IO[bytes] | None = None
        self._writer: Any = None
        self._name = ""
        self._serial = 0
        self._seen: dict[str, tuple[str, str, str]] = {}  # digest → (record id, uri, date)

    def __enter__(self) -> WarcSnapshotWriter:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def write(self, capture: Capture, request_headers: Sequence[tuple[str, str]]) -> StoredRecord:
        """Keep one exchange: a request record, then a response (or revisit) record."""
        if self._out is not None and self._out.tell() >= self.max_file_bytes:
            self._finish_file()
        if self._out is None:
            self._start_file()
        date = _warc_date(capture.fetched_at)
        response_id, request_id = _record_id(), _record_id()
        response = self._response(capture, date, response_id, request_id)
        start = self._write(response)
        length = self._out.tell() - start  # type: ignore[union-attr]
        self._write(self._request(capture, request_headers, date, request_id, response_id))
        digest = response.rec_headers.get_header("WARC-Payload-Digest")
        original = self._seen.get(digest)
        if original is None:
            self._seen[digest] = (response_id, capture.final_url, date)
        payload_id = original[0] if original else response_id
        return StoredRecord(
            response_id, payload_id, self._name, start, length, digest, original is not None
        )

    def close(self) -> None:
        """Finish the current file: it gets its final name only now."""
        if self._out is not None:
            self._finish_file()

    def _response(self, capture: Capture, date: str, record_id: str, request_id: str) -> Any:
        kept = [(k, v) for k, v in capture.headers if k.lower() not in _NOT_KEPT]
        kept.append(("Content-Length", str(len(capture.body))))
        http = StatusAndHeaders(_status_line(capture.status), kept, protocol="HTTP/1.1")
        headers = {
            "WARC-Record-ID": record_id,
            "WARC-Date": date,
            "WARC-Concurrent-To": request_id,
        }
        digest = self._writer._create_digester()  # warcio's own digest, to find a repeat
        digest.update(capture.body)
        original = self._seen.get(str(digest))
        if original is not None:
            refers_id, refers_uri, refers_date = original
            headers["WARC-Refers-To"] = refers_id  # WARC 1.1 §5.11
            record = self._writer.create_revisit_record(
                capture.final_url, str(digest), refers_uri, refers_date,
                http_headers=http, warc_headers_dict=headers,
            )  # fmt: skip
            return record
        return self._writer.create_warc_record(
            capture.final_url, "response", payload=io.BytesIO(capture.body),
            length=len(capture.body),  # known: warcio then needs no temporary copy
            http_headers=http, warc_headers_dict=headers,
        )  # fmt: skip

    def _request(
        self,
        capture: Capture,
        request_headers: Sequence[tuple[str, str]],
        date: str,
        record_id: str,
        response_id: str,
    ) -> Any:
        target = capture.final_url.split("://", 1)[-1].partition("/")[2]
        http = StatusAndHeaders(
            f"GET /{target} HTTP/1.1", list(request_headers), is_http_request=True
        )
        headers = {
            "WARC-Record-ID": record_id,
            "WARC-Date": date,
            "WARC-Concurrent-To": response_id,
        }
        return self._writer.create_warc_record(
            capture.final_url, "request", http_headers=http, warc_headers_dict=headers
        )

    def _write(self, record: Any) -> int:
        assert self._out is not None
        start = self._out.tell()
        self._writer.write_record(record)
        return start

    def _start_file(self) -> None:
        self.folder.mkdir(parents=True, exist_ok=True)
        self._serial += 1
        opened = datetime.now(UTC).strftime("%Y%m%d%H%M%S%f")
        self._name = f"harvester-{opened}-{os.getpid()}-{self._serial:05d}{WARC_SUFFIX}"
        self._out = open(self.folder / (self._name + OPEN_SUFFIX), "xb")  # noqa: SIM115
        self._writer = WARCWriter(self._out, gzip=True, warc_version="1.1")
        fields = {"software": f"harvester/{__version__}", "format": "WARC File Format 1.1"}
        info = self._writer.create_warcinfo_record(self._name, {**fields, **self.info})
        self._writer.write_record(info)

    def _finish_file(self) -> None:
        assert self._out is not None
        self._out.flush()
        os.fsync(self._out.fileno())
        self._out.close()
        os.replace(self.folder / (self._name + OPEN_SUFFIX), self.folder / self._name)
        self._out, self._writer = None, None


def _status_line(status: int) -> str:
    try:
        return f"{status} {HTTPStatus(status).phrase}"
    except ValueError:
        return f"{status} Unknown"
