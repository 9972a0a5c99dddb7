"""Tests for the loopback HTTP plumbing, serving tiny routes of its own through httpx on 127.0.0.1.

The routes here are not the league's: whatever a host serves, binding, stopping, pacing, delays,
304s and the request log must behave as harvester/demo/loopback.py documents. Expected values
come from that contract, RFC 9110 and RFC 6585.
"""

from __future__ import annotations

import itertools
import re
import threading
import time
from collections.abc import Callable, Iterator
from typing import Any

import httpx
import pytest

from harvester.demo.loopback import LoopbackServer, Request
from harvester.demo.replies import Reply, error_reply, filler
from harvester.errors import HarvesterError
from tests.demo.polite import Polite, new_client

CRAWL_DELAY = 0.05
MIB = 1 << 20
NOTE = b"A note from a tiny host.\n"
NOTE_HEADERS = {
    "Content-Type": "text/plain; charset=utf-8",
    "ETag": '"n1"',
    "Last-Modified": "Wed, 01 Jul 2026 00:00:00 GMT",
    "Cache-Control": "max-age=5",
}


class Notes:
    """Routes of a tiny host: ``/note.txt``, a big streamed page, a failing path, else 404."""

    def __init__(self, big_bytes: int = MIB) -> None:
        self.big_bytes = big_bytes
        self.seen: list[Request] = []

    def reply(self, request: Request) -> Reply:
        self.seen.append(request)
        if request.path == "/note.txt":
            return Reply(200, dict(NOTE_HEADERS), NOTE)
        if request.path == "/big.html":
            length = {"Content-Length": str(self.big_bytes)}
            return Reply(
                200, {"Content-Type": "text/html", **length}, stream=filler(self.big_bytes)
            )
        if request.path == "/boom":
            raise RuntimeError("the routes failed")
        return error_reply(404)


Host = LoopbackServer[Notes]
Factory = Callable[..., Host]


@pytest.fixture
def host_factory() -> Iterator[Factory]:
    """Start hosts serving ``Notes`` with any options; all are stopped, and must be error-free."""
    started: list[Host] = []

    def start(routes: Notes | None = None, **options: Any) -> Host:
        options.setdefault("crawl_delay", CRAWL_DELAY)
        host = LoopbackServer(routes or Notes(), **options).start()
        started.append(host)
        return host

    try:
        yield start
    finally:
        for host in started:
            host.stop()
        for host in started:
            assert host.errors == []


@pytest.fixture
def host(host_factory: Factory) -> Host:
    return host_factory()


@pytest.fixture
def polite(host: Host) -> Iterator[Polite]:
    client = Polite(host)
    yield client
    client.client.close()


def wait_for_log(host: Host, path: str, seconds: float = 5.0) -> list[Any]:
    """The log's records for ``path``, waiting for a response still being written."""
    deadline = time.monotonic() + seconds
    while not (records := host.requests_for(path)) and time.monotonic() < deadline:
        time.sleep(0.01)
    return records


# -- binding and lifecycle ------------------------------------------------------------------


def test_binds_loopback_on_a_free_port(host_factory: Factory) -> None:
    one, two = host_factory(), host_factory()
    ports = []
    for host in (one, two):
        match = re.fullmatch(r"http://127\.0\.0\.1:(\d+)", host.base_url)
        assert match is not None
        ports.append(int(match[1]))
        with new_client(host) as client:
            assert client.get("/note.txt").content == NOTE
    assert 0 not in ports
    assert ports[0] != ports[1]


def test_context_manager_stops_even_with_an_open_keep_alive_connection() -> None:
    client = httpx.Client(trust_env=False)
    with LoopbackServer(Notes(), crawl_delay=0) as host:
        url = host.url("/note.txt")
        assert client.get(url).status_code == 200  # the connection stays open in the pool
    # Leaving the block returned although the client still holds its connection open.
    with pytest.raises(httpx.TransportError):
        client.get(url)
    client.close()
    with pytest.raises(HarvesterError, match="not started"):
        _ = host.base_url


def test_stop_ends_a_slow_response_at_once() -> None:
    host = LoopbackServer(Notes(), slow={"/note.txt": 30}).start()
    outcome: list[BaseException | int] = []

    def fetch() -> None:
        try:
            with new_client(host, timeout=20) as client:
                outcome.append(client.get("/note.txt").status_code)
        except httpx.HTTPError as error:
            outcome.append(error)

    worker = threading.Thread(target=fetch)
    worker.start()
    assert wait_for_log(host, "/note.txt", 0.3) == []  # still sleeping server-side
    host.stop()
    worker.join(timeout=10)
    # The reply was due in 30 s; the client already has its answer, so stop ended it at once.
    assert not worker.is_alive() and len(outcome) == 1
    assert host.errors == []


