"""Writing the snapshot archive's WARC files: request, response and revisit records, warcinfo.

Every record is its own gzip member (WARC 1.1 Annex D.2, "record-at-time compression"), so a
reader can seek to any record's offset; members are compressed at zlib level 6 (warcio's own
wrapper uses 9: four times the time for 2 % fewer bytes on the demo's pages, BENCHMARKS.md).
warcio writes the records and sets ``WARC-Block-Digest`` and ``WARC-Payload-Digest``; the
request and the response of one exchange point at each other with ``WARC-Concurrent-To``
(WARC 1.1 §5.7). A response whose payload the index already holds becomes a ``revisit`` record
with the identical-payload-digest profile (WARC 1.1 §6.7.2) that refers to the original; a 304
becomes a revisit with the server-not-modified profile (§6.7.3) that refers to the last stored
payload of its URL, which is the copy the 304 confirmed.

The payload kept is the body harvester read — after Content-Encoding, the bytes ``_body_sha256``
hashes — so ``Content-Encoding``, ``Transfer-Encoding`` and ``Content-Length`` are not copied from
the answer: the kept HTTP headers describe the kept payload.

A file is written as ``<name>.warc.gz.open``, locked while its writer lives (``liveness``), and
renamed to ``<name>.warc.gz`` when it is closed (POSIX rename()), its index file written next to
the others; a crash leaves only an ``.open`` file, which readers do not take as complete and
``salvage`` recovers. Every exchange is flushed to the operating system before ``write``
returns, so a killed process loses at most the exchange it was writing. Names start with the UTC
time the file was opened, so they sort by time; a file is closed and a new one begun before it
would grow past ``max_file_bytes``. A cassette is one such file at a path the user names.
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import os
import uuid
import zlib
from collections.abc import Mapping
from dataclasses import replace
from datetime import UTC, datetime
from http import HTTPStatus
from pathlib import Path
from typing import IO, Any, Protocol
from urllib.parse import urlsplit

from warcio.statusandheaders import StatusAndHeaders
from warcio.warcwriter import WARCWriter

from harvester._version import __version__
from harvester.fetch.capture import header
from harvester.fetch.httpdate import parse_http_date
from harvester.fetch.linkformat import parse_links
from harvester.fetch.transfer import Answer
from harvester.snapshots import liveness
from harvester.snapshots.entry import NOT_MODIFIED_PROFILE, SAME_PAYLOAD_PROFILE, IndexEntry
from harvester.snapshots.index import INDEX_SUFFIX, write_index_file

__all__ = ["OPEN_SUFFIX", "WARC_SUFFIX", "KnownPayloads", "WarcSnapshotWriter"]

WARC_SUFFIX = ".warc.gz"
OPEN_SUFFIX = ".open"  # a file still being written, or left by a crash: not complete
_NOT_KEPT = frozenset({"content-encoding", "transfer-encoding", "content-length"})


GZIP_LEVEL = 6


class _GzipMembers:
    """A file that every record is written to as a gzip member of its own (RFC 1952 §2.2).

    warcio writes a record with ``write`` calls and ends it with ``flush``: the member is
    finished there and the next write begins a new one.
    """

    def __init__(self, out: IO[bytes], level: int = GZIP_LEVEL) -> None:
        self.out = out
        self.level = level
        self._compressor = self._new()

    def _new(self) -> Any:
        return zlib.compressobj(self.level, zlib.DEFLATED, zlib.MAX_WBITS + 16)  # gzip framing

    def write(self, data: bytes) -> int:
        self.out.write(self._compressor.compress(data))
        return len(data)

    def flush(self) -> None:
        self.out.write(self._compressor.flush())
        self._compressor = self._new()


class KnownPayloads(Protocol):
    """What the writer asks of the index: payloads already stored, and what it has written."""

    def by_payload_digest(self, digest: str) -> IndexEntry | None:
        """The first response record holding a payload with this WARC-Payload-Digest."""
        ...

    def for_url(self, url: str) -> list[IndexEntry]:
        """Every entry of one URL, oldest first."""
        ...

    def add(self, entry: IndexEntry) -> None:
        """Take in an entry just written."""
        ...


def _warc_date(moment: datetime) -> str:
    """WARC-Date in W3C profile of ISO 8601 with microseconds (WARC 1.1 §5.4 allows a fraction)."""
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def _record_id() -> str:
    return f"<urn:uuid:{uuid.uuid4()}>"  # WARC 1.1 §5.2: a URI in angle brackets


class WarcSnapshotWriter:
    """Appends exchanges to rotating WARC files in ``folder``; use it as a context manager.

    ``known`` is the index: revisits refer to what it holds, and every entry written is added
    to it. ``index_dir``, when given, receives each closed file's index file (``write_index``).
    ``name``, when given, is the one file's fixed name (a cassette): no rotation then.
    """

    def __init__(
        self,
        folder: Path,
        *,
        info: Mapping[str, str],
        known: KnownPayloads,
        max_file_bytes: int = 1_000_000_000,
        index_dir: Path | None = None,
        name: str | None = None,
    ) -> None:
        self.folder = folder
        self.info = dict(info)  # what wrote the files: recipe, run id, contact …
        self.known = known
        self.max_file_bytes = max_file_bytes
        self.index_dir = index_dir
        self.fixed_name = name
        self.files: list[Path] = []  # every file closed so far
        self._out: IO[bytes] | None = None
        self._writer: Any = None
        self._name = ""
        self._serial = 0
        self._entries: list[IndexEntry] = []  # of the file being written
        self._broken: str | None = None  # why a write failed; nothing is written after it

    def __enter__(self) -> WarcSnapshotWriter:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def write(self, answer: Answer, *, with_request: bool = True) -> IndexEntry:
        """Keep one exchange: a response (or revisit) record, then its request record.

        ``with_request=False`` keeps a response whose request is not known (a copy that came
        from the HTTP cache before the snapshot archive held it). After a failed write (a full
        disk) the writer writes nothing more: the file stays ``.open``, for salvage to cut at
        its last whole record.
        """
        if self._broken is not None:
            raise OSError(f"an earlier write failed ({self._broken})")
        try:
            return self._write_exchange(answer, with_request)
        except OSError as exc:
            self._broken = exc.strerror or str(exc)
            raise

    def _write_exchange(self, answer: Answer, with_request: bool) -> IndexEntry:
        rotate = self.fixed_name is None and self._out is not None
        if rotate and self._out.tell() >= self.max_file_bytes:  # type: ignore[union-attr]
            self._finish_file()
        if self._out is None:
            self._start_file()
        assert self._out is not None
        date = _warc_date(answer.request_time)
        response_id, request_id = _record_id(), _record_id()
        record, entry = self._response(
            answer, date, response_id, request_id if with_request else ""
        )
        start = self._write(record)
        entry = _placed(entry, self._name, start, self._out.tell() - start)
        if with_request:
            self._write(self._request(answer, date, request_id, response_id))
        about = _memento_fields(answer)
        if about:
            self._write(self._memento(answer, date, response_id, about))
        self._out.flush()  # in the operating system's hands: a killed process keeps it
        self._entries.append(entry)
        self.known.add(entry)
        return entry

    def close(self) -> None:
        """Finish the current file: it gets its final name, and its index file, only now."""
        if self._out is None:
            return
        if self._broken is not None:
            out, self._out, self._writer = self._out, None, None
            with contextlib.suppress(OSError):  # what it still holds cannot be written either
                out.close()
            return
        try:
            self._finish_file()
        except OSError as exc:
            self._broken = exc.strerror or str(exc)
            raise

    # -- records -----------------------------------------------------------------------

    def _response(
        self, answer: Answer, date: str, record_id: str, request_id: str
    ) -> tuple[Any, IndexEntry]:
        kept = [(k, v) for k, v in answer.headers if k.lower() not in _NOT_KEPT]
        kept.append(("Content-Length", str(len(answer.body))))
        http = StatusAndHeaders(_status_line(answer.status), kept, protocol="HTTP/1.1")
        headers = {"WARC-Record-ID": record_id, "WARC-Date": date}
        memento = header(answer.headers, "memento-datetime")  # RFC 7089 §2.1.1
        if request_id:
            headers["WARC-Concurrent-To"] = request_id
        entry = IndexEntry(
            url=answer.url,
            date=answer.request_time.astimezone(UTC),
            record_type="response",
            profile="",
            status=answer.status,
            payload_digest="",
            body_sha256=hashlib.sha256(answer.body).hexdigest(),
            file="",
            offset=0,
            length=0,
            record_id=record_id,
            payload_record_id=record_id,
            origin="web-archive" if memento else "live",
            memento_datetime=parse_http_date(memento) if memento else None,
        )
        if answer.status == 304:
            return self._not_modified(answer, http, headers, entry)
        digester = self._writer._create_digester()  # warcio's own digest, to find a repeat
        digester.update(answer.body)
        digest = str(digester)
        original = self.known.by_payload_digest(digest) if answer.body else None
        if original is not None:
            _refer(headers, original)
            headers["WARC-Truncated"] = "length"  # §6.7.2: HTTP headers kept, payload not
            record = self._writer.create_revisit_record(
                answer.url, digest, original.url, _warc_date(original.date),
                http_headers=http, warc_headers_dict=headers,
            )  # fmt: skip
            record.rec_headers.replace_header("WARC-Profile", SAME_PAYLOAD_PROFILE)
            return record, _revisit(entry, SAME_PAYLOAD_PROFILE, digest, original)
        record = self._writer.create_warc_record(
            answer.url, "response", payload=io.BytesIO(answer.body),
            length=len(answer.body),  # known: warcio then needs no temporary copy
            http_headers=http, warc_headers_dict=headers,
        )  # fmt: skip
        return record, replace(entry, payload_digest=digest)

    def _not_modified(
        self, answer: Answer, http: StatusAndHeaders, headers: dict[str, str], entry: IndexEntry
    ) -> tuple[Any, IndexEntry]:
        """A 304 as a server-not-modified revisit of the last payload stored for its URL."""
        original = next(
            (e for e in reversed(self.known.for_url(answer.url)) if e.payload_record_id), None
        )
        headers["WARC-Profile"] = NOT_MODIFIED_PROFILE  # WARC 1.1 §6.7.3
        digest = ""
        if original is not None:
            _refer(headers, original)
            headers["WARC-Refers-To-Target-URI"] = original.url  # §5.12
            headers["WARC-Refers-To-Date"] = _warc_date(original.date)  # §5.13
            digest = original.payload_digest
            if digest:
                headers["WARC-Payload-Digest"] = digest  # §5.9: may describe data not stored here
        record = self._writer.create_warc_record(
            answer.url, "revisit", http_headers=http, warc_headers_dict=headers
        )
        if original is None:
            return record, replace(entry, record_type="revisit", profile=NOT_MODIFIED_PROFILE,
                                    body_sha256="", payload_record_id="")  # fmt: skip
        return record, _revisit(entry, NOT_MODIFIED_PROFILE, digest, original)

    def _request(self, answer: Answer, date: str, record_id: str, response_id: str) -> Any:
        parts = urlsplit(answer.url)
        target = (parts.path or "/") + (f"?{parts.query}" if parts.query else "")
        http = StatusAndHeaders(
            f"GET {target} HTTP/1.1", list(answer.request_headers), is_http_request=True
        )
        headers = {
            "WARC-Record-ID": record_id,
            "WARC-Date": date,
            "WARC-Concurrent-To": response_id,
        }
        return self._writer.create_warc_record(
            answer.url, "request", http_headers=http, warc_headers_dict=headers
        )

    def _memento(self, answer: Answer, date: str, response_id: str, about: str) -> Any:
        """A metadata record naming a memento's original URL and datetime (WARC 1.1 §6.6,
        ``WARC-Refers-To`` §5.11), so that readers of the WARC file need not parse Link."""
        headers = {
            "WARC-Record-ID": _record_id(),
            "WARC-Date": date,
            "WARC-Refers-To": response_id,
            "WARC-Concurrent-To": response_id,
        }
        body = about.encode("utf-8")
        return self._writer.create_warc_record(
            answer.url, "metadata", payload=io.BytesIO(body), length=len(body),
            warc_content_type="application/warc-fields", warc_headers_dict=headers,
        )  # fmt: skip

    # -- files -------------------------------------------------------------------------

    def _write(self, record: Any) -> int:
        assert self._out is not None
        start = self._out.tell()
        self._writer.write_record(record)
        return start

    def _start_file(self) -> None:
        self.folder.mkdir(parents=True, exist_ok=True)
        self._serial += 1
        if self.fixed_name is not None:
            self._name = self.fixed_name
            opening = "wb"  # a cassette recorded again replaces the old one, once complete
        else:
            opened = datetime.now(UTC).strftime("%Y%m%d%H%M%S%f")
            self._name = f"harvester-{opened}-{os.getpid()}-{self._serial:05d}{WARC_SUFFIX}"
            opening = "xb"
        # Locked under a hidden name first, then renamed: salvage never sees an unlocked file.
        opening_path = self.folder / f".{self._name}.opening"
        self._out = open(opening_path, opening)  # noqa: SIM115
        liveness.hold(self._out)
        os.replace(opening_path, self.folder / (self._name + OPEN_SUFFIX))
        self._writer = WARCWriter(_GzipMembers(self._out), gzip=False, warc_version="1.1")
        fields = {"software": f"harvester/{__version__}", "format": "WARC File Format 1.1"}
        info = self._writer.create_warcinfo_record(self._name, {**fields, **self.info})
        self._writer.write_record(info)
        self._entries = []

    def _finish_file(self) -> None:
        assert self._out is not None
        self._out.flush()
        os.fsync(self._out.fileno())
        self._out.close()
        final = self.folder / self._name
        os.replace(self.folder / (self._name + OPEN_SUFFIX), final)
        self._out, self._writer = None, None
        self.files.append(final)
        if self.index_dir is not None:
            write_index_file(self._entries, self.index_dir / (self._name + INDEX_SUFFIX))


def _refer(headers: dict[str, str], original: IndexEntry) -> None:
    headers["WARC-Refers-To"] = original.payload_record_id  # WARC 1.1 §5.11


def _revisit(entry: IndexEntry, profile: str, digest: str, original: IndexEntry) -> IndexEntry:
    return replace(
        entry,
        record_type="revisit",
        profile=profile,
        payload_digest=digest,
        body_sha256=original.body_sha256,
        payload_record_id=original.payload_record_id,
    )


def _placed(entry: IndexEntry, file: str, offset: int, length: int) -> IndexEntry:
    return replace(entry, file=file, offset=offset, length=length)


def _memento_fields(answer: Answer) -> str:
    """``original`` and ``memento-datetime`` as warc-fields for an answer a web archive gave
    (RFC 7089 §2.1.1 Memento-Datetime, §2.2.1 the ``original`` link); '' for any other."""
    memento = header(answer.headers, "memento-datetime")
    if memento is None:
        return ""
    links = parse_links(header(answer.headers, "link") or "", base=answer.url).links
    original = next((link.target for link in links if "original" in link.rels), None)
    fields = [f"memento-datetime: {' '.join(memento.split())}"]
    if original is not None:
        fields.insert(0, f"original: {original}")
    return "".join(f"{field}\r\n" for field in fields)


def _status_line(status: int) -> str:
    try:
        return f"{status} {HTTPStatus(status).phrase}"
    except ValueError:
        return f"{status} Unknown"
