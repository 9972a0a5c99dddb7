"""The shared host pace on disk: the lock's cap, a damaged file, a start left by a killed process.

Real loopback servers and real files; the state folder is each test's own (tests/fetch/conftest.py
names it in ``$HARVESTER_STATE_DIR``). Two processes at once: tests/run/test_shared_pace.py.
"""

from __future__ import annotations

import asyncio
import json
import logging
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from filelock import FileLock

from harvester.demo.server import DemoServer
from harvester.errors import FetchError
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.shared_pace import STATE_FILE, SharedPace
from harvester.fetch.sync import SyncFetcher

IDENTITY = Identity.from_contact("mailto:analyst@example.org")
TEST_CRAWL_DELAY = 0.05  # tests/conftest.py starts demo servers with this Crawl-delay
PAGES = [f"/seasons/2026/{name}.html" for name in ("players", "standings", "contracts")]
Factory = Callable[..., DemoServer]


def fetcher(folder: Path, **options: Any) -> SyncFetcher:
    return SyncFetcher(IDENTITY, cache_dir=folder, backoff_initial=0.05, backoff_max=0.2, **options)


def key(site: DemoServer) -> str:
    return site.url("").rstrip("/")  # the demo's URL names its port, as the file's keys do


def write_state(folder: Path, hosts: dict[str, Any]) -> None:
    (folder / STATE_FILE).write_text(json.dumps({"format": 1, "hosts": hosts}), encoding="utf-8")


def read_state(folder: Path) -> dict[str, Any]:
    hosts: dict[str, Any] = json.loads((folder / STATE_FILE).read_text(encoding="utf-8"))["hosts"]
    return hosts


def test_the_file_records_each_hosts_last_finish_and_interval(
    demo_site: DemoServer, tmp_path: Path, private_state_dir: Path
) -> None:
    before = time.time()
    with fetcher(tmp_path) as client:
        client.fetch(demo_site.url(PAGES[0]))
    record = read_state(private_state_dir)[key(demo_site)]
    assert record["started"] is None and record["owner"] == ""  # nothing left in flight
    assert before <= record["finished"] <= time.time()
    assert record["interval"] == TEST_CRAWL_DELAY  # the site's Crawl-delay


def test_a_lock_not_taken_within_the_cap_is_a_clear_error(
    demo_site: DemoServer, tmp_path: Path, private_state_dir: Path
) -> None:
    held = FileLock(str(private_state_dir / f"{STATE_FILE}.lock"))
    limits = FetchLimits(max_wait=0.3)
    with held, fetcher(tmp_path, limits=limits) as client, pytest.raises(FetchError) as caught:
        client.fetch(demo_site.url(PAGES[0]))
    lock = private_state_dir / f"{STATE_FILE}.lock"
    assert caught.value.message == (
        f"{key(demo_site)}: could not take the lock on the shared host pace ({lock}) within 0.3 s"
    )
    assert "another harvest on this machine holds it" in caught.value.hint
    assert demo_site.log == []  # not even robots.txt was asked for without the turn


@pytest.mark.parametrize(
    ("content", "problem"),
    [
        (b'{"format": 1, "hosts": {', "not JSON: "),
        (b'{"format": 1, "hosts": {"http://x:80": {"started": "soon"}}}', "not the shape"),
        (b'{"format": 99, "hosts": {}}', "not the shape"),
    ],
)
def test_a_damaged_file_is_moved_aside_and_started_afresh_with_one_warning(
    demo_site: DemoServer,
    tmp_path: Path,
    private_state_dir: Path,
    caplog: pytest.LogCaptureFixture,
    content: bytes,
    problem: str,
) -> None:
    state = private_state_dir / STATE_FILE
    state.write_bytes(content)
    with caplog.at_level(logging.WARNING), fetcher(tmp_path) as client:
        for path in PAGES:
            assert client.fetch(demo_site.url(path)).status == 200
    (warning,) = [r.getMessage() for r in caplog.records if r.levelno >= logging.WARNING]
    assert warning.startswith(f"the shared host pace at {state} was damaged ({problem}")
    (aside,) = private_state_dir.glob(f"{STATE_FILE}.damaged-*")
    assert aside.read_bytes() == content
    assert list(read_state(private_state_dir)) == [key(demo_site)]
    assert demo_site.violations() == []


