"""A private HTTP cache (RFC 9111) that keeps responses on disk with diskcache.

The cache is private (RFC 9111 §1): ``s-maxage`` is ignored and ``private`` responses may be
stored. Entries live under ``"METHOD URI"``; each holds the variants that Vary tells apart, and a
variant's identity is its Vary-selected request values (RFC 9111 §4.1). Freshness, age and
revalidation follow RFC 9111 §4.2-§4.3; a caller may mark a response immutable, which keeps it
fresh for ever (a recipe does this for past seasons that no longer change).
"""

from __future__ import annotations

import math
import re
import sqlite3
from collections.abc import Mapping, Sequence
from dataclasses import astuple, dataclass, replace
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, Literal

import diskcache

from harvester.errors import FetchError
from harvester.fetch.httpdate import parse_http_date

__all__ = [
    "HEURISTICALLY_CACHEABLE",
    "CacheLookup",
    "HttpCache",
    "StoredResponse",
    "conditional_headers",
    "current_age",
    "forbids_stale",
    "freshness_lifetime",
    "is_storable",
]

Headers = Sequence[tuple[str, str]]

# RFC 9110 §15.1: statuses a cache may keep with heuristic freshness.
HEURISTICALLY_CACHEABLE = frozenset({200, 203, 204, 206, 300, 301, 308, 404, 405, 410, 414, 501})
# 206: RFC 9111 §3.3, a cache without Range support MUST NOT store partial content.
# 304: it carries no content and only freshens stored responses (§4.3.4). 429: RFC 6585 §4.
_NEVER_STORED = frozenset({206, 304, 429})
# Statuses whose caching rules this cache implements, for must-understand (RFC 9111 §5.2.2.3).
_UNDERSTOOD_STATUSES = HEURISTICALLY_CACHEABLE - {206}
_METHODS = frozenset({"GET", "HEAD"})
_DELTA_MAX = 2147483648  # RFC 9111 §1.2.2: the value to use when delta-seconds overflows
_DELTA_SECONDS = re.compile(r"[0-9]+", re.A)
# One member of a comma-separated list; commas inside a quoted string do not split it.
_LIST_MEMBER = re.compile(r'(?:[^,"]|"(?:[^"\\]|\\.)*"?)+')
# RFC 9111 §3.1 connection-specific fields; §3.2 never copies them (nor Content-Length) from a 304.
_HOP_FIELDS = frozenset(
    {"connection", "keep-alive", "proxy-connection", "te", "transfer-encoding", "upgrade"}
)
# Fields whose values are case-insensitive (media types, charsets, codings, language tags).
_CASELESS_FIELDS = frozenset({"accept", "accept-charset", "accept-encoding", "accept-language"})


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


@dataclass(frozen=True)
class CacheLookup:
    """The answer to a lookup: fresh (reuse), stale (validate first) or miss (fetch)."""

    state: Literal["fresh", "stale", "miss"]
    response: StoredResponse | None
    conditional_headers: dict[str, str]
    age: float | None


def _utc(moment: datetime) -> datetime:
    """Return ``moment`` in UTC; a naive value is read as UTC, never as local time (§4.2)."""
    return moment.replace(tzinfo=UTC) if moment.tzinfo is None else moment.astimezone(UTC)


def _pairs(headers: Mapping[str, str] | Headers) -> list[tuple[str, str]]:
    """Return header fields as (name, value) pairs, whichever shape they came in."""
    return list(headers.items()) if isinstance(headers, Mapping) else list(headers)


def _values(headers: Headers, name: str) -> list[str]:
    """Return every value of field ``name``, matching the name case-insensitively."""
    wanted = name.lower()
    return [value for key, value in headers if key.lower() == wanted]


def _field(headers: Headers, name: str) -> str | None:
    """Return field ``name`` with repeated lines merged by commas, or None when absent."""
    values = _values(headers, name)
    return ", ".join(value.strip() for value in values) if values else None


def _directives(headers: Headers) -> list[tuple[str, str | None]]:
    """Return Cache-Control directives as (lower-cased name, unquoted argument or None)."""
    found: list[tuple[str, str | None]] = []
    for item in _LIST_MEMBER.findall(_field(headers, "cache-control") or ""):
        name, equals, argument = item.strip().partition("=")
        arg: str | None = argument.strip() if equals else None
        if arg is not None and len(arg) >= 2 and arg[0] == arg[-1] == '"':
            # §5.2: recipients accept the quoted form even where the token form is required.
            arg = re.sub(r"\\(.)", r"\1", arg[1:-1])
        if name.strip():
            found.append((name.strip().lower(), arg))
    return found


