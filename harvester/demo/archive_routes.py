"""What the demo web archive answers: TimeMaps, a TimeGate and mementos of retired season pages.

``ArchiveRoutes`` is the ``Routes`` of the archive; ``web_archive.DemoWebArchive`` serves it on a
loopback port (pacing with 429s, 304s and the request log are ``loopback``'s part). It follows
RFC 7089 (Memento) with a 302-style remote TimeGate (§4.2.1). ``{site}`` is the live demo site's
base URL, ``{base}`` the archive's own; a URI-R is written verbatim after its endpoint's prefix.
The contract:

Holdings (``archive_captures``; the archive never fetches from the live site, it renders)
- the URI-Rs ``{site}/seasons/{season}/{players,contracts,standings}.html`` of every season the
  live site no longer serves in full (it keeps 3: with the default league, latest 2026, seasons
  2012-2023);
- four captures of each, at fixed UTC times: ``{season}-03-15 10:20:00`` (the page at league
  revision 2, as if the season were still the latest: some goals and one salary differ from the
  final numbers), ``{season}-06-28 14:05:09``, ``{season}-07-03 08:30:00`` and
  ``{season}-11-20 16:45:00`` (revision 0, the season's final numbers, as
  ``render_page(league, path)`` gives them). The June 28 capture is the one closest to
  ``{season}-06-30T00:00:00Z`` (33 h 54 min 51 s before it; July 3 is 80 h 30 min after);
- special captures replace the June 28 one of all three pages of a season: 2015 recorded the
  live site's 503 error page and 2019 its 404 page (``replies.error_reply``), 2017 an archived
  302 whose Location is the live site's front page ``{site}/index.html`` (the archive does not
  hold it);
- captures of seasons up to 2014 are stored as ``text/html; charset=windows-1252``: the page
  with ``<meta charset="windows-1252">``, encoded in cp1252, U+2212 (not in cp1252) written as
  ``&#8722;``; later ones as UTF-8, like today's live pages. The league's names are ASCII, so
  the non-ASCII characters there are the em dash (cp1252 byte 0x97) and the minus sign.

Paths (matched on the request target, query included; an unknown URI-R answers 404; a URI-R
that lost a slash after its scheme, or arrives percent-encoded, is read as meant)
- ``/robots.txt`` (text/plain): ``User-agent: *``, ``Crawl-delay: {crawl_delay}`` in plain
  decimals, ``Allow: /``;
- ``/timemap/{URI-R}``: 200 ``application/link-format`` (RFC 7089 §5, RFC 6690 §2), one
  link-value per line, lines ended by ",\\n" except the last, which ends in "\\n": the
  ``original`` link, ``self`` (type, from, until), the ``timegate``, then each memento in time
  order with ``datetime``; the first is ``rel="first memento"``, the last ``rel="last memento"``.
  With ``timemap_page_size=N`` (§5.1.1) the document lists N mementos and, unless it is the last
  page, ends with a ``rel="timemap"`` link (type, from, until of the next page's mementos) to
  ``/timemap/page/{n+1}/{URI-R}``; page 1 is ``/timemap/{URI-R}``; a page past the end is 404;
- ``/timegate/{URI-R}``: 302 to the URI-M closest to Accept-Datetime (a tie goes to the earlier;
  before the first → the first, after the last → the last, absent → the most recent;
  §4.5.3), ``Vary: accept-datetime``, Link ``original`` and ``timemap`` (type, from, until), no
  Memento-Datetime (§4.2.1). An Accept-Datetime that is not an rfc1123-date in GMT (§2.1.1:
  ``Sun, 06 Nov 1994 08:49:37 GMT``, case-sensitive) answers 400 (§4.5.3);
- ``/web/{YYYYMMDDhhmmss}/{URI-R}``: the memento as a visitor sees it: the recorded status,
  Content-Type (and Location) and body, with ``<div id="demo-archive-banner">`` injected right
  after ``<body>`` and the page's links to the live site rewritten into the archive
  (``href="/x"`` and ``href="{site}/x"`` → ``href="/web/{timestamp}/{site}/x"``, ``src`` too;
  relative links, which resolve against the URI-M, and other hosts' links stay as they are);
- ``/web/{YYYYMMDDhhmmss}raw/{URI-R}``: the same capture's recorded bytes, unmodified;
- both variants carry ``Memento-Datetime`` (IMF-fixdate GMT, §2.1.1) and
  ``Link: <URI-R>; rel="original", <{base}/timegate/URI-R>; rel="timegate",
  <{base}/timemap/URI-R>; rel="timemap"; type="application/link-format"`` followed by
  ``first memento``, ``prev memento``, ``next memento`` and ``last memento`` links (with
  datetime; prev/next only where they exist) to the banner URI-Ms (§2.2.4), never
  ``Vary: accept-datetime`` (§4.1.1). An archived error or redirect replays with its own status
  (§4.5.4, §4.5.5). A 200 memento has a strong ETag: ``"`` + the first 16 hex digits of the
  served body's SHA-256 + ``"``;
- a 14-digit timestamp that is a valid UTC time but no capture's: 302 to the closest capture's
  URI-M of the same variant, Link ``original`` only, no Memento-Datetime (an intermediate
  resource, §4.5.7); 14 digits that are no valid time answer 404;
- anything else answers 404 with a small HTML page.
"""

