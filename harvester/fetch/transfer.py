"""One HTTP exchange on the wire: a streamed GET within the hard limits, and its answer.

A body that claims a Content-Encoding it does not have, and an answer whose framing breaks
HTTP (a bad Content-Length), are FetchErrors, not ``Transient``: retrying gets the same bytes.

No pacing, robots.txt or cache here — the fetcher (client.py) wraps those around ``get``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import UTC, datetime

import httpx

from harvester.errors import FetchError, FetchLimitError
from harvester.fetch.limits import FetchLimits

__all__ = ["Answer", "Transient", "get", "now"]

# Protocol errors no retry can fix: the site's framing is wrong (h11's messages name the field),
# unlike a dropped connection ("Server disconnected", "peer closed connection").
_MALFORMED = re.compile(r"content-length|transfer-encoding|malformed|invalid|illegal", re.I)


class Transient(Exception):
    """A failure worth retrying: 429, 503 (or other 5xx), a timeout, a dropped connection."""

    def __init__(
        self, url: str, reason: str, retry_after: float | None = None, status: int | None = None
    ) -> None:
        super().__init__(reason)
        self.url = url
        self.reason = reason
        self.retry_after = retry_after
        self.status = status


@dataclass(frozen=True)
class Answer:
    """One HTTP answer: status, headers, body, when it was asked and received, and the request.

    ``body`` is the entity body as read (after Content-Encoding); ``request_headers`` are the
    header fields the request went out with (httpx's own, such as Host, included).
    """

    url: str
    status: int
    headers: tuple[tuple[str, str], ...]
    body: bytes
    request_time: datetime
    response_time: datetime
    request_headers: tuple[tuple[str, str], ...] = ()


def now() -> datetime:
    """The current time, aware, in UTC."""
    return datetime.now(UTC)


async def get(
    client: httpx.AsyncClient,
    url: str,
    headers: dict[str, str],
    limits: FetchLimits,
    *,
    content_types: tuple[str, ...] | None,
) -> Answer:
    """One GET, streamed within ``limits``; a success's type checked first against
    ``content_types`` (None: any type)."""
    request_time = now()
    try:
        async with client.stream("GET", url, headers=headers) as response:
            status = response.status_code
            if content_types is not None and 200 <= status < 300:
                _check_content_type(url, response.headers.get("content-type"), content_types)
            body = await _read_body(url, response, limits)
    except httpx.DecodingError as exc:
        coding = response.headers.get("content-encoding", "?")
        raise FetchError(
            f"the body claims Content-Encoding {coding} but does not decode ({exc})",
            url=url,
            hint="the site sends a broken compressed body; report it to the site",
        ) from None
    except httpx.InvalidURL as exc:
        # The request's own URL was checked before sending, so this is httpx reading a redirect's
        # Location (even with redirects off) that is no URL it can hold: "javascript:alert(1)".
        raise FetchError(
            f"redirect to an invalid Location ({exc})",
            url=url,
            hint="the site sends a broken redirect; report it to the site",
        ) from None
    except httpx.RemoteProtocolError as exc:
        if not _MALFORMED.search(str(exc)):
            raise  # a dropped connection: the caller retries it
        if "location header" in str(exc).lower():
            # httpx reads a redirect's Location itself, before the fetcher sees the answer.
            raise FetchError(
                f"redirect to an invalid Location ({exc})",
                url=url,
                hint="the site sends a broken redirect; report it to the site",
            ) from None
        raise FetchError(
            f"the answer breaks HTTP's message framing ({exc})",
            url=url,
            hint="the site sends malformed responses (RFC 9112 §6); report it to the site",
        ) from None
    return Answer(
        url=url,
        status=status,
        headers=tuple(response.headers.multi_items()),
        body=body,
        request_time=request_time,
        response_time=now(),
        request_headers=tuple(response.request.headers.multi_items()),
    )


def _check_content_type(url: str, content_type: str | None, wanted: tuple[str, ...]) -> None:
    kind = (content_type or "").split(";", 1)[0].strip().lower()
    if kind not in wanted:
        what = "an HTML page" if "text/html" in wanted else " or ".join(wanted)
        raise FetchLimitError(
            f"expected {what}, got {content_type or 'no Content-Type'}",
            url=url,
            hint="point the recipe at the page that holds the table",
        )


async def _read_body(url: str, response: httpx.Response, limits: FetchLimits) -> bytes:
    declared = response.headers.get("content-length", "")
    if declared.isdigit() and int(declared) > limits.max_body_bytes:
        raise FetchLimitError(
            f"body of {int(declared):,} bytes is over the {limits.max_body_bytes:,}-byte limit",
            url=url,
            hint="raise the limit only if the page really is that large",
        )
    chunks: list[bytes] = []
    decoded = 0
    async for chunk in response.aiter_bytes():
        decoded += len(chunk)
        if response.num_bytes_downloaded > limits.max_body_bytes:
            raise FetchLimitError(
                f"body over the {limits.max_body_bytes:,}-byte limit; download stopped",
                url=url,
                hint="raise the limit only if the page really is that large",
            )
        if decoded > limits.max_decoded_bytes:
            raise FetchLimitError(
                f"body inflates past {limits.max_decoded_bytes:,} bytes; "
                "stopped (a compression bomb?)",
                url=url,
                hint="the site sent a suspicious compressed body; report it",
            )
        chunks.append(chunk)
    return b"".join(chunks)
