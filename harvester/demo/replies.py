"""What the demo server answers: reply records, conditional requests, and synthetic bodies.

Data, pure functions, and the writing of a reply to a request handler's stream; the HTTP
plumbing that uses them is in ``loopback.py``, the league site's routes in ``routes.py``.
"""

from __future__ import annotations

import itertools
import re
import zlib
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field
from datetime import UTC, datetime
from email.utils import parsedate_to_datetime
from functools import cache
from http import HTTPStatus
from http.server import BaseHTTPRequestHandler

__all__ = [
    "HTML",
    "Reply",
    "error_reply",
    "filler",
    "gzip_bomb",
    "http_date",
    "not_modified",
    "page",
    "redirect_reply",
    "status_phrase",
    "write_reply",
]

HTML = "text/html; charset=utf-8"
_ENTITY_TAG = re.compile(r'(?:W/)?"([^"]*)"')  # RFC 9110 §8.8.3; W/ is case-sensitive
_KNOWN_STATUSES = frozenset(HTTPStatus)
_FILL = b"<p>Filler paragraph of an oversized page of the demo site.</p>\n" * 1024


def status_phrase(status: int) -> str:
    """The reason phrase of a status code ("Error" for codes HTTP does not name)."""
    return HTTPStatus(status).phrase if status in _KNOWN_STATUSES else "Error"


@dataclass
class Reply:
    """One answer: status, headers, body, and an optional stream written after the body."""

    status: int
    headers: dict[str, str] = field(default_factory=dict)
    body: bytes = b""
    stream: Iterator[bytes] | None = None  # written after ``body``; its length is in headers
    chunked: bool = False


def not_modified(reply: Reply, request: Mapping[str, str]) -> bool:
    """Whether a conditional GET/HEAD for ``reply`` gets 304 (RFC 9110 §13.2.2 steps 3-4)."""
    etag = reply.headers.get("ETag")
    if reply.status != 200 or etag is None:
        return False
    if (if_none_match := request.get("if-none-match")) is not None:
        # §13.1.2: weak comparison, so W/"x" matches "x" (§8.8.3.2).
        return if_none_match.strip() == "*" or etag.strip('"') in _ENTITY_TAG.findall(if_none_match)
    since = http_date(request.get("if-modified-since", ""))
    modified = http_date(reply.headers.get("Last-Modified", ""))
    # §13.1.3: an invalid date is ignored; not modified when Last-Modified <= the date.
    return since is not None and modified is not None and modified <= since


def http_date(value: str) -> datetime | None:
    """An HTTP-date in any of RFC 9110 §5.6.7's three forms, as UTC; None if not a date."""
    try:
        moment = parsedate_to_datetime(value)
    except (TypeError, ValueError, IndexError, OverflowError):
        return None
    return moment if moment.tzinfo else moment.replace(tzinfo=UTC)  # asctime means UTC


def error_reply(status: int, headers: Mapping[str, str] | None = None) -> Reply:
    """A small HTML page that names ``status``, with extra ``headers``."""
    phrase = status_phrase(status)
    body = page(f"{status} {phrase}", f"<p>The demo site answers {status} {phrase}.</p>")
    return Reply(status, {"Content-Type": HTML, **(headers or {})}, body)


def redirect_reply(location: str) -> Reply:
    """A 302 to ``location``."""
    return Reply(302, {"Location": location, "Content-Type": HTML}, page("Found", ""))


def page(title: str, body: str) -> bytes:
    """A minimal HTML document, encoded as UTF-8."""
    head = f"<!DOCTYPE html>\n<html><head><title>{title}</title></head>\n"
    return f"{head}<body>{body}</body></html>\n".encode()


def filler(size: int) -> Iterator[bytes]:
    """``size`` bytes of an HTML page of filler paragraphs, in pieces of 64 KiB or so."""
    head = b"<!DOCTYPE html>\n<html><head><title>Huge page</title></head><body>\n"
    remaining, piece = size, head + _FILL
    while remaining > 0:
        yield piece[:remaining]
        remaining -= len(piece[:remaining])
        piece = _FILL


@cache
def gzip_bomb(size: int) -> bytes:
    """A gzip member that inflates to ``size`` bytes: an HTML head, then spaces."""
    head = b"<!DOCTYPE html>\n<html><head><title>Bomb</title></head><body>\n"[:size]
    compressor = zlib.compressobj(9, zlib.DEFLATED, 31)  # wbits 31: gzip wrapper (zlib docs)
    parts, remaining, block = [compressor.compress(head)], size - len(head), b" " * (1 << 20)
    while remaining > 0:
        parts.append(compressor.compress(block[:remaining]))
        remaining -= len(block[:remaining])
    return b"".join([*parts, compressor.flush()])


def write_reply(
    handler: BaseHTTPRequestHandler, reply: Reply, *, head: bool, log: Callable[[int], None]
) -> None:
    """Send ``reply``; call ``log`` with the body bytes sent just before the last write.

    Logging before the last write means a client holding the whole response finds it logged. If
    the client hangs up earlier, ``log`` gets the bytes written until then.
    """
    pieces = _pieces(handler, reply, head=head)
    sent, logged = 0, False
    try:
        current = next(pieces)
        for following in pieces:
            handler.wfile.write(current[0])
            sent, current = sent + current[1], following
        log(sent + current[1])
        logged = True
        handler.wfile.write(current[0])
    except OSError:
        handler.close_connection = True  # the client stopped reading (a size limit, a timeout)
        if not logged:
            log(sent)


def _pieces(
    handler: BaseHTTPRequestHandler, reply: Reply, *, head: bool
) -> Iterator[tuple[bytes, int]]:
    """The response as (bytes to write, body bytes among them): status and headers first."""
    headers = {"Server": handler.version_string(), "Date": handler.date_time_string()}
    headers |= reply.headers  # Date on every response: RFC 9110 §6.6.1
    if reply.chunked:
        headers["Transfer-Encoding"] = "chunked"
    elif reply.status != 304 and "Content-Length" not in headers:
        headers["Content-Length"] = str(len(reply.body))
    phrase = status_phrase(reply.status)
    lines = [f"{handler.protocol_version} {reply.status} {phrase}"]
    lines += [f"{name}: {value}" for name, value in headers.items()]
    yield ("\r\n".join(lines) + "\r\n\r\n").encode("latin-1"), 0
    if head or reply.status == 304:
        return
    for chunk in itertools.chain([reply.body], reply.stream or ()):
        if chunk:  # an empty chunk would end a chunked body
            # Chunked framing: hex size, CRLF, data, CRLF; a zero-size chunk ends (RFC 9112 §7.1).
            yield (b"%X\r\n%s\r\n" % (len(chunk), chunk) if reply.chunked else chunk), len(chunk)
    if reply.chunked:
        yield b"0\r\n\r\n", 0