def test_starting_twice_is_an_error(host: Host) -> None:
    with pytest.raises(HarvesterError, match="already started"):
        host.start()


@pytest.mark.parametrize(
    ("options", "named"),
    [
        ({"port": 65536}, "port"),
        ({"tolerance": -0.5}, "tolerance"),
        ({"retry_after": -1}, "retry_after"),
        ({"slow": {"/note.txt": -2}}, "slow['/note.txt']"),
    ],
)
def test_invalid_option_is_a_one_line_error(options: dict[str, Any], named: str) -> None:
    with pytest.raises(HarvesterError) as caught:
        LoopbackServer(Notes(), **options)
    message = str(caught.value)
    assert named in message
    assert "\n" not in message


# -- what the routes see and what the server adds -----------------------------------------------


def test_routes_get_the_request_as_sent(host: Host) -> None:
    with new_client(host) as client:
        headers = [("X-Repeat", "one"), ("X-Repeat", "two"), ("Accept-Language", "en")]
        client.get("/note.txt?season=2026", headers=headers)
    [seen] = host.routes.seen
    assert (seen.method, seen.target, seen.path) == ("GET", "/note.txt?season=2026", "/note.txt")
    assert seen.base_url == host.base_url
    assert seen.headers["x-repeat"] == "one, two"  # repeats joined, names lower-cased
    assert seen.headers["accept-language"] == "en"


def test_a_reply_with_an_etag_gets_a_304_whatever_the_routes(polite: Polite) -> None:
    full = polite.get("/note.txt")
    assert full.status_code == 200 and full.content == NOTE
    assert full.headers["content-length"] == str(len(NOTE))  # added by the server
    for validators in (
        {"If-None-Match": 'W/"n1"'},  # weak comparison (RFC 9110 §13.1.2)
        {"If-Modified-Since": "Wed, 01 Jul 2026 00:00:00 GMT"},  # equal: not modified (§13.1.3)
    ):
        response = polite.get("/note.txt", headers=validators)
        assert response.status_code == 304
        assert response.content == b""
        # RFC 9110 §15.4.5: of the 200's headers, ETag and Cache-Control; Date on every response.
        assert response.headers["etag"] == '"n1"'
        assert response.headers["cache-control"] == "max-age=5"
        assert "content-type" not in response.headers
        assert "last-modified" not in response.headers
        assert "date" in response.headers
    assert polite.get("/note.txt", headers={"If-None-Match": '"n2"'}).status_code == 200


def test_an_exception_in_the_routes_is_recorded_not_printed(
    capfd: pytest.CaptureFixture[str],
) -> None:
    host = LoopbackServer(Notes(), crawl_delay=0).start()
    try:
        with new_client(host) as client:
            with pytest.raises(httpx.RemoteProtocolError):
                client.get("/boom")  # the connection closes with no response at all
            assert client.get("/note.txt").status_code == 200  # the server carries on
    finally:
        host.stop()
    [error] = host.errors
    assert error.rstrip().endswith("RuntimeError: the routes failed")
    assert host.requests_for("/boom") == []  # nothing was written, so nothing was logged
    assert capfd.readouterr().err == ""


def test_other_methods_get_501_and_are_not_logged(host: Host) -> None:
    with new_client(host) as client:
        assert client.post("/note.txt", content=b"x").status_code == 501  # the stdlib's answer
        assert client.delete("/note.txt").status_code == 501
    assert host.log == []
    assert host.routes.seen == []


# -- pacing ------------------------------------------------------------------------------------


def test_request_sooner_than_the_crawl_delay_gets_429(host: Host) -> None:
    with new_client(host) as client:
        assert client.get("/note.txt").status_code == 200
        too_soon = client.get("/note.txt")
        assert too_soon.status_code == 429  # RFC 6585 §4
        # RFC 9110 §10.2.3: delay-seconds = 1*DIGIT; the default is 1.
        assert too_soon.headers["retry-after"] == "1"
        assert [record.path for record in host.violations()] == ["/note.txt"]
    assert len(host.routes.seen) == 1  # a 429 never reaches the routes


def test_spaced_requests_are_served(host: Host, polite: Polite) -> None:
    statuses = [polite.get(path).status_code for path in ("/note.txt", "/missing", "/note.txt")]
    assert statuses == [200, 404, 200]
    assert host.violations() == []
    starts = [record.started for record in host.log]
    assert all(later - earlier >= host.crawl_delay for earlier, later in itertools.pairwise(starts))


def test_pacing_counts_all_clients_together(host: Host) -> None:
    with new_client(host) as first, new_client(host) as second:
        assert first.get("/note.txt").status_code == 200
        assert second.get("/note.txt").status_code == 429


