"""What one fetch returns: the body and everything known about how it was obtained."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from datetime import datetime
from email.message import Message
from typing import Literal

__all__ = ["Capture", "Origin", "charset_of", "header"]

Origin = Literal["live", "cache", "web-archive", "snapshot-archive", "cassette", "file"]
"""Where a capture's bytes came from; "file" is a page saved on disk (tests, examples)."""


def header(headers: tuple[tuple[str, str], ...], name: str) -> str | None:
    """The first value of a header field (names compare case-insensitively)."""
    wanted = name.lower()
    for key, value in headers:
        if key.lower() == wanted:
            return value
    return None


def charset_of(content_type: str | None) -> str | None:
    """The ``charset`` parameter of a Content-Type value, if any (RFC 9110 §8.3.2)."""
    if not content_type:
        return None
    message = Message()
    message["content-type"] = content_type
    charset = message.get_param("charset")
    return charset if isinstance(charset, str) and charset else None


@dataclass(frozen=True)
class Capture:
    """One fetched response with its metadata.

    ``fetched_at`` is when the request that produced the body started (UTC); for a copy served
    from the cache it is when that copy was fetched. ``redirects`` lists every URL requested
    before ``final_url``. ``origin`` says truthfully where the bytes came from; the last three
    fields are filled by the sources that know them (web archives, the snapshot archive).
    """

    url: str
    final_url: str
    status: int
    headers: tuple[tuple[str, str], ...]
    body: bytes = field(repr=False)
    fetched_at: datetime
    origin: Origin
    redirects: tuple[str, ...] = ()
    revalidated: bool = False  # a stale cached copy confirmed by a 304
    memento_datetime: datetime | None = None  # a web-archive capture's time (RFC 7089 §2.1.1)
    memento_uri: str | None = None  # the web archive's URI of that capture (URI-M)
    record_id: str | None = None  # the WARC-Record-ID it was stored as in the snapshot archive
    notes: tuple[str, ...] = ()  # what a reader of the run should know (captures skipped, …)

    @property
    def sha256(self) -> str:
        """Hex SHA-256 of the body."""
        return hashlib.sha256(self.body).hexdigest()

    @property
    def page_url(self) -> str:
        """The address the page's own links are relative to: for a web-archive capture the
        page's original URL (its bytes are what the site served there), else the final URL."""
        return self.url if self.memento_datetime is not None else self.final_url

    @property
    def charset(self) -> str | None:
        """The charset the Content-Type header declares, if any."""
        return charset_of(header(self.headers, "content-type"))

    def header(self, name: str) -> str | None:
        """The first value of a response header field."""
        return header(self.headers, name)
