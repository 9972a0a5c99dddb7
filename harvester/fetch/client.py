"""The fetcher: robots gate → host pacer → HTTP cache → the site, with retries and hard limits.

One ``Fetcher`` per run. It identifies itself honestly (``harvester/<version> (+contact)`` and
a ``From`` header for an e-mail contact), never fetches what robots.txt disallows, spaces
requests per host, retries 429/503 and network errors (honouring Retry-After, else exponential
back-off with jitter), pauses a host that keeps failing, and keeps a private RFC 9111 cache.
The network layer is an httpx transport, so tests and replays can swap it; the paced sending,
retries and robots.txt fetching are in ``exchange``, which hands every answer to ``on_answer``.
No single wait exceeds ``FetchLimits.max_wait``; waits over five seconds go to ``on_wait``.
The pace per host is shared by every harvest of the user on the machine (``shared_pace``):
``state_dir``, else ``$HARVESTER_STATE_DIR``, else the user's state folder, holds it.
``stats`` counts, per host, what the fetcher asked and what it served from the cache.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

import httpx

from harvester.errors import (
    FetchError,
    FetchLimitError,
    HttpStatusError,
    NotCachedError,
    RobotsDisallowedError,
)
from harvester.fetch.cache import (
    CacheLookup,
    HttpCache,
    cached_capture,
    conditional_headers,
    forbids_stale,
    stored_answer,
)
from harvester.fetch.cache_entry import cache_directives
from harvester.fetch.capture import Capture, Origin, header
from harvester.fetch.disk_store import open_store
from harvester.fetch.exchange import REDIRECTS, AnswerListener, PacedSender
from harvester.fetch.host_stats import HostStats
from harvester.fetch.identity import Identity
from harvester.fetch.limits import FetchLimits
from harvester.fetch.pacing import DEFAULT_INTERVAL, HostPacer, describe, host_key
from harvester.fetch.robots import RobotsTxt
from harvester.fetch.robots_gate import RobotsGate
from harvester.fetch.shared_pace import SharedPace
from harvester.fetch.source import PageRequest
from harvester.fetch.targets import check_target, redirect_target
from harvester.fetch.transfer import Answer, Transient, now
from harvester.fetch.waits import WaitAnnouncer, cap_hint, log_wait, seconds_text

__all__ = ["FetchMode", "Fetcher", "RedirectRule"]

FetchMode = Literal["normal", "offline", "refresh"]
RedirectRule = Callable[[Answer], bool]
"""Whether to follow one redirect answer (its Location is checked either way)."""


@dataclass(frozen=True)
class _Hops:
    """How one fetch goes from hop to hop: what every request sends, what the first adds."""

    headers: dict[str, str]  # sent with every request of the fetch
    conditional: dict[str, str]  # validators, for the first request only
    content_types: tuple[str, ...] | None  # a success must be one of these (None: any)
    follow: RedirectRule | None  # None: follow every redirect


def _never(answer: Answer) -> bool:
    return False


def _http_client(
    identity: Identity, limits: FetchLimits, transport: httpx.AsyncBaseTransport | None
) -> httpx.AsyncClient:
    """The one HTTP client of a fetcher: our identity, the limits' timeouts, no redirects."""
    timeout = httpx.Timeout(
        connect=limits.connect_timeout,
        read=limits.read_timeout,
        write=limits.read_timeout,
        pool=limits.total_timeout,
    )
    return httpx.AsyncClient(
        transport=transport,
        timeout=timeout,
        follow_redirects=False,  # followed by hand: every hop is checked, robots-checked, paced
        headers=identity.headers(),
        trust_env=False,  # no proxies from the environment: we talk to the site itself
    )


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
        on_wait: WaitAnnouncer = log_wait,
        state_dir: str | Path | None = None,
        on_answer: AnswerListener | None = None,
        on_pace: WaitAnnouncer | None = None,
    ) -> None:
        self.identity = identity
        self.origin = origin  # what a network answer's capture says it came from
        self.mode = mode
        self.min_interval = min_interval  # the recipe's delay: raises Crawl-delay, never lowers
        self.limits = limits or FetchLimits()
        self.pacer = pacer or HostPacer()
        self.pacer.on_wait = on_wait  # long waits (over five seconds) are announced
        self.pacer.on_pace = on_pace  # every wait, for a progress display
        self.retries = retries
        self.cache = HttpCache(Path(cache_dir) / "http") if cache_dir is not None else None
        self._robots_store = None
        if cache_dir is not None:
            self._robots_store = open_store(Path(cache_dir) / "robots", "robots store")
        self._client = _http_client(identity, self.limits, transport)
        self.stats = HostStats()  # for the run report: what each host saw of this fetcher
        # The pace is kept per user, not per cache folder: harvests of other recipes, into
        # other archives, started at once or right after this one, take turns per host.
        self.shared_pace = SharedPace(
            state_dir,
            max_wait=self.limits.max_wait,
            stale_after=self.limits.total_timeout,
            on_wait=on_wait,
        )
        self._sender = PacedSender(
            self._client,
            self.pacer,
            self.limits,
            retries=retries,
            backoff_initial=backoff_initial,
            backoff_max=backoff_max,
            shared=self.shared_pace,
            on_answer=on_answer,  # every answer read in full, for the snapshot archive
            stats=self.stats,
        )
        self.robots = RobotsGate(
            self._sender.fetch_robots,
            store=self._robots_store,
            on_429=robots_on_429,
            parse_limit=self.limits.robots_parse_limit,
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

    async def fetch(
        self,
        url: str,
        *,
        immutable: bool = False,
        headers: Mapping[str, str] | None = None,
        content_types: tuple[str, ...] | Literal["any"] | None = None,
        follow: RedirectRule | None = None,
    ) -> Capture:
        """Fetch one page, from the cache when a fresh copy is there.

        ``immutable`` marks a page that never changes (a past season, a web-archive capture):
        once cached it is always fresh. ``headers`` are sent with every request of the fetch
        (and select among cached copies by their Vary); a success must have one of
        ``content_types`` (by default the limits' HTML types; "any" checks none); a redirect is
        followed when ``follow`` says so (by default always). Raises a FetchError subclass for
        anything that is not a usable page: a redirect not followed is an HttpStatusError.
        """
        check_target(url, self.limits.schemes)
        extra = dict(headers or {})
        request_headers = {**self.identity.headers(), **extra}
        lookup = (
            self.cache.lookup("GET", url, request_headers, now())
            if self.cache is not None
            else CacheLookup("miss", None, {}, None)
        )
        if self.mode == "offline":
            return self._offline(url, lookup)
        stored = lookup.response
        # --refresh revalidates every copy, immutable ones too (docs/fetching.md).
        reusable = lookup.state == "fresh" or (stored is not None and stored.immutable)
        if stored is not None and reusable and self.mode == "normal":
            self.stats.cache_hit(url)
            return cached_capture(url, stored)
        conditional: dict[str, str] = {}
        if lookup.response is not None:
            # Stale entries come with their validators; --refresh revalidates fresh ones too.
            conditional = dict(lookup.conditional_headers) or conditional_headers(lookup.response)
        types = self.limits.content_types if content_types is None else content_types
        answer, hops = await self._send(
            url, _Hops(extra, conditional, None if types == "any" else types, follow)
        )
        if answer.status == 304 and lookup.response is not None and self.cache is not None:
            refreshed = self.cache.freshen(
                "GET", url, request_headers, stored_answer(answer, request_headers, immutable)
            )
            stored = refreshed or lookup.response
            return cached_capture(url, stored, revalidated=True, hops=hops)
        if not 200 <= answer.status < 300:
            raise HttpStatusError(
                f"HTTP {answer.status}",
                url=url,
                status=answer.status,
                hint="the page is missing or refused; check the URL and the season",
            )
        if self.cache is not None:
            self.cache.store("GET", stored_answer(answer, request_headers, immutable, key=url))
        return self._capture(url, answer, hops)

    async def exchange(self, url: str, *, headers: Mapping[str, str] | None = None) -> Capture:
        """One robots-checked, paced, retried GET whose answer comes back whatever its status.

        No redirect is followed and no cache is read or written: for a conversation whose
        answer is itself the point, such as a TimeGate's 302 (RFC 7089 §4.1.1).
        """
        check_target(url, self.limits.schemes)
        if self.mode == "offline":
            raise NotCachedError(
                "an answer that is never cached, and --offline forbids fetching it",
                url=url,
                hint="run without --offline, or use a TimeMap ([captures] timemap) instead",
            )
        answer, hops = await self._send(url, _Hops(dict(headers or {}), {}, None, _never))
        return self._capture(url, answer, hops)

    def _capture(self, url: str, answer: Answer, hops: tuple[str, ...]) -> Capture:
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

    async def _send(self, url: str, hops: _Hops) -> tuple[Answer, tuple[str, ...]]:
        """The answer after retries and the redirects followed, the host's record kept."""
        try:
            answer, followed = await self._with_retries(url, hops)
        except Transient as failure:  # a permanent failure (FetchError) is never retried
            self.pacer.failed(host_key(failure.url), failure.reason)
            raise FetchError(
                f"gave up after {self.retries + 1} attempts: {failure.reason}",
                url=url,
                hint="the site may be down or rate-limiting; try again later",
            ) from None
        self.pacer.succeeded(host_key(url))
        return answer, followed

    async def check_robots(self, url: str) -> RobotsTxt:
        """The robots.txt rules for ``url``'s host (fetched politely if needed)."""
        rules = await self.robots.rules(url)
        self._apply_crawl_delay(url, rules)
        return rules

    # -- steps -------------------------------------------------------------------------

    def _offline(self, url: str, lookup: CacheLookup) -> Capture:
        stored = lookup.response
        if stored is None:
            raise NotCachedError(
                "not in the cache, and --offline forbids fetching it",
                url=url,
                hint="run once without --offline to fill the cache",
            )
        if lookup.state != "fresh" and forbids_stale(stored):
            # RFC 9111 §4.2.4 (must-revalidate) and §5.2.2.4 (no-cache): never served unchecked.
            named = sorted(
                {d for d, _ in cache_directives(stored.headers)} & {"must-revalidate", "no-cache"}
            )
            raise NotCachedError(
                f"the cached copy is stale and its Cache-Control ({', '.join(named)}) forbids "
                "using it without asking the site, which --offline forbids",
                url=url,
                hint="run once without --offline to revalidate it",
            )
        self.stats.cache_hit(url)
        return cached_capture(url, stored)

    def _apply_crawl_delay(self, url: str, rules: RobotsTxt) -> None:
        host = host_key(url)
        if host in self._intervals_set:
            return
        # Crawl-delay and Request-rate are not in RFC 9309 (common practice, no published
        # source): the interval is the larger of the site's and the recipe's, never less.
        site = rules.min_interval(self.identity.token)
        self._intervals_set.add(host)
        if site is not None and site > self.limits.max_wait:
            named = "Crawl-delay" if rules.crawl_delay(self.identity.token) == site else None
            cap = seconds_text(self.limits.max_wait)
            message = (
                f"robots.txt asks for {seconds_text(site)} between requests "
                f"(its {named or 'Request-rate'}), over the {cap} cap on any one wait; "
                f"{describe(host)} is skipped for this run"
            )
            self._sender.skip(host, message, cap_hint(site))
            return
        self.pacer.set_interval(
            host, max(site if site is not None else DEFAULT_INTERVAL, self.min_interval)
        )
        self.stats.set_interval(url, self.pacer.interval(host))

    async def _allowed(self, url: str) -> None:
        rules = await self.check_robots(url)
        self._sender.check_skipped(url)
        verdict = rules.check(url, self.identity.token)
        if not verdict.allowed:
            rule = verdict.rule
            why = verdict.reason
            if rule is not None:
                why = f"line {rule.line}, {rule.directive}"
            hint = "robots.txt is the site's wish; leave this page out of the recipe"
            if rule is None and verdict.reason.startswith("robots.txt unreachable"):
                # RFC 9309 §2.3.1.4: no answer, nothing fetched — a fault, not the site's wish.
                hint = "the site did not answer for its robots.txt; check the address or try later"
            raise RobotsDisallowedError(
                f"robots.txt disallows it for {self.identity.token!r}: {why}", url=url, hint=hint
            )

    async def _with_retries(self, url: str, hops: _Hops) -> tuple[Answer, tuple[str, ...]]:
        async for attempt in self._sender.retrying():
            with attempt:
                return await self._follow(url, hops)
        raise AssertionError("unreachable: tenacity re-raises the last failure")

    async def _follow(self, url: str, how: _Hops) -> tuple[Answer, tuple[str, ...]]:
        """GET with redirects followed by hand, each hop checked, robots-checked and paced."""
        current, seen = url, {url}
        hops: list[str] = []
        for hop in range(self.limits.max_redirects + 1):
            await self._allowed(current)
            # RFC 9110 §15.4: validators are for the original URI only.
            headers = {**how.headers, **how.conditional} if hop == 0 else dict(how.headers)
            answer = await self._sender.send(current, headers, content_types=how.content_types)
            location = header(answer.headers, "location")
            if answer.status not in REDIRECTS or not location:
                return answer, tuple(hops)
            if how.follow is not None and not how.follow(answer):
                return answer, tuple(hops)
            target = redirect_target(url, current, location.strip(), self.limits.schemes)
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