from __future__ import annotations

import hashlib
import re
from datetime import UTC, datetime
from decimal import Decimal
from email.utils import format_datetime
from functools import cache
from html import escape
from urllib.parse import unquote

from harvester.demo.archive_captures import Capture, Holdings
from harvester.demo.league import League, build_league
from harvester.demo.loopback import LOOPBACK, Request, check_option
from harvester.demo.replies import HTML, Reply, error_reply, page

__all__ = ["LINK_FORMAT", "ArchiveRoutes", "parse_accept_datetime", "rewrite_links"]

LINK_FORMAT = "application/link-format"
_TIMEMAP = re.compile(r"/timemap/(?:page/([1-9]\d*)/)?(.+)")
_TIMEGATE = re.compile(r"/timegate/(.+)")
_MEMENTO = re.compile(r"/web/(\d{14})(raw)?/(.+)")
# RFC 7089 §2.1.1: rfc1123-date, case-sensitive, GMT only.
_RFC1123 = re.compile(
    r"(?:Mon|Tue|Wed|Thu|Fri|Sat|Sun), (\d{2}) (Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec)"
    r" (\d{4}) (\d{2}):(\d{2}):(\d{2}) GMT"
)
_MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
_LINK_ATTRIBUTE = re.compile(r'\b(href|src)="([^"]*)"')
_SCHEME_SLASH = re.compile(r"^(https?):/(?!/)")


