"""WARC files as the snapshot archive writes them, checked by warcio (reader and `warcio check`).

Expected record layouts come from WARC 1.1 (ISO 28500:2017, IIPC text; REFERENCES.md §5); the
exchanges are written out by hand below.
"""

from __future__ import annotations

import base64
import hashlib
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
from warcio.archiveiterator import ArchiveIterator

from harvester.fetch.transfer import Answer
from harvester.snapshots import liveness
from harvester.snapshots.entry import NOT_MODIFIED_PROFILE, SAME_PAYLOAD_PROFILE
from harvester.snapshots.index import SnapshotIndex, read_index_file
from harvester.snapshots.warc import OPEN_SUFFIX, WarcSnapshotWriter
from tests.warc_check import warcio_check

T = datetime(2026, 3, 1, 12, 0, 0, 123456, tzinfo=UTC)
REQUEST = (("User-Agent", "harvester/0 (+mailto:analyst@example.org)"), ("Host", "127.0.0.1"))
HTML = ("Content-Type", "text/html; charset=utf-8")


def answer(path: str, body: bytes, *headers: tuple[str, str], status: int = 200) -> Answer:
    url = f"http://127.0.0.1:8650{path}"
    return Answer(url, status, (HTML, *headers), body, T, T + timedelta(seconds=0.01), REQUEST)


def writer(folder: Path, **options: object) -> WarcSnapshotWriter:
    return WarcSnapshotWriter(folder, info={"recipe": "league-players"}, known=SnapshotIndex(),
                              **options)  # type: ignore[arg-type]  # fmt: skip


def records(path: Path) -> list[tuple[str, dict[str, str], bytes]]:
    found = []
    with path.open("rb") as stream:
        for record in ArchiveIterator(stream, check_digests=True):
            headers = dict(record.rec_headers.headers)
            found.append((record.rec_type, headers, record.content_stream().read()))
    return found


def test_an_exchange_is_a_response_and_a_request_pointing_at_each_other(tmp_path: Path) -> None:
    body = b"<table><tr><td>1</td></tr></table>"
    with writer(tmp_path) as out:
        entry = out.write(answer("/a.html", body, ("Content-Encoding", "gzip")))
        assert list(tmp_path.iterdir()) == [tmp_path / (entry.file + OPEN_SUFFIX)]
    (file,) = tmp_path.iterdir()
    assert file.name == entry.file and file.name.endswith(".warc.gz")
    kinds = [kind for kind, _, _ in records(file)]
    assert kinds == ["warcinfo", "response", "request"]  # WARC 1.1 §6.2, §6.3, §6.5
    _, response, payload = records(file)[1]
    _, request, _ = records(file)[2]
    assert payload == body  # the payload is the body read, the bytes _body_sha256 hashes
    assert entry.body_sha256 == hashlib.sha256(body).hexdigest()
    assert response["WARC-Record-ID"] == entry.record_id == entry.payload_record_id
    assert response["WARC-Concurrent-To"] == request["WARC-Record-ID"]  # WARC 1.1 §5.7
    assert request["WARC-Concurrent-To"] == response["WARC-Record-ID"]
    assert response["WARC-Date"] == "2026-03-01T12:00:00.123456Z"  # WARC 1.1 §5.4, W3CDTF
    assert "WARC-Block-Digest" in response and "WARC-Payload-Digest" in response
    info = records(file)[0][2].decode()
    assert "recipe: league-players" in info and "software: harvester/" in info
    with file.open("rb") as stream:
        first, second = (r for r in ArchiveIterator(stream) if r.rec_type != "warcinfo")
        # The kept HTTP headers describe the kept payload: no Content-Encoding it no longer has
        # (REFERENCES.md §5.4, common practice for a decoded body).
        assert first.http_headers.get_header("Content-Encoding") is None
        assert first.http_headers.get_header("Content-Length") == str(len(body))
        # The request record holds the request as it went out (WARC 1.1 §6.5).
        assert second.http_headers.protocol == "GET"
        assert second.http_headers.get_header("User-Agent") == REQUEST[0][1]


