"""Pages from a web archive: the captures of a URL listed, one chosen by rule, fetched politely.

``CaptureSource`` finds a page's captures (mementos) through the archive's TimeMap
(``application/link-format``, RFC 7089 §5, pages followed breadth-first) or, with only a
TimeGate, by datetime negotiation (``Accept-Datetime``, RFC 7089 §4.1: the 302's Location, then
the memento's own links to its neighbours, §2.2). It ranks them by the archive's rule and window
(``capture_choice``) and fetches the best; a memento that answers with a redirect (an archived
3xx, §4.5.4) or an error (an archived 4xx/5xx, §4.5.5) is skipped for the next best, and the
capture's notes say so. Redirects without Memento-Datetime on the archive's own host are
intermediate resources and followed (§4.5.7).

The archive is a host like any other: the fetcher's robots.txt gate, pace, retries, limits and
HTTP cache apply to it (a memento is cached as immutable: Memento-Datetime promises it "will no
longer change", §2.1.1). The capture's ``url`` is the page's own URL, ``final_url`` the memento
URI fetched, ``memento_datetime`` its Memento-Datetime, ``origin`` "web-archive".
"""

from __future__ import annotations

from collections import deque
from collections.abc import Mapping
from dataclasses import dataclass, replace
from datetime import UTC, datetime
from typing import Literal, Protocol
from urllib.parse import urljoin, urlsplit

from harvester.errors import FetchError, FetchLimitError, HttpStatusError
from harvester.fetch.capture import Capture, header
from harvester.fetch.capture_choice import describe_window, rank_mementos
from harvester.fetch.client import RedirectRule
from harvester.fetch.linkformat import parse_links
from harvester.fetch.source import PageRequest
from harvester.fetch.timemap import (
    Memento,
    TimeMap,
    format_memento_datetime,
    merge_timemaps,
    parse_memento_datetime,
    read_timemap,
)
from harvester.fetch.transfer import Answer
from harvester.fetch.web_archive import WebArchive, rewriting_signs
from harvester.timestamps import rfc3339

__all__ = ["LINK_FORMAT", "ArchiveClient", "CaptureChoice", "CaptureSource"]

LINK_FORMAT = "application/link-format"
MAX_TIMEMAP_PAGES = 50  # TimeMap documents read for one page (common practice, no source)
MAX_TRIES = 5  # mementos fetched for one page before giving up: the archive is a shared service


class ArchiveClient(Protocol):
    """What a capture source asks of whoever talks to the archive: the live fetcher, or a
    store of recorded exchanges (a cassette, the snapshot archive) replaying them."""

    async def fetch(
        self,
        url: str,
        *,
        immutable: bool = False,
        headers: Mapping[str, str] | None = None,
        content_types: tuple[str, ...] | Literal["any"] | None = None,
        follow: RedirectRule | None = None,
    ) -> Capture:
        """A usable answer for ``url``, redirects followed as ``follow`` says; else FetchError."""
        ...

    async def exchange(self, url: str, *, headers: Mapping[str, str] | None = None) -> Capture:
        """The answer for ``url`` whatever its status, no redirect followed."""
        ...


@dataclass(frozen=True)
class CaptureChoice:
    """A page's captures as the archive lists them, and the order the rule would try them in."""

    url: str
    timemap: TimeMap
    ranked: tuple[Memento, ...]  # best first; mementos outside the window are left out
    target: datetime

    @property
    def chosen(self) -> Memento | None:
        """The capture the rule picks, before any is fetched."""
        return self.ranked[0] if self.ranked else None