def test_a_start_older_than_the_request_timeout_counts_as_finished(
    demo_site: DemoServer, tmp_path: Path, private_state_dir: Path
) -> None:
    # A process killed mid-request left its start; after the whole-request timeout (2 s) no
    # request of it can still be running. Were the start held in flight, the turn could not
    # come within the cap plus the timeout, and the fetch would fail.
    killed = {"started": time.time() - 5, "owner": "4242-dead", "finished": None, "by": "4242-dead"}
    write_state(private_state_dir, {key(demo_site): {**killed, "interval": 0.05, "hold_until": 0}})
    limits = FetchLimits(max_wait=0.5, total_timeout=2.0)
    with fetcher(tmp_path, limits=limits) as client:
        assert client.fetch(demo_site.url(PAGES[0])).status == 200
    record = read_state(private_state_dir)[key(demo_site)]
    assert (record["started"], record["owner"]) == (None, "")


def test_a_recent_start_is_a_request_in_flight_and_is_waited_for(
    demo_site: DemoServer, tmp_path: Path, private_state_dir: Path
) -> None:
    # Another process started a request just now and has not finished it: ours starts only
    # once that start is stale (1 s, the whole-request timeout) plus the interval after it.
    started = time.time()
    other = {"started": started, "owner": "4242-busy", "finished": started - 10, "by": "4242-busy"}
    write_state(private_state_dir, {key(demo_site): {**other, "interval": 0.05, "hold_until": 0}})
    with fetcher(tmp_path, limits=FetchLimits(total_timeout=1.0)) as client:
        client.fetch(demo_site.url(PAGES[0]))
    assert demo_site.log[0].wall >= started + 1.0 + TEST_CRAWL_DELAY  # the server's clock


def test_a_retry_after_in_one_fetcher_holds_another(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    site = demo_site_factory(forced={PAGES[0]: [429]}, forced_retry_after=1)
    with fetcher(tmp_path / "a", retries=0) as client, pytest.raises(FetchError):
        client.fetch(site.url(PAGES[0]))
    (refused,) = [record for record in site.log if record.status == 429]
    # Another cache folder, so another archive's harvest: it must wait out the Retry-After too.
    with fetcher(tmp_path / "b") as client:
        client.fetch(site.url(PAGES[1]))
    later = [record for record in site.log if record.started > refused.started]
    assert [record.path for record in later] == ["/robots.txt", PAGES[1]]
    assert min(record.wall for record in later) >= refused.wall + 1.0  # RFC 9110 §10.2.3


def test_a_finish_in_the_future_counts_as_now(private_state_dir: Path) -> None:
    # The wall clock stepped back an hour since the finish was written: waiting an hour for
    # it would stall the host; the record is read as finished now, and the pace applies.
    now = time.time()
    host = ("http", "127.0.0.1", 9)
    write_state(
        private_state_dir,
        {
            "http://127.0.0.1:9": {
                "started": None,
                "owner": "",
                "finished": now + 3600,
                "by": "4242-before",
                "interval": 0.0,
                "hold_until": 0,
            }
        },
    )
    pace = SharedPace(max_wait=0.5, stale_after=1.0)

    async def one_turn() -> None:
        await pace.finish(host, await pace.begin(host, 0.0))

    asyncio.run(one_turn())  # were the hour waited for, the cap (0.5 s) would make it fail
    assert read_state(private_state_dir)["http://127.0.0.1:9"]["finished"] < now + 60
