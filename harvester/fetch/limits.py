"""Hard limits every fetch obeys, whatever the site sends."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["DEFAULT_MAX_WAIT", "MAX_WAIT_LIMIT", "ROBOTS_PARSE_LIMIT", "FetchLimits"]

# RFC 9309 §2.5: the parsing limit MUST be at least 500 KiB, which is 512,000 octets; we read
# exactly that much by default and no more.
ROBOTS_PARSE_LIMIT = 512_000
DEFAULT_MAX_WAIT = 600.0  # seconds: the longest single wait unless a recipe or --max-wait says
MAX_WAIT_LIMIT = 86_400  # a day: no single wait of a run may be set longer (no source)


@dataclass(frozen=True)
class FetchLimits:
    """Sizes, times and counts a fetch may not exceed.

    The defaults suit statistics pages: the largest seen in practice are a few MB (common
    practice, no published source); 50 MB leaves room without letting one answer fill memory.
    """

    max_body_bytes: int = 50 * 2**20  # bytes on the wire
    max_decoded_bytes: int = 200 * 2**20  # after Content-Encoding: a compression-bomb guard
    connect_timeout: float = 10.0
    read_timeout: float = 30.0  # between two received chunks
    total_timeout: float = 120.0  # one request, headers to last byte
    max_redirects: int = (
        10  # RFC 9110 §15.4 asks for loop detection; a fixed cap plus a visited set
    )
    robots_max_redirects: int = 5  # RFC 9309 §2.3.1.2: follow at least five
    robots_parse_limit: int = ROBOTS_PARSE_LIMIT  # octets of robots.txt parsed (RFC 9309 §2.5)
    schemes: tuple[str, ...] = ("http", "https")
    content_types: tuple[str, ...] = ("text/html", "application/xhtml+xml")
    # The longest single wait (Crawl-delay, Retry-After, back-off); a site asking for more is
    # skipped for the run rather than left to stall it silently.
    max_wait: float = DEFAULT_MAX_WAIT
