"""The robots gate: fetch each host's robots.txt once, keep it at most 24 hours, apply it.

What a fetch of robots.txt means follows RFC 9309 §2.3.1: a 2xx is parsed; redirects are
followed (at least five hops, §2.3.1.2) and the rules apply to the original host; a 4xx means
"unavailable", so everything is allowed (§2.3.1.3); a 5xx or a network error means
"unreachable", so everything is disallowed (§2.3.1.4). A 429 is a 4xx, but it says "slow down",
not "no file": by default we treat it as unreachable (a policy flag; common practice, no
published source). Copies are reused for at most 24 hours (§2.4), in memory and on disk.
"""

from __future__ import annotations

import asyncio
import time
from collections.abc import Awaitable, Callable
from dataclasses import dataclass
from typing import Any, Literal

from harvester.fetch.limits import ROBOTS_PARSE_LIMIT
from harvester.fetch.robots import RobotsTxt, robots_url

__all__ = ["ROBOTS_MAX_AGE", "RobotsAnswer", "RobotsGate"]

ROBOTS_MAX_AGE = 24 * 3600.0  # RFC 9309 §2.4: SHOULD NOT use a cached copy for more than 24 h


@dataclass(frozen=True)
class RobotsAnswer:
    """What fetching robots.txt gave: a final status and body, or a network error."""

    status: int | None  # None: no answer (network error, timeout, too many redirects)
    body: bytes = b""
    detail: str = ""


RobotsFetch = Callable[[str], Awaitable[RobotsAnswer]]


def interpret(
    answer: RobotsAnswer,
    on_429: Literal["unreachable", "unavailable"],
    limit: int = ROBOTS_PARSE_LIMIT,
) -> RobotsTxt:
    """The rules an answer stands for, per RFC 9309 §2.3.1 (``limit``: octets parsed, §2.5)."""
    status = answer.status
    if status is None:
        return RobotsTxt.unreachable(answer.detail or "no answer")
    if 200 <= status < 300:
        return RobotsTxt.parse(answer.body, limit=limit)
    if status == 429 and on_429 == "unreachable":
        return RobotsTxt.unreachable(answer.detail or "HTTP 429")
    if 400 <= status < 500:
        return RobotsTxt.unavailable(status)
    return RobotsTxt.unreachable(answer.detail or f"HTTP {status}")


class RobotsGate:
    """Hands out each host's robots.txt rules, fetching them when none are fresh."""

    def __init__(
        self,
        fetch: RobotsFetch,
        *,
        store: Any | None = None,  # a diskcache.Cache, to keep copies across runs
        max_age: float = ROBOTS_MAX_AGE,
        on_429: Literal["unreachable", "unavailable"] = "unreachable",
        clock: Callable[[], float] = time.time,
        parse_limit: int = ROBOTS_PARSE_LIMIT,
    ) -> None:
        self._parse_limit = parse_limit
        self._fetch = fetch
        self._store = store
        self._max_age = max_age
        self._on_429 = on_429
        self._clock = clock
        self._memory: dict[str, tuple[float, RobotsTxt]] = {}
        self._locks: dict[str, asyncio.Lock] = {}

    async def rules(self, url: str) -> RobotsTxt:
        """The robots.txt rules that govern ``url`` (fetched if no copy is fresh)."""
        location = robots_url(url)
        # One fetch per host even when many pages of it are asked for at once.
        async with self._locks.setdefault(location, asyncio.Lock()):
            return await self._rules(location)

    async def _rules(self, location: str) -> RobotsTxt:
        now = self._clock()
        held = self._memory.get(location)
        if held is not None and now - held[0] <= self._max_age:
            return held[1]
        stored = self._store.get(("robots", location)) if self._store is not None else None
        if stored is not None and now - stored[0] <= self._max_age:
            fetched_at, status, body, detail = stored
            rules = interpret(RobotsAnswer(status, body, detail), self._on_429, self._parse_limit)
            self._memory[location] = (fetched_at, rules)
            return rules
        answer = await self._fetch(location)
        rules = interpret(answer, self._on_429, self._parse_limit)
        self._memory[location] = (now, rules)
        if self._store is not None:
            self._store.set(("robots", location), (now, answer.status, answer.body, answer.detail))
        return rules
