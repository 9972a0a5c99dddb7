"""A real HTTP server on 127.0.0.1 serving the invented league's demo site, for fetcher tests.

``DemoServer`` runs the stdlib threading HTTP server (HTTP/1.1, keep-alive) in a background
thread, bound to the loopback address only; port 0 takes a free port. The contract:

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

Each GET or HEAD, in this order: (1) pacing, all clients together, as one host sees a crawler
(see ``requestlog``): with ``enforce`` a violation is answered 429 with
``Retry-After: {retry_after}``, without it is served; the log marks it either way; (2) a delay of
``slow[path]`` seconds; (3) ``forced[path]``: the next status of that list (with
``Retry-After: {forced_retry_after}`` when set) until the list is used up; (4) the normal answer.
The request enters the log just before its response's last write. Other methods get the stdlib's
501 and are not logged.

Validators: each 200 of site content (not the huge or bomb pages) has a strong ETag, ``"`` + the
first 16 hex digits of the body's SHA-256 + ``"``, and a Last-Modified: midnight GMT, 1 July of
the page's season (of the latest season for other pages), plus one day per revision up to the one
that last changed the body. If-None-Match (weak comparison, ``*`` matches) or, only when it is
absent, If-Modified-Since gives a 304 with no body and the 200's ETag, Date and Cache-Control
(RFC 9110 §13.1.2, §13.1.3, §15.4.5). Season pages carry ``Cache-Control: max-age={max_age}``.
"""

from __future__ import annotations

import contextlib
import hashlib
import re
import socket
import socketserver
import sys
import threading
import traceback
from collections import deque
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime, timedelta
from decimal import Decimal
from email.utils import format_datetime
from functools import cache
from html import escape
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from types import TracebackType
from typing import Self
from urllib.parse import urlsplit

from harvester.demo.league import League, build_league
from harvester.demo.pages import render_page, site_paths
from harvester.demo.replies import (
    HTML,
    Reply,
    error_reply,
    filler,
    gzip_bomb,
    not_modified,
    page,
    redirect_reply,
    write_reply,
)
from harvester.demo.requestlog import RequestLog, RequestRecord
from harvester.errors import HarvesterError

__all__ = ["LOOPBACK", "DemoServer"]

LOOPBACK = "127.0.0.1"
_SEASON_PAGE = re.compile(r"/seasons/(\d{4})/")
_ROBOTS_HOP = re.compile(r"/robots/hop/([1-9]\d*)")