class CaptureSource:
    """A ``PageSource`` of web-archive captures, fetched by ``fetcher`` from ``archive``."""

    def __init__(
        self, fetcher: ArchiveClient, archive: WebArchive, *, max_tries: int = MAX_TRIES
    ) -> None:
        self.fetcher = fetcher
        self.archive = archive
        self.max_tries = max_tries
        self._prefetched: dict[str, Capture] = {}  # a negotiated memento, read for its links

    async def capture(self, request: PageRequest) -> Capture:
        """The capture of ``request.url`` nearest ``request.capture_near`` (else the latest)."""
        target = request.capture_near or datetime.now(UTC)
        choice = await self.choose(request.url, target)
        if not choice.ranked:
            raise FetchError(self._none_message(choice), url=request.url, hint=self._none_hint())
        skipped: list[str] = []
        for memento in choice.ranked[: self.max_tries]:
            try:
                capture = await self._fetch_memento(request.url, memento)
            except HttpStatusError as error:
                what = "an archived redirect" if 300 <= error.status < 400 else "an archived error"
                skipped.append(f"{_when(memento)} ({what}, HTTP {error.status})")
                continue
            except FetchLimitError as error:
                skipped.append(f"{_when(memento)} ({error.message})")
                continue
            if skipped:
                note = f"skipped {len(skipped)} nearer capture(s): {'; '.join(skipped)}"
                capture = replace(capture, notes=(note, *capture.notes))
            return capture
        raise FetchError(
            f"none of the {len(skipped)} nearest captures is usable: {'; '.join(skipped)}",
            url=request.url,
            hint="the archive holds only redirects or errors near that date; widen or move"
            " capture_near, or leave the season out",
        )

    async def choose(self, url: str, target: datetime) -> CaptureChoice:
        """The captures of ``url`` and their order under the archive's rule and window."""
        if self.archive.timemap_url(url) is not None:
            timemap = await self.read_timemap(url)
        else:
            timemap = await self._negotiate(url, target)
        ranked = rank_mementos(
            timemap.mementos, target, rule=self.archive.rule, within=self.archive.within
        )
        return CaptureChoice(url, timemap, tuple(ranked), target)

    async def read_timemap(self, url: str) -> TimeMap:
        """The TimeMap of ``url``, its pages followed breadth-first (RFC 7089 §5.1.1)."""
        first = self.archive.timemap_url(url)
        assert first is not None
        queue, seen = deque([first]), {first}
        maps: list[TimeMap] = []
        while queue and len(maps) < MAX_TIMEMAP_PAGES:
            location = queue.popleft()
            try:
                capture = await self.fetcher.fetch(
                    location, headers={"Accept": LINK_FORMAT}, content_types="any"
                )
            except HttpStatusError as error:
                if error.status == 404 and not maps:
                    return TimeMap(None, (), (), (), location, ())  # no capture of the page
                raise
            text = capture.body.decode(capture.charset or "utf-8", errors="replace")
            page = read_timemap(text, base=capture.final_url)
            maps.append(page)
            for linked in page.pages:
                if linked not in seen:
                    seen.add(linked)
                    queue.append(linked)
        return merge_timemaps(maps)

    async def _negotiate(self, url: str, target: datetime) -> TimeMap:
        """Mementos found by asking the TimeGate for ``target`` (RFC 7089 §4.1.1, §4.2.1)."""
        gate = self.archive.timegate_url(url)
        assert gate is not None
        answer = await self.fetcher.exchange(
            gate, headers={"Accept-Datetime": format_memento_datetime(target)}
        )
        if answer.status == 404:
            return TimeMap(None, (), (gate,), (), None, ())
        if answer.status == 400:
            raise FetchError(
                f"the TimeGate refused Accept-Datetime: {format_memento_datetime(target)}",
                url=gate,
                hint="check [captures] timegate: it must be an RFC 7089 TimeGate",
            )
        location = answer.header("location")
        stamp = parse_memento_datetime(answer.header("memento-datetime") or "")
        if 300 <= answer.status < 400 and location:
            uri = urljoin(gate, location.strip())  # §4.1.1: 302 to the chosen memento
        elif 200 <= answer.status < 300 and stamp is not None:
            uri = urljoin(gate, (answer.header("content-location") or gate).strip())  # §4.1.2
        else:
            raise FetchError(
                f"the TimeGate answered HTTP {answer.status} without a memento",
                url=gate,
                hint="check [captures] timegate: it must be an RFC 7089 TimeGate",
            )
        # The chosen memento's own Link header lists its neighbours with datetimes (§2.2.4);
        # what it answers is kept, so that it is not asked for twice.
        wanted = self._wanted(uri)
        neighbours = await self.fetcher.exchange(wanted)
        archived = neighbours.header("memento-datetime") is not None
        if 200 <= neighbours.status < 300 or archived:
            self._prefetched[wanted] = neighbours  # an archived 3xx-5xx is its answer too
        listed = parse_links(neighbours.header("link") or "", base=wanted).links
        stamp = stamp or parse_memento_datetime(neighbours.header("memento-datetime") or "")
        found: dict[str, datetime] = {}
        if stamp is not None:
            found[uri] = stamp
        for link in listed:
            when = parse_memento_datetime(link.param("datetime") or "")
            if "memento" in link.rels and when is not None:
                found.setdefault(link.target, when)
        ordered = sorted(found.items(), key=lambda item: item[1])
        mementos = tuple(Memento(uri, when, n) for n, (uri, when) in enumerate(ordered))
        return TimeMap(None, mementos, (gate,), (), None, ())

    async def _fetch_memento(self, url: str, memento: Memento) -> Capture:
        """One memento: its original bytes when the archive says how to ask for them."""
        wanted = self._wanted(memento.uri)
        notes: list[str] = []
        if self.archive.original is not None and wanted == memento.uri:
            notes.append(f"[captures] original does not match {memento.uri}; fetched as is")
        fetched = self._prefetched.pop(wanted, None) or await self.fetcher.fetch(
            wanted, immutable=True, follow=_intermediate
        )
        if not 200 <= fetched.status < 300:
            raise HttpStatusError(f"HTTP {fetched.status}", url=wanted, status=fetched.status)
        stamp = parse_memento_datetime(fetched.header("memento-datetime") or "")
        if stamp is None:
            notes.append("the archive sent no Memento-Datetime; the TimeMap's datetime is kept")
        signs = rewriting_signs(fetched.body, fetched.final_url, self.archive.hosts)
        if signs:
            tail = (
                " although the original was asked for"
                if wanted != memento.uri
                else "; set [captures] original to ask for the unmodified bytes"
            )
            notes.append(f"looks rewritten by the web archive: {signs} link(s) point into it{tail}")
        # A replayed exchange keeps the origin of its store (cassette, snapshot archive).
        origin = "web-archive" if fetched.origin in ("live", "cache") else fetched.origin
        return replace(
            fetched,
            url=url,
            origin=origin,
            memento_datetime=stamp or memento.datetime,
            memento_uri=memento.uri,
            notes=tuple(notes),
        )

    def _wanted(self, memento_uri: str) -> str:
        """The URI to fetch for a memento: its original bytes' when ``original`` matches."""
        if self.archive.original is None:
            return memento_uri
        return self.archive.original.apply(memento_uri) or memento_uri

    def _none_message(self, choice: CaptureChoice) -> str:
        when = rfc3339(choice.target, timespec="seconds")
        if not choice.timemap.mementos:
            return "the web archive holds no capture of this page"
        window = self.archive.within
        if self.archive.rule == "before":
            scope = f"at or before {when}"
            if window is not None:
                scope += f" within {describe_window(window)}"
        else:
            scope = f"within {describe_window(window)} of {when}" if window else f"near {when}"
        held = choice.timemap.mementos
        return (
            f"no capture {scope}: the web archive holds {len(held)},"
            f" from {_when(min(held, key=_datetime))} to {_when(max(held, key=_datetime))}"
        )

    def _none_hint(self) -> str:
        if self.archive.within is not None or self.archive.rule == "before":
            return "widen [captures] within, change rule, or move capture_near"
        return "the archive never captured it; check the URL, or leave the season out"


def _datetime(memento: Memento) -> datetime:
    return memento.datetime


def _when(memento: Memento) -> str:
    return rfc3339(memento.datetime, timespec="seconds")


def _intermediate(answer: Answer) -> bool:
    """Follow a redirect only when it is an archive's intermediate resource (RFC 7089 §4.5.7):
    no Memento-Datetime, and on the archive's own host. An archived redirect (§4.5.4) is not
    followed: its target is another page, or the live site."""
    if header(answer.headers, "memento-datetime") is not None:
        return False
    location = (header(answer.headers, "location") or "").strip()
    try:
        target = urlsplit(urljoin(answer.url, location))
    except ValueError:
        return False
    return target.netloc.lower() == urlsplit(answer.url).netloc.lower()