def test_warcio_check_passes_and_offsets_lead_to_their_records(tmp_path: Path) -> None:
    with writer(tmp_path) as out:
        entries = [out.write(answer(f"/{n}.html?x={n}", f"<p>{n}</p>".encode())) for n in range(3)]
    (file,) = tmp_path.iterdir()
    done = warcio_check(file)
    assert done.returncode == 0, done.stdout + done.stderr
    for entry in entries:
        with file.open("rb") as stream:
            stream.seek(entry.offset)
            (one, *_) = ArchiveIterator(stream)
            assert one.rec_headers.get_header("WARC-Record-ID") == entry.record_id
            assert one.rec_headers.get_header("WARC-Target-URI") == entry.url
            assert entry.length > 0


def test_a_repeated_payload_is_a_revisit_referring_to_the_original(tmp_path: Path) -> None:
    body = b"<p>same</p>"
    with writer(tmp_path) as out:
        first = out.write(answer("/a.html", body))
        again = out.write(answer("/b.html", body))  # WARC 1.1 §6.7.2: URIs may differ
    (file,) = tmp_path.iterdir()
    assert warcio_check(file).returncode == 0
    ((_, revisit, block),) = [(k, h, b) for k, h, b in records(file) if k == "revisit"]
    assert again.record_type == "revisit" and first.record_type == "response"
    # WARC 1.1 §6.7.2: the identical-payload-digest profile, and WARC-Refers-To the original.
    assert revisit["WARC-Profile"] == SAME_PAYLOAD_PROFILE
    assert revisit["WARC-Refers-To"] == first.record_id == again.payload_record_id
    assert revisit["WARC-Refers-To-Target-URI"] == first.url
    assert revisit["WARC-Payload-Digest"] == first.payload_digest
    assert revisit["WARC-Truncated"] == "length"  # §6.7.2: headers kept, the payload not
    assert block == b""  # nothing of the payload is stored twice
    assert again.body_sha256 == first.body_sha256


def test_a_304_is_a_server_not_modified_revisit_of_the_last_payload(tmp_path: Path) -> None:
    with writer(tmp_path) as out:
        first = out.write(answer("/a.html", b"<p>v1</p>", ("ETag", '"1"')))
        confirmed = out.write(answer("/a.html", b"", ("ETag", '"1"'), status=304))
        unknown = out.write(answer("/never.html", b"", status=304))
    (file,) = tmp_path.iterdir()
    assert warcio_check(file).returncode == 0
    revisits = [h for k, h, _ in records(file) if k == "revisit"]
    assert [h["WARC-Profile"] for h in revisits] == [NOT_MODIFIED_PROFILE] * 2  # §6.7.3
    assert revisits[0]["WARC-Refers-To"] == first.record_id  # §5.11
    assert "WARC-Refers-To" not in revisits[1]  # nothing stored to refer to
    assert confirmed.status == 304 and confirmed.payload_record_id == first.record_id
    assert confirmed.body_sha256 == first.body_sha256
    assert unknown.payload_record_id == "" and unknown.body_sha256 == ""


def test_an_empty_payload_is_never_a_revisit(tmp_path: Path) -> None:
    with writer(tmp_path) as out:
        one = out.write(answer("/gone.html", b"", status=404))
        two = out.write(answer("/moved.html", b"", ("Location", "/a.html"), status=302))
    assert one.record_type == two.record_type == "response"


def test_files_rotate_at_the_size_limit_sort_by_time_and_get_index_files(tmp_path: Path) -> None:
    warc, index = tmp_path / "warc", tmp_path / "index"
    with writer(warc, max_file_bytes=1, index_dir=index) as out:
        names = [out.write(answer(f"/{n}.html", f"<p>{n}</p>".encode())).file for n in range(3)]
    assert len(set(names)) == 3 and names == sorted(names)
    assert sorted(path.name for path in warc.iterdir()) == names
    for name in names:
        (entry,) = read_index_file(index / f"{name}.parquet")
        assert entry.file == name


