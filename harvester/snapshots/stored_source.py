"""A page source that answers from stored WARC records, with no network: cassettes, the archive.

``StoredSource`` takes a URL's latest entry, follows stored redirects to their targets' latest
entries, serves a revisit from its original record, and hands the result back as a
``Capture`` as the live fetcher would, errors included (``HttpStatusError`` for a stored 404).
A cassette is one WARC file scanned on opening; the snapshot archive is read through its index.
"""

from __future__ import annotations

import asyncio
import hashlib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Literal
from urllib.parse import urljoin

from harvester.errors import FetchError, FetchLimitError, HttpStatusError, StoreError
from harvester.fetch.capture import Capture, Origin, header
from harvester.fetch.client import RedirectRule
from harvester.fetch.source import PageRequest
from harvester.fetch.transfer import Answer
from harvester.snapshots.entry import WARC_DIR, IndexEntry
from harvester.snapshots.index import SnapshotIndex
from harvester.snapshots.reader import RecordContent, read_record
from harvester.snapshots.scan import resolve, revisit_kind, scan_warc

__all__ = ["MAX_STORED_REDIRECTS", "StoredSource"]

MAX_STORED_REDIRECTS = 10
_MAX_CHAIN = 16  # revisits of revisits followed to the response holding the payload
_MISSING_HINTS: dict[str, str] = {
    "cassette": "re-record the cassette so that it holds this page",
    "snapshot-archive": "harvest the page live first; its answer is then kept in the archive",
}


@dataclass(frozen=True)
class _Answer:
    """One stored exchange as served: status and headers, the payload and where it lives."""

    status: int
    headers: tuple[tuple[str, str], ...]
    payload: bytes
    payload_entry: IndexEntry