class ArchiveRoutes:
    """The demo web archive: TimeMaps, a TimeGate and mementos of the live site's retired pages."""

    def __init__(
        self,
        *,
        site: str,
        league: League | None = None,
        crawl_delay: float = 0.2,
        timemap_page_size: int | None = None,
    ) -> None:
        site = site.rstrip("/")
        ok = re.fullmatch(rf"http://{re.escape(LOOPBACK)}(:\d{{1,5}})?", site) is not None
        check_option(ok, "site", site, f"use the live demo site's base URL, http://{LOOPBACK}:PORT")
        check_option(crawl_delay >= 0, "crawl_delay", crawl_delay, "use seconds >= 0")
        ok = timemap_page_size is None or timemap_page_size >= 1
        check_option(ok, "timemap_page_size", timemap_page_size, "use 1 or more, or None")
        self.site, self.crawl_delay, self.timemap_page_size = site, crawl_delay, timemap_page_size
        self.league = league or _default_league()
        self.holdings = Holdings(site, self.league)

    def reply(self, request: Request) -> Reply:
        """The answer to one GET or HEAD, by the contract in the module docstring."""
        target, base = request.target, request.base_url
        if target == "/robots.txt":
            return Reply(200, {"Content-Type": "text/plain; charset=utf-8"}, self._robots())
        if match := _TIMEMAP.fullmatch(target):
            return self._timemap(_uri_r(match[2]), int(match[1] or 1), base)
        if match := _TIMEGATE.fullmatch(target):
            return self._timegate(_uri_r(match[1]), request.headers.get("accept-datetime"), base)
        if match := _MEMENTO.fullmatch(target):
            return self._memento(_uri_r(match[3]), match[1], match[2] is not None, base)
        return error_reply(404)

    # -- TimeMap (RFC 7089 §5) ---------------------------------------------------------------

    def _timemap(self, uri_r: str, number: int, base: str) -> Reply:
        captures = self.holdings.captures(uri_r)
        size = self.timemap_page_size or len(captures) or 1
        pages = [captures[start : start + size] for start in range(0, len(captures), size)]
        if number > len(pages):  # no pages at all for a URI-R the archive does not hold
            return error_reply(404)
        listed = pages[number - 1]
        self_path = "/timemap/" if number == 1 else f"/timemap/page/{number}/"
        links = [
            f'<{uri_r}>; rel="original"',
            f'<{base}{self_path}{uri_r}>; rel="self"; type="{LINK_FORMAT}"{_span(listed)}',
            f'<{base}/timegate/{uri_r}>; rel="timegate"',
        ]
        for capture in listed:
            rel = _memento_rel(capture, captures)
            links.append(f'<{base}{capture.path()}>; rel="{rel}"; datetime="{_date(capture)}"')
        if number < len(pages):
            following = pages[number]
            links.append(
                f'<{base}/timemap/page/{number + 1}/{uri_r}>; rel="timemap"; type="{LINK_FORMAT}"'
                + _span(following)
            )
        return Reply(200, {"Content-Type": LINK_FORMAT}, (",\n".join(links) + "\n").encode())

    # -- TimeGate (RFC 7089 §4.2.1, §4.5.3) ----------------------------------------------------

    def _timegate(self, uri_r: str, accept_datetime: str | None, base: str) -> Reply:
        captures = self.holdings.captures(uri_r)
        if not captures:
            return error_reply(404)
        if accept_datetime is None:
            chosen = captures[-1]  # §4.5.3: the most recent
        elif (wanted := parse_accept_datetime(accept_datetime)) is None:
            return error_reply(400)  # §4.5.3: a malformed Accept-Datetime
        else:
            chosen = _closest(captures, wanted)
        link = f'<{uri_r}>; rel="original", ' + _timemap_link(uri_r, captures, base)
        headers = {"Location": base + chosen.path(), "Vary": "accept-datetime", "Link": link}
        return Reply(302, {"Content-Type": HTML, **headers}, page("Found", ""))

    # -- Mementos (RFC 7089 §4.1.1, §4.5.4, §4.5.5, §4.5.7) ------------------------------------

    def _memento(self, uri_r: str, timestamp: str, raw: bool, base: str) -> Reply:
        captures = self.holdings.captures(uri_r)
        try:
            wanted = datetime.strptime(timestamp, "%Y%m%d%H%M%S").replace(tzinfo=UTC)
        except ValueError:
            return error_reply(404)  # 14 digits, but no time (month 13, say)
        if not captures:
            return error_reply(404)
        capture = next((c for c in captures if c.datetime == wanted), None)
        if capture is None:
            closest = _closest(captures, wanted)
            headers = {
                "Location": base + closest.path(raw=raw),
                "Link": f'<{uri_r}>; rel="original"',
            }
            return Reply(302, {"Content-Type": HTML, **headers}, page("Found", ""))
        original = self.holdings.original(capture)
        body = (
            original.body if raw else self._visitor_view(capture, original.body, original.charset)
        )
        headers = {"Content-Type": original.content_type}
        if original.location is not None:
            headers["Location"] = original.location
        headers["Memento-Datetime"] = _date(capture)
        headers["Link"] = self._memento_links(capture, captures, base)
        if original.status == 200:
            headers["ETag"] = f'"{hashlib.sha256(body).hexdigest()[:16]}"'
        return Reply(original.status, headers, body)

    def _memento_links(self, capture: Capture, captures: tuple[Capture, ...], base: str) -> str:
        uri_r = capture.uri_r
        links = [
            f'<{uri_r}>; rel="original"',
            f'<{base}/timegate/{uri_r}>; rel="timegate"',
            f'<{base}/timemap/{uri_r}>; rel="timemap"; type="{LINK_FORMAT}"',
        ]
        index = captures.index(capture)
        neighbours = [("first", captures[0])]
        if index > 0:
            neighbours.append(("prev", captures[index - 1]))
        if index + 1 < len(captures):
            neighbours.append(("next", captures[index + 1]))
        neighbours.append(("last", captures[-1]))
        for rel, other in neighbours:
            links.append(f'<{base}{other.path()}>; rel="{rel} memento"; datetime="{_date(other)}"')
        return ", ".join(links)

    def _visitor_view(self, capture: Capture, body: bytes, charset: str) -> bytes:
        """The body with its links into the archive and the banner right after ``<body>``."""
        text = rewrite_links(body.decode(charset), self.site, capture.timestamp)
        banner = (
            '<div id="demo-archive-banner">Demo web archive (invented, loopback only): this is '
            f"a capture of {escape(capture.uri_r)} made {_date(capture)}. "
            f'<a href="/timemap/{escape(capture.uri_r)}">all captures</a></div>\n'
        )
        head, tag, rest = text.partition("<body>")
        text = head + tag + "\n" + banner + rest.removeprefix("\n") if tag else banner + text
        return text.encode(charset, "xmlcharrefreplace")

    def _robots(self) -> bytes:
        delay = format(Decimal(repr(self.crawl_delay)).normalize(), "f")  # 0.05, never 5e-02
        return f"User-agent: *\nCrawl-delay: {delay}\nAllow: /\n".encode()


