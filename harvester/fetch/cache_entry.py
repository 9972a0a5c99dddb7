"""One response as the HTTP cache keeps it, and how the cache reads its header fields.

``StoredResponse`` is the stored record; the functions read header fields by name (repeated
lines merged, RFC 9110 §5.3), Cache-Control directives (RFC 9111 §5.2), delta-seconds
(§1.2.2), and a response's Date (RFC 9110 §6.6.1), which orders stored responses by recency.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime

from harvester.fetch.httpdate import parse_http_date

__all__ = [
    "Headers",
    "StoredResponse",
    "as_utc",
    "cache_directives",
    "date_value",
    "delta_seconds",
    "field_value",
    "field_values",
    "has_directive",
    "header_pairs",
    "recency",
]

Headers = Sequence[tuple[str, str]]

_DELTA_MAX = 2147483648  # RFC 9111 §1.2.2: the value to use when delta-seconds overflows
_DELTA_SECONDS = re.compile(r"[0-9]+", re.A)
# One member of a comma-separated list; commas inside a quoted string do not split it.
_LIST_MEMBER = re.compile(r'(?:[^,"]|"(?:[^"\\]|\\.)*"?)+')


@dataclass(frozen=True)
class StoredResponse:
    """One response as the cache keeps it, with the request fields Vary may select."""

    url: str
    status: int
    headers: tuple[tuple[str, str], ...]
    body: bytes
    request_headers: tuple[tuple[str, str], ...]
    request_time: datetime
    response_time: datetime
    immutable: bool = False
    final_url: str | None = None  # where the body came from after redirects (``url`` is the key)


def as_utc(moment: datetime) -> datetime:
    """Return ``moment`` in UTC; a naive value is read as UTC, never as local time (§4.2)."""
    return moment.replace(tzinfo=UTC) if moment.tzinfo is None else moment.astimezone(UTC)


def header_pairs(headers: Mapping[str, str] | Headers) -> list[tuple[str, str]]:
    """Return header fields as (name, value) pairs, whichever shape they came in."""
    return list(headers.items()) if isinstance(headers, Mapping) else list(headers)


def field_values(headers: Headers, name: str) -> list[str]:
    """Return every value of field ``name``, matching the name case-insensitively."""
    wanted = name.lower()
    return [value for key, value in headers if key.lower() == wanted]


def field_value(headers: Headers, name: str) -> str | None:
    """Return field ``name`` with repeated lines merged by commas, or None when absent."""
    values = field_values(headers, name)
    return ", ".join(value.strip() for value in values) if values else None


def cache_directives(headers: Headers) -> list[tuple[str, str | None]]:
    """Return Cache-Control directives as (lower-cased name, unquoted argument or None)."""
    found: list[tuple[str, str | None]] = []
    for item in _LIST_MEMBER.findall(field_value(headers, "cache-control") or ""):
        name, equals, argument = item.strip().partition("=")
        arg: str | None = argument.strip() if equals else None
        if arg is not None and len(arg) >= 2 and arg[0] == arg[-1] == '"':
            # §5.2: recipients accept the quoted form even where the token form is required.
            arg = re.sub(r"\\(.)", r"\1", arg[1:-1])
        if name.strip():
            found.append((name.strip().lower(), arg))
    return found


def has_directive(headers: Headers, name: str) -> bool:
    """Say whether Cache-Control carries directive ``name`` (with or without an argument)."""
    return any(directive == name for directive, _ in cache_directives(headers))


def delta_seconds(text: str | None) -> int | None:
    """Parse ``delta-seconds`` (``1*DIGIT``), clamping overflow (§1.2.2); None when invalid."""
    if text is None or not _DELTA_SECONDS.fullmatch(text.strip()):
        return None
    return min(int(text), _DELTA_MAX)


def date_value(response: StoredResponse) -> datetime:
    """Return the response's Date, or its receive time when Date is absent or invalid."""
    received = as_utc(response.response_time)
    text = field_value(response.headers, "date")
    parsed = parse_http_date(text, now=received) if text is not None else None
    # RFC 9110 §6.6.1: a recipient that caches a message without Date uses its receive time.
    return parsed if parsed is not None else received


def recency(response: StoredResponse) -> tuple[datetime, datetime]:
    """Sort key for "most recent": Date first (RFC 9111 §4.1), then the receive time."""
    return date_value(response), as_utc(response.response_time)
