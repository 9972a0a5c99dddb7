"""What the league's demo site serves: each request path, at the clock's revision, to a reply.

``LeagueRoutes`` is the ``Routes`` of the demo site; ``server.DemoServer`` serves it on a
loopback port (pacing, delays, 304s and the request log are ``loopback``'s part). The contract:

Paths (``path`` never includes the query)
- every page of ``pages.site_paths`` as ``text/html; charset=utf-8``; ``/`` answers 302 to
  ``/index.html``; anything unknown answers 404 with a small HTML page;
- retention (``keep_seasons=3``; None serves all): older seasons' pages answer 410 Gone when the
  season is more than ``gone_after`` (5) years before the latest, else 404 (latest 2026:
  2024-2026 served, 2021-2023 404, 2012-2020 410);
- ``/robots.txt`` (text/plain): one ``User-agent: *`` group with ``Crawl-delay: {crawl_delay}``
  in plain decimals, ``Disallow: /private/``, ``Disallow: /players/*.json$`` and
  ``Sitemap: {base_url}/sitemap.xml`` (sitemaps.org XML of the served pages). ``robots_txt``
  replaces the body; ``robots_redirects=n`` makes it n 302s via ``/robots/hop/1`` …
  ``/robots/hop/n``, the last hop serving it; ``robots_status`` makes that final answer a
  4xx/5xx instead;
- ``/private/`` is an HTML page that exists although robots.txt disallows it;
- ``/data.csv`` (``text/csv; charset=utf-8``): the latest season's standings;
- ``/loop/a`` → 302 ``/loop/b`` → 302 ``/loop/a`` (absolute-path Location values);
- ``/huge.html`` streams ``huge_bytes`` bytes with Content-Length, ``/huge-chunked.html`` the
  same chunked; ``/bomb.html`` is ``Content-Encoding: gzip`` whatever the Accept-Encoding, about
  ``bomb_bytes / 1000`` bytes that inflate to exactly ``bomb_bytes``.

Before routing, ``forced[path]``: the next status of that list (with
``Retry-After: {forced_retry_after}`` when set) until the list is used up.

Validators: each 200 of site content (not the huge or bomb pages) has a strong ETag, ``"`` + the
first 16 hex digits of the body's SHA-256 + ``"``, and a Last-Modified: midnight GMT, 1 July of
the page's season (of the latest season for other pages), plus one day per revision up to the one
that last changed the body, never later than now. Season pages carry
``Cache-Control: max-age={max_age}``.
"""

from __future__ import annotations

import hashlib
import re
import threading
from collections import deque
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime, timedelta
from decimal import Decimal
from email.utils import format_datetime
from functools import cache
from html import escape

from harvester.demo.league import League, build_league
from harvester.demo.loopback import Request, check_option
from harvester.demo.pages import render_page, site_paths
from harvester.demo.replies import (
    HTML,
    Reply,
    error_reply,
    filler,
    gzip_bomb,
    page,
    redirect_reply,
)

__all__ = ["LeagueRoutes"]

_SEASON_PAGE = re.compile(r"/seasons/(\d{4})/")
_ROBOTS_HOP = re.compile(r"/robots/hop/([1-9]\d*)")
_ERROR_STATUS = "use a 4xx or 5xx status"


