"""The cap on any single wait and the announcement of long ones, against real loopback servers."""

from __future__ import annotations

import logging
from collections.abc import Callable

import pytest

from harvester.demo.server import DemoServer
from harvester.errors import FetchLimitError, RobotsDisallowedError
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.pacing import HostPacer, host_key
from harvester.fetch.sync import SyncFetcher
from harvester.fetch.waits import WaitNotice, log_wait
from tests.fetch.misbehaving import ScriptedSite, html, redirect

IDENTITY = Identity.from_contact("mailto:analyst@example.org")
PLAYERS = "/seasons/2026/players.html"
STANDINGS = "/seasons/2026/standings.html"
Factory = Callable[..., DemoServer]


def test_the_default_cap_is_ten_minutes() -> None:
    assert FetchLimits().max_wait == 600.0


@pytest.mark.parametrize(
    ("robots_line", "message", "hint"),
    [
        (
            "Crawl-delay: 86400",
            "robots.txt asks for 86400 s between requests (its Crawl-delay), over the 600 s cap",
            "to accept it, raise the wait cap (max_wait) to at least 86400 s",
        ),
        (
            # 400 nines read as a float are infinity: no cap can accept them.
            "Crawl-delay: " + "9" * 400,
            "robots.txt asks for an endless wait between requests (its Crawl-delay)",
            "no cap accepts an endless wait; leave this site out of the recipe",
        ),
        (
            "Request-rate: 1/24h",  # common practice, no published source: one per 86400 s
            "robots.txt asks for 86400 s between requests (its Request-rate), over the 600 s cap",
            "to accept it, raise the wait cap (max_wait) to at least 86400 s",
        ),
    ],
)
def test_a_site_asking_for_a_wait_over_the_cap_is_skipped_for_the_run(
    demo_site_factory: Factory, robots_line: str, message: str, hint: str
) -> None:
    site = demo_site_factory(robots_txt=f"User-agent: *\n{robots_line}\n")
    with SyncFetcher(IDENTITY) as client:
        for path in (PLAYERS, STANDINGS):
            with pytest.raises(FetchLimitError) as caught:
                client.fetch(site.url(path))
            text = str(caught.value)
            assert text.startswith(f"{site.url(path)}: {message}")
            assert f"{site.base_url} is skipped for this run" in text
            assert text.endswith(hint) and "\n" not in text
    assert [record.path for record in site.log] == ["/robots.txt"]


def test_a_raised_cap_accepts_the_long_crawl_delay(demo_site_factory: Factory) -> None:
    site = demo_site_factory(robots_txt="User-agent: *\nCrawl-delay: 86400\n")
    with SyncFetcher(IDENTITY, limits=FetchLimits(max_wait=86400)) as client:
        client.check_robots(site.url(PLAYERS))
        assert client.fetcher.pacer.interval(host_key(site.url(PLAYERS))) == 86400


def test_a_retry_after_over_the_cap_fails_at_once_and_skips_the_host(
    demo_site_factory: Factory,
) -> None:
    # RFC 9110 §10.2.3: the site asks for three years; we neither sleep nor ask sooner.
    site = demo_site_factory(forced={PLAYERS: [503]}, forced_retry_after=99999999)
    with SyncFetcher(IDENTITY) as client:
        with pytest.raises(FetchLimitError) as caught:
            client.fetch(site.url(PLAYERS))
        assert str(caught.value) == (
            f"{site.url(PLAYERS)}: HTTP 503 with Retry-After: 99999999 asks for 99999999 s"
            f" before the next request, over the 600 s cap on any one wait; {site.base_url}"
            " is skipped for this run — to accept it, raise the wait cap (max_wait) to at"
            " least 99999999 s"
        )
        with pytest.raises(FetchLimitError, match="Retry-After: 99999999"):
            client.fetch(site.url(STANDINGS))
    assert [record.path for record in site.log] == ["/robots.txt", PLAYERS]


def test_a_long_wait_is_announced_once_with_host_seconds_and_reason(
    demo_site_factory: Factory,
) -> None:
    site = demo_site_factory(forced={PLAYERS: [503]}, forced_retry_after=1)
    notices: list[WaitNotice] = []
    # The threshold lowered from five seconds to half a second, so the test waits only 1 s.
    pacer = HostPacer(announce_after=0.5)
    with SyncFetcher(IDENTITY, pacer=pacer, on_wait=notices.append) as client:
        client.fetch(site.url(PLAYERS))  # 503, Retry-After: 1, then 200
    assert [(n.host, n.reason) for n in notices] == [
        (site.base_url, "Retry-After: 1 s after HTTP 503")
    ]
    assert 0.5 < notices[0].seconds <= 1.1  # about the Retry-After; jitter only adds


def test_the_default_announcer_logs_one_warning_line(caplog: pytest.LogCaptureFixture) -> None:
    with caplog.at_level(logging.WARNING, logger="harvester.fetch"):
        log_wait(WaitNotice("http://127.0.0.1:8650", 30.4, "Retry-After: 30 s after HTTP 429"))
    assert [(r.name, r.levelno, r.getMessage()) for r in caplog.records] == [
        (
            "harvester.fetch",
            logging.WARNING,
            "waiting 30 s for http://127.0.0.1:8650: Retry-After: 30 s after HTTP 429",
        )
    ]


def test_a_robots_redirect_to_a_file_url_is_reported_as_such() -> None:
    script = {"/robots.txt": [redirect("file:///etc/robots.txt")], "/a": [html()]}
    with ScriptedSite(script) as site, SyncFetcher(IDENTITY) as client:
        with pytest.raises(RobotsDisallowedError) as caught:
            client.fetch(site.url("/a"))
        # RFC 9309 §2.3.1.4: what cannot be fetched is unreachable, so everything is disallowed.
        assert "robots.txt redirects to a file: URL (file:///etc/robots.txt)" in str(caught.value)
        assert "loop" not in str(caught.value)
        assert site.requests_for("/a") == []


def test_a_whole_number_of_seconds_given_as_an_int_reads_the_same() -> None:
    # FetchLimits(max_wait=1) from Python code is an int, not a float; the message must not care.
    from harvester.fetch.waits import seconds_text

    assert seconds_text(600) == seconds_text(600.0) == "600 s"
    assert seconds_text(0.5) == "0.5 s"
