"""Which responses the HTTP cache may store (RFC 9111 §3), and how long each may be reused.

The cache is private (RFC 9111 §1): ``s-maxage`` is ignored and ``private`` responses may be
stored. Freshness lifetime follows §4.2.1-§4.2.2 (max-age, then Expires, then a heuristic from
Last-Modified), age §4.2.3, and §4.2.4 says when a stale copy may never be served unvalidated.
A caller may mark a response immutable, which keeps it fresh for ever (a recipe does this for
past seasons that no longer change).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from datetime import datetime

from harvester.fetch.cache_entry import (
    Headers,
    StoredResponse,
    as_utc,
    cache_directives,
    date_value,
    delta_seconds,
    field_value,
    field_values,
    header_pairs,
)
from harvester.fetch.httpdate import parse_http_date

__all__ = [
    "HEURISTICALLY_CACHEABLE",
    "current_age",
    "forbids_stale",
    "freshness_lifetime",
    "is_storable",
]

# RFC 9110 §15.1: statuses a cache may keep with heuristic freshness.
HEURISTICALLY_CACHEABLE = frozenset({200, 203, 204, 206, 300, 301, 308, 404, 405, 410, 414, 501})
# 206: RFC 9111 §3.3, a cache without Range support MUST NOT store partial content.
# 304: it carries no content and only freshens stored responses (§4.3.4). 429: RFC 6585 §4.
_NEVER_STORED = frozenset({206, 304, 429})
# Statuses whose caching rules this cache implements, for must-understand (RFC 9111 §5.2.2.3).
_UNDERSTOOD_STATUSES = HEURISTICALLY_CACHEABLE - {206}
_METHODS = frozenset({"GET", "HEAD"})


def is_storable(method: str, status: int, headers: Mapping[str, str] | Headers) -> bool:
    """Say whether RFC 9111 §3 lets a private cache store this response."""
    pairs = header_pairs(headers)
    names = {name for name, _ in cache_directives(pairs)}
    if method.upper() not in _METHODS or status < 200 or status in _NEVER_STORED:
        return False
    if "must-understand" in names:
        # §5.2.2.3: store only statuses we implement; for those, no-store is then ignored.
        return status in _UNDERSTOOD_STATUSES
    if "no-store" in names:
        return False
    explicit = bool(names & {"public", "private", "max-age"}) or bool(
        field_values(pairs, "expires")
    )
    return explicit or status in HEURISTICALLY_CACHEABLE


def freshness_lifetime(
    response: StoredResponse, *, heuristic_fraction: float = 0.1, heuristic_cap: float = 86400.0
) -> float:
    """Return the freshness lifetime in seconds, per RFC 9111 §4.2.1 (infinite when immutable)."""
    if response.immutable:
        return math.inf
    directives = cache_directives(response.headers)
    # s-maxage is skipped on purpose: it applies to shared caches only (§5.2.2.10).
    max_ages = [argument for name, argument in directives if name == "max-age"]
    if max_ages:
        # §4.2.1: a duplicated or invalid max-age is treated as stale.
        seconds = delta_seconds(max_ages[0]) if len(max_ages) == 1 else None
        return float(seconds) if seconds is not None else 0.0
    response_date = date_value(response)
    expires = field_value(response.headers, "expires")
    if expires is not None:
        # §5.3: an invalid Expires (including "0") means already expired.
        expires_at = parse_http_date(expires, now=response_date)
        return max(0.0, (expires_at - response_date).total_seconds()) if expires_at else 0.0
    public = any(name == "public" for name, _ in directives)
    if response.status not in HEURISTICALLY_CACHEABLE and not public:
        return 0.0
    last_text = field_value(response.headers, "last-modified")
    last_modified = parse_http_date(last_text, now=response_date) if last_text else None
    if last_modified is None or last_modified >= response_date:
        return 0.0
    # §4.2.2: a fraction (10% typical) of the time since Last-Modified; the cap is practice.
    heuristic = heuristic_fraction * (response_date - last_modified).total_seconds()
    return min(heuristic, heuristic_cap)


def current_age(response: StoredResponse, now: datetime) -> float:
    """Return the response's current age in seconds, computed exactly as RFC 9111 §4.2.3."""
    response_time = as_utc(response.response_time)
    request_time = as_utc(response.request_time)
    apparent_age = max(0.0, (response_time - date_value(response)).total_seconds())
    # §5.1: use the first member of a list; ignore anything that is not a non-negative integer.
    age_field = field_value(response.headers, "age")
    first = age_field.split(",")[0] if age_field is not None else None
    age_value = delta_seconds(first) or 0
    response_delay = (response_time - request_time).total_seconds()
    corrected_age_value = age_value + response_delay
    corrected_initial_age = max(apparent_age, corrected_age_value)
    resident_time = (as_utc(now) - response_time).total_seconds()
    return corrected_initial_age + resident_time


def forbids_stale(response: StoredResponse) -> bool:
    """Say whether a stale copy must never be reused unvalidated, even offline (§4.2.4)."""
    if response.immutable:
        return False
    return any(
        name in ("no-cache", "must-revalidate") for name, _ in cache_directives(response.headers)
    )