class StoredSource:
    """A ``PageSource`` serving stored records of ``folder``'s WARC files, found via ``index``.

    ``label`` names the store in messages ("the cassette tests/x.warc.gz"); ``origin`` is what
    every capture says it came from.
    """

    def __init__(self, index: SnapshotIndex, folder: Path, *, origin: Origin, label: str) -> None:
        self.index = index
        self.folder = folder
        self.origin: Origin = origin
        self.label = label

    @classmethod
    def from_cassette(cls, path: Path) -> StoredSource:
        """The source replaying the one WARC file ``path`` (scanned now, revisits resolved)."""
        if not path.is_file():
            raise FetchError(
                f"the cassette {path} does not exist",
                hint="check the path, or record the cassette first",
            )
        try:
            entries = scan_warc(path)
        except StoreError as exc:
            raise FetchError(
                f"the cassette cannot be read: {exc.message}", hint="re-record the cassette"
            ) from None
        index = SnapshotIndex(resolve(entries, SnapshotIndex(entries)))
        return cls(index, path.parent, origin="cassette", label=f"the cassette {path}")

    @classmethod
    def from_archive(cls, snapshots_dir: Path) -> StoredSource:
        """The source serving the snapshot archive under ``snapshots_dir``, through its index."""
        index = SnapshotIndex.load(snapshots_dir)
        label = f"the snapshot archive {snapshots_dir}"
        return cls(index, snapshots_dir / WARC_DIR, origin="snapshot-archive", label=label)

    async def capture(self, request: PageRequest) -> Capture:
        """The stored capture of ``request.url``; a FetchError when there is none to serve."""
        return await asyncio.to_thread(self.capture_url, request.url)

    async def fetch(
        self,
        url: str,
        *,
        immutable: bool = False,
        headers: Mapping[str, str] | None = None,
        content_types: tuple[str, ...] | Literal["any"] | None = None,
        follow: RedirectRule | None = None,
    ) -> Capture:
        """The stored answer for ``url`` as the fetcher would give it (``ArchiveClient``):
        stored redirects followed when ``follow`` says so; the other settings shaped the
        requests when they were recorded, so they change nothing here."""
        return await asyncio.to_thread(self.capture_url, url, follow)

    async def exchange(self, url: str, *, headers: Mapping[str, str] | None = None) -> Capture:
        """The latest stored answer for ``url``, whatever its status, no redirect followed."""
        return await asyncio.to_thread(self._exchange, url)

    def _exchange(self, url: str) -> Capture:
        entry = self._latest(url, url)
        answer = self._answer(entry, url)
        return self._capture(url, url, answer, entry, ())

    def capture_url(self, url: str, follow: RedirectRule | None = None) -> Capture:
        """``capture`` without the event loop: the same answer, read in the calling thread.

        A stored redirect is followed unless ``follow`` (given the redirect as an answer)
        says not to; then it is an HttpStatusError, as from the live fetcher."""
        current, hops = url, []
        while True:
            entry = self._latest(current, url)
            answer = self._answer(entry, url)
            location = header(answer.headers, "location")
            if not (300 <= answer.status < 400 and location):
                break
            if follow is not None and not follow(_as_answer(current, answer, entry)):
                break
            hops.append(current)
            target = urljoin(current, location.strip())
            if target in hops:
                raise FetchLimitError(
                    f"redirect loop in {self.label}: {' → '.join([*hops, target])}",
                    url=url,
                    hint="the stored pages redirect in a circle; record them again",
                )
            if len(hops) > MAX_STORED_REDIRECTS:
                raise FetchLimitError(
                    f"more than {MAX_STORED_REDIRECTS} redirects in {self.label}",
                    url=url,
                    hint="the stored pages redirect too often; check the URL",
                )
            current = target
        if not 200 <= answer.status < 300:
            raise HttpStatusError(
                f"HTTP {answer.status}",
                url=url,
                status=answer.status,
                hint=f"{self.label} keeps this answer; the page was missing or refused then",
            )
        return self._capture(url, current, answer, entry, tuple(hops))

    def _capture(
        self, url: str, final: str, answer: _Answer, entry: IndexEntry, hops: tuple[str, ...]
    ) -> Capture:
        return Capture(
            url=url,
            final_url=final,
            status=answer.status,
            headers=answer.headers,
            body=answer.payload,
            fetched_at=entry.date,
            origin=self.origin,
            redirects=hops,
            memento_datetime=entry.memento_datetime,
            record_id=answer.payload_entry.record_id,
        )

    def stored_record(self, record_id: str) -> tuple[IndexEntry, RecordContent, bytes]:
        """The record ``record_id``: its entry, what it holds, and its payload (a revisit's
        original's). StoreError when the index does not know it; FetchError when it cannot be
        read."""
        entry = self.index.record(record_id.strip())
        if entry is None:
            raise StoreError(
                f"no record {record_id} in {self.label}",
                hint="list the records with `harvester snapshots`; copy the id with its <…>",
            )
        own = self._read(entry, entry.url)
        if entry.record_type == "response":
            return entry, own, own.payload
        if not entry.payload_record_id:
            return entry, own, b""  # a 304 whose original was never stored
        return entry, own, self._read(self._original(entry, entry.url), entry.url).payload

    def _latest(self, current: str, asked: str) -> IndexEntry:
        entry = self.index.latest(current)
        if entry is None:
            via = f" (redirected from {asked})" if current != asked else ""
            raise FetchError(
                f"not in {self.label}{via}",
                url=current,
                hint=_MISSING_HINTS.get(self.origin, "store the page first"),
            )
        return entry

    def _answer(self, entry: IndexEntry, url: str) -> _Answer:
        """What ``entry``'s exchange serves: its own record, or a revisit's original payload."""
        own = self._read(entry, url)
        if entry.record_type == "response":
            return _Answer(own.status, own.http_headers, own.payload, entry)
        original = self._original(entry, url)
        stored = self._read(original, url)
        # WARC 1.1 §6.7.3: a 304 says "the same as before", so the original's answer is served.
        # §6.7.2 with headers kept: this exchange's own status and headers with the original's
        # payload (two redirects with empty bodies share a payload, not a Location).
        if revisit_kind(entry.profile) == "identical-payload-digest" and own.status:
            return _Answer(own.status, own.http_headers, stored.payload, original)
        return _Answer(stored.status, stored.http_headers, stored.payload, original)

    def _original(self, revisit: IndexEntry, url: str) -> IndexEntry:
        """The response entry holding a revisit's payload (WARC 1.1 §5.11 WARC-Refers-To)."""
        current = revisit
        for _ in range(_MAX_CHAIN):
            found = self.index.record(current.payload_record_id)
            if found is None:
                break
            if found.record_type == "response":
                return found
            current = found
        named = revisit.payload_record_id or "(not named)"
        raise FetchError(
            f"the stored answer is a revisit whose original record {named} is not in "
            f"{self.label} (revisit at offset {revisit.offset} in {revisit.file})",
            url=url,
            hint="rebuild the index with `harvester snapshots reindex`, or re-record the page",
        )

    def _read(self, entry: IndexEntry, url: str) -> RecordContent:
        path = self.folder / entry.file
        try:
            content = read_record(path, entry.offset)
        except StoreError as exc:
            raise FetchError(f"damaged record: {exc.message}", url=url, hint=exc.hint) from None
        if (content.warc_header("WARC-Record-ID") or "").strip() != entry.record_id:
            raise FetchError(
                f"the index is stale: offset {entry.offset} in {path} does not hold the record "
                f"{entry.record_id}",
                url=url,
                hint="rebuild the index with `harvester snapshots reindex`",
            )
        known = entry.record_type == "response" and entry.body_sha256
        if known and hashlib.sha256(content.payload).hexdigest() != entry.body_sha256:
            raise FetchError(
                f"damaged record at offset {entry.offset} in {path}: its payload's "
                "SHA-256 is not the one the index holds",
                url=url,
                hint="rebuild the index with `harvester snapshots reindex`; if this stays, "
                "the WARC file was altered: restore it from a copy",
            )
        return content


def _as_answer(url: str, answer: _Answer, entry: IndexEntry) -> Answer:
    """A stored exchange as the fetcher's redirect rule sees an answer."""
    return Answer(url, answer.status, answer.headers, answer.payload, entry.date, entry.date)
