"""The HTTP plumbing of the demo's hosts: a threaded server on 127.0.0.1 that logs what it sees.

``LoopbackServer`` runs the stdlib threading HTTP server (HTTP/1.1, keep-alive) in a background
thread, bound to the loopback address only; port 0 takes a free port. What a host serves is not
decided here: each request goes to its ``Routes``, one method that turns a ``Request`` into a
``Reply`` (the league's site is ``routes.LeagueRoutes``; another host brings other routes).

Each GET or HEAD, in this order: (1) pacing, all clients together, as one host sees a crawler
(see ``requestlog``): with ``enforce`` a violation is answered 429 with
``Retry-After: {retry_after}``, without it is served; the log marks it either way; (2) a delay of
``slow[path]`` seconds; (3) the routes' reply; (4) a 200 that carries an ETag becomes a 304 when
the request's If-None-Match (weak comparison, ``*`` matches) or, only when that is absent,
If-Modified-Since says the client has it: no body, and of the 200's headers only ETag and
Cache-Control, with Date as on every response (RFC 9110 §13.1.2, §13.1.3, §15.4.5). The request
enters the log just before its response's last write. Other methods get the stdlib's 501 and are
not logged. ``stop`` ends open connections at once, even idle keep-alive ones and slow replies.
"""

from __future__ import annotations

import contextlib
import socket
import socketserver
import sys
import threading
import traceback
from collections.abc import Mapping
from dataclasses import dataclass
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from types import TracebackType
from typing import Generic, Protocol, Self, TypeVar
from urllib.parse import urlsplit

from harvester.demo.replies import Reply, error_reply, not_modified, write_reply
from harvester.demo.requestlog import RequestLog, RequestRecord
from harvester.errors import HarvesterError

__all__ = ["LOOPBACK", "LoopbackServer", "Request", "Routes", "check_option"]

LOOPBACK = "127.0.0.1"


@dataclass(frozen=True)
class Request:
    """One GET or HEAD as a host's routes see it."""

    method: str
    target: str  # the request target as sent: path with query
    path: str  # the target without its query
    headers: Mapping[str, str]  # every request header, names lower-cased, repeats joined by ", "
    base_url: str  # ``http://127.0.0.1:PORT`` of the server answering


class Routes(Protocol):
    """What a host serves: the reply to one request (pacing and 304s are the server's part)."""

    def reply(self, request: Request) -> Reply:
        """The answer to ``request``."""
        ...


# Covariant: a server of the league's routes is a server of some Routes (as _HTTPServer sees it).
RoutesT = TypeVar("RoutesT", bound=Routes, covariant=True)


class LoopbackServer(Generic[RoutesT]):
    """Serves ``routes`` on a loopback port; use ``with LoopbackServer(routes) as host:``."""

    def __init__(
        self,
        routes: RoutesT,
        *,
        port: int = 0,
        crawl_delay: float = 0.2,
        tolerance: float = 0.0,
        enforce: bool = True,
        retry_after: int = 1,
        slow: Mapping[str, float] | None = None,
    ) -> None:
        check_option(0 <= port <= 65535, "port", port, "use 0 for a free port, or 1-65535")
        for name, number in (("crawl_delay", crawl_delay), ("tolerance", tolerance)):
            check_option(number >= 0, name, number, "use seconds >= 0")
        check_option(retry_after >= 0, "retry_after", retry_after, "use a whole number >= 0")
        for path, seconds in (slow or {}).items():
            check_option(seconds >= 0, f"slow[{path!r}]", seconds, "use seconds >= 0")
        self.routes = routes
        self.port, self.crawl_delay, self.enforce = port, crawl_delay, enforce
        self.retry_after, self.slow = retry_after, dict(slow or {})
        self._lock = threading.Lock()
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
            # Not self.base_url: a reply that stop() woke still has to be answered and logged.
            base_url = f"http://{LOOPBACK}:{self.port}"
            request = Request(handler.command, handler.path, path, headers, base_url)
            reply = self.routes.reply(request)
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
    """The stdlib server bound to 127.0.0.1 without a name lookup, reporting to its host."""

    def __init__(self, host: LoopbackServer[Routes], port: int) -> None:
        self.host = host
        super().__init__((LOOPBACK, port), _Handler)

    def server_bind(self) -> None:
        # HTTPServer.server_bind calls socket.getfqdn, which may ask a DNS server: skip it.
        socketserver.TCPServer.server_bind(self)
        self.server_name, self.server_port = LOOPBACK, self.socket.getsockname()[1]

    def handle_error(self, request: object, client_address: object) -> None:
        self.host._record_error()  # instead of printing to stderr


class _Handler(BaseHTTPRequestHandler):
    """Hands GET and HEAD to the host; never writes to stderr."""

    server: _HTTPServer
    protocol_version = "HTTP/1.1"
    # Headers and body go out in separate writes; with Nagle's algorithm and delayed ACKs many
    # responses would wait ~40 ms.
    disable_nagle_algorithm = True
    server_version = "QuellmarkDemo/1.0"
    sys_version = ""

    def setup(self) -> None:
        super().setup()
        if not self.server.host._track(self.connection):
            _shut(self.connection)  # accepted while stopping: end it now

    def finish(self) -> None:
        try:
            super().finish()
        finally:
            self.server.host._untrack(self.connection)

    def do_GET(self) -> None:
        self.server.host._serve(self)

    def do_HEAD(self) -> None:
        self.server.host._serve(self)

    def log_message(self, format: str, *args: object) -> None:
        pass  # quiet: the host keeps its own log


def check_option(ok: bool, option: str, value: object, hint: str) -> None:
    """Raise a one-line error naming ``option`` and its ``value`` unless ``ok``."""
    if not ok:
        raise HarvesterError(f"demo server: option {option} = {value!r} is invalid", hint=hint)


def _shut(connection: socket.socket) -> None:
    with contextlib.suppress(OSError):  # already closed by the client
        connection.shutdown(socket.SHUT_RDWR)
