"""The fetcher: robots gate → host pacer → HTTP cache → the site, with retries and hard limits.

One ``Fetcher`` per run. It identifies itself honestly (``harvester/<version> (+contact)`` and
a ``From`` header for an e-mail contact), never fetches what robots.txt disallows, spaces
requests per host, retries 429/503 and network errors (honouring Retry-After, else exponential
back-off with jitter), pauses a host that keeps failing, and keeps a private RFC 9111 cache.
The network layer is an httpx transport, so tests and replays can swap it.
"""

from __future__ import annotations

import asyncio
import time
from pathlib import Path
from typing import Literal
from urllib.parse import urljoin, urlsplit

import httpx
from tenacity import AsyncRetrying, RetryCallState, retry_if_exception_type, stop_after_attempt
from tenacity.wait import wait_random_exponential

from harvester.errors import FetchError, FetchLimitError, HttpStatusError, RobotsDisallowedError
from harvester.fetch.cache import CacheLookup, HttpCache, StoredResponse, conditional_headers
from harvester.fetch.capture import Capture, Origin, header
from harvester.fetch.httpdate import parse_http_date, parse_retry_after
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.pacing import DEFAULT_INTERVAL, HostPacer, describe, host_key
from harvester.fetch.robots import RobotsTxt
from harvester.fetch.robots_gate import RobotsAnswer, RobotsGate
from harvester.fetch.source import PageRequest
from harvester.fetch.transfer import Answer, Transient, get, now

__all__ = ["FetchMode", "Fetcher"]

FetchMode = Literal["normal", "offline", "refresh"]
_REDIRECTS = frozenset({301, 302, 303, 307, 308})
_RETRY_AFTER_CAP = 3600.0  # never wait longer than an hour on one Retry-After


