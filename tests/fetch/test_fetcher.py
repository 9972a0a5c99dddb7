"""The fetcher against the real demo server on 127.0.0.1, judged by the server's request log."""

from __future__ import annotations

import itertools
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit

import pytest

from harvester.demo.server import DemoServer
from harvester.errors import (
    FetchError,
    FetchLimitError,
    HostPausedError,
    HttpStatusError,
    NotCachedError,
    RobotsDisallowedError,
)
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.pacing import HostPacer
from harvester.fetch.sync import SyncFetcher
from harvester.fetch.transfer import Answer
from tests.fetch.misbehaving import ScriptedSite, html

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


def pause() -> None:
    """Let the Crawl-delay pass: a new fetcher does not know when the last one asked."""
    time.sleep(TEST_CRAWL_DELAY * 2)


def start_gaps(site: DemoServer) -> list[float]:
    starts = [record.started for record in site.log]
    return [later - earlier for earlier, later in itertools.pairwise(starts)]


def test_request_starts_are_spaced_by_the_crawl_delay(demo_site: DemoServer) -> None:
    with fetcher() as client:
        for path in (PLAYERS, STANDINGS, CONTRACTS, "/index.html"):
            client.fetch(demo_site.url(path))
    # The server's own clock: robots.txt plus four pages, no start closer than Crawl-delay.
    assert len(demo_site.log) == 5
    assert demo_site.log[0].path == "/robots.txt"
    assert demo_site.violations() == []
    assert min(start_gaps(demo_site)) >= TEST_CRAWL_DELAY


def test_the_recipe_may_ask_for_a_slower_pace_never_a_faster_one(demo_site: DemoServer) -> None:
    with fetcher(min_interval=0.2) as client:
        client.fetch(demo_site.url(PLAYERS))
        client.fetch(demo_site.url(STANDINGS))
    assert start_gaps(demo_site)[-1] >= 0.2
    demo_site.clear_log()
    pause()
    with fetcher(min_interval=0.0) as client:  # asks for no delay: the Crawl-delay still holds
        client.fetch(demo_site.url(PLAYERS))
        client.fetch(demo_site.url(CONTRACTS))
    assert demo_site.violations() == []


def test_every_request_identifies_us(demo_site: DemoServer) -> None:
    with fetcher() as client:
        client.fetch(demo_site.url(PLAYERS))
    for record in demo_site.log:
        assert record.headers["user-agent"] == IDENTITY.user_agent
        assert record.headers["from"] == "analyst@example.org"  # RFC 9110 §10.1.2


def test_disallowed_paths_are_never_requested(demo_site: DemoServer) -> None:
    with fetcher() as client, pytest.raises(RobotsDisallowedError) as caught:
        client.fetch(demo_site.url("/private/"))
    assert "Disallow: /private/" in str(caught.value)
    assert demo_site.requests_for("/private/") == []
    assert [record.path for record in demo_site.log] == ["/robots.txt"]


def test_retry_after_is_honoured(demo_site_factory: Factory) -> None:
    site = demo_site_factory(forced={PLAYERS: [429]}, forced_retry_after=1)
    with fetcher() as client:
        capture = client.fetch(site.url(PLAYERS))
    assert capture.status == 200
    first, second = site.requests_for(PLAYERS)
    assert first.status == 429 and second.status == 200
    # RFC 9110 §10.2.3 / RFC 6585 §4: wait at least Retry-After seconds before asking again.
    assert second.started - first.started >= 1.0


def test_503_without_retry_after_backs_off_and_recovers(demo_site_factory: Factory) -> None:
    site = demo_site_factory(forced={PLAYERS: [503, 503]})
    with fetcher(retries=3) as client:
        assert client.fetch(site.url(PLAYERS)).status == 200
    statuses = [record.status for record in site.requests_for(PLAYERS)]
    assert statuses == [503, 503, 200]
    assert site.violations() == []