def _has_directive(headers: Headers, name: str) -> bool:
    """Say whether Cache-Control carries directive ``name`` (with or without an argument)."""
    return any(directive == name for directive, _ in _directives(headers))


def _delta_seconds(text: str | None) -> int | None:
    """Parse ``delta-seconds`` (``1*DIGIT``), clamping overflow (§1.2.2); None when invalid."""
    if text is None or not _DELTA_SECONDS.fullmatch(text.strip()):
        return None
    return min(int(text), _DELTA_MAX)


def _date_value(response: StoredResponse) -> datetime:
    """Return the response's Date, or its receive time when Date is absent or invalid."""
    received = _utc(response.response_time)
    text = _field(response.headers, "date")
    parsed = parse_http_date(text, now=received) if text is not None else None
    # RFC 9110 §6.6.1: a recipient that caches a message without Date uses its receive time.
    return parsed if parsed is not None else received


def _recency(response: StoredResponse) -> tuple[datetime, datetime]:
    """Sort key for "most recent": Date first (RFC 9111 §4.1), then the receive time."""
    return _date_value(response), _utc(response.response_time)


def is_storable(method: str, status: int, headers: Mapping[str, str] | Headers) -> bool:
    """Say whether RFC 9111 §3 lets a private cache store this response."""
    pairs = _pairs(headers)
    names = {name for name, _ in _directives(pairs)}
    if method.upper() not in _METHODS or status < 200 or status in _NEVER_STORED:
        return False
    if "must-understand" in names:
        # §5.2.2.3: store only statuses we implement; for those, no-store is then ignored.
        return status in _UNDERSTOOD_STATUSES
    if "no-store" in names:
        return False
    explicit = bool(names & {"public", "private", "max-age"}) or bool(_values(pairs, "expires"))
    return explicit or status in HEURISTICALLY_CACHEABLE


def freshness_lifetime(
    response: StoredResponse, *, heuristic_fraction: float = 0.1, heuristic_cap: float = 86400.0
) -> float:
    """Return the freshness lifetime in seconds, per RFC 9111 §4.2.1 (infinite when immutable)."""
    if response.immutable:
        return math.inf
    directives = _directives(response.headers)
    # s-maxage is skipped on purpose: it applies to shared caches only (§5.2.2.10).
    max_ages = [argument for name, argument in directives if name == "max-age"]
    if max_ages:
        # §4.2.1: a duplicated or invalid max-age is treated as stale.
        seconds = _delta_seconds(max_ages[0]) if len(max_ages) == 1 else None
        return float(seconds) if seconds is not None else 0.0
    date_value = _date_value(response)
    expires = _field(response.headers, "expires")
    if expires is not None:
        # §5.3: an invalid Expires (including "0") means already expired.
        expires_at = parse_http_date(expires, now=date_value)
        return max(0.0, (expires_at - date_value).total_seconds()) if expires_at else 0.0
    public = any(name == "public" for name, _ in directives)
    if response.status not in HEURISTICALLY_CACHEABLE and not public:
        return 0.0
    last_text = _field(response.headers, "last-modified")
    last_modified = parse_http_date(last_text, now=date_value) if last_text else None
    if last_modified is None or last_modified >= date_value:
        return 0.0
    # §4.2.2: a fraction (10% typical) of the time since Last-Modified; the cap is practice.
    heuristic = heuristic_fraction * (date_value - last_modified).total_seconds()
    return min(heuristic, heuristic_cap)


def current_age(response: StoredResponse, now: datetime) -> float:
    """Return the response's current age in seconds, computed exactly as RFC 9111 §4.2.3."""
    response_time = _utc(response.response_time)
    request_time = _utc(response.request_time)
    apparent_age = max(0.0, (response_time - _date_value(response)).total_seconds())
    # §5.1: use the first member of a list; ignore anything that is not a non-negative integer.
    age_field = _field(response.headers, "age")
    first = age_field.split(",")[0] if age_field is not None else None
    age_value = _delta_seconds(first) or 0
    response_delay = (response_time - request_time).total_seconds()
    corrected_age_value = age_value + response_delay
    corrected_initial_age = max(apparent_age, corrected_age_value)
    resident_time = (_utc(now) - response_time).total_seconds()
    return corrected_initial_age + resident_time


