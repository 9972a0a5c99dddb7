"""The recorder: exchanges into the snapshot archive and a cassette, captures tied to records.

The exchanges are written out by hand; what the files hold is read back with warcio's reader
(an independent reader) and with the index, and checked against WARC 1.1 (REFERENCES.md §5).
"""

from __future__ import annotations

import asyncio
import hashlib
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
from warcio.archiveiterator import ArchiveIterator

from harvester.errors import ArchiveUnwritableError
from harvester.fetch.capture import Capture
from harvester.fetch.source import PageRequest
from harvester.fetch.transfer import Answer
from harvester.snapshots.entry import INDEX_DIR, WARC_DIR
from harvester.snapshots.index import SnapshotIndex
from harvester.snapshots.recorder import SnapshotRecorder
from harvester.snapshots.stored_source import StoredSource

T = datetime(2026, 3, 1, 12, 0, tzinfo=UTC)
SITE = "http://127.0.0.1:8650"
SENT = (("Host", "127.0.0.1:8650"), ("User-Agent", "harvester/0 (+mailto:analyst@example.org)"))
HTML = (("Content-Type", "text/html; charset=utf-8"), ("ETag", '"v1"'), ("X-Kept", "yes"))
BODY = b"<table><tr><th>club</th></tr><tr><td>Elkbay HC</td></tr></table>"
INFO = {"recipe": "league-standings", "run-id": "abc123", "operator": "mailto:a@example.org"}


def answer(path: str, body: bytes = BODY, status: int = 200, when: datetime = T) -> Answer:
    return Answer(f"{SITE}{path}", status, HTML, body, when, when + timedelta(seconds=0.1), SENT)


class Canned:
    """A page source handing out one capture (a copy from the cache, say)."""

    def __init__(self, capture: Capture) -> None:
        self.given = capture

    async def capture(self, request: PageRequest) -> Capture:
        return self.given


def test_a_kept_exchange_round_trips_through_the_index_with_its_payload_and_headers(
    tmp_path: Path,
) -> None:
    snapshots = tmp_path / "snapshots"
    with SnapshotRecorder(snapshots, info=INFO) as recorder:
        recorder.keep(answer("/seasons/2026/standings.html"))
    (entry,) = SnapshotIndex.load(snapshots).entries()  # the index file written at close
    assert entry.body_sha256 == hashlib.sha256(BODY).hexdigest()
    served = StoredSource.from_archive(snapshots).capture_url(f"{SITE}/seasons/2026/standings.html")
    assert served.body == BODY and served.record_id == entry.record_id
    assert [(k.lower(), v) for k, v in served.headers] == [
        *((k.lower(), v) for k, v in HTML),
        ("content-length", str(len(BODY))),  # the kept body's length (REFERENCES.md §5.4)
    ]
    assert served.fetched_at == T and served.status == 200


def test_a_cassette_gets_every_exchange_and_the_warcinfo_says_what_wrote_it(
    tmp_path: Path,
) -> None:
    cassette = tmp_path / "run.warc.gz"
    with SnapshotRecorder(tmp_path / "snapshots", info=INFO, cassette=cassette) as recorder:
        recorder.keep(answer("/robots.txt", b"User-agent: *\nCrawl-delay: 1\n"))
        recorder.keep(answer("/seasons/2026/standings.html"))
    assert recorder.cassette_file == cassette
    with cassette.open("rb") as stream:
        records = list(
            (r.rec_type, r.rec_headers.get_header("WARC-Target-URI"), r.content_stream().read())
            for r in ArchiveIterator(stream, check_digests=True)
        )
    kinds = [kind for kind, _, _ in records]
    assert kinds == ["warcinfo", "response", "request", "response", "request"]
    info = records[0][2].decode()
    for name, value in INFO.items():  # WARC 1.1 §6.2: warcinfo fields, name: value lines
        assert f"{name}: {value}\r\n" in info


def test_a_live_capture_is_tied_to_the_record_just_written(tmp_path: Path) -> None:
    snapshots = tmp_path / "snapshots"
    url = f"{SITE}/seasons/2026/standings.html"
    with SnapshotRecorder(snapshots, info=INFO) as recorder:
        recorder.keep(answer("/seasons/2026/standings.html"))
        live = Capture(url, url, 200, HTML, BODY, T, "live")
        tied = asyncio.run(recorder.wrap(Canned(live)).capture(PageRequest(url)))
    (entry,) = SnapshotIndex.load(snapshots).entries()
    assert tied.record_id == entry.record_id  # nothing written twice
    assert len(list((snapshots / WARC_DIR).iterdir())) == 1