class Fetcher:
    """Fetches pages politely; use ``async with Fetcher(...) as fetcher``.

    A ``PageSource``: its captures come from the network (``origin``, "live" by default) or,
    when the cache holds a usable copy, from the cache ("cache").
    """

    def __init__(
        self,
        identity: Identity,
        *,
        cache_dir: str | Path | None = None,
        mode: FetchMode = "normal",
        min_interval: float = 0.0,
        limits: FetchLimits | None = None,
        pacer: HostPacer | None = None,
        transport: httpx.AsyncBaseTransport | None = None,
        retries: int = 3,
        backoff_initial: float = 1.0,
        backoff_max: float = 60.0,
        robots_on_429: Literal["unreachable", "unavailable"] = "unreachable",
        origin: Origin = "live",
    ) -> None:
        self.identity = identity
        self.origin = origin  # what a network answer's capture says it came from
        self.mode = mode
        self.min_interval = min_interval  # the recipe's delay: raises Crawl-delay, never lowers
        self.limits = limits or FetchLimits()
        self.pacer = pacer or HostPacer()
        self.retries = retries
        # Exponential back-off with full jitter: a random wait up to initial × 2^attempt.
        self._backoff = wait_random_exponential(multiplier=backoff_initial, max=backoff_max)
        self.cache = HttpCache(Path(cache_dir) / "http") if cache_dir is not None else None
        self._robots_store = None
        if cache_dir is not None:
            import diskcache

            self._robots_store = diskcache.Cache(str(Path(cache_dir) / "robots"))
        self.robots = RobotsGate(
            self._fetch_robots,
            store=self._robots_store,
            on_429=robots_on_429,
            parse_limit=self.limits.robots_parse_limit,
        )
        # When each host was last asked, kept across runs: a run started right after another
        # still waits out the interval (the store is the robots one; keys do not collide).
        self._pace_loaded: set[tuple[str, str, int]] = set()
        timeout = httpx.Timeout(
            connect=self.limits.connect_timeout,
            read=self.limits.read_timeout,
            write=self.limits.read_timeout,
            pool=self.limits.total_timeout,
        )
        self._client = httpx.AsyncClient(
            transport=transport,
            timeout=timeout,
            follow_redirects=False,
            headers=identity.headers(),
            trust_env=False,  # no proxies from the environment: we talk to the site itself
        )
        self._intervals_set: set[tuple[str, str, int]] = set()

    async def __aenter__(self) -> Fetcher:
        return self

    async def __aexit__(self, *exc: object) -> None:
        await self.aclose()

    async def aclose(self) -> None:
        """Close the HTTP client and the caches."""
        await self._client.aclose()
        if self.cache is not None:
            self.cache.close()
        if self._robots_store is not None:
            self._robots_store.close()

    # -- the public calls --------------------------------------------------------------

    async def capture(self, request: PageRequest) -> Capture:
        """The ``PageSource`` call: fetch the request's page politely (see ``fetch``)."""
        return await self.fetch(request.url, immutable=request.immutable)

    async def fetch(self, url: str, *, immutable: bool = False) -> Capture:
        """Fetch one page, from the cache when a fresh copy is there.

        ``immutable`` marks a page that never changes (a past season): once cached it is
        always fresh. Raises a FetchError subclass for anything that is not a usable page.
        """
        self._check_scheme(url)
        request_headers = dict(self.identity.headers())
        lookup = (
            self.cache.lookup("GET", url, request_headers, now())
            if self.cache is not None
            else CacheLookup("miss", None, {}, None)
        )
        if self.mode == "offline":
            return self._offline(url, request_headers)
        if lookup.response is not None and (
            lookup.response.immutable or (lookup.state == "fresh" and self.mode == "normal")
        ):
            return self._from_cache(url, lookup.response)
        conditional: dict[str, str] = {}
        if lookup.response is not None:
            # Stale entries come with their validators; --refresh revalidates fresh ones too.
            conditional = dict(lookup.conditional_headers) or conditional_headers(lookup.response)
        host = host_key(url)
        try:
            answer, hops = await self._with_retries(url, conditional)
        except Transient as failure:
            self.pacer.failed(host_key(failure.url), failure.reason)
            raise FetchError(
                f"gave up after {self.retries + 1} attempts: {failure.reason}",
                url=url,
                hint="the site may be down or rate-limiting; try again later",
            ) from None
        self.pacer.succeeded(host)
        if answer.status == 304 and lookup.response is not None and self.cache is not None:
            refreshed = self.cache.freshen(
                "GET", url, request_headers, self._stored(answer, request_headers, immutable)
            )
            stored = refreshed or lookup.response
            return self._from_cache(url, stored, revalidated=True, hops=hops)
        if not 200 <= answer.status < 300:
            raise HttpStatusError(
                f"HTTP {answer.status}",
                url=url,
                status=answer.status,
                hint="the page is missing or refused; check the URL and the season",
            )
        if self.cache is not None:
            self.cache.store("GET", self._stored(answer, request_headers, immutable, key=url))
        return Capture(
            url=url,
            final_url=answer.url,
            status=answer.status,
            headers=answer.headers,
            body=answer.body,
            fetched_at=answer.request_time,
            origin=self.origin,
            redirects=hops,
        )

    async def check_robots(self, url: str) -> RobotsTxt:
        """The robots.txt rules for ``url``'s host (fetched politely if needed)."""
        rules = await self.robots.rules(url)
        self._apply_crawl_delay(url, rules)
        return rules

    # -- steps -------------------------------------------------------------------------

    def _check_scheme(self, url: str) -> None:
        scheme = urlsplit(url).scheme.lower()
        if scheme not in self.limits.schemes:
            allowed = " or ".join(f"{name}://" for name in self.limits.schemes)
            raise FetchLimitError(
                f"scheme {scheme or '(none)'!r} is not fetched",
                url=url,
                hint=f"use a URL starting with {allowed}",
            )

    def _offline(self, url: str, request_headers: dict[str, str]) -> Capture:
        stored = (
            self.cache.lookup_any("GET", url, request_headers) if self.cache is not None else None
        )
        if stored is None:
            raise FetchError(
                "not in the cache, and --offline forbids fetching it",
                url=url,
                hint="run once without --offline to fill the cache",
            )
        return self._from_cache(url, stored)

    def _from_cache(
        self,
        url: str,
        stored: StoredResponse,
        *,
        revalidated: bool = False,
        hops: tuple[str, ...] = (),
    ) -> Capture:
        return Capture(
            url=url,
            final_url=stored.final_url or stored.url,
            status=stored.status,
            headers=stored.headers,
            body=stored.body,
            fetched_at=stored.request_time,
            origin="cache",
            redirects=hops,
            revalidated=revalidated,
        )

    def _stored(
        self,
        answer: Answer,
        request_headers: dict[str, str],
        immutable: bool,
        key: str | None = None,
    ) -> StoredResponse:
        return StoredResponse(
            url=key or answer.url,
            status=answer.status,
            headers=answer.headers,
            body=answer.body,
            request_headers=tuple(request_headers.items()),
            request_time=answer.request_time,
            response_time=answer.response_time,
            immutable=immutable,
            final_url=answer.url,
        )

    def _apply_crawl_delay(self, url: str, rules: RobotsTxt) -> None:
        host = host_key(url)
        if host in self._intervals_set:
            return
        # Crawl-delay and Request-rate are not in RFC 9309 (common practice, no published
        # source): the interval is the larger of the site's and the recipe's, never less.
        site = rules.min_interval(self.identity.token)
        self.pacer.set_interval(
            host, max(site if site is not None else DEFAULT_INTERVAL, self.min_interval)
        )
        self._intervals_set.add(host)

    async def _allowed(self, url: str) -> None:
        rules = await self.check_robots(url)
        verdict = rules.check(url, self.identity.token)
        if not verdict.allowed:
            rule = verdict.rule
            why = verdict.reason
            if rule is not None:
                kind = "Allow" if rule.allow else "Disallow"
                why = f"line {rule.line}, {kind}: {rule.pattern}"
            raise RobotsDisallowedError(
                f"robots.txt disallows it for {self.identity.token!r}: {why}",
                url=url,
                hint="robots.txt is the site's wish; leave this page out of the recipe",
            )

    def _wait(self, state: RetryCallState) -> float:
        failure = state.outcome.exception() if state.outcome is not None else None
        if isinstance(failure, Transient) and failure.retry_after is not None:
            return 0.0  # the pacer holds the host until Retry-After has passed
        return float(self._backoff(state))

    async def _with_retries(
        self, url: str, conditional: dict[str, str]
    ) -> tuple[Answer, tuple[str, ...]]:
        async for attempt in self._retrying():
            with attempt:
                return await self._follow(url, conditional)
        raise AssertionError("unreachable: tenacity re-raises the last failure")

    def _retrying(self) -> AsyncRetrying:
        return AsyncRetrying(
            stop=stop_after_attempt(self.retries + 1),
            wait=self._wait,
            retry=retry_if_exception_type(Transient),
            reraise=True,
        )

    async def _follow(
        self, url: str, conditional: dict[str, str]
    ) -> tuple[Answer, tuple[str, ...]]:
        """GET with redirects followed by hand, each hop robots-checked and paced."""
        current, seen = url, {url}
        hops: list[str] = []
        for hop in range(self.limits.max_redirects + 1):
            await self._allowed(current)
            # RFC 9110 §15.4: validators are for the original URI only.
            answer = await self._send(current, conditional if hop == 0 else {}, check_type=True)
            location = header(answer.headers, "location")
            if answer.status not in _REDIRECTS or not location:
                return answer, tuple(hops)
            target = urljoin(current, location.strip())
            self._check_scheme(target)
            if target in seen:
                raise FetchLimitError(
                    f"redirect loop: {' → '.join([*hops, current, target])}",
                    url=url,
                    hint="the site redirects in a circle; report it to the site",
                )
            hops.append(current)
            seen.add(target)
            current = target
        raise FetchLimitError(
            f"more than {self.limits.max_redirects} redirects",
            url=url,
            hint="the site redirects too often; check the URL",
        )

    async def _send(self, url: str, headers: dict[str, str], *, check_type: bool) -> Answer:
        """One paced GET with the hard limits; 429/503/5xx and network errors are transient."""
        host = host_key(url)
        self._resume_pace(host)
        async with self.pacer.slot(host):
            try:
                async with asyncio.timeout(self.limits.total_timeout):
                    answer = await get(
                        self._client, url, headers, self.limits, check_type=check_type
                    )
            except (TimeoutError, httpx.TimeoutException) as exc:
                raise Transient(url, f"timed out ({type(exc).__name__})") from exc
            except httpx.TransportError as exc:
                raise Transient(url, f"network error: {exc}") from exc
            finally:
                self._remember_pace(host)
        if answer.status in (429, 503):
            received = answer.response_time
            value = header(answer.headers, "retry-after")
            date = header(answer.headers, "date")
            retry_after = (
                parse_retry_after(
                    value,
                    response_date=parse_http_date(date) if date else None,
                    received_at=received,
                    cap=_RETRY_AFTER_CAP,
                )
                if value
                else None
            )
            self.pacer.back_off(host, retry_after)
            reason = f"HTTP {answer.status} from {describe(host)}"
            raise Transient(url, reason, retry_after, answer.status)
        if answer.status >= 500:
            raise Transient(url, f"HTTP {answer.status} from {describe(host)}", None, answer.status)
        return answer

    def _resume_pace(self, host: tuple[str, str, int]) -> None:
        """Before a run's first request to a host, wait out the pace the last run left."""
        if host in self._pace_loaded or self._robots_store is None:
            return
        self._pace_loaded.add(host)
        last = self._robots_store.get(("pace", host))
        if last is not None:
            finished_at, interval = last
            self.pacer.hold(host, finished_at + interval - time.time())

    def _remember_pace(self, host: tuple[str, str, int]) -> None:
        if self._robots_store is not None:
            self._robots_store.set(("pace", host), (time.time(), self.pacer.interval(host)))

    async def _fetch_robots(self, location: str) -> RobotsAnswer:
        """GET robots.txt, following up to five redirects (RFC 9309 §2.3.1.2)."""
        current, seen = location, {location}
        for _ in range(self.limits.robots_max_redirects + 1):
            try:
                # A 429 or 5xx on robots.txt is retried like any page before it counts.
                async for attempt in self._retrying():
                    with attempt:
                        answer = await self._send(current, {}, check_type=False)
            except Transient as failure:
                return RobotsAnswer(failure.status, detail=failure.reason)
            target = header(answer.headers, "location")
            if answer.status not in _REDIRECTS or not target:
                # One octet past the limit, so the parser can tell a cut-off last line.
                kept = answer.body[: self.limits.robots_parse_limit + 1]
                return RobotsAnswer(answer.status, kept)
            current = urljoin(current, target.strip())
            if current in seen or urlsplit(current).scheme not in self.limits.schemes:
                return RobotsAnswer(None, detail="robots.txt redirects in a loop")
            seen.add(current)
        # §2.3.1.2: after more than five redirects it MAY be treated as unavailable.
        return RobotsAnswer(404, detail="more than five redirects")
