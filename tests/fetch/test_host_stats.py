"""Per-host counts and request records, judged by the demo server's own request log.

The server logs every request it handles on its own clock (``DemoServer.log``); each count of
``Fetcher.stats`` must equal what that log shows, never what a copy of the counting code says.
"""

from __future__ import annotations

import json
from collections import Counter
from collections.abc import Callable
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import pytest

from harvester.demo.server import DemoServer
from harvester.errors import HttpStatusError
from harvester.fetch.host_stats import HostStats
from harvester.fetch.identity import Identity
from harvester.fetch.sync import SyncFetcher

TEST_CRAWL_DELAY = 0.05  # tests/conftest.py starts demo servers with this Crawl-delay
IDENTITY = Identity.from_contact("mailto:analyst@example.org")
PLAYERS = "/seasons/2026/players.html"
STANDINGS = "/seasons/2026/standings.html"
CONTRACTS = "/seasons/2026/contracts.html"
Factory = Callable[..., DemoServer]


def fetcher(**options: Any) -> SyncFetcher:
    options.setdefault("backoff_initial", 0.05)
    options.setdefault("backoff_max", 0.2)
    return SyncFetcher(IDENTITY, **options)


def origin(site: DemoServer) -> str:
    return site.base_url.rstrip("/")


def test_requests_and_statuses_per_host_equal_the_servers_log(demo_site: DemoServer) -> None:
    with fetcher() as client:
        client.fetch(demo_site.url(PLAYERS))
        client.fetch(demo_site.url(STANDINGS))
        with pytest.raises(HttpStatusError):  # a failure of that page only; the request counts
            client.fetch(demo_site.url("/nowhere.html"))
        client.fetch(demo_site.url(CONTRACTS))
        stats = client.fetcher.stats
    log = demo_site.log
    (counts,) = stats.hosts().values()
    assert list(stats.hosts()) == [origin(demo_site)]
    # Every request the server saw, robots.txt included, and not one more.
    assert counts.requests == len(log) == 5
    assert counts.statuses == dict(Counter(record.status for record in log))
    assert counts.retries == 0 and counts.not_modified == 0 and counts.cache_hits == 0
    records = stats.records()
    assert [record.url for record in records] == [demo_site.url(r.path) for r in log]
    assert [record.status for record in records] == [record.status for record in log]


def test_each_record_starts_before_the_server_saw_it_and_keeps_the_crawl_delay(
    demo_site: DemoServer,
) -> None:
    with fetcher() as client:
        for path in (PLAYERS, STANDINGS, CONTRACTS):
            client.fetch(demo_site.url(path))
        stats = client.fetcher.stats
    records = stats.records()
    assert len(records) == len(demo_site.log) == 4
    for record, seen in zip(records, demo_site.log, strict=True):
        # Same machine, same wall clock: the request left before the server began handling
        # it (a millisecond of slack for the clocks' resolution).
        assert record.started_at.tzinfo is UTC
        assert record.started_at.timestamp() <= seen.wall + 0.001
    assert records[0].gap_seconds is None  # robots.txt: nothing before it on this host
    gaps = [record.gap_seconds for record in records[1:]]
    # The demo robots.txt names Crawl-delay (common practice, no published source); the gap is
    # counted from the previous request's end, so it can only be at least that long.
    assert all(gap is not None and gap >= demo_site.routes.crawl_delay for gap in gaps)
    (counts,) = stats.hosts().values()
    assert counts.interval_seconds == demo_site.routes.crawl_delay
    assert demo_site.violations() == []