def forbids_stale(response: StoredResponse) -> bool:
    """Say whether a stale copy must never be reused unvalidated, even offline (§4.2.4)."""
    if response.immutable:
        return False
    return any(name in ("no-cache", "must-revalidate") for name, _ in _directives(response.headers))


def _vary_names(response: StoredResponse) -> tuple[str, ...]:
    """Return the lower-cased field names listed in the response's Vary ("*" kept)."""
    listed = (name.strip().lower() for name in (_field(response.headers, "vary") or "").split(","))
    return tuple(name for name in listed if name)


def _normalised(name: str, headers: Headers) -> str | None:
    """Return a request field's value normalised for Vary matching (§4.1), None when absent."""
    values = _values(headers, name)
    if not values:
        return None
    # Merge repeated lines, trim each list member and squeeze runs of whitespace.
    members = (" ".join(member.split()) for member in ",".join(values).split(","))
    text = ",".join(member for member in members if member)
    return text.lower() if name in _CASELESS_FIELDS else text


def _vary_key(response: StoredResponse, request: Headers) -> tuple[str | None, ...]:
    """Return the values of ``request`` that the response's Vary selects."""
    return tuple(_normalised(name, request) for name in _vary_names(response))


def _vary_matches(response: StoredResponse, request: Headers) -> bool:
    """Say whether ``request`` may reuse ``response`` under its Vary (RFC 9111 §4.1)."""
    if "*" in _vary_names(response):
        return False  # §4.1: "*" always fails to match
    return _vary_key(response, request) == _vary_key(response, response.request_headers)


def _identity(response: StoredResponse) -> tuple[tuple[str, ...], tuple[str | None, ...]]:
    """Return what tells one stored variant from another: Vary names and selected values."""
    return _vary_names(response), _vary_key(response, response.request_headers)


def conditional_headers(response: StoredResponse) -> dict[str, str]:
    """Return the validators to send when revalidating ``response`` (RFC 9111 §4.3.1)."""
    conditions: dict[str, str] = {}
    etag = _field(response.headers, "etag")
    if etag:
        conditions["If-None-Match"] = etag  # MUST send stored entity-tags, weak ones unchanged
    last_modified = _field(response.headers, "last-modified")
    if last_modified:
        conditions["If-Modified-Since"] = last_modified  # SHOULD, for one stored response
    return conditions


def _entity_tag(headers: Headers) -> tuple[bool, str] | None:
    """Split the ETag into (is_weak, opaque-tag), or None when absent."""
    text = (_field(headers, "etag") or "").strip()
    if not text:
        return None
    return (True, text[2:]) if text.startswith("W/") else (False, text)


def _weakly_matches(
    stored: StoredResponse, tag: tuple[bool, str] | None, modified: str | None
) -> bool:
    """Say whether a stored response has the 304's weak validator (RFC 9110 §8.8.3.2)."""
    mine = _entity_tag(stored.headers)
    if tag is not None and mine is not None and mine[1] == tag[1]:
        return True
    stored_modified = _field(stored.headers, "last-modified")
    if modified is None or stored_modified is None:
        return False
    left, right = parse_http_date(stored_modified), parse_http_date(modified)
    return left == right if left and right else stored_modified == modified


def _select_for_304(initial: list[StoredResponse], headers: Headers) -> list[StoredResponse]:
    """Pick the stored responses a 304 updates: the first rule of RFC 9111 §4.3.4 that applies."""
    tag = _entity_tag(headers)
    modified = _field(headers, "last-modified")
    if tag is not None and not tag[0]:
        # A strong validator selects every stored response with that strong tag, or none.
        return [r for r in initial if _entity_tag(r.headers) == tag]
    if tag is not None or modified is not None:
        # Weak validators (W/ tags, and Last-Modified, weak unless proven strong) pick one.
        return sorted((r for r in initial if _weakly_matches(r, tag, modified)), key=_recency)[-1:]
    if len(initial) == 1 and not conditional_headers(initial[0]):
        return initial  # no validator on either side, and only one candidate
    return []


def _apply_304(stored: StoredResponse, not_modified: StoredResponse) -> StoredResponse:
    """Update a stored response with a 304's fields (RFC 9111 §3.2), keeping its body."""
    listed = {
        n.strip().lower() for n in (_field(not_modified.headers, "connection") or "").split(",")
    }
    skip = _HOP_FIELDS | listed | {"content-length"}
    incoming = [(name, value) for name, value in not_modified.headers if name.lower() not in skip]
    replaced = {name.lower() for name, _ in incoming}
    kept = [(name, value) for name, value in stored.headers if name.lower() not in replaced]
    # The 304's timing becomes the entry's, so §4.2.3 ages it from this validation.
    return replace(
        stored,
        headers=tuple(kept + incoming),
        request_time=not_modified.request_time,
        response_time=not_modified.response_time,
    )


