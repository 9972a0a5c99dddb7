"""Recording a run: every exchange into the snapshot archive (and a cassette), rows to records.

``SnapshotRecorder.keep`` is the live fetcher's ``on_answer``: each answer read in full —
robots.txt, redirects, pages, errors, 304s — is written as it arrives. ``wrap`` puts a
``PageSource`` behind a recording one whose captures carry ``record_id``, the record holding
their body: the record just written for a live page, the one stored earlier for a copy from the
HTTP cache (written now, without its request, if the snapshot archive never held it). Captures
that already name their record (cassette replay, the snapshot archive) pass through as they are.

The snapshot archive's index is loaded once per run, after dead writers' ``.open`` files are
salvaged and any complete file without an index file is indexed, so revisits refer to payloads
of earlier runs. A cassette is self-contained: its revisits refer only to its own records.
"""

from __future__ import annotations

import logging
from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path

from harvester.errors import ArchiveUnwritableError
from harvester.fetch.capture import Capture
from harvester.fetch.source import PageRequest, PageSource
from harvester.fetch.transfer import Answer
from harvester.snapshots.entry import INDEX_DIR, WARC_DIR, IndexEntry
from harvester.snapshots.index import SnapshotIndex
from harvester.snapshots.scan import index_missing
from harvester.snapshots.warc import WarcSnapshotWriter

__all__ = ["RecordingSource", "SnapshotRecorder"]

_log = logging.getLogger("harvester.snapshots")
_REINDEX = "see `harvester snapshots reindex`"

_KEPT_ELSEWHERE = frozenset({"snapshot-archive", "cassette"})


class SnapshotRecorder:
    """Keeps a run's exchanges; use it as a context manager around the run.

    ``snapshots_dir`` is ``ARCHIVE/snapshots`` (None: no snapshot archive, for an archive on an
    object store); ``cassette``, when given, is the one WARC file that also receives every
    exchange of the run. ``info`` goes into each file's warcinfo record.
    """

    def __init__(
        self,
        snapshots_dir: Path | None,
        *,
        info: Mapping[str, str],
        cassette: Path | None = None,
        max_file_bytes: int = 1_000_000_000,
    ) -> None:
        self.index = SnapshotIndex()
        self._archive: WarcSnapshotWriter | None = None
        self._cassette: WarcSnapshotWriter | None = None
        self._cassette_index = SnapshotIndex()
        if snapshots_dir is not None:
            warc_dir, index_dir = snapshots_dir / WARC_DIR, snapshots_dir / INDEX_DIR
            caught_up = index_missing(snapshots_dir)  # files a crash left: salvaged, indexed
            for name, why in caught_up.damaged:
                _log.warning("snapshot archive: %s is damaged (%s); %s", name, why, _REINDEX)
            self.index = SnapshotIndex.load(snapshots_dir)
            self._archive = WarcSnapshotWriter(
                warc_dir,
                info=info,
                known=self.index,
                max_file_bytes=max_file_bytes,
                index_dir=index_dir,
            )
        if cassette is not None:
            self._cassette = WarcSnapshotWriter(
                cassette.parent, info=info, known=self._cassette_index, name=cassette.name
            )

    def __enter__(self) -> SnapshotRecorder:
        return self

    def __exit__(self, kind: object, *exc: object) -> None:
        try:
            self.close()
        except ArchiveUnwritableError:
            if kind is None:
                raise  # otherwise the error already on its way says why the run stopped

    @property
    def cassette_file(self) -> Path | None:
        """The cassette's path once it is complete (None before, or without a cassette)."""
        return self._cassette.files[-1] if self._cassette and self._cassette.files else None

    def keep(self, answer: Answer) -> None:
        """Write one exchange to the snapshot archive and the cassette (``on_answer``)."""
        for writer in (self._archive, self._cassette):
            if writer is not None:
                _write(writer, answer, with_request=True)

    def wrap(self, source: PageSource) -> RecordingSource:
        """``source`` with every capture tied to its record."""
        return RecordingSource(source, self)

    def record_of(self, capture: Capture) -> str | None:
        """The record id of the record holding ``capture``'s body, written now if need be."""
        if self._cassette is not None and _find(self._cassette_index, capture) is None:
            _write(self._cassette, _answer(capture), with_request=False)
        if self._archive is None:
            return _find(self._cassette_index, capture)
        found = _find(self.index, capture)
        if found is None:
            found = _write(self._archive, _answer(capture), with_request=False).payload_record_id
        return found

    def close(self) -> None:
        """Close the files: each gets its final name and (in the archive) its index file."""
        failed: OSError | None = None
        for writer in (self._archive, self._cassette):
            if writer is not None:
                try:
                    writer.close()
                except OSError as exc:
                    failed = exc
        if failed is not None:
            raise ArchiveUnwritableError(
                f"the snapshot archive could not finish its file: {failed}",
                hint="free some space; the next run salvages the file's complete records",
            )


class RecordingSource:
    """A page source whose captures carry the snapshot record of their body."""

    def __init__(self, source: PageSource, recorder: SnapshotRecorder) -> None:
        self.source = source
        self.recorder = recorder

    async def capture(self, request: PageRequest) -> Capture:
        """The wrapped source's capture, with ``record_id`` filled in."""
        capture = await self.source.capture(request)
        if capture.record_id is not None or capture.origin in _KEPT_ELSEWHERE:
            return capture
        return replace(capture, record_id=self.recorder.record_of(capture))


def _write(writer: WarcSnapshotWriter, answer: Answer, *, with_request: bool) -> IndexEntry:
    """``writer.write``, a failing disk being the archive's error (the run stops on it)."""
    try:
        return writer.write(answer, with_request=with_request)
    except OSError as exc:
        what = (
            f"the cassette {writer.folder / writer.fixed_name}"
            if writer.fixed_name
            else f"{writer.folder}: the snapshot archive"
        )
        raise ArchiveUnwritableError(
            f"{what} cannot be written ({exc}); nothing was published for this page, and the"
            " run stops",
            hint="free some space or fix the folder's permissions, then run again",
        ) from None


def _find(index: SnapshotIndex, capture: Capture) -> str | None:
    """The payload record of ``capture``'s body: its URL's latest such record, else any."""
    digest = capture.sha256
    for url in dict.fromkeys((capture.final_url, capture.url)):
        for entry in reversed(index.for_url(url)):
            if entry.body_sha256 == digest and entry.payload_record_id:
                return entry.payload_record_id
    holder = index.by_sha256(digest)
    return holder.payload_record_id if holder is not None else None


def _answer(capture: Capture) -> Answer:
    """A capture as the exchange it came from (its request unknown)."""
    return Answer(
        url=capture.final_url,
        status=capture.status,
        headers=capture.headers,
        body=capture.body,
        request_time=capture.fetched_at,
        response_time=capture.fetched_at,
    )
