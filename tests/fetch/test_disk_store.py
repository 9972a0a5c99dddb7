"""The cache is disposable: real damaged files on disk cost one warning, never a failing run."""

from __future__ import annotations

import logging
import time
from pathlib import Path

import pytest

from harvester.demo.server import DemoServer
from harvester.fetch.identity import Identity
from harvester.fetch.sync import SyncFetcher
from tests.fetch.misbehaving import ScriptedSite, html

IDENTITY = Identity.from_contact("mailto:analyst@example.org")
PLAYERS = "/seasons/2026/players.html"


def warnings_of(caplog: pytest.LogCaptureFixture) -> list[str]:
    return [r.getMessage() for r in caplog.records if r.levelno >= logging.WARNING]


def pause() -> None:
    time.sleep(0.1)  # a new fetcher keeps the demo's 0.05 s Crawl-delay from the stored pace


def test_a_truncated_value_file_is_a_miss_with_one_warning(
    tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    # 100 KB is over diskcache's 32 KiB inline limit, so the entry's value is a file of its own.
    big = html("<p>row</p>" * 10_000, Cache_Control="max-age=60")
    with ScriptedSite({"/big": [big]}) as site:
        with SyncFetcher(IDENTITY, cache_dir=tmp_path) as client:
            first = client.fetch(site.url("/big"))
        (value_file,) = (tmp_path / "http").rglob("*.val")
        value_file.write_bytes(value_file.read_bytes()[:1000])  # cut short, as a full disk would
        pause()
        with caplog.at_level(logging.WARNING), SyncFetcher(IDENTITY, cache_dir=tmp_path) as client:
            second = client.fetch(site.url("/big"))  # fresh (max-age=60) were it readable
            third = client.fetch(site.url("/big"))
        assert len(site.requests_for("/big")) == 2
        (warning,) = warnings_of(caplog)
        assert warning.startswith(f"damaged HTTP cache entry for GET {site.url('/big')} (")
    assert (second.origin, third.origin) == ("live", "cache")
    assert second.body == first.body


@pytest.mark.parametrize(("folder", "what"), [("http", "HTTP cache"), ("robots", "robots store")])
def test_a_damaged_database_is_moved_aside_and_recreated(
    demo_site: DemoServer,
    tmp_path: Path,
    caplog: pytest.LogCaptureFixture,
    folder: str,
    what: str,
) -> None:
    with SyncFetcher(IDENTITY, cache_dir=tmp_path) as client:
        client.fetch(demo_site.url(PLAYERS))
    database = tmp_path / folder / "cache.db"
    database.write_bytes(b"this is no SQLite database, just a damaged file" * 100)
    pause()
    with caplog.at_level(logging.WARNING), SyncFetcher(IDENTITY, cache_dir=tmp_path) as client:
        assert client.fetch(demo_site.url(PLAYERS)).status == 200
    (warning,) = warnings_of(caplog)
    assert warning.startswith(f"the {what} at {tmp_path / folder} was damaged (")
    (aside,) = tmp_path.glob(f"{folder}.damaged-*")
    assert (aside / "cache.db").read_bytes().startswith(b"this is no SQLite database")
    caplog.clear()
    pause()
    with caplog.at_level(logging.WARNING), SyncFetcher(IDENTITY, cache_dir=tmp_path) as client:
        client.fetch(demo_site.url(PLAYERS))  # a later run opens the new store quietly
    assert warnings_of(caplog) == []
