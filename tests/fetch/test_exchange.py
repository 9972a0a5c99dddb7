"""Retries, back-off and refused redirects, judged by real loopback servers' request logs.

The servers misbehave on purpose (tests/fetch/misbehaving.py): broken framing, bodies that claim
a compression they lack, invalid redirects, credentials and private addresses in a Location.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

import pytest

from harvester.demo.replies import HTML, Reply, page
from harvester.demo.server import DemoServer
from harvester.errors import FetchError, FetchLimitError
from harvester.fetch.identity import Identity
from harvester.fetch.pacing import host_key
from harvester.fetch.sync import SyncFetcher
from tests.fetch.misbehaving import LoopbackOnly, ScriptedSite, html, redirect

IDENTITY = Identity.from_contact("mailto:analyst@example.org")
TEST_CRAWL_DELAY = 0.05  # tests/conftest.py starts demo servers with this Crawl-delay
PAGES = [f"/seasons/2026/{name}.html" for name in ("players", "standings", "contracts")]
Factory = Callable[..., DemoServer]


def fetcher(**options: Any) -> SyncFetcher:
    options.setdefault("backoff_initial", 0.05)
    options.setdefault("backoff_max", 0.2)
    return SyncFetcher(IDENTITY, **options)


def test_after_a_retry_after_the_pace_is_the_sites_again(demo_site_factory: Factory) -> None:
    site = demo_site_factory(forced={PAGES[0]: [503]}, forced_retry_after=1)
    with fetcher() as client:
        for path in PAGES:
            client.fetch(site.url(path))
        interval = client.fetcher.pacer.interval(host_key(site.url(PAGES[0])))
    first, second = site.requests_for(PAGES[0])
    assert second.started - first.started >= 1.0  # RFC 9110 §10.2.3: never earlier
    # The site named the wait; nothing is piled on after it (before: 1 s, decaying 10 %).
    assert interval == TEST_CRAWL_DELAY
    assert site.violations() == []


@pytest.mark.parametrize(
    ("reply", "message"),
    [
        (
            Reply(200, {"Content-Type": HTML, "Content-Length": "abc"}, page("x", "")),
            "the answer breaks HTTP's message framing (bad Content-Length)",
        ),
        (
            Reply(200, {"Content-Type": HTML, "Content-Encoding": "gzip"}, page("x", "")),
            "the body claims Content-Encoding gzip but does not decode",
        ),
        (
            Reply(200, {"Content-Type": HTML, "Content-Encoding": "deflate"}, page("x", "")),
            "the body claims Content-Encoding deflate but does not decode",
        ),
        (
            redirect("http://[::1/next"),
            "redirect to an invalid Location (Invalid URL in location header: Invalid port",
        ),
        (
            # httpx reads the Location itself, even with redirects off, and cannot hold it.
            redirect("javascript:alert(1)"),
            "redirect to an invalid Location (For absolute URLs, path must be empty",
        ),
        (
            redirect("http://127.0.0.1:99999/next"),
            "redirect to http://127.0.0.1:99999/next refused: invalid URL (Port out of range",
        ),
    ],
)
def test_failures_a_retry_cannot_fix_are_not_retried(reply: Reply, message: str) -> None:
    with ScriptedSite({"/a": [reply]}) as site, fetcher(retries=3) as client:
        with pytest.raises(FetchError) as caught:
            client.fetch(site.url("/a"))
        assert message in str(caught.value)
        assert "gave up" not in str(caught.value)
        # The server logs a request as it finishes its reply; the client may have given up on
        # the headers before that, so let the server finish first (no retry can come: the
        # fetch call has returned).
        deadline = time.monotonic() + 5
        while not site.requests_for("/a") and time.monotonic() < deadline:
            time.sleep(0.01)
        assert len(site.requests_for("/a")) == 1


def test_an_invalid_url_is_refused_before_any_request(demo_site: DemoServer) -> None:
    with fetcher() as client, pytest.raises(FetchLimitError) as caught:
        client.fetch(f"http://127.0.0.1:{demo_site.port}0000/a")
    assert "invalid URL (Port out of range 0-65535)" in str(caught.value)
    assert demo_site.log == []


def test_a_redirect_carrying_credentials_is_refused_and_nothing_leaks() -> None:
    with ScriptedSite({"/a": [html()], "/b": [html()]}) as site, fetcher() as client:
        target = site.url("/b").replace("http://", "http://user:secret@")
        bouncer = ScriptedSite({"/a": [redirect(target)]})
        with bouncer, pytest.raises(FetchLimitError) as caught:
            client.fetch(bouncer.url("/a"))
        text = str(caught.value)
        assert (
            f"redirect to {site.url('/b').replace('http://', 'http://user:***@')} refused" in text
        )
        assert "the URL carries user info (credentials), which harvester never sends" in text
        assert "secret" not in text
        assert site.log == []  # nothing was sent to the credentialed URL
        assert all("authorization" not in record.headers for record in bouncer.log)


def test_a_loopback_site_may_not_redirect_to_a_link_local_address() -> None:
    guard = LoopbackOnly()  # if the refusal failed, the guard would stop the request
    metadata = "http://169.254.169.254/latest/meta-data/"
    with ScriptedSite({"/a": [redirect(metadata)]}) as site, fetcher(transport=guard) as client:
        with pytest.raises(FetchLimitError) as caught:
            client.fetch(site.url("/a"))
        assert str(caught.value).startswith(
            f"{site.url('/a')}: redirect to {metadata} refused: it leads from a loopback address"
            " to a link-local address"
        )
    assert guard.refused == []


def test_a_loopback_site_may_redirect_within_loopback() -> None:
    with ScriptedSite({"/b": [html("<p>here</p>")]}) as target:
        site = ScriptedSite({"/a": [redirect(target.url("/b"))]})
        with site, fetcher(transport=LoopbackOnly()) as client:
            capture = client.fetch(site.url("/a"))
        assert capture.final_url == target.url("/b")
    assert b"here" in capture.body
