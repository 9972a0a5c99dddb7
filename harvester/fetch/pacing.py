"""Per-host pacing: spaced request starts, one request in flight, back-off and a circuit breaker.

A host is the (scheme, host, port) triple, as RFC 9309 §2.3 keys robots.txt. A request takes
the host's slot (one in flight at a time) and starts no sooner than the host's interval (plus a
small jitter, which only ever adds) after the previous request *finished*. Counting from the
finish rather than the start is what makes the spacing hold on the server's clock too: the
server sees a request arrive somewhere between our start and its finish, so only a gap after
the finish guarantees the gap between two arrivals. A Retry-After holds the host exactly that
long; a 429 or 503 without one doubles the interval instead, and each success halves the excess
again, so the pace is back at the base within a few requests. A wait longer than
``announce_after`` seconds is announced once, with its reason, through ``on_wait``. After
``failure_limit`` consecutive failures the host is paused for the rest of the run, and every
later request to it fails at once, while other hosts go on.
"""

from __future__ import annotations

import asyncio
import math
import random
import time
from collections.abc import AsyncIterator, Awaitable, Callable
from contextlib import asynccontextmanager
from dataclasses import dataclass, field
from urllib.parse import urlsplit

from harvester.errors import HostPausedError
from harvester.fetch.urls import DEFAULT_PORTS
from harvester.fetch.waits import ANNOUNCE_AFTER, WaitAnnouncer, WaitNotice

__all__ = ["DEFAULT_INTERVAL", "HostKey", "HostPacer", "host_key"]

HostKey = tuple[str, str, int]
DEFAULT_INTERVAL = 1.0  # seconds between starts when robots.txt names no Crawl-delay


def host_key(url: str) -> HostKey:
    """The (scheme, host, port) a URL's requests are paced by; default ports made explicit."""
    parts = urlsplit(url)
    scheme = parts.scheme.lower()
    port = parts.port or DEFAULT_PORTS.get(scheme, 0)
    return scheme, (parts.hostname or "").lower(), port


def describe(host: HostKey) -> str:
    """A host key as a URL origin, for messages."""
    scheme, name, port = host
    default = DEFAULT_PORTS.get(scheme)
    return f"{scheme}://{name}" if port == default else f"{scheme}://{name}:{port}"


@dataclass
class _Host:
    base: float  # the interval robots.txt and the recipe ask for
    raised: float = 0.0  # an interval forced by 429/503, decaying with successes
    hold_until: float = 0.0  # no start before this clock reading (Retry-After, back-off)
    hold_reason: str = ""  # why hold_until is set, for the wait announcement
    announced: set[tuple[str, float]] = field(default_factory=set)  # waits already announced
    spread: float = 1.0  # the jitter factor drawn at the last start
    last_end: float | None = None  # when the last request on the host finished
    failures: int = 0
    paused: str | None = None
    lock: asyncio.Lock = field(default_factory=asyncio.Lock)