def test_without_enforcement_violations_are_served_and_counted(host_factory: Factory) -> None:
    host = host_factory(enforce=False)
    with new_client(host) as client:
        statuses = [client.get("/note.txt").status_code for _ in range(3)]
    assert statuses == [200, 200, 200]
    assert [record.violation for record in host.log] == [False, True, True]


def test_retry_after_option(host_factory: Factory) -> None:
    host = host_factory(retry_after=7)
    with new_client(host) as client:
        client.get("/note.txt")
        assert client.get("/note.txt").headers["retry-after"] == "7"


def test_tolerance_shortens_the_required_gap(host_factory: Factory) -> None:
    host = host_factory(crawl_delay=0.3, tolerance=0.2)  # gaps of 0.1 s or more pass
    with new_client(host) as client:
        assert client.get("/note.txt").status_code == 200
        time.sleep(0.15)
        assert client.get("/note.txt").status_code == 200
        assert client.get("/note.txt").status_code == 429


# -- slow and abandoned responses ---------------------------------------------------------------


def test_slow_path_makes_a_client_time_out(host_factory: Factory) -> None:
    host = host_factory(slow={"/note.txt": 1.0})
    # A read timeout is the proof the reply was held back (httpx raises it only after 0.2 s
    # without a byte), with no clock of ours to assert on.
    with new_client(host, timeout=0.2) as client, pytest.raises(httpx.ReadTimeout):
        client.get("/note.txt")


def test_slow_path_answers_after_its_delay(host_factory: Factory) -> None:
    host = host_factory(slow={"/note.txt": 0.3})
    with new_client(host, timeout=5) as client:
        assert client.get("/note.txt").status_code == 200  # held back, then answered in full
        assert client.get("/note.txt").content == NOTE


def test_client_abandoning_a_big_reply_is_logged_short(host_factory: Factory) -> None:
    host = host_factory(Notes(big_bytes=256 * MIB))
    client = Polite(host)
    with client.client.stream("GET", "/big.html") as response:
        first = next(response.iter_raw(64 * 1024))
    assert first.startswith(b"<!DOCTYPE html>")
    [record] = wait_for_log(host, "/big.html")
    assert record.status == 200
    assert record.sent_bytes < 256 * MIB
    assert client.get("/note.txt").status_code == 200  # the server carries on
    client.client.close()


# -- the request log ------------------------------------------------------------------------------


def test_log_records_requests_with_monotonic_timestamps(host: Host, polite: Polite) -> None:
    identity = {
        "User-Agent": "ExampleHarvester/1.4 (+https://harvester.example.org/about)",
        "From": "crawler@harvester.example.org",
        "Accept-Encoding": "gzip",
    }
    wall_before = time.time()
    first = polite.get("/note.txt?from=test", headers=identity)
    validators = {
        "If-None-Match": first.headers["etag"],
        "If-Modified-Since": first.headers["last-modified"],
    }
    second = polite.get("/note.txt", headers=validators)
    polite.request("HEAD", "/missing")
    wall_after = time.time()
    log = host.log
    assert [(r.method, r.path, r.status) for r in log] == [
        ("GET", "/note.txt?from=test", 200),
        ("GET", "/note.txt", 304),
        ("HEAD", "/missing", 404),
    ]
    assert second.status_code == 304
    assert log[0].headers["user-agent"] == identity["User-Agent"]
    assert log[0].headers["from"] == identity["From"]
    assert log[0].headers["accept-encoding"] == "gzip"
    assert log[1].headers["if-none-match"] == '"n1"'
    assert log[1].headers["if-modified-since"] == "Wed, 01 Jul 2026 00:00:00 GMT"
    assert [r.sent_bytes for r in log] == [len(NOTE), 0, 0]  # HEAD and 304 send no body
    assert not any(r.violation for r in log)
    starts = [r.started for r in log]
    assert all(later - earlier >= host.crawl_delay for earlier, later in itertools.pairwise(starts))
    assert all(wall_before <= r.wall <= wall_after for r in log)
    assert len(host.requests_for("/note.txt")) == 2  # any query
    assert len(host.requests_for("/note.txt?from=test")) == 1
    host.clear_log()
    assert host.log == []


def test_server_is_quiet(host_factory: Factory, capfd: pytest.CaptureFixture[str]) -> None:
    host = host_factory(Notes(big_bytes=64 * MIB))
    with new_client(host) as client:
        client.get("/missing")
        client.get("/note.txt")  # 429
        with client.stream("GET", "/big.html") as response:
            next(response.iter_raw(1024))
    wait_for_log(host, "/big.html")
    host.stop()
    captured = capfd.readouterr()
    assert captured.out == ""
    assert captured.err == ""
