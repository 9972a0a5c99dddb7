"""The fetcher's network half: paced GETs with retries, the pace shared by processes, robots.txt.

``PacedSender`` takes a host's one slot from the pacer for every request, then the host's turn
on the whole machine from the shared pace (so other harvests, and later runs, keep the pace
too; holds after a 429, 503 or failure are shared as well), turns 429/503/5xx and
network errors into ``Transient`` failures worth retrying (pushing the host back first), and
turns a wait the site asks for beyond ``FetchLimits.max_wait`` into a skipped host: each of its
later requests fails at once with the same message. Every request sent, every retry and every
wait for a host's turn is counted in ``stats`` (``host_stats``). The fetcher (client.py) builds
on it.
"""

from __future__ import annotations

import asyncio
import math
from collections.abc import Callable
from urllib.parse import urljoin, urlsplit

import httpx
from tenacity import AsyncRetrying, RetryCallState, retry_if_exception_type, stop_after_attempt
from tenacity.wait import wait_random_exponential

from harvester.errors import FetchLimitError
from harvester.fetch.capture import header
from harvester.fetch.host_stats import HostStats
from harvester.fetch.httpdate import parse_http_date, parse_retry_after
from harvester.fetch.limits import FetchLimits
from harvester.fetch.pacing import HostKey, HostPacer, describe, host_key
from harvester.fetch.robots_gate import RobotsAnswer
from harvester.fetch.shared_pace import SharedPace
from harvester.fetch.targets import redact, redirect_problem
from harvester.fetch.transfer import Answer, Transient, get, now
from harvester.fetch.waits import cap_hint, seconds_text

__all__ = ["REDIRECTS", "AnswerListener", "PacedSender"]

REDIRECTS = frozenset({301, 302, 303, 307, 308})

AnswerListener = Callable[[Answer], None]
"""Told of every answer read in full, before the fetcher acts on it (the snapshot recorder)."""