def test_a_copy_from_the_cache_the_archive_never_held_is_written_once(tmp_path: Path) -> None:
    snapshots = tmp_path / "snapshots"
    url = f"{SITE}/seasons/2025/standings.html"
    cached = Capture(url, url, 200, HTML, BODY, T - timedelta(days=3), "cache")
    with SnapshotRecorder(snapshots, info=INFO) as recorder:
        source = recorder.wrap(Canned(cached))
        first = asyncio.run(source.capture(PageRequest(url)))
        again = asyncio.run(source.capture(PageRequest(url)))
    (entry,) = SnapshotIndex.load(snapshots).entries()
    assert first.record_id == again.record_id == entry.record_id
    assert entry.date == T - timedelta(days=3)  # dated when the copy was fetched
    (file,) = (snapshots / WARC_DIR).iterdir()
    with file.open("rb") as stream:
        kinds = [record.rec_type for record in ArchiveIterator(stream)]
    assert kinds == ["warcinfo", "response"]  # WARC 1.1 §6.3: no request record is made up


def test_captures_that_name_their_record_pass_through(tmp_path: Path) -> None:
    url = f"{SITE}/a.html"
    replayed = Capture(url, url, 200, HTML, BODY, T, "cassette", record_id="<urn:uuid:1>")
    with SnapshotRecorder(tmp_path / "snapshots", info=INFO) as recorder:
        got = asyncio.run(recorder.wrap(Canned(replayed)).capture(PageRequest(url)))
    assert got is replayed
    assert not (tmp_path / "snapshots" / WARC_DIR).exists()  # nothing to write, no file opened


def test_without_a_snapshot_archive_captures_get_no_record(tmp_path: Path) -> None:
    url = f"{SITE}/a.html"
    live = Capture(url, url, 200, HTML, BODY, T, "live")
    with SnapshotRecorder(None, info=INFO) as recorder:
        recorder.keep(answer("/a.html"))
        got = asyncio.run(recorder.wrap(Canned(live)).capture(PageRequest(url)))
    assert got.record_id is None


def test_revisits_refer_to_payloads_of_earlier_runs(tmp_path: Path) -> None:
    snapshots = tmp_path / "snapshots"
    with SnapshotRecorder(snapshots, info=INFO) as recorder:
        recorder.keep(answer("/a.html"))
    with SnapshotRecorder(snapshots, info=INFO) as recorder:
        recorder.keep(answer("/a.html", when=T + timedelta(days=1)))
    original, revisit = SnapshotIndex.load(snapshots).entries()
    assert revisit.record_type == "revisit"  # WARC 1.1 §6.7.2, across files
    assert revisit.payload_record_id == original.record_id


def test_a_crashed_runs_file_is_salvaged_and_indexed_when_the_next_run_starts(
    tmp_path: Path,
) -> None:
    snapshots = tmp_path / "snapshots"
    crashed = SnapshotRecorder(snapshots, info=INFO)
    crashed.keep(answer("/a.html"))
    (left,) = (snapshots / WARC_DIR).iterdir()
    assert left.name.endswith(".warc.gz.open")
    # The crashed writer's lock goes with its process; here, with its file.
    crashed._archive._out.close()  # type: ignore[union-attr]
    with SnapshotRecorder(snapshots, info=INFO) as recorder:
        assert recorder.index.latest(f"{SITE}/a.html") is not None
    assert not left.exists() and (snapshots / WARC_DIR / left.name.removesuffix(".open")).exists()
    assert len(list((snapshots / INDEX_DIR).iterdir())) == 1


def test_a_cassette_that_cannot_be_written_stops_the_run_naming_it(tmp_path: Path) -> None:
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file where the cassette's folder should be")
    cassette = blocker / "run.warc.gz"
    recorder = SnapshotRecorder(None, info=INFO, cassette=cassette)
    with pytest.raises(ArchiveUnwritableError, match=r"the cassette .*run\.warc\.gz cannot be"):
        recorder.keep(answer("/a.html"))
