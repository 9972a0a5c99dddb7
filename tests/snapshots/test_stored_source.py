"""Serving pages from stored records with no network: cassettes (warcio-written) and the archive.

Citations: RFC 9110 §15.4 and §10.2.2 (redirects, Location), WARC 1.1 §6.7.2 / §6.7.3
(revisits), RFC 7089 §2.1.1 (Memento-Datetime). The redirect limit of 10 is the live fetcher's
(a project choice, no published source).
"""

from __future__ import annotations

import asyncio
import gzip
import hashlib
from dataclasses import replace
from datetime import timedelta
from pathlib import Path

import pytest

from harvester.errors import FetchError, FetchLimitError, HttpStatusError
from harvester.fetch.capture import Capture
from harvester.fetch.source import PageRequest, PageSource
from harvester.fetch.transfer import Answer
from harvester.snapshots.index import SnapshotIndex
from harvester.snapshots.members import iter_members
from harvester.snapshots.scan import reindex, resolve, scan_warc
from harvester.snapshots.stored_source import StoredSource
from harvester.snapshots.warc import WarcSnapshotWriter
from tests.snapshots.foreign import NOT_MODIFIED_1_1, T0, warc_file

SITE = "http://127.0.0.1:8650"
BODY = b"<table><tr><td>1</td></tr></table>"
HTML = (("Content-Type", "text/html"),)


def fetch(source: StoredSource, url: str) -> Capture:
    return asyncio.run(source.capture(PageRequest(url)))


def redirect(to: str) -> list[tuple[str, str]]:
    return [("Location", to)]