def rewrite_links(text: str, site: str, timestamp: str) -> str:
    """``text`` with each href/src to ``site`` (absolute, or an absolute path) into the archive."""
    prefix = f"/web/{timestamp}/"

    def rewrite(match: re.Match[str]) -> str:
        value = match[2]
        if value == site or value.startswith(site + "/"):
            value = prefix + value
        elif value.startswith("/") and not value.startswith("//"):
            value = prefix + site + value
        # Relative links resolve against the URI-M by themselves, other hosts' stay live.
        return f'{match[1]}="{value}"'

    return _LINK_ATTRIBUTE.sub(rewrite, text)


def parse_accept_datetime(value: str) -> datetime | None:
    """An RFC 7089 §2.1.1 rfc1123-date (GMT, case-sensitive) as aware UTC; None if not one."""
    match = _RFC1123.fullmatch(value.strip())
    if match is None:
        return None
    day, month, year, hour, minute, second = match.groups()
    try:
        moment = datetime(
            int(year), _MONTHS.index(month) + 1, int(day), int(hour), int(minute), int(second)
        )
    except ValueError:
        return None  # 31 Feb, 24:00:00, a leap second: §2.1.1 allows seconds 00-59 only
    return moment.replace(tzinfo=UTC)


def _closest(captures: tuple[Capture, ...], wanted: datetime) -> Capture:
    # Nearest either way; on a tie the earlier (REFERENCES §4.5, a project rule). Before the
    # first or after the last this is the first or the last, as RFC 7089 §4.5.3 requires.
    return min(captures, key=lambda c: (abs(c.datetime - wanted), c.datetime))


def _memento_rel(capture: Capture, captures: tuple[Capture, ...]) -> str:
    if len(captures) == 1:
        return "first last memento"
    if capture == captures[0]:
        return "first memento"
    return "last memento" if capture == captures[-1] else "memento"


def _timemap_link(uri_r: str, captures: tuple[Capture, ...], base: str) -> str:
    return f'<{base}/timemap/{uri_r}>; rel="timemap"; type="{LINK_FORMAT}"' + _span(captures)


def _span(captures: tuple[Capture, ...]) -> str:
    return f'; from="{_date(captures[0])}"; until="{_date(captures[-1])}"' if captures else ""


def _date(capture: Capture) -> str:
    return format_datetime(capture.datetime, usegmt=True)  # IMF-fixdate, RFC 9110 §5.6.7


def _uri_r(written: str) -> str:
    """The URI-R a client meant: percent-decoded if it came encoded, ``http:/x`` as ``http://x``."""
    if "://" not in written and "%3a" in written[:8].lower():
        written = unquote(written)
    # Some clients and proxies merge "//" inside a path (common practice, no published source).
    return _SCHEME_SLASH.sub(r"\1://", written, count=1)


@cache
def _default_league() -> League:
    # The league is immutable and takes ~0.2 s to build: one for every archive in the process.
    return build_league()