class LeagueRoutes:
    """The league's demo site: its pages and files, retention, forced statuses and revisions."""

    def __init__(
        self,
        *,
        league: League | None = None,
        revision: int = 0,
        crawl_delay: float = 0.2,
        keep_seasons: int | None = 3,
        gone_after: int = 5,
        max_age: int | None = 60,
        robots_txt: str | None = None,
        robots_status: int | None = None,
        robots_redirects: int = 0,
        forced: Mapping[str, Sequence[int]] | None = None,
        forced_retry_after: int | str | datetime | None = None,
        huge_bytes: int = 8 << 20,
        bomb_bytes: int = 64 << 20,
    ) -> None:
        check_option(crawl_delay >= 0, "crawl_delay", crawl_delay, "use seconds >= 0")
        check_option(gone_after >= 0, "gone_after", gone_after, "use a whole number >= 0")
        ok = keep_seasons is None or keep_seasons >= 1
        check_option(ok, "keep_seasons", keep_seasons, "use >= 1")
        ok = max_age is None or max_age >= 0
        check_option(ok, "max_age", max_age, "use seconds >= 0 or None")
        check_option(robots_redirects >= 0, "robots_redirects", robots_redirects, "use 0 or more")
        ok = robots_status is None or _is_error(robots_status)
        check_option(ok, "robots_status", robots_status, _ERROR_STATUS)
        check_option(min(huge_bytes, bomb_bytes) >= 0, "huge_bytes/bomb_bytes", "<0", "use >= 0")
        self.league = league or _default_league()
        self.crawl_delay, self.keep_seasons, self.gone_after = crawl_delay, keep_seasons, gone_after
        self.max_age, self.robots_txt, self.robots_status = max_age, robots_txt, robots_status
        self.robots_redirects, self.forced_retry_after = robots_redirects, forced_retry_after
        self.huge_bytes, self.bomb_bytes = huge_bytes, bomb_bytes
        self._lock = threading.Lock()
        self._forced: dict[str, deque[int]] = {}
        for path, statuses in (forced or {}).items():
            self.force(path, statuses)
        self.revision = revision
        self._bodies: dict[tuple[str, int], bytes | None] = {}

    @property
    def revision(self) -> int:
        """How many times the clock has advanced; pages render at this revision."""
        return self._revision

    @revision.setter
    def revision(self, revision: int) -> None:
        check_option(revision >= 0, "revision", revision, "use 0 or a positive number of advances")
        self._revision = revision

    def advance(self, revision: int | None = None) -> int:
        """Advance the clock by one revision, or to ``revision``; return the new revision."""
        self.revision = self.revision + 1 if revision is None else revision
        return self.revision

    def force(self, path: str, statuses: Sequence[int]) -> None:
        """Answer the next requests for ``path`` with ``statuses`` (4xx/5xx), in order."""
        check_option(
            all(map(_is_error, statuses)), f"forced[{path!r}]", list(statuses), _ERROR_STATUS
        )
        with self._lock:
            self._forced.setdefault(path, deque()).extend(statuses)

    def reply(self, request: Request) -> Reply:
        """The next forced status for the request's path, else the path's normal answer."""
        return self._forced_reply(request.path) or self._route(request.path, request.base_url)

    def _forced_reply(self, path: str) -> Reply | None:
        with self._lock:
            if not (queue := self._forced.get(path)):
                return None
            status = queue.popleft()
        retry = self.forced_retry_after
        if isinstance(retry, datetime):
            retry = format_datetime(retry.astimezone(UTC), usegmt=True)
        return error_reply(status, {} if retry is None else {"Retry-After": str(retry)})

    def _route(self, path: str, base_url: str) -> Reply:
        if path in ("/", "/loop/a", "/loop/b"):
            return redirect_reply({"/": "/index.html", "/loop/a": "/loop/b"}.get(path, "/loop/a"))
        if path == "/robots.txt" and self.robots_redirects:
            return redirect_reply("/robots/hop/1")
        hop = _ROBOTS_HOP.fullmatch(path)
        if hop and int(hop[1]) < self.robots_redirects:
            return redirect_reply(f"/robots/hop/{int(hop[1]) + 1}")
        if path == "/robots.txt" or (hop and int(hop[1]) == self.robots_redirects):
            if self.robots_status is not None:
                return error_reply(self.robots_status)
            return self._content(self._robots(base_url).encode(), "text/plain; charset=utf-8")
        if path == "/sitemap.xml":
            return self._content(self._sitemap(base_url).encode(), "application/xml")
        if path == "/private/":
            return self._content(page("Staff notes", "<p>Not for robots.</p>"), HTML)
        if path == "/data.csv":
            return self._content(self._csv().encode(), "text/csv; charset=utf-8")
        if path in ("/huge.html", "/huge-chunked.html"):
            chunked = path == "/huge-chunked.html"
            length = {} if chunked else {"Content-Length": str(self.huge_bytes)}
            stream = filler(self.huge_bytes)
            return Reply(200, {"Content-Type": HTML, **length}, stream=stream, chunked=chunked)
        if path == "/bomb.html":
            headers = {"Content-Type": HTML, "Content-Encoding": "gzip"}
            return Reply(200, headers, gzip_bomb(self.bomb_bytes))
        return self._site_page(path)

    def _site_page(self, path: str) -> Reply:
        revision = self.revision  # read once: another thread may advance the clock meanwhile
        body = self._body(path, revision)
        season = _SEASON_PAGE.match(path)
        if body is None:
            return error_reply(404)
        if season and (retired := self._retired(int(season[1]))):
            return error_reply(retired)
        # The revision that last changed the body dates it (pages other than seasons never do).
        revisions = range(revision, 0, -1)
        changed = next((r for r in revisions if self._body(path, r - 1) != body), 0)
        year = int(season[1]) if season else self.league.latest
        cache_control = None if not season or self.max_age is None else f"max-age={self.max_age}"
        return self._content(body, HTML, year, changed, cache_control)

    def _content(
        self, body: bytes, kind: str, year: int = 0, changed: int = 0, cache: str | None = None
    ) -> Reply:
        modified = datetime(year or self.league.latest, 7, 1, tzinfo=UTC) + timedelta(changed)
        # RFC 9110 §8.8.2.1: never later than the response's Date.
        modified = min(modified, datetime.now(UTC).replace(microsecond=0))
        headers = {"Content-Type": kind, "ETag": f'"{hashlib.sha256(body).hexdigest()[:16]}"'}
        headers["Last-Modified"] = format_datetime(modified, usegmt=True)
        if cache is not None:
            headers["Cache-Control"] = cache
        return Reply(200, headers, body)

    def _body(self, path: str, revision: int) -> bytes | None:
        key = (path, revision)
        if key not in self._bodies:
            html = render_page(self.league, path, revision)  # deterministic, so races are harmless
            self._bodies[key] = None if html is None else html.encode()
        return self._bodies[key]

    def _retired(self, year: int) -> int:
        """0 when ``year``'s pages are served, else 404 or 410."""
        age = self.league.latest - year
        if self.keep_seasons is None or age < self.keep_seasons:
            return 0
        return 410 if age > self.gone_after else 404

    def _robots(self, base_url: str) -> str:
        if self.robots_txt is not None:
            return self.robots_txt
        delay = format(Decimal(repr(self.crawl_delay)).normalize(), "f")  # 0.05, never 5e-02
        return (
            "# Demo site of an invented handball league, served on the loopback address only.\n"
            f"User-agent: *\nCrawl-delay: {delay}\nDisallow: /private/\n"
            f"Disallow: /players/*.json$\n\nSitemap: {base_url}/sitemap.xml\n"
        )

    def _sitemap(self, base_url: str) -> str:
        served = [path for path in site_paths(self.league) if self._served(path)]
        urls = "".join(f"<url><loc>{escape(base_url + path)}</loc></url>\n" for path in served)
        return (
            '<?xml version="1.0" encoding="UTF-8"?>\n'
            f'<urlset xmlns="http://www.sitemaps.org/schemas/sitemap/0.9">\n{urls}</urlset>\n'
        )

    def _served(self, path: str) -> bool:
        season = _SEASON_PAGE.match(path)
        return not season or not self._retired(int(season[1]))

    def _csv(self) -> str:
        season = self.league.season(self.league.latest, self.revision)
        lines = ["club,games,wins,draws,losses,goals_for,goals_against,points"]
        for s in season.standings:
            numbers = (s.games, s.wins, s.draws, s.losses, s.goals_for, s.goals_against, s.points)
            lines.append(",".join([s.club, *map(str, numbers)]))
        return "\r\n".join(lines) + "\r\n"  # CRLF line breaks (RFC 4180 §2)


@cache
def _default_league() -> League:
    # Shared by every site: the league is immutable and takes ~0.2 s to build.
    return build_league()


def _is_error(status: int) -> bool:
    return 400 <= status <= 599