def test_a_cassette_page_is_served_as_a_capture(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    with warc_file(path) as warc:
        warc.warcinfo()
        record_id = warc.response(f"{SITE}/t.html", BODY, headers=[("X-Kept", "yes")])
    source = StoredSource.from_cassette(path)
    assert isinstance(source, PageSource)
    got = fetch(source, f"{SITE}/t.html")
    assert (got.url, got.final_url, got.status, got.body) == (
        f"{SITE}/t.html", f"{SITE}/t.html", 200, BODY
    )  # fmt: skip
    assert got.header("X-Kept") == "yes" and got.origin == "cassette"
    assert got.fetched_at == T0 and got.redirects == () and got.record_id == record_id
    assert got.sha256 == hashlib.sha256(BODY).hexdigest()


def test_redirects_are_followed_to_the_targets_latest_entries(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/old", b"", status="301 Moved Permanently",
                      headers=redirect("/mid?x=1"))  # fmt: skip
        warc.response(f"{SITE}/mid?x=1", b"", status="302 Found", headers=redirect("new.html"))
        warc.response(f"{SITE}/new.html", b"older", date=T0 - timedelta(days=1))
        newest = warc.response(f"{SITE}/new.html", BODY)
    got = fetch(StoredSource.from_cassette(path), f"{SITE}/old")
    # RFC 9110 §10.2.2: a relative Location is resolved against the URL that was asked.
    assert got.redirects == (f"{SITE}/old", f"{SITE}/mid?x=1")
    assert got.final_url == f"{SITE}/new.html" and got.url == f"{SITE}/old"
    assert got.body == BODY and got.record_id == newest and got.status == 200


def test_a_redirect_loop_and_too_many_redirects_are_limits(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/a", b"", status="302 Found", headers=redirect("/b"))
        warc.response(f"{SITE}/b", b"", status="302 Found", headers=redirect("/a"))
        for n in range(12):
            warc.response(f"{SITE}/hop{n}", b"", status="302 Found",
                          headers=redirect(f"/hop{n + 1}"))  # fmt: skip
        warc.response(f"{SITE}/hop12", BODY)
    source = StoredSource.from_cassette(path)
    with pytest.raises(FetchLimitError, match="redirect loop") as caught:
        fetch(source, f"{SITE}/a")
    assert f"{SITE}/a → {SITE}/b → {SITE}/a" in caught.value.message
    with pytest.raises(FetchLimitError, match="more than 10 redirects"):
        fetch(source, f"{SITE}/hop0")
    assert fetch(source, f"{SITE}/hop2").redirects == tuple(f"{SITE}/hop{n}" for n in range(2, 12))


def test_a_page_not_stored_names_the_url_and_the_store(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/moved", b"", status="301 Moved Permanently",
                      headers=redirect("/elsewhere"))  # fmt: skip
    source = StoredSource.from_cassette(path)
    with pytest.raises(FetchError) as caught:
        fetch(source, f"{SITE}/never.html")
    assert caught.value.message == f"{SITE}/never.html: not in the cassette {path}"
    assert "re-record the cassette" in caught.value.hint
    with pytest.raises(FetchError, match=r"elsewhere: not in the cassette .*redirected from"):
        fetch(source, f"{SITE}/moved")


def test_a_stored_error_status_is_an_http_status_error(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    with warc_file(path) as warc:
        warc.response(f"{SITE}/gone", b"gone", status="404 Not Found")
        warc.response(f"{SITE}/nowhere", b"", status="302 Found")  # a 3xx without Location
    source = StoredSource.from_cassette(path)
    with pytest.raises(HttpStatusError) as caught:
        fetch(source, f"{SITE}/gone")
    assert caught.value.status == 404 and caught.value.message == f"{SITE}/gone: HTTP 404"
    with pytest.raises(HttpStatusError, match="HTTP 302"):
        fetch(source, f"{SITE}/nowhere")


def test_a_not_modified_revisit_serves_the_original(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    later = T0 + timedelta(days=3)
    with warc_file(path) as warc:
        first = warc.response(f"{SITE}/t.html", BODY, headers=[("ETag", '"v1"')])
        warc.revisit(f"{SITE}/t.html", BODY, profile=NOT_MODIFIED_1_1, refers_to=first,
                     status="304 Not Modified", headers=[], date=later)  # fmt: skip
    got = fetch(StoredSource.from_cassette(path), f"{SITE}/t.html")
    # WARC 1.1 §6.7.3: a 304 means "as before": the original's status, headers and payload.
    assert (got.status, got.body, got.header("ETag")) == (200, BODY, '"v1"')
    assert got.record_id == first and got.fetched_at == later


def test_an_identical_payload_revisit_serves_the_original_payload(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    with warc_file(path) as warc:
        first = warc.response(f"{SITE}/a.html", BODY)
        warc.revisit(f"{SITE}/b.html", BODY, headers=[("X-Copy", "b")])  # no WARC-Refers-To
        # Two redirects with empty bodies share a payload digest but not a Location.
        warc.response(f"{SITE}/r1", b"", status="301 Moved Permanently",
                      headers=redirect("/a.html"))  # fmt: skip
        warc.revisit(f"{SITE}/r2", b"", status="301 Moved Permanently",
                     headers=redirect("/b.html"))  # fmt: skip
    source = StoredSource.from_cassette(path)
    got = fetch(source, f"{SITE}/b.html")
    assert got.body == BODY and got.record_id == first and got.header("X-Copy") == "b"
    assert fetch(source, f"{SITE}/r2").final_url == f"{SITE}/b.html"  # its own Location


def test_a_revisit_whose_original_is_missing_is_a_clear_error(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    with warc_file(path) as warc:
        warc.revisit(f"{SITE}/t.html", BODY, refers_to="<urn:uuid:not-here>")
    with pytest.raises(FetchError, match="original record <urn:uuid:not-here> is not in the"):
        fetch(StoredSource.from_cassette(path), f"{SITE}/t.html")


def test_a_damaged_payload_is_refused_naming_file_and_offset(tmp_path: Path) -> None:
    path = tmp_path / "x.warc.gz"
    with warc_file(path) as warc:
        warc.warcinfo()
        warc.response(f"{SITE}/t.html", BODY)
    entries = scan_warc(path)
    wrong = SnapshotIndex([replace(entries[0], body_sha256="0" * 64)])
    source = StoredSource(wrong, tmp_path, origin="cassette", label="the cassette x")
    with pytest.raises(FetchError) as caught:
        fetch(source, f"{SITE}/t.html")
    offset = entries[0].offset
    assert f"damaged record at offset {offset} in {path}" in caught.value.message
    # The same record altered on disk after indexing: the digest check catches it.
    good = StoredSource(SnapshotIndex(entries), tmp_path, origin="cassette", label="x")
    with path.open("rb") as stream:
        members = list(iter_members(stream))
    altered = members[1].data.replace(b"<td>1</td>", b"<td>9</td>")
    path.write_bytes(path.read_bytes()[:offset] + gzip.compress(altered))
    with pytest.raises(FetchError, match=f"damaged record: .*offset {offset}.*digest"):
        fetch(good, f"{SITE}/t.html")


def test_a_missing_or_unreadable_cassette_names_its_path(tmp_path: Path) -> None:
    with pytest.raises(FetchError, match=r"cassette .*nope\.warc\.gz does not exist"):
        StoredSource.from_cassette(tmp_path / "nope.warc.gz")
    junk = tmp_path / "junk.warc.gz"
    junk.write_bytes(b"this is no WARC file")
    with pytest.raises(FetchError) as caught:
        StoredSource.from_cassette(junk)
    assert str(junk) in caught.value.message and "re-record" in caught.value.hint


def test_the_archive_serves_what_our_writer_kept(tmp_path: Path) -> None:
    # End to end with harvester's own writer: write, reindex, serve (revisit included).
    warc_dir = tmp_path / "snapshots" / "warc"
    url = f"{SITE}/t.html"
    first = Answer(url, 200, HTML, BODY, T0, T0, (("Host", "127.0.0.1"),))
    again = replace(first, request_time=T0 + timedelta(days=1))
    with WarcSnapshotWriter(warc_dir, info={}, known=SnapshotIndex()) as writer:
        original = writer.write(first)
        revisit = writer.write(again)
    assert revisit.record_type == "revisit"
    assert reindex(tmp_path / "snapshots").entries == 2
    source = StoredSource.from_archive(tmp_path / "snapshots")
    got = fetch(source, url)
    assert got.body == BODY and got.origin == "snapshot-archive"
    assert got.record_id == original.record_id and got.fetched_at == again.request_time
    assert resolve(scan_warc(warc_dir / original.file), source.index)[1].body_sha256 == (
        hashlib.sha256(BODY).hexdigest()
    )  # fmt: skip
    with pytest.raises(FetchError, match=r"not in the snapshot archive .*harvest the page live"):
        fetch(source, f"{SITE}/other.html")
