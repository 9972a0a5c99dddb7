"""The robots gate: status handling (RFC 9309 §2.3.1), the 24-hour limit (§2.4), one fetch."""

from __future__ import annotations

import asyncio
from pathlib import Path

import diskcache
import pytest

from harvester.fetch.robots_gate import ROBOTS_MAX_AGE, RobotsAnswer, RobotsGate, interpret

RULES = b"User-agent: *\nDisallow: /private/\n"


class Site:
    """A robots.txt source that counts how often it is asked."""

    def __init__(self, answer: RobotsAnswer) -> None:
        self.answer = answer
        self.asked = 0

    async def __call__(self, location: str) -> RobotsAnswer:
        self.asked += 1
        await asyncio.sleep(0)
        return self.answer


class Clock:
    def __init__(self) -> None:
        self.now = 1_000_000.0

    def __call__(self) -> float:
        return self.now


def allowed(gate: RobotsGate, url: str) -> bool:
    return asyncio.run(gate.rules(url)).check(url, "harvester").allowed


@pytest.mark.parametrize(
    ("answer", "private_allowed", "page_allowed"),
    [
        (RobotsAnswer(200, RULES), False, True),  # §2.3.1.1: the rules apply
        (RobotsAnswer(404), True, True),  # §2.3.1.3 unavailable: allow all
        (RobotsAnswer(410), True, True),
        (RobotsAnswer(500), False, False),  # §2.3.1.4 unreachable: disallow all
        (RobotsAnswer(503), False, False),
        (RobotsAnswer(None, detail="connection refused"), False, False),
    ],
)
def test_status_decides(answer: RobotsAnswer, private_allowed: bool, page_allowed: bool) -> None:
    rules = interpret(answer, "unreachable")
    assert rules.check("/private/x", "harvester").allowed is private_allowed
    assert rules.check("/seasons/2026/", "harvester").allowed is page_allowed


def test_429_is_a_policy_choice() -> None:
    # A 429 is a 4xx (§2.3.1.3 would allow all) but says "slow down"; common practice, no
    # published source, treats it as unreachable. Both settings work.
    assert not interpret(RobotsAnswer(429), "unreachable").check("/a", "harvester").allowed
    assert interpret(RobotsAnswer(429), "unavailable").check("/a", "harvester").allowed


def test_a_copy_is_reused_for_24_hours_then_fetched_again() -> None:
    site, clock = Site(RobotsAnswer(200, RULES)), Clock()
    gate = RobotsGate(site, clock=clock)
    assert not allowed(gate, "http://127.0.0.1:8650/private/")
    clock.now += 23 * 3600
    allowed(gate, "http://127.0.0.1:8650/index.html")
    assert site.asked == 1
    clock.now += 2 * 3600  # 25 h after the fetch: §2.4 SHOULD NOT use it any longer
    allowed(gate, "http://127.0.0.1:8650/index.html")
    assert site.asked == 2
    assert ROBOTS_MAX_AGE == 24 * 3600


def test_each_host_has_its_own_robots_txt() -> None:
    site = Site(RobotsAnswer(200, RULES))
    gate = RobotsGate(site)
    for url in ("http://127.0.0.1:8650/a", "http://127.0.0.1:8651/a", "https://127.0.0.1:8650/a"):
        allowed(gate, url)
    assert site.asked == 3  # RFC 9309 §2.3: scheme, host and port each need their own


def test_many_pages_at_once_cause_one_fetch() -> None:
    site = Site(RobotsAnswer(200, RULES))
    gate = RobotsGate(site)

    async def together() -> None:
        await asyncio.gather(*(gate.rules(f"http://127.0.0.1:8650/p{i}") for i in range(20)))

    asyncio.run(together())
    assert site.asked == 1


def test_copies_survive_across_runs_on_disk(tmp_path: Path) -> None:
    site, clock = Site(RobotsAnswer(200, RULES)), Clock()
    with diskcache.Cache(str(tmp_path)) as store:
        allowed(RobotsGate(site, store=store, clock=clock), "http://127.0.0.1:8650/a")
        clock.now += 3600
        second_run = RobotsGate(site, store=store, clock=clock)
        assert not allowed(second_run, "http://127.0.0.1:8650/private/")
        assert site.asked == 1
        clock.now += 24 * 3600
        allowed(RobotsGate(site, store=store, clock=clock), "http://127.0.0.1:8650/a")
        assert site.asked == 2
