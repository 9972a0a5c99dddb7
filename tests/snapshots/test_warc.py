"""WARC files as the snapshot archive writes them, checked by warcio (reader and `warcio check`).

Expected record layouts come from WARC 1.1 (ISO 28500:2017, IIPC text); the captures are
written out by hand below.
"""

from __future__ import annotations

import hashlib
import subprocess
import sys
from datetime import UTC, datetime
from pathlib import Path

from warcio.archiveiterator import ArchiveIterator

from harvester.fetch.capture import Capture
from harvester.snapshots.warc import OPEN_SUFFIX, WarcSnapshotWriter

T = datetime(2026, 3, 1, 12, 0, 0, 123456, tzinfo=UTC)
REQUEST = [("User-Agent", "harvester/0 (+mailto:analyst@example.org)"), ("Host", "127.0.0.1")]


def capture(path: str, body: bytes, **headers: str) -> Capture:
    url = f"http://127.0.0.1:8650{path}"
    fields = (("Content-Type", "text/html; charset=utf-8"), *headers.items())
    return Capture(url, url, 200, fields, body, T, "live")


def records(path: Path) -> list[tuple[str, dict[str, str], bytes]]:
    found = []
    with path.open("rb") as stream:
        for record in ArchiveIterator(stream, check_digests=True):
            headers = dict(record.rec_headers.headers)
            found.append((record.rec_type, headers, record.content_stream().read()))
    return found


def test_an_exchange_is_a_request_and_a_response_pointing_at_each_other(tmp_path: Path) -> None:
    body = b"<table><tr><td>1</td></tr></table>"
    with WarcSnapshotWriter(tmp_path, info={"recipe": "league-players"}) as writer:
        stored = writer.write(capture("/a.html", body, Content_Encoding="gzip"), REQUEST)
        assert list(tmp_path.iterdir()) == [tmp_path / (stored.file + OPEN_SUFFIX)]
    (file,) = tmp_path.iterdir()
    assert file.name == stored.file and file.name.endswith(".warc.gz")
    kinds = [kind for kind, _, _ in records(file)]
    assert kinds == ["warcinfo", "response", "request"]  # WARC 1.1 §6.2, §6.3, §6.4
    _, response, payload = records(file)[1]
    _, request, _ = records(file)[2]
    assert payload == body  # the payload is the body read, the bytes _body_sha256 hashes
    assert response["WARC-Record-ID"] == stored.record_id == stored.payload_record_id
    assert response["WARC-Concurrent-To"] == request["WARC-Record-ID"]  # WARC 1.1 §5.7
    assert request["WARC-Concurrent-To"] == response["WARC-Record-ID"]
    assert response["WARC-Date"] == "2026-03-01T12:00:00.123456Z"  # WARC 1.1 §5.4, W3CDTF
    assert "WARC-Block-Digest" in response and "WARC-Payload-Digest" in response
    info = records(file)[0][2].decode()
    assert "recipe: league-players" in info and "software: harvester/" in info
    # The kept HTTP headers describe the kept payload: no Content-Encoding it no longer has.
    with file.open("rb") as stream:
        first = next(r for r in ArchiveIterator(stream) if r.rec_type == "response")
        assert first.http_headers.get_header("Content-Encoding") is None
        assert first.http_headers.get_header("Content-Length") == str(len(body))


def test_warcio_check_passes_and_offsets_lead_to_their_records(tmp_path: Path) -> None:
    with WarcSnapshotWriter(tmp_path, info={}) as writer:
        stored = [
            writer.write(capture(f"/{n}.html", f"<p>{n}</p>".encode()), REQUEST) for n in range(3)
        ]
    (file,) = tmp_path.iterdir()
    done = subprocess.run(
        [str(Path(sys.executable).with_name("warcio")), "check", "-v", str(file)],
        capture_output=True, text=True, check=False,
    )  # fmt: skip
    assert done.returncode == 0, done.stdout + done.stderr
    for record in stored:
        with file.open("rb") as stream:
            stream.seek(record.offset)
            (one, *_) = ArchiveIterator(stream)
            assert one.rec_headers.get_header("WARC-Record-ID") == record.record_id
            assert record.length > 0


def test_a_repeated_payload_is_a_revisit_referring_to_the_original(tmp_path: Path) -> None:
    body = b"<p>same</p>"
    with WarcSnapshotWriter(tmp_path, info={}) as writer:
        first = writer.write(capture("/a.html", body), REQUEST)
        again = writer.write(capture("/a.html", body), REQUEST)
    (file,) = tmp_path.iterdir()
    revisit = [headers for kind, headers, _ in records(file) if kind == "revisit"]
    assert len(revisit) == 1 and again.revisit and not first.revisit
    # WARC 1.1 §6.7.2: the identical-payload-digest profile, and WARC-Refers-To the original.
    assert revisit[0]["WARC-Profile"].endswith("/revisit/identical-payload-digest")
    assert revisit[0]["WARC-Refers-To"] == first.record_id == again.payload_record_id
    assert revisit[0]["WARC-Payload-Digest"] == first.payload_digest


def test_files_rotate_at_the_size_limit_and_sort_by_time(tmp_path: Path) -> None:
    with WarcSnapshotWriter(tmp_path, info={}, max_file_bytes=1) as writer:
        names = [writer.write(capture(f"/{n}.html", f"<p>{n}</p>".encode()), REQUEST).file
                 for n in range(3)]  # fmt: skip
    assert len(set(names)) == 3 and names == sorted(names)
    assert sorted(path.name for path in tmp_path.iterdir()) == names


def test_the_payload_digest_is_of_the_payload(tmp_path: Path) -> None:
    # WARC 1.1 §5.9: WARC-Payload-Digest is a digest of the payload; warcio writes sha1 in base32.
    import base64

    body = b"<p>digest me</p>"
    with WarcSnapshotWriter(tmp_path, info={}) as writer:
        stored = writer.write(capture("/d.html", body), REQUEST)
    expected = "sha1:" + base64.b32encode(hashlib.sha1(body).digest()).decode()
    assert stored.payload_digest == expected