class HostPacer:
    """Spaces request starts per host and pauses hosts that keep failing."""

    def __init__(
        self,
        *,
        default_interval: float = DEFAULT_INTERVAL,
        jitter: float = 0.02,
        raise_factor: float = 2.0,
        decay: float = 0.5,
        max_interval: float = 300.0,
        failure_limit: int = 5,
        on_wait: WaitAnnouncer | None = None,
        announce_after: float = ANNOUNCE_AFTER,
        clock: Callable[[], float] = time.monotonic,
        sleep: Callable[[float], Awaitable[None]] = asyncio.sleep,
        seed: int | None = None,
    ) -> None:
        self.default_interval = default_interval
        self.jitter = jitter  # a fraction of the interval, added at random to each gap
        self.raise_factor = raise_factor
        self.decay = decay  # the share of a raised interval's excess kept after a success
        self.max_interval = max_interval
        self.failure_limit = failure_limit
        self.on_wait = on_wait  # the fetcher sets its announcer here
        self.on_pace: WaitAnnouncer | None = None  # told of every wait, short ones too (progress)
        self.announce_after = announce_after
        self._clock = clock
        self._sleep = sleep
        self._random = random.Random(seed)
        self._hosts: dict[HostKey, _Host] = {}

    def _host(self, host: HostKey) -> _Host:
        state = self._hosts.get(host)
        if state is None:
            state = _Host(self.default_interval)
            self._hosts[host] = state
        return state

    def set_interval(self, host: HostKey, seconds: float) -> None:
        """Set the host's base interval (the larger of Crawl-delay and the recipe's delay)."""
        self._host(host).base = max(0.0, seconds)

    @staticmethod
    def _interval(state: _Host) -> float:
        return max(state.base, state.raised)

    def interval(self, host: HostKey) -> float:
        """The interval in force for a host, in seconds."""
        return self._interval(self._host(host))

    def paused(self, host: HostKey) -> str | None:
        """Why the host is paused, or None."""
        return self._host(host).paused

    @asynccontextmanager
    async def slot(self, host: HostKey) -> AsyncIterator[float]:
        """Hold the host's one request slot, starting no earlier than its pace allows.

        Yields the clock reading at which the request may start.
        """
        state = self._host(host)
        self._check_paused(host, state)
        async with state.lock:
            self._check_paused(host, state)
            # Waiting in a loop: a back-off may push the time on while this request waits.
            while (wait := self._earliest(state) - self._clock()) > 0:
                self._announce(host, state, wait)
                if self.on_pace is not None:
                    self.on_pace(WaitNotice(describe(host), wait, self._why(state)))
                await self._sleep(wait)
            start = self._clock()
            state.spread = 1.0 + self._random.uniform(0.0, self.jitter)
            try:
                yield start
            finally:
                state.last_end = self._clock()

    def _earliest(self, state: _Host) -> float:
        """The clock reading before which the host's next request may not start."""
        if state.last_end is None:
            return state.hold_until
        return max(state.last_end + self._interval(state) * state.spread, state.hold_until)

    def _why(self, state: _Host) -> str:
        """A short reason for a wait: the pace, or what holds the host."""
        pace = state.last_end is not None and (
            state.hold_until < state.last_end + self._interval(state)
        )
        return "pace" if pace else state.hold_reason or "holding the host"

    def _announce(self, host: HostKey, state: _Host, wait: float) -> None:
        """Announce a long wait once: each hold once, each interval once per host."""
        if self.on_wait is None or wait <= self.announce_after:
            return
        interval = self._interval(state)
        if state.last_end is not None and state.hold_until < state.last_end + interval:
            key = ("interval", interval)
            if state.raised > state.base:
                reason = f"an interval of {interval:g} s, raised after failures"
            else:
                reason = f"an interval of {interval:g} s between requests (the site's or recipe's)"
        else:
            key, reason = ("hold", state.hold_until), state.hold_reason or "holding the host"
        if key not in state.announced:
            state.announced.add(key)
            self.on_wait(WaitNotice(describe(host), wait, reason))

    def _check_paused(self, host: HostKey, state: _Host) -> None:
        if state.paused is not None:
            raise HostPausedError(
                f"host paused for the rest of the run: {state.paused}",
                url=describe(host),
                hint="check the site by hand; re-run later (a new run starts afresh)",
            )

    def hold(self, host: HostKey, seconds: float, reason: str = "") -> None:
        """Start nothing on the host for ``seconds`` from now (e.g. a previous run's pace)."""
        state = self._host(host)
        until = self._clock() + max(0.0, seconds)
        if until > state.hold_until:
            state.hold_until, state.hold_reason = until, reason

    def back_off(
        self, host: HostKey, retry_after: float | None, *, cap: float = math.inf, why: str = ""
    ) -> float:
        """After a 429 or 503: push the next start back; return the wait in seconds.

        With Retry-After the next start waits exactly that long and no guess is added: the site
        said when (RFC 9110 §10.2.3). Without it the interval doubles (at most ``max_interval``
        and ``cap``), to be halved back towards the base by successes.
        """
        state = self._host(host)
        if retry_after is not None:
            self.hold(host, retry_after, f"Retry-After: {retry_after:g} s{why}")
            return retry_after
        raised = max(self._interval(state), 0.5) * self.raise_factor
        state.raised = min(self.max_interval, cap, raised)
        self.hold(host, state.raised, f"back-off{why}")
        return state.raised

    def succeeded(self, host: HostKey) -> None:
        """A request worked: clear the failure count and shrink a raised interval's excess."""
        state = self._host(host)
        state.failures = 0
        excess = (state.raised - state.base) * self.decay
        # A sliver of excess is noise, not caution: drop it rather than halve it for ever.
        state.raised = state.base + excess if excess > max(0.01, 0.05 * state.base) else 0.0

    def failed(self, host: HostKey, reason: str) -> bool:
        """A request failed for good; return True when this opens the host's circuit breaker."""
        state = self._host(host)
        state.failures += 1
        if state.failures >= self.failure_limit and state.paused is None:
            state.paused = f"{state.failures} consecutive failures, the last: {reason}"
            return True
        return False
