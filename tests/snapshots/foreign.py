"""WARC files for the read side's tests, written by warcio's own ``WARCWriter``, not by ours.

The reader is checked against another tool's output: each helper writes one record with warcio
(its defaults: one gzip member per record, SHA-1 base32 digests), with the fields the test names.
Digests the tests expect are computed here with hashlib, independently of both writers.
"""

from __future__ import annotations

import base64
import hashlib
import io
import uuid
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from warcio.statusandheaders import StatusAndHeaders
from warcio.warcwriter import WARCWriter

__all__ = [
    "NOT_MODIFIED_1_1",
    "NOT_MODIFIED_ANNEX_B",
    "SAME_PAYLOAD_1_0",
    "SAME_PAYLOAD_1_1",
    "T0",
    "ForeignWarc",
    "sha1_digest",
    "warc_file",
]

T0 = datetime(2026, 3, 1, 12, 0, 0, tzinfo=UTC)
# WARC 1.1 §6.7.2 / §6.7.3, 1.0's spelling, and Annex B.6's spelling without "/revisit/".
SAME_PAYLOAD_1_1 = "http://netpreserve.org/warc/1.1/revisit/identical-payload-digest"
SAME_PAYLOAD_1_0 = "http://netpreserve.org/warc/1.0/revisit/identical-payload-digest"
NOT_MODIFIED_1_1 = "http://netpreserve.org/warc/1.1/revisit/server-not-modified"
NOT_MODIFIED_ANNEX_B = "http://netpreserve.org/warc/1.1/server-not-modified"


def sha1_digest(body: bytes) -> str:
    """WARC-Payload-Digest as warcio writes it: sha1 in base32 (WARC 1.1 §5.9, common form)."""
    return "sha1:" + base64.b32encode(hashlib.sha1(body).digest()).decode()


def _date(moment: datetime) -> str:
    return moment.strftime("%Y-%m-%dT%H:%M:%S.%fZ")  # WARC 1.1 §5.4


class ForeignWarc:
    """Writes records into one open file with warcio; each method returns the record's id."""

    def __init__(self, out: Any, version: str = "1.1") -> None:
        self.out = out
        self.writer = WARCWriter(out, gzip=True, warc_version=version)

    def _id(self) -> str:
        return f"<urn:uuid:{uuid.uuid4()}>"  # WARC 1.1 §5.2

    def warcinfo(self) -> str:
        record = self.writer.create_warcinfo_record("test.warc.gz", {"software": "warcio test"})
        self.writer.write_record(record)
        return str(record.rec_headers.get_header("WARC-Record-ID"))

    def response(
        self,
        url: str,
        body: bytes,
        *,
        status: str = "200 OK",
        headers: Sequence[tuple[str, str]] = (("Content-Type", "text/html"),),
        date: datetime = T0,
    ) -> str:
        http = StatusAndHeaders(
            status, [*headers, ("Content-Length", str(len(body)))], protocol="HTTP/1.1"
        )
        record_id = self._id()
        fields = {"WARC-Record-ID": record_id, "WARC-Date": _date(date)}
        record = self.writer.create_warc_record(
            url, "response", payload=io.BytesIO(body), length=len(body),
            http_headers=http, warc_headers_dict=fields,
        )  # fmt: skip
        self.writer.write_record(record)
        return record_id

    def revisit(
        self,
        url: str,
        body_of_original: bytes,
        *,
        profile: str = SAME_PAYLOAD_1_1,
        refers_to: str | None = None,
        status: str | None = "200 OK",
        headers: Sequence[tuple[str, str]] = (("Content-Type", "text/html"),),
        date: datetime = T0,
    ) -> str:
        record_id = self._id()
        fields = {"WARC-Record-ID": record_id, "WARC-Date": _date(date)}
        if refers_to is not None:
            fields["WARC-Refers-To"] = refers_to  # WARC 1.1 §5.11
        http = None
        if status is not None:
            http = StatusAndHeaders(status, list(headers), protocol="HTTP/1.1")
            fields["WARC-Truncated"] = "length"  # WARC 1.1 §6.7.2: headers kept
        record = self.writer.create_revisit_record(
            url, sha1_digest(body_of_original), url, _date(T0),
            http_headers=http, warc_headers_dict=fields,
        )  # fmt: skip
        record.rec_headers.replace_header("WARC-Profile", profile)
        self.writer.write_record(record)
        return record_id

    def request(self, url: str) -> str:
        http = StatusAndHeaders("GET / HTTP/1.1", [("Host", "127.0.0.1")], is_http_request=True)
        record_id = self._id()
        fields = {"WARC-Record-ID": record_id, "WARC-Date": _date(T0)}
        record = self.writer.create_warc_record(
            url, "request", http_headers=http, warc_headers_dict=fields
        )
        self.writer.write_record(record)
        return record_id


@contextmanager
def warc_file(path: Path, version: str = "1.1") -> Iterator[ForeignWarc]:
    """A WARC file at ``path`` written by warcio, closed when the block ends."""
    path.parent.mkdir(parents=True, exist_ok=True)
    with open(path, "wb") as out:
        yield ForeignWarc(out, version)