class PacedSender:
    """Sends one paced GET at a time per host, within the hard limits, and retries transients."""

    def __init__(
        self,
        client: httpx.AsyncClient,
        pacer: HostPacer,
        limits: FetchLimits,
        *,
        retries: int,
        backoff_initial: float,
        backoff_max: float,
        shared: SharedPace | None,
        on_answer: AnswerListener | None = None,
        stats: HostStats | None = None,
    ) -> None:
        self.client, self.pacer, self.limits, self.retries = client, pacer, limits, retries
        self.on_answer = on_answer
        self.stats = stats if stats is not None else HostStats()
        # Exponential back-off with full jitter: a random wait up to initial × 2^attempt.
        self._backoff = wait_random_exponential(multiplier=backoff_initial, max=backoff_max)
        self._shared = shared
        # Back-off holds set in tenacity's (synchronous) wait, shared at the next send.
        self._holds_to_share: dict[HostKey, float] = {}
        self._skipped: dict[HostKey, tuple[str, str]] = {}

    def skip(self, host: HostKey, message: str, hint: str) -> None:
        """Skip ``host`` for the rest of the run: its requests fail with ``message``."""
        self._skipped.setdefault(host, (message, hint))

    def check_skipped(self, url: str) -> None:
        """Raise the skip message when ``url``'s host is skipped for the run."""
        skipped = self._skipped.get(host_key(url))
        if skipped is not None:
            raise FetchLimitError(skipped[0], url=url, hint=skipped[1])

    def retrying(self) -> AsyncRetrying:
        """Retry transients ``retries`` times; every wait happens in the pacer, capped."""
        return AsyncRetrying(
            stop=stop_after_attempt(self.retries + 1),
            wait=self._wait,
            retry=retry_if_exception_type(Transient),
            before_sleep=self._count_retry,  # called only when another attempt follows
            reraise=True,
        )

    def _count_retry(self, state: RetryCallState) -> None:
        failure = state.outcome.exception() if state.outcome is not None else None
        if isinstance(failure, Transient):
            self.stats.retried(failure.url)

    def _wait(self, state: RetryCallState) -> float:
        failure = state.outcome.exception() if state.outcome is not None else None
        if isinstance(failure, Transient) and failure.retry_after is None:
            # The pacer holds the host, so the wait is announced and capped like any other.
            seconds = min(float(self._backoff(state)), self.limits.max_wait)
            host = host_key(failure.url)
            self.pacer.hold(host, seconds, f"back-off after {failure.reason}")
            self._holds_to_share[host] = max(seconds, self._holds_to_share.get(host, 0.0))
        return 0.0

    async def send(
        self, url: str, headers: dict[str, str], *, content_types: tuple[str, ...] | None
    ) -> Answer:
        """One paced GET with the hard limits; 429/503/5xx and network errors are transient.

        A success whose Content-Type is not one of ``content_types`` (None: any) is refused
        before its body is read."""
        self.check_skipped(url)
        host = host_key(url)
        held = self._holds_to_share.pop(host, None)
        if held is not None and self._shared is not None:
            await self._shared.hold(host, held)  # a little late, but before the held start
        stats = self.stats
        waiting = stats.clock()
        async with self.pacer.slot(host):
            turn = await self._shared.begin(host, self.pacer.interval(host)) if self._shared else ""
            started, started_at = stats.clock(), now()
            stats.waited(url, started - waiting)
            answer: Answer | None = None
            try:
                async with asyncio.timeout(self.limits.total_timeout):
                    answer = await get(
                        self.client, url, headers, self.limits, content_types=content_types
                    )
            except (TimeoutError, httpx.TimeoutException) as exc:
                raise Transient(url, f"timed out ({type(exc).__name__})") from exc
            except httpx.TransportError as exc:
                raise Transient(url, f"network error: {exc}") from exc
            finally:
                # The answer's own request time, so the snapshot archive's WARC-Date matches it.
                sent_at = answer.request_time if answer is not None else started_at
                status = answer.status if answer is not None else None
                stats.request(url, sent_at, started, stats.clock(), status)
                if self._shared is not None:
                    await self._shared.finish(host, turn)
        if self.on_answer is not None:
            self.on_answer(answer)
        if header(answer.headers, "memento-datetime") is not None:
            # A web archive replaying an archived answer with its own status (RFC 7089
            # §4.5.5): a 503 recorded years ago says nothing about the archive today.
            return answer
        if answer.status in (429, 503):
            retry_after = self._retry_after(url, answer)
            why = f" after HTTP {answer.status}"
            waited = self.pacer.back_off(host, retry_after, cap=self.limits.max_wait, why=why)
            if self._shared is not None:
                await self._shared.hold(host, waited)
            reason = f"HTTP {answer.status} from {describe(host)}"
            raise Transient(url, reason, retry_after, answer.status)
        if answer.status >= 500:
            raise Transient(url, f"HTTP {answer.status} from {describe(host)}", None, answer.status)
        return answer

    def _retry_after(self, url: str, answer: Answer) -> float | None:
        """Retry-After in seconds (None when absent or invalid); over the cap skips the host."""
        value = (header(answer.headers, "retry-after") or "").strip()
        if not value:
            return None
        date = header(answer.headers, "date")
        seconds = parse_retry_after(
            value,
            response_date=parse_http_date(date) if date else None,
            received_at=answer.response_time,
            cap=math.inf,  # measured in full, so the message can say what was asked
        )
        cap = self.limits.max_wait
        if seconds is None or seconds <= cap:
            return seconds
        shown = value if len(value) <= 40 else f"{value[:20]}… ({len(value)} characters)"
        host = host_key(url)
        message = (
            f"HTTP {answer.status} with Retry-After: {shown} asks for {seconds_text(seconds)}"
            f" before the next request, over the {seconds_text(cap)} cap on any one wait;"
            f" {describe(host)} is skipped for this run"
        )
        self.skip(host, message, cap_hint(seconds))
        raise FetchLimitError(message, url=url, hint=cap_hint(seconds))

    async def fetch_robots(self, location: str) -> RobotsAnswer:
        """GET robots.txt, following up to five redirects (RFC 9309 §2.3.1.2)."""
        current, seen = location, {location}
        for _ in range(self.limits.robots_max_redirects + 1):
            try:
                # A 429 or 5xx on robots.txt is retried like any page before it counts.
                async for attempt in self.retrying():
                    with attempt:
                        answer = await self.send(current, {}, content_types=None)
            except Transient as failure:
                return RobotsAnswer(failure.status, detail=failure.reason)
            target = header(answer.headers, "location")
            if answer.status not in REDIRECTS or not target:
                # One octet past the limit, so the parser can tell a cut-off last line.
                kept = answer.body[: self.limits.robots_parse_limit + 1]
                return RobotsAnswer(answer.status, kept)
            problem, current = self._robots_hop(current, target.strip(), seen)
            if problem:
                return RobotsAnswer(None, detail=problem)
            seen.add(current)
        # §2.3.1.2: after more than five redirects it MAY be treated as unavailable.
        return RobotsAnswer(404, detail="more than five redirects")

    def _robots_hop(self, current: str, location: str, seen: set[str]) -> tuple[str, str]:
        """Where a robots.txt redirect leads, and why it is not followed ('' if it is)."""
        try:
            target = urljoin(current, location)
        except ValueError as exc:
            return f"robots.txt redirects to an invalid Location {location!r} ({exc})", current
        scheme = urlsplit(target).scheme.lower()
        if scheme not in self.limits.schemes:
            shown = redact(target)
            return f"robots.txt redirects to a {scheme}: URL ({shown})", target
        if target in seen:
            return "robots.txt redirects in a loop", target
        problem = redirect_problem(current, target)
        if problem is not None:
            return f"robots.txt redirect to {redact(target)} refused: {problem}", target
        return "", target