class HttpCache:
    """A private RFC 9111 cache stored in a diskcache directory."""

    def __init__(
        self,
        directory: str | Path,
        *,
        heuristic_fraction: float = 0.1,
        heuristic_cap: float = 86400.0,
    ) -> None:
        self.directory = Path(directory)
        self._fraction = heuristic_fraction
        self._cap = heuristic_cap
        try:
            self._disk: Any = diskcache.Cache(str(self.directory))
        except (OSError, sqlite3.Error) as exc:
            raise FetchError(
                f"cannot open the HTTP cache at {self.directory}: {exc}",
                hint="make the directory writable, or delete it to start an empty cache",
            ) from exc

    @staticmethod
    def _key(method: str, url: str) -> str:
        return f"{method.upper()} {url}"

    def _variants(self, key: str) -> list[StoredResponse]:
        try:  # entries are field tuples; one written by an older layout counts as a miss
            return [StoredResponse(*fields) for fields in self._disk.get(key, default=None) or []]
        except TypeError:
            return []

    def _write(self, key: str, variants: list[StoredResponse]) -> None:
        if variants:
            self._disk.set(key, [astuple(response) for response in variants])
        else:
            self._disk.delete(key)

    def _matches(
        self, method: str, url: str, request_headers: Mapping[str, str]
    ) -> list[StoredResponse]:
        """Return the stored variants this request may use, most recent first (§4.1)."""
        request = _pairs(request_headers)
        found = [r for r in self._variants(self._key(method, url)) if _vary_matches(r, request)]
        return sorted(found, key=_recency, reverse=True)

    def lookup(
        self, method: str, url: str, request_headers: Mapping[str, str], now: datetime
    ) -> CacheLookup:
        """Find a reusable response: fresh, stale (with validators to send) or a miss.

        A request ``no-cache`` forces validation even of an immutable entry, because the caller
        asked for it; a response ``no-cache`` forces it unless the caller marked it immutable.
        """
        found = self._matches(method, url, request_headers)
        if not found:
            return CacheLookup("miss", None, {}, None)
        chosen = found[0]
        age = current_age(chosen, now)
        validate = _has_directive(_pairs(request_headers), "no-cache") or (
            not chosen.immutable and _has_directive(chosen.headers, "no-cache")
        )
        lifetime = freshness_lifetime(
            chosen, heuristic_fraction=self._fraction, heuristic_cap=self._cap
        )
        if not validate and lifetime > age:
            return CacheLookup("fresh", chosen, {}, age)
        return CacheLookup("stale", chosen, conditional_headers(chosen), age)

    def lookup_any(
        self, method: str, url: str, request_headers: Mapping[str, str]
    ) -> StoredResponse | None:
        """Return the most recent matching response whatever its freshness (offline mode)."""
        found = self._matches(method, url, request_headers)
        return found[0] if found else None

    def store(self, method: str, response: StoredResponse) -> bool:
        """Store a response, replacing the variants it supersedes; False when not storable."""
        if not is_storable(method, response.status, response.headers):
            return False
        if _has_directive(response.request_headers, "no-store"):
            return False  # RFC 9111 §5.2.1.5
        key = self._key(method, response.url)
        mine = _identity(response)
        with self._disk.transact():
            kept = [
                old
                for old in self._variants(key)
                if _identity(old) != mine and not _vary_matches(old, response.request_headers)
            ]
            self._write(key, [*kept, response])
        return True

    def freshen(
        self,
        method: str,
        url: str,
        request_headers: Mapping[str, str],
        not_modified: StoredResponse,
    ) -> StoredResponse | None:
        """Apply a 304 to the stored responses it validates; return the one to use, or None."""
        key = self._key(method, url)
        request = _pairs(request_headers)
        with self._disk.transact():
            variants = self._variants(key)
            initial = [r for r in variants if _vary_matches(r, request)]
            chosen = {id(r) for r in _select_for_304(initial, not_modified.headers)}
            if not chosen:
                return None
            updated = [_apply_304(r, not_modified) if id(r) in chosen else r for r in variants]
            self._write(key, updated)
        fresh = [r for r, old in zip(updated, variants, strict=True) if id(old) in chosen]
        return max(fresh, key=_recency)

    def close(self) -> None:
        """Close the underlying diskcache files."""
        self._disk.close()