def test_a_fresh_cached_copy_is_a_cache_hit_and_no_request(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    with fetcher(cache_dir=tmp_path) as client:
        client.fetch(demo_site.url(PLAYERS))
        client.fetch(demo_site.url(PLAYERS))  # max-age=60: fresh, served without asking
        stats = client.fetcher.stats
    (counts,) = stats.hosts().values()
    assert len(demo_site.requests_for(PLAYERS)) == 1
    assert counts.cache_hits == 1
    assert counts.requests == len(demo_site.log) == 2  # robots.txt and the page, once
    with fetcher(cache_dir=tmp_path, mode="offline") as client:
        client.fetch(demo_site.url(PLAYERS))
        offline = client.fetcher.stats
    assert len(demo_site.log) == 2  # --offline asked nothing
    (counts,) = offline.hosts().values()
    assert (counts.cache_hits, counts.requests) == (1, 0)
    assert offline.records() == []


def test_revalidations_answered_304_are_counted(demo_site_factory: Factory, tmp_path: Path) -> None:
    site = demo_site_factory(max_age=0)  # stale at once: every later fetch revalidates
    with fetcher(cache_dir=tmp_path) as client:
        for _ in range(3):
            client.fetch(site.url(PLAYERS))
        stats = client.fetcher.stats
    (counts,) = stats.hosts().values()
    served = [record.status for record in site.requests_for(PLAYERS)]
    # RFC 9111 §4.3.1: the stored validator goes out; the server answers 304 (RFC 9110 §15.4.5).
    assert served == [200, 304, 304]
    assert counts.not_modified == served.count(304) == 2
    assert counts.statuses[304] == 2
    assert counts.cache_hits == 0  # each copy was asked about, so none is a hit


def test_retry_after_shows_as_retries_and_waited_seconds(demo_site_factory: Factory) -> None:
    site = demo_site_factory(forced={PLAYERS: [503, 503]}, forced_retry_after=1)
    with fetcher() as client:
        client.fetch(site.url(PLAYERS))
        stats = client.fetcher.stats
    (counts,) = stats.hosts().values()
    assert [record.status for record in site.requests_for(PLAYERS)] == [503, 503, 200]
    assert counts.retries == 2
    assert counts.requests == len(site.log) == 4
    assert counts.statuses == {200: 2, 503: 2}
    # RFC 9110 §10.2.3: each 503 asked for one second before the next request, so the
    # requests waited at least two seconds in all.
    assert counts.waited_seconds >= 2.0
    gaps = [record.gap_seconds for record in stats.records()[2:]]
    assert all(gap is not None and gap >= 1.0 for gap in gaps)


def test_a_too_fast_client_is_told_429_and_the_retry_is_counted(
    demo_site_factory: Factory,
) -> None:
    # The site enforces 0.3 s but its robots.txt names no Crawl-delay, and the recipe asks for
    # none: the fetcher's one-second default would be polite, so the test lowers it to zero.
    site = demo_site_factory(
        crawl_delay=0.3, enforce=True, retry_after=1, robots_txt="User-agent: *\nCrawl-delay: 0\n"
    )
    with fetcher() as client:
        client.fetch(site.url(PLAYERS))
        stats = client.fetcher.stats
    (counts,) = stats.hosts().values()
    refused = [record for record in site.log if record.status == 429]
    assert len(refused) == len(site.violations()) >= 1
    assert counts.statuses.get(429) == len(refused)
    assert counts.retries == len(refused)
    assert counts.requests == len(site.log)
    assert counts.waited_seconds >= 1.0  # the Retry-After: 1 the server sent (RFC 9110 §10.2.3)


def test_to_report_is_json_ready_and_oldest_first(demo_site: DemoServer) -> None:
    with fetcher() as client:
        client.fetch(demo_site.url(PLAYERS))
        client.fetch(demo_site.url(STANDINGS))
        hosts, requests = client.fetcher.stats.to_report()
    hosts, requests = json.loads(json.dumps(hosts)), json.loads(json.dumps(requests))
    counts = hosts[origin(demo_site)]
    assert counts["requests"] == len(demo_site.log) == 3
    assert counts["statuses"] == {"200": 3}
    assert [item["url"] for item in requests] == [demo_site.url(r.path) for r in demo_site.log]
    assert {item["host"] for item in requests} == {origin(demo_site)}
    started = [datetime.fromisoformat(item["started_at"]) for item in requests]
    assert started == sorted(started)
    assert requests[0]["gap_seconds"] is None


def test_gaps_count_from_the_previous_end_on_the_same_host_only() -> None:
    stats = HostStats(clock=lambda: 0.0)
    moment = datetime(2026, 3, 1, tzinfo=UTC)
    stats.request("http://127.0.0.1:1/a", moment, 10.0, 10.5, 200)
    stats.request("http://127.0.0.1:2/a", moment, 10.6, 10.7, 200)  # another port, another host
    stats.request("http://127.0.0.1:1/b", moment, 11.25, 11.5, 304)
    stats.request("http://127.0.0.1:1/c", moment, 12.0, 12.0, None)  # no answer: still counted
    gaps = [record.gap_seconds for record in stats.records()]
    assert gaps == [None, None, 0.75, 0.5]
    first = stats.hosts()["http://127.0.0.1:1"]
    assert (first.requests, first.not_modified, first.statuses) == (3, 1, {200: 1, 304: 1})
