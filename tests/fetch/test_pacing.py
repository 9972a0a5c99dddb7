"""Per-host pacing with a fake clock: exact spacing, back-off, decay and the circuit breaker.

The network-level proof (a real server counting violations) is in tests/fetch/test_fetcher.py.
"""

from __future__ import annotations

import asyncio
import itertools

import pytest

from harvester.errors import HostPausedError
from harvester.fetch.pacing import HostPacer, host_key
from harvester.fetch.waits import WaitNotice


class FakeClock:
    """A clock that only moves when something sleeps."""

    def __init__(self) -> None:
        self.now = 100.0

    def __call__(self) -> float:
        return self.now

    async def sleep(self, seconds: float) -> None:
        self.now += seconds
        await asyncio.sleep(0)


def pacer(clock: FakeClock, **options: float) -> HostPacer:
    return HostPacer(clock=clock, sleep=clock.sleep, seed=1, **options)  # type: ignore[arg-type]


A = host_key("http://127.0.0.1:8650/seasons/2026/players.html")
B = host_key("http://127.0.0.2:8650/x")


def run(coroutine: object) -> object:
    return asyncio.run(coroutine)  # type: ignore[arg-type]


def test_host_key_is_scheme_host_port_with_default_ports() -> None:
    # RFC 9309 §2.3: one robots.txt per scheme, host and port, so pacing keys the same way.
    assert host_key("HTTP://Example.ORG/a") == ("http", "example.org", 80)
    assert host_key("https://example.org/a") == ("https", "example.org", 443)
    assert host_key("http://127.0.0.1:8650/") == ("http", "127.0.0.1", 8650)


def test_starts_on_one_host_are_never_closer_than_the_interval() -> None:
    clock = FakeClock()
    pace = pacer(clock, jitter=0.1)
    pace.set_interval(A, 0.5)

    starts: list[float] = []

    async def many() -> None:
        for _ in range(10):
            async with pace.slot(A) as start:
                starts.append(start)
                await clock.sleep(0.25)  # the request takes a while

    run(many())
    gaps = [later - earlier for earlier, later in itertools.pairwise(starts)]
    assert len(gaps) == 9
    # Counted from the end of the previous request (0.25 s long), jitter only adding.
    assert min(gaps) >= 0.25 + 0.5
    assert max(gaps) <= 0.25 + 0.5 * 1.1 + 1e-9


def test_one_request_in_flight_per_host() -> None:
    clock = FakeClock()
    pace = pacer(clock, jitter=0.0)
    pace.set_interval(A, 0.0)
    inside = 0
    most = 0

    async def one() -> None:
        nonlocal inside, most
        async with pace.slot(A):
            inside += 1
            most = max(most, inside)
            await clock.sleep(1.0)
            inside -= 1

    async def together() -> None:
        await asyncio.gather(*(one() for _ in range(5)))

    run(together())
    assert most == 1


def test_different_hosts_do_not_wait_for_each_other() -> None:
    clock = FakeClock()
    pace = pacer(clock, jitter=0.0)
    pace.set_interval(A, 10.0)
    pace.set_interval(B, 10.0)

    starts: list[tuple[tuple[str, str, int], float]] = []

    async def both() -> None:
        async with pace.slot(A) as start:
            starts.append((A, start))
        async with pace.slot(B) as start:
            starts.append((B, start))

    run(both())
    assert starts == [(A, 100.0), (B, 100.0)]


def test_retry_after_holds_the_host_exactly_and_leaves_the_interval() -> None:
    clock = FakeClock()
    pace = pacer(clock, jitter=0.0)
    pace.set_interval(A, 1.0)

    starts: list[float] = []

    async def scenario() -> None:
        async with pace.slot(A) as start:
            starts.append(start)
        waited = pace.back_off(A, retry_after=7.0)  # RFC 9110 §10.2.3
        assert waited == 7.0
        async with pace.slot(A) as start:
            starts.append(start)
        async with pace.slot(A) as start:
            starts.append(start)

    run(scenario())
    # The site named the wait, so nothing is guessed on top: 7 s, then the base 1 s again.
    assert [later - earlier for earlier, later in itertools.pairwise(starts)] == [7.0, 1.0]
    assert pace.interval(A) == 1.0


def test_back_off_without_retry_after_doubles_and_each_success_halves_the_excess() -> None:
    clock = FakeClock()
    pace = pacer(clock, jitter=0.0)
    pace.set_interval(A, 1.0)
    assert pace.back_off(A, None) == 2.0
    assert pace.back_off(A, None) == 4.0
    seen = []
    for _ in range(6):
        pace.succeeded(A)
        seen.append(pace.interval(A))
    # Excess over the 1 s base: 3 → 1.5 → 0.75 → 0.375 → 0.1875 → 0.09375 → under 5 %: gone.
    assert seen == [2.5, 1.75, 1.375, 1.1875, 1.09375, 1.0]


def test_back_off_never_raises_the_interval_past_the_cap() -> None:
    pace = pacer(FakeClock(), jitter=0.0)
    pace.set_interval(A, 1.0)
    for _ in range(5):
        pace.back_off(A, None, cap=3.0)
    assert pace.interval(A) == 3.0


def test_a_long_interval_is_announced_once_not_before_every_request() -> None:
    clock = FakeClock()
    notices: list[WaitNotice] = []
    pace = HostPacer(clock=clock, sleep=clock.sleep, seed=1, jitter=0.0, on_wait=notices.append)
    pace.set_interval(A, 10.0)

    async def three() -> None:
        for _ in range(3):
            async with pace.slot(A):
                pass

    run(three())
    reason = "an interval of 10 s between requests (the site's or recipe's)"
    assert notices == [WaitNotice("http://127.0.0.1:8650", 10.0, reason)]


def test_short_waits_are_not_announced() -> None:
    clock = FakeClock()
    notices: list[WaitNotice] = []
    pace = HostPacer(clock=clock, sleep=clock.sleep, seed=1, jitter=0.0, on_wait=notices.append)
    pace.set_interval(A, 5.0)  # exactly five seconds is the ordinary pace, not a long wait

    async def two() -> None:
        for _ in range(2):
            async with pace.slot(A):
                pass

    run(two())
    assert notices == []


def test_circuit_breaker_pauses_only_the_failing_host() -> None:
    clock = FakeClock()
    pace = pacer(clock, failure_limit=3)
    assert not pace.failed(A, "HTTP 503")
    assert not pace.failed(A, "HTTP 503")
    assert pace.failed(A, "timed out")
    assert pace.paused(A) is not None and "timed out" in (pace.paused(A) or "")

    started: list[tuple[str, str, int]] = []

    async def try_host(host: tuple[str, str, int]) -> None:
        async with pace.slot(host):
            started.append(host)

    with pytest.raises(HostPausedError, match="3 consecutive failures"):
        run(try_host(A))
    run(try_host(B))  # the other host goes on
    assert started == [B]


def test_a_success_resets_the_failure_count() -> None:
    pace = pacer(FakeClock(), failure_limit=2)
    pace.failed(A, "x")
    pace.succeeded(A)
    assert not pace.failed(A, "x")
    assert pace.paused(A) is None