def test_a_fresh_cache_entry_causes_no_request(demo_site: DemoServer, tmp_path: Path) -> None:
    with fetcher(cache_dir=tmp_path) as client:
        first = client.fetch(demo_site.url(PLAYERS))
        second = client.fetch(demo_site.url(PLAYERS))  # max-age=60 (RFC 9111 §4.2.1)
    assert len(demo_site.requests_for(PLAYERS)) == 1
    assert first.origin == "live" and second.origin == "cache"
    assert second.body == first.body


def test_a_stale_entry_is_revalidated_and_304_refreshes_it(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    site = demo_site_factory(max_age=0)
    with fetcher(cache_dir=tmp_path) as client:
        first = client.fetch(site.url(PLAYERS))
        second = client.fetch(site.url(PLAYERS))
    one, two = site.requests_for(PLAYERS)
    assert one.status == 200
    # RFC 9111 §4.3.1: the stored ETag goes out as If-None-Match; the server answers 304.
    assert two.headers["if-none-match"] == first.header("etag")
    assert two.status == 304
    assert second.origin == "cache" and second.revalidated
    assert second.body == first.body


def test_a_changed_page_replaces_the_stale_copy(demo_site_factory: Factory, tmp_path: Path) -> None:
    site = demo_site_factory(max_age=0)
    with fetcher(cache_dir=tmp_path) as client:
        first = client.fetch(site.url(PLAYERS))
        site.advance()  # the demo clock moves: the latest season's page changes
        second = client.fetch(site.url(PLAYERS))
    assert second.origin == "live"
    assert second.body != first.body
    assert site.requests_for(PLAYERS)[-1].status == 200


def test_refresh_revalidates_even_fresh_entries(demo_site: DemoServer, tmp_path: Path) -> None:
    with fetcher(cache_dir=tmp_path) as client:
        client.fetch(demo_site.url(PLAYERS))
    pause()
    with fetcher(cache_dir=tmp_path, mode="refresh") as client:
        client.fetch(demo_site.url(PLAYERS))
    assert [r.status for r in demo_site.requests_for(PLAYERS)] == [200, 304]


def test_offline_uses_only_the_cache(demo_site: DemoServer, tmp_path: Path) -> None:
    with fetcher(cache_dir=tmp_path) as client:
        client.fetch(demo_site.url(PLAYERS))
    demo_site.clear_log()
    with fetcher(cache_dir=tmp_path, mode="offline") as client:
        assert client.fetch(demo_site.url(PLAYERS)).origin == "cache"
        with pytest.raises(NotCachedError, match="--offline"):
            client.fetch(demo_site.url(STANDINGS))
    assert demo_site.log == []


@pytest.mark.parametrize(
    ("cache_control", "usable_offline"),
    [
        ("max-age=0, must-revalidate", False),  # stale: RFC 9111 §4.2.4 forbids serving it
        ("max-age=60, must-revalidate", True),  # still fresh: must-revalidate binds once stale
        ("max-age=60, no-cache", False),  # RFC 9111 §5.2.2.4: never reused unvalidated
        ("max-age=0", True),  # stale, but nothing forbids an offline run from using it
    ],
)
def test_offline_never_serves_what_cache_control_forbids_serving_stale(
    tmp_path: Path, cache_control: str, usable_offline: bool
) -> None:
    with ScriptedSite({"/a": [html(Cache_Control=cache_control)]}) as site:
        with fetcher(cache_dir=tmp_path) as client:
            client.fetch(site.url("/a"))
        with fetcher(cache_dir=tmp_path, mode="offline") as client:
            if usable_offline:
                assert client.fetch(site.url("/a")).origin == "cache"
            else:
                with pytest.raises(NotCachedError) as caught:
                    client.fetch(site.url("/a"))
                named = "no-cache" if "no-cache" in cache_control else "must-revalidate"
                assert str(caught.value) == (
                    f"{site.url('/a')}: the cached copy is stale and its Cache-Control ({named})"
                    " forbids using it without asking the site, which --offline forbids"
                    " — run once without --offline to revalidate it"
                )
        assert len(site.requests_for("/a")) == 1


def test_immutable_pages_are_never_asked_for_again(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    site = demo_site_factory(max_age=0)
    with fetcher(cache_dir=tmp_path) as client:
        client.fetch(site.url(PLAYERS), immutable=True)
        client.fetch(site.url(PLAYERS), immutable=True)
    assert len(site.requests_for(PLAYERS)) == 1


def test_refresh_revalidates_immutable_pages_too(demo_site: DemoServer, tmp_path: Path) -> None:
    # docs/fetching.md: in refresh mode every page is revalidated, fresh or not.
    with fetcher(cache_dir=tmp_path) as client:
        client.fetch(demo_site.url(PLAYERS), immutable=True)
    pause()
    with fetcher(cache_dir=tmp_path, mode="refresh") as client:
        capture = client.fetch(demo_site.url(PLAYERS), immutable=True)
    assert [r.status for r in demo_site.requests_for(PLAYERS)] == [200, 304]
    assert capture.revalidated


def test_one_hosts_circuit_breaker_leaves_the_others_running(demo_site_factory: Factory) -> None:
    failing = demo_site_factory(forced={PLAYERS: [503] * 10, STANDINGS: [503] * 10})
    healthy = demo_site_factory()
    pacer = HostPacer(failure_limit=2)
    with fetcher(retries=0, pacer=pacer) as client:
        for path in (PLAYERS, STANDINGS):
            with pytest.raises(FetchError, match="HTTP 503"):
                client.fetch(failing.url(path))
        with pytest.raises(HostPausedError, match="2 consecutive failures"):
            client.fetch(failing.url(CONTRACTS))
        assert client.fetch(healthy.url(PLAYERS)).status == 200
    assert failing.requests_for(CONTRACTS) == []


def test_missing_pages_are_status_errors_not_retries(demo_site: DemoServer) -> None:
    with fetcher() as client, pytest.raises(HttpStatusError) as caught:
        client.fetch(demo_site.url("/seasons/2013/players.html"))  # retired: 410 Gone
    assert caught.value.status == 410
    assert len(demo_site.requests_for("/seasons/2013/players.html")) == 1


@pytest.mark.parametrize(
    ("status", "allowed"),
    [(404, True), (503, False)],  # RFC 9309 §2.3.1.3 unavailable, §2.3.1.4 unreachable
)
def test_robots_status_decides_allow_all_or_disallow_all(
    demo_site_factory: Factory, status: int, allowed: bool
) -> None:
    site = demo_site_factory(robots_status=status)
    with fetcher(retries=0) as client:
        if allowed:
            assert client.fetch(site.url("/private/")).status == 200
        else:
            with pytest.raises(RobotsDisallowedError, match="unreachable"):
                client.fetch(site.url(PLAYERS))
            assert site.requests_for(PLAYERS) == []


def test_robots_redirects_are_followed_up_to_five(demo_site_factory: Factory) -> None:
    # RFC 9309 §2.3.1.2: follow at least five redirects; the rules still apply.
    site = demo_site_factory(robots_redirects=5)
    with fetcher() as client, pytest.raises(RobotsDisallowedError):
        client.fetch(site.url("/private/"))


def test_robots_cached_for_the_run(demo_site: DemoServer) -> None:
    with fetcher() as client:
        client.fetch(demo_site.url(PLAYERS))
        client.fetch(demo_site.url(STANDINGS))
    assert len(demo_site.requests_for("/robots.txt")) == 1


def test_non_html_is_refused(demo_site: DemoServer) -> None:
    with fetcher() as client, pytest.raises(FetchLimitError, match="expected an HTML page"):
        client.fetch(demo_site.url("/data.csv"))


def test_a_body_over_the_limit_is_aborted(demo_site: DemoServer) -> None:
    limits = FetchLimits(max_body_bytes=1 << 20)
    with fetcher(limits=limits) as client:
        for path in ("/huge.html", "/huge-chunked.html"):
            with pytest.raises(FetchLimitError, match="limit"):
                client.fetch(demo_site.url(path))


def test_a_compression_bomb_is_stopped(demo_site: DemoServer) -> None:
    limits = FetchLimits(max_decoded_bytes=4 << 20)
    with fetcher(limits=limits) as client, pytest.raises(FetchLimitError, match="inflates"):
        client.fetch(demo_site.url("/bomb.html"))


def test_redirect_loops_are_detected(demo_site: DemoServer) -> None:
    with fetcher() as client, pytest.raises(FetchLimitError, match="redirect loop"):
        client.fetch(demo_site.url("/loop/a"))


def test_redirects_are_followed_and_recorded(demo_site: DemoServer) -> None:
    with fetcher() as client:
        capture = client.fetch(demo_site.url("/"))
    assert capture.final_url == demo_site.url("/index.html")
    assert capture.redirects == (demo_site.url("/"),)


def test_only_http_and_https(demo_site: DemoServer) -> None:
    with fetcher() as client, pytest.raises(FetchLimitError, match="scheme 'file'"):
        client.fetch("file:///etc/passwd")
    assert demo_site.log == []


def test_a_slow_answer_times_out_and_is_retried(demo_site_factory: Factory) -> None:
    site = demo_site_factory(slow={PLAYERS: 2.0})
    limits = FetchLimits(read_timeout=0.3, total_timeout=0.5)
    # The server logs a request when it answers, which it never does here; the message counts.
    with fetcher(limits=limits, retries=1) as client, pytest.raises(FetchError) as caught:
        client.fetch(site.url(PLAYERS))
    assert "gave up after 2 attempts: timed out" in str(caught.value)


def test_the_declared_charset_reaches_the_extractor(demo_site: DemoServer) -> None:
    from harvester import TableRule, extract_table, read_page

    with fetcher() as client:
        capture = client.fetch(demo_site.url(STANDINGS))
    assert capture.charset == "utf-8"  # from Content-Type (RFC 9110 §8.3.2)
    page = read_page(capture.body, capture.final_url, capture.charset)
    table = extract_table(page, TableRule(select="table#standings", group_rows="column")).table
    # 10 clubs; the U+2212 minus in goal difference survives the trip as a negative number.
    assert table.num_rows == 10
    assert min(table.column("gd").to_pylist()) < 0


def test_a_cached_copy_remembers_where_the_redirects_led(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    with fetcher(cache_dir=tmp_path) as client:
        first = client.fetch(demo_site.url("/"))
        second = client.fetch(demo_site.url("/"))
    assert second.origin == "cache"
    assert first.final_url == second.final_url == demo_site.url("/index.html")
    assert len(demo_site.requests_for("/")) == 1


def test_a_run_started_right_after_another_still_keeps_the_pace(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    # Two runs back to back (say, two cron jobs) share the cache folder; the second's first
    # request must still come a Crawl-delay after the first run's last one, on the server's clock.
    with fetcher(cache_dir=tmp_path, mode="refresh") as client:
        client.fetch(demo_site.url(PLAYERS))
    with fetcher(cache_dir=tmp_path, mode="refresh") as client:
        client.fetch(demo_site.url(STANDINGS))
    assert [record.path for record in demo_site.log] == ["/robots.txt", PLAYERS, STANDINGS]
    assert demo_site.violations() == []
    assert min(start_gaps(demo_site)) >= TEST_CRAWL_DELAY


def test_every_answer_reaches_the_listener_as_the_server_logged_it(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    # The snapshot archive keeps every exchange: robots.txt, redirects, pages and 304s alike.
    site = demo_site_factory(max_age=0)
    heard: list[Answer] = []
    with fetcher(cache_dir=tmp_path, on_answer=heard.append) as client:
        client.fetch(site.url("/"))  # a redirect to /index.html
        client.fetch(site.url(PLAYERS))
        client.fetch(site.url(PLAYERS))  # stale at once (max-age=0): revalidated, 304
    logged = [(record.bare_path, record.status) for record in site.log]
    assert [(urlsplit(a.url).path, a.status) for a in heard] == logged
    assert [status for _, status in logged] == [200, 302, 200, 200, 304]
    for answer, record in zip(heard, site.log, strict=True):
        sent = {name.lower(): value for name, value in answer.request_headers}
        # The request headers as they went out, as the server received them.
        assert sent["user-agent"] == record.headers["user-agent"]
        assert sent.get("if-none-match") == record.headers.get("if-none-match")
    assert heard[-1].body == b""  # RFC 9110 §15.4.5: a 304 has no content
