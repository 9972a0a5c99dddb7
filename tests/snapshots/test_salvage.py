"""Salvaging ``.open`` files left by a crashed writer; the result must pass `warcio check`.

A crash is simulated by cutting a file warcio wrote inside its last gzip member (RFC 1952
§2.2); WARC 1.1 Annex D puts one record in each member.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from harvester.errors import StoreError
from harvester.snapshots.liveness import hold
from harvester.snapshots.members import iter_members
from harvester.snapshots.salvage import salvage
from harvester.snapshots.scan import scan_warc
from tests.snapshots.foreign import warc_file

SITE = "http://127.0.0.1:8650"


def crashed(path: Path, responses: int, cut: int = 25) -> list[int]:
    """A file like a writer killed mid-record: whole records, then one cut-off member."""
    with warc_file(path) as warc:
        warc.warcinfo()
        for n in range(responses + 1):
            warc.response(f"{SITE}/{n}.html", f"<p>{n}</p>".encode() * 40)
    with path.open("rb") as stream:
        ends = [m.offset + m.length for m in iter_members(stream)]
    path.write_bytes(path.read_bytes()[:-cut])
    return ends


def warcio_check(path: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "warcio.cli", "check", "-v", str(path)],
        capture_output=True, text=True, check=False,
    )  # fmt: skip


def test_a_dead_file_keeps_its_whole_records_and_passes_warcio_check(tmp_path: Path) -> None:
    path = tmp_path / "run.warc.gz.open"
    ends = crashed(path, responses=2)
    final = salvage(path)
    assert final == tmp_path / "run.warc.gz" and not path.exists()
    assert final.stat().st_size == ends[2]  # cut right after the last whole member
    done = warcio_check(final)
    assert done.returncode == 0, done.stdout + done.stderr
    assert done.stdout.count("digest pass") == 3 and "not checked" not in done.stdout
    assert [e.url for e in scan_warc(final)] == [f"{SITE}/0.html", f"{SITE}/1.html"]


def test_warcio_check_alone_does_not_see_the_cut(tmp_path: Path) -> None:
    # Why salvage decides completeness itself: warcio check exits 0 on the cut file and only
    # says the last record's digest was "present but not checked" (warcio 1.8.1, verified).
    path = tmp_path / "run.warc.gz.open"
    crashed(path, responses=1)
    done = warcio_check(path)
    assert done.returncode == 0 and done.stdout.count("present but not checked") == 1


def test_a_file_a_live_writer_holds_is_left_alone(tmp_path: Path) -> None:
    path = tmp_path / "run.warc.gz.open"
    crashed(path, responses=1)
    before = path.read_bytes()
    with open(path, "ab") as writer_side:
        hold(writer_side)  # liveness: the writer's flock
        assert salvage(path) is None
        assert path.read_bytes() == before and not (tmp_path / "run.warc.gz").exists()
    assert salvage(path) == tmp_path / "run.warc.gz"  # once the writer is gone


def test_a_file_with_only_its_warcinfo_is_kept(tmp_path: Path) -> None:
    path = tmp_path / "run.warc.gz.open"
    crashed(path, responses=0)
    final = salvage(path)
    assert final is not None and final.exists() and scan_warc(final) == []
    assert warcio_check(final).returncode == 0


@pytest.mark.parametrize("content", [b"", b"garbage, never a gzip member", b"\x1f\x8b\x08junk"])
def test_an_empty_or_garbage_file_is_removed(tmp_path: Path, content: bytes) -> None:
    path = tmp_path / "run.warc.gz.open"
    path.write_bytes(content)
    assert salvage(path) is None
    assert list(tmp_path.iterdir()) == []


def test_a_whole_record_after_damaged_bytes_stops_salvage(tmp_path: Path) -> None:
    path = tmp_path / "run.warc.gz.open"
    with warc_file(path) as warc:
        warc.warcinfo()
        warc.response(f"{SITE}/0.html", b"<p>0</p>")
    size = path.stat().st_size
    with warc_file(tmp_path / "more.warc.gz") as warc:
        warc.response(f"{SITE}/1.html", b"<p>1</p>")
    path.write_bytes(path.read_bytes() + b"JUNK" + (tmp_path / "more.warc.gz").read_bytes())
    before = path.read_bytes()
    with pytest.raises(StoreError, match=f"whole record at offset {size + 4} follows damaged"):
        salvage(path)
    assert path.read_bytes() == before  # nothing cut away


def test_salvage_never_overwrites_a_complete_file(tmp_path: Path) -> None:
    path = tmp_path / "run.warc.gz.open"
    crashed(path, responses=1)
    (tmp_path / "run.warc.gz").write_bytes(b"complete already")
    with pytest.raises(StoreError, match="already exists"):
        salvage(path)
    assert (tmp_path / "run.warc.gz").read_bytes() == b"complete already" and path.exists()
    with pytest.raises(StoreError, match=r"not a \.open"):
        salvage(tmp_path / "run.warc.gz")