class DemoServer:
    """The demo site on a loopback port; use ``with DemoServer() as site:`` or start/stop."""

    def __init__(
        self,
        *,
        port: int = 0,
        league: League | None = None,
        revision: int = 0,
        crawl_delay: float = 0.2,
        tolerance: float = 0.0,
        enforce: bool = True,
        retry_after: int = 1,
        keep_seasons: int | None = 3,
        gone_after: int = 5,
        max_age: int | None = 60,
        robots_txt: str | None = None,
        robots_status: int | None = None,
        robots_redirects: int = 0,
        forced: Mapping[str, Sequence[int]] | None = None,
        forced_retry_after: int | str | datetime | None = None,
        slow: Mapping[str, float] | None = None,
        huge_bytes: int = 8 << 20,
        bomb_bytes: int = 64 << 20,
    ) -> None:
        _check(0 <= port <= 65535, "port", port, "use 0 for a free port, or 1-65535")
        for name, number in (("crawl_delay", crawl_delay), ("tolerance", tolerance)):
            _check(number >= 0, name, number, "use seconds >= 0")
        for name, count in (("retry_after", retry_after), ("gone_after", gone_after)):
            _check(count >= 0, name, count, "use a whole number >= 0")
        _check(keep_seasons is None or keep_seasons >= 1, "keep_seasons", keep_seasons, "use >= 1")
        _check(max_age is None or max_age >= 0, "max_age", max_age, "use seconds >= 0 or None")
        _check(robots_redirects >= 0, "robots_redirects", robots_redirects, "use 0 or more")
        _check(robots_status is None or _is_error(robots_status), "robots_status", robots_status)
        _check(min(huge_bytes, bomb_bytes) >= 0, "huge_bytes/bomb_bytes", "<0", "use >= 0")
        for path, seconds in (slow or {}).items():
            _check(seconds >= 0, f"slow[{path!r}]", seconds, "use seconds >= 0")
        self.league = league or _default_league()
        self.port, self.crawl_delay, self.enforce = port, crawl_delay, enforce
        self.retry_after, self.keep_seasons, self.gone_after = retry_after, keep_seasons, gone_after
        self.max_age, self.robots_txt, self.robots_status = max_age, robots_txt, robots_status
        self.robots_redirects, self.forced_retry_after = robots_redirects, forced_retry_after
        self.slow, self.huge_bytes, self.bomb_bytes = dict(slow or {}), huge_bytes, bomb_bytes
        self._lock = threading.Lock()
        self._forced: dict[str, deque[int]] = {}
        for path, statuses in (forced or {}).items():
            self.force(path, statuses)
        self.revision = revision
        self._bodies: dict[tuple[str, int], bytes | None] = {}
        self._log = RequestLog(crawl_delay, tolerance)
        self._errors: list[str] = []
        self._stopping = threading.Event()
        self._connections: dict[socket.socket, threading.Thread] = {}
        self._httpd: _HTTPServer | None = None

    def start(self) -> Self:
        """Bind 127.0.0.1 and serve from a background thread."""
        if self._httpd is not None:
            raise HarvesterError("demo server: already started", hint="call stop() first")
        self._stopping.clear()
        self._httpd = _HTTPServer(self, self.port)
        self.port = self._httpd.server_port
        # A short poll interval lets stop() return quickly.
        threading.Thread(target=self._httpd.serve_forever, args=(0.05,), daemon=True).start()
        return self

    def stop(self) -> None:
        """Stop serving, end open connections and wait for their threads; safe to repeat."""
        httpd, self._httpd = self._httpd, None
        if httpd is None:
            return
        self._stopping.set()  # wakes slow responses; refuses connections not yet set up
        httpd.shutdown()
        with self._lock:
            connections = list(self._connections.items())
        for connection, _ in connections:
            _shut(connection)  # idle keep-alive reads and streaming writes end at once
        for _, thread in connections:
            thread.join(timeout=5)
        httpd.server_close()

    def __enter__(self) -> Self:
        return self.start()

    def __exit__(
        self,
        kind: type[BaseException] | None,
        error: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self.stop()

    @property
    def base_url(self) -> str:
        """``http://127.0.0.1:PORT`` of the running server."""
        if self._httpd is None:
            raise HarvesterError("demo server: not started", hint="call start() or use `with`")
        return f"http://{LOOPBACK}:{self.port}"

    def url(self, path: str) -> str:
        """The absolute URL of ``path`` on this server."""
        return self.base_url + path

    @property
    def revision(self) -> int:
        """How many times the clock has advanced; pages render at this revision."""
        return self._revision

    @revision.setter
    def revision(self, revision: int) -> None:
        _check(revision >= 0, "revision", revision, "use 0 or a positive number of advances")
        self._revision = revision

    def advance(self, revision: int | None = None) -> int:
        """Advance the clock by one revision, or to ``revision``; return the new revision."""
        self.revision = self.revision + 1 if revision is None else revision
        return self.revision

    def force(self, path: str, statuses: Sequence[int]) -> None:
        """Answer the next requests for ``path`` with ``statuses`` (4xx/5xx), in order."""
        _check(all(map(_is_error, statuses)), f"forced[{path!r}]", list(statuses))
        with self._lock:
            self._forced.setdefault(path, deque()).extend(statuses)

    @property
    def log(self) -> list[RequestRecord]:
        """A copy of the request log, in order of request start."""
        return self._log.records()

    def requests_for(self, path: str) -> list[RequestRecord]:
        """Logged requests for ``path`` (with its query if ``path`` has one, else any query)."""
        return self._log.requests_for(path)

    def violations(self) -> list[RequestRecord]:
        """Logged requests that started sooner than the crawl delay after the previous one."""
        return self._log.violations()

    def clear_log(self) -> None:
        """Empty the log; the pacing check still remembers the last request's start."""
        self._log.clear()

    @property
    def errors(self) -> list[str]:
        """Tracebacks of unexpected server-side exceptions (a client hanging up is not one)."""
        with self._lock:
            return list(self._errors)

    # -- serving -----------------------------------------------------------------------------

    def _serve(self, handler: _Handler) -> None:
        started, wall, too_soon = self._log.begin()
        headers: dict[str, str] = {}
        for name, value in handler.headers.items():
            key = name.lower()
            headers[key] = f"{headers[key]}, {value}" if key in headers else value
        path = urlsplit(handler.path).path
        if too_soon and self.enforce:
            reply = error_reply(429, {"Retry-After": str(self.retry_after)})
        else:
            if seconds := self.slow.get(path):
                self._stopping.wait(seconds)
            reply = self._forced_reply(path) or self._route(path)
            if not_modified(reply, headers):
                kept = ("ETag", "Cache-Control")  # RFC 9110 §15.4.5 (Date is always sent)
                reply = Reply(304, {k: v for k, v in reply.headers.items() if k in kept})

        def log(sent: int) -> None:
            record = RequestRecord(
                started=started,
                wall=wall,
                method=handler.command,
                path=handler.path,
                status=reply.status,
                headers=headers,
                sent_bytes=sent,
                violation=too_soon,
            )
            self._log.add(record)

        write_reply(handler, reply, head=handler.command == "HEAD", log=log)

    def _forced_reply(self, path: str) -> Reply | None:
        with self._lock:
            if not (queue := self._forced.get(path)):
                return None
            status = queue.popleft()
        retry = self.forced_retry_after
        if isinstance(retry, datetime):
            retry = format_datetime(retry.astimezone(UTC), usegmt=True)
        return error_reply(status, {} if retry is None else {"Retry-After": str(retry)})

    def _route(self, path: str) -> Reply:
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
            return self._content(self._robots().encode(), "text/plain; charset=utf-8")
        if path == "/sitemap.xml":
            return self._content(self._sitemap().encode(), "application/xml")
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

    def _robots(self) -> str:
        if self.robots_txt is not None:
            return self.robots_txt
        delay = format(Decimal(repr(self.crawl_delay)).normalize(), "f")  # 0.05, never 5e-02
        return (
            "# Demo site of an invented handball league, served on the loopback address only.\n"
            f"User-agent: *\nCrawl-delay: {delay}\nDisallow: /private/\n"
            f"Disallow: /players/*.json$\n\nSitemap: {self.base_url}/sitemap.xml\n"
        )

    def _sitemap(self) -> str:
        served = [path for path in site_paths(self.league) if self._served(path)]
        urls = "".join(f"<url><loc>{escape(self.url(path))}</loc></url>\n" for path in served)
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

    def _track(self, connection: socket.socket) -> bool:
        with self._lock:
            if self._stopping.is_set():
                return False
            self._connections[connection] = threading.current_thread()
            return True

    def _untrack(self, connection: socket.socket) -> None:
        with self._lock:
            self._connections.pop(connection, None)

    def _record_error(self) -> None:
        error = sys.exc_info()[1]
        if isinstance(error, ConnectionError) or self._stopping.is_set():
            return  # a client hanging up, or the server stopping, is no fault of the site
        with self._lock:
            self._errors.append(traceback.format_exc())


class _HTTPServer(ThreadingHTTPServer):
    """The stdlib server bound to 127.0.0.1 without a name lookup, reporting to its site."""

    def __init__(self, site: DemoServer, port: int) -> None:
        self.site = site
        super().__init__((LOOPBACK, port), _Handler)

    def server_bind(self) -> None:
        # HTTPServer.server_bind calls socket.getfqdn, which may ask a DNS server: skip it.
        socketserver.TCPServer.server_bind(self)
        self.server_name, self.server_port = LOOPBACK, self.socket.getsockname()[1]

    def handle_error(self, request: object, client_address: object) -> None:
        self.site._record_error()  # instead of printing to stderr


class _Handler(BaseHTTPRequestHandler):
    """Hands GET and HEAD to the site; never writes to stderr."""

    server: _HTTPServer
    protocol_version = "HTTP/1.1"
    # Headers and body go out in separate writes; with Nagle's algorithm and delayed ACKs many
    # responses would wait ~40 ms.
    disable_nagle_algorithm = True
    server_version = "QuellmarkDemo/1.0"
    sys_version = ""

    def setup(self) -> None:
        super().setup()
        if not self.server.site._track(self.connection):
            _shut(self.connection)  # accepted while stopping: end it now

    def finish(self) -> None:
        try:
            super().finish()
        finally:
            self.server.site._untrack(self.connection)

    def do_GET(self) -> None:
        self.server.site._serve(self)

    def do_HEAD(self) -> None:
        self.server.site._serve(self)

    def log_message(self, format: str, *args: object) -> None:
        pass  # quiet: the site keeps its own log


@cache
def _default_league() -> League:
    # Shared by every server: the league is immutable and takes ~0.2 s to build.
    return build_league()


def _is_error(status: int) -> bool:
    return 400 <= status <= 599


def _shut(connection: socket.socket) -> None:
    with contextlib.suppress(OSError):  # already closed by the client
        connection.shutdown(socket.SHUT_RDWR)


def _check(ok: bool, option: str, value: object, hint: str = "use a 4xx or 5xx status") -> None:
    if not ok:
        raise HarvesterError(f"demo server: option {option} = {value!r} is invalid", hint=hint)