def test_the_payload_digest_is_of_the_payload(tmp_path: Path) -> None:
    # WARC 1.1 §5.9: WARC-Payload-Digest is a digest of the payload; warcio writes sha1 in base32.
    body = b"<p>digest me</p>"
    with writer(tmp_path) as out:
        entry = out.write(answer("/d.html", body))
    expected = "sha1:" + base64.b32encode(hashlib.sha1(body).digest()).decode()
    assert entry.payload_digest == expected


def test_an_open_file_is_held_until_closed(tmp_path: Path) -> None:
    out = writer(tmp_path)
    entry = out.write(answer("/a.html", b"<p>a</p>"))
    assert liveness.is_held(tmp_path / (entry.file + OPEN_SUFFIX))
    out.close()
    assert not liveness.is_held(tmp_path / entry.file)


def test_a_cassette_has_the_name_it_was_given_and_replaces_the_old_one_once_done(
    tmp_path: Path,
) -> None:
    (tmp_path / "run.warc.gz").write_bytes(b"old")
    with writer(tmp_path, name="run.warc.gz") as out:
        out.write(answer("/a.html", b"<p>a</p>"))
        assert (tmp_path / "run.warc.gz").read_bytes() == b"old"  # kept until the new is whole
    assert [kind for kind, _, _ in records(tmp_path / "run.warc.gz")][1] == "response"


@pytest.mark.parametrize("status", [200, 404, 503])
def test_every_status_is_kept(tmp_path: Path, status: int) -> None:
    with writer(tmp_path) as out:
        entry = out.write(answer("/x.html", b"<p>x</p>", status=status))
    assert entry.status == status
    (file,) = tmp_path.iterdir()
    with file.open("rb") as stream:
        response = next(r for r in ArchiveIterator(stream) if r.rec_type == "response")
        assert response.http_headers.get_statuscode() == str(status)


def test_a_memento_gets_a_metadata_record_naming_its_original(tmp_path: Path) -> None:
    # REFERENCES.md §5.5 (practice for a Memento fetch): the response at the URI-M, and a
    # metadata record (WARC 1.1 §6.6) referring to it (§5.11) with original and
    # memento-datetime as application/warc-fields (§4, §8).
    link = (
        '<http://127.0.0.1:8650/seasons/2019/players.html>; rel="original",'
        " <http://127.0.0.1:8651/timemap/http://127.0.0.1:8650/seasons/2019/players.html>"
        '; rel="timemap"; type="application/link-format"'
    )
    memento = answer(
        "/web/20190703083000raw/x",
        b"<table></table>",
        ("Memento-Datetime", "Wed, 03 Jul 2019 08:30:00 GMT"),
        ("Link", link),
    )
    with writer(tmp_path) as out:
        entry = out.write(memento)
        out.write(answer("/live.html", b"<p>live</p>"))
    (file,) = tmp_path.iterdir()
    kept = records(file)
    assert [kind for kind, _, _ in kept] == [
        "warcinfo", "response", "request", "metadata", "response", "request"
    ]  # fmt: skip  # a live answer gets no metadata record
    _, about, fields = kept[3]
    assert about["WARC-Refers-To"] == entry.record_id == kept[1][1]["WARC-Record-ID"]
    assert about["Content-Type"] == "application/warc-fields"
    assert about["WARC-Target-URI"] == memento.url
    assert fields.decode() == (
        "original: http://127.0.0.1:8650/seasons/2019/players.html\r\n"
        "memento-datetime: Wed, 03 Jul 2019 08:30:00 GMT\r\n"
    )
    assert entry.origin == "web-archive"
    warcio_check(file)
